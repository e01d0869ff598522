"""The tool as a new user gets it: a wheel installed into a fresh venv, used in an empty folder outside the
checkout, from `init` to a built site, a printed sheet, a calendar and a heard recording."""
from __future__ import annotations

import json
import os
import shutil
import subprocess
import sys
import sysconfig
import wave
from datetime import date
from pathlib import Path

import numpy as np
import pytest

from .conftest import REPO
from .sitecheck import broken_links

AS_OF = date.today().isoformat()  # log and replace refuse future dates, so the story is set on today


@pytest.fixture(scope="module")
def installed(tmp_path_factory) -> Path:
    """`recordkit` from a wheel in a fresh venv; the dependencies come from the test venv through a .pth
    file (no network), the package itself only from the wheel."""
    work = tmp_path_factory.mktemp("wheel")
    dist = work / "dist"
    source = work / "source"  # a clean copy: setuptools' build/ folder in the checkout could hold stale files
    shutil.copytree(REPO, source, ignore=shutil.ignore_patterns(".git", ".venv", "site", "artifacts", "build",
                                                                "*.egg-info", "__pycache__", ".recordkit"))
    subprocess.run([sys.executable, "-m", "pip", "wheel", str(source), "--no-deps", "--no-build-isolation",
                    "-q", "-w", str(dist)], check=True, capture_output=True, cwd=work)
    venv = work / "venv"
    subprocess.run([sys.executable, "-m", "venv", str(venv)], check=True)
    python = venv / "bin" / "python"
    site = subprocess.run([str(python), "-c", "import sysconfig; print(sysconfig.get_paths()['purelib'])"],
                          check=True, capture_output=True, text=True).stdout.strip()
    (Path(site) / "test-dependencies.pth").write_text(sysconfig.get_paths()["purelib"] + "\n")
    wheel = next(dist.glob("recordkit-*.whl"))
    subprocess.run([str(python), "-m", "pip", "install", "--no-deps", "--no-index", "-q", str(wheel)],
                   check=True, capture_output=True)
    return venv / "bin" / "recordkit"


def test_a_new_user_goes_from_init_to_a_site_in_an_empty_folder(installed, tmp_path):
    home = tmp_path / "landlord"
    home.mkdir()
    env = {k: v for k, v in os.environ.items() if not k.startswith("RECORDKIT")}

    def run(*args: str) -> subprocess.CompletedProcess:
        result = subprocess.run([str(installed), *args], capture_output=True, text=True, cwd=home, env=env,
                                timeout=300)
        assert result.returncode == 0, (args, result.stdout, result.stderr)
        return result

    # the package in use is the installed wheel, not the checkout
    where = subprocess.run([str(installed.parent / "python"), "-c", "import recordkit; print(recordkit.__file__)"],
                           capture_output=True, text=True, cwd=home, env=env).stdout
    assert str(REPO) not in where and str(installed.parent.parent) in where

    run("init", "--no-input", "--property-id", "elm-court", "--name", "Elm Court", "--address", "4 Elm Row")
    run("check")
    run("add", "property", "--id", "ash-villa", "--name", "Ash Villa", "--unit", "main")
    run("add", "unit", "--property", "elm-court", "--id", "flat-2", "--name", "Flat 2")
    run("add", "room", "--unit", "elm-court/flat-2", "--id", "bed", "--level", "1", "--use", "bedroom")
    run("add", "room", "--unit", "elm-court/flat-2", "--id", "landing", "--level", "1", "--use", "hallway",
        "--outside-sleeping")
    for room in ("bedroom-1", "hall"):
        run("add", "device", "--unit", "elm-court/home", "--id", f"{room}-smoke", "--kind", "smoke", "--room", room,
            "--manufactured", "2024-03", "--date", "2025-01-10")
    run("add", "device", "--unit", "elm-court/flat-2", "--id", "bed-smoke", "--kind", "smoke", "--room", "bed",
        "--manufactured", "2019-05", "--date", "2025-01-10")
    run("log", "elm-court/home/hall-smoke", "test", "--result", "pass", "--by", "owner")
    run("log", "elm-court/flat-2/bed-smoke", "test", "--result", "fail", "--note", "silent")
    run("replace", "elm-court/flat-2/bed-smoke", "--new-id", "bed-smoke-2", "--manufactured", "2026-10")
    run("check")
    status = json.loads(subprocess.run([str(installed), "status", "--format", "json"], capture_output=True,
                                       text=True, cwd=home, env=env).stdout)
    devices = {item["device"] for item in status["items"]}
    assert "elm-court/flat-2/bed-smoke-2" in devices and "elm-court/flat-2/bed-smoke" not in devices
    run("build")
    site = home / "site"
    assert (site / "index.html").is_file() and (site / "properties/elm-court/flat-2.html").is_file()
    assert broken_links(site) == []
    assert "TemplateNotFound" not in run("checklist", "--property", "elm-court", "-o", "x.html").stderr
    if shutil.which("pdftotext") or os.environ.get("CI"):
        run("checklist", "--property", "elm-court", "-o", "x.pdf")
        assert (home / "x.pdf").read_bytes().startswith(b"%PDF")
    # the walk-round form, its script and a unit's labels come from the package too
    assert (site / "walkround/elm-court/flat-2.html").is_file() and (site / "assets/walkround.js").is_file()
    assert "<svg" in (site / "labels/elm-court/flat-2.html").read_text()
    run("labels", "--property", "elm-court", "-o", "labels.html")
    assert (home / "labels.html").read_text().count('class="label"') >= 2
    run("calendar", "-o", "due.ics")
    assert (home / "due.ics").read_text().startswith("BEGIN:VCALENDAR")
    recording = home / "test.wav"
    _temporal_3_wav(recording)
    heard = json.loads(run("hear", str(recording), "--format", "json").stdout)
    assert heard["pattern"] == "temporal-3"
    run("hear", str(recording), "--device", "elm-court/home/hall-smoke", "--log")
    # nothing of the tool's own lands among the records but its hidden folder
    made = sorted(p.name for p in (home / "records").iterdir())
    assert made == [".gitignore", ".recordkit", "ash-villa.yaml", "elm-court.yaml", "evidence", "log", "policy.yaml"]


def _temporal_3_wav(path: Path, rate: int = 16000, freq: float = 3150.0) -> None:
    # ISO 8201 temporal-3: three 0.5 s sounds with 0.5 s gaps, then 1.5 s off (standards.md)
    cycle = [(0.5, True), (0.5, False)] * 2 + [(0.5, True), (1.5, False)]
    pieces = []
    for _ in range(2):
        for length, on in cycle:
            t = np.arange(int(length * rate)) / rate
            pieces.append(0.3 * np.sin(2 * np.pi * freq * t) * on)
    samples = (np.concatenate(pieces) * 32767).astype("<i2")
    with wave.open(str(path), "wb") as out:
        out.setnchannels(1)
        out.setsampwidth(2)
        out.setframerate(rate)
        out.writeframes(samples.tobytes())
