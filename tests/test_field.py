"""In the field: pages readable on a phone and a desk, the walk-round form feeding `import`, device labels
with QR codes (read back with zxing-cpp), all in headless Chromium or from the printed PDF."""
from __future__ import annotations

import json
import subprocess
import time
from datetime import date

import pytest
from selenium.webdriver.common.by import By

from recordkit.loader import load_records

from .conftest import ARTIFACTS, DEMO_AS_OF, DEMO_RECORDS, HOUSE, device_yaml, run_cli
from .sitecheck import broken_links, scan

PHONE, DESK = (390, 844), (1280, 900)  # the two widths: a phone held upright, a laptop

# Badges that are cut off: outside the viewport and not inside a box the reader can scroll, or clipped by
# an ancestor that hides its overflow. Badges in our tables (rk-stack) must sit inside the viewport itself.
BADGE_PROBLEMS = """
const bad = [];
for (const badge of document.querySelectorAll('.rk-state, .wr-state')) {
  const r = badge.getBoundingClientRect();
  if (r.width === 0 && r.height === 0) continue;            // not shown (a closed history)
  let ok = r.left >= -0.5 && r.right <= innerWidth + 0.5;
  if (!ok && !badge.closest('.rk-stack')) {
    for (let p = badge.parentElement; p && p !== document.body; p = p.parentElement) {
      if (/(auto|scroll)/.test(getComputedStyle(p).overflowX) && p.scrollWidth > p.clientWidth) { ok = true; break; }
    }
  }
  for (let p = badge.parentElement; ok && p && p !== document.body; p = p.parentElement) {
    if (/(hidden|clip)/.test(getComputedStyle(p).overflowX)) {
      const q = p.getBoundingClientRect();
      if (r.left < q.left - 0.5 || r.right > q.right + 0.5) ok = false;
    }
  }
  if (!ok) bad.push(badge.textContent.trim() + ' at ' + Math.round(r.left) + '..' + Math.round(r.right));
}
return bad;
"""


def viewport(browser, size):
    width, height = size
    browser.execute_cdp_cmd("Emulation.setDeviceMetricsOverride",
                            {"width": width, "height": height, "deviceScaleFactor": 1, "mobile": width < 600})


@pytest.fixture(scope="module")
def sites(tmp_path_factory):
    """The demo and a synthetic portfolio of over 40 properties (so it has the list of properties and the
    overview's table by property), built once."""
    base = tmp_path_factory.mktemp("field")
    portfolio = base / "portfolio"
    made = run_cli("demo-portfolio", "--units", "1400", "--years", "1", "--out", str(portfolio))
    assert made.returncode == 0, made.stderr
    built = {}
    for name, records in (("demo", DEMO_RECORDS), ("portfolio", portfolio)):
        out = base / f"site-{name}"
        result = run_cli("build", "-r", str(records), "--as-of", DEMO_AS_OF.isoformat(), "--out", str(out))
        assert result.returncode == 0, result.stderr
        built[name] = out
    return built


def sample_pages(site):
    unit = sorted((site / "properties").glob("*/*.html"))[0]
    prop = unit.parent.with_suffix(".html")
    walk = site / "walkround" / unit.parent.name / unit.name
    pages = {"overview": site / "index.html", "property": prop, "unit": unit, "walkround": walk}
    if (site / "properties.html").is_file():
        pages["properties"] = site / "properties.html"
    return pages


@pytest.mark.parametrize("name", ["demo", "portfolio"])
def test_pages_fit_a_phone_and_a_desk(browser, sites, name):
    ARTIFACTS.mkdir(exist_ok=True)
    assert name == "demo" or "properties" in sample_pages(sites[name])  # (the list of properties too)
    problems = []
    try:
        for size in (PHONE, DESK):
            viewport(browser, size)
            for what, page in sample_pages(sites[name]).items():
                browser.get(page.as_uri())
                inner, scroll = browser.execute_script(
                    "return [innerWidth, document.documentElement.scrollWidth]")
                assert inner == size[0]
                if scroll > inner:
                    problems.append(f"{name} {what} at {size[0]} px: {scroll} px wide")
                problems += [f"{name} {what} at {size[0]} px: badge {b}" for b in browser.execute_script(BADGE_PROBLEMS)]
                browser.save_screenshot(str(ARTIFACTS / f"field-{name}-{what}-{size[0]}.png"))
    finally:
        browser.execute_cdp_cmd("Emulation.clearDeviceMetricsOverride", {})
    assert problems == []


def test_work_lists_name_the_unit_and_the_rule_in_words(sites):
    site = sites["demo"]
    overview = (site / "index.html").read_text(encoding="utf-8")
    work = overview.split('id="overdue"')[1].split('id="upcoming"')[0]
    # every task sits under its property's heading and its unit's row, so a device id shared by several
    # flats (hall-smoke, say) is never shown without its unit
    assert work.count('class="rk-work-property"') >= 2 and work.count('class="rk-group"') >= 3
    assert "Test with the test button" in work and 'title="rule test_every"' in work
    assert ">test_every<" not in work and ">cov_" not in work
    prop = next(p for p in (site / "properties").glob("*.html") if "rk-work" in p.read_text(encoding="utf-8"))
    text = prop.read_text(encoding="utf-8")
    units = text.split('id="overdue"')[1].split("</table>")[0].count('class="rk-group"')
    assert units >= 1
    # every rule link lands on its row of the rules page
    assert broken_links(site) == []
    rules = scan(site / "rules.html")
    assert {"rule-test_every", "rule-smoke_life"} <= rules.ids


# ---- the walk-round form --------------------------------------------------------------------------

def walk_records(folder):
    folder.mkdir()
    (folder / "h.yaml").write_text(
        HOUSE
        + device_yaml(id="bed-smoke", kind="smoke", room="bed-1", power="battery", manufactured="2022-01",
                      installed="2022-02-01")
        + device_yaml(id="hall-smoke", kind="smoke", room="hall", power="battery", manufactured="2022-01",
                      installed="2022-02-01")
        + device_yaml(id="kitchen-co", kind="co", room="kitchen", power="battery", manufactured="2022-01",
                      installed="2022-02-01"), encoding="utf-8")
    return folder


def tap(browser, device, action, result=""):
    section = browser.find_element(By.ID, f"device-{device}")
    selector = f"button[data-action='{action}']" + (f"[data-result='{result}']" if result else "")
    button = section.find_element(By.CSS_SELECTOR, selector)
    browser.execute_script("arguments[0].scrollIntoView({block: 'center'})", button)
    button.click()


def test_walk_round_taps_survive_a_reload_and_import_as_those_events(browser, tmp_path):
    records = walk_records(tmp_path / "records")
    site = tmp_path / "site"
    assert run_cli("build", "-r", str(records), "--out", str(site)).returncode == 0
    form = site / "walkround/test-house/main.html"
    downloads = tmp_path / "downloads"
    downloads.mkdir()
    browser.execute_cdp_cmd("Browser.setDownloadBehavior", {"behavior": "allow", "downloadPath": str(downloads)})
    viewport(browser, PHONE)
    try:
        browser.get(form.as_uri() + "#device-hall-smoke")  # as a label's link opens it
        assert browser.execute_script("return location.hash") == "#device-hall-smoke"
        browser.execute_script("localStorage.clear()")
        browser.refresh()
        # rooms in the record's order: bedroom, hall, kitchen
        order = [s.get_attribute("data-device") for s in browser.find_elements(By.CSS_SELECTOR, ".wr-device")]
        assert order == ["test-house/main/bed-smoke", "test-house/main/hall-smoke", "test-house/main/kitchen-co"]
        browser.find_element(By.ID, "wr-by").send_keys("R. Inspector")
        tap(browser, "bed-smoke", "test", "pass")
        tap(browser, "hall-smoke", "test", "fail")
        tap(browser, "kitchen-co", "battery")
        tap(browser, "kitchen-co", "clean")
        # a mistaken tap is taken back
        undo = browser.find_element(By.ID, "device-kitchen-co").find_element(By.CSS_SELECTOR, ".wr-taps li:last-child button")
        browser.execute_script("arguments[0].scrollIntoView({block: 'center'})", undo)
        undo.click()
        browser.find_element(By.CSS_SELECTOR, "#device-hall-smoke textarea").send_keys("no sound, \"=dead\"")
        browser.refresh()
        taps = {s.get_attribute("data-device").rsplit("/", 1)[1]: len(s.find_elements(By.CSS_SELECTOR, ".wr-taps li"))
                for s in browser.find_elements(By.CSS_SELECTOR, ".wr-device")}
        assert taps == {"bed-smoke": 1, "hall-smoke": 1, "kitchen-co": 1}
        assert browser.find_element(By.ID, "wr-by").get_attribute("value") == "R. Inspector"
        browser.find_element(By.ID, "wr-save").click()
        deadline = time.monotonic() + 20
        while not (saved := [p for p in downloads.glob("*.csv")]) and time.monotonic() < deadline:
            time.sleep(0.2)
        assert len(saved) == 1, list(downloads.iterdir())
        assert browser.execute_script("return window.__pwned === undefined")
    finally:
        browser.execute_cdp_cmd("Emulation.clearDeviceMetricsOverride", {})
    imported = run_cli("import", str(saved[0]), "-r", str(records))
    assert imported.returncode == 0, imported.stdout + imported.stderr
    events = {(e.device.rsplit("/", 1)[1], str(e.action), e.result and str(e.result), e.by, e.note)
              for e in load_records(records, date.today()).portfolio.events}
    assert events == {("bed-smoke", "test", "pass", "R. Inspector", ""),
                      ("hall-smoke", "test", "fail", "R. Inspector", 'no sound, "=dead"'),
                      ("kitchen-co", "battery", None, "R. Inspector", "")}
    status = json.loads(run_cli("status", "-r", str(records), "--format", "json").stdout)
    fixes = [i for i in status["items"] if i["task"] == "fix"]
    assert [(i["device"], i["state"]) for i in fixes] == [("test-house/main/hall-smoke", "overdue")]


# ---- device labels ----------------------------------------------------------------------------------

def decode_pdf(pdf, tmp_path):
    """Every QR code on every page of the PDF, read by zxing-cpp from a 300 dpi rendering."""
    import zxingcpp
    from PIL import Image

    subprocess.run(["pdftoppm", "-r", "300", "-png", str(pdf), str(tmp_path / "page")], check=True)
    pages = sorted(tmp_path.glob("page*.png"))
    return pages, [[code.text for code in zxingcpp.read_barcodes(Image.open(page))] for page in pages]


@pytest.mark.parametrize("paper,site_url", [("a4", "https://alarms.example.invalid/site/"), ("letter", None)])
def test_labels_carry_a_readable_qr_code_for_every_device(tmp_path, paper, site_url):
    import shutil

    if not shutil.which("pdftoppm"):
        pytest.skip("needs poppler-utils (pdftoppm)")
    out = tmp_path / "labels.pdf"
    args = ["labels", "-r", "records", "--property", "tansy-house", "--unit", "flat-1", "--paper", paper,
            "--as-of", DEMO_AS_OF.isoformat(), "--size", "70x50", "-o", str(out)]
    result = run_cli(*args, *(["--site-url", site_url] if site_url else []))
    assert result.returncode == 0, result.stderr
    loaded = load_records(DEMO_RECORDS, DEMO_AS_OF)
    unit = next(u for p in loaded.portfolio.properties if p.id == "tansy-house" for u in p.units if u.id == "flat-1")
    in_service = [d.id for d in unit.devices if not ((r := loaded.portfolio.retired_on(d.uid)) and r <= DEMO_AS_OF)]
    expected = sorted(f"{site_url}properties/tansy-house/flat-1.html#device-{d}" if site_url else d
                      for d in in_service)
    pages, codes = decode_pdf(out, tmp_path)
    assert sorted(text for page in codes for text in page) == expected
    # the page is the paper asked for (ISO 216 A4 210x297 mm; US Letter 8.5x11 in), at 300 dpi
    from PIL import Image

    width_mm = {"a4": 210, "letter": 215.9}[paper]
    assert abs(Image.open(pages[0]).size[0] / 300 * 25.4 - width_mm) < 1


def test_every_label_lies_inside_its_page(tmp_path):
    """Laid out by WeasyPrint itself: each label box within the page, for several sizes and both papers."""
    import weasyprint

    from recordkit.checks import evaluate
    from recordkit.render.checklist import property_sheets
    from recordkit.render.device_labels import grid
    from recordkit.render.site import unit_labels_html

    loaded = load_records(DEMO_RECORDS, DEMO_AS_OF)
    sheets = property_sheets(loaded, evaluate(loaded.portfolio, loaded.policy, DEMO_AS_OF), "tansy-house", DEMO_AS_OF)
    devices = sum(len(s.rows) for s in sheets)
    for paper, size in (("a4", (64, 38)), ("letter", (100, 60)), ("a4", (194, 140))):
        layout = grid(paper, size)
        document = weasyprint.HTML(string=unit_labels_html(sheets, None, False, layout)).render()
        assert len(document.pages) == -(-devices // layout.per_page)  # ceil: no blank or missing page
        boxes = 0
        for page in document.pages:
            stack = [page._page_box]
            while stack:
                box = stack.pop()
                stack.extend(getattr(box, "children", []))
                if getattr(box, "element_tag", "") == "div" and "label" in (box.element.get("class") or "").split():
                    boxes += 1
                    assert box.position_x >= 0 and box.position_y >= 0
                    assert box.position_x + box.margin_width() <= page.width + 0.01
                    assert box.position_y + box.margin_height() <= page.height + 0.01
        assert boxes == devices


def test_label_sizes_that_do_not_fit_are_refused():
    result = run_cli("labels", "-r", "records", "--property", "tansy-house", "--size", "300x20", "-o", "/tmp/x.pdf")
    assert result.returncode == 2 and "--size" in result.stderr
    result = run_cli("labels", "-r", "records", "--property", "tansy-house", "--size", "big", "-o", "/tmp/x.pdf")
    assert result.returncode == 2 and "WIDTHxHEIGHT" in result.stderr
