"""Regression tests for the faults an adversarial trial found: each fails without its fix. (The output-folder
guard is tested in test_command_line.py: build refuses the records folder, its parent and a folder inside.)"""
from __future__ import annotations

import os
import shutil
import struct
import wave
from datetime import date
from pathlib import Path

import numpy as np
import pytest

from recordkit.cache import ParseCache, decode_property, encode_property
from recordkit.errors import Problems
from recordkit.loader import load_records
from recordkit.render.escape import md_text
from recordkit.yamltree import read_yaml

from .conftest import DEMO_AS_OF, DEMO_RECORDS, HOUSE, device_yaml, run_cli

AS_OF = DEMO_AS_OF.isoformat()
SMOKE = device_yaml(id="s1", kind="smoke", room="hall", power="sealed", manufactured="2024-01",
                    installed="2024-02-01")


def demo_copy(tmp_path: Path) -> Path:
    folder = tmp_path / "records"
    shutil.copytree(DEMO_RECORDS, folder, ignore=shutil.ignore_patterns(".recordkit"))
    return folder


def files_of(folder: Path) -> dict:
    return {p: p.read_bytes() for p in folder.rglob("*") if p.is_file() and ".recordkit" not in p.parts}


# 2. a linked folder is reported, never skipped quietly or written through
def test_a_linked_log_folder_is_reported_and_never_written_through(tmp_path):
    folder = demo_copy(tmp_path)
    outside = tmp_path / "elsewhere"
    shutil.move(folder / "log", outside)
    (folder / "log").symlink_to(outside, target_is_directory=True)
    before = files_of(outside)
    result = run_cli("check", "-r", str(folder), "--as-of", AS_OF)
    assert result.returncode == 1 and "log: a linked folder; refused" in result.stderr
    logged = run_cli("log", "tansy-house/flat-1/landing-smoke", "clean", "-r", str(folder))
    assert logged.returncode == 1 and files_of(outside) == before


# 3. log --file refuses a file the loader would never read back
@pytest.mark.parametrize("target", [".hidden.yaml", ".recordkit/cache/x.yaml", "log", "notes.txt", "policy.yaml"])
def test_log_refuses_a_file_the_loader_skips(records, target):
    folder = records({"house.yaml": HOUSE + SMOKE})
    (folder / "log").mkdir()
    before = files_of(folder)
    result = run_cli("log", "test-house/main/s1", "clean", "-r", str(folder), "--file", target)
    assert result.returncode == 1 and "not a log file recordkit reads back" in result.stderr
    assert files_of(folder) == before


# 4. values at the edge of the calendar are refused at load, with file:line; date sums never crash
@pytest.mark.parametrize("field, words", [("installed: 9999-01-01", "outside the years 1900-2199"),
                                          ("life_years: 8000", "at most 50")])
def test_out_of_range_values_are_refused_at_load(records, field, words):
    device = SMOKE.replace("installed: 2024-02-01", field) if "installed" in field else SMOKE.replace("}", f", {field}}}")
    folder = records({"house.yaml": HOUSE + device})
    result = run_cli("check", "-r", str(folder), "--as-of", AS_OF)
    assert result.returncode == 1 and words in result.stderr and "house.yaml:" in result.stderr


def test_an_absurd_policy_interval_is_refused_and_the_largest_allowed_values_compute(records):
    folder = records({"house.yaml": HOUSE + SMOKE.replace("installed: 2024-02-01", "installed: 2199-12-31")
                      .replace("manufactured: 2024-01", "manufactured: 2199-12"),
                      "policy.yaml": "policy:\n  test_every: {value: 100000 years, source: a test}\n"})
    refused = run_cli("check", "-r", str(folder), "--as-of", AS_OF)
    assert refused.returncode == 1 and "longer than any alarm rule needs" in refused.stderr
    (folder / "policy.yaml").write_text("policy:\n  test_every: {value: 50 years, source: a test}\n")
    for command in ("status", "calendar", "export"):
        extra = ["-o", str(folder.parent / "x.ics")] if command == "calendar" else []
        result = run_cli(command, "-r", str(folder), "--as-of", "2199-12-31", *extra)
        assert result.returncode in (0, 3) and "Traceback" not in result.stderr, result.stderr


# 5. a typo in a device id: a few messages and a count, each with one suggestion
def test_a_typo_orphaning_many_events_is_reported_briefly(records):
    events = "".join(f"  - {{date: 2025-{1 + i % 12:02d}-{1 + i % 28:02d}, device: test-houes/main/hall-smoek, "
                     "action: clean}\n" for i in range(400))
    folder = records({"house.yaml": HOUSE + SMOKE.replace("id: s1", "id: hall-smoke"),
                      "log.yaml": "events:\n" + events})
    messages = [str(p) for p in load_records(folder, DEMO_AS_OF).problems]
    assert len(messages) == 4, messages
    assert sum("did you mean 'test-house/main/hall-smoke'" in m for m in messages) == 3  # one level at a time
    assert any("397 more event(s) name the unknown device 'test-houes/main/hall-smoek'" in m for m in messages)


# 6. FIFOs and links where files belong never hang a command or feed it endless data
def test_a_fifo_named_like_a_record_is_reported_not_read(records):
    folder = records({"house.yaml": HOUSE + SMOKE})
    os.mkfifo(folder / "pipe.yaml")
    result = run_cli("check", "-r", str(folder), "--as-of", AS_OF)  # run_cli times out at 120 s if it hangs
    assert result.returncode == 1 and "pipe.yaml: not a regular file" in result.stderr


def test_a_cache_entry_that_is_a_fifo_or_a_link_to_dev_zero_is_a_miss(records):
    folder = records({"house.yaml": HOUSE + SMOKE})
    load_records(folder, DEMO_AS_OF)
    entries = sorted((folder / ".recordkit" / "cache").glob("*.json"))
    assert entries
    entries[0].unlink()
    os.mkfifo(entries[0])
    if len(entries) > 1:
        entries[1].unlink()
        entries[1].symlink_to("/dev/zero")
    result = run_cli("check", "-r", str(folder), "--as-of", AS_OF)
    assert result.returncode == 0, result.stderr


# 7. sizes are checked from stat before reading
def test_a_huge_sparse_record_file_is_refused_without_being_read(records):
    folder = records({"house.yaml": HOUSE + SMOKE})
    with open(folder / "huge.yaml", "wb") as handle:
        handle.truncate(1 << 30)  # 1 GB of nothing
    result = run_cli("check", "-r", str(folder), "--as-of", AS_OF)
    assert result.returncode == 1 and "over the limit of 16,777,216 bytes; not read" in result.stderr


def test_a_recordings_analysis_is_kept_by_its_hash(tmp_path, monkeypatch):
    from recordkit import evidence
    records = tmp_path / "records"
    records.mkdir()
    recording = _wav(tmp_path / "t.wav", np.sin(np.arange(16000 * 2) * 2 * np.pi * 3150 / 16000) * 0.3)
    reference = evidence.keep(records, recording)
    first = evidence.hearing_of(records, reference)
    monkeypatch.setattr("recordkit.audio.hear_file", lambda *a, **k: pytest.fail("analysed twice"))
    assert evidence.hearing_of(records, reference) == first


# 8. the parse cache is not trusted beyond what YAML would give
def test_a_forged_cache_entry_cannot_turn_a_failure_into_a_pass(records):
    folder = records({"house.yaml": HOUSE + SMOKE,
                      "log.yaml": "events:\n  - {date: 2026-11-01, device: test-house/main/s1, action: test, "
                                  "result: fail}\n"})
    load_records(folder, DEMO_AS_OF)
    for entry in (folder / ".recordkit" / "cache").glob("*.json"):
        check, _, text = entry.read_text().partition("\n")
        forged = text.replace('"fail"', '"pass"')
        if forged != text:  # an attacker can compute an unkeyed checksum, not this machine's keyed one
            import hashlib
            entry.write_text(hashlib.blake2b(forged.encode(), digest_size=16).hexdigest() + "\n" + forged)
    loaded = load_records(folder, DEMO_AS_OF)
    assert [e.result.value for e in loaded.portfolio.events] == ["fail"]


@pytest.mark.parametrize("bad_id", ["../../x", "<b>x</b>", 7])
def test_a_cache_entry_with_a_bad_id_is_refused(records, bad_id):
    folder = records({"house.yaml": HOUSE + SMOKE})
    prop = load_records(folder, DEMO_AS_OF).portfolio.properties[0]
    data = encode_property(prop)
    data[0] = bad_id
    with pytest.raises((ValueError, TypeError)):
        decode_property(data, "house.yaml")


def test_a_deeply_nested_cache_entry_is_a_miss(tmp_path):
    cache = ParseCache(tmp_path)
    cache._write(tmp_path / "deep.json", {"x": 1})
    text = "[" * 100000 + "]" * 100000
    from recordkit.cache import _checksum
    (tmp_path / "deep.json").write_text(_checksum(text) + "\n" + text)
    assert cache._read(tmp_path / "deep.json") is None


# 9. hostile recordings: a message each, never a traceback; a bad kept recording does not stop a build
def _wav(path: Path, samples, rate=16000) -> Path:
    with wave.open(str(path), "wb") as out:
        out.setnchannels(1)
        out.setsampwidth(2)
        out.setframerate(rate)
        out.writeframes((np.asarray(samples) * 32767).astype("<i2").tobytes())
    return path


def _riff(fmt: bytes, data: bytes) -> bytes:
    body = b"WAVE" + b"fmt " + struct.pack("<I", len(fmt)) + fmt + b"data" + struct.pack("<I", len(data)) + data
    return b"RIFF" + struct.pack("<I", len(body)) + body


HOSTILE_WAVS = {
    "zero-channels": (_riff(struct.pack("<HHIIHH", 1, 0, 16000, 0, 0, 16), b"\0" * 64000), "0 channels"),
    "truncated-header": (b"RIFF\x10\x00\x00\x00WAVEfmt ", "no audio data"),
    "bare-riff": (b"RIFF", "not a WAV file"),
    "int64": (_riff(struct.pack("<HHIIHH", 1, 1, 16000, 128000, 8, 64), b"\0" * 128000), "64-bit integer"),
    "nan": (_riff(struct.pack("<HHIIHH", 3, 1, 16000, 64000, 4, 32), np.full(16000, np.nan, "<f4").tobytes()),
            "NaN or infinite"),
    "inf": (_riff(struct.pack("<HHIIHH", 3, 1, 16000, 64000, 4, 32), np.full(16000, np.inf, "<f4").tobytes()),
            "NaN or infinite"),
}


@pytest.mark.parametrize("name", sorted(HOSTILE_WAVS))
def test_hostile_recordings_get_a_message(tmp_path, name):
    data, words = HOSTILE_WAVS[name]
    path = tmp_path / f"{name}.wav"
    path.write_bytes(data)
    result = run_cli("hear", str(path))
    assert result.returncode == 1 and "Traceback" not in result.stderr and words in result.stderr, result.stderr


def test_a_truncated_kept_recording_does_not_stop_the_build(tmp_path):
    folder = demo_copy(tmp_path)
    digest = "ab" * 32
    (folder / "evidence").mkdir(exist_ok=True)
    (folder / "evidence" / f"{digest}.wav").write_bytes(b"RIFF\x00\x00")
    with open(folder / "log" / "2026.yaml", "a") as log:
        log.write(f"  - {{date: 2026-11-30, device: tansy-house/flat-1/landing-smoke, action: test, result: pass, "
                  f"evidence: sha256:{digest}}}\n")
    out = tmp_path / "site"
    result = run_cli("build", "-r", str(folder), "--as-of", AS_OF, "-o", str(out))
    assert result.returncode == 0, result.stderr
    assert "recording not readable" in (out / "properties/tansy-house/flat-1.html").read_text()


# 10. YAML 1.2 scalars: no octal, no base 60, text kept as written, numeric ids refused
def test_numbers_are_read_as_yaml_1_2_and_text_kept_as_written(records):
    problems = Problems()
    tree = read_yaml(b"a: 010\nb: 12:30\nc: 0x1f\nd: yes\n", "x.yaml", problems)
    assert (tree["a"], tree["b"], tree["c"], tree["d"]) == (10, "12:30", 31, "yes")  # YAML 1.2 core schema
    folder = records({"house.yaml": HOUSE + SMOKE.replace("}", ", note: 12:30, life_years: 010}")})
    device = load_records(folder, DEMO_AS_OF).portfolio.devices["test-house/main/s1"].device
    assert (device.note, device.life_years) == ("12:30", 10)
    bad = records({"house.yaml": HOUSE.replace("id: test-house", "id: 010")})
    messages = [p.message for p in load_records(bad, DEMO_AS_OF).problems]
    assert any("bad id 010: it reads as a number" in m for m in messages)


# 11. record text never opens a Markdown block
@pytest.mark.parametrize("text", ["!!! danger", "1. x", "- x", "+ x", "# x", "> x", "12) y"])
def test_block_syntax_at_a_line_start_is_escaped(text):
    import markdown
    html = markdown.markdown(md_text(text), extensions=["admonition"])
    assert html.startswith("<p>") and "<ol>" not in html and "<ul>" not in html and "admonition" not in html


# 12. the small ones
def test_a_long_csv_cell_loads(records):
    folder = records({"house.yaml": HOUSE + SMOKE,
                      "log.csv": "date,device,action,result,by,note\n"
                                 f"2026-11-01,test-house/main/s1,note,,me,{'x' * 200000}\n"})
    loaded = load_records(folder, DEMO_AS_OF)
    assert loaded.problems == [] and len(loaded.portfolio.events[0].note) == 200000


def test_a_note_that_is_not_utf8_is_refused_cleanly(records):
    import subprocess
    import sys
    folder = records({"house.yaml": HOUSE + SMOKE})
    script = Path(sys.executable).parent / "recordkit"
    result = subprocess.run([str(script), "log", "test-house/main/s1", "clean", "-r", str(folder),
                             b"--note", b"caf\xe9"], capture_output=True, timeout=60)
    assert result.returncode == 2 and b"not valid UTF-8" in result.stderr and b"Traceback" not in result.stderr


def test_a_writer_waiting_on_a_lock_says_so_and_gives_up(tmp_path, monkeypatch, caplog):
    import fcntl

    from recordkit import logbook
    from recordkit.logbook import LogWriteError, NewEvent, append_events, lock_path
    from recordkit.model import Action
    path = tmp_path / "log.yaml"
    monkeypatch.setattr(logbook, "LOCK_TIMEOUT_S", 0.3)
    with open(lock_path(path, tmp_path).parent.mkdir(parents=True, exist_ok=True) or lock_path(path, tmp_path),
              "a") as held:
        fcntl.flock(held, fcntl.LOCK_EX)
        with pytest.raises(LogWriteError, match="another writer has held"):
            append_events(path, [NewEvent(date(2026, 1, 1), "a/b/c", Action.CLEAN)], tmp_path)
    assert "waiting" in caplog.text and not path.exists()


def test_an_events_export_kept_in_the_records_folder_is_reported(tmp_path):
    folder = demo_copy(tmp_path)
    exported = run_cli("export", "-r", str(folder), "--as-of", AS_OF, "--table", "events",
                       "-o", str(folder / "log" / "all.csv"))
    assert exported.returncode == 0
    result = run_cli("check", "-r", str(folder), "--as-of", AS_OF)
    assert result.returncode == 1 and "all.csv: every event in this file is also in other record files" in result.stderr


@pytest.mark.parametrize("value", [".inf", ".nan", "-.inf"])
def test_non_finite_node_figures_are_refused(records, value):
    from .test_nodes import node_house
    folder = records({"p.yaml": node_house(node_extra=f"          corner_hz: {value}\n")})
    messages = [p.message for p in load_records(folder, DEMO_AS_OF).problems]
    assert any("finite" in m for m in messages), messages
