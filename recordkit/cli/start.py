"""Commands that start records: init, plus schema and demo-portfolio."""
from __future__ import annotations

import json
import sys
from pathlib import Path

import click

from .options import EXIT_ERRORS, command, emit, load, out_option, records_option, today
from ..rules import coverage_set_names


def register(main: click.Group) -> None:
    for command_ in (init, schema_command, demo_portfolio):
        main.add_command(command_)


@command()
@records_option
@click.option("--property-id", metavar="ID", help="The first property's id (lowercase a-z, 0-9, hyphens).")
@click.option("--name", help="The property's name, as pages and sheets show it.")
@click.option("--address", help="The property's address.")
@click.option("--rules", type=click.Choice(coverage_set_names()), help="The placement rule set (default: us-irc).")
@click.option("--no-input", is_flag=True, help="Never ask; use placeholders for what is not given.")
def init(records_dir: Path, property_id, name, address, rules, no_input) -> None:
    """Start a records folder: a property file whose every field is explained, policy.yaml with
    commented examples, and a .gitignore. Never overwrites a file.

    In a terminal it asks for what the options do not give; otherwise (or with
    --no-input) the missing values are placeholders marked CHANGE ME.

    Example:  recordkit init -r records --property-id elm-court --name "Elm Court" --rules england-2022"""
    from ..starter import PLACEHOLDER_ID, StarterError, starter_files

    if sys.stdin.isatty() and not no_input:
        property_id = property_id or click.prompt("Property id (lowercase a-z, 0-9, hyphens)",
                                                  default=PLACEHOLDER_ID)
        name = name or click.prompt("Property name", default="", show_default=False) or None
        address = address or click.prompt("Address", default="", show_default=False) or None
        rules = rules or click.prompt("Placement rules", type=click.Choice(coverage_set_names()), default="us-irc")
    try:
        files = starter_files(property_id, name, address, rules or "us-irc")
    except StarterError as exc:
        raise click.UsageError(str(exc)) from None
    try:
        records_dir.mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        click.echo(f"{records_dir}: cannot create the folder ({exc.strerror})", err=True)
        sys.exit(EXIT_ERRORS)
    for file_name, text in files.items():
        path = records_dir / file_name
        try:
            with open(path, "x", encoding="utf-8") as handle:  # "x": never over an existing file
                handle.write(text)
        except FileExistsError:
            click.echo(f"  kept {path} (exists already)")
            continue
        except OSError as exc:
            click.echo(f"{path}: cannot write ({exc.strerror})", err=True)
            sys.exit(EXIT_ERRORS)
        click.echo(f"  wrote {path}")
    loaded = load(records_dir, today())
    if loaded.problems:
        sys.exit(EXIT_ERRORS)
    unit = next((u.uid for p in loaded.portfolio.properties for u in p.units), "PROPERTY/UNIT")
    flag = "" if records_dir == Path("records") else f" -r {records_dir}"
    click.echo(f"Records started in {records_dir}. Next: change the CHANGE ME values and rooms, then\n"
               f"  recordkit add device{flag} --unit {unit} --id hall-smoke --kind smoke --room hall "
               "--manufactured YYYY-MM\n"
               f"  recordkit status{flag}")


@command("schema")
@out_option("Write here (default: stdout).")
def schema_command(out: Path | None) -> None:
    """Print the JSON Schema of the record files, for editors that check YAML as you type."""
    from ..schema import record_schema

    emit(json.dumps(record_schema(), indent=2) + "\n", out)


@command("demo-portfolio")
@click.option("--units", type=click.IntRange(1), default=200, show_default=True, help="How many units.")
@click.option("--years", type=click.IntRange(1, 30), default=5, show_default=True, help="Years of history.")
@click.option("--seed", type=int, default=7, show_default=True, help="Same seed, same files.")
@click.option("--events", "events_format", type=click.Choice(["yaml", "csv"]), default="yaml", show_default=True,
              help="Keep the event logs as YAML or as CSV.")
@out_option("An empty folder to fill.", required=True, folder=True)
def demo_portfolio(units, years, seed, events_format, out: Path) -> None:
    """Write a synthetic portfolio of invented buildings (for trying recordkit at scale).

    Judge it with --as-of 2026-12-01, the date its history ends."""
    from ..demo_portfolio import generate

    if out.exists() and any(out.iterdir()):
        raise click.UsageError(f"{out} is not empty")
    click.echo(f"Writing {units} units ...", err=True)
    counts = generate(out, units, years, seed, events_format=events_format)
    click.echo(", ".join(f"{n} {what}" for what, n in counts.items()) + f" written to {out}")
