//! Background build-up in a closed arena: the well-mixed room (single-zone) ventilation
//! model, dC/dt = Q / V - lambda C, with lambda = air changes per hour / 3600 [1/s].
//!
//! Contract: from C(0) = 0 with a constant total release Q [g/s] into a volume V [m^3] the
//! solution is C(t) = Q / (V lambda) (1 - exp(-lambda t)) (textbook ventilation model, e.g.
//! the dilution-ventilation chapters of industrial hygiene handbooks; from memory); with
//! lambda = 0 (a sealed room) C grows as Q t / V. The state is advanced step by step with
//! the exact update for Q held over the step, C' = C_ss + (C - C_ss) exp(-lambda h). The
//! background is a uniform concentration [g/m^3] added to the plume everywhere: it stands for
//! the gas the plume model no longer carries (in the world, Q is the mass rate of the
//! filaments that age out inside the arena).

/// Room parameters (scenario key `room`; absent = open air, no background).
#[derive(Debug, Clone, PartialEq, serde::Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RoomParams {
    /// Ceiling height [m], > 0; the volume is the arena area times this height.
    pub height: f64,
    /// Ventilation rate [air changes per hour], >= 0.
    pub air_changes_per_hour: f64,
}

/// The well-mixed background concentration state.
#[derive(Debug, Clone, PartialEq)]
pub struct Room {
    volume: f64,
    lambda: f64,
    concentration: f64,
}

impl Room {
    /// A clean room of `volume` [m^3] ventilated at `air_changes_per_hour`.
    pub fn new(volume: f64, air_changes_per_hour: f64) -> Self {
        Self {
            volume,
            lambda: air_changes_per_hour.max(0.0) / 3600.0,
            concentration: 0.0,
        }
    }

    /// Air exchange rate lambda [1/s].
    pub fn lambda(&self) -> f64 {
        self.lambda
    }

    /// Background concentration now [g/m^3].
    pub fn concentration(&self) -> f64 {
        self.concentration
    }

    /// Advances by `h` [s] with total release `q` [g/s] held over the step.
    pub fn step(&mut self, q: f64, h: f64) {
        if h <= 0.0 {
            return;
        }
        if self.lambda > 0.0 {
            let c_ss = q / (self.volume * self.lambda);
            self.concentration = c_ss + (self.concentration - c_ss) * (-self.lambda * h).exp();
        } else {
            self.concentration += q * h / self.volume;
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn sealed_room_fills_linearly_and_steady_state_is_q_over_v_lambda() {
        let mut sealed = Room::new(100.0, 0.0);
        for _ in 0..10 {
            sealed.step(0.01, 1.0);
        }
        assert!((sealed.concentration() - 1e-3).abs() < 1e-15);
        let mut vented = Room::new(100.0, 6.0);
        for _ in 0..400 {
            vented.step(0.01, 60.0);
        }
        // Q / (V lambda) = 0.01 / (100 * 6 / 3600) = 0.06 g/m^3.
        assert!(
            (vented.concentration() - 0.06).abs() < 1e-12,
            "{}",
            vented.concentration()
        );
    }
}
