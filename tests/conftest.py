"""Shared fixtures: small records folders written inline, and the real CLI entry point."""
from __future__ import annotations

import subprocess
import sys
import textwrap
from datetime import date
from pathlib import Path

import pytest

from recordkit.checks import evaluate
from recordkit.loader import load_records

REPO = Path(__file__).resolve().parent.parent
DEMO_RECORDS = REPO / "records"
DEMO_AS_OF = date(2026, 12, 1)  # the date the invented demo story is set on (see Makefile)

# A minimal valid unit; tests add devices and events to it.
HOUSE = """\
property:
  id: test-house
  name: Test House
  units:
    - id: main
      rooms:
        - {id: bed-1, level: 1, use: bedroom}
        - {id: hall, level: 1, use: hallway, outside_sleeping: true}
        - {id: kitchen, level: 1, use: kitchen}
      devices:
"""


def device_yaml(**fields) -> str:
    """One device as a flow mapping, indented to sit under HOUSE's `devices:`."""
    body = ", ".join(f"{key}: {value}" for key, value in fields.items())
    return f"        - {{{body}}}\n"


def unit_yaml(rooms, devices, flags=""):
    """One property 'p' with one unit 'u': room flow mappings, and devices as (kind, room, extra fields)
    (power sealed unless the extra fields give it)."""
    text = "property:\n  id: p\n  name: P\n  units:\n    - id: u\n" + flags + "      rooms:\n"
    text += "".join(f"        - {{{r}}}\n" for r in rooms)
    text += "      devices:\n" if devices else ""
    for i, (kind, room, extra) in enumerate(devices):
        power = "" if "power:" in extra else "power: sealed, "
        made = "manufactured: 2024-01, " if kind != "leak" else ""
        text += f"        - {{id: d{i}, kind: {kind}, room: {room}, {power}{made}installed: 2024-02-01{extra}}}\n"
    return text


def write_records(folder: Path, files: dict[str, str]) -> Path:
    for name, text in files.items():
        path = folder / name
        path.parent.mkdir(parents=True, exist_ok=True)
        path.write_text(textwrap.dedent(text), encoding="utf-8")
    return folder


@pytest.fixture
def records(tmp_path):
    """Write a records folder: records({"a.yaml": "..."}) -> its path."""
    return lambda files: write_records(tmp_path / "records", files)


def load_ok(folder: Path, as_of: date):
    loaded = load_records(folder, as_of)
    assert loaded.problems == [], [str(p) for p in loaded.problems]
    return loaded


def findings_for(folder: Path, as_of: date):
    loaded = load_ok(folder, as_of)
    return evaluate(loaded.portfolio, loaded.policy, as_of)


def run_cli(*args: str, cwd: Path = REPO) -> subprocess.CompletedProcess:
    """Run the installed `recordkit` console script (the real entry point)."""
    script = Path(sys.executable).parent / "recordkit"
    return subprocess.run([str(script), *args], capture_output=True, text=True, cwd=cwd, timeout=120)


ARTIFACTS = REPO / "artifacts"  # screenshots and PDFs the tests keep for a person to look at
CHROMIUM, CHROMEDRIVER = "/usr/bin/chromium", "/usr/bin/chromedriver"


@pytest.fixture(scope="session")
def browser():
    """Headless Chromium through chromedriver. CI installs both (.ci/run); elsewhere the test skips."""
    import os
    import shutil

    if not (shutil.which(CHROMIUM) and shutil.which(CHROMEDRIVER)):
        if os.environ.get("CI"):
            pytest.fail("chromium and chromium-driver are not installed; .ci/run installs them")
        pytest.skip("needs Debian's chromium and chromium-driver")
    from selenium import webdriver
    from selenium.webdriver.chrome.service import Service

    options = webdriver.ChromeOptions()
    options.binary_location = CHROMIUM
    for flag in ("--headless", "--no-sandbox", "--disable-gpu", "--disable-background-networking",
                 "--disable-component-update", "--disable-sync", "--no-first-run", "--window-size=1280,1400"):
        options.add_argument(flag)
    driver = webdriver.Chrome(service=Service(CHROMEDRIVER), options=options)
    yield driver
    driver.quit()
