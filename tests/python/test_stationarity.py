"""Stationarity and ergodicity through the command line, on WAV and CSV files written here.

Outside truth:
  - segment statistics, inversion and runs counts and stretch autocorrelations recomputed with
    numpy from the decoded samples (scipy.io.wavfile / the CSV text), segmentation by the rule
    written independently in tests/reference/generate.py;
  - acceptance bounds from the exact null distributions in Python's exact integers
    (tests/reference/generate.py: Mahonian numbers; Wald & Wolfowitz's runs pmf);
  - the ensemble's F statistic from scipy.stats.f_oneway on numpy batch means.
The booleans at the JSON paths stationarity.{mean,mean_square,autocorrelation}.stationary and
ensemble.{mean,mean_square}.ergodic are checked on records built to pass or to fail. Records that
should pass use fixed seeds: under the null each test rejects with probability about alpha, so a
fixed seed makes the outcome reproducible rather than guaranteed by the method.
"""
import math
import sys
from pathlib import Path

import numpy as np
import pytest
from scipy import signal, stats
from scipy.io import wavfile

sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "reference"))
import generate as ref  # noqa: E402  (the reference generator's independent definitions)

FS = 8000
N = 1 << 16


def write_wav16(path, x, fs=FS):
    q = np.clip(np.round(x * 32768), -32768, 32767).astype(np.int16)
    wavfile.write(path, fs, q)
    return q / 32768.0


def write_csv(path, x, fs=FS):
    t = np.arange(len(x)) / fs
    with open(path, "w") as fh:
        fh.write("time_s,signal\n")
        for ti, v in zip(t, x):
            fh.write(f"{float(ti)!r},{float(v)!r}\n")
    return x


def exact_ra_bounds(n, alpha):
    counts = ref.mahonian_rows([n])[n]
    lower, upper, _ = ref.bounds_from_counts(counts, math.factorial(n), alpha)
    return lower, upper


def exact_runs_bounds(n1, n2, alpha):
    counts, total = ref.runs_counts(n1, n2)
    lower, upper, _ = ref.bounds_from_counts(counts, total, alpha)
    return lower, upper


def check_line(line, values, alpha):
    """A line's statistics and boolean against numpy and the exact bounds."""
    inversions = int(sum(np.sum(values[i] > values[i + 1:]) for i in range(len(values))))
    ra = line["reverse_arrangements"]
    assert ra["statistic"] == inversions
    assert ra["values"] == len(values)
    lower, upper = exact_ra_bounds(len(values), alpha)
    assert (ra["lower"], ra["upper"]) == (lower, upper)
    ra_ok = (lower is None or inversions > lower) and inversions <= upper
    assert ra["accepted"] == ra_ok
    runs, above, below, median = ref.runs_about_median(values)
    r = line["runs"]
    assert (r["statistic"], r["above"], r["below"]) == (runs, above, below)
    assert r["median"] == pytest.approx(median, rel=1e-12, abs=1e-15)
    lower, upper = exact_runs_bounds(above, below, alpha)
    assert (r["lower"], r["upper"]) == (lower, upper)
    runs_ok = (lower is None or runs > lower) and runs <= upper
    assert r["accepted"] == runs_ok
    assert line["stationary"] == (ra_ok and runs_ok)


def check_stationarity(rep, x, alpha=0.05, segments=20, lags=32, stretches=4):
    st = rep["stationarity"]
    assert st["alpha"] == alpha
    b, count = ref.segmentation(len(x), segments, lags)
    seg = st["segments"]
    assert (seg["segment_len"], seg["count"], seg["unused_samples"]) == (b, count, len(x) - count * b)
    blocks = x[: count * b].reshape(count, b)
    means, squares = blocks.mean(axis=1), (blocks ** 2).mean(axis=1)
    np.testing.assert_allclose(seg["mean"], means, rtol=1e-10, atol=1e-14)
    np.testing.assert_allclose(seg["mean_square"], squares, rtol=1e-10)
    np.testing.assert_allclose(seg["variance"], blocks.var(axis=1), rtol=1e-9)
    # The JSON's numbers decide the tests; numpy's agree to rounding, so the counts match
    # unless two segment values tie to 1e-10 (they do not for these records).
    check_line(st["mean"], np.array(seg["mean"]), alpha)
    check_line(st["mean_square"], np.array(seg["mean_square"]), alpha)
    comparison = st["autocorrelation"]["comparison"]
    coefficients = np.array(comparison["coefficient_by_stretch"]).reshape(stretches, lags + 1)
    for j in range(stretches):
        first, end = j * count // stretches, (j + 1) * count // stretches
        a, e = first * b, end * b
        mu = x[a:e].mean()
        c = [np.sum((x[max(a, k) - k:e - k] - mu) * (x[max(a, k):e] - mu)) / (e - a) for k in range(lags + 1)]
        np.testing.assert_allclose(coefficients[j], np.array(c) / c[0], rtol=0, atol=1e-10)
    ac = st["autocorrelation"]
    assert ac["stationary"] == (comparison["largest_deviation"] <= comparison["threshold"])
    # Bonferroni threshold over stretches × lags: scipy.stats.norm.ppf(1 - alpha / (2 J K)).
    assert comparison["threshold"] == pytest.approx(stats.norm.ppf(1 - alpha / (2 * stretches * lags)), rel=1e-9)
    return st


def test_stationary_wav_passes_with_numpy_statistics(tmp_path, noisesonde):
    rng = np.random.default_rng(20261202)
    path = tmp_path / "white.wav"
    x = write_wav16(path, 0.1 * rng.standard_normal(N))
    st = check_stationarity(noisesonde(path, "--json", "-", "--quiet").report(), x)
    assert st["mean"]["stationary"] and st["mean_square"]["stationary"]
    assert st["autocorrelation"]["stationary"]
    assert st["verdict"].startswith("stationary in mean, mean square and autocorrelation")
    assert "one record" in st["ergodicity"]
    spectrogram = st["spectrogram"]
    rows = len(spectrogram["frequency_hz"])
    assert len(spectrogram["density"]) == rows * len(spectrogram["start_s"])
    # The spectrogram's interior rows average to the level of white noise of variance σ²,
    # one-sided density 2σ²/fs (the shared reference notes, §8, with φ = 0); the first row holds
    # the detrended DC bin and the last the undoubled Nyquist bin, so both are left out.
    density = np.array(spectrogram["density"]).reshape(-1, rows)
    level = 2 * np.var(x) / FS
    assert density[:, 1:-1].mean() == pytest.approx(level, rel=0.02)


def test_drift_in_mean_fails_the_mean_line(tmp_path, noisesonde):
    rng = np.random.default_rng(2)
    path = tmp_path / "drift.wav"
    x = write_wav16(path, 0.1 * rng.standard_normal(N) + np.linspace(0.0, 0.02, N))
    run = noisesonde(path, "--json", "-")
    st = check_stationarity(run.report(), x)
    assert st["mean"]["stationary"] is False
    assert st["mean"]["reverse_arrangements"]["accepted"] is False
    assert "rise" in st["mean"]["finding"]
    assert st["verdict"].startswith("not stationary in mean")
    # The text summary (on standard error with --json -) gives the verdict and what to try.
    assert "Stationarity: not stationary in mean" in run.stderr
    assert "try:" in run.stderr


def test_variance_ramp_in_csv_fails_the_mean_square_line(tmp_path, noisesonde):
    rng = np.random.default_rng(3)
    path = tmp_path / "ramp.csv"
    x = write_csv(path, rng.standard_normal(N) * np.linspace(1.0, 1.5, N))
    rep = noisesonde(path, "--json", "-", "--quiet").report()
    assert rep["source"]["format"].lower().startswith("csv")
    st = check_stationarity(rep, x)
    assert st["mean_square"]["stationary"] is False


def test_switched_spectrum_fails_the_autocorrelation_line(tmp_path, noisesonde):
    # AR(1) with φ = 0.2 in the first half and 0.8 in the second, each of unit variance
    # (innovations of variance 1 − φ²), made by scipy.signal.lfilter.
    rng = np.random.default_rng(4)
    half = N // 2
    parts = []
    for phi in (0.2, 0.8):
        e = rng.standard_normal(half) * math.sqrt(1 - phi ** 2)
        parts.append(signal.lfilter([1.0], [1.0, -phi], e))
    path = tmp_path / "switch.wav"
    x = 0.1 * np.concatenate(parts)
    wavfile.write(path, FS, x.astype(np.float64))
    st = check_stationarity(noisesonde(path, "--json", "-", "--quiet").report(), x)
    assert st["autocorrelation"]["stationary"] is False
    assert st["autocorrelation"]["comparison"]["at_lag_s"] > 0


def test_alpha_and_segment_options(tmp_path, noisesonde):
    rng = np.random.default_rng(5)
    path = tmp_path / "opts.wav"
    x = write_wav16(path, 0.2 * rng.standard_normal(N))
    rep = noisesonde(path, "--json", "-", "--quiet", "--alpha", "0.1", "--stationarity-segments", "10",
                     "--stationarity-lags", "8", "--stationarity-stretches", "3").report()
    check_stationarity(rep, x, alpha=0.1, segments=10, lags=8, stretches=3)
    bad = noisesonde(path, "--alpha", "0.7")
    assert bad.code == 2 and "significance 0.7" in bad.stderr
    bad = noisesonde(path, "--stationarity-segments", "5")
    assert bad.code == 2 and "5 stationarity segments" in bad.stderr


def segment_means(x, segments=20, lags=32):
    b, count = ref.segmentation(len(x), segments, lags)
    return x[: count * b].reshape(count, b).mean(axis=1)


def test_ensemble_of_random_constants_is_not_ergodic(tmp_path, noisesonde_command):
    rng = np.random.default_rng(6)
    paths, records = [], []
    for i, level in enumerate(rng.standard_normal(4) * 0.1):
        path = tmp_path / f"unit{i}.wav"
        records.append(write_wav16(path, level + 0.05 * rng.standard_normal(N)))
        paths.append(path)
    rep = noisesonde_command("ensemble", *paths, "--json", "-", "--quiet", "--alpha", "0.01").report()
    assert rep["schema"] == "noisesonde.ensemble/1" and rep["records"] == 4
    e = rep["ensemble"]
    assert e["mean"]["ergodic"] is False
    # scipy.stats.f_oneway on the records' segment means (numpy).
    f, p = stats.f_oneway(*[segment_means(x) for x in records])
    assert e["mean"]["anova"]["f_statistic"] == pytest.approx(f, rel=1e-9)
    np.testing.assert_allclose(e["mean"]["time_averages"], [segment_means(x).mean() for x in records], rtol=1e-10)
    # Each record alone looks stationary in its mean.
    assert all(r["mean"]["stationary"] for r in rep["each_record"])
    assert [s["name"] for s in rep["sources"]] == [p.name for p in paths]


def test_ensemble_of_independent_records_is_ergodic(tmp_path, noisesonde_command):
    rng = np.random.default_rng(7)
    paths, records = [], []
    for i in range(3):
        path = tmp_path / f"run{i}.csv"
        records.append(write_csv(path, rng.standard_normal(N // 4)))
        paths.append(path)
    rep = noisesonde_command("ensemble", *paths, "--json", "-", "--quiet", "--alpha", "0.01",
                             "--lags", "1,3").report()
    e = rep["ensemble"]
    assert e["mean"]["ergodic"] is True and e["mean_square"]["ergodic"] is True
    assert [lag["lag_len"] for lag in e["autocorrelation"]] == [1, 3]
    f, _ = stats.f_oneway(*[segment_means(x) for x in records])
    assert e["mean"]["anova"]["f_statistic"] == pytest.approx(f, rel=1e-9)


def test_ensemble_needs_two_records_and_equal_rates(tmp_path, noisesonde_command):
    rng = np.random.default_rng(8)
    a, b = tmp_path / "a.wav", tmp_path / "b.wav"
    write_wav16(a, 0.1 * rng.standard_normal(20000))
    write_wav16(b, 0.1 * rng.standard_normal(20000), fs=16000)
    one = noisesonde_command("ensemble", a)
    assert one.code == 2 and "cannot be tested from one record" in one.stderr
    mixed = noisesonde_command("ensemble", a, b)
    assert mixed.code == 2 and "16000 Hz" in mixed.stderr and "8000 Hz" in mixed.stderr
    assert "b.wav" in mixed.stderr


def test_ensemble_names_the_file_with_a_bad_sample(tmp_path, noisesonde_command):
    rng = np.random.default_rng(9)
    good, bad = tmp_path / "good.wav", tmp_path / "bad.wav"
    wavfile.write(good, FS, rng.standard_normal(20000))
    x = rng.standard_normal(20000)
    x[1234] = np.nan
    wavfile.write(bad, FS, x)
    run = noisesonde_command("ensemble", good, bad)
    assert run.code == 2 and "bad.wav" in run.stderr and "sample 1234" in run.stderr
    assert "panicked" not in run.stderr
