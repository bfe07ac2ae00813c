//! Cross-crate integration tests of sillage live in `tests/tests/`; this library holds shared
//! helpers for them (fixture paths, and the fault-injection harness in [`faults`]).

pub mod faults;

use std::path::PathBuf;

/// The repository root (the folder holding the workspace `Cargo.toml`).
pub fn repo_root() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR")).parent().map(PathBuf::from).unwrap_or_default()
}

/// A path below `tests/fixtures/`.
pub fn fixture(rel: &str) -> PathBuf {
    repo_root().join("tests").join("fixtures").join(rel)
}
