//! Errors of the placement crate.

use antinode_solver::SolverError;

/// What can go wrong in a study or a design.
#[derive(Debug, thiserror::Error)]
#[non_exhaustive]
pub enum PlacementError {
    /// The study block cannot support the request.
    #[error("study: {0}")]
    Study(String),
    /// The design request cannot be met, with the reason.
    #[error("absorber design: {0}")]
    Design(String),
    /// The solver failed.
    #[error(transparent)]
    Solver(#[from] SolverError),
}
