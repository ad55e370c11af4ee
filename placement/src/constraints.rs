//! What the design reports about each absorber and about its constraints: static sag, tolerance
//! band of the tuning, stroke against the limit.

use antinode_solver::AbsorberLink;
use serde::Serialize;

use crate::study::StudyModel;

/// Standard gravity, in m/s² (ISO 80000-3).
pub const STANDARD_GRAVITY: f64 = 9.80665;

/// Largest drift searched by [`tolerance_band`], as a fraction of the tuned frequency.
pub const TOLERANCE_SEARCH: f64 = 0.5;

/// Static sag of an absorber's mass on its spring under gravity along its direction,
/// δ = m g / k = g / ω_a², in m.
pub fn static_sag(mass: f64, stiffness: f64) -> f64 {
    mass * STANDARD_GRAVITY / stiffness
}

/// Whether the design meets its constraints, and if not, why.
#[derive(Debug, Clone, Serialize)]
pub struct ConstraintReport {
    /// True when every constraint holds in every scenario.
    pub constraints_met: bool,
    /// What is violated and what the best achievable is (absent when met).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub message: Option<String>,
    /// The stroke limit, in m (absent when none was set).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub stroke_limit_m: Option<f64>,
    /// Worst stroke of the design over absorbers and scenarios at the stated excitation, in m.
    pub worst_stroke_m: f64,
    /// Smallest worst-case stroke the refinement could reach (from minimising the stroke alone),
    /// in m; present only when the limit is not met.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub best_achievable_stroke_m: Option<f64>,
    /// Total designed absorber mass, in kg.
    pub total_mass_kg: f64,
    /// Per-absorber mass limits, in kg.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub mass_limits_kg: Option<[f64; 2]>,
}

/// Tolerance band of the absorber at `indices` of `links` (one link, or both directions of a
/// lateral absorber) (all absorbers coupled, the model's own
/// included): the relative drifts `[below, above]` (below ≤ 0 ≤ above) of its tuned frequency
/// √(k/m) (k scaled by (1 + δ)², mass and damping kept) at which the benefit over `window` — the
/// reduction in dB of the window's peak against `before` (m/N) — falls to half its designed value.
/// Searched in steps of 1 % up to ±[`TOLERANCE_SEARCH`], then by bisection; a side that never
/// halves within the search reports the bound. `None` when the designed benefit is below 0.1 dB.
pub fn tolerance_band(
    sm: &StudyModel,
    links: &[AbsorberLink],
    indices: &[usize],
    window: [f64; 2],
    before: f64,
) -> Option<[f64; 2]> {
    let benefit = |d: f64| -> f64 {
        let mut l = links.to_vec();
        for &index in indices {
            l[index].stiffness *= (1.0 + d).powi(2);
        }
        20.0 * (before / sm.peak_estimate(window[0], window[1], &l)).log10()
    };
    let b0 = benefit(0.0);
    if b0.is_nan() || b0 < 0.1 {
        return None;
    }
    let half = 0.5 * b0;
    let side = |sign: f64| -> f64 {
        let steps = (TOLERANCE_SEARCH / 0.01).round() as usize;
        let mut prev = 0.0;
        for j in 1..=steps {
            let d = sign * 0.01 * j as f64;
            if benefit(d) <= half {
                let (mut a, mut b) = (prev, d);
                for _ in 0..30 {
                    let m = 0.5 * (a + b);
                    if benefit(m) <= half {
                        b = m;
                    } else {
                        a = m;
                    }
                }
                return 0.5 * (a + b);
            }
            prev = d;
        }
        sign * TOLERANCE_SEARCH
    };
    Some([side(-1.0), side(1.0)])
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn sag_is_g_over_omega_squared() {
        // δ = g/ω_a²: a 20 Hz absorber sags 0.62 mm (reference sheet METHODS §2.6, 5.).
        let m = 0.3;
        let k = m * (2.0 * std::f64::consts::PI * 20.0f64).powi(2);
        let d = static_sag(m, k);
        assert!((d - 6.2099e-4).abs() < 1e-7, "{d}");
    }
}
