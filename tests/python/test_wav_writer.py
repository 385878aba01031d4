"""The crate's WAV writer (src/io/wav_writer.rs, driven by examples/wav_write.rs) read back by
Python's standard-library `wave` module and by scipy.io.wavfile.

Expected values (computed here with numpy):
  - 24-bit PCM: np.clip(np.rint(x * 2**23), -2**23, 2**23 - 1) (np.rint rounds ties to even),
    and the number of samples np.clip changed is the clip count the writer reports;
  - 32-bit float: x.astype(np.float32), bit for bit.
The RIFF layout (fmt tag, cbSize, fact chunk, pad byte) is checked with a chunk walk written
here from the RIFF/WAVE specification (Microsoft 1991).
"""
import io
import struct
import wave

import numpy as np
import pytest
from scipy.io import wavfile

FULL_SCALE_24 = 2 ** 23


def make_samples(frames, channels, seed):
    """Noise beyond full scale (so some samples clip), with exact full-scale values and
    half-LSB ties at the start."""
    rng = np.random.default_rng(seed)
    x = 0.45 * rng.standard_normal(frames * channels)
    lsb = 1.0 / FULL_SCALE_24
    specials = [1.0, -1.0, 0.0, 0.5 * lsb, 1.5 * lsb, -2.5 * lsb, 1.0 - 0.5 * lsb, -1.0 - lsb, 3.0]
    x[: len(specials)] = specials
    return x


def chunks(data):
    """RIFF chunks of a WAVE file as {id: (offset of body, declared size)}, checking the RIFF size."""
    assert data[:4] == b"RIFF" and data[8:12] == b"WAVE"
    riff_size = struct.unpack("<I", data[4:8])[0]
    assert riff_size + 8 == len(data), "RIFF size must cover the whole file"
    assert len(data) % 2 == 0, "RIFF chunks are word aligned"
    found = {}
    pos = 12
    while pos + 8 <= len(data):
        cid = data[pos:pos + 4].decode("ascii")
        size = struct.unpack("<I", data[pos + 4:pos + 8])[0]
        found[cid] = (pos + 8, size)
        pos += 8 + size + (size & 1)
    assert pos == len(data)
    return found


@pytest.mark.parametrize("channels,frames", [(1, 4801), (2, 1000), (3, 777)])
def test_pcm24_matches_wave_and_scipy(write_wav, channels, frames):
    x = make_samples(frames, channels, seed=channels)
    code, data, err = write_wav(x, 48000, channels, "pcm24")
    assert code == 0, err
    expected = np.rint(x * FULL_SCALE_24)
    clipped = np.clip(expected, -FULL_SCALE_24, FULL_SCALE_24 - 1)
    assert f"frames={frames} clipped={int(np.count_nonzero(clipped != expected))}" in err
    assert np.count_nonzero(clipped != expected) >= 4

    with wave.open(io.BytesIO(data)) as w:
        assert (w.getnchannels(), w.getsampwidth(), w.getframerate(), w.getnframes()) == (channels, 3, 48000, frames)
        raw = w.readframes(frames)
    triples = np.frombuffer(raw, dtype=np.uint8).reshape(-1, 3).astype(np.int32)
    ints = triples[:, 0] | (triples[:, 1] << 8) | (triples[:, 2] << 16)
    ints = np.where(ints >= FULL_SCALE_24, ints - 2 * FULL_SCALE_24, ints)
    np.testing.assert_array_equal(ints, clipped.astype(np.int32))

    rate, read = wavfile.read(io.BytesIO(data))
    assert rate == 48000
    # scipy returns 24-bit samples left-justified in int32 (× 256).
    np.testing.assert_array_equal(read.reshape(-1) // 256, clipped.astype(np.int32))

    found = chunks(data)
    fmt_at, fmt_size = found["fmt "]
    assert fmt_size == 16
    tag, nch, sr, byte_rate, align, bits = struct.unpack("<HHIIHH", data[fmt_at:fmt_at + 16])
    assert (tag, nch, sr, byte_rate, align, bits) == (1, channels, 48000, 48000 * 3 * channels, 3 * channels, 24)
    assert found["data"][1] == frames * channels * 3
    assert "fact" not in found


@pytest.mark.parametrize("channels,frames", [(1, 3001), (2, 2048), (5, 99)])
def test_float32_is_exact_in_scipy_with_a_fact_chunk(write_wav, channels, frames):
    x = make_samples(frames, channels, seed=10 + channels) * 7.0  # floats keep values beyond ±1
    code, data, err = write_wav(x, 44100, channels, "float32")
    assert code == 0, err
    assert f"frames={frames} clipped=0" in err
    rate, read = wavfile.read(io.BytesIO(data))
    assert rate == 44100 and read.dtype == np.float32
    np.testing.assert_array_equal(read.reshape(-1), x.astype(np.float32))

    found = chunks(data)
    fmt_at, fmt_size = found["fmt "]
    assert fmt_size == 18
    tag, nch, sr, byte_rate, align, bits, cb_size = struct.unpack("<HHIIHHH", data[fmt_at:fmt_at + 18])
    assert (tag, nch, sr, byte_rate, align, bits, cb_size) == (3, channels, 44100, 44100 * 4 * channels, 4 * channels, 32, 0)
    fact_at, fact_size = found["fact"]
    assert fact_size == 4 and struct.unpack("<I", data[fact_at:fact_at + 4])[0] == frames
    assert list(found) == ["fmt ", "fact", "data"]


def test_ring_saves_the_last_frames(write_wav):
    channels, frames, keep = 2, 10_000, 2400
    x = make_samples(frames, channels, seed=3)
    code, data, err = write_wav(x, 48000, channels, "pcm24", ring_frames=keep)
    assert code == 0, err
    with wave.open(io.BytesIO(data)) as w:
        assert w.getnframes() == keep
    rate, read = wavfile.read(io.BytesIO(data))
    tail = x[(frames - keep) * channels:]
    expected = np.clip(np.rint(tail * FULL_SCALE_24), -FULL_SCALE_24, FULL_SCALE_24 - 1).astype(np.int32)
    np.testing.assert_array_equal(read.reshape(-1) // 256, expected)


def test_non_finite_sample_writes_nothing(write_wav):
    code, data, err = write_wav([0.1, 0.2, np.nan, 0.3], 8000, 1, "float32")
    assert code == 1
    assert data == b""
    assert "sample 2 is NaN" in err
