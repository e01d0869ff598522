"""Where a built site may be written. MkDocs empties its output folder before writing, so a folder that
holds the records (or lies among them) must be refused before anything is removed."""
from __future__ import annotations

from pathlib import Path

# Written into every site we build; MkDocs keeps dot-files when it empties the folder.
MARKER = ".recordkit-site"


class OutputRefused(Exception):
    """The output folder is unsafe to empty; nothing was removed. The message says why and what to do."""


def default_output(records: Path) -> Path:
    """`site` beside the records folder (never inside it)."""
    return records.resolve().parent / "site"


def check_output(out: Path, records: Path, protected: tuple[Path, ...] = (), force: bool = False) -> None:
    """Refuse an output folder that is, contains or lies inside the records folder, or is or contains a
    protected folder (the site configuration's folder, the hand-written pages); refuse a non-empty folder
    that is not a previous build unless `force`."""
    target = out.resolve()
    home = records.resolve()
    if target == home or target.is_relative_to(home) or home.is_relative_to(target):
        where = ("is" if target == home else "lies inside" if target.is_relative_to(home) else "contains")
        raise OutputRefused(f"{out}: the output folder {where} the records folder {records}; building there "
                            f"would delete records. Choose another folder, e.g. -o {default_output(records)}")
    for folder in protected:
        kept = folder.resolve()
        if target == kept or kept.is_relative_to(target):
            raise OutputRefused(f"{out}: the output folder {'is' if target == kept else 'contains'} {folder}, "
                                "which the build reads; choose another folder")
    if target.exists() and not target.is_dir():
        raise OutputRefused(f"{out}: exists and is not a folder")
    if not force and target.is_dir() and any(target.iterdir()) and not looks_built(target):
        raise OutputRefused(f"{out}: the folder is not empty and does not look like a site recordkit built; "
                            "building would delete what it holds. Choose an empty folder, or give --force")


def looks_built(folder: Path) -> bool:
    """A previous build: our marker, or (for builds before the marker) MkDocs' own index and sitemap."""
    return (folder / MARKER).is_file() or ((folder / "index.html").is_file()
                                            and (folder / "sitemap.xml").is_file())


def mark_built(folder: Path) -> None:
    (folder / MARKER).write_text("Built by recordkit; `recordkit build` may empty and rewrite this folder.\n",
                                 encoding="utf-8")
