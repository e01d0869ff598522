"""The MkDocs plugin: loads the records once per build and adds the generated pages.

The only module that imports MkDocs. It holds no rules: loading, checks and page
rendering live in the library; this face only wires them into a build, turns
record problems into a clean `PluginError`, and watches the records folder
under `mkdocs serve`.
"""
from __future__ import annotations

import contextlib
import logging
import os
import time
import types
from datetime import date
from pathlib import Path
from typing import Callable, Iterator

from mkdocs.config import base, config_options
from mkdocs.config.defaults import MkDocsConfig
from mkdocs.exceptions import Abort, MkDocsException, PluginError
from mkdocs.plugins import BasePlugin, event_priority
from mkdocs.structure.files import File, Files, InclusionLevel
from mkdocs.utils import get_build_date

from . import progress
from .cautions import SHORT
from .checks import evaluate
from .findings_cache import cached_evaluate
from .loader import load_records
from .quickbuild import Update, inputs_now, plan_update, whole_record
from .serving import ServeLog, watch_records
from .recordfiles import SITE_CONFIGS
from .render.compiled import keep_compiled
from .render.labels import ASSETS, DEFAULT_SITE_CONFIG
from .render.portfolio_pages import CALENDAR, NAV_PROPERTIES
from .render.site import Page, SiteBuilder, part_marker
from .hashes import digest
from .render_cache import RenderIndex, dest_of, read_index
from .rules import Interval, Rule

log = logging.getLogger("mkdocs.plugins.recordkit")

# `recordkit build` / `recordkit serve` pass their arguments this way, because
# `mkdocs serve` reloads the config from the file on every rebuild.
ENV_RECORDS = "RECORDKIT_RECORDS"
ENV_AS_OF = "RECORDKIT_AS_OF"
# Markdown features the generated pages rely on.
NEEDED_EXTENSIONS = ("tables", "attr_list", "md_in_html", "admonition", "toc")
CSS = "assets/recordkit.css"
SHIM = "assets/iframe-worker-shim.js"  # vendored (MIT) so search works from disk without a CDN
MARK = "assets/recordkit-mark.svg"  # our logo and favicon (the built-in configuration names it)
WALKROUND = ("assets/walkround.js", "assets/walkround.css")  # the walk-round form's own script and style


class RecordkitConfig(base.Config):
    records = config_options.Type(str, default="records")
    as_of = config_options.Optional(config_options.Type(str))
    due_soon_days = config_options.Type(dict, default={})


class MadeFile(File):
    """A generated file whose text is made when MkDocs reads or writes it, never held or spooled:
    a portfolio of thousands of units has tens of thousands of these."""

    made: Page  # (MkDocs' own `page` attribute is the page it builds)
    index: RenderIndex | None = None
    kept: dict | None = None  # the render cache's entry when the last build's file is kept
    bar: progress.Bar | None = None

    position = 0  # the page's place among the generated pages

    @classmethod
    def of(cls, config: MkDocsConfig, page: Page, inclusion: InclusionLevel, index: RenderIndex | None,
           kept: dict | None, position: int) -> "MadeFile":
        made = cls.generated(config, page.src_uri, content="", inclusion=inclusion)
        made.made, made.index, made.kept, made.position = page, index, kept, position
        return made

    @property
    def content_string(self) -> str:
        return self.made.make()

    @property
    def content_bytes(self) -> bytes:
        return self.made.make().encode("utf-8")

    def is_modified(self) -> bool:
        """MkDocs (in a build that keeps pages) makes only the pages this says are modified."""
        return self.kept is None

    def copy_file(self, dirty: bool = False) -> None:
        if self.kept is not None:
            return
        os.makedirs(os.path.dirname(self.abs_dest_path), exist_ok=True)
        pieces = None
        if self.made.pieces is not None and self.index is not None:
            text, pieces = self.made.pieces(self.index.pieces_of(self.src_uri, self.abs_dest_path))
        else:
            text = self.made.make()
        with open(self.abs_dest_path, "w", encoding="utf-8", newline="") as handle:
            handle.write(text)
        if self.index is not None:
            self.index.wrote(self.src_uri, self.made.key, self.abs_dest_path)
            if pieces is not None:
                self.index.wrote_pieces(self.src_uri, self.abs_dest_path, pieces)
        if self.bar is not None:
            self.bar.update()


class LeftOut:
    """A kept page of a unit whose pages are all kept: left out of MkDocs' view (no file, page or
    navigation entry made for it), it still has its search entries and its sitemap line (from the index)."""

    inclusion = InclusionLevel.NOT_IN_NAV

    def __init__(self, src_uri: str, kept: dict, dest_uri: str, position: int, update_date: str):
        self.src_uri, self.dest_uri, self.kept, self.position = src_uri, dest_uri, kept, position
        self.documentation = src_uri.endswith(".md")
        self.page = types.SimpleNamespace(is_link=False, canonical_url=kept.get("canonical_url"),
                                          abs_url=kept.get("abs_url"), update_date=update_date) \
            if self.documentation else None

    def is_documentation_page(self) -> bool:
        return self.documentation


class _QuietDirty(logging.Filter):
    """MkDocs warns that a build keeping pages may leave navigation stale; ours cannot: a page is kept
    only while its key, which holds the navigation and settings (the frame), is unchanged."""

    def filter(self, record: logging.LogRecord) -> bool:
        return not str(record.msg).startswith(("A 'dirty' build is being performed",
                                               "The directory contains stale files"))


logging.getLogger("mkdocs.commands.build").addFilter(_QuietDirty())


class RecordkitPlugin(BasePlugin[RecordkitConfig]):
    def __init__(self) -> None:
        self.pages: dict[str, Page] = {}
        self.records_dir: Path | None = None
        self.index: RenderIndex | None = None
        self.files: Files | None = None
        self.made_files: list[MadeFile] = []
        self.left_out: list[LeftOut] = []  # kept pages MkDocs is not shown (see on_files)
        self.env = self.nav = None
        self.as_of = date.min
        self.old_index: dict | None = None  # what the last build into the site folder left
        self.update: Update | None = None  # when only some properties are loaded (see quickbuild)
        self.builder: SiteBuilder | None = None
        self.inputs: dict | None = None  # each property's records as one hash, for the next build
        self.frame = ""
        self.groups: dict[str, list[str]] = {}
        self.search_entries: dict[str, list] = {}  # this build's search entries of each page it made
        self.indexed = 0
        self.nav_names: list = []
        self.started = 0.0
        self.summary = ""  # what the last build made and kept
        self.last_index: dict[str, dict | None] = {}  # site folder -> its index, when already read
        self.bar: progress.Bar = progress.bar(0, "", "")

    def on_config(self, config: MkDocsConfig) -> MkDocsConfig:
        self.started = time.perf_counter()
        # From the CLI: relative to where it runs; from mkdocs.yml: relative to that file.
        if os.environ.get(ENV_RECORDS):
            self.records_dir = Path(os.environ[ENV_RECORDS])
        else:
            base_dir = Path(config.config_file_path or ".").resolve().parent
            self.records_dir = _shown(base_dir / self.config.records)
        self.as_of = as_of = self._as_of()
        site_dir = Path(config.site_dir)
        folder = str(site_dir.resolve())
        # `build_site` read the last index already to decide whether to keep pages: not read twice
        self.old_index = self.last_index.pop(folder) if folder in self.last_index \
            else read_index(self.records_dir, site_dir)
        update = plan_update(self.records_dir, (self.old_index or {}).get("whole"), as_of, date.today()) \
            if self.old_index else None
        if update is None or not self._prepare(config, update.loaded, update):
            self._prepare(config, load_records(self.records_dir, as_of, today=date.today()))  # a face: the clock
        for name in NEEDED_EXTENSIONS:
            if name not in config.markdown_extensions:
                config.markdown_extensions.append(name)
        if CSS not in config.extra_css:
            config.extra_css.append(CSS)
        # Our own copy of the worker shim; drop a CDN copy that the offline plugin may have added
        # if it ran before us (with ours in place it adds none).
        polyfills = [p for p in config.extra.get("polyfills", []) if "//" not in str(p)]
        config.extra["polyfills"] = polyfills + ([SHIM] if SHIM not in polyfills else [])
        if SHORT not in (config.copyright or ""):
            config.copyright = f"{config.copyright} · {SHORT}" if config.copyright else SHORT
        return config

    def _prepare(self, config: MkDocsConfig, loaded, update: Update | None = None) -> bool:
        """The pages from these records; with `update`, only the changed properties' (see quickbuild),
        False (nothing set) when the last build's kept parts do not fit this build."""
        if loaded.problems:
            lines = "\n".join(str(p) for p in loaded.problems)
            raise PluginError(f"recordkit: {len(loaded.problems)} problem(s) in the records:\n{lines}")
        if not loaded.portfolio.properties and update is None:
            raise PluginError(f"recordkit: {self.records_dir}: no property records here yet; start with "
                              f"`recordkit init -r {self.records_dir}`")
        loaded.policy = policy = self._policy(config, loaded.policy)
        findings = evaluate(loaded.portfolio, policy, self.as_of) if update else \
            cached_evaluate(loaded, policy, self.as_of)
        builder = SiteBuilder(loaded, findings, self.as_of, config.use_directory_urls, config.site_url,
                              update.others if update else None, update.order if update else None)
        if update and (builder.keys.site != self.old_index["whole"]["site"] or not builder.complete()):
            return False
        self.update, self.builder = update, builder
        self.inputs = {"inputs": update.inputs, "order": update.order} if update \
            else inputs_now(self.records_dir, max(date.today(), self.as_of))
        self.pages = {page.src_uri: page for page in builder.pages()}
        self.nav_names = [(line.id, line.name) for line in builder.totals.lines]
        log.info("recordkit: %d properties made again of %d, %d tasks as of %s", len(builder.own),
                 len(builder.order), len(findings), self.as_of)
        return True

    def _policy(self, config: MkDocsConfig, policy):
        """The policy with the plugin's own `due_soon_days` settings over it."""
        for task, days in self.config.due_soon_days.items():
            name = f"due_soon_{task}"
            try:
                rule = policy[name]
            except KeyError:
                raise PluginError(f"recordkit: due_soon_days: unknown task {task!r} "
                                  "(replace, test, battery)") from None
            if not isinstance(days, int) or isinstance(days, bool) or days < 0:
                raise PluginError(f"recordkit: due_soon_days.{task} must be a whole number of days")
            policy = policy.with_override(Rule(name, rule.title, Interval(days, "days"),
                                               f"{config.config_file_path}: plugins.recordkit.due_soon_days",
                                               local=True))
        return policy

    def page_text(self, src_uri: str) -> str:
        """A generated page's text as MkDocs reads it (for checks and tests)."""
        return self.pages[src_uri].make()

    def _as_of(self) -> date:
        text = os.environ.get(ENV_AS_OF) or self.config.as_of
        if not text:
            return date.today()  # a face, like the CLI: the only other place that reads the clock
        try:
            return date.fromisoformat(str(text))
        except ValueError:
            raise PluginError(f"recordkit: as_of must be a date as YYYY-MM-DD, got {text!r}") from None

    def on_files(self, files: Files, /, *, config: MkDocsConfig) -> Files:
        own = [f for f in files if f.generated_by is None]  # the hand-written pages, before ours join
        self.frame = self._frame(config, own)
        self.index = RenderIndex(self.records_dir, Path(config.site_dir), self.frame, self.old_index) \
            if self.records_dir else None
        sequence = self._sequence(config)
        if sequence is None:  # the last build's kept pages do not fit this one: everything loaded after all
            self._prepare(config, load_records(self.records_dir, self.as_of, today=date.today()))
            # afresh: what the failed attempt carried over is not this build's
            self.index = RenderIndex(self.records_dir, Path(config.site_dir), self.frame, self.old_index)
            sequence = self._sequence(config)
        self.made_files, self.left_out = [], []
        self.search_entries = {}
        self.indexed = 0
        directory_urls = config.use_directory_urls
        kept: dict[str, dict | None] = {}
        dests: dict[str, str] = {}
        changed_units: set[str] = set()
        update_date = get_build_date()  # (what MkDocs gives every page it makes)
        taken = set(files.src_uris)
        for page, entry in sequence:
            dests[page.src_uri] = dest = dest_of(page.src_uri, directory_urls)
            if entry is None:  # (a page carried from the last build passed these checks then, in this frame)
                parts = page.src_uri.split("/")
                if page.src_uri.startswith("/") or any(part in ("", ".", "..") for part in parts):
                    raise PluginError(f"recordkit: refused a page path outside the site: {page.src_uri!r}")
                if page.src_uri in taken:
                    raise PluginError(f"recordkit: {page.src_uri} is generated from the records; "
                                      f"remove the hand-written file of that name from {config.docs_dir}")
                if self.index is not None:
                    entry = self.index.kept_entry(page.src_uri, page.key, dest)
            kept[page.src_uri] = entry
            if entry is None and page.unit is not None:
                changed_units.add(page.unit)
        self.groups = {}  # each property's pages, for the next build (see quickbuild)
        for page, _ in sequence:
            if page.owner is not None:
                self.groups.setdefault(page.owner, []).append(page.src_uri)
        for position, (page, _) in enumerate(sequence):
            entry = kept[page.src_uri]
            if entry is not None and page.unit is not None and page.unit not in changed_units:
                self.left_out.append(LeftOut(page.src_uri, entry, dests[page.src_uri], position, update_date))
                continue
            inclusion = InclusionLevel.UNDEFINED if page.in_nav and not page.static else InclusionLevel.NOT_IN_NAV
            made = MadeFile.of(config, page, inclusion, self.index, entry, position)
            self.made_files.append(made)
            files.append(made)
        for file in own:
            if file.is_documentation_page():
                file.is_modified = lambda: True  # its navigation may have changed: always made again
        # Progress: a page is converted, then written; a sheet is written.
        steps = sum(2 if f.is_documentation_page() else 1 for f in self.made_files if f.kept is None) \
            + 2 * sum(1 for f in own if f.is_documentation_page())
        self.bar = progress.bar(steps, "Building the site", "step")
        for made in self.made_files:
            made.bar = self.bar
        for asset in (CSS, SHIM, MARK, *WALKROUND):
            files.append(File.generated(config, asset, abs_src_path=str(ASSETS / Path(asset).name)))
        self.files = files
        return files

    def _sequence(self, config: MkDocsConfig) -> list[tuple[Page, dict | None]] | None:
        """Every generated page in the order of a full build, each with the last build's entry when it is
        kept as it is: the pages this build made, and (after `quickbuild`) the pages of the properties not
        loaded, taken as the last build left them; None when one of those is not as written, or the frame
        or the calendar changed."""
        update, index = self.update, self.index
        if update is None:
            return [(page, None) for page in self.pages.values()]
        whole = self.old_index["whole"]
        calendar = index.pieces_of(CALENDAR, os.path.join(config.site_dir, CALENDAR))
        needed = {name for name in index.old_pieces.get(CALENDAR, {}).get("at", {})
                  if name.split("/", 1)[0] in update.others}
        if whole["frame"] != self.frame or not needed <= set(calendar):
            return None
        by_owner: dict[str | None, list[Page]] = {}
        for page in self.pages.values():
            by_owner.setdefault(page.owner, []).append(page)
        sequence: list[tuple[Page, dict | None]] = [(page, None) for page in by_owner.pop(None, [])]
        many = len(update.order) > NAV_PROPERTIES
        for pid in update.order:
            if pid not in update.others:
                sequence += [(page, None) for page in by_owner.get(pid, [])]
                continue
            for uri in update.groups[pid]:
                entry = index.carry(uri, dest_of(uri, config.use_directory_urls))
                if entry is None:
                    return None
                is_page = uri.endswith(".md")
                sequence.append((Page(uri, _kept_only, in_nav=is_page and not many and uri == f"properties/{pid}.md",
                                      static=not is_page, unit=None if uri.count("/") < 2 else f"{pid}/(kept)",
                                      owner=pid), entry))
        return sequence

    def _frame(self, config: MkDocsConfig, own: list[File]) -> str:
        """What every page's frame is made of: the settings, the theme and its templates, the navigation
        (the hand-written pages by name, size and time, not the folder they are in, which may be a new
        temporary one each build; the properties' names) and the MkDocs and Material versions."""
        import material
        import mkdocs

        installed = tuple(Path(m.__file__).resolve().parent for m in (mkdocs, material))
        theme_files = [(str(p), p.stat().st_size, p.stat().st_mtime_ns) for d in config.theme.dirs
                       if not Path(d).resolve().is_relative_to(installed[0])
                       and not Path(d).resolve().is_relative_to(installed[1])
                       for p in sorted(Path(d).rglob("*")) if p.is_file()]
        settings = {key: repr(value) for key, value in config.items()
                    if key not in ("site_dir", "docs_dir", "config_file_path", "dev_addr", "watch", "plugins", "theme")}
        hand_written = [(f.src_uri, os.stat(f.abs_src_path).st_size, os.stat(f.abs_src_path).st_mtime_ns)
                        for f in own if f.abs_src_path and os.path.isfile(f.abs_src_path)]
        return digest([mkdocs.__version__, material.__version__, settings, sorted(config.theme.items(), key=str),
                       [(name, dict(plugin.config)) for name, plugin in config.plugins.items()],
                       theme_files, hand_written, self.nav_names])

    def on_nav(self, nav, /, *, config: MkDocsConfig, files: Files):
        self.nav = nav
        return nav

    def on_env(self, env, /, *, config: MkDocsConfig, files: Files):
        self.env = keep_compiled(env)
        for made in self.made_files:  # a kept page keeps its title (the navigation shows it)
            if made.kept is not None and made.page is not None and made.kept.get("title"):
                made.page.title = made.kept["title"]
        return env

    @event_priority(-100)  # after the search plugin has indexed the page
    def on_page_context(self, context, /, *, page, config: MkDocsConfig, nav):
        search = _search_index(config)
        if search is not None:
            self.search_entries[page.file.src_uri] = search.entries[self.indexed:]
            self.indexed = len(search.entries)
        return context

    def on_page_content(self, html: str, /, *, page, config: MkDocsConfig, files: Files) -> str:
        self.bar.update()
        return html

    def on_post_page(self, output: str, /, *, page, config: MkDocsConfig) -> str:
        """Put the long tables and histories in, after Markdown and the search index have seen the page."""
        self.bar.update()
        made = self.pages.get(page.file.src_uri)
        if made and made.parts:
            for name, html in made.parts().items():
                output = output.replace(part_marker(name), html, 1)
        return output

    @event_priority(50)  # before the search plugin writes its index
    def on_post_build(self, *, config: MkDocsConfig) -> None:
        index, files = self.index, self.files
        if index is not None and files is not None:
            for made in self.made_files:
                if made.kept is None and made.is_documentation_page() and made.page is not None:
                    index.wrote(made.src_uri, made.made.key, made.abs_dest_path, made.page.title,
                                self.search_entries.get(made.src_uri), (made.page.canonical_url, made.page.abs_url))
            pages = self._documentation_pages(files)
            search = _search_index(config)
            if search is not None:  # every page's entries in page order, as a full build lists them
                entries: list = []
                for file in pages:
                    kept = getattr(file, "kept", None)
                    entries += self.search_entries.get(file.src_uri) or (kept or {}).get("search") or []
                search.entries = entries
                config.plugins["material/search"].search_index_prev = None
            if self.left_out and config.site_url and self.env is not None and self.nav is not None:
                from mkdocs.commands.build import _build_theme_template  # (pinned: mkdocs==1.6.1)

                # MkDocs' own sitemap, again, with the pages it did not see: as a full build writes it
                _build_theme_template("sitemap.xml", self.env, Files(pages), config, self.nav)
            outputs = {f.dest_uri for f in files} | {f.dest_uri for f in self.left_out}
            index.remove_stale(outputs)
            builder = self.builder
            whole = whole_record(self.inputs, self.as_of, builder.keys.site, self.frame, builder.summaries(),
                                 self.groups) if self.inputs and builder.keys.site else None
            index.save(outputs, whole)
            self.summary = f"{index.made} page(s) made, {index.kept} kept as they were"
            log.info("recordkit: built in %.1f s: %s", time.perf_counter() - self.started, self.summary)
        self.bar.close()
        self._let_go()

    def _documentation_pages(self, files: Files) -> list:
        """Every page in the order a full build has them: MkDocs' pages with the left-out ones put back in
        their places among the generated pages."""
        left_out = [f for f in self.left_out if f.is_documentation_page()]
        pages, at = [], 0
        for file in files.documentation_pages():
            if isinstance(file, MadeFile):
                while at < len(left_out) and left_out[at].position < file.position:
                    pages.append(left_out[at])
                    at += 1
            pages.append(file)
        return pages + left_out[at:]

    def _let_go(self) -> None:
        """Let the records go: `mkdocs serve` loads them afresh on the next build."""
        self.pages = {}
        self.made_files, self.left_out = [], []
        self.files = self.env = self.nav = self.builder = self.update = self.old_index = self.inputs = None

    def on_build_error(self, *, error: Exception) -> None:
        self.bar.close()
        self._let_go()

    def on_serve(self, server, /, *, config: MkDocsConfig, builder):
        if self.records_dir:
            watch_records(server, self.records_dir)
        return server


def _kept_only() -> str:
    raise AssertionError("a kept page is never made")  # (its file is as the last build wrote it)


def _search_index(config: MkDocsConfig):
    """Material's search index being filled in this build, if search is on."""
    search = config.plugins.get("material/search")
    return getattr(search, "search_index", None) if search is not None and search.config.enabled else None


class SiteBuildError(Exception):
    """A build stopped: bad records, a bad mkdocs.yml, an unsafe output folder, or a MkDocs failure.
    The message says which."""




def find_site_config(records: Path) -> Path | None:
    """A user's mkdocs.yml: in the records folder, else beside it (the demo keeps its one there)."""
    for folder in (records, records.resolve().parent):
        for name in SITE_CONFIGS:
            if (folder / name).is_file():
                return folder / name
    return None


def site_settings(records: Path, config_file: Path | None, empty_pages: Path) -> tuple[dict, Path]:
    """MkDocs settings over the built-in configuration, and the path relative paths are read against.

    The user's mkdocs.yml (if any) overrides the built-in one key by key; its `plugins` gain `recordkit`
    if they lack it; the hand-written pages are its docs_dir, else `pages/` in the records folder, else
    none (an empty folder)."""
    from mkdocs.utils.yaml import yaml_load

    settings: dict = {}
    anchor = config_file or DEFAULT_SITE_CONFIG
    if config_file:
        try:
            with open(config_file, "rb") as handle:
                settings = yaml_load(handle) or {}
        except (OSError, ValueError, MkDocsException) as exc:
            raise SiteBuildError(f"{config_file}: cannot read the site configuration ({exc})") from None
        if not isinstance(settings, dict):
            raise SiteBuildError(f"{config_file}: a site configuration is a mapping of settings")
        plugins = settings.get("plugins")
        if plugins is not None:
            names = [next(iter(p)) if isinstance(p, dict) else p for p in plugins]
            if "recordkit" not in names:
                settings["plugins"] = [*plugins, "recordkit"]
    base_dir = anchor.resolve().parent
    if settings.get("docs_dir"):
        settings["docs_dir"] = str(base_dir / settings["docs_dir"])
    else:
        own_pages = records / "pages"
        settings["docs_dir"] = str(own_pages.resolve() if own_pages.is_dir() else empty_pages)
    theme = settings.get("theme")
    if isinstance(theme, dict) and theme.get("custom_dir"):
        theme["custom_dir"] = str(base_dir / theme["custom_dir"])
    return settings, anchor


def build_site(records: Path, as_of: date | None, out: Path | None, config_file: Path | None = None,
               force: bool = False, report: Callable[[str], None] | None = None) -> Path:
    """Build the site as `mkdocs build` would, with the built-in configuration unless the user has a
    mkdocs.yml; returns the output folder. Refuses an unsafe output folder before anything is removed.
    `report` is told how many pages were made and how many kept from the last build."""
    import tempfile

    from mkdocs.commands.build import build
    from mkdocs.config import load_config

    from .outdir import OutputRefused, check_output, default_output, looks_built, mark_built

    config_file = config_file or find_site_config(records)
    with _pass_arguments(records, as_of), tempfile.TemporaryDirectory(prefix="recordkit-pages-") as empty_pages:
        settings, anchor = site_settings(records, config_file, Path(empty_pages))
        if out is None:
            out = (anchor.resolve().parent / settings["site_dir"]) if config_file and settings.get("site_dir") \
                else default_output(records)
        settings["site_dir"] = str(Path(out).resolve())
        protected = (Path(settings["docs_dir"]),) + ((config_file.resolve().parent,) if config_file else ())
        try:
            check_output(Path(out), records, protected, force)
        except OutputRefused as exc:
            raise SiteBuildError(str(exc)) from None
        try:
            config = load_config(str(DEFAULT_SITE_CONFIG), config_file_path=str(anchor), **settings)
            # keep unchanged pages of the last build into this folder (see render_cache)
            last = read_index(records, Path(out)) if looks_built(Path(out)) else None
            plugin = config.plugins.get("recordkit")
            if isinstance(plugin, RecordkitPlugin):
                plugin.last_index[str(Path(out).resolve())] = last
            build(config, dirty=last is not None)
        except Abort:  # MkDocs has printed why (the records' problems, or the configuration's)
            raise SiteBuildError("stopped; see the messages above") from None
        except MkDocsException as exc:
            raise SiteBuildError(str(exc)) from None
    mark_built(Path(config.site_dir))
    summary = getattr(config.plugins.get("recordkit"), "summary", "")
    if report and summary:
        report(summary)
    return Path(config.site_dir)


def site_address(records: Path, config_file: Path | None = None) -> tuple[str | None, bool]:
    """The site's own address (`site_url`) and URL style from the user's mkdocs.yml, as a build would use
    them (the built-in configuration has no address and plain .html links)."""
    config_file = config_file or find_site_config(records)
    settings, _ = site_settings(records, config_file, records)
    return settings.get("site_url") or None, bool(settings.get("use_directory_urls", False))


def serve_site(records: Path, as_of: date | None, address: str, config_file: Path | None = None) -> None:
    """Serve the site (built into a temporary folder by MkDocs) and rebuild when a record changes."""
    import tempfile

    from mkdocs.commands.serve import serve

    config_file = config_file or find_site_config(records)
    with _pass_arguments(records, as_of), tempfile.TemporaryDirectory(prefix="recordkit-pages-") as empty_pages:
        settings, anchor = site_settings(records, config_file, Path(empty_pages))
        settings.pop("site_dir", None)  # MkDocs serves from a temporary folder of its own
        shown = ServeLog.attach()
        try:
            # "dirty": each rebuild keeps the pages whose render key is unchanged (see render_cache)
            serve(config_file=str(DEFAULT_SITE_CONFIG), config_file_path=str(anchor), dev_addr=address,
                  livereload=True, build_type="dirty", **settings)
        except MkDocsException as exc:
            raise SiteBuildError(str(exc)) from None
        finally:
            logging.getLogger("mkdocs").removeHandler(shown)


@contextlib.contextmanager
def _pass_arguments(records: Path, as_of: date | None) -> Iterator[None]:
    """The records folder and as-of date, for the plugin, through the environment (MkDocs builds it from
    its configuration); put back as they were afterwards, so a program that builds twice is not misled."""
    wanted = {ENV_RECORDS: str(records), ENV_AS_OF: as_of.isoformat() if as_of else None,
              "NO_MKDOCS_2_WARNING": os.environ.get("NO_MKDOCS_2_WARNING", "1")}
    before = {name: os.environ.get(name) for name in wanted}
    for name, value in wanted.items():
        if value is not None:
            os.environ[name] = value
    try:
        yield
    finally:
        for name, value in before.items():
            if value is None:
                os.environ.pop(name, None)
            else:
                os.environ[name] = value


def _shown(path: Path) -> Path:
    """The path relative to the working folder when it is inside it: shorter messages and record links."""
    try:
        return path.resolve().relative_to(Path.cwd())
    except ValueError:
        return path
