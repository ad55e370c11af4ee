//! Assembly of the global stiffness K and mass M on one sparsity pattern.
//!
//! Two phases: the pattern (union of every element's free-DOF pairs) is analysed once, then values
//! are filled from the element matrices through the pattern's argsort. K and M share the pattern
//! (M holds explicit zeros where only K has entries), so K − σM is a cheap value-wise combination and
//! one symbolic factorization serves every shift. Element matrices are computed in parallel and
//! scattered in a fixed order, so results do not depend on the thread count.

use antinode_mesh::{AbsorberSpec, MassMatrix, Structure};
use faer::sparse::{Pair, SparseColMat, SymbolicSparseColMat};
use faer::{Accum, Mat, MatRef, Par};
use rayon::prelude::*;

use crate::dofs::{DofMap, DofOwner};
use crate::element::beam::{MassKind, global_matrices};
use crate::element::point_mass::point_mass;
use crate::element::shell_quad::quad_matrices;
use crate::element::shell_tri::tri_matrices;
use crate::element::spring::link_stiffness;
use crate::error::SolverError;
use crate::factor::Factorizer;

/// Options for [`assemble`].
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq)]
pub struct AssemblyOptions {
    /// Add one DOF per absorber (its mass moving along its direction, on its spring). The
    /// absorbers' damping does not enter K and M.
    pub include_absorbers: bool,
}

/// An assembled model: free-DOF numbering, K and M on a shared pattern, and its symbolic analysis.
pub struct System {
    pub(crate) dofs: DofMap,
    pub(crate) k: SparseColMat<usize, f64>,
    /// M on its own (sparser) pattern, for products.
    pub(crate) m: SparseColMat<usize, f64>,
    /// Position in K's value array of each of M's stored values (M's pattern is inside K's).
    pub(crate) m_in_k: Vec<usize>,
    pub(crate) factorizer: Factorizer,
    /// Wall time of the symbolic analysis (fill-reducing orderings), in s.
    analysis_seconds: f64,
    pub(crate) node_xyz: Vec<[f64; 3]>,
    pub(crate) absorber_directions: Vec<[f64; 3]>,
    /// Inertia load of a unit rigid motion of everything, supports included: translations along X,
    /// Y, Z, then rotations about the global X, Y, Z axes through the origin:
    /// b_d = (M_full r_d) restricted to the free DOFs = M_ff r_f + M_fs r_s (n × 6).
    pub(crate) base_inertia: Mat<f64>,
    /// Rigid-body mass matrix rᵀ M_full r of the same six motions (supports included), in kg,
    /// kg·m and kg·m².
    pub(crate) rigid_mass: [[f64; 6]; 6],
}

/// One element's contribution: its DOFs, each as terms over the free DOFs (none if fixed, one if
/// free, a link's combination if a link moves it), and row-major K and M blocks on those DOFs; they
/// enter the global matrices as Tᵀ K T.
pub(crate) struct Block<'d> {
    label: String,
    /// Which item of the structure it comes from.
    pub(crate) source: BlockSource,
    /// Each block DOF as terms over the free DOFs.
    pub(crate) dofs: Vec<&'d [(usize, f64)]>,
    /// Displacement of each block DOF under the six unit rigid motions (translations along X, Y, Z,
    /// rotations about the global axes through the origin; fixed DOFs included: supports move with
    /// the base).
    rigid: Vec<[f64; 6]>,
    /// Row-major stiffness on the block DOFs.
    pub(crate) k: Vec<f64>,
    /// Row-major mass on the block DOFs.
    pub(crate) m: Vec<f64>,
}

/// The item of the structure an element block comes from (index into its list).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) enum BlockSource {
    Beam(usize),
    Shell(usize),
    Spring(usize),
    PointMass(usize),
    Absorber(usize),
}

/// The six DOFs of a node at `x` under the six unit rigid motions: translation t and rotation ω
/// move it by u = t + ω × x and turn it by ω.
fn node_rigid(x: [f64; 3]) -> [[f64; 6]; 6] {
    let mut r = [[0.0; 6]; 6];
    for c in 0..3 {
        r[c][c] = 1.0;
        r[3 + c][3 + c] = 1.0;
    }
    // ω × x for ω = e_x, e_y, e_z: (0, −z, y), (z, 0, −x), (−y, x, 0).
    r[1][3] = -x[2];
    r[2][3] = x[1];
    r[0][4] = x[2];
    r[2][4] = -x[0];
    r[0][5] = -x[1];
    r[1][5] = x[0];
    r
}

impl<'d> Block<'d> {
    fn new(label: String, source: BlockSource, dofs: Vec<&'d [(usize, f64)]>, rigid: Vec<[f64; 6]>) -> Self {
        let n = dofs.len();
        Self { label, source, dofs, rigid, k: vec![0.0; n * n], m: vec![0.0; n * n] }
    }

    /// A block over the six DOFs of each of `nodes`.
    fn on_nodes(label: String, source: BlockSource, s: &Structure, dofs: &'d DofMap, nodes: &[usize]) -> Self {
        let mut d = Vec::with_capacity(6 * nodes.len());
        let mut r = Vec::with_capacity(6 * nodes.len());
        for &n in nodes {
            d.extend((0..6).map(|c| dofs.terms(n, c)));
            r.extend(node_rigid(s.nodes[n].xyz));
        }
        Self::new(label, source, d, r)
    }
}

fn beam_block<'d>(s: &Structure, dofs: &'d DofMap, i: usize) -> Block<'d> {
    let b = &s.beams[i];
    let kind = mass_kind(s);
    let (k, m) =
        global_matrices(s.nodes[b.nodes[0]].xyz, s.nodes[b.nodes[1]].xyz, b.orientation, &b.section, &b.material, kind);
    let mut block = Block::on_nodes(b.label.clone(), BlockSource::Beam(i), s, dofs, &b.nodes);
    for r in 0..12 {
        for c in 0..12 {
            block.k[12 * r + c] = k[r][c];
            block.m[12 * r + c] = m[r][c];
        }
    }
    block
}

fn mass_kind(s: &Structure) -> MassKind {
    match s.mass_matrix {
        MassMatrix::Consistent => MassKind::Consistent,
        MassMatrix::Lumped => MassKind::Lumped,
    }
}

fn shell_block<'d>(s: &Structure, dofs: &'d DofMap, i: usize) -> Result<Block<'d>, SolverError> {
    let e = &s.shells[i];
    let xyz: Vec<[f64; 3]> = e.nodes.iter().map(|&n| s.nodes[n].xyz).collect();
    let kind = mass_kind(s);
    let matrices = match xyz.as_slice() {
        [a, b, c, d] => quad_matrices(&[*a, *b, *c, *d], e.thickness, &e.material, kind),
        [a, b, c] => tri_matrices(&[*a, *b, *c], e.thickness, &e.material, kind),
        _ => return Err(SolverError::Element { element: e.label.clone(), detail: "a shell has 3 or 4 nodes".into() }),
    }
    .map_err(|d| SolverError::Element { element: e.label.clone(), detail: d.to_string() })?;
    let mut block = Block::on_nodes(e.label.clone(), BlockSource::Shell(i), s, dofs, &e.nodes);
    block.k = matrices.stiffness;
    block.m = matrices.mass;
    Ok(block)
}

fn absorber_block<'d>(s: &Structure, a: &AbsorberSpec, dofs: &'d DofMap, index: usize) -> Block<'d> {
    // Spring energy ½ k (z − eᵀu)²: K = k [e eᵀ, −e; −eᵀ, 1] on [ux, uy, uz, z]; mass m on z.
    let e = a.direction.unit;
    let nr = node_rigid(s.nodes[a.node].xyz);
    // The absorber's mass moves with its node in a rigid motion: z = eᵀu.
    let along: [f64; 6] = std::array::from_fn(|d| (0..3).map(|c| e[c] * nr[c][d]).sum());
    let mut block = Block::new(
        format!("absorber \"{}\"", a.name),
        BlockSource::Absorber(index),
        vec![dofs.terms(a.node, 0), dofs.terms(a.node, 1), dofs.terms(a.node, 2), dofs.absorber_terms(index)],
        vec![nr[0], nr[1], nr[2], along],
    );
    let k = a.stiffness;
    for r in 0..3 {
        for c in 0..3 {
            block.k[4 * r + c] = k * e[r] * e[c];
        }
        block.k[4 * r + 3] = -k * e[r];
        block.k[12 + r] = -k * e[r];
    }
    block.k[15] = k;
    block.m[15] = a.mass;
    block
}

/// The element blocks of `s` on the numbering `dofs`: beams, shells, springs, point masses, then
/// absorbers (if included), each with its K and M.
///
/// # Errors
/// [`SolverError::Element`] for a shell whose matrices cannot be built, [`SolverError::NotFinite`]
/// naming an element whose matrices overflow.
pub(crate) fn element_blocks<'d>(
    s: &Structure,
    dofs: &'d DofMap,
    include_absorbers: bool,
) -> Result<Vec<Block<'d>>, SolverError> {
    let mut blocks: Vec<Block> = (0..s.beams.len()).into_par_iter().map(|i| beam_block(s, dofs, i)).collect();
    let shells: Result<Vec<Block>, SolverError> =
        (0..s.shells.len()).into_par_iter().map(|i| shell_block(s, dofs, i)).collect();
    blocks.extend(shells?);
    for (i, sp) in s.springs.iter().enumerate() {
        match sp.other {
            None => {
                let mut b = Block::on_nodes(sp.label.clone(), BlockSource::Spring(i), s, dofs, &[sp.node]);
                for d in 0..6 {
                    b.k[6 * d + d] = sp.stiffness[d];
                }
                blocks.push(b);
            }
            Some(o) => {
                let mut b = Block::on_nodes(sp.label.clone(), BlockSource::Spring(i), s, dofs, &[sp.node, o]);
                let k = link_stiffness(sp.stiffness);
                for r in 0..12 {
                    for c in 0..12 {
                        b.k[12 * r + c] = k[r][c];
                    }
                }
                blocks.push(b);
            }
        }
    }
    for (i, p) in s.point_masses.iter().enumerate() {
        let mut b = Block::on_nodes(format!("point_masses[{i}]"), BlockSource::PointMass(i), s, dofs, &[p.node]);
        b.m = point_mass(p.mass, p.inertia).concat();
        blocks.push(b);
    }
    if include_absorbers {
        for (i, a) in s.absorbers.iter().enumerate() {
            blocks.push(absorber_block(s, a, dofs, i));
        }
    }
    for b in &blocks {
        if b.k.iter().chain(&b.m).any(|v| !v.is_finite()) {
            return Err(SolverError::NotFinite { what: format!("the matrices of {}", b.label) });
        }
    }
    Ok(blocks)
}

/// Assembles K and M of `s`.
///
/// # Errors
/// [`SolverError::NoFreeDofs`] if nothing can move, [`SolverError::NotFinite`] naming an element
/// whose matrices overflow, [`SolverError::MasslessDof`] for a DOF with stiffness but no mass.
pub fn assemble(s: &Structure, options: AssemblyOptions) -> Result<System, SolverError> {
    let dofs = DofMap::new(s, options.include_absorbers);
    let n = dofs.n_dofs();
    if n == 0 {
        return Err(SolverError::NoFreeDofs);
    }
    let blocks = element_blocks(s, &dofs, options.include_absorbers)?;
    // The entry lists are sized exactly up front: grown by doubling they held up to twice the
    // entries, and a reallocation briefly holds the old and the new list (the peak memory of a
    // whole run on shell models is set here).
    let entries = n + blocks
        .iter()
        .map(|b| {
            let w: usize = b.dofs.iter().map(|d| d.len()).sum();
            w * w
        })
        .sum::<usize>();
    let mut pairs = Vec::with_capacity(entries);
    let mut kv = Vec::with_capacity(entries);
    let mut mv = Vec::with_capacity(entries);
    let mut base_inertia = Mat::<f64>::zeros(n, 6);
    let mut rigid_mass = [[0.0; 6]; 6];
    for b in &blocks {
        let nb = b.dofs.len();
        for r in 0..nb {
            for c in 0..nb {
                let m = b.m[nb * r + c];
                if m != 0.0 {
                    for d in 0..6 {
                        for e in 0..6 {
                            rigid_mass[d][e] += b.rigid[r][d] * m * b.rigid[c][e];
                        }
                    }
                }
            }
            for &(i, wi) in b.dofs[r] {
                for c in 0..nb {
                    let (k, m) = (b.k[nb * r + c], b.m[nb * r + c]);
                    for d in 0..6 {
                        base_inertia[(i, d)] += wi * m * b.rigid[c][d];
                    }
                    for &(j, wj) in b.dofs[c] {
                        pairs.push(Pair { row: i, col: j });
                        kv.push(wi * wj * k);
                        mv.push(wi * wj * m);
                    }
                }
            }
        }
    }
    // Every free DOF gets a diagonal entry, so the pattern is never structurally singular.
    for i in 0..n {
        pairs.push(Pair { row: i, col: i });
        kv.push(0.0);
        mv.push(0.0);
    }
    // The element matrices are no longer needed: free them before the matrices are built and
    // analysed (the peak memory of the run).
    drop(blocks);
    System::from_entries(
        dofs,
        pairs,
        kv,
        mv,
        Geometry {
            node_xyz: s.nodes.iter().map(|p| p.xyz).collect(),
            absorber_directions: s.absorbers.iter().map(|a| a.direction.unit).collect(),
            base_inertia,
            rigid_mass,
        },
    )
}

/// What a system knows of its geometry (empty for matrices read from files).
pub(crate) struct Geometry {
    pub node_xyz: Vec<[f64; 3]>,
    pub absorber_directions: Vec<[f64; 3]>,
    pub base_inertia: Mat<f64>,
    pub rigid_mass: [[f64; 6]; 6],
}

impl System {
    /// Builds K and M from entries `(pairs[i], kv[i])` and `(pairs[i], mv[i])` (duplicates summed) on
    /// their union pattern, analyses it, and checks that every DOF with stiffness has mass. The
    /// entry lists are consumed and freed before the symbolic analysis, which would otherwise run
    /// beside them at the peak memory of the whole run.
    pub(crate) fn from_entries(
        dofs: DofMap,
        pairs: Vec<Pair<usize, usize>>,
        kv: Vec<f64>,
        mv: Vec<f64>,
        geometry: Geometry,
    ) -> Result<System, SolverError> {
        let n = dofs.n_dofs();
        let (pattern, argsort) = SymbolicSparseColMat::try_new_from_indices(n, n, &pairs)
            .map_err(|e| SolverError::Factorization { shift: 0.0, detail: format!("pattern: {e:?}") })?;
        let k = SparseColMat::new_from_argsort(pattern.clone(), &argsort, &kv)
            .map_err(|e| SolverError::Factorization { shift: 0.0, detail: format!("stiffness values: {e:?}") })?;
        drop((argsort, kv));
        // M on the pattern of its own non-zero entries (plus the diagonal), often several times
        // sparser than K's (no drilling or shear couplings), which makes products with M cheaper.
        let mut m_pairs = Vec::new();
        let mut m_vals = Vec::new();
        for (pr, &v) in pairs.iter().zip(&mv) {
            if v != 0.0 {
                m_pairs.push(*pr);
                m_vals.push(v);
            }
        }
        for i in 0..n {
            m_pairs.push(Pair { row: i, col: i });
            m_vals.push(0.0);
        }
        let (m_pattern, m_argsort) = SymbolicSparseColMat::try_new_from_indices(n, n, &m_pairs)
            .map_err(|e| SolverError::Factorization { shift: 0.0, detail: format!("mass pattern: {e:?}") })?;
        let m = SparseColMat::new_from_argsort(m_pattern, &m_argsort, &m_vals)
            .map_err(|e| SolverError::Factorization { shift: 0.0, detail: format!("mass values: {e:?}") })?;
        drop((pairs, mv, m_pairs, m_vals, m_argsort));
        // Finite element matrices can still sum to an infinity (two springs of 1e308 N/m on one DOF).
        for (a, what) in [(&k, "stiffness"), (&m, "mass")] {
            if let Some((i, j)) = first_non_finite(a) {
                return Err(SolverError::NotFinite {
                    what: format!(
                        "the assembled {what} matrix at ({}, {}): the elements there sum to an infinity; check the \
                         stiffnesses and masses at those DOFs",
                        dofs.describe(i),
                        dofs.describe(j)
                    ),
                });
            }
        }
        let m_in_k = positions_in(&k, &m);
        let t0 = std::time::Instant::now();
        let factorizer = Factorizer::new(&pattern)?;
        let analysis_seconds = t0.elapsed().as_secs_f64();
        let system = System {
            factorizer,
            analysis_seconds,
            dofs,
            k,
            m,
            m_in_k,
            node_xyz: geometry.node_xyz,
            absorber_directions: geometry.absorber_directions,
            base_inertia: geometry.base_inertia,
            rigid_mass: geometry.rigid_mass,
        };
        let (kd, md) = (system.diagonal(&system.k), system.diagonal(&system.m));
        let massless: Vec<String> =
            (0..n).filter(|&i| md[i] <= 0.0 && kd[i] > 0.0).map(|i| system.dofs.describe(i)).collect();
        if !massless.is_empty() {
            let shown: Vec<&str> = massless.iter().take(6).map(String::as_str).collect();
            return Err(SolverError::MasslessDof {
                count: massless.len(),
                dofs: format!("{}{}", shown.join(", "), if massless.len() > 6 { ", ..." } else { "" }),
            });
        }
        Ok(system)
    }

    /// Wall time of the symbolic analysis done when the system was built (the fill-reducing
    /// orderings shared by every shifted factorization), in s.
    pub fn analysis_seconds(&self) -> f64 {
        self.analysis_seconds
    }

    /// The DOF numbering.
    pub fn dof_map(&self) -> &DofMap {
        &self.dofs
    }

    /// Number of free DOFs.
    pub fn n_dofs(&self) -> usize {
        self.dofs.n_dofs()
    }

    /// Inertia load of a unit rigid translation of everything along the unit vector `d`, supports
    /// included: b = M_ff r_f + M_fs r_s over the free DOFs, in N per m/s² (the load of a base
    /// acceleration is −b ü_g; see [`crate::BaseMotion`]). Zero for matrices read from files,
    /// which carry no geometry.
    pub fn base_load(&self, d: [f64; 3]) -> Vec<f64> {
        (0..self.n_dofs()).map(|i| (0..3).map(|k| self.base_inertia[(i, k)] * d[k]).sum()).collect()
    }

    /// M x for a vector over the free DOFs (e.g. for mass-weighted comparisons of modes), in N per
    /// m/s² of x.
    ///
    /// # Panics
    /// If `x.len()` is not the number of free DOFs.
    pub fn mass_times(&self, x: &[f64]) -> Vec<f64> {
        assert_eq!(x.len(), self.n_dofs(), "vector length must be the number of free DOFs");
        let y = self.mul_m(faer::ColRef::from_slice(x).as_mat());
        (0..x.len()).map(|i| y[(i, 0)]).collect()
    }

    /// Dense row-major copies of K and M over the free DOFs (n × n each, in N/m and kg with the
    /// rotational DOFs' units), for checks on small systems (symmetry, definiteness, comparisons
    /// with other codes). Memory is 16 n² bytes: not for large models.
    pub fn dense_matrices(&self) -> (Vec<f64>, Vec<f64>) {
        let (k, m) = self.dense();
        let n = self.n_dofs();
        let rows = |a: &Mat<f64>| (0..n).flat_map(|i| (0..n).map(move |j| (i, j))).map(|(i, j)| a[(i, j)]).collect();
        (rows(&k), rows(&m))
    }

    /// Number of stored entries of K (both triangles).
    pub fn n_stored(&self) -> usize {
        self.k.val().len()
    }

    pub(crate) fn diagonal(&self, a: &SparseColMat<usize, f64>) -> Vec<f64> {
        let n = a.ncols();
        let sym = a.symbolic();
        let mut d = vec![0.0; n];
        for (j, dj) in d.iter_mut().enumerate() {
            for (p, &i) in sym.col_range(j).zip(sym.row_idx_of_col_raw(j)) {
                if i == j {
                    *dj += a.val()[p];
                }
            }
        }
        d
    }

    /// Y = K X.
    pub(crate) fn mul_k(&self, x: MatRef<'_, f64>) -> Mat<f64> {
        mul(&self.k, x)
    }

    /// Values of K − σM on K's pattern.
    pub(crate) fn shifted(&self, sigma: f64) -> SparseColMat<usize, f64> {
        let mut out = self.k.clone();
        let vals = out.val_mut();
        for (&pos, &mv) in self.m_in_k.iter().zip(self.m.val()) {
            vals[pos] -= sigma * mv;
        }
        out
    }

    /// Y = M X.
    pub(crate) fn mul_m(&self, x: MatRef<'_, f64>) -> Mat<f64> {
        mul(&self.m, x)
    }

    /// Dense copies of K and M (for the dense reference solver and small problems).
    pub(crate) fn dense(&self) -> (Mat<f64>, Mat<f64>) {
        (self.k.to_dense(), self.m.to_dense())
    }

    /// Sum of the translational mass per global direction over the free DOFs: rᵀ M r for the unit
    /// rigid translation r along X, Y, Z, in kg.
    pub fn unrestrained_mass(&self) -> [f64; 3] {
        let r = self.translation_vectors();
        let mr = self.mul_m(r.as_ref());
        let mut out = [0.0; 3];
        for (d, o) in out.iter_mut().enumerate() {
            *o = (0..self.n_dofs()).map(|i| r[(i, d)] * mr[(i, d)]).sum();
        }
        out
    }

    /// Unit rigid translations along X, Y, Z over the free DOFs (an n × 3 matrix; absorber DOFs
    /// move with their direction's share).
    pub(crate) fn translation_vectors(&self) -> Mat<f64> {
        let n = self.n_dofs();
        let mut r = Mat::<f64>::zeros(n, 3);
        for i in 0..n {
            match self.dofs.owner(i) {
                DofOwner::Node { component, .. } if component < 3 => r[(i, component)] = 1.0,
                DofOwner::Node { .. } | DofOwner::Row { .. } => {}
                DofOwner::Absorber { absorber } => {
                    for d in 0..3 {
                        r[(i, d)] = self.absorber_directions[absorber][d];
                    }
                }
            }
        }
        r
    }
}

/// Row and column of the first stored entry of `a` that is not finite (column by column).
pub(crate) fn first_non_finite(a: &SparseColMat<usize, f64>) -> Option<(usize, usize)> {
    let sym = a.symbolic();
    (0..a.ncols()).find_map(|j| {
        sym.col_range(j).zip(sym.row_idx_of_col_raw(j)).find(|&(p, _)| !a.val()[p].is_finite()).map(|(_, &i)| (i, j))
    })
}

/// For each stored entry of `sub` (whose pattern lies inside `a`'s), its position in `a`'s values.
fn positions_in(a: &SparseColMat<usize, f64>, sub: &SparseColMat<usize, f64>) -> Vec<usize> {
    let (sa, ss) = (a.symbolic(), sub.symbolic());
    let mut out = Vec::with_capacity(sub.val().len());
    for j in 0..sub.ncols() {
        let rows_a = sa.row_idx_of_col_raw(j);
        let start = sa.col_range(j).start;
        for &i in ss.row_idx_of_col_raw(j) {
            // Both are sorted; the entry exists because K's pattern holds M's.
            let pos = rows_a.partition_point(|&r| r < i);
            out.push(start + pos);
        }
    }
    out
}

fn mul(a: &SparseColMat<usize, f64>, x: MatRef<'_, f64>) -> Mat<f64> {
    let mut y = Mat::<f64>::zeros(a.nrows(), x.ncols());
    faer::sparse::linalg::matmul::sparse_dense_matmul(y.as_mut(), Accum::Replace, a.as_ref(), x, 1.0, Par::Seq);
    y
}

#[cfg(test)]
mod tests {
    use super::*;

    fn no_geometry(n: usize) -> Geometry {
        Geometry {
            node_xyz: vec![],
            absorber_directions: vec![],
            base_inertia: Mat::zeros(n, 6),
            rigid_mass: [[0.0; 6]; 6],
        }
    }

    /// Two finite contributions of 1e308 to one entry sum to an infinity (IEEE 754 overflow): the
    /// assembled matrix is refused and the entry named by its DOFs.
    #[test]
    fn an_assembled_infinity_is_named_by_its_dofs() {
        let pairs = vec![Pair { row: 0, col: 0 }, Pair { row: 1, col: 1 }, Pair { row: 1, col: 1 }];
        let err = System::from_entries(
            DofMap::rows(2),
            pairs.clone(),
            vec![1.0, 1e308, 1e308],
            vec![1.0, 1.0, 1.0],
            no_geometry(2),
        )
        .err()
        .expect("an overflowing sum is an error");
        let text = err.to_string();
        assert!(matches!(err, SolverError::NotFinite { .. }), "{text}");
        assert!(text.contains("assembled stiffness matrix at (row 2, row 2)"), "{text}");
        let err = System::from_entries(
            DofMap::rows(2),
            pairs.clone(),
            vec![1.0, 1.0, 1.0],
            vec![1.0, 1e308, 1e308],
            no_geometry(2),
        )
        .err()
        .expect("an overflowing mass is an error");
        assert!(err.to_string().contains("assembled mass matrix at (row 2, row 2)"), "{err}");
        // The same entries with finite sums assemble.
        assert!(
            System::from_entries(DofMap::rows(2), pairs, vec![1.0, 1e307, 1e307], vec![1.0; 3], no_geometry(2)).is_ok()
        );
    }
}
