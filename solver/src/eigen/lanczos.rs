//! Block Lanczos on the shift-invert operator Op = (K − σM)⁻¹M in the M-inner product, with full
//! reorthogonalisation (classical Gram–Schmidt twice, against the whole basis and the locked
//! vectors) and deflation of rank-deficient blocks.
//!
//! Op is self-adjoint in ⟨x, y⟩_M = xᵀMy; its eigenvalues θ = 1/(λ − σ) are largest for λ nearest σ
//! from above, so with σ below the wanted part of the spectrum the lowest modes converge first. The
//! block form (block size p) finds up to p eigenvectors of an exactly repeated eigenvalue (a round
//! tube's pairs) in one run; the caller locks converged vectors and restarts for anything missing,
//! proven complete by a Sturm count (Grimes, Lewis & Simon, "A shifted block Lanczos algorithm for
//! solving sparse symmetric generalized eigenproblems", SIAM J. Matrix Anal. Appl. 15(1), 1994).
//!
//! After m = jp basis vectors, the projection T = Qᵀ M Op Q (m × m, block tridiagonal in exact
//! arithmetic, kept whole here) gives Ritz pairs (θ, y = Q s); the residual of a pair is
//! ‖Op y − θ y‖_M = ‖B_j s_last‖₂, where B_j couples the next block and s_last holds the last p
//! entries of s. Ritz values θ are accurate to about ε θ_max, so λ = σ + 1/θ keeps its relative
//! accuracy even when K is very ill-conditioned (fine meshes), unlike a Rayleigh quotient φᵀKφ.

use faer::{Mat, MatMut, MatRef, Side};
use rand::{RngExt, SeedableRng};
use rand_chacha::ChaCha8Rng;

use crate::assembly::System;
use crate::error::SolverError;
use crate::factor::Factor;

/// The shift-invert operator of one shift.
pub(crate) struct Operator<'a> {
    pub system: &'a System,
    pub factor: &'a Factor,
}

impl Operator<'_> {
    /// Op X = (K − σM)⁻¹ (M X), given MX.
    pub fn apply_to_mx(&self, mx: MatRef<'_, f64>) -> Mat<f64> {
        let mut w = mx.to_owned();
        self.factor.solve_in_place(w.as_mut());
        w
    }
}

/// Converged Ritz pairs of one run, ordered by decreasing θ (increasing λ for σ below them).
pub(crate) struct RitzPairs {
    /// θ = 1/(λ − σ).
    pub theta: Vec<f64>,
    /// Ritz vectors, M-orthonormal, one per column.
    pub vectors: Mat<f64>,
    /// Ritz values of the whole basis (converged or not), decreasing θ.
    pub all_theta: Vec<f64>,
    /// Block solves done.
    pub n_solves: usize,
}

/// Parameters of one run.
pub(crate) struct RunParams {
    pub block: usize,
    pub max_dim: usize,
    pub tolerance: f64,
    pub seed: u64,
}

/// M-orthogonalises the columns of `w` against the columns of `q` (with `mq` = M q), twice.
/// Returns the coefficients Qᵀ M W accumulated over both passes.
fn orthogonalise(w: &mut Mat<f64>, q: MatRef<'_, f64>, mq: MatRef<'_, f64>) -> Mat<f64> {
    let mut total = Mat::<f64>::zeros(q.ncols(), w.ncols());
    if q.ncols() == 0 {
        return total;
    }
    for _ in 0..2 {
        let c = mq.transpose() * w.as_ref();
        *w -= q * &c;
        total += &c;
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

/// A Lanczos basis with room for `cap` columns, filled left to right.
struct Basis {
    q: Mat<f64>,
    mq: Mat<f64>,
    len: usize,
}

impl Basis {
    fn new(n: usize, cap: usize) -> Self {
        Self {
            q: Mat::zeros(n, cap),
            mq: Mat::zeros(n, cap),
            len: 0,
        }
    }

    fn q(&self) -> MatRef<'_, f64> {
        self.q.subcols(0, self.len)
    }

    fn mq(&self) -> MatRef<'_, f64> {
        self.mq.subcols(0, self.len)
    }

    fn room(&self) -> usize {
        self.q.ncols() - self.len
    }

    /// Appends the columns of `x` (with `mx` = M x) not listed in `skip`; returns how many.
    fn push(&mut self, x: &Mat<f64>, mx: &Mat<f64>, skip: &[usize]) -> usize {
        let mut added = 0;
        for c in 0..x.ncols() {
            if skip.contains(&c) || self.room() == 0 {
                continue;
            }
            self.q.col_mut(self.len).copy_from(x.col(c));
            self.mq.col_mut(self.len).copy_from(mx.col(c));
            self.len += 1;
            added += 1;
        }
        added
    }
}

/// A basis block with its M-image, orthogonal to the locked vectors and to the basis, from a seeded
/// random block passed through Op (which purifies it of M's null space).
fn fresh_directions(
    op: &Operator<'_>,
    p: usize,
    locked: (MatRef<'_, f64>, MatRef<'_, f64>),
    basis: &Basis,
    rng: &mut ChaCha8Rng,
    n_solves: &mut usize,
) -> (Mat<f64>, Mat<f64>) {
    let n = op.system.n_dofs();
    let r = Mat::from_fn(n, p, |_, _| rng.random::<f64>() - 0.5);
    let mr = op.system.mul_m(r.as_ref());
    let mut x = op.apply_to_mx(mr.as_ref());
    *n_solves += 1;
    orthogonalise(&mut x, locked.0, locked.1);
    orthogonalise(&mut x, basis.q(), basis.mq());
    let mx = op.system.mul_m(x.as_ref());
    (x, mx)
}

/// One block Lanczos run from a random (seeded) start, orthogonal to `locked` (with `mlocked`),
/// until the `want` largest Ritz values converge or the basis reaches `params.max_dim` vectors.
/// Returns the leading converged pairs.
pub(crate) fn run(
    op: &Operator<'_>,
    locked: MatRef<'_, f64>,
    mlocked: MatRef<'_, f64>,
    want: usize,
    params: &RunParams,
) -> Result<RitzPairs, SolverError> {
    let n = op.system.n_dofs();
    let p = params.block.max(1);
    let room = n.saturating_sub(locked.ncols());
    let max_dim = params.max_dim.min(room).max(p.min(room));
    let mut rng = ChaCha8Rng::seed_from_u64(params.seed);
    let mut n_solves = 0usize;
    let mut basis = Basis::new(n, max_dim);
    // T grows inside a preallocated square.
    let mut t = Mat::<f64>::zeros(max_dim, max_dim);
    let (mut x, mut mx) =
        fresh_directions(op, p, (locked, mlocked), &basis, &mut rng, &mut n_solves);
    let (_, dependent) = orthonormalise_block(&mut x, &mut mx);
    if dependent.len() == p {
        return Err(SolverError::NoConvergence(
            "the start block is empty (no free direction left)".into(),
        ));
    }
    basis.push(&x, &mx, &dependent);
    let mut block_start = 0usize;
    let mut next_check = 2 * p;
    loop {
        let m = basis.len;
        let width = m - block_start;
        // W = Op Q_j, using the stored M Q_j.
        let mut w = op.apply_to_mx(basis.mq.subcols(block_start, width));
        n_solves += 1;
        orthogonalise(&mut w, locked, mlocked);
        let coeff = orthogonalise(&mut w, basis.q(), basis.mq());
        fill_column_block(t.as_mut(), &coeff, block_start, m);
        let mut mw = op.system.mul_m(w.as_ref());
        let (b, dependent) = orthonormalise_block(&mut w, &mut mw);
        let grown = width - dependent.len().min(width);
        let full = m + width > max_dim || basis.room() == 0;
        if m >= next_check || full || grown == 0 {
            next_check = m + (m / 4).max(2 * p);
            let ritz = rayleigh_ritz(t.as_ref().submatrix(0, 0, m, m), &b, width, &dependent);
            let done = ritz.theta.len() >= want
                && ritz
                    .residual
                    .iter()
                    .take(want)
                    .all(|&r| r <= params.tolerance);
            let space_left = m < room;
            if done || full || (grown == 0 && !space_left) {
                let exhausted = grown == 0 && !space_left;
                return Ok(collect(
                    basis.q(),
                    ritz,
                    want,
                    params.tolerance,
                    n_solves,
                    exhausted,
                ));
            }
        }
        block_start = m;
        if grown > 0 {
            basis.push(&w, &mw, &dependent);
            continue;
        }
        // The basis spans an invariant subspace but the wanted pairs are not all there (a start
        // block poor in some modes): continue with fresh random directions orthogonal to it. Their
        // coupling to the old basis is zero in exact arithmetic; the next step computes it.
        let (mut x, mut mx) =
            fresh_directions(op, p, (locked, mlocked), &basis, &mut rng, &mut n_solves);
        let (_, dep) = orthonormalise_block(&mut x, &mut mx);
        if dep.len() == x.ncols() || basis.push(&x, &mx, &dep) == 0 {
            let ritz = rayleigh_ritz(t.as_ref().submatrix(0, 0, m, m), &Mat::zeros(0, 0), 0, &[]);
            return Ok(collect(
                basis.q(),
                ritz,
                want,
                params.tolerance,
                n_solves,
                true,
            ));
        }
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

/// Ritz values (decreasing), vectors in the basis, and residual norms.
struct Ritz {
    theta: Vec<f64>,
    s: Mat<f64>,
    residual: Vec<f64>,
}

fn rayleigh_ritz(t: MatRef<'_, f64>, b: &Mat<f64>, width: usize, dependent: &[usize]) -> Ritz {
    let m = t.nrows();
    let Ok(evd) = t.self_adjoint_eigen(Side::Lower) else {
        return Ritz {
            theta: vec![],
            s: Mat::zeros(m, 0),
            residual: vec![],
        };
    };
    let vals = evd.S().column_vector();
    let u = evd.U();
    // Decreasing θ.
    let order: Vec<usize> = (0..m).rev().collect();
    let theta: Vec<f64> = order.iter().map(|&i| vals[i]).collect();
    let s = Mat::from_fn(m, m, |r, c| u[(r, order[c])]);
    let mut residual = vec![0.0; m];
    for (c, res) in residual.iter_mut().enumerate() {
        // ‖B s_last‖₂ over the rows of the next block that were kept.
        let mut sum = 0.0;
        for r in 0..b.nrows() {
            if dependent.contains(&r) {
                continue;
            }
            let mut v = 0.0;
            for k in 0..width {
                v += b[(r, k)] * s[(m - width + k, c)];
            }
            sum += v * v;
        }
        *res = sum.sqrt() / theta[c].abs().max(f64::MIN_POSITIVE);
    }
    Ritz { theta, s, residual }
}

fn collect(
    q: MatRef<'_, f64>,
    ritz: Ritz,
    want: usize,
    tol: f64,
    n_solves: usize,
    exhausted: bool,
) -> RitzPairs {
    let k_want = want.min(ritz.theta.len());
    // The leading converged pairs (in θ order, up to the first that is not converged), so the
    // caller can lock them; all of them when the space is exhausted (Ritz pairs are then exact).
    let mut k = 0;
    while k < k_want && (ritz.residual[k] <= tol || exhausted) {
        k += 1;
    }
    let m = ritz.s.nrows();
    let vectors = q.subcols(0, m) * ritz.s.subcols(0, k);
    RitzPairs {
        theta: ritz.theta[..k].to_vec(),
        vectors,
        all_theta: ritz.theta,
        n_solves,
    }
}
