"""A 200-unit synthetic portfolio loads and builds; the overview stays short at that size.
(Timings live in bench/run.py, not here.)"""
import pytest

from recordkit.loader import load_records

from .conftest import DEMO_AS_OF, run_cli
from .sitecheck import broken_links, scan


@pytest.fixture(scope="module")
def portfolio(tmp_path_factory):
    folder = tmp_path_factory.mktemp("portfolio") / "records"
    result = run_cli("demo-portfolio", "--units", "200", "--years", "3", "--out", str(folder))
    assert result.returncode == 0, result.stderr
    return folder


def test_generated_portfolio_is_sound_and_the_same_for_the_same_seed(portfolio, tmp_path):
    loaded = load_records(portfolio, DEMO_AS_OF)
    assert loaded.problems == []
    assert sum(len(p.units) for p in loaded.portfolio.properties) == 200
    again = tmp_path / "again"
    run_cli("demo-portfolio", "--units", "200", "--years", "3", "--out", str(again))
    for path in portfolio.rglob("*.yaml"):
        assert (again / path.relative_to(portfolio)).read_bytes() == path.read_bytes()


def test_200_units_build_with_working_links_and_a_short_overview(portfolio, tmp_path):
    out = tmp_path / "site"
    result = run_cli("build", "-r", str(portfolio), "--as-of", DEMO_AS_OF.isoformat(), "--out", str(out))
    assert result.returncode == 0, result.stderr
    unit_pages = list((out / "properties").glob("*/*.html"))
    assert len(unit_pages) == 200
    assert broken_links(out) == []
    overview = scan(out / "index.html")
    rows = (out / "index.html").read_text().split('id="overdue"')[1].split("<h2")[0].count("<tr>") - 1
    assert 0 < rows <= 150  # grouped by property once there are more overdue tasks than that
    assert any(link.endswith("#overdue") for link in overview.links)
    # unit pages stay out of the navigation: a unit page is about the same size whatever the portfolio
    sizes = sorted(page.stat().st_size for page in unit_pages)
    assert sizes[-1] < 400_000
