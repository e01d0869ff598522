"""The static site built from records: pages, links, overdue items, escaping, and clean failure."""
import json
import re

import pytest

from .conftest import DEMO_AS_OF, HOUSE, device_yaml, run_cli
from .sitecheck import broken_links, scan

AS_OF = DEMO_AS_OF.isoformat()


@pytest.fixture(scope="module")
def demo_site(tmp_path_factory):
    out = tmp_path_factory.mktemp("site") / "site"
    result = run_cli("build", "-r", "records", "--as-of", AS_OF, "--out", str(out))
    assert result.returncode == 0, result.stderr
    return out


def test_expected_pages_exist(demo_site):
    for page in ["index.html", "rules.html", "about.html", "keeping-records.html", "about-the-demo.html",
                 "properties/tansy-house.html", "properties/bramble-cottage.html",
                 "properties/tansy-house/flat-g.html", "properties/tansy-house/flat-1.html",
                 "properties/tansy-house/flat-2.html", "properties/bramble-cottage/home.html"]:
        assert (demo_site / page).is_file(), page


def test_no_broken_internal_links(demo_site):
    assert broken_links(demo_site) == []


def test_nothing_is_fetched_from_outside(demo_site):
    for path in demo_site.rglob("*.html"):
        page = scan(path)
        srcs = [attrs.get("src") or attrs.get("href") for tag, attrs in page.tags
                if tag in ("script", "link", "img", "iframe")]
        assert not [s for s in srcs if s and re.match(r"^(https?:)?//", s)], path


def test_overdue_items_from_status_json_are_on_the_overview(demo_site):
    status = json.loads(run_cli("status", "-r", "records", "--as-of", AS_OF, "--format", "json").stdout)
    overdue = [item for item in status["items"] if item["state"] == "overdue"]
    assert overdue  # the demo has overdue work
    overview = scan(demo_site / "index.html")
    links = set(overview.links)
    for item in overdue:
        if item["task"] == "coverage":  # a unit's gap links to the unit's coverage section
            prop, unit = item["unit"].split("/")
            assert f"properties/{prop}/{unit}.html#coverage" in links, item["unit"]
            continue
        prop, unit, device = item["device"].split("/")
        assert f"properties/{prop}/{unit}.html#device-{device}" in links, item["device"]
    # one row per overdue task in the overdue table (rows hold the overdue label)
    html = (demo_site / "index.html").read_text()
    table = html.split('id="overdue"')[1].split("<h2")[0]
    assert table.count('<tr><td class="rk-c-head">') == len(overdue)


def test_unit_page_shows_history_replacement_rule_and_retired_devices(demo_site):
    page = scan(demo_site / "properties/tansy-house/flat-1.html")
    text = page.visible_text
    assert "device-landing-smoke" in page.ids and "device-landing-smoke-2014" in page.ids
    retired = text.split("Retired devices")[-1]  # the section, not the table of contents
    assert "landing-smoke-2014" in retired and "Retired 2024-02-10" in retired
    assert "2024-02-10 replace" in retired  # its history is kept
    assert "Replace by 2033-11-01" in text and "NFPA 72" in text  # 2023-11 + 10 years (NFPA 72 §14.4.7.1)
    assert "no sound from the horn" in text  # the failed test's note


def test_every_page_carries_the_caution_in_its_footer(demo_site):
    for path in demo_site.rglob("*.html"):
        html = path.read_text()
        if {"checklists", "walkround", "labels"} & set(path.parts):  # sheets and forms carry their own box
            footers = html.split('<div class="caution">')[1:]
            assert footers and all("authority having jurisdiction (AHJ) decide" in f for f in footers), path
        else:
            footer = html.split('<footer class="md-footer">')[1]
            assert "authority having jurisdiction (AHJ) decide" in footer, path


def test_rules_page_marks_local_overrides(demo_site):
    text = scan(demo_site / "rules.html").visible_text
    assert "due_soon_battery Warn before a battery date 45 days Pennyfold Homes" in text
    assert "local (records/policy.yaml:4)" in text or "local (" in text
    assert "smoke_life" in text and "14.4.7.1" in text


HOSTILE = '<script>alert("x")</script> *bold* {{ 7*7 }} {% if %} [a](javascript:alert(1)) | cell'


def test_record_text_is_escaped(records, tmp_path):
    house = HOUSE.replace("name: Test House", f"name: '{HOSTILE}'")
    folder = records({"h.yaml": house + device_yaml(
        id="s1", kind="smoke", room="hall", power="sealed", manufactured="2020-01", installed="2020-02-01",
        location=json.dumps(HOSTILE)) + "events:\n  - {date: 2026-11-01, device: test-house/main/s1, "
        f"action: test, result: pass, note: {json.dumps('<img src=x onerror=alert(2)>')}}}\n"})
    out = tmp_path / "site"
    result = run_cli("build", "-r", str(folder), "--as-of", AS_OF, "--out", str(out))
    assert result.returncode == 0, result.stderr
    for page_path in [out / "index.html", out / "properties/test-house.html", out / "properties/test-house/main.html"]:
        html = page_path.read_text()
        page = scan(page_path)
        assert "alert(" not in " ".join(page.scripts), page_path
        assert not any(tag == "img" and attrs.get("src") == "x" for tag, attrs in page.tags)
        assert not any(tag == "a" and attrs.get("href", "").strip().lower().startswith("javascript:")
                       for tag, attrs in page.tags)
        assert "<em>bold</em>" not in html and "49" not in page.visible_text
        assert '<script>alert("x")</script>' in page.visible_text  # shown as the text it is
    unit_text = scan(out / "properties/test-house/main.html").visible_text
    assert "<img src=x onerror=alert(2)>" in unit_text and "{{ 7*7 }}" in unit_text


def test_build_with_a_record_error_fails_with_file_and_line(records, tmp_path):
    folder = records({"h.yaml": HOUSE + device_yaml(id="s1", kind="smoke", room="attic", power="sealed",
                                                    manufactured="2020-01", installed="2020-02-01")})
    result = run_cli("build", "-r", str(folder), "--as-of", AS_OF, "--out", str(tmp_path / "site"))
    assert result.returncode == 1
    assert re.search(r"h\.yaml:11: device 's1': room 'attic' is not a room of this unit", result.stderr)
    assert "Traceback" not in result.stderr


def test_plain_mkdocs_build_uses_the_plugin(tmp_path):
    # `mkdocs build` with the project's mkdocs.yml works on its own (the plugin is registered).
    import subprocess, sys, os
    env = {**os.environ, "RECORDKIT_AS_OF": AS_OF}
    result = subprocess.run([sys.executable, "-m", "mkdocs", "build", "-q", "-d", str(tmp_path / "s")],
                            capture_output=True, text=True, env=env, cwd=str(demo_root()))
    assert result.returncode == 0, result.stderr
    assert (tmp_path / "s/properties/tansy-house/flat-1.html").is_file()


def demo_root():
    from .conftest import REPO
    return REPO


def test_links_hold_with_directory_urls(tmp_path):
    # The HTML parts of unit and property pages carry links MkDocs does not rewrite; with
    # `use_directory_urls: true` (MkDocs' default) each page is a folder, and the links must follow.
    import os, subprocess, sys
    from .conftest import REPO
    config = (REPO / "mkdocs.yml").read_text()
    config = config.replace("use_directory_urls: false", "use_directory_urls: true")
    config = config.replace("  - offline", "")  # Material's offline plugin turns directory URLs off
    config = config.replace("docs_dir: records/pages", f"docs_dir: {REPO / 'records/pages'}")
    config = config.replace("records: records", f"records: {REPO / 'records'}")
    (tmp_path / "mkdocs.yml").write_text(config)
    env = {**os.environ, "RECORDKIT_AS_OF": AS_OF, "NO_MKDOCS_2_WARNING": "1"}
    env.pop("RECORDKIT_RECORDS", None)
    result = subprocess.run([sys.executable, "-m", "mkdocs", "build", "-q", "-d", str(tmp_path / "s")],
                            capture_output=True, text=True, env=env, cwd=tmp_path)
    assert result.returncode == 0, result.stderr
    assert (tmp_path / "s/properties/tansy-house/flat-1/index.html").is_file()
    page = (tmp_path / "s/properties/tansy-house/index.html").read_text()
    assert 'href="flat-1/#device-' in page   # a link from the HTML device table
    assert broken_links(tmp_path / "s") == []
