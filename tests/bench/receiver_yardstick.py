#!/usr/bin/python3
"""numpy/scipy yardstick of spurcast's band B scan (issue 18), run by tests/bench/receiver_bench.cpp.

    /usr/bin/python3 tests/bench/receiver_yardstick.py RECORD SAMPLE_RATE_HZ STEP_HZ READINGS [RUNS]

RECORD holds the samples as raw little-endian float64 (a voltage). The scan is the one of
core/receiver/receiver.cpp `scan_waveform`, written independently with numpy and scipy: one rfft
of the record; per tuned frequency the bins within ±2·B6 weighted by the Gaussian IF response
2^(−(2Δf/B6)²), their complex envelope over the record period by an inverse FFT of M points
(batched over every tuned frequency as one 2-D array); peak = the envelope's maximum (refined by
a parabola through the logarithms, as spurcast does), average = the critically damped meter in
periodic steady state, quasi-peak = the diode detector of docs/references.md §1.4a integrated to
its periodic steady state, then the meter. The readings are calibrated in RMS of a sine (dBµV).
Writes READINGS as raw float64 rows (frequency, peak, quasi-peak, average) and prints the best wall
time and the best CPU time of RUNS scans (default 1), in seconds; loading the record is not timed.
"""
import sys
import time

import numpy as np
from scipy import optimize, signal

# Band B of CISPR 16-1-1, docs/references.md §1.1 (the values of core/receiver/receiver.cpp
# band_parameters; from memory there): 150 kHz-30 MHz, 9 kHz at -6 dB, QP charge 1 ms, discharge
# 160 ms, meter 160 ms.
BAND_START_HZ = 150e3
BAND_STOP_HZ = 30e6
B6_HZ = 9e3
CHARGE_S = 1e-3
DISCHARGE_S = 160e-3
METER_S = 160e-3
# The IF response is truncated at ±2·B6 (−96 dB) and the envelope sampled at 5 points per B6, as in
# core/receiver/receiver.cpp (span_bandwidths, envelope_samples_per_bandwidth).
SPAN_B6 = 2.0
ENVELOPE_POINTS_PER_B6 = 5.0


def tuned_frequencies(step_hz):
    """start + k·step while <= stop (1e-9 relative slack), as core/receiver tuned_frequencies."""
    count = int(np.floor((BAND_STOP_HZ * (1 + 1e-9) - BAND_START_HZ) / step_hz)) + 2
    f = BAND_START_HZ + np.arange(count) * step_hz
    return f[f <= BAND_STOP_HZ + 1e-9 * BAND_STOP_HZ]


def smooth_size(n):
    """The smallest m >= n with no prime factor above 5 (a fast FFT size)."""
    m = max(n, 1)
    while True:
        r = m
        for p in (2, 3, 5):
            while r % p == 0:
                r //= p
        if r == 1:
            return m
        m += 1


def diode_g(r):
    """g(r) = (sin φ − φ·cos φ)/π, cos φ = r: the half-wave diode's mean charging current per unit
    envelope (docs/references.md §1.4a); r is clipped to [0, 1]."""
    r = np.clip(r, 0.0, 1.0)
    return (np.sqrt(1.0 - r * r) - np.arccos(r) * r) / np.pi


def diode_final_ratio(rc, rd):
    """cos φ_f with tan φ_f − φ_f = π·Rc/Rd: V/e of the diode detector in steady state on a sine."""
    phi = optimize.brentq(lambda p: np.tan(p) - p - np.pi * rc / rd, 0.0, 0.5 * np.pi - 1e-12, xtol=1e-15)
    return np.cos(phi)


def diode_charge_time(rc, rd):
    """The time a suddenly applied constant envelope needs to charge V from 0 to 63 % of its final
    value: ∫ dV / (dV/dt) from 0 to V63 (composite Simpson, 2000 intervals)."""
    v = np.linspace(0.0, (1.0 - np.exp(-1.0)) * diode_final_ratio(rc, rd), 2001)
    inverse_rate = 1.0 / (diode_g(v) / rc - v / rd)
    weights = np.ones(v.size)
    weights[1:-1:2] = 4.0
    weights[2:-1:2] = 2.0
    return (v[1] - v[0]) / 3.0 * np.dot(weights, inverse_rate)


def diode_charge_rc():
    """Rc·C such that the 63 % charge time is CHARGE_S (the definition of the charge constant)."""
    return optimize.brentq(lambda rc: diode_charge_time(rc, DISCHARGE_S) - CHARGE_S, CHARGE_S * 1e-3, CHARGE_S,
                           xtol=1e-15, rtol=1e-13)


def meter_steady_max(u, h):
    """Largest output of the critically damped meter 1/(1 + s·T_L)² driven by the rows of u (one
    period each, samples h apart), in periodic steady state. The meter is discretised with a
    zero-order hold and run with scipy.signal.lfilter; its periodic state is the fixed point of
    z_end = Φ·z_start + z_forced (Φ: the free response over one period, found by running lfilter on
    zeros from each unit state), so one period is filtered twice instead of the ~130 periods a
    1e-6 settling of the 160 ms double pole would take from rest."""
    num, den, _ = signal.cont2discrete(([1.0], [METER_S * METER_S, 2.0 * METER_S, 1.0]), h, method="zoh")
    b, a = np.ravel(num), np.ravel(den)
    order = max(a.size, b.size) - 1
    _, forced = signal.lfilter(b, a, u, axis=1, zi=np.zeros((u.shape[0], order)))
    zeros = np.zeros(u.shape[1])
    phi = np.column_stack([signal.lfilter(b, a, zeros, zi=np.eye(order)[j])[1] for j in range(order)])
    start = np.linalg.solve(np.eye(order) - phi, forced.T).T
    y, _ = signal.lfilter(b, a, u, axis=1, zi=start)
    return y.max(axis=1)


def quasi_peak_trace(env, h, rc, rd, final_ratio):
    """The diode detector's voltage after each envelope sample (rows of env: one period of each
    tuned frequency) in periodic steady state. Heun's method on the linearly interpolated envelope,
    exact exponential decay while the diode is off (core/receiver/detector.cpp's stepper): a Python
    loop over the samples of a period, numpy over the tuned frequencies.

    The steady state is the fixed point V* = P(V*) of the one-period map P. Repeating the period
    converges slowly where the diode is mostly off (a record holding one transient, as here: its
    envelope is one pulse per 20 ms period, V loses only exp(−20/160) per period, and the record
    of receiver_bench needs 42 periods to move less than 1e-6·max e). So each period also carries
    dP/dV through Heun's two stages, and V takes a Newton step on P(V) − V, kept inside the bracket
    that the signs of P(V) − V give (bisection otherwise), for the tuned frequencies whose
    |P(V) − V| is still above 1e-6·max e. Starts from final_ratio·mean(e), exact for a constant
    envelope. The count of periods run is printed on stderr."""
    count, m = env.shape
    et = np.ascontiguousarray(env.T)  # rows are samples: contiguous slices in the loop
    with np.errstate(divide="ignore"):
        inv = np.where(et > 0.0, 1.0 / et, 0.0)
    charge = 1.0 / (np.pi * rc)  # g(r)/(Rc·C) = charge·(sin φ − φ·cos φ)
    inv_d = 1.0 / rd
    decay = np.exp(-h / rd)
    max_e = env.max(axis=1)
    v_all = final_ratio * env.mean(axis=1)
    lo, hi = np.zeros(count), max_e.copy()
    trace = np.empty((m, count))
    active = np.arange(count)
    periods = 0

    def rate_and_slope(v, e, ie):
        """dV/dt and its derivative in V (g'(r) = −φ/π)."""
        r = np.minimum(v * ie, 1.0)
        phi = np.arccos(r)
        on = v < e
        rate = np.where(on, (np.sqrt(1.0 - r * r) - phi * r) * e * charge, 0.0) - v * inv_d
        slope = np.where(on, -charge * phi, 0.0) - inv_d
        return rate, slope

    while active.size > 0 and periods < 100:
        periods += 1
        e_a, inv_a = et[:, active], inv[:, active]
        start = v_all[active]
        v = start.copy()
        dp = np.ones(active.size)
        t = np.empty((m, active.size))
        for i in range(m):
            j = i + 1 if i + 1 < m else 0
            e0, e1, ie0, ie1 = e_a[i], e_a[j], inv_a[i], inv_a[j]
            k1, d1 = rate_and_slope(v, e0, ie0)
            k2, d2 = rate_and_slope(v + h * k1, e1, ie1)
            heun = v + 0.5 * h * (k1 + k2)
            off = (e0 <= v) & (e1 <= v * decay)
            dp *= np.where(off, decay, np.where(heun > 0.0, 1.0 + 0.5 * h * (d1 + d2 * (1.0 + h * d1)), 0.0))
            v = np.where(off, v * decay, np.maximum(heun, 0.0))
            t[i] = v
        trace[:, active] = t
        f = v - start
        done = np.abs(f) <= 1e-6 * max_e[active]
        lo_a, hi_a = lo[active], hi[active]
        lo_a = np.where(f > 0.0, start, lo_a)
        hi_a = np.where(f > 0.0, hi_a, start)
        with np.errstate(divide="ignore", invalid="ignore"):
            step = np.where(dp < 1.0, start - f / (dp - 1.0), 0.5 * (lo_a + hi_a))
        step = np.where((step > lo_a) & (step < hi_a), step, 0.5 * (lo_a + hi_a))
        lo[active], hi[active] = lo_a, hi_a
        v_all[active] = np.where(done, start, step)
        active = active[~done]
    print(f"quasi-peak: {periods} periods to the steady state", file=sys.stderr)
    return trace.T


def interpolated_peak(env):
    """Each row's maximum, refined by a parabola through the logarithms of it and its periodic
    neighbours (exact for a Gaussian pulse; core/receiver/detector.cpp interpolated_peak)."""
    rows = np.arange(env.shape[0])
    i = env.argmax(axis=1)
    m = env.shape[1]
    center, before, after = env[rows, i], env[rows, (i - 1) % m], env[rows, (i + 1) % m]
    with np.errstate(divide="ignore", invalid="ignore"):
        ym, y0, yp = np.log(before), np.log(center), np.log(after)
        curvature = ym - 2.0 * y0 + yp
        offset = 0.5 * (ym - yp) / curvature
        refined = np.exp(y0 - 0.25 * (ym - yp) * offset)
    ok = (before > 0) & (after > 0) & (center > 0) & (curvature < 0)
    return np.where(ok, refined, center)


def dbuv(volts_rms):
    with np.errstate(divide="ignore"):
        return np.where(volts_rms > 0.0, 20.0 * np.log10(volts_rms / 1e-6), -400.0)


def scan(x, fs, step_hz):
    n = x.size
    bin_hz = fs / n
    period_s = n / fs
    spectrum = np.fft.rfft(x) * (2.0 / n)  # peak complex amplitude of a cosine on each bin
    f = tuned_frequencies(step_hz)
    half = SPAN_B6 * B6_HZ
    first = np.maximum(1, np.ceil((f - half) / bin_hz).astype(np.int64))
    last = np.minimum(n // 2, np.floor((f + half) / bin_hz).astype(np.int64))
    span = int((last - first).max()) + 1
    m = smooth_size(max(int(np.floor(2.0 * half / bin_hz)) + 1, int(np.ceil(ENVELOPE_POINTS_PER_B6 * B6_HZ * period_s)),
                        16))
    index = first[:, None] + np.arange(span)[None, :]
    inside = index <= last[:, None]
    index = np.minimum(index, n // 2)
    gain = np.where(inside, np.exp2(-(2.0 * (index * bin_hz - f[:, None]) / B6_HZ) ** 2), 0.0)
    # The lines of each tuned frequency from its first bin on: the envelope is the magnitude of
    # their unscaled inverse DFT over the period (M >= span: no folding).
    env = np.abs(np.fft.ifft(spectrum[index] * gain, n=m, axis=1, norm="forward"))
    h = period_s / m

    peak = interpolated_peak(env) / np.sqrt(2.0)
    average = meter_steady_max(env, h) / np.sqrt(2.0)
    rc = diode_charge_rc()
    ratio = diode_final_ratio(rc, DISCHARGE_S)
    trace = quasi_peak_trace(env, h, rc, DISCHARGE_S, ratio)
    quasi_peak = meter_steady_max(trace, h) / (ratio * np.sqrt(2.0))
    return np.column_stack([f, dbuv(peak), dbuv(quasi_peak), dbuv(average)]), rc, m


def main():
    record, fs, step_hz, out = sys.argv[1], float(sys.argv[2]), float(sys.argv[3]), sys.argv[4]
    runs = int(sys.argv[5]) if len(sys.argv) > 5 else 1
    x = np.fromfile(record, dtype="<f8")
    best_wall, best_cpu = 1e300, 1e300
    for _ in range(runs):
        wall0, cpu0 = time.perf_counter(), time.process_time()
        readings, rc, m = scan(x, fs, step_hz)
        best_wall = min(best_wall, time.perf_counter() - wall0)
        best_cpu = min(best_cpu, time.process_time() - cpu0)
    print(f"Rc*C {rc * 1e3:.4f} ms, envelope {m} points, {readings.shape[0]} tuned frequencies", file=sys.stderr)
    readings.astype("<f8").tofile(out)
    print(f"{best_wall:.6f} {best_cpu:.6f}")


if __name__ == "__main__":
    main()
