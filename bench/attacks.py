"""Attacks tried by `bench/reliability.py`: each returns (how much was tried, whether every try held).

Output-folder guard, non-regular files where files belong, the memory the size limits imply (measured as
peak RSS of a child process), forged cache entries, hostile recordings and damaged kept recordings.
"""
from __future__ import annotations

import os
import random
import shutil
import subprocess
import sys
import tempfile
import time
import wave
from pathlib import Path

REPO = Path(__file__).resolve().parent.parent
SCRIPT = Path(sys.executable).parent / "recordkit"
AS_OF = "2026-12-01"


def _cli(*args: str, timeout: float = 300) -> subprocess.CompletedProcess:
    return subprocess.run([str(SCRIPT), *args], capture_output=True, text=True, timeout=timeout)


def _demo(tmp: Path) -> Path:
    folder = tmp / "home" / "records"
    shutil.copytree(REPO / "records", folder, ignore=shutil.ignore_patterns(".recordkit"))
    return folder


def _snapshot(folder: Path) -> dict:
    return {p: p.read_bytes() for p in folder.rglob("*") if p.is_file() and ".recordkit" not in p.parts}


def output_guard() -> tuple[str, bool]:
    with tempfile.TemporaryDirectory() as work:
        folder = _demo(Path(work))
        before = _snapshot(folder)
        targets = [folder, folder.parent, folder / "log" / "site", folder / "pages"]
        refused = [_cli("build", "-r", str(folder), "--as-of", AS_OF, "-o", str(t)).returncode == 1 for t in targets]
        return f"{len(targets)} output folders", all(refused) and _snapshot(folder) == before


def non_regular_files() -> tuple[str, bool]:
    ok, tried = True, 0
    with tempfile.TemporaryDirectory() as work:
        folder = _demo(Path(work))
        _cli("check", "-r", str(folder), "--as-of", AS_OF)  # fill the cache
        entries = sorted((folder / ".recordkit" / "cache").glob("*.json"))
        cases = [(folder / "pipe.yaml", "fifo"), (folder / "log" / "pipe.csv", "fifo"), (entries[0], "fifo"),
                 (entries[1], "zero")]
        for path, what in cases:
            path.unlink(missing_ok=True)
            os.mkfifo(path) if what == "fifo" else path.symlink_to("/dev/zero")
            try:
                result = _cli("check", "-r", str(folder), "--as-of", AS_OF, timeout=60)
                ok = ok and "Traceback" not in result.stderr
            except subprocess.TimeoutExpired:
                ok = False
            tried += 1
            if what == "fifo" and path.parent == folder or path.suffix == ".csv":
                path.unlink()
        for command in (["import", str(folder / "x.csv"), "-r", str(folder)], ["hear", str(folder / "x.wav")]):
            os.mkfifo(command[1])
            try:
                ok = ok and "Traceback" not in _cli(*command, timeout=60).stderr
            except subprocess.TimeoutExpired:
                ok = False
            tried += 1
    return f"{tried} pipes and links", ok


def _peak_mb(args: list[str]) -> tuple[float, float, int]:
    """(peak RSS in MB, seconds, exit code) of one child process."""
    code = ("import resource, subprocess, sys, time; t = time.time(); r = subprocess.run(sys.argv[1:], "
            "capture_output=True); print(resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss, time.time() - t, "
            "r.returncode)")
    out = subprocess.run([sys.executable, "-c", code, *args], capture_output=True, text=True).stdout.split()
    return int(out[0]) / 1024, float(out[1]), int(out[2])


def size_limits() -> list[tuple[str, str, str, bool]]:
    rows = []
    with tempfile.TemporaryDirectory() as work:
        folder = _demo(Path(work))
        line = ("  - {date: 2025-03-04, device: tansy-house/flat-1/landing-smoke, action: clean, by: tenant, "
                "note: \"a note of some length\"}\n")
        big = folder / "log" / "big.yaml"
        big.write_text("events:\n" + line * ((16 * 1024 * 1024 - 100) // len(line)))
        mb, seconds, code = _peak_mb([str(SCRIPT), "check", "-r", str(folder), "--as-of", AS_OF])
        rows.append(("a 16 MB YAML event log (the limit), cold load", f"peak {mb:.0f} MB, {seconds:.1f} s",
                     "loads under 1.2 GB", code == 0 and mb < 1200))
        recording = Path(work) / "ten-minutes.wav"
        _temporal_3(recording, seconds=600)
        mb, seconds, code = _peak_mb([str(SCRIPT), "hear", str(recording)])
        rows.append(("a 10-minute 48 kHz recording in `hear`", f"peak {mb:.0f} MB, {seconds:.1f} s",
                     "under 300 MB and 10 s", code == 0 and mb < 300 and seconds < 10))
    return rows


def forged_cache(count: int) -> tuple[str, bool]:
    sys.path.insert(0, str(REPO))
    from recordkit.loader import load_records
    from datetime import date

    as_of, rng, ok = date(2026, 12, 1), random.Random(5), True
    with tempfile.TemporaryDirectory() as work:
        folder = _demo(Path(work))
        truth = load_records(folder, as_of, cache=False)
        load_records(folder, as_of)
        entries = sorted((folder / ".recordkit" / "cache").glob("*.json"))
        originals = {e: e.read_bytes() for e in entries}
        for _ in range(count):
            entry = rng.choice(entries)
            data = bytearray(originals[entry])
            for _ in range(rng.randint(1, 4)):
                data[rng.randrange(len(data))] = rng.randrange(32, 127)
            entry.write_bytes(bytes(data))
            loaded = load_records(folder, as_of)
            ok = ok and loaded.portfolio.properties == truth.portfolio.properties \
                and sorted(loaded.portfolio.events) == sorted(truth.portfolio.events)
            entry.write_bytes(originals[entry])
    return f"{count} forged entries", ok


def hostile_recordings(count: int) -> tuple[str, bool]:
    sys.path.insert(0, str(REPO))
    from recordkit.audio import AudioError, hear_file

    rng, ok = random.Random(9), True
    with tempfile.TemporaryDirectory() as work:
        good = Path(work) / "good.wav"
        _temporal_3(good, seconds=5, rate=16000)
        original = good.read_bytes()
        for i in range(count):
            data = bytearray(original)
            if rng.random() < 0.5:
                data = data[:rng.randrange(len(data))]
            for _ in range(rng.randint(1, 8)):
                position = rng.randrange(min(len(data), 64)) if rng.random() < 0.7 else rng.randrange(len(data))
                data[position] = rng.randrange(256)
            path = Path(work) / f"m{i}.wav"
            path.write_bytes(bytes(data))
            try:
                hear_file(path)
            except AudioError:
                pass
            except Exception:  # noqa: BLE001 - counting every escape is the point
                ok = False
            path.unlink()
    return f"{count} damaged recordings", ok


def damaged_evidence() -> tuple[str, bool]:
    with tempfile.TemporaryDirectory() as work:
        folder = _demo(Path(work))
        recording = Path(work) / "t.wav"
        _temporal_3(recording, seconds=5, rate=16000)
        logged = _cli("hear", str(recording), "--device", "tansy-house/flat-1/landing-smoke", "--log", "-r",
                      str(folder), "--date", time.strftime("%Y-%m-%d 09:00"))
        kept = next((folder / "evidence").glob("*.wav"))
        kept.write_bytes(kept.read_bytes()[:100])  # truncated after it was kept
        built = _cli("build", "-r", str(folder), "-o", str(Path(work) / "site"))
        return "1 kept recording truncated", logged.returncode == 0 and built.returncode == 0


def _temporal_3(path: Path, seconds: int, rate: int = 48000, freq: float = 3150.0) -> None:
    import numpy as np

    # ISO 8201 temporal-3: three 0.5 s sounds with 0.5 s gaps, then 1.5 s off (a 4 s cycle)
    t = np.arange(4 * rate) / rate
    gate = ((t % 1.0) < 0.5) & (t < 2.5)
    cycle = (0.3 * np.sin(2 * np.pi * freq * t) * gate * 32767).astype("<i2")
    with wave.open(str(path), "wb") as out:
        out.setnchannels(1)
        out.setsampwidth(2)
        out.setframerate(rate)
        out.writeframes(np.tile(cycle, seconds // 4).tobytes())
