//! World-level behaviour: determinism, sample clocks, sensor responses in and out of the
//! plume, anemometer frame, laser and success checks, on the shipped demo scenario.

use sillage_world::{GridSpec, Scenario, Twist2, World};
use std::path::Path;

fn demo() -> Scenario {
    let path = Path::new(env!("CARGO_MANIFEST_DIR")).join("../../config/scenarios/demo.yaml");
    Scenario::from_path(&path).unwrap_or_else(|e| panic!("{e}"))
}

fn world(s: &Scenario, seed: u64, start: usize) -> World {
    World::new(s, seed, start).unwrap_or_else(|e| panic!("{e}"))
}

/// Chemical samples (stamp, resistances) and anemometer vectors of a short run.
type RunLog = (Vec<(u64, Vec<f64>)>, Vec<[f64; 3]>);

fn run_log(seed: u64) -> RunLog {
    let s = demo();
    let mut w = world(&s, seed, 1);
    w.set_command(Twist2::new(0.3, 0.0, 0.2));
    let mut chem = Vec::new();
    let mut wind = Vec::new();
    for _ in 0..300 {
        w.step(0.02);
        chem.extend(w.drain_chem().map(|r| (r.stamp_ns, r.resistances)));
        wind.extend(w.drain_wind().map(|r| r.velocity));
    }
    (chem, wind)
}

#[test]
fn same_seed_same_run_other_seed_differs() {
    let a = run_log(11);
    let b = run_log(11);
    assert_eq!(a, b, "seeded runs must repeat bit for bit");
    let c = run_log(12);
    assert_ne!(a.1, c.1, "another seed gives another run");
}

#[test]
fn sample_clocks_are_exact_whatever_the_step() {
    let s = demo();
    let mut w = world(&s, 1, 0);
    // Uneven steps, some longer than a sample period.
    for dt in [0.013, 0.2, 0.0071, 0.5, 0.28].iter().cycle().take(50) {
        w.step(*dt);
    }
    let t_ns = w.time_ns();
    let chem: Vec<u64> = w.drain_chem().map(|r| r.stamp_ns).collect();
    let wind: Vec<u64> = w.drain_wind().map(|r| r.stamp_ns).collect();
    let scans: Vec<u64> = w.drain_scans().map(|r| r.stamp_ns).collect();
    assert_eq!(chem.len() as u64, t_ns / 50_000_000, "20 Hz");
    assert!(chem
        .iter()
        .enumerate()
        .all(|(k, &t)| t == (k as u64 + 1) * 50_000_000));
    assert_eq!(wind.len() as u64, t_ns / 100_000_000, "10 Hz");
    assert_eq!(scans.len() as u64, t_ns / 100_000_000, "10 Hz");
}

#[test]
fn sensors_respond_downwind_not_upwind() {
    let s = demo();
    // Start pose 0 is 8 m downwind on the plume axis.
    let mut down = world(&s, 5, 0);
    // Same world with the robot placed 2 m upwind of the leak.
    let mut s_up = s.clone();
    s_up.robot.start_poses = vec![[1.0, 3.0, 0.0]];
    s_up.validate("upwind").unwrap_or_else(|e| panic!("{e}"));
    let mut up = world(&s_up, 5, 0);
    down.step(90.0);
    up.step(90.0);
    let mean = |w: &mut World| {
        let rs: Vec<f64> = w.drain_chem().skip(600).map(|r| r.resistances[0]).collect();
        rs.iter().sum::<f64>() / rs.len() as f64
    };
    let (rd, ru) = (mean(&mut down), mean(&mut up));
    // Each unit has its own drawn R0 (and drift); upwind it reads that baseline under the
    // room's well-mixed background only.
    let unit = |w: &World| {
        let m = &w.sensors()[0];
        m.baseline() / m.params().target_response(w.background())
    };
    let (r0_down, r0_up) = (unit(&down), unit(&up));
    println!(
        "mean left resistance over 60-90 s: downwind {rd:.0} ohm (unit in background {r0_down:.0}), upwind {ru:.0} ohm (unit in background {r0_up:.0}; background {:.2e} g/m^3)",
        up.background()
    );
    assert!(rd < 0.6 * r0_down, "downwind sensor should see gas: {rd}");
    assert!(
        (ru - r0_up).abs() < 0.03 * r0_up,
        "upwind sensor stays near its baseline: {ru}"
    );
}

#[test]
fn anemometer_reads_wind_in_base_link() {
    let s = demo();
    let mut w = world(&s, 2, 0); // facing -x (upwind), wind to +x at 0.5 m/s
    w.step(30.0);
    let v: Vec<[f64; 3]> = w
        .drain_wind()
        .collect::<Vec<_>>()
        .into_iter()
        .map(|r| r.velocity)
        .collect();
    let n = v.len() as f64;
    let mx = v.iter().map(|a| a[0]).sum::<f64>() / n;
    // Air goes to +x (world) = -x (body) for a robot facing -x: a head wind on the sensor.
    assert!((mx + 0.5).abs() < 0.1, "mean body x {mx}");
    let now = w.anemometer_now();
    let at = w.robot_pose().body_to_world(s.anemometer.position);
    let truth = w.wind_at(at);
    let yaw = w.robot_pose().yaw;
    let body_x = truth[0] * yaw.cos() + truth[1] * yaw.sin();
    assert!((now[0] - body_x).abs() < 1e-12);
}

#[test]
fn driving_to_the_source_succeeds_and_walls_count() {
    let s = demo();
    let mut w = world(&s, 3, 0); // (11, 6) facing pi, source at (3, 6)
    assert!(!w.source_reached());
    w.set_command(Twist2::new(0.4, 0.0, 0.0));
    while !w.source_reached() && w.time() < 60.0 {
        w.step(0.05);
    }
    assert!(
        w.source_reached(),
        "distance left {}",
        w.nearest_source_distance()
    );
    // 7.5 m at 0.4 m/s after a 0.5 s ramp: about 19 s.
    assert!((w.time() - 19.0).abs() < 0.5, "t = {}", w.time());
    assert_eq!(w.collisions(), 0);
    // Keep going west: the wall at x = 0 stops the robot.
    w.step(20.0);
    assert_eq!(w.collisions(), 1);
    assert!(
        w.robot_pose().x < 0.21 && w.robot_pose().x >= 0.2,
        "x = {}",
        w.robot_pose().x
    );
    assert_eq!(w.robot_twist(), Twist2::default());
    let scan = w
        .laser_scan_now()
        .unwrap_or_else(|| panic!("demo has a laser"));
    let mid = scan.ranges.len() / 2;
    // Scanner 0.1 m ahead of a centre 0.2 m from the wall, facing it: about 0.1 m.
    assert!(
        (scan.ranges[mid] - 0.1).abs() < 0.01,
        "front range {}",
        scan.ranges[mid]
    );
}

#[test]
fn mean_map_is_highest_near_the_axis() {
    let s = demo();
    let mut w = world(&s, 4, 0);
    w.step(40.0);
    let grid = GridSpec {
        origin: [1.0, 0.5],
        resolution: 1.0,
        nx: 19,
        ny: 11,
        z: 0.3,
    };
    w.start_mean_map(grid.clone(), 0.5);
    w.step(60.0);
    let Some((g, mean, n)) = w.mean_map() else {
        panic!("map was started")
    };
    assert_eq!(n, 120);
    assert_eq!(mean.len(), g.nx * g.ny);
    // Row j = 5 is y = 5.5 ... the axis y = 6 lies between rows 5 and 6. Upwind of the
    // source (x = 1, 2: i = 0, 1) is clean; at x = 9 (i = 8) the axis rows beat the edges.
    let at = |i: usize, j: usize| mean[j * g.nx + i];
    assert!(
        at(0, 5) < 1e-9 && at(1, 5) < 1e-6,
        "{} {}",
        at(0, 5),
        at(1, 5)
    );
    let axis = at(8, 5).max(at(8, 6));
    assert!(
        axis > 10.0 * at(8, 0) && axis > 10.0 * at(8, 10),
        "{axis} vs {} {}",
        at(8, 0),
        at(8, 10)
    );
}

/// The anemometer reads the grid wind where it is mounted: two robots at different places
/// of the hall read different winds, each equal to the field at its sensor.
#[test]
fn anemometer_reads_the_local_grid_wind() {
    let mut s = demo();
    s.robot.start_poses = vec![[11.0, 6.0, 0.0], [14.0, 9.6, 0.0]]; // open floor; beside the pallet
    let mut a = world(&s, 8, 0);
    let mut b = world(&s, 8, 1);
    a.step(20.0);
    b.step(20.0);
    assert!(a.wind().is_grid());
    let (va, vb) = (a.anemometer_now(), b.anemometer_now());
    for w in [&a, &b] {
        let at = w.robot_pose().body_to_world(s.anemometer.position);
        let u = w.wind_at(at);
        let now = w.anemometer_now();
        assert!(
            (now[0] - u[0]).abs() < 1e-12 && (now[1] - u[1]).abs() < 1e-12,
            "{now:?} vs {u:?}"
        );
    }
    assert!(
        (va[0] - vb[0]).abs() + (va[1] - vb[1]).abs() > 1e-3,
        "{va:?} {vb:?}"
    );
}

/// A closed hall (three solid walls, an inlet that lets the draft in and out) with short-lived
/// filaments: the retired gas builds a background that follows the single-zone solution
/// C = Q / (V lambda) (1 - exp(-lambda (t - t_age))), started when the first filaments age out.
#[test]
fn closed_hall_builds_a_well_mixed_background() {
    let mut s = demo();
    s.wind.speed = 0.05;
    s.wind.meander.direction_std = 0.0;
    s.wind.meander.speed_std = 0.0;
    s.wind.grid.solid_walls = vec![
        sillage_world::wind_grid::Edge::South,
        sillage_world::wind_grid::Edge::North,
        sillage_world::wind_grid::Edge::East,
    ];
    s.sources[0].filaments.max_age = 5.0;
    let ach = 2.0;
    s.room = Some(sillage_world::room::RoomParams {
        height: 6.0,
        air_changes_per_hour: ach,
    });
    s.laser = None;
    let mut w = world(&s, 2, 0);
    w.step(400.0);
    let (q, v, lambda) = (s.sources[0].release_rate, 20.0 * 12.0 * 6.0, ach / 3600.0);
    let want = q / (v * lambda) * (1.0 - (-lambda * (400.0 - 5.0)).exp());
    println!(
        "background after 400 s: {:.4e} g/m^3, single-zone {want:.4e}",
        w.background()
    );
    assert!(
        (w.background() / want - 1.0).abs() < 0.02,
        "{} vs {want}",
        w.background()
    );
    // The sensors feel it: far from the plume the resistance sits below the unit's baseline.
    let m = &w.sensors()[0];
    assert!(m.resistance() < 0.97 * m.baseline());
}

/// The fast sensor type follows a step in about 0.1 s where the MOX unit needs seconds.
#[test]
fn fast_sensor_type_responds_in_a_tenth_of_a_second() {
    let text = std::fs::read_to_string(
        Path::new(env!("CARGO_MANIFEST_DIR")).join("../../config/scenarios/demo.yaml"),
    )
    .unwrap_or_default()
    .replace(
        "- {name: right, position: [0.15, -0.12, 0.3], r0: 47000.0}",
        "- {name: right, position: [0.15, -0.12, 0.3], kind: fast}",
    );
    let s = Scenario::from_yaml_str(&text, "fast.yaml").unwrap_or_else(|e| panic!("{e}"));
    let w = world(&s, 1, 0);
    let (slow, fast) = (w.sensors()[0].params(), w.sensors()[1].params());
    // Unit spread scales the nominal 0.1 s by exp(0.15 n).
    assert!(fast.tau_rise < 0.2 && fast.tau_decay < 0.2, "{fast:?}");
    assert!(slow.tau_rise > 0.8, "{slow:?}");
}
