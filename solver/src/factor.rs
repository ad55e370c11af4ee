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
//! parallel work is done across independent tasks; the supernodal solves split independent subtrees
//! of the elimination tree between two threads (see [`SolvePlan`]).

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
use pulp::Simd;

use crate::error::SolverError;
use crate::ordering::{ND_MIN_DOFS, nested_dissection};

/// Marker value for pivots that the rank-revealing LDLᵀ replaced (far above any pivot of a
/// unit-diagonal positive semi-definite matrix, which are all ≤ 1).
const MARKED_PIVOT: f64 = 1e30;

/// Symbolic analysis shared by all factorizations of one pattern.
#[derive(Clone)]
pub(crate) struct Factorizer {
    symbolic: Arc<SymbolicCholesky<usize>>,
    /// Schedule of the supernodal solves (supernodal factors only).
    plan: Option<Arc<SolvePlan>>,
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
    plan: Option<Arc<SolvePlan>>,
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
        // The two orderings are independent: computed side by side on two cores.
        let (amd, nd) = rayon::join(
            || analyse(SymmetricOrdering::Amd),
            || {
                if pattern.ncols() < ND_MIN_DOFS {
                    return Ok(None);
                }
                match nested_dissection(pattern) {
                    Some((forward, inverse)) => {
                        let perm = PermRef::new_checked(&forward, &inverse, forward.len());
                        analyse(SymmetricOrdering::Custom(perm)).map(Some)
                    }
                    None => Ok(None),
                }
            },
        );
        let mut symbolic = amd?;
        if let Some(nd) = nd? {
            if nd.len_val() < symbolic.len_val() {
                symbolic = nd;
            }
        }
        let forward = symbolic.perm().map(|p| p.arrays().0);
        let plan = match symbolic.raw() {
            SymbolicCholeskyRaw::Supernodal(sn) => Some(Arc::new(SolvePlan::new(sn, forward))),
            SymbolicCholeskyRaw::Simplicial(_) => None,
        };
        Ok(Self { symbolic: Arc::new(symbolic), plan })
    }

    /// Number of stored values of one factor.
    pub fn factor_len(&self) -> usize {
        self.symbolic.len_val()
    }

    /// Bytes of the scratch space one numeric factorization allocates beside its factor (faer's
    /// stated requirement for the frontal update blocks, exact for the symbolic structure): the
    /// largest over the LLᵀ, LDLᵀ and LBLᵀ variants made here.
    pub fn factor_scratch_bytes(&self) -> usize {
        let sym = &*self.symbolic;
        [
            sym.factorize_numeric_llt_scratch::<f64>(Par::Seq, Default::default()),
            sym.factorize_numeric_ldlt_scratch::<f64>(Par::Seq, Default::default()),
            sym.factorize_numeric_intranode_lblt_scratch::<f64>(Par::Seq, Default::default()),
        ]
        .iter()
        .map(|r| r.size_bytes())
        .max()
        .unwrap_or(0)
    }

    /// The fill-reducing order: entry k is the original index of the k-th eliminated DOF.
    #[cfg(test)]
    pub fn ordering(&self) -> Vec<usize> {
        match self.symbolic.perm() {
            Some(p) => p.arrays().0.to_vec(),
            None => (0..self.symbolic.nrows()).collect(),
        }
    }

    /// Whether the factor is stored column by column (no supernodes).
    #[cfg(test)]
    pub fn is_simplicial(&self) -> bool {
        matches!(self.symbolic.raw(), SymbolicCholeskyRaw::Simplicial(_))
    }

    /// Cholesky factor of `a` (positive definite). `Ok(None)` when a pivot is not positive.
    ///
    /// The factorizations take `a` by value and scale it in place, so no second copy of the matrix
    /// exists while the factor is built.
    pub fn llt(&self, a: SparseColMat<usize, f64>) -> Result<Option<Factor>, SolverError> {
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
        Ok(Some(Factor { symbolic: self.symbolic.clone(), plan: self.plan.clone(), values, scale, kind: Kind::Llt }))
    }

    /// Unpivoted LDLᵀ of `a`. `Ok(None)` on an exactly zero or non-finite pivot.
    pub fn ldlt(&self, a: SparseColMat<usize, f64>) -> Result<Option<Factor>, SolverError> {
        self.ldlt_impl(a, None)
    }

    /// LBLᵀ of an indefinite `a` with Bunch–Kaufman pivoting inside each supernode (faer's
    /// intranode LBLᵀ; on a simplicial symbolic factor it is an unpivoted LDLᵀ). Solves with it are
    /// more accurate than with the unpivoted LDLᵀ at shifts inside the spectrum. `Ok(None)` when the
    /// factor is not finite (the shift is on an eigenvalue).
    pub fn lblt(&self, a: SparseColMat<usize, f64>) -> Result<Option<Factor>, SolverError> {
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
            plan: self.plan.clone(),
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
        a: SparseColMat<usize, f64>,
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

    fn ldlt_impl(&self, a: SparseColMat<usize, f64>, epsilon: Option<f64>) -> Result<Option<Factor>, SolverError> {
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
        Ok(Some(Factor { symbolic: self.symbolic.clone(), plan: self.plan.clone(), values, scale, kind: Kind::Ldlt }))
    }
}

/// Returns S A S with S = diag(1/√|a_ii|) (1 where a_ii = 0), scaled in place, and the scale vector.
fn scale_to_unit_diagonal(mut a: SparseColMat<usize, f64>) -> (SparseColMat<usize, f64>, Vec<f64>) {
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
    {
        let (sym, val) = a.parts_mut();
        for j in 0..n {
            for (p, &i) in sym.col_range(j).zip(sym.row_idx_of_col_raw(j)) {
                val[p] *= scale[i] * scale[j];
            }
        }
    }
    (a, scale)
}

impl Factor {
    /// Number of stored factor values (the measured size of the factor: 8 bytes each).
    #[cfg(test)]
    pub fn stored_values(&self) -> usize {
        self.values.len()
    }

    /// Solves A X = B in place for a block of right-hand sides.
    ///
    /// Supernodal LLᵀ and LDLᵀ factors use [`supernodal_solve`], a triangular solve for narrow blocks
    /// that streams each supernode panel once per sweep for all right-hand sides, on two threads
    /// (faer's own solve packs the panels for a matrix product, which costs about four times the
    /// memory traffic for a few right-hand sides).
    pub fn solve_in_place(&self, mut rhs: MatMut<'_, f64>) {
        let sym = &*self.symbolic;
        let k = rhs.ncols();
        let n = rhs.nrows();
        if k == 0 {
            return;
        }
        if let (SymbolicCholeskyRaw::Supernodal(sn), Some(plan), Kind::Llt | Kind::Ldlt) =
            (sym.raw(), &self.plan, &self.kind)
        {
            supernodal_solve(sn, plan, &self.values, self.kind == Kind::Ldlt, &self.scale, rhs);
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

/// Most SIMD vectors per row of the right-hand-side block X: wider blocks are solved in column
/// chunks of this many vectors (16 columns with AVX2).
const MAX_VECTORS: usize = 4;

/// Smallest factor (stored values) whose solves are split between two threads.
const PARALLEL_MIN_VALUES: usize = 1 << 18;

/// Smallest supernode panel (stored values) updated with faer's matrix product and triangular
/// solves when X rows hold three or more SIMD vectors: with that much arithmetic per stored value
/// faer's kernels (AVX-512 where the CPU has it) beat the column blocks below; with fewer right-hand
/// sides they do not (measured on the 100k and 400k DOF tube benchmarks).
const FAER_MIN_VALUES: usize = 4096;

/// Distance of [`Prefetch`], in rows.
const PREFETCH_ROWS: usize = 128;

/// Two-thread schedule of the supernodal solves, from the elimination tree of the supernodes (the
/// parent of a supernode is the one holding its first pattern row).
///
/// The rows of the right-hand-side block X follow a postorder of that tree, so that every subtree owns
/// a contiguous range of rows. Disjoint subtrees only interact through their common ancestors, so a
/// set of subtrees is split between two threads (the `parts`, balanced by the values they read) and
/// the remaining supernodes (the `top`, ancestors of the subtrees) are solved by one thread: after the
/// parts in the forward sweep, before them in the backward sweep. In the forward sweep each part
/// accumulates its updates of top rows in a private buffer starting at zero, and
/// X_top = (X_top + P₀) + P₁ afterwards; in the backward sweep the parts read the final top rows from
/// copies. The summation order depends only on the schedule, so the result is the same whether the
/// two parts run side by side or one after the other.
struct SolvePlan {
    parts: [Vec<Region>; 2],
    top: Region,
    /// Row of X of the first column of each supernode.
    first_row: Vec<usize>,
    /// Row of the right-hand sides (original numbering) of each row of X.
    old_of_row: Vec<usize>,
    /// Pattern rows of the supernodes as rows of X, laid out as faer's `row_idx`; `None` when the
    /// rows of X are the factor's columns.
    rows: Option<Vec<usize>>,
    /// Rows of X of the top supernodes, ascending (the rows of the compact top buffers).
    top_rows: Vec<usize>,
    /// Position in `top_rows` of each row of X (read for top rows only).
    top_pos: Vec<usize>,
    /// Largest number of pattern rows of a supernode.
    max_pattern: usize,
}

/// Supernodes (children before parents) and the contiguous range of rows of X of their columns: a
/// subtree of a part, or the top (whose range is all rows).
struct Region {
    supernodes: Vec<usize>,
    rows: std::ops::Range<usize>,
}

impl SolvePlan {
    /// All supernodes on one thread, X rows in factor order (`forward`: the fill-reducing
    /// permutation, new to old).
    fn sequential(sn: &supernodal::SymbolicSupernodalCholesky<usize>, forward: Option<&[usize]>) -> Self {
        let (ns, n) = (sn.n_supernodes(), sn.nrows());
        let ptr_row = sn.col_ptr_for_row_idx();
        Self {
            parts: [Vec::new(), Vec::new()],
            top: Region { supernodes: (0..ns).collect(), rows: 0..n },
            first_row: sn.supernode_begin()[..ns].to_vec(),
            old_of_row: forward.map_or_else(|| (0..n).collect(), <[usize]>::to_vec),
            rows: None,
            top_rows: Vec::new(),
            top_pos: Vec::new(),
            max_pattern: (0..ns).map(|s| ptr_row[s + 1] - ptr_row[s]).max().unwrap_or(0),
        }
    }

    /// The schedule of the solves with the supernodal factor `sn` of a matrix permuted by `forward`
    /// (new to old).
    fn new(sn: &supernodal::SymbolicSupernodalCholesky<usize>, forward: Option<&[usize]>) -> Self {
        let ns = sn.n_supernodes();
        let n = sn.nrows();
        let (begin, end) = (sn.supernode_begin(), sn.supernode_end());
        let (ptr_row, row_idx) = (sn.col_ptr_for_row_idx(), sn.row_idx());
        let sequential = Self::sequential(sn, forward);
        if sn.col_ptr_for_val()[ns] < PARALLEL_MIN_VALUES {
            return sequential;
        }
        let mut sup_of = vec![0; n];
        for s in 0..ns {
            sup_of[begin[s]..end[s]].fill(s);
        }
        // Work of a supernode: the values read by one sweep, plus the gather of its pattern rows.
        let work: Vec<f64> = (0..ns)
            .map(|s| {
                let (nc, np) = (end[s] - begin[s], ptr_row[s + 1] - ptr_row[s]);
                (nc * (nc + 1) / 2 + nc * np + 16 * np + 64) as f64
            })
            .collect();
        let mut subtree = work.clone();
        let mut children = vec![Vec::new(); ns];
        let mut roots = Vec::new();
        for s in 0..ns {
            match row_idx[ptr_row[s]..ptr_row[s + 1]].first() {
                Some(&g) if sup_of[g] > s => {
                    subtree[sup_of[g]] += subtree[s];
                    children[sup_of[g]].push(s);
                }
                Some(_) => return sequential,
                None => roots.push(s),
            }
        }
        // Postorder (children in increasing order), subtree sizes and the resulting rows of X.
        let mut post = Vec::with_capacity(ns);
        let mut stack: Vec<(usize, usize)> = roots.iter().rev().map(|&r| (r, 0)).collect();
        while let Some((s, next)) = stack.pop() {
            if let Some(&c) = children[s].get(next) {
                stack.push((s, next + 1));
                stack.push((c, 0));
            } else {
                post.push(s);
            }
        }
        let mut position = vec![0; ns];
        let mut size = vec![1usize; ns];
        let mut first_row = vec![0; ns];
        let mut row_of_col = vec![0; n];
        let mut old_of_row = vec![0; n];
        let mut next_row = 0;
        for (i, &s) in post.iter().enumerate() {
            position[s] = i;
            size[s] += children[s].iter().map(|&c| size[c]).sum::<usize>();
            first_row[s] = next_row;
            for c in begin[s]..end[s] {
                row_of_col[c] = next_row;
                old_of_row[next_row] = forward.map_or(c, |f| f[c]);
                next_row += 1;
            }
        }
        // Expand the heaviest subtree of the frontier into its children (its root joins the top) and
        // keep the frontier whose longest-processing-time assignment to two threads finishes first.
        let total: f64 = work.iter().sum();
        let mut frontier = roots;
        let mut top = Vec::new();
        let mut top_work = 0.0;
        let mut best: Option<(f64, [Vec<usize>; 2], Vec<usize>)> = None;
        loop {
            frontier.sort_by(|&a, &b| subtree[b].total_cmp(&subtree[a]).then(a.cmp(&b)));
            let mut load = [0.0; 2];
            let mut assigned = [Vec::new(), Vec::new()];
            for &r in &frontier {
                let i = usize::from(load[1] < load[0]);
                load[i] += subtree[r];
                assigned[i].push(r);
            }
            let cost = top_work + load[0].max(load[1]);
            if best.as_ref().is_none_or(|b| cost < b.0) {
                best = Some((cost, assigned, top.clone()));
            }
            match frontier.first() {
                Some(&heaviest) if subtree[heaviest] > total / 64.0 => {
                    frontier.remove(0);
                    frontier.extend_from_slice(&children[heaviest]);
                    top.push(heaviest);
                    top_work += work[heaviest];
                }
                _ => break,
            }
        }
        let Some((_, assigned, mut top)) = best else { return sequential };
        if assigned.iter().any(Vec::is_empty) {
            return sequential;
        }
        let parts = assigned.map(|mut subtrees| {
            subtrees.sort_unstable_by_key(|&r| position[r]);
            subtrees
                .into_iter()
                .map(|r| {
                    let supernodes = post[position[r] + 1 - size[r]..=position[r]].to_vec();
                    let rows = first_row[supernodes[0]]..first_row[r] + end[r] - begin[r];
                    Region { supernodes, rows }
                })
                .collect()
        });
        top.sort_unstable_by_key(|&s| position[s]);
        let top_rows: Vec<usize> = top.iter().flat_map(|&s| first_row[s]..first_row[s] + end[s] - begin[s]).collect();
        let mut top_pos = vec![usize::MAX; n];
        for (i, &r) in top_rows.iter().enumerate() {
            top_pos[r] = i;
        }
        Self {
            parts,
            top: Region { supernodes: top, rows: 0..n },
            first_row,
            old_of_row,
            rows: Some(row_idx.iter().map(|&g| row_of_col[g]).collect()),
            top_rows,
            top_pos,
            max_pattern: sequential.max_pattern,
        }
    }
}

/// Number of f64 lanes of the SIMD instruction set pulp dispatches to.
struct Lanes;

impl pulp::WithSimd for Lanes {
    type Output = usize;

    #[inline(always)]
    fn with_simd<S: Simd>(self, _: S) -> usize {
        S::F64_LANES
    }
}

/// Supernodal triangular solves L Lᵀ x = b (or L D Lᵀ x = b with unit L) for a block of right-hand
/// sides, on faer's supernodal storage: each supernode holds a column-major panel whose top square
/// is the diagonal block (L_ss, with D on its diagonal for LDLᵀ) and whose other rows are the
/// supernode's pattern rows p.
///
/// The right-hand sides are copied (permuted and scaled) into a row-major block X (n × kp, kp = k
/// rounded up to whole SIMD vectors, padding lanes zero), so one row of X is a few SIMD vectors and
/// every kernel works on whole rows: y_s = L_ss⁻¹ b_s and b_p −= L_ps y_s (forward; LDLᵀ then
/// y_s /= D_s), then x_s −= L_psᵀ x_p and x_s = L_ssᵀ⁻¹ x_s (backward). Each panel is processed in
/// blocks of B columns (B·kp ≈ 8 vectors): forward, the block's B solved rows Y_B (kept in registers)
/// update every row below with t_r −= Σ_c l_rc Y_c (one broadcast of l_rc, kp/lanes fused
/// multiply-adds); backward, the block's rows receive Σ_r l_rc x_r accumulated in B·kp/lanes
/// independent registers. So the panel is read once per sweep, B columns side by side, with one
/// fused multiply-add per stored value and SIMD vector of right-hand sides (the cost of a few
/// right-hand sides is that of one), and the pattern rows of X are gathered once per supernode into
/// a contiguous buffer (one or a few cache lines per row). The sweeps run on two threads as scheduled
/// by [`SolvePlan`]; the summation order depends only on the symbolic structure, so results are
/// bit-identical run to run.
fn supernodal_solve(
    sn: &supernodal::SymbolicSupernodalCholesky<usize>,
    plan: &SolvePlan,
    values: &[f64],
    unit: bool,
    scale: &[f64],
    mut rhs: MatMut<'_, f64>,
) {
    let n = rhs.nrows();
    let k = rhs.ncols();
    let arch = pulp::Arch::new();
    let lanes = arch.dispatch(Lanes);
    let parallel = !plan.parts[0].is_empty();
    let ntop = plan.top_rows.len();
    let mut j0 = 0;
    while j0 < k {
        let w = (MAX_VECTORS * lanes).min(k - j0);
        let kp = w.div_ceil(lanes) * lanes;
        // X (row-major, permuted) = S B, one column at a time, rows split between the threads.
        let mut x = vec![0.0; n * kp];
        {
            let b = rhs.as_ref().subcols(j0, w);
            let half = n / 2;
            let (lo, hi) = x.split_at_mut(half * kp);
            let fill = |x: &mut [f64], old_of_row: &[usize]| {
                for j in 0..w {
                    let bj = b.col(j);
                    for (xr, &old) in x.chunks_exact_mut(kp).zip(old_of_row) {
                        xr[j] = bj[old] * scale[old];
                    }
                }
            };
            join(parallel, || fill(lo, &plan.old_of_row[..half]), || fill(hi, &plan.old_of_row[half..]));
        }
        let panels = Panels { sn, values, unit, plan, w, kp };
        let sweep = |region: &Region, own: &mut [f64], top: &mut [f64], forward: bool| {
            arch.dispatch(Sweep { panels, region, own, top, forward })
        };
        // Forward sweep: the parts, each with a private buffer for its updates of the top rows, then
        // the top.
        if parallel {
            let mut private = [vec![0.0; ntop * kp], vec![0.0; ntop * kp]];
            let [p0, p1] = &mut private;
            on_parts(plan, &mut x, kp, [p0, p1], |region, own, top| sweep(region, own, top, true));
            for (i, &row) in plan.top_rows.iter().enumerate() {
                for j in 0..kp {
                    x[row * kp + j] = x[row * kp + j] + private[0][i * kp + j] + private[1][i * kp + j];
                }
            }
        }
        sweep(&plan.top, &mut x, &mut [], true);
        // Backward sweep: the top, then the parts, each reading the top rows from its own copy.
        sweep(&plan.top, &mut x, &mut [], false);
        if parallel {
            let mut c0: Vec<f64> =
                plan.top_rows.iter().flat_map(|&row| x[row * kp..(row + 1) * kp].iter().copied()).collect();
            let mut c1 = c0.clone();
            on_parts(plan, &mut x, kp, [&mut c0, &mut c1], |region, own, top| sweep(region, own, top, false));
        }
        // B = S X, columns split between the threads.
        {
            let (lo, hi) = rhs.as_mut().subcols_mut(j0, w).split_at_col_mut(w / 2);
            let store = |mut b: MatMut<'_, f64>, first: usize| {
                for j in 0..b.ncols() {
                    let mut bj = b.as_mut().col_mut(j);
                    for (xr, &old) in x.chunks_exact(kp).zip(&plan.old_of_row) {
                        bj[old] = xr[first + j] * scale[old];
                    }
                }
            };
            join(parallel, || store(lo, 0), || store(hi, w / 2));
        }
        j0 += w;
    }
}

/// `rayon::join(a, b)` when `parallel`, else a then b.
fn join(parallel: bool, a: impl FnOnce() + Send, b: impl FnOnce() + Send) {
    if parallel {
        rayon::join(a, b);
    } else {
        a();
        b();
    }
}

/// Runs `f(region, its rows of X, top buffer)` on the regions of both parts of `plan`, part i on one
/// of two threads with `tops[i]`.
fn on_parts(
    plan: &SolvePlan,
    x: &mut [f64],
    kp: usize,
    tops: [&mut [f64]; 2],
    f: impl Fn(&Region, &mut [f64], &mut [f64]) + Sync,
) {
    let mut regions: Vec<(usize, &Region)> =
        plan.parts.iter().enumerate().flat_map(|(i, part)| part.iter().map(move |r| (i, r))).collect();
    regions.sort_unstable_by_key(|(_, r)| r.rows.start);
    let mut mine: [Vec<(&Region, &mut [f64])>; 2] = [Vec::new(), Vec::new()];
    let (mut rest, mut at) = (x, 0);
    for (i, r) in regions {
        let (_, tail) = std::mem::take(&mut rest).split_at_mut((r.rows.start - at) * kp);
        let (own, tail) = tail.split_at_mut(r.rows.len() * kp);
        mine[i].push((r, own));
        (rest, at) = (tail, r.rows.end);
    }
    let [a, b] = mine;
    let [ta, tb] = tops;
    let run = |list: Vec<(&Region, &mut [f64])>, top: &mut [f64]| {
        for (r, own) in list {
            f(r, own, top);
        }
    };
    rayon::join(|| run(a, ta), || run(b, tb));
}

/// What every supernode step of a solve reads.
#[derive(Clone, Copy)]
struct Panels<'a> {
    sn: &'a supernodal::SymbolicSupernodalCholesky<usize>,
    values: &'a [f64],
    /// LDLᵀ (unit L, D on the diagonal) rather than LLᵀ.
    unit: bool,
    plan: &'a SolvePlan,
    /// Right-hand sides (columns of X that are not padding).
    w: usize,
    /// Columns of X.
    kp: usize,
}

/// One sweep (forward or backward) over the supernodes of a region, on the region's own rows of X
/// (`own`, row-major, from the region's first row) and the compact top rows (`top`, at
/// `plan.top_pos`) for pattern rows outside the region.
struct Sweep<'a> {
    panels: Panels<'a>,
    region: &'a Region,
    own: &'a mut [f64],
    top: &'a mut [f64],
    forward: bool,
}

impl pulp::WithSimd for Sweep<'_> {
    type Output = ();

    #[inline(always)]
    fn with_simd<S: Simd>(self, simd: S) {
        match self.panels.kp / S::F64_LANES {
            1 => sweep::<S, 1>(simd, self),
            2 => sweep::<S, 2>(simd, self),
            3 => sweep::<S, 3>(simd, self),
            _ => sweep::<S, MAX_VECTORS>(simd, self),
        }
    }
}

/// [`Sweep`] with V SIMD vectors per row of X.
#[inline(always)]
fn sweep<S: Simd, const V: usize>(simd: S, job: Sweep<'_>) {
    let Sweep { panels, region, own, top, forward } = job;
    let (x, _) = S::as_mut_simd_f64s(own);
    let (top, _) = S::as_mut_simd_f64s(top);
    let mut buf = vec![simd.splat_f64s(0.0); panels.plan.max_pattern * V];
    if forward {
        for &s in &region.supernodes {
            forward_supernode::<S, V>(simd, panels, s, &region.rows, x, top, &mut buf);
        }
    } else {
        for &s in region.supernodes.iter().rev() {
            backward_supernode::<S, V>(simd, panels, s, &region.rows, x, top, &mut buf);
        }
    }
}

/// Widest column block of a panel for V vectors per row of X: about eight vectors of right-hand-side
/// rows in registers.
const fn max_block(v: usize) -> usize {
    match v {
        1 => 8,
        2 => 4,
        _ => 2,
    }
}

/// Column blocks of one panel with `ncols` columns: full blocks of `bmax` columns, then the rest in
/// blocks of 4, 2 and 1 (`bmax` a power of two ≤ 8). Returns the number of full blocks and the rest's
/// block sizes (0 for none).
#[inline(always)]
fn column_blocks(ncols: usize, bmax: usize) -> (usize, [usize; 3]) {
    let rest = ncols % bmax;
    (ncols / bmax, [rest & 4, rest & 2, rest & 1])
}

/// Supernode `s` of a step of [`sweep`]: its panel, pattern rows (rows of X), first row of X and
/// number of columns.
#[inline(always)]
fn supernode<'a>(panels: &Panels<'a>, s: usize) -> (&'a [f64], &'a [usize], usize, usize) {
    let sn = panels.sn;
    let ptr_row = sn.col_ptr_for_row_idx();
    let rows = panels.plan.rows.as_deref().unwrap_or(sn.row_idx());
    (
        &panels.values[sn.col_ptr_for_val()[s]..sn.col_ptr_for_val()[s + 1]],
        &rows[ptr_row[s]..ptr_row[s + 1]],
        panels.plan.first_row[s],
        sn.supernode_end()[s] - sn.supernode_begin()[s],
    )
}

/// Copies the pattern rows of X (rows of the region `own` from `x`, other rows from `top`) into `t`.
#[inline(always)]
fn gather<T: Copy, const V: usize>(
    t: &mut [T],
    pattern: &[usize],
    own: &std::ops::Range<usize>,
    top_pos: &[usize],
    x: &[T],
    top: &[T],
) {
    for (tr, &g) in t.chunks_exact_mut(V).zip(pattern) {
        let src = if g < own.end { &x[(g - own.start) * V..] } else { &top[top_pos[g] * V..] };
        tr.copy_from_slice(&src[..V]);
    }
}

/// Forward step of supernode `s` on the rows `own` of X (in `x`; other rows in `top`): y_s = L_ss⁻¹ x_s,
/// x_p −= L_ps y_s, then (LDLᵀ) y_s /= D_s.
#[inline(always)]
fn forward_supernode<S: Simd, const V: usize>(
    simd: S,
    panels: Panels<'_>,
    s: usize,
    own: &std::ops::Range<usize>,
    x: &mut [S::f64s],
    top: &mut [S::f64s],
    buf: &mut [S::f64s],
) {
    let (l, pattern, s0, ncols) = supernode(&panels, s);
    let (unit, top_pos) = (panels.unit, &panels.plan.top_pos);
    match ncols {
        1 => return direct::<S, V, 1>(simd, l, pattern, s0, own, top_pos, x, top, unit, true),
        2 => return direct::<S, V, 2>(simd, l, pattern, s0, own, top_pos, x, top, unit, true),
        _ => {}
    }
    let (nrows, np) = (ncols + pattern.len(), pattern.len());
    let t = &mut buf[..np * V];
    gather::<_, V>(t, pattern, own, top_pos, x, top);
    let xs = &mut x[(s0 - own.start) * V..(s0 - own.start + ncols) * V];
    if V >= 3 && ncols * nrows >= FAER_MIN_VALUES {
        let (w, kp) = (panels.w, panels.kp);
        let mut y =
            faer::MatMut::from_column_major_slice_with_stride_mut(pulp::bytemuck::cast_slice_mut(xs), w, ncols, kp)
                .transpose_mut();
        let lss = faer::MatRef::from_column_major_slice_with_stride(l, ncols, ncols, nrows);
        if unit {
            faer::linalg::triangular_solve::solve_unit_lower_triangular_in_place(lss, y.as_mut(), Par::Seq);
        } else {
            faer::linalg::triangular_solve::solve_lower_triangular_in_place(lss, y.as_mut(), Par::Seq);
        }
        if np > 0 {
            let lps = faer::MatRef::from_column_major_slice_with_stride(&l[ncols..], np, ncols, nrows);
            let tm =
                faer::MatMut::from_column_major_slice_with_stride_mut(pulp::bytemuck::cast_slice_mut(t), w, np, kp)
                    .transpose_mut();
            faer::linalg::matmul::matmul(tm, faer::Accum::Add, lps, y.as_ref(), -1.0, Par::Seq);
        }
    } else {
        let bmax = max_block(V);
        let (full, rest) = column_blocks(ncols, bmax);
        let mut c0 = 0;
        for b in std::iter::repeat_n(bmax, full).chain(rest.into_iter().filter(|&b| b > 0)) {
            match b {
                8 => forward_block::<S, V, 8>(simd, l, nrows, c0, xs, t, unit),
                4 => forward_block::<S, V, 4>(simd, l, nrows, c0, xs, t, unit),
                2 => forward_block::<S, V, 2>(simd, l, nrows, c0, xs, t, unit),
                _ => forward_block::<S, V, 1>(simd, l, nrows, c0, xs, t, unit),
            }
            c0 += b;
        }
    }
    if unit {
        divide_by_pivots::<S, V>(simd, l, nrows, xs);
    }
    for (tr, &g) in t.chunks_exact(V).zip(pattern) {
        let dst = if g < own.end { &mut x[(g - own.start) * V..] } else { &mut top[top_pos[g] * V..] };
        dst[..V].copy_from_slice(tr);
    }
}

/// Backward step of supernode `s` (see [`forward_supernode`]): x_s −= L_psᵀ x_p, then
/// x_s = L_ssᵀ⁻¹ x_s.
#[inline(always)]
fn backward_supernode<S: Simd, const V: usize>(
    simd: S,
    panels: Panels<'_>,
    s: usize,
    own: &std::ops::Range<usize>,
    x: &mut [S::f64s],
    top: &mut [S::f64s],
    buf: &mut [S::f64s],
) {
    let (l, pattern, s0, ncols) = supernode(&panels, s);
    let (unit, top_pos) = (panels.unit, &panels.plan.top_pos);
    match ncols {
        1 => return direct::<S, V, 1>(simd, l, pattern, s0, own, top_pos, x, top, unit, false),
        2 => return direct::<S, V, 2>(simd, l, pattern, s0, own, top_pos, x, top, unit, false),
        _ => {}
    }
    let (nrows, np) = (ncols + pattern.len(), pattern.len());
    let t = &mut buf[..np * V];
    gather::<_, V>(t, pattern, own, top_pos, x, top);
    let xs = &mut x[(s0 - own.start) * V..(s0 - own.start + ncols) * V];
    if V >= 3 && ncols * nrows >= FAER_MIN_VALUES {
        let (w, kp) = (panels.w, panels.kp);
        let mut y =
            faer::MatMut::from_column_major_slice_with_stride_mut(pulp::bytemuck::cast_slice_mut(xs), w, ncols, kp)
                .transpose_mut();
        let lss = faer::MatRef::from_column_major_slice_with_stride(l, ncols, ncols, nrows);
        if np > 0 {
            let lps = faer::MatRef::from_column_major_slice_with_stride(&l[ncols..], np, ncols, nrows);
            let tm =
                faer::MatRef::from_row_major_slice_with_stride(pulp::bytemuck::cast_slice::<_, f64>(&*t), np, w, kp);
            faer::linalg::matmul::matmul(y.as_mut(), faer::Accum::Add, lps.transpose(), tm, -1.0, Par::Seq);
        }
        if unit {
            faer::linalg::triangular_solve::solve_unit_upper_triangular_in_place(lss.transpose(), y, Par::Seq);
        } else {
            faer::linalg::triangular_solve::solve_upper_triangular_in_place(lss.transpose(), y, Par::Seq);
        }
    } else {
        let bmax = max_block(V);
        let (full, rest) = column_blocks(ncols, bmax);
        let z = [simd.splat_f64s(0.0); V];
        let mut c1 = ncols;
        for b in rest.into_iter().rev().filter(|&b| b > 0).chain(std::iter::repeat_n(bmax, full)) {
            c1 -= b;
            match b {
                8 => backward_block::<S, V, 8>(simd, l, nrows, c1, xs, t, unit, [z; 8]),
                4 => backward_block::<S, V, 4>(simd, l, nrows, c1, xs, t, unit, [z; 4]),
                2 => backward_block::<S, V, 2>(simd, l, nrows, c1, xs, t, unit, [z; 2]),
                _ => backward_block::<S, V, 1>(simd, l, nrows, c1, xs, t, unit, [z; 1]),
            }
        }
    }
}

/// y_c /= d_c for the rows `xs` of a supernode, D on the diagonal of its panel `l`.
#[inline(always)]
fn divide_by_pivots<S: Simd, const V: usize>(simd: S, l: &[f64], nrows: usize, xs: &mut [S::f64s]) {
    for (c, row) in xs.chunks_exact_mut(V).enumerate() {
        let d = simd.splat_f64s(l[c * nrows + c]);
        for v in row {
            *v = simd.div_f64s(*v, d);
        }
    }
}

/// Forward or backward step of a supernode of B columns, the whole panel being one column block: the
/// update of (forward) or by (backward) the pattern rows works on X directly through the row indices,
/// as each pattern row is used once.
#[allow(clippy::too_many_arguments)]
#[inline(always)]
fn direct<S: Simd, const V: usize, const B: usize>(
    simd: S,
    l: &[f64],
    pattern: &[usize],
    s0: usize,
    own: &std::ops::Range<usize>,
    top_pos: &[usize],
    x: &mut [S::f64s],
    top: &mut [S::f64s],
    unit: bool,
    forward: bool,
) {
    let nrows = B + pattern.len();
    let cols: [&[f64]; B] = std::array::from_fn(|c| &l[c * nrows + B..(c + 1) * nrows]);
    let at = (s0 - own.start) * V;
    if forward {
        let xs = &mut x[at..at + B * V];
        forward_block::<S, V, B>(simd, l, nrows, 0, xs, &mut [], unit);
        let y: [[S::f64s; V]; B] = std::array::from_fn(|c| std::array::from_fn(|q| simd.neg_f64s(xs[c * V + q])));
        if unit {
            divide_by_pivots::<S, V>(simd, l, nrows, xs);
        }
        for (r, &g) in pattern.iter().enumerate() {
            let row = if g < own.end { &mut x[(g - own.start) * V..] } else { &mut top[top_pos[g] * V..] };
            sub_row::<S, V, B>(simd, row, std::array::from_fn(|c| cols[c][r]), &y);
        }
    } else {
        // Even and odd rows in separate sums: two chains of dependent additions.
        let mut acc = [[[simd.splat_f64s(0.0); V]; B]; 2];
        for (r, &g) in pattern.iter().enumerate() {
            let row = if g < own.end { &x[(g - own.start) * V..] } else { &top[top_pos[g] * V..] };
            dot_row::<S, V, B>(simd, &mut acc[r % 2], row, std::array::from_fn(|c| cols[c][r]));
        }
        let sum = std::array::from_fn(|c| std::array::from_fn(|q| simd.add_f64s(acc[0][c][q], acc[1][c][q])));
        backward_block::<S, V, B>(simd, l, nrows, 0, &mut x[at..at + B * V], &[], unit, sum);
    }
}

/// Forward step of the column block c0..c0+B of a panel `l` (`nrows` rows, column-major) on the
/// supernode's rows `xs` of X and its gathered pattern rows `t`: solves the block's triangle
/// (y_c /= l_cc unless `unit`, y_r −= l_rc y_c for the block's rows r > c), then updates every row
/// below the block with x_r −= Σ_c l_rc y_c.
#[inline(always)]
fn forward_block<S: Simd, const V: usize, const B: usize>(
    simd: S,
    l: &[f64],
    nrows: usize,
    c0: usize,
    xs: &mut [S::f64s],
    t: &mut [S::f64s],
    unit: bool,
) {
    let ncols = xs.len() / V;
    let cols: [&[f64]; B] = std::array::from_fn(|c| &l[(c0 + c) * nrows..(c0 + c + 1) * nrows]);
    for c in 0..B {
        let cc = c0 + c;
        if !unit {
            let d = simd.splat_f64s(cols[c][cc]);
            for v in &mut xs[cc * V..(cc + 1) * V] {
                *v = simd.div_f64s(*v, d);
            }
        }
        let y: [S::f64s; V] = std::array::from_fn(|q| simd.neg_f64s(xs[cc * V + q]));
        for r in c0 + c + 1..c0 + B {
            let a = simd.splat_f64s(cols[c][r]);
            for q in 0..V {
                xs[r * V + q] = simd.mul_add_e_f64s(a, y[q], xs[r * V + q]);
            }
        }
    }
    let y: [[S::f64s; V]; B] = std::array::from_fn(|c| std::array::from_fn(|q| simd.neg_f64s(xs[(c0 + c) * V + q])));
    sub_outer::<S, V, B>(simd, &mut xs[(c0 + B) * V..], cols.map(|col| &col[c0 + B..ncols]), &y);
    sub_outer::<S, V, B>(simd, t, cols.map(|col| &col[ncols..]), &y);
}

/// Backward step of the column block c0..c0+B of a panel (see [`forward_block`]): the block's rows
/// get x_c −= acc_c + Σ_r l_rc x_r over every row below the block (rows of `xs`, then the gathered
/// pattern rows `t`), then the transposed triangle is solved (x_c −= l_rc x_r for the block's rows
/// r > c, x_c /= l_cc unless `unit`), last column first.
#[allow(clippy::too_many_arguments)]
#[inline(always)]
fn backward_block<S: Simd, const V: usize, const B: usize>(
    simd: S,
    l: &[f64],
    nrows: usize,
    c0: usize,
    xs: &mut [S::f64s],
    t: &[S::f64s],
    unit: bool,
    mut acc: [[S::f64s; V]; B],
) {
    let ncols = xs.len() / V;
    let cols: [&[f64]; B] = std::array::from_fn(|c| &l[(c0 + c) * nrows..(c0 + c + 1) * nrows]);
    dot_rows::<S, V, B>(simd, &mut acc, &xs[(c0 + B) * V..], cols.map(|col| &col[c0 + B..ncols]));
    dot_rows::<S, V, B>(simd, &mut acc, t, cols.map(|col| &col[ncols..]));
    for c in (0..B).rev() {
        let cc = c0 + c;
        let mut xc: [S::f64s; V] = std::array::from_fn(|q| simd.sub_f64s(xs[cc * V + q], acc[c][q]));
        for r in cc + 1..c0 + B {
            let a = simd.splat_f64s(cols[c][r]);
            for q in 0..V {
                xc[q] = simd.mul_add_e_f64s(a, simd.neg_f64s(xs[r * V + q]), xc[q]);
            }
        }
        if !unit {
            let d = simd.splat_f64s(cols[c][cc]);
            for v in &mut xc {
                *v = simd.div_f64s(*v, d);
            }
        }
        xs[cc * V..(cc + 1) * V].copy_from_slice(&xc);
    }
}

/// t_r += Σ_c l_rc y_c for every row r of `t` (rows of V vectors), with `y` the negated solved rows
/// of a column block: one broadcast of l_rc and V fused multiply-adds per stored value.
#[inline(always)]
fn sub_outer<S: Simd, const V: usize, const B: usize>(
    simd: S,
    t: &mut [S::f64s],
    l: [&[f64]; B],
    y: &[[S::f64s; V]; B],
) {
    let m = t.len() / V;
    let t = &mut t[..m * V];
    let ahead = Prefetch::new(l);
    let l = l.map(|col| &col[..m]);
    for r in 0..m {
        ahead.row(r);
        sub_row::<S, V, B>(simd, &mut t[r * V..(r + 1) * V], std::array::from_fn(|c| l[c][r]), y);
    }
}

/// One row of [`sub_outer`]: t_r += Σ_c a_c y_c, in two partial sums (even and odd columns) to halve
/// the chain of dependent additions.
#[inline(always)]
fn sub_row<S: Simd, const V: usize, const B: usize>(simd: S, tr: &mut [S::f64s], a: [f64; B], y: &[[S::f64s; V]; B]) {
    let mut acc: [S::f64s; V] = std::array::from_fn(|q| tr[q]);
    let mut odd = [simd.splat_f64s(0.0); V];
    for c in 0..B {
        let a = simd.splat_f64s(a[c]);
        let sum = if c % 2 == 0 { &mut acc } else { &mut odd };
        for q in 0..V {
            sum[q] = simd.mul_add_e_f64s(a, y[c][q], sum[q]);
        }
    }
    if B > 1 {
        for q in 0..V {
            acc[q] = simd.add_f64s(acc[q], odd[q]);
        }
    }
    tr[..V].copy_from_slice(&acc);
}

/// acc_c += Σ_r l_rc t_r over the rows r of `t` (rows of V vectors), for the B columns l_c of a
/// block, in B·V independent accumulators.
#[inline(always)]
fn dot_rows<S: Simd, const V: usize, const B: usize>(
    simd: S,
    acc: &mut [[S::f64s; V]; B],
    t: &[S::f64s],
    l: [&[f64]; B],
) {
    let m = t.len() / V;
    let t = &t[..m * V];
    let ahead = Prefetch::new(l);
    let l = l.map(|col| &col[..m]);
    let mut a = *acc;
    for r in 0..m {
        ahead.row(r);
        dot_row::<S, V, B>(simd, &mut a, &t[r * V..(r + 1) * V], std::array::from_fn(|c| l[c][r]));
    }
    *acc = a;
}

/// One row of [`dot_rows`]: acc_c += a_c t_r.
#[inline(always)]
fn dot_row<S: Simd, const V: usize, const B: usize>(simd: S, acc: &mut [[S::f64s; V]; B], tr: &[S::f64s], a: [f64; B]) {
    for c in 0..B {
        let a = simd.splat_f64s(a[c]);
        for q in 0..V {
            acc[c][q] = simd.mul_add_e_f64s(a, tr[q], acc[c][q]);
        }
    }
}

/// Software prefetch of the panel columns a kernel streams: at row r, one of the (up to 8) columns
/// is prefetched `PREFETCH_ROWS` rows ahead, so each column gets one prefetch per cache line. The
/// hardware prefetchers follow few of these interleaved streams, and the kernels' work per cache
/// line leaves too few loads in flight to cover the memory latency otherwise.
struct Prefetch<const B: usize> {
    cols: [*const f64; B],
    #[cfg(target_arch = "x86_64")]
    sse: Option<pulp::core_arch::x86::Sse>,
}

impl<const B: usize> Prefetch<B> {
    #[inline(always)]
    fn new(cols: [&[f64]; B]) -> Self {
        Self {
            cols: cols.map(<[f64]>::as_ptr),
            #[cfg(target_arch = "x86_64")]
            sse: pulp::core_arch::x86::Sse::try_new(),
        }
    }

    #[inline(always)]
    fn row(&self, r: usize) {
        #[cfg(target_arch = "x86_64")]
        if let Some(sse) = self.sse {
            let c = r % 8;
            if c < B {
                // A prefetch only hints at an address and never faults, so it may point past the
                // panel.
                let p = self.cols[c].wrapping_add(r + PREFETCH_ROWS);
                sse._mm_prefetch::<{ core::arch::x86_64::_MM_HINT_T0 }>(p.cast());
            }
        }
        #[cfg(not(target_arch = "x86_64"))]
        let _ = (r, self.cols);
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use faer::Mat;

    /// 7-point Laplacian plus identity on an m × m × m grid (both triangles stored).
    fn grid(m: usize) -> SparseColMat<usize, f64> {
        let mut entries = Vec::new();
        let at = |i: usize, j: usize, l: usize| (i * m + j) * m + l;
        for i in 0..m {
            for j in 0..m {
                for l in 0..m {
                    let p = at(i, j, l);
                    entries.push(faer::sparse::Triplet::new(p, p, 7.0));
                    for (a, b, c) in [(i + 1, j, l), (i, j + 1, l), (i, j, l + 1)] {
                        if a < m && b < m && c < m {
                            entries.push(faer::sparse::Triplet::new(p, at(a, b, c), -1.0));
                            entries.push(faer::sparse::Triplet::new(at(a, b, c), p, -1.0));
                        }
                    }
                }
            }
        }
        SparseColMat::try_new_from_triplets(m * m * m, m * m * m, &entries).expect("valid triplets")
    }

    /// The solve with faer's own supernodal kernels, as reference.
    fn reference(f: &Factor, b: &Mat<f64>) -> Mat<f64> {
        let sym = &*f.symbolic;
        let mut x = Mat::from_fn(b.nrows(), b.ncols(), |i, j| b[(i, j)] * f.scale[i]);
        let mut mem = MemBuffer::new(sym.solve_in_place_scratch::<f64>(b.ncols(), Par::Seq));
        let stack = MemStack::new(&mut mem);
        match f.kind {
            Kind::Llt => LltRef::new(sym, &f.values).solve_in_place_with_conj(Conj::No, x.as_mut(), Par::Seq, stack),
            _ => LdltRef::new(sym, &f.values).solve_in_place_with_conj(Conj::No, x.as_mut(), Par::Seq, stack),
        }
        Mat::from_fn(b.nrows(), b.ncols(), |i, j| x[(i, j)] * f.scale[i])
    }

    /// The two-thread block solve agrees with faer's solve and is bit-identical run to run, for LLᵀ
    /// and LDLᵀ and for blocks that are not whole SIMD vectors or exceed one column chunk.
    #[test]
    fn block_solves_match_faer_and_repeat_exactly() {
        let a = grid(24);
        let factorizer = Factorizer::new(&a.symbolic().to_owned().expect("pattern")).expect("symbolic analysis");
        let plan = factorizer.plan.as_deref().expect("a supernodal factor");
        assert!(!plan.parts[0].is_empty() && !plan.parts[1].is_empty(), "the solve is split between two threads");
        let n = a.nrows();
        let factors = [
            factorizer.llt(a.clone()).expect("factorization").expect("positive definite"),
            factorizer.ldlt(a.clone()).expect("factorization").expect("non-singular"),
        ];
        for f in &factors {
            for k in [1, 3, 4, 9, 17] {
                let b = Mat::from_fn(n, k, |i, j| ((i * 7 + j * 13) % 101) as f64 / 101.0 - 0.3);
                let mut x = b.clone();
                f.solve_in_place(x.as_mut());
                let mut again = b.clone();
                f.solve_in_place(again.as_mut());
                let expected = reference(f, &b);
                for j in 0..k {
                    let scale = (0..n).map(|i| expected[(i, j)].abs()).fold(0.0, f64::max);
                    for i in 0..n {
                        assert!((x[(i, j)] - expected[(i, j)]).abs() <= 1e-12 * scale, "{:?} k = {k}", f.kind);
                        assert_eq!(x[(i, j)].to_bits(), again[(i, j)].to_bits());
                    }
                }
            }
        }
    }
}
