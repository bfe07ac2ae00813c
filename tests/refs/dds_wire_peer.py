#!/usr/bin/env python3
"""Wire test peer: plays a scripted scene into a running `sillage_dds` over Cyclone DDS
(PyPI `cyclonedds`, an independent DDS implementation) and checks what comes back.

Run by tests/refs/ci_dds_wire.sh inside a network namespace of its own; never on its own
against a real robot. The scene (simulated time, published here on /clock):

  1. normal   chem (two MOX channels, odor bouts), wind, odom (on the remapped topic) and
              e_stop = false; expect cmd_vel within the caps of the parameter file and a
              search_state that leaves HALTED once every input is fresh;
  2. bad      malformed ChemSample and Bool CDR, std_msgs/String on e_stop (wrong type), a
              flood of chem: sillage must keep running, count and report each, stay in caps;
  3. e-stop   e_stop = true in the middle of another flood: a zero twist at once and mode
              HALTED;
  4. after    more wrong-type and malformed e-stop samples: still halted, still zero.
  5. e-stop QoS  an e-stop publisher of each of the four QoS combinations a user may have
              (reliable or best effort, volatile or transient local), each in a participant
              of its own: it must match sillage's e_stop subscription; then, with the robot
              moving again (e_stop = false and e_stop_reset), its e_stop = true must bring a
              zero twist; the time from the write to the first zero twist is measured.

Each check prints PASS/FAIL with its numbers; the last line is "wire: N passed, M failed".
Documented behaviour relied on (nodes/arbiter/src/lib.rs and node.rs): e_stop = true zeroes
cmd_vel in the very call that receives it and publishes a HALTED search_state; the latch
releases only on e_stop_reset after e_stop = false; every command obeys the guard caps.
Every loop here is bounded in count and wall time.
"""

import argparse
import json
import math
import sys
import multiprocessing as mp
import os
import time
from pathlib import Path

from ruamel.yaml import YAML

import dds_types as T
from cyclonedds.domain import DomainParticipant
from cyclonedds.pub import DataWriter
from cyclonedds.qos import Policy, Qos
from cyclonedds.sub import DataReader
from cyclonedds.topic import Topic

HALTED = 4  # sillage_msgs/SearchState.HALTED
MODES = {0: "WAITING", 1: "SURGING", 2: "CASTING", 3: "DECLARED", 4: "HALTED"}
SEC = 1_000_000_000

# XCDR1, as ROS 2 uses it (sillage's codec refuses XCDR2 encapsulations).
XCDR1 = Policy.DataRepresentation(use_cdrv0_representation=True)
SENSOR = Qos(Policy.Reliability.BestEffort, Policy.History.KeepLast(5), Policy.Durability.Volatile, XCDR1)
RELIABLE = Qos(Policy.Reliability.Reliable(max_blocking_time=0), Policy.History.KeepLast(10), Policy.Durability.Volatile, XCDR1)
LATCHED = Qos(Policy.Reliability.Reliable(max_blocking_time=0), Policy.History.KeepLast(1), Policy.Durability.TransientLocal, XCDR1)
# The flood writer keeps up to 1000 samples queued so it can outpace the reader.
FLOOD = Qos(Policy.Reliability.BestEffort, Policy.History.KeepLast(1000), Policy.Durability.Volatile, XCDR1)


def arbiter_params(path: str, fqn: str) -> dict:
    """The arbiter's flat parameters from a ROS 2 parameter file, with the key selection and
    merge order of sillage_core::params (/**, **, bare name, fully qualified name)."""
    doc = YAML(typ="safe").load(Path(path).read_text()) or {}
    flat: dict = {}

    def walk(prefix: str, v):
        if isinstance(v, dict):
            for k, x in v.items():
                walk(f"{prefix}.{k}" if prefix else str(k), x)
        else:
            flat[prefix] = v

    bare = fqn.rsplit("/", 1)[-1]
    for key in ["/**", "**", bare, fqn.lstrip("/"), fqn]:
        section = doc.get(key) or {}
        walk("", section.get("ros__parameters") or {})
    return flat


class Report:
    def __init__(self):
        self.rows = []

    def check(self, name: str, ok: bool, detail: str):
        self.rows.append({"check": name, "ok": bool(ok), "detail": detail})
        print(f"{'PASS' if ok else 'FAIL'} {name}: {detail}", flush=True)

    def failed(self) -> int:
        return sum(1 for r in self.rows if not r["ok"])


class Peer:
    def __init__(self, a):
        self.a = a
        self.ns = a.namespace.rstrip("/")
        self.dp = DomainParticipant(a.domain)
        # Wrong layouts under sillage type names live in a participant of their own.
        self.bad_dp = DomainParticipant(a.domain)
        self.t0 = a.sim_start * SEC
        self.m0 = time.monotonic()
        self.wall_end = self.m0 + a.budget

        def topic(dp, name, cls):
            return Topic(dp, f"rt{self.ns}/{name}" if not name.startswith("/") else f"rt{name}", cls)

        dp = self.dp
        self.clock_w = DataWriter(dp, topic(dp, "/clock", T.Clock), SENSOR)
        self.chem_w = DataWriter(dp, topic(dp, "chem", T.ChemSample), SENSOR)
        self.wind_w = DataWriter(dp, topic(dp, "wind", T.Vector3Stamped), SENSOR)
        self.odom_w = DataWriter(dp, topic(dp, a.odom_topic, T.Odometry), SENSOR)
        self.estop_w = DataWriter(dp, topic(dp, "e_stop", T.Bool), LATCHED)
        self.cmd_type = T.TwistStamped if a.stamped else T.Twist
        self.cmd_r = DataReader(dp, topic(dp, "cmd_vel", self.cmd_type), RELIABLE)
        self.state_r = DataReader(dp, topic(dp, "search_state", T.SearchState), LATCHED)
        self.diag_r = DataReader(dp, topic(dp, "/diagnostics", T.DiagnosticArray), RELIABLE)
        bd = self.bad_dp
        self.cut_w = DataWriter(bd, topic(bd, "chem", T.ChemSampleCut), SENSOR)
        self.long_w = DataWriter(bd, topic(bd, "e_stop", T.BoolTooLong), LATCHED)
        self.string_w = DataWriter(bd, topic(bd, "e_stop", T.String), LATCHED)
        self.cmds = []  # (wall s, sim ns at receipt, twist)
        self.states = []  # (wall s, SearchState)
        self.diags = []  # (wall s, DiagnosticArray)
        self.sent = {"chem": 0, "cut": 0, "long": 0, "string": 0}
        self.next_due = {}
        self.flood_count = mp.get_context("spawn").Value("q", 0)

    # --- time -----------------------------------------------------------------------------
    def sim_now(self) -> int:
        return self.t0 + int((time.monotonic() - self.m0) * SEC)

    def wall(self) -> float:
        return time.monotonic() - self.m0

    def out_of_time(self) -> bool:
        return time.monotonic() > self.wall_end

    # --- traffic --------------------------------------------------------------------------
    def header(self, t: int, frame: str) -> T.Header:
        return T.Header(T.Time.of(t), frame)

    def chem_values(self, t: int):
        """Two MOX resistances [ohm]: 40 kOhm in clean air, bouts of odor every 1.3 s that
        halve it, reaching the left sensor 0.15 s before the right one."""
        s = (t - self.t0) / SEC
        def r(delay):
            phase = (s - delay) % 1.3
            dip = math.exp(-((phase - 0.4) / 0.12) ** 2) if s > 1.0 else 0.0
            return 40000.0 * (1.0 - 0.5 * dip)
        return [r(0.0), r(0.15)]

    def due(self, name: str, period: float, t: int) -> bool:
        nxt = self.next_due.get(name, 0)
        if t >= nxt:
            self.next_due[name] = t + int(period * SEC)
            return True
        return False

    def publish_scene(self, x: float):
        t = self.sim_now()
        self.clock_w.write(T.Clock(T.Time.of(t)))
        if self.due("chem", 0.05, t):
            self.chem_w.write(T.ChemSample(self.header(t, "nose"), ["left", "right"], self.chem_values(t), 0))
            self.sent["chem"] += 1
        if self.due("wind", 0.1, t):
            # Air moving towards -x in base_link: upwind is straight ahead.
            self.wind_w.write(T.Vector3Stamped(self.header(t, "base_link"), T.Vector3(-0.6, 0.0, 0.0)))
        if self.due("odom", 0.05, t):
            pose = T.PoseWithCovariance(T.Pose(T.Point(x, 0.0, 0.0), T.Quaternion()))
            self.odom_w.write(T.Odometry(self.header(t, "odom"), "base_link", pose))

    def pump(self):
        now_w, now_s = self.wall(), self.sim_now()
        for s in self.cmd_r.take(256):
            if getattr(s, "sample_info", None) is None or not s.sample_info.valid_data:
                continue  # writer gone or disposed: no data
            tw = s.twist if self.a.stamped else s
            self.cmds.append((now_w, now_s, tw, s.header.stamp.ns() if self.a.stamped else None))
        for s in self.state_r.take(64):
            if getattr(s, "sample_info", None) is not None and s.sample_info.valid_data:
                self.states.append((now_w, s))
        for s in self.diag_r.take(64):
            if getattr(s, "sample_info", None) is not None and s.sample_info.valid_data:
                self.diags.append((now_w, s))

    def run(self, seconds: float, x: float, during=None):
        end = self.wall() + seconds
        steps = int(seconds / 0.01) + 10
        for _ in range(steps):
            if self.wall() >= end or self.out_of_time():
                break
            self.publish_scene(x)
            if during:
                during()
            self.pump()
            time.sleep(0.01)

    def flood(self, seconds: float, limit: int) -> "mp.process.BaseProcess":
        """Starts a flood of chem in a process of its own (so it cannot hold this process's
        interpreter lock and stall the scene's clock); returns the process."""
        proc = mp.get_context("spawn").Process(
            target=flood_process, args=(self.a.domain, f"rt{self.ns}/chem", seconds, limit, self.t0, self.m0, self.flood_count)
        )
        proc.start()
        return proc

    # --- discovery ------------------------------------------------------------------------
    def wait_matched(self, timeout: float) -> dict:
        pairs = {
            "clock": self.clock_w, "chem": self.chem_w, "wind": self.wind_w, "odom": self.odom_w, "e_stop": self.estop_w,
            "cut": self.cut_w, "long": self.long_w,
        }
        readers = {"cmd_vel": self.cmd_r, "search_state": self.state_r, "diagnostics": self.diag_r}
        end = time.monotonic() + timeout
        matched = {}
        for _ in range(int(timeout / 0.05) + 1):
            matched = {k: w.get_publication_matched_status().current_count for k, w in pairs.items()}
            matched.update({k: r.get_subscription_matched_status().current_count for k, r in readers.items()})
            if all(v >= 1 for v in matched.values()) or time.monotonic() > end:
                break
            time.sleep(0.05)
        return matched

    def transport(self):
        """Counters of sillage's transport status from the latest diagnostics."""
        for _, d in reversed(self.diags):
            for st in d.status:
                if st.name == "sillage_dds: transport":
                    return {kv.key: kv.value for kv in st.values}, d.header.stamp.ns()
        return None, None


# Flood samples per second: 25 times sillage's --max-input-rate of 200 Hz (environment
# SILLAGE_WIRE_FLOOD_RATE overrides it, to probe harder floods by hand).
FLOOD_RATE = float(os.environ.get("SILLAGE_WIRE_FLOOD_RATE", "5000"))


def flood_process(domain: int, dds_topic: str, seconds: float, limit: int, t0: int, m0: float, count) -> None:
    """Writes ChemSamples on `dds_topic` at about FLOOD_RATE per second (bursts of 50), at
    most `limit` of them and for at most `seconds` after its writer matched (matching itself
    waits at most 10 s)."""
    dp = DomainParticipant(domain)
    w = DataWriter(dp, Topic(dp, dds_topic, T.ChemSample), FLOOD)
    for _ in range(200):
        if w.get_publication_matched_status().current_count >= 1:
            break
        time.sleep(0.05)
    start = time.monotonic()
    end = start + seconds
    n = 0
    while n < limit and time.monotonic() < end:
        for _ in range(50):
            t = t0 + int((time.monotonic() - m0) * SEC)
            w.write(T.ChemSample(T.Header(T.Time.of(t), "nose"), ["left", "right"], [1000.0, 1000.0], 0))
            n += 1
        ahead = start + n / FLOOD_RATE - time.monotonic()
        if ahead > 0:
            time.sleep(ahead)
    with count.get_lock():
        count.value += n


def within_caps(cmds, caps):
    worst = 0.0
    bad = []
    for w, _, tw, _ in cmds:
        planar = math.hypot(tw.linear.x, tw.linear.y)
        excess = max(planar - caps["max_linear"], abs(tw.angular.z) - caps["max_angular"], -tw.linear.x - caps["max_reverse"])
        worst = max(worst, excess)
        if excess > 1e-9 or not all(math.isfinite(v) for v in (tw.linear.x, tw.linear.y, tw.angular.z)):
            bad.append((round(w, 3), tw.linear.x, tw.linear.y, tw.angular.z))
    return bad, worst


def is_zero(tw) -> bool:
    return all(v == 0.0 for v in (tw.linear.x, tw.linear.y, tw.linear.z, tw.angular.x, tw.angular.y, tw.angular.z))


def main() -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--domain", type=int, required=True)
    ap.add_argument("--namespace", default="/robot7")
    ap.add_argument("--odom-topic", default="odom", help="relative topic sillage reads odometry from (after remaps)")
    ap.add_argument("--params", required=True, help="the parameter file given to sillage_dds")
    ap.add_argument("--sim-start", type=int, default=1000, help="simulated time at the start [s]")
    ap.add_argument("--budget", type=float, default=60.0, help="wall-time limit of the scene [s]")
    ap.add_argument("--report", help="write the checks as JSON here")
    a = ap.parse_args()

    p = arbiter_params(a.params, f"{a.namespace.rstrip('/')}/arbiter")
    caps = {k: float(p[f"guard.{k}"]) for k in ("max_linear", "max_angular", "max_reverse")}
    a.stamped = bool(p.get("cmd_vel_stamped", True))
    print(f"caps from {a.params}: {caps}; cmd_vel {'TwistStamped' if a.stamped else 'Twist'}", flush=True)

    peer = Peer(a)
    rep = Report()
    matched = peer.wait_matched(20.0)
    rep.check("discovery: every writer and reader of the peer matched sillage", all(v >= 1 for v in matched.values()), json.dumps(matched))

    # 1. normal ----------------------------------------------------------------------------
    peer.estop_w.write(T.Bool(False))
    peer.run(10.0, x=0.0)
    n1 = len(peer.cmds)
    bad, worst = within_caps(peer.cmds, caps)
    rep.check("normal: cmd_vel appears", n1 >= 50, f"{n1} commands in 10 s (control rate {p.get('rate', '?')} Hz)")
    moving = [c for c in peer.cmds if not is_zero(c[2])]
    rep.check("normal: commands obey the caps of the parameter file", not bad, f"{len(peer.cmds)} checked, {len(moving)} non-zero, worst excess {worst:.3g}, violations {bad[:3]}")
    top = max((math.hypot(c[2].linear.x, c[2].linear.y) for c in moving), default=0.0)
    surge = float(p.get("surge.speed", 0.0))
    rep.check(
        "normal: the robot moves, held at the file's speed cap",
        len(moving) >= 5 and surge > caps["max_linear"] and abs(top - caps["max_linear"]) < 1e-9,
        f"{len(moving)} non-zero commands, top planar speed {top:.6f} m/s, cap {caps['max_linear']} m/s, surge.speed {surge} m/s",
    )
    modes = [s.mode for _, s in peer.states]
    reasons = [f"{MODES.get(s.mode, s.mode)}: {s.reason}" for _, s in peer.states[-3:]]
    pre_mode = modes[-1] if modes else None
    rep.check("normal: search_state leaves HALTED once every input is fresh", pre_mode is not None and pre_mode != HALTED, f"modes {[MODES.get(m, m) for m in modes]}; last {reasons}")
    stamps = [c[3] for c in peer.cmds if c[3] is not None]
    sim_lo, sim_hi = peer.t0, peer.sim_now()
    in_sim = [s for s in stamps if sim_lo - SEC <= s <= sim_hi + SEC]
    if a.stamped:
        rep.check("sim time: cmd_vel stamps follow /clock", stamps and len(in_sim) == len(stamps), f"{len(in_sim)}/{len(stamps)} stamps in [{sim_lo / SEC:.0f}, {sim_hi / SEC:.1f}] s")
    counters, dstamp = peer.transport()
    rep.check(
        "sim time: /diagnostics stamped in simulated time, clock=simulated",
        counters is not None and counters.get("clock") == "simulated" and sim_lo <= dstamp <= sim_hi + SEC,
        f"stamp {dstamp and dstamp / SEC} s, counters {counters}",
    )

    # 2. bad input -------------------------------------------------------------------------
    def bad_input():
        k = peer.sent["cut"]
        if k < 20:
            t = peer.sim_now()
            peer.cut_w.write(T.ChemSampleCut(peer.header(t, "nose"), 1000))
            peer.sent["cut"] += 1
        if peer.sent["long"] < 5 and k % 4 == 0:
            peer.long_w.write(T.BoolTooLong())
            peer.sent["long"] += 1
        if peer.sent["string"] < 5 and k % 4 == 2:
            peer.string_w.write(T.String("true"))
            peer.sent["string"] += 1

    before_bad, states_bad = len(peer.cmds), len(peer.states)
    peer.run(2.0, x=0.0, during=bad_input)
    flooder = peer.flood(2.0, 200_000)
    peer.run(3.0, x=0.0)  # the flood starts once its writer matched (well under a second)
    flooder.join(timeout=10.0)
    if flooder.is_alive():
        flooder.terminate()
    peer.run(2.0, x=0.0)  # at least one more diagnostics period
    phase2 = peer.cmds[before_bad:]
    bad, worst = within_caps(phase2, caps)
    rep.check("bad input: sillage keeps commanding", len(phase2) >= 20, f"{len(phase2)} commands during and after the bad input")
    rep.check("bad input: commands still obey the caps", not bad, f"worst excess {worst:.3g}, violations {bad[:3]}")
    halted_by_bad = [s for _, s in peer.states[states_bad:] if s.mode == HALTED and "e-stop" in s.reason]
    rep.check("bad input: a malformed or mistyped e_stop does not stop or release the robot", not halted_by_bad, f"{len(halted_by_bad)} e-stop halts before the real e-stop")
    counters, _ = peer.transport()
    c = {k: int(counters.get(k, 0)) for k in ("malformed", "wrong_type", "type_conflicts", "flood_dropped", "samples")} if counters else {}
    rep.check("bad input: malformed CDR counted", c.get("malformed", 0) >= 1, f"malformed {c.get('malformed')} (per subscription; sent {peer.sent['cut']} cut ChemSamples, {peer.sent['long']} long Bools)")
    rep.check("bad input: the wrong type on e_stop is detected", c.get("type_conflicts", 0) >= 1, f"type_conflicts {c.get('type_conflicts')}, wrong_type samples dropped {c.get('wrong_type')} (sent {peer.sent['string']} std_msgs/String)")
    rep.check("bad input: the flood is counted", c.get("flood_dropped", 0) >= 1, f"flood_dropped {c.get('flood_dropped')} (summed over sillage's chem subscriptions), {peer.flood_count.value} flood samples written")

    # 3. e-stop during a flood -------------------------------------------------------------
    flooder = peer.flood(3.0, 300_000)
    peer.run(1.5, x=0.0)
    n_before, s_before = len(peer.cmds), len(peer.states)
    t_stop, t_stop_sim = peer.wall(), peer.sim_now()
    peer.estop_w.write(T.Bool(True))
    peer.run(1.5, x=0.0)
    flooder.join(timeout=10.0)
    if flooder.is_alive():
        flooder.terminate()
    after = peer.cmds[n_before:]
    first = next((c for c in after if is_zero(c[2])), None)
    latency = None if first is None else first[0] - t_stop
    # The zero command is stamped with sillage's ROS time when it handled the e-stop, so the
    # stamp bounds the delivery delay of the e-stop itself (the clock keeps running).
    lag = None if first is None or first[3] is None else (first[3] - t_stop_sim) / SEC
    rep.check(
        "e-stop: a zero twist at once",
        latency is not None and latency < 1.0 and (lag is None or -0.05 <= lag <= 0.5),
        f"first zero command received {latency if latency is None else round(latency * 1000, 1)} ms after the e-stop, stamped {lag if lag is None else round(lag * 1000, 1)} ms of ROS time after it (under a flood)",
    )
    # "Later" by the command's own stamp (sillage's ROS time when it published it): a command
    # published before the e-stop may still be taken from the queue afterwards.
    if a.stamped:
        late = [c for c in after if c[3] >= t_stop_sim + SEC // 5]
    else:
        late = [c for c in after if c[0] > t_stop + 0.3]
    nonzero = [(round((c[3] - t_stop_sim) / SEC, 3) if c[3] else None, c[2].linear.x, c[2].angular.z) for c in late if not is_zero(c[2])]
    rep.check("e-stop: every later command is zero", late and not nonzero, f"{len(late) - len(nonzero)}/{len(late)} zero; non-zero (s after the e-stop, vx, wz): {nonzero[:3]}")
    new_states = [s for _, s in peer.states[s_before:]]
    halted = [s for s in new_states if s.mode == HALTED]
    rep.check(
        "e-stop: search_state changes mode to HALTED",
        bool(halted) and pre_mode != HALTED and "e-stop" in halted[0].reason,
        f"{MODES.get(pre_mode, pre_mode)} -> {[MODES.get(s.mode, s.mode) for s in new_states][:4]} ({halted[0].reason if halted else 'no HALTED state'})",
    )

    # 4. still halted after more bad e-stop input ------------------------------------------
    n_before = len(peer.cmds)
    for k in range(5):
        peer.string_w.write(T.String("false"))
        peer.long_w.write(T.BoolTooLong(0))
        peer.run(0.3, x=0.0)
    peer.run(1.5, x=0.0)
    tail = peer.cmds[n_before:]
    last_mode = peer.states[-1][1].mode if peer.states else None
    rep.check("after: still halted and zero", tail and all(is_zero(c[2]) for c in tail) and last_mode == HALTED, f"{len(tail)} commands, all zero: {all(is_zero(c[2]) for c in tail)}; mode {MODES.get(last_mode, last_mode)}")
    counters, _ = peer.transport()
    rep.check("after: sillage still reports diagnostics", counters is not None and peer.diags[-1][0] > peer.wall() - 2.5, f"last diagnostics {round(peer.wall() - peer.diags[-1][0], 2) if peer.diags else None} s ago; counters {counters}")

    # 5. an e-stop publisher of every QoS combination ---------------------------------------
    reset_w = DataWriter(peer.dp, Topic(peer.dp, f"rt{peer.ns}/e_stop_reset", T.Empty), RELIABLE)
    latencies = {}
    for rel_name, rel in (("reliable", Policy.Reliability.Reliable(max_blocking_time=0)), ("best effort", Policy.Reliability.BestEffort)):
        for dur_name, dur in (("volatile", Policy.Durability.Volatile), ("transient local", Policy.Durability.TransientLocal)):
            name = f"{rel_name} + {dur_name}"
            dp = DomainParticipant(a.domain)
            w = DataWriter(dp, Topic(dp, f"rt{peer.ns}/e_stop", T.Bool), Qos(rel, Policy.History.KeepLast(1), dur, XCDR1))
            matched = 0
            for _ in range(200):
                matched = w.get_publication_matched_status().current_count
                if matched >= 1 and reset_w.get_publication_matched_status().current_count >= 1:
                    break
                peer.run(0.05, x=0.0)
            rep.check(f"e-stop QoS {name}: the publisher matches sillage's subscription", matched >= 1, f"matched subscriptions {matched}")
            # Release the latch (false, then reset) and wait until the robot moves again. The
            # e-stop state is repeated every 0.1 s, as sillage asks of e-stop publishers: the
            # first samples after a match may be lost while the reader side still discovers.
            n0 = len(peer.cmds)
            for k in range(100):
                w.write(T.Bool(False))
                if k >= 3:
                    reset_w.write(T.Empty())
                peer.run(0.1, x=0.0)
                if any(not is_zero(c[2]) for c in peer.cmds[n0:]):
                    break
            moving_again = any(not is_zero(c[2]) for c in peer.cmds[n0:])
            state_before = f"{MODES.get(peer.states[-1][1].mode)}: {peer.states[-1][1].reason}" if peer.states else "no state"
            for _ in range(5):
                w.write(T.Bool(False))
                peer.run(0.1, x=0.0)
            n1 = len(peer.cmds)
            t_press = peer.wall()
            for _ in range(10):
                w.write(T.Bool(True))
                peer.run(0.1, x=0.0)
            first = next((c for c in peer.cmds[n1:] if is_zero(c[2])), None)
            late = [c for c in peer.cmds[n1:] if c[0] > t_press + 0.3]
            held = bool(late) and all(is_zero(c[2]) for c in late)
            lat = None if first is None else round((first[0] - t_press) * 1000, 1)
            latencies[name] = lat
            rep.check(
                f"e-stop QoS {name}: e_stop = true brings a zero twist",
                moving_again and first is not None and lat < 1000 and held,
                f"moving before the press: {moving_again} ({state_before}); first zero twist {lat} ms after the write; all zero from 300 ms on: {held}",
            )
    print(f"e-stop to zero twist [ms] per publisher QoS: {json.dumps(latencies)}", flush=True)

    if a.report:
        Path(a.report).write_text(json.dumps({"checks": rep.rows, "sent": peer.sent, "commands": len(peer.cmds), "states": len(peer.states), "e_stop_latency_ms": latencies}, indent=1))
    n_fail = rep.failed()
    print(f"wire: {len(rep.rows) - n_fail} passed, {n_fail} failed", flush=True)
    return 1 if n_fail else 0


if __name__ == "__main__":
    sys.exit(main())
