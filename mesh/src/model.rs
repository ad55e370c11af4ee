//! The model file: plain serde data, exactly as written in JSON.
//!
//! Nothing here is checked beyond its JSON shape; [`crate::validate`] turns a [`Model`] into a checked,
//! resolved [`crate::Structure`]. Units are SI throughout (m, kg, s, N, Pa, rad).

use std::collections::BTreeMap;

use schemars::JsonSchema;
use serde::{Deserialize, Serialize};

/// Identifier of a node, as written in the model file.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash, Serialize, Deserialize, JsonSchema)]
#[serde(transparent)]
pub struct NodeId(pub u64);

/// Identifier of a beam element, as written in the model file.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash, Serialize, Deserialize, JsonSchema)]
#[serde(transparent)]
pub struct ElementId(pub u64);

impl std::fmt::Display for NodeId {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(f, "{}", self.0)
    }
}

impl std::fmt::Display for ElementId {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(f, "{}", self.0)
    }
}

/// A whole model: materials, sections, geometry, boundary conditions, absorbers and the study.
///
/// Every block is optional where nothing needs it: a lumped model of point masses and springs is valid.
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct Model {
    /// Free text shown in reports. Example models say here that their scenario is invented.
    #[serde(default)]
    pub title: String,
    /// Materials by name.
    #[serde(default, skip_serializing_if = "BTreeMap::is_empty")]
    pub materials: BTreeMap<String, Material>,
    /// Beam cross-sections by name.
    #[serde(default, skip_serializing_if = "BTreeMap::is_empty")]
    pub sections: BTreeMap<String, Section>,
    /// Explicit nodes.
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub nodes: Vec<Node>,
    /// Straight runs of beam elements from point A to point B (a shaft in one line of JSON).
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub lines: Vec<Line>,
    /// Explicit two-node beam elements.
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub beams: Vec<Beam>,
    /// Fixed degrees of freedom.
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub supports: Vec<Support>,
    /// Elastic springs to ground or between two nodes.
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub springs: Vec<Spring>,
    /// Concentrated masses and rotary inertias.
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub point_masses: Vec<PointMass>,
    /// Tuned absorbers attached to the structure (mass on a spring acting along one direction).
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub absorbers: Vec<Absorber>,
    /// Mass matrix kind for beam elements: `consistent` (default) or `lumped`.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub mass_matrix: Option<MassMatrix>,
    /// Number of zero-frequency (rigid-body or mechanism) modes the model is expected to have.
    ///
    /// Default: 0 when the model has any support or spring to ground, otherwise 6 for every
    /// connected part with rotational degrees of freedom (3 for a part of point masses only).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub rigid_body_modes: Option<usize>,
    /// What to compute: frequency band, excitation, response points, absorber design request.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub study: Option<Study>,
}

/// Mass matrix of beam elements.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize, JsonSchema)]
#[serde(rename_all = "snake_case")]
pub enum MassMatrix {
    /// Consistent mass with rotary inertia of the section.
    Consistent,
    /// Diagonal (lumped) mass by diagonal scaling of the consistent matrix.
    Lumped,
}

/// An isotropic linear-elastic material.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct Material {
    /// Young's modulus, in Pa.
    pub youngs_modulus: f64,
    /// Poisson's ratio, dimensionless, in (-1, 0.5).
    pub poisson_ratio: f64,
    /// Density, in kg/m³.
    pub density: f64,
    /// Shear modulus, in Pa. Default E / (2 (1 + ν)).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub shear_modulus: Option<f64>,
}

/// A beam cross-section. Local axes: x along the beam, y and z in the section (see
/// [`Beam::orientation`]). A dimension called `height` is measured along local y, `width` along local z.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize, JsonSchema)]
#[serde(rename_all = "snake_case", deny_unknown_fields)]
pub enum Section {
    /// Solid circle.
    Circle(CircleSection),
    /// Circular tube.
    CircularTube(CircularTubeSection),
    /// Solid rectangle.
    Rectangle(RectangleSection),
    /// Rectangular tube of uniform wall (closed thin-walled box).
    RectangularTube(RectangularTubeSection),
    /// Properties given directly.
    Properties(ExplicitSection),
}

/// Solid circular section.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct CircleSection {
    /// Diameter, in m.
    pub diameter: f64,
    /// Include transverse shear deformation (Timoshenko beam) with Cowper's shear coefficient.
    #[serde(default, skip_serializing_if = "std::ops::Not::not")]
    pub shear_deformation: bool,
}

/// Circular tube section.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct CircularTubeSection {
    /// Outer diameter, in m.
    pub outer_diameter: f64,
    /// Wall thickness, in m; less than half the outer diameter.
    pub wall_thickness: f64,
    /// Include transverse shear deformation (Timoshenko beam) with Cowper's shear coefficient.
    #[serde(default, skip_serializing_if = "std::ops::Not::not")]
    pub shear_deformation: bool,
}

/// Solid rectangular section.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct RectangleSection {
    /// Width along local z, in m.
    pub width: f64,
    /// Height along local y, in m.
    pub height: f64,
    /// Include transverse shear deformation (Timoshenko beam) with Cowper's shear coefficient.
    #[serde(default, skip_serializing_if = "std::ops::Not::not")]
    pub shear_deformation: bool,
}

/// Rectangular tube section (outer dimensions and a uniform wall).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct RectangularTubeSection {
    /// Outer width along local z, in m.
    pub width: f64,
    /// Outer height along local y, in m.
    pub height: f64,
    /// Wall thickness, in m; less than half the smaller outer dimension.
    pub wall_thickness: f64,
    /// Include transverse shear deformation (Timoshenko beam); shear area taken as the wall area
    /// parallel to the shear (common practice).
    #[serde(default, skip_serializing_if = "std::ops::Not::not")]
    pub shear_deformation: bool,
}

/// Section properties given directly.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct ExplicitSection {
    /// Area, in m².
    pub area: f64,
    /// Second moment of area about local y (bending in the local x-z plane), in m⁴.
    pub second_moment_y: f64,
    /// Second moment of area about local z (bending in the local x-y plane), in m⁴.
    pub second_moment_z: f64,
    /// Saint-Venant torsion constant, in m⁴.
    pub torsion_constant: f64,
    /// Polar moment of area used for torsional inertia, in m⁴. Default: the sum of the two second moments.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub polar_moment: Option<f64>,
    /// Effective shear area for shear along local y, in m². Giving it makes the beam a Timoshenko beam.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub shear_area_y: Option<f64>,
    /// Effective shear area for shear along local z, in m². Giving it makes the beam a Timoshenko beam.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub shear_area_z: Option<f64>,
}

/// A node.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct Node {
    /// Identifier, unique among nodes.
    pub id: NodeId,
    /// Coordinates, in m.
    pub xyz: [f64; 3],
}

/// A straight run of equal beam elements from `from` to `to`.
///
/// A line's node that coincides with an existing node (explicit, or of an earlier line) joins it, so
/// lines and nodes connect into frames.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct Line {
    /// Name, unique among lines; used by locations such as `{"line": "shaft", "at": 0.5}`.
    pub name: String,
    /// Start point, in m.
    pub from: [f64; 3],
    /// End point, in m.
    pub to: [f64; 3],
    /// Number of beam elements (at least 1).
    pub elements: usize,
    /// Section name.
    pub section: String,
    /// Material name.
    pub material: String,
    /// Orientation vector (see [`Beam::orientation`]).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub orientation: Option<[f64; 3]>,
}

/// A two-node beam element.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct Beam {
    /// Identifier, unique among beams.
    pub id: ElementId,
    /// End nodes.
    pub nodes: [NodeId; 2],
    /// Section name.
    pub section: String,
    /// Material name.
    pub material: String,
    /// A vector that, with the beam axis, spans the local x-y plane: local y is its part perpendicular
    /// to the axis, local z = x × y. Default: global Z, or global X for a beam parallel to Z.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub orientation: Option<[f64; 3]>,
}

/// A place in the model that resolves to one node. Give exactly one form:
/// `{"node": id}`, `{"xyz": [x, y, z]}` (snapped to the nearest node within `tolerance`), or
/// `{"line": name, "at": fraction}` (the line's node nearest that fraction of its length).
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct Location {
    /// A node id.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub node: Option<NodeId>,
    /// Coordinates, in m, snapped to the nearest node.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub xyz: Option<[f64; 3]>,
    /// Largest snapping distance for `xyz`, in m. Default: 1 % of the model's bounding-box diagonal.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub tolerance: Option<f64>,
    /// A line name.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub line: Option<String>,
    /// Fraction of the line's length from its `from` point, in [0, 1].
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub at: Option<f64>,
}

impl Location {
    /// The location of a node id.
    pub fn node(id: NodeId) -> Self {
        Self { node: Some(id), ..Self::default() }
    }
}

/// A global axis.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize, JsonSchema)]
#[serde(rename_all = "lowercase")]
pub enum Axis {
    /// Global X.
    X,
    /// Global Y.
    Y,
    /// Global Z.
    Z,
}

/// A direction: a global axis `"x"`, `"y"`, `"z"`, or a vector `[x, y, z]` (normalised on use).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize, JsonSchema)]
#[serde(untagged)]
pub enum Direction {
    /// A global axis.
    Axis(Axis),
    /// Any non-zero vector.
    Vector([f64; 3]),
}

/// One of the six degrees of freedom of a node, in global axes.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Serialize, Deserialize, JsonSchema)]
#[serde(rename_all = "lowercase")]
pub enum Dof {
    /// Translation along X.
    Ux,
    /// Translation along Y.
    Uy,
    /// Translation along Z.
    Uz,
    /// Rotation about X.
    Rx,
    /// Rotation about Y.
    Ry,
    /// Rotation about Z.
    Rz,
}

impl Dof {
    /// All six in node order `[ux, uy, uz, rx, ry, rz]`.
    pub const ALL: [Dof; 6] = [Dof::Ux, Dof::Uy, Dof::Uz, Dof::Rx, Dof::Ry, Dof::Rz];

    /// Position in the node's DOF order.
    pub fn index(self) -> usize {
        self as usize
    }

    /// The name used in model files.
    pub fn name(self) -> &'static str {
        ["ux", "uy", "uz", "rx", "ry", "rz"][self.index()]
    }
}

/// Shorthand for a set of fixed DOFs.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize, JsonSchema)]
#[serde(rename_all = "lowercase")]
pub enum FixityPreset {
    /// All six DOFs fixed.
    Clamped,
    /// The three translations fixed, rotations free.
    Pinned,
}

/// Which DOFs a support fixes: a list such as `["ux", "uy"]`, or `"clamped"` / `"pinned"`.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize, JsonSchema)]
#[serde(untagged)]
pub enum Fixity {
    /// A shorthand.
    Preset(FixityPreset),
    /// An explicit list of DOFs.
    Dofs(Vec<Dof>),
}

/// A support: the listed DOFs of one node are fixed (removed from the model).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct Support {
    /// Where.
    pub at: Location,
    /// Which DOFs are fixed.
    pub fixed: Fixity,
}

/// Per-DOF values in global axes; translations in N/m, rotations in N·m/rad.
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct DofValues {
    /// Along X, in N/m.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub ux: Option<f64>,
    /// Along Y, in N/m.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub uy: Option<f64>,
    /// Along Z, in N/m.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub uz: Option<f64>,
    /// About X, in N·m/rad.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub rx: Option<f64>,
    /// About Y, in N·m/rad.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub ry: Option<f64>,
    /// About Z, in N·m/rad.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub rz: Option<f64>,
}

impl DofValues {
    /// Values in node DOF order; absent entries are `None`.
    pub fn as_array(&self) -> [Option<f64>; 6] {
        [self.ux, self.uy, self.uz, self.rx, self.ry, self.rz]
    }
}

/// The word `"ground"`.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize, JsonSchema)]
#[serde(rename_all = "lowercase")]
pub enum Ground {
    /// The fixed ground.
    Ground,
}

/// The other end of a spring: `"ground"` or a location.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize, JsonSchema)]
#[serde(untagged)]
pub enum SpringEnd {
    /// Fixed ground.
    Ground(Ground),
    /// Another node.
    Location(Location),
}

/// An elastic spring with one stiffness per global DOF, to ground or between two nodes.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct Spring {
    /// First end.
    pub at: Location,
    /// Second end. Default: ground.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub to: Option<SpringEnd>,
    /// Stiffness per DOF (at least one).
    pub stiffness: DofValues,
}

/// A concentrated mass with optional rotary inertia.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct PointMass {
    /// Where.
    pub at: Location,
    /// Mass, in kg.
    pub mass: f64,
    /// Rotary inertia about global X, Y, Z through the node, in kg·m².
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub inertia: Option<[f64; 3]>,
}

/// A tuned absorber: a mass on a spring (and damper) acting along one direction at one node.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct Absorber {
    /// Name used in reports. Default: `absorber N`.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub name: Option<String>,
    /// Attachment.
    pub at: Location,
    /// Direction of action.
    pub direction: Direction,
    /// Moving mass, in kg.
    pub mass: f64,
    /// Spring stiffness, in N/m.
    pub stiffness: f64,
    /// Viscous damping coefficient, in N·s/m. Give this or `loss_factor`, not both.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub damping: Option<f64>,
    /// Hysteretic loss factor of the spring, dimensionless (k* = k (1 + iη)).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub loss_factor: Option<f64>,
}

/// The study: what band matters, how the part is excited, where the response is read, and what
/// absorbers to design.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct Study {
    /// Frequency band of interest `[low, high]`, in Hz.
    pub band_hz: [f64; 2],
    /// Harmonic point forces, all at the same frequency.
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub excitation: Vec<Force>,
    /// Where and along which direction the response is read.
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub response_points: Vec<ResponsePoint>,
    /// Viscous modal damping ratio of every elastic mode, dimensionless. Default 0.01.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub modal_damping_ratio: Option<f64>,
    /// Modes up to this frequency are kept in the modal model, in Hz. Default: twice the band's top;
    /// the rest enters as static residual flexibility.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub max_mode_frequency_hz: Option<f64>,
    /// Absorber design request.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub absorber_design: Option<AbsorberDesign>,
}

/// A harmonic point force.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct Force {
    /// Where.
    pub at: Location,
    /// Direction of the force.
    pub direction: Direction,
    /// Amplitude, in N.
    pub amplitude: f64,
    /// Phase, in degrees. Default 0.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub phase_deg: Option<f64>,
}

/// A response point: displacement of a node along a direction.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct ResponsePoint {
    /// Name used in reports. Default: `point N`.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub name: Option<String>,
    /// Where.
    pub at: Location,
    /// Direction along which the displacement is read.
    pub direction: Direction,
}

/// Which modes the absorbers target.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize, JsonSchema)]
#[serde(untagged)]
pub enum Targets {
    /// `"auto"`: the modes in the band that dominate the response.
    Auto(AutoWord),
    /// Mode numbers (1 = lowest mode, rigid-body modes included in the count).
    Modes(Vec<usize>),
}

/// The word `"auto"`.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize, JsonSchema)]
#[serde(rename_all = "lowercase")]
pub enum AutoWord {
    /// Chosen by the program.
    Auto,
}

/// Design objective.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize, JsonSchema)]
#[serde(rename_all = "lowercase")]
pub enum Objective {
    /// Smallest largest response over the band (H∞).
    Peak,
    /// Smallest root-mean-square response over the band (band-limited H2).
    Rms,
}

/// Where absorbers may go: `{"line": name, "from": a, "to": b}` (every line node between those
/// fractions), `{"node": id}` or `{"xyz": [x, y, z]}`.
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct CandidateSet {
    /// A line name.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub line: Option<String>,
    /// Start fraction along the line, in [0, 1].
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub from: Option<f64>,
    /// End fraction along the line, in [0, 1].
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub to: Option<f64>,
    /// A node id.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub node: Option<NodeId>,
    /// Coordinates, in m, snapped to the nearest node (1 % of the bounding-box diagonal).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub xyz: Option<[f64; 3]>,
}

/// Absorber design request.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct AbsorberDesign {
    /// Target modes: `"auto"` or a list of mode numbers. Default `"auto"`.
    #[serde(default = "default_targets")]
    pub targets: Targets,
    /// Number of absorbers. Default 1.
    #[serde(default = "default_count")]
    pub count: usize,
    /// Moving mass of each absorber, in kg. Give this or `total_mass`.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub mass_each: Option<f64>,
    /// Total moving mass shared equally by the absorbers, in kg.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub total_mass: Option<f64>,
    /// Candidate attachment places.
    pub candidates: Vec<CandidateSet>,
    /// Allowed directions of action.
    pub directions: Vec<Direction>,
    /// Objective. Default `peak`.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub objective: Option<Objective>,
    /// Smallest distance between two absorbers aimed at the same mode, in m. Default: 10 % of the
    /// largest distance between candidates.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub min_spacing: Option<f64>,
}

fn default_targets() -> Targets {
    Targets::Auto(AutoWord::Auto)
}

fn default_count() -> usize {
    1
}
