"""Commands that start or grow records: init, add, replace, plus schema and demo-portfolio."""
from __future__ import annotations

import json
from pathlib import Path

import click

from .options import command, emit, out_option


def register(main: click.Group) -> None:
    for command in (schema_command, demo_portfolio):
        main.add_command(command)


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
