//! Trade-off of reduction against total absorber mass: the whole design repeated at each total
//! mass, everything else as requested.

use antinode_mesh::{DesignSpec, Structure};
use serde::Serialize;

use crate::design::design;
use crate::error::PlacementError;
use crate::study::StudyModel;

/// One point of the trade-off curve.
#[derive(Debug, Clone, Serialize)]
pub struct TradeOffPoint {
    /// Total absorber mass, in kg.
    pub total_mass_kg: f64,
    /// Nominal band peak after, in m/N.
    pub peak_after: f64,
    /// Nominal peak change, 20 log10(after/before), in dB.
    pub change_db: f64,
    /// Worst-case (over the scenarios) peak change, in dB.
    pub worst_case_change_db: f64,
    /// Whether the constraints are met at this mass.
    pub constraints_met: bool,
}

/// Designs at each total mass of `spec.trade_off_masses` (shared as in the request: equally, or
/// refined within `mass_limits` when a `total_mass` was given), in the order given.
///
/// # Errors
/// Any error of [`design`] at one of the masses.
pub fn trade_off(
    sm: &StudyModel,
    spec: &DesignSpec,
    structure: &Structure,
) -> Result<Vec<TradeOffPoint>, PlacementError> {
    spec.trade_off_masses
        .iter()
        .map(|&m| {
            let mut s = spec.clone();
            s.mass_each = m / spec.count as f64;
            s.total_mass = spec.total_mass.map(|_| m);
            let d = design(sm, &s, structure)?;
            Ok(TradeOffPoint {
                total_mass_kg: m,
                peak_after: d.after.receptance,
                change_db: 20.0 * (d.after.receptance / d.before.receptance).log10(),
                worst_case_change_db: 20.0 * (d.worst_case_after / d.worst_case_before).log10(),
                constraints_met: d.constraints.constraints_met,
            })
        })
        .collect()
}
