#!/usr/bin/env python3
"""The Python peer of `sillage replay` for tests/bench/peer.sh: what a practitioner would write
to get events and bouts out of a rosbag2 bag with the usual libraries.

1. read: rosbags' AnyReader (rosbags 0.11.9, pinned in tests/refs/requirements.txt) opens the
   bag, deserializes every /chem, /wind and /odom message (the types come from the bag's own
   schemas) and collects them into numpy arrays;
2. per chem channel: log-conductance -ln(R), baseline removal (first-order low-pass with a
   300 s time constant, scipy.signal.lfilter), a Gaussian low-pass (sigma 0.03 s,
   scipy.ndimage.gaussian_filter1d), the derivative (np.gradient), exponential smoothing with a
   0.3 s half-life (lfilter([a], [1, a - 1]), a = 1 - 2**(-dt/hl)), bouts (maximal runs of
   rises of the smoothed derivative, amplitude over a threshold of 5 x the MAD-based noise of
   the first 5 s), bout rate over 20 s windows every 0.5 s (np.searchsorted), and
   send-on-delta events (delta 0.05 on the conditioned value: report when |x - x_ref| >= delta,
   "Send-on-delta concept", Sensors 6(1):49-63, 2006) in a plain Python loop;
3. wind speed and direction, odometry path length (numpy).

The method mirrors what sillage's nodes do (references in docs/references.md) but is not
meant to give the same numbers; the benchmark compares the cost of the whole job.

Prints one summary line on stdout and the read / compute split on stderr.
Usage: python tests/bench/peer_pipeline.py BAG_DIR
"""

from __future__ import annotations

import sys
import time
from pathlib import Path

import numpy as np
from rosbags.highlevel import AnyReader
from scipy import ndimage, signal

DT = 0.01
DELTA = 0.05
HALF_LIFE = 0.3
BASELINE_TAU = 300.0
SIGMA = 0.03
WINDOW = 20.0
STEP = 0.5
LEARN = 5.0
NOISE_FACTOR = 5.0
MAD_TO_SIGMA = 1.482602218505602


def read(bag: Path):
    chem_t, chem_v, wind, odom = [], [], [], []
    with AnyReader([bag]) as reader:
        conns = [c for c in reader.connections if c.topic in ("/chem", "/wind", "/odom")]
        for conn, _log_time, raw in reader.messages(connections=conns):
            msg = reader.deserialize(raw, conn.msgtype)
            stamp = msg.header.stamp.sec + 1e-9 * msg.header.stamp.nanosec
            if conn.topic == "/chem":
                chem_t.append(stamp)
                chem_v.append(msg.values)
            elif conn.topic == "/wind":
                wind.append((stamp, msg.vector.x, msg.vector.y))
            else:
                p = msg.pose.pose.position
                odom.append((stamp, p.x, p.y))
    return np.asarray(chem_t), np.asarray(chem_v, dtype=float), np.asarray(wind), np.asarray(odom)


def send_on_delta(x: np.ndarray, delta: float) -> int:
    """Events of the last-sent rule, one per delta step crossed."""
    ref = float(x[0])
    events = 0
    for v in x.tolist():
        while v - ref >= delta:
            ref += delta
            events += 1
        while ref - v >= delta:
            ref -= delta
            events += 1
    return events


def bouts(t: np.ndarray, x: np.ndarray):
    """Bout onsets and amplitudes of one conditioned channel."""
    g = ndimage.gaussian_filter1d(x, SIGMA / DT)
    d = np.gradient(g, DT)
    a = 1.0 - 2.0 ** (-DT / HALF_LIFE)
    e = signal.lfilter([a], [1.0, a - 1.0], d, zi=[d[0] * (1.0 - a)])[0]
    rising = np.diff(e) > 0
    edges = np.diff(rising.astype(np.int8))
    onsets = np.flatnonzero(edges == 1) + 1
    peaks = np.flatnonzero(edges == -1) + 1
    if peaks.size and onsets.size and peaks[0] < onsets[0]:
        peaks = peaks[1:]
    n = min(onsets.size, peaks.size)
    onsets, peaks = onsets[:n], peaks[:n]
    amp = e[peaks] - e[onsets]
    clean = e[t < t[0] + LEARN]
    threshold = NOISE_FACTOR * MAD_TO_SIGMA * np.median(np.abs(clean - np.median(clean)))
    keep = (amp > threshold) & (e[peaks] > 0)
    return t[onsets[keep]], amp[keep]


def main() -> None:
    bag = Path(sys.argv[1])
    t_start = time.perf_counter()
    chem_t, chem_v, wind, odom = read(bag)
    t_read = time.perf_counter()
    b = 1.0 - np.exp(-DT / BASELINE_TAU)
    grid = np.arange(chem_t[0] + WINDOW, chem_t[-1], STEP)
    out = []
    for ch in range(chem_v.shape[1]):
        y = -np.log(chem_v[:, ch])
        base = signal.lfilter([b], [1.0, b - 1.0], y, zi=[y[0] * (1.0 - b)])[0]
        x = y - base
        onset_t, amp = bouts(chem_t, x)
        rate = (np.searchsorted(onset_t, grid) - np.searchsorted(onset_t, grid - WINDOW)) / WINDOW
        events = send_on_delta(x, DELTA)
        out.append((events, onset_t.size, float(rate.mean()), float(amp.mean()) if amp.size else float("nan")))
    speed = np.hypot(wind[:, 1], wind[:, 2])
    direction = np.arctan2(wind[:, 2], wind[:, 1])
    path = float(np.sum(np.hypot(np.diff(odom[:, 1]), np.diff(odom[:, 2]))))
    t_end = time.perf_counter()
    per = "; ".join(f"ch{i}: {e} events, {n} bouts, mean rate {r:.3f} Hz" for i, (e, n, r, _) in enumerate(out))
    print(f"python peer: {chem_t.size} chem, {len(wind)} wind, {len(odom)} odom; {per}; "
          f"wind {speed.mean():.3f} m/s at {np.degrees(np.mean(direction)):.1f} deg; path {path:.1f} m")
    print(f"python peer timing: read {t_read - t_start:.2f} s, compute {t_end - t_read:.2f} s", file=sys.stderr)


if __name__ == "__main__":
    main()
