//! Checking a [`Model`] and resolving it into a [`Structure`]: the one place model invariants are
//! checked.

use std::collections::{BTreeMap, HashMap};
use std::path::{Path, PathBuf};

use crate::error::ModelError;
use crate::generate::{Part, panel_part, tube_part};
use crate::import::{CellKind, MeshData, read_mesh};
use crate::model::{
    AbsorberKind, AmplitudeLaw, CandidateSet, Direction, ElementId, Fidelity, Fixity, FixityPreset, LinkKind, Location,
    MassMatrix, MeshProperty, Model, NodeId, Objective, Section, SpringEnd, Targets,
};
use crate::quality::{ASPECT_RATIO_WARNING, JACOBIAN_RATIO_WARNING, SKEW_WARNING_DEG, WARP_WARNING_DEG, shell_shape};
use crate::region::{RegionContext, select};
use crate::section::section_properties;
use crate::structure::{
    AbsorberDamping, AbsorberSpec, BaseSpec, BeamElement, DampingSpec, DesignSpec, DirectionSpec, ElastomerSpec,
    LineNodes, LinkSpec, MaterialProperties, MeshNodes, NodalMass, OrderAmplitude, OrderSpec, PanelNodes, PointForce,
    RandomSpec, ResponseSpec, RingCandidate, ShellElement, SpringElement, StiffenerNodes, Structure, StructureNode,
    StudySpec, TargetSpec, TubeNodes, UncertaintySpec, bounding_diagonal, distance,
};

/// Default modal damping ratio of elastic modes when the study gives none (1 %, common practice for
/// lightly damped metal structures).
pub const DEFAULT_MODAL_DAMPING_RATIO: f64 = 0.01;

/// Relative tolerance (of the model size) under which two points are the same node.
const MERGE_TOLERANCE: f64 = 1e-9;

/// Default snapping tolerance for `xyz` locations, as a fraction of the bounding-box diagonal.
const SNAP_FRACTION: f64 = 0.01;

/// Resource limits applied while a model is checked and its parts are generated.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Limits {
    /// Most nodes the whole model may have, explicit and generated: a guard against an element
    /// size in the wrong unit or a stray digit (a model is refused before its nodes are made).
    pub max_nodes: usize,
}

impl Limits {
    /// The default node limit: 10⁶ nodes (6·10⁶ DOFs) is already beyond what the eigensolver
    /// handles in reasonable time and memory on a workstation (docs/benchmarks.md).
    pub const DEFAULT_MAX_NODES: usize = 1_000_000;
}

impl Default for Limits {
    fn default() -> Self {
        Self { max_nodes: Self::DEFAULT_MAX_NODES }
    }
}

/// Checks `model` and resolves names, ids and locations, within the default [`Limits`]; mesh files
/// (`meshes[].file`) are found relative to the working folder. For a model read from a file use
/// [`validate_in`] with the file's folder.
///
/// # Errors
/// The first problem found, naming the item by its JSON path and saying what is wrong.
pub fn validate(model: &Model) -> Result<Structure, ModelError> {
    validate_in(model, Path::new(""))
}

/// Checks `model` and resolves names, ids and locations within the default [`Limits`]; relative
/// mesh file names (`meshes[].file`) are joined to `folder` (the folder of the model file).
///
/// # Errors
/// The first problem found, naming the item by its JSON path (or the mesh file and its cell) and
/// saying what is wrong.
pub fn validate_in(model: &Model, folder: &Path) -> Result<Structure, ModelError> {
    validate_with(model, folder, &Limits::default())
}

/// [`validate_in`] within the given limits.
///
/// # Errors
/// As [`validate_in`]; a model above `limits` is refused before its parts are generated.
pub fn validate_with(model: &Model, folder: &Path, limits: &Limits) -> Result<Structure, ModelError> {
    let meshes = read_meshes(model, folder)?;
    let mut b = Builder::new(model, &meshes, *limits)?;
    b.nodes()?;
    b.lines()?;
    b.tubes()?;
    b.panels()?;
    b.meshes(&meshes)?;
    b.regions()?;
    b.links()?;
    b.beams()?;
    let shells = b.shells()?;
    let fixed = b.supports()?;
    b.check_links(&fixed)?;
    let springs = b.springs()?;
    let point_masses = b.point_masses()?;
    let absorbers = b.absorbers()?;
    let study = match &model.study {
        Some(s) => {
            let grounded = fixed.iter().any(|f| f.iter().any(|&x| x)) || springs.iter().any(|sp| sp.other.is_none());
            Some(b.study(s, &fixed, grounded)?)
        }
        None => {
            if let Some(i) = model.absorbers.iter().position(|a| a.elastomer.is_some()) {
                return Err(ModelError::Invalid {
                    at: format!("absorbers[{i}].elastomer"),
                    message: "an elastomer is defined in study.elastomers, but the model has no study".into(),
                });
            }
            None
        }
    };
    let mut structure = Structure {
        title: model.title.clone(),
        nodes: b.nodes,
        beams: b.beams,
        shells,
        fixed,
        springs,
        point_masses,
        absorbers,
        lines: b.lines,
        tubes: b.tubes,
        panels: b.panels,
        meshes: b.meshes,
        regions: b.regions,
        links: b.links,
        mass_matrix: model.mass_matrix.unwrap_or(MassMatrix::Consistent),
        rigid_body_modes: model.rigid_body_modes,
        study,
        warnings: b.warnings,
    };
    if structure.total_mass().partial_cmp(&0.0) != Some(std::cmp::Ordering::Greater) {
        return Err(ModelError::NoMass);
    }
    orient_shells(&mut structure);
    add_connectivity_warnings(&mut structure);
    add_shell_quality_warnings(&mut structure);
    Ok(structure)
}

/// What a beam element is made from.
struct BeamSource<'s> {
    id: ElementId,
    label: String,
    at: &'s str,
    nodes: [usize; 2],
    section_name: &'s str,
    section: &'s Section,
    material: &'s str,
    orientation: Option<[f64; 3]>,
    line: Option<usize>,
}

struct Builder<'a> {
    model: &'a Model,
    limits: Limits,
    materials: BTreeMap<&'a str, MaterialProperties>,
    nodes: Vec<StructureNode>,
    node_index: HashMap<NodeId, usize>,
    node_path: HashMap<NodeId, String>,
    grid: PointGrid,
    beams: Vec<BeamElement>,
    lines: Vec<LineNodes>,
    line_index: HashMap<&'a str, usize>,
    tubes: Vec<TubeNodes>,
    tube_index: HashMap<&'a str, usize>,
    panels: Vec<PanelNodes>,
    panel_index: HashMap<&'a str, usize>,
    meshes: Vec<MeshNodes>,
    regions: BTreeMap<String, Vec<usize>>,
    /// Shells of generated parts, after the explicit ones.
    generated_shells: Vec<ShellElement>,
    /// Fixed DOFs of generated parts.
    generated_fixed: Vec<(usize, [bool; 6])>,
    /// Springs of generated parts.
    generated_springs: Vec<SpringElement>,
    /// Point masses of generated parts (end fittings).
    generated_masses: Vec<NodalMass>,
    /// Links: generated ones (end fittings) while parts are joined, then all of them.
    links: Vec<LinkSpec>,
    link_index: HashMap<String, usize>,
    /// Next id of a generated node, beam and shell.
    next_node: u64,
    next_beam: u64,
    next_shell: u64,
    warnings: Vec<String>,
    size: f64,
}

/// The node ids of `nodes`, as runs, for messages: ` (defined: 1 to 49, 60)`.
fn node_ids_hint(nodes: &[StructureNode]) -> String {
    let mut ids: Vec<u64> = nodes.iter().map(|n| n.id.0).collect();
    if ids.is_empty() {
        return " (the model defines no node)".into();
    }
    ids.sort_unstable();
    ids.dedup();
    let mut runs: Vec<(u64, u64)> = Vec::new();
    for id in ids {
        match runs.last_mut() {
            Some((_, last)) if *last + 1 == id => *last = id,
            _ => runs.push((id, id)),
        }
    }
    const SHOWN: usize = 8;
    let mut parts: Vec<String> =
        runs.iter().take(SHOWN).map(|&(a, b)| if a == b { a.to_string() } else { format!("{a} to {b}") }).collect();
    if runs.len() > SHOWN {
        parts.push("...".into());
    }
    format!(" (defined: {})", parts.join(", "))
}

/// Whether every DOF of `node` along `unit` (translations, or rotations for a moment) is fixed.
fn held_along(fixed: &[[bool; 6]], node: usize, unit: &[f64; 3], moment: bool) -> bool {
    let off = if moment { 3 } else { 0 };
    (0..3).all(|k| unit[k] == 0.0 || fixed.get(node).is_some_and(|f| f[off + k]))
}

/// Values strictly ascending (and finite), else an error naming the entry.
fn strictly_ascending(at: &str, v: &[f64], what: &str) -> Result<(), ModelError> {
    if v.is_empty() {
        return Err(ModelError::Invalid { at: at.into(), message: format!("give at least one {what}") });
    }
    for i in 0..v.len() {
        if !v[i].is_finite() || (i > 0 && v[i] <= v[i - 1]) {
            return Err(ModelError::Invalid {
                at: format!("{at}[{i}]"),
                message: format!(
                    "{what} {} is not finite or not above the previous one; give {what}s strictly ascending",
                    v[i]
                ),
            });
        }
    }
    Ok(())
}

/// A `[[x, y], ...]` table with x strictly ascending and not negative, y finite and not negative.
fn ascending_table(at: &str, t: &[[f64; 2]], x_name: &str, y_name: &str) -> Result<Vec<(f64, f64)>, ModelError> {
    let xs: Vec<f64> = t.iter().map(|p| p[0]).collect();
    strictly_ascending(at, &xs, x_name)?;
    for (i, p) in t.iter().enumerate() {
        if p[0] < 0.0 {
            return Err(ModelError::OutOfRange {
                at: format!("{at}[{i}]"),
                field: "frequency",
                value: p[0],
                allowed: "0 Hz or more".into(),
            });
        }
        if !(p[1].is_finite() && p[1] >= 0.0) {
            return Err(ModelError::Invalid {
                at: format!("{at}[{i}]"),
                message: format!("{y_name} {} is negative or not finite", p[1]),
            });
        }
    }
    Ok(t.iter().map(|p| (p[0], p[1])).collect())
}

/// The largest amplitude of an order over the speed range `[r0, r1]` (the table's rows inside it
/// and its values at both ends), in N.
fn max_amplitude(o: &OrderSpec, [r0, r1]: [f64; 2]) -> f64 {
    match &o.amplitude {
        OrderAmplitude::Table(t) => t
            .iter()
            .filter(|p| p.0 > r0 && p.0 < r1)
            .map(|p| p.1)
            .fold(o.amplitude_at(r0).max(o.amplitude_at(r1)), f64::max),
        _ => o.amplitude_at(r0).max(o.amplitude_at(r1)),
    }
}

/// A harmonic load's `phase_deg` (default 0), checked finite, in degrees.
fn phase_deg(at: &str, phase_deg: Option<f64>) -> Result<f64, ModelError> {
    let phase = phase_deg.unwrap_or(0.0);
    if phase.is_finite() {
        Ok(phase)
    } else {
        Err(ModelError::OutOfRange {
            at: at.to_string(),
            field: "phase_deg",
            value: phase,
            allowed: "a finite angle in degrees".into(),
        })
    }
}

/// The checked base excitation of study `s`; `grounded` tells whether the model has a support or
/// a spring to ground (a base to move).
fn base_spec(
    b: &crate::model::BaseExcitation,
    s: &crate::model::Study,
    grounded: bool,
) -> Result<BaseSpec, ModelError> {
    let at = "study.base_excitation";
    let given =
        [(!s.excitation.is_empty(), "excitation"), (!s.random.is_empty(), "random"), (!s.orders.is_empty(), "orders")];
    if let Some((_, other)) = given.iter().find(|g| g.0) {
        return Err(ModelError::Invalid {
            at: at.into(),
            message: format!(
                "is given together with study.{other}; a study is driven either by forces or by the base's motion: \
                 make a second model file for the other case"
            ),
        });
    }
    if !grounded {
        return Err(ModelError::Invalid {
            at: at.into(),
            message: "needs a base to move: the model has no support and no spring to ground (a free body is not \
                      excited by base motion; apply forces instead)"
                .into(),
        });
    }
    let direction = direction(&format!("{at}.direction"), &b.direction)?;
    let acceleration = b.acceleration.unwrap_or(1.0);
    check_positive(at, "acceleration", acceleration)?;
    let phase = phase_deg(at, b.phase_deg)?;
    let psd =
        if b.psd.is_empty() { Vec::new() } else { ascending_table(&format!("{at}.psd"), &b.psd, "frequency", "PSD")? };
    Ok(BaseSpec {
        direction,
        acceleration,
        phase_rad: phase.to_radians(),
        psd,
        absolute: b.response == crate::model::BaseResponse::Absolute,
    })
}

fn check_positive(at: &str, field: &'static str, value: f64) -> Result<(), ModelError> {
    if value.is_finite() && value > 0.0 {
        Ok(())
    } else {
        Err(ModelError::OutOfRange { at: at.to_string(), field, value, allowed: "a positive finite number".into() })
    }
}

fn check_non_negative(at: &str, field: &'static str, value: f64) -> Result<(), ModelError> {
    if value.is_finite() && value >= 0.0 {
        Ok(())
    } else {
        Err(ModelError::OutOfRange {
            at: at.to_string(),
            field,
            value,
            allowed: "zero or a positive finite number".into(),
        })
    }
}

fn check_fraction(at: &str, field: &'static str, value: f64) -> Result<(), ModelError> {
    if (0.0..=1.0).contains(&value) {
        Ok(())
    } else {
        Err(ModelError::OutOfRange {
            at: at.to_string(),
            field,
            value,
            allowed: "a fraction of the line's length between 0 and 1".into(),
        })
    }
}

fn check_point(at: &str, p: [f64; 3]) -> Result<(), ModelError> {
    if p.iter().all(|v| v.is_finite()) {
        Ok(())
    } else {
        Err(ModelError::Invalid { at: at.to_string(), message: format!("coordinates {p:?} are not finite") })
    }
}

fn names_hint<'k>(keys: impl Iterator<Item = &'k String>) -> String {
    let names: Vec<String> = keys.map(|k| format!("\"{k}\"")).collect();
    if names.is_empty() { " (none is defined)".into() } else { format!(" (defined: {})", names.join(", ")) }
}

/// Resolves a direction to a unit vector.
fn direction(at: &str, d: &Direction) -> Result<DirectionSpec, ModelError> {
    match d {
        Direction::Axis(a) => Ok(DirectionSpec::axis(*a)),
        Direction::Vector(v) => {
            let n = (v[0] * v[0] + v[1] * v[1] + v[2] * v[2]).sqrt();
            if !(n.is_finite() && n > 0.0) {
                return Err(ModelError::Invalid {
                    at: at.to_string(),
                    message: format!("direction {v:?} is not a non-zero finite vector"),
                });
            }
            Ok(DirectionSpec { given: d.clone(), unit: v.map(|x| x / n) })
        }
    }
}

/// Checks that `b` (at `at`) is perpendicular to `a` (named `a_name`) within 1e-6 in the cosine.
fn perpendicular(at: &str, a: &DirectionSpec, b: &DirectionSpec, a_name: &str) -> Result<(), ModelError> {
    let cos: f64 = (0..3).map(|k| a.unit[k] * b.unit[k]).sum();
    if cos.abs() > 1e-6 {
        return Err(ModelError::Invalid {
            at: at.to_string(),
            message: format!(
                "the two directions of a lateral absorber must be perpendicular (an isotropic spring in the \
                 plane they span), but {:?} and {a_name} {:?} make {:.3}°",
                b.unit,
                a.unit,
                cos.clamp(-1.0, 1.0).acos().to_degrees()
            ),
        });
    }
    Ok(())
}

/// A mesh file named by the model, read, with its place in the model.
struct ReadMesh {
    /// The file as found.
    path: PathBuf,
    /// Length factor to metres.
    scale: f64,
    /// Translation after scaling, in m.
    offset: [f64; 3],
    data: MeshData,
}

impl ReadMesh {
    /// Coordinates of point `k` in the model, in m.
    fn point(&self, k: usize) -> [f64; 3] {
        let p = self.data.points[k];
        [0, 1, 2].map(|d| p[d] * self.scale + self.offset[d])
    }
}

/// Reads every mesh file of `model` (names unique and non-empty, scale and offset finite).
fn read_meshes(model: &Model, folder: &Path) -> Result<Vec<ReadMesh>, ModelError> {
    let mut seen: HashMap<&str, usize> = HashMap::new();
    let mut out = Vec::with_capacity(model.meshes.len());
    for (i, m) in model.meshes.iter().enumerate() {
        let at = format!("meshes[{i}]");
        if m.name.trim().is_empty() {
            return Err(ModelError::Invalid { at, message: "a mesh needs a non-empty name".into() });
        }
        if let Some(&first) = seen.get(m.name.as_str()) {
            return Err(ModelError::Duplicate {
                at,
                kind: "mesh",
                id: format!("\"{}\"", m.name),
                first: format!("meshes[{first}]"),
                key: "name",
            });
        }
        seen.insert(m.name.as_str(), i);
        let named = format!("{at} (\"{}\")", m.name);
        let scale = m.scale.unwrap_or(1.0);
        check_positive(&named, "scale", scale)?;
        let offset = m.offset.unwrap_or([0.0; 3]);
        check_point(&format!("{named}.offset"), offset)?;
        if m.file.trim().is_empty() {
            return Err(ModelError::Invalid {
                at: format!("{named}.file"),
                message: "give the mesh file (.vtk or .vtu), relative to the model file".into(),
            });
        }
        let path = folder.join(&m.file);
        let data = read_mesh(&path, m.property_array.as_deref().unwrap_or("property"), m.node_id_array.as_deref())?;
        out.push(ReadMesh { path, scale, offset, data });
    }
    Ok(out)
}

impl<'a> Builder<'a> {
    fn new(model: &'a Model, meshes: &[ReadMesh], limits: Limits) -> Result<Self, ModelError> {
        let mut materials = BTreeMap::new();
        for (name, m) in &model.materials {
            let at = format!("materials.{name}");
            check_positive(&at, "youngs_modulus", m.youngs_modulus)?;
            check_positive(&at, "density", m.density)?;
            if !(m.poisson_ratio > -1.0 && m.poisson_ratio < 0.5) {
                return Err(ModelError::OutOfRange {
                    at,
                    field: "poisson_ratio",
                    value: m.poisson_ratio,
                    allowed: "between -1 and 0.5 (exclusive)".into(),
                });
            }
            let g = match m.shear_modulus {
                Some(g) => {
                    check_positive(&at, "shear_modulus", g)?;
                    g
                }
                None => m.youngs_modulus / (2.0 * (1.0 + m.poisson_ratio)),
            };
            materials.insert(
                name.as_str(),
                MaterialProperties {
                    youngs_modulus: m.youngs_modulus,
                    shear_modulus: g,
                    poisson_ratio: m.poisson_ratio,
                    density: m.density,
                },
            );
        }
        for (name, s) in &model.sections {
            check_section(&format!("sections.{name}"), s)?;
        }
        for (i, n) in model.nodes.iter().enumerate() {
            check_point(&format!("nodes[{i}].xyz"), n.xyz)?;
        }
        for (i, l) in model.lines.iter().enumerate() {
            check_point(&format!("lines[{i}].from"), l.from)?;
            check_point(&format!("lines[{i}].to"), l.to)?;
        }
        let size = bounding_diagonal(
            model
                .nodes
                .iter()
                .map(|n| n.xyz)
                .chain(model.lines.iter().flat_map(|l| [l.from, l.to]))
                .chain(model.tubes.iter().flat_map(tube_extent))
                .chain(model.panels.iter().flat_map(panel_extent))
                .chain(meshes.iter().flat_map(|m| (0..m.data.points.len()).map(|k| m.point(k))))
                .filter(|p| p.iter().all(|v| v.is_finite())),
        );
        let largest_mesh_id = meshes.iter().filter_map(|m| m.data.node_ids.as_ref()).flatten().copied().max();
        let tol = (MERGE_TOLERANCE * size).max(1e-12);
        Ok(Self {
            model,
            limits,
            materials,
            nodes: Vec::new(),
            node_index: HashMap::new(),
            node_path: HashMap::new(),
            grid: PointGrid::new(tol),
            beams: Vec::new(),
            lines: Vec::new(),
            line_index: HashMap::new(),
            tubes: Vec::new(),
            tube_index: HashMap::new(),
            panels: Vec::new(),
            panel_index: HashMap::new(),
            meshes: Vec::new(),
            regions: BTreeMap::new(),
            generated_shells: Vec::new(),
            generated_fixed: Vec::new(),
            generated_springs: Vec::new(),
            generated_masses: Vec::new(),
            links: Vec::new(),
            link_index: HashMap::new(),
            next_node: model.nodes.iter().map(|n| n.id.0).chain(largest_mesh_id).max().map_or(1, |m| m + 1),
            next_beam: model.beams.iter().map(|b| b.id.0).max().map_or(1, |m| m + 1),
            next_shell: model.shells.iter().map(|e| e.id.0).max().map_or(1, |m| m + 1),
            warnings: Vec::new(),
            size,
        })
    }

    /// How many more nodes the model may have within its node limit.
    fn nodes_left(&self) -> usize {
        self.limits.max_nodes.saturating_sub(self.nodes.len())
    }

    fn nodes(&mut self) -> Result<(), ModelError> {
        if self.model.nodes.len() > self.limits.max_nodes {
            return Err(ModelError::Invalid {
                at: "nodes".into(),
                message: format!(
                    "{} nodes are more than the model's node limit of {}",
                    self.model.nodes.len(),
                    self.limits.max_nodes
                ),
            });
        }
        for (i, n) in self.model.nodes.iter().enumerate() {
            let at = format!("nodes[{i}]");
            if let Some(first) = self.node_path.get(&n.id) {
                return Err(ModelError::Duplicate {
                    at,
                    kind: "node",
                    id: n.id.to_string(),
                    first: first.clone(),
                    key: "id",
                });
            }
            self.node_path.insert(n.id, at);
            self.node_index.insert(n.id, self.nodes.len());
            self.grid.insert(n.xyz, self.nodes.len());
            self.nodes.push(StructureNode { id: n.id, xyz: n.xyz });
        }
        Ok(())
    }

    /// The node ids defined so far, as runs, for messages: ` (defined: 1 to 49, 60)`.
    fn node_ids_hint(&self) -> String {
        node_ids_hint(&self.nodes)
    }

    /// The node at `p`: an existing node within the merge tolerance, or a new one with the next
    /// generated id; `path` says where a new node came from.
    fn add_point(&mut self, p: [f64; 3], path: impl FnOnce() -> String) -> usize {
        if let Some(i) = self.grid.find(p, &self.nodes) {
            return i;
        }
        let i = self.nodes.len();
        let id = NodeId(self.next_node);
        self.next_node += 1;
        self.nodes.push(StructureNode { id, xyz: p });
        self.node_index.insert(id, i);
        self.node_path.insert(id, path());
        self.grid.insert(p, i);
        i
    }

    /// Generated tubes: each meshed by [`tube_part`] and joined like a line.
    fn tubes(&mut self) -> Result<(), ModelError> {
        let model = self.model;
        for (ti, t) in model.tubes.iter().enumerate() {
            let at = format!("tubes[{ti}]");
            if t.name.trim().is_empty() {
                return Err(ModelError::Invalid { at, message: "a tube needs a non-empty name".into() });
            }
            if let Some(&first) = self.tube_index.get(t.name.as_str()) {
                return Err(ModelError::Duplicate {
                    at,
                    kind: "tube",
                    id: format!("\"{}\"", t.name),
                    first: format!("tubes[{first}]"),
                    key: "name",
                });
            }
            let named = format!("{at} (\"{}\")", t.name);
            let material = self.material(&format!("{named}.material"), &t.material)?;
            let tp = tube_part(&named, t, self.nodes_left())?;
            let map = self.join(&named, &tp.part, &t.material, material)?;
            for (k, b) in tp.part.beams.iter().enumerate() {
                let section = Section::CircularTube(b.section.clone());
                let section_name = if t.segments.is_empty() {
                    format!("tube \"{}\"", t.name)
                } else {
                    format!("tube \"{}\" segment {}", t.name, b.segment + 1)
                };
                let label = format!("tube \"{}\" element {}", t.name, k + 1);
                let e = self.beam_element(BeamSource {
                    id: ElementId(self.next_beam),
                    label,
                    at: &named,
                    nodes: [map[b.nodes[0]], map[b.nodes[1]]],
                    section_name: &section_name,
                    section: &section,
                    material: &t.material,
                    orientation: None,
                    line: None,
                })?;
                self.next_beam += 1;
                self.beams.push(e);
            }
            self.tube_index.insert(t.name.as_str(), self.tubes.len());
            self.tubes.push(TubeNodes {
                name: t.name.clone(),
                fidelity: tp.fidelity,
                rings: tp.rings.iter().map(|r| r.iter().map(|&n| map[n]).collect()).collect(),
                fractions: tp.fractions,
                start: tp.start,
                axis: tp.axis,
                reference: tp.reference,
                length: t.length,
                fittings: tp.fittings.map(|f| f.map(|n| map[n])),
            });
        }
        Ok(())
    }

    /// Generated panels: each meshed by [`panel_part`].
    fn panels(&mut self) -> Result<(), ModelError> {
        let model = self.model;
        for (pi, p) in model.panels.iter().enumerate() {
            let at = format!("panels[{pi}]");
            if p.name.trim().is_empty() {
                return Err(ModelError::Invalid { at, message: "a panel needs a non-empty name".into() });
            }
            if let Some(&first) = self.panel_index.get(p.name.as_str()) {
                return Err(ModelError::Duplicate {
                    at,
                    kind: "panel",
                    id: format!("\"{}\"", p.name),
                    first: format!("panels[{first}]"),
                    key: "name",
                });
            }
            let named = format!("{at} (\"{}\")", p.name);
            let material = self.material(&format!("{named}.material"), &p.material)?;
            // Check the stiffeners' references before generating anything.
            let mut sections = Vec::with_capacity(p.stiffeners.len());
            for (j, st) in p.stiffeners.iter().enumerate() {
                let sat = format!("{named}.stiffeners[{j}]");
                sections.push(self.section(&format!("{sat}.section"), &st.section)?);
                self.material(&format!("{sat}.material"), &st.material)?;
                if let Some(v) = st.orientation {
                    check_point(&format!("{sat}.orientation"), v)?;
                }
            }
            let pp = panel_part(&named, p, self.nodes_left())?;
            let map = self.join(&named, &pp.part, &p.material, material)?;
            let n_grid = (pp.divisions[0] + 1) * (pp.divisions[1] + 1);
            let mut stiffeners = Vec::with_capacity(pp.stiffeners.len());
            for (j, ((st, section), ps)) in p.stiffeners.iter().zip(sections).zip(&pp.stiffeners).enumerate() {
                let sat = format!("{named}.stiffeners[{j}]");
                let nodes: Vec<usize> = ps.nodes.iter().map(|&n| map[n]).collect();
                let mut beams = Vec::with_capacity(nodes.len().saturating_sub(1));
                for (k, w) in nodes.windows(2).enumerate() {
                    let e = self.beam_element(BeamSource {
                        id: ElementId(self.next_beam),
                        label: format!("panel \"{}\" stiffener {} element {}", p.name, j + 1, k + 1),
                        at: &sat,
                        nodes: [w[0], w[1]],
                        section_name: &st.section,
                        section,
                        material: &st.material,
                        orientation: st.orientation,
                        line: None,
                    })?;
                    self.next_beam += 1;
                    beams.push(self.beams.len());
                    self.beams.push(e);
                }
                stiffeners.push(StiffenerNodes { name: format!("{} stiffener {}", p.name, j + 1), nodes, beams });
            }
            self.panel_index.insert(p.name.as_str(), self.panels.len());
            self.panels.push(PanelNodes {
                name: p.name.clone(),
                origin: pp.origin,
                size: p.size,
                divisions: pp.divisions,
                grid: pp.grid,
                nodes: map[..n_grid].to_vec(),
                stiffeners,
            });
        }
        Ok(())
    }

    /// Imported meshes: every point a node (as stored, never merged), every line, polyline
    /// segment, triangle and quad an element of the property its cell names.
    fn meshes(&mut self, read: &[ReadMesh]) -> Result<(), ModelError> {
        let model = self.model;
        for (mi, (m, r)) in model.meshes.iter().zip(read).enumerate() {
            let named = format!("meshes[{mi}] (\"{}\")", m.name);
            if r.data.points.len() > self.nodes_left() {
                return Err(ModelError::Invalid {
                    at: format!("{named}.file"),
                    message: format!(
                        "{}: {} points are more than the {} left within the model's node limit",
                        r.path.display(),
                        r.data.points.len(),
                        self.nodes_left()
                    ),
                });
            }
            let array = m.property_array.as_deref().unwrap_or("property");
            // Properties by id, checked once each.
            let mut props: BTreeMap<i64, &MeshProperty> = BTreeMap::new();
            let mut sections: BTreeMap<i64, &'a Section> = BTreeMap::new();
            let mut materials: BTreeMap<i64, MaterialProperties> = BTreeMap::new();
            for (key, p) in &m.properties {
                let at = format!("{named}.properties.\"{key}\"");
                let id: i64 = key.trim().parse().map_err(|_| ModelError::Invalid {
                    at: at.clone(),
                    message: format!("\"{key}\" is not a property id; give the integer id as text, e.g. \"1\""),
                })?;
                match p {
                    MeshProperty::Shell(sp) => {
                        check_positive(&format!("{at}.shell"), "thickness", sp.thickness)?;
                        materials.insert(id, self.material(&format!("{at}.shell.material"), &sp.material)?);
                    }
                    MeshProperty::Beam(bp) => {
                        sections.insert(id, self.section(&format!("{at}.beam.section"), &bp.section)?);
                        self.material(&format!("{at}.beam.material"), &bp.material)?;
                        if let Some(v) = bp.orientation {
                            check_point(&format!("{at}.beam.orientation"), v)?;
                        }
                    }
                }
                if props.insert(id, p).is_some() {
                    return Err(ModelError::Invalid {
                        at,
                        message: format!("property id {id} is given twice (as keys that read as the same integer)"),
                    });
                }
            }
            let defined: Vec<String> = props.keys().map(i64::to_string).collect();
            let defined = if defined.is_empty() {
                "none is defined".to_string()
            } else {
                format!("defined: {}", defined.join(", "))
            };
            // Nodes.
            let data = &r.data;
            let mut nodes = Vec::with_capacity(data.points.len());
            let mut coincident: Vec<(u64, u64)> = Vec::new();
            let mut n_coincident = 0usize;
            for k in 0..data.points.len() {
                let p = r.point(k);
                let id = match &data.node_ids {
                    Some(ids) => NodeId(ids[k]),
                    None => {
                        self.next_node += 1;
                        NodeId(self.next_node - 1)
                    }
                };
                let path = format!("{named} point {k}");
                if let Some(first) = self.node_path.get(&id) {
                    return Err(ModelError::Duplicate {
                        at: path,
                        kind: "node",
                        id: id.to_string(),
                        first: first.clone(),
                        key: "id",
                    });
                }
                if let Some(other) = self.grid.find(p, &self.nodes) {
                    n_coincident += 1;
                    if coincident.len() < 5 {
                        coincident.push((id.0, self.nodes[other].id.0));
                    }
                }
                let i = self.nodes.len();
                self.nodes.push(StructureNode { id, xyz: p });
                self.node_index.insert(id, i);
                self.node_path.insert(id, path);
                self.grid.insert(p, i);
                nodes.push(i);
            }
            if n_coincident > 0 {
                let shown: Vec<String> = coincident.iter().map(|(a, b)| format!("{a} at {b}")).collect();
                self.warnings.push(format!(
                    "{named}: {n_coincident} point(s) of {} lie on another node and are not joined to it \
                     (node {}{}); imported points are taken as stored: merge them in the mesh, or tie them with a link",
                    r.path.display(),
                    shown.join(", node "),
                    if n_coincident > shown.len() { ", ..." } else { "" }
                ));
            }
            if data.skipped_vertices > 0 {
                self.warnings.push(format!(
                    "{named}: {} vertex cell(s) of {} are skipped; point masses, springs and supports go in the model file",
                    data.skipped_vertices,
                    r.path.display()
                ));
            }
            // Elements.
            let mut property_nodes: BTreeMap<i64, Vec<usize>> = BTreeMap::new();
            for c in &data.cells {
                let at_cell = format!("cell {}", c.index);
                let Some(prop) = props.get(&c.property) else {
                    return Err(ModelError::MeshFile {
                        path: r.path.clone(),
                        at: at_cell,
                        message: format!(
                            "({}) has property {} in the cell array \"{array}\", which {named}.properties does not \
                             define ({defined}); add it to the model's properties",
                            c.kind.noun(),
                            c.property
                        ),
                    });
                };
                let cell_nodes: Vec<usize> = c.points.iter().map(|&k| nodes[k]).collect();
                let wrong = |want: &str| ModelError::MeshFile {
                    path: r.path.clone(),
                    at: at_cell.clone(),
                    message: format!(
                        "is {} with property {}, which is a {} property; give {} cells a {{\"{want}\": ...}} property",
                        c.kind.noun(),
                        c.property,
                        if want == "beam" { "shell" } else { "beam" },
                        if want == "beam" { "line" } else { "triangle and quad" },
                    ),
                };
                let label = if c.segment > 0 {
                    format!("mesh \"{}\" cell {} segment {}", m.name, c.index, c.segment + 1)
                } else {
                    format!("mesh \"{}\" cell {}", m.name, c.index)
                };
                match (c.kind, prop) {
                    (CellKind::Beam, MeshProperty::Beam(bp)) => {
                        let e = self.beam_element(BeamSource {
                            id: ElementId(self.next_beam),
                            label,
                            at: &format!("{named}.properties.\"{}\".beam", c.property),
                            nodes: [cell_nodes[0], cell_nodes[1]],
                            section_name: &bp.section,
                            section: sections[&c.property],
                            material: &bp.material,
                            orientation: bp.orientation,
                            line: None,
                        })?;
                        self.next_beam += 1;
                        self.beams.push(e);
                    }
                    (CellKind::Triangle | CellKind::Quad, MeshProperty::Shell(sp)) => {
                        let mut distinct = cell_nodes.clone();
                        distinct.sort_unstable();
                        distinct.dedup();
                        if distinct.len() != cell_nodes.len() {
                            return Err(ModelError::MeshFile {
                                path: r.path.clone(),
                                at: at_cell,
                                message: format!(
                                    "({}) repeats a point ({:?}); give distinct corners",
                                    c.kind.noun(),
                                    c.points
                                ),
                            });
                        }
                        let xyz: Vec<[f64; 3]> = cell_nodes.iter().map(|&n| self.nodes[n].xyz).collect();
                        let shape = shell_shape(&xyz).map_err(|d| ModelError::MeshFile {
                            path: r.path.clone(),
                            at: at_cell.clone(),
                            message: format!("({}) has an unusable shape: {d}", c.kind.noun()),
                        })?;
                        let id = ElementId(self.next_shell);
                        self.next_shell += 1;
                        self.generated_shells.push(ShellElement {
                            id,
                            label,
                            nodes: cell_nodes.clone(),
                            thickness: sp.thickness,
                            material_name: sp.material.clone(),
                            material: materials[&c.property],
                            shape,
                        });
                    }
                    (CellKind::Beam, MeshProperty::Shell(_)) => return Err(wrong("beam")),
                    (_, MeshProperty::Beam(_)) => return Err(wrong("shell")),
                }
                property_nodes.entry(c.property).or_default().extend(cell_nodes);
            }
            for list in property_nodes.values_mut() {
                list.sort_unstable();
                list.dedup();
            }
            self.meshes.push(MeshNodes { name: m.name.clone(), file: r.path.clone(), nodes, property_nodes });
        }
        Ok(())
    }

    /// Joins a generated part: its points become nodes (merging with existing ones), its shells,
    /// fixed DOFs and springs are kept for later; returns the node index of each local point.
    fn join(
        &mut self,
        named: &str,
        part: &Part,
        material_name: &str,
        material: MaterialProperties,
    ) -> Result<Vec<usize>, ModelError> {
        let map: Vec<usize> =
            part.points.iter().enumerate().map(|(k, &p)| self.add_point(p, || format!("{named} node {k}"))).collect();
        for e in &part.shells {
            let nodes: Vec<usize> = e.nodes.iter().map(|&n| map[n]).collect();
            let id = ElementId(self.next_shell);
            self.next_shell += 1;
            let xyz: Vec<[f64; 3]> = nodes.iter().map(|&n| self.nodes[n].xyz).collect();
            let mut distinct = nodes.clone();
            distinct.sort_unstable();
            distinct.dedup();
            let shape = if distinct.len() == nodes.len() { shell_shape(&xyz).ok() } else { None };
            let Some(shape) = shape else {
                return Err(ModelError::Invalid {
                    at: named.to_string(),
                    message: format!(
                        "its generated shell {id} has an unusable shape (corners merged with other nodes?); \
                         check the dimensions and element counts"
                    ),
                });
            };
            self.generated_shells.push(ShellElement {
                id,
                label: format!("shell {id} ({named})"),
                nodes,
                thickness: e.thickness,
                material_name: material_name.to_string(),
                material,
                shape,
            });
        }
        self.generated_fixed.extend(part.fixed.iter().map(|&(n, f)| (map[n], f)));
        self.generated_springs.extend(part.springs.iter().map(|s| SpringElement {
            label: s.label.clone(),
            node: map[s.node],
            other: None,
            stiffness: s.stiffness,
        }));
        self.generated_masses.extend(part.masses.iter().map(|m| NodalMass {
            node: map[m.node],
            mass: m.mass,
            inertia: m.inertia,
        }));
        for l in &part.links {
            // A member that merged with its reference (an offset within the merge tolerance) is the
            // reference itself.
            let mut members: Vec<usize> =
                l.members.iter().map(|&n| map[n]).filter(|&n| n != map[l.reference]).collect();
            members.sort_unstable();
            members.dedup();
            if members.is_empty() {
                continue;
            }
            self.links.push(LinkSpec {
                name: l.name.clone(),
                kind: LinkKind::Rigid,
                reference: map[l.reference],
                members,
            });
        }
        self.warnings.extend(part.warnings.iter().cloned());
        Ok(map)
    }

    /// Every region's nodes.
    fn regions(&mut self) -> Result<(), ModelError> {
        let nodes = &self.nodes;
        let hint = || node_ids_hint(nodes);
        let cx = RegionContext {
            nodes,
            node_index: &self.node_index,
            tubes: &self.tubes,
            panels: &self.panels,
            meshes: &self.meshes,
            slack: self.grid.tolerance,
            node_hint: &hint,
        };
        let mut out = BTreeMap::new();
        for (name, r) in &self.model.regions {
            let at = format!("regions.{name}");
            if name.trim().is_empty() {
                return Err(ModelError::Invalid { at, message: "a region needs a non-empty name".into() });
            }
            out.insert(name.clone(), select(&at, r, &cx)?);
        }
        self.regions = out;
        Ok(())
    }

    /// The model's links, after the generated ones (whose names they must not repeat).
    fn links(&mut self) -> Result<(), ModelError> {
        for (i, l) in self.links.iter().enumerate() {
            self.link_index.insert(l.name.clone(), i);
        }
        let generated = self.links.len();
        let model = self.model;
        for (i, l) in model.links.iter().enumerate() {
            let at = format!("links[{i}]");
            if l.name.trim().is_empty() {
                return Err(ModelError::Invalid { at, message: "a link needs a non-empty name".into() });
            }
            if let Some(&first) = self.link_index.get(&l.name) {
                let first = if first < generated {
                    format!(
                        "the generated link \"{}\" (a tube's end fitting or a panel stiffener's offset)",
                        self.links[first].name
                    )
                } else {
                    format!("links[{}]", first - generated)
                };
                return Err(ModelError::Duplicate {
                    at,
                    kind: "link",
                    id: format!("\"{}\"", l.name),
                    first,
                    key: "name",
                });
            }
            let named = format!("{at} (\"{}\")", l.name);
            let reference = match (&l.reference, l.reference_point) {
                (Some(loc), None) => self.locate(&format!("{named}.reference"), loc)?,
                (None, Some(p)) => {
                    check_point(&format!("{named}.reference_point"), p)?;
                    let name = l.name.clone();
                    self.add_point(p, || format!("links[{i}] (\"{name}\") reference point"))
                }
                _ => {
                    return Err(ModelError::Invalid {
                        at: named,
                        message: "give exactly one of \"reference\" (a location) or \"reference_point\" ([x, y, z])"
                            .into(),
                    });
                }
            };
            let m = &l.members;
            let mut members: Vec<usize> = match (&m.region, m.nodes.is_empty()) {
                (Some(r), true) => self.region(&format!("{named}.members.region"), r)?.to_vec(),
                (None, false) => {
                    let mut out = Vec::with_capacity(m.nodes.len());
                    for (k, id) in m.nodes.iter().enumerate() {
                        out.push(*self.node_index.get(id).ok_or_else(|| ModelError::UnknownNode {
                            at: format!("{named}.members.nodes[{k}]"),
                            id: id.0,
                            hint: self.node_ids_hint(),
                        })?);
                    }
                    out
                }
                _ => {
                    return Err(ModelError::Invalid {
                        at: format!("{named}.members"),
                        message: "give exactly one of {\"region\": name} or {\"nodes\": [ids]}".into(),
                    });
                }
            };
            members.sort_unstable();
            members.dedup();
            members.retain(|&n| n != reference);
            match l.kind {
                LinkKind::Rigid if members.is_empty() => {
                    return Err(ModelError::Invalid {
                        at: format!("{named}.members"),
                        message: "a rigid link needs at least one member node besides its reference node".into(),
                    });
                }
                LinkKind::Average => {
                    let points: Vec<[f64; 3]> = members.iter().map(|&n| self.nodes[n].xyz).collect();
                    if members.len() < 3 || collinear(&points) {
                        return Err(ModelError::Invalid {
                            at: format!("{named}.members"),
                            message: format!(
                                "an averaging link needs at least three member nodes not on one line (it has {}{}), \
                                 or the rotation of its reference is undefined; add members or use a rigid link",
                                members.len(),
                                if members.len() >= 3 { ", all on one line" } else { "" }
                            ),
                        });
                    }
                }
                LinkKind::Rigid => {}
            }
            self.link_index.insert(l.name.clone(), self.links.len());
            self.links.push(LinkSpec { name: l.name.clone(), kind: l.kind, reference, members });
        }
        Ok(())
    }

    /// Checks that no node is moved by two links, that links do not form a loop, and that no node a
    /// link moves is held by a support.
    fn check_links(&self, fixed: &[[bool; 6]]) -> Result<(), ModelError> {
        let describe = |i: usize| -> String {
            let n = self.model.links.len();
            let generated = self.links.len() - n;
            if i < generated {
                format!("the link \"{}\"", self.links[i].name)
            } else {
                format!("links[{}] (\"{}\")", i - generated, self.links[i].name)
            }
        };
        let mut moved_by: Vec<Option<usize>> = vec![None; self.nodes.len()];
        for (i, l) in self.links.iter().enumerate() {
            for &n in l.moved() {
                if let Some(first) = moved_by[n] {
                    return Err(ModelError::Invalid {
                        at: describe(i),
                        message: format!(
                            "node {} is already moved by {}; a node can follow only one link",
                            self.nodes[n].id,
                            describe(first)
                        ),
                    });
                }
                moved_by[n] = Some(i);
                if fixed[n].iter().any(|&f| f) {
                    return Err(ModelError::Invalid {
                        at: describe(i),
                        message: format!(
                            "node {} is held by a support and moved by this link; put the support on a node the \
                             link does not move (for a rigid link, its reference node)",
                            self.nodes[n].id
                        ),
                    });
                }
            }
        }
        // Loops: follow each link to the links that move its independent nodes.
        let masters = |l: &LinkSpec| -> Vec<usize> {
            match l.kind {
                LinkKind::Rigid => vec![l.reference],
                LinkKind::Average => l.members.clone(),
            }
        };
        // 0 unvisited, 1 on the current path, 2 done.
        let mut state = vec![0u8; self.links.len()];
        for start in 0..self.links.len() {
            if state[start] != 0 {
                continue;
            }
            let mut stack: Vec<(usize, Vec<usize>)> = vec![(start, masters(&self.links[start]))];
            state[start] = 1;
            while let Some((li, rest)) = stack.last_mut() {
                let li = *li;
                match rest.pop() {
                    Some(node) => {
                        if let Some(next) = moved_by[node] {
                            if state[next] == 1 {
                                return Err(ModelError::Invalid {
                                    at: describe(li),
                                    message: format!(
                                        "links form a loop through node {} ({} moves it); break the loop",
                                        self.nodes[node].id,
                                        describe(next)
                                    ),
                                });
                            }
                            if state[next] == 0 {
                                state[next] = 1;
                                stack.push((next, masters(&self.links[next])));
                            }
                        }
                    }
                    None => {
                        state[li] = 2;
                        stack.pop();
                    }
                }
            }
        }
        Ok(())
    }

    /// The nodes of region `name`.
    fn region(&self, at: &str, name: &str) -> Result<&[usize], ModelError> {
        self.regions.get(name).map(Vec::as_slice).ok_or_else(|| ModelError::UnknownName {
            at: at.to_string(),
            kind: "region",
            name: name.to_string(),
            hint: names_hint(self.model.regions.keys()),
        })
    }

    /// The node of `nodes` nearest their centroid (the unweighted mean of their coordinates); of
    /// nodes equally near (within 10⁻⁹ of the model size), the first in node order.
    fn centroid_node(&self, nodes: &[usize]) -> usize {
        let n = nodes.len() as f64;
        let mut c = [0.0; 3];
        for &i in nodes {
            for k in 0..3 {
                c[k] += self.nodes[i].xyz[k] / n;
            }
        }
        let d: Vec<f64> = nodes.iter().map(|&i| distance(self.nodes[i].xyz, c)).collect();
        let least = d.iter().copied().fold(f64::INFINITY, f64::min);
        let slack = MERGE_TOLERANCE * self.size.max(1e-300);
        nodes.iter().zip(&d).filter(|(_, di)| **di <= least + slack).map(|(&i, _)| i).min().unwrap_or(nodes[0])
    }

    fn tube(&self, at: &str, name: &str) -> Result<usize, ModelError> {
        self.tube_index.get(name).copied().ok_or_else(|| ModelError::UnknownName {
            at: at.to_string(),
            kind: "tube",
            name: name.to_string(),
            hint: names_hint(self.model.tubes.iter().map(|t| &t.name)),
        })
    }

    fn material(&self, at: &str, name: &str) -> Result<MaterialProperties, ModelError> {
        self.materials.get(name).copied().ok_or_else(|| ModelError::UnknownName {
            at: at.to_string(),
            kind: "material",
            name: name.to_string(),
            hint: names_hint(self.model.materials.keys()),
        })
    }

    fn section(&self, at: &str, name: &str) -> Result<&'a Section, ModelError> {
        self.model.sections.get(name).ok_or_else(|| ModelError::UnknownName {
            at: at.to_string(),
            kind: "section",
            name: name.to_string(),
            hint: names_hint(self.model.sections.keys()),
        })
    }

    fn orientation(
        &self,
        label: &str,
        a: [f64; 3],
        b: [f64; 3],
        given: Option<[f64; 3]>,
    ) -> Result<[f64; 3], ModelError> {
        let axis = sub(b, a);
        let axis_len = norm(axis);
        let (v, user) = match given {
            Some(v) => (v, true),
            None => {
                let z = [0.0, 0.0, 1.0];
                if norm(cross(axis, z)) > 1e-3 * axis_len { (z, false) } else { ([1.0, 0.0, 0.0], false) }
            }
        };
        let c = norm(cross(axis, v));
        if !(c.is_finite() && c > 1e-6 * axis_len * norm(v)) {
            if user {
                return Err(ModelError::OrientationParallel { element: label.to_string(), vector: v });
            }
            return Err(ModelError::Invalid {
                at: label.to_string(),
                message: "cannot find a default orientation vector".into(),
            });
        }
        Ok(v)
    }

    fn beam_element(&self, src: BeamSource<'_>) -> Result<BeamElement, ModelError> {
        let BeamSource { id, label, at, nodes, section_name, section: sec, material, orientation, line } = src;
        let mat = self.material(&format!("{at}.material"), material)?;
        let (a, b) = (self.nodes[nodes[0]].xyz, self.nodes[nodes[1]].xyz);
        if distance(a, b) <= self.grid.tolerance {
            return Err(ModelError::ZeroLength {
                element: if line.is_some() { format!("{at} ({label})") } else { format!("{at}.nodes ({label})") },
                a: self.nodes[nodes[0]].id.0,
                b: self.nodes[nodes[1]].id.0,
            });
        }
        if let Some(v) = orientation {
            check_point(&format!("{at}.orientation"), v)?;
        }
        let orientation = self.orientation(&format!("{at}.orientation ({label})"), a, b, orientation)?;
        Ok(BeamElement {
            id,
            label,
            nodes,
            section_name: section_name.to_string(),
            section: section_properties(sec, mat.poisson_ratio),
            material_name: material.to_string(),
            material: mat,
            orientation,
            line,
        })
    }

    fn lines(&mut self) -> Result<(), ModelError> {
        let model = self.model;
        for (li, l) in model.lines.iter().enumerate() {
            let at = format!("lines[{li}]");
            if l.name.trim().is_empty() {
                return Err(ModelError::Invalid { at, message: "a line needs a non-empty name".into() });
            }
            if let Some(&first) = self.line_index.get(l.name.as_str()) {
                return Err(ModelError::Duplicate {
                    at,
                    kind: "line",
                    id: format!("\"{}\"", l.name),
                    first: format!("lines[{first}]"),
                    key: "name",
                });
            }
            if l.elements == 0 {
                return Err(ModelError::Invalid {
                    at: format!("{at} (\"{}\")", l.name),
                    message: "elements must be at least 1".into(),
                });
            }
            if distance(l.from, l.to) <= self.grid.tolerance {
                return Err(ModelError::Invalid {
                    at: format!("{at} (\"{}\")", l.name),
                    message: "from and to are the same point (zero length)".into(),
                });
            }
            // Check references before generating anything, so errors name the line itself.
            let section = self.section(&format!("{at}.section"), &l.section)?;
            self.material(&format!("{at}.material"), &l.material)?;
            let n = l.elements;
            if n >= self.nodes_left() {
                return Err(ModelError::Invalid {
                    at: format!("{at} (\"{}\").elements", l.name),
                    message: format!(
                        "{n} elements would make more nodes than the {} left within the model's node limit",
                        self.nodes_left()
                    ),
                });
            }
            let mut idx = Vec::with_capacity(n + 1);
            for k in 0..=n {
                let t = k as f64 / n as f64;
                let p = [
                    l.from[0] + t * (l.to[0] - l.from[0]),
                    l.from[1] + t * (l.to[1] - l.from[1]),
                    l.from[2] + t * (l.to[2] - l.from[2]),
                ];
                idx.push(self.add_point(p, || format!("{at} node {k}")));
            }
            let line_no = self.lines.len();
            for k in 0..n {
                let label = format!("line \"{}\" element {}", l.name, k + 1);
                let e = self.beam_element(BeamSource {
                    id: ElementId(self.next_beam),
                    label,
                    at: &at,
                    nodes: [idx[k], idx[k + 1]],
                    section_name: &l.section,
                    section,
                    material: &l.material,
                    orientation: l.orientation,
                    line: Some(line_no),
                })?;
                self.next_beam += 1;
                self.beams.push(e);
            }
            self.line_index.insert(l.name.as_str(), line_no);
            self.lines.push(LineNodes { name: l.name.clone(), nodes: idx, from: l.from, to: l.to });
        }
        Ok(())
    }

    fn beams(&mut self) -> Result<(), ModelError> {
        let mut seen: HashMap<ElementId, usize> = HashMap::new();
        let model = self.model;
        let mut explicit = Vec::new();
        for (i, b) in model.beams.iter().enumerate() {
            let at = format!("beams[{i}]");
            if let Some(first) = seen.get(&b.id) {
                return Err(ModelError::Duplicate {
                    at,
                    kind: "beam",
                    id: b.id.to_string(),
                    first: format!("beams[{first}]"),
                    key: "id",
                });
            }
            seen.insert(b.id, i);
            let mut nodes = [0usize; 2];
            for k in 0..2 {
                nodes[k] = *self.node_index.get(&b.nodes[k]).ok_or_else(|| ModelError::UnknownNode {
                    at: format!("{at}.nodes[{k}]"),
                    id: b.nodes[k].0,
                    hint: self.node_ids_hint(),
                })?;
            }
            let section = self.section(&format!("{at}.section"), &b.section)?;
            let e = self.beam_element(BeamSource {
                id: b.id,
                label: format!("beam {}", b.id),
                at: &at,
                nodes,
                section_name: &b.section,
                section,
                material: &b.material,
                orientation: b.orientation,
                line: None,
            })?;
            explicit.push(e);
        }
        // Explicit beams first, then line and tube elements.
        explicit.append(&mut self.beams);
        self.beams = explicit;
        Ok(())
    }

    /// Shell elements: ids unique, 3 or 4 distinct existing nodes, positive thickness, a defined
    /// material, and a shape an element can be built on ([`shell_shape`]).
    fn shells(&mut self) -> Result<Vec<ShellElement>, ModelError> {
        let mut seen: HashMap<ElementId, usize> = HashMap::new();
        let mut out = Vec::with_capacity(self.model.shells.len());
        for (i, e) in self.model.shells.iter().enumerate() {
            let at = format!("shells[{i}]");
            if let Some(first) = seen.get(&e.id) {
                return Err(ModelError::Duplicate {
                    at,
                    kind: "shell",
                    id: e.id.to_string(),
                    first: format!("shells[{first}]"),
                    key: "id",
                });
            }
            seen.insert(e.id, i);
            let named = format!("{at} (shell {})", e.id);
            if !(e.nodes.len() == 3 || e.nodes.len() == 4) {
                return Err(ModelError::Invalid {
                    at: format!("{named}.nodes"),
                    message: format!("a shell has 3 (triangle) or 4 (quadrilateral) nodes, not {}", e.nodes.len()),
                });
            }
            let mut nodes = Vec::with_capacity(e.nodes.len());
            for (k, id) in e.nodes.iter().enumerate() {
                let idx = *self.node_index.get(id).ok_or_else(|| ModelError::UnknownNode {
                    at: format!("{named}.nodes[{k}]"),
                    id: id.0,
                    hint: self.node_ids_hint(),
                })?;
                if nodes.contains(&idx) {
                    return Err(ModelError::Invalid {
                        at: format!("{named}.nodes"),
                        message: format!("node {id} appears twice; give distinct corner nodes"),
                    });
                }
                nodes.push(idx);
            }
            check_positive(&named, "thickness", e.thickness)?;
            let material = self.material(&format!("{named}.material"), &e.material)?;
            let xyz: Vec<[f64; 3]> = nodes.iter().map(|&n| self.nodes[n].xyz).collect();
            let shape = shell_shape(&xyz)
                .map_err(|d| ModelError::Invalid { at: named.clone(), message: format!("unusable shape: {d}") })?;
            out.push(ShellElement {
                id: e.id,
                label: format!("shell {}", e.id),
                nodes,
                thickness: e.thickness,
                material_name: e.material.clone(),
                material,
                shape,
            });
        }
        out.append(&mut self.generated_shells);
        Ok(out)
    }

    /// Resolves a location to the nodes it stands for where a set of nodes makes sense (supports,
    /// springs to ground): every node of a region, otherwise the one node of [`Self::locate`].
    fn locate_set(&mut self, at: &str, loc: &Location) -> Result<Vec<usize>, ModelError> {
        match &loc.region {
            Some(name) if self.location_form_count(loc) == 1 => {
                Ok(self.region(&format!("{at}.region"), name)?.to_vec())
            }
            _ => Ok(vec![self.locate(at, loc)?]),
        }
    }

    fn location_form_count(&self, loc: &Location) -> usize {
        [
            loc.node.is_some(),
            loc.xyz.is_some(),
            loc.line.is_some(),
            loc.tube.is_some(),
            loc.region.is_some(),
            loc.link.is_some(),
        ]
        .iter()
        .filter(|&&f| f)
        .count()
    }

    /// Resolves a location to one node index (a region: its node nearest the centroid).
    fn locate(&mut self, at: &str, loc: &Location) -> Result<usize, ModelError> {
        let forms = self.location_form_count(loc);
        if forms != 1 {
            let message = if forms == 0 && loc.at.is_some() {
                "a fraction \"at\" needs \"line\" or \"tube\": {\"line\": name, \"at\": fraction}".to_string()
            } else {
                "give exactly one of {\"node\": id}, {\"xyz\": [x, y, z]}, {\"line\": name, \"at\": fraction}, \
                 {\"tube\": name, \"at\": fraction}, {\"region\": name} or {\"link\": name}"
                    .to_string()
            };
            return Err(ModelError::Invalid { at: at.to_string(), message });
        }
        if loc.tolerance.is_some() && loc.xyz.is_none() {
            return Err(ModelError::Invalid {
                at: at.to_string(),
                message: "tolerance applies only to an xyz location".into(),
            });
        }
        if loc.at.is_some() && loc.line.is_none() && loc.tube.is_none() {
            return Err(ModelError::Invalid {
                at: at.to_string(),
                message: "\"at\" (a fraction) applies only to a line or tube location".into(),
            });
        }
        if let Some(id) = loc.node {
            return self.node_index.get(&id).copied().ok_or_else(|| ModelError::UnknownNode {
                at: format!("{at}.node"),
                id: id.0,
                hint: self.node_ids_hint(),
            });
        }
        if let Some(p) = loc.xyz {
            check_point(&format!("{at}.xyz"), p)?;
            let tol = match loc.tolerance {
                Some(t) => {
                    check_positive(at, "tolerance", t)?;
                    t
                }
                None => self.snap_tolerance(),
            };
            return self.snap(at, p, tol);
        }
        if let Some(name) = &loc.region {
            let nodes = self.region(&format!("{at}.region"), name)?;
            return Ok(self.centroid_node(nodes));
        }
        if let Some(name) = &loc.link {
            return match self.link_index.get(name) {
                Some(&i) => Ok(self.links[i].reference),
                None => Err(ModelError::UnknownName {
                    at: format!("{at}.link"),
                    kind: "link",
                    name: name.clone(),
                    hint: names_hint(self.links.iter().map(|l| &l.name)),
                }),
            };
        }
        if let Some(name) = &loc.tube {
            let Some(frac) = loc.at else {
                return Err(ModelError::Invalid {
                    at: at.to_string(),
                    message: "a tube location needs both \"tube\" and \"at\" (a fraction of its length)".into(),
                });
            };
            check_fraction(at, "at", frac)?;
            let t = &self.tubes[self.tube(&format!("{at}.tube"), name)?];
            let j = t.nearest_station(frac);
            let actual = t.fractions[j];
            let node = t.rings[j][0];
            if (actual - frac).abs() > 1e-6 {
                self.warnings.push(format!(
                    "{at}: tube \"{name}\" at {frac} is between stations; using its station at {actual:.4} of the length"
                ));
            }
            return Ok(node);
        }
        let (Some(name), Some(frac)) = (&loc.line, loc.at) else {
            return Err(ModelError::Invalid {
                at: at.to_string(),
                message: "a line location needs both \"line\" and \"at\"".into(),
            });
        };
        check_fraction(at, "at", frac)?;
        let line = self.line(&format!("{at}.line"), name)?;
        let n = self.lines[line].nodes.len() - 1;
        let k = (frac * n as f64).round() as usize;
        let actual = k as f64 / n as f64;
        if (actual - frac).abs() > 1e-6 {
            self.warnings.push(format!(
                "{at}: line \"{name}\" at {frac} is between nodes; using its node at {actual:.4} of the length"
            ));
        }
        Ok(self.lines[line].nodes[k])
    }

    fn snap_tolerance(&self) -> f64 {
        (SNAP_FRACTION * self.size.max(bounding_diagonal(self.nodes.iter().map(|n| n.xyz)))).max(1e-9)
    }

    fn snap(&self, at: &str, p: [f64; 3], tol: f64) -> Result<usize, ModelError> {
        let mut best: Option<(usize, f64)> = None;
        for (i, n) in self.nodes.iter().enumerate() {
            let d = distance(n.xyz, p);
            if best.is_none_or(|(_, bd)| d < bd) {
                best = Some((i, d));
            }
        }
        match best {
            Some((i, d)) if d <= tol => Ok(i),
            Some((i, d)) => Err(ModelError::NoNodeNear {
                at: format!("{at}.xyz"),
                xyz: p,
                nearest: self.nodes[i].id.0,
                distance: d,
                tolerance: tol,
            }),
            None => Err(ModelError::Invalid { at: at.to_string(), message: "the model has no nodes".into() }),
        }
    }

    fn line(&self, at: &str, name: &str) -> Result<usize, ModelError> {
        self.line_index.get(name).copied().ok_or_else(|| ModelError::UnknownName {
            at: at.to_string(),
            kind: "line",
            name: name.to_string(),
            hint: names_hint(self.model.lines.iter().map(|l| &l.name)),
        })
    }

    fn supports(&mut self) -> Result<Vec<[bool; 6]>, ModelError> {
        let mut fixed = vec![[false; 6]; self.nodes.len()];
        for &(n, f) in &self.generated_fixed {
            for d in 0..6 {
                fixed[n][d] |= f[d];
            }
        }
        let model = self.model;
        for (i, s) in model.supports.iter().enumerate() {
            let at = format!("supports[{i}]");
            let nodes = self.locate_set(&format!("{at}.at"), &s.at)?;
            let dofs: Vec<usize> = match &s.fixed {
                Fixity::Preset(FixityPreset::Clamped) => (0..6).collect(),
                Fixity::Preset(FixityPreset::Pinned) => (0..3).collect(),
                Fixity::Dofs(list) => {
                    if list.is_empty() {
                        return Err(ModelError::Invalid {
                            at: format!("{at}.fixed"),
                            message: "the list of fixed DOFs is empty".into(),
                        });
                    }
                    list.iter().map(|d| d.index()).collect()
                }
            };
            for &node in &nodes {
                for &d in &dofs {
                    fixed[node][d] = true;
                }
            }
        }
        Ok(fixed)
    }

    fn springs(&mut self) -> Result<Vec<SpringElement>, ModelError> {
        let mut out = std::mem::take(&mut self.generated_springs);
        let model = self.model;
        for (i, s) in model.springs.iter().enumerate() {
            let at = format!("springs[{i}]");
            let nodes = self.locate_set(&format!("{at}.at"), &s.at)?;
            let node = nodes[0];
            let other = match &s.to {
                None | Some(SpringEnd::Ground(_)) => None,
                Some(SpringEnd::Location(l)) => {
                    if nodes.len() > 1 {
                        return Err(ModelError::Invalid {
                            at: format!("{at}.to"),
                            message: "a spring at a region is one spring to ground per node of the region; \
                                      remove \"to\" or give \"at\" as one node"
                                .into(),
                        });
                    }
                    let o = self.locate(&format!("{at}.to"), l)?;
                    if o == node {
                        return Err(ModelError::Invalid {
                            at,
                            message: "both ends of the spring are the same node".into(),
                        });
                    }
                    Some(o)
                }
            };
            let mut k = [0.0; 6];
            let names = ["ux", "uy", "uz", "rx", "ry", "rz"];
            for (d, v) in s.stiffness.as_array().into_iter().enumerate() {
                if let Some(v) = v {
                    if !(v.is_finite() && v >= 0.0) {
                        return Err(ModelError::OutOfRange {
                            at: format!("{at}.stiffness.{}", names[d]),
                            field: "stiffness",
                            value: v,
                            allowed: "zero or a positive finite number".into(),
                        });
                    }
                    k[d] = v;
                }
            }
            if k.iter().all(|&v| v == 0.0) {
                return Err(ModelError::Invalid {
                    at: format!("{at}.stiffness"),
                    message: "give at least one positive stiffness (ux, uy, uz, rx, ry or rz)".into(),
                });
            }
            out.extend(nodes.into_iter().map(|node| SpringElement { label: at.clone(), node, other, stiffness: k }));
        }
        Ok(out)
    }

    fn point_masses(&mut self) -> Result<Vec<NodalMass>, ModelError> {
        let mut out = std::mem::take(&mut self.generated_masses);
        let model = self.model;
        for (i, p) in model.point_masses.iter().enumerate() {
            let at = format!("point_masses[{i}]");
            let node = self.locate(&format!("{at}.at"), &p.at)?;
            check_non_negative(&at, "mass", p.mass)?;
            let inertia = p.inertia.unwrap_or([0.0; 3]);
            for v in inertia {
                check_non_negative(&at, "inertia", v)?;
            }
            if p.mass == 0.0 && inertia.iter().all(|&v| v == 0.0) {
                return Err(ModelError::Invalid { at, message: "mass and inertia are all zero".into() });
            }
            let inertia = [[inertia[0], 0.0, 0.0], [0.0, inertia[1], 0.0], [0.0, 0.0, inertia[2]]];
            out.push(NodalMass { node, mass: p.mass, inertia });
        }
        Ok(out)
    }

    fn absorbers(&mut self) -> Result<Vec<AbsorberSpec>, ModelError> {
        let mut out = Vec::new();
        let model = self.model;
        for (i, a) in model.absorbers.iter().enumerate() {
            let at = format!("absorbers[{i}]");
            let node = self.locate(&format!("{at}.at"), &a.at)?;
            let dir = direction(&format!("{at}.direction"), &a.direction)?;
            check_positive(&at, "mass", a.mass)?;
            check_positive(&at, "stiffness", a.stiffness)?;
            if a.elastomer.is_some() && (a.damping.is_some() || a.loss_factor.is_some()) {
                return Err(ModelError::Invalid {
                    at,
                    message: "an absorber with an elastomer takes its damping from the elastomer's table; \
                              remove damping and loss_factor"
                        .into(),
                });
            }
            let damping = match (a.damping, a.loss_factor) {
                (Some(_), Some(_)) => {
                    return Err(ModelError::Invalid {
                        at,
                        message: "give damping (N·s/m) or loss_factor, not both".into(),
                    });
                }
                (Some(c), None) => {
                    check_non_negative(&at, "damping", c)?;
                    AbsorberDamping::Viscous(c)
                }
                (None, Some(eta)) => {
                    check_non_negative(&at, "loss_factor", eta)?;
                    AbsorberDamping::LossFactor(eta)
                }
                (None, None) => AbsorberDamping::None,
            };
            let name = a.name.clone().unwrap_or_else(|| format!("absorber {}", i + 1));
            if damping == AbsorberDamping::None && a.elastomer.is_none() {
                self.warnings.push(format!(
                    "{at} (\"{name}\") has no damping: its response peaks are unbounded at the two coupled frequencies"
                ));
            }
            let second = match &a.second_direction {
                Some(d2) => {
                    let dat = format!("{at}.second_direction");
                    let d2 = direction(&dat, d2)?;
                    perpendicular(&dat, &dir, &d2, "direction")?;
                    Some(d2)
                }
                None => None,
            };
            let first = out.len();
            out.push(AbsorberSpec {
                name: name.clone(),
                node,
                direction: dir,
                mass: a.mass,
                stiffness: a.stiffness,
                damping,
                same_body_as: None,
            });
            if let Some(d2) = second {
                out.push(AbsorberSpec {
                    name: format!("{name} (second direction)"),
                    node,
                    direction: d2,
                    mass: a.mass,
                    stiffness: a.stiffness,
                    damping,
                    same_body_as: Some(first),
                });
            }
        }
        Ok(out)
    }

    fn study(&mut self, s: &crate::model::Study, fixed: &[[bool; 6]], grounded: bool) -> Result<StudySpec, ModelError> {
        let (rpm_range, orders) = self.orders(s, fixed)?;
        let [lo, hi] = match (s.band_hz, rpm_range) {
            (Some(b), _) => b,
            (None, Some([r0, r1])) => {
                let k0 = orders.iter().map(|o| o.order).fold(f64::INFINITY, f64::min);
                let k1 = orders.iter().map(|o| o.order).fold(0.0, f64::max);
                [k0 * r0 / 60.0, k1 * r1 / 60.0]
            }
            (None, None) => {
                return Err(ModelError::Invalid {
                    at: "study".into(),
                    message: "the study has no band_hz: give the band [low, high] in Hz (or rpm_range with orders)"
                        .into(),
                });
            }
        };
        if !(lo.is_finite() && hi.is_finite() && lo >= 0.0 && hi > lo) {
            return Err(ModelError::Invalid {
                at: "study.band_hz".into(),
                message: format!("[{lo}, {hi}] is not a band; give [low, high] with 0 <= low < high, in Hz"),
            });
        }
        let zeta = s.modal_damping_ratio.unwrap_or(if s.damping.is_some() { 0.0 } else { DEFAULT_MODAL_DAMPING_RATIO });
        let zeta_ok = if s.damping.is_some() { (0.0..1.0).contains(&zeta) } else { zeta > 0.0 && zeta < 1.0 };
        if !zeta_ok {
            return Err(ModelError::OutOfRange {
                at: "study".into(),
                field: "modal_damping_ratio",
                value: zeta,
                allowed: "between 0 and 1 (exclusive), e.g. 0.01 for 1 %".into(),
            });
        }
        // The orders' highest excitation frequency also needs its modes.
        let top = match rpm_range {
            Some([_, r1]) => orders.iter().map(|o| o.frequency_hz(r1)).fold(hi, f64::max),
            None => hi,
        };
        let fmax = s.max_mode_frequency_hz.unwrap_or(2.0 * top);
        if !(fmax.is_finite() && fmax >= top) {
            return Err(ModelError::OutOfRange {
                at: "study".into(),
                field: "max_mode_frequency_hz",
                value: fmax,
                allowed: if top > hi {
                    format!("at least the highest order frequency over rpm_range, {top} Hz")
                } else {
                    format!("at least the band's top, {hi} Hz")
                },
            });
        }
        let mut excitation = Vec::new();
        for (i, f) in s.excitation.iter().enumerate() {
            let at = format!("study.excitation[{i}]");
            let dir = direction(&format!("{at}.direction"), &f.direction)?;
            check_positive(&at, "amplitude", f.amplitude)?;
            let phase = phase_deg(&at, f.phase_deg)?;
            let moment = f.moment.unwrap_or(false);
            let nodes = if f.spread.unwrap_or(false) {
                if f.at.region.is_none() {
                    return Err(ModelError::Invalid {
                        at,
                        message: "spread shares the amplitude over a region's nodes: give {\"region\": name} in at"
                            .into(),
                    });
                }
                self.locate_set(&format!("{at}.at"), &f.at)?
            } else {
                vec![self.locate(&format!("{at}.at"), &f.at)?]
            };
            let share = f.amplitude / nodes.len() as f64;
            let mut free = 0;
            for &node in &nodes {
                if !held_along(fixed, node, &dir.unit, moment) {
                    free += 1;
                }
                excitation.push(PointForce {
                    node,
                    direction: dir.clone(),
                    amplitude: share,
                    phase_rad: phase.to_radians(),
                    moment,
                });
            }
            if free == 0 {
                return Err(ModelError::Invalid {
                    at: format!("{at}.at"),
                    message: format!(
                        "the {} acts where every DOF along its direction is fixed by a support, so it does nothing; \
                         move it to a free node",
                        if moment { "moment" } else { "force" }
                    ),
                });
            }
        }
        let mut reference_force = s.excitation.iter().map(|f| f.amplitude).fold(0.0, f64::max);
        if let (true, Some(range)) = (excitation.is_empty(), rpm_range) {
            // Orders alone: the frequency response (per newton) is that of the order forces, each at
            // its largest amplitude over the speed range.
            for o in &orders {
                let amplitude = max_amplitude(o, range);
                reference_force = reference_force.max(amplitude);
                excitation.push(PointForce {
                    node: o.node,
                    direction: o.direction.clone(),
                    amplitude,
                    phase_rad: o.phase_rad,
                    moment: o.moment,
                });
            }
        }
        let reference_force = if reference_force > 0.0 { reference_force } else { 1.0 };
        let damping = self.damping_spec(s, zeta)?;
        let (absorber_elastomers, temperatures_c) = self.elastomers(s)?;
        let mut random = Vec::new();
        for (i, r) in s.random.iter().enumerate() {
            let at = format!("study.random[{i}]");
            let node = self.locate(&format!("{at}.at"), &r.at)?;
            let dir = direction(&format!("{at}.direction"), &r.direction)?;
            if held_along(fixed, node, &dir.unit, false) {
                return Err(ModelError::Invalid {
                    at: format!("{at}.at"),
                    message:
                        "the random force acts where every DOF along its direction is fixed; move it to a free node"
                            .into(),
                });
            }
            let psd = ascending_table(&format!("{at}.psd"), &r.psd, "frequency", "PSD")?;
            random.push(RandomSpec { node, direction: dir, psd });
        }
        let base = match &s.base_excitation {
            Some(b) => Some(base_spec(b, s, grounded)?),
            None => None,
        };
        let mut response_points = Vec::new();
        for (i, r) in s.response_points.iter().enumerate() {
            let at = format!("study.response_points[{i}]");
            let node = self.locate(&format!("{at}.at"), &r.at)?;
            let dir = direction(&format!("{at}.direction"), &r.direction)?;
            let name = r.name.clone().unwrap_or_else(|| format!("point {}", i + 1));
            response_points.push(ResponseSpec { name, node, direction: dir });
        }
        let design = match &s.absorber_design {
            Some(d) => Some(self.design(d)?),
            None => None,
        };
        let mut measured_frequencies: Vec<(usize, f64)> = Vec::new();
        for (i, m) in s.measured_frequencies.iter().enumerate() {
            let at = format!("study.measured_frequencies[{i}]");
            if m.mode == 0 {
                return Err(ModelError::Invalid {
                    at: format!("{at}.mode"),
                    message: "is 0; modes are numbered from 1, as in modes.json".into(),
                });
            }
            check_positive(&at, "frequency_hz", m.frequency_hz)?;
            if measured_frequencies.iter().any(|&(r, _)| r == m.mode - 1) {
                return Err(ModelError::Invalid {
                    at: format!("{at}.mode"),
                    message: format!("mode {} is given twice; keep one measured value per mode", m.mode),
                });
            }
            measured_frequencies.push((m.mode - 1, m.frequency_hz));
        }
        measured_frequencies.sort_by_key(|&(r, _)| r);
        Ok(StudySpec {
            band_hz: [lo, hi],
            excitation,
            response_points,
            modal_damping_ratio: zeta,
            max_mode_frequency_hz: fmax,
            design,
            damping,
            absorber_elastomers,
            temperatures_c,
            random,
            rpm_range,
            orders,
            reference_force: base.as_ref().map_or(reference_force, |b| b.acceleration),
            measured_frequencies,
            base,
        })
    }

    /// The study's speed range and orders, checked.
    fn orders(
        &mut self,
        s: &crate::model::Study,
        fixed: &[[bool; 6]],
    ) -> Result<(Option<[f64; 2]>, Vec<OrderSpec>), ModelError> {
        let range = match s.rpm_range {
            None if s.orders.is_empty() => return Ok((None, Vec::new())),
            None => {
                return Err(ModelError::Invalid {
                    at: "study.orders".into(),
                    message: "orders need the speed range: give study.rpm_range [low, high] in rev/min".into(),
                });
            }
            Some([r0, r1]) => {
                if !(r0.is_finite() && r1.is_finite() && r0 > 0.0 && r1 > r0) {
                    let what = if r1 < r0 { "is reversed" } else { "is not a speed range" };
                    return Err(ModelError::Invalid {
                        at: "study.rpm_range".into(),
                        message: format!("[{r0}, {r1}] {what}; give [low, high] with 0 < low < high, in rev/min"),
                    });
                }
                if s.orders.is_empty() {
                    return Err(ModelError::Invalid {
                        at: "study.orders".into(),
                        message: "rpm_range is given but no order: add at least one, e.g. {\"order\": 1, \"at\": ..., \
                                  \"direction\": ..., \"amplitude\": ...}"
                            .into(),
                    });
                }
                [r0, r1]
            }
        };
        let mut orders = Vec::new();
        for (i, o) in s.orders.iter().enumerate() {
            let at = format!("study.orders[{i}]");
            check_positive(&at, "order", o.order)?;
            let dir = direction(&format!("{at}.direction"), &o.direction)?;
            let node = self.locate(&format!("{at}.at"), &o.at)?;
            let moment = o.moment.unwrap_or(false);
            if held_along(fixed, node, &dir.unit, moment) {
                return Err(ModelError::Invalid {
                    at: format!("{at}.at"),
                    message: "the order's force acts where every DOF along its direction is fixed by a support, so \
                              it does nothing; move it to a free node"
                        .into(),
                });
            }
            let phase = phase_deg(&at, o.phase_deg)?;
            let amplitude = match (o.amplitude, &o.amplitude_table) {
                (Some(_), Some(_)) | (None, None) => {
                    return Err(ModelError::Invalid {
                        at,
                        message: "give the force as amplitude (with amplitude_law) or as amplitude_table, one of them"
                            .into(),
                    });
                }
                (Some(a), None) => {
                    check_positive(&at, "amplitude", a)?;
                    match o.amplitude_law.unwrap_or(AmplitudeLaw::Constant) {
                        AmplitudeLaw::Constant => {
                            if o.reference_rpm.is_some() {
                                return Err(ModelError::Invalid {
                                    at,
                                    message: "reference_rpm belongs to amplitude_law rpm_squared; remove it or set \
                                              the law"
                                        .into(),
                                });
                            }
                            OrderAmplitude::Constant(a)
                        }
                        AmplitudeLaw::RpmSquared => {
                            let reference_rpm = o.reference_rpm.unwrap_or(range[1]);
                            check_positive(&at, "reference_rpm", reference_rpm)?;
                            OrderAmplitude::RpmSquared { amplitude: a, reference_rpm }
                        }
                    }
                }
                (None, Some(t)) => {
                    if o.amplitude_law.is_some() || o.reference_rpm.is_some() {
                        return Err(ModelError::Invalid {
                            at,
                            message: "amplitude_table gives the amplitude at each speed: remove amplitude_law and \
                                      reference_rpm"
                                .into(),
                        });
                    }
                    let tat = format!("{at}.amplitude_table");
                    if t.len() < 2 {
                        return Err(ModelError::Invalid {
                            at: tat,
                            message: "give at least two [rpm, N] rows covering rpm_range".into(),
                        });
                    }
                    let rows = ascending_table(&tat, t, "speed", "amplitude")?;
                    let (first, last) = (rows[0].0, rows[rows.len() - 1].0);
                    if first > range[0] || last < range[1] {
                        return Err(ModelError::Invalid {
                            at: tat,
                            message: format!(
                                "the table covers {first}-{last} rpm but rpm_range is {}-{} rpm; extend the table \
                                 (amplitudes are not extrapolated)",
                                range[0], range[1]
                            ),
                        });
                    }
                    OrderAmplitude::Table(rows)
                }
            };
            let name = o.name.clone().unwrap_or_else(|| format!("order {}", o.order));
            orders.push(OrderSpec {
                name,
                order: o.order,
                node,
                direction: dir,
                amplitude,
                phase_rad: phase.to_radians(),
                moment,
            });
        }
        Ok((Some(range), orders))
    }

    fn damping_spec(&self, s: &crate::model::Study, zeta: f64) -> Result<DampingSpec, ModelError> {
        let at = "study.damping";
        let Some(d) = &s.damping else {
            return Ok(DampingSpec {
                modal_ratio: zeta,
                per_mode: None,
                table: None,
                rayleigh: [0.0; 2],
                loss_factor: 0.0,
            });
        };
        if d.modal_ratio_per_mode.is_some() && d.modal_ratio_table.is_some() {
            return Err(ModelError::Invalid {
                at: at.into(),
                message: "give modal_ratio_per_mode or modal_ratio_table, not both".into(),
            });
        }
        let ratio_ok = |v: f64| (0.0..1.0).contains(&v);
        if let Some(list) = &d.modal_ratio_per_mode {
            if list.is_empty() {
                return Err(ModelError::Invalid {
                    at: format!("{at}.modal_ratio_per_mode"),
                    message: "the list is empty".into(),
                });
            }
            if let Some((i, &v)) = list.iter().enumerate().find(|(_, v)| !ratio_ok(**v)) {
                return Err(ModelError::OutOfRange {
                    at: format!("{at}.modal_ratio_per_mode[{i}]"),
                    field: "ratio",
                    value: v,
                    allowed: "at least 0 and below 1".into(),
                });
            }
        }
        let table = match &d.modal_ratio_table {
            None => None,
            Some(t) => {
                let t = ascending_table(&format!("{at}.modal_ratio_table"), t, "frequency", "ratio")?;
                if let Some((i, p)) = t.iter().enumerate().find(|(_, p)| !ratio_ok(p.1)) {
                    return Err(ModelError::OutOfRange {
                        at: format!("{at}.modal_ratio_table[{i}]"),
                        field: "ratio",
                        value: p.1,
                        allowed: "at least 0 and below 1".into(),
                    });
                }
                Some(t)
            }
        };
        let alpha = d.rayleigh_alpha.unwrap_or(0.0);
        let beta = d.rayleigh_beta.unwrap_or(0.0);
        let eta = d.loss_factor.unwrap_or(0.0);
        check_non_negative(at, "rayleigh_alpha", alpha)?;
        check_non_negative(at, "rayleigh_beta", beta)?;
        check_non_negative(at, "loss_factor", eta)?;
        Ok(DampingSpec {
            modal_ratio: zeta,
            per_mode: d.modal_ratio_per_mode.clone(),
            table,
            rayleigh: [alpha, beta],
            loss_factor: eta,
        })
    }

    /// Elastomer of each absorber, and the study temperatures (each inside every used table).
    #[allow(clippy::type_complexity)]
    fn elastomers(&self, s: &crate::model::Study) -> Result<(Vec<Option<ElastomerSpec>>, Vec<f64>), ModelError> {
        let mut tables = BTreeMap::new();
        for (name, e) in &s.elastomers {
            let at = format!("study.elastomers.{name}");
            let fx: Vec<[f64; 2]> = e.frequency_hz.iter().map(|&f| [f, 0.0]).collect();
            ascending_table(&format!("{at}.frequency_hz"), &fx, "frequency", "value")?;
            strictly_ascending(&format!("{at}.temperatures_c"), &e.temperatures_c, "temperature")?;
            for (field, rows) in [("storage_factor", &e.storage_factor), ("loss_factor", &e.loss_factor)] {
                if rows.len() != e.temperatures_c.len() {
                    return Err(ModelError::Invalid {
                        at: format!("{at}.{field}"),
                        message: format!(
                            "{} rows given for {} temperatures; give one row per temperature",
                            rows.len(),
                            e.temperatures_c.len()
                        ),
                    });
                }
                for (i, row) in rows.iter().enumerate() {
                    if row.len() != e.frequency_hz.len() {
                        return Err(ModelError::Invalid {
                            at: format!("{at}.{field}[{i}]"),
                            message: format!(
                                "{} values given for {} frequencies; give one value per frequency",
                                row.len(),
                                e.frequency_hz.len()
                            ),
                        });
                    }
                    for (j, &v) in row.iter().enumerate() {
                        let ok = if field == "storage_factor" {
                            v.is_finite() && v > 0.0
                        } else {
                            v.is_finite() && v >= 0.0
                        };
                        if !ok {
                            return Err(ModelError::OutOfRange {
                                at: format!("{at}.{field}[{i}][{j}]"),
                                field,
                                value: v,
                                allowed: if field == "storage_factor" {
                                    "a positive factor".into()
                                } else {
                                    "a loss factor of 0 or more".into()
                                },
                            });
                        }
                    }
                }
            }
            tables.insert(
                name.clone(),
                ElastomerSpec {
                    name: name.clone(),
                    frequency_hz: e.frequency_hz.clone(),
                    temperatures_c: e.temperatures_c.clone(),
                    storage_factor: e.storage_factor.clone(),
                    loss_factor: e.loss_factor.clone(),
                },
            );
        }
        let mut out = Vec::new();
        for (i, a) in self.model.absorbers.iter().enumerate() {
            // One entry per resolved absorber: a lateral absorber's second direction shares it.
            let copies = if a.second_direction.is_some() { 2 } else { 1 };
            let e = match &a.elastomer {
                None => None,
                Some(name) => Some(tables.get(name).cloned().ok_or_else(|| ModelError::Invalid {
                    at: format!("absorbers[{i}].elastomer"),
                    message: format!(
                        "no elastomer \"{name}\" in study.elastomers (defined: {})",
                        if tables.is_empty() {
                            "none".to_string()
                        } else {
                            tables.keys().cloned().collect::<Vec<_>>().join(", ")
                        }
                    ),
                })?),
            };
            out.extend(std::iter::repeat_n(e, copies));
        }
        let temps = s.temperatures_c.clone();
        for (i, &t) in temps.iter().enumerate() {
            if !t.is_finite() {
                return Err(ModelError::OutOfRange {
                    at: "study.temperatures_c".into(),
                    field: "temperature",
                    value: t,
                    allowed: "a finite temperature in °C".into(),
                });
            }
            for e in out.iter().flatten() {
                let (lo, hi) = (e.temperatures_c[0], e.temperatures_c[e.temperatures_c.len() - 1]);
                if t < lo || t > hi {
                    return Err(ModelError::OutOfRange {
                        at: format!("study.temperatures_c[{i}]"),
                        field: "temperature",
                        value: t,
                        allowed: format!("inside the table of elastomer \"{}\", {lo} to {hi} °C", e.name),
                    });
                }
            }
        }
        if temps.is_empty() && out.iter().any(Option::is_some) {
            return Err(ModelError::Invalid {
                at: "study.temperatures_c".into(),
                message: "an absorber uses an elastomer: give the temperatures to evaluate it at (°C)".into(),
            });
        }
        Ok((out, temps))
    }

    fn design(&mut self, d: &crate::model::AbsorberDesign) -> Result<DesignSpec, ModelError> {
        let at = "study.absorber_design";
        if d.count == 0 {
            return Err(ModelError::Invalid { at: at.into(), message: "count must be at least 1".into() });
        }
        let mass_each = match (d.mass_each, d.total_mass) {
            (Some(m), None) => {
                check_positive(at, "mass_each", m)?;
                m
            }
            (None, Some(t)) => {
                check_positive(at, "total_mass", t)?;
                t / d.count as f64
            }
            _ => {
                return Err(ModelError::Invalid {
                    at: at.into(),
                    message: "give the absorber mass as mass_each or as total_mass (exactly one)".into(),
                });
            }
        };
        let targets = match &d.targets {
            Targets::Auto(_) => TargetSpec::Auto,
            Targets::Modes(list) => {
                if list.is_empty() {
                    return Err(ModelError::Invalid {
                        at: format!("{at}.targets"),
                        message: "the list of target modes is empty; give mode numbers or \"auto\"".into(),
                    });
                }
                if let Some(&bad) = list.iter().find(|&&m| m == 0) {
                    return Err(ModelError::OutOfRange {
                        at: format!("{at}.targets"),
                        field: "mode number",
                        value: bad as f64,
                        allowed: "1 or more (1 is the lowest mode)".into(),
                    });
                }
                TargetSpec::Modes(list.clone())
            }
        };
        if d.candidates.is_empty() {
            return Err(ModelError::Invalid {
                at: format!("{at}.candidates"),
                message: "no candidate places are given".into(),
            });
        }
        let kind = d.kind.unwrap_or_default();
        let mut candidates = Vec::new();
        let mut rings = Vec::new();
        for (i, c) in d.candidates.iter().enumerate() {
            let cat = format!("{at}.candidates[{i}]");
            if kind == AbsorberKind::RingInsert {
                let found = self.candidate_rings(&cat, c)?;
                rings.extend(found);
                continue;
            }
            let found = self.candidate_nodes(&cat, c)?;
            if found.is_empty() {
                return Err(ModelError::Invalid { at: cat, message: "this candidate range holds no node".into() });
            }
            candidates.extend(found);
        }
        if kind == AbsorberKind::RingInsert {
            rings.sort_by_key(|r: &RingCandidate| r.node);
            rings.dedup_by_key(|r| r.node);
            candidates = rings.iter().map(|r| r.node).collect();
        } else {
            candidates.sort_unstable();
            candidates.dedup();
        }
        if d.directions.is_empty() {
            return Err(ModelError::Invalid {
                at: format!("{at}.directions"),
                message: "give at least one direction of action".into(),
            });
        }
        let directions = d
            .directions
            .iter()
            .enumerate()
            .map(|(i, dir)| direction(&format!("{at}.directions[{i}]"), dir))
            .collect::<Result<Vec<_>, _>>()?;
        if kind == AbsorberKind::Lateral {
            if directions.len() != 2 {
                return Err(ModelError::Invalid {
                    at: format!("{at}.directions"),
                    message: format!(
                        "a lateral absorber acts along exactly two perpendicular directions (its isotropic spring \
                         plane); {} are given",
                        directions.len()
                    ),
                });
            }
            perpendicular(&format!("{at}.directions[1]"), &directions[0], &directions[1], "directions[0]")?;
        }
        let min_spacing = match d.min_spacing {
            Some(s) => {
                check_non_negative(at, "min_spacing", s)?;
                s
            }
            None => 0.1 * bounding_diagonal(candidates.iter().map(|&i| self.nodes[i].xyz)),
        };
        let mass_limits = match d.mass_limits {
            Some([lo, hi]) => {
                let lat = format!("{at}.mass_limits");
                check_positive(&lat, "min", lo)?;
                check_positive(&lat, "max", hi)?;
                if hi < lo {
                    return Err(ModelError::Invalid {
                        at: lat,
                        message: format!("the limits [{lo}, {hi}] kg are contradictory: min must not exceed max"),
                    });
                }
                if let Some(t) = d.total_mass {
                    let n = d.count as f64;
                    if t < lo * n {
                        return Err(ModelError::Invalid {
                            at: format!("{at}.total_mass"),
                            message: format!(
                                "the mass budget {t} kg is below what {} absorber(s) of at least {lo} kg need                                  ({} kg, mass_limits); raise total_mass or lower the count or the minimum",
                                d.count,
                                lo * n
                            ),
                        });
                    }
                    if t > hi * n {
                        return Err(ModelError::Invalid {
                            at: format!("{at}.total_mass"),
                            message: format!(
                                "the mass budget {t} kg cannot be used by {} absorber(s) of at most {hi} kg                                  ({} kg, mass_limits): the constraints contradict each other",
                                d.count,
                                hi * n
                            ),
                        });
                    }
                } else if mass_each < lo || mass_each > hi {
                    return Err(ModelError::Invalid {
                        at: format!("{at}.mass_each"),
                        message: format!("mass_each = {mass_each} kg is outside mass_limits [{lo}, {hi}] kg"),
                    });
                }
                Some([lo, hi])
            }
            None => None,
        };
        if let Some(l) = d.stroke_limit {
            check_positive(at, "stroke_limit", l)?;
        }
        let uncertainty = match &d.uncertainty {
            None => UncertaintySpec::NONE,
            Some(u) => {
                let uat = format!("{at}.uncertainty");
                let scatter = |field: &'static str, v: Option<f64>| -> Result<f64, ModelError> {
                    let v = v.unwrap_or(0.0);
                    if v.is_finite() && (0.0..0.5).contains(&v) {
                        Ok(v)
                    } else {
                        Err(ModelError::OutOfRange {
                            at: uat.clone(),
                            field,
                            value: v,
                            allowed: "a fraction in [0, 0.5), e.g. 0.05 for ±5 %".into(),
                        })
                    }
                };
                let frequency_scatter = scatter("frequency_scatter", u.frequency_scatter)?;
                let stiffness_scatter = scatter("stiffness_scatter", u.stiffness_scatter)?;
                let levels = u.scenarios.unwrap_or(3);
                if !(2..=9).contains(&levels) {
                    return Err(ModelError::OutOfRange {
                        at: uat,
                        field: "scenarios",
                        value: levels as f64,
                        allowed: "2 to 9 levels per scattered quantity".into(),
                    });
                }
                UncertaintySpec { frequency_scatter, stiffness_scatter, levels }
            }
        };
        for (i, &m) in d.trade_off_masses.iter().enumerate() {
            let tat = format!("{at}.trade_off_masses[{i}]");
            check_positive(&tat, "total mass", m)?;
            if let Some([lo, hi]) = mass_limits {
                let n = d.count as f64;
                if m < lo * n || m > hi * n {
                    return Err(ModelError::Invalid {
                        at: tat,
                        message: format!(
                            "{m} kg cannot be shared by {} absorber(s) within mass_limits [{lo}, {hi}] kg",
                            d.count
                        ),
                    });
                }
            }
        }
        Ok(DesignSpec {
            trade_off_masses: d.trade_off_masses.clone(),
            total_mass: d.total_mass,
            mass_limits,
            stroke_limit: d.stroke_limit,
            uncertainty,
            targets,
            count: d.count,
            mass_each,
            kind,
            candidates,
            rings,
            directions,
            objective: d.objective.unwrap_or(Objective::Peak),
            min_spacing,
        })
    }

    /// The `from`/`to` fractions of a line or tube candidate range, checked.
    fn candidate_range(at: &str, c: &CandidateSet) -> Result<(f64, f64), ModelError> {
        let from = c.from.unwrap_or(0.0);
        let to = c.to.unwrap_or(1.0);
        check_fraction(at, "from", from)?;
        check_fraction(at, "to", to)?;
        if from > to {
            return Err(ModelError::Invalid {
                at: at.to_string(),
                message: format!("from = {from} is beyond to = {to}"),
            });
        }
        Ok((from, to))
    }

    /// The stations of tube `t` between `from` and `to`.
    fn stations_in(&self, t: usize, from: f64, to: f64) -> Vec<usize> {
        let f = &self.tubes[t].fractions;
        (0..f.len()).filter(|&k| f[k] >= from - 1e-9 && f[k] <= to + 1e-9).collect()
    }

    /// Ring-insert candidates of `c` (a `{"tube": name, "from": a, "to": b}` range of a shell tube):
    /// one averaging link per ring, from a new node at the ring's centre to the ring's nodes (or the
    /// model's own averaging link over exactly that ring, as `design.json` carries). Rings whose
    /// nodes some link moves (an end fitting's ring) or whose centre holds a node are skipped.
    fn candidate_rings(&mut self, at: &str, c: &CandidateSet) -> Result<Vec<RingCandidate>, ModelError> {
        let Some(name) = &c.tube else {
            return Err(ModelError::Invalid {
                at: at.to_string(),
                message: "ring inserts (kind \"ring_insert\") sit in rings of a shell tube: give the candidates as \
                          {\"tube\": name, \"from\": a, \"to\": b}, not as nodes, lines or regions"
                    .into(),
            });
        };
        if c.line.is_some() || c.node.is_some() || c.xyz.is_some() || c.region.is_some() {
            return Err(ModelError::Invalid {
                at: at.to_string(),
                message: "give only {\"tube\": name, \"from\": a, \"to\": b} for ring-insert candidates".into(),
            });
        }
        let t = self.tube(&format!("{at}.tube"), name)?;
        if self.tubes[t].fidelity != Fidelity::Shell {
            return Err(ModelError::Invalid {
                at: format!("{at}.tube"),
                message: format!(
                    "tube \"{name}\" is meshed as beams: a ring insert needs a wall ring, so the tube must have \
                     \"fidelity\": \"shell\" (on a beam tube use a point or lateral absorber at its nodes)"
                ),
            });
        }
        let (from, to) = Self::candidate_range(at, c)?;
        let mut moved = vec![false; self.nodes.len()];
        for l in &self.links {
            for &n in l.moved() {
                moved[n] = true;
            }
        }
        let mut out = Vec::new();
        for k in self.stations_in(t, from, to) {
            let tube = &self.tubes[t];
            let mut ring = tube.rings[k].clone();
            if ring.iter().any(|&n| moved[n]) {
                continue;
            }
            ring.sort_unstable();
            let fraction = tube.fractions[k];
            let own = self.links.iter().position(|l| l.kind == LinkKind::Average && l.members == ring);
            let link = match own {
                Some(li) => li,
                None => {
                    let n = ring.len() as f64;
                    let centre = ring.iter().fold([0.0; 3], |acc, &m| {
                        let p = self.nodes[m].xyz;
                        [acc[0] + p[0] / n, acc[1] + p[1] / n, acc[2] + p[2] / n]
                    });
                    if self.grid.find(centre, &self.nodes).is_some() {
                        continue;
                    }
                    let link_name = format!("{name} ring insert candidate {k}");
                    if self.link_index.contains_key(&link_name) {
                        return Err(ModelError::Invalid {
                            at: at.to_string(),
                            message: format!(
                                "the link name \"{link_name}\" is kept for the ring-insert candidates; rename that link"
                            ),
                        });
                    }
                    let tube_name = name.clone();
                    let reference =
                        self.add_point(centre, || format!("centre of ring {k} of tube \"{tube_name}\" (ring insert)"));
                    self.link_index.insert(link_name.clone(), self.links.len());
                    self.links.push(LinkSpec { name: link_name, kind: LinkKind::Average, reference, members: ring });
                    moved.push(true);
                    self.links.len() - 1
                }
            };
            out.push(RingCandidate { tube: t, station: k, fraction, link, node: self.links[link].reference });
        }
        if out.is_empty() {
            return Err(ModelError::Invalid {
                at: at.to_string(),
                message: format!(
                    "tube \"{name}\" has no ring between {from} and {to} that can hold a ring insert (rings tied by \
                     an end fitting or with a node at their centre do not count)"
                ),
            });
        }
        Ok(out)
    }

    fn candidate_nodes(&mut self, at: &str, c: &CandidateSet) -> Result<Vec<usize>, ModelError> {
        let forms = [
            c.line.is_some() || (c.tube.is_none() && (c.from.is_some() || c.to.is_some())),
            c.tube.is_some(),
            c.node.is_some(),
            c.xyz.is_some(),
            c.region.is_some(),
        ];
        if forms.iter().filter(|&&f| f).count() != 1 {
            return Err(ModelError::Invalid {
                at: at.to_string(),
                message: "give exactly one of {\"line\": name, \"from\": a, \"to\": b}, {\"tube\": name, \"from\": a, \
                          \"to\": b}, {\"node\": id}, {\"xyz\": [x, y, z]} or {\"region\": name}"
                    .into(),
            });
        }
        if let Some(name) = &c.tube {
            let (from, to) = Self::candidate_range(at, c)?;
            let t = self.tube(&format!("{at}.tube"), name)?;
            let rings = &self.tubes[t].rings;
            return Ok(self.stations_in(t, from, to).into_iter().flat_map(|k| rings[k].iter().copied()).collect());
        }
        if let Some(name) = &c.region {
            return Ok(self.region(&format!("{at}.region"), name)?.to_vec());
        }
        if let Some(id) = c.node {
            let loc = Location::node(id);
            return Ok(vec![self.locate(at, &loc)?]);
        }
        if let Some(p) = c.xyz {
            let loc = Location { xyz: Some(p), ..Location::default() };
            return Ok(vec![self.locate(at, &loc)?]);
        }
        let Some(name) = &c.line else {
            return Err(ModelError::Invalid { at: at.to_string(), message: "a line range needs \"line\"".into() });
        };
        let (from, to) = Self::candidate_range(at, c)?;
        let line = self.line(&format!("{at}.line"), name)?;
        let l = &self.lines[line];
        Ok((0..l.nodes.len())
            .filter(|&k| {
                let f = l.fraction(k);
                f >= from - 1e-9 && f <= to + 1e-9
            })
            .map(|k| l.nodes[k])
            .collect())
    }
}

/// Corners of a tube's bounding box (finite inputs only matter: the caller drops the rest).
fn tube_extent(t: &crate::model::Tube) -> Vec<[f64; 3]> {
    let s = t.start.unwrap_or([0.0; 3]);
    let a = t.axis.unwrap_or([1.0, 0.0, 0.0]);
    let n = norm(a);
    let e = [s[0] + t.length * a[0] / n, s[1] + t.length * a[1] / n, s[2] + t.length * a[2] / n];
    let r = t.segments.iter().filter_map(|g| g.outer_diameter).fold(t.outer_diameter, f64::max) / 2.0;
    [s, e].iter().flat_map(|p| [p.map(|v| v - r), p.map(|v| v + r)]).collect()
}

/// Corners of a panel.
fn panel_extent(p: &crate::model::Panel) -> Vec<[f64; 3]> {
    let o = p.origin.unwrap_or([0.0; 3]);
    vec![o, [o[0] + p.size[0], o[1] + p.size[1], o[2]]]
}

fn check_section(at: &str, s: &Section) -> Result<(), ModelError> {
    match s {
        Section::Circle(c) => check_positive(at, "diameter", c.diameter),
        Section::CircularTube(t) => {
            check_positive(at, "outer_diameter", t.outer_diameter)?;
            check_positive(at, "wall_thickness", t.wall_thickness)?;
            if t.wall_thickness >= t.outer_diameter / 2.0 {
                return Err(ModelError::OutOfRange {
                    at: at.to_string(),
                    field: "wall_thickness",
                    value: t.wall_thickness,
                    allowed: format!(
                        "less than half the outer diameter ({}); use a circle section for a solid bar",
                        t.outer_diameter / 2.0
                    ),
                });
            }
            Ok(())
        }
        Section::Rectangle(r) => {
            check_positive(at, "width", r.width)?;
            check_positive(at, "height", r.height)
        }
        Section::RectangularTube(r) => {
            check_positive(at, "width", r.width)?;
            check_positive(at, "height", r.height)?;
            check_positive(at, "wall_thickness", r.wall_thickness)?;
            let half = r.width.min(r.height) / 2.0;
            if r.wall_thickness >= half {
                return Err(ModelError::OutOfRange {
                    at: at.to_string(),
                    field: "wall_thickness",
                    value: r.wall_thickness,
                    allowed: format!("less than half the smaller outer dimension ({half})"),
                });
            }
            Ok(())
        }
        Section::Properties(p) => {
            check_positive(at, "area", p.area)?;
            check_positive(at, "second_moment_y", p.second_moment_y)?;
            check_positive(at, "second_moment_z", p.second_moment_z)?;
            check_positive(at, "torsion_constant", p.torsion_constant)?;
            if let Some(v) = p.polar_moment {
                check_positive(at, "polar_moment", v)?;
            }
            if let Some(v) = p.shear_area_y {
                check_positive(at, "shear_area_y", v)?;
            }
            if let Some(v) = p.shear_area_z {
                check_positive(at, "shear_area_z", v)?;
            }
            Ok(())
        }
    }
}

/// Makes shell normals agree across shared edges: two neighbours agree when they run along their
/// common edge in opposite directions. Each connected patch keeps the node order of its first
/// shell; the others are reversed where needed (a-b-c-d becomes a-d-c-b, the same element with the
/// normal flipped). Edges shared by more than two shells (T-joints) do not propagate orientation.
/// Warnings name the reversed shells and any patch that cannot be oriented (a one-sided surface).
fn orient_shells(s: &mut Structure) {
    let n = s.shells.len();
    if n == 0 {
        return;
    }
    let mut edges: HashMap<(usize, usize), Vec<usize>> = HashMap::new();
    for (i, e) in s.shells.iter().enumerate() {
        let k = e.nodes.len();
        for j in 0..k {
            let (a, b) = (e.nodes[j], e.nodes[(j + 1) % k]);
            edges.entry((a.min(b), a.max(b))).or_default().push(i);
        }
    }
    // Direction in which shell `i` runs along edge {a, b}: true for a → b.
    let runs = |e: &ShellElement, a: usize, b: usize| {
        let k = e.nodes.len();
        (0..k).any(|j| e.nodes[j] == a && e.nodes[(j + 1) % k] == b)
    };
    let mut flip = vec![false; n];
    let mut done = vec![false; n];
    let mut conflicts = 0usize;
    for start in 0..n {
        if done[start] {
            continue;
        }
        done[start] = true;
        let mut stack = vec![start];
        while let Some(i) = stack.pop() {
            let e = &s.shells[i];
            let k = e.nodes.len();
            for j in 0..k {
                let (a, b) = (e.nodes[j], e.nodes[(j + 1) % k]);
                let Some(list) = edges.get(&(a.min(b), a.max(b))) else { continue };
                if list.len() != 2 {
                    continue;
                }
                let other = if list[0] == i { list[1] } else { list[0] };
                // After flips, i runs a → b iff (not flip[i]); the neighbour must run b → a.
                let i_forward = !flip[i];
                let other_forward_as_given = runs(&s.shells[other], a, b);
                let needs_flip = other_forward_as_given == i_forward;
                if done[other] {
                    if flip[other] != needs_flip {
                        conflicts += 1;
                    }
                    continue;
                }
                flip[other] = needs_flip;
                done[other] = true;
                stack.push(other);
            }
        }
    }
    let mut reversed = Vec::new();
    for (i, e) in s.shells.iter_mut().enumerate() {
        if flip[i] {
            e.nodes[1..].reverse();
            e.shape.normal = e.shape.normal.map(|v| -v);
            reversed.push(e.id.to_string());
        }
    }
    if !reversed.is_empty() {
        let shown: Vec<&str> = reversed.iter().take(10).map(String::as_str).collect();
        s.warnings.push(format!(
            "{} shell(s) had their node order reversed so that their normals agree with their neighbours: {}{}",
            reversed.len(),
            shown.join(", "),
            if reversed.len() > 10 { ", ..." } else { "" }
        ));
    }
    if conflicts > 0 {
        s.warnings.push(format!(
            "shell normals cannot be made consistent on {} edge(s): the surface is one-sided (like a Möbius strip); \
             results are valid, but directions normal to the wall are not uniform",
            conflicts.div_ceil(2)
        ));
    }
}

/// Warnings about distorted shells and shells too thick for thin-shell theory, one line per
/// measure naming the worst elements.
fn add_shell_quality_warnings(s: &mut Structure) {
    type Measure = (&'static str, fn(&ShellElement) -> f64, fn(f64) -> bool, String);
    let measures: [Measure; 5] = [
        (
            "aspect ratio",
            |e| e.shape.aspect_ratio,
            |v| v > ASPECT_RATIO_WARNING,
            format!("above {ASPECT_RATIO_WARNING}"),
        ),
        (
            "warp",
            |e| e.shape.warp_deg,
            |v| v > WARP_WARNING_DEG,
            format!("above {WARP_WARNING_DEG}° (projected to the mean plane)"),
        ),
        ("skew", |e| e.shape.skew_deg, |v| v > SKEW_WARNING_DEG, format!("above {SKEW_WARNING_DEG}°")),
        (
            "Jacobian ratio",
            |e| e.shape.jacobian_ratio,
            |v| v < JACOBIAN_RATIO_WARNING,
            format!("below {JACOBIAN_RATIO_WARNING}"),
        ),
        (
            "thickness / shortest side",
            |e| e.thickness / e.shape.shortest_side,
            |v| v > 1.0,
            "above 1: thinner than its size is what a flat thin-shell element assumes".into(),
        ),
    ];
    for (name, value, bad, limit) in measures {
        let mut hits: Vec<(f64, String)> =
            s.shells.iter().map(|e| (value(e), e.label.clone())).filter(|(v, _)| bad(*v)).collect();
        if hits.is_empty() {
            continue;
        }
        hits.sort_by(|a, b| b.0.total_cmp(&a.0));
        if name == "Jacobian ratio" {
            hits.reverse();
        }
        let shown: Vec<String> = hits.iter().take(5).map(|(v, l)| format!("{l} ({v:.3})")).collect();
        s.warnings.push(format!(
            "{} shell(s) with {name} {limit}: {}{}",
            hits.len(),
            shown.join(", "),
            if hits.len() > 5 { ", ..." } else { "" }
        ));
    }
}

/// Warnings about nodes that nothing uses and members too stocky for Euler–Bernoulli theory.
fn add_connectivity_warnings(s: &mut Structure) {
    let mut used = vec![false; s.nodes.len()];
    for e in &s.shells {
        for &n in &e.nodes {
            used[n] = true;
        }
    }
    for b in &s.beams {
        used[b.nodes[0]] = true;
        used[b.nodes[1]] = true;
    }
    for sp in &s.springs {
        used[sp.node] = true;
        if let Some(o) = sp.other {
            used[o] = true;
        }
    }
    for p in &s.point_masses {
        used[p.node] = true;
    }
    // An averaging link's reference follows its members (a ring insert's centre, a sensor point).
    for l in &s.links {
        if l.kind == LinkKind::Average && l.members.iter().any(|&m| used[m]) {
            used[l.reference] = true;
        }
    }
    let unused: Vec<String> = (0..s.nodes.len()).filter(|&i| !used[i]).map(|i| s.nodes[i].id.to_string()).collect();
    if !unused.is_empty() {
        let shown: Vec<&str> = unused.iter().take(10).map(String::as_str).collect();
        s.warnings.push(format!(
            "{} node(s) carry no element, spring or mass and are ignored: {}{}",
            unused.len(),
            shown.join(", "),
            if unused.len() > 10 { ", ..." } else { "" }
        ));
    }
    // Slenderness of each line (whole member) and explicit beam: L / r with r = sqrt(I / A).
    let mut stocky = Vec::new();
    for (li, l) in s.lines.iter().enumerate() {
        if let Some(b) = s.beams.iter().find(|b| b.line == Some(li)) {
            let r = (b.section.second_moment_y.max(b.section.second_moment_z) / b.section.area).sqrt();
            if b.section.shear_area_y.is_none() && l.length() / r < 20.0 {
                stocky.push(format!("line \"{}\" (L/r = {:.1})", l.name, l.length() / r));
            }
        }
    }
    if !stocky.is_empty() {
        s.warnings.push(format!(
            "short, stocky members: {}; Euler-Bernoulli theory overestimates their bending frequencies, \
             consider \"shear_deformation\": true in the section",
            stocky.join(", ")
        ));
    }
}

fn sub(a: [f64; 3], b: [f64; 3]) -> [f64; 3] {
    [a[0] - b[0], a[1] - b[1], a[2] - b[2]]
}

fn cross(a: [f64; 3], b: [f64; 3]) -> [f64; 3] {
    [a[1] * b[2] - a[2] * b[1], a[2] * b[0] - a[0] * b[2], a[0] * b[1] - a[1] * b[0]]
}

fn norm(a: [f64; 3]) -> f64 {
    (a[0] * a[0] + a[1] * a[1] + a[2] * a[2]).sqrt()
}

/// Whether `points` lie on one line: every point within 10⁻⁶ of their extent from the line through
/// the first point and the point farthest from it.
fn collinear(points: &[[f64; 3]]) -> bool {
    let Some(&p0) = points.first() else { return true };
    let far = points.iter().copied().fold(p0, |a, p| if distance(p, p0) > distance(a, p0) { p } else { a });
    let span = distance(far, p0);
    if span == 0.0 {
        return true;
    }
    let d = sub(far, p0).map(|v| v / span);
    points.iter().all(|&p| norm(cross(sub(p, p0), d)) <= 1e-6 * span)
}

/// A uniform grid of buckets for finding coincident points in constant time.
struct PointGrid {
    tolerance: f64,
    cell: f64,
    buckets: HashMap<[i64; 3], Vec<usize>>,
}

impl PointGrid {
    fn new(tolerance: f64) -> Self {
        Self { tolerance, cell: 4.0 * tolerance, buckets: HashMap::new() }
    }

    fn key(&self, p: [f64; 3]) -> [i64; 3] {
        p.map(|v| (v / self.cell).floor() as i64)
    }

    fn insert(&mut self, p: [f64; 3], index: usize) {
        let k = self.key(p);
        self.buckets.entry(k).or_default().push(index);
    }

    /// The first inserted point within the tolerance of `p`, if any.
    fn find(&self, p: [f64; 3], nodes: &[StructureNode]) -> Option<usize> {
        let k = self.key(p);
        let mut best: Option<usize> = None;
        for dx in -1..=1 {
            for dy in -1..=1 {
                for dz in -1..=1 {
                    if let Some(list) = self.buckets.get(&[k[0] + dx, k[1] + dy, k[2] + dz]) {
                        for &i in list {
                            if distance(nodes[i].xyz, p) <= self.tolerance && best.is_none_or(|b| i < b) {
                                best = Some(i);
                            }
                        }
                    }
                }
            }
        }
        best
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::io::parse_model;

    /// A strip of three unit squares along X; `middle` gives the node order of the middle one.
    fn strip(middle: &str) -> Result<Structure, ModelError> {
        let text = format!(
            r#"{{
            "materials": {{"s": {{"youngs_modulus": 2e11, "poisson_ratio": 0.3, "density": 7800}}}},
            "nodes": [{{"id": 1, "xyz": [0,0,0]}}, {{"id": 2, "xyz": [1,0,0]}}, {{"id": 3, "xyz": [2,0,0]}},
                      {{"id": 4, "xyz": [3,0,0]}}, {{"id": 5, "xyz": [0,1,0]}}, {{"id": 6, "xyz": [1,1,0]}},
                      {{"id": 7, "xyz": [2,1,0]}}, {{"id": 8, "xyz": [3,1,0]}}],
            "shells": [{{"id": 1, "nodes": [1, 2, 6, 5], "thickness": 0.01, "material": "s"}},
                       {{"id": 2, "nodes": {middle}, "thickness": 0.01, "material": "s"}},
                       {{"id": 3, "nodes": [3, 4, 8, 7], "thickness": 0.01, "material": "s"}}]
        }}"#
        );
        validate(&parse_model(&text, std::path::Path::new("t.json"))?)
    }

    #[test]
    fn models_above_the_node_limit_are_refused_before_their_nodes_are_made() {
        let model = |elements: usize, panel: &str| {
            let text = format!(
                r#"{{"materials": {{"s": {{"youngs_modulus": 2e11, "poisson_ratio": 0.3, "density": 7800}}}},
                    "sections": {{"b": {{"rectangle": {{"width": 0.01, "height": 0.01}}}}}},
                    "lines": [{{"name": "l", "from": [0, 0, 0], "to": [1, 0, 0], "elements": {elements},
                               "section": "b", "material": "s"}}]{panel}}}"#
            );
            parse_model(&text, std::path::Path::new("t.json")).map_err(|e| e.to_string())
        };
        // A stray digit: 3·10⁸ elements along a line fails at once (no allocation of its nodes).
        let Ok(m) = model(300_000_000, "") else { panic!("parsed") };
        let e = validate(&m).err().map(|e| e.to_string()).unwrap_or_default();
        assert!(e.contains("lines[0] (\"l\").elements") && e.contains("node limit"), "{e}");
        // The limit counts the whole model: a line of 10 elements (11 nodes) leaves 9 of 20 for a
        // panel of 4 x 1 elements (10 nodes).
        let panel = r#", "panels": [{"name": "p", "size": [0.4, 0.1], "thickness": 0.002, "material": "s",
                                     "divisions": [4, 1]}]"#;
        let Ok(m) = model(10, panel) else { panic!("parsed") };
        let limits = Limits { max_nodes: 20 };
        let e = validate_with(&m, Path::new(""), &limits).err().map(|e| e.to_string()).unwrap_or_default();
        assert!(e.contains("panels[0]") && e.contains("more than the 9 left"), "{e}");
        assert!(validate_with(&m, Path::new(""), &Limits { max_nodes: 21 }).is_ok());
    }

    #[test]
    fn shell_normals_are_made_consistent_and_reported() {
        let Ok(s) = strip("[2, 3, 7, 6]") else { panic!("valid strip") };
        assert!(s.shells.iter().all(|e| e.shape.normal == [0.0, 0.0, 1.0]));
        assert!(!s.warnings.iter().any(|w| w.contains("reversed")), "{:?}", s.warnings);
        // The middle shell given clockwise: reversed to agree with its neighbours, and reported.
        let Ok(s) = strip("[2, 6, 7, 3]") else { panic!("valid strip") };
        assert_eq!(s.shells[1].nodes, vec![1, 2, 6, 5], "node indices of shell 2 after reversal");
        assert!(s.shells.iter().all(|e| e.shape.normal == [0.0, 0.0, 1.0]));
        assert!(s.warnings.iter().any(|w| w.contains("1 shell(s) had their node order reversed") && w.contains('2')));
    }

    /// A shell tube (8 around, 4 along, 1 m along X) on a pinned start ring, with `extra` JSON
    /// fields added to the model.
    fn shell_tube(extra: &str) -> Result<Structure, ModelError> {
        let text = format!(
            r#"{{
            "materials": {{"s": {{"youngs_modulus": 2e11, "poisson_ratio": 0.3, "density": 7800}}}},
            "tubes": [{{"name": "t", "length": 1, "outer_diameter": 0.1, "wall_thickness": 0.002, "material": "s",
                        "fidelity": "shell", "around": 8, "along": 4, "ends": {{"start": "pinned"}}}}],
            "regions": {{"top": {{"tube": "t", "from": 0.5, "to": 1, "angle_deg": [90, 90]}},
                         "end": {{"tube": "t", "ring": "end"}}}}
            {extra}
        }}"#
        );
        validate(&parse_model(&text, std::path::Path::new("t.json"))?)
    }

    #[test]
    fn region_locations_resolve_to_sets_or_to_the_node_nearest_the_centroid() {
        let s = shell_tube(
            r#", "supports": [{"at": {"region": "end"}, "fixed": ["ux"]}],
                "springs": [{"at": {"region": "end"}, "stiffness": {"uz": 100}}],
                "point_masses": [{"at": {"region": "top"}, "mass": 1}, {"at": {"region": "end"}, "mass": 2}],
                "study": {"band_hz": [1, 100],
                          "excitation": [{"at": {"tube": "t", "at": 0.5}, "direction": "z", "amplitude": 1}],
                          "response_points": [{"at": {"tube": "t", "at": 0.6}, "direction": "z"}],
                          "absorber_design": {"mass_each": 0.1, "candidates": [{"region": "top"}], "directions": ["z"]}}"#,
        )
        .unwrap_or_else(|e| panic!("{e}"));
        let end = &s.regions["end"];
        assert_eq!(end.len(), 8);
        // Supports fix every node of a region; the pinned start ring comes from the tube's ends.
        assert!(end.iter().all(|&n| s.fixed[n] == [true, false, false, false, false, false]));
        assert_eq!(s.fixed.iter().filter(|f| f[0] && f[1] && f[2]).count(), 8, "pinned start ring");
        // One spring to ground per node of the region, each with the full stiffness.
        assert_eq!(s.springs.len(), 8);
        assert!(s.springs.iter().all(|sp| end.contains(&sp.node) && sp.stiffness[2] == 100.0 && sp.other.is_none()));
        // One node: the top line's nodes at 0.5, 0.75, 1 → the middle one; the end ring's centroid
        // is on the axis, equally far from all 8 → the first (angle 0, at +Y).
        let top = &s.regions["top"];
        assert_eq!(top.len(), 3);
        assert_eq!(s.point_masses[0].node, top[1]);
        let p = s.nodes[s.point_masses[0].node].xyz;
        assert!((p[0] - 0.75).abs() < 1e-12 && (p[2] - 0.049).abs() < 1e-12, "{p:?}");
        assert_eq!(s.point_masses[1].node, end[0]);
        let p = s.nodes[end[0]].xyz;
        assert!((p[1] - 0.049).abs() < 1e-12 && p[2].abs() < 1e-12, "{p:?}");
        // A tube location: the ring nearest the fraction, its node at angle 0; 0.6 is between
        // stations (0.5 and 0.75) and warned about.
        let study = s.study.as_ref().unwrap_or_else(|| panic!("study"));
        let at = s.nodes[study.excitation[0].node].xyz;
        assert!((at[0] - 0.5).abs() < 1e-12 && (at[1] - 0.049).abs() < 1e-12, "{at:?}");
        assert!(s.warnings.iter().any(|w| w.contains("response_points[0].at") && w.contains("between stations")));
        let design = study.design.as_ref().unwrap_or_else(|| panic!("design"));
        assert_eq!(&design.candidates, top, "every node of the region is a candidate");
    }

    #[test]
    fn links_resolve_their_nodes_and_take_locations() {
        let s = shell_tube(
            r#", "links": [{"name": "cap", "kind": "rigid", "reference_point": [1, 0, 0], "members": {"region": "end"}},
                         {"name": "band", "kind": "average", "reference": {"tube": "t", "at": 0.5},
                          "members": {"nodes": [17, 18, 19, 20]}}],
                "point_masses": [{"at": {"link": "cap"}, "mass": 0.5}]"#,
        )
        .unwrap_or_else(|e| panic!("{e}"));
        assert_eq!(s.links.len(), 2);
        let cap = &s.links[0];
        assert_eq!(s.nodes[cap.reference].xyz, [1.0, 0.0, 0.0], "a new node at the reference point");
        assert_eq!(cap.members, s.regions["end"]);
        assert_eq!(s.point_masses[0].node, cap.reference, "{{\"link\": name}} is the reference node");
        // The reference is dropped from the members when they include it.
        assert_eq!(s.links[1].members.len(), 3);
        assert!(!s.links[1].members.contains(&s.links[1].reference));
    }

    #[test]
    fn bad_links_are_errors_naming_the_link() {
        let err = |extra: &str| shell_tube(extra).err().map(|e| e.to_string()).unwrap_or_default();
        let e =
            err(r#", "links": [{"name": "a", "kind": "rigid", "reference": {"node": 1}, "members": {"nodes": [1]}}]"#);
        assert!(e.contains("links[0] (\"a\").members") && e.contains("at least one member"), "{e}");
        let e = err(r#", "links": [{"name": "a", "kind": "average", "reference_point": [0.5, 0, 0],
                                    "members": {"region": "top"}}]"#);
        assert!(e.contains("links[0] (\"a\").members") && e.contains("all on one line"), "{e}");
        let e = err(r#", "links": [{"name": "a", "kind": "average", "reference_point": [0.5, 0, 0],
                                    "members": {"nodes": [1, 2]}}]"#);
        assert!(e.contains("at least three member nodes") && e.contains("it has 2"), "{e}");
        let e = err(r#", "links": [{"name": "a", "kind": "rigid", "reference": {"node": 1},
                                    "reference_point": [0, 0, 0], "members": {"nodes": [2]}}]"#);
        assert!(e.contains("exactly one of \"reference\""), "{e}");
        let e = err(r#", "links": [{"name": "a", "kind": "rigid", "reference": {"node": 1}, "members": {}}]"#);
        assert!(e.contains("links[0] (\"a\").members") && e.contains("exactly one of"), "{e}");
        let e = err(
            r#", "links": [{"name": "a", "kind": "rigid", "reference": {"node": 1}, "members": {"nodes": [999]}}]"#,
        );
        assert!(e.contains("links[0] (\"a\").members.nodes[0]") && e.contains("node 999"), "{e}");
        let e = err(
            r#", "links": [{"name": "a", "kind": "rigid", "reference": {"node": 1}, "members": {"nodes": [2]}},
                                   {"name": "a", "kind": "rigid", "reference": {"node": 3}, "members": {"nodes": [4]}}]"#,
        );
        assert!(e.contains("links[1]") && e.contains("defined twice") && e.contains("links[0]"), "{e}");
        // Node 10 moved by two links.
        let e = err(
            r#", "links": [{"name": "a", "kind": "rigid", "reference": {"node": 1}, "members": {"nodes": [10]}},
                                   {"name": "b", "kind": "rigid", "reference": {"node": 3}, "members": {"nodes": [10]}}]"#,
        );
        assert!(e.contains("links[1] (\"b\")") && e.contains("node 10 is already moved by links[0]"), "{e}");
        // A loop: a moves 10 from 11, b moves 11 from 10.
        let e = err(
            r#", "links": [{"name": "a", "kind": "rigid", "reference": {"node": 11}, "members": {"nodes": [10]}},
                                   {"name": "b", "kind": "rigid", "reference": {"node": 10}, "members": {"nodes": [11]}}]"#,
        );
        assert!(e.contains("loop"), "{e}");
        // The start ring is pinned: a link may not move it.
        let e =
            err(r#", "links": [{"name": "a", "kind": "rigid", "reference": {"node": 20}, "members": {"nodes": [1]}}]"#);
        assert!(e.contains("links[0] (\"a\")") && e.contains("held by a support"), "{e}");
        let e = err(r#", "point_masses": [{"at": {"link": "nope"}, "mass": 1}]"#);
        assert!(e.contains("point_masses[0].at.link") && e.contains("link \"nope\" is not defined"), "{e}");
    }

    #[test]
    fn region_location_errors() {
        let e =
            shell_tube(r#", "point_masses": [{"at": {"region": "nowhere"}, "mass": 1}]"#).err().map(|e| e.to_string());
        let e = e.unwrap_or_default();
        assert!(e.contains("point_masses[0].at.region") && e.contains("region \"nowhere\" is not defined"), "{e}");
        let e = shell_tube(r#", "springs": [{"at": {"region": "end"}, "to": {"node": 1}, "stiffness": {"uz": 1}}]"#)
            .err()
            .map(|e| e.to_string())
            .unwrap_or_default();
        assert!(e.contains("springs[0].to") && e.contains("one spring to ground per node"), "{e}");
        let e = shell_tube(r#", "point_masses": [{"at": {"region": "end", "node": 1}, "mass": 1}]"#)
            .err()
            .map(|e| e.to_string())
            .unwrap_or_default();
        assert!(e.contains("give exactly one of"), "{e}");
        let e = shell_tube(r#", "point_masses": [{"at": {"tube": "t"}, "mass": 1}]"#).err().map(|e| e.to_string());
        assert!(e.unwrap_or_default().contains("needs both \"tube\" and \"at\""));
        let e = shell_tube(r#", "point_masses": [{"at": {"tube": "u", "at": 0.5}, "mass": 1}]"#)
            .err()
            .map(|e| e.to_string());
        assert!(e.unwrap_or_default().contains("tube \"u\" is not defined"));
    }

    #[test]
    fn generated_ids_follow_the_explicit_ones_and_coincident_nodes_join() {
        // A beam tube whose start coincides with explicit node 7 and a panel whose corner is the
        // tube's end.
        let text = r#"{
            "materials": {"s": {"youngs_modulus": 2e11, "poisson_ratio": 0.3, "density": 7800}},
            "nodes": [{"id": 7, "xyz": [0, 0, 0]}],
            "tubes": [{"name": "t", "length": 1, "outer_diameter": 0.1, "wall_thickness": 0.002, "material": "s",
                       "along": 4}],
            "panels": [{"name": "p", "size": [0.5, 0.5], "thickness": 0.002, "material": "s", "origin": [1, 0, 0],
                        "divisions": [2, 2]}]
        }"#;
        let s = validate(&parse_model(text, std::path::Path::new("t.json")).unwrap_or_else(|e| panic!("{e}")))
            .unwrap_or_else(|e| panic!("{e}"));
        // 1 explicit + 4 new tube nodes + 9 panel nodes, one of which is the tube's end.
        assert_eq!(s.nodes.len(), 1 + 4 + 8);
        assert_eq!(s.tubes[0].rings[0], vec![0], "the tube starts at explicit node 7");
        assert_eq!(s.nodes[1].id, NodeId(8), "generated ids after the largest explicit id");
        assert_eq!(s.panels[0].node(0, 0), s.tubes[0].rings[4][0], "the panel corner joins the tube's end");
        assert_eq!(s.beams.len(), 4);
        assert_eq!(s.beams[0].label, "tube \"t\" element 1");
        assert_eq!(s.shells.len(), 4);
        assert_eq!(s.shells[0].id, ElementId(1));
        let (_, parts) = s.parts();
        assert_eq!(parts, 1, "tube and panel are one part");
    }

    #[test]
    fn one_sided_surface_is_reported() {
        // A Möbius strip of 12 quads: no consistent orientation exists.
        let n = 12;
        let mut nodes = String::new();
        for k in 0..n {
            let t = 2.0 * std::f64::consts::PI * k as f64 / n as f64;
            for (j, w) in [-0.2f64, 0.2].iter().enumerate() {
                let r = 1.0 + w * (t / 2.0).cos();
                let p = [r * t.cos(), r * t.sin(), w * (t / 2.0).sin()];
                nodes.push_str(&format!(r#"{{"id": {}, "xyz": [{}, {}, {}]}},"#, 2 * k + j + 1, p[0], p[1], p[2]));
            }
        }
        nodes.pop();
        let mut shells = String::new();
        for k in 0..n {
            let (a, b) = (2 * k + 1, 2 * k + 2);
            // The last quad joins the strip to its own start with the two edges swapped.
            let (c, d) = if k + 1 < n { (2 * k + 4, 2 * k + 3) } else { (1, 2) };
            shells.push_str(&format!(
                r#"{{"id": {}, "nodes": [{a}, {c}, {d}, {b}], "thickness": 0.01, "material": "s"}},"#,
                k + 1
            ));
        }
        shells.pop();
        let text = format!(
            r#"{{"materials": {{"s": {{"youngs_modulus": 2e11, "poisson_ratio": 0.3, "density": 7800}}}},
                "nodes": [{nodes}], "shells": [{shells}]}}"#
        );
        let s = parse_model(&text, std::path::Path::new("t.json")).and_then(|m| validate(&m));
        let Ok(s) = s else { panic!("a Möbius strip is a valid model: {s:?}") };
        assert!(s.warnings.iter().any(|w| w.contains("one-sided")), "{:?}", s.warnings);
    }
}
