"""Reading a built site back: ids, links and visible text of every page (html.parser, no browser)."""
from __future__ import annotations

from html.parser import HTMLParser
from pathlib import Path
from urllib.parse import unquote, urlsplit


class PageScan(HTMLParser):
    def __init__(self):
        super().__init__(convert_charrefs=True)
        self.ids: set[str] = set()
        self.links: list[str] = []
        self.scripts: list[str] = []  # src of <script src> and inline script bodies
        self.tags: list[tuple[str, dict]] = []
        self.text: list[str] = []
        self._in_script = False

    def handle_starttag(self, tag, attrs):
        attributes = dict(attrs)
        self.tags.append((tag, attributes))
        if "id" in attributes:
            self.ids.add(attributes["id"])
        if tag == "a" and attributes.get("href"):
            self.links.append(attributes["href"])
        if tag == "script":
            self._in_script = True
            if attributes.get("src"):
                self.scripts.append(attributes["src"])

    def handle_endtag(self, tag):
        if tag == "script":
            self._in_script = False

    def handle_data(self, data):
        if self._in_script:
            self.scripts.append(data)
        else:
            self.text.append(data)

    @property
    def visible_text(self) -> str:
        return " ".join(" ".join(self.text).split())


def scan(path: Path) -> PageScan:
    page = PageScan()
    page.feed(path.read_text(encoding="utf-8"))
    return page


def broken_links(site: Path) -> list[str]:
    """Every internal link whose file or #fragment does not exist."""
    pages = {path: scan(path) for path in site.rglob("*.html")}
    broken = []
    for path, page in pages.items():
        if path.name == "404.html":
            continue  # served at any depth, so MkDocs gives it root-relative links on purpose
        for href in page.links:
            parts = urlsplit(href)
            if parts.scheme or parts.netloc:
                continue  # external: none of ours
            target = (path.parent / unquote(parts.path)).resolve() if parts.path else path
            if target.is_dir():
                target = target / "index.html"
            if not target.exists():
                broken.append(f"{path.relative_to(site)}: {href} (no file)")
            elif parts.fragment and target.suffix == ".html":
                if unquote(parts.fragment) not in pages[target].ids:
                    broken.append(f"{path.relative_to(site)}: {href} (no #{parts.fragment})")
    return broken
