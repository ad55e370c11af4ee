//! Peak memory of an eigen solution, estimated from the symbolic factorization before any numeric
//! factorization runs, so that a model too large for the machine is refused early.
//!
//! The estimate adds the parts that are alive together at the peak of a shift-invert Lanczos solve
//! (`eigen::solve_lanczos`):
//!
//! ```text
//! total = matrices + factors_alive · factor + vectors
//! matrices = bytes(K) + bytes(M) + factors_alive · bytes(K − σM)
//!                                                     (a shifted copy per factorization in progress)
//! bytes(A) = 16 nnz(A) + 8 (n + 1)                    (values and row indices; column pointers)
//! factor   = 8 (nnz(L) + 4 n) + scratch               (factor values; scaling, and the 2×2 couplings
//!                                                      and pivot permutation of an LBLᵀ; the numeric
//!                                                      factorization's scratch space)
//! vectors  = 8 n · max(d + m, 6 m)                    (Lanczos basis of d columns beside the m
//!                                                      locked modes; or the refinement's six n × m blocks)
//! ```
//!
//! with n the free DOFs, nnz(L) the stored values of one factor (`Factorizer::factor_len`: the
//! supernodes' dense blocks, exact for the numeric factor), scratch faer's stated workspace of one
//! numeric factorization (`Factorizer::factor_scratch_bytes`, exact for the symbolic structure), m
//! the modes wanted and d the basis size of the first Lanczos run for m modes. Two factorizations
//! run at once: the Sturm check's LDLᵀ (or the zero-energy check's) is built on the second core
//! while the shift-invert factor is made or used. The element matrices and entry lists of
//! assembly are freed before the symbolic analysis and are not counted. Measured against the peak
//! resident memory of whole runs in docs/reliability.md.

use serde::Serialize;

use crate::assembly::System;
use crate::eigen::basis_sizes;

/// Factors alive at the same time at the peak (the shift-invert factor and the Sturm check's).
pub const FACTORS_ALIVE: usize = 2;

/// Estimated peak memory of an eigen solution, in bytes, with its parts (see the module doc).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
pub struct MemoryEstimate {
    /// Free DOFs n.
    pub n_dofs: usize,
    /// Modes m the estimate is made for.
    pub modes: usize,
    /// Lanczos block size.
    pub block_size: usize,
    /// Stored values of one factor, nnz(L) (from the symbolic factorization).
    pub factor_values: usize,
    /// K, M and a shifted copy K − σM per live factorization, in bytes.
    pub matrices_bytes: u64,
    /// One numeric factor with its factorization's scratch space, in bytes.
    pub factor_bytes: u64,
    /// The scratch part of `factor_bytes`, in bytes.
    pub factor_scratch_bytes: u64,
    /// Factors alive at once.
    pub factors_alive: usize,
    /// Lanczos basis, locked modes and refinement blocks, in bytes.
    pub vectors_bytes: u64,
    /// The sum: matrices + factors_alive × factor + vectors, in bytes.
    pub total_bytes: u64,
}

/// One GiB, in bytes.
pub const GIB: f64 = 1024.0 * 1024.0 * 1024.0;

impl MemoryEstimate {
    /// The estimate in words, e.g. `2.31 GiB (K and M 0.12 GiB, 2 factors of 1.02 GiB each,
    /// vectors 0.15 GiB for 20 modes over 600000 DOFs)`.
    pub fn describe(&self) -> String {
        let g = |b: u64| b as f64 / GIB;
        format!(
            "{:.3} GiB (K and M {:.3} GiB, {} factors of {:.3} GiB each with {} stored values, vectors {:.3} GiB for {} \
             modes over {} DOFs)",
            g(self.total_bytes),
            g(self.matrices_bytes),
            self.factors_alive,
            g(self.factor_bytes),
            self.factor_values,
            g(self.vectors_bytes),
            self.modes,
            self.n_dofs
        )
    }
}

/// Bytes of a compressed-column sparse matrix with `nnz` stored values and `n` columns.
fn sparse_bytes(nnz: usize, n: usize) -> u64 {
    16 * nnz as u64 + 8 * (n as u64 + 1)
}

/// Estimated peak memory of solving `system` for `modes` modes with Lanczos block size
/// `block_size` (see the module doc). Uses only the symbolic factorization: no numeric work.
pub fn memory_estimate(system: &System, modes: usize, block_size: usize) -> MemoryEstimate {
    let n = system.n_dofs();
    let m = modes.clamp(1, n.max(1));
    let p = block_size.max(1);
    let (basis, _) = basis_sizes(m, p, 1);
    let d = basis.min(n);
    let k_bytes = sparse_bytes(system.k.val().len(), n);
    let matrices_bytes = k_bytes + sparse_bytes(system.m.val().len(), n) + FACTORS_ALIVE as u64 * k_bytes;
    let factor_values = system.factorizer.factor_len();
    let factor_scratch_bytes = system.factorizer.factor_scratch_bytes() as u64;
    let factor_bytes = 8 * (factor_values as u64 + 4 * n as u64) + factor_scratch_bytes;
    let vectors_bytes = 8 * n as u64 * (d + m).max(6 * m) as u64;
    MemoryEstimate {
        n_dofs: n,
        modes: m,
        block_size: p,
        factor_values,
        matrices_bytes,
        factor_bytes,
        factor_scratch_bytes,
        factors_alive: FACTORS_ALIVE,
        vectors_bytes,
        total_bytes: matrices_bytes + FACTORS_ALIVE as u64 * factor_bytes + vectors_bytes,
    }
}

#[cfg(test)]
mod tests {
    use std::collections::BTreeSet;

    use faer::sparse::{Pair, SparseColMat};

    use super::*;
    use crate::assembly::Geometry;
    use crate::dofs::DofMap;

    /// A chain of `n` DOFs with couplings to the next and the fifth next (a banded pattern with
    /// fill), K tridiagonal-dominant and M the identity.
    fn banded(n: usize) -> System {
        let mut pairs = Vec::new();
        let mut kv = Vec::new();
        let mut mv = Vec::new();
        for i in 0..n {
            pairs.push(Pair { row: i, col: i });
            kv.push(10.0);
            mv.push(1.0);
            for j in [i + 1, i + 5] {
                if j < n {
                    for (r, c) in [(i, j), (j, i)] {
                        pairs.push(Pair { row: r, col: c });
                        kv.push(-1.0);
                        mv.push(0.0);
                    }
                }
            }
        }
        let geometry = Geometry {
            node_xyz: vec![],
            absorber_directions: vec![],
            base_inertia: faer::Mat::zeros(n, 6),
            rigid_mass: [[0.0; 6]; 6],
        };
        System::from_entries(DofMap::rows(n), pairs, kv, mv, geometry).expect("a valid system")
    }

    /// nnz(L) including the diagonal, by symbolic elimination of the pattern of `a` in the order
    /// `forward` (forward[k] = original index of the k-th eliminated DOF): the structure of column
    /// k is that of A's column below k joined with the structures of its children in the
    /// elimination tree (George and Liu, Computer Solution of Large Sparse Positive Definite
    /// Systems, 1981, ch. 5).
    fn exact_factor_nonzeros(a: &SparseColMat<usize, f64>, forward: &[usize]) -> usize {
        let n = a.ncols();
        let mut inverse = vec![0; n];
        for (k, &i) in forward.iter().enumerate() {
            inverse[i] = k;
        }
        let sym = a.symbolic();
        let mut structure: Vec<BTreeSet<usize>> = vec![BTreeSet::new(); n];
        for j in 0..n {
            for &i in sym.row_idx_of_col_raw(j) {
                let (r, c) = (inverse[i], inverse[j]);
                if r > c {
                    structure[c].insert(r);
                }
            }
        }
        let mut total = 0;
        for k in 0..n {
            total += 1 + structure[k].len();
            if let Some(&parent) = structure[k].iter().next() {
                let below: Vec<usize> = structure[k].iter().copied().filter(|&r| r != parent).collect();
                structure[parent].extend(below);
            }
        }
        total
    }

    /// The factor part of the estimate is the size of the numeric factor actually made, and the
    /// factor holds at least the exact nonzero count of L from symbolic elimination (equal for a
    /// simplicial factor; supernodes store their dense blocks).
    #[test]
    fn estimate_counts_the_factor_that_is_made() {
        for n in [40, 400, 3000] {
            let system = banded(n);
            let est = memory_estimate(&system, 10, 4);
            let factor = system.factorizer.llt(system.k.clone()).expect("factorization").expect("positive definite");
            assert_eq!(est.factor_values, factor.stored_values(), "n = {n}: the estimate is the measured size");
            assert_eq!(est.factor_bytes, 8 * (factor.stored_values() as u64 + 4 * n as u64) + est.factor_scratch_bytes);
            let forward = system.factorizer.ordering();
            let exact = exact_factor_nonzeros(&system.k, &forward);
            if system.factorizer.is_simplicial() {
                assert_eq!(est.factor_values, exact, "n = {n}: simplicial factor");
            } else {
                assert!(est.factor_values >= exact, "n = {n}: {} < {exact}", est.factor_values);
            }
            assert_eq!(
                est.total_bytes,
                est.matrices_bytes + 2 * est.factor_bytes + est.vectors_bytes,
                "the parts add up"
            );
            // K, M and two shifted copies of K's pattern (up to 5 values per column).
            let k_bytes = 16 * system.k.val().len() as u64 + 8 * (n as u64 + 1);
            let m_bytes = 16 * system.m.val().len() as u64 + 8 * (n as u64 + 1);
            assert_eq!(est.matrices_bytes, 3 * k_bytes + m_bytes);
        }
    }

    /// The vectors grow linearly with the modes asked for, and a request above n is counted as n.
    #[test]
    fn vectors_follow_the_mode_count() {
        let system = banded(3000);
        let a = memory_estimate(&system, 20, 4);
        let b = memory_estimate(&system, 40, 4);
        assert!(b.vectors_bytes > a.vectors_bytes && b.vectors_bytes <= 2 * a.vectors_bytes + 8 * 3000 * 16);
        assert_eq!(memory_estimate(&system, 10_000, 4).modes, 3000);
        assert_eq!(a.matrices_bytes, b.matrices_bytes);
        assert!(a.describe().contains("2 factors"), "{}", a.describe());
    }
}
