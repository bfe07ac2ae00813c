//! Scenario files: the shipped ones load, validate and build a world for every start
//! pose; bad files give errors that name the file and the key.

use sillage_world::{Scenario, World, WorldError};
use std::path::{Path, PathBuf};

fn scenario_dir() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("../../config/scenarios")
}

fn demo_text() -> String {
    std::fs::read_to_string(scenario_dir().join("demo.yaml")).unwrap_or_default()
}

#[test]
fn shipped_scenarios_load_and_build() {
    let mut names = Vec::new();
    let entries = std::fs::read_dir(scenario_dir()).map_err(|e| e.to_string());
    for entry in entries.into_iter().flatten().flatten() {
        let path = entry.path();
        if path.extension().and_then(|e| e.to_str()) != Some("yaml") {
            continue;
        }
        let s = Scenario::from_path(&path).unwrap_or_else(|e| panic!("{e}"));
        for i in 0..s.robot.start_poses.len() {
            let mut w = World::new(&s, 3, i).unwrap_or_else(|e| panic!("{}: {e}", path.display()));
            w.step(1.0);
            assert_eq!(w.drain_chem().count() as f64, s.sensors.sample_rate.round());
        }
        names.push(s.name);
    }
    names.sort();
    assert_eq!(
        names,
        [
            "drum-store-side-start",
            "greenhouse-light-air",
            "meandering-yard",
            "open-field-gaussian",
            "plant-room-cabinet",
            "steady-corridor",
            "warehouse-hall"
        ]
    );
}

#[test]
fn demo_has_the_advertised_geometry() {
    let s = Scenario::from_yaml_str(&demo_text(), "demo.yaml").unwrap_or_else(|e| panic!("{e}"));
    // Every start pose is 6-10 m downwind (wind to +x) of the leak.
    let src = s.sources[0].position;
    for p in &s.robot.start_poses {
        let (dx, dy) = (p[0] - src[0], p[1] - src[1]);
        let downwind = dx * s.wind.direction.cos() + dy * s.wind.direction.sin();
        assert!(
            (6.0..=10.5).contains(&downwind),
            "start {p:?}: {downwind} m downwind"
        );
    }
}

fn error_of(text: &str) -> WorldError {
    match Scenario::from_yaml_str(text, "bad.yaml") {
        Ok(_) => panic!("accepted a bad scenario"),
        Err(e) => e,
    }
}

#[test]
fn unknown_key_names_file_and_path() {
    let text = demo_text().replace("    beta: 0.5", "    beta: 0.5\n    gain: 2.0");
    let e = error_of(&text);
    let msg = e.to_string();
    assert!(matches!(e, WorldError::Parse { .. }), "{msg}");
    assert!(msg.starts_with("bad.yaml: key `sensors.mox"), "{msg}");
    assert!(msg.contains("gain"), "{msg}");
}

#[test]
fn a_missing_key_is_named_by_its_own_dotted_key() {
    let text: String = demo_text().lines().filter(|l| !l.starts_with("success_radius:")).map(|l| format!("{l}\n")).collect();
    let msg = error_of(&text).to_string();
    assert!(msg.starts_with("bad.yaml: key `success_radius`: missing (required)"), "{msg}");
    assert!(!msg.contains("key `.`"), "{msg}");
}

#[test]
fn wrong_type_names_the_key() {
    let text = demo_text().replace("position: [3.0, 6.0, 0.3]", "position: [3.0, 6.0]");
    let msg = error_of(&text).to_string();
    assert!(msg.contains("sources[0].position"), "{msg}");
}

#[test]
fn unknown_plume_mode_is_rejected() {
    let text = demo_text().replace("mode: filament", "mode: puffs");
    let msg = error_of(&text).to_string();
    assert!(msg.contains("plume") && msg.contains("puffs"), "{msg}");
}

#[test]
fn invalid_values_name_the_key() {
    let cases = [
        ("speed: 0.5", "speed: -0.5", "wind.speed"),
        ("tau_rise: 1.8", "tau_rise: 0.0", "sensors.mox.tau_rise"),
        (
            "- [11.0, 6.0, 3.1416]",
            "- [6.0, 1.0, 3.1416]",
            "robot.start_poses[0]",
        ),
        (
            "position: [3.0, 6.0, 0.3]",
            "position: [7.0, 1.0, 0.3]",
            "sources[0].position",
        ),
        ("{name: right,", "{name: left,", "sensors.channels[1].name"),
        ("max: [20.0, 12.0]", "max: [-1.0, 12.0]", "arena"),
        (
            "per_second: 10.0",
            "per_second: 0.0",
            "sources[0].filaments.per_second",
        ),
        ("range_max: 10.0", "range_max: 0.05", "laser.range_max"),
        ("coherence: 0.5", "coherence: 1.5", "wind.grid.coherence"),
        ("resolution: 0.5", "resolution: 0.0", "wind.grid.resolution"),
        (
            "solid_walls: [south, north]",
            "solid_walls: [south, north, east, west]",
            "wind.grid.solid_walls",
        ),
        (
            "solid_walls: [south, north]",
            "solid_walls: [south, south]",
            "wind.grid.solid_walls[1]",
        ),
        (
            "air_changes_per_hour: 90.0",
            "air_changes_per_hour: -1.0",
            "room.air_changes_per_hour",
        ),
        ("height: 6.0", "height: 0.0", "room.height"),
    ];
    for (from, to, key) in cases {
        let text = demo_text();
        assert!(text.contains(from), "demo.yaml lacks `{from}`");
        match error_of(&text.replacen(from, to, 1)) {
            WorldError::Invalid {
                file,
                key: k,
                reason,
            } => {
                assert_eq!(file, "bad.yaml");
                assert_eq!(k, key, "{reason}");
            }
            other => panic!("{key}: {other}"),
        }
    }
}

#[test]
fn gaussian_mode_needs_wind() {
    let text =
        std::fs::read_to_string(scenario_dir().join("field_gaussian.yaml")).unwrap_or_default();
    let e = error_of(&text.replace("speed: 4.0", "speed: 0.0"));
    assert!(e.to_string().contains("wind.speed"), "{e}");
}

/// The time-averaged plume lies along the mean wind; a meandering or spatially varying
/// anemometer wind beside it would contradict it, so the check refuses both.
#[test]
fn gaussian_mode_refuses_a_wind_it_does_not_follow() {
    let text =
        std::fs::read_to_string(scenario_dir().join("field_gaussian.yaml")).unwrap_or_default();
    assert!(text.contains("field: uniform"));
    let grid = error_of(&text.replace("field: uniform", "field: grid"));
    assert!(grid.to_string().contains("wind.field"), "{grid}");
    // Without the key the gaussian mode takes the uniform field (and loads).
    let plain = text.replace("  field: uniform\n", "");
    let s = Scenario::from_yaml_str(&plain, "plain.yaml").unwrap_or_else(|e| panic!("{e}"));
    assert_eq!(
        s.wind_field(),
        sillage_world::scenario::WindFieldKind::Uniform
    );
    let meander = error_of(&text.replace(
        "field: uniform",
        "field: uniform\n  meander: {direction_std: 0.2}",
    ));
    assert!(meander.to_string().contains("wind.meander"), "{meander}");
}

#[test]
fn filament_mode_defaults_to_the_grid_field_and_keeps_uniform_as_an_option() {
    let text = demo_text();
    let plain = text.replace("  field: grid\n", "");
    let s = Scenario::from_yaml_str(&plain, "plain.yaml").unwrap_or_else(|e| panic!("{e}"));
    assert_eq!(s.wind_field(), sillage_world::scenario::WindFieldKind::Grid);
    let u = Scenario::from_yaml_str(&text.replace("field: grid", "field: uniform"), "u.yaml")
        .unwrap_or_else(|e| panic!("{e}"));
    let w = World::new(&u, 1, 0).unwrap_or_else(|e| panic!("{e}"));
    assert!(!w.wind().is_grid());
    assert_eq!(w.wind_at([1.0, 1.0, 0.3]), w.wind_at([18.0, 11.0, 0.3]));
}

#[test]
fn missing_file_names_the_path() {
    let e = match Scenario::from_path(Path::new("/nonexistent/scenario.yaml")) {
        Ok(_) => panic!("loaded a missing file"),
        Err(e) => e,
    };
    assert!(matches!(e, WorldError::Read { .. }));
    assert!(e.to_string().contains("/nonexistent/scenario.yaml"));
}

#[test]
fn start_pose_index_is_checked() {
    let s = Scenario::from_yaml_str(&demo_text(), "demo.yaml").unwrap_or_else(|e| panic!("{e}"));
    assert!(matches!(
        World::new(&s, 0, 4),
        Err(WorldError::StartPose { index: 4, count: 4 })
    ));
}
