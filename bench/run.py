"""Scale benchmark: prints one table of load, rule and build figures beside their floors.

    .venv/bin/python bench/run.py              # N = 100, 1,000, 10,000 units (the last takes a while)
    .venv/bin/python bench/run.py 100 1000     # chosen sizes

Floors measured in the same run: a bare `mkdocs build` of as many plain Markdown pages (kept out of the nav)
as the site has unit pages, and reading the same events from CSV with the csv module. Not a test: it
prints figures for a person to read.
"""
from __future__ import annotations

import csv
import os
import resource
import subprocess
import sys
import tempfile
import time
from datetime import date
from pathlib import Path

REPO = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(REPO))

from recordkit.checks import evaluate  # noqa: E402
from recordkit.demo_portfolio import generate  # noqa: E402
from recordkit.loader import load_records  # noqa: E402

AS_OF = date(2026, 12, 1)
YEARS = 5


def timed(fn):
    start = time.perf_counter()
    result = fn()
    return time.perf_counter() - start, result


def folder_size(path: Path) -> int:
    return sum(f.stat().st_size for f in path.rglob("*") if f.is_file())


def mkdocs(*args: str, cwd: Path, env: dict | None = None) -> float:
    start = time.perf_counter()
    subprocess.run([sys.executable, "-m", "mkdocs", "build", "-q", *args], cwd=cwd, check=True,
                   env={**os.environ, "NO_MKDOCS_2_WARNING": "1", **(env or {})})
    return time.perf_counter() - start


def bare_mkdocs_floor(pages: int, work: Path) -> float:
    docs = work / "bare" / "docs"
    (docs / "units").mkdir(parents=True)
    (docs / "index.md").write_text("# Index\n")
    for i in range(pages):
        (docs / "units" / f"u{i}.md").write_text(f"# Unit {i}\n\nA plain page.\n")
    (work / "bare" / "mkdocs.yml").write_text(
        "site_name: floor\nuse_directory_urls: false\ntheme: {name: material, font: false}\n"
        "plugins: [search]\nnot_in_nav: |\n  /units/\n")
    return mkdocs(cwd=work / "bare")


def csv_floor(records: Path) -> float:
    def read():
        count = 0
        for path in records.rglob("*.csv"):
            with open(path, newline="") as handle:
                for _ in csv.reader(handle):
                    count += 1
        return count
    return timed(read)[0]


def run(units: int, work: Path) -> dict:
    yaml_dir, csv_dir = work / "yaml", work / "csv"
    counts = generate(yaml_dir, units, YEARS, as_of=AS_OF)
    generate(csv_dir, units, YEARS, as_of=AS_OF, events_format="csv")
    cold, _ = timed(lambda: load_records(yaml_dir, AS_OF))
    warm, loaded = timed(lambda: load_records(yaml_dir, AS_OF))
    assert not loaded.problems, loaded.problems[:3]
    rules, findings = timed(lambda: evaluate(loaded.portfolio, loaded.policy, AS_OF))
    site = work / "site"
    env = {"RECORDKIT_RECORDS": str(yaml_dir), "RECORDKIT_AS_OF": AS_OF.isoformat()}
    build = mkdocs("-f", str(REPO / "mkdocs.yml"), "-d", str(site), cwd=REPO, env=env)
    peak_mb = resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss / 1024
    return {"units": units, "devices": counts["devices"], "events": counts["events"], "cold": cold, "warm": warm,
            "rules": rules, "build": build, "size_mb": folder_size(site) / 1e6, "peak_mb": peak_mb,
            "bare": bare_mkdocs_floor(units, work), "csv": csv_floor(csv_dir)}


def main(sizes: list[int]) -> None:
    rows = []
    for units in sizes:
        with tempfile.TemporaryDirectory() as tmp:
            print(f"... {units} units", file=sys.stderr, flush=True)
            rows.append(run(units, Path(tmp)))
    head = (f"{'units':>7} {'devices':>8} {'events':>9} {'cold s':>7} {'warm s':>7} {'rules s':>7} "
            f"{'build s':>8} {'bare s':>7} {'build/bare':>10} {'csv s':>6} {'warm/csv':>8} "
            f"{'site MB':>8} {'peak MB':>8} {'ms/unit':>8} {'KB/unit':>8}")
    print(head)
    for r in rows:
        print(f"{r['units']:>7} {r['devices']:>8} {r['events']:>9} {r['cold']:>7.1f} {r['warm']:>7.2f} "
              f"{r['rules']:>7.2f} {r['build']:>8.1f} {r['bare']:>7.1f} {r['build'] / r['bare']:>10.2f} "
              f"{r['csv']:>6.2f} {r['warm'] / r['csv']:>8.1f} {r['size_mb']:>8.1f} {r['peak_mb']:>8.0f} "
              f"{1000 * r['build'] / r['units']:>8.1f} {1000 * r['size_mb'] / r['units']:>8.1f}")
    print("Goals: build/bare <= 1.3, warm/csv <= 2, ms/unit and KB/unit flat (within 20 %) from 1,000 to "
          "10,000 units, peak memory under 2 GB. peak MB is the largest child process (the site build).")


if __name__ == "__main__":
    main([int(a) for a in sys.argv[1:]] or [100, 1000, 10000])
