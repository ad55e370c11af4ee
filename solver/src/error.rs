//! Errors of the solver crate.

/// What can go wrong in assembly, eigen solution or response. Messages name the DOF, element or
/// request at fault.
#[derive(Debug, thiserror::Error)]
#[non_exhaustive]
pub enum SolverError {
    /// Every DOF is fixed or unused.
    #[error("the model has no free degree of freedom: every DOF is fixed or carries no element")]
    NoFreeDofs,
    /// DOFs with stiffness and no mass make the mass matrix singular.
    #[error("{count} free DOF(s) have stiffness but no mass ({dofs}); add a point mass there or fix them")]
    MasslessDof {
        /// How many.
        count: usize,
        /// Which, in words.
        dofs: String,
    },
    /// A non-finite number where a finite one is needed.
    #[error("non-finite value in {what}")]
    NotFinite {
        /// Where.
        what: String,
    },
    /// More (or fewer) zero-energy modes than expected: an unsupported mechanism.
    #[error("the model can move without straining in {found} independent way(s) where {expected} expected; {detail}")]
    Mechanism {
        /// Zero-energy modes found.
        found: usize,
        /// Zero-energy modes expected (`rigid_body_modes`, or from the supports).
        expected: usize,
        /// Which DOFs are free, in words, and how to fix it.
        detail: String,
    },
    /// An element whose matrices cannot be built.
    #[error("{element}: cannot build its matrices: {detail}")]
    Element {
        /// The element, in words (e.g. `shell 12`).
        element: String,
        /// What is wrong.
        detail: String,
    },
    /// A factorization failed.
    #[error("factorization of K - sigma M failed at sigma = {shift:e} rad^2/s^2: {detail}")]
    Factorization {
        /// The shift.
        shift: f64,
        /// What failed.
        detail: String,
    },
    /// A matrix file that cannot be read or written, or holds an unusable matrix.
    #[error("{path}: {message}")]
    MatrixFile {
        /// The file.
        path: std::path::PathBuf,
        /// What is wrong.
        message: String,
    },
    /// A request that cannot be served.
    #[error("{0}")]
    Request(String),
    /// The eigensolver did not reach the requested accuracy or completeness.
    #[error("the eigensolver did not converge: {0}")]
    NoConvergence(String),
}
