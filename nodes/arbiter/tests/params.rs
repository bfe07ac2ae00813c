//! Parameters: the shipped file equals the defaults, bad values are refused at start with the
//! dotted key named, start-up-only keys cannot change at run time.

use serde_yaml::Value;
use sillage_arbiter::params::StrategyKind;
use sillage_arbiter::{Arbiter, Params};
use sillage_core::params::{self, set_key, NodeParams, ParamError, ParamFileError};
use sillage_core::NodeCore;

const FILE: &str = include_str!("../../../config/arbiter.yaml");

fn load(body: &str) -> Result<Params, ParamFileError> {
    params::load_str::<Params>(&format!("arbiter:\n  ros__parameters:\n{body}"), "test.yaml", "/arbiter")
}

fn refused_key(body: &str) -> String {
    match load(body) {
        Err(ParamFileError::Param { error, .. }) => error.key().to_string(),
        other => panic!("expected a parameter error for {body:?}, got {other:?}"),
    }
}

#[test]
fn shipped_file_is_the_defaults() {
    let p: Params = params::load_str(FILE, "config/arbiter.yaml", "/arbiter").expect("loads");
    assert_eq!(p, Params::default());
    // And every default key appears in the file (so the file documents all of them), except the
    // empty polygon: ROS 2 parameter files refuse empty lists (rcl's YAML parser gives "No
    // parameter value set"), so the file shows it commented out.
    let doc: Value = serde_yaml::from_str(FILE).expect("yaml");
    let section = params::section_for(&doc, "config/arbiter.yaml", "/arbiter").expect("section");
    let in_file: Vec<String> = params::flatten(&section).into_iter().map(|(k, _)| k).collect();
    for (k, _) in params::flatten(&params::to_value(&Params::default())) {
        assert!(in_file.contains(&k) || k == "geofence.polygon", "config/arbiter.yaml lacks '{k}'");
    }
    assert!(FILE.contains("# polygon:"), "the polygon key is documented");
    assert!(!FILE.lines().any(|l| !l.trim_start().starts_with('#') && l.contains("[]")), "no empty list in a ROS 2 parameter file");
}

#[test]
fn bad_values_are_refused_with_the_key() {
    let cases = [
        ("    guard:\n      max_linear: -0.1\n", "guard.max_linear"),
        ("    guard:\n      max_angular: -1.0\n", "guard.max_angular"),
        ("    guard:\n      max_linear_decel: 0.0\n", "guard.max_linear_decel"),
        ("    guard:\n      max_reverse: 0.5\n", "guard.max_reverse"),
        ("    obstacle:\n      stop_distance: 1.0\n      slow_distance: 0.5\n", "obstacle.stop_distance"),
        ("    cast:\n      leg_initial: 5.0\n      leg_max: 2.0\n", "cast.leg_initial"),
        ("    contact:\n      bout_rate_exit: 0.5\n", "contact.bout_rate_exit"),
        ("    contact:\n      intermittency_exit: 0.5\n", "contact.intermittency_exit"),
        ("    zigzag:\n      angle_initial: 1.2\n      angle_max: 1.0\n", "zigzag.angle_initial"),
        ("    rate: 0.0\n", "rate"),
        ("    watchdog:\n      odom: -1.0\n", "watchdog.odom"),
        ("    geofence:\n      enabled: true\n", "geofence.polygon"),
        ("    geofence:\n      enabled: true\n      polygon: [0.0, 0.0, 1.0, 1.0, 1.0, 0.0, 0.0, 1.0]\n", "geofence.polygon"),
        ("    geofence:\n      polygon: [0.0, 0.0, 1.0]\n", "geofence.polygon"),
        ("    strategy: infotaxis\n", "strategy"),
        ("    base: tracked\n", "base"),
        ("    guard:\n      max_speed: 1.0\n", "guard.max_speed"),
    ];
    for (body, key) in cases {
        assert_eq!(refused_key(body), key, "{body}");
    }
    // The messages say what is wrong.
    let e = load("    geofence:\n      enabled: true\n      polygon: [0.0, 0.0, 1.0, 1.0, 1.0, 0.0, 0.0, 1.0]\n").expect_err("bow tie");
    assert!(e.to_string().contains("self-intersecting") && e.to_string().contains("test.yaml"), "{e}");
    let e = load("    geofence:\n      enabled: true\n").expect_err("empty");
    assert!(e.to_string().contains("empty"), "{e}");
    let e = load("    strategy: infotaxis\n").expect_err("unknown");
    assert!(e.to_string().contains("cast_surge"), "lists the known ones: {e}");
    let e = load("    obstacle:\n      stop_distance: 1.0\n      slow_distance: 0.5\n").expect_err("inverted");
    assert!(e.to_string().contains("inverted"), "{e}");
    // Integers are fine for doubles; valid polygons and strategies load.
    let p = load("    rate: 20\n    strategy: spiral\n    geofence:\n      enabled: true\n      polygon: [0, 0, 4, 0, 4, 4, 0, 4]\n").expect("valid");
    assert_eq!((p.rate, p.strategy), (20.0, StrategyKind::Spiral));
    assert!(p.fence_polygon().is_some());
    // Arbiter::new validates too.
    let bad = Params { guard: sillage_arbiter::params::GuardParams { max_linear: f64::NAN, ..Default::default() }, ..Default::default() };
    assert_eq!(Arbiter::new(bad).expect_err("NaN cap").key(), "guard.max_linear");
}

#[test]
fn run_time_changes_keep_start_up_keys() {
    let mut a = Arbiter::new(Params::default()).expect("valid");
    let empty = Value::Mapping(Default::default());
    let e = a.set_params_yaml(&set_key(&empty, "rate", Value::from(20.0))).expect_err("start-up only");
    assert!(matches!(&e, ParamError::Invalid { key, .. } if key == "rate"), "{e}");
    let e = a.set_params_yaml(&set_key(&empty, "cmd_vel_stamped", Value::from(false))).expect_err("start-up only");
    assert_eq!(e.key(), "cmd_vel_stamped");
    let e = a.set_params_yaml(&set_key(&empty, "base", Value::from("holonomic"))).expect_err("start-up only");
    assert_eq!(e.key(), "base");
    let e = a.set_params_yaml(&set_key(&empty, "guard.max_linear", Value::from(-1.0))).expect_err("range");
    assert_eq!(e.key(), "guard.max_linear");
    assert_eq!(a.params(), &Params::default(), "old values kept on error");
    a.set_params_yaml(&set_key(&empty, "strategy", Value::from("zigzag"))).expect("valid change");
    assert_eq!(a.params().strategy, StrategyKind::Zigzag);
    assert!(Params::default().validate().is_ok());
}
