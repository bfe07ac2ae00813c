//! Checks against reference values made by tests/refs/world_refs.py with numpy 2.4.6 and
//! scipy 1.17.1 (fixture tests/fixtures/world_refs.json; regenerate with
//! `python tests/refs/world_refs.py` in the venv of tests/refs/venv.sh):
//! Briggs sigmas over 50 m - 10 km, world-frame Gaussian plume values with their
//! dblquad mass flux, and scipy.signal.lsim first-order step crossing times.

use serde::Deserialize;
use sillage_world::gaussian_plume::{briggs_sigmas, GaussianPlume, StabilityClass, Terrain};
use sillage_world::mox::{MoxParams, MoxSensor};

#[derive(Deserialize)]
struct Refs {
    made_by: String,
    briggs: Vec<Briggs>,
    plume: Vec<PlumeCase>,
    first_order_step: Vec<StepCase>,
}

#[derive(Deserialize)]
struct Briggs {
    terrain: Terrain,
    class: StabilityClass,
    x: f64,
    sigma_y: f64,
    sigma_z: f64,
}

#[derive(Deserialize)]
struct PlumeCase {
    class: StabilityClass,
    terrain: Terrain,
    q: f64,
    u: f64,
    direction: f64,
    source: [f64; 3],
    receptor: [f64; 3],
    concentration: f64,
    flux: f64,
}

#[derive(Deserialize)]
struct StepCase {
    tau: f64,
    t10: f64,
    t63: f64,
    t90: f64,
}

fn refs() -> Refs {
    let path = concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/tests/fixtures/world_refs.json"
    );
    let text = std::fs::read_to_string(path).unwrap_or_else(|e| panic!("{path}: {e}"));
    serde_json::from_str(&text).unwrap_or_else(|e| panic!("{path}: {e}"))
}

#[test]
fn briggs_sigmas_match_numpy_table() {
    let r = refs();
    assert!(r.made_by.contains("scipy 1.17.1"), "{}", r.made_by);
    assert_eq!(r.briggs.len(), 12 * 6);
    for b in &r.briggs {
        let (sy, sz) = briggs_sigmas(b.class, b.terrain, b.x);
        assert!(
            (sy / b.sigma_y - 1.0).abs() < 1e-12,
            "{:?} {:?} x={}: {sy} vs {}",
            b.terrain,
            b.class,
            b.x,
            b.sigma_y
        );
        assert!(
            (sz / b.sigma_z - 1.0).abs() < 1e-12,
            "{:?} {:?} x={}: {sz} vs {}",
            b.terrain,
            b.class,
            b.x,
            b.sigma_z
        );
    }
}

#[test]
fn world_frame_plume_matches_numpy_and_flux_is_q() {
    for c in refs().plume {
        let plume = GaussianPlume {
            class: c.class,
            terrain: c.terrain,
            wind_speed: c.u,
            wind_direction: c.direction,
            min_sigma: 1e-3,
            sources: vec![(c.source, c.q)],
        };
        let got = plume.concentration(c.receptor);
        assert!(
            (got / c.concentration - 1.0).abs() < 1e-10,
            "{:?}: {got} vs {}",
            c.receptor,
            c.concentration
        );
        // scipy dblquad of u C over the crosswind plane gives back the release rate.
        assert!(
            (c.flux / c.q - 1.0).abs() < 1e-6,
            "flux {} vs q {}",
            c.flux,
            c.q
        );
    }
}

/// Times at which the MOX response crosses 10 / 63.2 / 90 % of a step, rising (from clean
/// air) or decaying (from equilibrium at a high concentration back to clean air).
fn mox_crossings(rising: bool) -> [f64; 3] {
    let p = MoxParams {
        noise_std: 0.0,
        adc_bits: 0,
        ..MoxParams::default()
    };
    let c_high = 1e-2;
    let mut s = MoxSensor::new(p.clone());
    if !rising {
        s.update(c_high, 1e4);
    }
    let (start, end) = (
        s.response(),
        if rising {
            p.target_response(c_high)
        } else {
            1.0
        },
    );
    let levels = [0.1, 1.0 - (-1.0f64).exp(), 0.9];
    let mut out = [f64::NAN; 3];
    let (dt, mut prev) = (1e-3, 0.0);
    for k in 1..100_000 {
        s.update(if rising { c_high } else { 0.0 }, dt);
        let frac = (s.response() - start) / (end - start);
        for (o, &l) in out.iter_mut().zip(&levels) {
            if o.is_nan() && frac >= l {
                *o = (k - 1) as f64 * dt + dt * (l - prev) / (frac - prev);
            }
        }
        prev = frac;
    }
    out
}

#[test]
fn mox_step_response_matches_scipy_lsim() {
    let r = refs();
    for (rising, case) in [
        (true, &r.first_order_step[0]),
        (false, &r.first_order_step[1]),
    ] {
        let got = mox_crossings(rising);
        println!(
            "tau {}: t10 {:.4} / {:.4}, t63 {:.4} / {:.4}, t90 {:.4} / {:.4} (sillage / scipy)",
            case.tau, got[0], case.t10, got[1], case.t63, got[2], case.t90
        );
        for (g, want) in got.iter().zip([case.t10, case.t63, case.t90]) {
            assert!(
                (g - want).abs() < 1e-4,
                "tau {}: {g} vs scipy {want}",
                case.tau
            );
        }
    }
}
