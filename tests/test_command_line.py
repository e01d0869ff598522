"""One command line: every command checked against the option rules, so a later command cannot drift;
the monitoring mode's exit codes; options given twice; build's refusal to write among the records."""
from __future__ import annotations

import shutil
from datetime import datetime

import click
import pytest

from recordkit.cli import main
from recordkit.cli.options import DATE_FORMATS, OnceCommand

from .conftest import DEMO_AS_OF, DEMO_RECORDS, HOUSE, device_yaml, run_cli

AS_OF = DEMO_AS_OF.isoformat()
READS_RECORDS = {"check", "status", "rules", "node", "build", "serve", "checklist", "calendar", "export", "log",
                 "import", "hear", "init", "replace", "add property", "add unit", "add room", "add device"}


def commands(group: click.Group = main, prefix: str = ""):
    for name, command in group.commands.items():
        if isinstance(command, click.Group):
            yield from commands(command, f"{prefix}{name} ")
        else:
            yield f"{prefix}{name}", command


ALL = dict(commands())


def test_the_command_list_is_what_this_test_knows():
    assert READS_RECORDS <= set(ALL), READS_RECORDS - set(ALL)


@pytest.mark.parametrize("name", sorted(ALL))
def test_every_command_follows_the_option_rules(name):
    command = ALL[name]
    assert command.help, f"{name} has no help text"
    assert isinstance(command, OnceCommand), f"{name} does not refuse an option given twice"
    options = {opt: p for p in command.params if isinstance(p, click.Option) for opt in p.opts}
    arguments = [p.name for p in command.params if isinstance(p, click.Argument)]
    for param in command.params:
        if isinstance(param, click.Option) and not param.hidden:
            assert param.help, f"{name} {param.opts} has no help text"
    if name in READS_RECORDS:
        records = options.get("--records")
        assert records is not None and records.opts == ["-r", "--records"], name
        assert records.envvar == "RECORDKIT_RECORDS" and records.default == "records", name
        assert not any("record" in a for a in arguments), f"{name} takes the records folder as an argument"
    assert "--output" not in options and "--json" not in options, name
    if "--out" in options:
        assert options["--out"].opts == ["-o", "--out"], name
    if "-o" in options:
        assert options["-o"].opts == ["-o", "--out"], name
    if "--format" in options:
        assert isinstance(options["--format"].type, click.Choice), name
    if "--date" in options:
        assert list(options["--date"].type.formats) == DATE_FORMATS, name
        assert any(" " in f for f in DATE_FORMATS) and "%Y-%m-%d" in DATE_FORMATS


def test_every_date_option_takes_a_date_and_a_time():
    for text in ("2026-11-30", "2026-11-30 10:30", "2026-11-30T10:30:15"):
        assert any(_parses(text, f) for f in DATE_FORMATS), text


def _parses(text: str, pattern: str) -> bool:
    try:
        datetime.strptime(text, pattern)
        return True
    except ValueError:
        return False


@pytest.mark.parametrize("args", [
    ("status", "-r", "records", "--as-of", "2026-12-01", "--as-of", "2026-12-02"),
    ("status", "--format=json", "--format", "text"),
    ("log", "a/b/c", "test", "--note", "-r", "--note", "again"),
])
def test_an_option_given_twice_is_refused(args):
    result = run_cli(*args)
    assert result.returncode == 2 and "given twice" in result.stderr


def test_a_repeatable_option_collects_every_value():
    both = run_cli("status", "-r", "records", "--as-of", AS_OF, "--format", "json", "--property", "tansy-house",
                   "--property", "bramble-cottage")
    import json
    units = {item["unit"].split("/")[0] for item in json.loads(both.stdout)["items"]}
    assert units == {"tansy-house", "bramble-cottage"}


def test_records_folder_from_the_environment(tmp_path):
    import os
    import subprocess
    import sys
    from pathlib import Path

    script = Path(sys.executable).parent / "recordkit"
    result = subprocess.run([str(script), "check", "--as-of", AS_OF], capture_output=True, text=True, cwd=tmp_path,
                            env={**os.environ, "RECORDKIT_RECORDS": str(DEMO_RECORDS)})
    assert result.returncode == 0 and "no problems" in result.stdout


# ---- status filters and the monitoring mode --------------------------------------------------------

def test_status_filters(tmp_path):
    import json
    result = run_cli("status", "-r", "records", "--as-of", AS_OF, "--format", "json", "--unit", "tansy-house/flat-1",
                     "--task", "battery", "--within", "30")
    items = json.loads(result.stdout)["items"]
    assert items and all(i["unit"] == "tansy-house/flat-1" and i["task"] == "battery" for i in items)
    assert all(i["state"] == "overdue" or i["due"] <= "2026-12-31" for i in items)
    assert run_cli("status", "-r", "records", "--unit", "tansy-house/nowhere").returncode == 2


def _monitor(folder, as_of):
    return run_cli("status", "-r", str(folder), "--as-of", as_of, "--monitor")


def test_monitoring_mode_follows_the_plugin_convention(records):
    # The open monitoring-plugin convention: 0 OK, 1 WARNING, 2 CRITICAL, 3 UNKNOWN (from memory).
    folder = records({"house.yaml": HOUSE.replace("      devices:\n", "      devices:\n" + device_yaml(
            id="s1", kind="smoke", room="bed-1", power="sealed", manufactured="2026-01", installed="2026-02-01")
        + device_yaml(id="s2", kind="smoke", room="hall", power="sealed", manufactured="2026-01",
                      installed="2026-02-01")),
        "log.yaml": "events:\n  - {date: 2026-11-20, device: test-house/main/s1, action: test, result: pass}\n"
                    "  - {date: 2026-11-20, device: test-house/main/s2, action: test, result: pass}\n"})
    ok = _monitor(folder, "2026-11-21")
    assert ok.returncode == 0 and ok.stdout.startswith("ALARM RECORDS OK") and ok.stdout.count("\n") == 1
    soon = _monitor(folder, "2026-12-17")  # the monthly test falls due 2026-12-20: within 7 days
    assert soon.returncode == 1 and "WARNING" in soon.stdout
    late = _monitor(folder, "2027-01-05")
    assert late.returncode == 2 and "CRITICAL" in late.stdout and "overdue=" in late.stdout
    (folder / "bad.yaml").write_text("property: [\n")
    unreadable = _monitor(folder, "2026-11-21")
    assert unreadable.returncode == 3 and "UNKNOWN" in unreadable.stdout


# ---- build never writes among the records -------------------------------------------------------

@pytest.mark.parametrize("where", ["records", "parent", "inside"])
def test_build_refuses_an_output_folder_among_the_records(tmp_path, where):
    home = tmp_path / "home"
    folder = home / "records"
    shutil.copytree(DEMO_RECORDS, folder, ignore=shutil.ignore_patterns(".recordkit"))
    before = {p: p.read_bytes() for p in folder.rglob("*") if p.is_file()}
    out = {"records": folder, "parent": home, "inside": folder / "log" / "site"}[where]
    result = run_cli("build", "-r", str(folder), "--as-of", AS_OF, "-o", str(out))
    assert result.returncode == 1 and "would delete records" in result.stderr
    after = {p: p.read_bytes() for p in folder.rglob("*") if p.is_file() and ".recordkit" not in p.parts}
    assert after == before
    assert not (folder / "log" / "site").exists()


def test_build_refuses_a_folder_of_other_files_unless_forced(tmp_path):
    other = tmp_path / "docs"
    other.mkdir()
    (other / "notes.txt").write_text("mine")
    refused = run_cli("build", "-r", "records", "--as-of", AS_OF, "-o", str(other))
    assert refused.returncode == 1 and "--force" in refused.stderr and (other / "notes.txt").exists()
    again = tmp_path / "site"
    assert run_cli("build", "-r", "records", "--as-of", AS_OF, "-o", str(again)).returncode == 0
    assert run_cli("build", "-r", "records", "--as-of", AS_OF, "-o", str(again)).returncode == 0  # its own build


def test_a_mkdocs_yml_in_the_records_folder_overrides_the_built_in_configuration(tmp_path):
    folder = tmp_path / "records"
    shutil.copytree(DEMO_RECORDS, folder, ignore=shutil.ignore_patterns(".recordkit"))
    (folder / "mkdocs.yml").write_text("site_name: Hollybank alarm book\nplugins:\n  - search\n")
    (folder / "pages" / "contacts.md").write_text("# Contacts\n\nThe caretaker.\n")
    site = tmp_path / "site"
    result = run_cli("build", "-r", str(folder), "--as-of", AS_OF, "-o", str(site))
    assert result.returncode == 0, result.stderr
    index = (site / "index.html").read_text()
    assert "Hollybank alarm book" in index            # the user's setting
    assert "recordkit-mark.svg" in index              # the built-in theme settings still apply
    assert (site / "contacts.html").is_file() and (site / "properties/tansy-house.html").is_file()
    from .sitecheck import broken_links
    assert broken_links(site) == []


def test_build_loads_the_records_once_and_says_what_to_run_in_an_empty_folder(tmp_path):
    empty = tmp_path / "records"
    empty.mkdir()
    result = run_cli("build", "-r", str(empty), "-o", str(tmp_path / "site"))
    assert result.returncode == 1 and "recordkit init" in result.stderr and "Traceback" not in result.stderr
    broken = shutil.copytree(DEMO_RECORDS, tmp_path / "broken", ignore=shutil.ignore_patterns(".recordkit"))
    (broken / "x.yaml").write_text("property: [\n")
    result = run_cli("build", "-r", str(broken), "--as-of", AS_OF, "-o", str(tmp_path / "site2"))
    assert result.returncode == 1 and "x.yaml:2: YAML syntax" in result.stderr
