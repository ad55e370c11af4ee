//! What a frequency response reports: displacement (receptance), velocity (mobility) or
//! acceleration (accelerance). For a harmonic motion x e^{iωt}, velocity is iωx and acceleration
//! −ω²x, so the magnitudes scale by ω and ω² (common practice).

use antinode_solver::Complex64;
use serde::Serialize;

/// Response quantity.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Quantity {
    /// Displacement per force, m/N.
    #[default]
    Receptance,
    /// Velocity per force, m/(N·s).
    Mobility,
    /// Acceleration per force, m/(N·s²).
    Accelerance,
}

impl Quantity {
    /// The factor (iω)^p that turns a displacement at ω (rad/s) into this quantity.
    pub fn factor(self, omega: f64) -> Complex64 {
        match self {
            Quantity::Receptance => Complex64::new(1.0, 0.0),
            Quantity::Mobility => Complex64::new(0.0, omega),
            Quantity::Accelerance => Complex64::new(-omega * omega, 0.0),
        }
    }

    /// |factor| at `f_hz`.
    pub fn scale_at(self, f_hz: f64) -> f64 {
        self.factor(2.0 * std::f64::consts::PI * f_hz).norm()
    }

    /// The word used in files and options.
    pub fn word(self) -> &'static str {
        match self {
            Quantity::Receptance => "receptance",
            Quantity::Mobility => "mobility",
            Quantity::Accelerance => "accelerance",
        }
    }

    /// Unit per newton of force.
    pub fn unit_per_newton(self) -> &'static str {
        match self {
            Quantity::Receptance => "m/N",
            Quantity::Mobility => "m/(N s)",
            Quantity::Accelerance => "m/(N s^2)",
        }
    }

    /// Unit of the motion itself (displacement, velocity, acceleration).
    pub fn motion_unit(self) -> &'static str {
        match self {
            Quantity::Receptance => "m",
            Quantity::Mobility => "m/s",
            Quantity::Accelerance => "m/s^2",
        }
    }

    /// The motion's name.
    pub fn motion(self) -> &'static str {
        match self {
            Quantity::Receptance => "displacement",
            Quantity::Mobility => "velocity",
            Quantity::Accelerance => "acceleration",
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn factors_are_i_omega_powers() {
        let w = 3.0;
        assert_eq!(Quantity::Receptance.factor(w), Complex64::new(1.0, 0.0));
        assert_eq!(Quantity::Mobility.factor(w), Complex64::new(0.0, 3.0));
        assert_eq!(Quantity::Accelerance.factor(w), Complex64::new(-9.0, 0.0));
        let f = 1.0 / (2.0 * std::f64::consts::PI);
        assert!((Quantity::Accelerance.scale_at(f) - 1.0).abs() < 1e-15);
    }
}
