#!/usr/bin/env python3
"""Make the reference values of the world's wind field, room and MOX law in
nodes/world/tests/fixtures/world_field_refs.json.

Independent implementations with general-purpose libraries (versions pinned in
tests/refs/requirements.txt):
  * coloured-noise meander: for each (std, tau, dt), the analytic values of the discrete
    first-order (AR(1)) process x' = a x + std sqrt(1 - a^2) n, a = exp(-dt / tau) (the exact
    sampling of an Ornstein-Uhlenbeck process, a standard result): variance, autocorrelation
    at lags 1..K, the integral time scale summed to lag 3 tau (trapezoid), the time
    constant -dt / ln rho(1) (= tau) and the large-sample standard errors
    of the estimators; and the same estimates (numpy) from a series simulated here with
    scipy.signal.lfilter driven by numpy's PCG64 generator, so the test can compare the
    estimators on our series with scipy's series as well as with the analytic values.
  * grid wind: the streamfunction of the discrete potential-flow problem of
    nodes/world/src/wind_grid.rs (module docs) for one arena with two obstacles and a solid
    edge, solved directly with scipy.sparse.linalg.spsolve (one extra unknown per floating
    obstacle with its zero-circulation equation), then the face velocities, their discrete
    divergence (numpy) and the normal velocity on solid faces.
  * well-mixed room: C(t) = Q / (V lambda) (1 - exp(-lambda t)), lambda = ACH / 3600, and
    Q t / V for a sealed room (textbook single-zone ventilation model).
  * MOX law Rs/R0 = (1 + C/C0)^-beta at concentrations over six decades and its local
    log-log slope by numpy.gradient, which tends to -beta (the power law of Clifford and
    Tuma) at C >> C0 and to 0 in clean air.

Usage: python tests/refs/world_field_refs.py [OUTPUT]   (default: the committed fixture path)
"""

from __future__ import annotations

import json
import math
import sys
from pathlib import Path

import numpy as np
import scipy
from scipy import signal, sparse
from scipy.sparse import linalg

ROOT = Path(__file__).resolve().parents[2]
DEFAULT_OUT = ROOT / "nodes/world/tests/fixtures/world_field_refs.json"

LAGS = 40


def acf(x: np.ndarray, lags: int) -> np.ndarray:
    x = x - x.mean()
    n = len(x)
    f = np.fft.rfft(x, 2 * n)
    r = np.fft.irfft(f * np.conj(f))[: lags + 1]
    r = r / (n - np.arange(lags + 1))
    return r / r[0]


def integral_time(rho: np.ndarray, dt: float) -> float:
    # Trapezoid rule over the lags given (0..L).
    return float(dt * (rho.sum() - 0.5 * rho[0] - 0.5 * rho[-1]))


def meander_cases():
    out = []
    rng = np.random.Generator(np.random.PCG64(20260))
    for std, tau, dt, n in ((0.25, 6.0, 0.05, 400_000), (0.6, 2.0, 1.0, 200_000), (0.08, 3.0, 0.25, 200_000)):
        a = math.exp(-dt / tau)
        lags = np.arange(LAGS + 1)
        rho = a ** lags
        horizon = int(math.ceil(3 * tau / dt))  # integral time scale summed to lag 3 tau
        tint = integral_time(a ** np.arange(horizon + 1), dt)
        x0 = std * rng.standard_normal()
        e = std * math.sqrt(1 - a * a) * rng.standard_normal(n)
        x, _ = signal.lfilter([1.0], [1.0, -a], e, zi=[a * x0])
        r = acf(x, max(LAGS, horizon))
        out.append({
            "std": std, "tau": tau, "dt": dt, "n": n, "horizon": horizon,
            "analytic": {
                "variance": std * std,
                "acf": rho.tolist(),
                "integral_time": tint,
                "tau_from_lag1": tau,
                # Large-sample standard errors for an AR(1) series of n samples.
                "se_variance": std * std * math.sqrt(2.0 * (1 + a * a) / ((1 - a * a) * n)),
                "se_acf1": math.sqrt((1 - a * a) / n),
            },
            "scipy_series": {
                "variance": float(np.var(x)),
                "acf": r[: LAGS + 1].tolist(),
                "integral_time": integral_time(r[: horizon + 1], dt),
                "tau_from_lag1": float(-dt / np.log(r[1])),
            },
        })
    return out


def flow_case():
    x0, y0, x1, y1, res = 0.0, 0.0, 8.0, 5.0, 0.5
    boxes = [(3.0, 2.0, 4.0, 3.0), (6.0, 0.0, 6.5, 1.0)]
    solid_edges = {"north"}
    corners = np.array([[1.0, 0.2], [0.6, -0.4], [0.9, 0.5], [1.2, 0.0]])  # SW, SE, NE, NW
    nx, ny = round((x1 - x0) / res), round((y1 - y0) / res)
    hx, hy = (x1 - x0) / nx, (y1 - y0) / ny
    X, Y = np.meshgrid(x0 + hx * np.arange(nx + 1), y0 + hy * np.arange(ny + 1))  # [j, i]
    owner = -np.ones(X.shape, dtype=int)
    for k, (bx0, by0, bx1, by1) in enumerate(boxes):
        m = (X >= bx0 - hx / 2) & (X <= bx1 + hx / 2) & (Y >= by0 - hy / 2) & (Y <= by1 + hy / 2)
        owner[m & (owner < 0)] = k  # the two boxes do not touch
    edge = np.zeros(X.shape, dtype=bool)
    edge[0, :] = edge[-1, :] = edge[:, 0] = edge[:, -1] = True

    def far(x, y):
        a, b = (x - x0) / (x1 - x0), (y - y0) / (y1 - y0)
        w = np.array([(1 - a) * (1 - b), a * (1 - b), a * b, (1 - a) * b])
        return w @ corners

    # Perimeter counter-clockwise from the south-west corner: (i, j, edge of the segment).
    per = [(i, 0, "south") for i in range(nx)] + [(nx, j, "east") for j in range(ny)]
    per += [(i, ny, "north") for i in range(nx, 0, -1)] + [(0, j, "west") for j in range(ny, 0, -1)]
    flux, lengths = [], []
    for k, (i, j, e) in enumerate(per):
        i2, j2, _ = per[(k + 1) % len(per)]
        p1 = np.array([x0 + i * hx, y0 + j * hy])
        p2 = np.array([x0 + i2 * hx, y0 + j2 * hy])
        t = p2 - p1
        blocked = owner[j, i] >= 0 and owner[j2, i2] >= 0
        lengths.append(float(np.hypot(*t)))
        if e in solid_edges or blocked:
            flux.append(None)
        else:
            m = far(*(0.5 * (p1 + p2)))
            flux.append(float(m[0] * t[1] - m[1] * t[0]))
    net = sum(f for f in flux if f is not None)
    open_len = sum(l for f, l in zip(flux, lengths) if f is not None)
    psi_b = {}
    acc = 0.0
    for k, (i, j, _) in enumerate(per):
        psi_b[(i, j)] = acc
        if flux[k] is not None:
            acc += flux[k] - net * lengths[k] / open_len

    # Unknowns: fluid interior nodes, then one constant per obstacle not touching the edge.
    fixed_box = {}
    for (i, j), v in psi_b.items():
        if owner[j, i] >= 0:
            fixed_box.setdefault(int(owner[j, i]), v)
    floating = [k for k in range(len(boxes)) if k not in fixed_box]
    fluid = [(i, j) for j in range(1, ny) for i in range(1, nx) if owner[j, i] < 0]
    index = {n: q for q, n in enumerate(fluid)}
    gidx = {k: len(fluid) + q for q, k in enumerate(floating)}
    size = len(fluid) + len(floating)
    A = sparse.lil_matrix((size, size))
    rhs = np.zeros(size)
    wx, wy = 1 / hx**2, 1 / hy**2

    def term(row, i, j, w):
        # Adds w * psi(i, j) to equation `row` (known values go to the right-hand side).
        if owner[j, i] >= 0 and not edge[j, i]:
            k = int(owner[j, i])
            if k in fixed_box:
                rhs[row] -= w * fixed_box[k]
            else:
                A[row, gidx[k]] += w
        elif edge[j, i]:
            rhs[row] -= w * psi_b[(i, j)]
        else:
            A[row, index[(i, j)]] += w

    for (i, j), row in index.items():
        A[row, row] = -2 * (wx + wy)
        for di, dj, w in ((-1, 0, wx), (1, 0, wx), (0, -1, wy), (0, 1, wy)):
            term(row, i + di, j + dj, w)
    for k in floating:
        row = gidx[k]
        for j in range(1, ny):
            for i in range(1, nx):
                if owner[j, i] != k:
                    continue
                for di, dj, w in ((-1, 0, wx), (1, 0, wx), (0, -1, wy), (0, 1, wy)):
                    ni, nj = i + di, j + dj
                    if owner[nj, ni] < 0:
                        term(row, ni, nj, w)
                        A[row, gidx[k]] -= w
    sol = linalg.spsolve(A.tocsr(), rhs)
    psi = np.zeros(X.shape)
    for (i, j), v in psi_b.items():
        psi[j, i] = v
    for (i, j), q in index.items():
        psi[j, i] = sol[q]
    for j in range(ny + 1):
        for i in range(nx + 1):
            if owner[j, i] >= 0 and not edge[j, i]:
                k = int(owner[j, i])
                psi[j, i] = fixed_box[k] if k in fixed_box else sol[gidx[k]]
    u = (psi[1:, :] - psi[:-1, :]) / hy  # [j, i], (ny, nx + 1)
    v = -(psi[:, 1:] - psi[:, :-1]) / hx  # (ny + 1, nx)
    div = np.diff(u, axis=1) / hx + np.diff(v, axis=0) / hy
    solid = owner >= 0
    u_solid = u[solid[1:, :] & solid[:-1, :]]
    v_solid = v[solid[:, 1:] & solid[:, :-1]]
    return {
        "arena": [x0, y0, x1, y1], "resolution": res, "obstacles": [list(b) for b in boxes],
        "solid_walls": sorted(solid_edges), "corners": corners.tolist(), "nx": nx, "ny": ny,
        "u": u.ravel().tolist(), "v": v.ravel().tolist(),
        "max_abs_divergence": float(np.abs(div).max()),
        "max_abs_solid_face_velocity": float(max(np.abs(u_solid).max(), np.abs(v_solid).max(),
                                                 np.abs(v[-1, :]).max())),
    }


def room_cases():
    out = []
    for q, volume, ach in ((1e-3, 1440.0, 90.0), (2e-3, 360.0, 4.0), (5e-4, 500.0, 0.0)):
        lam = ach / 3600.0
        t = np.array([0.0, 1.0, 17.5, 60.0, 240.0, 900.0, 3600.0])
        c = q * t / volume if lam == 0 else q / (volume * lam) * (1 - np.exp(-lam * t))
        out.append({"q": q, "volume": volume, "ach": ach, "t": t.tolist(), "c": c.tolist()})
    return out


def mox_cases():
    out = []
    for r0, c0, beta in ((50_000.0, 1e-4, 0.5), (20_000.0, 1e-5, 0.35), (80_000.0, 3e-4, 0.8)):
        c = c0 * np.logspace(-3, 3, 61)
        rs = r0 * (1 + c / c0) ** -beta
        slope = np.gradient(np.log(rs), np.log(c))
        out.append({"r0": r0, "c0": c0, "beta": beta, "c": c.tolist(), "rs": rs.tolist(),
                    "loglog_slope": slope.tolist()})
    return out


def main() -> None:
    out = Path(sys.argv[1]) if len(sys.argv) > 1 else DEFAULT_OUT
    data = {
        "made_by": f"tests/refs/world_field_refs.py with numpy {np.__version__}, scipy {scipy.__version__}",
        "meander": meander_cases(),
        "flow": flow_case(),
        "room": room_cases(),
        "mox": mox_cases(),
    }
    out.parent.mkdir(parents=True, exist_ok=True)
    out.write_text(json.dumps(data, indent=1, sort_keys=True) + "\n")


if __name__ == "__main__":
    main()
