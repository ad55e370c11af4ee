//! Finite-element modal solver of antinode: element kernels, assembly, eigensolver (block
//! shift-invert Lanczos with Sturm-sequence checks, and a dense reference), static solution and
//! frequency response by modal superposition with residual flexibility and exactly coupled
//! absorbers.
//!
//! faer's types stay inside this crate; other crates see plain vectors and the types defined here.
//!
//! # Units and conventions
//! - SI units. Eigenvalues λ = ω² in rad²/s², ascending; frequencies in Hz where a name says `_hz`.
//! - Free DOFs: node DOFs `[ux, uy, uz, rx, ry, rz]` that are neither fixed nor unused, numbered
//!   node by node, then one DOF per absorber when absorbers are included ([`DofMap`]).
//! - Modes are mass-normalised: Φᵀ M Φ = I. Exactly repeated eigenvalues have a canonical
//!   orientation (see [`solve_modes`]); each mode's largest entry is positive.
//! - Damping: viscous modal damping ratio ζ per mode; absorbers viscous (c) or hysteretic
//!   (k* = k(1 + iη)).

mod assembly;
mod conditioning;
mod direct;
mod dofs;
mod eigen;
pub mod element;
mod error;
mod factor;
mod insight;
mod matrices;
mod memory;
mod ordering;
mod response;
mod statics;

pub use assembly::{AssemblyOptions, System, assemble};
pub use conditioning::{RIGID_SPRING_RATIO, STIFFNESS_RATIO_WARNING, TINY_MASS_FRACTION, conditioning_warnings};
pub use direct::{DirectResponse, DirectSolver, relative_difference};
pub use dofs::{DofMap, DofOwner};
pub use eigen::{
    EigenParams, Method, ModalSolution, ModeRequest, SolveStats, SturmCheck, check_zero_energy, confirm_zero_energy,
    count_modes_below, participation, solve_modes,
};
pub use error::SolverError;
pub use insight::{
    InsightOptions, ModeClass, ModeFacts, ModeInsight, ModeKind, PAIR_TOLERANCE, RIGID_DIRECTIONS, mac, mac_matrix,
    mass_ratio_maps, mode_insight, pair_by_mac, sampled_shapes, tube_profiles,
};
pub use matrices::{system_from_matrix_market, write_matrix_market};
pub use memory::{FACTORS_ALIVE, GIB, MemoryEstimate, memory_estimate};
pub use num_complex::Complex64;
pub use response::{
    AbsorberLink, BaseMotion, Coordinate, CoupledResponse, Load, ModalDampingLaw, ModalModel, StructureDamping,
    absorber_forces, frequency_grid, golden_max, interpolate, refined_peaks, resonance_peak,
};
pub use statics::solve_static;

/// Process-wide setup for programs: dense and sparse kernels run sequentially (inside one sparse
/// factorization, threads were measured slower than one core on 2-core machines); parallel work is
/// done across independent tasks with rayon (element assembly, candidates, frequencies). The rayon
/// thread count follows `RAYON_NUM_THREADS`.
pub fn init() {
    faer::set_global_parallelism(faer::Par::Seq);
}
