"""Which files under a records folder are records: found, refused (links out, linked folders) or skipped
(hidden, not .yaml/.yml/.csv, the site configuration and the import mapping), and why a path would not be
read back (so nothing is ever written where the loader would not look)."""
from __future__ import annotations

import os
from pathlib import Path

from .errors import Problems, Source
from .sheets import MAP_FILE

POLICY_FILE = "policy.yaml"
CSV_SUFFIX = ".csv"   # event logs kept as CSV (the import's columns), for very long histories
RECORD_SUFFIXES = (".yaml", ".yml")
SITE_CONFIGS = ("mkdocs.yml", "mkdocs.yaml")  # a site configuration beside the records is not a record
NOT_RECORDS = (*SITE_CONFIGS, MAP_FILE)  # nor is the import's column mapping


def record_files(root: Path, problems: Problems) -> list[Path]:
    """Record files under root, sorted; hidden folders skipped; links leaving root refused."""
    found: list[Path] = []
    real_root = root.resolve()
    for folder, dirs, files in os.walk(root, followlinks=False):
        for name in dirs:
            if not name.startswith(".") and os.path.islink(os.path.join(folder, name)):
                problems.add(Source(os.path.join(folder, name), 0), "a linked folder; refused: recordkit reads and "
                             "writes only real folders inside the records folder (move the folder in instead)")
        dirs[:] = sorted(d for d in dirs if not d.startswith(".") and not os.path.islink(os.path.join(folder, d)))
        for name in sorted(files):
            if name.startswith(".") or not name.endswith((*RECORD_SUFFIXES, CSV_SUFFIX)):
                continue
            if name in NOT_RECORDS and Path(folder) == root:
                continue
            path = Path(folder) / name
            # (its folders are real ones inside root: only a link can lead out)
            if os.path.islink(path) and not path.resolve().is_relative_to(real_root):
                problems.add(Source(str(path), 0), "links outside the records folder; refused "
                             "(copy the file into the folder instead)")
                continue
            found.append(path)
    return found


def unread_reason(root: Path, path: Path) -> str | None:
    """Why the loader would not read `path` as a record file (None when it would): a file written there
    would be lost from every report, or written through a link."""
    try:
        parts = path.relative_to(root).parts
    except ValueError:
        return "it is outside the records folder"
    if not parts or any(part in ("", ".", "..") for part in parts):
        return "it is not a file inside the records folder"
    if any(part.startswith(".") for part in parts):
        return "hidden files and folders (a name starting with '.') are never read"
    if not parts[-1].endswith(RECORD_SUFFIXES):
        return "only .yaml files are read as YAML records"
    if len(parts) == 1 and parts[0] in (POLICY_FILE, *NOT_RECORDS):
        return f"{parts[0]} is not a log file"
    for depth in range(1, len(parts) + 1):
        step = root.joinpath(*parts[:depth])
        if step.is_symlink():
            return f"{step} is a link, which is never written through"
        if depth < len(parts) and step.exists() and not step.is_dir():
            return f"{step} is not a folder"
    if path.exists() and not path.is_file():
        return "it is not a regular file"
    return None
