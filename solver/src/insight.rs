//! Mode insight: what each mode is and where it moves.
//!
//! - **Participation and effective modal mass** in the six rigid-body directions about a reference
//!   point x_ref (default: the centre of mass). The rigid motion with translation t and rotation ω
//!   moves a node at x by u = t + ω × (x − x_ref) and turns it by ω; r_d is that motion for the unit
//!   t or ω of direction d ∈ {x, y, z, rx, ry, rz}, formed for every node DOF (supports included:
//!   they move with the base) and carried to the free DOFs through the DOF map (a rigid motion
//!   satisfies every rigid and averaging link exactly). With b_d = (M r_d) on the free DOFs:
//!
//!   ```text
//!   Γ_i,d = φ_iᵀ b_d / (φ_iᵀ M φ_i)          participation factor
//!   m_eff,i,d = (φ_iᵀ b_d)² / (φ_iᵀ M φ_i)   effective modal mass, kg (kg·m² for rotations)
//!   fraction = m_eff,i,d / (r_dᵀ M r_d)      r_dᵀ M r_d: total mass, or inertia about x_ref
//!   ```
//!
//!   (definitions of the ECSS glossary and Irvine's effective-modal-mass tutorial). Over all modes of
//!   a free body the effective masses add up to r_dᵀ M r_d exactly; for a supported body the mass the
//!   supports hold (r_sᵀ (M_ss − M_sf M_ff⁻¹ M_fs) r_s) is missing from the sum.
//! - **Generalised mass**: φᵀ M φ of the shape scaled to a largest translation of 1 m, in kg (the
//!   modal mass an absorber at the point of largest motion works against).
//! - **Energy shares** per named part and per region: kinetic ½ω² φ_eᵀ M_e φ_e and strain
//!   ½ φ_eᵀ K_e φ_e of every element, as fractions of the totals. A region gets each element's share
//!   split equally among the element's nodes.
//! - **Classification** from the part with most kinetic energy: shell tubes by a Fourier analysis of
//!   the wall motion on each ring (circumferential wave number n, axial half-waves m); beam tubes,
//!   lines and frames by the dominant motion (bending with its direction, torsion, axial); generated
//!   panels by the half-wave counts (m, n) of the normal motion along X and Y.
//! - **Repeated pairs**: two elastic modes whose frequencies differ by less than a relative
//!   tolerance (default 1e-6, common practice) are labelled as a pair and rotated within their span
//!   to a fixed orientation (see [`mode_insight`]).
//! - **MAC** (Allemang & Brown, Proc. IMAC 1982): mac(a, b) = (aᵀb)² / ((aᵀa)(bᵀb)).

use antinode_mesh::{Fidelity, Structure, TubeNodes};
use faer::Mat;
use rayon::prelude::*;
use serde::Serialize;

use crate::assembly::{BlockSource, System, element_blocks};
use crate::eigen::ModalSolution;
use crate::error::SolverError;

/// Names of the six rigid-body directions, in the order of every `[f64; 6]` of this module.
pub const RIGID_DIRECTIONS: [&str; 6] = ["x", "y", "z", "rx", "ry", "rz"];

/// Default relative frequency gap under which two modes are a repeated pair (common practice:
/// symmetric parts give pairs that agree to round-off, 1e-10 and below; 1e-6 leaves room for meshes
/// that are symmetric only nearly).
pub const PAIR_TOLERANCE: f64 = 1e-6;

/// Options for [`mode_insight`].
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct InsightOptions {
    /// Reference point of the rotations, in m (default: the centre of mass).
    pub reference_point: Option<[f64; 3]>,
    /// Relative frequency gap |f₂ − f₁| / f₂ under which two modes form a pair.
    pub pair_tolerance: f64,
}

impl Default for InsightOptions {
    fn default() -> Self {
        Self { reference_point: None, pair_tolerance: PAIR_TOLERANCE }
    }
}

/// What a mode is.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum ModeKind {
    /// A zero-frequency (rigid-body) motion.
    RigidBody,
    /// Bending (beam-like lateral motion; n = 1 of a shell tube).
    Bending,
    /// Twist about the axis.
    Torsion,
    /// Stretching along the axis.
    Axial,
    /// Uniform radial motion of a shell tube's wall (n = 0).
    Breathing,
    /// Wall mode of a shell tube with n ≥ 2 circumferential waves.
    Ovaling,
    /// Out-of-plane mode of a panel with (m, n) half-waves.
    Panel,
    /// In-plane mode of a panel.
    InPlane,
    /// Shells that are neither a generated tube nor a panel.
    Shell,
}

impl ModeKind {
    /// The word used in files (`rigid_body`, `bending`, ...).
    pub fn word(self) -> &'static str {
        match self {
            ModeKind::RigidBody => "rigid_body",
            ModeKind::Bending => "bending",
            ModeKind::Torsion => "torsion",
            ModeKind::Axial => "axial",
            ModeKind::Breathing => "breathing",
            ModeKind::Ovaling => "ovaling",
            ModeKind::Panel => "panel",
            ModeKind::InPlane => "in_plane",
            ModeKind::Shell => "shell",
        }
    }
}

/// The classification of one mode.
#[derive(Debug, Clone, PartialEq, Eq, Serialize)]
pub struct ModeClass {
    /// What it is.
    pub kind: ModeKind,
    /// Circumferential wave number of a shell tube's mode; half-waves along Y of a panel mode.
    pub n: Option<usize>,
    /// Axial half-waves (lobes of the dominant motion between sign changes along the length) of a
    /// tube or line mode; half-waves along X of a panel mode.
    pub m: Option<usize>,
    /// Global direction of the motion: `x`, `y` or `z` for bending, the rigid direction for a
    /// rigid-body mode.
    pub plane: Option<&'static str>,
    /// Number (from 1) of the other member of a repeated pair.
    pub pair: Option<usize>,
    /// The part the classification is taken from (the one with most kinetic energy).
    pub part: Option<String>,
}

/// Facts of one mode (all for the shapes as oriented by [`mode_insight`]).
#[derive(Debug, Clone, PartialEq)]
pub struct ModeFacts {
    /// φᵀ M φ for the shape scaled to a largest translation of 1 m, in kg.
    pub generalised_mass: f64,
    /// Participation factors Γ = φᵀ M r / (φᵀ M φ) in x, y, z, rx, ry, rz (per unit translation in
    /// m or rotation in rad of the base, for the mass-normalised shape).
    pub participation: [f64; 6],
    /// Effective modal masses, in kg (x, y, z) and kg·m² (rx, ry, rz).
    pub effective_mass: [f64; 6],
    /// Effective mass over the rigid-body mass of the direction.
    pub effective_mass_fraction: [f64; 6],
    /// Sum of the fractions of this and every lower mode.
    pub cumulative_fraction: [f64; 6],
    /// Classification.
    pub class: ModeClass,
    /// Kinetic-energy share of each part ([`ModeInsight::part_names`]).
    pub kinetic_fraction: Vec<f64>,
    /// Strain-energy share of each part (zeros for rigid-body modes).
    pub strain_fraction: Vec<f64>,
    /// Kinetic-energy share of each region ([`ModeInsight::region_names`]).
    pub region_kinetic_fraction: Vec<f64>,
    /// Strain-energy share of each region.
    pub region_strain_fraction: Vec<f64>,
}

/// Mode insight of a solution.
#[derive(Debug, Clone, PartialEq)]
pub struct ModeInsight {
    /// Reference point of the rotational directions, in m.
    pub reference_point: [f64; 3],
    /// Diagonal of the rigid-body mass matrix rᵀ M r: mass in x, y, z (kg) and inertia about the
    /// reference point's axes (kg·m²), supports included.
    pub rigid_mass: [f64; 6],
    /// Names of the parts (lines, tubes, panels, then the rest).
    pub part_names: Vec<String>,
    /// Names of the regions.
    pub region_names: Vec<String>,
    /// One entry per mode.
    pub modes: Vec<ModeFacts>,
}

/// Modal assurance criterion mac(a, b) = (aᵀb)² / ((aᵀa)(bᵀb)) (Allemang & Brown, Proc. IMAC
/// 1982); 0 when either vector is zero.
///
/// # Panics
/// If the lengths differ.
pub fn mac(a: &[f64], b: &[f64]) -> f64 {
    assert_eq!(a.len(), b.len(), "MAC of vectors of different lengths");
    let ab: f64 = a.iter().zip(b).map(|(x, y)| x * y).sum();
    let aa: f64 = a.iter().map(|x| x * x).sum();
    let bb: f64 = b.iter().map(|x| x * x).sum();
    if aa == 0.0 || bb == 0.0 { 0.0 } else { ab * ab / (aa * bb) }
}

/// MAC of every vector of `a` (rows) with every vector of `b` (columns).
///
/// # Panics
/// If the vectors' lengths differ.
pub fn mac_matrix(a: &[Vec<f64>], b: &[Vec<f64>]) -> Vec<Vec<f64>> {
    a.iter().map(|x| b.iter().map(|y| mac(x, y)).collect()).collect()
}

/// Pairs the rows of a MAC matrix with its columns: the largest remaining entry first, each row and
/// column used once (ties to the lower index). Returns the column paired with each row, `None` for
/// rows left over when there are fewer columns.
pub fn pair_by_mac(mac: &[Vec<f64>]) -> Vec<Option<usize>> {
    let rows = mac.len();
    let cols = mac.first().map_or(0, Vec::len);
    let mut out = vec![None; rows];
    let mut col_used = vec![false; cols];
    for _ in 0..rows.min(cols) {
        let mut best: Option<(usize, usize, f64)> = None;
        for (r, row) in mac.iter().enumerate() {
            if out[r].is_some() {
                continue;
            }
            for (c, &v) in row.iter().enumerate() {
                if !col_used[c] && best.is_none_or(|(_, _, b)| v > b) {
                    best = Some((r, c, v));
                }
            }
        }
        let Some((r, c, _)) = best else { break };
        out[r] = Some(c);
        col_used[c] = true;
    }
    out
}

/// Mode shapes sampled at nodes: entry j of mode i is wⱼ · [ux, uy, uz, rx, ry, rz](nodeⱼ) for the
/// weights wⱼ of point j (e.g. a unit direction in the first three for a translation along it), per
/// unit modal coordinate.
///
/// # Panics
/// If a node index is out of range.
pub fn sampled_shapes(system: &System, sol: &ModalSolution, points: &[(usize, [f64; 6])]) -> Vec<Vec<f64>> {
    let dofs = system.dof_map();
    (0..sol.n_modes())
        .map(|i| {
            let phi = sol.shape(i);
            points
                .iter()
                .map(|&(node, d)| {
                    (0..6)
                        .filter(|&c| d[c] != 0.0)
                        .map(|c| d[c] * dofs.terms(node, c).iter().map(|&(j, w)| w * phi[j]).sum::<f64>())
                        .sum()
                })
                .collect()
        })
        .collect()
}

/// Where an absorber works for each mode: per node the squares of the mass-normalised modal
/// translation normal to the surface and along the axis, in 1/kg. An absorber of mass mₐ there gets
/// the mass ratio μ = mₐ (eᵀφ)² in that direction (the reciprocal of the modal mass it sees).
///
/// Normal: the mean normal of a node's shells, else the motion across its beams' axis, else the
/// whole translation. Axial: along the tube axis (tube nodes) or the beams' axis, else the motion
/// in the shells' plane, else 0.
pub fn mass_ratio_maps(s: &Structure, system: &System, sol: &ModalSolution) -> Vec<[Vec<f64>; 2]> {
    let n = s.nodes.len();
    let mut normal = vec![[0.0; 3]; n];
    for e in &s.shells {
        for &v in &e.nodes {
            for k in 0..3 {
                normal[v][k] += e.shape.normal[k];
            }
        }
    }
    let mut axis = vec![[0.0; 3]; n];
    for b in &s.beams {
        let (a, c) = (s.nodes[b.nodes[0]].xyz, s.nodes[b.nodes[1]].xyz);
        let t = unit([c[0] - a[0], c[1] - a[1], c[2] - a[2]]);
        for &v in &b.nodes {
            let sign = if dot(axis[v], t) < 0.0 { -1.0 } else { 1.0 };
            for k in 0..3 {
                axis[v][k] += sign * t[k];
            }
        }
    }
    for t in &s.tubes {
        for &v in t.rings.iter().flatten() {
            axis[v] = t.axis;
        }
    }
    let normal: Vec<[f64; 3]> = normal.into_iter().map(unit).collect();
    let axis: Vec<[f64; 3]> = axis.into_iter().map(unit).collect();
    (0..sol.n_modes())
        .map(|i| {
            let u = system.dof_map().expand(sol.shape(i));
            let mut out = [vec![0.0; n], vec![0.0; n]];
            for v in 0..n {
                let t = [u[v][0], u[v][1], u[v][2]];
                let all = dot(t, t);
                let (nrm, ax) = (normal[v], axis[v]);
                let along_axis = dot(t, ax).powi(2);
                let across_normal = dot(t, nrm).powi(2);
                out[0][v] = if dot(nrm, nrm) > 0.0 {
                    across_normal
                } else if dot(ax, ax) > 0.0 {
                    all - along_axis
                } else {
                    all
                };
                out[1][v] = if dot(ax, ax) > 0.0 {
                    along_axis
                } else if dot(nrm, nrm) > 0.0 {
                    all - across_normal
                } else {
                    0.0
                };
            }
            out
        })
        .collect()
}

/// Motion along a generated tube: for each mode and each axial station (ring), the largest
/// motion across the axis, |u − (u·a) a|, of the station's nodes (the lateral motion of a beam
/// tube; radial and tangential wall motion of a shell tube), in m per unit modal coordinate.
/// Returns the stations' distances from the tube's start (m) and one profile per mode.
///
/// # Panics
/// If `tube` is not an index into `s.tubes`.
pub fn tube_profiles(s: &Structure, system: &System, sol: &ModalSolution, tube: usize) -> (Vec<f64>, Vec<Vec<f64>>) {
    let t = &s.tubes[tube];
    let stations: Vec<f64> = t.fractions.iter().map(|f| f * t.length).collect();
    let profiles = (0..sol.n_modes())
        .map(|i| {
            let u = system.dof_map().expand(sol.shape(i));
            t.rings
                .iter()
                .map(|ring| {
                    ring.iter()
                        .map(|&v| {
                            let tr = [u[v][0], u[v][1], u[v][2]];
                            let a = dot(tr, t.axis);
                            (0..3).map(|c| (tr[c] - a * t.axis[c]).powi(2)).sum::<f64>().sqrt()
                        })
                        .fold(0.0, f64::max)
                })
                .collect()
        })
        .collect();
    (stations, profiles)
}

/// Mode insight of `sol` (modes of `system`, assembled from `s`). Repeated pairs are first rotated
/// within their span, in place: a shell-tube pair so that the first member's dominant harmonic on
/// the ring of largest motion is cos nθ (for n = 1: motion along the tube's reference direction)
/// and the second's sin nθ; other pairs so that the first member takes all the participation in the
/// first of y, z, x, rx, ry, rz that the pair has and the second none. The rotation keeps the pair
/// M-orthonormal; since the two frequencies differ by up to the tolerance, the rotated shapes have
/// residuals up to that relative size.
///
/// # Errors
/// [`SolverError::Request`] if the system was not assembled from `s` (matrices from files), the
/// model has no mass, or the reference point is not finite; [`SolverError::Element`] if an element's
/// matrices cannot be rebuilt.
pub fn mode_insight(
    s: &Structure,
    system: &System,
    sol: &mut ModalSolution,
    options: &InsightOptions,
) -> Result<ModeInsight, SolverError> {
    if system.node_xyz.len() != s.nodes.len() || system.dof_map().n_nodes() != s.nodes.len() {
        return Err(SolverError::Request(
            "mode insight needs the model the matrices were assembled from (not matrices from files)".into(),
        ));
    }
    let r0 = system.rigid_mass;
    let mass = r0[0][0];
    if mass <= 0.0 || !mass.is_finite() {
        return Err(SolverError::Request("mode insight needs a model with mass".into()));
    }
    // Centre of mass from the first moments (see `node_rigid` in assembly.rs for ω × x).
    let centre = [r0[1][5] / r0[1][1], r0[2][3] / r0[2][2], r0[0][4] / r0[0][0]];
    let x_ref = options.reference_point.unwrap_or(centre);
    if x_ref.iter().any(|v| !v.is_finite()) {
        return Err(SolverError::Request(format!("the reference point {x_ref:?} is not finite")));
    }
    // r_ref = r_0 S: the rotation about x_ref is the one about the origin less the translation
    // ω × x_ref.
    let mut shift = [[0.0; 6]; 6];
    for d in 0..6 {
        shift[d][d] = 1.0;
    }
    for a in 0..3 {
        let mut w = [0.0; 3];
        w[a] = 1.0;
        let t = cross(w, x_ref);
        for d in 0..3 {
            shift[d][3 + a] = -t[d];
        }
    }
    let n = system.n_dofs();
    let mut b = Mat::<f64>::zeros(n, 6);
    for i in 0..n {
        for c in 0..6 {
            b[(i, c)] = (0..6).map(|d| system.base_inertia[(i, d)] * shift[d][c]).sum();
        }
    }
    let rigid_mass: [f64; 6] = std::array::from_fn(|c| {
        (0..6).map(|d| (0..6).map(|e| shift[d][c] * r0[d][e] * shift[e][c]).sum::<f64>()).sum()
    });

    let parts = s.element_parts();
    let region_names: Vec<String> = s.regions.keys().cloned().collect();
    let blocks = element_blocks(s, system.dof_map(), system.dof_map().n_dofs() > system.dof_map().n_structural())?;
    let block_part: Vec<usize> = blocks
        .iter()
        .map(|bl| match bl.source {
            BlockSource::Beam(i) => parts.beams[i],
            BlockSource::Shell(i) => parts.shells[i],
            BlockSource::Spring(_) => parts.springs,
            BlockSource::PointMass(_) => parts.point_masses,
            BlockSource::Absorber(_) => parts.absorbers,
        })
        .collect();
    let block_nodes: Vec<Vec<usize>> = blocks
        .iter()
        .map(|bl| match bl.source {
            BlockSource::Beam(i) => s.beams[i].nodes.to_vec(),
            BlockSource::Shell(i) => s.shells[i].nodes.clone(),
            BlockSource::Spring(i) => std::iter::once(s.springs[i].node).chain(s.springs[i].other).collect(),
            BlockSource::PointMass(i) => vec![s.point_masses[i].node],
            BlockSource::Absorber(i) => vec![s.absorbers[i].node],
        })
        .collect();
    let mut region_of_node: Vec<Vec<usize>> = vec![Vec::new(); s.nodes.len()];
    for (ri, nodes) in s.regions.values().enumerate() {
        for &v in nodes {
            region_of_node[v].push(ri);
        }
    }
    let ctx = Context { s, system, parts: &parts.names, blocks: &blocks, block_part, block_nodes, region_of_node };

    let k = sol.n_modes();
    let mut energies: Vec<Energies> = (0..k).map(|i| ctx.energies(sol.shape(i), region_names.len())).collect();
    let mut classes: Vec<ModeClass> = (0..k).map(|i| ctx.classify(sol, i, &energies[i], &b, &rigid_mass)).collect();
    // Repeated pairs: exactly two elastic modes within the tolerance.
    let freqs: Vec<f64> = (0..k).map(|i| sol.frequency_hz(i)).collect();
    let close = |i: usize, j: usize| {
        let (fi, fj) = (freqs[i], freqs[j]);
        (fj - fi).abs() <= options.pair_tolerance * fi.abs().max(fj.abs())
    };
    let mut i = sol.n_zero_energy;
    while i + 1 < k {
        let j = i + 1;
        let triple = (i > sol.n_zero_energy && close(i - 1, i)) || (j + 1 < k && close(j, j + 1));
        if close(i, j) && !triple && freqs[i] > 0.0 {
            let f = ctx.orientation_functional(sol, i, j, &classes[i], &b);
            let (fa, fb) = (dot_slice(&f, sol.shape(i)), dot_slice(&f, sol.shape(j)));
            if fa != 0.0 || fb != 0.0 {
                sol.rotate_pair(i, j, fb.atan2(fa));
            }
            for m in [i, j] {
                energies[m] = ctx.energies(sol.shape(m), region_names.len());
                classes[m] = ctx.classify(sol, m, &energies[m], &b, &rigid_mass);
            }
            classes[i].pair = Some(j + 1);
            classes[j].pair = Some(i + 1);
            i += 2;
        } else {
            i += 1;
        }
    }

    let mut cumulative = [0.0; 6];
    let mut modes = Vec::with_capacity(k);
    for (i, (class, e)) in classes.into_iter().zip(energies).enumerate() {
        let phi = sol.shape(i);
        let g: f64 = dot_slice(phi, &system.mass_times(phi));
        let l: [f64; 6] = std::array::from_fn(|d| (0..n).map(|r| phi[r] * b[(r, d)]).sum());
        let participation = l.map(|v| if g > 0.0 { v / g } else { 0.0 });
        let effective_mass = l.map(|v| if g > 0.0 { v * v / g } else { 0.0 });
        let fraction: [f64; 6] =
            std::array::from_fn(|d| if rigid_mass[d] > 0.0 { effective_mass[d] / rigid_mass[d] } else { 0.0 });
        for d in 0..6 {
            cumulative[d] += fraction[d];
        }
        let u = system.dof_map().expand(phi);
        let umax = u.iter().map(|v| (v[0] * v[0] + v[1] * v[1] + v[2] * v[2]).sqrt()).fold(0.0, f64::max);
        modes.push(ModeFacts {
            generalised_mass: if umax > 0.0 { g / (umax * umax) } else { 0.0 },
            participation,
            effective_mass,
            effective_mass_fraction: fraction,
            cumulative_fraction: cumulative,
            class,
            kinetic_fraction: e.kinetic,
            strain_fraction: e.strain,
            region_kinetic_fraction: e.region_kinetic,
            region_strain_fraction: e.region_strain,
        });
    }
    Ok(ModeInsight { reference_point: x_ref, rigid_mass, part_names: parts.names, region_names, modes })
}

/// Energy shares of one mode.
struct Energies {
    kinetic: Vec<f64>,
    strain: Vec<f64>,
    region_kinetic: Vec<f64>,
    region_strain: Vec<f64>,
}

/// What classification and energies need of the model.
struct Context<'a, 'd> {
    s: &'a Structure,
    system: &'a System,
    parts: &'a [String],
    blocks: &'a [crate::assembly::Block<'d>],
    block_part: Vec<usize>,
    block_nodes: Vec<Vec<usize>>,
    region_of_node: Vec<Vec<usize>>,
}

impl Context<'_, '_> {
    /// Kinetic and strain energy shares of shape `phi` per part and per region.
    fn energies(&self, phi: &[f64], n_regions: usize) -> Energies {
        let per_block: Vec<(f64, f64)> = self
            .blocks
            .par_iter()
            .map(|bl| {
                let nb = bl.dofs.len();
                let u: Vec<f64> = bl.dofs.iter().map(|t| t.iter().map(|&(j, w)| w * phi[j]).sum()).collect();
                let mut ek = 0.0;
                let mut em = 0.0;
                for r in 0..nb {
                    if u[r] == 0.0 {
                        continue;
                    }
                    for c in 0..nb {
                        ek += u[r] * bl.k[nb * r + c] * u[c];
                        em += u[r] * bl.m[nb * r + c] * u[c];
                    }
                }
                (ek, em)
            })
            .collect();
        let total_k: f64 = per_block.iter().map(|p| p.0).sum();
        let total_m: f64 = per_block.iter().map(|p| p.1).sum();
        // Strain shares only where the mode strains the model (not for rigid-body modes).
        let strain_ok =
            total_k > 1e-9 * per_block.iter().map(|p| p.0.abs()).sum::<f64>().max(f64::MIN_POSITIVE) && total_k > 0.0;
        let mut out = Energies {
            kinetic: vec![0.0; self.parts.len()],
            strain: vec![0.0; self.parts.len()],
            region_kinetic: vec![0.0; n_regions],
            region_strain: vec![0.0; n_regions],
        };
        for (bi, &(ek, em)) in per_block.iter().enumerate() {
            let (fk, fm) = (if strain_ok { ek / total_k } else { 0.0 }, if total_m > 0.0 { em / total_m } else { 0.0 });
            out.kinetic[self.block_part[bi]] += fm;
            out.strain[self.block_part[bi]] += fk;
            let nodes = &self.block_nodes[bi];
            let share = 1.0 / nodes.len() as f64;
            for &v in nodes {
                for &r in &self.region_of_node[v] {
                    out.region_kinetic[r] += share * fm;
                    out.region_strain[r] += share * fk;
                }
            }
        }
        out
    }

    /// Classifies mode `i`.
    fn classify(&self, sol: &ModalSolution, i: usize, e: &Energies, b: &Mat<f64>, rigid_mass: &[f64; 6]) -> ModeClass {
        let s = self.s;
        let mut class = ModeClass { kind: ModeKind::RigidBody, n: None, m: None, plane: None, pair: None, part: None };
        let phi = sol.shape(i);
        if i < sol.n_zero_energy {
            let g = dot_slice(phi, &self.system.mass_times(phi));
            let frac: Vec<f64> = (0..6)
                .map(|d| {
                    let l: f64 = (0..phi.len()).map(|r| phi[r] * b[(r, d)]).sum();
                    if rigid_mass[d] > 0.0 && g > 0.0 { l * l / g / rigid_mass[d] } else { 0.0 }
                })
                .collect();
            class.plane = Some(RIGID_DIRECTIONS[argmax(&frac)]);
            return class;
        }
        let u = self.system.dof_map().expand(phi);
        let part = argmax(&e.kinetic);
        class.part = self.parts.get(part).cloned();
        let n_lines = s.lines.len();
        let n_tubes = s.tubes.len();
        if part < n_lines {
            let line = &s.lines[part];
            let t = unit(sub(line.to, line.from));
            let (kind, plane, m) = line_motion(&u, &line.nodes, t, radius_of_gyration2(s, Some(part), None));
            (class.kind, class.plane, class.m) = (kind, plane, Some(m));
        } else if part < n_lines + n_tubes {
            let tube = &s.tubes[part - n_lines];
            if tube.fidelity == Fidelity::Shell && tube.rings.first().is_some_and(|r| r.len() > 2) {
                let (kind, n, m, plane) = tube_motion(&u, tube);
                (class.kind, class.n, class.m, class.plane) = (kind, Some(n), Some(m), plane);
            } else {
                let nodes: Vec<usize> = tube.rings.iter().filter_map(|r| r.first().copied()).collect();
                let (kind, plane, m) = line_motion(&u, &nodes, tube.axis, radius_of_gyration2(s, None, Some(tube)));
                (class.kind, class.plane, class.m) = (kind, plane, Some(m));
            }
        } else if part < n_lines + n_tubes + s.panels.len() {
            let panel = &s.panels[part - n_lines - n_tubes];
            let [nx, ny] = panel.divisions;
            let w = |i: usize, j: usize| u[panel.node(i, j)][2];
            let normal: f64 = panel.nodes.iter().map(|&v| u[v][2] * u[v][2]).sum();
            let in_plane: f64 = panel.nodes.iter().map(|&v| u[v][0] * u[v][0] + u[v][1] * u[v][1]).sum();
            if in_plane > normal {
                class.kind = ModeKind::InPlane;
            } else {
                let (mut bi, mut bj, mut best) = (0, 0, -1.0);
                for j in 0..=ny {
                    for i in 0..=nx {
                        if w(i, j).abs() > best {
                            (bi, bj, best) = (i, j, w(i, j).abs());
                        }
                    }
                }
                class.kind = ModeKind::Panel;
                class.m = Some(half_waves(&(0..=nx).map(|i| w(i, bj)).collect::<Vec<_>>()));
                class.n = Some(half_waves(&(0..=ny).map(|j| w(bi, j)).collect::<Vec<_>>()));
            }
        } else if !s.beams.is_empty() && self.parts.get(part).is_none_or(|p| p != "shells") {
            let (kind, plane) = frame_motion(s, &u);
            (class.kind, class.plane) = (kind, plane);
        } else {
            class.kind = ModeKind::Shell;
        }
        class
    }

    /// The functional whose value the first member of a pair maximises and the second makes zero.
    fn orientation_functional(
        &self,
        sol: &ModalSolution,
        i: usize,
        j: usize,
        class: &ModeClass,
        b: &Mat<f64>,
    ) -> Vec<f64> {
        let dofs = self.system.dof_map();
        let nd = self.system.n_dofs();
        let mut f = vec![0.0; nd];
        let tube = class.part.as_ref().and_then(|p| self.s.tubes.iter().find(|t| &t.name == p));
        if let (Some(t), Some(n)) = (tube, class.n) {
            // The ring where the pair moves most radially in harmonic n.
            let (ui, uj) = (dofs.expand(sol.shape(i)), dofs.expand(sol.shape(j)));
            let e2 = cross(t.axis, t.reference);
            let amp = |ring: &[usize], u: &[[f64; 6]]| {
                let c = harmonic(ring, u, t.reference, e2, n);
                c[0] * c[0] + c[1] * c[1]
            };
            let best = (0..t.rings.len())
                .max_by(|&a, &c| {
                    let ra = amp(&t.rings[a], &ui) + amp(&t.rings[a], &uj);
                    let rc = amp(&t.rings[c], &ui) + amp(&t.rings[c], &uj);
                    ra.total_cmp(&rc)
                })
                .unwrap_or(0);
            let ring = &t.rings[best];
            let nr = ring.len() as f64;
            for (k, &v) in ring.iter().enumerate() {
                let th = 2.0 * std::f64::consts::PI * k as f64 / nr;
                let er: [f64; 3] = std::array::from_fn(|c| th.cos() * t.reference[c] + th.sin() * e2[c]);
                let wgt = (n as f64 * th).cos();
                for c in 0..3 {
                    for &(d, w) in dofs.terms(v, c) {
                        f[d] += wgt * er[c] * w;
                    }
                }
            }
            if dot_slice(&f, sol.shape(i)).abs() + dot_slice(&f, sol.shape(j)).abs() > 0.0 {
                return f;
            }
        }
        let (a, c) = (sol.shape(i), sol.shape(j));
        let scale: f64 =
            (0..nd).map(|r| b[(r, 0)].abs() + b[(r, 1)].abs() + b[(r, 2)].abs()).sum::<f64>().max(f64::MIN_POSITIVE);
        for d in [1, 2, 0, 3, 4, 5] {
            let col: Vec<f64> = (0..nd).map(|r| b[(r, d)]).collect();
            let (la, lc) = (dot_slice(&col, a), dot_slice(&col, c));
            let norm: f64 = col.iter().map(|v| v.abs()).sum::<f64>().max(f64::MIN_POSITIVE);
            if (la * la + lc * lc).sqrt() > 1e-8 * norm.min(scale) {
                return col;
            }
        }
        // No participation at all: the DOF where the pair moves most.
        let best =
            (0..nd).max_by(|&p, &q| (a[p] * a[p] + c[p] * c[p]).total_cmp(&(a[q] * a[q] + c[q] * c[q]))).unwrap_or(0);
        f.fill(0.0);
        if nd > 0 {
            f[best] = 1.0;
        }
        f
    }
}

/// Mean squared polar radius of gyration (I_y + I_z)/A of a line's or tube's beams (all beams if
/// neither has any), in m².
fn radius_of_gyration2(s: &Structure, line: Option<usize>, tube: Option<&TubeNodes>) -> f64 {
    let on_tube = |b: &antinode_mesh::BeamElement| {
        tube.is_some_and(|t| {
            t.rings.iter().flatten().any(|&v| v == b.nodes[0]) && t.rings.iter().flatten().any(|&v| v == b.nodes[1])
        })
    };
    let pick: Vec<&antinode_mesh::BeamElement> =
        s.beams.iter().filter(|b| (line.is_some() && b.line == line) || on_tube(b)).collect();
    let list: Vec<&antinode_mesh::BeamElement> = if pick.is_empty() { s.beams.iter().collect() } else { pick };
    let sum: f64 = list.iter().map(|b| (b.section.second_moment_y + b.section.second_moment_z) / b.section.area).sum();
    if list.is_empty() { 0.0 } else { sum / list.len() as f64 }
}

/// Dominant motion of a straight run of nodes along unit axis `t`: axial Σ(u·t)², torsion
/// Σ r_g² (θ·t)², bending Σ|u − (u·t)t|² (direction: the global axis with most of it); and the
/// half-wave count of the dominant component along the run.
fn line_motion(u: &[[f64; 6]], nodes: &[usize], t: [f64; 3], rg2: f64) -> (ModeKind, Option<&'static str>, usize) {
    let mut axial = 0.0;
    let mut torsion = 0.0;
    let mut lateral = [0.0; 3];
    for &v in nodes {
        let tr = [u[v][0], u[v][1], u[v][2]];
        let a = dot(tr, t);
        axial += a * a;
        torsion += rg2 * dot([u[v][3], u[v][4], u[v][5]], t).powi(2);
        for c in 0..3 {
            lateral[c] += (tr[c] - a * t[c]).powi(2);
        }
    }
    let bending: f64 = lateral.iter().sum();
    if bending >= axial && bending >= torsion {
        let d = argmax(&lateral);
        let profile: Vec<f64> = nodes.iter().map(|&v| u[v][d]).collect();
        (ModeKind::Bending, Some(["x", "y", "z"][d]), half_waves(&profile))
    } else if torsion >= axial {
        let profile: Vec<f64> = nodes.iter().map(|&v| dot([u[v][3], u[v][4], u[v][5]], t)).collect();
        (ModeKind::Torsion, None, half_waves(&profile))
    } else {
        let profile: Vec<f64> = nodes.iter().map(|&v| dot([u[v][0], u[v][1], u[v][2]], t)).collect();
        (ModeKind::Axial, None, half_waves(&profile))
    }
}

/// Dominant motion of a frame: per beam, mass-weighted axial, torsion and lateral motion of its
/// nodes in its own axis (as [`line_motion`]).
fn frame_motion(s: &Structure, u: &[[f64; 6]]) -> (ModeKind, Option<&'static str>) {
    let mut axial = 0.0;
    let mut torsion = 0.0;
    let mut lateral = [0.0; 3];
    for b in &s.beams {
        let t = unit(sub(s.nodes[b.nodes[1]].xyz, s.nodes[b.nodes[0]].xyz));
        let m = b.mass(&s.nodes);
        let rg2 = (b.section.second_moment_y + b.section.second_moment_z) / b.section.area;
        for &v in &b.nodes {
            let tr = [u[v][0], u[v][1], u[v][2]];
            let a = dot(tr, t);
            axial += m * a * a;
            torsion += m * rg2 * dot([u[v][3], u[v][4], u[v][5]], t).powi(2);
            for c in 0..3 {
                lateral[c] += m * (tr[c] - a * t[c]).powi(2);
            }
        }
    }
    let bending: f64 = lateral.iter().sum();
    if bending >= axial && bending >= torsion {
        (ModeKind::Bending, Some(["x", "y", "z"][argmax(&lateral)]))
    } else if torsion >= axial {
        (ModeKind::Torsion, None)
    } else {
        (ModeKind::Axial, None)
    }
}

/// Fourier coefficients (Σ w cos nθ, Σ w sin nθ) of the radial motion w = u·e_r(θ) on a ring whose
/// node k sits at θ = 2πk/N, e_r = cos θ e₁ + sin θ e₂.
fn harmonic(ring: &[usize], u: &[[f64; 6]], e1: [f64; 3], e2: [f64; 3], n: usize) -> [f64; 2] {
    let nr = ring.len() as f64;
    let mut c = [0.0; 2];
    for (k, &v) in ring.iter().enumerate() {
        let th = 2.0 * std::f64::consts::PI * k as f64 / nr;
        let er: [f64; 3] = std::array::from_fn(|d| th.cos() * e1[d] + th.sin() * e2[d]);
        let w = dot([u[v][0], u[v][1], u[v][2]], er);
        let nt = n as f64 * th;
        c[0] += w * nt.cos();
        c[1] += w * nt.sin();
    }
    c
}

/// Shell-tube classification: on each ring the radial, tangential and axial motion are split into
/// circumferential harmonics n = 0 … N/2 (discrete Fourier series; energy per harmonic by
/// Parseval's relation, summed over rings and components); the dominant n decides the kind (n = 0:
/// breathing, torsion or axial by its dominant component; n = 1: bending, with the global direction
/// of the largest ring translation; n ≥ 2: ovaling); m counts the half-waves of the dominant
/// harmonic's amplitude (projected on its phase at the ring of largest motion) along the rings.
fn tube_motion(u: &[[f64; 6]], t: &TubeNodes) -> (ModeKind, usize, usize, Option<&'static str>) {
    let e1 = t.reference;
    let e2 = cross(t.axis, t.reference);
    let nr = t.rings[0].len();
    let top = nr / 2;
    // comps[c][n] over rings: radial, tangential, axial.
    let mut energy = vec![[0.0; 3]; top + 1];
    for ring in &t.rings {
        let np = ring.len() as f64;
        for n in 0..=top {
            let mut c = [[0.0; 2]; 3];
            for (k, &v) in ring.iter().enumerate() {
                let th = 2.0 * std::f64::consts::PI * k as f64 / np;
                let er: [f64; 3] = std::array::from_fn(|d| th.cos() * e1[d] + th.sin() * e2[d]);
                let et: [f64; 3] = std::array::from_fn(|d| -th.sin() * e1[d] + th.cos() * e2[d]);
                let tr = [u[v][0], u[v][1], u[v][2]];
                let vals = [dot(tr, er), dot(tr, et), dot(tr, t.axis)];
                let nt = n as f64 * th;
                for q in 0..3 {
                    c[q][0] += vals[q] * nt.cos();
                    c[q][1] += vals[q] * nt.sin();
                }
            }
            // Parseval: Σ x² = |C₀|²/N for n = 0 (and the Nyquist term), 2|C_n|²/N otherwise.
            let w = if n == 0 || 2 * n == ring.len() { 1.0 / np } else { 2.0 / np };
            for q in 0..3 {
                energy[n][q] += w * (c[q][0] * c[q][0] + c[q][1] * c[q][1]);
            }
        }
    }
    let totals: Vec<f64> = energy.iter().map(|e| e.iter().sum()).collect();
    let n = argmax(&totals);
    let profile_of = |f: &dyn Fn(&[usize]) -> [f64; 2]| -> Vec<f64> {
        let coeffs: Vec<[f64; 2]> = t.rings.iter().map(|r| f(r)).collect();
        let best = argmax(&coeffs.iter().map(|c| c[0] * c[0] + c[1] * c[1]).collect::<Vec<_>>());
        let d = coeffs[best];
        let norm = (d[0] * d[0] + d[1] * d[1]).sqrt().max(f64::MIN_POSITIVE);
        coeffs.iter().map(|c| (c[0] * d[0] + c[1] * d[1]) / norm).collect()
    };
    if n == 0 {
        let q = argmax(&energy[0]);
        let kind = [ModeKind::Breathing, ModeKind::Torsion, ModeKind::Axial][q];
        let profile: Vec<f64> = t
            .rings
            .iter()
            .map(|r| {
                r.iter()
                    .enumerate()
                    .map(|(k, &v)| {
                        let th = 2.0 * std::f64::consts::PI * k as f64 / r.len() as f64;
                        let dir: [f64; 3] = match q {
                            0 => std::array::from_fn(|d| th.cos() * e1[d] + th.sin() * e2[d]),
                            1 => std::array::from_fn(|d| -th.sin() * e1[d] + th.cos() * e2[d]),
                            _ => t.axis,
                        };
                        dot([u[v][0], u[v][1], u[v][2]], dir)
                    })
                    .sum()
            })
            .collect();
        return (kind, 0, half_waves(&profile), None);
    }
    let profile = profile_of(&|r| harmonic(r, u, e1, e2, n));
    if n == 1 {
        // Direction of the largest ring translation (the ring's mean translation).
        let best = argmax(&t.rings.iter().map(|r| mean_translation(r, u)).map(|m| dot(m, m)).collect::<Vec<_>>());
        let m = mean_translation(&t.rings[best], u);
        let lateral: [f64; 3] = std::array::from_fn(|c| (m[c] - dot(m, t.axis) * t.axis[c]).abs());
        return (ModeKind::Bending, 1, half_waves(&profile), Some(["x", "y", "z"][argmax(&lateral)]));
    }
    (ModeKind::Ovaling, n, half_waves(&profile), None)
}

fn mean_translation(ring: &[usize], u: &[[f64; 6]]) -> [f64; 3] {
    let n = ring.len().max(1) as f64;
    std::array::from_fn(|c| ring.iter().map(|&v| u[v][c]).sum::<f64>() / n)
}

/// Half-waves of a profile: one more than the number of sign changes between successive values
/// above 5 % of the largest magnitude (smaller values, near nodes of the shape, are skipped).
fn half_waves(profile: &[f64]) -> usize {
    let max = profile.iter().map(|v| v.abs()).fold(0.0, f64::max);
    if max == 0.0 {
        return 0;
    }
    let mut changes = 0;
    let mut last: Option<bool> = None;
    for &v in profile {
        if v.abs() < 0.05 * max {
            continue;
        }
        let positive = v > 0.0;
        if last.is_some_and(|l| l != positive) {
            changes += 1;
        }
        last = Some(positive);
    }
    changes + 1
}

fn argmax(v: &[f64]) -> usize {
    let mut best = 0;
    for (i, &x) in v.iter().enumerate() {
        if x > v[best] {
            best = i;
        }
    }
    best
}

fn dot(a: [f64; 3], b: [f64; 3]) -> f64 {
    a[0] * b[0] + a[1] * b[1] + a[2] * b[2]
}

fn dot_slice(a: &[f64], b: &[f64]) -> f64 {
    a.iter().zip(b).map(|(x, y)| x * y).sum()
}

fn cross(a: [f64; 3], b: [f64; 3]) -> [f64; 3] {
    [a[1] * b[2] - a[2] * b[1], a[2] * b[0] - a[0] * b[2], a[0] * b[1] - a[1] * b[0]]
}

fn sub(a: [f64; 3], b: [f64; 3]) -> [f64; 3] {
    [a[0] - b[0], a[1] - b[1], a[2] - b[2]]
}

/// Unit vector, or zero for a zero vector.
fn unit(a: [f64; 3]) -> [f64; 3] {
    let n = dot(a, a).sqrt();
    if n > 0.0 { a.map(|v| v / n) } else { [0.0; 3] }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn mac_of_scaled_and_of_independent_vectors() {
        // Definition (Allemang & Brown 1982): scale invariance and the 2-D worked value.
        assert!((mac(&[1.0, -2.0, 3.0], &[-2.5, 5.0, -7.5]) - 1.0).abs() < 1e-15);
        assert!((mac(&[1.0, 0.0], &[1.0, 1.0]) - 0.5).abs() < 1e-15);
        assert_eq!(mac(&[0.0, 0.0], &[1.0, 1.0]), 0.0);
    }

    #[test]
    fn pairing_takes_the_largest_entries_first() {
        let m = vec![vec![0.2, 0.9, 0.1], vec![0.95, 0.3, 0.0]];
        assert_eq!(pair_by_mac(&m), vec![Some(1), Some(0)]);
        let one_column = vec![vec![0.4], vec![0.8]];
        assert_eq!(pair_by_mac(&one_column), vec![None, Some(0)]);
    }

    #[test]
    fn half_waves_skip_small_values_near_nodes() {
        assert_eq!(half_waves(&[0.0, 0.7, 1.0, 0.7, 0.0]), 1);
        assert_eq!(half_waves(&[0.0, 1.0, 0.01, -0.01, -1.0, 0.0]), 2);
        assert_eq!(half_waves(&[1.0, -0.5, 0.2, -0.8]), 4);
        assert_eq!(half_waves(&[0.0; 4]), 0);
    }
}
