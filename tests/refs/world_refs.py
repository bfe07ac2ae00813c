#!/usr/bin/env python3
"""Make the world crate's reference values in nodes/world/tests/fixtures/world_refs.json.

Independent implementations with general-purpose libraries (versions pinned in
tests/refs/requirements.txt):
  * Briggs (1973) sigma_y / sigma_z, rural and urban, classes A-F, from the coefficient
    table of the project's references (written here as a table, not as code branches), at
    several downwind distances (numpy 2.4.6).
  * Reflected Gaussian plume concentrations at world points for a source, wind direction and
    receptor heights (numpy), with the downwind/crosswind rotation done by numpy matrices;
    each case also gives the crosswind mass flux (u C integrated over y and z >= 0 with
    scipy.integrate.dblquad, scipy 1.17.1), which must equal Q.
  * First-order step responses of 1 / (tau s + 1) simulated by scipy.signal.lsim: the
    crossing times of 10 %, 63.2 % and 90 % of the final value for the MOX rise and decay
    time constants (1.8 s and 11.1 s).

Usage: python tests/refs/world_refs.py [OUTPUT]   (default: the committed fixture path)
"""

from __future__ import annotations

import json
import math
import sys
from pathlib import Path

import numpy as np
import scipy
from scipy import integrate, signal

ROOT = Path(__file__).resolve().parents[2]
DEFAULT_OUT = ROOT / "nodes/world/tests/fixtures/world_refs.json"

# (a, b, kind) per sigma: kind "isqrt" a x (1 + b x)^-1/2, "lin" a x, "inv" a x (1 + b x)^-1,
# "sqrt" a x (1 + b x)^1/2.
BRIGGS = {
    ("rural", "A"): ((0.22, 1e-4, "isqrt"), (0.20, 0.0, "lin")),
    ("rural", "B"): ((0.16, 1e-4, "isqrt"), (0.12, 0.0, "lin")),
    ("rural", "C"): ((0.11, 1e-4, "isqrt"), (0.08, 2e-4, "isqrt")),
    ("rural", "D"): ((0.08, 1e-4, "isqrt"), (0.06, 1.5e-3, "isqrt")),
    ("rural", "E"): ((0.06, 1e-4, "isqrt"), (0.03, 3e-4, "inv")),
    ("rural", "F"): ((0.04, 1e-4, "isqrt"), (0.016, 3e-4, "inv")),
    ("urban", "A"): ((0.32, 4e-4, "isqrt"), (0.24, 1e-3, "sqrt")),
    ("urban", "B"): ((0.32, 4e-4, "isqrt"), (0.24, 1e-3, "sqrt")),
    ("urban", "C"): ((0.22, 4e-4, "isqrt"), (0.20, 0.0, "lin")),
    ("urban", "D"): ((0.16, 4e-4, "isqrt"), (0.14, 3e-4, "isqrt")),
    ("urban", "E"): ((0.11, 4e-4, "isqrt"), (0.08, 1.5e-3, "isqrt")),
    ("urban", "F"): ((0.11, 4e-4, "isqrt"), (0.08, 1.5e-3, "isqrt")),
}


def sigma(coef: tuple[float, float, str], x: np.ndarray) -> np.ndarray:
    a, b, kind = coef
    factor = {
        "isqrt": lambda: (1.0 + b * x) ** -0.5,
        "lin": lambda: np.ones_like(x),
        "inv": lambda: 1.0 / (1.0 + b * x),
        "sqrt": lambda: (1.0 + b * x) ** 0.5,
    }[kind]()
    return a * x * factor


def plume(q, u, sy, sz, y, z, h):
    return (q / (2 * np.pi * u * sy * sz) * np.exp(-y**2 / (2 * sy**2))
            * (np.exp(-((z - h) ** 2) / (2 * sz**2)) + np.exp(-((z + h) ** 2) / (2 * sz**2))))


def briggs_cases():
    xs = np.array([50.0, 100.0, 300.0, 1000.0, 3000.0, 10000.0])
    out = []
    for (terrain, cls), (cy, cz) in sorted(BRIGGS.items()):
        for x, sy, sz in zip(xs, sigma(cy, xs), sigma(cz, xs)):
            out.append({"terrain": terrain, "class": cls, "x": float(x), "sigma_y": float(sy), "sigma_z": float(sz)})
    return out


def plume_cases():
    cases = [
        # class, terrain, q [g/s], u [m/s], wind direction [rad], source (x, y, h), receptor (x, y, z)
        ("D", "rural", 100.0, 5.0, 0.0, (0.0, 0.0, 50.0), (1000.0, 50.0, 0.0)),
        ("B", "urban", 2.0, 3.0, 0.7, (10.0, -5.0, 10.0), (400.0, 300.0, 2.0)),
        ("F", "rural", 0.5, 1.5, -2.0, (0.0, 0.0, 1.0), (-150.0, -400.0, 1.5)),
        ("E", "urban", 1.0, 2.0, math.pi / 2, (5.0, 5.0, 0.0), (-20.0, 800.0, 0.0)),
    ]
    out = []
    for cls, terrain, q, u, direction, src, rec in cases:
        cy, cz = BRIGGS[(terrain, cls)]
        rot = np.array([[math.cos(direction), math.sin(direction)], [-math.sin(direction), math.cos(direction)]])
        x, y = rot @ (np.array(rec[:2]) - np.array(src[:2]))
        sy, sz = float(sigma(cy, np.array([x]))[0]), float(sigma(cz, np.array([x]))[0])
        c = float(plume(q, u, sy, sz, y, rec[2], src[2]))
        flux, _ = integrate.dblquad(lambda zz, yy: u * plume(q, u, sy, sz, yy, zz, src[2]),
                                    -12 * sy, 12 * sy, 0.0, src[2] + 12 * sz, epsabs=0, epsrel=1e-10)
        out.append({"class": cls, "terrain": terrain, "q": q, "u": u, "direction": direction,
                    "source": list(src), "receptor": list(rec), "downwind": float(x), "crosswind": float(y),
                    "concentration": c, "flux": flux})
    return out


def step_cases():
    out = []
    for tau in (1.8, 11.1):
        t = np.linspace(0.0, 8.0 * tau, 400_001)
        _, y, _ = signal.lsim(signal.lti([1.0], [tau, 1.0]), np.ones_like(t), t)
        crossings = {}
        for name, level in (("t10", 0.1), ("t63", 1.0 - math.exp(-1.0)), ("t90", 0.9)):
            k = int(np.argmax(y >= level))
            crossings[name] = float(t[k - 1] + (level - y[k - 1]) * (t[k] - t[k - 1]) / (y[k] - y[k - 1]))
        out.append({"tau": tau, **crossings})
    return out


def main() -> None:
    out = Path(sys.argv[1]) if len(sys.argv) > 1 else DEFAULT_OUT
    data = {
        "made_by": f"tests/refs/world_refs.py with numpy {np.__version__}, scipy {scipy.__version__}",
        "briggs": briggs_cases(),
        "plume": plume_cases(),
        "first_order_step": step_cases(),
    }
    out.parent.mkdir(parents=True, exist_ok=True)
    out.write_text(json.dumps(data, indent=1, sort_keys=True) + "\n")


if __name__ == "__main__":
    main()
