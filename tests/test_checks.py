"""Each check on small inline records, with expected dates worked from the reference facts."""
from datetime import date

from dateutil.relativedelta import relativedelta

from recordkit.schedule import State

from .conftest import HOUSE, device_yaml, findings_for, load_ok

AS_OF = date(2026, 12, 1)


def tasks(folder, as_of=AS_OF):
    return {(f.device.split("/")[-1], f.task): f for f in findings_for(folder, as_of)}


def house(records, *devices, events=""):
    text = HOUSE + "".join(devices_yaml for devices_yaml in devices)
    if events:
        text += "events:\n" + events
    return records({"house.yaml": text})


def test_smoke_alarm_replaced_ten_years_after_manufacture_not_install(records):
    folder = house(records, device_yaml(id="s1", kind="smoke", room="hall", power="sealed",
                                        manufactured="2017-03", installed="2018-06-02"))
    replace = tasks(folder)[("s1", "replace")]
    # NFPA 72 §14.4.7.1: 10 years from the manufacture date; a month reads as its 1st (shared reference)
    assert replace.due == date(2017, 3, 1) + relativedelta(years=10) == date(2027, 3, 1)
    assert replace.rule == "smoke_life" and "NFPA 72" in replace.source
    assert replace.state is State.DUE_SOON  # 90 days ahead, window 90 days (recordkit default)


def test_leap_day_manufacture(records):
    folder = house(records, device_yaml(id="s1", kind="smoke", room="hall", power="sealed",
                                        manufactured="2016-02-29", installed="2016-04-01"))
    # hand-worked: 2016-02-29 + 10 years -> 2026-02-28 (python-dateutil relativedelta behaviour)
    assert tasks(folder)[("s1", "replace")].due == date(2026, 2, 28)
    assert tasks(folder)[("s1", "replace")].state is State.OVERDUE


def test_unknown_manufacture_means_replace_now(records):
    folder = house(records, device_yaml(id="s1", kind="smoke", room="hall", power="sealed",
                                        manufactured="unknown", installed="2020-01-01"))
    replace = tasks(folder)[("s1", "replace")]
    # common practice: no readable manufacture date -> treat as past its life (shared reference)
    assert replace.due is None and replace.state is State.OVERDUE and replace.rule == "unknown_manufacture"


def test_co_default_and_maker_life(records):
    folder = house(records,
                   device_yaml(id="co1", kind="co", room="hall", power="sealed", manufactured="2020-05",
                               installed="2020-06-01"),
                   device_yaml(id="co2", kind="co", room="hall", power="sealed", manufactured="2020-05",
                               installed="2020-06-01", life_years=10))
    t = tasks(folder)
    # conservative default 7 years when the maker's life is unknown (shared reference)
    assert t[("co1", "replace")].due == date(2027, 5, 1) and t[("co1", "replace")].rule == "co_life"
    # the maker's stated life wins when recorded (NFPA 72 2019+ defers to the manufacturer)
    assert t[("co2", "replace")].due == date(2030, 5, 1) and t[("co2", "replace")].rule == "maker_life"


def test_combination_alarm_takes_the_earlier_life(records):
    folder = house(records,
                   device_yaml(id="c7", kind="smoke_co", room="hall", power="sealed", manufactured="2019-02",
                               installed="2019-03-01"),
                   device_yaml(id="c12", kind="smoke_co", room="hall", power="sealed", manufactured="2019-02",
                               installed="2019-03-01", life_years=12))
    t = tasks(folder)
    # the earlier of the CO element's life (7 y default) and 10 y from manufacture (shared reference)
    assert t[("c7", "replace")].due == date(2026, 2, 1) and t[("c7", "replace")].rule == "co_life"
    # CO element claimed 12 y, but the smoke sensor's 10 y comes first (NFPA 72 §14.4.7.1)
    assert t[("c12", "replace")].due == date(2029, 2, 1) and t[("c12", "replace")].rule == "smoke_life"


def test_heat_leak_and_listening_node_lives(records):
    folder = house(records,
                   device_yaml(id="h1", kind="heat", room="kitchen", power="sealed", manufactured="2018-07",
                               installed="2018-08-01"),
                   device_yaml(id="l1", kind="leak", room="kitchen", power="battery", installed="2024-01-01"),
                   device_yaml(id="l2", kind="leak", room="kitchen", power="battery", installed="2024-01-01",
                               manufactured="2023-06", life_years=5),
                   device_yaml(id="n1", kind="listening_node", room="hall", power="mains",
                               installed="2025-01-01", listens_to="[h1]"))
    t = tasks(folder)
    assert t[("h1", "replace")].due == date(2028, 7, 1)  # common practice: heat alarm 10 years
    assert ("l1", "replace") not in t and ("n1", "replace") not in t  # no life unless life_years given
    assert t[("l2", "replace")].due == date(2028, 6, 1)  # maker's 5 years
    assert ("l1", "test") in t and ("n1", "test") in t   # every kind is tested monthly


def test_test_due_from_last_test_or_install(records):
    folder = house(records,
                   device_yaml(id="s1", kind="smoke", room="hall", power="sealed", manufactured="2024-01",
                               installed="2024-02-01"),
                   device_yaml(id="s2", kind="smoke", room="bed-1", power="sealed", manufactured="2024-01",
                               installed="2026-10-31"),
                   events="  - {date: 2026-10-15, device: test-house/main/s1, action: test, result: pass}\n"
                          "  - {date: 2026-11-05, device: test-house/main/s1, action: test, result: pass}\n")
    t = tasks(folder)
    # US Fire Administration / NFPA tips: monthly. Hand-worked: 2026-11-05 + 1 month
    assert t[("s1", "test")].due == date(2026, 12, 5) and t[("s1", "test")].state is State.DUE_SOON
    # never tested: counts from installed; 2026-10-31 + 1 month = 2026-11-30 (month end), overdue on 12-01
    assert t[("s2", "test")].due == date(2026, 11, 30) and t[("s2", "test")].state is State.OVERDUE


def test_battery_only_for_replaceable_batteries(records):
    folder = house(records,
                   device_yaml(id="b", kind="smoke", room="hall", power="battery", manufactured="2024-01",
                               installed="2024-02-01"),
                   device_yaml(id="mb", kind="smoke", room="hall", power="mains_backup", manufactured="2024-01",
                               installed="2024-02-01"),
                   device_yaml(id="se", kind="smoke", room="hall", power="sealed", manufactured="2024-01",
                               installed="2024-02-01"),
                   device_yaml(id="ma", kind="smoke", room="hall", power="mains", manufactured="2024-01",
                               installed="2024-02-01"),
                   events="  - {date: 2026-03-10, device: test-house/main/b, action: battery}\n")
    t = tasks(folder)
    # NFPA / US CPSC: replaceable batteries at least yearly; none for sealed or mains-only
    assert t[("b", "battery")].due == date(2027, 3, 10)
    assert t[("mb", "battery")].due == date(2025, 2, 1) and t[("mb", "battery")].state is State.OVERDUE
    assert ("se", "battery") not in t and ("ma", "battery") not in t


def test_failed_test_needs_a_fix_until_a_later_pass(records):
    ev = ("  - {date: 2026-11-20, device: test-house/main/s1, action: test, result: fail, note: silent}\n")
    dev = device_yaml(id="s1", kind="smoke", room="hall", power="sealed", manufactured="2024-01",
                      installed="2024-02-01")
    fix = tasks(house(records, dev, events=ev))[("s1", "fix")]
    assert fix.state is State.OVERDUE and fix.due == date(2026, 11, 20) and "silent" in fix.reason
    # overdue at once, even on the day of the failure (common practice)
    assert tasks(records({"house.yaml": HOUSE + dev + "events:\n" + ev}), date(2026, 11, 20))[
        ("s1", "fix")].state is State.OVERDUE
    passed = ev + "  - {date: 2026-11-22, device: test-house/main/s1, action: test, result: pass}\n"
    assert ("s1", "fix") not in tasks(records({"house.yaml": HOUSE + dev + "events:\n" + passed}))


def test_replace_event_retires_the_device_and_keeps_history(records):
    ev = ("  - {date: 2026-11-20, device: test-house/main/old, action: test, result: fail}\n"
          "  - {date: 2026-11-21, device: test-house/main/old, action: replace}\n"
          "  - {date: 2026-11-21, device: test-house/main/new, action: test, result: pass}\n")
    folder = house(records,
                   device_yaml(id="old", kind="smoke", room="hall", power="battery", manufactured="2015-01",
                               installed="2015-02-01"),
                   device_yaml(id="new", kind="smoke", room="hall", power="sealed", manufactured="2026-09",
                               installed="2026-11-21"),
                   device_yaml(id="gone", kind="smoke", room="bed-1", power="sealed", manufactured="2015-01",
                               installed="2015-02-01", removed="2026-01-01"),
                   events=ev)
    t = tasks(folder)
    assert not any(device in ("old", "gone") for device, _ in t)  # retired: no tasks, not even the fix
    assert t[("new", "test")].due == date(2026, 12, 21)
    history = load_ok(folder, AS_OF).portfolio.events_for("test-house/main/old")
    assert [e.action for e in history] == ["test", "replace"]  # history of the retired device is kept


def test_removed_in_the_future_is_still_in_service(records):
    folder = house(records, device_yaml(id="s1", kind="smoke", room="hall", power="sealed",
                                        manufactured="2024-01", installed="2024-02-01", removed="2026-12-15"))
    assert ("s1", "test") in tasks(folder)
    assert ("s1", "test") not in tasks(folder, date(2026, 12, 15))  # retired on that day


def test_a_few_properties_alone_give_the_same_findings_as_the_whole_portfolio():
    # `log` prints what is next for the devices it logged from their properties alone: it must be what
    # the whole portfolio's evaluation says about them, listening nodes and coverage included.
    import tempfile
    from pathlib import Path

    from recordkit.checks import evaluate
    from recordkit.demo_portfolio import generate
    from recordkit.loader import load_records

    from .conftest import DEMO_AS_OF, REPO

    with tempfile.TemporaryDirectory() as work:
        generate(Path(work), 12, 2, as_of=DEMO_AS_OF)
        portfolios = [load_records(REPO / "records", DEMO_AS_OF), load_records(Path(work), DEMO_AS_OF)]
        for loaded in portfolios:
            whole = evaluate(loaded.portfolio, loaded.policy, DEMO_AS_OF)
            for prop in loaded.portfolio.properties:
                alone = evaluate(loaded.portfolio.only({prop.id}), loaded.policy, DEMO_AS_OF)
                mine = [f for f in whole if f.unit.split("/")[0] == prop.id]
                assert [f for f in alone if f.unit.split("/")[0] == prop.id] == mine
                assert mine  # every property has something due or a task on record
            ids = {p.id for p in loaded.portfolio.properties}
            assert all(f.unit.split("/")[0] in ids for f in whole)  # so the properties' findings are all of them


def test_findings_kept_per_property_are_the_findings_worked_out_afresh(tmp_path):
    import shutil

    from recordkit.checks import evaluate
    from recordkit.findings_cache import cached_evaluate
    from recordkit.loader import load_records

    from .conftest import DEMO_AS_OF, REPO

    records = tmp_path / "records"
    shutil.copytree(REPO / "records", records, ignore=shutil.ignore_patterns(".recordkit"))
    for step in range(3):  # cold, warm, and warm after one property's record changed
        loaded = load_records(records, DEMO_AS_OF)
        assert cached_evaluate(loaded, loaded.policy, DEMO_AS_OF) == evaluate(loaded.portfolio, loaded.policy,
                                                                                DEMO_AS_OF)
        path = records / "bramble-cottage.yaml"
        path.write_text(path.read_text().replace("manufactured: 2018-10", f"manufactured: 201{7 - step}-10", 1))
    changed = load_records(records, DEMO_AS_OF)
    later = date(2027, 6, 1)  # another as-of date: nothing kept may be reused
    assert cached_evaluate(changed, changed.policy, later) == evaluate(changed.portfolio, changed.policy, later)
