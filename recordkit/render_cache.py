"""The render cache: a page whose render key is unchanged is kept as the last build wrote it.

Every generated page of a unit or property has a render key (see `render.page_keys`). After a build,
the index records, for each such page, its key joined with the site's frame (the MkDocs settings, the
theme, the hand-written pages and the navigation), the size and modification time of the file written,
its title and its search entries. The next build into the same folder keeps a page when its key is the
same and its file is still exactly as written; it makes every other page. What is kept is never copied:
the site folder itself holds it. The index lives beside the parse cache (`.recordkit/cache/`, keyed
with this machine's key like every entry), one per output folder; deleting it means a full build.
"""
from __future__ import annotations

import os
from pathlib import Path
from typing import Any

from .cache import ParseCache
from .hashes import joined_digest

KIND = "render-index"
FORMAT = 3  # 2: each page's address for the sitemap; 3: what a build of a few properties needs (quickbuild)


def dest_of(uri: str, directory_urls: bool) -> str:
    """Where MkDocs 1.6 writes the file made from `uri` (its `File.dest_uri`), without making the File."""
    if not uri.endswith(".md"):
        return uri
    parent, _, name = uri[:-3].rpartition("/")
    stem = "index" if name == "README" else name
    path = f"{stem}.html" if not directory_urls or stem == "index" else f"{stem}/index.html"
    return f"{parent}/{path}" if parent else path


def read_index(records_dir: Path, site_dir: Path) -> dict | None:
    """The index the last build into this folder left, or None (then a build there keeps nothing)."""
    note = ParseCache(records_dir).note(KIND, str(Path(site_dir).resolve()))
    return note if isinstance(note, dict) and note.get("format") == FORMAT else None


class RenderIndex:
    def __init__(self, records_dir: Path, site_dir: Path, frame: str, old: dict | None):
        """`old`: what `read_index` gave for this folder."""
        self.cache = ParseCache(records_dir)
        self.site_dir = Path(site_dir).resolve()
        self.frame = frame
        old = old or {}
        self.old: dict[str, Any] = old["pages"] if isinstance(old.get("pages"), dict) else {}
        self.old_outputs: list[str] = old["outputs"] if isinstance(old.get("outputs"), list) else []
        self.old_pieces: dict[str, Any] = old["pieces"] if isinstance(old.get("pieces"), dict) else {}
        self.pages: dict[str, dict] = {}
        self.pieces: dict[str, dict] = {}
        self._pieces_read: dict[str, dict] = {}
        self.kept = self.made = 0

    def full_key(self, key: str) -> str:
        return joined_digest(self.frame, key)

    def kept_entry(self, uri: str, key: str | None, dest_uri: str) -> dict | None:
        """The last build's entry for this page, when its key is unchanged and its file (`dest_uri`, in the
        site folder) is as written."""
        entry = self.old.get(uri)
        if key is None or not isinstance(entry, dict) or entry.get("key") != self.full_key(key):
            return None
        try:
            stat = os.stat(f"{self.site_dir}/{dest_uri}")
        except OSError:
            return None
        if (stat.st_size, stat.st_mtime_ns) != (entry.get("size"), entry.get("mtime_ns")):
            return None
        self.pages[uri] = entry
        self.kept += 1
        return entry

    def wrote(self, uri: str, key: str | None, dest: str, title: str | None = None,
              search: list | None = None, urls: tuple[str | None, str | None] = (None, None)) -> None:
        """A page was made and written: remember it for the next build."""
        self.made += 1
        if key is None:
            return
        try:
            stat = os.stat(dest)
        except OSError:
            return
        self.pages[uri] = {"key": self.full_key(key), "size": stat.st_size, "mtime_ns": stat.st_mtime_ns,
                           "title": title, "search": search, "canonical_url": urls[0], "abs_url": urls[1]}

    def pieces_of(self, uri: str, dest: str) -> dict[str, tuple[str, str]]:
        """The pieces of a file made of pieces (the calendar) as the last build wrote them, read back from
        that file, when it is still exactly as written: {name: (key, text)}. Read once a build."""
        known = self._pieces_read.get(uri)
        if known is None:
            known = self._pieces_read[uri] = self._read_pieces(uri, dest)
        return known

    def _read_pieces(self, uri: str, dest: str) -> dict[str, tuple[str, str]]:
        entry = self.old_pieces.get(uri)
        try:
            stat = os.stat(dest)
            if not isinstance(entry, dict) or (stat.st_size, stat.st_mtime_ns) != (entry["size"], entry["mtime_ns"]):
                return {}
            with open(dest, "rb") as handle:
                data = handle.read(stat.st_size + 1)
            if len(data) != stat.st_size:
                return {}
            return {name: (key, data[start:end].decode("utf-8")) for name, (key, start, end) in entry["at"].items()
                    if isinstance(key, str) and key and 0 <= start <= end <= len(data)}
        except (OSError, KeyError, TypeError, ValueError):
            return {}

    def wrote_pieces(self, uri: str, dest: str, pieces: dict[str, tuple[str, str]]) -> None:
        """Where in the file just written each piece lies (bytes), for the next build to take it back."""
        try:
            stat = os.stat(dest)
        except OSError:
            return
        start, at = 0, {}  # the file is its pieces one after another
        for name, (key, piece) in pieces.items():
            end = start + len(piece.encode("utf-8"))
            at[name] = [key, start, end]
            start = end
        self.pieces[uri] = {"size": stat.st_size, "mtime_ns": stat.st_mtime_ns, "at": at}

    def remove_stale(self, outputs: set[str]) -> int:
        """Delete files the last build wrote that this build does not (a removed unit's pages): a build
        that keeps pages does not empty the folder first, and must end as a full build would."""
        removed = 0
        for name in self.old_outputs:
            if not isinstance(name, str) or name in outputs:
                continue
            path = (self.site_dir / name)
            if path.resolve().is_relative_to(self.site_dir) and path.is_file() and not path.is_symlink():
                path.unlink()
                removed += 1
        return removed

    def carry(self, uri: str, dest_uri: str) -> dict | None:
        """The last build's entry for a page this build does not make at all (see quickbuild), when its
        file is as written."""
        entry = self.old.get(uri)
        try:
            stat = os.stat(f"{self.site_dir}/{dest_uri}")
        except OSError:
            return None
        if not isinstance(entry, dict) or (stat.st_size, stat.st_mtime_ns) != (entry.get("size"), entry.get("mtime_ns")):
            return None
        self.pages[uri] = entry
        self.kept += 1
        return entry

    def save(self, outputs: set[str], whole: dict | None = None) -> None:
        """`whole`: what the next build needs to load only the properties that changed (see quickbuild)."""
        self.cache.put_note(KIND, str(self.site_dir),
                            {"format": FORMAT, "pages": self.pages, "outputs": sorted(outputs),
                             "pieces": self.pieces, "whole": whole})
