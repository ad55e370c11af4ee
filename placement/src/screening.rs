//! Screening map: mass ratio per kilogram μ/m_a = φ² (φ the mass-normalised mode's component along
//! the candidate's direction) of every candidate on every target mode, and the pollution on the
//! other modes — the sum of φ² over the non-target elastic modes, which measures how much an
//! absorber there detunes or loads modes it is not meant for (Warburton & Ayorinde 1980: the
//! equivalent mass ratio m_a φ² governs an absorber's effect on a mode).

use antinode_solver::ModalModel;
use rayon::prelude::*;
use serde::Serialize;

/// The screening of one candidate.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ScreenRow {
    /// Coordinate index in the modal model.
    pub coord: usize,
    /// φ² on each target mode, in the order given, in 1/kg.
    pub mass_ratio_per_kg: Vec<f64>,
    /// Σ φ² over the listed non-target modes, in 1/kg.
    pub pollution_per_kg: f64,
}

/// Screens the coordinates `coords` of `model` on `targets` (mode indices from 0) with pollution
/// over `others` (mode indices from 0); parallel over candidates, rows in the order of `coords`.
pub fn screen(model: &ModalModel, coords: &[usize], targets: &[usize], others: &[usize]) -> Vec<ScreenRow> {
    coords
        .par_iter()
        .map(|&c| ScreenRow {
            coord: c,
            mass_ratio_per_kg: targets.iter().map(|&r| model.coupling(c, r).powi(2)).collect(),
            pollution_per_kg: others.iter().map(|&r| model.coupling(c, r).powi(2)).sum(),
        })
        .collect()
}
