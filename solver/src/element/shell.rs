//! Shared parts of the flat shell elements ([`super::shell_quad`], [`super::shell_tri`]): the local
//! frame of a facet, the constitutive matrices, the drilling penalty, mass lumping and the
//! transformation from local to global axes.
//!
//! # Units, DOFs and axes
//! SI units: coordinates and thickness in m, moduli in Pa, density in kg/m³. Every node carries
//! six DOFs, in global axes `[ux, uy, uz, rx, ry, rz]`, node by node; element matrices are
//! row-major n×n with n = 6·nodes. Inside a kernel the same order is used in local axes,
//! `[u, v, w, θx, θy, θz]`, where θz is the drilling rotation (about the facet normal).
//!
//! # Local frame
//! For a quadrilateral 1-2-3-4 the mean plane passes through the centroid c = ¼ Σ xᵢ, with normal
//! along the cross product of the diagonals; for a triangle it is the plane of the nodes:
//!
//! ```text
//! quad:  e_z = (x₃ − x₁) × (x₄ − x₂) / |(x₃ − x₁) × (x₄ − x₂)|
//! tri:   e_z = (x₂ − x₁) × (x₃ − x₁) / |(x₂ − x₁) × (x₃ − x₁)|
//! e_x = projection of x₂ − x₁ on the plane, normalised;   e_y = e_z × e_x
//! ```
//!
//! so the nodes run counter-clockwise about e_z (right-hand rule of the node order), which is the
//! reported `normal`. Each node is projected onto the mean plane, pᵢ = xᵢ − hᵢ e_z with height
//! hᵢ = (xᵢ − c)·e_z (for a quad the heights are ±h, alternating), and the flat element is built on
//! the projected nodes. The warp reported is
//!
//! ```text
//! warp = max |hᵢ| / √A        (A = area of the projected element, in m²; dimensionless)
//! ```
//!
//! which is zero for a flat facet; as a rule of thumb (not derived here), above about 0.01–0.05
//! a flat facet is a poor model of the surface and the mesh should be refined.
//!
//! # Warped facets: rigid offsets
//! A warped quad is joined to its nodes by rigid offsets from xᵢ to pᵢ (the usual projection of a
//! warped facet, e.g. Cook, Malkus, Plesha & Witt, Concepts and Applications of Finite Element
//! Analysis, 4th ed., 2002, chapter on flat shell elements, from memory). With u, θ the local
//! node DOFs, the projected point moves by
//!
//! ```text
//! u_p = u + θ × (pᵢ − xᵢ) = u − hᵢ θ × e_z:   u_p = u − hᵢ θy,  v_p = v + hᵢ θx,  w_p = w,  θ_p = θ
//! ```
//!
//! so a rigid motion of the nodes is a rigid motion of the projected element and the six
//! rigid-body modes stay exactly zero-energy. Per node the global-to-local map is
//!
//! ```text
//! Sᵢ = [ R   Hᵢ R ]      R = [e_x; e_y; e_z] (rows),   Hᵢ = [ 0  −hᵢ  0 ]
//!      [ 0    R   ]                                          [ hᵢ  0   0 ]
//!                                                            [ 0   0   0 ]
//! K = Sᵀ K_local S,   S = diag(S₁, …, S_N)
//! ```
//!
//! The consistent mass is transformed the same way; the lumped mass is kept at the nodes without
//! offsets, so it stays diagonal (an offset would couple translations and rotations, an O(h)
//! change on a diagonal of order ρtA); its node blocks are m·I₃ and r·I₃, the same in every frame.
//!
//! # Constitutive matrices (isotropic, plane stress)
//! ```text
//! C = [ E/(1−ν²)   νE/(1−ν²)  0 ]      membrane  N = t C ε            (N/m)
//!     [ νE/(1−ν²)  E/(1−ν²)   0 ]      bending   M = (t³/12) C κ      (N·m/m)
//!     [ 0          0          G ]      shear     Q = κₛ G t γ,  κₛ = 5/6 (N/m)
//! ```
//!
//! The in-plane shear term uses the material's shear modulus G; for an isotropic material
//! G = E/(2(1+ν)) and C is the usual plane-stress matrix (Timoshenko & Woinowsky-Krieger, Theory of
//! Plates and Shells, 2nd ed., 1959, §1–2; D = Et³/(12(1−ν²))). κₛ = 5/6 is Reissner's shear
//! correction factor for a homogeneous plate.
//!
//! # Drilling rotation
//! The quad's membrane (bilinear + incompatible modes) has no stiffness for θz; it adds the penalty
//! of Hughes & Brezzi ("On drilling degrees of freedom", Comput. Methods Appl. Mech. Eng. 72, 1989,
//! the skew-symmetric term of their functional; from memory),
//!
//! ```text
//! Π_drill = ½ ∫_A γ_d (θz − ω)² dA,   ω = ½ (∂v/∂x − ∂u/∂y),   γ_d = α G t,  α = DRILLING_PENALTY
//! ```
//!
//! which vanishes for every rigid motion (in-plane rotation gives θz = ω), so it adds no
//! zero-energy mode and spoils none. A plain spring on θz would not be rigid-body safe once the
//! element is not flat or its axes are not global. α = 10⁻³ keeps the penalty three orders of
//! magnitude below the membrane stiffness, so in-plane results move by well under 0.1 % (checked in
//! the element tests by raising α tenfold), while the drilling modes stay far above the bending
//! modes (ω² ≈ 12 α G/(ρ t²)). The triangle's membrane (OPT, [`super::shell_tri`]) has genuine
//! corner rotations with a rank-sufficient stiffness and needs no penalty; [`drilling_modulus`]
//! is then unused by it.
//!
//! # Mass
//! Consistent: ρt ∫ NᵀN dA on the three translations and ρt³/12 ∫ NᵀN dA on the three rotations.
//! The drilling rotation gets the same rotary inertia as the bending rotations, so M has no zero
//! row and is positive definite (with the triangle's stiff drilling this puts the drilling modes at
//! ω² ~ 12E/(ρt²), far above the structural modes). Lumped: the diagonal of the consistent mass scaled per DOF kind so
//! that each translation sums to ρtA and each rotation to ρt³A/12 (Hinton, Rock & Zienkiewicz,
//! Earthquake Eng. Struct. Dyn. 4, 1976, "HRZ" lumping).

use antinode_mesh::MaterialProperties;

pub use crate::element::beam::MassKind;

/// Reissner's shear correction factor κₛ = 5/6 of a homogeneous plate.
pub const SHEAR_CORRECTION: f64 = 5.0 / 6.0;

/// Drilling penalty factor α in γ_d = α G t (see the module documentation).
pub const DRILLING_PENALTY: f64 = 1e-3;

/// Two nodes closer than this fraction of the element diameter count as coincident.
const COINCIDENT_TOLERANCE: f64 = 1e-8;

/// Triangle areas and corner Jacobians below this fraction of diameter² count as zero.
const AREA_TOLERANCE: f64 = 1e-10;

/// Element matrices in GLOBAL axes, row-major n×n with n = 6·nodes, DOF order node by node
/// `[ux, uy, uz, rx, ry, rz]`.
#[derive(Debug, Clone, PartialEq)]
pub struct ShellMatrices {
    /// Number of nodes (3 or 4).
    pub n_nodes: usize,
    /// Stiffness, row-major n×n, in N/m, N and N·m per unit displacement or rotation.
    pub stiffness: Vec<f64>,
    /// Mass, row-major n×n, in kg (translations) and kg·m² (rotations).
    pub mass: Vec<f64>,
    /// Unit normal of the (mean) plane, right-hand rule of the node order.
    pub normal: [f64; 3],
    /// Area of the (projected) element, in m².
    pub area: f64,
    /// Warp: largest distance of a node from the mean plane divided by √area; 0 for a flat facet.
    pub warp: f64,
}

/// Why element matrices cannot be built.
#[derive(Debug, Clone, Copy, PartialEq, Eq, thiserror::Error)]
pub enum ShellDefect {
    /// The thickness is not a finite positive number.
    #[error("the shell thickness is not a finite positive number")]
    NonPositiveThickness,
    /// Zero area: coincident or collinear nodes, non-finite coordinates, or matrices that are not
    /// finite (coordinates or material constants so large or invalid that products overflow).
    #[error("the shell element is degenerate: coincident or collinear nodes, or non-finite values")]
    Degenerate,
    /// The Jacobian is ≤ 0 somewhere: a bow-tie or a non-convex quadrilateral.
    #[error("the shell element is inverted: a bow-tie or non-convex quadrilateral")]
    Inverted,
}

/// Local frame of a facet with `N` nodes: axes, projected nodes, heights, area and warp.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct LocalFrame<const N: usize> {
    /// Centroid of the nodes (origin of the local coordinates), in m.
    pub origin: [f64; 3],
    /// Rows e_x, e_y, e_z: local axes as unit vectors in global coordinates (u_local = R u_global).
    pub axes: [[f64; 3]; 3],
    /// Local (x, y) coordinates of the projected nodes, in m.
    pub xy: [[f64; 2]; N],
    /// Heights hᵢ = (xᵢ − c)·e_z of the nodes above the mean plane, in m.
    pub heights: [f64; N],
    /// Area of the projected element, in m².
    pub area: f64,
    /// max |hᵢ| / √area.
    pub warp: f64,
}

fn sub(a: [f64; 3], b: [f64; 3]) -> [f64; 3] {
    [a[0] - b[0], a[1] - b[1], a[2] - b[2]]
}

fn dot(a: [f64; 3], b: [f64; 3]) -> f64 {
    a[0] * b[0] + a[1] * b[1] + a[2] * b[2]
}

fn cross(a: [f64; 3], b: [f64; 3]) -> [f64; 3] {
    [a[1] * b[2] - a[2] * b[1], a[2] * b[0] - a[0] * b[2], a[0] * b[1] - a[1] * b[0]]
}

fn norm(a: [f64; 3]) -> f64 {
    dot(a, a).sqrt()
}

fn scale(a: [f64; 3], s: f64) -> [f64; 3] {
    [a[0] * s, a[1] * s, a[2] * s]
}

/// `value > bound`, false when either is NaN (the defect checks reject NaN through it).
pub(crate) fn exceeds(value: f64, bound: f64) -> bool {
    value > bound
}

/// Checks finiteness and coincident nodes; returns the diameter (largest node distance), in m.
fn diameter<const N: usize>(xyz: &[[f64; 3]; N]) -> Result<f64, ShellDefect> {
    if xyz.iter().flatten().any(|c| !c.is_finite()) {
        return Err(ShellDefect::Degenerate);
    }
    let mut d = 0.0f64;
    for i in 0..N {
        for j in i + 1..N {
            d = d.max(norm(sub(xyz[j], xyz[i])));
        }
    }
    if !(d > 0.0 && d.is_finite()) {
        return Err(ShellDefect::Degenerate);
    }
    for i in 0..N {
        for j in i + 1..N {
            if norm(sub(xyz[j], xyz[i])) <= COINCIDENT_TOLERANCE * d {
                return Err(ShellDefect::Degenerate);
            }
        }
    }
    Ok(d)
}

/// Builds the frame from the unit normal `ez`: projects the nodes and measures the warp.
fn frame_from_normal<const N: usize>(
    xyz: &[[f64; 3]; N],
    ez: [f64; 3],
    diam: f64,
) -> Result<LocalFrame<N>, ShellDefect> {
    let mut origin = [0.0; 3];
    for p in xyz {
        for c in 0..3 {
            origin[c] += p[c] / N as f64;
        }
    }
    let side = sub(xyz[1], xyz[0]);
    let in_plane = sub(side, scale(ez, dot(side, ez)));
    let len = norm(in_plane);
    if len <= COINCIDENT_TOLERANCE * diam {
        return Err(ShellDefect::Degenerate);
    }
    let ex = scale(in_plane, 1.0 / len);
    let ey = cross(ez, ex);
    let mut xy = [[0.0; 2]; N];
    let mut heights = [0.0; N];
    for i in 0..N {
        let r = sub(xyz[i], origin);
        xy[i] = [dot(r, ex), dot(r, ey)];
        heights[i] = dot(r, ez);
    }
    // Shoelace area of the projected polygon.
    let mut twice = 0.0;
    for i in 0..N {
        let (a, b) = (xy[i], xy[(i + 1) % N]);
        twice += a[0] * b[1] - b[0] * a[1];
    }
    let area = 0.5 * twice;
    if !exceeds(area, AREA_TOLERANCE * diam * diam) {
        return Err(ShellDefect::Degenerate);
    }
    let warp = heights.iter().fold(0.0f64, |m, h| m.max(h.abs())) / area.sqrt();
    Ok(LocalFrame { origin, axes: [ex, ey, ez], xy, heights, area, warp })
}

/// Local frame of a quadrilateral 1-2-3-4 (possibly warped): mean plane through the centroid with
/// normal along the cross product of the diagonals.
///
/// Errors: [`ShellDefect::Degenerate`] for non-finite coordinates, coincident or collinear nodes;
/// [`ShellDefect::Inverted`] when the diagonals are parallel (a bow-tie or a quad folded onto
/// itself) or a corner of the projected quad has a Jacobian ≤ 0 (non-convex or bow-tie). The
/// bilinear Jacobian is linear in each natural coordinate, so positive corners mean a positive
/// Jacobian everywhere.
pub fn quad_frame(xyz: &[[f64; 3]; 4]) -> Result<LocalFrame<4>, ShellDefect> {
    let diam = diameter(xyz)?;
    // Collinear: every triangle of three nodes has (almost) zero area.
    let mut largest = 0.0f64;
    for (a, b, c) in [(0, 1, 2), (0, 1, 3), (0, 2, 3), (1, 2, 3)] {
        largest = largest.max(0.5 * norm(cross(sub(xyz[b], xyz[a]), sub(xyz[c], xyz[a]))));
    }
    if !exceeds(largest, AREA_TOLERANCE * diam * diam) {
        return Err(ShellDefect::Degenerate);
    }
    let d1 = sub(xyz[2], xyz[0]);
    let d2 = sub(xyz[3], xyz[1]);
    let n = cross(d1, d2);
    let nn = norm(n);
    if !exceeds(nn, AREA_TOLERANCE * diam * diam) {
        return Err(ShellDefect::Inverted);
    }
    let frame = frame_from_normal(xyz, scale(n, 1.0 / nn), diam)?;
    for i in 0..4 {
        let p = frame.xy[i];
        let next = frame.xy[(i + 1) % 4];
        let prev = frame.xy[(i + 3) % 4];
        let (a, b) = ([next[0] - p[0], next[1] - p[1]], [prev[0] - p[0], prev[1] - p[1]]);
        if !exceeds(a[0] * b[1] - a[1] * b[0], AREA_TOLERANCE * diam * diam) {
            return Err(ShellDefect::Inverted);
        }
    }
    Ok(frame)
}

/// Local frame of a triangle 1-2-3: the plane of the nodes, e_x along side 1→2.
///
/// Errors: [`ShellDefect::Degenerate`] for non-finite coordinates, coincident or collinear nodes.
pub fn tri_frame(xyz: &[[f64; 3]; 3]) -> Result<LocalFrame<3>, ShellDefect> {
    let diam = diameter(xyz)?;
    let n = cross(sub(xyz[1], xyz[0]), sub(xyz[2], xyz[0]));
    let nn = norm(n);
    if !exceeds(0.5 * nn, AREA_TOLERANCE * diam * diam) {
        return Err(ShellDefect::Degenerate);
    }
    frame_from_normal(xyz, scale(n, 1.0 / nn), diam)
}

/// Checks the thickness, in m.
pub fn check_thickness(thickness: f64) -> Result<(), ShellDefect> {
    if thickness > 0.0 && thickness.is_finite() { Ok(()) } else { Err(ShellDefect::NonPositiveThickness) }
}

/// Plane-stress matrix C per unit thickness, in Pa (see the module documentation).
pub fn plane_stress(material: &MaterialProperties) -> [[f64; 3]; 3] {
    let (e, nu, g) = (material.youngs_modulus, material.poisson_ratio, material.shear_modulus);
    let c = e / (1.0 - nu * nu);
    [[c, nu * c, 0.0], [nu * c, c, 0.0], [0.0, 0.0, g]]
}

/// Membrane stiffness t C, in N/m.
pub fn membrane_rigidity(material: &MaterialProperties, thickness: f64) -> [[f64; 3]; 3] {
    plane_stress(material).map(|row| row.map(|v| v * thickness))
}

/// Bending stiffness (t³/12) C, in N·m.
pub fn bending_rigidity(material: &MaterialProperties, thickness: f64) -> [[f64; 3]; 3] {
    let f = thickness.powi(3) / 12.0;
    plane_stress(material).map(|row| row.map(|v| v * f))
}

/// Transverse shear stiffness κₛ G t with κₛ = 5/6, in N/m.
pub fn shear_rigidity(material: &MaterialProperties, thickness: f64) -> f64 {
    SHEAR_CORRECTION * material.shear_modulus * thickness
}

/// Drilling penalty modulus γ_d = α G t for penalty factor `alpha`, in N/m.
pub fn drilling_modulus(material: &MaterialProperties, thickness: f64, alpha: f64) -> f64 {
    alpha * material.shear_modulus * thickness
}

/// HRZ lumping of a consistent local mass `m` (row-major n×n, six DOFs per node): keeps the
/// diagonal, scaled per DOF kind so that each translation sums to `mass` (kg) and each rotation to
/// `rotary` (kg·m²). When the three translations (and the three rotations) of a node have equal
/// consistent diagonals, as in both kernels, the lumped node blocks are multiples of I₃ and so
/// independent of the axes.
pub fn lump_hrz(m: &[f64], n_nodes: usize, mass: f64, rotary: f64) -> Vec<f64> {
    let n = 6 * n_nodes;
    let mut out = vec![0.0; n * n];
    for kind in 0..6 {
        let total = if kind < 3 { mass } else { rotary };
        let sum: f64 = (0..n_nodes).map(|a| m[(6 * a + kind) * n + 6 * a + kind]).sum();
        let c = if sum > 0.0 { total / sum } else { 0.0 };
        for a in 0..n_nodes {
            let i = 6 * a + kind;
            out[i * n + i] = c * m[i * n + i];
        }
    }
    out
}

/// Node transformation Sᵢ (6×6) from global node DOFs to the local DOFs of the projected node,
/// with rigid offset height `h` (see the module documentation).
fn node_transform(r: &[[f64; 3]; 3], h: f64) -> [[f64; 6]; 6] {
    let mut s = [[0.0; 6]; 6];
    for i in 0..3 {
        for j in 0..3 {
            s[i][j] = r[i][j];
            s[3 + i][3 + j] = r[i][j];
        }
    }
    // Hᵢ R: row 0 = −h·(row 1 of R), row 1 = h·(row 0 of R).
    for j in 0..3 {
        s[0][3 + j] = -h * r[1][j];
        s[1][3 + j] = h * r[0][j];
    }
    s
}

/// Transforms a local matrix `a` (row-major n×n, n = 6N) to global axes: Sᵀ A S, with the rigid
/// offsets of `frame` when `offsets` is true and the rotation alone otherwise.
pub fn to_global<const N: usize>(a: &[f64], frame: &LocalFrame<N>, offsets: bool) -> Vec<f64> {
    let n = 6 * N;
    let s: Vec<[[f64; 6]; 6]> =
        frame.heights.iter().map(|&h| node_transform(&frame.axes, if offsets { h } else { 0.0 })).collect();
    // B = A S (block columns), then C = Sᵀ B (block rows).
    let mut b = vec![0.0; n * n];
    for i in 0..n {
        for (bj, sj) in s.iter().enumerate() {
            for j in 0..6 {
                let mut acc = 0.0;
                for k in 0..6 {
                    acc += a[i * n + 6 * bj + k] * sj[k][j];
                }
                b[i * n + 6 * bj + j] = acc;
            }
        }
    }
    let mut c = vec![0.0; n * n];
    for (bi, si) in s.iter().enumerate() {
        for i in 0..6 {
            for j in 0..n {
                let mut acc = 0.0;
                for k in 0..6 {
                    acc += si[k][i] * b[(6 * bi + k) * n + j];
                }
                c[(6 * bi + i) * n + j] = acc;
            }
        }
    }
    // Exact symmetry (the products above round differently in the two triangles).
    for i in 0..n {
        for j in i + 1..n {
            let v = 0.5 * (c[i * n + j] + c[j * n + i]);
            c[i * n + j] = v;
            c[j * n + i] = v;
        }
    }
    c
}

/// Global matrices from local stiffness and (consistent or lumped) mass: applies [`to_global`]
/// with rigid offsets to K and the consistent M; the lumped M (node blocks m·I₃, r·I₃, see
/// [`lump_hrz`]) is the same in every frame and is returned as is. Non-finite results are
/// rejected as [`ShellDefect::Degenerate`].
pub fn finish<const N: usize>(
    frame: &LocalFrame<N>,
    stiffness: &[f64],
    mass: &[f64],
    kind: MassKind,
) -> Result<ShellMatrices, ShellDefect> {
    let stiffness = to_global(stiffness, frame, true);
    let mass = match kind {
        MassKind::Consistent => to_global(mass, frame, true),
        // Each node's lumped block is m·I₃ (translations) and r·I₃ (rotations), so Rᵀ(m I₃)R = m I₃:
        // the lumped mass is the same in every frame and is copied exactly.
        MassKind::Lumped => mass.to_vec(),
    };
    if stiffness.iter().chain(&mass).any(|v| !v.is_finite()) {
        return Err(ShellDefect::Degenerate);
    }
    Ok(ShellMatrices { n_nodes: N, stiffness, mass, normal: frame.axes[2], area: frame.area, warp: frame.warp })
}

/// Test helpers shared by the shell kernels: invariant checks, a dense assembler and solvers.
#[cfg(test)]
pub(crate) mod testing {
    use super::*;

    /// An element's node indices and matrices.
    pub type Placed = (Vec<usize>, ShellMatrices);

    /// Nodes and elements of a test mesh.
    pub type Mesh = (Vec<[f64; 3]>, Vec<Placed>);

    /// Steel with an isotropic shear modulus (E = 210 GPa, ν = 0.3, ρ = 7850 kg/m³).
    pub fn steel() -> MaterialProperties {
        MaterialProperties { youngs_modulus: 2.1e11, shear_modulus: 2.1e11 / 2.6, poisson_ratio: 0.3, density: 7850.0 }
    }

    /// |a − b| ≤ rel·max(|a|, |b|) + abs.
    pub fn approx(a: f64, b: f64, rel: f64, abs: f64) -> bool {
        (a - b).abs() <= rel * a.abs().max(b.abs()) + abs
    }

    /// Applies x' = Q x + b to the nodes.
    pub fn move_rigidly<const N: usize>(xyz: &[[f64; 3]; N], q: &[[f64; 3]; 3], b: [f64; 3]) -> [[f64; 3]; N] {
        xyz.map(|p| [0, 1, 2].map(|i| dot(q[i], p) + b[i]))
    }

    /// A proper rotation matrix about the unit axis (a normalised) by angle `phi` (Rodrigues).
    pub fn rotation(axis: [f64; 3], phi: f64) -> [[f64; 3]; 3] {
        let k = scale(axis, 1.0 / norm(axis));
        let (s, c) = phi.sin_cos();
        let mut q = [[0.0; 3]; 3];
        for i in 0..3 {
            for j in 0..3 {
                q[i][j] = c * f64::from(u8::from(i == j)) + (1.0 - c) * k[i] * k[j];
            }
        }
        q[0][1] -= s * k[2];
        q[0][2] += s * k[1];
        q[1][0] += s * k[2];
        q[1][2] -= s * k[0];
        q[2][0] -= s * k[1];
        q[2][1] += s * k[0];
        q
    }

    /// The six rigid motions of nodes `xyz`: three translations and three small rotations about
    /// the origin (u = ω × x, θ = ω).
    pub fn rigid_modes(xyz: &[[f64; 3]]) -> Vec<Vec<f64>> {
        let n = 6 * xyz.len();
        let mut modes = Vec::new();
        for d in 0..3 {
            let mut u = vec![0.0; n];
            for a in 0..xyz.len() {
                u[6 * a + d] = 1.0;
            }
            modes.push(u);
        }
        for axis in 0..3 {
            let mut w = [0.0; 3];
            w[axis] = 1.0;
            let mut u = vec![0.0; n];
            for (a, p) in xyz.iter().enumerate() {
                let v = cross(w, *p);
                for c in 0..3 {
                    u[6 * a + c] = v[c];
                    u[6 * a + 3 + c] = w[c];
                }
            }
            modes.push(u);
        }
        modes
    }

    /// Eigenvalues (ascending) of the symmetric row-major n×n matrix `a` divided by its largest
    /// entry (faer's dense symmetric residuals are absolute, ~1e-16·‖A‖).
    pub fn scaled_eigenvalues(a: &[f64], n: usize) -> Vec<f64> {
        let s = a.iter().fold(0.0f64, |m, v| m.max(v.abs()));
        let mat = faer::Mat::from_fn(n, n, |i, j| a[i * n + j] / s);
        let mut ev = mat.self_adjoint_eigenvalues(faer::Side::Lower).expect("symmetric eigenvalues");
        ev.sort_by(f64::total_cmp);
        ev
    }

    /// Invariants of a free element (STYLE.md, "Elements and assembly"): symmetric K and M, K positive
    /// semi-definite with exactly six zero eigenvalues (relative to the largest: below 1e-13, where
    /// round-off leaves ~5e-16, while the seventh is above `min_nonzero`), K·(rigid motion) = 0, uᵀMu = ρtA for rigid
    /// translations, M positive definite (consistent) or diagonal and positive (lumped).
    pub fn check_free_element(e: &ShellMatrices, xyz: &[[f64; 3]], mass: f64, kind: MassKind, min_nonzero: f64) {
        let n = 6 * e.n_nodes;
        let (k, m) = (&e.stiffness, &e.mass);
        let kmax = k.iter().fold(0.0f64, |a, v| a.max(v.abs()));
        let mmax = m.iter().fold(0.0f64, |a, v| a.max(v.abs()));
        for i in 0..n {
            for j in 0..n {
                assert!((k[i * n + j] - k[j * n + i]).abs() <= 1e-14 * kmax, "K not symmetric at {i} {j}");
                assert!((m[i * n + j] - m[j * n + i]).abs() <= 1e-14 * mmax, "M not symmetric at {i} {j}");
                if kind == MassKind::Lumped && i != j {
                    assert!(m[i * n + j] == 0.0, "lumped M not diagonal at {i} {j}");
                }
            }
        }
        let ev = scaled_eigenvalues(k, n);
        assert!(ev[0] > -1e-13, "K not positive semi-definite: {ev:?}");
        assert!(ev[5].abs() < 1e-13 && ev[6] > min_nonzero, "zero-energy modes are not exactly six: {ev:?}");
        for (r, u) in rigid_modes(xyz).iter().enumerate() {
            let scale_u = u.iter().fold(0.0f64, |a, v| a.max(v.abs()));
            for i in 0..n {
                let f: f64 = (0..n).map(|j| k[i * n + j] * u[j]).sum();
                assert!(f.abs() <= 1e-11 * kmax * scale_u, "rigid motion {r} strains the element: {f}");
            }
            if r < 3 {
                let mu: f64 = (0..n).map(|i| (0..n).map(|j| u[i] * m[i * n + j] * u[j]).sum::<f64>()).sum();
                assert!(approx(mu, mass, 1e-13, 0.0), "rigid translation mass {mu} vs ρtA = {mass}");
            }
        }
        let mev = scaled_eigenvalues(m, n);
        assert!(mev[0] > 1e-12, "M not positive definite: {mev:?}");
    }

    /// Checks K and M of a rigidly moved element against Tᵀ K T of the original, T = diag(Q).
    pub fn check_rotation_invariance(a: &ShellMatrices, b: &ShellMatrices, q: &[[f64; 3]; 3]) {
        let n = 6 * a.n_nodes;
        for (x, y) in [(&a.stiffness, &b.stiffness), (&a.mass, &b.mass)] {
            let max = x.iter().fold(0.0f64, |m, v| m.max(v.abs()));
            for bi in 0..n / 3 {
                for bj in 0..n / 3 {
                    // (Qᵀ Y Q) block (bi, bj) must equal X's block.
                    for i in 0..3 {
                        for j in 0..3 {
                            let mut s = 0.0;
                            for k in 0..3 {
                                for l in 0..3 {
                                    s += q[k][i] * y[(3 * bi + k) * n + 3 * bj + l] * q[l][j];
                                }
                            }
                            let want = x[(3 * bi + i) * n + 3 * bj + j];
                            assert!((s - want).abs() <= 1e-12 * max, "not invariant: {s} vs {want}");
                        }
                    }
                }
            }
        }
        assert!(approx(a.area, b.area, 1e-13, 0.0) && approx(a.warp, b.warp, 1e-9, 1e-14));
        let qn = [0, 1, 2].map(|i| dot(q[i], a.normal));
        assert!(norm(sub(qn, b.normal)) < 1e-13, "normal does not rotate with the element");
    }

    /// Checks that `b`, built from the nodes of `a` in the order `perm` (node p of `b` is node
    /// `perm[p]` of `a`), has the same matrices with rows and columns permuted.
    pub fn check_relabelled(a: &ShellMatrices, b: &ShellMatrices, perm: &[usize]) {
        let n = 6 * a.n_nodes;
        for (x, y) in [(&a.stiffness, &b.stiffness), (&a.mass, &b.mass)] {
            let max = x.iter().fold(0.0f64, |m, v| m.max(v.abs()));
            for p in 0..a.n_nodes {
                for q in 0..a.n_nodes {
                    for i in 0..6 {
                        for j in 0..6 {
                            let (u, v) = (y[(6 * p + i) * n + 6 * q + j], x[(6 * perm[p] + i) * n + 6 * perm[q] + j]);
                            assert!((u - v).abs() <= 1e-12 * max, "relabelled entry differs: {u} vs {v}");
                        }
                    }
                }
            }
        }
    }

    /// Dense assembler for a few hundred DOFs (six per node).
    pub struct Dense {
        /// Number of DOFs.
        pub n: usize,
        /// Stiffness, row-major.
        pub k: Vec<f64>,
        /// Mass, row-major.
        pub m: Vec<f64>,
    }

    impl Dense {
        pub fn new(n_nodes: usize) -> Self {
            let n = 6 * n_nodes;
            Dense { n, k: vec![0.0; n * n], m: vec![0.0; n * n] }
        }

        pub fn add(&mut self, nodes: &[usize], e: &ShellMatrices) {
            let ne = 6 * nodes.len();
            for (a, &na) in nodes.iter().enumerate() {
                for (b, &nb) in nodes.iter().enumerate() {
                    for i in 0..6 {
                        for j in 0..6 {
                            let (gi, gj) = (6 * na + i, 6 * nb + j);
                            let (li, lj) = (6 * a + i, 6 * b + j);
                            self.k[gi * self.n + gj] += e.stiffness[li * ne + lj];
                            self.m[gi * self.n + gj] += e.mass[li * ne + lj];
                        }
                    }
                }
            }
        }
    }

    /// Submatrix of row-major `a` (size n) on DOF list `dofs`.
    pub fn restrict(a: &[f64], n: usize, dofs: &[usize]) -> Vec<f64> {
        let f = dofs.len();
        let mut out = vec![0.0; f * f];
        for (i, &gi) in dofs.iter().enumerate() {
            for (j, &gj) in dofs.iter().enumerate() {
                out[i * f + j] = a[gi * n + gj];
            }
        }
        out
    }

    fn dense(a: &[f64], n: usize) -> faer::Mat<f64> {
        faer::Mat::from_fn(n, n, |i, j| a[i * n + j])
    }

    /// Solves the SPD system A x = b (row-major A) with faer's dense Cholesky factorization.
    pub fn solve_spd(a: &[f64], n: usize, b: &[f64]) -> Vec<f64> {
        use faer::linalg::solvers::Solve;
        let llt = dense(a, n).llt(faer::Side::Lower).expect("positive definite");
        let x = llt.solve(faer::Mat::from_fn(n, 1, |i, _| b[i]));
        (0..n).map(|i| x[(i, 0)]).collect()
    }

    /// Eigenvalues λ of K x = λ M x (ascending, in the units of K/M) through C = L⁻¹ K L⁻ᵀ with
    /// M = L Lᵀ (faer's dense Cholesky and triangular solves).
    pub fn generalized_eigenvalues(k: &[f64], m: &[f64], n: usize) -> Vec<f64> {
        use faer::linalg::triangular_solve::solve_lower_triangular_in_place;
        let llt = dense(m, n).llt(faer::Side::Lower).expect("positive definite mass");
        let l = llt.L();
        let mut y = dense(k, n);
        solve_lower_triangular_in_place(l, y.as_mut(), faer::Par::Seq);
        let mut c = y.transpose().to_owned();
        solve_lower_triangular_in_place(l, c.as_mut(), faer::Par::Seq);
        let c: Vec<f64> = (0..n * n).map(|p| 0.5 * (c[(p / n, p % n)] + c[(p % n, p / n)])).collect();
        let s = c.iter().fold(0.0f64, |a, v| a.max(v.abs()));
        scaled_eigenvalues(&c, n).into_iter().map(|v| v * s).collect()
    }

    /// The irregular five-element patch of MacNeal & Harder (Finite Elem. Anal. Des. 1, 1985,
    /// Fig. 2; coordinates from memory): rectangle 0.24 × 0.12 with interior nodes (0.04, 0.02),
    /// (0.18, 0.03), (0.16, 0.08), (0.08, 0.08). Returns nodes (z = 0), quads (counter-clockwise)
    /// and the number of boundary nodes (the first four).
    pub fn macneal_harder_patch() -> (Vec<[f64; 3]>, Vec<[usize; 4]>, usize) {
        let nodes = vec![
            [0.0, 0.0, 0.0],
            [0.24, 0.0, 0.0],
            [0.24, 0.12, 0.0],
            [0.0, 0.12, 0.0],
            [0.04, 0.02, 0.0],
            [0.18, 0.03, 0.0],
            [0.16, 0.08, 0.0],
            [0.08, 0.08, 0.0],
        ];
        let quads = vec![[0, 1, 5, 4], [1, 2, 6, 5], [2, 3, 7, 6], [3, 0, 4, 7], [4, 5, 6, 7]];
        (nodes, quads, 4)
    }

    /// A 2 × 2 patch of the square [0, 1]² with its one interior node moved to (0.6, 0.35), boundary
    /// nodes first (8), interior node last.
    pub fn four_element_patch() -> (Vec<[f64; 3]>, Vec<[usize; 4]>, usize) {
        let nodes = vec![
            [0.0, 0.0, 0.0],
            [0.5, 0.0, 0.0],
            [1.0, 0.0, 0.0],
            [1.0, 0.45, 0.0],
            [1.0, 1.0, 0.0],
            [0.5, 1.0, 0.0],
            [0.0, 1.0, 0.0],
            [0.0, 0.55, 0.0],
            [0.6, 0.35, 0.0],
        ];
        let quads = vec![[0, 1, 8, 7], [1, 2, 3, 8], [8, 3, 4, 5], [7, 8, 5, 6]];
        (nodes, quads, 8)
    }

    /// Patch test (Irons; MacNeal & Harder 1985): imposes `exact` (node coordinates → six DOF values)
    /// on the first `n_boundary` nodes, solves K u = 0 for the rest, and returns the largest
    /// difference from `exact` at the interior nodes relative to the largest exact value.
    pub fn patch_error(
        nodes: &[[f64; 3]],
        elements: &[Placed],
        n_boundary: usize,
        exact: &dyn Fn([f64; 3]) -> [f64; 6],
    ) -> f64 {
        let mut d = Dense::new(nodes.len());
        for (conn, e) in elements {
            d.add(conn, e);
        }
        let n = d.n;
        let u: Vec<f64> = nodes.iter().flat_map(|&p| exact(p)).collect();
        let fixed: Vec<usize> = (0..6 * n_boundary).collect();
        let free: Vec<usize> = (6 * n_boundary..n).collect();
        // K_ff u_f = −K_fb u_b.
        let rhs: Vec<f64> = free.iter().map(|&i| -fixed.iter().map(|&j| d.k[i * n + j] * u[j]).sum::<f64>()).collect();
        let kff = restrict(&d.k, n, &free);
        let uf = solve_spd(&kff, free.len(), &rhs);
        let scale = u.iter().fold(0.0f64, |a, v| a.max(v.abs()));
        free.iter().zip(&uf).fold(0.0f64, |a, (&i, v)| a.max((v - u[i]).abs())) / scale
    }

    /// Nodes of an (n+1) × (n+1) grid on [0, a]², row by row (node index = j·(n+1) + i).
    pub fn grid_nodes(n: usize, a: f64) -> Vec<[f64; 3]> {
        let h = a / n as f64;
        (0..=n).flat_map(|j| (0..=n).map(move |i| [i as f64 * h, j as f64 * h, 0.0])).collect()
    }

    /// Natural frequencies ω (rad/s, ascending, the lowest `count`) of a simply supported square
    /// plate [0, a]² meshed by `elements` on `nodes` (hard support: w = 0 and the rotation about the
    /// edge normal, i.e. θx on x = const and θy on y = const; the in-plane DOFs u, v, θz are held, since
    /// they do not couple to bending in a flat plate).
    pub fn simply_supported_plate(nodes: &[[f64; 3]], elements: &[Placed], a: f64, count: usize) -> Vec<f64> {
        let mut d = Dense::new(nodes.len());
        for (conn, e) in elements {
            d.add(conn, e);
        }
        let on = |c: f64| c.abs() < 1e-9 * a || (c - a).abs() < 1e-9 * a;
        let mut free = Vec::new();
        for (i, p) in nodes.iter().enumerate() {
            let (ex, ey) = (on(p[0]), on(p[1]));
            if !(ex || ey) {
                free.extend([6 * i + 2, 6 * i + 3, 6 * i + 4]);
                continue;
            }
            // Edge x = const (runs along y): θx = ∂w/∂y = 0; edge y = const: θy = −∂w/∂x = 0.
            if !ex {
                free.push(6 * i + 3);
            }
            if !ey {
                free.push(6 * i + 4);
            }
        }
        let k = restrict(&d.k, d.n, &free);
        let m = restrict(&d.m, d.n, &free);
        let ev = generalized_eigenvalues(&k, &m, free.len());
        ev.iter().take(count).map(|l| l.max(0.0).sqrt()).collect()
    }

    /// Navier's closed form for the simply supported square plate (Leissa, Vibration of Plates, NASA
    /// SP-160, 1969, §4.1, Eq. 4.3 from memory): ω_mn = π²(m² + n²)/a² · √(D/(ρt)), D = Et³/(12(1−ν²)),
    /// in rad/s.
    pub fn navier(m: f64, n: f64, a: f64, t: f64, mat: &MaterialProperties) -> f64 {
        let d = mat.youngs_modulus * t.powi(3) / (12.0 * (1.0 - mat.poisson_ratio.powi(2)));
        std::f64::consts::PI.powi(2) * (m * m + n * n) / (a * a) * (d / (mat.density * t)).sqrt()
    }

    /// A tube of `n_circ` flat facets (nodes on the circle of radius `radius`, m) and `n_axial`
    /// rings of quads along x ∈ [0, `length`]; node index = i·n_circ + j for ring i, angle j.
    pub fn tube(n_circ: usize, n_axial: usize, radius: f64, length: f64) -> (Vec<[f64; 3]>, Vec<[usize; 4]>) {
        let mut nodes = Vec::new();
        for i in 0..=n_axial {
            for j in 0..n_circ {
                let phi = 2.0 * std::f64::consts::PI * j as f64 / n_circ as f64;
                nodes.push([length * i as f64 / n_axial as f64, radius * phi.cos(), radius * phi.sin()]);
            }
        }
        let mut quads = Vec::new();
        for i in 0..n_axial {
            for j in 0..n_circ {
                let jn = (j + 1) % n_circ;
                quads.push([i * n_circ + j, (i + 1) * n_circ + j, (i + 1) * n_circ + jn, i * n_circ + jn]);
            }
        }
        (nodes, quads)
    }

    /// Generalized eigenvalues λ = ω² (rad²/s², ascending) of the assembled `elements`, with every
    /// DOF of the nodes at x = 0 held when `clamped`, free otherwise.
    pub fn assembled_eigenvalues(nodes: &[[f64; 3]], elements: &[Placed], clamped: bool) -> Vec<f64> {
        let mut d = Dense::new(nodes.len());
        for (conn, e) in elements {
            d.add(conn, e);
        }
        let free: Vec<usize> = (0..d.n).filter(|&i| !clamped || nodes[i / 6][0].abs() > 1e-12).collect();
        let k = restrict(&d.k, d.n, &free);
        let m = restrict(&d.m, d.n, &free);
        generalized_eigenvalues(&k, &m, free.len())
    }

    /// First bending frequency of a clamped-free Euler–Bernoulli beam (rad/s) with the section of
    /// the `n_circ`-sided polygonal tube (vertices on radius `radius`, wall `thickness`, thin-wall
    /// strips): ω₁ = (1.875104)² √(EI/(ρA L⁴)) (e.g. Blevins, Formulas for Natural Frequency and
    /// Mode Shape, 1979, Table 8-1, from memory).
    pub fn polygon_tube_beam_frequency(
        n_circ: usize,
        radius: f64,
        thickness: f64,
        length: f64,
        mat: &MaterialProperties,
    ) -> f64 {
        let (mut area, mut inertia) = (0.0, 0.0);
        for j in 0..n_circ {
            let (pa, pb) = (
                2.0 * std::f64::consts::PI * j as f64 / n_circ as f64,
                2.0 * std::f64::consts::PI * (j + 1) as f64 / n_circ as f64,
            );
            let (za, zb) = (radius * pa.sin(), radius * pb.sin());
            let s = 2.0 * radius * (std::f64::consts::PI / n_circ as f64).sin();
            area += s * thickness;
            inertia += thickness * s * (za * za + za * zb + zb * zb) / 3.0;
        }
        1.875_104_07f64.powi(2) * (mat.youngs_modulus * inertia / (mat.density * area * length.powi(4))).sqrt()
    }

    /// Tip deflection of a cantilever of `nodes` clamped at x = 0 (all DOFs) under a total tip force
    /// `force` (N) in global direction `dir`, shared equally by the nodes at x = `length`; returns
    /// the mean tip displacement in `dir`, in m.
    pub fn cantilever_tip(nodes: &[[f64; 3]], elements: &[Placed], length: f64, dir: usize, force: f64) -> f64 {
        let mut d = Dense::new(nodes.len());
        for (conn, e) in elements {
            d.add(conn, e);
        }
        let free: Vec<usize> = (0..d.n).filter(|&i| nodes[i / 6][0].abs() > 1e-9 * length).collect();
        let tip: Vec<usize> = (0..nodes.len()).filter(|&a| (nodes[a][0] - length).abs() < 1e-9 * length).collect();
        let f: Vec<f64> = free
            .iter()
            .map(|&i| if i % 6 == dir && tip.contains(&(i / 6)) { force / tip.len() as f64 } else { 0.0 })
            .collect();
        let k = restrict(&d.k, d.n, &free);
        let u = solve_spd(&k, free.len(), &f);
        let sum: f64 =
            free.iter().zip(&u).filter(|&(&i, _)| i % 6 == dir && tip.contains(&(i / 6))).map(|(_, v)| v).sum();
        sum / tip.len() as f64
    }
}

#[cfg(test)]
mod tests {
    use super::testing::*;
    use super::*;

    #[test]
    fn warped_quad_frame_has_alternating_heights_and_right_hand_normal() {
        // A unit square in the x-y plane with nodes lifted by ±h alternately: the mean plane is
        // z = 0, the normal +z (counter-clockwise order), heights (h, −h, h, −h) and
        // warp = h/√A = h for A = 1 (module documentation).
        let h = 0.01;
        let xyz = [[0.0, 0.0, h], [1.0, 0.0, -h], [1.0, 1.0, h], [0.0, 1.0, -h]];
        let f = quad_frame(&xyz).expect("valid quad");
        assert!(approx(f.axes[2][2], 1.0, 1e-15, 0.0));
        assert!(approx(f.area, 1.0, 1e-14, 0.0) && approx(f.warp, h, 1e-13, 0.0));
        for (i, hi) in f.heights.iter().enumerate() {
            let want = if i % 2 == 0 { h } else { -h };
            assert!(approx(*hi, want, 1e-13, 0.0), "{hi} vs {want}");
        }
        // Clockwise order flips the normal.
        let cw = [xyz[0], xyz[3], xyz[2], xyz[1]];
        assert!(approx(quad_frame(&cw).expect("valid quad").axes[2][2], -1.0, 1e-15, 0.0));
        // Local x runs along the projected side 1→2; the frame is right-handed.
        assert!(approx(f.axes[0][0], 1.0, 1e-15, 0.0));
        let e = f.axes;
        assert!(norm(sub(cross(e[0], e[1]), e[2])) < 1e-15);
    }

    #[test]
    fn lumping_keeps_totals() {
        // HRZ: each translation sums to ρtA, each rotation to ρt³A/12 (Hinton, Rock & Zienkiewicz 1976).
        let n_nodes = 3;
        let n = 18;
        let m: Vec<f64> =
            (0..n * n).map(|k| 1.0 + ((k * 7) % 5) as f64 + if k % (n + 1) == 0 { 10.0 } else { 0.0 }).collect();
        let l = lump_hrz(&m, n_nodes, 2.0, 0.5);
        for kind in 0..6 {
            let s: f64 = (0..n_nodes).map(|a| l[(6 * a + kind) * n + 6 * a + kind]).sum();
            assert!(approx(s, if kind < 3 { 2.0 } else { 0.5 }, 1e-15, 0.0));
        }
    }

    #[test]
    fn random_inputs_never_panic_and_give_finite_matrices() {
        // "No panics on any input; NaN-free": seeded random nodes mixing ordinary, nearly coincident,
        // collinear, huge, tiny and non-finite coordinates, and random thicknesses. Every call must
        // return an error or matrices whose entries are all finite.
        use rand::{RngExt, SeedableRng};
        let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(0x5ee1);
        let specials = [0.0, 1e-300, -1e-300, 1e300, -1e300, f64::NAN, f64::INFINITY, f64::NEG_INFINITY, 1.0];
        let pick = |rng: &mut rand_chacha::ChaCha8Rng| -> f64 {
            match rng.random_range(0..10) {
                0 => specials[rng.random_range(0..specials.len())],
                1 => 1.0 + 1e-12 * (rng.random::<f64>() - 0.5),
                _ => rng.random::<f64>() * 2.0 - 1.0,
            }
        };
        let (mut ok, mut err) = (0, 0);
        for case in 0..4000 {
            let mut q = [[0.0; 3]; 4];
            for p in &mut q {
                for c in p.iter_mut() {
                    *c = pick(&mut rng);
                }
            }
            if case % 7 == 0 {
                q[2] = q[1]; // coincident
            }
            let t = [0.01, 1e-6, 0.0, -1.0, f64::NAN, 1e200][rng.random_range(0..6)];
            let kind = if case % 2 == 0 { MassKind::Consistent } else { MassKind::Lumped };
            let tri = [q[0], q[1], q[2]];
            for r in [
                crate::element::shell_quad::quad_matrices(&q, t, &steel(), kind),
                crate::element::shell_tri::tri_matrices(&tri, t, &steel(), kind),
            ] {
                match r {
                    Ok(e) => {
                        ok += 1;
                        assert!(e.stiffness.iter().chain(&e.mass).all(|v| v.is_finite()), "non-finite matrices");
                        assert!(e.area.is_finite() && e.warp.is_finite() && e.normal.iter().all(|v| v.is_finite()));
                    }
                    Err(_) => err += 1,
                }
            }
        }
        // Measured: 916 valid elements (random quads are often non-convex), 7084 rejected.
        assert!(ok > 500 && err > 1000, "both outcomes exercised: {ok} ok, {err} errors");
    }

    #[test]
    fn bad_thickness_is_rejected() {
        for t in [0.0, -1e-3, f64::NAN, f64::INFINITY] {
            assert_eq!(check_thickness(t), Err(ShellDefect::NonPositiveThickness));
        }
        assert_eq!(check_thickness(1e-3), Ok(()));
    }
}
