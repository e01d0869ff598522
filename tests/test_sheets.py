"""Spreadsheets in and out: dates that are never guessed, an exact round trip of the events export, and
no event recorded twice (the same action the same day, or concurrent imports of one sheet)."""
from __future__ import annotations

import csv
import io
import json
import subprocess
import sys
from datetime import date, time
from pathlib import Path

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from recordkit import csvlog
from recordkit.exports import export_json
from recordkit.intake import csv_text, events_csv_rows, read_csv, write_events
from recordkit.loader import load_records
from recordkit.yamltree import quoted

from .conftest import HOUSE, device_yaml, run_cli, write_records

SMOKE = device_yaml(id="s1", kind="smoke", room="hall", power="battery", manufactured="2024-01",
                    installed="2024-02-01")
HEADER = "date,device,action,result,by,note\n"


def sheet(tmp_path: Path, *rows: str, name: str = "sheet.csv") -> Path:
    path = tmp_path / name
    path.write_text(HEADER + "".join(f"{r},test-house/main/s1,clean,,me,\n" for r in rows))
    return path


def folder_of(tmp_path: Path) -> Path:
    return write_records(tmp_path / "records", {"house.yaml": HOUSE + SMOKE})


# ---- dates are never guessed -------------------------------------------------------------------------

@pytest.mark.parametrize("dates, flag, expected", [
    # a part above 12 decides for the whole sheet (the 2025-02-09 / 2025-09-02 mix-up the trial found)
    (["14/03/2025", "02/09/2025"], [], [date(2025, 3, 14), date(2025, 9, 2)]),
    (["03/14/2025", "02/09/2025"], [], [date(2025, 3, 14), date(2025, 2, 9)]),
    (["02/09/2025"], ["--dayfirst"], [date(2025, 9, 2)]),
    (["02/09/2025"], ["--monthfirst"], [date(2025, 2, 9)]),
    (["01/01/2025", "2025-06-30"], [], [date(2025, 1, 1), date(2025, 6, 30)]),  # reads the same both ways; ISO
])
def test_the_whole_sheet_decides_the_date_order(tmp_path, dates, flag, expected):
    folder = folder_of(tmp_path)
    result = run_cli("import", str(sheet(tmp_path, *dates)), "-r", str(folder), *flag)
    assert result.returncode == 0, result.stderr
    assert sorted(e.date for e in load_records(folder, date(2026, 12, 1)).portfolio.events) == sorted(expected)


@pytest.mark.parametrize("dates, words, row", [
    (["02/09/2025", "03/04/2025"], "could be day-first or month-first", 2),
    (["14/03/2025", "03/14/2025"], "both day-first", 2),
    (["2026"], "is incomplete", 2),
    (["2026-11"], "is incomplete", 2),
    (["2025-01-05", "11/5"], "is incomplete", 3),
])
def test_an_undecidable_or_incomplete_date_is_refused_with_file_and_row(tmp_path, dates, words, row):
    folder = folder_of(tmp_path)
    path = sheet(tmp_path, *dates)
    result = run_cli("import", str(path), "-r", str(folder))
    assert result.returncode == 1 and f"{path}:{row}:" in result.stderr and words in result.stderr
    assert load_records(folder, date(2026, 12, 1)).portfolio.events == ()  # nothing written


def test_record_csv_logs_take_iso_dates_only(tmp_path):
    folder = write_records(tmp_path / "records", {"house.yaml": HOUSE + SMOKE,
                                                  "log.csv": HEADER + "02/09/2025,test-house/main/s1,clean,,,\n"})
    messages = [p.message for p in load_records(folder, date(2026, 12, 1)).problems]
    assert any("YYYY-MM-DD" in m for m in messages)


# ---- an exact round trip -----------------------------------------------------------------------------

HOSTILE = st.text(st.characters(codec="utf-8", exclude_characters="\x00", exclude_categories=("Cs",)), max_size=12)
texts = st.one_of(HOSTILE, st.sampled_from(["=SUM(A1)", "+1", "-2", "@x", "\tlead", "\rcr", "'=x", "''", "'tis",
                                            " both ", "a\nb", "a\r\nb", "x\u2028y", "x\u0085y", "x\x0cy"]))


@settings(max_examples=150, deadline=None, suppress_health_check=[HealthCheck.too_slow,
                                                                  HealthCheck.function_scoped_fixture])
@given(st.lists(st.tuples(st.integers(0, 300), st.sampled_from(["note", "clean", "test"]), texts, texts,
                          st.sampled_from([None, time(9, 30), time(23, 59, 59)])), min_size=1, max_size=8))
def test_the_events_export_imports_back_byte_for_byte(tmp_path_factory, events):
    work = tmp_path_factory.mktemp("trip")
    source = write_records(work / "a", {"house.yaml": HOUSE + SMOKE})
    seen, lines = set(), []
    for day, action, by, note, clock in events:
        when = date(2025, 1, 1).toordinal() + day
        key = (when, clock, action) if action != "note" else (when, clock, action, by, note)
        if key in seen:
            continue
        seen.add(key)
        moment = date.fromordinal(when).isoformat() + (f" {clock.isoformat()}" if clock else "")
        result = ", result: pass" if action == "test" else ""
        lines.append(f"  - {{date: {moment}, device: test-house/main/s1, action: {action}{result}, "
                     f"by: {quoted(by)}, note: {quoted(note)}}}\n")
    (source / "log.yaml").write_text("events:\n" + "".join(lines))
    original = load_records(source, date(2026, 12, 1))
    assert original.problems == [], [str(p) for p in original.problems]
    exported_csv = work / "events.csv"  # as `recordkit export --table events` writes it
    exported_csv.write_bytes(csv_text(events_csv_rows(original.portfolio)).encode("utf-8"))
    exported_json = work / "events.json"  # as `recordkit export --format json` writes it
    exported_json.write_text(json.dumps(export_json(original.portfolio, [], date(2026, 12, 1)), ensure_ascii=False))
    fields = lambda loaded: sorted((e.date, e.time or time.min, e.time is None, e.action, e.result,  # noqa: E731
                                    e.by, e.note) for e in loaded.portfolio.events)
    for exported in (exported_csv, exported_json):
        target = write_records(work / exported.suffix[1:], {"house.yaml": HOUSE + SMOKE})
        for round_number in (1, 2):  # the second import of the same file adds nothing
            loaded = load_records(target, date(2026, 12, 1))
            imported = read_csv(exported, loaded, date(2026, 12, 1))
            assert imported.problems == []
            assert len(imported.events) == (len(original.portfolio.events) if round_number == 1 else 0)
            write_events(target, [event for event, _ in imported.events], None)
        assert fields(load_records(target, date(2026, 12, 1))) == fields(original), exported.suffix


def test_formula_cells_are_exported_safely():
    assert [csvlog.guard(t) for t in ("=1+1", "+x", "-x", "@x", "\tx", "'=x", "'tis")] == [
        "'=1+1", "'+x", "'-x", "'@x", "'\tx", "''=x", "'tis"]  # the usual leading-apostrophe guard
    for text in ("=1+1", "'=x", "'tis", "''", "'", ""):
        assert csvlog.unguard(csvlog.guard(text)) == text


# ---- nothing recorded twice ----------------------------------------------------------------------------

def test_the_same_battery_change_twice_on_one_day_is_refused_unless_again(tmp_path):
    folder = folder_of(tmp_path)
    args = ("log", "test-house/main/s1", "battery", "-r", str(folder), "--date", "2026-11-30")
    assert run_cli(*args).returncode == 0
    second = run_cli(*args)
    assert second.returncode == 1 and "already recorded" in second.stderr and "--again" in second.stderr
    assert run_cli(*args, "--again").returncode == 0
    assert len(load_records(folder, date(2026, 12, 1)).portfolio.events) == 2


def test_three_imports_of_one_sheet_at_once_record_each_row_once(tmp_path):
    folder = folder_of(tmp_path)
    path = tmp_path / "many.csv"
    path.write_text(HEADER + "".join(f"2025-{1 + i // 28:02d}-{1 + i % 28:02d},test-house/main/s1,clean,,me,\n"
                                     for i in range(60)))
    script = Path(sys.executable).parent / "recordkit"
    runs = [subprocess.Popen([str(script), "import", str(path), "-r", str(folder)], stdout=subprocess.PIPE,
                             stderr=subprocess.PIPE) for _ in range(3)]
    for run in runs:
        run.wait(timeout=120)
    events = load_records(folder, date(2026, 12, 1)).portfolio.events
    assert len(events) == 60 and len({e.date for e in events}) == 60


def test_a_sheet_read_back_keeps_text_as_written():
    text = HEADER + '2025-01-01,test-house/main/s1,note,,"  me ","a\u2028b\x0cc\r\nd "\n'
    header, body = csvlog.rows(text)
    (number, cells), = list(body)
    row, problems = csvlog.read_row(cells)
    assert problems == [] and (row.by, row.note) == ("  me ", "a\u2028b\x0cc\r\nd ")
    assert list(csv.reader(io.StringIO("x\u2028y\n", newline="")))[0] == ["x\u2028y"]


# ---- undo -------------------------------------------------------------------------------------------------

def _snapshot(folder: Path) -> dict:
    return {p: p.read_bytes() for p in folder.rglob("*") if p.is_file() and ".recordkit" not in p.parts}


@pytest.mark.parametrize("command", [
    ("log", "test-house/main/s1", "clean", "--date", "2026-11-30"),
    ("import", "{sheet}"),
    ("add", "device", "--unit", "test-house/main", "--id", "s2", "--kind", "smoke", "--room", "bed-1",
     "--manufactured", "2026-01"),
    ("replace", "test-house/main/s1", "--new-id", "s1-b", "--manufactured", "2026-10", "--date", "2026-11-30"),
])
def test_undo_takes_out_exactly_what_the_last_command_wrote(tmp_path, command):
    folder = folder_of(tmp_path)
    path = sheet(tmp_path, "2025-05-01", "2026-05-01")  # two years: two log files, both made by the import
    before = _snapshot(folder)
    done = run_cli(*[part.format(sheet=path) for part in command], "-r", str(folder))
    assert done.returncode == 0, done.stderr
    assert _snapshot(folder) != before
    undone = run_cli("undo", "-r", str(folder))
    assert undone.returncode == 0, undone.stderr
    assert _snapshot(folder) == before  # byte for byte, and the log files the command made are gone
    assert run_cli("undo", "-r", str(folder)).returncode == 1  # one step only


def test_undo_is_refused_after_a_hand_edit(tmp_path):
    folder = folder_of(tmp_path)
    assert run_cli("log", "test-house/main/s1", "clean", "--date", "2026-11-30", "-r", str(folder)).returncode == 0
    log = folder / "log" / "2026.yaml"
    log.write_text(log.read_text() + "# checked by the agent\n")
    edited = _snapshot(folder)
    refused = run_cli("undo", "-r", str(folder))
    assert refused.returncode == 1 and "was changed after" in refused.stderr
    assert _snapshot(folder) == edited


def test_journal_finds_the_inserted_bytes():
    from recordkit.journal import inserted
    assert inserted(b"abc", b"abXYc") == (2, b"XY")
    assert inserted(None, b"new") == (0, b"new")
    assert inserted(b"abc", b"abd") is None


# ---- landlords' own sheets: mapped columns, composed ids, value words, Excel ----------------------------

OWN = ("Property,Flat,Alarm,Job,Outcome,When,Engineer,Comments\n"
       "Test House,main,Hall,Tested,OK,14/03/2026,Sam,\n"
       ",,,,,,,\n"                                              # a blank row
       "test house,MAIN,s1,New battery,,02/09/2026,Sam,9V\n")  # ids and names in any case
MAP = ("--column", "date=When", "--column", "action=Job", "--column", "result=Outcome", "--column", "by=Engineer",
       "--column", "note=Comments", "--device", "{property}/{flat}/{alarm}")
EXPECTED = [(date(2026, 3, 14), "test", "pass"), (date(2026, 9, 2), "battery", None)]  # 14/03 makes it day-first


def _imported(folder: Path):
    return sorted((e.date, e.action.value, e.result.value if e.result else None)
                  for e in load_records(folder, date(2026, 12, 1)).portfolio.events)


def test_a_sheet_with_its_own_columns_and_words(tmp_path):
    folder = folder_of(tmp_path)
    path = tmp_path / "own.csv"
    path.write_text(OWN)
    refused = run_cli("import", str(path), "-r", str(folder))
    assert refused.returncode == 1 and f"{path}:1: the sheet has no column for" in refused.stderr
    assert "--column date=HEADER" in refused.stderr  # says how to map, not "--skip-bad"
    dry = run_cli("import", str(path), "-r", str(folder), *MAP, "--dry-run")
    assert "read 'Tested' as action: test" in dry.stdout and "read 'OK' as result: pass" in dry.stdout
    assert run_cli("import", str(path), "-r", str(folder), *MAP).returncode == 0
    assert _imported(folder) == EXPECTED


def test_a_mapping_file_in_the_records_folder(tmp_path):
    folder = folder_of(tmp_path)
    (folder / "import-map.yaml").write_text(
        "columns: {date: When, action: Job, result: Outcome, by: Engineer, note: Comments}\n"
        "device: '{property}/{flat}/{alarm}'\nresults: {'all good': pass}\n")
    path = tmp_path / "own.csv"
    path.write_text(OWN.replace(",OK,", ",All  Good,"))
    result = run_cli("import", str(path), "-r", str(folder))
    assert result.returncode == 0, result.stderr
    assert _imported(folder) == EXPECTED


def test_an_excel_workbook_with_dates_and_serial_numbers(tmp_path):
    import openpyxl
    folder = folder_of(tmp_path)
    book = openpyxl.Workbook()
    book.active.title = "Notes"
    tests = book.create_sheet("Tests")
    tests.append(["Property", "Flat", "Alarm", "Job", "Outcome", "When"])
    tests.append(["Test House", "main", "Hall", "Tested", "Failed", date(2026, 3, 14)])
    tests.append(["Test House", "main", "Hall", "cleaned", None, 46000])  # Excel serial 46000 = 2025-12-09
    tests.append(["Test House", "main", "Loft", "cleaned", None, date(2026, 4, 1)])
    path = tmp_path / "tests.xlsx"
    book.save(path)
    args = ("import", str(path), "-r", str(folder), "--sheet", "Tests", *MAP[:6], "--device", MAP[-1])
    bad = run_cli(*args)
    assert bad.returncode == 1 and f"{path}:Tests:4: 'Loft' is not a device" in bad.stderr  # file:sheet:row
    assert run_cli(*args, "--skip-bad").returncode == 0
    assert _imported(folder) == [(date(2025, 12, 9), "clean", None), (date(2026, 3, 14), "test", "fail")]
