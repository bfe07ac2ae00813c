//! Checks of the encoder against the send-on-delta counting law (Miskowicz, "Send-on-delta
//! concept: an event-based data reporting strategy", Sensors 6(1):49-63, 2006): every event
//! needs a change of delta, so N <= TV / delta; on each monotonic stretch the reference lags the
//! turning point by less than delta, so N > TV / delta - 2 per turning point (derivation in
//! docs/references.md; about one per turning point on average).

use super::*;
use proptest::prelude::*;
use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;

const MS: Nanos = 1_000_000;
const S: Nanos = 1_000_000_000;

fn enc(f: impl FnOnce(&mut EncodingParams)) -> LevelEncoder {
    let mut p = EncodingParams::default();
    f(&mut p);
    p.check("encoding").expect("valid parameters");
    LevelEncoder::new(&p)
}

/// Runs `e` over samples `(t, x)`; returns every published crossing.
fn run(e: &mut LevelEncoder, samples: impl IntoIterator<Item = (Nanos, f64)>) -> Vec<Crossing> {
    let mut out = Vec::new();
    for (t, x) in samples {
        e.step(t, x, true, &mut out);
    }
    out
}

fn sine(a: f64, f: f64, rate: f64, secs: f64) -> impl Iterator<Item = (Nanos, f64)> {
    let n = (rate * secs) as i64;
    (0..=n).map(move |k| {
        let t = k as f64 / rate;
        ((t * 1e9).round() as Nanos, a * (2.0 * std::f64::consts::PI * f * t).sin())
    })
}

#[test]
fn sinusoid_gives_about_four_a_over_delta_events_per_period() {
    // docs/references.md: A sin(2 pi f t) has TV = 4A per period, so about 4A/delta reports per
    // period; A = 1.05 (no exact tie with delta = 0.1): 42, at most one fewer per monotonic
    // half-swing (2 per period).
    let (a, delta, periods) = (1.05, 0.1, 10.0);
    let tv_per_delta = 4.0 * a / delta;
    for mode in [Mode::SendOnDelta, Mode::LevelCrossing] {
        let mut e = enc(|p| {
            p.mode = mode;
            p.delta = delta;
        });
        let events = run(&mut e, sine(a, 1.0, 1000.0, periods));
        // Skip the first period (start-up from the zero crossing), count the others.
        let steady: Vec<_> = events.iter().filter(|c| c.stamp >= S).collect();
        let per_period = steady.len() as f64 / (periods - 1.0);
        eprintln!("{mode:?}: {per_period} events per period (TV/delta = {tv_per_delta})");
        assert!(per_period <= tv_per_delta + 1e-9, "{mode:?}: {per_period} > TV/delta = {tv_per_delta}");
        assert!(per_period >= tv_per_delta - 2.0, "{mode:?}: {per_period} < TV/delta - 2");
        // Exact values: the last-sent rule loses one level at each turn (lag 0.05 = delta/2
        // twice), the fixed grid crosses all 21 levels -1.0..1.0 each way.
        let expected = if mode == Mode::SendOnDelta { 40.0 } else { 42.0 };
        assert_eq!(per_period, expected, "{mode:?}");
        // Rising and falling alternate in runs: equal numbers per period.
        let rising = steady.iter().filter(|c| c.polarity > 0).count();
        assert_eq!(2 * rising, steady.len(), "{mode:?}");
    }
}

#[test]
fn ramp_gives_tv_over_delta_events_at_exact_interpolated_times() {
    // x = r t for 10 s at 100 Hz: TV = 3.73, TV / delta = 74.6 -> 74 events, the k-th at
    // t = k delta / r (the line between samples is the ramp itself).
    let (r, delta) = (0.373, 0.05);
    let mut e = enc(|p| p.delta = delta);
    let events = run(&mut e, (0..=1000).map(|k| (k * 10 * MS, r * k as f64 * 0.01)));
    assert_eq!(events.len(), 74);
    for (i, c) in events.iter().enumerate() {
        let k = (i + 1) as f64;
        let want = (k * delta / r * 1e9).round() as Nanos;
        assert!((c.stamp - want).abs() <= 1, "event {k}: {} vs {want}", c.stamp);
        assert!((c.level - k * delta).abs() < 1e-12);
        assert_eq!(c.polarity, 1);
    }
}

#[test]
fn several_crossings_in_one_sample_give_one_event_each() {
    let mut e = enc(|p| p.delta = 0.1);
    let mut out = Vec::new();
    e.step(0, 0.0, true, &mut out);
    assert_eq!(e.step(100 * MS, 0.37, true, &mut out), 3);
    let levels: Vec<f64> = out.iter().map(|c| c.level).collect();
    assert!(levels.iter().zip([0.1, 0.2, 0.3]).all(|(a, b)| (a - b).abs() < 1e-12), "{levels:?}");
    for (c, k) in out.iter().zip(1..) {
        let want = (f64::from(k) * 0.1 / 0.37 * 100e6).round() as Nanos;
        assert_eq!(c.stamp, want);
    }
    // Falling back through 0.35 steps: levels 0.2, 0.1, 0.0, -0.1, -0.2, -0.3 (-0.35 stops
    // short of -0.4); after a gap (no interpolation) all are stamped at the sample.
    out.clear();
    assert_eq!(e.step(200 * MS, -0.35, false, &mut out), 6);
    assert!(out.iter().all(|c| c.stamp == 200 * MS && c.polarity == -1));
    assert!((out[5].level + 0.3).abs() < 1e-12);
}

/// A random piecewise-linear signal with `m` monotonic stretches of random length, sampled at
/// 100 Hz; returns the samples, the total variation and the number of turning points.
fn random_stretches(seed: u64, m: usize) -> (Vec<(Nanos, f64)>, f64, usize) {
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    let (mut t, mut x, mut tv) = (0i64, 0.0f64, 0.0f64);
    let mut samples = vec![(0, 0.0)];
    let mut dir = 1.0;
    for _ in 0..m {
        let rise: f64 = rng.random_range(0.05..2.0);
        let steps: i64 = rng.random_range(3..60);
        for _ in 0..steps {
            t += 10 * MS;
            x += dir * rise / steps as f64;
            samples.push((t, x));
        }
        tv += rise;
        dir = -dir;
    }
    (samples, tv, m - 1)
}

#[test]
fn random_stretches_respect_the_counting_law() {
    let delta = 0.1;
    let mut deficit_total = 0.0;
    let mut turns_total = 0usize;
    for seed in 0..20 {
        let (samples, tv, turns) = random_stretches(seed, 200);
        let mut e = enc(|p| p.delta = delta);
        let n = run(&mut e, samples).len() as f64;
        assert!(n <= tv / delta + 1e-9, "seed {seed}: N = {n} > TV/delta = {}", tv / delta);
        assert!(n > tv / delta - 2.0 * (turns + 1) as f64, "seed {seed}: N = {n} too low");
        deficit_total += tv / delta - n;
        turns_total += turns;
    }
    // The lag at a turning point is spread over [0, delta): one event lost per turn on average.
    let mean = deficit_total / turns_total as f64;
    eprintln!("random stretches: mean deficit {mean:.3} events per turning point over {turns_total} turns");
    assert!((0.85..1.15).contains(&mean), "mean deficit per turning point {mean}");
}

#[test]
fn random_walk_never_beats_the_variation_bound() {
    // A random walk of uniform steps in [-0.03, 0.03] (seeded). Send-on-delta: N <= TV/delta
    // (TV = sum of |steps|). Level-crossing needs the signal to move delta between two events
    // in one direction and hysteresis x delta to reverse, so N <= TV / (min(h, 1) delta); with
    // h = 0 it chatters (no such bound) but still counts exactly sum |d floor(x / delta)|.
    let delta = 0.1;
    for seed in 100..110 {
        let mut rng = ChaCha8Rng::seed_from_u64(seed);
        let mut x = 0.0f64;
        let mut tv = 0.0;
        let samples: Vec<(Nanos, f64)> = (0..20_000)
            .map(|k| {
                if k > 0 {
                    let dx: f64 = rng.random_range(-0.03..0.03);
                    x += dx;
                    tv += dx.abs();
                }
                (k * 10 * MS, x)
            })
            .collect();
        let mut sod = enc(|p| p.delta = delta);
        let n = run(&mut sod, samples.iter().copied()).len() as f64;
        assert!(n <= tv / delta && n > 0.1 * tv / delta, "seed {seed}: N = {n}, TV/delta = {}", tv / delta);
        let h = 0.5;
        let mut lc = enc(|p| {
            p.mode = Mode::LevelCrossing;
            p.delta = delta;
            p.hysteresis = h;
        });
        let n = run(&mut lc, samples.iter().copied()).len() as f64;
        assert!(n <= tv / (h * delta), "seed {seed}: N = {n} > TV/(h delta) = {}", tv / (h * delta));
        let mut chatter = enc(|p| {
            p.mode = Mode::LevelCrossing;
            p.delta = delta;
        });
        let want: f64 = samples.windows(2).map(|w| ((w[1].1 / delta).floor() - (w[0].1 / delta).floor()).abs()).sum();
        assert_eq!(run(&mut chatter, samples.iter().copied()).len() as f64, want, "seed {seed}");
    }
}

#[test]
fn level_crossing_counts_grid_levels_between_samples() {
    // Without hysteresis the level-crossing count is sum |floor(x_i / delta) - floor(x_{i-1} / delta)|.
    let delta = 0.1;
    let (samples, _, _) = random_stretches(7, 100);
    let want: i64 = samples.windows(2).map(|w| ((w[1].1 / delta).floor() - (w[0].1 / delta).floor()).abs() as i64).sum();
    let mut e = enc(|p| {
        p.mode = Mode::LevelCrossing;
        p.delta = delta;
    });
    assert_eq!(run(&mut e, samples).len() as i64, want);
}

#[test]
fn hysteresis_stops_chatter_on_a_level() {
    // Noise of +-0.01 around the level 0.2 (delta 0.1).
    let wobble = (0..200).map(|k| (k * 10 * MS, 0.2 + if k % 2 == 0 { 0.01 } else { -0.01 }));
    let mut plain = enc(|p| {
        p.mode = Mode::LevelCrossing;
        p.delta = 0.1;
    });
    assert!(run(&mut plain, wobble.clone()).len() > 150, "no hysteresis: chatter");
    let mut band = enc(|p| {
        p.mode = Mode::LevelCrossing;
        p.delta = 0.1;
        p.hysteresis = 0.3; // band +-0.015
    });
    assert_eq!(run(&mut band, wobble).len(), 0);
    // Send-on-delta with hysteresis needs delta + h to reverse.
    let mut sod = enc(|p| {
        p.delta = 0.1;
        p.hysteresis = 0.5;
    });
    // Up to 0.1; -0.04 would reverse without hysteresis (0.1 - delta = 0.0) but needs -0.05.
    let ev = run(&mut sod, [(0, 0.0), (S, 0.1), (2 * S, -0.04)]);
    assert_eq!(ev.iter().map(|c| c.polarity).collect::<Vec<_>>(), vec![1]);
    let ev = run(&mut sod, [(3 * S, -0.05), (4 * S, -0.1)]);
    assert_eq!(ev.iter().map(|c| c.polarity).collect::<Vec<_>>(), vec![-1, -1]);
    assert!(ev[0].level.abs() < 1e-12, "the reversal still reports the grid level 0.0");
    assert!((ev[1].level + 0.1).abs() < 1e-12, "same direction: no extra margin");
}

#[test]
fn refractory_period_and_polarity_choice() {
    let mut e = enc(|p| {
        p.delta = 0.1;
        p.refractory = 0.5;
    });
    let ev = run(&mut e, (0..=300).map(|k| (k * 10 * MS, k as f64 * 0.01)));
    assert!(ev.windows(2).all(|w| w[1].stamp - w[0].stamp >= 500 * MS));
    assert_eq!(ev.len(), 6, "events at 0.1 s, 0.6 s, ... 2.6 s");
    assert_eq!(e.counts().suppressed, 30 - 6);
    assert!((e.reference().expect("started") - 3.0).abs() < 1e-9, "the reference kept following");

    let mut rising = enc(|p| {
        p.delta = 0.1;
        p.polarities = Polarities::Rising;
    });
    let ev = run(&mut rising, sine(1.05, 1.0, 1000.0, 2.9));
    assert!(ev.iter().all(|c| c.polarity == 1));
    // 2.9 periods from 0 (ending at -0.617): rising 10 + 20 + 20 + 3 (levels -0.9 .. -0.7),
    // falling 3 x 20 (levels 0.9 .. -1.0), moved through but not published.
    assert_eq!((rising.counts().rising, rising.counts().filtered), (53, 60));
}

#[test]
fn relative_delta_follows_the_signal_range() {
    // delta = 0.1 x range; a sine of amplitude 3 has range 6, so delta = 0.6 and about
    // 4A / delta = 20 events per period (at most 2 fewer).
    let mut e = enc(|p| {
        p.delta = 0.1;
        p.delta_mode = DeltaMode::Relative;
        p.range_time_constant = 30.0;
    });
    let ev = run(&mut e, sine(3.0, 1.0, 1000.0, 12.0));
    let late: Vec<_> = ev.iter().filter(|c| c.stamp >= 2 * S).collect();
    let per_period = late.len() as f64 / 10.0;
    assert!((18.0..=20.0).contains(&per_period), "{per_period}");
    assert!(late.iter().all(|c| (c.delta - 0.6).abs() < 0.02), "delta {}", late[0].delta);
    // Flat signal: the range collapses and delta falls to min_delta, never to 0.
    let mut flat = enc(|p| {
        p.delta_mode = DeltaMode::Relative;
        p.min_delta = 0.02;
    });
    run(&mut flat, (0..100).map(|k| (k * S, 1.0)));
    assert_eq!(flat.delta(), 0.02);
}

#[test]
fn a_huge_jump_is_capped_and_the_reference_lands_on_the_grid() {
    let mut e = enc(|p| {
        p.delta = 0.1;
        p.max_events_per_sample = 5;
    });
    let ev = run(&mut e, [(0, 0.0), (MS, 1.04)]);
    assert_eq!(ev.len(), 5);
    assert_eq!(e.counts().overflow, 5);
    assert!((e.reference().expect("started") - 1.0).abs() < 1e-12);
    // And down again through a level-crossing grid.
    let mut lc = enc(|p| {
        p.mode = Mode::LevelCrossing;
        p.delta = 0.1;
        p.max_events_per_sample = 2;
    });
    run(&mut lc, [(0, 0.55), (MS, -0.55)]);
    assert_eq!(lc.counts().falling + lc.counts().overflow, 11, "levels 0.5 .. -0.5");
    assert!((lc.reference().expect("started") + 0.5).abs() < 1e-12);
    // Non-finite input never reaches an event.
    let mut out = Vec::new();
    assert_eq!(lc.step(2 * MS, f64::NAN, true, &mut out), 0);
    assert_eq!(lc.step(3 * MS, f64::INFINITY, true, &mut out), 0);
}

#[test]
fn extreme_magnitudes_never_give_non_finite_levels() {
    for mode in [Mode::SendOnDelta, Mode::LevelCrossing] {
        let mut e = enc(|p| {
            p.mode = mode;
            p.delta = 0.001;
        });
        let xs = [0.0, 1e308, -1e308, 1e308, 1e300, 1e300 + 1e290, -5.0, -4.0, f64::MAX, -f64::MAX];
        let ev = run(&mut e, xs.iter().enumerate().map(|(k, &x)| (k as Nanos * MS, x)));
        assert!(ev.iter().all(|c| c.level.is_finite()), "{mode:?}: {ev:?}");
        assert!(ev.len() <= xs.len() * 256);
        assert!(e.counts().overflow > 0);
    }
}

fn any_params() -> impl Strategy<Value = EncodingParams> {
    (
        prop_oneof![Just(Mode::SendOnDelta), Just(Mode::LevelCrossing)],
        prop_oneof![Just(DeltaMode::Absolute), Just(DeltaMode::Relative)],
        0.01f64..1.0,
        0.0f64..=1.0,
        prop_oneof![Just(0.0), 0.0f64..0.2],
        prop_oneof![Just(Polarities::Both), Just(Polarities::Rising), Just(Polarities::Falling)],
        1u32..20,
    )
        .prop_map(|(mode, delta_mode, delta, hysteresis, refractory, polarities, max)| EncodingParams {
            mode,
            delta_mode,
            delta,
            hysteresis,
            refractory,
            polarities,
            max_events_per_sample: max,
            min_delta: 0.005,
            range_time_constant: 5.0,
        })
}

proptest! {
    #[test]
    fn stamps_ordered_levels_on_the_grid_and_finite(
        p in any_params(),
        steps in prop::collection::vec((0i64..50_000_000, -3.0f64..3.0, any::<bool>()), 1..300),
        x0 in -100.0f64..100.0,
    ) {
        let mut e = LevelEncoder::new(&p);
        let (mut t, mut x) = (1_000 * S, x0);
        let mut last_stamp = i64::MIN;
        let mut out = Vec::new();
        for (dt, dx, gap) in steps {
            let t_prev = t;
            t += dt;
            x += dx;
            let reference = e.reference();
            out.clear();
            e.step(t, x, !gap, &mut out);
            for c in &out {
                prop_assert!(c.level.is_finite() && c.delta.is_finite() && c.delta > 0.0);
                prop_assert!(c.stamp >= last_stamp, "stamps went back: {} < {}", c.stamp, last_stamp);
                prop_assert!(c.stamp >= t_prev && c.stamp <= t);
                last_stamp = c.stamp;
                if let Some(r) = reference {
                    let k = (c.level - r) / c.delta;
                    prop_assert!((k - k.round()).abs() < 1e-6, "level {} not on the grid of {} step {}", c.level, r, c.delta);
                }
                if p.mode == Mode::LevelCrossing && p.delta_mode == DeltaMode::Absolute {
                    let k = c.level / p.delta;
                    prop_assert!((k - k.round()).abs() < 1e-6, "level {} off the fixed grid", c.level);
                }
                prop_assert!(p.polarities.publishes(c.polarity));
            }
        }
    }
}
