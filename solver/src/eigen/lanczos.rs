//! Thick-restart block Lanczos on the shift-invert operator Op = (K − σM)⁻¹M in the M-inner
//! product, with full reorthogonalisation and deflation of rank-deficient blocks.
//!
//! Op is self-adjoint in ⟨x, y⟩_M = xᵀMy; its eigenvalues θ = 1/(λ − σ) are largest in magnitude for λ
//! nearest σ. With σ below the wanted part of the spectrum the wanted θ are the largest; with σ inside
//! a band, the eigenvalues in a window around σ are the largest |θ|. The block form (block size p)
//! finds up to p eigenvectors of an exactly repeated eigenvalue in one run; the caller locks converged
//! vectors and restarts for anything missing, proven complete by a Sturm count (Grimes, Lewis & Simon,
//! "A shifted block Lanczos algorithm for solving sparse symmetric generalized eigenproblems", SIAM J.
//! Matrix Anal. Appl. 15(1), 1994).
//!
//! After m basis vectors Q (M-orthonormal, orthogonal to the locked vectors), the projection
//! T = Qᵀ M Op Q (m × m; block tridiagonal in exact arithmetic, kept whole here) gives Ritz pairs
//! (θ, y = Q s) with residual ‖Op y − θ y‖_M = ‖B s_last‖₂, B the coupling to the next block and s_last
//! the last block's entries of s. When the basis is full it is restarted thickly (Wu & Simon, "Thick-
//! restart Lanczos method for large symmetric eigenvalue problems", SIAM J. Matrix Anal. Appl. 22(2),
//! 2000; the block Krylov–Schur form of Stewart, SIAM J. Matrix Anal. Appl. 23(3), 2001): the best
//! `keep` Ritz vectors become the new leading basis, T becomes diag(θ) bordered by the coupling
//! B·S_last to the next block, and the iteration continues from that block. Memory stays
//! n × (max_dim + p). M·Q is not stored: each step recomputes the products it needs.
//!
//! Ritz values θ are accurate to about ε θ_max, so λ = σ + 1/θ keeps its relative accuracy even when K
//! is very ill-conditioned (fine meshes), unlike a Rayleigh quotient φᵀKφ.

use faer::{Mat, MatMut, MatRef};
use rand::{RngExt, SeedableRng};
use rand_chacha::ChaCha8Rng;

use crate::assembly::System;
use crate::error::SolverError;
use crate::factor::Factor;

use super::symmetric::symmetric_eigen;

/// The shift-invert operator of one shift.
pub(crate) struct Operator<'a> {
    pub system: &'a System,
    pub factor: &'a Factor,
    /// Wall time spent in solves, in s (shared: the operator is used from two threads at once
    /// while a Sturm factorization runs beside a refinement).
    solve_seconds: std::sync::Mutex<f64>,
}

impl<'a> Operator<'a> {
    pub fn new(system: &'a System, factor: &'a Factor) -> Self {
        Self { system, factor, solve_seconds: std::sync::Mutex::new(0.0) }
    }

    /// Wall time spent in solves so far, in s.
    pub fn solve_seconds(&self) -> f64 {
        self.solve_seconds.lock().map(|t| *t).unwrap_or(0.0)
    }

    /// Op X = (K − σM)⁻¹ (M X), given MX.
    pub fn apply_to_mx(&self, mx: MatRef<'_, f64>) -> Mat<f64> {
        let t = std::time::Instant::now();
        let mut w = mx.to_owned();
        self.factor.solve_in_place(w.as_mut());
        if let Ok(mut total) = self.solve_seconds.lock() {
            *total += t.elapsed().as_secs_f64();
        }
        w
    }
}

/// Which Ritz values are wanted.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) enum Select {
    /// The largest θ (σ below the wanted eigenvalues).
    Largest,
    /// The largest |θ| (σ inside the wanted window).
    LargestMagnitude,
}

/// Converged Ritz pairs of one run, in selection order.
pub(crate) struct RitzPairs {
    /// θ = 1/(λ − σ).
    pub theta: Vec<f64>,
    /// Ritz vectors, M-orthonormal, one per column.
    pub vectors: Mat<f64>,
    /// Ritz values of the last basis (converged or not), in selection order.
    pub all_theta: Vec<f64>,
    /// Block solves done.
    pub n_solves: usize,
    /// Thick restarts done.
    pub n_restarts: usize,
}

/// Parameters of one run.
pub(crate) struct RunParams {
    pub block: usize,
    /// Largest basis size.
    pub max_dim: usize,
    /// Ritz vectors kept at a restart.
    pub keep: usize,
    pub tolerance: f64,
    pub seed: u64,
    pub select: Select,
    /// Largest number of thick restarts.
    pub max_restarts: usize,
}

/// C = Aᵀ B, on both cores when large (dense products with the basis dominate the iteration's own
/// arithmetic).
fn at_b(a: MatRef<'_, f64>, b: MatRef<'_, f64>) -> Mat<f64> {
    let mut c = Mat::<f64>::zeros(a.ncols(), b.ncols());
    faer::linalg::matmul::matmul(
        c.as_mut(),
        faer::Accum::Replace,
        a.transpose(),
        b,
        1.0,
        par_for(a.nrows() * a.ncols()),
    );
    c
}

/// W −= A C, on both cores when large.
fn sub_a_c(w: &mut Mat<f64>, a: MatRef<'_, f64>, c: &Mat<f64>) {
    faer::linalg::matmul::matmul(w.as_mut(), faer::Accum::Add, a, c.as_ref(), -1.0, par_for(a.nrows() * a.ncols()));
}

fn par_for(work: usize) -> faer::Par {
    if work > 1 << 20 { faer::Par::rayon(0) } else { faer::Par::Seq }
}

/// Makes `w` M-orthogonal to the locked vectors `y` and the basis `q`: first against the last two
/// blocks (from column `local`, the three-term step of Lanczos, which removes almost everything),
/// then one full pass against `y` and all of `q`, and a further full pass for any column whose
/// M-norm fell below 1/√2 of its value in that pass (the test of Daniel, Gragg, Kaufman & Stewart,
/// Math. Comp. 30, 1976). Returns the coefficients on `q` summed over the passes, which fill T.
fn orthogonalise(system: &System, w: &mut Mat<f64>, y: MatRef<'_, f64>, q: MatRef<'_, f64>, local: usize) -> Mat<f64> {
    let mut total = Mat::<f64>::zeros(q.ncols(), w.ncols());
    let m_norms = |w: &Mat<f64>, mw: &Mat<f64>| -> Vec<f64> {
        (0..w.ncols()).map(|c| dot(w.col(c), mw.col(c)).max(0.0).sqrt()).collect()
    };
    let mut mw = system.mul_m(w.as_ref());
    if local < q.ncols() {
        let ql = q.subcols(local, q.ncols() - local);
        let c = at_b(ql, mw.as_ref());
        sub_a_c(w, ql, &c);
        for i in 0..c.nrows() {
            for j in 0..c.ncols() {
                total[(local + i, j)] += c[(i, j)];
            }
        }
        mw = system.mul_m(w.as_ref());
    }
    for pass in 0..3 {
        let before = m_norms(w, &mw);
        if y.ncols() > 0 {
            let cy = at_b(y, mw.as_ref());
            sub_a_c(w, y, &cy);
        }
        if q.ncols() > 0 {
            let cq = at_b(q, mw.as_ref());
            sub_a_c(w, q, &cq);
            total += &cq;
        }
        mw = system.mul_m(w.as_ref());
        let after = m_norms(w, &mw);
        let again = before.iter().zip(&after).any(|(b, a)| *a < std::f64::consts::FRAC_1_SQRT_2 * b);
        if !again || pass == 2 {
            break;
        }
    }
    total
}

/// M-orthonormalises the columns of `w` in place (modified Gram–Schmidt with one re-pass), with
/// `mw` = M w kept in step. Returns the upper-triangular B with W_in = W_out B, and the columns that
/// were numerically dependent (zeroed).
fn orthonormalise_block(w: &mut Mat<f64>, mw: &mut Mat<f64>) -> (Mat<f64>, Vec<usize>) {
    let p = w.ncols();
    let n = w.nrows();
    let mut b = Mat::<f64>::zeros(p, p);
    let mut dependent = Vec::new();
    for c in 0..p {
        let norm0 = dot(w.col(c), mw.col(c)).max(0.0).sqrt();
        for _ in 0..2 {
            for prev in 0..c {
                if dependent.contains(&prev) {
                    continue;
                }
                let h = dot(w.col(c), mw.col(prev));
                for i in 0..n {
                    w[(i, c)] -= h * w[(i, prev)];
                    mw[(i, c)] -= h * mw[(i, prev)];
                }
                b[(prev, c)] += h;
            }
        }
        let norm = dot(w.col(c), mw.col(c)).max(0.0).sqrt();
        if norm.is_nan() || norm <= 1e-10 * norm0 || norm == 0.0 {
            dependent.push(c);
            for i in 0..n {
                w[(i, c)] = 0.0;
                mw[(i, c)] = 0.0;
            }
            continue;
        }
        b[(c, c)] = norm;
        for i in 0..n {
            w[(i, c)] /= norm;
            mw[(i, c)] /= norm;
        }
    }
    (b, dependent)
}

fn dot(a: faer::ColRef<'_, f64>, b: faer::ColRef<'_, f64>) -> f64 {
    let mut s = 0.0;
    for i in 0..a.nrows() {
        s += a[i] * b[i];
    }
    s
}

/// Keeps the columns of `x` (and `mx`) not listed in `skip`.
fn compact(x: &Mat<f64>, mx: &Mat<f64>, skip: &[usize]) -> (Mat<f64>, Mat<f64>) {
    let keep: Vec<usize> = (0..x.ncols()).filter(|c| !skip.contains(c)).collect();
    let n = x.nrows();
    (Mat::from_fn(n, keep.len(), |i, c| x[(i, keep[c])]), Mat::from_fn(n, keep.len(), |i, c| mx[(i, keep[c])]))
}

/// A new M-orthonormal block orthogonal to `y` and `q`, from a seeded random block passed through Op
/// (which purifies it of M's null space), with its M-image. Empty if no direction is left.
fn fresh_block(
    op: &Operator<'_>,
    p: usize,
    y: MatRef<'_, f64>,
    q: MatRef<'_, f64>,
    rng: &mut ChaCha8Rng,
    n_solves: &mut usize,
) -> (Mat<f64>, Mat<f64>) {
    let n = op.system.n_dofs();
    let r = Mat::from_fn(n, p, |_, _| rng.random::<f64>() - 0.5);
    let mr = op.system.mul_m(r.as_ref());
    let mut x = op.apply_to_mx(mr.as_ref());
    *n_solves += 1;
    orthogonalise(op.system, &mut x, y, q, q.ncols());
    let mut mx = op.system.mul_m(x.as_ref());
    let (_, dep) = orthonormalise_block(&mut x, &mut mx);
    compact(&x, &mx, &dep)
}

/// Ritz values in selection order, their vectors in the basis, and residual norms relative to |θ|.
struct Ritz {
    theta: Vec<f64>,
    s: Mat<f64>,
    residual: Vec<f64>,
}

fn rayleigh_ritz(t: MatRef<'_, f64>, b: &Mat<f64>, width: usize, select: Select) -> Ritz {
    let m = t.nrows();
    let Some((vals, u)) = symmetric_eigen(t) else {
        return Ritz { theta: vec![], s: Mat::zeros(m, 0), residual: vec![] };
    };
    let mut order: Vec<usize> = (0..m).collect();
    match select {
        Select::Largest => order.sort_by(|&a, &c| vals[c].total_cmp(&vals[a])),
        Select::LargestMagnitude => order.sort_by(|&a, &c| vals[c].abs().total_cmp(&vals[a].abs())),
    }
    let theta: Vec<f64> = order.iter().map(|&i| vals[i]).collect();
    let s = Mat::from_fn(m, m, |r, c| u[(r, order[c])]);
    let residual = (0..m)
        .map(|c| {
            let mut sum = 0.0;
            for r in 0..b.nrows() {
                let mut v = 0.0;
                for k in 0..width {
                    v += b[(r, k)] * s[(m - width + k, c)];
                }
                sum += v * v;
            }
            sum.sqrt() / theta[c].abs().max(f64::MIN_POSITIVE)
        })
        .collect();
    Ritz { theta, s, residual }
}

/// Q[:, 0..k] ← Q[:, 0..m] S[:, 0..k], in row chunks (the product of a chunk is formed before it is
/// written back, so no second basis is needed).
fn rotate_basis(q: &mut Mat<f64>, m: usize, s: MatRef<'_, f64>, k: usize) {
    const ROWS: usize = 4096;
    let n = q.nrows();
    let sk = s.subcols(0, k);
    let mut start = 0;
    while start < n {
        let rows = ROWS.min(n - start);
        let mut chunk = Mat::<f64>::zeros(rows, k);
        faer::linalg::matmul::matmul(
            chunk.as_mut(),
            faer::Accum::Replace,
            q.as_ref().submatrix(start, 0, rows, m),
            sk,
            1.0,
            par_for(rows * m),
        );
        q.as_mut().submatrix_mut(start, 0, rows, k).copy_from(chunk.as_ref());
        start += rows;
    }
}

/// Writes this step's coefficients into T: column block [start, m) from rows 0..m, mirrored into
/// the rows of the block for earlier columns, and the diagonal block symmetrised.
fn fill_column_block(mut t: MatMut<'_, f64>, coeff: &Mat<f64>, start: usize, m: usize) {
    for cj in 0..(m - start) {
        let j = start + cj;
        for i in 0..m {
            t[(i, j)] = coeff[(i, cj)];
            if i < start {
                t[(j, i)] = coeff[(i, cj)];
            }
        }
    }
    for a in start..m {
        for b in (a + 1)..m {
            let v = 0.5 * (t[(a, b)] + t[(b, a)]);
            t[(a, b)] = v;
            t[(b, a)] = v;
        }
    }
}

/// One thick-restart block Lanczos run from a seeded random start, orthogonal to `locked`, until the
/// first `want` Ritz pairs (in selection order) converge; returns the leading converged pairs
/// (all `want` unless the restart budget ran out or the space was exhausted).
pub(crate) fn run(
    op: &Operator<'_>,
    locked: MatRef<'_, f64>,
    want: usize,
    params: &RunParams,
) -> Result<RitzPairs, SolverError> {
    let n = op.system.n_dofs();
    let p = params.block.max(1);
    let room = n.saturating_sub(locked.ncols());
    let max_dim = params.max_dim.min(room).max(p.min(room));
    let keep = params.keep.clamp(want.min(max_dim), max_dim.saturating_sub(p).max(want.min(max_dim)));
    let mut rng = ChaCha8Rng::seed_from_u64(params.seed);
    let mut n_solves = 0usize;
    let mut n_restarts = 0usize;
    // The basis, with room for one block beyond the largest size.
    let mut q = Mat::<f64>::zeros(n, max_dim + p);
    let mut t = Mat::<f64>::zeros(max_dim + p, max_dim + p);
    let (x, mut mx) = fresh_block(op, p, locked, q.subcols(0, 0), &mut rng, &mut n_solves);
    if x.ncols() == 0 {
        return Err(SolverError::NoConvergence("the start block is empty (no free direction left)".into()));
    }
    q.subcols_mut(0, x.ncols()).copy_from(x.as_ref());
    let mut len = x.ncols();
    let mut block_start = 0usize;
    let mut next_check = 2 * p;
    loop {
        let width = len - block_start;
        // W = Op Q_j with M Q_j from the previous step.
        let mut w = op.apply_to_mx(mx.as_ref());
        n_solves += 1;
        let local = block_start.saturating_sub(p);
        let coeff = orthogonalise(op.system, &mut w, locked, q.subcols(0, len), local);
        fill_column_block(t.as_mut(), &coeff, block_start, len);
        let mut mw = op.system.mul_m(w.as_ref());
        let (b, dependent) = orthonormalise_block(&mut w, &mut mw);
        let (w, mw) = compact(&w, &mw, &dependent);
        // B restricted to the kept rows: coupling of the next block to this one.
        let keep_rows: Vec<usize> = (0..b.nrows()).filter(|r| !dependent.contains(r)).collect();
        let b = Mat::from_fn(keep_rows.len(), width, |r, c| b[(keep_rows[r], c)]);
        let full = len + w.ncols() > max_dim;
        let exhausted = w.ncols() == 0 && len >= room;
        if len >= next_check || full || w.ncols() == 0 {
            next_check = len + (len / 4).max(2 * p);
            let ritz = rayleigh_ritz(t.as_ref().submatrix(0, 0, len, len), &b, width, params.select);
            let done = ritz.theta.len() >= want && ritz.residual.iter().take(want).all(|&r| r <= params.tolerance);
            if done || exhausted || (full && n_restarts >= params.max_restarts) {
                return Ok(collect(q.subcols(0, len), ritz, want, params.tolerance, exhausted, n_solves, n_restarts));
            }
            if full && w.ncols() > 0 {
                // Thick restart: keep the best Ritz vectors, border T with their coupling to W.
                let k = keep.min(len);
                rotate_basis(&mut q, len, ritz.s.as_ref(), k);
                let coupling = &b * ritz.s.as_ref().submatrix(len - width, 0, width, k); // (w × k)
                t.fill(0.0);
                for i in 0..k {
                    t[(i, i)] = ritz.theta[i];
                }
                for r in 0..w.ncols() {
                    for c in 0..k {
                        t[(k + r, c)] = coupling[(r, c)];
                        t[(c, k + r)] = coupling[(r, c)];
                    }
                }
                q.subcols_mut(k, w.ncols()).copy_from(w.as_ref());
                block_start = k;
                len = k + w.ncols();
                mx = mw;
                n_restarts += 1;
                next_check = len + 2 * p;
                continue;
            }
        }
        if w.ncols() > 0 {
            q.subcols_mut(len, w.ncols()).copy_from(w.as_ref());
            block_start = len;
            len += w.ncols();
            mx = mw;
            continue;
        }
        // The basis spans an invariant subspace but the wanted pairs are not all there (a start
        // block poor in some modes): continue with fresh directions orthogonal to it. Their coupling
        // to the old basis is zero in exact arithmetic; the next step computes it.
        let (x, fresh_mx) = fresh_block(op, p, locked, q.subcols(0, len), &mut rng, &mut n_solves);
        if x.ncols() == 0 || len + x.ncols() > max_dim + p {
            let ritz = rayleigh_ritz(t.as_ref().submatrix(0, 0, len, len), &Mat::zeros(0, 0), 0, params.select);
            return Ok(collect(q.subcols(0, len), ritz, want, params.tolerance, true, n_solves, n_restarts));
        }
        q.subcols_mut(len, x.ncols()).copy_from(x.as_ref());
        block_start = len;
        len += x.ncols();
        mx = fresh_mx;
    }
}

fn collect(
    q: MatRef<'_, f64>,
    ritz: Ritz,
    want: usize,
    tol: f64,
    exhausted: bool,
    n_solves: usize,
    n_restarts: usize,
) -> RitzPairs {
    let k_want = want.min(ritz.theta.len());
    // The leading converged pairs in selection order (all of them when the space is exhausted: the
    // Ritz pairs are then exact).
    let mut k = 0;
    while k < k_want && (ritz.residual[k] <= tol || exhausted) {
        k += 1;
    }
    let m = ritz.s.nrows();
    let vectors = q.subcols(0, m) * ritz.s.subcols(0, k);
    RitzPairs { theta: ritz.theta[..k].to_vec(), vectors, all_theta: ritz.theta, n_solves, n_restarts }
}
