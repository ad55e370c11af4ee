//! Generators of parametric parts: round tubes (beams or shells) and flat panels (shells).
//!
//! Each generator is a pure function of one model item: it checks the item's own numbers and
//! returns points, elements, fixed DOFs and springs to ground in the part's local numbering.
//! [`crate::validate`] joins them to the structure exactly as it joins lines: a generated point
//! that coincides with an existing node becomes that node, the others get ids after the largest
//! explicit id, and elements get ids after the largest explicit ones.
//!
//! Tube geometry (shell fidelity): ring j at axial fraction f_j, node k of a ring at angle
//! θ_k = 2πk/N about the axis,
//!
//! ```text
//! p_jk = start + f_j L a + R_j (cos θ_k e₁ + sin θ_k e₂),   e₂ = a × e₁,
//! ```
//!
//! with a the unit axis, e₁ the reference direction (the part of global Y perpendicular to a, or of
//! global Z when a is parallel to Y) and R_j the mid-surface radius (D − t)/2 of the segment; a ring
//! between two segments takes the mean of their radii. Quadrilateral (j, k) has the nodes
//! (j, k), (j, k + 1), (j + 1, k + 1), (j + 1, k): e_θ × a = e_r, so its normal points outward.
//!
//! Panel geometry: grid point (i, j) at origin + (u_i, v_j, 0) with u_i = a i/nx, v_j = b j/ny;
//! quadrilateral (i, j) has the nodes (i, j), (i + 1, j), (i + 1, j + 1), (i, j + 1), normal +Z.
//! A stiffener needs grid lines on it and at its ends: where one is off the uniform grid, that side
//! is cut at the stiffeners' coordinates and each piece divided into equal elements no longer than
//! a/nx (b/ny). An offset stiffener's beams lie on nodes `offset` above the grid nodes along +Z, each
//! a member of a rigid link whose reference is the grid node below: the rigid offset
//! u_beam = u_plate + θ × (0, 0, e), θ_beam = θ_plate, eliminated exactly in the DOF map.

use std::collections::BTreeMap;

use crate::error::ModelError;
use crate::model::{
    Bearing, CircularTubeSection, DofValues, EdgePreset, EdgeSupport, EndPreset, Fidelity, Panel, Stiffener, Tube,
    TubeEnd,
};

/// Smallest number of elements around a shell tube by default (16 facets keep the n = 2 ovaling
/// error near 8 %; 32, the default size, near 2 %: docs/verification.md).
pub(crate) const MIN_AROUND: usize = 16;

/// Default number of shell elements around a tube: the mid-surface circumference over this.
const DEFAULT_AROUND: f64 = 32.0;

/// Default number of beam elements along a tube.
const DEFAULT_ALONG_BEAM: f64 = 40.0;

/// Default number of shell elements along a panel's shorter side.
const DEFAULT_PANEL_DIVISIONS: f64 = 20.0;

/// Points, elements and boundary conditions of a generated part, in its local node numbering.
#[derive(Debug, Clone, Default, PartialEq)]
pub(crate) struct Part {
    /// Node coordinates, in m.
    pub points: Vec<[f64; 3]>,
    /// Beam elements.
    pub beams: Vec<PartBeam>,
    /// Quadrilateral shells.
    pub shells: Vec<PartShell>,
    /// Fixed DOFs per node.
    pub fixed: Vec<(usize, [bool; 6])>,
    /// Springs to ground.
    pub springs: Vec<PartSpring>,
    /// Concentrated masses (end fittings).
    pub masses: Vec<PartMass>,
    /// Rigid links (end fittings of shell tubes).
    pub links: Vec<PartLink>,
    /// Things worth a look, in words.
    pub warnings: Vec<String>,
}

/// A generated beam element.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct PartBeam {
    /// Local node numbers.
    pub nodes: [usize; 2],
    /// Its section.
    pub section: CircularTubeSection,
    /// Index of the tube segment it belongs to.
    pub segment: usize,
}

/// A generated quadrilateral shell.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct PartShell {
    /// Local node numbers, counter-clockwise about the outward (tube) or +Z (panel) normal.
    pub nodes: [usize; 4],
    /// Wall thickness, in m.
    pub thickness: f64,
}

/// A generated spring to ground.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct PartSpring {
    /// How messages name it (the JSON path of its source).
    pub label: String,
    /// Local node number.
    pub node: usize,
    /// Stiffness per DOF `[ux, uy, uz, rx, ry, rz]`, in N/m and N·m/rad.
    pub stiffness: [f64; 6],
}

/// A generated concentrated mass.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct PartMass {
    /// Local node number.
    pub node: usize,
    /// Mass, in kg.
    pub mass: f64,
    /// Inertia tensor about the node in global axes, in kg·m².
    pub inertia: [[f64; 3]; 3],
}

/// A generated rigid link: `members` move rigidly with `reference`.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct PartLink {
    /// Link name (for locations and messages).
    pub name: String,
    /// Local node number of the reference.
    pub reference: usize,
    /// Local node numbers of the members.
    pub members: Vec<usize>,
}

/// A generated tube: its part and its node layout.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct TubePart {
    /// Points, elements, conditions.
    pub part: Part,
    /// Local node numbers of each axial station (one per station for beams, `around` for shells).
    pub rings: Vec<Vec<usize>>,
    /// Axial fraction of each station.
    pub fractions: Vec<f64>,
    /// How it is meshed.
    pub fidelity: Fidelity,
    /// Start of the axis, in m.
    pub start: [f64; 3],
    /// Unit axis.
    pub axis: [f64; 3],
    /// Unit reference direction (angle 0).
    pub reference: [f64; 3],
    /// Local node of the end fitting at the start and at the end, if any (the centre on the axis).
    pub fittings: [Option<usize>; 2],
}

/// A generated panel: its part and its grid.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct PanelPart {
    /// Points (row by row, (nx + 1)(ny + 1) of them), elements, conditions.
    pub part: Part,
    /// Elements along X and Y.
    pub divisions: [usize; 2],
    /// Panel coordinates of the grid lines: u of each column, v of each row, in m.
    pub grid: [Vec<f64>; 2],
    /// Corner (0, 0), in m.
    pub origin: [f64; 3],
    /// Stiffeners, in the order of the model.
    pub stiffeners: Vec<PartStiffener>,
}

/// A generated stiffener: local nodes in order from its `from` to its `to`; each consecutive pair
/// is one beam element.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct PartStiffener {
    /// Local node numbers (grid nodes, or the offset nodes above them).
    pub nodes: Vec<usize>,
}

fn invalid(at: String, message: String) -> ModelError {
    ModelError::Invalid { at, message }
}

fn positive(at: &str, field: &str, value: f64, unit: &str) -> Result<(), ModelError> {
    if value.is_finite() && value > 0.0 {
        Ok(())
    } else {
        Err(invalid(
            format!("{at}.{field}"),
            format!("{value} is not allowed; it must be a positive finite number, in {unit}"),
        ))
    }
}

fn non_negative(at: &str, field: &str, value: f64, unit: &str) -> Result<(), ModelError> {
    if value.is_finite() && value >= 0.0 {
        Ok(())
    } else {
        Err(invalid(
            format!("{at}.{field}"),
            format!("{value} is not allowed; it must be zero or a positive finite number, in {unit}"),
        ))
    }
}

fn finite_point(at: &str, field: &str, p: [f64; 3]) -> Result<(), ModelError> {
    if p.iter().all(|v| v.is_finite()) {
        Ok(())
    } else {
        Err(invalid(format!("{at}.{field}"), format!("coordinates {p:?} are not finite")))
    }
}

fn fraction(at: &str, field: &str, value: f64) -> Result<(), ModelError> {
    if (0.0..=1.0).contains(&value) {
        Ok(())
    } else {
        Err(invalid(
            format!("{at}.{field}"),
            format!("{value} is not a fraction of the length; give a number from 0 to 1"),
        ))
    }
}

/// Checks a wall: positive, and thinner than the outer radius.
fn wall(at: &str, outer_diameter: f64, wall_thickness: f64) -> Result<(), ModelError> {
    positive(at, "outer_diameter", outer_diameter, "m")?;
    positive(at, "wall_thickness", wall_thickness, "m")?;
    if wall_thickness >= outer_diameter / 2.0 {
        return Err(invalid(
            format!("{at}.wall_thickness"),
            format!(
                "{wall_thickness} m is not less than the outer radius {} m; give a wall thinner than half the outer \
                 diameter (a solid bar is a line with a circle section)",
                outer_diameter / 2.0
            ),
        ));
    }
    Ok(())
}

/// Checks per-DOF stiffnesses: each zero or positive and finite, at least one positive.
pub(crate) fn stiffness(at: &str, k: &DofValues) -> Result<[f64; 6], ModelError> {
    let names = ["ux", "uy", "uz", "rx", "ry", "rz"];
    let mut out = [0.0; 6];
    for (d, v) in k.as_array().into_iter().enumerate() {
        if let Some(v) = v {
            if !(v.is_finite() && v >= 0.0) {
                return Err(invalid(
                    format!("{at}.{}", names[d]),
                    format!("stiffness {v} is not allowed; it must be zero or a positive finite number"),
                ));
            }
            out[d] = v;
        }
    }
    if out.iter().all(|&v| v == 0.0) {
        return Err(invalid(at.to_string(), "give at least one positive stiffness (ux, uy, uz, rx, ry or rz)".into()));
    }
    Ok(out)
}

fn cross(a: [f64; 3], b: [f64; 3]) -> [f64; 3] {
    [a[1] * b[2] - a[2] * b[1], a[2] * b[0] - a[0] * b[2], a[0] * b[1] - a[1] * b[0]]
}

fn dot(a: [f64; 3], b: [f64; 3]) -> f64 {
    a[0] * b[0] + a[1] * b[1] + a[2] * b[2]
}

fn unit(v: [f64; 3]) -> [f64; 3] {
    let n = dot(v, v).sqrt();
    v.map(|x| x / n)
}

/// The reference direction of angle 0 about a unit axis: global Y made perpendicular to the axis,
/// or global Z when the axis is parallel to Y.
pub(crate) fn reference_direction(axis: [f64; 3]) -> [f64; 3] {
    let project = |g: [f64; 3]| {
        let c = dot(g, axis);
        [g[0] - c * axis[0], g[1] - c * axis[1], g[2] - c * axis[2]]
    };
    let y = project([0.0, 1.0, 0.0]);
    if dot(y, y).sqrt() > 1e-6 { unit(y) } else { unit(project([0.0, 0.0, 1.0])) }
}

/// One segment of a tube, resolved.
struct Segment {
    from: f64,
    to: f64,
    outer_diameter: f64,
    wall_thickness: f64,
}

impl Segment {
    fn mid_radius(&self) -> f64 {
        (self.outer_diameter - self.wall_thickness) / 2.0
    }
}

/// Checks the segments of a tube (fractions increasing, the last ending at 1, walls valid).
fn segments(at: &str, t: &Tube) -> Result<Vec<Segment>, ModelError> {
    if t.segments.is_empty() {
        return Ok(vec![Segment {
            from: 0.0,
            to: 1.0,
            outer_diameter: t.outer_diameter,
            wall_thickness: t.wall_thickness,
        }]);
    }
    let mut out: Vec<Segment> = Vec::with_capacity(t.segments.len());
    for (i, s) in t.segments.iter().enumerate() {
        let sat = format!("{at}.segments[{i}]");
        let from = out.last().map_or(0.0, |p| p.to);
        if !(s.to.is_finite() && s.to > from && s.to <= 1.0 + 1e-12) {
            return Err(invalid(
                format!("{sat}.to"),
                format!(
                    "{} does not fit: segment ends must increase from 0 to 1 in order (this one starts at {from}); \
                     give a fraction above {from} and at most 1",
                    s.to
                ),
            ));
        }
        let d = s.outer_diameter.unwrap_or(t.outer_diameter);
        let w = s.wall_thickness.unwrap_or(t.wall_thickness);
        wall(&sat, d, w)?;
        out.push(Segment { from, to: s.to.min(1.0), outer_diameter: d, wall_thickness: w });
    }
    let last = out.last().map_or(1.0, |s| s.to);
    if (last - 1.0).abs() > 1e-9 {
        return Err(invalid(
            format!("{at}.segments"),
            format!(
                "the last segment ends at {last}; segments must cover the whole length, so the last \"to\" must be 1"
            ),
        ));
    }
    if let Some(s) = out.last_mut() {
        s.to = 1.0;
    }
    Ok(out)
}

/// Meshes a tube. `at` names it in messages, e.g. `tubes[0] ("shaft")`.
pub(crate) fn tube_part(at: &str, t: &Tube, max_nodes: usize) -> Result<TubePart, ModelError> {
    positive(at, "length", t.length, "m")?;
    wall(at, t.outer_diameter, t.wall_thickness)?;
    let start = t.start.unwrap_or([0.0; 3]);
    finite_point(at, "start", start)?;
    let axis = t.axis.unwrap_or([1.0, 0.0, 0.0]);
    let n = dot(axis, axis).sqrt();
    if !(n.is_finite() && n > 0.0) {
        return Err(invalid(format!("{at}.axis"), format!("{axis:?} is not a non-zero finite vector")));
    }
    let axis = axis.map(|x| x / n);
    let fidelity = t.fidelity.unwrap_or(Fidelity::Beam);
    let segs = segments(at, t)?;
    let shell = fidelity == Fidelity::Shell;
    if !shell && t.around.is_some() {
        return Err(invalid(
            format!("{at}.around"),
            "applies only to \"fidelity\": \"shell\"; remove it or mesh the wall as shells".into(),
        ));
    }
    if shell && t.shear_deformation.is_some() {
        return Err(invalid(
            format!("{at}.shear_deformation"),
            "applies only to \"fidelity\": \"beam\" (shells always include transverse shear); remove it".into(),
        ));
    }
    if let Some(h) = t.element_size {
        positive(at, "element_size", h, "m")?;
        if t.along.is_some() && (!shell || t.around.is_some()) {
            return Err(invalid(
                format!("{at}.element_size"),
                "is not used when the element counts (along, and around for shells) are all given; remove one".into(),
            ));
        }
    }
    let circumference = std::f64::consts::PI * (t.outer_diameter - t.wall_thickness);
    let h =
        t.element_size.unwrap_or(if shell { circumference / DEFAULT_AROUND } else { t.length / DEFAULT_ALONG_BEAM });
    let along = match t.along {
        Some(0) => return Err(invalid(format!("{at}.along"), "0 elements along; give at least 1".into())),
        Some(k) => k,
        None => ((t.length / h - 1e-9).ceil() as usize).max(1),
    };
    let mut part = Part::default();
    let around = if shell {
        match t.around {
            Some(k) if k < 3 => {
                return Err(invalid(
                    format!("{at}.around"),
                    format!("{k} elements around; give at least 3 (16 or more for accuracy)"),
                ));
            }
            Some(k) => {
                if k < MIN_AROUND {
                    part.warnings.push(format!(
                        "{at}: {k} elements around is coarse; flat facets need at least {MIN_AROUND} for the lowest wall modes"
                    ));
                }
                k
            }
            None => ((circumference / h - 1e-9).ceil() as usize).max(MIN_AROUND),
        }
    } else {
        1
    };
    let stations = along.saturating_add(segs.len());
    if stations.saturating_mul(around) > max_nodes {
        return Err(invalid(
            at.to_string(),
            format!(
                "would make about {} nodes ({along} elements along, {around} around), more than the {max_nodes} left \
                 within the model's node limit; \
                 give a larger element_size (in m) or fewer elements",
                stations.saturating_mul(around)
            ),
        ));
    }
    // Stations: each segment gets its share of `along` (at least one element), so steps fall on
    // stations.
    let counts: Vec<usize> = if segs.len() == 1 {
        vec![along]
    } else {
        segs.iter().map(|s| ((along as f64 * (s.to - s.from)).round() as usize).max(1)).collect()
    };
    let mut fractions = Vec::new();
    let mut station_radius = Vec::new();
    let mut row_segment = Vec::new();
    for (i, (s, &c)) in segs.iter().zip(&counts).enumerate() {
        for k in 0..c {
            fractions.push(s.from + (s.to - s.from) * k as f64 / c as f64);
            let r = if k == 0 && i > 0 { 0.5 * (segs[i - 1].mid_radius() + s.mid_radius()) } else { s.mid_radius() };
            station_radius.push(r);
            row_segment.push(i);
        }
    }
    fractions.push(1.0);
    station_radius.push(segs.last().map_or(0.0, Segment::mid_radius));
    let reference = reference_direction(axis);
    let normal2 = cross(axis, reference);
    let mut rings = Vec::with_capacity(fractions.len());
    for (j, &f) in fractions.iter().enumerate() {
        let c =
            [start[0] + f * t.length * axis[0], start[1] + f * t.length * axis[1], start[2] + f * t.length * axis[2]];
        let mut ring = Vec::with_capacity(around);
        if shell {
            let r = station_radius[j];
            for k in 0..around {
                let th = 2.0 * std::f64::consts::PI * k as f64 / around as f64;
                let (s, co) = th.sin_cos();
                ring.push(part.points.len());
                part.points.push([
                    c[0] + r * (co * reference[0] + s * normal2[0]),
                    c[1] + r * (co * reference[1] + s * normal2[1]),
                    c[2] + r * (co * reference[2] + s * normal2[2]),
                ]);
            }
        } else {
            ring.push(part.points.len());
            part.points.push(c);
        }
        rings.push(ring);
    }
    let shear = t.shear_deformation.unwrap_or(true);
    for (j, &seg) in row_segment.iter().enumerate() {
        let s = &segs[seg];
        if shell {
            for k in 0..around {
                let k1 = (k + 1) % around;
                part.shells.push(PartShell {
                    nodes: [rings[j][k], rings[j][k1], rings[j + 1][k1], rings[j + 1][k]],
                    thickness: s.wall_thickness,
                });
            }
        } else {
            part.beams.push(PartBeam {
                nodes: [rings[j][0], rings[j + 1][0]],
                section: CircularTubeSection {
                    outer_diameter: s.outer_diameter,
                    wall_thickness: s.wall_thickness,
                    shear_deformation: shear,
                },
                segment: seg,
            });
        }
    }
    let fittings = t.fittings.clone().unwrap_or_default();
    let mut fitting_nodes = [None; 2];
    for (side, (which, fitting)) in [("start", &fittings.start), ("end", &fittings.end)].into_iter().enumerate() {
        let Some(f) = fitting else { continue };
        let fat = format!("{at}.fittings.{which}");
        non_negative(&fat, "mass", f.mass, "kg")?;
        let ia = f.axial_inertia.unwrap_or(0.0);
        let it = f.transverse_inertia.unwrap_or(0.0);
        non_negative(&fat, "axial_inertia", ia, "kg·m²")?;
        non_negative(&fat, "transverse_inertia", it, "kg·m²")?;
        let own = if side == 0 { 0 } else { rings.len() - 1 };
        let centre = if shell {
            let frac = fractions[own];
            let c = [0, 1, 2].map(|k| start[k] + frac * t.length * axis[k]);
            let node = part.points.len();
            part.points.push(c);
            part.links.push(PartLink {
                name: format!("{} {which} fitting", t.name),
                reference: node,
                members: rings[own].clone(),
            });
            node
        } else {
            rings[own][0]
        };
        // I = I_t (1 − a aᵀ) + I_a a aᵀ about the centre, in global axes.
        let inertia = std::array::from_fn(|r| {
            std::array::from_fn(|c| {
                let aa = axis[r] * axis[c];
                it * (if r == c { 1.0 } else { 0.0 } - aa) + ia * aa
            })
        });
        if f.mass > 0.0 || ia > 0.0 || it > 0.0 {
            part.masses.push(PartMass { node: centre, mass: f.mass, inertia });
        }
        fitting_nodes[side] = Some(centre);
    }
    let ends = t.ends.clone().unwrap_or_default();
    for (side, (which, end)) in [("start", &ends.start), ("end", &ends.end)].into_iter().enumerate() {
        let own = if side == 0 { 0 } else { rings.len() - 1 };
        let eat = format!("{at}.ends.{which}");
        // With a fitting, an end condition at this end acts on the fitting's centre.
        let held: Vec<usize> = fitting_nodes[side].map_or_else(|| rings[own].clone(), |c| vec![c]);
        match end {
            None | Some(TubeEnd::Preset(EndPreset::Free)) => {}
            Some(TubeEnd::Preset(p)) => {
                let dofs = if *p == EndPreset::Clamped { [true; 6] } else { [true, true, true, false, false, false] };
                part.fixed.extend(held.iter().map(|&n| (n, dofs)));
            }
            Some(TubeEnd::Bearing(Bearing { bearing, at: place })) => {
                let k = stiffness(&format!("{eat}.bearing"), bearing)?;
                let station = match place {
                    Some(f) => {
                        fraction(&eat, "at", *f)?;
                        let j = nearest(&fractions, *f);
                        if (fractions[j] - f).abs() > 1e-6 {
                            part.warnings.push(format!(
                                "{eat}: the bearing at {f} is between stations; it acts at the station at {:.4} of the length",
                                fractions[j]
                            ));
                        }
                        j
                    }
                    None => own,
                };
                let nodes = if station == own { held.clone() } else { rings[station].clone() };
                let share = 1.0 / nodes.len() as f64;
                for &n in &nodes {
                    part.springs.push(PartSpring { label: eat.clone(), node: n, stiffness: k.map(|v| v * share) });
                }
            }
        }
    }
    Ok(TubePart { part, rings, fractions, fidelity, start, axis, reference, fittings: fitting_nodes })
}

/// Index of the value in `fractions` nearest `f` (the first of equals).
pub(crate) fn nearest(fractions: &[f64], f: f64) -> usize {
    let mut best = 0;
    for (j, g) in fractions.iter().enumerate() {
        if (g - f).abs() < (fractions[best] - f).abs() {
            best = j;
        }
    }
    best
}

/// The error of a panel mesh beyond the node limit.
fn too_many_panel_nodes(at: &str, n_points: usize, [nx, ny]: [usize; 2], max_nodes: usize) -> ModelError {
    invalid(
        at.to_string(),
        format!(
            "would make {n_points} nodes ({nx} x {ny} elements), more than the {max_nodes} left within the \
             model's node limit; give a larger element_size (in m) or fewer divisions"
        ),
    )
}

/// Meshes a panel. `at` names it in messages, e.g. `panels[0] ("lid")`.
pub(crate) fn panel_part(at: &str, p: &Panel, max_nodes: usize) -> Result<PanelPart, ModelError> {
    let [a, b] = p.size;
    positive(at, "size[0]", a, "m")?;
    positive(at, "size[1]", b, "m")?;
    positive(at, "thickness", p.thickness, "m")?;
    let origin = p.origin.unwrap_or([0.0; 3]);
    finite_point(at, "origin", origin)?;
    let [nx, ny] = match (p.divisions, p.element_size) {
        (Some(_), Some(_)) => {
            return Err(invalid(
                format!("{at}.element_size"),
                "give divisions or element_size, not both (divisions fix the mesh)".into(),
            ));
        }
        (Some([nx, ny]), None) => {
            if nx == 0 || ny == 0 {
                return Err(invalid(
                    format!("{at}.divisions"),
                    format!("[{nx}, {ny}] has zero divisions; give at least 1 each way"),
                ));
            }
            [nx, ny]
        }
        (None, size) => {
            let h = match size {
                Some(h) => {
                    positive(at, "element_size", h, "m")?;
                    h
                }
                None => a.min(b) / DEFAULT_PANEL_DIVISIONS,
            };
            [((a / h - 1e-9).ceil() as usize).max(1), ((b / h - 1e-9).ceil() as usize).max(1)]
        }
    };
    // The grid has at least (nx + 1)(ny + 1) points: refuse an oversized one before making it.
    let at_least = nx.saturating_add(1).saturating_mul(ny.saturating_add(1));
    if at_least > max_nodes {
        return Err(too_many_panel_nodes(at, at_least, [nx, ny], max_nodes));
    }
    let tol = 1e-9 * (a + b);
    let lines: Vec<StiffenerLine> = p
        .stiffeners
        .iter()
        .enumerate()
        .map(|(j, st)| stiffener_line(&format!("{at}.stiffeners[{j}]"), st, [a, b], tol))
        .collect::<Result<_, _>>()?;
    // Grid lines on every stiffener and at both its ends.
    let (mut need_u, mut need_v) = (Vec::new(), Vec::new());
    for l in &lines {
        let (across, along) = if l.along_u { (&mut need_v, &mut need_u) } else { (&mut need_u, &mut need_v) };
        across.push(l.across);
        along.extend(l.ends);
    }
    let us = grid_lines(a, nx, &need_u, tol);
    let vs = grid_lines(b, ny, &need_v, tol);
    let [nx, ny] = [us.len() - 1, vs.len() - 1];
    let n_offset: usize = lines.iter().filter(|l| l.offset != 0.0).map(|l| l.extent(&us, &vs)).sum();
    let n_points = nx.saturating_add(1).saturating_mul(ny.saturating_add(1)).saturating_add(n_offset);
    if n_points > max_nodes {
        return Err(too_many_panel_nodes(at, n_points, [nx, ny], max_nodes));
    }
    let mut part = Part::default();
    let id = |i: usize, j: usize| j * (nx + 1) + i;
    for &v in &vs {
        for &u in &us {
            part.points.push([origin[0] + u, origin[1] + v, origin[2]]);
        }
    }
    for j in 0..ny {
        for i in 0..nx {
            part.shells.push(PartShell {
                nodes: [id(i, j), id(i + 1, j), id(i + 1, j + 1), id(i, j + 1)],
                thickness: p.thickness,
            });
        }
    }
    let edges = p.edges.clone().unwrap_or_default();
    let mut fixed = vec![[false; 6]; part.points.len()];
    // Each edge: its name, its nodes, the length each node carries (half of each element beside it),
    // and the rotation that w = 0 along the edge forbids (about the in-plane axis normal to the
    // edge: rx for x0/x1, ry for y0/y1).
    let share = |c: &[f64], k: usize| 0.5 * (c[(k + 1).min(c.len() - 1)] - c[k.saturating_sub(1)]);
    type EdgeNodes<'e> = (&'e str, &'e Option<EdgeSupport>, Vec<(usize, f64)>, usize);
    let list: [EdgeNodes<'_>; 4] = [
        ("x0", &edges.x0, (0..=ny).map(|j| (id(0, j), share(&vs, j))).collect(), 3),
        ("x1", &edges.x1, (0..=ny).map(|j| (id(nx, j), share(&vs, j))).collect(), 3),
        ("y0", &edges.y0, (0..=nx).map(|i| (id(i, 0), share(&us, i))).collect(), 4),
        ("y1", &edges.y1, (0..=nx).map(|i| (id(i, ny), share(&us, i))).collect(), 4),
    ];
    for (name, support, nodes, rotation) in list {
        let eat = format!("{at}.edges.{name}");
        match support {
            None | Some(EdgeSupport::Preset(EdgePreset::Free)) => {}
            Some(EdgeSupport::Preset(EdgePreset::SimplySupported)) => {
                for &(n, _) in &nodes {
                    for d in [0, 1, 2, 5, rotation] {
                        fixed[n][d] = true;
                    }
                }
            }
            Some(EdgeSupport::Preset(EdgePreset::Clamped)) => {
                for &(n, _) in &nodes {
                    fixed[n] = [true; 6];
                }
            }
            Some(EdgeSupport::Elastic(e)) => {
                let k = stiffness(&format!("{eat}.elastic"), &e.elastic)?;
                for &(n, len) in &nodes {
                    part.springs.push(PartSpring { label: eat.clone(), node: n, stiffness: k.map(|v| v * len) });
                }
            }
        }
    }
    part.fixed = fixed.into_iter().enumerate().filter(|(_, f)| f.iter().any(|&x| x)).collect();
    for (m, mount) in p.mounts.iter().enumerate() {
        let mat = format!("{at}.mounts[{m}]");
        let [u, v] = mount.at;
        if !(u.is_finite() && v.is_finite() && (-tol..=a + tol).contains(&u) && (-tol..=b + tol).contains(&v)) {
            return Err(invalid(
                format!("{mat}.at"),
                format!(
                    "[{u}, {v}] lies outside the panel; give panel coordinates with 0 <= u <= {a} and 0 <= v <= {b}, in m"
                ),
            ));
        }
        let k = stiffness(&format!("{mat}.stiffness"), &mount.stiffness)?;
        let (i, j) = (nearest(&us, u), nearest(&vs, v));
        let (gu, gv) = (us[i], vs[j]);
        if ((gu - u).powi(2) + (gv - v).powi(2)).sqrt() > 1e-6 * (a + b) {
            part.warnings.push(format!(
                "{mat}: [{u}, {v}] is between nodes; the mount acts at the nearest node, at [{gu:.4}, {gv:.4}]"
            ));
        }
        part.springs.push(PartSpring { label: mat, node: id(i, j), stiffness: k });
    }
    // Stiffeners: the grid nodes on each line, or nodes `offset` above them (one per grid node and
    // offset, shared by stiffeners that meet there), each grid node the reference of one rigid link.
    let mut lifted: BTreeMap<(usize, u64), usize> = BTreeMap::new();
    let mut members: BTreeMap<usize, Vec<usize>> = BTreeMap::new();
    let mut stiffeners = Vec::with_capacity(lines.len());
    for l in &lines {
        let (along, across) = if l.along_u { (&us, &vs) } else { (&vs, &us) };
        let (k0, k1, c) = (nearest(along, l.ends[0]), nearest(along, l.ends[1]), nearest(across, l.across));
        let steps: Vec<usize> = if k0 <= k1 { (k0..=k1).collect() } else { (k1..=k0).rev().collect() };
        let mut nodes = Vec::with_capacity(steps.len());
        for k in steps {
            let g = if l.along_u { id(k, c) } else { id(c, k) };
            if l.offset == 0.0 {
                nodes.push(g);
                continue;
            }
            let n = *lifted.entry((g, l.offset.to_bits())).or_insert_with(|| {
                let q = part.points[g];
                part.points.push([q[0], q[1], q[2] + l.offset]);
                members.entry(g).or_default().push(part.points.len() - 1);
                part.points.len() - 1
            });
            nodes.push(n);
        }
        stiffeners.push(PartStiffener { nodes });
    }
    for (g, m) in members {
        let (i, j) = (g % (nx + 1), g / (nx + 1));
        part.links.push(PartLink {
            name: format!("{} stiffener offset at grid ({i}, {j})", p.name),
            reference: g,
            members: m,
        });
    }
    Ok(PanelPart { part, divisions: [nx, ny], grid: [us, vs], origin, stiffeners })
}

/// A stiffener's line, checked: along X (`along_u`) or along Y, at panel coordinate `across` of
/// the other axis, from `ends[0]` to `ends[1]` of its own axis (in m), lifted by `offset` (in m).
struct StiffenerLine {
    along_u: bool,
    across: f64,
    ends: [f64; 2],
    offset: f64,
}

impl StiffenerLine {
    /// Number of grid nodes on the line.
    fn extent(&self, us: &[f64], vs: &[f64]) -> usize {
        let along = if self.along_u { us } else { vs };
        nearest(along, self.ends[0]).abs_diff(nearest(along, self.ends[1])) + 1
    }
}

/// Checks a stiffener of a panel `[a, b]`: both ends on the panel, a non-zero length, parallel
/// to an edge, a finite offset.
fn stiffener_line(at: &str, s: &Stiffener, [a, b]: [f64; 2], tol: f64) -> Result<StiffenerLine, ModelError> {
    for (field, [u, v]) in [("from", s.from), ("to", s.to)] {
        if !(u.is_finite() && v.is_finite() && (-tol..=a + tol).contains(&u) && (-tol..=b + tol).contains(&v)) {
            return Err(invalid(
                format!("{at}.{field}"),
                format!(
                    "[{u}, {v}] lies outside the panel; give panel coordinates with 0 <= u <= {a} and 0 <= v <= {b}, in m"
                ),
            ));
        }
    }
    let [f, t] = [s.from, s.to].map(|[u, v]| [u.clamp(0.0, a), v.clamp(0.0, b)]);
    let (du, dv) = ((t[0] - f[0]).abs(), (t[1] - f[1]).abs());
    if du <= tol && dv <= tol {
        return Err(invalid(
            at.to_string(),
            format!("from and to are the same point {:?} (zero length); give two different panel points", s.from),
        ));
    }
    if du > tol && dv > tol {
        return Err(invalid(
            at.to_string(),
            format!(
                "runs diagonally from {:?} to {:?}; a stiffener must be parallel to an edge: give from and to the same \
                 v (along X) or the same u (along Y); a diagonal rib needs explicit beams on nodes of its own",
                s.from, s.to
            ),
        ));
    }
    let offset = s.offset.unwrap_or(0.0);
    if !offset.is_finite() {
        return Err(invalid(format!("{at}.offset"), format!("{offset} is not a finite distance, in m")));
    }
    Ok(if dv <= tol {
        StiffenerLine { along_u: true, across: f[1], ends: [f[0], t[0]], offset }
    } else {
        StiffenerLine { along_u: false, across: f[0], ends: [f[1], t[1]], offset }
    })
}

/// Grid coordinates along a side of length `len` (in m) meshed with `n` equal elements and a line at
/// every value of `required`: the uniform grid `len·i/n` when every required value lies on it
/// (within `tol`), otherwise the side cut at the required values and each piece divided into equal
/// elements no longer than `len / n`.
fn grid_lines(len: f64, n: usize, required: &[f64], tol: f64) -> Vec<f64> {
    let uniform: Vec<f64> = (0..=n).map(|i| len * i as f64 / n as f64).collect();
    if required.iter().all(|&r| uniform.iter().any(|g| (g - r).abs() <= tol)) {
        return uniform;
    }
    let mut breaks: Vec<f64> = std::iter::once(0.0).chain(required.iter().copied()).chain([len]).collect();
    breaks.sort_by(f64::total_cmp);
    breaks.dedup_by(|x, y| (*x - *y).abs() <= tol);
    if let Some(last) = breaks.last_mut() {
        *last = len;
    }
    let h = len / n as f64;
    let mut out = vec![0.0];
    for w in breaks.windows(2) {
        let c = (((w[1] - w[0]) / h - 1e-9).ceil() as usize).max(1);
        out.extend((1..=c).map(|k| w[0] + (w[1] - w[0]) * k as f64 / c as f64));
    }
    if let Some(last) = out.last_mut() {
        *last = len;
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The default node limit of a model.
    const LIMIT: usize = crate::Limits::DEFAULT_MAX_NODES;
    use crate::model::{Mount, PanelEdges, TubeEnds, TubeSegment};

    fn tube() -> Tube {
        Tube {
            name: "t".into(),
            length: 1.0,
            outer_diameter: 0.1,
            wall_thickness: 0.002,
            material: "m".into(),
            start: None,
            axis: None,
            fidelity: Some(Fidelity::Shell),
            around: Some(16),
            along: Some(10),
            element_size: None,
            shear_deformation: None,
            segments: Vec::new(),
            ends: None,
            fittings: None,
        }
    }

    #[test]
    fn a_fitting_is_a_centre_node_linked_to_the_end_ring_and_takes_the_end_condition() {
        let mut t = tube();
        t.axis = Some([0.0, 0.0, 2.0]);
        t.fittings = Some(crate::model::TubeFittings {
            start: Some(crate::model::TubeFitting {
                mass: 0.9,
                axial_inertia: Some(0.01),
                transverse_inertia: Some(0.02),
            }),
            end: None,
        });
        t.ends = Some(TubeEnds {
            start: Some(TubeEnd::Preset(EndPreset::Pinned)),
            end: Some(TubeEnd::Preset(EndPreset::Pinned)),
        });
        let tp = tube_part("tubes[0]", &t, LIMIT).unwrap_or_else(|e| panic!("{e}"));
        let centre = tp.fittings[0].unwrap_or_else(|| panic!("no fitting node"));
        assert!(tp.fittings[1].is_none());
        assert_eq!(tp.part.points[centre], [0.0, 0.0, 0.0]);
        assert_eq!(tp.part.links.len(), 1);
        assert_eq!(tp.part.links[0].reference, centre);
        assert_eq!(tp.part.links[0].members, tp.rings[0]);
        assert_eq!(tp.part.links[0].name, "t start fitting");
        // The pin holds the centre only at the start, every ring node at the end.
        let held: Vec<usize> = tp.part.fixed.iter().map(|&(n, _)| n).collect();
        assert_eq!(held.iter().filter(|&&n| n == centre).count(), 1);
        assert!(tp.rings[0].iter().all(|n| !held.contains(n)));
        assert!(tp.rings[tp.rings.len() - 1].iter().all(|n| held.contains(n)));
        // Axis along Z: J = diag(I_t, I_t, I_a).
        let m = &tp.part.masses[0];
        assert_eq!((m.node, m.mass), (centre, 0.9));
        assert_eq!(m.inertia, [[0.02, 0.0, 0.0], [0.0, 0.02, 0.0], [0.0, 0.0, 0.01]]);
        t.fittings = Some(crate::model::TubeFittings {
            start: Some(crate::model::TubeFitting { mass: -1.0, axial_inertia: None, transverse_inertia: None }),
            end: None,
        });
        let e = tube_part("tubes[0]", &t, LIMIT).err().map(|e| e.to_string()).unwrap_or_default();
        assert!(e.contains("tubes[0].fittings.start.mass"), "{e}");
    }

    #[test]
    fn reference_direction_is_y_made_perpendicular_or_z_for_an_axis_along_y() {
        assert_eq!(reference_direction([1.0, 0.0, 0.0]), [0.0, 1.0, 0.0]);
        assert_eq!(reference_direction([0.0, 1.0, 0.0]), [0.0, 0.0, 1.0]);
        assert_eq!(reference_direction([0.0, 0.0, 1.0]), [0.0, 1.0, 0.0]);
        let r = reference_direction(unit([1.0, 1.0, 0.0]));
        assert!(dot(r, unit([1.0, 1.0, 0.0])).abs() < 1e-15 && (dot(r, r) - 1.0).abs() < 1e-15);
    }

    #[test]
    fn shell_tube_has_rings_on_the_mid_surface_and_outward_normals() {
        let Ok(tp) = tube_part("tubes[0] (\"t\")", &tube(), LIMIT) else { panic!("valid tube") };
        assert_eq!(tp.rings.len(), 11);
        assert_eq!(tp.part.points.len(), 11 * 16);
        assert_eq!(tp.part.shells.len(), 10 * 16);
        let r = (0.1 - 0.002) / 2.0;
        for p in &tp.part.points {
            assert!(((p[1] * p[1] + p[2] * p[2]).sqrt() - r).abs() < 1e-15, "mid-surface radius");
        }
        for e in &tp.part.shells {
            let x: Vec<[f64; 3]> = e.nodes.iter().map(|&n| tp.part.points[n]).collect();
            let d1 = [x[2][0] - x[0][0], x[2][1] - x[0][1], x[2][2] - x[0][2]];
            let d2 = [x[3][0] - x[1][0], x[3][1] - x[1][1], x[3][2] - x[1][2]];
            let n = cross(d1, d2);
            let c = [0.0, (x[0][1] + x[1][1]) / 2.0, (x[0][2] + x[1][2]) / 2.0];
            assert!(dot(n, c) > 0.0, "normal points away from the axis");
        }
    }

    #[test]
    fn stepped_tube_puts_every_step_on_a_station() {
        let mut t = tube();
        t.fidelity = Some(Fidelity::Beam);
        t.around = None;
        t.along = Some(20);
        t.segments = vec![
            TubeSegment { to: 0.15, outer_diameter: None, wall_thickness: Some(0.006) },
            TubeSegment { to: 0.85, outer_diameter: None, wall_thickness: None },
            TubeSegment { to: 1.0, outer_diameter: Some(0.12), wall_thickness: Some(0.006) },
        ];
        let Ok(tp) = tube_part("tubes[0] (\"t\")", &t, LIMIT) else { panic!("valid tube") };
        for f in [0.15, 0.85] {
            assert!(tp.fractions.iter().any(|g| (g - f).abs() < 1e-12), "a station at {f}: {:?}", tp.fractions);
        }
        // 20 elements shared as 0.15 : 0.7 : 0.15 → 3 + 14 + 3.
        assert_eq!(tp.part.beams.len(), 20);
        let walls: Vec<f64> = tp.part.beams.iter().map(|b| b.section.wall_thickness).collect();
        assert_eq!(&walls[..3], &[0.006; 3]);
        assert_eq!(&walls[3..17], &[0.002; 14]);
        assert_eq!(tp.part.beams[19].section.outer_diameter, 0.12);
    }

    #[test]
    fn bad_segments_are_errors_naming_the_field() {
        let mut t = tube();
        t.segments = vec![
            TubeSegment { to: 0.5, outer_diameter: None, wall_thickness: None },
            TubeSegment { to: 0.4, outer_diameter: None, wall_thickness: None },
        ];
        let e = tube_part("tubes[0] (\"t\")", &t, LIMIT).err().map(|e| e.to_string()).unwrap_or_default();
        assert!(e.contains("tubes[0] (\"t\").segments[1].to") && e.contains("increase"), "{e}");
        t.segments = vec![TubeSegment { to: 0.9, outer_diameter: None, wall_thickness: None }];
        let e = tube_part("tubes[0] (\"t\")", &t, LIMIT).err().map(|e| e.to_string()).unwrap_or_default();
        assert!(e.contains("tubes[0] (\"t\").segments") && e.contains("must be 1"), "{e}");
        t.segments = vec![TubeSegment { to: 1.0, outer_diameter: None, wall_thickness: Some(0.05) }];
        let e = tube_part("tubes[0] (\"t\")", &t, LIMIT).err().map(|e| e.to_string()).unwrap_or_default();
        assert!(e.contains("segments[0].wall_thickness") && e.contains("outer radius"), "{e}");
    }

    #[test]
    fn bearing_spreads_equally_over_the_ring() {
        let mut t = tube();
        let bearing = DofValues { uy: Some(1.6e6), uz: Some(3.2e6), ..DofValues::default() };
        t.ends = Some(TubeEnds {
            start: Some(TubeEnd::Preset(EndPreset::Pinned)),
            end: Some(TubeEnd::Bearing(Bearing { bearing, at: Some(0.8) })),
        });
        let Ok(tp) = tube_part("tubes[0] (\"t\")", &t, LIMIT) else { panic!("valid tube") };
        assert_eq!(tp.part.fixed.len(), 16, "every start-ring node pinned");
        assert!(tp.part.fixed.iter().all(|(n, f)| *n < 16 && *f == [true, true, true, false, false, false]));
        assert_eq!(tp.part.springs.len(), 16);
        let ring: Vec<usize> = tp.rings[8].clone();
        for s in &tp.part.springs {
            assert!(ring.contains(&s.node), "springs on the ring at 0.8");
            assert_eq!(s.stiffness, [0.0, 1e5, 2e5, 0.0, 0.0, 0.0]);
        }
    }

    #[test]
    fn an_element_size_in_the_wrong_unit_is_an_error_not_a_crash() {
        let mut t = tube();
        (t.around, t.along, t.element_size) = (None, None, Some(1e-6));
        let e = tube_part("tubes[0] (\"t\")", &t, LIMIT).err().map(|e| e.to_string()).unwrap_or_default();
        assert!(e.contains("tubes[0] (\"t\")") && e.contains("larger element_size"), "{e}");
    }

    #[test]
    fn panel_edges_and_mounts() {
        let p = Panel {
            name: "p".into(),
            size: [0.4, 0.2],
            thickness: 0.002,
            material: "m".into(),
            origin: Some([0.0, 0.0, 0.5]),
            divisions: Some([4, 2]),
            element_size: None,
            edges: Some(PanelEdges {
                x0: Some(EdgeSupport::Preset(EdgePreset::SimplySupported)),
                y1: Some(EdgeSupport::Elastic(crate::model::ElasticEdge {
                    elastic: DofValues { uz: Some(1000.0), ..DofValues::default() },
                })),
                ..PanelEdges::default()
            }),
            mounts: vec![Mount { at: [0.31, 0.1], stiffness: DofValues { uz: Some(5.0), ..DofValues::default() } }],
            stiffeners: Vec::new(),
        };
        let Ok(pp) = panel_part("panels[0] (\"p\")", &p, LIMIT) else { panic!("valid panel") };
        assert_eq!(pp.part.points.len(), 15);
        assert_eq!(pp.part.points[14], [0.4, 0.2, 0.5]);
        // x0: nodes 0, 5, 10 with ux, uy, uz, rx, rz fixed.
        assert_eq!(pp.part.fixed.len(), 3);
        for (n, f) in &pp.part.fixed {
            assert!([0, 5, 10].contains(n));
            assert_eq!(*f, [true, true, true, true, false, true]);
        }
        // y1: five nodes sharing 0.4 m: 0.05, 0.1, 0.1, 0.1, 0.05 m.
        let edge: Vec<f64> =
            pp.part.springs.iter().filter(|s| s.label.ends_with("y1")).map(|s| s.stiffness[2]).collect();
        let expected = [50.0, 100.0, 100.0, 100.0, 50.0];
        assert!(edge.iter().zip(expected).all(|(a, b)| (a - b).abs() < 1e-9), "{edge:?}");
        let mount = pp.part.springs.last().map(|s| s.node);
        assert_eq!(mount, Some(5 + 3), "the mount at u = 0.31 snaps to the grid point (3, 1)");
        assert!(pp.part.warnings.iter().any(|w| w.contains("between nodes")));
    }

    /// A panel whose size-to-element ratio is huge is refused before its grid lines are made (the
    /// edits fuzz target found an element_size of 1e-300 aborting on the allocation of its grid).
    #[test]
    fn a_huge_panel_grid_is_an_error_not_an_abort() {
        for (divisions, element_size) in [(None, Some(1e-300)), (Some([usize::MAX, 3]), None)] {
            let p = Panel {
                name: "p".into(),
                size: [0.4, 0.2],
                thickness: 0.002,
                material: "m".into(),
                origin: None,
                divisions,
                element_size,
                edges: None,
                mounts: Vec::new(),
                stiffeners: Vec::new(),
            };
            let e = panel_part("panels[0] (\"p\")", &p, LIMIT).err().map(|e| e.to_string()).unwrap_or_default();
            assert!(e.contains("panels[0] (\"p\")") && e.contains("node limit"), "{e}");
        }
    }
}
