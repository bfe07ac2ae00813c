//! Writes the demo bag (scenario "workshop crossing", see tests/support/demo_scenario.rs):
//!
//!     cargo run -p sillage-bag --example make_demo_bag -- tests/fixtures/demo/demo_bag
//!
//! Deterministic: the same seed gives the same bytes (a test checks the committed bag).

#[path = "../tests/support/demo_scenario.rs"]
mod demo_scenario;

fn main() -> Result<(), Box<dyn std::error::Error>> {
    let dir = std::env::args().nth(1).unwrap_or_else(|| "tests/fixtures/demo/demo_bag".into());
    let s = demo_scenario::write_demo(std::path::Path::new(&dir), demo_scenario::SEED, demo_scenario::DURATION_S, true)?;
    println!("{}: {} messages", s.file.display(), s.metadata.message_count);
    Ok(())
}
