"""The demo records load cleanly and show every state the tool knows."""
from recordkit import model as m
from recordkit.checks import evaluate
from recordkit.schedule import State

from .conftest import DEMO_AS_OF, DEMO_RECORDS, load_ok


def test_demo_records_cover_the_scenario():
    loaded = load_ok(DEMO_RECORDS, DEMO_AS_OF)
    portfolio = loaded.portfolio
    assert len(portfolio.properties) == 2
    assert 15 <= len(portfolio.devices) <= 30
    kinds = {located.device.kind for located in portfolio.devices.values()}
    assert kinds == set(m.Kind)  # every kind: smoke, co, smoke_co, heat, leak, listening_node
    assert any(loc.device.manufactured is None and loc.device.kind in m.ALARM_KINDS
               for loc in portfolio.devices.values())
    assert any(portfolio.retired_on(uid) for uid in portfolio.devices)
    assert any(e.result is m.Result.FAIL for e in portfolio.events)
    assert any(rule.local for rule in loaded.policy)
    findings = evaluate(portfolio, loaded.policy, DEMO_AS_OF)
    assert {f.state for f in findings} == set(State)
    assert {f.task for f in findings} == {"replace", "test", "battery", "fix", "coverage", "node"}
