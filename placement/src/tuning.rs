//! Closed-form tuning rules for one absorber on one mode, treated as an equivalent single-DOF
//! primary of modal mass m_eff = 1/φ² at the attachment (mass ratio μ = m_a φ²).
//!
//! Conventions: tuning ratio f = ω_a/ω_j with ω_a = √(k/m); damping ratio **ζ_a = c/(2 m ω_a)**,
//! relative to the absorber's own frequency. Den Hartog's book and Brock's note use
//! c/c_c = c/(2 m ω_j) = f ζ_a instead; both are reported where it matters.

/// Tuning of an absorber relative to its target mode.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Tuning {
    /// f = ω_a / ω_j.
    pub frequency_ratio: f64,
    /// ζ_a = c / (2 m ω_a).
    pub damping_ratio: f64,
}

impl Tuning {
    /// Spring stiffness k = m (f ω_j)² (N/m) and viscous damping c = 2 ζ_a m f ω_j (N·s/m) for an
    /// absorber of mass `mass` (kg) on a mode of angular frequency `omega` (rad/s).
    pub fn physical(&self, mass: f64, omega: f64) -> (f64, f64) {
        let wa = self.frequency_ratio * omega;
        (mass * wa * wa, 2.0 * self.damping_ratio * mass * wa)
    }
}

/// Harmonic force on an undamped primary, smallest peak displacement: Den Hartog's equal fixed
/// points f = 1/(1+μ) (Ormondroyd & Den Hartog, Trans. ASME 50, 1928; Hahnkamm 1932) with Brock's
/// damping ζ_a = √(3μ / (8(1+μ))) (Brock, "A note on the damped vibration absorber",
/// J. Appl. Mech., 1946).
pub fn den_hartog_brock(mu: f64) -> Tuning {
    Tuning { frequency_ratio: 1.0 / (1.0 + mu), damping_ratio: (3.0 * mu / (8.0 * (1.0 + mu))).sqrt() }
}

/// White-noise force on an undamped primary, smallest displacement variance (H2): f = √(1 + μ/2)/(1+μ),
/// ζ_a = √(μ(4 + 3μ) / (8(1+μ)(2+μ))) (Warburton, "Optimum absorber parameters for various
/// combinations of response and excitation parameters", Earthquake Eng. Struct. Dyn. 10, 1982).
pub fn warburton_random_force(mu: f64) -> Tuning {
    Tuning {
        frequency_ratio: (1.0 + mu / 2.0).sqrt() / (1.0 + mu),
        damping_ratio: (mu * (4.0 + 3.0 * mu) / (8.0 * (1.0 + mu) * (2.0 + mu))).sqrt(),
    }
}

/// Harmonic base acceleration of an undamped primary, smallest peak of the displacement relative
/// to the base (H∞): f = √(1 − μ/2)/(1+μ), ζ_a = √(3μ / (8(1+μ)(1 − μ/2))) (Warburton 1982, as
/// above; an approximation within about 0.2 % of the numerical optimum).
pub fn warburton_base_harmonic(mu: f64) -> Tuning {
    Tuning {
        frequency_ratio: (1.0 - mu / 2.0).sqrt() / (1.0 + mu),
        damping_ratio: (3.0 * mu / (8.0 * (1.0 + mu) * (1.0 - mu / 2.0))).sqrt(),
    }
}

/// White-noise base acceleration of an undamped primary, smallest variance of the displacement
/// relative to the base (H2): f = √(1 − μ/2)/(1+μ), ζ_a = √(μ(1 − μ/4) / (4(1+μ)(1 − μ/2)))
/// (Warburton 1982, as above; exact).
pub fn warburton_base_random(mu: f64) -> Tuning {
    Tuning {
        frequency_ratio: (1.0 - mu / 2.0).sqrt() / (1.0 + mu),
        damping_ratio: (mu * (1.0 - mu / 4.0) / (4.0 * (1.0 + mu) * (1.0 - mu / 2.0))).sqrt(),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn close(a: f64, b: f64, tol: f64) -> bool {
        (a - b).abs() <= tol * b.abs()
    }

    #[test]
    fn den_hartog_brock_values() {
        // Worked values of the published formulas (f = 1/(1+μ), ζ_a = √(3μ/8(1+μ))), μ = 0.01 … 0.10.
        for (mu, f, z) in [
            (0.01, 0.990099, 0.060933),
            (0.02, 0.980392, 0.085749),
            (0.05, 0.952381, 0.133631),
            (0.10, 0.909091, 0.184637),
        ] {
            let t = den_hartog_brock(mu);
            assert!(close(t.frequency_ratio, f, 1e-6) && close(t.damping_ratio, z, 1e-5), "{mu}: {t:?}");
            // Den Hartog's own ratio c/(2 m ω_j) = f ζ_a = √(3μ/(8(1+μ)³)).
            assert!(close(t.frequency_ratio * t.damping_ratio, (3.0 * mu / (8.0 * (1.0 + mu).powi(3))).sqrt(), 1e-12));
        }
    }

    #[test]
    fn warburton_h2_values() {
        // Warburton 1982 white-noise force optimum, values of the closed form.
        for (mu, f, z) in [(0.01, 0.992571, 0.049814), (0.05, 0.964212, 0.109772), (0.10, 0.931541, 0.152540)] {
            let t = warburton_random_force(mu);
            assert!(close(t.frequency_ratio, f, 1e-6) && close(t.damping_ratio, z, 1e-5), "{mu}: {t:?}");
        }
    }

    #[test]
    fn physical_parameters_follow_the_definitions() {
        let t = Tuning { frequency_ratio: 0.9, damping_ratio: 0.1 };
        let (k, c) = t.physical(2.0, 100.0);
        assert!(close((k / 2.0f64).sqrt(), 90.0, 1e-12));
        assert!(close(c / (2.0 * 2.0 * 90.0), 0.1, 1e-12));
    }
}
