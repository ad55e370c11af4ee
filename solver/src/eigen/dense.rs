//! Dense reference solver for K φ = λ M φ that keeps the relative accuracy of low and high modes.
//!
//! A dense symmetric eigensolver has absolute accuracy ε‖C‖; beam and shell spectra span many
//! decades (rotational DOFs carry little inertia), so reducing to C = L⁻¹KL⁻ᵀ with M = LLᵀ loses
//! the low modes' digits. Here A = K − σM = LLᵀ (σ below the spectrum, A positive definite),
//! C = L⁻¹ M L⁻ᵀ, C y = μ y with μ = 1/(λ − σ), φ = L⁻ᵀ y: the low modes are the largest μ and are
//! computed to relative accuracy ε. For a model with zero-energy modes a first pass at a tiny
//! negative shift finds the first elastic eigenvalue λ_e, and the final pass uses σ = −λ_e/2 so
//! that rigid and elastic modes are both well scaled. One shift loses the high modes' digits
//! (relative error ε λ/|σ|), so further passes at σ = −s with s growing a hundredfold each time
//! supply the modes above each s. (The direct form C = L_M⁻¹ K L_M⁻ᵀ with M = L_M L_Mᵀ is no
//! remedy: beam and shell rotations carry tiny inertia, so L_M is ill-conditioned.) Matrices are
//! scaled symmetrically to unit diagonal first (same eigenvalues).
//!
//! O(n³): the oracle for tests and the route for tiny models, never for production sizes.

use faer::linalg::triangular_solve::{solve_lower_triangular_in_place, solve_upper_triangular_in_place};
use faer::{Mat, Par, Side};

use crate::assembly::System;
use crate::error::SolverError;

use super::symmetric::symmetric_eigen;

/// All eigenpairs of (K, M), ascending, M-orthonormal vectors in columns. `zero_tol` is the
/// eigenvalue below which a mode counts as zero-energy; `scale` the element eigenvalue scale.
///
/// # Errors
/// [`SolverError::Factorization`] if K − σM is not positive definite for any tried σ,
/// [`SolverError::NoConvergence`] if the dense eigensolver fails.
/// Ratio between the shifts of successive passes.
const PASS_RATIO: f64 = 100.0;

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
    // Passes at shifts −s growing by PASS_RATIO up the spectrum: a mode λ ≥ s of a pass is
    // resolved to relative accuracy ~ε (λ + s)/s there, so each mode is taken from the last pass
    // whose s lies below it (the switch put at a gap, so that no cluster is divided).
    let top = vals.last().copied().unwrap_or(0.0);
    let mut s = vals.iter().copied().find(|&l| l > zero_tol).map_or(f64::INFINITY, |l| 0.5 * l);
    while vals.len() == n && s * PASS_RATIO < top {
        s *= PASS_RATIO;
        let (hv, hphi) = shift_invert(&k, &m, -s)?;
        if hv.len() != n {
            break;
        }
        let gap = |v: &[f64], i: usize| v[i] - v[i - 1] > 1e-6 * v[i].abs();
        if let Some(split) = (1..n).find(|&i| vals[i] >= s && gap(&vals, i) && gap(&hv, i)) {
            vals[split..].copy_from_slice(&hv[split..]);
            for j in split..n {
                for i in 0..n {
                    phi[(i, j)] = hphi[(i, j)];
                }
            }
        }
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
    let (mu, u) = symmetric_eigen(sym.as_ref())
        .ok_or_else(|| SolverError::NoConvergence("the dense eigensolver failed".into()))?;
    // Largest μ first = lowest λ first. μ ≤ 0 belongs to infinite λ (massless directions).
    let order: Vec<usize> = (0..n).rev().filter(|&i| mu[i] > 0.0).collect();
    let vals: Vec<f64> = order.iter().map(|&i| sigma + 1.0 / mu[i]).collect();
    let mut phi = Mat::from_fn(n, order.len(), |r, c| u[(r, order[c])]);
    solve_upper_triangular_in_place(l.transpose(), phi.as_mut(), Par::Seq);
    // One step of inverse iteration, Z = A⁻¹ M Φ: it damps the error components along the modes far
    // above the shift, which K amplifies in the residual. Then a Rayleigh–Ritz on each cluster of
    // Z; the eigenvalues keep their shift-invert values (more accurate than K's Rayleigh quotients
    // for the low modes).
    let mut z = m * &phi;
    solve_lower_triangular_in_place(l.as_ref(), z.as_mut(), Par::Seq);
    solve_upper_triangular_in_place(l.transpose(), z.as_mut(), Par::Seq);
    let kz = k * &z;
    let mz = m * &z;
    let mut start = 0;
    while start < vals.len() {
        let mut end = start + 1;
        while end < vals.len() && (vals[end] - vals[end - 1]).abs() <= 1e-6 * vals[end].abs() {
            end += 1;
        }
        let zc = z.subcols(start, end - start);
        let kc = zc.transpose() * kz.subcols(start, end - start);
        let mc = zc.transpose() * mz.subcols(start, end - start);
        if let Some(s) = ritz_rotation(&kc, &mc) {
            let rotated = zc * &s;
            phi.subcols_mut(start, end - start).copy_from(rotated.as_ref());
        }
        start = end;
    }
    Ok((vals, phi))
}

/// Eigenvectors S (ascending eigenvalues, Sᵀ Mc S = I) of the small pencil (Kc, Mc); `None` when
/// Mc is not positive definite.
fn ritz_rotation(kc: &Mat<f64>, mc: &Mat<f64>) -> Option<Mat<f64>> {
    let p = kc.nrows();
    let kc = Mat::from_fn(p, p, |i, j| 0.5 * (kc[(i, j)] + kc[(j, i)]));
    let mc = Mat::from_fn(p, p, |i, j| 0.5 * (mc[(i, j)] + mc[(j, i)]));
    let l = mc.llt(Side::Lower).ok()?.L().to_owned();
    let mut c = kc;
    solve_lower_triangular_in_place(l.as_ref(), c.as_mut(), Par::Seq);
    let mut c = c.transpose().to_owned();
    solve_lower_triangular_in_place(l.as_ref(), c.as_mut(), Par::Seq);
    let c = Mat::from_fn(p, p, |i, j| 0.5 * (c[(i, j)] + c[(j, i)]));
    let (_, mut s) = symmetric_eigen(c.as_ref())?;
    solve_upper_triangular_in_place(l.transpose(), s.as_mut(), Par::Seq);
    Some(s)
}
