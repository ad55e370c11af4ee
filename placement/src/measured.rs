//! Tuning to measured natural frequencies: a test value replaces the computed frequency of a mode
//! while its shape is kept. For an absorber the frequency error matters far more than a small error
//! of shape (a tuned absorber detuned by its structure's frequency error loses most of its effect,
//! common practice), so a design tuned to the measured value is the better design.
//!
//! Only the eigenvalue λ_r = (2π f_r)² changes. The modal damping laws are evaluated at the new
//! frequency, and the residual flexibility of the response (the part of K⁻¹ outside the kept modes,
//! built by projection, see `ModalModel`) does not depend on the eigenvalues, so it is unchanged.

use antinode_solver::ModalSolution;
use serde::Serialize;

use crate::PlacementError;

/// Relative frequency change above which the shape may no longer belong to the measured mode
/// (common practice: pair test and model modes by MAC before overriding); such overrides carry a
/// warning.
pub const LARGE_CHANGE: f64 = 0.10;

/// One applied override.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct MeasuredOverride {
    /// Mode number, from 1.
    pub mode: usize,
    /// The computed natural frequency, in Hz.
    pub model_hz: f64,
    /// The measured natural frequency now used, in Hz.
    pub measured_hz: f64,
    /// (measured − model) / model.
    pub relative_change: f64,
}

/// Replaces the natural frequencies of `modes` by the measured ones `(mode index from 0, Hz)`.
/// Returns what was changed and the warnings (changes above [`LARGE_CHANGE`]).
///
/// # Errors
/// [`PlacementError::Study`] for a mode that was not computed, a zero-frequency (rigid-body) mode,
/// or values that would change the order of the modes (the model's mode order then differs from
/// the test's: pair the modes first).
pub fn apply_measured(
    modes: &mut ModalSolution,
    measured: &[(usize, f64)],
) -> Result<(Vec<MeasuredOverride>, Vec<String>), PlacementError> {
    let n = modes.n_modes();
    let mut applied = Vec::new();
    let mut warnings = Vec::new();
    for &(r, f) in measured {
        let at = format!("study.measured_frequencies: mode {}", r + 1);
        if r >= n {
            return Err(PlacementError::Study(format!(
                "{at} was not computed (the study keeps {n} modes, up to max_mode_frequency_hz); raise \
                 max_mode_frequency_hz or remove the entry"
            )));
        }
        if r < modes.n_zero_energy {
            return Err(PlacementError::Study(format!(
                "{at} is a zero-frequency (rigid-body) mode; a measured value applies to an elastic mode"
            )));
        }
        let model_hz = modes.frequency_hz(r);
        let change = (f - model_hz) / model_hz;
        if change.abs() > LARGE_CHANGE {
            warnings.push(format!(
                "{at}: the measured {f:.4} Hz is {:+.1} % from the model's {model_hz:.4} Hz; check with `antinode \
                 correlate` that the test mode is this model mode",
                100.0 * change
            ));
        }
        applied.push(MeasuredOverride { mode: r + 1, model_hz, measured_hz: f, relative_change: change });
    }
    let mut lambda = modes.eigenvalues.clone();
    for o in &applied {
        let w = 2.0 * std::f64::consts::PI * o.measured_hz;
        lambda[o.mode - 1] = w * w;
    }
    if let Some(r) = (1..n).find(|&r| lambda[r] < lambda[r - 1]) {
        let hz = |l: f64| l.max(0.0).sqrt() / (2.0 * std::f64::consts::PI);
        return Err(PlacementError::Study(format!(
            "study.measured_frequencies: with the measured values mode {} ({:.4} Hz) falls below mode {} ({:.4} Hz); \
             the test's mode order differs from the model's: pair the modes by MAC (`antinode correlate`) and give \
             each measured value to the model mode it matches",
            r + 1,
            hz(lambda[r]),
            r,
            hz(lambda[r - 1])
        )));
    }
    modes.eigenvalues = lambda;
    Ok((applied, warnings))
}
