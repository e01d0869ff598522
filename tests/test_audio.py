"""Hearing alarm tests in recordings: synthetic signals from the standards' timing, a sox recording,
bad files, and logging with evidence."""
import json
import re
import shutil
import subprocess
import wave
from datetime import date

import numpy as np
import pytest

from recordkit.audio import analyse, read_wav

from .conftest import DEMO_RECORDS, run_cli

RATE = 44100
# ISO 8201 / ANSI S3.41: three 0.5 s sounds with 0.5 s gaps, then 1.5 s of silence (a 4 s cycle)
TEMPORAL_3 = [(0.5, True), (0.5, False), (0.5, True), (0.5, False), (0.5, True), (1.5, False)]
# UL 2034 / NFPA 72 (from memory): four 0.1 s sounds with 0.1 s gaps, then about 5 s of silence
TEMPORAL_4 = [(0.1, True), (0.1, False)] * 3 + [(0.1, True), (5.0, False)]


def signal(cycle, freq, seconds, square=False, snr_db=None, clip=False, seed=0):
    t = np.arange(int(seconds * RATE)) / RATE
    wave_ = np.sin(2 * np.pi * freq * t)
    tone = 0.25 * (np.sign(wave_) if square else wave_)  # headroom, as a phone's automatic gain leaves
    gate = np.zeros(len(t), bool)
    pos = 0.25
    while pos < seconds:
        for length, on in cycle:
            if on:
                gate[(t >= pos) & (t < pos + length)] = True
            pos += length
    x = tone * gate
    rng = np.random.default_rng(seed)
    if snr_db is not None:  # noise power relative to the tone's power
        x = x + rng.normal(0, np.sqrt(np.mean(tone ** 2) / 10 ** (snr_db / 10)), len(t))
    if clip:
        x = np.clip(4 * x, -1, 1)
    return x


@pytest.mark.parametrize("snr_db", [None, 20, 10, 3])
@pytest.mark.parametrize("cycle, name, freq, seconds", [
    (TEMPORAL_3, "temporal-3", 3100.0, 9),   # a smoke alarm at 3.1 kHz (FPRF study figure)
    (TEMPORAL_3, "temporal-3", 3300.0, 9),   # 3.3 kHz (common practice)
    (TEMPORAL_4, "temporal-4", 3000.0, 12),  # a CO alarm at 3.0 kHz (UL 2034 pattern)
])
def test_alarm_patterns_are_heard_with_tone_and_timing(cycle, name, freq, seconds, snr_db):
    h = analyse(signal(cycle, freq, seconds, snr_db=snr_db), RATE)
    assert h.verdict == f"alarm heard: {name} at {freq / 1000:.1f} kHz", h.as_json()
    assert h.tone_hz == pytest.approx(freq, rel=0.01)        # within 1 %
    assert all(error <= 20 for error in h.timing_errors_ms.values()), h.timing_errors_ms  # within 20 ms
    on = 0.5 if name == "temporal-3" else 0.1
    inner = [b - a for a, b in h.pulses[1:-1]]
    assert all(abs(d - on) <= 0.02 for d in inner), inner


def test_low_frequency_square_wave_is_recognised():
    # NFPA 72 §18.4.6.3 (from memory): 520 Hz square wave low-frequency alarm, sounding temporal-3
    h = analyse(signal(TEMPORAL_3, 520.0, 9, square=True, snr_db=20), RATE)
    assert h.band == "low-frequency alarm" and h.pattern == "temporal-3"
    assert h.tone_hz == pytest.approx(520, rel=0.01)
    assert re.fullmatch(r"alarm heard: temporal-3 at 5[12]\d Hz", h.verdict), h.verdict


@pytest.mark.parametrize("seed", [1, 2])
def test_white_noise_is_not_an_alarm(seed):
    h = analyse(np.random.default_rng(seed).normal(0, 0.1, RATE * 6), RATE)
    assert h.verdict == "not an alarm pattern" and not h.alarm_heard


def test_speech_like_noise_bursts_are_not_an_alarm():
    # syllable-length bursts of band-limited noise with irregular gaps: a voice, not a horn
    from scipy import signal as sg

    rng = np.random.default_rng(4)
    x = np.zeros(RATE * 6)
    pos = 0.2
    while pos < 5.5:
        length = rng.uniform(0.08, 0.35)
        burst = rng.normal(0, 0.2, int(length * RATE))
        x[int(pos * RATE):int(pos * RATE) + len(burst)] = burst
        pos += length + rng.uniform(0.05, 0.4)
    x = sg.sosfilt(sg.butter(4, [300, 3400], btype="bandpass", fs=RATE, output="sos"), x)
    h = analyse(x, RATE)
    assert h.verdict == "not an alarm pattern" and not h.alarm_heard


def test_clipped_and_quiet_recordings_are_said_so():
    assert analyse(signal(TEMPORAL_3, 3100.0, 9, clip=True), RATE).verdict == "too quiet or clipped"
    quiet = signal(TEMPORAL_3, 3100.0, 9) * 10 ** (-60 / 20)  # about -75 dBFS
    assert analyse(quiet, RATE).verdict == "too quiet or clipped"


def test_calibration_gives_an_estimated_level():
    h = analyse(signal(TEMPORAL_3, 3100.0, 9), RATE, calibration_db=100.0)
    # a 0.25-amplitude sine is -15.05 dBFS RMS (20*log10(0.25/sqrt(2))); +100 dB calibration = 84.95 dBA
    assert h.level_dbfs == pytest.approx(-15.05, abs=0.1)
    assert h.estimated_dba == pytest.approx(84.95, abs=0.1)


needs_sox = pytest.mark.skipif(not shutil.which("sox"), reason="needs Debian's sox (.ci/run installs it)")


def sox_temporal_3(folder, freq=3200, bits=16):
    parts = {"on": ["synth", "0.5", "sine", str(freq), "vol", "0.5"], "off": ["trim", "0.0", "0.5"],
             "pause": ["trim", "0.0", "1.5"]}
    for name, effect in parts.items():
        subprocess.run(["sox", "-n", "-r", "48000", "-b", "16", "-c", "1", str(folder / f"{name}.wav"), *effect],
                       check=True)
    order = ["on", "off", "on", "off", "on", "pause"] * 2
    out = folder / "test-button.wav"
    subprocess.run(["sox", *[str(folder / f"{n}.wav") for n in order], "-b", str(bits), str(out)], check=True)
    return out


@needs_sox
@pytest.mark.parametrize("bits", [16, 24])
def test_a_recording_written_by_sox_is_heard(tmp_path, bits):
    recording = sox_temporal_3(tmp_path, bits=bits)
    result = run_cli("hear", str(recording), "--format", "json")
    assert result.returncode == 0, result.stderr
    report = json.loads(result.stdout)
    # sox synthesised 3.2 kHz, gated to ISO 8201 temporal-3 timing
    assert report["verdict"] == "alarm heard: temporal-3 at 3.2 kHz"
    assert report["tone_hz"] == pytest.approx(3200, rel=0.01) and report["sample_rate"] == 48000
    assert all(v <= 20 for v in report["timing_errors_ms"].values())


def write_wav(path, frames: bytes, width=2, rate=44100, channels=1):
    with wave.open(str(path), "wb") as w:
        w.setnchannels(channels)
        w.setsampwidth(width)
        w.setframerate(rate)
        w.writeframes(frames)
    return path


def test_bad_files_get_clear_messages(tmp_path):
    good = write_wav(tmp_path / "good.wav", (np.sin(np.arange(RATE) / 7) * 3000).astype("<i2").tobytes())
    truncated = tmp_path / "truncated.wav"
    truncated.write_bytes(good.read_bytes()[:60])
    cases = {
        truncated: "truncated",
        tmp_path / "empty.wav": "empty",
        write_wav(tmp_path / "eight.wav", bytes(range(256)) * 200, width=1): "8-bit",
        tmp_path / "notes.mp3": "not a WAV file",
    }
    (tmp_path / "empty.wav").write_bytes(b"")
    (tmp_path / "notes.mp3").write_bytes(b"ID3\x03\x00" + b"\x00" * 100)
    for path, words in cases.items():
        result = run_cli("hear", str(path))
        assert result.returncode == 1 and "Traceback" not in result.stderr, result.stderr
        assert words in result.stderr or "shorter than" in result.stderr, (path.name, result.stderr)
        if words != "not a WAV file":
            continue
        assert "16-, 24- or 32-bit" in result.stderr  # names the formats accepted


def test_huge_file_is_refused(tmp_path, monkeypatch):
    monkeypatch.setattr("recordkit.audio.MAX_BYTES", 1000)
    from recordkit.audio import AudioError
    path = write_wav(tmp_path / "long.wav", b"\x00\x01" * 5000)
    with pytest.raises(AudioError, match="more than the 1,000 accepted"):
        read_wav(path)


@needs_sox
def test_hear_log_appends_a_test_with_evidence_and_the_unit_page_shows_it(tmp_path):
    records = tmp_path / "records"
    shutil.copytree(DEMO_RECORDS, records, ignore=shutil.ignore_patterns(".recordkit"))
    recording = sox_temporal_3(tmp_path)
    device = "tansy-house/flat-2/landing-smokeco"
    result = run_cli("hear", str(recording), "--device", device, "--log", "--records", str(records),
                     "--date", f"{date.today()} 09:30")
    assert result.returncode == 0, result.stderr
    log = (records / "log" / f"{date.today().year}.yaml").read_text()
    line = log.splitlines()[-1]
    assert f"device: {device}, action: test, result: pass" in line and "evidence: sha256:" in line
    digest = line.split("evidence: sha256:")[1].split("}")[0].strip()
    kept = records / "evidence" / f"{digest}.wav"
    assert kept.read_bytes() == recording.read_bytes()
    # a second, different recording with the same name does not replace the first
    other = tmp_path / "again"
    other.mkdir()
    second = sox_temporal_3(other, freq=3000)
    assert second.name == recording.name
    assert run_cli("hear", str(second), "--device", device, "--log", "--records", str(records),
                   "--date", f"{date.today()} 09:40").returncode == 0
    assert len(list((records / "evidence").glob("*.wav"))) == 2 and kept.exists()
    out = tmp_path / "site"
    built = run_cli("build", "-r", str(records), "--as-of", date.today().isoformat(), "--out", str(out))
    assert built.returncode == 0, built.stderr
    page = (out / "properties/tansy-house/flat-2.html").read_text()
    assert "Recorded evidence" in page and "temporal-3" in page and "rk-envelope" in page
