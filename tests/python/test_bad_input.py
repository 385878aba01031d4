"""Bad input through the command line: exit status 2 and a message naming the problem, never a
panic or a traceback. The expected phrases are the project's own messages (src/io, src/error.rs)."""
import struct

import numpy as np
import pytest
from scipy.io import wavfile


def assert_clear_failure(run, *phrases):
    assert run.code == 2, f"exit {run.code}, stderr: {run.stderr}"
    text = run.stderr.lower()
    assert "panicked" not in text and "backtrace" not in text, run.stderr
    for phrase in phrases:
        assert phrase.lower() in text, f"{phrase!r} not in: {run.stderr}"


def riff(fmt_fields, data=b"", declared=None):
    fmt = struct.pack("<HHIIHH", *fmt_fields)
    size = len(data) if declared is None else declared
    body = b"WAVEfmt " + struct.pack("<I", len(fmt)) + fmt + b"data" + struct.pack("<I", size) + data
    return b"RIFF" + struct.pack("<I", len(body)) + body


def test_empty_file(tmp_path, noisesonde):
    path = tmp_path / "empty.wav"
    path.write_bytes(b"")
    assert_clear_failure(noisesonde(path), "empty")


def test_zip_file_named_wav(tmp_path, noisesonde):
    path = tmp_path / "archive.wav"
    path.write_bytes(b"PK\x03\x04" + bytes(200))
    assert_clear_failure(noisesonde(path), "PK")


def test_zero_channels(tmp_path, noisesonde):
    path = tmp_path / "nochan.wav"
    path.write_bytes(riff((1, 0, 48000, 0, 0, 16), bytes(4000)))
    assert_clear_failure(noisesonde(path), "0 channels")


def test_zero_sample_rate(tmp_path, noisesonde):
    path = tmp_path / "norate.wav"
    path.write_bytes(riff((1, 1, 0, 0, 2, 16), bytes(40000)))
    assert_clear_failure(noisesonde(path), "0 Hz")


def test_truncated_header(tmp_path, noisesonde):
    path = tmp_path / "cut.wav"
    path.write_bytes(riff((1, 1, 48000, 96000, 2, 16), bytes(1000))[:30])
    run = noisesonde(path)
    assert_clear_failure(run)
    assert "cut.wav" in run.stderr


def test_data_chunk_longer_than_file_is_read_with_a_warning(tmp_path, noisesonde):
    fs = 8000
    x = (np.random.default_rng(0).standard_normal(20000) * 3000).astype(np.int16)
    path = tmp_path / "short.wav"
    path.write_bytes(riff((1, 1, fs, 2 * fs, 2, 16), x.tobytes(), declared=2 * 50000))
    run = noisesonde(path, "--json", "-", "--segment", "1024")
    assert run.code == 0, run.stderr
    rep = run.report()
    assert rep["samples"] == 20000
    text = " ".join(rep["warnings"]).lower()
    assert "50000" in text and "20000" in text, rep["warnings"]


def test_nan_in_float_wav_names_the_sample(tmp_path, noisesonde):
    x = np.zeros(10000, dtype=np.float32)
    x[4321] = np.nan
    path = tmp_path / "nan.wav"
    wavfile.write(path, 1000, x)
    assert_clear_failure(noisesonde(path), "sample 4321")


def test_text_in_numbers_names_the_line(tmp_path, noisesonde):
    path = tmp_path / "bad.csv"
    path.write_text("time,v\n0,1\n0.001,2\n0.002,three\n")
    assert_clear_failure(noisesonde(path), "line 4", "three")


def test_nan_in_csv_names_the_line(tmp_path, noisesonde):
    path = tmp_path / "nan.csv"
    path.write_text("v\n" + "".join(f"{i % 7}\n" for i in range(10)) + "nan\n")
    assert_clear_failure(noisesonde(path, "--sample-rate", "10"), "line 12")


def test_raw_without_sample_rate(tmp_path, noisesonde):
    path = tmp_path / "cap.bin"
    path.write_bytes(bytes(8000))
    assert_clear_failure(noisesonde(path, "--raw", "i16le"), "sample rate")


@pytest.mark.parametrize("rate", ["0", "-5", "nan"])
def test_raw_with_bad_sample_rate(tmp_path, noisesonde, rate):
    path = tmp_path / "cap.bin"
    path.write_bytes(bytes(8000))
    assert_clear_failure(noisesonde(path, "--raw", "i16le", f"--sample-rate={rate}"), "sample rate")


def test_channel_out_of_range(tmp_path, noisesonde):
    path = tmp_path / "stereo.wav"
    wavfile.write(path, 8000, np.zeros((10000, 2), dtype=np.int16))
    assert_clear_failure(noisesonde(path, "--channel", "5"), "has 2 channel")


def test_record_shorter_than_a_segment(tmp_path, noisesonde):
    path = tmp_path / "tiny.wav"
    wavfile.write(path, 8000, np.zeros(1000, dtype=np.int16))
    assert_clear_failure(noisesonde(path), "--segment 512")


def test_unknown_window_and_bad_overlap(tmp_path, noisesonde):
    path = tmp_path / "ok.wav"
    wavfile.write(path, 8000, np.zeros(10000, dtype=np.int16))
    assert_clear_failure(noisesonde(path, "--window", "triangle"), "triangle")
    assert_clear_failure(noisesonde(path, "--overlap", "1.5"), "overlap")


def test_missing_file(tmp_path, noisesonde):
    assert_clear_failure(noisesonde(tmp_path / "nowhere.wav"), "nowhere.wav")
