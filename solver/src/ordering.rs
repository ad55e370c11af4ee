//! Fill-reducing orderings for the sparse factorizations.
//!
//! faer ships the approximate minimum degree ordering (AMD). For the 2D meshes of shells and the
//! long meshes of tubes, nested dissection gives much less fill and work; it comes from METIS
//! (Karypis & Kumar, "A fast and high quality multilevel scheme for partitioning irregular graphs",
//! SIAM J. Sci. Comput. 20(1), 1998), `METIS_NodeND`, run on the supervariable graph: consecutive
//! DOFs with identical sparsity (the six DOFs of a node) form one weighted vertex. Both orderings
//! are analysed and the one with the smaller factor is used, as sparse direct solvers commonly do.

use faer::sparse::SymbolicSparseColMat;

/// A permutation as (forward, inverse): forward[new] = old, inverse[old] = new.
pub(crate) type Permutation = (Vec<usize>, Vec<usize>);

/// Below this many DOFs AMD is used alone (nested dissection does not pay on small problems).
pub(crate) const ND_MIN_DOFS: usize = 5000;

/// Nested-dissection ordering of `pattern` (square, both triangles stored), or `None` if METIS
/// fails (the caller then keeps AMD).
pub(crate) fn nested_dissection(pattern: &SymbolicSparseColMat<usize>) -> Option<Permutation> {
    let n = pattern.ncols();
    if n == 0 {
        return None;
    }
    // Supervariables: a column whose row set equals the previous column's joins its group.
    let mut group_of = vec![0usize; n];
    let mut starts = vec![0usize];
    for j in 1..n {
        if pattern.row_idx_of_col_raw(j) != pattern.row_idx_of_col_raw(j - 1) {
            starts.push(j);
        }
        group_of[j] = starts.len() - 1;
    }
    let n_groups = starts.len();
    starts.push(n);
    // Quotient graph (no self loops), in METIS's 32-bit compressed form.
    let mut xadj: Vec<i32> = Vec::with_capacity(n_groups + 1);
    let mut adjncy: Vec<i32> = Vec::new();
    let mut vwgt: Vec<i32> = Vec::with_capacity(n_groups);
    xadj.push(0);
    let mut mark = vec![usize::MAX; n_groups];
    for g in 0..n_groups {
        let j = starts[g];
        for &i in pattern.row_idx_of_col_raw(j) {
            let h = group_of[i];
            if h != g && mark[h] != g {
                mark[h] = g;
                adjncy.push(i32::try_from(h).ok()?);
            }
        }
        xadj.push(i32::try_from(adjncy.len()).ok()?);
        vwgt.push(i32::try_from(starts[g + 1] - starts[g]).ok()?);
    }
    let mut nvtxs = i32::try_from(n_groups).ok()?;
    let mut perm = vec![0i32; n_groups];
    let mut iperm = vec![0i32; n_groups];
    let mut options = [0i32; metis_sys::METIS_NOPTIONS as usize];
    // SAFETY: METIS_SetDefaultOptions writes METIS_NOPTIONS entries into `options`, which has that
    // length. METIS_NodeND reads nvtxs, xadj (nvtxs + 1 entries), adjncy (xadj[nvtxs] entries),
    // vwgt (nvtxs entries) and options, and writes nvtxs entries into perm and iperm; every buffer
    // has exactly those lengths and outlives the call. METIS keeps no pointer after returning.
    #[allow(unsafe_code)]
    let status = unsafe {
        metis_sys::METIS_SetDefaultOptions(options.as_mut_ptr());
        metis_sys::METIS_NodeND(
            &mut nvtxs,
            xadj.as_mut_ptr(),
            adjncy.as_mut_ptr(),
            vwgt.as_mut_ptr(),
            options.as_mut_ptr(),
            perm.as_mut_ptr(),
            iperm.as_mut_ptr(),
        )
    };
    if status != metis_sys::rstatus_et_METIS_OK {
        return None;
    }
    // METIS: row k of the permuted matrix is row perm[k] of the original. Expand groups to DOFs.
    let mut forward = Vec::with_capacity(n);
    for &g in &perm {
        let g = usize::try_from(g).ok()?;
        forward.extend(starts[g]..starts[g + 1]);
    }
    if forward.len() != n {
        return None;
    }
    let mut inverse = vec![0usize; n];
    for (new, &old) in forward.iter().enumerate() {
        inverse[old] = new;
    }
    Some((forward, inverse))
}
