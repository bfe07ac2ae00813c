use super::*;
use proptest::prelude::*;
use std::f64::consts::{FRAC_PI_2, PI};

#[test]
fn driving_forward_in_still_air_is_still_air() {
    // 0.5 m/s forward in still air: the anemometer reads a 0.5 m/s head wind (air going to -x).
    let p = AirParams::default();
    let m = Motion { velocity: [0.5, 0.0], omega: 0.0 };
    let w = p.true_wind_base([-0.5, 0.0], Some(&m)).expect("finite");
    assert!(w.compensated && norm(w.base) < 1e-12);
    assert_eq!(p.upwind(w.base), None);
    // Without odometry the reading is used as it is, and flagged.
    let raw = p.true_wind_base([-0.5, 0.0], None).expect("finite");
    assert!(!raw.compensated);
    assert!(p.upwind(raw.base).expect("wind").abs() < 1e-12, "comes from ahead");
}

#[test]
fn rotation_moves_an_offset_anemometer() {
    // Rigid-body kinematics v_P = v_O + omega x r (any dynamics text): turning at 1 rad/s
    // with the sensor 0.2 m ahead moves it at 0.2 m/s to the left; 0.2 m to the left, backward.
    let m = Motion { velocity: [0.0, 0.0], omega: 1.0 };
    assert_eq!(m.sensor_velocity([0.2, 0.0]), [0.0, 0.2]);
    assert_eq!(m.sensor_velocity([0.0, 0.2]), [-0.2, 0.0]);
    let p = AirParams { anemometer_x: 0.2, ..AirParams::default() };
    let w = p.true_wind_base([-0.5, -0.2], Some(&m)).expect("finite");
    assert!((w.base[0] + 0.5).abs() < 1e-12 && w.base[1].abs() < 1e-12);
}

#[test]
fn true_readings_are_not_corrected_and_bad_values_are_errors() {
    let p = AirParams { relative: false, ..AirParams::default() };
    let m = Motion { velocity: [0.5, 0.1], omega: 0.3 };
    assert_eq!(p.true_wind_base([0.3, 0.4], Some(&m)), Ok(TrueWind { base: [0.3, 0.4], compensated: true }));
    assert!(matches!(p.true_wind_base([f64::NAN, 0.0], None), Err(AirError::NonFinite { what: "wind reading" })));
    let bad = Motion { velocity: [0.0, f64::INFINITY], omega: 0.0 };
    assert!(AirParams::default().true_wind_base([0.0, 0.0], Some(&bad)).is_err());
    assert_eq!(p.upwind([f64::NAN, 1.0]), None);
}

#[test]
fn still_air_threshold_and_parameter_keys() {
    let p = AirParams::default();
    assert!(p.is_still(0.0) && p.is_still(DEFAULT_MIN_SPEED * 0.99) && !p.is_still(DEFAULT_MIN_SPEED));
    assert!(p.is_still(f64::NAN));
    let bad = AirParams { min_speed: 0.0, ..AirParams::default() };
    assert_eq!(bad.check("wind").map_err(|e| e.key().to_string()), Err("wind.min_speed".to_string()));
    let bad = AirParams { anemometer_y: f64::NAN, ..AirParams::default() };
    assert_eq!(bad.check("air").map_err(|e| e.key().to_string()), Err("air.anemometer_y".to_string()));
    p.check("wind").expect("defaults valid");
}

#[test]
fn frames_rotate_by_yaw() {
    // Facing +y (yaw 90 deg), the robot's forward axis is +y in odom.
    let g = base_to_ground([1.0, 0.0], FRAC_PI_2);
    assert!(g[0].abs() < 1e-12 && (g[1] - 1.0).abs() < 1e-12);
    let up = AirParams::default().upwind([0.0, -1.0]).expect("wind");
    assert!((up - FRAC_PI_2).abs() < 1e-12, "air going to -y comes from +y");
}

proptest! {
    /// Correcting the reading the anemometer would make gives back the true wind, for any
    /// lever arm and motion.
    #[test]
    fn correction_inverts_the_measurement(
        wx in -5.0f64..5.0, wy in -5.0f64..5.0, vx in -2.0f64..2.0, vy in -2.0f64..2.0,
        om in -3.0f64..3.0, rx in -1.0f64..1.0, ry in -1.0f64..1.0,
    ) {
        let p = AirParams { anemometer_x: rx, anemometer_y: ry, ..AirParams::default() };
        let m = Motion { velocity: [vx, vy], omega: om };
        let rel = p.relative_wind_base([wx, wy], &m);
        let t = p.true_wind_base(rel, Some(&m)).expect("finite");
        prop_assert!((t.base[0] - wx).abs() < 1e-9 && (t.base[1] - wy).abs() < 1e-9);
    }

    /// Rotations keep the speed and invert each other; upwind turns with the frame.
    #[test]
    fn rotations_keep_speed_and_upwind_turns(wx in -5.0f64..5.0, wy in -5.0f64..5.0, yaw in -PI..PI) {
        let g = base_to_ground([wx, wy], yaw);
        prop_assert!((norm(g) - norm([wx, wy])).abs() < 1e-9);
        let b = ground_to_base(g, yaw);
        prop_assert!((b[0] - wx).abs() < 1e-9 && (b[1] - wy).abs() < 1e-9);
        let p = AirParams::default();
        if let (Some(ub), Some(ug)) = (p.upwind([wx, wy]), p.upwind(g)) {
            let d = (ug - ub - yaw + 3.0 * PI).rem_euclid(2.0 * PI) - PI;
            prop_assert!(d.abs() < 1e-9);
        }
    }
}
