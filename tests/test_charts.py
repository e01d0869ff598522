"""Charts: the numbers behind them, and SVG that reads without colour or script."""
import xml.etree.ElementTree as ET
from datetime import date
from hypothesis import given, strategies as st

from recordkit.checks import evaluate
from recordkit.render.charts import (forecast_svg, month_cells, replacement_forecast, monthly_grid_svg,
                                     yearly_costs)

from .conftest import DEMO_AS_OF, DEMO_RECORDS, load_ok

SVG = "{http://www.w3.org/2000/svg}"


def demo():
    loaded = load_ok(DEMO_RECORDS, DEMO_AS_OF)
    return loaded, evaluate(loaded.portfolio, loaded.policy, DEMO_AS_OF)


def test_forecast_counts_each_replacement_once_in_its_quarter():
    loaded, findings = demo()
    quarters = replacement_forecast(findings, loaded.portfolio, DEMO_AS_OF, {})
    assert len(quarters) == 20  # five years of quarters
    assert quarters[0].start == date(2026, 10, 1)
    replacements = [f for f in findings if f.task == "replace"]
    in_range = [f for f in replacements if (f.due or DEMO_AS_OF) < date(2031, 10, 1)]
    assert sum(q.count for q in quarters) == len(in_range)
    # already due or unknown (replace now) lands in the first bar
    now = [f for f in replacements if f.due is None or f.due < date(2027, 1, 1)]
    assert quarters[0].count == len(now)
    # hand-checked from the demo: bed-1-smoke at Bramble Cottage, made 2017-02 -> due 2027-02-01 (Q1 2027)
    assert quarters[1].label == "Q1 27" and quarters[1].count >= 1


def test_yearly_costs_use_the_unit_costs():
    loaded, findings = demo()
    quarters = replacement_forecast(findings, loaded.portfolio, DEMO_AS_OF, {"smoke": 20.0, "co": 30.0})
    by_year = {year: (n, cost) for year, n, cost in yearly_costs(quarters)}
    expected_2026 = sum({"smoke": 20.0, "co": 30.0}.get(str(loaded.portfolio.devices[f.device].device.kind), 0)
                        for f in findings if f.task == "replace" and (f.due is None or f.due < date(2027, 1, 1)))
    assert by_year[2026][1] == expected_2026


def test_forecast_svg_is_valid_and_labelled():
    loaded, findings = demo()
    root = ET.fromstring(forecast_svg(replacement_forecast(findings, loaded.portfolio, DEMO_AS_OF, {})))
    texts = [t.text for t in root.iter(f"{SVG}text")]
    assert "now" in texts and "Q1 27" in texts
    assert root.find(f"{SVG}title").text.startswith("Replacements due")
    assert not list(root.iter(f"{SVG}script"))


def test_month_cells_and_grid():
    loaded, _ = demo()
    portfolio = loaded.portfolio
    device = portfolio.devices["tansy-house/flat-1/bed-2-smoke"].device
    cells = dict(month_cells(portfolio, device, DEMO_AS_OF))
    assert cells[date(2026, 11, 1)] == "fail"   # the demo's failed test on 2026-11-20
    assert cells[date(2026, 10, 1)] == "pass"
    assert cells[date(2026, 12, 1)] == "none"   # the as-of month is not over yet
    flat_g = portfolio.devices["tansy-house/flat-g/hall-smoke"].device
    assert dict(month_cells(portfolio, flat_g, DEMO_AS_OF))[date(2026, 10, 1)] == "missed"  # last test Sept
    root = ET.fromstring(monthly_grid_svg([("bed-2-smoke", list(cells.items()))]))
    symbols = [t.text for t in root.iter(f"{SVG}text") if t.get("class") == "rk-symbol"]
    assert symbols.count("✗") == 1 and "✓" in symbols


@given(st.dates(min_value=date(1900, 1, 1), max_value=date(2200, 12, 1)), st.integers(-240, 240))
def test_month_after_agrees_with_dateutil(day, months):
    from dateutil.relativedelta import relativedelta
    from recordkit.render.charts import _month_after
    first = day.replace(day=1)
    assert _month_after(first, months) == first + relativedelta(months=months)  # python-dateutil as reference
