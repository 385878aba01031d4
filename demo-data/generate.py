#!/usr/bin/env python3
"""Write the noisesonde demo recordings and print the values an analysis should find.

    python3 demo-data/generate.py

Writes, next to this script:

  preamp-shorted-input-24bit-48000hz-mono.wav   10 s, 48 kHz, 24-bit PCM, mono
  bench-accelerometer-log.csv                   10 s, 1 kHz, 3 axes in g

The scenario is invented (see README.md): the home-built low-noise preamp of bench 3
in the fictional Marram Hall basement lab, and an accelerometer board lying on the
same bench.

Only the Python standard library is used, and every random number comes from
random.Random(seed) with the seeds below, so each run writes byte-identical files.
(The Gaussian draws and the sines go through the platform's libm; on another
platform a last-bit difference in libm could, very rarely, move one sample by one
LSB. Run to run on one machine the files are identical.)

Conventions used throughout:
  * "density" means one-sided power spectral density, in unit^2/Hz, defined on
    0 .. fs/2; its square root is the familiar unit/sqrt(Hz).
  * White noise with one-sided density S, sampled at fs, has variance
        sigma^2 = S * fs/2        (the density spread over 0 .. fs/2),
    so S = sigma^2 / (fs/2), and its RMS in a band f1..f2 is sqrt(S * (f2 - f1)).
  * A sine of peak amplitude A has RMS A/sqrt(2); all tones are specified by RMS.
"""

import csv
import math
import os
import random
import struct
import wave

HERE = os.path.dirname(os.path.abspath(__file__))

# --------------------------------------------------------------------------------------
# 1. The preamp with its input shorted, recorded by a 24-bit ADC
# --------------------------------------------------------------------------------------

WAV_NAME = "preamp-shorted-input-24bit-48000hz-mono.wav"
WAV_SEED = 48024            # "48 kHz, 24-bit"
FS = 48_000                 # sample rate, Hz
N_WAV = 10 * FS             # 10 s
BITS = 24
FULL_SCALE_V = 2.0          # a sample of 1.0 full scale (2^23 counts) is 2.0 V at the ADC input
LSB_V = FULL_SCALE_V / 2 ** (BITS - 1)   # 238.4 nV per count

# White floor. The preamp's input-referred voltage noise (its input is shorted, so there is
# no source resistance to add thermal noise) is 5 nV/sqrt(Hz); its gain is 1000 (60 dB).
# At the output, i.e. at the ADC input, the floor is therefore 5 uV/sqrt(Hz).
PREAMP_GAIN = 1000.0
INPUT_NOISE_V_RTHZ = 5e-9
WHITE_V_RTHZ = INPUT_NOISE_V_RTHZ * PREAMP_GAIN          # 5e-6 V/sqrt(Hz)
WHITE_PSD = WHITE_V_RTHZ ** 2                            # 2.5e-11 V^2/Hz
WHITE_SIGMA = math.sqrt(WHITE_PSD * FS / 2)              # 0.775 mV rms over 0 .. 24 kHz

# Flicker (1/f) noise with a corner of 200 Hz: the flicker density equals the white density
# at 200 Hz, i.e. S_flicker(f) = WHITE_PSD * 200 Hz / f.
#
# True 1/f noise has no finite-order generator, so we use the standard approximation: a sum
# of independent first-order low-pass (AR(1), "Lorentzian") processes whose corner
# frequencies are spaced one per decade. One such process with corner f_k and variance
# sigma_k^2 has the density
#       S_k(f) = (2 sigma_k^2 / (pi f_k)) / (1 + (f/f_k)^2),
# flat below f_k and falling as 1/f^2 above it. If every pole gets the SAME variance, the
# sum behaves like 1/f between the lowest and the highest corner: replacing the sum over
# log-spaced poles by an integral over ln(f_k) (one pole per ln(10) of ln f) gives
#       sum_k S_k(f)  ~  sigma_k^2 / (ln(10) * f),
# so sigma_k^2 = WHITE_PSD * corner * ln(10) puts the corner where we want it. With one pole
# per decade the sum ripples around the ideal line: it stays within -6 %/+6 % (+-0.27 dB) of
# WHITE_PSD * 200 Hz / f from 5 Hz to 5 kHz (the script prints the model against the ideal
# below). Below the lowest pole (1 Hz) the density flattens (it is 10 % low at 2 Hz); near
# the highest pole (10 kHz) sampling lifts it a little above 1/f (+14 % at 10 kHz), where
# the flicker is about 45 times below the white floor anyway.
FLICKER_CORNER_HZ = 200.0
FLICKER_POLES_HZ = (1.0, 10.0, 100.0, 1000.0, 10000.0)
FLICKER_POLE_VAR = WHITE_PSD * FLICKER_CORNER_HZ * math.log(10.0)   # V^2 per pole

# Mains hum picked up by the bench wiring: 50 Hz and its 2nd, 3rd and 5th harmonics. The
# odd harmonics are the stronger ones, as is usual for hum from a transformer's magnetic
# field. A small spur from the bench supply's switching regulator (7.31 kHz, its burst
# frequency at light load; deliberately NOT a multiple of 50 Hz). RMS volts at the preamp
# output, and a fixed phase in radians. Frequencies are whole hertz so that the phase can
# be reduced exactly with integer arithmetic (see tone()).
HUM = (
    # (Hz, V rms, phase rad)
    (50, 300e-6, 0.4),
    (100, 80e-6, 1.9),
    (150, 120e-6, 2.6),
    (250, 70e-6, 0.9),
)
SPUR = (7310, 60e-6, 1.3)
TONES = HUM + (SPUR,)


def tone(freq_hz, rms, phase, n, fs):
    """Sample n of a sine with the given RMS (peak = rms * sqrt 2) at an integer frequency."""
    # (freq * n) % fs is exact in integers, so the phase never loses precision with n.
    return rms * math.sqrt(2.0) * math.sin(2.0 * math.pi * ((freq_hz * n) % fs) / fs + phase)


def make_wav():
    rng = random.Random(WAV_SEED)
    gauss = rng.gauss

    # White floor.
    volts = [WHITE_SIGMA * gauss(0.0, 1.0) for _ in range(N_WAV)]

    # Flicker: one AR(1) process per pole, x[n] = a x[n-1] + e[n] with a = exp(-2 pi f_k / fs)
    # (the sampled form of a first-order low-pass with corner f_k). The innovation e has
    # standard deviation sigma_k sqrt(1 - a^2) so that x has variance sigma_k^2, and x starts
    # from its stationary distribution, so there is no start-up transient.
    sigma_k = math.sqrt(FLICKER_POLE_VAR)
    for f_k in FLICKER_POLES_HZ:
        a = math.exp(-2.0 * math.pi * f_k / FS)
        b = sigma_k * math.sqrt(1.0 - a * a)
        x = sigma_k * gauss(0.0, 1.0)
        for n in range(N_WAV):
            x = a * x + b * gauss(0.0, 1.0)
            volts[n] += x

    # Hum and spur (deterministic). 10 s holds whole cycles of every tone, so they add
    # nothing to the mean.
    for freq, rms, phase in TONES:
        for n in range(N_WAV):
            volts[n] += tone(freq, rms, phase, n, FS)

    # ADC: volts -> counts (2^23 counts = 1.0 full scale = 2.0 V). Add TPDF dither of
    # +-1 LSB peak (difference of two uniform numbers, triangular on (-1, 1) LSB, variance
    # LSB^2/6) before rounding to the nearest count; rounding then adds an error that is
    # uniform and independent of the signal, variance LSB^2/12. Together: LSB^2/4.
    counts_per_volt = 2 ** (BITS - 1) / FULL_SCALE_V
    top, bottom = 2 ** (BITS - 1) - 1, -(2 ** (BITS - 1))
    rand = rng.random
    counts = []
    for v in volts:
        q = math.floor(v * counts_per_volt + (rand() - rand()) + 0.5)
        counts.append(min(top, max(bottom, q)))

    # Pack: little-endian 32-bit ints, then keep the low three bytes of each (24-bit PCM).
    packed32 = struct.pack("<%di" % len(counts), *counts)
    frames = bytearray(3 * len(counts))
    frames[0::3] = packed32[0::4]
    frames[1::3] = packed32[1::4]
    frames[2::3] = packed32[2::4]

    with wave.open(os.path.join(HERE, WAV_NAME), "wb") as w:
        w.setnchannels(1)
        w.setsampwidth(3)
        w.setframerate(FS)
        w.writeframes(bytes(frames))


def ar1_band_power(var, a, f1, f2, fs):
    """Exact power of a sampled AR(1) process (variance var, coefficient a) in f1..f2 Hz.

    Its one-sided density is S(f) = 2 var (1 - a^2) / (fs (1 - 2a cos w + a^2)), w = 2 pi f/fs,
    and the integral of 1/(1 - 2a cos w + a^2) dw is (2/(1-a^2)) atan((1+a)/(1-a) tan(w/2)).
    """
    def prim(f):
        if f >= fs / 2:
            return math.pi / 2
        return math.atan((1 + a) / (1 - a) * math.tan(math.pi * f / fs))
    return 2.0 * var / math.pi * (prim(f2) - prim(f1))


def flicker_psd(f):
    """Density of the flicker model (sum of the sampled AR(1) processes) at f Hz, V^2/Hz."""
    w = 2.0 * math.pi * f / FS
    total = 0.0
    for f_k in FLICKER_POLES_HZ:
        a = math.exp(-2.0 * math.pi * f_k / FS)
        total += 2.0 * FLICKER_POLE_VAR * (1 - a * a) / (FS * (1 - 2 * a * math.cos(w) + a * a))
    return total


def expected_wav():
    """Print the values an analysis of the WAV should find, from the model (not the data)."""
    q_var = LSB_V ** 2 / 4                       # dither + rounding
    q_psd = q_var / (FS / 2)
    line_var = {f: rms ** 2 for f, rms, _ in TONES}
    hum_var = sum(rms ** 2 for _, rms, _ in HUM)
    spur_var = SPUR[1] ** 2
    flicker_var = FLICKER_POLE_VAR * len(FLICKER_POLES_HZ)
    total_var = WHITE_SIGMA ** 2 + flicker_var + hum_var + spur_var + q_var

    print("== %s ==" % WAV_NAME)
    print("calibration: 1.0 full scale = %.1f V; LSB = %.4g V (%.4g nV)" % (FULL_SCALE_V, LSB_V, LSB_V * 1e9))
    print("white floor: input %.3g V/rtHz x gain %g = %.4g V/rtHz = %.4g V^2/Hz at the output"
          % (INPUT_NOISE_V_RTHZ, PREAMP_GAIN, WHITE_V_RTHZ, WHITE_PSD))
    print("  in full-scale units: %.4g FS/rtHz (%.1f dBFS/rtHz)"
          % (WHITE_V_RTHZ / FULL_SCALE_V, 20 * math.log10(WHITE_V_RTHZ / FULL_SCALE_V)))
    print("  white rms 0..24 kHz: %.4g V; 20 Hz..20 kHz: %.4g V"
          % (WHITE_SIGMA, math.sqrt(WHITE_PSD * (20000 - 20))))
    print("quantisation+TPDF dither: var LSB^2/4 = %.3g V^2, density %.3g V^2/Hz (%.3g V/rtHz),"
          " %.1f dB below the white floor" % (q_var, q_psd, math.sqrt(q_psd), 10 * math.log10(WHITE_PSD / q_psd)))
    print("flicker: corner %.0f Hz, poles %s Hz, %.4g V^2 per pole, total %.4g V^2 (%.4g V rms)"
          % (FLICKER_CORNER_HZ, ", ".join("%g" % p for p in FLICKER_POLES_HZ), FLICKER_POLE_VAR,
             flicker_var, math.sqrt(flicker_var)))
    print("  model flicker density vs ideal WHITE_PSD*fc/f, and total model density:")
    for f in (2, 5, 10, 20, 50, 100, 200, 500, 1000, 2000, 5000, 10000, 20000):
        ideal = WHITE_PSD * FLICKER_CORNER_HZ / f
        fl = flicker_psd(f)
        tot = fl + WHITE_PSD + q_psd
        print("    %6g Hz: flicker %.4g V^2/Hz (ideal %.4g, ratio %.3f); total %.4g V^2/Hz = %.4g V/rtHz"
              % (f, fl, ideal, fl / ideal, tot, math.sqrt(tot)))
    print("lines (power = rms^2):")
    for f, rms, _ in TONES:
        print("    %6g Hz: %.4g V rms, %.4g V^2" % (f, rms, line_var[f]))
    print("  hum total %.4g V^2 (%.4g V rms); spur %.4g V^2" % (hum_var, math.sqrt(hum_var), spur_var))

    # Band 20 Hz .. 20 kHz: white + exact flicker-model power + all lines (all inside the band).
    fl_band = sum(ar1_band_power(FLICKER_POLE_VAR, math.exp(-2 * math.pi * p / FS), 20, 20000, FS)
                  for p in FLICKER_POLES_HZ)
    ideal_fl_band = WHITE_PSD * FLICKER_CORNER_HZ * math.log(20000 / 20)
    band_var = (WHITE_PSD + q_psd) * (20000 - 20) + fl_band + hum_var + spur_var
    print("band 20 Hz..20 kHz: white %.4g V^2, flicker %.4g V^2 (ideal 1/f: %.4g), lines %.4g V^2;"
          " total %.4g V^2 = %.4g V rms"
          % (WHITE_PSD * (20000 - 20), fl_band, ideal_fl_band, hum_var + spur_var, band_var,
             math.sqrt(band_var)))
    print("total (0..24 kHz) = white + flicker + lines + quantisation = %.4g V^2 -> RMS %.4g V"
          % (total_var, math.sqrt(total_var)))

    # Mean: every part has zero mean; the record mean scatters by sqrt(var(mean)), where for an
    # AR(1) process over N samples var(mean) ~ var (1+a) / ((1-a) N) (mostly the 1 Hz pole).
    mean_var = (WHITE_SIGMA ** 2 + q_var) / N_WAV
    for p in FLICKER_POLES_HZ:
        a = math.exp(-2 * math.pi * p / FS)
        mean_var += FLICKER_POLE_VAR * (1 + a) / ((1 - a) * N_WAV)
    print("mean: 0 V expected; record-to-record scatter of the mean ~ %.2g V (1 sigma)" % math.sqrt(mean_var))

    # Higher moments. The Gaussian parts have no 3rd or 4th cumulant; only the tones do.
    # 4800 samples (0.1 s) hold whole cycles of every tone (gcd(7310, 50) = 10 Hz).
    period = FS // 10
    det = [sum(tone(f, r, ph, n, FS) for f, r, ph in TONES) for n in range(period)]
    m2 = sum(v * v for v in det) / period
    m3 = sum(v ** 3 for v in det) / period
    m4 = sum(v ** 4 for v in det) / period
    skew = m3 / total_var ** 1.5
    exkurt = (m4 - 3 * m2 * m2) / total_var ** 2
    print("skewness %.4f, excess kurtosis %.4f (from the tones; Gaussian parts add 0)" % (skew, exkurt))

    # Autocorrelation, normalised to lag 0: tones give sum rms^2 cos(2 pi f lag), the AR(1)
    # poles give sigma_k^2 a^lag, white noise gives nothing at lags > 0.
    for lag_ms in (1, 10, 20):
        lag = FS * lag_ms // 1000
        r = sum(rms ** 2 * math.cos(2 * math.pi * f * lag / FS) for f, rms, _ in TONES)
        r += sum(FLICKER_POLE_VAR * math.exp(-2 * math.pi * p / FS) ** lag for p in FLICKER_POLES_HZ)
        print("autocorrelation at %2d ms (lag %d): %.4f of lag 0" % (lag_ms, lag, r / total_var))
    print()


# --------------------------------------------------------------------------------------
# 2. The bench accelerometer log
# --------------------------------------------------------------------------------------

CSV_NAME = "bench-accelerometer-log.csv"
CSV_SEED = 1003             # "1 kHz, 3 axes"
FS_ACC = 1000               # Hz
N_ACC = 10 * FS_ACC         # 10 s

# White sensor noise, one-sided density in g/sqrt(Hz). The z axis of a MEMS sensor is
# typically noisier than x and y; here 150 vs 100 ug/sqrt(Hz).
ACC_NOISE_G_RTHZ = (100e-6, 100e-6, 150e-6)
ACC_SIGMA = tuple(d * math.sqrt(FS_ACC / 2) for d in ACC_NOISE_G_RTHZ)

# The building's chilled-water pump, on a variable-frequency drive set to 1770 rpm = 29.5 Hz,
# shakes the floor mostly sideways: g rms per axis, with a phase per axis.
PUMP_HZ = 29.5
PUMP_G_RMS = (1.5e-3, 0.9e-3, 0.4e-3)
PUMP_PHASE = (0.0, 1.2, 2.1)

# z: +1 g from gravity (sensor flat, z up) and an offset that drifts as the board warms
# after power-on: DRIFT * (1 - exp(-t / TAU)), a first-order thermal settling.
GRAVITY_G = 1.0
DRIFT_G = 2.0e-3
DRIFT_TAU_S = 4.0


def make_csv():
    rng = random.Random(CSV_SEED)
    gauss = rng.gauss
    path = os.path.join(HERE, CSV_NAME)
    with open(path, "w", newline="", encoding="ascii") as fh:
        fh.write("# Bench accelerometer log, Marram Hall basement lab, bench 3 (fictional demo data"
                 " for noisesonde, written by demo-data/generate.py, seed %d).\n" % CSV_SEED)
        fh.write("# 3-axis MEMS accelerometer board lying flat on the bench top, z up;"
                 " %d Hz, units g (standard gravity); building pump running.\n" % FS_ACC)
        out = csv.writer(fh, lineterminator="\n")
        out.writerow(["time_s", "accel_x_g", "accel_y_g", "accel_z_g"])
        for n in range(N_ACC):
            t = n / FS_ACC
            # 29.5 Hz * n / 1000 Hz = 59 n / 2000 cycles: reduce the phase exactly in integers.
            cyc = ((59 * n) % 2000) / 2000
            row = []
            for axis in range(3):
                v = ACC_SIGMA[axis] * gauss(0.0, 1.0)
                v += PUMP_G_RMS[axis] * math.sqrt(2.0) * math.sin(2 * math.pi * cyc + PUMP_PHASE[axis])
                if axis == 2:
                    v += GRAVITY_G + DRIFT_G * (1.0 - math.exp(-t / DRIFT_TAU_S))
                row.append(v)
            # Time with 6 decimals (exact: n ms); values with 7 decimals = 0.1 ug resolution,
            # whose rounding noise (0.1 ug / sqrt 12) is 10^4 below the sensor noise.
            out.writerow(["%.6f" % t] + ["%.7f" % v for v in row])


def expected_csv():
    print("== %s ==" % CSV_NAME)
    T = N_ACC / FS_ACC
    for axis, name in enumerate(("accel_x_g", "accel_y_g", "accel_z_g")):
        # The deterministic part of this axis (pump sine, and for z gravity + warm-up drift),
        # evaluated on the sample grid. The Gaussian sensor noise adds its variance sigma^2
        # and nothing to the mean, the 3rd or the 4th cumulant.
        det = []
        for n in range(N_ACC):
            v = PUMP_G_RMS[axis] * math.sqrt(2.0) * math.sin(
                2 * math.pi * ((59 * n) % 2000) / 2000 + PUMP_PHASE[axis])
            if axis == 2:
                v += GRAVITY_G + DRIFT_G * (1.0 - math.exp(-(n / FS_ACC) / DRIFT_TAU_S))
            det.append(v)
        mean = sum(det) / N_ACC
        c2 = sum((v - mean) ** 2 for v in det) / N_ACC
        c3 = sum((v - mean) ** 3 for v in det) / N_ACC
        c4 = sum((v - mean) ** 4 for v in det) / N_ACC - 3 * c2 * c2
        var = c2 + ACC_SIGMA[axis] ** 2
        print("%s: noise %.3g g/rtHz = %.3g g^2/Hz (sigma %.4g g); pump %g Hz %.3g g rms (%.3g g^2)"
              % (name, ACC_NOISE_G_RTHZ[axis], ACC_NOISE_G_RTHZ[axis] ** 2, ACC_SIGMA[axis], PUMP_HZ,
                 PUMP_G_RMS[axis], PUMP_G_RMS[axis] ** 2))
        # The record mean of white noise scatters by sigma / sqrt(N).
        print("    mean %.6f g (+- %.2g g, 1 sigma); std (mean removed) %.4g g; skewness %.4f;"
              " excess kurtosis %.4f" % (round(mean, 12) + 0.0, ACC_SIGMA[axis] / math.sqrt(N_ACC),
                                         math.sqrt(var), round(c3 / var ** 1.5, 6) + 0.0,
                                         c4 / var ** 2))
        if axis == 2:
            drift = [DRIFT_G * (1.0 - math.exp(-(n / FS_ACC) / DRIFT_TAU_S)) for n in range(N_ACC)]
            d_mean = sum(drift) / N_ACC
            d_std = math.sqrt(sum((d - d_mean) ** 2 for d in drift) / N_ACC)
            print("    drift: +%.4g g over %g s (tau %g s), its mean %.4g g, its std %.3g g"
                  % (drift[-1], T, DRIFT_TAU_S, d_mean, d_std))
    print()


if __name__ == "__main__":
    make_wav()
    make_csv()
    expected_wav()
    expected_csv()
    for name in (WAV_NAME, CSV_NAME):
        print("wrote %s (%d bytes)" % (os.path.join(HERE, name), os.path.getsize(os.path.join(HERE, name))))
