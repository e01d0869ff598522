"""Scale benchmark: what a landlord waits for, beside the floors, measured in one run on one machine.

    .venv/bin/python bench/run.py              # N = 1,000, 3,000, 10,000 units (the last takes a while)
    .venv/bin/python bench/run.py 1000 3000    # chosen sizes

Each size: a synthetic portfolio with five years of history, then, as a user runs them (`recordkit ...`
in a child process, timed from outside, peak memory from the child's own rusage):
  build cold     `build` with no caches at all (a fresh clone)
  build warm     `build` into a new folder: records from the parse cache, every page made
  no change      `build` again into that folder, nothing changed (every page kept)
  log            `log` of one test
  one event      `build` after that `log` (the unit's and property's pages, the overview, calendar, search)
  status         `status` after that `log` (run once before it: the kept findings are warm, but for the
                 property just logged), and `status --property P --within 30`
  serve          what `serve` does after a saved edit: in one process that has built the site, `log` one
                 more test (another process) and build again
Floors, built in the same run:
  like pages     bare MkDocs (no recordkit plugin) with the same theme, plugins and Markdown extensions,
                 building the very pages recordkit generated (written out as files first)
  one-line       bare MkDocs, the same configuration, as many one-line Markdown pages
Not a test: it prints figures for a person to read.
"""
from __future__ import annotations

import os
import shutil
import subprocess
import sys
import tempfile
import time
from datetime import date
from pathlib import Path

import yaml

REPO = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(REPO))

from recordkit.checks import evaluate  # noqa: E402
from recordkit.demo_portfolio import generate  # noqa: E402
from recordkit.loader import load_records  # noqa: E402
from recordkit.render.labels import DEFAULT_SITE_CONFIG  # noqa: E402
from recordkit.render.site import site_pages  # noqa: E402

AS_OF = date(2026, 12, 1)
YEARS = 5
RECORDKIT = [sys.executable, "-c", "import sys; from recordkit.cli import main; sys.exit(main())"]
ENV = {**os.environ, "NO_MKDOCS_2_WARNING": "1", "RECORDKIT_QUIET": "1"}


def child(args: list[str], cwd: Path | None = None) -> tuple[float, float]:
    """Run a command; (seconds, its peak memory in MB)."""
    start = time.perf_counter()
    process = subprocess.Popen(args, cwd=cwd, env=ENV, stdout=subprocess.DEVNULL, stderr=subprocess.PIPE)
    _, status, usage = os.wait4(process.pid, 0)
    seconds = time.perf_counter() - start
    if os.waitstatus_to_exitcode(status) not in (0, 3):  # 3: `status` found something overdue
        raise SystemExit(f"{' '.join(args[-6:])} failed: {process.stderr.read().decode()[-2000:]}")
    return seconds, usage.ru_maxrss / 1024


def recordkit(*args: str) -> tuple[float, float]:
    return child([*RECORDKIT, *args])


def floor_config(work: Path, docs: Path) -> Path:
    """Our built-in site configuration without the recordkit plugin (and its logo, which it supplies)."""
    config = yaml.safe_load(DEFAULT_SITE_CONFIG.read_text())
    config["plugins"] = [p for p in config["plugins"] if p != "recordkit"]
    config["theme"].pop("logo", None), config["theme"].pop("favicon", None)
    config.update(docs_dir=str(docs), site_dir=str(work / "floor-site"), not_in_nav="/properties/*/\n")
    path = work / "floor.yml"
    path.write_text(yaml.safe_dump(config))
    return path


def mkdocs(config: Path) -> tuple[float, float]:
    shutil.rmtree(config.parent / "floor-site", ignore_errors=True)
    return child([sys.executable, "-m", "mkdocs", "build", "-q", "-f", str(config)])


def like_pages_floor(records: Path, work: Path) -> tuple[float, int]:
    """Bare MkDocs building the pages recordkit makes, as files: (seconds, Markdown pages among them)."""
    loaded = load_records(records, AS_OF)
    findings = evaluate(loaded.portfolio, loaded.policy, AS_OF)
    docs = work / "like-docs"
    markdown = 0
    for page in site_pages(loaded, findings, AS_OF, False, None):
        path = docs / page.src_uri
        path.parent.mkdir(parents=True, exist_ok=True)
        path.write_text(page.make(), encoding="utf-8")
        markdown += path.suffix == ".md"
    return mkdocs(floor_config(work, docs))[0], markdown


def one_line_floor(pages: int, work: Path) -> float:
    docs = work / "one-line-docs"
    (docs / "properties" / "p").mkdir(parents=True)
    (docs / "index.md").write_text("# Index\n")
    for i in range(pages):
        (docs / "properties" / "p" / f"u{i}.md").write_text(f"# Unit {i}\n\nA plain page.\n")
    return mkdocs(floor_config(work, docs))[0]


SERVE = """
import subprocess, sys, time
from datetime import date
from pathlib import Path
from recordkit.mkdocs_plugin import build_site
records, site, device = Path(sys.argv[1]), Path(sys.argv[2]), sys.argv[3]
build_site(records, date.fromisoformat(sys.argv[4]), site)
subprocess.run([sys.executable, "-m", "recordkit", "log", "-r", str(records), device, "test", "--result", "pass",
                "--date", "2026-11-29", "--again"], check=True, stdout=subprocess.DEVNULL)
start = time.perf_counter()
build_site(records, date.fromisoformat(sys.argv[4]), site)
print(time.perf_counter() - start)
"""


def serve_rebuild(records: Path, site: Path, device: str) -> float:
    """Seconds `serve`'s rebuild takes after one logged test, in a process that built the site before."""
    out = subprocess.run([sys.executable, "-c", SERVE, str(records), str(site), device, AS_OF.isoformat()],
                         env=ENV, check=True, capture_output=True, text=True)
    return float(out.stdout.strip().splitlines()[-1])


def run(units: int, work: Path) -> dict:
    records = work / "records"
    counts = generate(records, units, YEARS, as_of=AS_OF)
    when = ["--as-of", AS_OF.isoformat()]
    r = {"units": units, "devices": counts["devices"], "events": counts["events"]}
    r["cold"], peak_cold = recordkit("build", "-r", str(records), *when, "-o", str(work / "cold"))
    r["warm"], peak = recordkit("build", "-r", str(records), *when, "-o", str(work / "site"))
    r["same"], _ = recordkit("build", "-r", str(records), *when, "-o", str(work / "site"))
    loaded = load_records(records, AS_OF)
    in_service = sorted(uid for uid, loc in loaded.portfolio.devices.items()
                        if loaded.portfolio.retired_on(uid) is None and loc.device.kind.value != "listening_node")
    device = in_service[len(in_service) // 2]
    prop = device.split("/")[0]
    recordkit("status", "-r", str(records), *when)  # (a landlord's daily look: the findings are kept)
    r["log"], _ = recordkit("log", device, "test", "--result", "pass", "-r", str(records), "--date",
                            "2026-11-30", "--again", "--by", "bench")
    r["event"], _ = recordkit("build", "-r", str(records), *when, "-o", str(work / "site"))
    r["status"], _ = recordkit("status", "-r", str(records), *when)
    r["status_p"], _ = recordkit("status", "-r", str(records), *when, "--property", prop, "--within", "30")
    r["serve"] = serve_rebuild(records, work / "site", device)
    r["peak"] = max(peak, peak_cold)
    r["like"], r["pages"] = like_pages_floor(records, work)
    r["one_line"] = one_line_floor(r["pages"], work)
    return r


COLUMNS = [  # heading, key or function, format
    ("units", "units", "{:,}"), ("events", "events", "{:,}"),
    ("build cold s", "cold", "{:.1f}"), ("build warm s", "warm", "{:.1f}"),
    ("like-pages floor s", "like", "{:.1f}"), ("warm / like", lambda r: r["warm"] / r["like"], "{:.2f}"),
    ("one-line floor s", "one_line", "{:.1f}"), ("warm / one-line", lambda r: r["warm"] / r["one_line"], "{:.2f}"),
    ("no change s", "same", "{:.1f}"), ("one event s", "event", "{:.1f}"), ("serve rebuild s", "serve", "{:.1f}"),
    ("log s", "log", "{:.2f}"),
    ("status s", "status", "{:.2f}"), ("status P 30 d s", "status_p", "{:.2f}"), ("peak MB", "peak", "{:.0f}"),
]


def table(rows: list[dict]) -> str:
    """The figures as a Markdown table (README's scale table is this output)."""
    value = lambda r, key: key(r) if callable(key) else r[key]
    lines = ["| " + " | ".join(h for h, _, _ in COLUMNS) + " |", "|" + "---|" * len(COLUMNS)]
    lines += ["| " + " | ".join(fmt.format(value(r, key)) for _, key, fmt in COLUMNS) + " |" for r in rows]
    return "\n".join(lines)


def main(sizes: list[int]) -> None:
    rows = []
    for units in sizes:
        with tempfile.TemporaryDirectory() as tmp:
            print(f"... {units} units", file=sys.stderr, flush=True)
            rows.append(run(units, Path(tmp)))
            print(table(rows[-1:]).splitlines()[-1], file=sys.stderr, flush=True)
    print(table(rows))
    print(f"\n{os.cpu_count()} cores. Goals: one event <= 2 s at 3,000 units and flat to 10,000; log <= 0.3 s "
          "and status <= 1 s at 10,000; serve rebuild <= 2 s at 10,000; warm / like <= 0.7; peak MB <= 1,500 at 10,000.")


if __name__ == "__main__":
    main([int(a) for a in sys.argv[1:]] or [1000, 3000, 10000])
