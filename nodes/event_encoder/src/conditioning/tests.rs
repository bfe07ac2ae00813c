use super::*;
use sillage_core::msg::ChemSample;

const S: Nanos = 1_000_000_000;
const MS: Nanos = 1_000_000;
const R: u8 = ChemSample::RESISTANCE;

fn params(f: impl FnOnce(&mut ConditioningParams)) -> ConditioningParams {
    let mut p = ConditioningParams::default();
    f(&mut p);
    p.check("conditioning").expect("valid parameters");
    p
}

#[test]
fn r0_is_learned_in_clean_air_then_frozen() {
    let p = params(|p| {
        p.transform = Transform::R0Ratio;
        p.r0_learn_time = 2.0;
        p.baseline_time_constant = 0.0;
    });
    let mut c = Conditioner::new(&p);
    // Clean air alternating 9.9k / 10.1k ohm for 2 s at 10 Hz: R0 = 10 kohm.
    for k in 0..20 {
        let r = if k % 2 == 0 { 9_900.0 } else { 10_100.0 };
        c.step(k * 100 * MS, r, R).expect("valid");
        assert_eq!(c.status(), ChannelStatus::Learning);
    }
    assert!((c.r0().expect("learned") - 10_000.0).abs() < 1e-9);
    // After the window: gas halves Rs, R0/R = 2 (power law, beta = 0.5, C x4), R0 stays.
    let y = c.step(2 * S, 5_000.0, R).expect("valid");
    assert_eq!(c.status(), ChannelStatus::Ok);
    assert!((y - 2.0).abs() < 1e-12, "{y}");
    assert!((c.r0().expect("learned") - 10_000.0).abs() < 1e-9);
}

#[test]
fn fixed_r0_and_calibration() {
    // c = 2 * raw + 100 ohm; R0 = 10100 ohm fixed: raw 5000 gives R = 10100, ratio 1.
    let p = params(|p| {
        p.transform = Transform::R0Ratio;
        p.gain = 2.0;
        p.offset = 100.0;
        p.r0 = 10_100.0;
        p.baseline_time_constant = 0.0;
    });
    let mut c = Conditioner::new(&p);
    assert!((c.step(0, 5_000.0, R).expect("valid") - 1.0).abs() < 1e-12);
    assert_eq!(c.status(), ChannelStatus::Ok, "fixed R0: no learning phase");
    // Negative gain inverts a front end whose voltage falls with gas.
    let p = params(|p| {
        p.gain = -1.0;
        p.offset = 5.0;
        p.baseline_time_constant = 0.0;
    });
    let mut v = Conditioner::new(&p);
    assert_eq!(v.step(0, 4.0, ChemSample::VOLTAGE), Ok(1.0));
    assert_eq!(v.step(MS, 3.0, ChemSample::VOLTAGE), Ok(2.0));
}

#[test]
fn faults_leave_the_state_untouched() {
    let p = params(|p| p.transform = Transform::R0Ratio);
    let mut c = Conditioner::new(&p);
    c.step(0, 10_000.0, R).expect("valid");
    let before = c.clone();
    for bad in [f64::NAN, f64::INFINITY, f64::NEG_INFINITY] {
        assert_eq!(c.step(MS, bad, R).map_err(|e| e.kind()), Err("non_finite"));
    }
    assert_eq!(c.step(MS, 0.0, R).map_err(|e| e.kind()), Err("non_positive"));
    assert_eq!(c.step(MS, -5.0, R).map_err(|e| e.kind()), Err("non_positive"));
    assert_eq!(c.step(MS, 1.0, 7).map_err(|e| e.kind()), Err("unknown_quantity"));
    assert_eq!(c.step(MS, 1.0, ChemSample::VOLTAGE).map_err(|e| e.kind()), Err("unsupported"));
    assert_eq!(c, before, "rejected values must not change the conditioner");
    let msg = SampleFault::NonPositive { value: -5.0, quantity: R }.to_string();
    assert!(msg.contains("resistance") && msg.contains("-5"), "{msg}");
}

#[test]
fn a_change_of_quantity_starts_over() {
    let mut c = Conditioner::new(&ConditioningParams::default());
    c.step(0, 10_000.0, R).expect("valid");
    c.step(S, 9_000.0, R).expect("valid");
    assert_eq!(c.transform(), Transform::LogConductance);
    let y = c.step(2 * S, 3.0, ChemSample::CONCENTRATION).expect("valid");
    assert_eq!(c.quantity(), Some(ChemSample::CONCENTRATION));
    assert_eq!(c.transform(), Transform::PassThrough);
    assert_eq!(c.baseline(), Some(3.0), "fresh baseline in the new units");
    assert_eq!(y, 0.0);
}

#[test]
fn odor_pulses_survive_baseline_removal_and_saturation_freezes_it() {
    // Log-conductance of a MOX channel in clean air (10 kohm), then a 3 s plume hit that halves
    // Rs: the conditioned output rises by ln 2 and the baseline hardly moves.
    let p = params(|p| {
        p.baseline_time_constant = 300.0;
        p.baseline_fall_time_constant = 20.0;
        p.rail_low = 100.0;
        p.rail_high = 1e6;
    });
    let mut c = Conditioner::new(&p);
    let mut t = 0;
    for _ in 0..600 {
        c.step(t, 10_000.0, R).expect("valid");
        t += 100 * MS;
    }
    let mut peak = 0.0f64;
    for _ in 0..30 {
        peak = peak.max(c.step(t, 5_000.0, R).expect("valid"));
        t += 100 * MS;
    }
    let ln2 = std::f64::consts::LN_2;
    assert!(peak > 0.99 * ln2 && peak <= ln2, "peak {peak} vs ln 2 = {ln2}");
    // At the rail the baseline is frozen and the status says so.
    let b = c.baseline().expect("tracking");
    c.step(t, 1e6, R).expect("a railed value still passes");
    assert_eq!(c.status(), ChannelStatus::Saturated);
    assert_eq!(c.baseline(), Some(b));
}

#[test]
fn a_stuck_channel_is_dead_and_precedes_other_states() {
    let p = params(|p| {
        p.stuck_time = 1.0;
        p.rail_low = 0.0;
        p.rail_high = 4.5;
    });
    let mut c = Conditioner::new(&p);
    assert_eq!(c.status(), ChannelStatus::Unknown);
    for k in 0..=10 {
        c.step(k * 100 * MS, 4.5, ChemSample::VOLTAGE).expect("valid");
    }
    assert_eq!(c.status(), ChannelStatus::Dead);
    assert!((c.stuck_for() - 1.0).abs() < 1e-9);
    c.step(1100 * MS, 2.0, ChemSample::VOLTAGE).expect("valid");
    assert_eq!(c.status(), ChannelStatus::Ok);
}

#[test]
fn parameter_changes_keep_the_learned_state_when_the_signal_is_the_same() {
    let p = params(|p| p.transform = Transform::R0Ratio);
    let mut c = Conditioner::new(&p);
    c.step(0, 10_000.0, R).expect("valid");
    c.step(S, 8_000.0, R).expect("valid");
    let (r0, b) = (c.r0(), c.baseline());
    let mut q = p.clone();
    q.baseline_time_constant = 100.0;
    c.set_params(&q);
    assert_eq!((c.r0(), c.baseline()), (r0, b));
    q.gain = 2.0;
    c.set_params(&q);
    assert_eq!((c.r0(), c.baseline()), (None, None), "new calibration: start over");
}

#[test]
fn parameter_ranges_name_the_key() {
    let p = ConditioningParams { gain: 0.0, ..Default::default() };
    let e = p.check("channels.left").expect_err("zero gain");
    assert_eq!(e.key(), "channels.left.gain");
    let p = ConditioningParams { baseline_time_constant: -1.0, ..Default::default() };
    assert_eq!(p.check("").expect_err("negative").key(), "baseline_time_constant");
}
