"""The command line against numpy/scipy on recordings of many encodings and settings.

Each file is written here (Python's `wave` module, scipy.io.wavfile, or struct for layouts
neither writes), the CLI's JSON report is compared with
  - scipy.signal.welch (same window, nperseg, noverlap = floor(overlap*nperseg), detrend,
    average, scaling) to 1e-9 relative,
  - numpy moments (mean, var, mean of squares, min, max),
  - numpy's zero-padded FFT autocorrelation,
on the samples as scipy.io.wavfile.read / numpy decode them (integers / 2**(bits-1);
8-bit: (v - 128) / 128).
"""
import math
import struct
import wave

import numpy as np
import pytest
from scipy import signal
from scipy.io import wavfile

REL = 1e-9  # the agreement with scipy.signal.welch
ABS_FRAC = 1e-12  # floor relative to the largest value, for bins that are zero up to rounding


def close(actual, expected, rel=REL, abs_frac=ABS_FRAC, what=""):
    actual = np.asarray(actual, dtype=float)
    expected = np.asarray(expected, dtype=float)
    assert actual.shape == expected.shape, f"{what}: shape {actual.shape} vs {expected.shape}"
    scale = np.max(np.abs(expected)) if expected.size else 0.0
    tol = rel * np.abs(expected) + abs_frac * scale
    bad = np.nonzero(np.abs(actual - expected) > tol)[0]
    assert bad.size == 0, f"{what}: first mismatch at {bad[0]}: {actual[bad[0]]!r} vs {expected[bad[0]]!r}"


def make_signal(n, fs, seed=1, channels=1):
    rng = np.random.default_rng(seed)
    t = np.arange(n) / fs
    base = 0.2 * rng.standard_normal((n, channels)) + 0.3 * np.sin(2 * np.pi * 997.0 * t)[:, None]
    base += 0.01 * np.arange(channels)[None, :]  # channels differ by their DC level
    return np.clip(base, -0.99, 0.99)


def periodic_window(name, n):
    if name == "flat-top":
        return signal.windows.general_cosine(n, [1.0, 1.9383379, 1.3045202, 0.4028270, 0.0350665], sym=False)
    if name.startswith("kaiser:"):
        return signal.get_window(("kaiser", float(name.split(":")[1])), n)
    return signal.get_window({"hann": "hann", "hamming": "hamming", "blackman-harris": "blackmanharris",
                              "rectangular": "boxcar"}[name], n)


def check_report(rep, x, fs, scale=1.0, window="hann", segment=4096, overlap=0.5, detrend="mean",
                 average="mean", max_lag=None):
    x = np.asarray(x, dtype=float) * scale
    assert rep["schema"] == "noisesonde.report/1"
    assert rep["samples"] == len(x)
    assert rep["sample_rate_hz"] == pytest.approx(fs, rel=1e-12)
    m = rep["moments"]
    close([m["mean"], m["variance"], m["mean_square"], m["min"], m["max"]],
          [x.mean(), x.var(), np.mean(x ** 2), x.min(), x.max()], rel=1e-10, abs_frac=1e-12, what="moments")
    noverlap = min(int(math.floor(overlap * segment + 1e-9)), segment - 1)
    det = {"none": False, "mean": "constant", "linear": "linear"}[detrend]
    w = periodic_window(window, segment)
    f, p = signal.welch(x, fs=fs, window=w, nperseg=segment, noverlap=noverlap, detrend=det, average=average)
    _, s = signal.welch(x, fs=fs, window=w, nperseg=segment, noverlap=noverlap, detrend=det, average=average,
                        scaling="spectrum")
    close(rep["psd"]["frequency_hz"], f, rel=1e-12, what="frequency")
    close(rep["psd"]["density"], p, what="density")
    close(rep["psd"]["power_spectrum"], s, what="power spectrum")
    assert rep["psd"]["enbw_hz"] == pytest.approx(segment * np.sum(w ** 2) / np.sum(w) ** 2 * fs / segment, rel=1e-12)
    lags = len(rep["acf"]["lag_s"]) - 1
    expected_lags = min(segment if max_lag is None else int(round(max_lag * fs)), len(x) - 1)
    assert lags == expected_lags
    size = 1 << int(math.ceil(math.log2(2 * len(x))))
    spec = np.fft.rfft(x - x.mean(), size)
    cov = np.fft.irfft(spec * np.conj(spec), size)[: lags + 1] / len(x)
    close(rep["acf"]["autocovariance"], cov, rel=0, abs_frac=1e-10, what="autocovariance")
    spec = np.fft.rfft(x, size)
    raw = np.fft.irfft(spec * np.conj(spec), size)[: lags + 1] / len(x)
    close(rep["acf"]["autocorrelation"], raw, rel=0, abs_frac=1e-10, what="autocorrelation")


def write_wav_manual(path, data_bytes, channels, fs, bits, fmt_tag, extensible=False, extra_chunks=b"",
                     declared_data=None):
    """A WAV file byte by byte (RIFF layout: Microsoft/IBM 1991 Multimedia Programming Interface
    and Data Specifications 1.0; WAVE_FORMAT_EXTENSIBLE per Microsoft's WAVEFORMATEXTENSIBLE)."""
    block = channels * bits // 8
    if extensible:
        sub = struct.pack("<H", fmt_tag) + b"\x00\x00\x00\x00\x10\x00\x80\x00\x00\xaa\x00\x38\x9b\x71"
        fmt = struct.pack("<HHIIHHHHI", 0xFFFE, channels, fs, fs * block, block, bits, 22, bits, 0) + sub
    else:
        fmt = struct.pack("<HHIIHH", fmt_tag, channels, fs, fs * block, block, bits)
    size = len(data_bytes) if declared_data is None else declared_data
    body = b"WAVE" + b"fmt " + struct.pack("<I", len(fmt)) + fmt + extra_chunks
    body += b"data" + struct.pack("<I", size) + data_bytes
    with open(path, "wb") as fh:
        fh.write(b"RIFF" + struct.pack("<I", len(body)) + body)


def ints(x, bits):
    full = 2 ** (bits - 1)
    return np.clip(np.round(x * full), -full, full - 1).astype(np.int64)


@pytest.mark.parametrize("bits", [16, 24, 32])
def test_integer_wav_matches_scipy(tmp_path, noisesonde, bits):
    fs = 48000
    x = make_signal(30000, fs)[:, 0]
    q = ints(x, bits)
    path = tmp_path / f"tone-{bits}bit.wav"
    if bits == 24:
        with wave.open(str(path), "wb") as w:
            w.setnchannels(1)
            w.setsampwidth(3)
            w.setframerate(fs)
            w.writeframes(b"".join(int(v).to_bytes(3, "little", signed=True) for v in q))
    else:
        wavfile.write(path, fs, q.astype({16: np.int16, 32: np.int32}[bits]))
    expected = q / 2.0 ** (bits - 1)
    check_report(noisesonde(path, "--json", "-", "--quiet").report(), expected, fs)


def test_8bit_unsigned_wav_is_offset_binary(tmp_path, noisesonde):
    fs = 8000
    x = make_signal(20000, fs)[:, 0]
    u = np.clip(np.round(x * 128) + 128, 0, 255).astype(np.uint8)
    path = tmp_path / "u8.wav"
    wavfile.write(path, fs, u)
    check_report(noisesonde(path, "--json", "-", "--segment", "1024").report(), (u.astype(float) - 128) / 128, fs,
                 segment=1024)


@pytest.mark.parametrize("dtype", [np.float32, np.float64])
def test_float_wav(tmp_path, noisesonde, dtype):
    fs = 44100
    x = make_signal(40000, fs, seed=3)[:, 0].astype(dtype)
    path = tmp_path / "float.wav"
    wavfile.write(path, fs, x)
    rep = noisesonde(path, "--json", "-", "--window", "blackman-harris", "--segment", "2048", "--overlap", "0.75",
                     "--scale", "2.5", "--unit", "Pa").report()
    assert rep["unit"] == "Pa" and rep["psd"]["unit"] == "Pa^2/Hz"
    check_report(rep, x.astype(float), fs, scale=2.5, window="blackman-harris", segment=2048, overlap=0.75)


def test_extensible_multichannel_with_chunks_before_data(tmp_path, noisesonde):
    fs = 96000
    x = make_signal(25000, fs, seed=5, channels=3)
    q = ints(x, 24)
    data = b"".join(int(v).to_bytes(3, "little", signed=True) for v in q.reshape(-1))
    odd_chunk = b"LIST" + struct.pack("<I", 5) + b"INFOx" + b"\x00"  # odd size, one pad byte
    fact = b"fact" + struct.pack("<I", 4) + struct.pack("<I", len(q))
    path = tmp_path / "ext.wav"
    write_wav_manual(path, data, 3, fs, 24, 1, extensible=True, extra_chunks=odd_chunk + fact)
    # The writer is checked by an outside reader: scipy.io.wavfile reads it back.
    rate, back = wavfile.read(path)
    assert rate == fs and back.shape == (len(q), 3)
    for channel in range(3):
        rep = noisesonde(path, "--json", "-", "--channel", channel, "--detrend", "linear",
                         "--window", "kaiser:8.6").report()
        assert rep["channel"] == channel
        check_report(rep, q[:, channel] / 2.0 ** 23, fs, detrend="linear", window="kaiser:8.6")


def test_median_averaging_and_odd_segment(tmp_path, noisesonde):
    fs = 1000
    x = make_signal(20000, fs, seed=9)[:, 0]
    path = tmp_path / "med.wav"
    wavfile.write(path, fs, x.astype(np.float64))
    rep = noisesonde(path, "--json", "-", "--segment", "999", "--overlap", "0.3", "--average", "median",
                     "--detrend", "none", "--window", "flat-top", "--max-lag-s", "0.25").report()
    check_report(rep, x, fs, segment=999, overlap=0.3, average="median", detrend="none", window="flat-top",
                 max_lag=0.25)


def test_csv_with_time_column(tmp_path, noisesonde):
    fs = 500.0
    x = make_signal(6000, fs, seed=11, channels=2)
    path = tmp_path / "log.csv"
    with open(path, "w") as fh:
        fh.write("# bench log\n")
        fh.write("time_s,ch_a,ch_b\n")
        for i, row in enumerate(x):
            fh.write(f"{i / fs:.6f},{float(row[0])!r},{float(row[1])!r}\n")
    rep = noisesonde(path, "--json", "-", "--column", "ch_b", "--segment", "512", "--unit", "g").report()
    assert rep["psd"]["unit"] == "g^2/Hz"
    check_report(rep, x[:, 1], fs, segment=512)


def test_tsv_without_header_needs_and_uses_a_sample_rate(tmp_path, noisesonde):
    x = make_signal(5000, 200.0, seed=12)[:, 0]
    path = tmp_path / "plain.tsv"
    path.write_text("".join(f"{float(v)!r}\t{float(-v)!r}\n" for v in x))
    missing = noisesonde(path, "--json", "-")
    assert missing.code == 2 and "sample rate" in missing.stderr.lower()
    rep = noisesonde(path, "--json", "-", "--sample-rate", "200", "--channel", "1", "--segment", "256").report()
    check_report(rep, -x, 200.0, segment=256)


@pytest.mark.parametrize("fmt,dtype,scale", [
    ("i16le", "<i2", 2.0 ** -15), ("i16be", ">i2", 2.0 ** -15), ("i32le", "<i4", 2.0 ** -31),
    ("i32be", ">i4", 2.0 ** -31), ("f32le", "<f4", 1.0), ("f32be", ">f4", 1.0), ("f64le", "<f8", 1.0),
    ("f64be", ">f8", 1.0),
])
def test_raw_formats(tmp_path, noisesonde, fmt, dtype, scale):
    fs = 10000
    x = make_signal(12000, fs, seed=13, channels=2)
    if dtype[1] == "i":
        data = ints(x, 8 * int(dtype[2])).astype(dtype)
    else:
        data = x.astype(dtype)
    path = tmp_path / f"capture.{fmt}"
    data.tofile(path)
    rep = noisesonde(path, "--json", "-", "--raw", fmt, "--channels", 2, "--channel", 1, "--sample-rate", fs,
                     "--segment", "1024").report()
    check_report(rep, data[:, 1].astype(float) * scale, fs, segment=1024)


def test_csv_export_has_units_header(tmp_path, noisesonde):
    fs = 8000
    x = make_signal(10000, fs)[:, 0]
    path = tmp_path / "a.wav"
    wavfile.write(path, fs, x.astype(np.float32))
    out = tmp_path / "out"
    run = noisesonde(path, "--csv", out, "--scale", "2", "--unit", "V", "--segment", "1024")
    assert run.code == 0, run.stderr
    psd = (out / "psd.csv").read_text().splitlines()
    header = [line for line in psd if not line.startswith("#")][0]
    assert header.startswith("frequency_hz,density_V^2/Hz,amplitude_density_V/sqrt(Hz),power_spectrum_V^2")
    assert any("enbw_hz=" in line for line in psd if line.startswith("#"))
    rows = np.loadtxt(out / "psd.csv", delimiter=",", comments="#", skiprows=3)
    _, p = signal.welch(x.astype(np.float32).astype(float) * 2, fs=fs, nperseg=1024)
    close(rows[:, 1], p, rel=1e-6, what="CSV density")  # printed with {:e}: shortest round-trip form
    acf = (out / "acf.csv").read_text()
    assert "lag_s,autocorrelation_V^2,autocovariance_V^2,coefficient" in acf
