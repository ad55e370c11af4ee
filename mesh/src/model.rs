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
    /// Flat shell elements (3-node triangles, 4-node quadrilaterals) for walls of tubes and panels.
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub shells: Vec<Shell>,
    /// Parametric round tubes, meshed as beams or as shells (a shaft, a boom, a pipe in one object).
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub tubes: Vec<Tube>,
    /// Parametric flat rectangular panels in the global X-Y plane, meshed as shells.
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub panels: Vec<Panel>,
    /// Beams and shells read from VTK unstructured-grid files (`.vtk`, `.vtu`), with an integer cell
    /// array mapped to shell and beam properties.
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub meshes: Vec<MeshImport>,
    /// Named sets of nodes, used by locations (`{"region": name}`) and absorber candidates.
    #[serde(default, skip_serializing_if = "BTreeMap::is_empty")]
    pub regions: BTreeMap<String, Region>,
    /// Fixed degrees of freedom.
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub supports: Vec<Support>,
    /// Elastic springs to ground or between two nodes.
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub springs: Vec<Spring>,
    /// Concentrated masses and rotary inertias.
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub point_masses: Vec<PointMass>,
    /// Connection links: sets of nodes moving as a rigid body with a reference node, or a reference
    /// node following the average motion of a set (joints, end fittings, ring inserts).
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub links: Vec<Link>,
    /// Tuned absorbers attached to the structure (mass on a spring acting along one direction).
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub absorbers: Vec<Absorber>,
    /// Mass matrix kind for beam and shell elements: `consistent` (default) or `lumped`.
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

/// A flat shell element: a 3-node triangle or a 4-node quadrilateral with six DOFs per node
/// (membrane, bending with transverse shear, and a small drilling stiffness).
///
/// Node order runs counter-clockwise seen from the side the element normal points to (right-hand
/// rule). Neighbouring shells are re-ordered where needed so that normals agree across shared
/// edges (a warning says which). A warped quadrilateral is projected to its mean plane.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct Shell {
    /// Identifier, unique among shells.
    pub id: ElementId,
    /// Corner nodes: three (triangle) or four (quadrilateral).
    pub nodes: Vec<NodeId>,
    /// Wall thickness, in m.
    pub thickness: f64,
    /// Material name.
    pub material: String,
}

/// A place in the model that resolves to one node (or, where a set of nodes makes sense, to a
/// region's nodes). Give exactly one form: `{"node": id}`, `{"xyz": [x, y, z]}` (snapped to the
/// nearest node within `tolerance`), `{"line": name, "at": fraction}` (the line's node nearest that
/// fraction of its length), `{"tube": name, "at": fraction}` (a beam tube's node nearest the
/// fraction; for a shell tube the node at angle 0 of the ring nearest the fraction), or
/// `{"region": name}` (supports and springs to ground: every node of the region; elsewhere the
/// region's node nearest its centroid), or `{"link": name}` (the link's reference node).
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
    /// A tube name (with `at`).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub tube: Option<String>,
    /// Fraction of the line's length from its `from` point, or of the tube's length from its
    /// `start`, in [0, 1].
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub at: Option<f64>,
    /// A region name.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub region: Option<String>,
    /// A link name: the link's reference node.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub link: Option<String>,
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
    /// Isotropic lateral absorber: a second direction of action, perpendicular to `direction`,
    /// along which the same mass moves on a spring of the same stiffness and damping. For an
    /// isotropic spring the two directions decouple exactly, so the absorber acts as two
    /// one-direction absorbers of mass `mass` on the same node, but it is one body: its mass counts
    /// once. Default: none (one direction).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub second_direction: Option<Direction>,
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
    /// An elastomer of `study.elastomers`: the spring's storage stiffness and loss factor follow its
    /// table (with `stiffness` as the reference); give neither `damping` nor `loss_factor` then.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub elastomer: Option<String>,
}

/// The study: what band matters, how the part is excited, where the response is read, and what
/// absorbers to design.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct Study {
    /// Frequency band of interest `[low, high]`, in Hz. May be left out when `orders` are given:
    /// the band is then the orders' frequency span over `rpm_range`.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub band_hz: Option<[f64; 2]>,
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
    /// Damping of the structure beyond (or instead of) `modal_damping_ratio`. When this block is
    /// given and `modal_damping_ratio` is not, the uniform modal ratio is 0.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub damping: Option<StudyDamping>,
    /// Elastomer spring materials by name; an absorber uses one with `elastomer`.
    #[serde(default, skip_serializing_if = "BTreeMap::is_empty")]
    pub elastomers: BTreeMap<String, Elastomer>,
    /// Temperatures of the study's cases, in °C (each elastomer is evaluated at each). Needed when an
    /// absorber uses an elastomer.
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub temperatures_c: Vec<f64>,
    /// Random forces given by their power spectral density (uncorrelated with each other); the
    /// RMS response is the integral over the band.
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub random: Vec<RandomForce>,
    /// Operating speed range `[low, high]` of a rotating part, in rev/min; needed with `orders`.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub rpm_range: Option<[f64; 2]>,
    /// Running-speed orders: forces at a multiple of the shaft speed, swept over `rpm_range`.
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub orders: Vec<Order>,
    /// Test values that replace computed natural frequencies (the mode's shape is kept): the
    /// response and the design then use the measured frequency, which matters more for an absorber
    /// than a small error of shape. Modes are numbered from 1 as in modes.json; pair test and
    /// model modes first (`correlate`).
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub measured_frequencies: Vec<MeasuredFrequency>,
    /// Base (support) excitation: every support and every spring to ground moves together as a
    /// rigid translation along one direction with a given acceleration. Given instead of forces.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub base_excitation: Option<BaseExcitation>,
}

/// Which response a base excitation reports.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize, JsonSchema)]
#[serde(rename_all = "snake_case")]
pub enum BaseResponse {
    /// Displacement relative to the moving base (what strains the part).
    #[default]
    Relative,
    /// Absolute displacement (relative plus the base's own motion).
    Absolute,
}

/// A rigid translation of the base (supports and grounded springs) along one direction.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct BaseExcitation {
    /// Direction of the base motion.
    pub direction: Direction,
    /// Harmonic base acceleration amplitude, in m/s² (default 1): responses are reported per
    /// m/s² of it.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub acceleration: Option<f64>,
    /// Phase of the base acceleration, in degrees (default 0).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub phase_deg: Option<f64>,
    /// Random base acceleration: one-sided PSD `[[frequency_hz, (m/s²)²/Hz], ...]`, strictly
    /// ascending frequencies, interpolated linearly (zero outside the table).
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub psd: Vec<[f64; 2]>,
    /// `relative` (default) or `absolute` displacement at the response points.
    #[serde(default)]
    pub response: BaseResponse,
}

/// A measured natural frequency that replaces the computed one of a mode.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct MeasuredFrequency {
    /// Mode number, from 1 (zero-frequency modes count), as listed in modes.json.
    pub mode: usize,
    /// Measured natural frequency, in Hz.
    pub frequency_hz: f64,
}

/// How an order's force amplitude varies with speed.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize, JsonSchema)]
#[serde(rename_all = "snake_case")]
pub enum AmplitudeLaw {
    /// The same amplitude at every speed.
    Constant,
    /// Amplitude ∝ rpm² (unbalance: F = m e ω²), equal to `amplitude` at `reference_rpm`.
    RpmSquared,
}

/// A running-speed order: a harmonic force (or moment) at `order` × the shaft speed, f = order ·
/// rpm / 60 Hz.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct Order {
    /// Name used in reports. Default: `order K`.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub name: Option<String>,
    /// Multiple of the shaft speed (1 = once per revolution; a gear mesh: its tooth count),
    /// dimensionless, positive (fractions allowed).
    pub order: f64,
    /// Where.
    pub at: Location,
    /// Direction of the force (or the moment's axis).
    pub direction: Direction,
    /// Amplitude, in N (N·m for a moment): at every speed (`constant`, the default law) or at
    /// `reference_rpm` (`rpm_squared`). Give this or `amplitude_table`.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub amplitude: Option<f64>,
    /// How `amplitude` varies with speed. Default `constant`.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub amplitude_law: Option<AmplitudeLaw>,
    /// Speed at which an `rpm_squared` amplitude is given, in rev/min. Default: the top of
    /// `rpm_range`.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub reference_rpm: Option<f64>,
    /// Amplitude versus speed `[[rpm, N], ...]`, strictly ascending speeds covering `rpm_range`,
    /// interpolated linearly. Instead of `amplitude`.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub amplitude_table: Option<Vec<[f64; 2]>>,
    /// Phase, in degrees. Default 0.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub phase_deg: Option<f64>,
    /// `true`: a moment about `direction` instead of a force. Default false.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub moment: Option<bool>,
}

/// A random force with a one-sided power spectral density.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct RandomForce {
    /// Where.
    pub at: Location,
    /// Direction of the force.
    pub direction: Direction,
    /// One-sided force PSD `[[frequency_hz, N²/Hz], ...]`, strictly ascending frequencies from 0 Hz,
    /// interpolated linearly (zero outside the table).
    pub psd: Vec<[f64; 2]>,
}

/// Damping of the structure: per-mode or frequency-dependent modal ratios, Rayleigh damping
/// C = αM + βK, and a structural loss factor (K(1 + iη)). The parts add.
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct StudyDamping {
    /// Viscous modal damping ratio of each mode by number (the first entry for mode 1, rigid-body
    /// modes included in the count; they are not damped); later modes take the last value.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub modal_ratio_per_mode: Option<Vec<f64>>,
    /// Modal damping ratio versus frequency: `[[frequency_hz, ratio], ...]`, ascending
    /// frequencies; each mode takes the ratio interpolated at its natural frequency (end values
    /// outside the table).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub modal_ratio_table: Option<Vec<[f64; 2]>>,
    /// Mass-proportional Rayleigh coefficient α, in 1/s.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub rayleigh_alpha: Option<f64>,
    /// Stiffness-proportional Rayleigh coefficient β, in s.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub rayleigh_beta: Option<f64>,
    /// Structural (hysteretic) loss factor η of the whole structure, dimensionless.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub loss_factor: Option<f64>,
}

/// An elastomer spring material: storage stiffness (as a factor on the absorber's `stiffness`) and
/// loss factor versus frequency at several temperatures, k*(f, T) = k · factor(f, T) · (1 + iη(f, T)).
/// Values are interpolated linearly in frequency and temperature; outside the frequency range the end
/// values hold; a study temperature outside the table is an error.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct Elastomer {
    /// Frequencies of the table columns, strictly ascending, in Hz.
    pub frequency_hz: Vec<f64>,
    /// Temperatures of the table rows, strictly ascending, in °C.
    pub temperatures_c: Vec<f64>,
    /// Storage stiffness factor, one row per temperature, one value per frequency, dimensionless
    /// (1 = the absorber's `stiffness`).
    pub storage_factor: Vec<Vec<f64>>,
    /// Loss factor, one row per temperature, one value per frequency, dimensionless.
    pub loss_factor: Vec<Vec<f64>>,
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
    /// `true`: a moment (N·m) about `direction` instead of a force. Default false.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub moment: Option<bool>,
    /// `true` with a region in `at`: the amplitude is shared equally by every node of the region
    /// instead of acting at its central node. Default false.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub spread: Option<bool>,
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

/// The kind of absorber a design places.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize, JsonSchema)]
#[serde(rename_all = "snake_case")]
pub enum AbsorberKind {
    /// One mass on one spring along one of `directions` at a node.
    #[default]
    Point,
    /// One mass on springs of equal stiffness along the two perpendicular `directions` (exactly
    /// two) at a node: serves both members of a bending pair; one body, its mass counted once.
    Lateral,
    /// A rigid mass on an averaging link to a whole ring of a shell tube (candidates
    /// `{"tube": name, "from": a, "to": b}`), acting along one of `directions` through the ring's
    /// average motion: it couples only to n = 0 and n = 1 ring motion (axial, bending, not
    /// ovaling).
    RingInsert,
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
/// fractions), `{"tube": name, "from": a, "to": b}` (the tube's stations between those fractions:
/// for ring inserts each ring of a shell tube, otherwise every node of those stations),
/// `{"node": id}`, `{"xyz": [x, y, z]}` or `{"region": name}` (every node of the region).
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct CandidateSet {
    /// A line name.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub line: Option<String>,
    /// A tube name (with `from`, `to`).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub tube: Option<String>,
    /// Start fraction along the line or tube, in [0, 1].
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub from: Option<f64>,
    /// End fraction along the line or tube, in [0, 1].
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub to: Option<f64>,
    /// A node id.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub node: Option<NodeId>,
    /// Coordinates, in m, snapped to the nearest node (1 % of the bounding-box diagonal).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub xyz: Option<[f64; 3]>,
    /// A region name: every node of the region is a candidate.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub region: Option<String>,
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
    /// What each absorber is. Default `point`.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub kind: Option<AbsorberKind>,
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
    /// Smallest and largest moving mass of one absorber `[min, max]`, in kg. With `total_mass` the
    /// split of the budget among the absorbers is refined within these limits.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub mass_limits: Option<[f64; 2]>,
    /// Largest allowed stroke (peak displacement of an absorber's mass relative to its attachment)
    /// at the stated excitation over the band, in m, in every uncertainty scenario.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub stroke_limit: Option<f64>,
    /// Scatter to design against: the refinement minimises the worst case over the scenarios.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub uncertainty: Option<Uncertainty>,
    /// Total absorber masses (kg) at which to repeat the design for the trade-off curve of
    /// reduction against mass (`trade-off.svg`). Default: none.
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub trade_off_masses: Vec<f64>,
}

/// Scatter of the structure and of the absorbers' springs. The scenarios scale every structural
/// natural frequency by 1 + a (a on `scenarios` even steps over [−x, +x]) and every designed
/// absorber's stiffness by 1 + b (b likewise over [−y, +y]): `scenarios`² cases.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct Uncertainty {
    /// Relative scatter x of the structure's natural frequencies (0.05 = ±5 %). Default 0.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub frequency_scatter: Option<f64>,
    /// Relative scatter y of the absorbers' spring stiffness (0.1 = ±10 %). Default 0.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub stiffness_scatter: Option<f64>,
    /// Levels per scattered quantity, from 2 to 9 (3: −, nominal, +). Default 3.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub scenarios: Option<usize>,
}

fn default_targets() -> Targets {
    Targets::Auto(AutoWord::Auto)
}

fn default_count() -> usize {
    1
}

/// How a link ties its nodes together.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize, JsonSchema)]
#[serde(rename_all = "lowercase")]
pub enum LinkKind {
    /// The member nodes move as one rigid body with the reference node: u_m = u_r + θ_r × (x_m − x_r),
    /// θ_m = θ_r. Infinitely stiff; adds no mass.
    Rigid,
    /// The reference node follows the weighted least-squares rigid motion of the members'
    /// translations (equal weights); adds no stiffness and no mass, and leaves the members'
    /// rotations free.
    Average,
}

/// The nodes a link acts on: `{"region": name}` or `{"nodes": [ids]}`.
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct LinkMembers {
    /// A region name: every node of the region.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub region: Option<String>,
    /// Node ids.
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub nodes: Vec<NodeId>,
}

/// A connection link (a multi-point constraint), applied by eliminating the moved DOFs.
///
/// The reference node is an existing node (`reference`, any location form) or a new node at a
/// point (`reference_point`, merged with a node already there). A rigid link moves its members
/// with the reference; an averaging link moves the reference with its members (at least three
/// members not on one line, so that the rotation is defined). The reference node is dropped from
/// the members if a region includes it. A node can be moved by at most one link; links may chain
/// (a member of one may be the reference of another) but not in a loop. Supports go on nodes
/// that no link moves (for a rigid link: its reference).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct Link {
    /// Name, unique among links; used by locations (`{"link": name}` is the reference node).
    pub name: String,
    /// `rigid` or `average`.
    pub kind: LinkKind,
    /// The reference node, at an existing node.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub reference: Option<Location>,
    /// The reference node at a point, in m (a new node unless one is there already).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub reference_point: Option<[f64; 3]>,
    /// The member nodes.
    pub members: LinkMembers,
}

/// A rigid end fitting of a tube: a mass with inertia on the tube's axis at the end, joined to the
/// end (the ring of a shell tube through a rigid link, the end node of a beam tube directly).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct TubeFitting {
    /// Mass, in kg (zero allowed: a massless rigid end ring).
    pub mass: f64,
    /// Rotary inertia about the tube's axis, in kg·m². Default 0.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub axial_inertia: Option<f64>,
    /// Rotary inertia about any axis through the fitting perpendicular to the tube's axis, in kg·m².
    /// Default 0.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub transverse_inertia: Option<f64>,
}

/// End fittings at a tube's start and end.
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct TubeFittings {
    /// At the start (fraction 0).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub start: Option<TubeFitting>,
    /// At the end (fraction 1).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub end: Option<TubeFitting>,
}

/// How a tube is meshed.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize, JsonSchema)]
#[serde(rename_all = "lowercase")]
pub enum Fidelity {
    /// Beam elements along the axis with a circular-tube section (default).
    Beam,
    /// Flat quadrilateral shells on the mid-surface (ovaling and wall modes included).
    Shell,
}

/// A straight round tube of given length along an axis, meshed by the program.
///
/// Geometry: the axis runs from `start` along `axis` for `length`. The wall is given by
/// `outer_diameter` and `wall_thickness`, or piecewise by `segments` (a stepped shaft). With
/// `"fidelity": "shell"` the wall is meshed with quadrilaterals on the mid-surface radius
/// (D − t)/2; angles about the axis are measured from the reference direction (the part of global Y
/// perpendicular to the axis, or of global Z when the axis is along Y), positive by the right-hand
/// rule about the axis.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct Tube {
    /// Name, unique among tubes; used by locations and regions.
    pub name: String,
    /// Length along the axis, in m.
    pub length: f64,
    /// Outer diameter, in m (of every segment that does not give its own).
    pub outer_diameter: f64,
    /// Wall thickness, in m; less than half the outer diameter (of every segment that does not give
    /// its own).
    pub wall_thickness: f64,
    /// Material name.
    pub material: String,
    /// Start point of the axis, in m. Default: the origin.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub start: Option<[f64; 3]>,
    /// Axis direction (normalised on use). Default: global +X.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub axis: Option<[f64; 3]>,
    /// `beam` (default) or `shell`.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub fidelity: Option<Fidelity>,
    /// Shell fidelity: number of elements around the circumference. Default: the circumference over
    /// `element_size`, at least 16.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub around: Option<usize>,
    /// Number of elements along the length (shared among the segments in proportion to their
    /// lengths, at least one each). Default: the length over `element_size`.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub along: Option<usize>,
    /// Target element size, in m. Default: shell, the mid-surface circumference / 32; beam, the
    /// length / 40.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub element_size: Option<f64>,
    /// Beam fidelity: Timoshenko beams with Cowper's shear coefficient. Default true.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub shear_deformation: Option<bool>,
    /// Stepped wall: consecutive segments, each ending at a fraction of the length; the last ends
    /// at 1. Default: one segment of the tube's diameter and wall.
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub segments: Vec<TubeSegment>,
    /// Conditions at the two ends. Default: both free.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub ends: Option<TubeEnds>,
    /// Rigid end fittings with mass and inertia. With a fitting, the end's condition (pinned,
    /// clamped, a bearing at this end) acts on the fitting's centre node on the axis: a pinned
    /// shell tube then holds the centre and lets the end tilt, whereas without a fitting "pinned"
    /// holds every ring node, which also stops the end section from tilting. Default: none.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub fittings: Option<TubeFittings>,
}

/// One segment of a stepped tube: from the previous segment's end (or 0) to `to`.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct TubeSegment {
    /// End of the segment, as a fraction of the tube's length in (0, 1].
    pub to: f64,
    /// Outer diameter, in m. Default: the tube's.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub outer_diameter: Option<f64>,
    /// Wall thickness, in m. Default: the tube's.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub wall_thickness: Option<f64>,
}

/// Conditions at a tube's start and end.
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct TubeEnds {
    /// At the start (fraction 0). Default free.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub start: Option<TubeEnd>,
    /// At the end (fraction 1). Default free.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub end: Option<TubeEnd>,
}

/// A tube end: `"free"`, `"pinned"`, `"clamped"` or an elastic bearing.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize, JsonSchema)]
#[serde(untagged)]
pub enum TubeEnd {
    /// A shorthand.
    Preset(EndPreset),
    /// An elastic bearing.
    Bearing(Bearing),
}

/// Shorthand tube ends.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize, JsonSchema)]
#[serde(rename_all = "lowercase")]
pub enum EndPreset {
    /// Nothing held.
    Free,
    /// The three translations fixed (at every ring node for a shell tube).
    Pinned,
    /// All six DOFs fixed (at every ring node for a shell tube).
    Clamped,
}

/// An elastic bearing: springs to ground in global axes at the end node (beam) or spread equally
/// over the ring's nodes (shell).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct Bearing {
    /// Stiffness per global DOF: N/m for ux, uy, uz, N·m/rad for rx, ry, rz (at least one).
    pub bearing: DofValues,
    /// Position as a fraction of the tube's length. Default: this end (0 or 1).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub at: Option<f64>,
}

/// A flat rectangular panel in the global X-Y plane, meshed with quadrilateral shells whose normals
/// point along +Z. Panel coordinates (u, v) run from `origin` along X and Y.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct Panel {
    /// Name, unique among panels; used by regions.
    pub name: String,
    /// Side lengths `[a, b]`: a along X, b along Y, in m.
    pub size: [f64; 2],
    /// Thickness, in m.
    pub thickness: f64,
    /// Material name.
    pub material: String,
    /// Corner (u, v) = (0, 0), in m. Default: the origin.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub origin: Option<[f64; 3]>,
    /// Elements along X and Y `[nx, ny]`. Default: the sides over `element_size`.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub divisions: Option<[usize; 2]>,
    /// Target element size, in m. Default: the shorter side / 20.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub element_size: Option<f64>,
    /// Edge conditions. Default: all free.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub edges: Option<PanelEdges>,
    /// Elastic mounts: springs to ground at the nodes nearest the given panel points.
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub mounts: Vec<Mount>,
    /// Beam stiffeners along straight lines parallel to an edge; the mesh gets a grid line on each.
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub stiffeners: Vec<Stiffener>,
}

/// A beam stiffener of a panel: beam elements on the panel's grid line from `from` to `to`,
/// sharing the plate's nodes (offset 0) or on nodes `offset` away along the panel normal +Z, each
/// tied to its plate node by a generated rigid link (an eccentric stiffener).
///
/// The beam's local y axis is the panel normal unless `orientation` says otherwise, so a
/// rectangle's `height` is the depth of the rib.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct Stiffener {
    /// Start, panel coordinates `[u, v]`, in m, on the panel.
    pub from: [f64; 2],
    /// End, panel coordinates `[u, v]`, in m, on the panel; `from` and `to` share u (a stiffener
    /// along Y) or v (along X): diagonal stiffeners are refused.
    pub to: [f64; 2],
    /// Section name.
    pub section: String,
    /// Material name.
    pub material: String,
    /// Orientation vector (see [`Beam::orientation`]). Default: global Z, the panel normal.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub orientation: Option<[f64; 3]>,
    /// Distance of the beam's centroid from the plate mid-surface along +Z (negative: below), in m.
    /// Default 0 (the beam on the plate's nodes).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub offset: Option<f64>,
}

/// Conditions on the four edges of a panel: `x0` (u = 0), `x1` (u = a), `y0` (v = 0), `y1` (v = b).
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct PanelEdges {
    /// The edge u = 0 (along Y).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub x0: Option<EdgeSupport>,
    /// The edge u = a (along Y).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub x1: Option<EdgeSupport>,
    /// The edge v = 0 (along X).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub y0: Option<EdgeSupport>,
    /// The edge v = b (along X).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub y1: Option<EdgeSupport>,
}

/// A panel edge: `"free"`, `"simply_supported"`, `"clamped"` or `{"elastic": {...}}`.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize, JsonSchema)]
#[serde(untagged)]
pub enum EdgeSupport {
    /// A shorthand.
    Preset(EdgePreset),
    /// Distributed springs to ground along the edge.
    Elastic(ElasticEdge),
}

/// Shorthand panel edges.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize, JsonSchema)]
#[serde(rename_all = "snake_case")]
pub enum EdgePreset {
    /// Nothing held.
    Free,
    /// uz = 0 and the rotation about the edge's in-plane normal fixed (rx on x0/x1, ry on y0/y1),
    /// with the in-plane ux, uy, rz fixed too.
    SimplySupported,
    /// All six DOFs fixed.
    Clamped,
}

/// Springs to ground distributed along a panel edge.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct ElasticEdge {
    /// Stiffness per unit length of edge, in global axes: N/m² for ux, uy, uz, N/rad (N·m/rad per m)
    /// for rx, ry, rz. Each edge node gets it times its share of the edge length.
    pub elastic: DofValues,
}

/// An elastic mount of a panel: a spring to ground at the node nearest a panel point.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct Mount {
    /// Panel coordinates `[u, v]`, in m, inside the panel.
    pub at: [f64; 2],
    /// Stiffness per global DOF: N/m for ux, uy, uz, N·m/rad for rx, ry, rz (at least one).
    pub stiffness: DofValues,
}

/// A named set of nodes. Give exactly one form: `{"tube", ...}`, `{"panel", ...}`,
/// `{"mesh", ...}`, `{"box": [[x0, y0, z0], [x1, y1, z1]]}`, `{"sphere": {"centre", "radius"}}` or
/// `{"nodes": [ids]}`; the form is the first of the keys `tube`, `panel`, `mesh`, `box`, `sphere`,
/// `nodes` that the object has. A region that selects no node is an error.
#[derive(Debug, Clone, PartialEq, Serialize, JsonSchema)]
#[serde(untagged)]
pub enum Region {
    /// Part of a tube.
    Tube(TubeRegion),
    /// Part of a panel.
    Panel(PanelRegion),
    /// Nodes of an imported mesh.
    Mesh(MeshRegion),
    /// An axis-aligned box in global coordinates.
    Box(BoxRegion),
    /// A ball in global coordinates.
    Sphere(SphereRegion),
    /// Listed nodes.
    Nodes(NodesRegion),
}

/// The nodes of a tube between two axial fractions, optionally within an angle range (shell tubes)
/// or only on an end ring.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct TubeRegion {
    /// Tube name.
    pub tube: String,
    /// Start fraction of the length, in [0, 1]. Default 0.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub from: Option<f64>,
    /// End fraction of the length, in [0, 1]. Default 1.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub to: Option<f64>,
    /// Shell tubes: angle range `[a0, a1]` about the axis from the reference direction, in degrees,
    /// running from a0 up to a1 (through 360° when a1 < a0). Default: all the way round.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub angle_deg: Option<[f64; 2]>,
    /// Only the ring (shell) or node (beam) at the start or the end of the tube.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub ring: Option<RingEnd>,
}

/// An end of a tube.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize, JsonSchema)]
#[serde(rename_all = "lowercase")]
pub enum RingEnd {
    /// Fraction 0.
    Start,
    /// Fraction 1.
    End,
}

/// Nodes of a panel: one edge, a box in panel coordinates, or the node nearest a point (exactly
/// one of `edge`, `box`, `point`).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct PanelRegion {
    /// Panel name.
    pub panel: String,
    /// An edge: every node on it.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub edge: Option<PanelEdge>,
    /// Corners `[[u0, v0], [u1, v1]]` in panel coordinates, in m: every node inside (edges included).
    #[serde(rename = "box", default, skip_serializing_if = "Option::is_none")]
    pub bounds: Option<[[f64; 2]; 2]>,
    /// A point `[u, v]` in panel coordinates, in m: the nearest node.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub point: Option<[f64; 2]>,
}

/// A panel edge by name.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize, JsonSchema)]
#[serde(rename_all = "lowercase")]
pub enum PanelEdge {
    /// u = 0.
    X0,
    /// u = a.
    X1,
    /// v = 0.
    Y0,
    /// v = b.
    Y1,
}

impl PanelEdge {
    /// The name used in model files.
    pub fn name(self) -> &'static str {
        match self {
            Self::X0 => "x0",
            Self::X1 => "x1",
            Self::Y0 => "y0",
            Self::Y1 => "y1",
        }
    }
}

/// Every node inside an axis-aligned box (faces included).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct BoxRegion {
    /// Lower and upper corners `[[x0, y0, z0], [x1, y1, z1]]`, in m.
    #[serde(rename = "box")]
    pub corners: [[f64; 3]; 2],
}

/// Every node inside a ball (surface included).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct SphereRegion {
    /// The ball.
    pub sphere: Sphere,
}

/// A ball.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct Sphere {
    /// Centre, in m.
    pub centre: [f64; 3],
    /// Radius, in m.
    pub radius: f64,
}

/// Listed nodes.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct NodesRegion {
    /// Node ids.
    pub nodes: Vec<NodeId>,
}

/// A region's form is chosen by its keys (`tube`, `panel`, `mesh`, `box`, `sphere`, `nodes`, in that order),
/// so a mistake inside one form is reported against that form (an unknown field, a wrong type)
/// rather than as "matches no variant".
impl<'de> Deserialize<'de> for Region {
    fn deserialize<D: serde::Deserializer<'de>>(deserializer: D) -> Result<Self, D::Error> {
        use serde::de::Error;
        let value = serde_json::Value::deserialize(deserializer)?;
        let serde_json::Value::Object(map) = &value else {
            return Err(D::Error::custom(
                "a region is an object: {\"tube\": ...}, {\"panel\": ...}, {\"mesh\": ...}, {\"box\": ...}, {\"sphere\": ...} or {\"nodes\": [...]}",
            ));
        };
        let has = |k: &str| map.contains_key(k);
        let parsed = if has("tube") {
            serde_json::from_value(value).map(Region::Tube)
        } else if has("panel") {
            serde_json::from_value(value).map(Region::Panel)
        } else if has("mesh") {
            serde_json::from_value(value).map(Region::Mesh)
        } else if has("box") {
            serde_json::from_value(value).map(Region::Box)
        } else if has("sphere") {
            serde_json::from_value(value).map(Region::Sphere)
        } else if has("nodes") {
            serde_json::from_value(value).map(Region::Nodes)
        } else {
            return Err(D::Error::custom(
                "a region needs one of the keys \"tube\", \"panel\", \"mesh\", \"box\", \"sphere\" or \"nodes\"",
            ));
        };
        parsed.map_err(D::Error::custom)
    }
}

// ---------------------------------------------------------------------------------------------
// Imported meshes
// ---------------------------------------------------------------------------------------------

/// Beams and shells read from a VTK unstructured grid: legacy `.vtk` (ASCII or big-endian binary)
/// or XML `.vtu` (uncompressed; inline or appended data).
///
/// Every point of the file becomes a node (coordinates × `scale` + `offset`), as stored: coincident
/// points are not merged (a warning names them) and imported nodes are not joined to the nodes of
/// other parts (use a link). Cells: lines → one beam, polylines → one beam per segment, triangles
/// and quadrilaterals → shells, vertices and poly-vertices → ignored (a warning counts them); any
/// other cell type is an error. Each beam or shell takes the property whose id is the cell's value
/// in the integer cell array `property_array`.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct MeshImport {
    /// Name, unique among meshes; used by regions (`{"mesh": name}`).
    pub name: String,
    /// The mesh file, relative to the folder of the model file (or absolute); `.vtk` or `.vtu`.
    pub file: String,
    /// Name of the integer cell-data array that holds each cell's property id. Default `property`.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub property_array: Option<String>,
    /// Name of an integer point-data array that holds each point's node id (positive, unique in
    /// the model). Default: none, the nodes get generated ids after the model's largest.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub node_id_array: Option<String>,
    /// Properties by id (the JSON key is the integer id as text, e.g. `"1"`).
    pub properties: BTreeMap<String, MeshProperty>,
    /// Factor from the file's length unit to metres (0.001 for a file in mm). Default 1.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub scale: Option<f64>,
    /// Translation added after scaling, in m. Default none.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub offset: Option<[f64; 3]>,
}

/// What the cells with one property id are: `{"shell": {...}}` or `{"beam": {...}}`.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize, JsonSchema)]
#[serde(rename_all = "snake_case", deny_unknown_fields)]
pub enum MeshProperty {
    /// Triangles and quadrilaterals: flat shells (see [`Shell`]).
    Shell(ShellProperty),
    /// Lines and polylines: two-node beams (see [`Beam`]).
    Beam(BeamProperty),
}

/// Wall of imported shells, as in [`Shell`] and [`Panel`].
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct ShellProperty {
    /// Wall thickness, in m.
    pub thickness: f64,
    /// Material name.
    pub material: String,
}

/// Section of imported beams, as in [`Beam`] and [`Line`].
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct BeamProperty {
    /// Section name.
    pub section: String,
    /// Material name.
    pub material: String,
    /// Orientation vector (see [`Beam::orientation`]).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub orientation: Option<[f64; 3]>,
}

/// Nodes of an imported mesh: every node of the file, or the nodes of its cells with one property.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize, JsonSchema)]
#[serde(deny_unknown_fields)]
pub struct MeshRegion {
    /// Mesh name.
    pub mesh: String,
    /// Only the nodes of beams and shells with this property id. Default: every point of the file.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub property: Option<i64>,
}
