"""Listening nodes: the `node` JSON contract, evidence matching, and the findings they raise."""
import json
from datetime import date

import pytest

from recordkit.checks import evaluate
from recordkit.loader import load_records

from .conftest import run_cli

AS_OF = date(2026, 12, 1)


def node_house(node_extra="", events="", listen="{device: s1, distance_m: 6, doors: 1}"):
    return ("property:\n  id: p\n  name: P\n  units:\n    - id: u\n      rooms:\n"
            "        - {id: bed, level: 1, use: bedroom}\n        - {id: hall, level: 1, use: hallway}\n"
            "      devices:\n"
            "        - {id: s1, kind: smoke, room: hall, power: sealed, manufactured: 2024-01, installed: 2024-02-01}\n"
            "        - {id: s2, kind: smoke, room: bed, power: sealed, manufactured: 2024-01, installed: 2024-02-01}\n"
            "        - id: n1\n          kind: listening_node\n          room: bed\n          power: mains\n"
            "          installed: 2025-01-01\n          threshold_dba: 50\n" + node_extra +
            f"          listens_to:\n            - {listen}\n" + ("events:\n" + events if events else ""))


def node_json(records, **kwargs):
    folder = records({"p.yaml": node_house(**kwargs)})
    result = run_cli("node", "p/u/n1", "-r", str(folder), "--as-of", AS_OF.isoformat(), "--format", "json")
    assert result.returncode == 0, result.stderr
    return json.loads(result.stdout), folder


def test_node_json_contract_with_a_worked_design(records):
    report, _ = node_json(records, node_extra=(
        "          filter_r_ohm: 1000\n          filter_c_farad: 0.1e-6\n"
        "          hold_r_ohm: 100000\n          hold_c_farad: 100e-6\n"))
    # RC worked example: 1 kOhm, 0.1 uF -> 1591.5 Hz; tone 3.3 kHz (common practice)
    assert report["corner_hz"] == pytest.approx(1591.5, abs=0.1) and report["tone_hz"] == 3300
    assert report["tone_attenuation_db"] == pytest.approx(0.91, abs=0.01)  # 10*log10(1+(1591.5/3300)^2)
    # tau = 100 kOhm * 100 uF = 10 s; e^(-1.5/10) = 0.8607, e^(-5/10) = 0.6065; release 10*ln 2 = 6.931 s
    assert report["tau_s"] == pytest.approx(10.0)
    assert report["temporal3"]["min_hold_fraction"] == pytest.approx(0.8607, abs=1e-4)
    assert report["temporal3"]["stays_on"] is True
    assert report["temporal4"]["min_hold_fraction"] == pytest.approx(0.6065, abs=1e-4)
    assert report["temporal4"]["stays_on"] is True
    assert report["temporal3"]["release_s"] == pytest.approx(6.931, abs=1e-3)
    (listened,) = report["listens_to"]
    # 85 dBA at 3 m (UL 217) - 20*log10(6/3) - one door (17 dB, from memory) = 61.98 dBA; trigger 50 dBA
    assert listened["expected_dba"] == pytest.approx(62.0, abs=0.05)
    assert listened["margin_db"] == pytest.approx(12.0, abs=0.05)
    assert listened["heard_tests"] == 0 and listened["missed_tests"] == 0


def test_low_margin_corner_above_tone_and_flicker_are_findings(records):
    folder = records({"p.yaml": node_house(
        listen="{device: s1, distance_m: 6, doors: 2}",  # 85 - 6.02 - 34 = 44.98 dBA, below the 50 dBA trigger
        node_extra="          corner_hz: 4000\n          hold_r_ohm: 1000000\n          hold_c_farad: 1e-6\n")})
    loaded = load_records(folder, AS_OF)
    assert loaded.problems == []
    reasons = [f.reason for f in evaluate(loaded.portfolio, loaded.policy, AS_OF) if f.task == "node"]
    # below the trigger level: it will not hear the alarm at all (not "only -5 dB over")
    assert any(r.startswith("will not hear s1") and "5.0 dB below its trigger level of 50 dBA" in r for r in reasons)
    assert any("corner (4000 Hz) is above the alarm tone (3300 Hz)" in r for r in reasons)
    # tau = 1 s: e^(-1.5) = 22 % left over the temporal-3 gap (ISO 8201): flickers
    assert any("decays to 22% over the 1.5 s gap of temporal3" in r for r in reasons)
    assert not any("temporal4" in r for r in reasons)  # it listens to no CO alarm


TESTS = ("  - {date: 2026-10-05 19:00, device: p/u/s1, action: test, result: pass}\n"
         "  - {date: 2026-11-05 19:00, device: p/u/s1, action: test, result: pass}\n"
         "  - {date: 2025-11-05 19:00, device: p/u/s1, action: test, result: pass}\n"   # over 12 months ago
         "  - {date: 2024-12-05, device: p/u/s1, action: test, result: pass}\n"         # before the node
         "  - {date: 2026-09-05, device: p/u/s1, action: test, result: pass}\n")        # no time of day


def test_evidence_matches_reports_within_the_window(records):
    events = TESTS + ("  - {date: 2026-10-05 19:01:30, device: p/u/n1, action: heard}\n"   # 90 s: heard
                      "  - {date: 2026-11-05 19:05, device: p/u/n1, action: heard}\n"      # 5 min: too late
                      "  - {date: 2026-09-05 08:00, device: p/u/n1, action: heard}\n")     # same day, test untimed
    report, folder = node_json(records, events=events)
    (listened,) = report["listens_to"]
    # window 2 minutes (recordkit default); lookback 12 months (recordkit default)
    assert listened["heard_tests"] == 2 and listened["missed_tests"] == 1
    assert listened["missed_dates"] == ["2026-11-05"]
    assert report["hit_rate"] == pytest.approx(2 / 3, abs=1e-3)
    assert report["last_heard"] == "2026-11-05 19:05:00"
    loaded = load_records(folder, AS_OF)
    findings = [f for f in evaluate(loaded.portfolio, loaded.policy, AS_OF) if f.task == "node"]
    assert [f.reason for f in findings] == ["did not report the test of s1 on 2026-11-05"]
    assert findings[0].due == date(2026, 11, 5)


def test_a_report_counts_as_the_nodes_own_test(records):
    events = TESTS + "  - {date: 2026-11-05 19:00:20, device: p/u/n1, action: heard}\n"
    folder = records({"p.yaml": node_house(events=events)})
    loaded = load_records(folder, AS_OF)
    (test,) = [f for f in evaluate(loaded.portfolio, loaded.policy, AS_OF) if f.task == "test" and f.device == "p/u/n1"]
    assert test.due == date(2026, 12, 5)  # a month after the last report (monthly tests, USFA / NFPA tips)


def test_node_command_refuses_a_non_node(records):
    folder = records({"p.yaml": node_house()})
    result = run_cli("node", "p/u/s1", "-r", str(folder))
    assert result.returncode == 2 and "no listening node 'p/u/s1'" in result.stderr and "p/u/n1" in result.stderr


def test_circuit_values_only_on_nodes(records):
    text = node_house().replace("installed: 2024-02-01}\n        - {id: s2",
                                "installed: 2024-02-01, corner_hz: 3000}\n        - {id: s2", 1)
    folder = records({"p.yaml": text})
    messages = [p.message for p in load_records(folder, AS_OF).problems]
    assert messages == ["device 's1': only a listening_node has 'corner_hz'"]
