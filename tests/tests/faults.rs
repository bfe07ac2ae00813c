//! Fault injection: the full stack (`sillage_stack::build`) on the demo bag's input stream
//! (tests/fixtures/demo/demo_bag, 60 s) with one fault at a time, checked against the reactions
//! the nodes document:
//! - arbiter (nodes/arbiter/src/watchdog.rs, node.rs, guard/): a required input older than its
//!   `watchdog.*` timeout, judged at each control tick, halts the robot (HALTED, reason
//!   "watchdog: <topic> stale ..."), and the robot resumes when it is fresh again; duplicated
//!   and reordered stamps are dropped and counted; `e_stop = true` zeroes `cmd_vel` and
//!   publishes HALTED in the same call, and the latch releases only on a reset after a false;
//! - event encoder (nodes/event_encoder/src/conditioning/, diagnostics.rs): a raw value
//!   unchanged for `stuck_time` makes the channel "dead" (ERROR); a value at a rail makes it
//!   "saturated" (WARN) and freezes its baseline; a sample not newer than the last is dropped;
//!   one more than `backward_reset` older resets every channel;
//! - plume estimator (nodes/plume_estimator/src/conditioning.rs, node.rs): a dead channel's
//!   samples are skipped; samples at or before the last accepted stamp are dropped.
//!
//! On every run, every `cmd_vel` must keep the guard's invariants (caps from the parameter
//! file below, finite values, acceleration limits): [`check_guard`].

use sillage_arbiter::Params as ArbiterParams;
use sillage_core::msg::{DiagnosticStatus, Empty, SearchState};
use sillage_core::time::secs;
use sillage_core::{Msg, Nanos};
use sillage_tests::faults::*;

/// The parameter file of these runs: tighter caps than the defaults (so that caps from the
/// file are what is checked), a wide alignment angle (the demo bag's odometry is open loop:
/// the robot never turns to face the wind, so with the default 0.8 rad it would only rotate),
/// short stuck detection and rails around the demo's resistances (about 14-42 kohm).
const PARAMS: &str = "\
event_encoder:
  ros__parameters:
    conditioning:
      stuck_time: 5.0
      rail_low: 5000.0
      rail_high: 200000.0
plume_estimator:
  ros__parameters:
    conditioning:
      stuck_time: 5.0
      rail_low: 5000.0
      rail_high: 200000.0
arbiter:
  ros__parameters:
    drive:
      align_angle: 3.1
    guard:
      max_linear: 0.2
      max_angular: 0.6
      max_linear_accel: 0.4
      max_linear_decel: 0.8
      max_angular_accel: 1.5
      max_angular_decel: 3.0
";

const HALTED: u8 = SearchState::HALTED;

fn arbiter_params() -> ArbiterParams {
    sillage_core::params::load_str(PARAMS, "faults.yaml", "/arbiter").expect("the test's parameter file loads")
}

/// The demo stream and its first arrival time.
fn demo() -> (Stream, Nanos) {
    let st = demo_stream().expect("demo bag reads");
    let t0 = st[0].at;
    (st, t0)
}

fn go(st: &Stream) -> Run {
    run(st, Some(PARAMS), 2 * S).expect("the stack runs")
}

fn rel(t: Nanos, t0: Nanos) -> f64 {
    secs(t - t0)
}

/// Every cmd_vel keeps the guard's invariants (caps from [`PARAMS`]).
fn assert_guard(r: &Run, exempt: &[Nanos]) {
    let p = arbiter_params();
    let cmds = r.cmd_vels();
    assert!(cmds.len() > 500, "{} commands: the control timer did not run", cmds.len());
    let v = check_guard(&cmds, &p.guard, p.period(), exempt);
    assert!(v.is_empty(), "{} guard violations, first: {:?}", v.len(), &v[..v.len().min(3)]);
}

/// The last arrival on `topic` before `t`, and the first at or after `t`.
fn around(st: &Stream, topic: &str, t: Nanos) -> (Nanos, Option<Nanos>) {
    let before = st.iter().filter(|m| m.topic == topic && m.at < t).map(|m| m.at).max().expect("a message before");
    let after = st.iter().filter(|m| m.topic == topic && m.at >= t).map(|m| m.at).min();
    (before, after)
}

fn not_halted_between(r: &Run, from: Nanos, to: Nanos) -> Vec<(f64, String)> {
    r.states().into_iter().filter(|(t, s)| (from..to).contains(t) && s.mode == HALTED).map(|(t, s)| (secs(t), s.reason.clone())).collect()
}

/// The first HALTED state after `after`, which must name `topic` as stale, come after
/// `timeout` and no later than `timeout` + one control period; then every command is zero
/// once the ramp-down is over, until the first non-HALTED state (returned with the halt time).
fn assert_watchdog_halt(r: &Run, after: Nanos, topic: &str, timeout: f64) -> (Nanos, Nanos) {
    let p = arbiter_params();
    let (th, s) = r.first_state(after, HALTED).unwrap_or_else(|| panic!("no HALTED state after the last {topic}"));
    let waited = secs(th - after);
    assert!(s.reason.starts_with("watchdog:") && s.reason.contains(&format!("{topic} stale")), "reason '{}'", s.reason);
    assert!(waited > timeout && waited <= timeout + p.period() + 1e-9, "halted {waited:.3} s after the last {topic} (timeout {timeout} s + period {} s)", p.period());
    let (tr, resumed) = r.states().into_iter().find(|(t, s)| *t > th && s.mode != HALTED).expect("the robot resumes");
    assert!(!resumed.reason.is_empty());
    // Ramp-down under the deceleration limits: at most max speed / decel (+ one period).
    let ramp = (p.guard.max_linear / p.guard.max_linear_decel).max(p.guard.max_angular / p.guard.max_angular_decel) + p.period();
    let moving: Vec<_> = r.cmd_vels().into_iter().filter(|(t, c)| *t >= th + s_of(ramp) && *t < tr && c.iter().any(|v| *v != 0.0)).collect();
    assert!(moving.is_empty(), "commands while halted: {:?}", &moving[..moving.len().min(3)]);
    // The watchdog diagnostic says so while halted.
    let diag: Vec<_> = r.diagnostics("arbiter: watchdog").into_iter().filter(|(t, _)| *t > th && *t < tr).collect();
    for (_, d) in &diag {
        assert_eq!(d.level, DiagnosticStatus::ERROR, "{}", d.message);
        assert!(d.message.contains(topic), "{}", d.message);
    }
    (th, tr)
}

/// Runs `st` (with a gap in `topic` that starts at `from`) and checks the watchdog halt:
/// returns the run, the last arrival before the gap, the first after it, and the halt and
/// resume times.
fn gap_run(st: &Stream, topic: &str, from: Nanos, timeout: f64) -> (Run, Nanos, Nanos, Nanos, Nanos) {
    let (last, back) = around(st, &format!("/{topic}"), from);
    let r = go(st);
    assert_guard(&r, &[]);
    let (th, tr) = assert_watchdog_halt(&r, last, topic, timeout);
    let back = back.expect("the input comes back");
    assert!(tr > back && secs(tr - back) <= arbiter_params().period() + 1e-9, "resumed {:.3} s after {topic} came back", secs(tr - back));
    (r, last, back, th, tr)
}

fn s_of(sec: f64) -> Nanos {
    s(sec)
}

fn inputs_counter(r: &Run, topic: &str) -> String {
    let (_, d) = r.diagnostics("arbiter: inputs").into_iter().last().expect("arbiter: inputs diagnostics");
    diag_value(d, topic).expect("per-topic counter").to_string()
}

fn counter(text: &str, name: &str) -> u64 {
    // "accepted 3000, malformed 0, duplicates 0, out_of_order 0, restarts 0"
    text.split(", ").find_map(|kv| kv.strip_prefix(name).map(|v| v.trim().parse().expect("number"))).unwrap_or_else(|| panic!("{name} in '{text}'"))
}

#[test]
fn clean_run_moves_within_the_caps_and_never_halts_after_start() {
    let (st, t0) = demo();
    let r = go(&st);
    assert_guard(&r, &[]);
    let p = arbiter_params();
    let cmds = r.cmd_vels();
    let vmax = cmds.iter().map(|(_, c)| c[0]).fold(0.0, f64::max);
    let wmax = cmds.iter().map(|(_, c)| c[2].abs()).fold(0.0, f64::max);
    println!("clean run: {} commands, max linear.x {vmax}, max |angular.z| {wmax}", cmds.len());
    // The caps from the file are reached (surge speed 0.25 > max_linear 0.2), so the cap check bites.
    assert!((vmax - p.guard.max_linear).abs() < 1e-9, "max linear.x {vmax}");
    assert!(wmax > 0.1, "the robot turns: {wmax}");
    let halts = not_halted_between(&r, t0 + 3 * S, t0 + 60 * S);
    assert!(halts.is_empty(), "halted in the clean run: {halts:?}");
    assert_eq!(r.stats.late_inputs, 0);
}

#[test]
fn wind_drop_out_halts_within_the_wind_timeout_and_recovers() {
    let (st, t0) = demo();
    let (from, to) = (t0 + 30 * S, t0 + 35 * S);
    let st = drop_window(st, "/wind", from, to);
    let (r, last, back, th, tr) = gap_run(&st, "wind", from, arbiter_params().watchdog.wind);
    println!("wind drop-out: last wind {:.3} s, HALTED at {:.3} s, wind back {:.3} s, resumed {:.3} s", rel(last, t0), rel(th, t0), rel(back, t0), rel(tr, t0));
    let resumed = r.states().into_iter().find(|(t, _)| *t == tr).map(|(_, s)| s.reason.clone()).unwrap_or_default();
    assert!(resumed.starts_with("inputs fresh again"), "{resumed}");
}

#[test]
fn e_stop_zeroes_the_command_at_once_and_stays_latched_until_reset() {
    let (st, t0) = demo();
    let press = t0 + 20 * S + 50_000_000; // between two control ticks
    let st = insert(st, press, "/e_stop", Msg::Bool(sillage_core::msg::Bool { data: true }));
    let reset = t0 + 40 * S + 50_000_000; // after the bag's periodic e_stop = false
    let st = insert(st, reset, "/e_stop_reset", Msg::Empty(Empty::default()));
    let r = go(&st);
    assert_guard(&r, &[press]);
    let cmds = r.cmd_vels();
    let before = cmds.iter().rfind(|(t, _)| *t < press).expect("a command before");
    assert!(before.1.iter().any(|v| *v != 0.0), "the robot moved before the press: {before:?}");
    let at: Vec<_> = cmds.iter().filter(|(t, _)| *t == press).collect();
    assert_eq!(at.len(), 1, "one zero command in the very call that got e_stop = true");
    assert_eq!(at[0].1, [0.0; 3]);
    let (ts, s) = r.first_state(press, HALTED).expect("HALTED");
    assert_eq!((ts, s.reason.as_str()), (press, "e-stop pressed"));
    let moving: Vec<_> = cmds.iter().filter(|(t, c)| *t >= press && *t <= reset && c.iter().any(|v| *v != 0.0)).collect();
    assert!(moving.is_empty(), "commands while latched: {:?}", &moving[..moving.len().min(3)]);
    // The bag's e_stop = false (1 Hz) clears it but does not release it.
    let cleared = r.states().into_iter().find(|(t, s)| *t > press && s.reason.contains("waiting for e_stop_reset"));
    assert!(cleared.is_some_and(|(t, s)| t < reset && s.mode == HALTED), "{cleared:?}");
    let guard: Vec<_> = r.diagnostics("arbiter: guard").into_iter().filter(|(t, _)| *t > press && *t < reset).collect();
    assert!(!guard.is_empty() && guard.iter().all(|(_, d)| d.level == DiagnosticStatus::ERROR), "guard diagnostics while latched");
    let after = r.states().into_iter().find(|(t, s)| *t >= reset && s.mode != HALTED);
    assert!(after.is_some_and(|(t, _)| secs(t - reset) <= arbiter_params().period() + 1e-9), "resumes at the tick after the reset: {after:?}");
}

#[test]
fn random_message_loss_is_tolerated_within_the_timeouts() {
    let (st, t0) = demo();
    let n_odom = st.iter().filter(|m| m.topic == "/odom").count();
    let st = drop_random(st, &["/odom", "/wind", "/chem"], 0.3, 7);
    let kept_odom = st.iter().filter(|m| m.topic == "/odom").count() as u64;
    assert!(kept_odom < n_odom as u64 * 8 / 10);
    let r = go(&st);
    assert_guard(&r, &[]);
    // No gap reached a timeout (seeded: the longest wind gap is printed), so no halt.
    let gap = |topic: &str| st.iter().filter(|m| m.topic == topic).map(|m| m.at).collect::<Vec<_>>().windows(2).map(|w| secs(w[1] - w[0])).fold(0.0, f64::max);
    println!("30 % loss: longest gaps odom {:.2} s, wind {:.2} s", gap("/odom"), gap("/wind"));
    let p = arbiter_params();
    assert!(gap("/odom") < p.watchdog.odom && gap("/wind") < p.watchdog.wind);
    let halts = not_halted_between(&r, t0 + 3 * S, t0 + 60 * S);
    assert!(halts.is_empty(), "{halts:?}");
    // Every odometry message that arrived was accepted (loss is not malformation).
    assert_eq!(counter(&inputs_counter(&r, "odom"), "accepted "), kept_odom);
}

#[test]
fn a_delayed_topic_halts_only_when_the_stall_exceeds_its_timeout() {
    let (st, t0) = demo();
    let p = arbiter_params();
    let from = t0 + 30 * S;
    // 0.3 s of latency: the arrival gap at the onset (0.32 s) stays below odom's 0.5 s.
    let short = delay(st.clone(), "/odom", from, s(0.3));
    let r = go(&short);
    assert_guard(&r, &[]);
    assert!(not_halted_between(&r, t0 + 3 * S, t0 + 60 * S).is_empty());
    assert_eq!(counter(&inputs_counter(&r, "odom"), "out_of_order "), 0, "latency keeps the order");
    // 0.7 s: a 0.72 s stall, then the stream flows again, late but steady.
    let long = delay(st, "/odom", from, s(0.7));
    let (r, last, _, th, tr) = gap_run(&long, "odom", from, p.watchdog.odom);
    assert!(not_halted_between(&r, tr, t0 + 60 * S).is_empty(), "steady latency does not halt");
    println!("odom delayed 0.7 s: HALTED {:.3} s after the last odom, resumed {:.3} s", secs(th - last), rel(tr, t0));
}

#[test]
fn duplicated_stamps_are_dropped_and_counted_without_changing_the_commands() {
    let (st, t0) = demo();
    let from = t0 + 20 * S;
    let clean = go(&st);
    let dup = duplicate(duplicate(duplicate(st.clone(), "/odom", from), "/wind", from), "/chem", from);
    let n = |topic: &str| st.iter().filter(|m| m.topic == topic && m.at >= from).count() as u64;
    let r = go(&dup);
    assert_guard(&r, &[]);
    assert_eq!(counter(&inputs_counter(&r, "odom"), "duplicates "), n("/odom"));
    assert_eq!(counter(&inputs_counter(&r, "wind"), "duplicates "), n("/wind"));
    let (_, enc) = r.diagnostics("event_encoder: input").into_iter().last().expect("encoder diagnostics");
    assert_eq!(diag_value(enc, "dropped_not_newer"), Some(n("/chem").to_string().as_str()));
    let (_, warn) = r.diagnostics("arbiter: inputs").into_iter().find(|(t, _)| *t > from).expect("inputs diagnostics");
    assert_eq!(warn.level, DiagnosticStatus::WARN, "{}", warn.message);
    // Dropping a duplicate must leave the behaviour as it was.
    assert_eq!(r.cmd_vels(), clean.cmd_vels(), "duplicated inputs changed cmd_vel");
}

#[test]
fn reordered_stamps_are_dropped_and_counted() {
    let (st, t0) = demo();
    let from = t0 + 20 * S;
    let (st, odom_pairs) = reorder_pairs(st, "/odom", from);
    let (st, chem_pairs) = reorder_pairs(st, "/chem", from);
    let r = go(&st);
    assert_guard(&r, &[]);
    assert_eq!(counter(&inputs_counter(&r, "odom"), "out_of_order "), odom_pairs as u64);
    let (_, enc) = r.diagnostics("event_encoder: input").into_iter().last().expect("encoder diagnostics");
    assert_eq!(diag_value(enc, "dropped_not_newer"), Some(chem_pairs.to_string().as_str()));
    assert!(not_halted_between(&r, t0 + 3 * S, t0 + 60 * S).is_empty(), "one lost sample in two does not halt");
}

#[test]
fn a_stuck_sensor_is_reported_dead_and_skipped() {
    let (st, t0) = demo();
    let from = t0 + 20 * S;
    let (st, held) = stick(st, "/chem", "left", from);
    assert!(held.is_some());
    let r = go(&st);
    assert_guard(&r, &[]);
    let stuck_time = 5.0;
    let left = r.diagnostics("event_encoder: left");
    // The last sample before `from` set the value, so dead is due at from + 5 s (+ one sample).
    let first_dead = left.iter().find(|(_, d)| d.level == DiagnosticStatus::ERROR).expect("left turns ERROR");
    assert!(first_dead.1.message.starts_with("dead"), "{}", first_dead.1.message);
    let late = secs(first_dead.0 - from) - stuck_time;
    assert!((0.0..=1.0 + 1e-9).contains(&late), "dead reported {late:.3} s after stuck_time (diagnostics at 1 Hz)");
    assert!(left.iter().filter(|(t, _)| *t < from + s(stuck_time) - S / 20).all(|(_, d)| d.level == DiagnosticStatus::OK), "not dead too early");
    assert!(r.diagnostics("event_encoder: right").iter().all(|(_, d)| d.level == DiagnosticStatus::OK), "the other channel stays ok");
    let plume = r.diagnostics("plume_estimator: channel left");
    let (_, last) = plume.last().expect("plume channel diagnostics");
    assert_eq!(last.level, DiagnosticStatus::WARN);
    assert!(last.message.contains("dead"), "{}", last.message);
    println!("stuck left channel: encoder ERROR at {:.2} s ({})", rel(first_dead.0, t0), first_dead.1.message);
}

#[test]
fn a_saturated_sensor_is_reported_and_its_baseline_frozen() {
    let (st, t0) = demo();
    let (from, to) = (t0 + 30 * S, t0 + 36 * S);
    let st = saturate(st, "/chem", "right", from, to, 5000.0);
    let r = go(&st);
    assert_guard(&r, &[]);
    let right = r.diagnostics("event_encoder: right");
    let during: Vec<_> = right.iter().filter(|(t, _)| *t > from && *t < to).collect();
    assert!(during.len() >= 5);
    for (_, d) in &during {
        assert_eq!(d.level, DiagnosticStatus::WARN);
        assert!(d.message.starts_with("saturated"), "{}", d.message);
    }
    let baselines: Vec<&str> = during.iter().map(|(_, d)| diag_value(d, "baseline").expect("baseline")).collect();
    assert!(baselines.windows(2).all(|w| w[0] == w[1]), "baseline frozen while saturated: {baselines:?}");
    let after = right.iter().find(|(t, _)| *t > to).expect("after");
    assert_eq!(after.1.level, DiagnosticStatus::OK, "{}", after.1.message);
    assert!(right.iter().filter(|(t, _)| *t < from).all(|(_, d)| d.level == DiagnosticStatus::OK));
}

#[test]
fn a_forward_clock_jump_halts_on_the_gap_and_recovers() {
    let (st, t0) = demo();
    let at = t0 + 30 * S;
    let st = clock_jump(st, at, 5 * S);
    let (r, last, back, _, _) = gap_run(&st, "odom", at, arbiter_params().watchdog.odom);
    assert!(secs(back - last) > 5.0);
    // The encoder does not interpolate crossings across the gap: it counts one per channel.
    for ch in ["left", "right"] {
        let (_, d) = r.diagnostics(&format!("event_encoder: {ch}")).into_iter().last().expect("channel diagnostics");
        assert_eq!(diag_value(d, "gaps"), Some("1"), "{ch}");
    }
    assert_eq!(r.stats.late_inputs, 0);
}

#[test]
fn a_backward_clock_jump_restarts_the_stamp_orders_the_encoder_and_the_plume_estimator() {
    let (st, t0) = demo();
    let at = t0 + 30 * S;
    let back = 10 * S;
    let orig = st.clone();
    let st = clock_jump(st, at, -back);
    let late = st.iter().filter(|m| m.at >= at - back && m.at < at).count();
    let r = go(&st);
    assert_guard(&r, &[]);
    // The executor's clock does not run back: those inputs are delivered at once, late.
    assert!(r.stats.late_inputs > 0 && r.stats.late_inputs <= late as u64, "{} late of {late}", r.stats.late_inputs);
    let (_, enc) = r.diagnostics("event_encoder: input").into_iter().last().expect("encoder diagnostics");
    assert_eq!(diag_value(enc, "backward_resets"), Some("1"));
    for topic in ["odom", "wind"] {
        assert_eq!(counter(&inputs_counter(&r, topic), "restarts "), 1, "{topic}");
    }
    // The plume estimator restarts too (a 10 s step back is more than its 1 s
    // `input.backward_reset`) and takes every sample: none is dropped as out of order.
    let total = orig.iter().filter(|m| m.topic == "/chem").count();
    let (_, pin) = r.diagnostics("plume_estimator: input").into_iter().last().expect("plume diagnostics");
    assert_eq!(diag_value(pin, "backward_resets"), Some("1"));
    assert_eq!(diag_value(pin, "out_of_order"), Some("0"));
    assert_eq!(diag_value(pin, "accepted"), Some(total.to_string().as_str()));
    // The stream now ends 10 s earlier (at about 50 s): no halt until then.
    let end = st.last().map(|m| m.at).expect("inputs");
    let halts = not_halted_between(&r, t0 + 3 * S, end);
    assert!(halts.is_empty(), "{halts:?}");
}


#[test]
fn a_bag_loop_keeps_the_plume_estimator_fed() {
    // The arbiter documents "a restarted simulation or bag loop" as a case it handles; the
    // encoder and the plume estimator restart on a step back of more than their
    // `backward_reset` (nodes/plume_estimator/src/node.rs, step 3), so after the loop the
    // features are estimated again from the looped samples.
    let (st, t0) = demo();
    let looped = bag_loop(&st, t0 + 30 * S);
    let r = go(&looped);
    assert_guard(&r, &[]);
    let (_, enc) = r.diagnostics("event_encoder: input").into_iter().last().expect("encoder diagnostics");
    assert_eq!(diag_value(enc, "backward_resets"), Some("1"), "the encoder restarts at the loop");
    // In the first pass the features are known 15.5 s after the start; after the loop (at 30 s)
    // they must be known again before the end (60 s).
    let known_again = r.on("/plume_features").filter(|m| m.stamp > t0 + 50 * S).any(|m| matches!(&m.msg, Msg::PlumeFeatures(f) if f.bout_rate.is_finite()));
    let (_, pin) = r.diagnostics("plume_estimator: input").into_iter().last().expect("plume diagnostics");
    assert!(known_again, "plume_features still NaN 20 s after the loop; plume_estimator: input says '{}' (out_of_order {:?})", pin.message, diag_value(pin, "out_of_order"));
    assert_eq!(diag_value(pin, "backward_resets"), Some("1"), "the plume estimator restarts at the loop");
}

// --- the guard fails closed ---------------------------------------------------------------

/// [`PARAMS`] with more arbiter keys (`extra`, indented under `ros__parameters`).
fn params_with(extra: &str) -> String {
    format!("{PARAMS}{extra}")
}

fn zero(c: &[f64; 3]) -> bool {
    c.iter().all(|v| *v == 0.0)
}

/// Laser scans on `/scan` every 0.1 s in `[from, to)`: 31 beams over +-1.5 rad, range_min
/// 0.05 m, range_max 10 m, every range `r` (REP 117 values: NaN, or below range_min, allowed).
fn with_scans(mut st: Stream, from: Nanos, to: Nanos, r: f32) -> Stream {
    let mut t = from;
    while t < to {
        let m = sillage_core::msg::LaserScan {
            header: sillage_core::msg::Header::new(t, "laser"),
            angle_min: -1.5,
            angle_max: 1.5,
            angle_increment: 0.1,
            range_min: 0.05,
            range_max: 10.0,
            ranges: vec![r; 31],
            ..Default::default()
        };
        st = insert(st, t, "/scan", Msg::LaserScan(Box::new(m)));
        t += S / 10;
    }
    st
}

#[test]
fn an_e_stop_never_heard_keeps_the_robot_halted_unless_the_robot_has_none() {
    let (st, t0) = demo();
    let silent: Stream = st.into_iter().filter(|m| m.topic != "/e_stop").collect();
    let r = go(&silent);
    let cmds = r.cmd_vels();
    assert!(cmds.len() > 500 && cmds.iter().all(|(_, c)| zero(c)), "motion without an e-stop ever heard");
    let states = r.states();
    assert!(!states.is_empty() && states.iter().all(|(_, s)| s.mode == HALTED && s.reason.contains("e_stop never heard")), "{:?}", states.last());
    // A robot declared to have no e-stop topic moves on the same inputs.
    let r = run(&silent, Some(&params_with("    e_stop:\n      required: false\n")), 2 * S).expect("runs");
    let moving = r.cmd_vels().iter().filter(|(t, c)| *t > t0 + 5 * S && !zero(c)).count();
    assert!(moving > 100, "{moving} non-zero commands with e_stop.required: false");
}

#[test]
fn a_silent_e_stop_heartbeat_halts_and_resumes() {
    let (st, t0) = demo();
    let (from, to) = (t0 + 30 * S, t0 + 40 * S);
    let st = drop_window(st, "/e_stop", from, to);
    let (last, back) = around(&st, "/e_stop", from);
    let r = run(&st, Some(&params_with("    watchdog:\n      e_stop: 1.5\n")), 2 * S).expect("runs");
    let (th, s) = r.first_state(last, HALTED).expect("HALTED when the heartbeat stops");
    assert!(s.reason.contains("e_stop stale"), "{}", s.reason);
    let waited = secs(th - last);
    assert!(waited > 1.5 && waited <= 1.5 + arbiter_params().period() + 1e-9, "halted {waited:.3} s after the last e_stop");
    let back = back.expect("the heartbeat comes back");
    let resumed = r.states().into_iter().find(|(t, s)| *t > th && s.mode != HALTED).expect("resumes");
    assert!(resumed.0 > back && secs(resumed.0 - back) <= arbiter_params().period() + 1e-9);
    println!("e-stop heartbeat: last {:.2} s, HALTED {:.2} s, back {:.2} s, resumed {:.2} s", rel(last, t0), rel(th, t0), rel(back, t0), rel(resumed.0, t0));
}

#[test]
fn a_blinded_laser_halts_and_readings_below_range_min_stop_forward_motion() {
    let (st, t0) = demo();
    let end = st.last().map(|m| m.at).expect("inputs");
    let st = with_scans(st, t0 + 2 * S, t0 + 25 * S, 5.0);
    let st = with_scans(st, t0 + 25 * S, t0 + 30 * S, f32::NAN);
    let st = with_scans(st, t0 + 30 * S, t0 + 40 * S, 5.0);
    let st = with_scans(st, t0 + 40 * S, t0 + 45 * S, 0.01);
    let st = with_scans(st, t0 + 45 * S, end + S, 5.0);
    let r = go(&st);
    let p = arbiter_params();
    let cmds = r.cmd_vels();
    let moving = |a: Nanos, b: Nanos| cmds.iter().filter(|(t, c)| (a..b).contains(t) && c[0] > 0.0).count();
    assert!(moving(t0 + 10 * S, t0 + 25 * S) > 50, "the robot moves forward with a clear scan");
    // All NaN in the guarded sector: HALTED with the reason, zero after the ramp-down.
    let (tb, s) = r.first_state(t0 + 25 * S, HALTED).expect("HALTED when blinded");
    assert!(s.reason.starts_with("scan blinded toward 0 deg: 0 of ") && s.reason.contains("beams valid"), "{}", s.reason);
    assert!(secs(tb - t0 - 25 * S) <= p.period() + 1e-9, "halted {:.3} s after the first blind scan", secs(tb - t0 - 25 * S));
    let ramp = s_of(p.guard.max_linear / p.guard.max_linear_decel + p.period());
    let blind_moving: Vec<_> = cmds.iter().filter(|(t, c)| (tb + ramp..t0 + 30 * S).contains(t) && !zero(c)).collect();
    assert!(blind_moving.is_empty(), "motion while blinded: {:?}", &blind_moving[..blind_moving.len().min(3)]);
    assert!(moving(t0 + 31 * S, t0 + 40 * S) > 20, "moves again once the scan is clear");
    // Readings below range_min (0.01 < 0.05 m): an obstacle at 0 m, forward motion cut at once.
    let first = cmds.iter().find(|(t, _)| *t > t0 + 40 * S).expect("a command");
    assert_eq!(first.1[0], 0.0, "the tick after the close reading: {first:?}");
    assert_eq!(moving(t0 + 40 * S + 1, t0 + 45 * S), 0, "forward motion toward a too-close obstacle");
    let guard: Vec<_> = r.diagnostics("arbiter: guard").into_iter().filter(|(t, _)| (t0 + 26 * S..t0 + 30 * S).contains(t)).collect();
    assert!(!guard.is_empty() && guard.iter().all(|(_, d)| d.level == DiagnosticStatus::ERROR && d.message.contains("blinded")), "guard diagnostics while blinded");
}

#[test]
fn caps_above_the_declared_limits_are_refused_at_start_at_run_time_and_by_check() {
    use sillage_core::NodeCore;
    let (st, _) = demo();
    let fast = PARAMS.replace("max_linear: 0.2", "max_linear: 1.0e9");
    let e = run(&st, Some(&fast), 2 * S).expect_err("1e9 m/s is refused");
    let msg = e.to_string();
    assert!(msg.contains("guard.max_linear") && msg.contains("limits.max_linear"), "{msg}");
    // At run time: lowering and raising up to the ceiling pass; above it, and the ceiling
    // itself, are refused with the key named.
    let mut a = sillage_arbiter::Arbiter::new(arbiter_params()).expect("valid");
    let set = |a: &mut sillage_arbiter::Arbiter, y: &str| a.set_params_yaml(&serde_yaml::from_str(y).expect("yaml")).map_err(|e| e.to_string());
    assert_eq!(set(&mut a, "guard:\n  max_linear: 0.5\n"), Ok(()));
    let e = set(&mut a, "guard:\n  max_linear: 1.5\n").expect_err("above the ceiling");
    assert!(e.contains("guard.max_linear") && e.contains("limits.max_linear = 1"), "{e}");
    assert_eq!(a.params().guard.max_linear, 0.5, "a refused change changes nothing");
    let e = set(&mut a, "limits:\n  max_linear: 5.0\n").expect_err("the ceiling is fixed");
    assert!(e.contains("limits.max_linear") && e.contains("start-up"), "{e}");
    // sillage check: the same refusal as an error, and a warning beyond common practice.
    let file = "arbiter:\n  ros__parameters:\n    limits:\n      max_linear: 3.0\n    guard:\n      max_linear: 2.5\n";
    let p = sillage_ros2::check::params_file::check_text(file, "fast.yaml");
    let text: Vec<String> = p.iter().map(ToString::to_string).collect();
    assert!(p.iter().all(|x| !x.is_error()), "{text:#?}");
    assert!(text.iter().any(|m| m.contains("limits.max_linear: warning: 3 m/s") && m.contains("common practice")), "{text:#?}");
    assert!(text.iter().any(|m| m.contains("guard.max_linear: warning: 2.5 m/s")), "{text:#?}");
    let p = sillage_ros2::check::params_file::check_text(&fast.replace("max_linear: 1.0e9", "max_linear: 1000000000.0"), "fast.yaml");
    assert!(p.iter().any(|x| x.is_error() && x.to_string().contains("limits.max_linear")), "{p:?}");
}

#[test]
fn after_a_step_back_of_the_node_clock_the_limiter_brakes_instead_of_repeating() {
    use sillage_core::msg::*;
    use sillage_core::NodeCore;
    // The executors never run their clock back, so the core is driven directly: odor
    // everywhere, wind from ahead, moving after 5 s; then its clock steps back by 10 s (a
    // restarted simulation).
    let mut a = sillage_arbiter::Arbiter::new(arbiter_params()).expect("valid");
    let mut out = sillage_core::Outbox::new();
    let t0 = 20 * S;
    a.on_message(t0, 5, &Msg::Bool(Bool { data: false }), &mut out);
    for k in 0..50 {
        let t = t0 + k * S / 10;
        let mut odom = Odometry { header: Header::new(t, "odom"), child_frame_id: "base_link".into(), ..Default::default() };
        odom.pose.pose.orientation = Quaternion::from_yaw(0.0);
        a.on_message(t, 4, &Msg::Odometry(Box::new(odom)), &mut out);
        a.on_message(t, 3, &Msg::Vector3Stamped(Vector3Stamped { header: Header::new(t, "base_link"), vector: Vector3 { x: -1.0, y: 0.0, z: 0.0 } }), &mut out);
        let e = OdorEvent { stamp: Time::from_nanos(t), channel: 0, polarity: OdorEvent::RISING, level: 1.0 };
        a.on_message(t, 2, &Msg::OdorEventArray(OdorEventArray { header: Header::new(t, ""), events: vec![e] }), &mut out);
        let f = PlumeFeatures { header: Header::new(t, ""), window: 5.0, bouts: 1, bout_rate: 0.5, bout_amplitude: 1.0, intermittency: 0.2, distance: f64::NAN, distance_sigma: f64::NAN, edge_index: f64::NAN };
        a.on_message(t, 1, &Msg::PlumeFeatures(f), &mut out);
        a.on_message(t, 0, &Msg::OdorBearing(OdorBearing { header: Header::new(t, "base_link"), bearing: 0.0, lag: 0.0, confidence: 0.0, cue: OdorBearing::NONE }), &mut out);
        a.on_timer(t, 0, &mut out);
    }
    let before = a.last_command();
    assert!(before.vx > 0.0, "moving before the step: {before:?} ({})", a.reason());
    a.on_timer(t0 - 10 * S, 0, &mut out);
    let after = a.last_command();
    assert_eq!(a.mode(), sillage_arbiter::Mode::Halted, "{}", a.reason());
    // One nominal period of braking (max_linear_decel * period), not a repeat of `before`.
    let p = arbiter_params();
    let want = (before.vx - p.guard.max_linear_decel * p.period()).max(0.0);
    assert!((after.vx - want).abs() < 1e-9, "{before:?} -> {after:?}, want vx {want}");
}

#[test]
fn e_stop_reset_and_search_restart_do_nothing_out_of_their_case() {
    // e_stop_reset with nothing latched and search_restart with nothing declared: the commands
    // are those of the clean run, bit for bit.
    let (st, t0) = demo();
    let clean = go(&st).cmd_vels();
    let st2 = insert(st.clone(), t0 + 20 * S + 50_000_000, "/e_stop_reset", Msg::Empty(Empty::default()));
    let st2 = insert(st2, t0 + 25 * S + 50_000_000, "/search_restart", Msg::Empty(Empty::default()));
    assert_eq!(go(&st2).cmd_vels(), clean);
    // search_restart while the e-stop is latched is refused: still halted after it.
    let st3 = insert(st, t0 + 20 * S + 50_000_000, "/e_stop", Msg::Bool(sillage_core::msg::Bool { data: true }));
    let st3 = insert(st3, t0 + 25 * S + 50_000_000, "/search_restart", Msg::Empty(Empty::default()));
    let r = go(&st3);
    assert!(r.cmd_vels().iter().filter(|(t, _)| *t > t0 + 21 * S).all(|(_, c)| zero(c)));
    let (_, d) = r.diagnostics("arbiter: inputs").into_iter().last().expect("diagnostics");
    let text = format!("{} {:?}", d.message, d.values);
    assert!(text.contains("search_restart refused: the e-stop is latched"), "{text}");
}

#[test]
fn check_follows_the_launch_files_parameter_files_with_given_arguments() {
    let root = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("..");
    let launch = root.join("launch/robot.launch.xml");
    let errors = |v: &[sillage_ros2::check::Problem]| v.iter().filter(|p| p.is_error()).map(ToString::to_string).collect::<Vec<_>>();
    // The default params_file (config/sillage.yaml) is followed and passes.
    assert_eq!(errors(&sillage_ros2::check::launch_file::check_file(&launch)), Vec::<String>::new());
    let bad = std::env::temp_dir().join(format!("sillage-bad-caps-{}.yaml", std::process::id()));
    std::fs::write(&bad, "/**:\n  ros__parameters:\n    guard:\n      max_linear: -0.3\n").expect("write");
    let given = [("params_file".to_string(), bad.display().to_string())];
    let e = errors(&sillage_ros2::check::launch_file::check_file_with(&launch, &given));
    let _ = std::fs::remove_file(&bad);
    assert!(e.iter().any(|m| m.contains("sillage-bad-caps") && m.contains("guard.max_linear")), "{e:#?}");
}
