//! Wall time of building the demo world and of stepping it (a rough figure; the criterion
//! benches are the reference).
use sillage_world::{Scenario, Twist2, World};
use std::time::Instant;

fn main() {
    let path = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("../../config/scenarios/demo.yaml");
    let mut s = match Scenario::from_path(&path) {
        Ok(s) => s,
        Err(e) => return eprintln!("{e}"),
    };
    if std::env::args().any(|a| a == "uniform") {
        s.wind.field = Some(sillage_world::scenario::WindFieldKind::Uniform);
    }
    let t0 = Instant::now();
    let mut w = match World::new(&s, 1, 0) {
        Ok(w) => w,
        Err(e) => return eprintln!("{e}"),
    };
    let build = t0.elapsed();
    w.set_command(Twist2::new(0.0, 0.0, 0.3));
    let t1 = Instant::now();
    for _ in 0..24_000 {
        w.step(0.01);
        w.drain_chem().count();
        w.drain_wind().count();
        w.drain_scans().count();
    }
    println!("build {:?}, 240 s stepped in {:?}, {} filaments", build, t1.elapsed(), w.filament_count());
}
