"""Sound and circuit arithmetic against handbook figures and hand-worked examples."""
import math

import pytest

from recordkit import acoustics as ac


def test_inverse_square_spreading():
    # inverse-square law (any acoustics handbook): -6.02 dB per doubling of distance
    assert ac.distance_loss_db(6.0) == pytest.approx(6.02, abs=0.005)
    assert ac.distance_loss_db(12.0) == pytest.approx(12.04, abs=0.01)
    assert ac.distance_loss_db(1.5) == pytest.approx(-6.02, abs=0.005)


def test_expected_level_from_the_listed_output():
    # UL 217 / EN 14604: 85 dBA at 3 m; door 17 dB and stud wall 33 dB (shared reference, from memory)
    assert ac.expected_level_dba(3.0, 0, 0, 17, 33) == pytest.approx(85.0)
    # hand-worked: 6 m away behind one door: 85 - 6.02 - 17 = 61.98 dBA
    assert ac.expected_level_dba(6.0, 1, 0, 17, 33) == pytest.approx(61.98, abs=0.01)
    assert ac.expected_level_dba(3.0, 0, 1, 17, 33) == pytest.approx(52.0)


def test_rc_corner_worked_example():
    # f = 1/(2*pi*R*C): R = 1 kOhm, C = 0.1 uF -> 1.59 kHz (worked by hand: 1/(2*pi*1e-4) = 1591.55 Hz)
    assert ac.rc_corner_hz(1_000, 0.1e-6) == pytest.approx(1591.55, abs=0.01)


def test_highpass_loss():
    # first-order high-pass |H| = 1/sqrt(1+(fc/f)^2): at f = fc the tone is 3.01 dB down (half power)
    assert ac.highpass_loss_db(3300, 3300) == pytest.approx(3.0103, abs=1e-4)
    # hand-worked: fc = 1.59 kHz, f = 3.3 kHz: (1591.55/3300)^2 = 0.2326 -> 10*log10(1.2326) = 0.908 dB
    assert ac.highpass_loss_db(1591.55, 3300) == pytest.approx(0.908, abs=0.001)
    # the same through the amplitude form: -20*log10(1/sqrt(1 + (fc/f)^2))
    assert ac.highpass_loss_db(1591.55, 3300) == pytest.approx(
        -20 * math.log10(1 / math.sqrt(1 + (1591.55 / 3300) ** 2)))
    # a 520 Hz low-frequency alarm (NFPA 72 §18.4.6.3, from memory) through the same filter loses about 10 dB
    assert ac.highpass_loss_db(1591.55, 520) == pytest.approx(10.2, abs=0.1)


def test_patterns_match_the_standards():
    # ISO 8201 / ANSI S3.41: 3 x (0.5 s on, 0.5 s off), then 1.5 s off: a 4.0 s cycle
    assert ac.TEMPORAL_3.cycle_s == pytest.approx(4.0)
    assert ac.TEMPORAL_3.longest_gap_s == 1.5
    # UL 2034 (from memory): 4 x (0.1 s on, 0.1 s off), then about 5 s off
    assert ac.TEMPORAL_4.longest_gap_s == 5.0
    assert ac.TEMPORAL_4.cycle_s == pytest.approx(4 * 0.1 + 3 * 0.1 + 5.0)


def test_hold_decay_against_math_exp():
    for tau in (0.5, 2.2, 10.0):
        assert ac.hold_fraction(1.5, tau) == pytest.approx(math.exp(-1.5 / tau))


def test_node_100k_100u_against_both_patterns_worked_by_hand():
    tau = 100e3 * 100e-6  # R = 100 kOhm, C = 100 uF -> tau = 10 s
    assert tau == pytest.approx(10.0)
    # temporal-3: after the 1.5 s gap e^(-0.15) = 0.8607 of the charge is left: above 50 %, stays on
    assert ac.hold_fraction(1.5, tau) == pytest.approx(0.8607, abs=1e-4)
    # temporal-4: after the 5 s gap e^(-0.5) = 0.6065 is left: still above 50 %, stays on
    assert ac.hold_fraction(5.0, tau) == pytest.approx(0.6065, abs=1e-4)
    # release after the alarm stops: t = tau * ln(1/0.5) = 10 * 0.6931 = 6.93 s
    assert ac.release_time_s(tau, 0.5) == pytest.approx(6.931, abs=1e-3)


def test_a_short_hold_flickers_on_temporal_3():
    # tau = 1 s: e^(-1.5) = 0.2231 left after the 1.5 s gap, below a 50 % threshold
    left = ac.hold_fraction(1.5, 1.0)
    assert left == pytest.approx(0.2231, abs=1e-4) and left < 0.5
