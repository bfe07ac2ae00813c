#!/usr/bin/env python3
"""Make the plume estimator's reference fixture tests/fixtures/plume/plume_filters.json.

Every filter stage of the bout chain computed by scipy.signal on the same input, the bouts by
an independent vectorised numpy implementation, and the distance-model fit by numpy least
squares with explicit leave-one-out refits. The Rust tests (nodes/plume_estimator/tests/
scipy_reference.rs) design their own coefficients from dt and must agree within 1e-9
(normwise relative: max|rust - ref| <= 1e-9 * max|ref|).

Reference libraries (exact versions pinned in tests/refs/requirements.txt; the script refuses
to run with other versions): numpy 2.4.6, scipy 1.17.1.
  * Gaussian low-pass: scipy.signal.windows.gaussian(2r+1, std=sigma/dt), r = floor(4 s + 0.5)
    (scipy.ndimage.gaussian_filter1d's default truncation), normalised to sum 1, applied with
    scipy.signal.lfilter (causal: the kernel delayed by its radius).
  * Butterworth low-pass: scipy.signal.butter(N, fc, output="sos", fs=fs) + sosfilt.
  * First difference: lfilter([1/dt, -1/dt], [1], u).
  * Exponential smoothing: the first-order IIR lfilter([alpha], [1, alpha - 1], d) with
    alpha = 1 - 2**(-dt / half_life) (half-life form as summarised in docs/references.md).
  * FIR low-pass differentiator: np.convolve(firwin(N, fc, window="hamming", fs=fs), [1, -1])
    / dt, applied with lfilter.
  Every stage starts at the steady state of its first input: zi = lfilter_zi(b, a) * u[0]
  (sosfilt_zi(sos) * u[0] for the Butterworth), which is how the Rust chain primes itself.
  * Bouts: maximal runs of strict rises of the smoothed derivative (np.diff > 0), onset = the
    run's first sample, peak = its last, amplitude = e[peak] - e[onset]; a run still rising at
    the end is not a bout; bouts below the threshold are dropped, and with positive_peak so are
    runs whose smoothed derivative is <= 0 at the peak. Threshold = noise_factor *
    1.4826 * median(|e - median(e)|) over the clean-air start (np.median).
  * Calibration: ln(d) = c0 + c1 r [+ c2 ln a] by np.linalg.lstsq; R^2, residual std
    sqrt(SSE/(n-p)), in-sample RMSE [m], leave-one-out by refitting without each point.

Inputs are synthetic (seeded numpy Generator): clean air, then square concentration pulses
through an asymmetric first-order sensor response (tau_rise 1.8 s, tau_decay 11.1 s, the
values docs/references.md quotes as unverified; here they only shape a test signal) plus
Gaussian noise, sampled at 100 Hz and 20 Hz.

Output: JSON, floats written by Python's repr (shortest round-trip form).
Usage: python tests/refs/plume_filters.py [OUTPUT]   (default: the committed fixture path)
"""

from __future__ import annotations

import argparse
import json
import re
import sys
from importlib.metadata import version
from pathlib import Path

import numpy as np
from scipy import signal

ROOT = Path(__file__).resolve().parents[2]
DEFAULT_OUT = ROOT / "tests" / "fixtures" / "plume" / "plume_filters.json"
REQUIREMENTS = ROOT / "tests" / "refs" / "requirements.txt"
PINNED = ("numpy", "scipy")

MAD_TO_SIGMA = 1.482602218505602
CLEAN_AIR_S = 3.0


def check_versions() -> None:
    """Refuse to run with library versions other than the pinned ones."""
    pins = dict(re.findall(r"^([A-Za-z0-9_.-]+)==(\S+)", REQUIREMENTS.read_text(encoding="utf-8"), re.M))
    wrong = [f"{n} {version(n)} (pinned {pins.get(n)})" for n in PINNED if pins.get(n) != version(n)]
    if wrong:
        sys.exit(f"installed versions differ from {REQUIREMENTS}: {', '.join(wrong)}; run `bash tests/refs/venv.sh`")


def sensor_signal(rng: np.random.Generator, dt: float, duration: float) -> np.ndarray:
    """Clean air, then random square pulses through an asymmetric first-order response."""
    n = int(round(duration / dt))
    t = np.arange(n) * dt
    conc = np.zeros(n)
    arrival = CLEAN_AIR_S + 0.5
    while arrival < duration - 1.0:
        width = rng.uniform(0.1, 0.4)
        conc[(t >= arrival) & (t < arrival + width)] += rng.lognormal(0.0, 0.5)
        arrival += rng.exponential(1.2) + 0.2
    tau_rise, tau_decay = 1.8, 11.1
    y = np.zeros(n)
    for k in range(1, n):
        tau = tau_rise if conc[k] > y[k - 1] else tau_decay
        y[k] = y[k - 1] + (conc[k] - y[k - 1]) * (1.0 - np.exp(-dt / tau))
    return 1.0 + 0.2 * y + rng.normal(0.0, 2e-4, n)


def steady_lfilter(b, a, u):
    return signal.lfilter(b, a, u, zi=signal.lfilter_zi(b, a) * u[0])[0]


def gaussian_kernel(sigma: float, dt: float) -> np.ndarray:
    s = sigma / dt
    radius = int(np.floor(4.0 * s + 0.5))
    w = signal.windows.gaussian(2 * radius + 1, std=s)
    return w / w.sum()


def bouts_numpy(e: np.ndarray, threshold: float, positive_peak: bool) -> dict:
    rise = np.diff(e) > 0
    edges = np.diff(np.concatenate(([False], rise, [False])).astype(np.int8))
    onsets = np.flatnonzero(edges == 1)
    peaks = np.flatnonzero(edges == -1)
    closed = peaks < rise.size
    onsets, peaks = onsets[closed], peaks[closed]
    amp = e[peaks] - e[onsets]
    keep = (amp >= threshold) & ((e[peaks] > 0) | (not positive_peak))
    return {
        "candidates": int(onsets.size),
        "onsets": onsets[keep].tolist(),
        "peaks": peaks[keep].tolist(),
        "amplitudes": amp[keep].tolist(),
    }


def robust_sigma(v: np.ndarray) -> float:
    med = np.median(v)
    return float(MAD_TO_SIGMA * np.median(np.abs(v - med)))


def bout_case(name: str, e: np.ndarray, dt: float, noise_factor: float, positive_peak: bool) -> dict:
    clean = int(round(CLEAN_AIR_S / dt))
    sigma = robust_sigma(e[:clean])
    threshold = noise_factor * sigma
    return {"signal": name, "noise_samples": clean, "noise_sigma": sigma, "noise_factor": noise_factor,
            "threshold": threshold, "positive_peak": positive_peak, **bouts_numpy(e, threshold, positive_peak)}


def filter_case(name: str, rng: np.random.Generator, dt: float, duration: float) -> dict:
    fs = 1.0 / dt
    x = sensor_signal(rng, dt, duration)

    sigma = 0.03
    h = gaussian_kernel(sigma, dt)
    y_gauss = steady_lfilter(h, [1.0], x)

    butter = []
    for order, cutoff in ((2, 2.0), (5, 1.5)):
        sos = signal.butter(order, cutoff, output="sos", fs=fs)
        y = signal.sosfilt(sos, x, zi=signal.sosfilt_zi(sos) * x[0])[0]
        butter.append({"order": order, "cutoff": cutoff, "y": y.tolist()})

    y_diff = steady_lfilter([1.0 / dt, -1.0 / dt], [1.0], y_gauss)
    half_life = 0.3
    alpha = 1.0 - 2.0 ** (-dt / half_life)
    y_ema = steady_lfilter([alpha], [1.0, alpha - 1.0], y_diff)

    fir_cutoff, fir_length = 2.0, 1.0
    numtaps = int(round(fir_length / dt))
    numtaps += 1 - numtaps % 2
    taps = np.convolve(signal.firwin(numtaps, fir_cutoff, window="hamming", fs=fs), [1.0, -1.0]) / dt
    y_fir = steady_lfilter(taps, [1.0], x)

    return {
        "name": name,
        "dt": dt,
        "x": x.tolist(),
        "gaussian": {"sigma": sigma, "kernel": h.tolist(), "y": y_gauss.tolist()},
        "butterworth": butter,
        "difference": {"input": "gaussian", "y": y_diff.tolist()},
        "ema": {"input": "difference", "half_life": half_life, "alpha": alpha, "y": y_ema.tolist()},
        "fir": {"cutoff": fir_cutoff, "length": fir_length, "numtaps": numtaps, "taps": taps.tolist(),
                "y": y_fir.tolist()},
        "bouts": [bout_case(signal_name, y, dt, 5.0, positive)
                  for signal_name, y in (("ema", y_ema), ("fir", y_fir)) for positive in (True, False)],
    }


def lstsq_fit(X: np.ndarray, y: np.ndarray):
    coef, *_ = np.linalg.lstsq(X, y, rcond=None)
    return coef


def calibration_case(rng: np.random.Generator) -> dict:
    d = np.repeat(np.array([0.5, 0.9, 1.3, 1.8, 2.4, 3.0]), 4)
    rate = 1.6 * np.exp(-d / 1.1) * rng.lognormal(0.0, 0.15, d.size)
    amp = 0.05 * np.exp(-d / 2.0) * rng.lognormal(0.0, 0.3, d.size)
    y = np.log(d)
    out = {"points": np.column_stack([rate, amp, d]).tolist()}
    for key, cols in (("rate_only", [rate]), ("with_amplitude", [rate, np.log(amp)])):
        X = np.column_stack([np.ones_like(rate), *cols])
        coef = lstsq_fit(X, y)
        fitted = X @ coef
        sse = float(np.sum((y - fitted) ** 2))
        sst = float(np.sum((y - y.mean()) ** 2))
        n, p = X.shape
        loo_ln = np.empty(n)
        for i in range(n):
            mask = np.arange(n) != i
            loo_ln[i] = X[i] @ lstsq_fit(X[mask], y[mask])
        loo_d = np.exp(loo_ln)
        out[key] = {
            "coef": coef.tolist(),
            "r_squared": 1.0 - sse / sst,
            "residual_std": float(np.sqrt(sse / (n - p))),
            "rmse": float(np.sqrt(np.mean((np.exp(fitted) - d) ** 2))),
            "loo_rmse": float(np.sqrt(np.mean((loo_d - d) ** 2))),
            "loo_rmse_ln": float(np.sqrt(np.mean((loo_ln - y) ** 2))),
            "loo_mean_relative": float(np.mean(np.abs(loo_d - d) / d)),
        }
    return out


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("out", nargs="?", type=Path, default=DEFAULT_OUT)
    args = ap.parse_args()
    check_versions()
    rng = np.random.default_rng(20260214)
    doc = {
        "generator": "tests/refs/plume_filters.py",
        "libraries": {name: version(name) for name in PINNED},
        "cases": [filter_case("100hz", rng, 0.01, 15.0), filter_case("20hz", rng, 0.05, 30.0)],
        "calibration": calibration_case(rng),
    }
    for case in doc["cases"]:
        for b in case["bouts"]:
            if len(b["onsets"]) < 3 or b["candidates"] <= len(b["onsets"]):
                sys.exit(f"case {case['name']}/{b['signal']}: the threshold must keep some runs and drop others "
                         f"({len(b['onsets'])} of {b['candidates']} kept)")
    args.out.parent.mkdir(parents=True, exist_ok=True)
    args.out.write_text(json.dumps(doc, indent=None, separators=(",", ":")) + "\n", encoding="utf-8")


if __name__ == "__main__":
    main()
