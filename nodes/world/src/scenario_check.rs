//! Validation of a parsed [`Scenario`]: ranges, finiteness and geometric consistency.
//! Each failure is a [`WorldError::Invalid`] naming the file and the dotted key.

use crate::error::WorldError;
use crate::scenario::{PlumeSpec, Scenario, WindFieldKind};
use crate::wind_grid::Edge;
use std::collections::HashSet;

struct Checker<'a> {
    file: &'a str,
}

impl Checker<'_> {
    fn fail(&self, key: impl Into<String>, reason: impl Into<String>) -> WorldError {
        WorldError::Invalid {
            file: self.file.to_owned(),
            key: key.into(),
            reason: reason.into(),
        }
    }

    fn finite(&self, key: &str, v: &[f64]) -> Result<(), WorldError> {
        match v.iter().find(|x| !x.is_finite()) {
            Some(x) => Err(self.fail(key, format!("must be finite, got {x}"))),
            None => Ok(()),
        }
    }

    fn positive(&self, key: &str, v: f64) -> Result<(), WorldError> {
        self.finite(key, &[v])?;
        if v > 0.0 {
            Ok(())
        } else {
            Err(self.fail(key, format!("must be > 0, got {v}")))
        }
    }

    fn non_negative(&self, key: &str, v: f64) -> Result<(), WorldError> {
        self.finite(key, &[v])?;
        if v >= 0.0 {
            Ok(())
        } else {
            Err(self.fail(key, format!("must be >= 0, got {v}")))
        }
    }

    fn rect(&self, key: &str, min: [f64; 2], max: [f64; 2]) -> Result<(), WorldError> {
        self.finite(key, &[min[0], min[1], max[0], max[1]])?;
        if min[0] < max[0] && min[1] < max[1] {
            Ok(())
        } else {
            Err(self.fail(
                key,
                format!("min {min:?} must be below max {max:?} on both axes"),
            ))
        }
    }
}

/// Validates every section of the scenario.
pub(crate) fn validate(s: &Scenario, file: &str) -> Result<(), WorldError> {
    let c = Checker { file };
    c.positive("time_limit", s.time_limit)?;
    c.positive("success_radius", s.success_radius)?;
    c.positive("physics_dt", s.physics_dt)?;
    if s.physics_dt > 1.0 {
        return Err(c.fail(
            "physics_dt",
            format!("must be <= 1 s, got {}", s.physics_dt),
        ));
    }
    c.rect("arena", s.arena.min, s.arena.max)?;
    let arena = s.arena();
    for (i, b) in s.arena.obstacles.iter().enumerate() {
        let key = format!("arena.obstacles[{i}]");
        c.rect(&key, b.min, b.max)?;
        let inside = b.max[0] > s.arena.min[0]
            && b.min[0] < s.arena.max[0]
            && b.max[1] > s.arena.min[1]
            && b.min[1] < s.arena.max[1];
        if !inside {
            return Err(c.fail(key, "obstacle lies entirely outside the arena"));
        }
    }
    c.non_negative("wind.speed", s.wind.speed)?;
    c.finite("wind.direction", &[s.wind.direction])?;
    c.non_negative("wind.meander.direction_std", s.wind.meander.direction_std)?;
    c.non_negative("wind.meander.speed_std", s.wind.meander.speed_std)?;
    c.non_negative(
        "wind.meander.correlation_time",
        s.wind.meander.correlation_time,
    )?;
    validate_wind_grid(s, &c)?;
    if let Some(r) = &s.room {
        c.positive("room.height", r.height)?;
        c.non_negative("room.air_changes_per_hour", r.air_changes_per_hour)?;
    }
    match &s.plume {
        PlumeSpec::Filament { max_filaments } => {
            if *max_filaments == 0 {
                return Err(c.fail("plume.max_filaments", "must be >= 1"));
            }
        }
        PlumeSpec::Gaussian { min_sigma, .. } => {
            c.positive("plume.min_sigma", *min_sigma)?;
            if s.wind.speed <= 0.0 {
                return Err(c.fail(
                    "wind.speed",
                    "the gaussian plume mode needs a mean wind speed > 0",
                ));
            }
            // The time-averaged plume lies along the mean wind: the anemometer must read
            // that same steady, uniform wind, or the sensors and the plume disagree.
            if s.wind_field() != WindFieldKind::Uniform {
                return Err(c.fail(
                    "wind.field",
                    "the gaussian plume is a time average in a steady uniform wind: set wind.field: uniform",
                ));
            }
            if s.wind.meander.direction_std > 0.0 || s.wind.meander.speed_std > 0.0 {
                return Err(c.fail(
                    "wind.meander",
                    "the gaussian plume is a time average in a steady wind: a meander would move the anemometer reading but not the plume; set its stds to 0 (or use the filament plume)",
                ));
            }
        }
    }
    if s.sources.is_empty() {
        return Err(c.fail("sources", "at least one source is needed"));
    }
    for (i, src) in s.sources.iter().enumerate() {
        let key = |k: &str| format!("sources[{i}].{k}");
        c.finite(&key("position"), &src.position)?;
        if !arena.is_free([src.position[0], src.position[1]]) || src.position[2] < 0.0 {
            return Err(c.fail(
                key("position"),
                format!("{:?} is not in free space above ground", src.position),
            ));
        }
        c.positive(&key("release_rate"), src.release_rate)?;
        let f = &src.filaments;
        c.positive(&key("filaments.per_second"), f.release_rate)?;
        c.positive(&key("filaments.initial_radius"), f.initial_radius)?;
        c.non_negative(&key("filaments.growth_rate"), f.growth_rate)?;
        c.non_negative(
            &key("filaments.relative_diffusivity"),
            f.relative_diffusivity,
        )?;
        c.positive(&key("filaments.max_age"), f.max_age)?;
    }
    validate_sensors(s, &c)?;
    validate_robot(s, &c)
}

fn validate_wind_grid(s: &Scenario, c: &Checker<'_>) -> Result<(), WorldError> {
    let g = &s.wind.grid;
    c.positive("wind.grid.resolution", g.resolution)?;
    c.finite("wind.grid.coherence", &[g.coherence])?;
    if !(0.0..=1.0).contains(&g.coherence) {
        return Err(c.fail(
            "wind.grid.coherence",
            format!("must be within 0..=1, got {}", g.coherence),
        ));
    }
    let mut seen = HashSet::new();
    for (i, e) in g.solid_walls.iter().enumerate() {
        if !seen.insert(*e) {
            return Err(c.fail(
                format!("wind.grid.solid_walls[{i}]"),
                format!("{e:?} is listed twice"),
            ));
        }
    }
    if [Edge::South, Edge::East, Edge::North, Edge::West]
        .iter()
        .all(|e| seen.contains(e))
    {
        return Err(c.fail(
            "wind.grid.solid_walls",
            "all four edges are solid: no air can come in, so there is no wind; leave an inlet open",
        ));
    }
    if s.wind_field() == WindFieldKind::Grid {
        let (w, h) = (
            s.arena.max[0] - s.arena.min[0],
            s.arena.max[1] - s.arena.min[1],
        );
        let cells = (w / g.resolution).round() * (h / g.resolution).round();
        if cells > 250_000.0 {
            return Err(c.fail(
                "wind.grid.resolution",
                format!(
                    "{} m gives {cells} cells over the arena (at most 250000): use a coarser grid",
                    g.resolution
                ),
            ));
        }
    }
    Ok(())
}

fn validate_sensors(s: &Scenario, c: &Checker<'_>) -> Result<(), WorldError> {
    c.positive("sensors.sample_rate", s.sensors.sample_rate)?;
    let m = &s.sensors.mox;
    c.positive("sensors.mox.r0", m.r0)?;
    c.positive("sensors.mox.c0", m.c0)?;
    c.positive("sensors.mox.beta", m.beta)?;
    c.positive("sensors.mox.tau_rise", m.tau_rise)?;
    c.positive("sensors.mox.tau_decay", m.tau_decay)?;
    c.positive("sensors.mox.load_resistance", m.load_resistance)?;
    c.positive("sensors.mox.supply_voltage", m.supply_voltage)?;
    c.non_negative("sensors.mox.noise_std", m.noise_std)?;
    c.non_negative("sensors.mox.r0_spread", m.r0_spread)?;
    c.non_negative("sensors.mox.beta_spread", m.beta_spread)?;
    c.non_negative("sensors.mox.tau_spread", m.tau_spread)?;
    c.non_negative("sensors.mox.drift_per_hour", m.drift_per_hour)?;
    c.non_negative("sensors.mox.disturbance_std", m.disturbance_std)?;
    c.positive("sensors.mox.disturbance_time", m.disturbance_time)?;
    c.positive("sensors.mox.fast_tau", m.fast_tau)?;
    if m.adc_bits == 1 || m.adc_bits > 32 {
        return Err(c.fail(
            "sensors.mox.adc_bits",
            format!("must be 0 (off) or 2..=32, got {}", m.adc_bits),
        ));
    }
    if s.sensors.channels.is_empty() {
        return Err(c.fail("sensors.channels", "at least one channel is needed"));
    }
    let mut names = HashSet::new();
    for (i, ch) in s.sensors.channels.iter().enumerate() {
        if ch.name.is_empty() || !names.insert(ch.name.as_str()) {
            return Err(c.fail(
                format!("sensors.channels[{i}].name"),
                format!("`{}` is empty or repeated", ch.name),
            ));
        }
        c.finite(&format!("sensors.channels[{i}].position"), &ch.position)?;
        if let Some(r0) = ch.r0 {
            c.positive(&format!("sensors.channels[{i}].r0"), r0)?;
        }
    }
    c.finite("anemometer.position", &s.anemometer.position)?;
    c.non_negative("anemometer.noise_std", s.anemometer.noise_std)?;
    c.positive("anemometer.sample_rate", s.anemometer.sample_rate)?;
    if let Some(l) = &s.laser {
        c.finite("laser.angle_min", &[l.angle_min])?;
        c.positive("laser.angle_increment", l.angle_increment)?;
        if l.angle_max < l.angle_min {
            return Err(c.fail("laser.angle_max", "must be >= laser.angle_min"));
        }
        c.non_negative("laser.range_min", l.range_min)?;
        c.positive("laser.range_max", l.range_max)?;
        if l.range_max <= l.range_min {
            return Err(c.fail("laser.range_max", "must be > laser.range_min"));
        }
        c.non_negative("laser.noise_std", l.noise_std)?;
        c.finite("laser.mount", &l.mount)?;
        c.positive("laser.sample_rate", l.sample_rate)?;
    }
    Ok(())
}

fn validate_robot(s: &Scenario, c: &Checker<'_>) -> Result<(), WorldError> {
    let r = &s.robot;
    c.positive("robot.radius", r.radius)?;
    let l = &r.limits;
    c.positive("robot.limits.max_linear_speed", l.max_linear_speed)?;
    c.positive("robot.limits.max_angular_speed", l.max_angular_speed)?;
    c.positive("robot.limits.max_linear_accel", l.max_linear_accel)?;
    c.positive("robot.limits.max_angular_accel", l.max_angular_accel)?;
    if r.start_poses.is_empty() {
        return Err(c.fail("robot.start_poses", "at least one start pose is needed"));
    }
    let arena = s.arena();
    for (i, p) in r.start_poses.iter().enumerate() {
        let key = format!("robot.start_poses[{i}]");
        c.finite(&key, p)?;
        if arena.disc_collides([p[0], p[1]], r.radius) {
            return Err(c.fail(
                key,
                format!(
                    "robot footprint at ({}, {}) overlaps a wall or obstacle",
                    p[0], p[1]
                ),
            ));
        }
    }
    Ok(())
}
