#!/usr/bin/env python3
"""Make the plane-wave fixtures in tests/fixtures/bearing/planewave_cases.json.

Reference values for the bearing decoder's geometry, computed with general-purpose libraries:

  * Two sensors, stationary (the plane-wave relation of docs/references.md "Bilateral
    direction": lag = d sin(theta) / U): the front-half bearing `numpy.arcsin(numpy.clip(U lag
    / d, -1, 1))` (numpy 2.4.6) for given delays, spacings and air speeds, including lags
    beyond the plane-wave bound (clamped) and the published check values (d = 0.2 m,
    U = 0.5 m/s, theta = 30 deg gives 0.200 s; 10 ms at theta = 0 gives 1.43 deg).
  * Two sensors on a moving robot: the forward model lag = b.u / (U + v.u) (u: the unit vector
    towards the source, v: the sensors' velocity) inverted numerically with
    `scipy.optimize.brentq` (scipy 1.17.1) on the front half (-pi/2, pi/2), an independent
    check of the closed-form inversion.
  * Three or more sensors: slowness from weighted linear least squares,
    `numpy.linalg.lstsq(sqrt(w) R, sqrt(w) lag)` with rows R = p_b - p_a over all pairs a < b;
    bearing = atan2(-s), apparent speed = 1 / |s|, weighted rms residual.

Output: {"pairs": [...], "moving_pairs": [...], "fits": [...]} (see the keys below); angles in
radians, times in seconds, positions in metres, base_link (x forward, y left).

Usage: python tests/refs/bearing_planewave.py [OUTPUT]   (default: the committed fixture path)
"""

from __future__ import annotations

import itertools
import math
import sys

import numpy as np
import scipy.optimize

from bearing_common import FIXTURE_DIR, FixtureError, run

DEFAULT_OUT = FIXTURE_DIR / "planewave_cases.json"


def pair_cases():
    out = []
    for d in (0.1, 0.2, 0.4):
        for speed in (0.3, 0.5, 1.5):
            for lag in (-0.9, -0.2, -0.01, 0.0, 0.01, 0.05, 0.2, 0.5, 1.2):
                lag = lag * d / 0.2 / speed * 0.5  # scale so every (d, U) sees the same ratios
                ratio = speed * lag / d
                out.append({"d": d, "speed": speed, "lag": lag, "ratio": ratio,
                            "clamped": bool(abs(ratio) > 1.0),
                            "front_bearing": float(np.arcsin(np.clip(ratio, -1.0, 1.0)))})
    # The published check values.
    lag30 = 0.2 * math.sin(math.radians(30.0)) / 0.5
    if abs(lag30 - 0.200) > 1e-12:
        raise FixtureError(f"check value: lag {lag30} != 0.200 s")
    sens = math.degrees(float(np.arcsin(0.5 * 0.010 / 0.2)))
    if abs(sens - 1.43) > 0.005:
        raise FixtureError(f"check value: sensitivity {sens} deg != 1.43 deg")
    out.append({"d": 0.2, "speed": 0.5, "lag": lag30, "ratio": 0.5 * lag30 / 0.2, "clamped": False,
                "front_bearing": math.radians(30.0)})
    return out


def moving_cases(rng):
    out = []
    for _ in range(24):
        d = float(rng.uniform(0.1, 0.5))
        speed = float(rng.uniform(0.3, 2.0))
        vx = float(rng.uniform(0.0, 0.8 * speed))
        vy = float(rng.uniform(-0.05, 0.05))
        theta = float(rng.uniform(-1.3, 1.3))
        u = np.array([math.cos(theta), math.sin(theta)])
        b = np.array([0.0, d])
        v = np.array([vx, vy])
        lag = float(b @ u / (speed + v @ u))

        def f(t):
            ut = np.array([math.cos(t), math.sin(t)])
            return b @ ut / (speed + v @ ut) - lag

        root = scipy.optimize.brentq(f, -math.pi / 2 + 1e-9, math.pi / 2 - 1e-9, xtol=1e-14, rtol=1e-14)
        if abs(root - theta) > 1e-9:
            raise FixtureError(f"brentq found {root}, the forward model used {theta}")
        out.append({"d": d, "speed": speed, "vx": vx, "vy": vy, "lag": lag, "front_bearing": float(root)})
    return out


def fit_cases(rng):
    layouts = [
        [(0.0, 0.1), (0.0, -0.1), (0.173, 0.0)],
        [(0.1, 0.1), (0.1, -0.1), (-0.1, -0.1), (-0.1, 0.1)],
        [(0.0, 0.15), (0.0, -0.15), (0.3, 0.0), (-0.2, 0.05), (0.05, 0.02)],
    ]
    out = []
    for k in range(12):
        pos = np.array(layouts[k % len(layouts)])
        theta = float(rng.uniform(-math.pi, math.pi))
        c = float(rng.uniform(0.2, 3.0))
        s_true = -np.array([math.cos(theta), math.sin(theta)]) / c
        pairs = list(itertools.combinations(range(len(pos)), 2))
        rows = np.array([pos[b] - pos[a] for a, b in pairs])
        noise = float(rng.choice([0.0, 0.002, 0.01]))
        lags = rows @ s_true + noise * rng.standard_normal(len(pairs))
        weights = rng.uniform(0.5, 5.0, size=len(pairs)) if k % 2 else np.ones(len(pairs))
        sw = np.sqrt(weights)
        s, *_ = np.linalg.lstsq(rows * sw[:, None], lags * sw, rcond=None)
        resid = rows @ s - lags
        out.append({
            "positions": pos.tolist(),
            "pairs": [list(p) for p in pairs],
            "lags": lags.tolist(),
            "weights": weights.tolist(),
            "slowness": s.tolist(),
            "bearing": float(math.atan2(-s[1], -s[0])),
            "speed": float(1.0 / np.linalg.norm(s)),
            "residual": float(math.sqrt(np.sum(weights * resid**2) / np.sum(weights))),
            "true_bearing": theta,
            "true_speed": c,
        })
    return out


def build():
    rng = np.random.default_rng(7_031_985)
    return {"pairs": pair_cases(), "moving_pairs": moving_cases(rng), "fits": fit_cases(rng)}


if __name__ == "__main__":
    sys.exit(run(__doc__, DEFAULT_OUT, "bearing_planewave", build))
