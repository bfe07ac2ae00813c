#!/usr/bin/env python3
"""Make the event-train cross-correlation fixtures in tests/fixtures/bearing/xcorr_cases.json.

The bearing decoder finds the coarse inter-sensor lag as the peak of the binned event-train
cross-correlation of two onset trains, smoothed with a triangular kernel. This script computes
the same quantities with general-purpose reference libraries, on event trains it draws itself
(numpy's seeded PCG64 generator, so the output is the same byte for byte):

  * numpy 2.4.6: onset bins `numpy.floor_divide(t_ns, bin_ns)` and counts per bin
    (`numpy.bincount`);
  * scipy 1.17.1: `scipy.signal.correlate(B, A, mode="full", method="direct")` with
    `scipy.signal.correlation_lags(len(B), len(A), mode="full")`, restricted to
    |lag| <= k_max bins (lag = bin(b) - bin(a): positive when train a leads);
    `scipy.signal.convolve(C, K, mode="same", method="direct")` with the triangular kernel
    K[j] = w + 1 - |j|, |j| <= w; the peak is `numpy.argmax` (first maximum) of the smoothed
    correlogram, none when it is all zero.

Output: {"cases": [{"name", "bin_ns", "k_max", "kernel", "a_ns", "b_ns", "true_lag_s",
"jitter_s", "counts", "smoothed", "peak_bins"}]}, counts and smoothed indexed by lag + k_max.

Usage: python tests/refs/bearing_xcorr.py [OUTPUT]   (default: the committed fixture path)
"""

from __future__ import annotations

import sys

import numpy as np
import scipy.signal

from bearing_common import FIXTURE_DIR, FixtureError, run

DEFAULT_OUT = FIXTURE_DIR / "xcorr_cases.json"
MS = 1_000_000


def correlogram(a, b, bin_ns: int, k_max: int) -> np.ndarray:
    """Restricted binned cross-correlation C[k + k_max] = sum_n A[n] B[n + k]."""
    out = np.zeros(2 * k_max + 1, dtype=np.int64)
    if len(a) == 0 or len(b) == 0:
        return out
    ia = np.floor_divide(np.asarray(a, dtype=np.int64), bin_ns)
    ib = np.floor_divide(np.asarray(b, dtype=np.int64), bin_ns)
    lo = min(ia.min(), ib.min())
    n = int(max(ia.max(), ib.max()) - lo + 1)
    counts_a = np.bincount(ia - lo, minlength=n)
    counts_b = np.bincount(ib - lo, minlength=n)
    full = scipy.signal.correlate(counts_b, counts_a, mode="full", method="direct")
    lags = scipy.signal.correlation_lags(len(counts_b), len(counts_a), mode="full")
    keep = np.abs(lags) <= k_max
    out[lags[keep] + k_max] = full[keep]
    return out


def smoothed(counts: np.ndarray, w: int) -> np.ndarray:
    kernel = w + 1 - np.abs(np.arange(-w, w + 1, dtype=np.int64))
    return scipy.signal.convolve(counts, kernel, mode="same", method="direct")


def self_check():
    """The correlate/correlation_lags sign convention: b one bin after a gives lag +1."""
    c = correlogram([0], [5 * MS], 5 * MS, 2)
    if c.tolist() != [0, 0, 0, 1, 0]:
        raise FixtureError(f"scipy lag convention check failed: {c.tolist()}")
    if smoothed(np.array([0, 1, 0, 0, 2, 0, 0]), 2).tolist() != [2, 3, 4, 5, 6, 4, 2]:
        raise FixtureError("triangular smoothing check failed")


def trains(rng, n, lag_s, jitter_s, spurious, missed, t0_ns=1_000 * MS, span_s=10.0):
    """Onsets of a: n times in the span (at least 0.3 s apart); b: a + lag + jitter, some missed,
    plus spurious onsets on both."""
    gaps = 0.3 + rng.exponential(span_s / max(n, 1), size=n)
    a = t0_ns + np.round(np.cumsum(gaps) * 1e9).astype(np.int64)
    b = a + np.round((lag_s + jitter_s * rng.standard_normal(n)) * 1e9).astype(np.int64)
    b = b[rng.random(n) >= missed]
    extra = int(round(spurious * n))
    a = np.concatenate([a, t0_ns + np.round(rng.random(extra) * span_s * 1e9).astype(np.int64)])
    b = np.concatenate([b, t0_ns + np.round(rng.random(extra) * span_s * 1e9).astype(np.int64)])
    return np.sort(a), np.sort(b)


def case(name, a, b, bin_ns, k_max, kernel, true_lag_s, jitter_s):
    c = correlogram(a, b, bin_ns, k_max)
    s = smoothed(c, kernel)
    peak = None if s.max() == 0 else int(np.argmax(s)) - k_max
    return {
        "name": name, "bin_ns": int(bin_ns), "k_max": int(k_max), "kernel": int(kernel),
        "a_ns": [int(x) for x in a], "b_ns": [int(x) for x in b],
        "true_lag_s": float(true_lag_s), "jitter_s": float(jitter_s),
        "counts": [int(x) for x in c], "smoothed": [int(x) for x in s], "peak_bins": peak,
    }


def build():
    rng = np.random.default_rng(20_240_611)
    cases = []
    # d = 0.2 m, U = 0.5 m/s, 25 % margin: lags up to 0.5 s = 100 bins of 5 ms; w = 0.1 s.
    a, b = trains(rng, 15, 0.120, 0.0, 0.0, 0.0)
    cases.append(case("clean_positive", a, b, 5 * MS, 100, 20, 0.120, 0.0))
    a, b = trains(rng, 20, -0.250, 0.015, 0.2, 0.1)
    cases.append(case("noisy_negative_spurious_missed", a, b, 5 * MS, 100, 20, -0.250, 0.015))
    a, b = trains(rng, 12, 0.0, 0.005, 0.0, 0.0, t0_ns=1_700_000_000_000_000_000)
    cases.append(case("zero_lag_at_epoch_scale", a, b, 5 * MS, 100, 20, 0.0, 0.005))
    a, b = trains(rng, 10, 0.040, 0.002, 0.0, 0.0, t0_ns=-12_000 * MS)
    cases.append(case("negative_stamps", a, b, 5 * MS, 100, 20, 0.040, 0.002))
    # Two onsets of b in one bin: counts above one.
    a = np.array([1_000 * MS, 2_000 * MS], dtype=np.int64)
    b = np.array([1_061 * MS, 1_062 * MS, 2_060 * MS], dtype=np.int64)
    cases.append(case("several_onsets_per_bin", a, b, 5 * MS, 20, 2, 0.060, 0.0))
    # A tie between -60 ms and +60 ms: the first maximum (the negative lag) wins.
    a = np.array([5_000 * MS], dtype=np.int64)
    b = np.array([4_940 * MS, 5_060 * MS], dtype=np.int64)
    cases.append(case("tie_first_maximum", a, b, 5 * MS, 20, 2, -0.060, 0.0))
    # The only partner is beyond the lag window: no peak.
    a = np.array([1_000 * MS], dtype=np.int64)
    b = np.array([1_800 * MS], dtype=np.int64)
    cases.append(case("beyond_window", a, b, 5 * MS, 100, 20, 0.8, 0.0))
    cases.append(case("empty_train", np.array([1_000 * MS]), np.array([], dtype=np.int64), 5 * MS, 10, 2, 0.0, 0.0))
    # 1 ms bins with no smoothing, and random cases over bins, windows and kernels.
    a, b = trains(rng, 25, -0.0173, 0.0, 0.0, 0.0)
    cases.append(case("fine_bins_no_kernel", a, b, 1 * MS, 300, 0, -0.0173, 0.0))
    for k in range(8):
        bin_ms = int(rng.choice([2, 5, 10]))
        k_max = int(rng.integers(20, 150))
        kernel = int(rng.integers(0, 15))
        lag = float(np.round(rng.uniform(-0.8, 0.8) * k_max * bin_ms * 1e-3, 4))
        jitter = float(rng.choice([0.0, 0.005, 0.02]))
        a, b = trains(rng, int(rng.integers(5, 40)), lag, jitter, float(rng.choice([0.0, 0.3])), 0.1)
        cases.append(case(f"random_{k}", a, b, bin_ms * MS, k_max, kernel, lag, jitter))
    return {"cases": cases}


def build_checked():
    self_check()
    return build()


if __name__ == "__main__":
    sys.exit(run(__doc__, DEFAULT_OUT, "bearing_xcorr", build_checked))
