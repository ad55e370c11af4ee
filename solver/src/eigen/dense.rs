//! Dense reference solver for K φ = λ M φ, in shift-invert form so that the low modes keep their
//! relative accuracy.
//!
//! A dense symmetric eigensolver has absolute accuracy ε‖C‖; beam and shell spectra span many
//! decades (rotational DOFs carry little inertia), so reducing to C = L⁻¹KL⁻ᵀ with M = LLᵀ loses
//! the low modes' digits. Here A = K − σM = LLᵀ (σ below the spectrum, A positive definite),
//! C = L⁻¹ M L⁻ᵀ, C y = μ y with μ = 1/(λ − σ), φ = L⁻ᵀ y: the low modes are the largest μ and are
//! computed to relative accuracy ε. For a model with zero-energy modes a first pass at a tiny
//! negative shift finds the first elastic eigenvalue λ_e, and the final pass uses σ = −λ_e/2 so
//! that rigid and elastic modes are both well scaled. Matrices are scaled symmetrically to unit
//! diagonal first (same eigenvalues).
//!
//! O(n³): the oracle for tests and the route for tiny models, never for production sizes.

use faer::linalg::triangular_solve::{solve_lower_triangular_in_place, solve_upper_triangular_in_place};
use faer::{Mat, Par, Side};

use crate::assembly::System;
use crate::error::SolverError;

/// All eigenpairs of (K, M), ascending, M-orthonormal vectors in columns. `zero_tol` is the
/// eigenvalue below which a mode counts as zero-energy; `scale` the element eigenvalue scale.
///
/// # Errors
/// [`SolverError::Factorization`] if K − σM is not positive definite for any tried σ,
/// [`SolverError::NoConvergence`] if the dense eigensolver fails.
pub(crate) fn all_modes(system: &System, scale: f64, zero_tol: f64) -> Result<(Vec<f64>, Mat<f64>), SolverError> {
    let (k, m) = system.dense();
    let n = k.nrows();
    let d: Vec<f64> = (0..n)
        .map(|i| {
            let a = k[(i, i)].abs() + scale * m[(i, i)].abs();
            if a > 0.0 { 1.0 / a.sqrt() } else { 1.0 }
        })
        .collect();
    let k = Mat::from_fn(n, n, |i, j| d[i] * k[(i, j)] * d[j]);
    let m = Mat::from_fn(n, n, |i, j| d[i] * m[(i, j)] * d[j]);
    let (mut vals, mut phi) = shift_invert(&k, &m, -1e-10 * scale)?;
    let n_zero = vals.iter().filter(|&&l| l <= zero_tol).count();
    if n_zero > 0 && n_zero < n {
        let first_elastic = vals[n_zero];
        (vals, phi) = shift_invert(&k, &m, -0.5 * first_elastic)?;
    }
    for (i, di) in d.iter().enumerate() {
        for j in 0..n {
            phi[(i, j)] *= di;
        }
    }
    Ok((vals, phi))
}

fn shift_invert(k: &Mat<f64>, m: &Mat<f64>, sigma: f64) -> Result<(Vec<f64>, Mat<f64>), SolverError> {
    let n = k.nrows();
    let a = Mat::from_fn(n, n, |i, j| k[(i, j)] - sigma * m[(i, j)]);
    let llt = a.llt(Side::Lower).map_err(|e| SolverError::Factorization {
        shift: sigma,
        detail: format!("dense K - sigma M is not positive definite ({e:?})"),
    })?;
    let l = llt.L().to_owned();
    // C = L⁻¹ M L⁻ᵀ: X = L⁻¹ M, then C = L⁻¹ Xᵀ.
    let mut x = m.clone();
    solve_lower_triangular_in_place(l.as_ref(), x.as_mut(), Par::Seq);
    let mut c = x.transpose().to_owned();
    solve_lower_triangular_in_place(l.as_ref(), c.as_mut(), Par::Seq);
    let sym = Mat::from_fn(n, n, |i, j| 0.5 * (c[(i, j)] + c[(j, i)]));
    let evd = sym
        .self_adjoint_eigen(Side::Lower)
        .map_err(|e| SolverError::NoConvergence(format!("dense eigensolver: {e:?}")))?;
    let mu = evd.S().column_vector();
    // Largest μ first = lowest λ first. μ ≤ 0 belongs to infinite λ (massless directions).
    let order: Vec<usize> = (0..n).rev().filter(|&i| mu[i] > 0.0).collect();
    let vals: Vec<f64> = order.iter().map(|&i| sigma + 1.0 / mu[i]).collect();
    let u = evd.U();
    let mut phi = Mat::from_fn(n, order.len(), |r, c| u[(r, order[c])]);
    solve_upper_triangular_in_place(l.transpose(), phi.as_mut(), Par::Seq);
    Ok((vals, phi))
}
