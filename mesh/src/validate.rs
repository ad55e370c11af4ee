//! Checking a [`Model`] and resolving it into a [`Structure`]: the one place model invariants are
//! checked.

use std::collections::{BTreeMap, HashMap};

use crate::error::ModelError;
use crate::model::{
    CandidateSet, Direction, ElementId, Fixity, FixityPreset, Location, MassMatrix, Model, NodeId, Objective, Section,
    SpringEnd, Targets,
};
use crate::section::section_properties;
use crate::structure::{
    AbsorberDamping, AbsorberSpec, BeamElement, DesignSpec, DirectionSpec, LineNodes, MaterialProperties, NodalMass,
    PointForce, ResponseSpec, SpringElement, Structure, StructureNode, StudySpec, TargetSpec, bounding_diagonal,
    distance,
};

/// Default modal damping ratio of elastic modes when the study gives none (1 %, common practice for
/// lightly damped metal structures).
pub const DEFAULT_MODAL_DAMPING_RATIO: f64 = 0.01;

/// Relative tolerance (of the model size) under which two points are the same node.
const MERGE_TOLERANCE: f64 = 1e-9;

/// Default snapping tolerance for `xyz` locations, as a fraction of the bounding-box diagonal.
const SNAP_FRACTION: f64 = 0.01;

/// Checks `model` and resolves names, ids and locations.
///
/// # Errors
/// The first problem found, naming the item by its JSON path and saying what is wrong.
pub fn validate(model: &Model) -> Result<Structure, ModelError> {
    let mut b = Builder::new(model)?;
    b.nodes()?;
    b.lines()?;
    b.beams()?;
    let fixed = b.supports()?;
    let springs = b.springs()?;
    let point_masses = b.point_masses()?;
    let absorbers = b.absorbers()?;
    let study = match &model.study {
        Some(s) => Some(b.study(s)?),
        None => None,
    };
    let mut structure = Structure {
        title: model.title.clone(),
        nodes: b.nodes,
        beams: b.beams,
        fixed,
        springs,
        point_masses,
        absorbers,
        lines: b.lines,
        mass_matrix: model.mass_matrix.unwrap_or(MassMatrix::Consistent),
        rigid_body_modes: model.rigid_body_modes,
        study,
        warnings: b.warnings,
    };
    if structure.total_mass().partial_cmp(&0.0) != Some(std::cmp::Ordering::Greater) {
        return Err(ModelError::NoMass);
    }
    add_connectivity_warnings(&mut structure);
    Ok(structure)
}

/// What a beam element is made from.
struct BeamSource<'s> {
    id: ElementId,
    label: String,
    at: &'s str,
    nodes: [usize; 2],
    section: &'s str,
    material: &'s str,
    orientation: Option<[f64; 3]>,
    line: Option<usize>,
}

struct Builder<'a> {
    model: &'a Model,
    materials: BTreeMap<&'a str, MaterialProperties>,
    nodes: Vec<StructureNode>,
    node_index: HashMap<NodeId, usize>,
    node_path: HashMap<NodeId, String>,
    grid: PointGrid,
    beams: Vec<BeamElement>,
    lines: Vec<LineNodes>,
    line_index: HashMap<&'a str, usize>,
    warnings: Vec<String>,
    size: f64,
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

impl<'a> Builder<'a> {
    fn new(model: &'a Model) -> Result<Self, ModelError> {
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
        let size =
            bounding_diagonal(model.nodes.iter().map(|n| n.xyz).chain(model.lines.iter().flat_map(|l| [l.from, l.to])));
        let tol = (MERGE_TOLERANCE * size).max(1e-12);
        Ok(Self {
            model,
            materials,
            nodes: Vec::new(),
            node_index: HashMap::new(),
            node_path: HashMap::new(),
            grid: PointGrid::new(tol),
            beams: Vec::new(),
            lines: Vec::new(),
            line_index: HashMap::new(),
            warnings: Vec::new(),
            size,
        })
    }

    fn nodes(&mut self) -> Result<(), ModelError> {
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
        let mut ids: Vec<u64> = self.nodes.iter().map(|n| n.id.0).collect();
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
        let BeamSource { id, label, at, nodes, section, material, orientation, line } = src;
        let sec = self.section(&format!("{at}.section"), section)?;
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
            section_name: section.to_string(),
            section: section_properties(sec, mat.poisson_ratio),
            material_name: material.to_string(),
            material: mat,
            orientation,
            line,
        })
    }

    fn lines(&mut self) -> Result<(), ModelError> {
        let mut next_node = self.model.nodes.iter().map(|n| n.id.0).max().map_or(1, |m| m + 1);
        let mut next_elem = self.model.beams.iter().map(|b| b.id.0).max().map_or(1, |m| m + 1);
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
            self.section(&format!("{at}.section"), &l.section)?;
            self.material(&format!("{at}.material"), &l.material)?;
            let n = l.elements;
            let mut idx = Vec::with_capacity(n + 1);
            for k in 0..=n {
                let t = k as f64 / n as f64;
                let p = [
                    l.from[0] + t * (l.to[0] - l.from[0]),
                    l.from[1] + t * (l.to[1] - l.from[1]),
                    l.from[2] + t * (l.to[2] - l.from[2]),
                ];
                let i = match self.grid.find(p, &self.nodes) {
                    Some(i) => i,
                    None => {
                        let i = self.nodes.len();
                        let id = NodeId(next_node);
                        next_node += 1;
                        self.nodes.push(StructureNode { id, xyz: p });
                        self.node_index.insert(id, i);
                        self.node_path.insert(id, format!("{at} node {k}"));
                        self.grid.insert(p, i);
                        i
                    }
                };
                idx.push(i);
            }
            let line_no = self.lines.len();
            for k in 0..n {
                let label = format!("line \"{}\" element {}", l.name, k + 1);
                let e = self.beam_element(BeamSource {
                    id: ElementId(next_elem),
                    label,
                    at: &at,
                    nodes: [idx[k], idx[k + 1]],
                    section: &l.section,
                    material: &l.material,
                    orientation: l.orientation,
                    line: Some(line_no),
                })?;
                next_elem += 1;
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
            let e = self.beam_element(BeamSource {
                id: b.id,
                label: format!("beam {}", b.id),
                at: &at,
                nodes,
                section: &b.section,
                material: &b.material,
                orientation: b.orientation,
                line: None,
            })?;
            explicit.push(e);
        }
        // Explicit beams first, then line elements.
        explicit.append(&mut self.beams);
        self.beams = explicit;
        Ok(())
    }

    /// Resolves a location to a node index.
    fn locate(&mut self, at: &str, loc: &Location) -> Result<usize, ModelError> {
        let forms = [loc.node.is_some(), loc.xyz.is_some(), loc.line.is_some() || loc.at.is_some()];
        if forms.iter().filter(|&&f| f).count() != 1 {
            return Err(ModelError::Invalid {
                at: at.to_string(),
                message:
                    "give exactly one of {\"node\": id}, {\"xyz\": [x, y, z]} or {\"line\": name, \"at\": fraction}"
                        .into(),
            });
        }
        if loc.tolerance.is_some() && loc.xyz.is_none() {
            return Err(ModelError::Invalid {
                at: at.to_string(),
                message: "tolerance applies only to an xyz location".into(),
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
        let model = self.model;
        for (i, s) in model.supports.iter().enumerate() {
            let at = format!("supports[{i}]");
            let node = self.locate(&format!("{at}.at"), &s.at)?;
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
            for d in dofs {
                fixed[node][d] = true;
            }
        }
        Ok(fixed)
    }

    fn springs(&mut self) -> Result<Vec<SpringElement>, ModelError> {
        let mut out = Vec::new();
        let model = self.model;
        for (i, s) in model.springs.iter().enumerate() {
            let at = format!("springs[{i}]");
            let node = self.locate(&format!("{at}.at"), &s.at)?;
            let other = match &s.to {
                None | Some(SpringEnd::Ground(_)) => None,
                Some(SpringEnd::Location(l)) => {
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
            out.push(SpringElement { label: at, node, other, stiffness: k });
        }
        Ok(out)
    }

    fn point_masses(&mut self) -> Result<Vec<NodalMass>, ModelError> {
        let mut out = Vec::new();
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
            if damping == AbsorberDamping::None {
                self.warnings.push(format!(
                    "{at} (\"{name}\") has no damping: its response peaks are unbounded at the two coupled frequencies"
                ));
            }
            out.push(AbsorberSpec { name, node, direction: dir, mass: a.mass, stiffness: a.stiffness, damping });
        }
        Ok(out)
    }

    fn study(&mut self, s: &crate::model::Study) -> Result<StudySpec, ModelError> {
        let [lo, hi] = s.band_hz;
        if !(lo.is_finite() && hi.is_finite() && lo >= 0.0 && hi > lo) {
            return Err(ModelError::Invalid {
                at: "study.band_hz".into(),
                message: format!("[{lo}, {hi}] is not a band; give [low, high] with 0 <= low < high, in Hz"),
            });
        }
        let zeta = s.modal_damping_ratio.unwrap_or(DEFAULT_MODAL_DAMPING_RATIO);
        if !(zeta > 0.0 && zeta < 1.0) {
            return Err(ModelError::OutOfRange {
                at: "study".into(),
                field: "modal_damping_ratio",
                value: zeta,
                allowed: "between 0 and 1 (exclusive), e.g. 0.01 for 1 %".into(),
            });
        }
        let fmax = s.max_mode_frequency_hz.unwrap_or(2.0 * hi);
        if !(fmax.is_finite() && fmax >= hi) {
            return Err(ModelError::OutOfRange {
                at: "study".into(),
                field: "max_mode_frequency_hz",
                value: fmax,
                allowed: format!("at least the band's top, {hi} Hz"),
            });
        }
        let mut excitation = Vec::new();
        for (i, f) in s.excitation.iter().enumerate() {
            let at = format!("study.excitation[{i}]");
            let node = self.locate(&format!("{at}.at"), &f.at)?;
            let dir = direction(&format!("{at}.direction"), &f.direction)?;
            check_positive(&at, "amplitude", f.amplitude)?;
            let phase = f.phase_deg.unwrap_or(0.0);
            if !phase.is_finite() {
                return Err(ModelError::OutOfRange {
                    at,
                    field: "phase_deg",
                    value: phase,
                    allowed: "a finite angle in degrees".into(),
                });
            }
            excitation.push(PointForce { node, direction: dir, amplitude: f.amplitude, phase_rad: phase.to_radians() });
        }
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
        Ok(StudySpec {
            band_hz: [lo, hi],
            excitation,
            response_points,
            modal_damping_ratio: zeta,
            max_mode_frequency_hz: fmax,
            design,
        })
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
        let mut candidates = Vec::new();
        for (i, c) in d.candidates.iter().enumerate() {
            let cat = format!("{at}.candidates[{i}]");
            let found = self.candidate_nodes(&cat, c)?;
            if found.is_empty() {
                return Err(ModelError::Invalid { at: cat, message: "this candidate range holds no node".into() });
            }
            candidates.extend(found);
        }
        candidates.sort_unstable();
        candidates.dedup();
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
        let min_spacing = match d.min_spacing {
            Some(s) => {
                check_non_negative(at, "min_spacing", s)?;
                s
            }
            None => 0.1 * bounding_diagonal(candidates.iter().map(|&i| self.nodes[i].xyz)),
        };
        Ok(DesignSpec {
            targets,
            count: d.count,
            mass_each,
            candidates,
            directions,
            objective: d.objective.unwrap_or(Objective::Peak),
            min_spacing,
        })
    }

    fn candidate_nodes(&mut self, at: &str, c: &CandidateSet) -> Result<Vec<usize>, ModelError> {
        let forms = [c.line.is_some() || c.from.is_some() || c.to.is_some(), c.node.is_some(), c.xyz.is_some()];
        if forms.iter().filter(|&&f| f).count() != 1 {
            return Err(ModelError::Invalid {
                at: at.to_string(),
                message: "give exactly one of {\"line\": name, \"from\": a, \"to\": b}, {\"node\": id} or {\"xyz\": [x, y, z]}".into(),
            });
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

/// Warnings about nodes that nothing uses and members too stocky for Euler–Bernoulli theory.
fn add_connectivity_warnings(s: &mut Structure) {
    let mut used = vec![false; s.nodes.len()];
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
