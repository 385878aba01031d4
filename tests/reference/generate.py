#!/usr/bin/env python3
"""Reference vectors for noisesonde's estimator tests, computed with numpy and scipy.

Writes (into the folder given as the first argument, default: this script's folder):
  inputs/<name>.f64   input signals, little-endian float64
  vectors.json        scipy.signal.welch / numpy autocorrelation / scipy.stats.chi2 results;
                      the live spectrum's cases (welch over single segments and the last N);
                      stationarity: exact reverse-arrangement and runs bounds (Python's exact
                      integers and fractions), segment statistics and stretch autocorrelations
                      (numpy), spectrogram columns (scipy.signal.spectrogram), one-way analysis
                      of variance (scipy.stats.f_oneway, scipy.stats.f)

The inputs come from a 64-bit linear congruential generator in integer arithmetic (constants
of Knuth's MMIX LCG, from memory), so they do not depend on numpy's random streams; tones use
math.sin. `cargo xtask test` runs this script into a temporary folder and compares the result
with the committed copy, which proves the committed vectors are what the pinned scipy computes.

Pinned versions: see tests/requirements.txt (numpy, scipy).
"""
import json
import math
import os
import sys
from fractions import Fraction

import numpy as np
import scipy
from scipy import signal, stats

MMIX_A = 6364136223846793005  # Knuth, MMIX LCG multiplier (from memory)
MMIX_C = 1442695040888963407  # Knuth, MMIX LCG increment (from memory)
MASK = (1 << 64) - 1


def lcg_uniform(n, seed):
    """n samples uniform on [-1, 1): the top 53 bits of each LCG state."""
    state = seed & MASK
    out = np.empty(n)
    for i in range(n):
        state = (MMIX_A * state + MMIX_C) & MASK
        out[i] = (state >> 11) / float(1 << 53) * 2.0 - 1.0
    return out


def make_inputs():
    n = 20000
    fs = 1000.0
    t = np.arange(n) / fs
    white = lcg_uniform(n, 12345)
    # AR(1)-coloured noise with a DC offset, a ramp and two tones (one between bins).
    colored = np.empty(n)
    acc = 0.0
    for i, e in enumerate(lcg_uniform(n, 777)):
        acc = 0.9 * acc + e
        colored[i] = acc
    tones = np.array([0.5 * math.sin(2 * math.pi * 50.0 * ti) + 0.05 * math.sin(2 * math.pi * 123.4 * ti)
                      for ti in t])
    mixed = 3.0 + 1e-4 * np.arange(n) + colored + tones
    odd = lcg_uniform(7777, 99)
    return {
        "white": (white, fs),
        "mixed": (mixed, fs),
        "odd": (odd, 48000.0),
    }


def periodic_window(spec, n):
    """The window as scipy builds it (periodic / DFT-even)."""
    if spec == "flat-top":
        # HFT95, Heinzel, Ruediger & Schilling 2002, section C.
        return signal.windows.general_cosine(n, [1.0, 1.9383379, 1.3045202, 0.4028270, 0.0350665], sym=False)
    if spec.startswith("kaiser:"):
        return signal.get_window(("kaiser", float(spec.split(":")[1])), n)
    name = {"hann": "hann", "hamming": "hamming", "blackman-harris": "blackmanharris",
            "rectangular": "boxcar"}[spec]
    return signal.get_window(name, n)


WELCH_CASES = [
    # input, window, segment_len, overlap_frac, detrend, average
    ("white", "hann", 1024, 0.5, "mean", "mean"),
    ("white", "hamming", 1024, 0.5, "mean", "mean"),
    ("white", "blackman-harris", 512, 0.75, "mean", "mean"),
    ("white", "flat-top", 512, 0.5, "mean", "mean"),
    ("white", "rectangular", 1000, 0.0, "mean", "mean"),
    ("white", "kaiser:8.6", 2048, 0.5, "mean", "mean"),
    ("mixed", "hann", 1024, 0.5, "none", "mean"),
    ("mixed", "hann", 1024, 0.5, "linear", "mean"),
    ("mixed", "blackman-harris", 4096, 0.5, "mean", "mean"),
    ("mixed", "hann", 1024, 0.5, "mean", "median"),
    ("white", "hann", 2000, 0.5, "mean", "median"),
    ("odd", "hann", 1001, 0.3, "mean", "mean"),
    ("odd", "hamming", 777, 0.5, "linear", "median"),
]

LIVE_CASES = [
    # input, window, segment_len, overlap_frac, detrend, averaged segments N, segments pushed M,
    # exponential time constant (s)
    ("white", "hann", 1024, 0.5, "mean", 1, 8, 0.3),
    ("white", "hann", 1024, 0.5, "mean", 8, 20, 2.0),
    ("odd", "hamming", 777, 0.5, "linear", 3, 7, 0.01),
    ("mixed", "flat-top", 512, 0.75, "none", 5, 30, 0.2),
]

ACF_CASES = [("white", 300), ("mixed", 2500), ("odd", 7776)]


def welch_case(x, fs, window, seg, overlap, detrend, average):
    noverlap = min(int(math.floor(overlap * seg + 1e-9)), seg - 1)  # noisesonde's rule: floor
    w = periodic_window(window, seg)
    det = {"none": False, "mean": "constant", "linear": "linear"}[detrend]
    f, density = signal.welch(x, fs=fs, window=w, nperseg=seg, noverlap=noverlap, detrend=det,
                              average=average, scaling="density")
    _, spectrum = signal.welch(x, fs=fs, window=w, nperseg=seg, noverlap=noverlap, detrend=det,
                               average=average, scaling="spectrum")
    segments = (len(x) - noverlap) // (seg - noverlap)
    # Equivalent degrees of freedom, Percival & Walden 1993 eq. (292b), written independently here.
    step = seg - noverlap
    k = segments
    total = 0.0
    for m in range(1, k):
        shift = m * step
        if shift >= seg:
            break
        rho = np.dot(w[:seg - shift], w[shift:]) / np.dot(w, w)
        total += (1 - m / k) * rho ** 2
    return {
        "frequency_hz": f.tolist(),
        "density": density.tolist(),
        "power_spectrum": spectrum.tolist(),
        "overlap_len": noverlap,
        "segments": segments,
        "enbw_bins": float(seg * np.sum(w ** 2) / np.sum(w) ** 2),
        "dof": float(2 * k / (1 + 2 * total)),
    }


def live_case(x, fs, window, seg, overlap, detrend, n, m, tau):
    """The live spectrum after M whole segments: scipy.signal.welch over the samples of the last N
    segments (their mean), the per-bin maximum of every single segment's welch density, and the
    exponential recursion G <- G + a (P - G) over the single segments' densities, with
    a = 1 - exp(-step / (fs tau)) and the first segment as the start."""
    noverlap = min(int(math.floor(overlap * seg + 1e-9)), seg - 1)
    step = seg - noverlap
    w = periodic_window(window, seg)
    det = {"none": False, "mean": "constant", "linear": "linear"}[detrend]
    kwargs = dict(fs=fs, window=w, nperseg=seg, noverlap=noverlap, detrend=det, scaling="density")
    start = (m - n) * step
    stop = start + (n - 1) * step + seg
    _, last_n = signal.welch(x[start:stop], **kwargs)
    singles = [signal.welch(x[j * step: j * step + seg], **kwargs)[1] for j in range(m)]
    alpha = -math.expm1(-step / (fs * tau))
    ema = singles[0].copy()
    for p in singles[1:]:
        ema = ema + alpha * (p - ema)
    return {
        "pushed_samples": (m - 1) * step + seg,
        "last_n_first_sample": start,
        "last_n_density": last_n.tolist(),
        "peak_density": np.max(singles, axis=0).tolist(),
        "exponential_alpha": alpha,
        "exponential_density": ema.tolist(),
    }


def acf_case(x, max_lag):
    """Autocorrelation by zero-padded FFT (numpy), exact up to rounding."""
    n = len(x)
    size = 1 << int(math.ceil(math.log2(2 * n)))
    def lagged(v):
        spec = np.fft.rfft(v, size)
        return np.fft.irfft(spec * np.conj(spec), size)[: max_lag + 1]
    raw = lagged(x)
    cen = lagged(x - x.mean())
    pairs = n - np.arange(max_lag + 1)
    return {
        "biased_autocorrelation": (raw / n).tolist(),
        "biased_autocovariance": (cen / n).tolist(),
        "unbiased_autocorrelation": (raw / pairs).tolist(),
        "unbiased_autocovariance": (cen / pairs).tolist(),
        "mean": float(x.mean()),
        "variance": float(x.var()),
        "mean_square": float(np.mean(x ** 2)),
    }


def window_figures(n):
    out = {}
    for name in ["hann", "hamming", "blackman-harris", "flat-top", "rectangular", "kaiser:8.6", "kaiser:3.0"]:
        w = periodic_window(name, n)
        out[name] = {
            "coefficients_head": w[:16].tolist(),
            "coefficients_mid": w[n // 2 - 8: n // 2 + 8].tolist(),
            "enbw_bins": float(n * np.sum(w ** 2) / np.sum(w) ** 2),
            "coherent_gain": float(np.sum(w) / (n * np.max(w))),
        }
    return out


# ---------------------------------------------------------------- stationarity
# Written independently of the Rust code, from the definitions (Bendat & Piersol, Random Data,
# 4th ed. 2010, chapter 4; Wald & Wolfowitz 1940; Kendall 1938): exact integer/fraction
# arithmetic for the null distributions, numpy for the statistics.

RA_LENGTHS = list(range(10, 41)) + [45, 50, 60, 70, 80, 90, 100, 150, 200, 300, 399]
RUNS_PAIRS = [(n, n) for n in list(range(5, 41)) + [45, 50, 60, 70, 80, 90, 100, 150, 199]] + \
             [(3, 4), (5, 9), (7, 12), (10, 4), (15, 16), (19, 20), (30, 12)]
ALPHAS = [0.01, 0.02, 0.05, 0.1, 0.2]


def mahonian_rows(lengths):
    """Inversion counts of permutations: I_n(a) by I_n(a) = sum_{j<n} I_{n-1}(a-j) (exact ints)."""
    wanted = set(lengths)
    rows = {}
    c = [1]
    for m in range(2, max(lengths) + 1):
        new = [0] * (len(c) + m - 1)
        window = 0
        for a in range(len(new)):
            if a < len(c):
                window += c[a]
            if a - m >= 0:
                window -= c[a - m]
            new[a] = window
        c = new
        if m in wanted:
            rows[m] = c
    return rows


def bounds_from_counts(counts, total, alpha):
    """lower = largest a with P[A <= a] <= alpha/2 (None if none), upper = smallest a with
    P[A > a] <= alpha/2; and the exact probability of rejection."""
    tail = Fraction(alpha).limit_denominator(10 ** 6) / 2
    # count/total <= tail  <=>  count * tail.denominator <= total * tail.numerator (exact)
    limit = total * tail.numerator
    lower, cum = None, 0
    for a, v in enumerate(counts):
        cum += v
        if cum * tail.denominator <= limit:
            lower = a
        else:
            break
    above = total
    upper = None
    for a, v in enumerate(counts):
        above -= v
        if above * tail.denominator <= limit:
            upper = a
            break
    rejected = (sum(counts[: lower + 1]) if lower is not None else 0) + sum(counts[upper + 1:])
    return lower, upper, float(Fraction(rejected, total))


def runs_counts(n1, n2):
    """Numerators of the exact runs pmf over the common denominator C(n1+n2, n1)."""
    total = math.comb(n1 + n2, n1)
    counts = [0] * (n1 + n2 + 1)
    for r in range(2, n1 + n2 + 1):
        if r % 2 == 0:
            k = r // 2
            counts[r] = 2 * math.comb(n1 - 1, k - 1) * math.comb(n2 - 1, k - 1)
        else:
            k = (r - 1) // 2
            counts[r] = (math.comb(n1 - 1, k) * math.comb(n2 - 1, k - 1)
                         + math.comb(n1 - 1, k - 1) * math.comb(n2 - 1, k))
    assert sum(counts) == total
    return counts, total


def exact_bounds():
    ra = []
    rows = mahonian_rows(RA_LENGTHS)
    for n in RA_LENGTHS:
        counts = rows[n]
        total = math.factorial(n)
        for alpha in ALPHAS:
            lower, upper, size = bounds_from_counts(counts, total, alpha)
            ra.append({"n": n, "alpha": alpha, "lower": lower, "upper": upper, "size": size})
    runs = []
    for n1, n2 in RUNS_PAIRS:
        counts, total = runs_counts(n1, n2)
        mean = Fraction(sum(r * c for r, c in enumerate(counts)), total)
        var = Fraction(sum(r * r * c for r, c in enumerate(counts)), total) - mean * mean
        for alpha in ALPHAS:
            lower, upper, size = bounds_from_counts(counts, total, alpha)
            runs.append({"above": n1, "below": n2, "alpha": alpha, "lower": lower, "upper": upper,
                         "size": size, "mean": float(mean), "variance": float(var)})
    return ra, runs


def segmentation(n, segments, max_lag):
    """Segment length and count: b = smallest b0 * 2^j with floor(n / b) < 2M, b0 the smallest
    power of two >= max(K, 1) (the rule documented in src/stationarity/segments.rs)."""
    b = 1
    while b < max(max_lag, 1):
        b *= 2
    while n // b >= 2 * segments:
        b *= 2
    return b, n // b


def runs_about_median(v):
    med = np.median(v)
    marks = [bool(x > med) for x in v if x != med]
    runs = 1 + sum(1 for a, b in zip(marks, marks[1:]) if a != b) if marks else 0
    return runs, sum(marks), len(marks) - sum(marks), float(med)


def stationarity_case(x, fs, segments, max_lag, stretches):
    b, count = segmentation(len(x), segments, max_lag)
    seg = x[: count * b].reshape(count, b)
    means, squares, variances = seg.mean(axis=1), (seg ** 2).mean(axis=1), seg.var(axis=1)
    out = {"segment_len": b, "count": count, "mean": means.tolist(), "mean_square": squares.tolist(),
           "variance": variances.tolist()}
    for name, v in (("mean", means), ("mean_square", squares)):
        inversions = int(sum(np.sum(v[i] > v[i + 1:]) for i in range(len(v))))
        runs, above, below, med = runs_about_median(v)
        out[name + "_tests"] = {"inversions": inversions, "runs": runs, "above": above,
                                "below": below, "median": med}
    coefficients = []
    for j in range(stretches):
        first, end = j * count // stretches, (j + 1) * count // stretches
        a, e = first * b, end * b
        mu = x[a:e].mean()
        c = []
        for k in range(max_lag + 1):
            m = np.arange(max(a, k), e)
            c.append(float(np.sum((x[m - k] - mu) * (x[m] - mu)) / (e - a)))
        coefficients.append([ck / c[0] for ck in c])
    out["coefficient_by_stretch"] = coefficients
    return out


def spectrogram_case(x, fs, window, seg, overlap, max_rows=256, max_columns=256):
    """Columns of p Welch segments (p doubling whenever max_columns columns are complete, so
    complete columns end between max_columns/2 and max_columns - 1, plus a last partial one),
    rows of g = ceil(bins/max_rows) adjacent bins, from scipy.signal.spectrogram's per-segment
    one-sided densities."""
    noverlap = min(int(math.floor(overlap * seg + 1e-9)), seg - 1)
    w = periodic_window(window, seg)
    f, t, sxx = signal.spectrogram(x, fs=fs, window=w, nperseg=seg, noverlap=noverlap,
                                   detrend="constant", scaling="density", mode="psd")
    bins, k = sxx.shape
    p = 1
    while k // p >= max_columns:
        p *= 2
    columns = [sxx[:, c * p:(c + 1) * p].mean(axis=1) for c in range((k + p - 1) // p)]
    g = -(-bins // max_rows)
    rows = -(-bins // g)
    density = []
    for col in columns:
        density.extend(float(col[r * g:(r + 1) * g].mean()) for r in range(rows))
    step = seg - noverlap
    return {"window": window, "segment_len": seg, "overlap_frac": overlap, "segments": k,
            "segments_per_column": p, "bins_per_row": g, "rows": rows, "columns": len(columns),
            "frequency_hz": [float(f[r * g:(r + 1) * g].mean()) for r in range(rows)],
            "start_s": [c * p * step / fs for c in range(len(columns))],
            "density": density,
            "call": "scipy.signal.spectrogram(x, fs, window=<periodic array>, nperseg, noverlap, detrend='constant', scaling='density', mode='psd')"}


def anova_cases():
    cases = []
    for seed, groups, size, shift in [(5, 3, 20, 0.0), (6, 4, 32, 0.3), (7, 2, 10, 1.0), (8, 8, 25, 0.05)]:
        u = lcg_uniform(groups * size, seed).reshape(groups, size)
        data = [(u[i] + shift * i).tolist() for i in range(groups)]
        f, p = stats.f_oneway(*[np.array(g) for g in data])
        dfb, dfw = groups - 1, groups * (size - 1)
        cases.append({"groups": data, "f_statistic": float(f), "p_value": float(p),
                      "dof_between": dfb, "dof_within": dfw,
                      "f_critical_0.05": float(stats.f.ppf(0.95, dfb, dfw)),
                      "f_critical_0.01": float(stats.f.ppf(0.99, dfb, dfw)),
                      "call": "scipy.stats.f_oneway(*groups); scipy.stats.f.ppf(1 - alpha, dfb, dfw)"})
    return cases


STATIONARITY_CASES = [("white", 20, 32, 4), ("mixed", 20, 32, 4), ("odd", 10, 7, 3), ("mixed", 12, 100, 5)]
SPECTROGRAM_CASES = [("white", "hann", 60, 0.5), ("mixed", "hann", 1024, 0.75), ("odd", "hamming", 777, 0.5)]


def main():
    folder = sys.argv[1] if len(sys.argv) > 1 else os.path.dirname(os.path.abspath(__file__))
    os.makedirs(os.path.join(folder, "inputs"), exist_ok=True)
    inputs = make_inputs()
    doc = {
        "generator": "tests/reference/generate.py",
        "numpy": np.__version__,
        "scipy": scipy.__version__,
        "inputs": {},
        "welch": [],
        "acf": [],
        "live": [],
        "windows_4096": window_figures(4096),
        "chi2": [],
    }
    for name, (x, fs) in inputs.items():
        x.astype("<f8").tofile(os.path.join(folder, "inputs", name + ".f64"))
        doc["inputs"][name] = {"file": "inputs/" + name + ".f64", "sample_rate_hz": fs, "samples": len(x)}
    for (name, window, seg, overlap, detrend, average) in WELCH_CASES:
        x, fs = inputs[name]
        case = {"input": name, "window": window, "segment_len": seg, "overlap_frac": overlap,
                "detrend": detrend, "average": average,
                "call": "scipy.signal.welch(x, fs, window=<periodic array>, nperseg, noverlap=floor(overlap*nperseg), detrend, average)"}
        case.update(welch_case(x, fs, window, seg, overlap, detrend, average))
        doc["welch"].append(case)
    for (name, window, seg, overlap, detrend, n, m, tau) in LIVE_CASES:
        x, fs = inputs[name]
        case = {"input": name, "window": window, "segment_len": seg, "overlap_frac": overlap,
                "detrend": detrend, "linear_segments": n, "segments_pushed": m,
                "time_constant_s": tau,
                "call": "scipy.signal.welch(x[segment samples], fs, window=<periodic array>, nperseg, noverlap, detrend, scaling='density')"}
        case.update(live_case(x, fs, window, seg, overlap, detrend, n, m, tau))
        doc["live"].append(case)
    for name, max_lag in ACF_CASES:
        x, _ = inputs[name]
        case = {"input": name, "max_lag_len": max_lag}
        case.update(acf_case(x, max_lag))
        doc["acf"].append(case)
    for dof in [1.0, 2.0, 3.891892, 10.0, 19.047619, 58.836735, 100.0, 465.9]:
        for level in [0.9, 0.95, 0.99]:
            a = 1 - level
            doc["chi2"].append({"dof": dof, "level": level,
                                "ppf_low": float(stats.chi2.ppf(a / 2, dof)),
                                "ppf_high": float(stats.chi2.ppf(1 - a / 2, dof))})
    ra, runs = exact_bounds()
    doc["stationarity"] = {
        "reverse_arrangements_bounds": ra,
        "runs_bounds": runs,
        "cases": [],
        "spectrograms": [],
        "anova": anova_cases(),
    }
    for name, segments, max_lag, stretches in STATIONARITY_CASES:
        x, fs = inputs[name]
        case = {"input": name, "segments": segments, "max_lag_len": max_lag, "stretches": stretches}
        case.update(stationarity_case(x, fs, segments, max_lag, stretches))
        doc["stationarity"]["cases"].append(case)
    for name, window, seg, overlap in SPECTROGRAM_CASES:
        x, fs = inputs[name]
        case = {"input": name}
        case.update(spectrogram_case(x, fs, window, seg, overlap))
        doc["stationarity"]["spectrograms"].append(case)
    with open(os.path.join(folder, "vectors.json"), "w") as fh:
        json.dump(doc, fh, indent=0, sort_keys=True)
        fh.write("\n")


if __name__ == "__main__":
    main()
