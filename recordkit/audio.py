"""Hearing an alarm test in a recording: tone, on/off pattern and level, with a verdict.

Reads WAV (16/24/32-bit integer or float, mono or stereo, any common rate) with
scipy; finds the dominant tone with an FFT peak and parabolic interpolation;
follows the tone's envelope to find the on/off pattern and compares it with
temporal-3 (ISO 8201; ANSI/ASA S3.41) and temporal-4 (UL 2034). Pure analysis:
no records are touched here.
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field
from pathlib import Path

from .wavread import AudioError, Recording, read_recording

__all__ = ["AudioError", "Hearing", "analyse", "hear_file", "read_wav"]

# 256 MB: about 20 minutes of 48 kHz 16-bit stereo, far more than a test needs. Read in blocks and kept
# decimated, so the memory used is about 200 MB for a 10-minute recording whatever its format.
MAX_BYTES = 256 * 1024 * 1024
LONG = 1 << 20   # samples: past this, spectra are averaged (Welch) and filters run in blocks
ACCEPTED = "WAV (RIFF) files: 16-, 24- or 32-bit integer PCM, or 32/64-bit float; mono or stereo"
ALARM_BAND_HZ = (2800.0, 3500.0)   # most smoke alarms (FPRF studies; common practice)
LOW_FREQUENCY_HZ = 520.0           # NFPA 72 §18.4.6.3 (from memory): 520 Hz ± 10 %
LOW_FREQUENCY_TOLERANCE = 0.10
TIMING_TOLERANCE = 0.10            # standards give pulse-timing tolerances of about ±10 % (from memory)
TIMING_FLOOR_S = 0.03              # envelope smoothing makes tighter than 30 ms meaningless
CLIP_LEVEL, CLIP_FRACTION = 0.999, 0.001
QUIET_DBFS, MIN_CONTRAST_DB = -55.0, 8.0


@dataclass(frozen=True)
class PatternSpec:
    name: str
    on_s: float
    off_s: float
    pulses: int
    pause_s: float
    source: str


TEMPORAL_3 = PatternSpec("temporal-3", 0.5, 0.5, 3, 1.5, "ISO 8201; ANSI/ASA S3.41")
TEMPORAL_4 = PatternSpec("temporal-4", 0.1, 0.1, 4, 5.0, "UL 2034; NFPA 72 (from memory)")


@dataclass
class Hearing:
    duration_s: float
    rate: int
    tone_hz: float | None
    tone_stability_hz: float | None
    band: str                      # "alarm band", "low-frequency alarm", "outside the alarm bands" or "none"
    pattern: str                   # "temporal-3", "temporal-4", "continuous" or "none"
    timing_errors_ms: dict[str, float]
    pulses: list[tuple[float, float]]   # (start s, end s) of each sound
    level_dbfs: float | None
    peak_dbfs: float | None
    contrast_db: float | None
    clipped: bool
    estimated_dba: float | None
    verdict: str
    alarm_heard: bool
    envelope: list[float] = field(default_factory=list)   # 0..1, about 50 points a second, for a chart

    def as_json(self) -> dict:
        def r(value, digits=1):
            return None if value is None else round(value, digits)
        return {"verdict": self.verdict, "alarm_heard": self.alarm_heard, "tone_hz": r(self.tone_hz),
                "tone_stability_hz": r(self.tone_stability_hz), "band": self.band, "pattern": self.pattern,
                "timing_errors_ms": {k: r(v) for k, v in self.timing_errors_ms.items()},
                "pulses": [[round(a, 3), round(b, 3)] for a, b in self.pulses],
                "level_dbfs": r(self.level_dbfs), "peak_dbfs": r(self.peak_dbfs), "contrast_db": r(self.contrast_db),
                "clipped": self.clipped, "estimated_dba": r(self.estimated_dba), "duration_s": r(self.duration_s, 3),
                "sample_rate": self.rate}


def read_wav(path: Path) -> Recording:
    """The recording, mono float32, decimated to 16-32 kHz in blocks (bounded memory). Raises AudioError
    with the accepted formats."""
    return read_recording(path, MAX_BYTES, ACCEPTED)


def dominant_tone(samples, rate: int, low: float = 200.0, high: float = 8000.0) -> float | None:
    """The strongest frequency between low and high Hz: Hann-windowed FFT peak, refined by fitting a
    parabola through the log magnitudes of the peak bin and its neighbours."""
    import numpy as np

    if len(samples) < 16 or not np.any(samples):
        return None
    freqs, spectrum = _spectrum(samples, rate)
    band = (freqs >= low) & (freqs <= min(high, rate / 2 - 1))
    if not band.any():
        return None
    index = int(np.flatnonzero(band)[np.argmax(spectrum[band])])
    if 0 < index < len(spectrum) - 1:
        a, b, c = np.log(spectrum[index - 1:index + 2] + 1e-300)
        offset = 0.5 * (a - c) / (a - 2 * b + c) if (a - 2 * b + c) != 0 else 0.0
    else:
        offset = 0.0
    return float(freqs[index] + offset * (freqs[1] - freqs[0]))


def _spectrum(samples, rate: float):
    """(frequencies, magnitudes): one Hann-windowed FFT, or for a long recording the average of
    overlapping 2^15-sample ones (Welch), so memory stays small; both peak at the tone."""
    import numpy as np
    from scipy import signal

    if len(samples) <= LONG:
        return np.fft.rfftfreq(len(samples), 1 / rate), np.abs(np.fft.rfft(samples * np.hanning(len(samples))))
    total, weight, freqs = 0.0, 0, None
    for start in range(0, len(samples) - (1 << 15) + 1, LONG):  # block by block: Welch's own segment
        block = samples[start:start + LONG]                       # array would hold the whole recording
        freqs, power = signal.welch(block, fs=rate, window="hann", nperseg=1 << 15)
        total, weight = total + power * len(block), weight + len(block)
    return freqs, np.sqrt(total / weight)


FRAME_S = 0.001   # envelope resolution
SMOOTH_S = 0.006  # envelope smoothing: several cycles of a 520 Hz tone


def _envelope(samples, rate: int, tone_hz: float):
    """The tone's loudness over time in 1 ms steps (dB), after a zero-phase band-pass around the tone."""
    import numpy as np
    from scipy import signal

    low, high = tone_hz * 0.8, min(tone_hz * 1.25, rate / 2 * 0.95)
    sos = signal.butter(4, [low, high], btype="bandpass", fs=rate, output="sos")
    width = max(1, int(rate * SMOOTH_S))
    step = max(1, int(rate * FRAME_S))
    margin = 1 << 14  # beyond the filters' reach: blocks joined this way match one pass over the whole
    pieces = []
    for start in range(0, len(samples), LONG):  # in blocks, so a long recording never doubles in memory
        lo, hi = max(0, start - margin), min(len(samples), start + LONG + margin)
        band = signal.sosfiltfilt(sos, samples[lo:hi])
        power = np.convolve(band ** 2, np.ones(width) / width, mode="same")
        first = start + (-start) % step  # keep the frames on the global 1 ms grid
        pieces.append(power[first - lo:min(start + LONG, len(samples)) - lo:step])
    power = np.concatenate(pieces)
    return 10 * np.log10(power + 1e-20), step / rate


def tonality_db(samples, rate: int, tone_hz: float) -> float:
    """How far the tone's spectral peak stands above the median of the spectrum: a tone stands far above
    (tens of dB); noise does not."""
    import numpy as np

    freqs, magnitude = _spectrum(samples, rate)
    spectrum = magnitude ** 2
    near = np.abs(freqs - tone_hz) <= max(5.0, 2 * (freqs[1] - freqs[0]))
    band = (freqs >= 200) & (freqs <= min(8000, rate / 2 - 1))
    return float(10 * np.log10(spectrum[near].max() / (np.median(spectrum[band]) + 1e-30)))


def _segments(on, frame_s: float) -> list[tuple[float, float]]:
    """(start, end) seconds of each run of 'on' frames, gaps shorter than 30 ms closed."""
    runs, start = [], None
    for i, value in enumerate(list(on) + [False]):
        if value and start is None:
            start = i
        elif not value and start is not None:
            runs.append([start * frame_s, i * frame_s])
            start = None
    merged: list[list[float]] = []
    for run in runs:
        if merged and run[0] - merged[-1][1] < 0.03:
            merged[-1][1] = run[1]
        else:
            merged.append(run)
    return [(a, b) for a, b in merged if b - a >= 0.04]


MIN_TONALITY_DB = 25.0


def _close(measured: float, nominal: float) -> bool:
    return abs(measured - nominal) <= max(TIMING_TOLERANCE * nominal, TIMING_FLOOR_S)


def match_pattern(pulses: list[tuple[float, float]], duration: float) -> tuple[str, dict[str, float]]:
    """Which pattern the sounds follow, and the mean timing errors (ms) against it."""
    if len(pulses) == 1 and pulses[0][1] - pulses[0][0] >= 0.9 * duration - 0.1:
        return "continuous", {}
    for spec in (TEMPORAL_3, TEMPORAL_4):
        ons = [b - a for a, b in pulses]
        gaps = [pulses[i + 1][0] - pulses[i][1] for i in range(len(pulses) - 1)]
        # the recording may cut a first or last pulse short: judge whole pulses only
        inner = ons[1:-1] if len(ons) > 2 else ons
        if len(pulses) < 2 or not all(_close(on, spec.on_s) for on in inner):
            continue
        short = [g for g in gaps if _close(g, spec.off_s)]
        long = [g for g in gaps if _close(g, spec.pause_s)]
        if len(short) + len(long) != len(gaps) or (not short and len(pulses) > 1):
            continue
        # between long pauses there must be exactly `pulses` sounds (partial groups only at the ends)
        runs, count = [], 1
        for g in gaps:
            if _close(g, spec.pause_s):
                runs.append(count)
                count = 1
            else:
                count += 1
        runs.append(count)
        inner_runs = runs[1:-1]
        if any(r != spec.pulses for r in inner_runs) or any(r > spec.pulses for r in runs):
            continue
        if not long and len(pulses) < spec.pulses:
            continue
        mean_ms = lambda values, nominal: 1000 * sum(abs(v - nominal) for v in values) / len(values)  # noqa: E731
        errors = {"on": mean_ms(inner, spec.on_s), "off": mean_ms(short, spec.off_s) if short else 0.0}
        if long:
            errors["pause"] = mean_ms(long, spec.pause_s)
        return spec.name, errors
    return "none", {}


def analyse(samples, rate: float, calibration_db: float | None = None, *, peak: float | None = None,
            clipped_fraction: float | None = None, source_rate: int | None = None) -> Hearing:
    """What a recording holds. `peak` and `clipped_fraction` come from the original samples when these
    were decimated (filtering changes peaks)."""
    import numpy as np

    duration = len(samples) / rate
    if peak is None:
        peak = float(np.max(np.abs(samples))) if len(samples) else 0.0
    if clipped_fraction is None:
        clipped_fraction = float(np.mean(np.abs(samples) >= CLIP_LEVEL)) if len(samples) else 0.0
    clipped = clipped_fraction > CLIP_FRACTION
    tone = dominant_tone(samples, rate)
    pulses: list[tuple[float, float]] = []
    level = contrast = stability = None
    envelope_points: list[float] = []
    pattern, errors = "none", {}
    if tone is not None:
        env_db, frame_s = _envelope(samples, rate, tone)
        floor, top = np.percentile(env_db, 10), np.percentile(env_db, 98)
        contrast = float(top - floor)
        # 10 dB under the sound's level, or halfway to the background when that is closer
        on = env_db > max((floor + top) / 2, top - 10)
        if contrast >= MIN_CONTRAST_DB:
            pulses = _segments(on, frame_s)
        if not pulses and contrast < MIN_CONTRAST_DB and top > QUIET_DBFS:
            pulses = [(0.0, duration)]  # a steady sound the whole time
        if pulses:
            pattern, errors = match_pattern(pulses, duration)
            on_samples = np.concatenate([samples[int(a * rate):int(b * rate)] for a, b in pulses])
            level = float(10 * np.log10(np.mean(np.square(on_samples, dtype=np.float64)) + 1e-20))
            tone = dominant_tone(on_samples, rate) or tone
            if tonality_db(on_samples, rate, tone) < MIN_TONALITY_DB:
                pattern, errors = "none", {}  # noise, speech or music: no steady tone to call an alarm
            frame = int(0.05 * rate)
            starts = range(0, len(on_samples) - frame, frame)
            starts = starts[::max(1, len(starts) // 400)]  # at most about 400 frames: enough for a spread
            tones = [dominant_tone(on_samples[i:i + frame], rate) for i in starts]
            tones = [t for t in tones if t]
            stability = float(np.std(tones)) if len(tones) > 1 else None
        step = max(1, int(0.02 / frame_s))
        scaled = np.clip((env_db - floor) / max(top - floor, 1e-9), 0, 1)
        envelope_points = [round(float(v), 3) for v in scaled[::step]]
    band = _band(tone) if pulses else "none"
    estimated = level + calibration_db if level is not None and calibration_db is not None else None
    quiet = level is None or level < QUIET_DBFS
    alarm = pattern in ("temporal-3", "temporal-4", "continuous") and band != "outside the alarm bands"
    if clipped or quiet:
        verdict, alarm = "too quiet or clipped", False
    elif alarm and pattern == "continuous":
        verdict = f"alarm heard: continuous tone at {_khz(tone)}"
    elif alarm:
        verdict = f"alarm heard: {pattern} at {_khz(tone)}"
    else:
        verdict = "not an alarm pattern"
    return Hearing(duration, int(source_rate or rate), tone, stability, band, pattern, errors, pulses, level,
                   20 * math.log10(peak) if peak > 0 else None, contrast, clipped, estimated, verdict, alarm,
                   envelope_points)


def _band(tone: float | None) -> str:
    if tone is None:
        return "none"
    if ALARM_BAND_HZ[0] * 0.95 <= tone <= ALARM_BAND_HZ[1] * 1.05:
        return "alarm band"
    if abs(tone - LOW_FREQUENCY_HZ) <= LOW_FREQUENCY_TOLERANCE * LOW_FREQUENCY_HZ:
        return "low-frequency alarm"
    return "outside the alarm bands"


def _khz(tone: float | None) -> str:
    return f"{tone / 1000:.1f} kHz" if tone and tone >= 1000 else f"{tone:.0f} Hz" if tone else "?"


def hear_file(path: Path, calibration_db: float | None = None) -> Hearing:
    recording = read_wav(path)
    return analyse(recording.samples, recording.rate, calibration_db, peak=recording.peak,
                   clipped_fraction=recording.clipped_fraction, source_rate=recording.source_rate)
