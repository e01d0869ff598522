"""The built site in a real browser (headless Chromium), opened from disk as a user would."""
from selenium.webdriver.common.by import By

from .conftest import ARTIFACTS, DEMO_AS_OF, run_cli


def test_overview_to_unit_page_and_back(browser, tmp_path):
    out = tmp_path / "site"
    result = run_cli("build", "-r", "records", "--as-of", DEMO_AS_OF.isoformat(), "--out", str(out))
    assert result.returncode == 0, result.stderr
    overview = (out / "index.html").as_uri()
    browser.get(overview)
    assert "Overview" in browser.title
    assert "1 December 2026" in browser.find_element(By.CSS_SELECTOR, ".rk-asof").text

    # the overdue list: the table after the "Overdue" heading, one row per overdue task
    rows = browser.find_elements(By.XPATH, "//h2[@id='overdue']/following-sibling::table[1]//tbody/tr[not(@class)]")
    assert rows and all("OVERDUE" in row.text for row in rows)
    ARTIFACTS.mkdir(exist_ok=True)
    browser.save_screenshot(str(ARTIFACTS / "site-overview.png"))

    link = next(links[0] for row in rows if (links := row.find_elements(By.CSS_SELECTOR, "a[href*='#device-']")))
    device_id = link.text
    link.click()
    assert "/properties/" in browser.current_url and f"#device-{device_id}" in browser.current_url
    heading = browser.find_element(By.ID, f"device-{device_id}")
    assert device_id in heading.text and heading.is_displayed()
    assert "Retired devices" in browser.find_element(By.TAG_NAME, "article").text
    browser.save_screenshot(str(ARTIFACTS / "site-unit.png"))

    browser.back()
    assert browser.current_url == overview
    assert browser.find_element(By.ID, "overdue").is_displayed()
    # no script from the page failed to load (nothing fetched from outside, nothing missing)
    errors = [entry for entry in browser.get_log("browser") if entry["level"] == "SEVERE"]
    assert errors == [], errors


HOSTILE = {
    "name": "<script>window.__pwned = 'name'</script>",
    "location": "<img src=x onerror=\"window.__pwned = 'location'\">",
    "note": "[click](javascript:window.__pwned='note') {{ 7*7 }} <svg onload=\"window.__pwned='svg'\">",
}


def test_hostile_record_text_runs_no_script_in_the_browser(browser, tmp_path):
    import json

    from .conftest import HOUSE, device_yaml

    records = tmp_path / "records"
    records.mkdir()
    house = HOUSE.replace("name: Test House", f"name: {json.dumps(HOSTILE['name'])}")
    (records / "h.yaml").write_text(
        house + device_yaml(id="s1", kind="smoke", room="hall", power="battery", manufactured="2020-01",
                            installed="2020-02-01", location=json.dumps(HOSTILE["location"]))
        + "events:\n  - {date: 2026-11-01, device: test-house/main/s1, action: test, result: fail, "
        f"note: {json.dumps(HOSTILE['note'])}}}\n")
    out = tmp_path / "site"
    result = run_cli("build", "-r", str(records), "--as-of", DEMO_AS_OF.isoformat(), "--out", str(out))
    assert result.returncode == 0, result.stderr
    for page in ["index.html", "properties/test-house.html", "properties/test-house/main.html",
                 "checklists/test-house/main.html", "checklists/test-house.html",
                 "walkround/test-house/main.html", "labels/test-house/main.html"]:
        browser.get((out / page).as_uri())
        assert browser.execute_script("return window.__pwned === undefined"), page
        for link in browser.find_elements(By.TAG_NAME, "a"):
            href = (link.get_attribute("href") or "").lower()
            assert not href.startswith("javascript:"), (page, href)
    browser.get((out / "properties/test-house/main.html").as_uri())
    text = browser.find_element(By.TAG_NAME, "body").text
    assert HOSTILE["location"] in text and "{{ 7*7 }}" in text  # shown as the text it is
