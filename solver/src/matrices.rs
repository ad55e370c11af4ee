//! K and M in MatrixMarket files: export of an assembled model (free DOFs, after constraints) and
//! import of matrices from other tools, so that any library can be compared on the same matrices.
//!
//! Files are real symmetric coordinate MatrixMarket ("%%MatrixMarket matrix coordinate real
//! symmetric", lower triangle, 1-based indices). Writing goes through nalgebra-sparse's `io` module;
//! its writer knows only the `general` storage scheme, so the lower triangle is written and the
//! banner says `symmetric`, which is exactly the symmetric coordinate format. Reading uses a direct
//! line reader for the two layouts solvers exchange (`coordinate real general` and `coordinate real
//! symmetric`): nalgebra-sparse's grammar-based reader took 10 s for a 100k-DOF shell stiffness
//! here, longer than the eigen solution. Every other layout (integer, pattern, comments in odd
//! places …) goes through nalgebra-sparse, and a test checks that both readers agree. A `general`
//! file is accepted when it holds a symmetric matrix.

use std::path::Path;

use faer::Mat;
use faer::sparse::{Pair, SparseColMat};
use nalgebra_sparse::{CooMatrix, CscMatrix};

use crate::assembly::{Geometry, System};
use crate::dofs::DofMap;
use crate::error::SolverError;

fn file_error(path: &Path, message: impl Into<String>) -> SolverError {
    SolverError::MatrixFile { path: path.to_path_buf(), message: message.into() }
}

/// Text of one matrix (lower triangle of `a`) in the symmetric coordinate format.
fn symmetric_text(a: &SparseColMat<usize, f64>, path: &Path) -> Result<Vec<u8>, SolverError> {
    let n = a.nrows();
    let sym = a.symbolic();
    let mut coo = CooMatrix::<f64>::new(n, n);
    for j in 0..n {
        for (p, &i) in sym.col_range(j).zip(sym.row_idx_of_col_raw(j)) {
            if i >= j {
                coo.push(i, j, a.val()[p]);
            }
        }
    }
    let csc = CscMatrix::from(&coo);
    let mut bytes = Vec::new();
    nalgebra_sparse::io::save_to_matrix_market(&mut bytes, &csc).map_err(|e| file_error(path, e.to_string()))?;
    // The banner is the first line; the writer spells it in lower case and says `general`.
    let end = bytes.iter().position(|&b| b == b'\n').unwrap_or(bytes.len());
    let banner = String::from_utf8_lossy(&bytes[..end]).to_ascii_lowercase();
    if banner.trim() != "%%matrixmarket matrix coordinate real general" {
        return Err(file_error(path, format!("unexpected banner from the writer: {banner}")));
    }
    let mut out = b"%%MatrixMarket matrix coordinate real symmetric".to_vec();
    out.extend_from_slice(&bytes[end..]);
    Ok(out)
}

/// Writes K and M of `system` to `k_path` and `m_path` (atomically).
///
/// # Errors
/// [`SolverError::MatrixFile`] naming the file that could not be written.
pub fn write_matrix_market(system: &System, k_path: &Path, m_path: &Path) -> Result<(), SolverError> {
    for (a, path) in [(&system.k, k_path), (&system.m, m_path)] {
        let text = symmetric_text(a, path)?;
        antinode_mesh::write_atomic(path, &text).map_err(|e| file_error(path, e.to_string()))?;
    }
    Ok(())
}

/// Reads a `coordinate real general|symmetric` file directly; `Ok(None)` for any other layout.
/// Symmetric files are expanded to both triangles, as nalgebra-sparse does.
fn read_plain(path: &Path, text: &str) -> Result<Option<CooMatrix<f64>>, SolverError> {
    let mut lines = text.lines();
    let Some(banner) = lines.next() else { return Ok(None) };
    let words: Vec<String> = banner.split_ascii_whitespace().map(str::to_ascii_lowercase).collect();
    let symmetric = match words.iter().map(String::as_str).collect::<Vec<_>>()[..] {
        ["%%matrixmarket", "matrix", "coordinate", "real", "symmetric"] => true,
        ["%%matrixmarket", "matrix", "coordinate", "real", "general"] => false,
        _ => return Ok(None),
    };
    let mut size = None;
    for line in lines.by_ref() {
        let t = line.trim();
        if t.is_empty() || t.starts_with('%') {
            continue;
        }
        size = Some(t.to_string());
        break;
    }
    let size = size.ok_or_else(|| file_error(path, "the size line is missing"))?;
    let dims: Vec<usize> = size
        .split_ascii_whitespace()
        .map(|w| w.parse::<usize>())
        .collect::<Result<_, _>>()
        .map_err(|_| file_error(path, format!("bad size line \"{size}\"")))?;
    let [nrows, ncols, nnz] = dims[..] else {
        return Err(file_error(path, format!("the size line \"{size}\" needs rows, columns and entries")));
    };
    let mut coo = CooMatrix::<f64>::new(nrows, ncols);
    let mut count = 0usize;
    for (k, line) in lines.enumerate() {
        let t = line.trim();
        if t.is_empty() || t.starts_with('%') {
            continue;
        }
        let mut w = t.split_ascii_whitespace();
        let bad = || {
            file_error(
                path,
                format!("entry line \"{t}\" (line {} after the size line) is not `row column value`", k + 1),
            )
        };
        let i: usize = w.next().and_then(|v| v.parse().ok()).ok_or_else(bad)?;
        let j: usize = w.next().and_then(|v| v.parse().ok()).ok_or_else(bad)?;
        let v: f64 = w.next().and_then(|v| v.parse().ok()).ok_or_else(bad)?;
        if w.next().is_some() {
            return Err(bad());
        }
        if i == 0 || j == 0 || i > nrows || j > ncols {
            return Err(file_error(path, format!("entry ({i}, {j}) lies outside the {nrows} × {ncols} matrix")));
        }
        if symmetric && j > i {
            return Err(file_error(path, format!("entry ({i}, {j}) is above the diagonal of a symmetric file")));
        }
        coo.push(i - 1, j - 1, v);
        if symmetric && i != j {
            coo.push(j - 1, i - 1, v);
        }
        count += 1;
    }
    if count != nnz {
        return Err(file_error(path, format!("the size line announces {nnz} entries but the file holds {count}")));
    }
    Ok(Some(coo))
}

fn read(path: &Path) -> Result<CscMatrix<f64>, SolverError> {
    let text = std::fs::read_to_string(path).map_err(|e| file_error(path, e.to_string()))?;
    let coo = match read_plain(path, &text)? {
        Some(c) => c,
        None => nalgebra_sparse::io::load_coo_from_matrix_market_str(&text)
            .map_err(|e| file_error(path, format!("not a readable real MatrixMarket coordinate file: {e}")))?,
    };
    drop(text);
    if coo.nrows() != coo.ncols() {
        return Err(file_error(path, format!("the matrix is {} × {}, not square", coo.nrows(), coo.ncols())));
    }
    if let Some((i, j, v)) = coo.triplet_iter().find(|(_, _, v)| !v.is_finite()) {
        return Err(file_error(path, format!("entry ({}, {}) = {v} is not finite", i + 1, j + 1)));
    }
    let csc = CscMatrix::from(&coo);
    // Symmetry (a symmetric file is symmetric by construction; a general one must be).
    let t = csc.transpose();
    let scale = csc.values().iter().fold(0.0f64, |m, v| m.max(v.abs()));
    let differs = csc.col_offsets() != t.col_offsets()
        || csc.row_indices() != t.row_indices()
        || csc.values().iter().zip(t.values()).any(|(a, b)| (a - b).abs() > 1e-12 * scale);
    if differs {
        return Err(file_error(path, "the matrix is not symmetric"));
    }
    Ok(csc)
}

/// Reads K and M from MatrixMarket files and builds a system on the union of their patterns. The
/// system has no geometry: its DOFs are the matrix rows, effective masses and the canonical
/// orientation of repeated modes (which need rigid-body motions) are not available.
///
/// # Errors
/// [`SolverError::MatrixFile`] naming the file for unreadable, non-square, non-symmetric or
/// non-finite matrices or mismatched sizes; [`SolverError::MasslessDof`] for rows with stiffness
/// and no mass.
pub fn system_from_matrix_market(k_path: &Path, m_path: &Path) -> Result<System, SolverError> {
    let k = read(k_path)?;
    let m = read(m_path)?;
    if k.nrows() != m.nrows() {
        return Err(file_error(
            m_path,
            format!("M is {} × {} but K is {} × {}", m.nrows(), m.nrows(), k.nrows(), k.nrows()),
        ));
    }
    let n = k.nrows();
    if n == 0 {
        return Err(file_error(k_path, "the matrix is empty"));
    }
    let mut pairs = Vec::with_capacity(k.nnz() + m.nnz() + n);
    let mut kv = Vec::with_capacity(pairs.capacity());
    let mut mv = Vec::with_capacity(pairs.capacity());
    for (which, a) in [(0, &k), (1, &m)] {
        for (i, j, v) in a.triplet_iter() {
            pairs.push(Pair { row: i, col: j });
            kv.push(if which == 0 { *v } else { 0.0 });
            mv.push(if which == 1 { *v } else { 0.0 });
        }
    }
    // Every row gets a diagonal entry, so the pattern is never structurally singular.
    for i in 0..n {
        pairs.push(Pair { row: i, col: i });
        kv.push(0.0);
        mv.push(0.0);
    }
    drop((k, m));
    System::from_entries(
        DofMap::rows(n),
        pairs,
        kv,
        mv,
        Geometry {
            node_xyz: Vec::new(),
            absorber_directions: Vec::new(),
            base_inertia: Mat::zeros(n, 6),
            rigid_mass: [[0.0; 6]; 6],
        },
    )
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn direct_reader_agrees_with_nalgebra_sparse() {
        let text = "%%MatrixMarket matrix coordinate real symmetric\n% comment\n3 3 4\n1 1 4.5\n2 1 -1.25e-3\n2 2 3\n3 3 1e300\n";
        let direct = read_plain(Path::new("t.mtx"), text).ok().flatten();
        let reference: Option<CooMatrix<f64>> = nalgebra_sparse::io::load_coo_from_matrix_market_str(text).ok();
        let (Some(a), Some(b)) = (direct, reference) else { panic!("both readers must read the file") };
        let (a, b) = (CscMatrix::from(&a), CscMatrix::from(&b));
        assert_eq!(a.col_offsets(), b.col_offsets());
        assert_eq!(a.row_indices(), b.row_indices());
        assert_eq!(a.values(), b.values());
    }

    #[test]
    fn direct_reader_rejects_entries_above_the_diagonal_and_bad_counts() {
        let above = "%%MatrixMarket matrix coordinate real symmetric\n2 2 1\n1 2 1.0\n";
        assert!(read_plain(Path::new("t.mtx"), above).is_err());
        let short = "%%MatrixMarket matrix coordinate real general\n2 2 3\n1 1 1.0\n";
        assert!(read_plain(Path::new("t.mtx"), short).is_err());
        let other = "%%MatrixMarket matrix coordinate integer general\n1 1 1\n1 1 2\n";
        assert!(matches!(read_plain(Path::new("t.mtx"), other), Ok(None)));
    }
}
