//! Property test of the whole node core on hostile input: random stamps (also backwards),
//! random channel sets (empty and repeated names, any order, mismatched lengths), NaN, inf,
//! negative and zero values, unknown quantities. The core must never panic, and whatever it
//! publishes must be sane: finite levels, events sorted by stamp, stamps not after the sample,
//! channel indices that point at a usable name of the current sample, and per channel name
//! stamps that never go back (between resets).

use proptest::prelude::*;
use sillage_core::msg::{ChemSample, Header};
use sillage_core::{Msg, Nanos, NodeCore, Outbox};
use sillage_event_encoder::{EventEncoder, Params};
use std::collections::HashMap;

const NAMES: [&str; 5] = ["left", "right", "", "rear", "left"];

fn value() -> impl Strategy<Value = f64> {
    prop_oneof![
        6 => 100.0f64..20_000.0,
        1 => Just(f64::NAN),
        1 => Just(f64::INFINITY),
        1 => Just(f64::NEG_INFINITY),
        1 => Just(0.0),
        1 => -1e4f64..0.0,
        1 => Just(1e-320),
        1 => Just(1e308),
    ]
}

#[derive(Debug, Clone)]
struct Input {
    dt: Nanos,
    names: Vec<usize>,
    values: Vec<f64>,
    quantity: u8,
}

fn input() -> impl Strategy<Value = Input> {
    (
        prop_oneof![8 => 1i64..200_000_000, 1 => -3_000_000_000i64..0, 1 => 0i64..5_000_000_000],
        prop::collection::vec(0usize..NAMES.len(), 0..5),
        prop::collection::vec(value(), 0..6),
        prop_oneof![8 => Just(0u8), 1 => 0u8..4, 1 => 4u8..=255],
    )
        .prop_map(|(dt, names, values, quantity)| Input { dt, names, values, quantity })
}

fn params() -> impl Strategy<Value = Params> {
    (0.001f64..0.3, any::<bool>(), 0.0f64..1.0, 0.0f64..0.05).prop_map(|(delta, lc, hysteresis, refractory)| {
        let mut p = Params::default();
        p.encoding.delta = delta;
        p.encoding.hysteresis = hysteresis;
        p.encoding.refractory = refractory;
        p.encoding.max_events_per_sample = 50;
        if lc {
            p.encoding.mode = sillage_event_encoder::encoding::Mode::LevelCrossing;
        }
        p.conditioning.baseline_time_constant = 5.0;
        p
    })
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 200, ..ProptestConfig::default() })]
    #[test]
    fn hostile_input_never_breaks_the_core(p in params(), inputs in prop::collection::vec(input(), 1..120)) {
        let mut e = EventEncoder::new(p.clone()).expect("valid");
        let mut out = Outbox::new();
        let mut t: Nanos = 10_000_000_000;
        let mut last_by_name: HashMap<String, Nanos> = HashMap::new();
        let mut resets = 0;
        for inp in inputs {
            t += inp.dt;
            let channels: Vec<String> = inp.names.iter().map(|&i| NAMES[i].to_string()).collect();
            let s = ChemSample { header: Header::new(t, "b"), channels: channels.clone(), values: inp.values.clone(), quantity: inp.quantity };
            e.on_message(t, 0, &Msg::ChemSample(s), &mut out);
            if e.counts().backward_resets != resets {
                resets = e.counts().backward_resets;
                last_by_name.clear();
            }
            let published: Vec<_> = out.drain().collect();
            prop_assert!(published.len() <= 1, "one array per sample at most");
            for (port, m) in published {
                prop_assert_eq!(port, 0);
                let Msg::OdorEventArray(a) = m else { panic!("unexpected message") };
                prop_assert_eq!(a.header.stamp.to_nanos(), t);
                prop_assert!(!a.events.is_empty() || p.heartbeat > 0.0, "empty arrays only as heartbeats");
                prop_assert!(a.events.windows(2).all(|w| w[0].stamp <= w[1].stamp), "sorted by stamp");
                for ev in &a.events {
                    prop_assert!(ev.level.is_finite(), "level {}", ev.level);
                    prop_assert!(ev.polarity == 1 || ev.polarity == -1);
                    prop_assert!(ev.stamp.to_nanos() <= t);
                    let i = ev.channel as usize;
                    prop_assert!(i < channels.len());
                    let name = &channels[i];
                    prop_assert!(!name.is_empty() && channels.iter().position(|n| n == name) == Some(i), "event on an unusable entry");
                    let last = last_by_name.entry(name.clone()).or_insert(Nanos::MIN);
                    prop_assert!(ev.stamp.to_nanos() >= *last, "channel {} went back in time", name);
                    *last = ev.stamp.to_nanos();
                }
            }
        }
        let c = *e.counts();
        prop_assert_eq!(c.samples, c.accepted + c.dropped_old + c.rejected_samples());
        let mut diag = Vec::new();
        e.diagnostics(t, &mut diag);
        prop_assert!(diag.iter().all(|d| d.name.starts_with("event_encoder: ")));
    }
}
