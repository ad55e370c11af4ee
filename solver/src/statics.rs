//! Static solution K u = f.

use faer::Mat;

use crate::assembly::System;
use crate::error::SolverError;

/// Displacements (per node `[ux, uy, uz, rx, ry, rz]`, zero where fixed) under nodal loads
/// `(node, [Fx, Fy, Fz, Mx, My, Mz])` in N and N·m. Loads on fixed DOFs go to the support.
///
/// # Errors
/// [`SolverError::Mechanism`] if K is singular (the structure is not held against some motion).
pub fn solve_static(system: &System, loads: &[(usize, [f64; 6])]) -> Result<Vec<[f64; 6]>, SolverError> {
    let n = system.n_dofs();
    let mut f = Mat::<f64>::zeros(n, 1);
    for (node, load) in loads {
        for (c, v) in load.iter().enumerate() {
            // Virtual work through the link terms: f_free = Tᵀ f_node.
            for &(i, w) in system.dofs.terms(*node, c) {
                f[(i, 0)] += w * v;
            }
        }
    }
    let factor = system.factorizer.llt(system.k.clone())?.ok_or_else(|| SolverError::Mechanism {
        found: 1,
        expected: 0,
        detail: "the stiffness matrix is singular, so there is no static solution; add supports".into(),
    })?;
    factor.solve_in_place(f.as_mut());
    let v: Vec<f64> = (0..n).map(|i| f[(i, 0)]).collect();
    Ok(system.dofs.expand(&v))
}
