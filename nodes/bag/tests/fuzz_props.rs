//! Random and mutated bytes into the MCAP reader and the CDR decoder: messages or typed
//! errors, never a panic (the same entry points as the cargo-fuzz targets in tests/fuzz).

use proptest::prelude::*;
use sillage_bag::fuzzing::{decode_any, drain_mcap};
use std::path::PathBuf;

fn seed_files() -> Vec<Vec<u8>> {
    let root = PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("../../tests/fixtures");
    ["bags/mcap_ros2.mcap", "bags/rosbags_mcap/rosbags_mcap.mcap"].iter().map(|p| std::fs::read(root.join(p)).expect("fixture")).collect()
}

#[test]
fn seeds_read_clean() {
    for s in seed_files() {
        let d = drain_mcap(&s, usize::MAX);
        assert_eq!(d.error, None);
        assert_eq!(d.messages, 38);
        assert_eq!(d.decoded, 35);
    }
}

proptest! {
    // 600 cases each by default (debug builds are slow); PROPTEST_CASES=N for longer runs.
    #![proptest_config(ProptestConfig { cases: std::env::var("PROPTEST_CASES").ok().and_then(|v| v.parse().ok()).unwrap_or(600), ..ProptestConfig::default() })]

    #[test]
    fn mutated_mcap_files_never_panic(which in 0usize..2, edits in prop::collection::vec((any::<prop::sample::Index>(), any::<u8>()), 1..12), cut in any::<prop::sample::Index>(), truncate in any::<bool>()) {
        let mut bytes = seed_files()[which].clone();
        for (i, b) in &edits {
            let k = i.index(bytes.len());
            bytes[k] = *b;
        }
        if truncate {
            bytes.truncate(cut.index(bytes.len()));
        }
        // The property is that this returns (no panic, no hang); an error is fine.
        let _ = drain_mcap(&bytes, 100_000);
    }

    #[test]
    fn random_bytes_into_the_mcap_reader_never_panic(mut bytes in prop::collection::vec(any::<u8>(), 0..2048), magic in any::<bool>()) {
        if magic && bytes.len() >= 8 {
            bytes[..8].copy_from_slice(b"\x89MCAP0\r\n");
        }
        let d = drain_mcap(&bytes, 10_000);
        if !magic || bytes.len() < 8 {
            prop_assert!(d.error.as_deref().is_some_and(|e| e.contains("bad magic") && e.contains("fuzz.mcap")), "{:?}", d);
        }
    }

    #[test]
    fn random_cdr_never_panics(bytes in prop::collection::vec(any::<u8>(), 0..512)) {
        let _ = decode_any(&bytes);
    }

    #[test]
    fn cdr_with_a_valid_header_never_panics(pick in any::<u8>(), body in prop::collection::vec(any::<u8>(), 0..512)) {
        let mut b = vec![pick, 0, 1, 0, 0];
        b.extend_from_slice(&body);
        let _ = decode_any(&b);
    }
}

/// Inputs the fuzzer once crashed on (kept as regressions). `linear-chunk-overflow.mcap` made
/// the mcap 0.26 crate's own chunk walker subtract with overflow; sillage now decodes chunks
/// itself on the front-to-back path too.
#[test]
fn fuzzer_regressions_read_without_panic() {
    let dir = PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("tests/data/fuzz");
    let mut n = 0;
    for e in std::fs::read_dir(dir).expect("dir") {
        let bytes = std::fs::read(e.expect("entry").path()).expect("read");
        let _ = drain_mcap(&bytes, 100_000);
        n += 1;
    }
    assert!(n >= 1);
}
