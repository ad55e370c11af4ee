//! Absorber placement and tuning for antinode: closed-form tuning rules, the study on the reduced
//! (modal) model, candidate ranking, greedy placement and joint refinement on the coupled model.
//! This crate never assembles matrices; it works on the solver's modal model.
//!
//! # Units and conventions
//! - SI units; responses are displacements per newton of the largest excitation force (m/N).
//! - Absorber damping ratio ζ_a = c/(2 m ω_a), relative to the absorber's own frequency
//!   ω_a = √(k/m); Den Hartog's c/c_c = c/(2 m ω_j) = f ζ_a is reported beside it.
//! - Mass ratio μ = m_a φ² with φ the mass-normalised mode's component along the absorber's
//!   direction at its attachment; effective mass m_eff = 1/φ².
//! - Mode numbers count from 1 in ascending frequency, zero-energy modes included.

pub mod constraints;
mod design;
mod error;
pub mod measured;
mod orders;
mod quantity;
mod refine;
pub mod robust;
pub mod screening;
mod study;
pub mod tradeoff;
pub mod tuning;

pub use design::{
    AUTO_TARGET_SHARE, Design, DesignedAbsorber, RankedCandidate, RefinementInfo, ScenarioResult, Slot, TargetMode,
    design, ring_insert_warnings,
};
pub use error::PlacementError;
pub use orders::{Crossing, OrderResponse, SpeedPeak, crossings};
pub use quantity::Quantity;
pub use study::{Candidate, Curves, GridTable, Peak, StudyModel, VerifyPoint, link_of, structure_damping};
