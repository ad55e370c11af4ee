//! Sparse symmetric factorizations of K − σM on one shared pattern, their solves and their inertia.
//!
//! The symbolic analysis (fill-reducing ordering, elimination tree, supernodes) is done once per
//! pattern and reused for every shift. Numeric kinds:
//! - `Llt`: Cholesky LLᵀ, for σ below the lowest eigenvalue (K − σM positive definite).
//! - `Ldlt`: LDLᵀ without pivoting, used for inertia (Sturm counts) at shifts inside the spectrum.
//!   By Sylvester's law of inertia the number of negative pivots of K − σM equals the number of
//!   eigenvalues of (K, M) below σ. The matrix is first scaled symmetrically to unit diagonal
//!   (inertia is unchanged by congruence), which keeps unpivoted elimination well behaved on FE
//!   matrices. An exactly zero pivot means σ is (numerically) an eigenvalue: the caller moves the
//!   shift by a small relative amount and factors again.
//!
//! Matrices are stored with both triangles; faer reads the lower one. Parallelism inside one sparse
//! factorization is slower than sequential on small machines, so all calls use `Par::Seq` and
//! parallel work is done across independent tasks.

use std::sync::Arc;

use faer::dyn_stack::{MemBuffer, MemStack};
use faer::linalg::cholesky::ldlt::factor::LdltRegularization;
use faer::linalg::cholesky::llt::factor::LltRegularization;
use faer::perm::PermRef;
use faer::sparse::linalg::cholesky::{
    CholeskySymbolicParams, IntranodeLbltRef, LdltRef, LltRef, SymbolicCholesky, SymbolicCholeskyRaw,
    SymmetricOrdering, factorize_symbolic_cholesky, supernodal,
};
use faer::sparse::{SparseColMat, SymbolicSparseColMat};
use faer::{Conj, MatMut, Par, Side};

use crate::error::SolverError;
use crate::ordering::{ND_MIN_DOFS, nested_dissection};

/// Marker value for pivots that the rank-revealing LDLᵀ replaced (far above any pivot of a
/// unit-diagonal positive semi-definite matrix, which are all ≤ 1).
const MARKED_PIVOT: f64 = 1e30;

/// Symbolic analysis shared by all factorizations of one pattern.
#[derive(Clone)]
pub(crate) struct Factorizer {
    symbolic: Arc<SymbolicCholesky<usize>>,
}

/// Numeric kind of a factor.
#[derive(Debug, Clone, PartialEq)]
enum Kind {
    Llt,
    Ldlt,
    /// Bunch–Kaufman pivoting inside supernodes: the 2×2 pivot couplings and the pivoting
    /// permutation (forward, inverse).
    Lblt {
        subdiag: Vec<f64>,
        forward: Vec<usize>,
        inverse: Vec<usize>,
    },
}

/// A numeric factorization of a scaled matrix S A S, with S = diag(scale).
pub(crate) struct Factor {
    symbolic: Arc<SymbolicCholesky<usize>>,
    values: Vec<f64>,
    scale: Vec<f64>,
    kind: Kind,
}

/// Counts of pivot signs of an LDLᵀ factor.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) struct Inertia {
    pub negative: usize,
    pub zero: usize,
}

impl Factorizer {
    /// Symbolic analysis of `pattern` (square, both triangles stored) with the fill-reducing
    /// ordering that gives the smaller factor: AMD, or nested dissection for larger problems (see
    /// [`crate::ordering`]).
    pub fn new(pattern: &SymbolicSparseColMat<usize>) -> Result<Self, SolverError> {
        let params = CholeskySymbolicParams::default;
        let analyse = |ordering: SymmetricOrdering<'_, usize>| {
            factorize_symbolic_cholesky(pattern.as_ref(), Side::Lower, ordering, params()).map_err(|e| {
                SolverError::Factorization { shift: 0.0, detail: format!("symbolic analysis failed: {e:?}") }
            })
        };
        let mut symbolic = analyse(SymmetricOrdering::Amd)?;
        if pattern.ncols() >= ND_MIN_DOFS {
            if let Some((forward, inverse)) = nested_dissection(pattern) {
                let perm = PermRef::new_checked(&forward, &inverse, forward.len());
                let nd = analyse(SymmetricOrdering::Custom(perm))?;
                if nd.len_val() < symbolic.len_val() {
                    symbolic = nd;
                }
            }
        }
        Ok(Self { symbolic: Arc::new(symbolic) })
    }

    /// Number of stored values of one factor.
    pub fn factor_len(&self) -> usize {
        self.symbolic.len_val()
    }

    /// Cholesky factor of `a` (positive definite). `Ok(None)` when a pivot is not positive.
    pub fn llt(&self, a: &SparseColMat<usize, f64>) -> Result<Option<Factor>, SolverError> {
        let (scaled, scale) = scale_to_unit_diagonal(a);
        let sym = &*self.symbolic;
        let mut values = vec![0.0; sym.len_val()];
        let mut mem = MemBuffer::new(sym.factorize_numeric_llt_scratch::<f64>(Par::Seq, Default::default()));
        let ok = sym
            .factorize_numeric_llt(
                &mut values,
                scaled.as_ref(),
                Side::Lower,
                LltRegularization { dynamic_regularization_delta: 0.0, dynamic_regularization_epsilon: 0.0 },
                Par::Seq,
                MemStack::new(&mut mem),
                Default::default(),
            )
            .is_ok();
        if !ok || values.iter().any(|v| !v.is_finite()) {
            return Ok(None);
        }
        Ok(Some(Factor { symbolic: self.symbolic.clone(), values, scale, kind: Kind::Llt }))
    }

    /// Unpivoted LDLᵀ of `a`. `Ok(None)` on an exactly zero or non-finite pivot.
    pub fn ldlt(&self, a: &SparseColMat<usize, f64>) -> Result<Option<Factor>, SolverError> {
        self.ldlt_impl(a, None)
    }

    /// LBLᵀ of an indefinite `a` with Bunch–Kaufman pivoting inside each supernode (faer's
    /// intranode LBLᵀ; on a simplicial symbolic factor it is an unpivoted LDLᵀ). Solves with it are
    /// more accurate than with the unpivoted LDLᵀ at shifts inside the spectrum. `Ok(None)` when the
    /// factor is not finite (the shift is on an eigenvalue).
    pub fn lblt(&self, a: &SparseColMat<usize, f64>) -> Result<Option<Factor>, SolverError> {
        let (scaled, scale) = scale_to_unit_diagonal(a);
        let sym = &*self.symbolic;
        let n = sym.nrows();
        let mut values = vec![0.0; sym.len_val()];
        let mut subdiag = vec![0.0; n];
        let mut forward = vec![0usize; n];
        let mut inverse = vec![0usize; n];
        let mut mem = MemBuffer::new(sym.factorize_numeric_intranode_lblt_scratch::<f64>(Par::Seq, Default::default()));
        sym.factorize_numeric_intranode_lblt(
            &mut values,
            &mut subdiag,
            &mut forward,
            &mut inverse,
            scaled.as_ref(),
            Side::Lower,
            Par::Seq,
            MemStack::new(&mut mem),
            Default::default(),
        );
        if values.iter().chain(&subdiag).any(|v| !v.is_finite()) {
            return Ok(None);
        }
        Ok(Some(Factor {
            symbolic: self.symbolic.clone(),
            values,
            scale,
            kind: Kind::Lblt { subdiag, forward, inverse },
        }))
    }

    /// Rank-revealing LDLᵀ of a positive semi-definite `a`: pivots below `epsilon` (relative to the
    /// unit diagonal) are replaced by a huge value, which removes that DOF from the rest of the
    /// elimination. Returns the factor and the original DOF indices of the replaced pivots.
    pub fn ldlt_rank_revealing(
        &self,
        a: &SparseColMat<usize, f64>,
        epsilon: f64,
    ) -> Result<(Factor, Vec<usize>), SolverError> {
        let f = self.ldlt_impl(a, Some(epsilon))?.ok_or_else(|| SolverError::Factorization {
            shift: 0.0,
            detail: "the stiffness matrix has a non-finite entry".into(),
        })?;
        let marked =
            f.pivots().into_iter().filter(|&(_, d)| d.abs() >= 0.5 * MARKED_PIVOT).map(|(dof, _)| dof).collect();
        Ok((f, marked))
    }

    fn ldlt_impl(&self, a: &SparseColMat<usize, f64>, epsilon: Option<f64>) -> Result<Option<Factor>, SolverError> {
        let (scaled, scale) = scale_to_unit_diagonal(a);
        let sym = &*self.symbolic;
        let mut values = vec![0.0; sym.len_val()];
        let mut mem = MemBuffer::new(sym.factorize_numeric_ldlt_scratch::<f64>(Par::Seq, Default::default()));
        let regularization = match epsilon {
            Some(eps) => LdltRegularization {
                dynamic_regularization_signs: None,
                dynamic_regularization_delta: MARKED_PIVOT,
                dynamic_regularization_epsilon: eps,
            },
            None => LdltRegularization::default(),
        };
        let ok = sym
            .factorize_numeric_ldlt(
                &mut values,
                scaled.as_ref(),
                Side::Lower,
                regularization,
                Par::Seq,
                MemStack::new(&mut mem),
                Default::default(),
            )
            .is_ok();
        if !ok || values.iter().any(|v| !v.is_finite()) {
            return Ok(None);
        }
        Ok(Some(Factor { symbolic: self.symbolic.clone(), values, scale, kind: Kind::Ldlt }))
    }
}

/// Returns S A S with S = diag(1/√|a_ii|) (1 where a_ii = 0), and the scale vector.
fn scale_to_unit_diagonal(a: &SparseColMat<usize, f64>) -> (SparseColMat<usize, f64>, Vec<f64>) {
    let n = a.ncols();
    let mut scale = vec![1.0; n];
    {
        let sym = a.symbolic();
        for j in 0..n {
            for (p, &i) in sym.col_range(j).zip(sym.row_idx_of_col_raw(j)) {
                if i == j {
                    let d = a.val()[p].abs();
                    if d > 0.0 {
                        scale[j] = 1.0 / d.sqrt();
                    }
                }
            }
        }
    }
    let mut out = a.clone();
    let rows: Vec<(usize, usize)> = {
        let sym = a.symbolic();
        (0..n).flat_map(|j| sym.row_idx_of_col_raw(j).iter().map(move |&i| (i, j))).collect()
    };
    for (v, (i, j)) in out.val_mut().iter_mut().zip(rows) {
        *v *= scale[i] * scale[j];
    }
    (out, scale)
}

impl Factor {
    /// Solves A X = B in place for a block of right-hand sides.
    ///
    /// Supernodal LLᵀ and LDLᵀ factors use [`supernodal_solve`], a triangular solve for narrow blocks
    /// that streams each supernode panel once per sweep (faer's own solve packs the panels for a
    /// matrix product, which costs about four times the memory traffic for a few right-hand sides).
    pub fn solve_in_place(&self, mut rhs: MatMut<'_, f64>) {
        let sym = &*self.symbolic;
        let k = rhs.ncols();
        let n = rhs.nrows();
        if k == 0 {
            return;
        }
        if let (SymbolicCholeskyRaw::Supernodal(sn), Kind::Llt | Kind::Ldlt) = (sym.raw(), &self.kind) {
            let fwd: Vec<usize> = match sym.perm() {
                Some(p) => p.arrays().0.to_vec(),
                None => (0..n).collect(),
            };
            let unit = self.kind == Kind::Ldlt;
            // Permuted and scaled copy, column-major.
            let mut x = vec![0.0; n * k];
            for j in 0..k {
                let xj = &mut x[j * n..(j + 1) * n];
                for (new, &old) in fwd.iter().enumerate() {
                    xj[new] = rhs[(old, j)] * self.scale[old];
                }
            }
            // Two halves of the columns on two threads when there are several: each sweep is bound by
            // memory latency on one core, so two streams over the factor finish sooner than one.
            let solve = |part: &mut [f64]| {
                for chunk in part.chunks_mut(n * CHUNK) {
                    let w = chunk.len() / n;
                    // Widest SIMD instruction set of the CPU (AVX2/FMA or AVX-512), as faer does for its
                    // own kernels: the kernel is inlined into pulp's dispatch.
                    pulp::Arch::new().dispatch(|| supernodal_solve(sn, &self.values, unit, chunk, w));
                }
            };
            if k >= 2 && rayon::current_num_threads() >= 2 {
                let (a, b) = x.split_at_mut(n * (k / 2));
                rayon::join(|| solve(a), || solve(b));
            } else {
                solve(&mut x);
            }
            for j in 0..k {
                let xj = &x[j * n..(j + 1) * n];
                for (new, &old) in fwd.iter().enumerate() {
                    rhs[(old, j)] = xj[new] * self.scale[old];
                }
            }
            return;
        }
        // X = S (S A S)⁻¹ S B
        for j in 0..k {
            for i in 0..n {
                rhs[(i, j)] *= self.scale[i];
            }
        }
        let mut mem = MemBuffer::new(sym.solve_in_place_scratch::<f64>(k, Par::Seq));
        match &self.kind {
            Kind::Lblt { subdiag, forward, inverse } => {
                let perm = PermRef::new_checked(forward, inverse, forward.len());
                IntranodeLbltRef::new(sym, &self.values, subdiag, perm).solve_in_place_with_conj(
                    Conj::No,
                    rhs.as_mut(),
                    Par::Seq,
                    MemStack::new(&mut mem),
                )
            }
            Kind::Llt => LltRef::new(sym, &self.values).solve_in_place_with_conj(
                Conj::No,
                rhs.as_mut(),
                Par::Seq,
                MemStack::new(&mut mem),
            ),
            Kind::Ldlt => LdltRef::new(sym, &self.values).solve_in_place_with_conj(
                Conj::No,
                rhs.as_mut(),
                Par::Seq,
                MemStack::new(&mut mem),
            ),
        }
        for j in 0..k {
            for i in 0..n {
                rhs[(i, j)] *= self.scale[i];
            }
        }
    }

    /// Pivots (the diagonal of D, or of B for LBLᵀ) by their position in the factor's order.
    fn pivot_positions(&self) -> Vec<(usize, f64)> {
        let sym = &*self.symbolic;
        let n = sym.nrows();
        let mut d = vec![0.0; n];
        match sym.raw() {
            SymbolicCholeskyRaw::Supernodal(s) => {
                let f = supernodal::SupernodalLdltRef::new(s, &self.values);
                for k in 0..s.n_supernodes() {
                    let node = f.supernode(k);
                    let diag = node.val().diagonal().column_vector();
                    for j in 0..diag.nrows() {
                        d[node.start() + j] = diag[j];
                    }
                }
            }
            SymbolicCholeskyRaw::Simplicial(s) => {
                let cp = s.col_ptr();
                for (j, dj) in d.iter_mut().enumerate() {
                    *dj = self.values[cp[j]];
                }
            }
        }
        d.into_iter().enumerate().collect()
    }

    /// Pivots (D entries) of an LDLᵀ factor with the original DOF index of each.
    fn pivots(&self) -> Vec<(usize, f64)> {
        let n = self.symbolic.nrows();
        let fwd: Vec<usize> = match self.symbolic.perm() {
            Some(p) => p.arrays().0.to_vec(),
            None => (0..n).collect(),
        };
        self.pivot_positions().into_iter().map(|(pos, d)| (fwd[pos], d)).collect()
    }

    /// Numbers of negative and zero pivots (LDLᵀ only; an LLᵀ factor has none).
    pub fn inertia(&self) -> Inertia {
        let mut out = Inertia { negative: 0, zero: 0 };
        let mut count = |d: f64| {
            if d < 0.0 {
                out.negative += 1;
            } else if d == 0.0 {
                out.zero += 1;
            }
        };
        match &self.kind {
            Kind::Llt => {}
            Kind::Ldlt => self.pivots().into_iter().for_each(|(_, d)| count(d)),
            Kind::Lblt { subdiag, .. } => {
                // B's diagonal in factor order, with 2×2 blocks [a b; b c] where subdiag is non-zero:
                // the block's eigenvalue signs from its determinant and trace.
                let mut diag = vec![0.0; subdiag.len()];
                for (pos, d) in self.pivot_positions() {
                    diag[pos] = d;
                }
                let mut i = 0;
                while i < diag.len() {
                    if subdiag[i] == 0.0 || i + 1 == diag.len() {
                        count(diag[i]);
                        i += 1;
                    } else {
                        let (a, b, c) = (diag[i], subdiag[i], diag[i + 1]);
                        let det = a * c - b * b;
                        if det < 0.0 {
                            count(-1.0);
                            count(1.0);
                        } else {
                            let sign = if a + c < 0.0 { -1.0 } else { 1.0 };
                            count(if det == 0.0 { 0.0 } else { sign });
                            count(sign);
                        }
                        i += 2;
                    }
                }
            }
        }
        out
    }
}

/// Right-hand sides solved together by [`supernodal_solve`] (its buffers hold this many columns).
const CHUNK: usize = 16;

/// Solves L Lᵀ x = b (or L D Lᵀ x = b with unit L when `unit`) in place for `k` right-hand sides
/// stored column-major in `x` (n × k), in the factor's (permuted) order, on faer's supernodal storage:
/// each supernode holds a column-major panel whose top square is the diagonal block (L_ss, with D on
/// its diagonal for LDLᵀ) and whose other rows are the supernode's pattern rows.
///
/// Forward: y_s = L_ss⁻¹ b_s, then b_p −= L_ps y_s; (LDLᵀ: y /= D); backward: x_s −= L_psᵀ x_p, then
/// x_s = L_ssᵀ⁻¹ x_s. The pattern rows of the right-hand sides are gathered into a contiguous buffer
/// per supernode, so every inner loop is a contiguous axpy or dot product over a panel column (which
/// vectorises), and each panel is read once per sweep.
#[inline(always)]
fn supernodal_solve(
    sn: &supernodal::SymbolicSupernodalCholesky<usize>,
    values: &[f64],
    unit: bool,
    x: &mut [f64],
    k: usize,
) {
    let n = sn.nrows();
    let begin = sn.supernode_begin();
    let end = sn.supernode_end();
    let ptr_val = sn.col_ptr_for_val();
    let ptr_row = sn.col_ptr_for_row_idx();
    let rows = sn.row_idx();
    let ns = sn.n_supernodes();
    let max_pattern = (0..ns).map(|s| ptr_row[s + 1] - ptr_row[s]).max().unwrap_or(0);
    let mut buf = vec![0.0; max_pattern * k];
    // Forward sweep.
    for s in 0..ns {
        let (s0, ncols) = (begin[s], end[s] - begin[s]);
        let pattern = &rows[ptr_row[s]..ptr_row[s + 1]];
        let np = pattern.len();
        let nrows = ncols + np;
        let l = &values[ptr_val[s]..ptr_val[s + 1]];
        // Diagonal block: column-oriented forward substitution.
        for c in 0..ncols {
            let col = &l[c * nrows..(c + 1) * nrows];
            for j in 0..k {
                let xj = &mut x[j * n + s0..j * n + s0 + ncols];
                if !unit {
                    xj[c] /= col[c];
                }
                let y = xj[c];
                for r in (c + 1)..ncols {
                    xj[r] -= col[r] * y;
                }
            }
        }
        if np == 0 {
            continue;
        }
        // Pattern rows: buf (np × k) = −L_ps y_s, then scattered into x.
        let buf = &mut buf[..np * k];
        buf.fill(0.0);
        for c in 0..ncols {
            let lc = &l[c * nrows + ncols..(c + 1) * nrows];
            for j in 0..k {
                let y = x[j * n + s0 + c];
                let bj = &mut buf[j * np..(j + 1) * np];
                for (b, &a) in bj.iter_mut().zip(lc) {
                    *b -= a * y;
                }
            }
        }
        for j in 0..k {
            let bj = &buf[j * np..(j + 1) * np];
            let xj = &mut x[j * n..(j + 1) * n];
            for (&g, &b) in pattern.iter().zip(bj) {
                xj[g] += b;
            }
        }
    }
    if unit {
        for s in 0..ns {
            let (s0, ncols) = (begin[s], end[s] - begin[s]);
            let nrows = ncols + ptr_row[s + 1] - ptr_row[s];
            let l = &values[ptr_val[s]..ptr_val[s + 1]];
            for c in 0..ncols {
                let d = l[c * nrows + c];
                for j in 0..k {
                    x[j * n + s0 + c] /= d;
                }
            }
        }
    }
    // Backward sweep.
    for s in (0..ns).rev() {
        let (s0, ncols) = (begin[s], end[s] - begin[s]);
        let pattern = &rows[ptr_row[s]..ptr_row[s + 1]];
        let np = pattern.len();
        let nrows = ncols + np;
        let l = &values[ptr_val[s]..ptr_val[s + 1]];
        if np > 0 {
            // Gather x_p, then x_s −= L_psᵀ x_p by contiguous dot products.
            let buf = &mut buf[..np * k];
            for j in 0..k {
                let xj = &x[j * n..(j + 1) * n];
                for (b, &g) in buf[j * np..(j + 1) * np].iter_mut().zip(pattern) {
                    *b = xj[g];
                }
            }
            for c in 0..ncols {
                let lc = &l[c * nrows + ncols..(c + 1) * nrows];
                for j in 0..k {
                    let bj = &buf[j * np..(j + 1) * np];
                    x[j * n + s0 + c] -= dot(lc, bj);
                }
            }
        }
        // Diagonal block: backward substitution with L_ssᵀ.
        for c in (0..ncols).rev() {
            let col = &l[c * nrows..(c + 1) * nrows];
            for j in 0..k {
                let xj = &mut x[j * n + s0..j * n + s0 + ncols];
                let acc = dot(&col[c + 1..ncols], &xj[c + 1..ncols]);
                xj[c] -= acc;
                if !unit {
                    xj[c] /= col[c];
                }
            }
        }
    }
}

/// Dot product with eight independent partial sums, so that it vectorises (a single running sum is
/// a sequential dependency the compiler may not reorder).
#[inline(always)]
fn dot(a: &[f64], b: &[f64]) -> f64 {
    let (ca, cb) = (a.chunks_exact(8), b.chunks_exact(8));
    let tail: f64 = ca.remainder().iter().zip(cb.remainder()).map(|(x, y)| x * y).sum();
    let mut acc = [0.0f64; 8];
    for (x, y) in ca.zip(cb) {
        for i in 0..8 {
            acc[i] += x[i] * y[i];
        }
    }
    acc.iter().sum::<f64>() + tail
}
