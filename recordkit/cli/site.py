"""Commands that publish the records: build, serve, checklist, calendar."""
from __future__ import annotations

import sys
from pathlib import Path

import click

from ..findings_cache import cached_evaluate
from .options import (EXIT_ERRORS, as_of_day, as_of_option, command, folder_hint, load_or_exit, out_option,
                      quiet_option, records_option)

config_option = click.option(
    "--config", "config_file", default=None, type=click.Path(exists=True, dir_okay=False, path_type=Path),
    help="A MkDocs configuration that overrides the built-in one (default: a mkdocs.yml in the records "
         "folder or beside it, if there is one).")


def exit_unless_folder(records_dir: Path) -> None:
    if not records_dir.is_dir():
        click.echo(f"{records_dir}: records folder not found. {folder_hint(records_dir)}", err=True)
        sys.exit(EXIT_ERRORS)


def register(main: click.Group) -> None:
    for command_ in (build, serve, checklist, labels, calendar_command):
        main.add_command(command_)


@command()
@records_option
@as_of_option
@out_option("Write the site here (default: 'site' beside the records folder). Never the records folder, "
            "a folder inside it or one that holds it.", folder=True)
@config_option
@click.option("--force", is_flag=True, help="Build into a non-empty folder that is not a previous build "
              "(its contents are deleted).")
@quiet_option
def build(records_dir: Path, as_of, out: Path | None, config_file: Path | None, force: bool) -> None:
    """Build the static site from the records (MkDocs + Material, through our plugin).

    Works in any folder with no set-up: a built-in site configuration is used
    unless a mkdocs.yml is in or beside the records folder (or given with
    --config). Markdown files in RECORDS/pages/ join the site as extra pages.
    Open OUT/index.html from disk or host the folder anywhere. Exit status 1
    when the records have problems (each printed as file:line: message) or
    the output folder is refused."""
    from ..mkdocs_plugin import SiteBuildError, build_site

    exit_unless_folder(records_dir)  # the plugin loads the records (once) and reports their problems
    click.echo(f"Building the site from {records_dir} ...", err=True)
    try:
        made: list[str] = []
        site_dir = build_site(records_dir, as_of_day(as_of), out, config_file, force, report=made.append)
    except SiteBuildError as exc:
        click.echo(f"Not built: {exc}", err=True)
        sys.exit(EXIT_ERRORS)
    click.echo(f"Site written to {site_dir}/ (open index.html)" + (f": {made[0]}." if made else "."))


@command()
@records_option
@as_of_option
@config_option
@click.option("--address", default="127.0.0.1:8000", show_default=True, help="Where to serve the site.")
def serve(records_dir: Path, as_of, config_file: Path | None, address: str) -> None:
    """Serve the site locally and rebuild it whenever a record file changes.

    One saved edit is one rebuild, which makes again only the pages that edit
    changes; each rebuild's time and what it made and kept are printed."""
    from ..mkdocs_plugin import SiteBuildError, serve_site

    exit_unless_folder(records_dir)
    click.echo(f"Serving the site of {records_dir} at http://{address}/ (Ctrl-C stops)", err=True)
    try:
        serve_site(records_dir, as_of_day(as_of) if as_of else None, address, config_file)
    except SiteBuildError as exc:
        click.echo(str(exc), err=True)
        sys.exit(EXIT_ERRORS)


@command()
@records_option
@click.option("--property", "property_id", metavar="ID", help="The property (required unless --sheet blank).")
@click.option("--unit", "unit_id", metavar="ID", help="Just this unit (default: every unit, one per page).")
@as_of_option
@click.option("--sheet", type=click.Choice(["inspection", "monthly", "blank"]), default="inspection",
              show_default=True, help="inspection: a checklist per unit; monthly: a homeowner's 12-month "
              "test card (needs --unit); blank: a sheet for recording a new unit.")
@click.option("--paper", type=click.Choice(["a4", "letter"]), default="a4", show_default=True,
              help="Paper size for PDF output (landscape).")
@out_option("Output file: .pdf or .html.", required=True)
def checklist(records_dir: Path, property_id: str | None, unit_id: str | None, as_of, sheet: str, paper: str,
              out: Path) -> None:
    """Print-ready checklists: one unit per page with tick boxes, signature lines and cautions.

    Examples:  recordkit checklist --property tansy-house -o packet.pdf
               recordkit checklist --property bramble-cottage --unit home --sheet monthly -o card.pdf"""
    from ..render.checklist import blank_unit_html, inspection_html, monthly_card_html

    if out.suffix.lower() not in (".pdf", ".html"):
        raise click.BadParameter("give a file ending in .pdf or .html", param_hint="--out")
    if sheet == "blank":
        html = blank_unit_html(paper)
    else:
        if not property_id:
            raise click.UsageError("--property is required for inspection and monthly sheets")
        if sheet == "monthly" and not unit_id:
            raise click.UsageError("--sheet monthly needs --unit")
        day = as_of_day(as_of)
        sheets = unit_sheets(records_dir, day, property_id, unit_id)
        html = (monthly_card_html(sheets[0], day, paper) if sheet == "monthly"
                else inspection_html(sheets, day, paper))
    write_sheet(html, out)
    click.echo(f"Wrote {out}")


@command()
@records_option
@click.option("--property", "property_id", metavar="ID", required=True, help="The property.")
@click.option("--unit", "unit_id", metavar="ID", help="Just this unit (default: every unit).")
@as_of_option
@click.option("--paper", type=click.Choice(["a4", "letter"]), default="a4", show_default=True, help="Paper size (portrait).")
@click.option("--size", "size", default="64x38", show_default=True, metavar="WxH",
              help="Label size in millimetres; as many as fit go on a sheet, inside 8 mm margins.")
@click.option("--site-url", metavar="URL", help="The built site's address, for the QR codes (default: site_url "
              "of the mkdocs.yml in or beside the records folder; without one, the codes hold the device id).")
@config_option
@out_option("Output file: .pdf or .html.", required=True)
def labels(records_dir: Path, property_id: str, unit_id: str | None, as_of, paper: str, size: str,
           site_url: str | None, config_file: Path | None, out: Path) -> None:
    """Device labels to stick beside each alarm: id, kind, room, "replace by" month in large type and a QR code
    that opens the device's page on the built site (or holds its id when the site has no address).

    Example:  recordkit labels --property tansy-house --unit flat-1 --paper letter -o labels.pdf"""
    from ..mkdocs_plugin import site_address
    from ..render.device_labels import LabelSizeError, grid, parse_size
    from ..render.site import unit_labels_html

    if out.suffix.lower() not in (".pdf", ".html"):
        raise click.BadParameter("give a file ending in .pdf or .html", param_hint="--out")
    try:
        layout = grid(paper, parse_size(size))
    except LabelSizeError as exc:
        raise click.BadParameter(str(exc), param_hint="--size") from None
    day = as_of_day(as_of)
    sheets = unit_sheets(records_dir, day, property_id, unit_id)
    configured, directory_urls = site_address(records_dir, config_file)
    html = unit_labels_html(sheets, site_url or configured, directory_urls, layout)
    write_sheet(html, out)
    count = sum(len(sheet.rows) for sheet in sheets)
    click.echo(f"Wrote {count} label(s), {layout.columns}x{layout.rows} a sheet, to {out}")


def unit_sheets(records_dir: Path, day, property_id: str, unit_id: str | None):
    """The property's units (or one unit) as sheet content, judged as of `day`; a usage error names what
    exists when the property or unit does not."""
    from ..render.checklist import NotFound, property_sheets

    loaded = load_or_exit(records_dir, day)
    findings = cached_evaluate(loaded, loaded.policy, day)
    try:
        return property_sheets(loaded, findings, property_id, day, unit_id)
    except NotFound as exc:
        raise click.UsageError(exc.args[0]) from None


def write_sheet(html: str, out: Path) -> None:
    """A printable sheet as .pdf (WeasyPrint) or .html."""
    if out.suffix.lower() == ".pdf":
        from ..render.pdf import write_pdf

        click.echo(f"Rendering {out} ...", err=True)
        write_pdf(html, out)
    else:
        out.write_text(html, encoding="utf-8")


@command("calendar")
@records_option
@as_of_option
@out_option("The .ics file to write.", required=True)
def calendar_command(records_dir: Path, as_of, out: Path) -> None:
    """Write every task (replacements, tests, batteries, fixes) as calendar events with reminders.

    Each event keeps the same UID from one export to the next, so importing a
    newer file into a calendar updates the events instead of adding copies."""
    from ..exports import calendar_ics, calendar_tasks

    day = as_of_day(as_of)
    loaded = load_or_exit(records_dir, day)
    findings = cached_evaluate(loaded, loaded.policy, day)
    with open(out, "wb") as handle:
        handle.write(calendar_ics(loaded.portfolio, findings, day))
    click.echo(f"Wrote {len(calendar_tasks(loaded.portfolio, findings))} task(s) to {out}")
