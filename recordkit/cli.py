"""The command line: a thin face over the library. The only module that imports click,
and the only place that reads the clock (for the default as-of date)."""
from __future__ import annotations

import json
import sys
from datetime import date

import click

from .checks import evaluate
from .loader import Loaded, load_records
from .schedule import State
from .status import status_json, status_text

EXIT_OK, EXIT_ERRORS, EXIT_OVERDUE = 0, 1, 3

records_argument = click.argument("records_dir", default="records", metavar="[RECORDS_DIR]",
                                  type=click.Path(file_okay=False, path_type=str))
as_of_option = click.option(
    "--as-of", "as_of", type=click.DateTime(formats=["%Y-%m-%d"]), default=None, metavar="YYYY-MM-DD",
    help="Judge the records as of this date (default: today). Events dated after it are refused.")


def _as_of(value) -> date:
    return value.date() if value else date.today()


def _load(records_dir: str, as_of: date) -> Loaded:
    loaded = load_records(records_dir, as_of)
    for problem in loaded.problems:
        click.echo(str(problem), err=True)
    if loaded.problems:
        files = {p.source.path for p in loaded.problems}
        click.echo(f"{len(loaded.problems)} problem(s) in {len(files)} file(s); fix them and run again.",
                   err=True)
    return loaded


@click.group(context_settings={"help_option_names": ["-h", "--help"]})
@click.version_option(package_name="recordkit")
def main() -> None:
    """Keep maintenance and test records of smoke, CO and heat alarms and listening
    nodes, and see what is overdue. Records are YAML files under RECORDS_DIR
    (default: records). The local fire code and the AHJ decide; this is a
    record-keeping aid, not an inspection."""


@main.command()
@records_argument
@as_of_option
def check(records_dir: str, as_of) -> None:
    """Validate the record files: print each problem as file:line: message.

    Exit status 0 when the records are sound, 1 when there are problems."""
    day = _as_of(as_of)
    loaded = _load(records_dir, day)
    if loaded.problems:
        sys.exit(EXIT_ERRORS)
    portfolio = loaded.portfolio
    units = sum(len(p.units) for p in portfolio.properties)
    click.echo(f"{records_dir}: {len(loaded.files)} files, {len(portfolio.properties)} properties, "
               f"{units} units, {len(portfolio.devices)} devices, {len(portfolio.events)} events; "
               "no problems.")


@main.command()
@records_argument
@as_of_option
@click.option("--format", "fmt", type=click.Choice(["text", "json"]), default="text", show_default=True,
              help="text for people (80 columns), json for scripts.")
@click.option("--all", "show_ok", is_flag=True, help="Also list tasks that are not yet due (text format).")
def status(records_dir: str, as_of, fmt: str, show_ok: bool) -> None:
    """Show what is overdue and due soon, and why, with the rule and its source.

    Exit status: 0 nothing overdue, 3 something overdue, 1 the records have
    problems (then nothing is reported as trusted). Suits a cron job."""
    day = _as_of(as_of)
    loaded = _load(records_dir, day)
    if loaded.problems:
        if fmt == "json":
            errors = [{"file": p.source.path, "line": p.source.line, "message": p.message}
                      for p in loaded.problems]
            click.echo(json.dumps({"as_of": day.isoformat(), "records": records_dir, "errors": errors,
                                   "items": []}, indent=1))
        sys.exit(EXIT_ERRORS)
    findings = evaluate(loaded.portfolio, loaded.policy, day)
    if fmt == "json":
        click.echo(json.dumps(status_json(findings, day, records_dir), indent=1, ensure_ascii=False))
    else:
        click.echo(status_text(findings, loaded.portfolio, day, show_ok), nl=False)
    sys.exit(EXIT_OVERDUE if any(f.state is State.OVERDUE for f in findings) else EXIT_OK)


@main.command()
@records_argument
@as_of_option
def rules(records_dir: str, as_of) -> None:
    """List every rule in force: value, source, and whether policy.yaml set it."""
    loaded = _load(records_dir, _as_of(as_of))
    if loaded.problems:
        sys.exit(EXIT_ERRORS)
    for rule in loaded.policy:
        where = f"local, {rule.defined_at}" if rule.local else "default"
        click.echo(f"{rule.name}: {rule.value}  [{where}]")
        click.echo(f"    {rule.title}. Source: {rule.source}")


@main.command()
@records_argument
@click.option("--property", "property_id", metavar="ID", help="The property (required unless --sheet blank).")
@click.option("--unit", "unit_id", metavar="ID", help="Just this unit (default: every unit, one per page).")
@as_of_option
@click.option("--sheet", type=click.Choice(["inspection", "monthly", "blank"]), default="inspection",
              show_default=True, help="inspection: a checklist per unit; monthly: a homeowner's 12-month "
              "test card (needs --unit); blank: a sheet for recording a new unit.")
@click.option("--paper", type=click.Choice(["a4", "letter"]), default="a4", show_default=True,
              help="Paper size for PDF output (landscape).")
@click.option("--out", required=True, type=click.Path(dir_okay=False, writable=True),
              help="Output file: .pdf or .html.")
def checklist(records_dir: str, property_id: str | None, unit_id: str | None, as_of, sheet: str, paper: str,
              out: str) -> None:
    """Print-ready checklists: one unit per page with tick boxes, signature lines and cautions.

    Examples:  recordkit checklist --property tansy-house --out packet.pdf
               recordkit checklist --property bramble-cottage --unit home --sheet monthly --out card.pdf"""
    from pathlib import Path

    from .render.checklist import blank_unit_html, inspection_html, monthly_card_html, property_sheets

    target = Path(out)
    if target.suffix.lower() not in (".pdf", ".html"):
        raise click.BadParameter("give a file ending in .pdf or .html", param_hint="--out")
    if sheet == "blank":
        html = blank_unit_html(paper)
    else:
        if not property_id:
            raise click.UsageError("--property is required for inspection and monthly sheets")
        if sheet == "monthly" and not unit_id:
            raise click.UsageError("--sheet monthly needs --unit")
        day = _as_of(as_of)
        loaded = _load(records_dir, day)
        if loaded.problems:
            sys.exit(EXIT_ERRORS)
        findings = evaluate(loaded.portfolio, loaded.policy, day)
        try:
            sheets = property_sheets(loaded, findings, property_id, day, unit_id)
        except KeyError as exc:
            raise click.UsageError(exc.args[0]) from None
        html = (monthly_card_html(sheets[0], day, paper) if sheet == "monthly"
                else inspection_html(sheets, day, paper))
    if target.suffix.lower() == ".pdf":
        from .render.pdf import write_pdf

        click.echo(f"Rendering {target} ...", err=True)
        write_pdf(html, target)
    else:
        target.write_text(html, encoding="utf-8")
    click.echo(f"Wrote {target}")


config_option = click.option("--config", "config_file", default="mkdocs.yml", show_default=True,
                             type=click.Path(exists=True, dir_okay=False),
                             help="The MkDocs configuration that uses the recordkit plugin.")


@main.command()
@records_argument
@as_of_option
@click.option("--out", default=None, type=click.Path(file_okay=False),
              help="Write the site here (default: site_dir of the config, usually site/).")
@config_option
def build(records_dir: str, as_of, out: str | None, config_file: str) -> None:
    """Build the static site from the records (MkDocs + Material, through our plugin).

    Open OUT/index.html from disk or host the folder anywhere. Exit status 1
    when the records have problems (each printed as file:line: message)."""
    from .mkdocs_plugin import SiteBuildError, build_site

    click.echo(f"Building the site from {records_dir} ...", err=True)
    try:
        site_dir = build_site(config_file, records_dir, _as_of(as_of), out)
    except SiteBuildError as exc:
        click.echo(str(exc), err=True)
        sys.exit(EXIT_ERRORS)
    click.echo(f"Site written to {site_dir}/ (open index.html).")


@main.command()
@records_argument
@as_of_option
@config_option
@click.option("--address", default="127.0.0.1:8000", show_default=True, help="Where to serve the site.")
def serve(records_dir: str, as_of, config_file: str, address: str) -> None:
    """Serve the site locally and rebuild it whenever a record file changes."""
    from .mkdocs_plugin import SiteBuildError, serve_site

    try:
        serve_site(config_file, records_dir, _as_of(as_of) if as_of else None, address)
    except SiteBuildError as exc:
        click.echo(str(exc), err=True)
        sys.exit(EXIT_ERRORS)


if __name__ == "__main__":  # pragma: no cover
    main()
