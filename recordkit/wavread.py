"""Reading a WAV recording in blocks with bounded memory: the header is parsed here (RIFF/RF64, PCM
16/24/32-bit or float 32/64, mono or stereo, WAVE_FORMAT_EXTENSIBLE), each block is turned into mono
float32, checked for NaN and infinity, and low-pass filtered and decimated to 16-32 kHz on the way (a
smoke alarm's tone is about 3 kHz, a low-frequency alarm's 520 Hz), so a 10-minute recording never sits
in memory at full rate. Every malformed file is an AudioError with what was wrong, never a traceback."""
from __future__ import annotations

import os
import struct
from dataclasses import dataclass
from pathlib import Path

from .safeio import open_regular

BLOCK_FRAMES = 1 << 18
TARGET_RATE = 16000          # decimate to at least this rate (8 kHz of band: every alarm tone and more)
PCM, FLOAT, EXTENSIBLE = 1, 3, 0xFFFE


class AudioError(Exception):
    """The recording cannot be used; the message says why and what is accepted."""


@dataclass(frozen=True)
class WavFormat:
    tag: int          # PCM or FLOAT
    channels: int
    rate: int
    bits: int
    data_offset: int
    data_bytes: int

    @property
    def frame_bytes(self) -> int:
        return self.channels * self.bits // 8


@dataclass
class Recording:
    rate: float            # after decimation
    samples: object        # numpy float32 mono, -1..1
    peak: float            # of the original samples
    clipped_fraction: float
    source_rate: int


def read_format(handle, path: Path, size: int, accepted: str) -> WavFormat:
    head = handle.read(12)
    if len(head) < 12 or head[:4] not in (b"RIFF", b"RF64") or head[8:12] != b"WAVE":
        raise AudioError(f"{path}: not a WAV file; accepted: {accepted} (convert other formats first)")
    fmt, rf64_data = None, None
    while True:
        chunk = handle.read(8)
        if len(chunk) < 8:
            raise AudioError(f"{path}: no audio data found (truncated?); accepted: {accepted}")
        name, length = chunk[:4], struct.unpack("<I", chunk[4:])[0]
        if name == b"ds64":
            body = handle.read(length)
            if len(body) >= 16:
                rf64_data = struct.unpack("<Q", body[8:16])[0]
        elif name == b"fmt ":
            body = handle.read(length)
            if len(body) < 16:
                raise AudioError(f"{path}: the format header is cut short; accepted: {accepted}")
            tag, channels, rate, _, block_align, bits = struct.unpack("<HHIIHH", body[:16])
            if tag == EXTENSIBLE and len(body) >= 26:
                tag = struct.unpack("<H", body[24:26])[0]
            fmt = (tag, channels, rate, block_align, bits)
        elif name == b"data":
            if fmt is None:
                raise AudioError(f"{path}: audio data before its format; accepted: {accepted}")
            offset = handle.tell()
            data_bytes = rf64_data if (head[:4] == b"RF64" and length == 0xFFFFFFFF and rf64_data) else length
            return _checked(WavFormat(fmt[0], fmt[1], fmt[2], fmt[4], offset, min(data_bytes, size - offset)),
                            fmt[3], path, accepted)
        else:
            handle.seek(length + (length & 1), 1)  # chunks are padded to an even length


def _checked(wav: WavFormat, block_align: int, path: Path, accepted: str) -> WavFormat:
    kinds = {(PCM, 16), (PCM, 24), (PCM, 32), (FLOAT, 32), (FLOAT, 64)}
    if wav.tag == PCM and wav.bits == 8:
        raise AudioError(f"{path}: 8-bit WAV is too coarse to measure; accepted: {accepted}")
    if (wav.tag, wav.bits) not in kinds:
        what = f"{wav.bits}-bit {'float' if wav.tag == FLOAT else 'integer' if wav.tag == PCM else f'format {wav.tag}'}"
        raise AudioError(f"{path}: {what} samples are not accepted; accepted: {accepted}")
    if not 1 <= wav.channels <= 2:
        raise AudioError(f"{path}: {wav.channels} channels; accepted: {accepted}")
    if not 8000 <= wav.rate <= 192000:
        raise AudioError(f"{path}: sample rate {wav.rate} Hz; accepted: 8 to 192 kHz")
    if block_align != wav.frame_bytes:
        raise AudioError(f"{path}: the header's frame size ({block_align}) does not fit its format; damaged?")
    return wav


def _mono_block(raw: bytes, wav: WavFormat):
    import numpy as np

    frames = len(raw) // wav.frame_bytes
    raw = raw[:frames * wav.frame_bytes]
    if wav.tag == FLOAT:
        values = np.frombuffer(raw, "<f4" if wav.bits == 32 else "<f8").astype(np.float32)
    elif wav.bits == 24:
        b = np.frombuffer(raw, np.uint8).reshape(-1, 3).astype(np.int32)
        ints = b[:, 0] | (b[:, 1] << 8) | (b[:, 2] << 16)
        values = (np.where(ints >= 1 << 23, ints - (1 << 24), ints) / float(1 << 23)).astype(np.float32)
    else:
        values = (np.frombuffer(raw, "<i2" if wav.bits == 16 else "<i4") / float(1 << (wav.bits - 1))).astype(np.float32)
    return values.reshape(-1, wav.channels).mean(axis=1, dtype=np.float32)


def read_recording(path: Path, limit: int, accepted: str) -> Recording:
    """The recording as mono float32 at 16-32 kHz, with the original's peak and clipping."""
    try:
        size = os.stat(path).st_size
        if size > limit:
            raise AudioError(f"{path}: {size:,} bytes is more than the {limit:,} accepted; trim the recording "
                             "to the test")
        fd, info = open_regular(path, limit)
    except OSError as exc:
        raise AudioError(f"{path}: cannot read ({getattr(exc, 'strerror', None) or exc})") from None
    if info.st_size == 0:
        os.close(fd)
        raise AudioError(f"{path}: the file is empty; accepted: {accepted}")
    try:
        with os.fdopen(fd, "rb") as handle:
            return _decimated(handle, path, info.st_size, accepted)
    except OSError as exc:
        raise AudioError(f"{path}: cannot read ({exc.strerror or exc})") from None


def _decimated(handle, path: Path, size: int, accepted: str) -> Recording:
    import numpy as np
    from scipy import signal

    wav = read_format(handle, path, size, accepted)
    handle.seek(wav.data_offset)
    step = max(1, wav.rate // TARGET_RATE)
    sos = signal.butter(8, 0.8 * wav.rate / step / 2, fs=wav.rate, output="sos") if step > 1 else None
    state, phase, peak, clipped, total = None, 0, 0.0, 0, 0
    pieces, left = [], wav.data_bytes
    while left > 0:
        raw = handle.read(min(left, BLOCK_FRAMES * wav.frame_bytes))
        if not raw:
            break  # the data chunk says more than the file holds: use what is there
        left -= len(raw)
        block = _mono_block(raw, wav)
        frames = len(block)
        if not np.isfinite(block).all():
            raise AudioError(f"{path}: holds NaN or infinite samples; not a usable recording")
        if len(block):
            peak = max(peak, float(np.abs(block).max()))
            clipped += int(np.count_nonzero(np.abs(block) >= 0.999))
            total += len(block)
        if sos is not None and len(block):
            if state is None:
                state = signal.sosfilt_zi(sos) * block[0]
            block, state = signal.sosfilt(sos, block, zi=state)
            block = block[phase::step].astype(np.float32)
            phase = (phase - frames) % step
        pieces.append(block)
    samples = np.concatenate(pieces) if pieces else np.zeros(0, np.float32)
    rate = wav.rate / step
    if total < wav.rate * 0.2:
        raise AudioError(f"{path}: shorter than 0.2 s (truncated?); record a few seconds of the alarm")
    return Recording(rate, samples, peak, clipped / total, wav.rate)
