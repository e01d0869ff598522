"""Try to break recordkit, then write what was tried and what happened into README.md.

    .venv/bin/python bench/reliability.py [--quick]

Runs: structured mutations of the demo records and random YAML text through the loader (must load or
report file:line problems, never raise); concurrent writers on one log; writers killed at random moments;
a failure injected at each step of a write; and the attacks in bench/attacks.py (output folders, pipes and
links, the memory the size limits imply, forged cache entries, hostile and damaged recordings). The table between the reliability markers in README.md is
replaced with this run's figures.
"""
from __future__ import annotations

import errno
import os
import random
import re
import shutil
import signal
import subprocess
import sys
import tempfile
import time
from datetime import date
from pathlib import Path

REPO = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(REPO))

from recordkit import logbook  # noqa: E402
from recordkit.errors import Problems  # noqa: E402
from recordkit.loader import load_records  # noqa: E402
from recordkit.model import Action  # noqa: E402
from recordkit.yamltree import read_yaml  # noqa: E402
from tests.fuzzing import SNIPPETS, write_mutant  # noqa: E402

import attacks  # noqa: E402  (bench/attacks.py, beside this script)

AS_OF = date(2026, 12, 1)
START, END = "<!-- reliability:start -->", "<!-- reliability:end -->"
WRITER = """
import sys
from datetime import date, timedelta
from recordkit.logbook import NewEvent, append_events, Path
from recordkit.model import Action
path, who, count = Path(sys.argv[1]), sys.argv[2], int(sys.argv[3])
for i in range(count):
    append_events(path, [NewEvent(date(2026, 1, 1) + timedelta(days=i % 300), "p/u/d", Action.NOTE, note=f"{who}-{i}")])
    print(f"{who}-{i}", flush=True)
"""


def mutants(count: int) -> tuple[int, int]:
    failures = 0
    with tempfile.TemporaryDirectory() as tmp:
        for seed in range(count):
            folder = Path(tmp) / str(seed)
            folder.mkdir()
            write_mutant(folder, seed)
            try:
                load_records(folder, AS_OF, cache=False)
            except Exception:  # noqa: BLE001 - counting every escape is the point
                failures += 1
            shutil.rmtree(folder)
    return count, failures


def random_text(count: int) -> tuple[int, int]:
    rng, failures = random.Random(1), 0
    pieces = SNIPPETS + list("abc:-{}[] \n0129")
    for _ in range(count):
        text = "".join(rng.choice(pieces) for _ in range(rng.randint(0, 80)))
        try:
            read_yaml(text.encode("utf-8", "surrogatepass"), "f.yaml", Problems())
        except Exception:  # noqa: BLE001
            failures += 1
    return count, failures


def events_in(path: Path) -> list[str]:
    return re.findall(r'note: "([a-z0-9]+-\d+)"', path.read_text())


def concurrent(writers: int, each: int) -> tuple[str, bool]:
    with tempfile.TemporaryDirectory() as tmp:
        log = Path(tmp) / "log.yaml"
        log.write_text("# kept comment\nevents:\n")
        procs = [subprocess.Popen([sys.executable, "-c", WRITER, str(log), f"w{i}", str(each)], cwd=REPO,
                                  stdout=subprocess.DEVNULL) for i in range(writers)]
        ok = all(p.wait() == 0 for p in procs)
        notes = events_in(log)
        ok = ok and len(notes) == len(set(notes)) == writers * each and log.read_text().startswith("# kept comment")
        return f"{len(set(notes))} of {writers * each}", ok


def killed(kills: int) -> tuple[str, bool]:
    rng, ok = random.Random(3), True
    with tempfile.TemporaryDirectory() as tmp:
        log = Path(tmp) / "log.yaml"
        log.write_text("events:\n")
        reported: list[str] = []
        for k in range(kills):
            proc = subprocess.Popen([sys.executable, "-c", WRITER, str(log), f"k{k}", "50"], cwd=REPO,
                                    stdout=subprocess.PIPE, text=True)
            time.sleep(rng.uniform(0.2, 0.6))
            proc.send_signal(signal.SIGKILL)
            out, _ = proc.communicate()
            reported += out.split()
            problems = Problems()
            read_yaml(log.read_bytes(), str(log), problems)
            ok = ok and not problems
        on_disk = set(events_in(log))
        ok = ok and set(reported) <= on_disk
        return f"{len(reported)} reported, all on disk: {set(reported) <= on_disk}", ok


def injected_faults() -> tuple[str, bool]:
    """Fail the Nth file operation of a write with ENOSPC, for every N: the file is old or old+new."""
    calls = {"n": 0, "fail_at": 0}
    real = {"fsync": os.fsync, "replace": os.replace, "write_bytes": None}

    def counted(fn):
        def wrapper(*args, **kwargs):
            calls["n"] += 1
            if calls["n"] == calls["fail_at"]:
                raise OSError(errno.ENOSPC, "No space left on device")
            return fn(*args, **kwargs)
        return wrapper

    tried, ok = 0, True
    with tempfile.TemporaryDirectory() as tmp:
        log = Path(tmp) / "log.yaml"
        for fail_at in range(1, 8):
            log.write_text("events:\n")
            old = log.read_bytes()
            calls.update(n=0, fail_at=fail_at)
            os.fsync, os.replace = counted(real["fsync"]), counted(real["replace"])
            try:
                logbook.append_events(log, [logbook.NewEvent(AS_OF, "p/u/d", Action.CLEAN)])
                outcome = "written"
            except logbook.LogWriteError:
                outcome = "refused"
            except logbook.MaybeWritten:
                outcome = "maybe"
            finally:
                os.fsync, os.replace = real["fsync"], real["replace"]
            new = log.read_bytes()
            ok = ok and (new == old or (new.startswith(old) and b"clean" in new))
            ok = ok and (outcome != "refused" or new == old)
            tried += 1
    return f"{tried} failure points", ok


def main(quick: bool) -> None:
    scale = 0.2 if quick else 1
    rows = []
    n, bad = mutants(int(500 * scale))
    rows.append(("structured mutations of the demo records (loader)", f"{n} cases", f"{bad} escaped", bad == 0))
    n, bad = random_text(int(5000 * scale))
    rows.append(("random YAML-like text (reader)", f"{n} cases", f"{bad} escaped", bad == 0))
    for writers in (2, 4):
        figure, ok = concurrent(writers, int(200 * scale) or 20)
        rows.append((f"{writers} processes appending to one log at once", figure, "events kept, none twice", ok))
    figure, ok = killed(int(20 * scale) or 4)
    rows.append(("writers killed (SIGKILL) at random moments", figure, "file always parses", ok))
    figure, ok = injected_faults()
    rows.append(("ENOSPC injected at each fsync/rename of a write", figure, "old file, or old + new", ok))
    figure, ok = attacks.output_guard()
    rows.append(("`build -o` at the records, their parent, a folder inside, the pages", figure,
                 "refused, every record byte kept", ok))
    figure, ok = attacks.non_regular_files()
    rows.append(("FIFOs and a link to /dev/zero as records, cache entries, import and recording", figure,
                 "no hang, no traceback", ok))
    rows += attacks.size_limits()
    figure, ok = attacks.forged_cache(int(200 * scale) or 20)
    rows.append(("cache entries with bytes changed", figure, "same records as a cold parse", ok))
    figure, ok = attacks.hostile_recordings(int(300 * scale) or 30)
    rows.append(("recordings with damaged headers and bodies", figure, "a message, never another error", ok))
    figure, ok = attacks.damaged_evidence()
    rows.append(("a kept recording truncated after logging", figure, "the site still builds", ok))
    table = ["| what was tried | how much | what was checked | result |", "|---|---|---|---|"]
    table += [f"| {what} | {much} | {checked} | {'pass' if ok else 'FAIL'} |" for what, much, checked, ok in rows]
    section = f"{START}\n_Last run: {date.today()} by `bench/reliability.py`._\n\n" + "\n".join(table) + f"\n{END}"
    readme = REPO / "README.md"
    text = readme.read_text()
    text = re.sub(re.escape(START) + ".*?" + re.escape(END), lambda _: section, text, flags=re.S)
    readme.write_text(text)
    print("\n".join(table))
    sys.exit(0 if all(ok for *_, ok in rows) else 1)


if __name__ == "__main__":
    main("--quick" in sys.argv)
