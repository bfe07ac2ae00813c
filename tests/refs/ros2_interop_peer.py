"""Cyclone DDS peer of the real-ROS 2 interop scenario (nodes/ros2/examples/ros2_probe, `interop`).

On one DDS domain with the r2r nodes (namespace --r2r) and the pure-Rust DDS companion
sillage_dds (namespace --dds), this peer, an independent DDS implementation (PyPI `cyclonedds`,
types from dds_types.py written from the .msg files):
- publishes /clock (simulated time from --sim-start) and chem samples into both namespaces;
- reads both arbiters' search_state.
It writes what it read as JSON (--report); the probe judges it. Bounded by --seconds.
"""

import argparse
import json
import time

import dds_types as T
from cyclonedds.domain import DomainParticipant
from cyclonedds.pub import DataWriter
from cyclonedds.qos import Policy, Qos
from cyclonedds.sub import DataReader
from cyclonedds.topic import Topic

SEC = 1_000_000_000
# XCDR1, as ROS 2 uses it; the QoS of sillage's classes (nodes/ros2/src/qos.rs documents them
# as the ROS 2 sensor_data and default presets, and latched state).
XCDR1 = Policy.DataRepresentation(use_cdrv0_representation=True)
SENSOR = Qos(Policy.Reliability.BestEffort, Policy.History.KeepLast(5), Policy.Durability.Volatile, XCDR1)
LATCHED = Qos(Policy.Reliability.Reliable(max_blocking_time=0), Policy.History.KeepLast(1), Policy.Durability.TransientLocal, XCDR1)


def main() -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--domain", type=int, default=0)
    ap.add_argument("--r2r", default="/robot1")
    ap.add_argument("--dds", default="/robot2")
    ap.add_argument("--sim-start", type=int, default=5000, help="simulated time at the start [s]")
    ap.add_argument("--seconds", type=float, default=10.0)
    ap.add_argument("--report", required=True)
    a = ap.parse_args()

    dp = DomainParticipant(a.domain)
    clock_w = DataWriter(dp, Topic(dp, "rt/clock", T.Clock), SENSOR)
    chem_w = [DataWriter(dp, Topic(dp, f"rt{ns}/chem", T.ChemSample), SENSOR) for ns in (a.r2r, a.dds)]
    state_r = {ns: DataReader(dp, Topic(dp, f"rt{ns}/search_state", T.SearchState), LATCHED) for ns in (a.r2r, a.dds)}
    seen = {ns: [] for ns in state_r}
    start = time.monotonic()
    t0 = a.sim_start * SEC
    sim = t0
    k = 0
    while time.monotonic() - start < a.seconds:
        sim = t0 + int((time.monotonic() - start) * SEC)
        clock_w.write(T.Clock(T.Time.of(sim)))
        if k % 2 == 0:
            v = 1.0 + 0.5 * ((k // 50) % 2)  # a square wave: events on every edge
            s = T.ChemSample(T.Header(T.Time.of(sim), "base_link"), ["left", "right"], [v, v], 0)
            for w in chem_w:
                w.write(s)
        for ns, r in state_r.items():
            for x in r.take(64):
                if isinstance(x, T.SearchState):
                    seen[ns].append({"stamp": x.header.stamp.ns(), "mode": int(x.mode), "reason": x.reason})
        k += 1
        time.sleep(0.01)
    report = {"clock": [t0, sim], "search_state": seen, "chem_published": (k + 1) // 2}
    with open(a.report, "w") as f:
        json.dump(report, f)
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
