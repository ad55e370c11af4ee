//! Sparse symmetric factorizations of K − σM on one shared pattern, their solves and their inertia.
//!
//! The symbolic analysis (AMD ordering, elimination tree, supernodes) is done once per pattern and
//! reused for every shift. Numeric kinds:
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
use faer::sparse::linalg::SupernodalThreshold;
use faer::sparse::linalg::cholesky::{
    CholeskySymbolicParams, LdltRef, LltRef, SymbolicCholesky, SymbolicCholeskyRaw,
    SymmetricOrdering, factorize_symbolic_cholesky, supernodal,
};
use faer::sparse::{SparseColMat, SymbolicSparseColMat};
use faer::{Conj, MatMut, Par, Side};

use crate::error::SolverError;

/// Marker value for pivots that the rank-revealing LDLᵀ replaced (far above any pivot of a
/// unit-diagonal positive semi-definite matrix, which are all ≤ 1).
const MARKED_PIVOT: f64 = 1e30;

/// Symbolic analysis shared by all factorizations of one pattern.
#[derive(Clone)]
pub(crate) struct Factorizer {
    symbolic: Arc<SymbolicCholesky<usize>>,
}

/// Numeric kind of a factor.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Kind {
    Llt,
    Ldlt,
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
    /// Symbolic analysis of `pattern` (square, both triangles stored).
    pub fn new(pattern: &SymbolicSparseColMat<usize>) -> Result<Self, SolverError> {
        let params = CholeskySymbolicParams {
            // Supernodal storage always, so inertia and solves take one code path for large
            // problems; faer still picks simplicial when a problem is tiny and banded.
            supernodal_flop_ratio_threshold: SupernodalThreshold::AUTO,
            ..Default::default()
        };
        let symbolic = factorize_symbolic_cholesky(
            pattern.as_ref(),
            Side::Lower,
            SymmetricOrdering::Amd,
            params,
        )
        .map_err(|e| SolverError::Factorization {
            shift: 0.0,
            detail: format!("symbolic analysis failed: {e:?}"),
        })?;
        Ok(Self {
            symbolic: Arc::new(symbolic),
        })
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
        let mut mem =
            MemBuffer::new(sym.factorize_numeric_llt_scratch::<f64>(Par::Seq, Default::default()));
        let ok = sym
            .factorize_numeric_llt(
                &mut values,
                scaled.as_ref(),
                Side::Lower,
                LltRegularization {
                    dynamic_regularization_delta: 0.0,
                    dynamic_regularization_epsilon: 0.0,
                },
                Par::Seq,
                MemStack::new(&mut mem),
                Default::default(),
            )
            .is_ok();
        if !ok || values.iter().any(|v| !v.is_finite()) {
            return Ok(None);
        }
        Ok(Some(Factor {
            symbolic: self.symbolic.clone(),
            values,
            scale,
            kind: Kind::Llt,
        }))
    }

    /// Unpivoted LDLᵀ of `a`. `Ok(None)` on an exactly zero or non-finite pivot.
    pub fn ldlt(&self, a: &SparseColMat<usize, f64>) -> Result<Option<Factor>, SolverError> {
        self.ldlt_impl(a, None)
    }

    /// Rank-revealing LDLᵀ of a positive semi-definite `a`: pivots below `epsilon` (relative to the
    /// unit diagonal) are replaced by a huge value, which removes that DOF from the rest of the
    /// elimination. Returns the factor and the original DOF indices of the replaced pivots.
    pub fn ldlt_rank_revealing(
        &self,
        a: &SparseColMat<usize, f64>,
        epsilon: f64,
    ) -> Result<(Factor, Vec<usize>), SolverError> {
        let f = self
            .ldlt_impl(a, Some(epsilon))?
            .ok_or_else(|| SolverError::Factorization {
                shift: 0.0,
                detail: "the stiffness matrix has a non-finite entry".into(),
            })?;
        let marked = f
            .pivots()
            .into_iter()
            .filter(|&(_, d)| d.abs() >= 0.5 * MARKED_PIVOT)
            .map(|(dof, _)| dof)
            .collect();
        Ok((f, marked))
    }

    fn ldlt_impl(
        &self,
        a: &SparseColMat<usize, f64>,
        epsilon: Option<f64>,
    ) -> Result<Option<Factor>, SolverError> {
        let (scaled, scale) = scale_to_unit_diagonal(a);
        let sym = &*self.symbolic;
        let mut values = vec![0.0; sym.len_val()];
        let mut mem =
            MemBuffer::new(sym.factorize_numeric_ldlt_scratch::<f64>(Par::Seq, Default::default()));
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
        Ok(Some(Factor {
            symbolic: self.symbolic.clone(),
            values,
            scale,
            kind: Kind::Ldlt,
        }))
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
        (0..n)
            .flat_map(|j| sym.row_idx_of_col_raw(j).iter().map(move |&i| (i, j)))
            .collect()
    };
    for (v, (i, j)) in out.val_mut().iter_mut().zip(rows) {
        *v *= scale[i] * scale[j];
    }
    (out, scale)
}

impl Factor {
    /// Solves A X = B in place for a block of right-hand sides.
    pub fn solve_in_place(&self, mut rhs: MatMut<'_, f64>) {
        let sym = &*self.symbolic;
        let k = rhs.ncols();
        // X = S (S A S)⁻¹ S B
        for j in 0..k {
            for i in 0..rhs.nrows() {
                rhs[(i, j)] *= self.scale[i];
            }
        }
        let mut mem = MemBuffer::new(sym.solve_in_place_scratch::<f64>(k, Par::Seq));
        match self.kind {
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
            for i in 0..rhs.nrows() {
                rhs[(i, j)] *= self.scale[i];
            }
        }
    }

    /// Pivots (D entries) of an LDLᵀ factor with the original DOF index of each.
    fn pivots(&self) -> Vec<(usize, f64)> {
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
        let fwd: Vec<usize> = match sym.perm() {
            Some(p) => p.arrays().0.to_vec(),
            None => (0..n).collect(),
        };
        (0..n).map(|pos| (fwd[pos], d[pos])).collect()
    }

    /// Numbers of negative and zero pivots (LDLᵀ only; an LLᵀ factor has none).
    pub fn inertia(&self) -> Inertia {
        if self.kind == Kind::Llt {
            return Inertia {
                negative: 0,
                zero: 0,
            };
        }
        let mut out = Inertia {
            negative: 0,
            zero: 0,
        };
        for (_, d) in self.pivots() {
            if d < 0.0 {
                out.negative += 1;
            } else if d == 0.0 {
                out.zero += 1;
            }
        }
        out
    }
}

/// Values of K − σM on the shared pattern of `k` and `m`.
pub(crate) fn shifted(
    k: &SparseColMat<usize, f64>,
    m: &SparseColMat<usize, f64>,
    sigma: f64,
) -> SparseColMat<usize, f64> {
    let mut out = k.clone();
    for (v, b) in out.val_mut().iter_mut().zip(m.val()) {
        *v -= sigma * b;
    }
    out
}
