#!/usr/bin/env python3
"""Benchmark of noisesonde's streaming estimators against numpy/scipy (`cargo xtask bench`).

usage: bench.py --bin PATH/TO/examples/bench --launcher PATH/TO/xtask [--sizes 1e6,1e7,6e7]
                [--repeats 3]

For each size, a deterministic signal (numpy default_rng(SEED) standard normal noise plus a
TONE_HZ tone of amplitude TONE_AMPLITUDE, at FS_HZ) is written once as raw little-endian f64 to
target/bench-data/. Then, with runs interleaved native/reference, REPEATS times:
- Welch: `bench welch FILE` vs a Python process doing np.fromfile + scipy.signal.welch(x, fs,
  window='hann', nperseg=4096, noverlap=2048, detrend='constant', scaling='density');
- ACF: `bench acf FILE 48000` vs a Python process doing np.fromfile + the FFT correlation
  irfft(|rfft(x - mean, nfft)|^2) with nfft the next power of two >= 2N, first 48001 lags.
Each whole process is timed by wall clock from outside and its peak resident set is read with
wait4 (ru_maxrss, KiB on Linux), both by the small launcher `xtask measure` (see run_measured). Before timing, the native and reference results for the
smallest size are checked against each other so the two sides do equal work.

Results: a Markdown table on stdout and in target/bench-results.md. Targets are printed beside
each row, not asserted.
"""
import argparse
import datetime
import json
import os
import platform
import statistics
import subprocess
import sys
import tempfile
import time

import numpy as np
import scipy

ROOT = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
DATA_DIR = os.path.join(ROOT, "target", "bench-data")
RESULTS_PATH = os.path.join(ROOT, "target", "bench-results.md")

SEED = 1
FS_HZ = 48000.0
TONE_HZ = 1000.0
TONE_AMPLITUDE = 0.5
DEFAULT_SIZES = [1_000_000, 10_000_000, 60_000_000]
DEFAULT_REPEATS = 3
# Samples generated per chunk when writing the inputs (keeps this process small).
GENERATE_CHUNK_LEN = 1_000_000
# Welch settings, identical on both sides.
SEGMENT_LEN = 4096
OVERLAP_LEN = 2048
# ACF lags: 1 s at 48 kHz.
MAX_LAG_LEN = 48000
# Agreement between native and reference on the smallest size.
WELCH_REL_TOL = 1e-9  # per bin, relative
ACF_REL_TOL = 1e-9  # per lag, relative to the lag-0 value
# Targets from the issue (reported, never asserted).
TARGET_SPEEDUP = 10.0
TARGET_WELCH_SAMPLES_PER_S = 250e6
TARGET_NATIVE_PEAK_BYTES = 16e6
# Environment variables that slow a current numpy's OpenBLAS when set for older builds; removed
# for the reference processes only (FFTs do not use BLAS, so this is a precaution).
OPENBLAS_OVERRIDES = ("OPENBLAS_CORETYPE", "OPENBLAS_L2_SIZE")

# Set in main(): the `xtask measure` launcher, and the largest resident high-water mark it
# reported for itself (a child's ru_maxrss cannot be read below it).
LAUNCHER = None
LAUNCHER_FLOOR_KIB = 0

REFERENCE_WELCH = r"""
import sys, time, numpy as np, scipy.signal
started = time.perf_counter()
x = np.fromfile(sys.argv[1], dtype='<f8')
f, p = scipy.signal.welch(x, float(sys.argv[2]), window='hann', nperseg=4096, noverlap=2048,
                          detrend='constant', scaling='density')
if len(sys.argv) > 3:
    p.astype('<f8').tofile(sys.argv[3])
seconds = time.perf_counter() - started
print('{"samples": %d, "seconds": %.6f, "checksum": %r, "values": %d}'
      % (len(x), seconds, float(p.sum()), len(p)))
"""

REFERENCE_ACF = r"""
import sys, time, numpy as np
started = time.perf_counter()
x = np.fromfile(sys.argv[1], dtype='<f8')
max_lag = int(sys.argv[2])
n = len(x)
nfft = 1 << (2 * n - 1).bit_length()
spec = np.fft.rfft(x - x.mean(), nfft)
acov = np.fft.irfft(spec.real ** 2 + spec.imag ** 2, nfft)[: max_lag + 1] / n
if len(sys.argv) > 3:
    acov.astype('<f8').tofile(sys.argv[3])
seconds = time.perf_counter() - started
print('{"samples": %d, "seconds": %.6f, "checksum": %r, "values": %d}'
      % (n, seconds, float(acov.sum()), len(acov)))
"""


def data_path(n):
    return os.path.join(DATA_DIR, f"normal-seed{SEED}-tone{TONE_HZ:g}hz-{n}.f64")


def ensure_input(n):
    """Writes the input for n samples unless a file of the right size is there."""
    path = data_path(n)
    if os.path.isfile(path) and os.path.getsize(path) == 8 * n:
        return path, False
    os.makedirs(DATA_DIR, exist_ok=True)
    rng = np.random.default_rng(SEED)
    tmp = path + ".part"
    with open(tmp, "wb") as fh:
        for start in range(0, n, GENERATE_CHUNK_LEN):
            count = min(GENERATE_CHUNK_LEN, n - start)
            t = (start + np.arange(count)) / FS_HZ
            x = rng.standard_normal(count) + TONE_AMPLITUDE * np.sin(2 * np.pi * TONE_HZ * t)
            x.astype("<f8").tofile(fh)
    os.replace(tmp, path)
    return path, True


def reference_env():
    env = dict(os.environ)
    for key in OPENBLAS_OVERRIDES:
        env.pop(key, None)
    return env


def run_measured(argv, env=None):
    """Runs argv under the launcher; returns (wall s, peak RSS bytes, parsed last stdout line).

    The launcher (`xtask measure`) starts argv, reaps it with wait4 and reports the wall time
    from spawn to reaping and ru_maxrss. A child spawned straight from this process would carry
    this process's resident size into its ru_maxrss (Linux counts the memory a process had
    before exec), so the small launcher does the spawning; os.wait4 here only reaps it.
    """
    global LAUNCHER_FLOOR_KIB
    with tempfile.TemporaryFile() as out, tempfile.TemporaryFile() as err, \
            tempfile.TemporaryDirectory() as tmp:
        report_path = os.path.join(tmp, "measure.json")
        proc = subprocess.Popen([LAUNCHER, "measure", report_path, "--", *argv],
                                stdout=out, stderr=err, env=env, cwd=ROOT)
        _, status, _ = os.wait4(proc.pid, 0)
        proc.returncode = os.waitstatus_to_exitcode(status)
        out.seek(0)
        err.seek(0)
        stdout = out.read().decode(errors="replace")
        stderr = err.read().decode(errors="replace")
        report = None
        if os.path.isfile(report_path):
            with open(report_path) as fh:
                report = json.load(fh)
    if proc.returncode != 0 or report is None:
        raise SystemExit(f"bench: {' '.join(argv)} exited with {proc.returncode}:\n{stderr}{stdout}")
    lines = stdout.strip().splitlines()
    if not lines:
        raise SystemExit(f"bench: {' '.join(argv)} printed nothing")
    if report.get("launcher_hwm_kib") is not None:
        LAUNCHER_FLOOR_KIB = max(LAUNCHER_FLOOR_KIB, report["launcher_hwm_kib"])
    return report["wall_s"], report["maxrss_kib"] * 1024, json.loads(lines[-1])


def native_argv(bench_bin, task, path, out=None):
    argv = [bench_bin, task, path]
    if task == "acf":
        argv.append(str(MAX_LAG_LEN))
    argv += ["--sample-rate", repr(FS_HZ)]
    if out:
        argv += ["--out", out]
    return argv


def reference_argv(task, path, out=None):
    if task == "welch":
        argv = [sys.executable, "-c", REFERENCE_WELCH, path, repr(FS_HZ)]
    else:
        argv = [sys.executable, "-c", REFERENCE_ACF, path, str(MAX_LAG_LEN)]
    if out:
        argv.append(out)
    return argv


def check_agreement(bench_bin, path):
    """Runs both sides once on `path` with their results written out, and compares them."""
    lines = []
    with tempfile.TemporaryDirectory() as tmp:
        for task in ("welch", "acf"):
            native_out = os.path.join(tmp, task + "-native.f64")
            reference_out = os.path.join(tmp, task + "-reference.f64")
            run_measured(native_argv(bench_bin, task, path, native_out))
            run_measured(reference_argv(task, path, reference_out), env=reference_env())
            a = np.fromfile(native_out, dtype="<f8")
            b = np.fromfile(reference_out, dtype="<f8")
            if a.shape != b.shape:
                raise SystemExit(f"bench: {task}: native gave {a.size} values, reference {b.size}")
            if task == "welch":
                rel = np.abs(a - b) / np.abs(b)
                worst, tol, what = float(np.max(rel)), WELCH_REL_TOL, "per bin, relative"
            else:
                rel = np.abs(a - b) / abs(b[0])
                worst, tol, what = float(np.max(rel)), ACF_REL_TOL, "per lag, relative to lag 0"
            ok = bool(np.all(np.isfinite(rel))) and worst <= tol
            lines.append(f"{task}: {a.size} values, largest difference {worst:.2e} ({what}; "
                         f"tolerance {tol:g}): {'agree' if ok else 'DISAGREE'}")
            if not ok:
                raise SystemExit("bench: native and reference results disagree: " + lines[-1])
    return lines


def machine_facts():
    def first_line(argv):
        try:
            return subprocess.run(argv, capture_output=True, text=True, check=True).stdout.strip()
        except (OSError, subprocess.CalledProcessError):
            return "unknown"

    cpu = "unknown"
    try:
        with open("/proc/cpuinfo") as fh:
            for line in fh:
                if line.startswith("model name"):
                    cpu = line.split(":", 1)[1].strip()
                    break
    except OSError:
        pass
    return {
        "date": datetime.datetime.now(datetime.timezone.utc).strftime("%Y-%m-%d %H:%M UTC"),
        "nproc": first_line(["nproc"]),
        "cpu": cpu,
        "rustc": first_line(["rustc", "--version"]),
        "python": platform.python_version(),
        "numpy": np.__version__,
        "scipy": scipy.__version__,
    }


def verdict(ok):
    return "yes" if ok else "NO"


def main():
    parser = argparse.ArgumentParser(description=__doc__.strip().splitlines()[0])
    parser.add_argument("--bin", required=True, help="path of the release `bench` example")
    parser.add_argument("--launcher", required=True,
                        help="path of the xtask executable (its `measure` task spawns and measures)")
    parser.add_argument("--sizes", default=",".join(str(n) for n in DEFAULT_SIZES),
                        help="comma-separated sample counts (1e6 notation accepted)")
    parser.add_argument("--repeats", type=int, default=DEFAULT_REPEATS)
    args = parser.parse_args()
    global LAUNCHER
    bench_bin = os.path.abspath(args.bin)
    LAUNCHER = os.path.abspath(args.launcher)
    sizes = [int(float(s)) for s in args.sizes.split(",") if s.strip()]
    if not os.path.isfile(bench_bin):
        raise SystemExit(f"bench: {bench_bin} not found (run `cargo xtask bench`)")

    facts = machine_facts()
    print(f"bench: {facts['date']}; {facts['nproc']} cores; {facts['cpu']}", flush=True)

    paths = {}
    for n in sizes:
        started = time.perf_counter()
        path, made = ensure_input(n)
        paths[n] = path
        note = f"written in {time.perf_counter() - started:.1f} s" if made else "reused"
        print(f"bench: input {os.path.relpath(path, ROOT)} ({n} samples, {note})", flush=True)

    agreement = check_agreement(bench_bin, paths[min(sizes)])
    for line in agreement:
        print(f"bench: agreement at {min(sizes)} samples: {line}", flush=True)

    rows = []
    for n in sizes:
        for task in ("welch", "acf"):
            native, reference = [], []
            for rep in range(args.repeats):
                native.append(run_measured(native_argv(bench_bin, task, paths[n])))
                reference.append(run_measured(reference_argv(task, paths[n]), env=reference_env()))
                print(f"bench: {task} {n} run {rep + 1}/{args.repeats}: native {native[-1][0]:.3f} s, "
                      f"reference {reference[-1][0]:.3f} s", flush=True)
            for side in (native, reference):
                for _, _, out in side:
                    if out["samples"] != n:
                        raise SystemExit(f"bench: {task}: a run read {out['samples']} samples, not {n}")
            rows.append(summarise(task, n, native, reference))

    table = render(rows, facts, agreement, args.repeats)
    print()
    print(table)
    os.makedirs(os.path.dirname(RESULTS_PATH), exist_ok=True)
    with open(RESULTS_PATH, "w") as fh:
        fh.write(table)
    print(f"bench: results written to {os.path.relpath(RESULTS_PATH, ROOT)}")


def summarise(task, n, native, reference):
    native_wall = statistics.median(w for w, _, _ in native)
    reference_wall = statistics.median(w for w, _, _ in reference)
    native_inside = statistics.median(out["seconds"] for _, _, out in native)
    native_estimator = statistics.median(out["estimator_seconds"] for _, _, out in native)
    reference_inside = statistics.median(out["seconds"] for _, _, out in reference)
    native_peak = max(rss for _, rss, _ in native)
    reference_peak = max(rss for _, rss, _ in reference)
    ratio = reference_wall / native_wall
    ratio_inside = reference_inside / native_inside
    native_rate = n / native_wall
    targets = [f"≥{TARGET_SPEEDUP:g}×: {verdict(ratio >= TARGET_SPEEDUP)}"]
    if task == "welch":
        targets.append(f"≥{TARGET_WELCH_SAMPLES_PER_S / 1e6:g} M samples/s: "
                       f"{verdict(native_rate >= TARGET_WELCH_SAMPLES_PER_S)} "
                       f"(inside: {n / native_inside / 1e6:.0f}; estimator only: {n / native_estimator / 1e6:.0f})")
    targets.append(f"<{TARGET_NATIVE_PEAK_BYTES / 1e6:g} MB: "
                   f"{verdict(native_peak < TARGET_NATIVE_PEAK_BYTES)}")
    return {
        "task": task if task == "welch" else f"acf ({MAX_LAG_LEN} lags)",
        "n": n,
        "native_wall": native_wall,
        "native_inside": native_inside,
        "native_estimator": native_estimator,
        "native_rate": native_rate,
        "native_peak": native_peak,
        "reference_wall": reference_wall,
        "reference_inside": reference_inside,
        "reference_rate": n / reference_wall,
        "reference_peak": reference_peak,
        "ratio": ratio,
        "ratio_inside": ratio_inside,
        "targets": "; ".join(targets),
    }


def render(rows, facts, agreement, repeats):
    out = [
        "# noisesonde benchmark",
        "",
        f"- date: {facts['date']}",
        f"- machine: {facts['nproc']} cores (nproc), {facts['cpu']}",
        f"- {facts['rustc']}; Python {facts['python']}, numpy {facts['numpy']}, scipy {facts['scipy']}",
        f"- input: default_rng({SEED}) standard normal + {TONE_AMPLITUDE:g}·sin(2π·{TONE_HZ:g} Hz·t), "
        f"fs {FS_HZ:g} Hz, raw little-endian f64 in target/bench-data/",
        f"- native: `examples/bench.rs` (release), streaming in blocks of 65536 samples; "
        f"reference: a Python process with np.fromfile + scipy.signal.welch (Hann, nperseg {SEGMENT_LEN}, "
        f"noverlap {OVERLAP_LEN}, detrend constant, density) or numpy rfft/irfft autocorrelation "
        f"(nfft = next power of two ≥ 2N, {MAX_LAG_LEN + 1} lags)",
        f"- wall time: whole process (start-up, file read, Python imports included), median of {repeats} "
        "interleaved runs; 'inside' is each program's own timing of read + estimate (no start-up or "
        "imports); 'estimator' is the native time spent in push/finish alone (no file read or decode); "
        "peak RSS: ru_maxrss from wait4 in the launcher `xtask measure`, largest of the runs, "
        f"MB = 10^6 bytes (the launcher's own high-water mark, {LAUNCHER_FLOOR_KIB * 1024 / 1e6:.1f} MB, "
        "is the lowest value a child can show)",
        f"- equal work: {'; '.join(agreement)}",
        "- targets (reported, not asserted), judged on the wall-clock columns: Welch ≥10× reference and "
        "≥250 M samples/s; native peak memory <16 MB (checked for both tasks); ACF ≥10× reference",
        "",
        "| task | samples | native wall s | native inside s | native estimator s | native M samples/s | native peak MB "
        "| reference wall s | reference inside s | reference M samples/s | reference peak MB | reference/native wall | reference/native inside | targets |",
        "| --- | ---: | ---: | ---: | ---: | ---: | ---: | ---: | ---: | ---: | ---: | ---: | ---: | --- |",
    ]
    for r in rows:
        out.append(
            f"| {r['task']} | {r['n']:,} | {r['native_wall']:.3f} | {r['native_inside']:.3f} | {r['native_estimator']:.3f} "
            f"| {r['native_rate'] / 1e6:.1f} | {r['native_peak'] / 1e6:.1f} | {r['reference_wall']:.3f} "
            f"| {r['reference_inside']:.3f} | {r['reference_rate'] / 1e6:.1f} | {r['reference_peak'] / 1e6:.1f} | {r['ratio']:.1f}× | {r['ratio_inside']:.1f}× "
            f"| {r['targets']} |")
    return "\n".join(out) + "\n"


if __name__ == "__main__":
    main()
