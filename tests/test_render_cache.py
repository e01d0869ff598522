"""The render cache: a build into the last build's folder keeps unchanged pages, and ends byte for byte
as a full build into an empty folder would."""
from __future__ import annotations

import re
import shutil
import tempfile
from datetime import date
from pathlib import Path

from click.testing import CliRunner
from hypothesis import HealthCheck, Phase, given, settings, strategies as st

from recordkit.cli import main
from recordkit.demo_portfolio import generate
from recordkit.loader import load_records
from recordkit.mkdocs_plugin import build_site

from .conftest import REPO

AS_OF = date(2026, 12, 1)  # the demo records' story date


def tree(folder: Path) -> dict[str, bytes]:
    return {p.relative_to(folder).as_posix(): p.read_bytes() for p in sorted(folder.rglob("*")) if p.is_file()}


def assert_same_tree(kept: Path, full: Path) -> None:
    a, b = tree(kept), tree(full)
    assert sorted(a) == sorted(b), set(a) ^ set(b)
    differ = [name for name in a if a[name] != b[name]]
    assert not differ, differ[:10]


def cli(records: Path, *args: str) -> None:
    result = CliRunner().invoke(main, [*args[:1], "-r", str(records), *args[1:]] if args[0] != "add"
                                else [*args[:2], "-r", str(records), *args[2:]], catch_exceptions=False)
    assert result.exit_code == 0, result.output


def in_service(records: Path) -> list[str]:
    loaded = load_records(records, AS_OF)
    retired = {e.device for e in loaded.portfolio.events if e.action.value == "replace"}
    return sorted(loc.device.uid for loc in loaded.portfolio.devices.values()
                  if loc.device.kind.value != "listening_node" and loc.device.uid not in retired
                  and loc.device.installed < date(2026, 11, 10))  # before any date log_test gives


# One edit a user might make between builds, each a function of (records folder, a number to vary it).
def log_test(records: Path, n: int) -> None:
    devices = in_service(records)
    cli(records, "log", devices[n % len(devices)], "test", "--result", "pass" if n % 3 else "fail",
        "--date", f"2026-11-{10 + n % 19:02d}", "--again", "--by", f"tester {n}")


def add_device(records: Path, n: int) -> None:
    cli(records, "add", "device", "--unit", "tansy-house/flat-1", "--id", f"added-{n}", "--kind", "co",
        "--room", "kitchen", "--manufactured", "2025-01", "--date", "2026-11-01")


def replace_device(records: Path, n: int) -> None:
    devices = [d for d in in_service(records) if d.startswith("bramble-cottage/")]
    old = devices[n % len(devices)]
    cli(records, "replace", old, "--new-id", f"{old.rsplit('/', 1)[1]}-r{n}", "--manufactured", "2026-10",
        "--date", "2026-11-30")  # after every logged test


def edit_record(records: Path, n: int) -> None:
    path = records / "bramble-cottage.yaml"
    text = path.read_text()
    path.write_text(text.replace("wall, 2 m from the stove", f"wall, {2 + n % 3} m from the stove", 1)
                    if n % 2 else text.replace("name: Bramble Cottage\n", f"name: Bramble Cottage {n}\n", 1))


def edit_policy(records: Path, n: int) -> None:
    path = records / "policy.yaml"
    text = path.read_text()
    path.write_text(re.sub(r"value: \d+ days", f"value: {30 + n % 40} days", text, count=1))


def edit_page(records: Path, n: int) -> None:
    path = records / "pages" / "about-the-demo.md"
    path.write_text(path.read_text() + f"\nA line added by edit {n}.\n")


def add_unit(records: Path, n: int) -> None:
    cli(records, "add", "unit", "--property", "bramble-cottage", "--id", f"annexe-{n}", "--name", f"Annexe {n}")


EDITS = [log_test, add_device, replace_device, edit_record, edit_policy, edit_page, add_unit]


# Each example builds the site several times: a few examples, and no shrinking (the failing edits print).
@settings(max_examples=6, deadline=None, suppress_health_check=[HealthCheck.too_slow],
          phases=[Phase.explicit, Phase.reuse, Phase.generate])
@given(st.lists(st.tuples(st.sampled_from(EDITS), st.integers(0, 50)), min_size=1, max_size=4, unique_by=lambda e: e[0]))
def test_kept_pages_build_the_same_site_as_a_full_build(edits):
    with tempfile.TemporaryDirectory() as work:
        records, site = Path(work) / "records", Path(work) / "site"
        shutil.copytree(REPO / "records", records, ignore=shutil.ignore_patterns(".recordkit"))
        build_site(records, AS_OF, site)
        for edit, n in edits:
            edit(records, n)
            build_site(records, AS_OF, site)
        full = build_site(records, AS_OF, Path(work) / "full")
        assert_same_tree(site, full)


def test_one_logged_event_makes_only_its_unit_and_property_pages_again(tmp_path, monkeypatch):
    from recordkit import mkdocs_plugin

    records, site = tmp_path / "records", tmp_path / "site"
    generate(records, 200, 1, as_of=AS_OF)
    build_site(records, AS_OF, site)
    made: list[str] = []  # every page with a render key that is made (pages through MkDocs, sheets copied)
    content, copy = mkdocs_plugin.MadeFile.content_string, mkdocs_plugin.MadeFile.copy_file

    def note(file) -> None:
        if file.made.key is not None:
            made.append(file.src_uri)
    monkeypatch.setattr(mkdocs_plugin.MadeFile, "content_string",
                        property(lambda self: note(self) or content.fget(self)))
    monkeypatch.setattr(mkdocs_plugin.MadeFile, "copy_file",
                        lambda self, dirty=False: (self.kept is None and note(self)) or copy(self, dirty))

    build_site(records, AS_OF, site)
    assert made == []  # nothing changed: no page of a unit or property is made again

    device = sorted(load_records(records, AS_OF).portfolio.devices)[7]
    prop, unit, _ = device.split("/")
    cli(records, "log", device, "test", "--result", "pass", "--date", "2026-11-20", "--again")
    build_site(records, AS_OF, site)
    # The unit's page and its four sheets, the property's page and its checklist: nothing else.
    assert sorted(made) == sorted([f"properties/{prop}.md", f"checklists/{prop}.html",
                                   f"properties/{prop}/{unit}.md", f"checklists/{prop}/{unit}.html",
                                   f"checklists/{prop}/{unit}-monthly.html", f"walkround/{prop}/{unit}.html",
                                   f"labels/{prop}/{unit}.html"])
    assert_same_tree(site, build_site(records, AS_OF, tmp_path / "full"))


def test_the_same_records_named_two_ways_share_one_cache(tmp_path, monkeypatch):
    records = tmp_path / "data" / "records"
    shutil.copytree(REPO / "records", records, ignore=shutil.ignore_patterns(".recordkit"))
    load_records(records, AS_OF)
    from recordkit import loader

    parsed: list[str] = []
    original = loader._Builder.add_file
    monkeypatch.setattr(loader._Builder, "add_file", lambda self, tree, path: parsed.append(path) or original(self, tree, path))
    monkeypatch.chdir(tmp_path / "data")
    again = load_records(Path("..") / "data" / "records", AS_OF)  # a relative name for the same folder
    assert not again.problems
    assert parsed == []  # every file came from the cache


def test_a_removed_unit_leaves_no_page_behind(tmp_path):
    records, site = tmp_path / "records", tmp_path / "site"
    shutil.copytree(REPO / "records", records, ignore=shutil.ignore_patterns(".recordkit"))
    build_site(records, AS_OF, site)
    path = records / "tansy-house.yaml"
    before = path.read_text()
    cli(records, "add", "unit", "--property", "tansy-house", "--id", "flat-9", "--name", "Flat 9")
    build_site(records, AS_OF, site)
    assert (site / "properties" / "tansy-house" / "flat-9.html").is_file()
    assert_same_tree(site, build_site(records, AS_OF, tmp_path / "full-with"))
    path.write_text(before)  # the unit taken out again by hand
    build_site(records, AS_OF, site)
    assert not list(site.rglob("*flat-9*"))  # its page and sheets are gone, as in a full build
    assert_same_tree(site, build_site(records, AS_OF, tmp_path / "full"))


def test_a_kept_recording_removed_or_changed_makes_its_page_again(tmp_path):
    import numpy as np

    from recordkit.evidence import evidence_path, keep

    from .test_audio import TEMPORAL_3, signal, write_wav

    records, site = tmp_path / "records", tmp_path / "site"
    shutil.copytree(REPO / "records", records, ignore=shutil.ignore_patterns(".recordkit"))
    samples = (signal(TEMPORAL_3, 3200.0, 5) * 32767).astype(np.int16).tobytes()
    reference = keep(records, write_wav(tmp_path / "test.wav", samples))
    with open(records / "log" / "2026.yaml", "a") as log:
        log.write(f"  - {{date: 2026-11-29, device: tansy-house/flat-1/landing-smoke, action: test, result: pass, "
                  f"evidence: '{reference}'}}\n")
    build_site(records, AS_OF, site)
    page = site / "properties" / "tansy-house" / "flat-1.html"
    assert "Recorded evidence" in page.read_text() and "not readable" not in page.read_text()
    evidence_path(records, reference).unlink()  # the recording is lost; the records still name it
    build_site(records, AS_OF, site)
    assert "not readable" in page.read_text()
    assert_same_tree(site, build_site(records, AS_OF, tmp_path / "full"))


def test_an_output_file_edited_or_deleted_by_hand_is_made_again(tmp_path):
    records, site = tmp_path / "records", tmp_path / "site"
    shutil.copytree(REPO / "records", records, ignore=shutil.ignore_patterns(".recordkit"))
    build_site(records, AS_OF, site)
    page, sheet = site / "properties" / "tansy-house" / "flat-1.html", site / "checklists" / "tansy-house" / "flat-1.html"
    page.write_text(page.read_text().replace("Flat 1", "Flat one"))
    sheet.unlink()
    build_site(records, AS_OF, site)
    assert_same_tree(site, build_site(records, AS_OF, tmp_path / "full"))


def test_units_left_out_of_mkdocs_keep_their_sitemap_lines_and_search_entries(tmp_path, monkeypatch):
    """With a site address and directory URLs: a build after one logged test shows MkDocs only the
    changed unit, and still writes the sitemap and search index a full build writes."""
    import gzip
    import json

    from recordkit import mkdocs_plugin
    from recordkit.render_cache import dest_of

    records, site = tmp_path / "records", tmp_path / "site"
    generate(records, 120, 1, as_of=AS_OF)
    (records / "mkdocs.yml").write_text("site_name: Invented lettings\nsite_url: https://alarms.example.org/records/\n"
                                        "use_directory_urls: true\nplugins: [search]\n")  # (offline: no directories)
    build_site(records, AS_OF, site)
    loaded = load_records(records, AS_OF)
    units = [u for p in loaded.portfolio.properties for u in p.units]
    for unit in units:  # where MkDocs wrote each unit's page is where the render index looks for it
        assert (site / dest_of(f"properties/{unit.uid}.md", True)).is_file()
    device = sorted(loaded.portfolio.devices)[3]
    cli(records, "log", device, "test", "--result", "fail", "--date", "2026-11-20", "--again")
    seen: list[int] = []
    original = mkdocs_plugin.RecordkitPlugin._documentation_pages

    def count(self, files):
        seen.append(len(self.left_out))
        return original(self, files)
    monkeypatch.setattr(mkdocs_plugin.RecordkitPlugin, "_documentation_pages", count)
    build_site(records, AS_OF, site)
    assert seen and seen[0] >= 4 * (len(units) - 1)  # every other unit's page and sheets left out
    full = build_site(records, AS_OF, tmp_path / "full")
    assert_same_tree(site, full)
    sitemap = (site / "sitemap.xml").read_text()
    for unit in units:  # (a unit page's address, as MkDocs gives it with directory URLs)
        assert f"<loc>https://alarms.example.org/records/properties/{unit.uid}/</loc>" in sitemap
    assert gzip.decompress((site / "sitemap.xml.gz").read_bytes()).decode() == sitemap
    search = json.loads((site / "search" / "search_index.json").read_text())
    located = {doc["location"].split("#")[0] for doc in search["docs"]}
    assert {f"properties/{unit.uid}/" for unit in units} <= located


def test_after_a_logged_test_only_that_property_is_read(tmp_path, monkeypatch):
    """The build after `log` loads the one property whose files changed (quickbuild), makes the pages
    about the whole portfolio from the others' kept summaries, and writes what a full build writes."""
    from recordkit import mkdocs_plugin

    records, site = tmp_path / "records", tmp_path / "site"
    generate(records, 150, 1, as_of=AS_OF)
    build_site(records, AS_OF, site)
    loaded = load_records(records, AS_OF)
    props = loaded.portfolio.properties
    assert len(props) >= 4
    from recordkit import quickbuild

    loads: list[set] = []
    original = quickbuild.quick_load
    monkeypatch.setattr(quickbuild, "quick_load", lambda root, wanted, *a, **k: loads.append(set(wanted))
                        or original(root, wanted, *a, **k))
    # Both properties' tests go to the one shared log of the year (log/2026.yaml): each build after a
    # test still reads only the property tested.
    for n, (prop, day, result) in enumerate(((props[2], "2026-11-20", "fail"), (props[3], "2026-11-21", "pass"),
                                             (props[2], "2026-11-22", "pass"))):
        device = next(d.uid for u in prop.units for d in u.devices)
        cli(records, "log", device, "test", "--result", result, "--date", day, "--again")
        with monkeypatch.context() as patch:
            def refused(*args, **kwargs):
                raise AssertionError("a whole load")
            patch.setattr(mkdocs_plugin, "load_records", refused)
            build_site(records, AS_OF, site)
        assert loads[-1] == {prop.id}
        assert_same_tree(site, build_site(records, AS_OF, tmp_path / f"full-{n}"))
    assert (records / "log" / "2026.yaml").is_file()
