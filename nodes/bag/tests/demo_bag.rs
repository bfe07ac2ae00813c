//! The committed demo bag is exactly what its generator makes, and reads back in order.

#[path = "support/demo_scenario.rs"]
mod demo_scenario;

use sillage_bag::{Bag, ReadOptions};
use std::path::PathBuf;

fn committed() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("../../tests/fixtures/demo/demo_bag")
}

#[test]
fn generator_reproduces_the_committed_demo_bag_byte_for_byte() {
    let tmp = std::env::temp_dir().join(format!("sillage-demo-{}", std::process::id()));
    let dir = tmp.join("demo_bag");
    demo_scenario::write_demo(&dir, demo_scenario::SEED, demo_scenario::DURATION_S, true).expect("writes");
    for f in ["demo_bag_0.mcap", "metadata.yaml"] {
        let fresh = std::fs::read(dir.join(f)).expect("fresh file");
        let kept = std::fs::read(committed().join(f)).expect("committed file (run the make_demo_bag example)");
        assert!(fresh == kept, "{f} differs from the committed one: regenerate with the make_demo_bag example");
    }
    let size = std::fs::metadata(committed().join("demo_bag_0.mcap")).expect("exists").len();
    assert!(size < 2_000_000, "demo bag is {size} bytes");
    let _ = std::fs::remove_dir_all(&tmp);
}

#[test]
fn demo_bag_reads_in_log_time_order_with_expected_counts() {
    let bag = Bag::open(committed()).expect("opens");
    let mut last = i64::MIN;
    let mut counts = std::collections::BTreeMap::new();
    let mut it = bag.messages(&ReadOptions { strict: true, ..Default::default() }).expect("reads");
    for m in it.by_ref() {
        let m = m.expect("message");
        assert!(m.log_time >= last);
        last = m.log_time;
        *counts.entry(m.topic.to_string()).or_insert(0u32) += 1;
    }
    // 60 s at 50 Hz (chem, odom), 10 Hz (wind), 1 Hz (e_stop).
    let want: Vec<(String, u32)> = [("/chem", 3000), ("/e_stop", 60), ("/odom", 3000), ("/wind", 600)].iter().map(|(t, n)| (t.to_string(), *n)).collect();
    assert_eq!(counts.into_iter().collect::<Vec<_>>(), want);
    assert!(it.report().warnings.is_empty(), "{:?}", it.report().warnings);
}
