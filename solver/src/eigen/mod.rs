//! Natural modes: K φ = λ M φ with λ = ω² (rad²/s²), modes mass-normalised (Φᵀ M Φ = I),
//! eigenvalues ascending.
//!
//! Route: a rank-revealing LDLᵀ of K counts and locates zero-energy (rigid-body or mechanism)
//! motions; the shift σ is 0 when K is positive definite and slightly negative otherwise, so that
//! K − σM is positive definite and one Cholesky factor serves the whole run. Zero-energy modes are
//! found by subspace iteration on (K − σM)⁻¹M (they converge at once, being isolated at θ = 1/|σ|),
//! the rest by block Lanczos (see [`lanczos`]) with locking and restarts until a Sturm-sequence count
//! at the top of the request proves that none is missing. A final Rayleigh–Ritz on all locked vectors
//! gives the eigenvalues as Rayleigh quotients and exact M-orthonormality. Exactly repeated
//! eigenvalues (relative spread below 1e-10) have their eigenvectors rotated into a canonical
//! orientation within the eigenspace (see [`post`]), so results do not depend on round-off.

mod dense;
mod lanczos;
mod post;
mod symmetric;

use faer::{Mat, MatRef, Side};
use serde::Serialize;

use antinode_mesh::Structure;

use crate::assembly::System;
use crate::error::SolverError;
use crate::factor::Factor;
use lanczos::{Operator, RunParams, Select};
use symmetric::symmetric_eigen;

/// Which modes to compute.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum ModeRequest {
    /// The lowest `n` modes (zero-energy modes included).
    Lowest(usize),
    /// Every mode with frequency in `[low_hz, high_hz]`.
    Band {
        /// Lower edge, in Hz (0 includes zero-energy modes).
        low_hz: f64,
        /// Upper edge, in Hz.
        high_hz: f64,
    },
    /// The modes in `[low_hz, high_hz]`, at most the lowest `max_count` of them.
    BandCapped {
        /// Lower edge, in Hz.
        low_hz: f64,
        /// Upper edge, in Hz.
        high_hz: f64,
        /// Largest number of modes returned.
        max_count: usize,
    },
}

/// A request after caps are resolved.
#[derive(Debug, Clone, Copy, PartialEq)]
enum Plain {
    Lowest(usize),
    Band { low_hz: f64, high_hz: f64 },
}

/// How to solve.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Method {
    /// Dense for tiny models, Lanczos otherwise.
    Auto,
    /// Block shift-invert Lanczos on the sparse factorization.
    Lanczos,
    /// Dense reference solver (all modes, O(n³)).
    Dense,
}

/// Solver settings.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct EigenParams {
    /// Lanczos block size (≥ 1); at least the largest expected multiplicity. Default 4.
    pub block_size: usize,
    /// Convergence tolerance on ‖Op y − θ y‖_M / |θ|. Default 1e-9 (the refinement step after
    /// convergence brings the residuals of the returned modes well below it).
    pub tolerance: f64,
    /// Route.
    pub method: Method,
    /// Seed of the random start blocks (results are bit-identical for one seed).
    pub seed: u64,
    /// Largest number of Lanczos restarts before giving up.
    pub max_restarts: usize,
    /// The number of zero-frequency modes, when already established (by [`check_zero_energy`]
    /// against the supports). A positive count skips the rank-revealing factorization of K that
    /// otherwise decides whether a negative shift is needed. Default `None`.
    pub zero_energy_modes: Option<usize>,
}

impl Default for EigenParams {
    fn default() -> Self {
        Self {
            block_size: 4,
            tolerance: 1e-9,
            method: Method::Auto,
            seed: 0x5eed_a11d,
            max_restarts: 12,
            zero_energy_modes: None,
        }
    }
}

/// Result of the Sturm-sequence completeness check: the number of eigenvalues below `shift_hz`
/// from the inertia of K − σM (`count_expected`) against the number computed (`count_found`).
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct SturmCheck {
    /// Frequency of the check shift, in Hz.
    pub shift_hz: f64,
    /// Negative pivots of the LDLᵀ of K − σM (eigenvalues below the shift).
    pub count_expected: usize,
    /// Computed eigenvalues below the shift.
    pub count_found: usize,
    /// Whether the two agree.
    pub passed: bool,
    /// For a band away from zero: the frequency of the lower shift, whose count was subtracted (both
    /// counts then refer to the band).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub lower_shift_hz: Option<f64>,
}

/// Work done by a solve.
#[derive(Debug, Clone, Copy, Default, PartialEq, Serialize)]
pub struct SolveStats {
    /// Numeric factorizations (the zero-energy check and Sturm checks included).
    pub factorizations: usize,
    /// Block solves with a factor.
    pub block_solves: usize,
    /// Lanczos runs (1 + restarts).
    pub lanczos_runs: usize,
    /// Stored values of one factor.
    pub factor_entries: usize,
    /// Thick restarts of the Lanczos runs.
    pub restarts: usize,
    /// Wall time of the numeric factorizations, in s.
    pub factor_seconds: f64,
    /// Wall time of the block solves with the factors, in s.
    pub solve_seconds: f64,
}

/// Computed modes.
#[derive(Debug, Clone)]
pub struct ModalSolution {
    /// λ = ω² in rad²/s², ascending.
    pub eigenvalues: Vec<f64>,
    shapes: Mat<f64>,
    /// Relative residual ‖Kφ − λMφ‖ / (|λ| ‖Mφ‖ + ‖Kφ‖) of each mode.
    pub residuals: Vec<f64>,
    /// max |Φᵀ M Φ − I| over the whole set.
    pub orthogonality_error: f64,
    /// Completeness check: Sturm count just above the highest returned mode.
    pub sturm_check: SturmCheck,
    /// Number of zero-energy modes among the results.
    pub n_zero_energy: usize,
    /// Shift used by the factorization, in rad²/s².
    pub shift: f64,
    /// Work done.
    pub stats: SolveStats,
}

impl ModalSolution {
    /// Number of modes.
    pub fn n_modes(&self) -> usize {
        self.eigenvalues.len()
    }

    /// Number of free DOFs of each shape.
    pub fn n_dofs(&self) -> usize {
        self.shapes.nrows()
    }

    /// Shape of mode `i` (from 0) over the free DOFs.
    pub fn shape(&self, i: usize) -> &[f64] {
        self.shapes.col(i).try_as_col_major().map(|c| c.as_slice()).unwrap_or(&[])
    }

    /// Natural frequency of mode `i` in Hz (0 for zero-energy modes with a round-off negative λ).
    pub fn frequency_hz(&self, i: usize) -> f64 {
        self.eigenvalues[i].max(0.0).sqrt() / (2.0 * std::f64::consts::PI)
    }

    /// Replaces modes `i` and `j` by cos θ φ_i + sin θ φ_j and −sin θ φ_i + cos θ φ_j (a rotation
    /// within their span, which keeps them M-orthonormal).
    pub(crate) fn rotate_pair(&mut self, i: usize, j: usize, theta: f64) {
        let (c, s) = (theta.cos(), theta.sin());
        for r in 0..self.shapes.nrows() {
            let (a, b) = (self.shapes[(r, i)], self.shapes[(r, j)]);
            self.shapes[(r, i)] = c * a + s * b;
            self.shapes[(r, j)] = -s * a + c * b;
        }
    }

    pub(crate) fn shapes(&self) -> MatRef<'_, f64> {
        self.shapes.as_ref()
    }

    /// Keeps the modes whose index satisfies `keep`.
    pub(crate) fn retain(&mut self, keep: impl Fn(usize) -> bool) {
        let idx: Vec<usize> = (0..self.n_modes()).filter(|&i| keep(i)).collect();
        let n = self.shapes.nrows();
        let shapes = Mat::from_fn(n, idx.len(), |r, c| self.shapes[(r, idx[c])]);
        self.eigenvalues = idx.iter().map(|&i| self.eigenvalues[i]).collect();
        self.residuals = idx.iter().map(|&i| self.residuals[i]).collect();
        self.n_zero_energy = idx.iter().filter(|&&i| i < self.n_zero_energy).count();
        self.shapes = shapes;
    }
}

/// Relative pivot size below which the rank-revealing LDLᵀ of the unit-diagonal-scaled K declares a
/// DOF free of stiffness (a zero-energy direction).
const ZERO_PIVOT: f64 = 1e-11;

/// Shift magnitude for singular K, relative to the median of K_ii / M_ii (the scale of element-level
/// eigenvalues): small enough to sit well below the first elastic mode of fine meshes, large
/// enough for a well-conditioned Cholesky factor.
const RIGID_SHIFT: f64 = 1e-10;

/// Eigenvalues below this fraction of the median K_ii / M_ii count as zero-energy.
const ZERO_EIGENVALUE: f64 = 1e-13;

fn hz_to_lambda(f: f64) -> f64 {
    (2.0 * std::f64::consts::PI * f).powi(2)
}

fn lambda_to_hz(l: f64) -> f64 {
    l.max(0.0).sqrt() / (2.0 * std::f64::consts::PI)
}

/// Median of K_ii / M_ii over DOFs with both positive: the scale of element-level eigenvalues.
fn eigenvalue_scale(system: &System) -> f64 {
    let (kd, md) = (system.diagonal(&system.k), system.diagonal(&system.m));
    let mut r: Vec<f64> = kd.iter().zip(&md).filter(|(k, m)| **k > 0.0 && **m > 0.0).map(|(k, m)| k / m).collect();
    if r.is_empty() {
        return 1.0;
    }
    r.sort_by(f64::total_cmp);
    r[r.len() / 2]
}

/// Zero-energy analysis of K: the free DOFs at which the rank-revealing LDLᵀ found no stiffness.
pub(crate) fn zero_energy_dofs(system: &System) -> Result<Vec<usize>, SolverError> {
    let (_, marked) = system.factorizer.ldlt_rank_revealing(system.k.clone(), ZERO_PIVOT)?;
    Ok(marked)
}

/// Number of eigenvalues below `lambda` by the inertia of K − λM, moving the shift slightly if it
/// falls on an eigenvalue.
pub(crate) fn sturm_count(system: &System, lambda: f64, stats: &mut SolveStats) -> Result<(usize, f64), SolverError> {
    let mut s = lambda;
    for attempt in 0..6 {
        let a = system.shifted(s);
        stats.factorizations += 1;
        let t = std::time::Instant::now();
        let factor = system.factorizer.ldlt(a)?;
        stats.factor_seconds += t.elapsed().as_secs_f64();
        if let Some(f) = factor {
            let inertia = f.inertia();
            if inertia.zero == 0 {
                return Ok((inertia.negative, s));
            }
        }
        // σ is (numerically) an eigenvalue: nudge upward by a growing relative amount.
        s = lambda * (1.0 + 1e-9 * 10f64.powi(attempt)) + f64::EPSILON * (attempt as f64 + 1.0);
    }
    Err(SolverError::Factorization {
        shift: lambda,
        detail: "no usable LDLᵀ near this shift for the Sturm count".into(),
    })
}

/// Number of modes of `system` with frequency below `frequency_hz`, by the Sturm sequence: the
/// negative pivots of an LDLᵀ of K − (2π f)² M (Sylvester's law of inertia). A frequency that falls
/// on an eigenvalue is moved up by a relative 1e-9 or so; the count then includes that mode.
///
/// # Errors
/// [`SolverError::Request`] for a negative or non-finite frequency; [`SolverError::Factorization`]
/// when no usable factorization exists near it.
pub fn count_modes_below(system: &System, frequency_hz: f64) -> Result<usize, SolverError> {
    if !(frequency_hz.is_finite() && frequency_hz >= 0.0) {
        return Err(SolverError::Request(format!("{frequency_hz} Hz is not a frequency; give a value >= 0")));
    }
    if frequency_hz == 0.0 {
        return Ok(0);
    }
    Ok(sturm_count(system, hz_to_lambda(frequency_hz), &mut SolveStats::default())?.0)
}

/// Computes the requested modes of `system`.
///
/// # Errors
/// [`SolverError::Request`] for an impossible request (zero modes, an empty or reversed band, more
/// modes than DOFs, no mode in the band); [`SolverError::NoConvergence`] if the Sturm check cannot
/// be satisfied; [`SolverError::Factorization`] if no usable factorization exists.
pub fn solve_modes(system: &System, request: ModeRequest, params: &EigenParams) -> Result<ModalSolution, SolverError> {
    let n = system.n_dofs();
    match request {
        ModeRequest::Lowest(0) => {
            return Err(SolverError::Request("zero modes requested; ask for at least one".into()));
        }
        ModeRequest::Lowest(c) if c > n => {
            return Err(SolverError::Request(format!("{c} modes requested but the model has only {n} free DOFs")));
        }
        ModeRequest::Band { low_hz, high_hz } => {
            if !(low_hz.is_finite() && high_hz.is_finite() && low_hz >= 0.0 && high_hz > low_hz) {
                return Err(SolverError::Request(format!(
                    "[{low_hz}, {high_hz}] Hz is not a band; give 0 <= low < high"
                )));
            }
        }
        ModeRequest::Lowest(_) => {}
        ModeRequest::BandCapped { low_hz, high_hz, max_count } => {
            if max_count == 0 {
                return Err(SolverError::Request("a cap of zero modes; ask for at least one".into()));
            }
            let band = ModeRequest::Band { low_hz, high_hz };
            // From zero, a band holding more modes than the cap is the lowest `max_count` modes.
            if low_hz == 0.0 && high_hz.is_finite() && high_hz > 0.0 {
                let (below, _) = sturm_count(system, hz_to_lambda(high_hz), &mut SolveStats::default())?;
                if below > max_count {
                    return solve_modes(system, ModeRequest::Lowest(max_count), params);
                }
            }
            // Away from zero the band is solved, then its lowest `max_count` kept.
            let mut sol = solve_modes(system, band, params)?;
            sol.retain(|i| i < max_count);
            return Ok(sol);
        }
    }
    let request = match request {
        ModeRequest::Lowest(c) => Plain::Lowest(c),
        ModeRequest::Band { low_hz, high_hz } => Plain::Band { low_hz, high_hz },
        ModeRequest::BandCapped { .. } => unreachable!("handled above"),
    };
    let dense = match params.method {
        Method::Dense => true,
        Method::Lanczos => false,
        Method::Auto => n <= 120,
    };
    let mut sol = if dense { solve_dense(system, request)? } else { solve_lanczos(system, request, params)? };
    let st = sol.sturm_check;
    if !st.passed {
        return Err(SolverError::NoConvergence(format!(
            "Sturm check failed: the inertia of K - sigma M puts {} eigenvalues below {:.6} Hz but {} were computed",
            st.count_expected, st.shift_hz, st.count_found
        )));
    }
    if sol.n_modes() == 0 {
        if let Plain::Band { low_hz, high_hz } = request {
            return Err(SolverError::Request(format!("no mode lies in the band [{low_hz}, {high_hz}] Hz")));
        }
    }
    post::finish(system, &mut sol, eigenvalue_scale(system));
    post::check_finite(system, &sol)?;
    Ok(sol)
}

fn solve_dense(system: &System, request: Plain) -> Result<ModalSolution, SolverError> {
    let scale = eigenvalue_scale(system);
    let (vals, phi) = dense::all_modes(system, scale, ZERO_EIGENVALUE * scale)?;
    let n_zero = vals.iter().filter(|&&l| l <= ZERO_EIGENVALUE * scale).count();
    let mut stats = SolveStats::default();
    // Sturm check just above the highest selected mode, as for the sparse route.
    let selected = match request {
        Plain::Lowest(c) => c.min(vals.len()),
        Plain::Band { high_hz, .. } => vals.iter().filter(|&&l| l <= hz_to_lambda(high_hz)).count(),
    };
    let sturm = if selected == 0 {
        SturmCheck { shift_hz: 0.0, count_expected: 0, count_found: 0, passed: true, lower_shift_hz: None }
    } else {
        let top = check_shift(&vals, selected, &[], 0.0, scale);
        let (cnt, shift) = sturm_count(system, top, &mut stats)?;
        let found = vals.iter().filter(|&&l| l < shift).count();
        SturmCheck {
            shift_hz: lambda_to_hz(shift),
            count_expected: cnt,
            count_found: found,
            passed: cnt == found,
            lower_shift_hz: None,
        }
    };
    let mut sol = ModalSolution {
        residuals: vec![0.0; vals.len()],
        eigenvalues: vals,
        shapes: phi,
        orthogonality_error: 0.0,
        sturm_check: sturm,
        n_zero_energy: n_zero,
        shift: 0.0,
        stats,
    };
    select(&mut sol, request);
    Ok(sol)
}

fn select(sol: &mut ModalSolution, request: Plain) {
    let vals = sol.eigenvalues.clone();
    match request {
        Plain::Lowest(c) => sol.retain(|i| i < c),
        Plain::Band { low_hz, high_hz } => {
            let (lo, hi) = (hz_to_lambda(low_hz), hz_to_lambda(high_hz));
            sol.retain(|i| (low_hz == 0.0 || vals[i] >= lo) && vals[i] <= hi);
        }
    }
}

/// Converged eigenvectors locked so far, with their eigenvalues.
struct Locked {
    y: Mat<f64>,
    lambda: Vec<f64>,
}

impl Locked {
    fn new(n: usize) -> Self {
        Self { y: Mat::zeros(n, 0), lambda: Vec::new() }
    }

    fn push(&mut self, v: MatRef<'_, f64>, lambda: &[f64]) {
        if v.ncols() == 0 {
            return;
        }
        let (n, m) = (self.y.nrows(), self.y.ncols());
        let mut y2 = Mat::<f64>::zeros(n, m + v.ncols());
        y2.subcols_mut(0, m).copy_from(self.y.as_ref());
        y2.subcols_mut(m, v.ncols()).copy_from(v);
        self.y = y2;
        self.lambda.extend_from_slice(lambda);
    }

    /// Removes and returns the pairs from index `at` on.
    fn split_off(&mut self, at: usize) -> Locked {
        let m = self.y.ncols();
        let tail = Locked { y: self.y.subcols(at, m - at).to_owned(), lambda: self.lambda.split_off(at) };
        self.y = self.y.subcols(0, at).to_owned();
        tail
    }

    /// Eigenvalues in ascending order, with the permutation that sorts them.
    fn sorted(&self) -> (Vec<f64>, Vec<usize>) {
        let mut order: Vec<usize> = (0..self.lambda.len()).collect();
        order.sort_by(|&a, &b| self.lambda[a].total_cmp(&self.lambda[b]).then(a.cmp(&b)));
        (order.iter().map(|&i| self.lambda[i]).collect(), order)
    }

    fn count_in(&self, lo: f64, hi: f64) -> usize {
        self.lambda.iter().filter(|&&l| l >= lo && l < hi).count()
    }
}

/// Rayleigh–Ritz in the shift-invert space on the span of `x`: the eigenpairs of
/// (Xᵀ M Op X) s = θ (Xᵀ M X) s, returned as λ = σ + 1/θ (ascending) and M-orthonormal vectors X s.
/// Unlike a Rayleigh quotient of K, this keeps the relative accuracy of small eigenvalues of
/// ill-conditioned K (one extra block solve).
fn shift_invert_ritz(
    op: &Operator<'_>,
    sigma: f64,
    x: MatRef<'_, f64>,
    stats: &mut SolveStats,
) -> Result<(Vec<f64>, Mat<f64>), SolverError> {
    let k = x.ncols();
    let mx = op.system.mul_m(x);
    let z = op.apply_to_mx(mx.as_ref());
    stats.block_solves += 1;
    let g = mx.transpose() * z.as_ref();
    let b = x.transpose() * mx.as_ref();
    let g = Mat::from_fn(k, k, |i, j| 0.5 * (g[(i, j)] + g[(j, i)]));
    let b = Mat::from_fn(k, k, |i, j| 0.5 * (b[(i, j)] + b[(j, i)]));
    let llt = b.llt(Side::Lower).map_err(|e| {
        SolverError::NoConvergence(format!("the computed vectors are not linearly independent ({e:?})"))
    })?;
    let l = llt.L().to_owned();
    let mut c = g.clone();
    faer::linalg::triangular_solve::solve_lower_triangular_in_place(l.as_ref(), c.as_mut(), faer::Par::Seq);
    let mut c = c.transpose().to_owned();
    faer::linalg::triangular_solve::solve_lower_triangular_in_place(l.as_ref(), c.as_mut(), faer::Par::Seq);
    let c = Mat::from_fn(k, k, |i, j| 0.5 * (c[(i, j)] + c[(j, i)]));
    let (mu, mut s) = symmetric_eigen(c.as_ref())
        .ok_or_else(|| SolverError::NoConvergence("the projected eigenproblem failed".into()))?;
    faer::linalg::triangular_solve::solve_upper_triangular_in_place(l.transpose(), s.as_mut(), faer::Par::Seq);
    // Largest θ first is lowest λ first.
    let order: Vec<usize> = (0..k).rev().collect();
    let lambda = order.iter().map(|&i| sigma + 1.0 / mu[i]).collect();
    let s = Mat::from_fn(k, k, |r, c| s[(r, order[c])]);
    Ok((lambda, x * s))
}

/// Basis sizes for a run that wants `need` pairs with block size `p`: the basis grows to about
/// twice the wanted count (thick restarts keep 1.25 times it), never below 8 blocks.
pub(crate) fn basis_sizes(need: usize, p: usize, boost: usize) -> (usize, usize) {
    let keep = need + need / 4 + p;
    let max_dim = ((keep + keep.max(4 * p)) * boost).max(8 * p);
    (max_dim, keep * boost.min(2))
}

/// The shift-invert factor below the spectrum: σ = 0 when K is positive definite (the rank-revealing
/// LDLᵀ of K serves directly), otherwise σ = −δ with δ small against the element eigenvalue scale
/// (K + δM is then positive definite, and the zero-energy modes have θ = 1/δ). A known positive
/// count of zero-energy modes goes straight to the negative shift. Returns the factor, σ and the
/// number of zero-energy modes (the known count, or the DOFs where K showed no stiffness).
fn bottom_factor(
    system: &System,
    scale: f64,
    known_zero: Option<usize>,
    stats: &mut SolveStats,
) -> Result<(Factor, f64, usize), SolverError> {
    if let Some(k) = known_zero.filter(|&k| k > 0) {
        let (f, sigma) = negative_shift_factor(system, scale, stats)?;
        return Ok((f, sigma, k));
    }
    let t = std::time::Instant::now();
    let (factor, zero_dofs) = system.factorizer.ldlt_rank_revealing(system.k.clone(), ZERO_PIVOT)?;
    stats.factor_seconds += t.elapsed().as_secs_f64();
    stats.factorizations += 1;
    if zero_dofs.is_empty() && factor.inertia().negative == 0 {
        return Ok((factor, 0.0, 0));
    }
    drop(factor);
    let (f, sigma) = negative_shift_factor(system, scale, stats)?;
    Ok((f, sigma, zero_dofs.len()))
}

/// Cholesky factor of K − σM at a small negative shift σ (−1e-10 of the element eigenvalue scale,
/// growing ×100 until the factorization succeeds): positive definite whenever M is, even when K is
/// singular.
fn negative_shift_factor(system: &System, scale: f64, stats: &mut SolveStats) -> Result<(Factor, f64), SolverError> {
    let mut sigma = -RIGID_SHIFT * scale;
    for _ in 0..4 {
        stats.factorizations += 1;
        let t = std::time::Instant::now();
        let factor = system.factorizer.llt(system.shifted(sigma))?;
        stats.factor_seconds += t.elapsed().as_secs_f64();
        if let Some(f) = factor {
            return Ok((f, sigma));
        }
        sigma *= 100.0;
    }
    Err(SolverError::Factorization {
        shift: sigma,
        detail: "K - sigma M is not positive definite below the spectrum; the mass matrix may be singular".into(),
    })
}

/// A shift-invert operator at an interior shift near `target` (λ), moved slightly if the shift falls
/// on an eigenvalue.
fn interior_factor(system: &System, target: f64, stats: &mut SolveStats) -> Result<(Factor, f64), SolverError> {
    let mut sigma = target;
    for attempt in 0..6 {
        stats.factorizations += 1;
        let t = std::time::Instant::now();
        let factor = system.factorizer.lblt(system.shifted(sigma))?;
        stats.factor_seconds += t.elapsed().as_secs_f64();
        if let Some(f) = factor {
            return Ok((f, sigma));
        }
        sigma = target * (1.0 + 1e-7 * 10f64.powi(attempt));
    }
    Err(SolverError::Factorization { shift: target, detail: "no usable LBLᵀ near this shift".into() })
}

/// Runs Lanczos on `op` until `locked` holds `expected` eigenvalues in [lo, hi) — or, with
/// `expected = None`, until it holds `count` eigenvalues in total. Restarts with fresh seeds when a
/// run returns fewer than wanted (modes of higher multiplicity than the block, or an unlucky start).
#[allow(clippy::too_many_arguments)]
fn fill(
    op: &Operator<'_>,
    sigma: f64,
    select: Select,
    window: [f64; 2],
    expected: usize,
    locked: &mut Locked,
    params: &EigenParams,
    stats: &mut SolveStats,
) -> Result<Vec<f64>, SolverError> {
    let n = op.system.n_dofs();
    let p = params.block_size.max(1);
    let mut runs = 0;
    let mut boost = 1;
    let mut last_theta = Vec::new();
    loop {
        let have = locked.count_in(window[0], window[1]);
        if have >= expected {
            return Ok(last_theta);
        }
        let need = expected - have;
        if runs > params.max_restarts || locked.y.ncols() >= n {
            return Err(SolverError::NoConvergence(format!(
                "{need} mode(s) still missing in [{:.6}, {:.6}] Hz after {runs} Lanczos runs (block size {p}); \
                 raise the block size if modes of higher multiplicity are expected",
                lambda_to_hz(window[0]),
                lambda_to_hz(window[1])
            )));
        }
        let (max_dim, keep) = basis_sizes(need, p, boost);
        let run = RunParams {
            block: p,
            max_dim: max_dim.min(n - locked.y.ncols()),
            keep,
            tolerance: params.tolerance,
            seed: params.seed.wrapping_add(runs as u64),
            select,
            max_restarts: 50,
        };
        // Ask for a few more than needed, so that the converged set is contiguous with the wanted one
        // (a mode not yet resolved inside a dense cluster would otherwise be skipped and found only
        // after the Sturm check).
        let buffer = (need / 10).max(2);
        let pairs = lanczos::run(op, locked.y.as_ref(), (need + buffer).min(n - locked.y.ncols()), &run)?;
        runs += 1;
        stats.lanczos_runs += 1;
        stats.block_solves += pairs.n_solves;
        stats.restarts += pairs.n_restarts;
        last_theta = pairs.all_theta.clone();
        if pairs.theta.len() < need {
            boost *= 2;
        }
        // Lock the converged pairs inside the window; the others belong to a neighbouring slice.
        let lambda: Vec<f64> = pairs.theta.iter().map(|&t| sigma + 1.0 / t).collect();
        let inside: Vec<usize> =
            (0..lambda.len()).filter(|&i| lambda[i] >= window[0] && lambda[i] < window[1]).collect();
        let v = Mat::from_fn(n, inside.len(), |r, c| pairs.vectors[(r, inside[c])]);
        let l: Vec<f64> = inside.iter().map(|&i| lambda[i]).collect();
        locked.push(v.as_ref(), &l);
        if inside.is_empty() && pairs.theta.len() >= need {
            return Err(SolverError::NoConvergence(format!(
                "the Lanczos run converged outside the wanted window [{:.6}, {:.6}] Hz",
                lambda_to_hz(window[0]),
                lambda_to_hz(window[1])
            )));
        }
    }
}

fn solve_lanczos(system: &System, request: Plain, params: &EigenParams) -> Result<ModalSolution, SolverError> {
    let n = system.n_dofs();
    let mut stats = SolveStats { factor_entries: system.factorizer.factor_len(), ..SolveStats::default() };
    let scale = eigenvalue_scale(system);
    let mut locked = Locked::new(n);
    // Bands far from zero are solved with shifts inside them (spectrum slicing).
    if let Plain::Band { low_hz, high_hz } = request {
        if low_hz > 0.0 {
            let (lo, hi) = (hz_to_lambda(low_hz), hz_to_lambda(high_hz));
            let (below_lo, lo_shift) = sturm_count(system, lo, &mut stats)?;
            let (below_hi, hi_shift) = sturm_count(system, hi, &mut stats)?;
            let in_band = below_hi.saturating_sub(below_lo);
            if in_band > 0 && below_lo > in_band {
                return solve_slices(system, [lo_shift, hi_shift], [below_lo, below_hi], params, stats, scale);
            }
        }
    }
    let (factor, sigma, n_zero) = bottom_factor(system, scale, params.zero_energy_modes, &mut stats)?;
    let op = Operator::new(system, &factor);
    // Zero-energy subspace by subspace iteration: θ = 1/|σ| is far above every elastic θ.
    if n_zero > 0 && sigma < 0.0 {
        let z = zero_space(&op, n_zero.min(n), params.seed, &mut stats);
        let (vals, vecs) = shift_invert_ritz(&op, sigma, z.as_ref(), &mut stats)?;
        let keep: Vec<usize> = (0..vals.len()).filter(|&i| vals[i].abs() <= 1e-3 * sigma.abs()).collect();
        let v = Mat::from_fn(n, keep.len(), |r, c| vecs[(r, keep[c])]);
        let l: Vec<f64> = keep.iter().map(|&i| vals[i]).collect();
        locked.push(v.as_ref(), &l);
    }
    let everything = [f64::NEG_INFINITY, f64::INFINITY];
    let sturm = match request {
        Plain::Band { high_hz, .. } => {
            let (cnt, shift) = sturm_count(system, hz_to_lambda(high_hz), &mut stats)?;
            let window = [f64::NEG_INFINITY, widen(shift, 1.0)];
            fill(&op, sigma, Select::Largest, window, cnt, &mut locked, params, &mut stats)?;
            refine(&op, sigma, &mut locked, &mut stats)?;
            settled_check(system, &locked, None, (shift, cnt), &mut stats)?
        }
        Plain::Lowest(c) => {
            let mut theta = fill(&op, sigma, Select::Largest, everything, c, &mut locked, params, &mut stats)?;
            // Completeness: the Sturm count just above the c-th eigenvalue; any missing mode below it
            // is searched for and the check repeated.
            loop {
                let (vals, _) = locked.sorted();
                let top = check_shift(&vals, c, &theta, sigma, scale);
                // The Sturm factorization (one core) runs beside the refinement of the converged
                // set (the other); the count is compared with the refined eigenvalues.
                let mut sturm_stats = SolveStats::default();
                let (counted, refined) = rayon::join(
                    || sturm_count(system, top, &mut sturm_stats),
                    || refine(&op, sigma, &mut locked, &mut stats),
                );
                stats.factorizations += sturm_stats.factorizations;
                stats.factor_seconds += sturm_stats.factor_seconds;
                refined?;
                let (cnt, shift) = counted?;
                let found = locked.count_in(f64::NEG_INFINITY, shift);
                if found >= cnt {
                    break SturmCheck {
                        shift_hz: lambda_to_hz(shift),
                        count_expected: cnt,
                        count_found: found,
                        passed: found == cnt,
                        lower_shift_hz: None,
                    };
                }
                if stats.lanczos_runs > params.max_restarts {
                    return Err(SolverError::NoConvergence(format!(
                        "Sturm check failed: {cnt} eigenvalues lie below {:.6} Hz but {found} were found",
                        lambda_to_hz(shift)
                    )));
                }
                theta = fill(
                    &op,
                    sigma,
                    Select::Largest,
                    [f64::NEG_INFINITY, shift],
                    cnt,
                    &mut locked,
                    params,
                    &mut stats,
                )?;
            }
        }
    };
    stats.solve_seconds += op.solve_seconds();
    let mut sol = finish_locked(locked, sturm, sigma, stats, scale);
    match request {
        Plain::Lowest(c) => sol.retain(|i| i < c),
        Plain::Band { low_hz, high_hz } => {
            let (lo, hi) = (hz_to_lambda(low_hz), hz_to_lambda(high_hz));
            let vals = sol.eigenvalues.clone();
            sol.retain(|i| (low_hz == 0.0 || vals[i] >= lo) && vals[i] <= hi);
        }
    }
    Ok(sol)
}

/// Largest number of modes solved from one interior shift; longer bands are cut into slices.
const SLICE_MODES: usize = 120;

/// All eigenvalues in [bounds[0], bounds[1]) (with `counts` below each bound from the Sturm
/// sequence) by slices with an interior shift each: the band is cut into equal λ-intervals holding
/// at most about [`SLICE_MODES`] modes, each solved from an LBLᵀ factor at its centre, so the wanted
/// modes are the largest |θ| there. The slices' own Sturm counts make their union provably complete.
fn solve_slices(
    system: &System,
    bounds: [f64; 2],
    counts: [usize; 2],
    params: &EigenParams,
    mut stats: SolveStats,
    scale: f64,
) -> Result<ModalSolution, SolverError> {
    let n = system.n_dofs();
    let in_band = counts[1] - counts[0];
    let n_slices = in_band.div_ceil(SLICE_MODES).max(1);
    let mut edges = vec![(bounds[0], counts[0])];
    for k in 1..n_slices {
        let target = bounds[0] + (bounds[1] - bounds[0]) * k as f64 / n_slices as f64;
        let (c, s) = sturm_count(system, target, &mut stats)?;
        edges.push((s, c));
    }
    edges.push((bounds[1], counts[1]));
    let mut locked = Locked::new(n);
    for w in edges.windows(2) {
        let ((a, ca), (b, cb)) = (w[0], w[1]);
        if cb <= ca {
            continue;
        }
        let (factor, sigma) = interior_factor(system, 0.5 * (a + b), &mut stats)?;
        let op = Operator::new(system, &factor);
        let before = locked.y.ncols();
        // Counted from the band's lower edge, so that a mode computed a hair across a cut counts
        // for whichever slice locked it (each run is orthogonal to the modes already locked).
        let window = [widen(bounds[0], -1.0), widen(b, 1.0)];
        fill(&op, sigma, Select::LargestMagnitude, window, cb - counts[0], &mut locked, params, &mut stats)?;
        // Refine this slice's vectors with its own operator.
        let mut slice = locked.split_off(before);
        refine(&op, sigma, &mut slice, &mut stats)?;
        locked.push(slice.y.as_ref(), &slice.lambda);
        stats.solve_seconds += op.solve_seconds();
    }
    let sturm = settled_check(system, &locked, Some((bounds[0], counts[0])), (bounds[1], counts[1]), &mut stats)?;
    Ok(finish_locked(locked, sturm, bounds[0], stats, scale))
}

/// Relative distance from a Sturm shift within which a computed eigenvalue's side of the shift is
/// not certain (the shift's own count and the computed value may disagree about it); locking
/// windows are widened by as much, so such a mode is kept.
const EDGE_AMBIGUITY: f64 = 1e-9;

/// Relative step by which an ambiguous Sturm shift is moved.
const EDGE_STEP: f64 = 1e-7;

/// `x` moved by the relative [`EDGE_AMBIGUITY`] in the direction of `sign`.
fn widen(x: f64, sign: f64) -> f64 {
    x + sign * EDGE_AMBIGUITY * x.abs()
}

/// The Sturm check of a band: the modes computed in [lower, upper) against the difference of the
/// inertia counts at the two shifts (`lower` None: from −∞). A shift that a computed eigenvalue
/// lies within [`EDGE_AMBIGUITY`] of is moved by [`EDGE_STEP`] (outward first, then inward) and
/// counted again, and the first consistent pair of shifts is reported.
fn settled_check(
    system: &System,
    locked: &Locked,
    lower: Option<(f64, usize)>,
    upper: (f64, usize),
    stats: &mut SolveStats,
) -> Result<SturmCheck, SolverError> {
    let ambiguous = |s: f64| locked.lambda.iter().any(|&l| (l - s).abs() <= EDGE_AMBIGUITY * s.abs());
    let candidates = |s: f64, outward: f64| {
        if ambiguous(s) { vec![s + outward * EDGE_STEP * s.abs(), s - outward * EDGE_STEP * s.abs()] } else { vec![s] }
    };
    let count = |s: f64, given: (f64, usize), stats: &mut SolveStats| -> Result<(usize, f64), SolverError> {
        if s == given.0 { Ok((given.1, s)) } else { sturm_count(system, s, stats) }
    };
    let lows = match lower {
        Some(l) => candidates(l.0, -1.0).into_iter().map(Some).collect(),
        None => vec![None],
    };
    let mut first = None;
    for lo in lows {
        let (c_lo, s_lo) = match (lo, lower) {
            (Some(s), Some(given)) => count(s, given, stats)?,
            _ => (0, f64::NEG_INFINITY),
        };
        for hi in candidates(upper.0, 1.0) {
            let (c_hi, s_hi) = count(hi, upper, stats)?;
            let expected = c_hi.saturating_sub(c_lo);
            let found = locked.count_in(s_lo, s_hi);
            let check = SturmCheck {
                shift_hz: lambda_to_hz(s_hi),
                count_expected: expected,
                count_found: found,
                passed: found == expected,
                lower_shift_hz: lower.map(|_| lambda_to_hz(s_lo)),
            };
            if check.passed {
                return Ok(check);
            }
            first.get_or_insert(check);
        }
    }
    first.ok_or_else(|| SolverError::NoConvergence("no Sturm shift to check the band".into()))
}

/// One step of inverse iteration on the converged set, then Rayleigh–Ritz on its span: Z = Op Y
/// damps every error component along an eigenvector j by θ_j/θ_i, which is tiny for the high
/// modes whose components dominate the residual ‖Kφ − λMφ‖ (K amplifies them by up to λ_max/λ).
/// The Rayleigh–Ritz on span(Z) needs no product with K: (K − σM) Z = M Y gives
/// Zᵀ K Z = Zᵀ M Y + σ Zᵀ M Z, so the reduced pencil (Zᵀ M Y + σ ZᵀMZ, ZᵀMZ) is formed from
/// well-conditioned products only (a product with an ill-conditioned K would carry an absolute error
/// ε‖K‖ that ruins the low modes of a wide set). It gives M-orthonormal vectors, resolves the mixing
/// inside clusters, and eigenvalues accurate relative to themselves. One block solve with every
/// locked vector.
fn refine(op: &Operator<'_>, sigma: f64, locked: &mut Locked, stats: &mut SolveStats) -> Result<(), SolverError> {
    let (_, order) = locked.sorted();
    let k = order.len();
    if k == 0 {
        return Ok(());
    }
    let n = locked.y.nrows();
    let y = Mat::from_fn(n, k, |r, c| locked.y[(r, order[c])]);
    let my = op.system.mul_m(y.as_ref());
    let mut z = op.apply_to_mx(my.as_ref());
    stats.block_solves += 1;
    let mut mz = op.system.mul_m(z.as_ref());
    // Columns of Z scale like 1/|λ − σ|: normalise them, or ZᵀMZ would be as ill-conditioned as the
    // spread of the set squared (and its Cholesky factor would lose the high modes' digits).
    let mut my = my;
    for c in 0..k {
        let norm = (0..n).map(|i| z[(i, c)] * mz[(i, c)]).sum::<f64>().max(0.0).sqrt();
        if norm > 0.0 {
            for i in 0..n {
                z[(i, c)] /= norm;
                mz[(i, c)] /= norm;
                my[(i, c)] /= norm;
            }
        }
    }
    let zmy = z.transpose() * my.as_ref();
    let mr = z.transpose() * mz.as_ref();
    drop((mz, my));
    let kr = Mat::from_fn(k, k, |i, j| 0.5 * (zmy[(i, j)] + zmy[(j, i)]) + sigma * 0.5 * (mr[(i, j)] + mr[(j, i)]));
    let mr = Mat::from_fn(k, k, |i, j| 0.5 * (mr[(i, j)] + mr[(j, i)]));
    let Ok(llt) = mr.llt(Side::Lower) else {
        // Numerically dependent refined vectors: keep the Lanczos vectors.
        return Ok(());
    };
    let l = llt.L().to_owned();
    let mut c = kr.clone();
    faer::linalg::triangular_solve::solve_lower_triangular_in_place(l.as_ref(), c.as_mut(), faer::Par::Seq);
    let mut c = c.transpose().to_owned();
    faer::linalg::triangular_solve::solve_lower_triangular_in_place(l.as_ref(), c.as_mut(), faer::Par::Seq);
    let c = Mat::from_fn(k, k, |i, j| 0.5 * (c[(i, j)] + c[(j, i)]));
    let Some((vals, mut s)) = symmetric_eigen(c.as_ref()) else { return Ok(()) };
    faer::linalg::triangular_solve::solve_upper_triangular_in_place(l.transpose(), s.as_mut(), faer::Par::Seq);
    locked.y = &z * &s;
    locked.lambda = vals;
    Ok(())
}

/// The modal solution of the locked pairs, ascending.
fn finish_locked(locked: Locked, sturm: SturmCheck, sigma: f64, stats: SolveStats, scale: f64) -> ModalSolution {
    let n = locked.y.nrows();
    let (vals, order) = locked.sorted();
    let vecs = Mat::from_fn(n, order.len(), |r, c| locked.y[(r, order[c])]);
    let n_zero = vals.iter().filter(|&&l| l <= ZERO_EIGENVALUE * scale).count();
    ModalSolution {
        residuals: vec![0.0; vals.len()],
        eigenvalues: vals,
        shapes: vecs,
        orthogonality_error: 0.0,
        sturm_check: sturm,
        n_zero_energy: n_zero,
        shift: sigma,
        stats,
    }
}

/// Subspace iteration for the `k`-dimensional zero-energy space: X ← (K − σM)⁻¹ M X, columns
/// normalised.
fn zero_space(op: &Operator<'_>, k: usize, seed: u64, stats: &mut SolveStats) -> Mat<f64> {
    use rand::{RngExt, SeedableRng};
    let n = op.system.n_dofs();
    let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(seed ^ 0x7a7a);
    let mut x = Mat::from_fn(n, k, |_, _| rng.random::<f64>() - 0.5);
    for _ in 0..8 {
        let mx = op.system.mul_m(x.as_ref());
        x = op.apply_to_mx(mx.as_ref());
        stats.block_solves += 1;
        for c in 0..k {
            let norm = (0..n).map(|i| x[(i, c)] * x[(i, c)]).sum::<f64>().sqrt();
            if norm > 0.0 {
                for i in 0..n {
                    x[(i, c)] /= norm;
                }
            }
        }
    }
    x
}

pub use post::participation;

/// Checks the zero-energy (rigid-body and mechanism) motions of `system` against what `structure`
/// expects, before the main eigen solution: returns their number.
///
/// The rank-revealing LDLᵀ of K gives a fast count; when it disagrees with the expectation, the
/// lowest modes are computed to count the zero-frequency ones for sure (pivots can misjudge nearly
/// singular parts), and the error describes their motion.
///
/// # Errors
/// [`SolverError::Mechanism`] when the count differs from [`Structure::expected_rigid_body_modes`]
/// (the user's `rigid_body_modes`, or 0 for a held model and 6 per free part with beams), naming
/// the kinds of motion (ux … rz) the zero-frequency modes make and the DOFs where the stiffness
/// vanishes.
pub fn check_zero_energy(structure: &Structure, system: &System) -> Result<usize, SolverError> {
    let zero = zero_energy_dofs(system)?;
    let Some(expected) = structure.expected_rigid_body_modes() else {
        return Ok(zero.len());
    };
    if zero.len() == expected {
        return Ok(expected);
    }
    // Near-zero pivots are a hint, not a proof (round-off pivots of ill-conditioned shell models can
    // straddle the threshold): count the zero-frequency modes by subspace iteration at a negative
    // shift, and solve for the modes only to describe a mismatch.
    let count = (zero.len().max(expected) + 6).min(system.n_dofs());
    if count_zero_energy(system, count)? == expected {
        return Ok(expected);
    }
    let sol = solve_modes(system, ModeRequest::Lowest(count), &EigenParams::default())?;
    if sol.n_zero_energy == expected {
        return Ok(expected);
    }
    Err(mechanism(structure, system, &sol, expected, &zero))
}

/// Number of zero-frequency modes among the `block` lowest, by subspace iteration with
/// (K − σM)⁻¹M at a negative shift σ: each step multiplies zero-mode components by 1/|σ| and the
/// others by at most 1/(λ₁ + |σ|), so eight orthonormalised steps separate them, and the Ritz
/// values tell which are zero (|λ| ≤ 1e-3 |σ|, as in the Lanczos path).
fn count_zero_energy(system: &System, block: usize) -> Result<usize, SolverError> {
    let scale = eigenvalue_scale(system);
    let mut stats = SolveStats::default();
    let (factor, sigma) = negative_shift_factor(system, scale, &mut stats)?;
    let op = Operator::new(system, &factor);
    let n = system.n_dofs();
    let k = block.min(n);
    use rand::{RngExt, SeedableRng};
    let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(EigenParams::default().seed ^ 0x7a7b);
    let mut x = Mat::from_fn(n, k, |_, _| rng.random::<f64>() - 0.5);
    // Orthonormalised every step, so the columns beyond the zero space stay independent.
    for _ in 0..8 {
        let mx = system.mul_m(x.as_ref());
        x = op.apply_to_mx(mx.as_ref()).qr().compute_thin_Q();
    }
    let (vals, _) = shift_invert_ritz(&op, sigma, x.as_ref(), &mut stats)?;
    Ok(vals.iter().filter(|v| v.abs() <= 1e-3 * sigma.abs()).count())
}

/// Checks a computed solution against the zero-frequency modes `structure` expects (a safety net
/// after [`check_zero_energy`]).
///
/// # Errors
/// [`SolverError::Mechanism`] when `solution` holds more zero-frequency modes than expected.
pub fn confirm_zero_energy(
    structure: &Structure,
    system: &System,
    solution: &ModalSolution,
) -> Result<(), SolverError> {
    match structure.expected_rigid_body_modes() {
        Some(expected) if solution.n_zero_energy > expected => {
            Err(mechanism(structure, system, solution, expected, &[]))
        }
        _ => Ok(()),
    }
}

fn mechanism(
    structure: &Structure,
    system: &System,
    sol: &ModalSolution,
    expected: usize,
    pivots: &[usize],
) -> SolverError {
    let found = sol.n_zero_energy;
    let kinds = motion_kinds(structure, system, sol);
    let kinds = if kinds.is_empty() { "directions no support holds".to_string() } else { kinds.join(", ") };
    let mut at: Vec<String> = pivots.iter().take(6).map(|&d| system.dofs.describe(d)).collect();
    if pivots.len() > 6 {
        at.push("...".into());
    }
    let modes: Vec<String> = (1..=found).map(|i| i.to_string()).collect();
    let detail = if found > expected {
        format!(
            "the zero-frequency mode{} {} move{} in {kinds}{}, and nothing restrains {} (a support is missing or a DOF \
             is released); add supports or springs, or state the intended count as \"rigid_body_modes\"",
            if found == 1 { "" } else { "s" },
            modes.join(", "),
            if found == 1 { "s" } else { "" },
            if at.is_empty() { String::new() } else { format!(" (no stiffness found at {})", at.join(", ")) },
            if found == 1 { "it" } else { "them" },
        )
    } else {
        format!("only {found} zero-frequency mode(s) exist; state the intended count as \"rigid_body_modes\"")
    };
    SolverError::Mechanism { found, expected, detail }
}

/// DOF kinds (`ux` … `rz`) that carry at least a tenth of the motion of the zero-frequency modes.
/// Rotations are scaled by the model size so both kinds are lengths, and the modes are made
/// orthonormal first, so the shares do not depend on which basis of the repeated zero eigenvalue
/// the solver returned.
fn motion_kinds(structure: &Structure, system: &System, sol: &ModalSolution) -> Vec<&'static str> {
    const NAMES: [&str; 6] = ["ux", "uy", "uz", "rx", "ry", "rz"];
    let size = structure.size();
    let size = if size > 0.0 { size } else { 1.0 };
    let dot = |a: &[f64], b: &[f64]| a.iter().zip(b).map(|(x, y)| x * y).sum::<f64>();
    let mut basis: Vec<Vec<f64>> = Vec::new();
    for i in 0..sol.n_zero_energy {
        let mut v: Vec<f64> = system
            .dofs
            .expand(sol.shape(i))
            .iter()
            .flat_map(|d| (0..6).map(move |c| if c < 3 { d[c] } else { d[c] * size }))
            .collect();
        let before = dot(&v, &v).sqrt();
        for b in &basis {
            let p = dot(&v, b);
            v.iter_mut().zip(b).for_each(|(x, y)| *x -= p * y);
        }
        let norm = dot(&v, &v).sqrt();
        if norm > 1e-8 * before {
            v.iter_mut().for_each(|x| *x /= norm);
            basis.push(v);
        }
    }
    let mut share = [0.0; 6];
    for b in &basis {
        for (j, x) in b.iter().enumerate() {
            share[j % 6] += x * x;
        }
    }
    (0..6).filter(|&c| share[c] >= 0.1).map(|c| NAMES[c]).collect()
}

/// A shift just above the `c`-th computed eigenvalue and below the next one (computed or estimated
/// from Ritz values), for the Sturm check of a request for the lowest `c` modes.
fn check_shift(vals: &[f64], c: usize, ritz_theta: &[f64], sigma: f64, scale: f64) -> f64 {
    let lc = vals[c - 1];
    let next_found = vals.get(c).copied().unwrap_or(f64::INFINITY);
    let next_ritz = ritz_theta
        .iter()
        .map(|&t| sigma + 1.0 / t)
        .filter(|&l| l > lc + 1e-12 * lc.abs())
        .fold(f64::INFINITY, f64::min);
    let next = next_found.min(next_ritz);
    if lc <= ZERO_EIGENVALUE * scale {
        // Only zero-energy modes wanted: count below a small positive value.
        let small = sigma.abs().max(1e-6 * scale);
        return if next.is_finite() { (0.5 * next).min(small) } else { small };
    }
    if next.is_finite() && next > lc {
        lc + (0.5 * (next - lc)).min(1e-3 * lc).max(1e-7 * lc)
    } else {
        lc * (1.0 + 1e-3)
    }
}
