"""`add` inserts lines and changes no existing byte, over many hand-written layouts; `init`; `replace`."""
from __future__ import annotations

import json
import tempfile
from datetime import date
from pathlib import Path

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from recordkit.additions import AddRefused, add_entry
from recordkit.loader import load_records

from .conftest import run_cli
from .sitecheck import scan

AS_OF = date(2026, 12, 1)

names = st.sampled_from(['Front room', '"Quoted: name # not a comment"', "'single quoted'", "Flat A - north",
                         '"Ünïcödé flat"', "plain"])


@st.composite
def layouts(draw):
    """A property file as a person might write it: comments, blank lines, several units, block or flow
    items, 2- or 4-space indents, quoted names, a list key present, empty or missing, CRLF or LF."""
    step = draw(st.sampled_from([2, 4]))
    gap = lambda: draw(st.sampled_from(["", "\n", "# a comment line\n", "\n   # indented comment\n"]))  # noqa: E731
    out = [draw(st.sampled_from(["", "# Records of the test property\n", "# yaml-language-server: x\n\n"]))]
    out.append("property:\n" + " " * step + "id: p\n" + " " * step + f"name: {draw(names)}\n")
    out.append(" " * step + "units:" + draw(st.sampled_from(["", "  # the flats"])) + "\n")
    dash = step * draw(st.sampled_from([1, 2]))
    units = draw(st.integers(1, 3))
    for u in range(units):
        key = " " * (dash + 2)
        out.append(" " * dash + f"- id: u{u}\n" + gap())
        out.append(key + f"name: {draw(names)}\n")
        out.append(key + "rooms:\n")
        room_dash = dash + 2 + draw(st.sampled_from([0, 2]))
        for r in range(draw(st.integers(1, 3))):
            if draw(st.booleans()):
                out.append(" " * room_dash + f"- {{id: r{r}, level: {r % 2}, use: bedroom}}  # flow item\n")
            else:
                out.append(" " * room_dash + f"- id: r{r}\n" + " " * (room_dash + 2) + f"level: {r % 2}\n"
                           + " " * (room_dash + 2) + "use: hallway\n")
            out.append(gap())
        devices = draw(st.sampled_from(["block", "flow-items", "empty", "missing"]))
        if devices != "missing":
            out.append(key + "devices:" + draw(st.sampled_from(["", "   # none yet"])) + "\n")
        if devices in ("block", "flow-items"):
            for d in range(draw(st.integers(1, 2))):
                if devices == "flow-items":
                    out.append(" " * (dash + 4) + f"- {{id: d{d}, kind: heat, room: r0, power: mains, "
                               "installed: 2024-01-01, manufactured: 2023-06}\n")
                else:
                    pad = " " * (dash + 6)
                    out.append(" " * (dash + 4) + f"- id: d{d}\n" + f"{pad}kind: heat\n{pad}room: r0\n"
                               f"{pad}power: mains\n{pad}installed: 2024-01-01\n"
                               f"{pad}manufactured: 2023-06   # from the label\n")
        out.append(gap())
    text = "".join(out)
    if draw(st.booleans()):
        text = text.rstrip("\n")  # no line break at the end
    if draw(st.booleans()):
        text = text.replace("\n", "\r\n")
    return text, units


def _inserted_only(old: str, new: str) -> bool:
    """new is old with one block of whole lines put in (and, at the end, a missing line break added)."""
    old_lines, new_lines = old.splitlines(keepends=True), new.splitlines(keepends=True)
    extra = len(new_lines) - len(old_lines)
    for k in range(len(old_lines) + 1):
        head_ok = new_lines[:k] == old_lines[:k] or (
            k == len(old_lines) and new_lines[:k - 1] == old_lines[:k - 1]
            and new_lines[k - 1].rstrip("\r\n") == old_lines[k - 1] and not old_lines[k - 1].endswith("\n"))
        if extra > 0 and head_ok and new_lines[k + extra:] == old_lines[k:]:
            return True
    return False


def _shape(loaded):
    return [(u.id, [r.id for r in u.rooms], [d.id for d in u.devices])
            for p in loaded.portfolio.properties for u in p.units]


@settings(max_examples=120, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(layouts(), st.sampled_from(["room", "device", "unit"]), st.integers(0, 2))
def test_add_keeps_every_existing_byte(layout, what, unit_index):
    text, units = layout
    unit_id = f"u{unit_index % units}"
    data = {"room": {"id": "new-room", "name": "New: room", "level": 2, "use": "bedroom"},
            "device": {"id": "new-alarm", "kind": "smoke", "room": "r0", "power": "battery",
                       "manufactured": "2026-05", "installed": date(2026, 6, 1), "location": "ceiling, # centre"},
            "unit": {"id": "new-unit", "name": "Flat 'B'"}}[what]
    with tempfile.TemporaryDirectory() as folder:
        records = Path(folder)
        path = records / "p.yaml"
        path.write_bytes(text.encode())
        before = load_records(records, AS_OF, cache=False)
        assert before.problems == [], [str(p) for p in before.problems]
        parent = "p" if what == "unit" else f"p/{unit_id}"
        add_entry(records, before, what, parent, data)
        new = path.read_bytes().decode()
        assert _inserted_only(text, new), (text, new)
        after = load_records(records, AS_OF, cache=False)
        assert after.problems == [], [str(p) for p in after.problems]
        expected = [(u, list(r), list(d)) for u, r, d in _shape(before)]
        if what == "unit":
            expected.append(("new-unit", [], []))
        else:
            target = next(item for item in expected if item[0] == unit_id)
            (target[1] if what == "room" else target[2]).append(data["id"])
        assert _shape(after) == expected
        if what == "device":
            device = after.portfolio.devices[f"p/{unit_id}/new-alarm"].device
            assert (device.location, device.manufactured, device.installed) == (
                "ceiling, # centre", date(2026, 5, 1), date(2026, 6, 1))


@pytest.mark.parametrize("layout", [
    "property:\n  id: p\n  name: P\n  units:\n    - id: u\n      rooms: [{id: r0, level: 0, use: bedroom}]\n",
    "property:\n  id: p\n  name: P\n  units:\n    - {id: u, rooms: [{id: r0, level: 0, use: bedroom}]}\n",
    "property:\n  id: p\n  name: P\n  units:\n    - id: u\n      rooms:\n        - {id: r0, level: 0, use: bedroom}\n"
    "      devices: []\n",
])
def test_a_layout_that_cannot_take_a_clean_insertion_is_refused_with_the_lines(tmp_path, layout):
    path = tmp_path / "p.yaml"
    path.write_text(layout)
    loaded = load_records(tmp_path, AS_OF, cache=False)
    assert loaded.problems == []
    what = "room" if "devices: []" not in layout else "device"
    data = {"id": "x", "level": 1, "use": "hallway"} if what == "room" else {
        "id": "x", "kind": "heat", "room": "r0", "installed": "2026-01-01", "manufactured": "2025-01"}
    with pytest.raises(AddRefused) as refused:
        add_entry(tmp_path, loaded, what, "p/u", data)
    assert refused.value.lines.startswith("- id: x\n")
    assert path.read_text() == layout  # not a byte changed


def test_add_refuses_what_the_loader_would_refuse(tmp_path):
    assert run_cli("init", "-r", str(tmp_path / "r"), "--no-input").returncode == 0
    bad_room = run_cli("add", "device", "-r", str(tmp_path / "r"), "--unit", "my-property/home", "--id", "a",
                       "--kind", "smoke", "--room", "attic", "--manufactured", "2025-01")
    assert bad_room.returncode == 1 and "room 'attic' is not a room of this unit" in bad_room.stderr
    assert ":2" in bad_room.stderr.split("room 'attic'")[0]  # file:line of the entry it would have written
    twice = run_cli("add", "room", "-r", str(tmp_path / "r"), "--unit", "my-property/home", "--id", "hall",
                    "--level", "0", "--use", "hallway")
    assert twice.returncode == 1 and "duplicate id 'hall'" in twice.stderr


# ---- init ------------------------------------------------------------------------------------------

def test_init_then_check_succeeds_and_an_empty_folder_says_to_run_init(tmp_path):
    empty = tmp_path / "empty"
    empty.mkdir()
    for command in ("check", "status"):
        result = run_cli(command, "-r", str(empty))
        assert result.returncode == 1 and "recordkit init" in result.stderr
    missing = run_cli("check", "-r", str(tmp_path / "nowhere"))
    assert missing.returncode == 1 and "recordkit init" in missing.stderr
    made = run_cli("init", "-r", str(empty), "--no-input", "--rules", "england-2022")
    assert made.returncode == 0, made.stderr
    assert run_cli("check", "-r", str(empty)).returncode == 0
    text = (empty / "my-property.yaml").read_text()
    assert "CHANGE ME" in text
    fields = [line for line in text.splitlines() if ":" in line and not line.lstrip().startswith("#")]
    assert all("  # " in line for line in fields), [line for line in fields if "  # " not in line]
    assert ".recordkit/" in (empty / ".gitignore").read_text()
    assert "coverage: england-2022" in (empty / "policy.yaml").read_text()


def test_init_never_overwrites_a_file(tmp_path):
    folder = tmp_path / "r"
    folder.mkdir()
    (folder / "policy.yaml").write_text("# mine\n")
    result = run_cli("init", "-r", str(folder), "--no-input", "--property-id", "elm-court")
    assert result.returncode == 0 and "kept" in result.stdout
    assert (folder / "policy.yaml").read_text() == "# mine\n"
    assert run_cli("init", "-r", str(folder), "--no-input", "--property-id", "Bad Id").returncode == 2


def test_coverage_under_policy_says_where_it_belongs(tmp_path):
    folder = tmp_path / "r"
    assert run_cli("init", "-r", str(folder), "--no-input").returncode == 0
    (folder / "policy.yaml").write_text("policy:\n  coverage: england-2022\n")
    result = run_cli("check", "-r", str(folder))
    assert result.returncode == 1
    assert "policy.yaml:2: 'coverage:' belongs at the top level of policy.yaml" in result.stderr


# ---- replace ---------------------------------------------------------------------------------------

def test_replace_logs_adds_links_and_keeps_the_test_history_of_the_position(tmp_path):
    folder = tmp_path / "r"
    today = date.today()
    month_start = today.replace(day=1)
    assert run_cli("init", "-r", str(folder), "--no-input").returncode == 0
    for room in ("bedroom-1", "hall"):
        assert run_cli("add", "device", "-r", str(folder), "--unit", "my-property/home", "--id", f"{room}-smoke",
                       "--kind", "smoke", "--room", room, "--manufactured", "2024-01", "--sensor", "photoelectric",
                       "--date", "2024-02-01").returncode == 0
    old, new = "my-property/home/hall-smoke", "my-property/home/hall-smoke-2"
    failed = run_cli("log", old, "test", "--result", "fail", "-r", str(folder), "--date", f"{month_start} 09:00")
    assert failed.returncode == 0, failed.stderr
    result = run_cli("replace", old, "--new-id", "hall-smoke-2", "--manufactured", "2026-10", "-r", str(folder),
                     "--date", str(month_start))
    assert result.returncode == 0, result.stderr
    status = json.loads(run_cli("status", "-r", str(folder), "--format", "json", "--all").stdout)
    tasks = {(i["device"], i["task"]) for i in status["items"]}
    assert (new, "replace") in tasks and not any(device == old for device, _ in tasks)
    assert not any(i["task"] == "coverage" for i in status["items"])  # a same-day replacement leaves no gap
    loaded = load_records(folder, today)
    device = loaded.portfolio.devices[new].device
    assert (device.replaces, device.room, device.sensor, device.installed) == (
        "hall-smoke", "hall", loaded.portfolio.devices[old].device.sensor, month_start)
    site = tmp_path / "site"
    assert run_cli("build", "-r", str(folder), "-o", str(site)).returncode == 0
    page = scan(site / "properties/my-property/home.html")
    assert "#device-hall-smoke" in page.links and "#device-hall-smoke-2" in page.links
    html = (site / "properties/my-property/home.html").read_text()
    assert f"hall-smoke-2 (was hall-smoke) {month_start:%B %Y}: fail" in html  # the old failure keeps its month


def test_replace_dated_before_the_old_devices_last_event_writes_nothing(tmp_path):
    folder = tmp_path / "r"
    assert run_cli("init", "-r", str(folder), "--no-input").returncode == 0
    assert run_cli("add", "device", "-r", str(folder), "--unit", "my-property/home", "--id", "hall-smoke",
                   "--kind", "smoke", "--room", "hall", "--manufactured", "2024-01", "--date", "2024-02-01").returncode == 0
    assert run_cli("log", "my-property/home/hall-smoke", "test", "--result", "pass", "-r", str(folder),
                   "--date", "2025-03-10").returncode == 0
    before = {p: p.read_bytes() for p in folder.rglob("*.yaml")}
    result = run_cli("replace", "my-property/home/hall-smoke", "--new-id", "hall-smoke-2", "--manufactured", "2025-01",
                     "-r", str(folder), "--date", "2025-03-01")
    assert result.returncode == 1
    assert "has events up to 2025-03-10" in result.stderr
    assert {p: p.read_bytes() for p in folder.rglob("*.yaml")} == before  # the records still load as they did
    assert run_cli("check", "-r", str(folder)).returncode == 0


def test_init_in_a_terminal_asks_for_what_is_missing(tmp_path):
    import os
    import pty
    import subprocess
    import sys
    import time

    script = Path(sys.executable).parent / "recordkit"
    leader, follower = pty.openpty()
    process = subprocess.Popen([str(script), "init", "-r", str(tmp_path / "r"), "--rules", "us-irc"],
                               stdin=follower, stdout=follower, stderr=follower, close_fds=True)
    os.close(follower)
    seen = b""
    for answer in (b"birch-house\n", b"Birch House\n", b"9 Birch Lane\n"):
        deadline = time.monotonic() + 30
        while not seen.rstrip().endswith(b":") and time.monotonic() < deadline:
            seen += os.read(leader, 1024)
        os.write(leader, answer)
        seen = b""
    assert process.wait(timeout=60) == 0
    os.close(leader)
    text = (tmp_path / "r" / "birch-house.yaml").read_text()
    assert 'name: "Birch House"' in text and 'address: "9 Birch Lane"' in text and "CHANGE ME)" not in text
