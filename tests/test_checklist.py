"""Printable checklists: PDF pages and text against `status --format json`, PNG render, print layout."""
import json
import shutil
import subprocess

import pytest

from .conftest import ARTIFACTS, DEMO_AS_OF, HOUSE, device_yaml, run_cli

AS_OF = DEMO_AS_OF.isoformat()
TASK_WORDS = {"replace": "Replace", "test": "Test", "battery": "Battery", "fix": "Fix", "node": "Hearing check"}

needs_poppler = pytest.mark.skipif(not shutil.which("pdftotext"), reason="needs poppler-utils (.ci/run installs it)")


def pdf_pages(path) -> int:
    info = subprocess.run(["pdfinfo", str(path)], capture_output=True, text=True, check=True).stdout
    return int(next(line.split()[-1] for line in info.splitlines() if line.startswith("Pages:")))


def pdf_text(path, page: int) -> str:
    text = subprocess.run(["pdftotext", "-raw", "-f", str(page), "-l", str(page), str(path), "-"],
                          capture_output=True, text=True, check=True).stdout
    return " ".join(text.split())


@pytest.fixture(scope="module")
def packet(tmp_path_factory):
    out = tmp_path_factory.mktemp("pdf") / "tansy-house.pdf"
    result = run_cli("checklist", "-r", "records", "--property", "tansy-house", "--as-of", AS_OF, "--out", str(out))
    assert result.returncode == 0, result.stderr
    return out


@needs_poppler
def test_packet_has_one_page_per_unit_with_every_device_and_overdue_item(packet):
    status = json.loads(run_cli("status", "-r", "records", "--as-of", AS_OF, "--format", "json").stdout)
    items = [i for i in status["items"] if i["device"].startswith("tansy-house/")]
    units = sorted({i["unit"].split("/")[1] for i in items}, key=["flat-g", "flat-1", "flat-2"].index)
    assert pdf_pages(packet) == len(units) == 3  # one unit per page, no cover
    for page, unit in enumerate(units, start=1):
        text = pdf_text(packet, page)
        assert f"tansy-house/{unit}" in text
        for item in (i for i in items if i["unit"] == f"tansy-house/{unit}"):
            if item["task"] == "coverage":  # listed under the table, in the record's own words
                assert "Coverage gaps to check" in text and item["reason"] in text, item["reason"]
                continue
            assert item["device"].split("/")[2] in text, (unit, item["device"])
            if item["state"] == "overdue":
                word = TASK_WORDS[item["task"]]
                if item["task"] == "node":
                    expected = f"{word}: {item['reason']}"
                else:
                    expected = f"{word} since {item['due']}" if item["due"] else f"{word} now"
                assert f"OVERDUE: {expected}" in text, (unit, expected)
        assert "authority having jurisdiction (AHJ) decide" in text
        assert "does not prove the sensor sees smoke" in text
        assert "Inspector name" in text and "Signature" in text


@needs_poppler
def test_first_page_renders_and_is_not_blank(packet):
    from PIL import Image

    ARTIFACTS.mkdir(exist_ok=True)
    subprocess.run(["pdftoppm", "-png", "-r", "60", "-f", "1", "-l", "1", "-singlefile", str(packet),
                    str(ARTIFACTS / "checklist-page-1")], check=True)
    image = Image.open(ARTIFACTS / "checklist-page-1.png").convert("L")
    dark = sum(image.histogram()[:128])  # pixels darker than mid-grey
    assert image.width > image.height  # landscape
    assert dark > 0.01 * image.width * image.height  # text and ruled lines, not a blank page


@needs_poppler
@pytest.mark.parametrize("sheet, extra", [("monthly", ["--unit", "home"]), ("blank", [])])
def test_monthly_card_and_blank_sheet_fit_one_page(tmp_path, sheet, extra):
    out = tmp_path / f"{sheet}.pdf"
    args = ["checklist", "-r", "records", "--property", "bramble-cottage", *extra, "--sheet", sheet, "--paper", "letter"]
    result = run_cli(*args, "--as-of", AS_OF, "--out", str(out))
    assert result.returncode == 0, result.stderr
    assert pdf_pages(out) == 1
    text = pdf_text(out, 1)
    if sheet == "monthly":
        assert "Dec 2026" in text and "Nov 2027" in text  # twelve months from the as-of month
        for device in ("hall-smoke", "living-co", "utility-leak", "hall-node"):
            assert device in text
    else:
        for field in ("manufactured", "installed", "outside_sleeping", "fuel_burning", "listening_node", "serves",
                      "appliances", "gas_cooker", "habitable"):
            assert field in text  # the record file's own names, to type straight in


def test_checklist_usage_errors():
    assert run_cli("checklist", "-r", "records", "--out", "x.pdf").returncode == 2  # no --property
    bad = run_cli("checklist", "-r", "records", "--property", "nowhere", "--as-of", AS_OF, "--out", "x.html")
    assert bad.returncode == 2 and "no property 'nowhere'" in bad.stderr
    assert run_cli("checklist", "-r", "records", "--property", "tansy-house", "--out", "x.txt").returncode == 2


def twelve_device_unit(records):
    # smoke alarms in the bedroom and hall, heat alarms in the kitchen: no coverage gap to list
    devices = "".join(device_yaml(id=f"alarm-{i:02d}", kind="heat" if i % 3 == 2 else "smoke",
                                  room=["bed-1", "hall", "kitchen"][i % 3],
                                  power="battery", manufactured="unknown" if i % 4 == 0 else "2019-05",
                                  installed="2019-06-01",
                                  location=json.dumps(f"ceiling position {i}, a longer note that wraps onto a second line"))
                      for i in range(12))
    return records({"h.yaml": HOUSE + devices})


@pytest.mark.parametrize("paper_cm", [(29.7, 21.0), (27.94, 21.59)], ids=["a4", "letter"])
def test_twelve_device_sheet_prints_on_one_page_in_chromium(browser, records, tmp_path, paper_cm):
    import base64

    from selenium.webdriver.common.print_page_options import PrintOptions

    folder = twelve_device_unit(records)
    sheet = tmp_path / "sheet.html"
    result = run_cli("checklist", "-r", str(folder), "--property", "test-house", "--unit", "main", "--as-of", AS_OF,
                     "--out", str(sheet))
    assert result.returncode == 0, result.stderr
    browser.get(sheet.as_uri())
    assert len(browser.find_elements("css selector", "tbody tr")) == 12
    options = PrintOptions()
    options.orientation = "landscape"
    options.page_width, options.page_height = min(paper_cm), max(paper_cm)  # portrait sizes, turned
    pdf = tmp_path / "print.pdf"
    pdf.write_bytes(base64.b64decode(browser.print_page(options)))
    if shutil.which("pdfinfo"):
        assert pdf_pages(pdf) == 1  # nothing spills onto a second page
    else:
        assert pdf.read_bytes().count(b"/Type /Page\n") in (0, 1)
    ARTIFACTS.mkdir(exist_ok=True)
    shutil.copy(pdf, ARTIFACTS / f"checklist-12-devices-{'a4' if paper_cm[0] == 29.7 else 'letter'}.pdf")
