#!/usr/bin/env python3
"""Make the source mapper's reference fixture tests/fixtures/mapper/mapper_refs.json.

Two parts, both computed here without any of the mapper's code:
  * "k0": the modified Bessel function K0 by scipy.special.k0 and ln K0 by
    log(scipy.special.k0e(z)) - z (k0e(z) = e^z K0(z), no underflow for large z), at
    arguments from 1e-3 to 900.
  * "posterior": a brute-force grid posterior over the source position. For every step and
    every cell centre r0, the encounter rate of Vergassola, Villermaux & Shraiman (Nature 445,
    2007; the infotaxis paper), R(r|r0) = R / ln(lambda/a) * exp(s V / (2D)) * K0(|r - r0| /
    lambda), lambda = sqrt(D tau / (1 + V^2 tau / (4D))), s = (r - r0) . u the downwind
    distance (u the unit wind direction, V its speed), with the mapper's two documented
    conventions: distances below a count as a, and ln(lambda/a) is floored at ln 2. The
    expected hits are mu = dt R, K0 from scipy.special.k0e; the log likelihood of the step's
    hit count is scipy.stats.poisson.logpmf(k, mu); the posterior is the normalised
    exp(sum of log likelihoods) over a uniform prior. Entropy by scipy.stats.entropy, mean and
    covariance by numpy (np.average, np.cov with aweights, bias=True).

The path, winds and hit counts are a hand-made test case (not a simulation); one step has a
wind strong enough for the ln 2 floor to apply, one a robot at a cell centre (the a clamp).

Reference libraries (exact versions pinned in tests/refs/requirements.txt; the script refuses
to run with other versions): numpy 2.4.6, scipy 1.17.1.

Output: JSON, floats written by Python's repr (shortest round-trip form).
Usage: python tests/refs/mapper_refs.py [OUTPUT]   (default: the committed fixture path)
"""

from __future__ import annotations

import argparse
import json
import re
import sys
from importlib.metadata import version
from pathlib import Path

import numpy as np
import scipy.special
import scipy.stats

ROOT = Path(__file__).resolve().parents[2]
DEFAULT_OUT = ROOT / "tests" / "fixtures" / "mapper" / "mapper_refs.json"
REQUIREMENTS = ROOT / "tests" / "refs" / "requirements.txt"
PINNED = ("numpy", "scipy")

GRID = {"origin": [-6.0, -4.5], "resolution": 0.5, "width": 24, "height": 18}
MODEL = {"diffusivity": 0.1, "lifetime": 20.0, "emission_rate": 4.0, "detector_radius": 0.1}
# (robot x, robot y, wind x, wind y [m/s, where the air goes to], hits, dt [s])
STEPS = [
    (4.0, 0.2, 0.5, 0.05, 0, 0.5),
    (3.6, 0.4, 0.5, 0.0, 1, 0.5),
    (3.2, 0.9, 0.45, -0.1, 0, 0.5),
    (2.75, 0.75, 0.5, 0.1, 2, 0.5),   # a cell centre: the robot sits on a candidate source
    (2.4, -0.3, 0.6, 0.0, 0, 0.5),
    (2.0, -1.1, 2.5, 0.3, 0, 0.5),    # strong wind: lambda < 2a, the ln 2 floor applies
    (1.5, -0.6, 0.5, 0.0, 1, 0.5),
    (1.1, 0.3, 0.4, 0.2, 0, 1.0),
    (0.6, 0.1, 0.0, 0.0, 0, 0.5),     # still air: isotropic
    (0.2, 0.5, 0.5, -0.05, 1, 0.5),
]


def check_versions() -> None:
    """Refuse to run with library versions other than the pinned ones."""
    pins = dict(re.findall(r"^([A-Za-z0-9_.-]+)==(\S+)", REQUIREMENTS.read_text(encoding="utf-8"), re.M))
    wrong = [f"{n} {version(n)} (pinned {pins.get(n)})" for n in PINNED if pins.get(n) != version(n)]
    if wrong:
        sys.exit(f"installed versions differ from {REQUIREMENTS}: {', '.join(wrong)}; run `bash tests/refs/venv.sh`")


def k0_cases() -> list[dict]:
    z = np.concatenate([np.geomspace(1e-3, 900.0, 160), [0.5, 2.0, 4.0, 32.0, 544.0]])
    return [{"z": float(x), "k0": float(scipy.special.k0(x)),
             "ln_k0": float(np.log(scipy.special.k0e(x)) - x)} for x in np.sort(z)]


def posterior_case() -> dict:
    g, m = GRID, MODEL
    xs = g["origin"][0] + (np.arange(g["width"]) + 0.5) * g["resolution"]
    ys = g["origin"][1] + (np.arange(g["height"]) + 0.5) * g["resolution"]
    cx, cy = np.meshgrid(xs, ys)  # shape (height, width): row j, column i
    d_, tau, rate, a = m["diffusivity"], m["lifetime"], m["emission_rate"], m["detector_radius"]
    log_post = np.zeros_like(cx)
    floored = 0
    for rx, ry, wx, wy, hits, dt in STEPS:
        v = np.hypot(wx, wy)
        ux, uy = (wx / v, wy / v) if v > 0 else (1.0, 0.0)
        lam = np.sqrt(d_ * tau / (1.0 + v * v * tau / (4.0 * d_)))
        ratio = np.log(lam / a)
        floored += ratio < np.log(2.0)
        ratio = max(ratio, np.log(2.0))
        dist = np.maximum(np.hypot(rx - cx, ry - cy), a)
        s = (rx - cx) * ux + (ry - cy) * uy
        z = dist / lam
        mu = np.exp(np.log(dt * rate / ratio) + s * v / (2.0 * d_) + np.log(scipy.special.k0e(z)) - z)
        log_post += scipy.stats.poisson.logpmf(hits, mu)
    if floored != 1:
        sys.exit(f"the case must exercise the ln 2 floor exactly once, not {floored} times")
    p = np.exp(log_post - log_post.max())
    p /= p.sum()
    flat = p.ravel()  # row-major, x fastest: index j * width + i
    px, py = cx.ravel(), cy.ravel()
    cov = np.cov(np.vstack([px, py]), aweights=flat, bias=True)
    return {
        "grid": g, "model": m,
        "steps": [{"robot": [rx, ry], "wind": [wx, wy], "hits": k, "dt": dt} for rx, ry, wx, wy, k, dt in STEPS],
        "probabilities": [float(x) for x in flat],
        "mean": [float(np.average(px, weights=flat)), float(np.average(py, weights=flat))],
        "covariance": [[float(cov[0, 0]), float(cov[0, 1])], [float(cov[1, 0]), float(cov[1, 1])]],
        "entropy": float(scipy.stats.entropy(flat)),
        "map_index": int(np.argmax(flat)),
    }


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("out", nargs="?", type=Path, default=DEFAULT_OUT)
    args = ap.parse_args()
    check_versions()
    doc = {
        "generator": "tests/refs/mapper_refs.py",
        "libraries": {name: version(name) for name in PINNED},
        "k0": k0_cases(),
        "posterior": posterior_case(),
    }
    args.out.parent.mkdir(parents=True, exist_ok=True)
    args.out.write_text(json.dumps(doc, indent=None, separators=(",", ":")) + "\n", encoding="utf-8")


if __name__ == "__main__":
    main()
