"""Sound and circuit arithmetic for listening nodes. Pure functions; each constant names its source."""
from __future__ import annotations

import math
from dataclasses import dataclass

ALARM_DBA_AT_REFERENCE = 85.0  # UL 217; EN 14604: at least 85 dBA at 3 m
REFERENCE_DISTANCE_M = 3.0


def distance_loss_db(distance_m: float) -> float:
    """Free-field spreading from the 3 m reference: 20·log10(d / 3 m) (inverse-square law)."""
    return 20 * math.log10(distance_m / REFERENCE_DISTANCE_M)


def expected_level_dba(distance_m: float, doors: int, walls: int, door_loss_db: float, wall_loss_db: float) -> float:
    """The alarm's level at the node: 85 dBA at 3 m, less spreading and each closed door and wall."""
    return ALARM_DBA_AT_REFERENCE - distance_loss_db(distance_m) - doors * door_loss_db - walls * wall_loss_db


def rc_corner_hz(r_ohm: float, c_farad: float) -> float:
    """Corner frequency of a first-order RC filter: f = 1 / (2πRC)."""
    return 1 / (2 * math.pi * r_ohm * c_farad)


def highpass_loss_db(corner_hz: float, tone_hz: float) -> float:
    """How much a first-order high-pass weakens a tone, in dB (positive = weaker):
    |H| = 1 / sqrt(1 + (fc/f)²)  ->  loss = 10·log10(1 + (fc/f)²)."""
    return 10 * math.log10(1 + (corner_hz / tone_hz) ** 2)


@dataclass(frozen=True)
class Pattern:
    name: str
    on_s: float
    off_s: float
    pulses: int
    pause_s: float   # the longer silence after the last pulse (replaces its short off)
    source: str

    @property
    def longest_gap_s(self) -> float:
        return max(self.off_s, self.pause_s)

    @property
    def cycle_s(self) -> float:
        return self.pulses * self.on_s + (self.pulses - 1) * self.off_s + self.pause_s


TEMPORAL_3 = Pattern("temporal3", 0.5, 0.5, 3, 1.5, "ISO 8201; ANSI/ASA S3.41")
TEMPORAL_4 = Pattern("temporal4", 0.1, 0.1, 4, 5.0, "UL 2034; NFPA 72 - from memory")


def hold_fraction(gap_s: float, tau_s: float) -> float:
    """What is left of a charged hold (peak-detector) voltage after a silent gap: e^(−gap/τ)."""
    return math.exp(-gap_s / tau_s)


def release_time_s(tau_s: float, threshold: float) -> float:
    """How long the hold stays above the threshold after the sound stops: t = τ·ln(1/threshold)."""
    return tau_s * math.log(1 / threshold)
