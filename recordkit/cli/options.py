"""Options every command shares, and the helpers that load records or exit.

One command line: the records folder is always `-r/--records` (default `$RECORDKIT_RECORDS`, else
`./records`), output always `-o/--out`, format always `--format`, `--date` takes a date or a date and
time, and an option given twice is refused unless it collects values (`multiple=True`).
"""
from __future__ import annotations

import json
import logging
import sys
from datetime import date, datetime
from pathlib import Path

import click

from .. import progress
from ..loader import Loaded, load_records

EXIT_OK, EXIT_ERRORS, EXIT_OVERDUE = 0, 1, 3
RECORDS_ENV = "RECORDKIT_RECORDS"
DATE_FORMATS = ["%Y-%m-%d", "%Y-%m-%d %H:%M", "%Y-%m-%dT%H:%M", "%Y-%m-%d %H:%M:%S", "%Y-%m-%dT%H:%M:%S"]


class OnceCommand(click.Command):
    """A command that refuses an option given twice, unless the option collects values."""

    def parse_args(self, ctx: click.Context, args: list[str]) -> list[str]:
        options = {name: param for param in self.get_params(ctx) if isinstance(param, click.Option)
                   for name in param.opts + param.secondary_opts}
        seen: dict[str, str] = {}
        tokens = iter(args)
        for token in tokens:
            if token == "--":
                break
            name = token.split("=", 1)[0] if token.startswith("--") else token[:2]
            param = options.get(name)
            if param is None or not token.startswith("-"):
                continue
            key = param.name
            if key in seen and not param.multiple and not param.count:
                twice = f"{name} was given twice" if seen[key] == name else f"{seen[key]} and {name} both say it"
                raise click.UsageError(f"{twice}; give one", ctx=ctx)
            seen[key] = name
            if not param.is_flag and "=" not in token and not (len(token) > 2 and not token.startswith("--")):
                next(tokens, None)  # the option's value, even when it looks like an option
        return super().parse_args(ctx, args)


class Group(click.Group):
    command_class = OnceCommand


def command(name: str | None = None, **kwargs):
    """`click.command` for our commands: an option given twice is refused."""
    return click.command(name, cls=OnceCommand, **kwargs)


records_option = click.option(
    "-r", "--records", "records_dir", default="records", show_default=True, envvar=RECORDS_ENV,
    show_envvar=True, type=click.Path(file_okay=False, path_type=Path),
    help="The records folder.")
quiet_option = click.option(
    "-q", "--quiet", is_flag=True, expose_value=False, is_eager=True,
    callback=lambda ctx, param, value: progress.quiet(value),
    help="No progress bar (one shows on a terminal once the work takes more than about two seconds).")
as_of_option = click.option(
    "--as-of", "as_of", type=click.DateTime(formats=["%Y-%m-%d"]), default=None, metavar="YYYY-MM-DD",
    help="Judge the records as of this date (default: today). A past date shows what the records said "
         "then: later events are left out.")


def date_option(help_text: str):
    return click.option("--date", "when", type=click.DateTime(formats=DATE_FORMATS), metavar="'YYYY-MM-DD[ HH:MM]'",
                        help=help_text)


def out_option(help_text: str, required: bool = False, folder: bool = False):
    kind = click.Path(file_okay=False, path_type=Path) if folder else click.Path(dir_okay=False, path_type=Path)
    return click.option("-o", "--out", "out", required=required, type=kind, help=help_text)


def format_option(*choices: str, help_text: str = ""):
    return click.option("--format", "fmt", type=click.Choice(list(choices)), default=choices[0],
                        show_default=True, help=help_text or f"{choices[0]} for people, json for scripts.")


def show_warnings() -> None:
    """The library's warnings (e.g. waiting for another writer's lock) go to stderr as plain lines."""
    logger = logging.getLogger("recordkit")
    if not logger.handlers:
        handler = logging.StreamHandler()
        handler.setFormatter(logging.Formatter("%(message)s"))
        logger.addHandler(handler)
        logger.setLevel(logging.WARNING)
        logger.propagate = False


def utf8_text(value: str, option: str) -> str:
    """Text from the command line that can be written to a UTF-8 record file (or a usage error)."""
    try:
        value.encode("utf-8")
    except UnicodeEncodeError:
        raise click.BadParameter("is not valid UTF-8 text (check the terminal's encoding)",
                                 param_hint=option) from None
    return value


def as_of_day(value: datetime | None) -> date:
    """The as-of date: the one the user gave, else today (the CLI is where the clock is read)."""
    return value.date() if value else date.today()


def today() -> date:
    return date.today()


def now() -> datetime:
    return datetime.now().replace(microsecond=0)


def print_problems(loaded: Loaded) -> None:
    for problem in loaded.problems:
        click.echo(str(problem), err=True)
    if loaded.problems and Path(loaded.root).is_dir():  # (a missing folder is said once, with what to run)
        files = {p.source.path for p in loaded.problems}
        click.echo(f"{len(loaded.problems)} problem(s) in {len(files)} file(s); fix them and run again.",
                   err=True)


def load(records_dir: Path, as_of: date) -> Loaded:
    loaded = load_records(records_dir, as_of, today=today())
    print_problems(loaded)
    return loaded


def load_or_exit(records_dir: Path, as_of: date, refusal: str = "", need_records: bool = True) -> Loaded:
    """The records, or exit 1 after printing their problems (and what was not done)."""
    loaded = load(records_dir, as_of)
    exit_unless_usable(loaded, records_dir, refusal, need_records)
    return loaded


def quick_about(records_dir: Path, as_of: date, uids: list[str]) -> Loaded | None:
    """Only the properties of these devices, units or properties, when the records are as the last clean
    load left them (see quickload) and those name them all; else None (load everything: that load says
    what is wrong, with suggestions)."""
    from ..quickload import quick_load

    quick = quick_load(records_dir, {uid.split("/", 1)[0] for uid in uids}, as_of, today())
    if quick is None:
        return None
    portfolio = quick.portfolio
    known = set(portfolio.devices) | {u.uid for p in portfolio.properties for u in p.units} \
        | {p.id for p in portfolio.properties}
    return quick if all(uid in known for uid in uids) else None


def load_about(records_dir: Path, as_of: date, uids: list[str], refusal: str = "") -> Loaded:
    """The records a command about these devices, units or properties needs (`quick_about`), or all of
    them, or exit 1 as `load_or_exit` does."""
    return quick_about(records_dir, as_of, uids) or load_or_exit(records_dir, as_of, refusal)


def exit_unless_usable(loaded: Loaded, records_dir: Path, refusal: str = "", need_records: bool = True) -> None:
    """Exit 1 when the records have problems or (with `need_records`) hold no property yet, saying what to
    run next. The problems themselves were printed by `load`."""
    if loaded.problems:
        if not records_dir.is_dir():
            click.echo(folder_hint(records_dir), err=True)
        if refusal:
            click.echo(refusal, err=True)
        sys.exit(EXIT_ERRORS)
    if need_records and not loaded.portfolio.properties:
        click.echo(f"{records_dir}: no property records here yet. Start with "
                   f"`recordkit init -r {records_dir}`, then `recordkit add unit|room|device`.", err=True)
        if refusal:
            click.echo(refusal, err=True)
        sys.exit(EXIT_ERRORS)


def folder_hint(records_dir: Path) -> str:
    """What to run when the records folder is missing."""
    here = Path.cwd()
    if any(here.glob("*.yaml")) and (here / "policy.yaml").is_file():
        return f"The current folder looks like a records folder: run with `-r .` (or set {RECORDS_ENV})."
    return (f"Give the records folder with -r DIR (or set {RECORDS_ENV}), or start one with "
            f"`recordkit init -r {records_dir}`.")


def emit(text: str, out: Path | None) -> None:
    """Write text to a file (said on stderr) or to stdout."""
    if out:
        with open(out, "w", encoding="utf-8", newline="") as handle:
            handle.write(text)
        click.echo(f"Wrote {out}", err=True)
    else:
        click.echo(text, nl=False)


def print_json(data) -> None:
    click.echo(json.dumps(data, indent=1, ensure_ascii=False))
