"""The command line: a thin face over the library. The only package that imports click, and the only
place that reads the clock (for the default as-of date). One module per group of commands; the options
they share are in `options`."""
from __future__ import annotations

import click

from . import entries, events, report, site, start
from .options import Group, show_warnings


@click.group(cls=Group, context_settings={"help_option_names": ["-h", "--help"]})
@click.version_option(package_name="recordkit")
def main() -> None:
    """Keep maintenance and test records of smoke, CO and heat alarms and listening
    nodes, and see what is overdue. Records are YAML files in a records folder
    (-r/--records, default $RECORDKIT_RECORDS or ./records); start one with
    `recordkit init`. The local fire code and the AHJ decide; this is a
    record-keeping aid, not an inspection."""
    show_warnings()


for module in (start, entries, report, events, site):
    module.register(main)


if __name__ == "__main__":  # pragma: no cover
    main()
