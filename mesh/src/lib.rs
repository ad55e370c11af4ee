//! Model data for antinode: the model file ([`Model`], plain serde data with a JSON Schema), its
//! checking and resolution into a [`Structure`] ([`validate`]), cross-section properties, and VTK
//! output. This crate has no linear algebra.
//!
//! # Units and conventions
//! - SI units everywhere: m, kg, s, N, Pa; angles in rad unless a field says `_deg`.
//! - Global axes X, Y, Z, right-handed. Six DOFs per node in the order `[ux, uy, uz, rx, ry, rz]`.
//! - Beam local axes: x from the first node to the second; local y is the part of the orientation
//!   vector perpendicular to x (default orientation: global Z, or global X for a beam along Z);
//!   z = x × y. A section's `height` runs along local y and its `width` along local z.
//! - Locations resolve to nodes: by id, by coordinates snapped to the nearest node within a
//!   tolerance (default 1 % of the model's bounding-box diagonal), by a fraction along a line or a
//!   tube (its nearest node; for a shell tube the node at angle 0 of the nearest ring), or by a
//!   named region (all its nodes where a set makes sense, otherwise its node nearest the centroid).
//! - Generated parts: tubes run from `start` along a unit `axis`; shell-tube angles are measured
//!   about the axis, right-handed, from the reference direction (global Y made perpendicular to the
//!   axis, or global Z for an axis along Y). Panels lie in the global X-Y plane with normals along
//!   +Z; panel coordinates (u, v) run along X and Y from the panel's origin.
//! - Imported meshes (`meshes`, VTK `.vtk`/`.vtu`): every point of the file is a node, as stored
//!   (coordinates × `scale` + `offset`, never merged); lines and polyline segments become beams,
//!   triangles and quads shells, with the property their cell's integer tag names. Mesh files are
//!   found relative to the folder given to [`validate_in`] ([`validate`]: the working folder).
//!
//! # Example
//! ```
//! use antinode_mesh::{parse_model, validate};
//! let text = r#"{
//!   "materials": {"steel": {"youngs_modulus": 2.1e11, "poisson_ratio": 0.3, "density": 7850}},
//!   "sections": {"bar": {"circle": {"diameter": 0.02}}},
//!   "lines": [{"name": "shaft", "from": [0, 0, 0], "to": [1, 0, 0], "elements": 10,
//!              "section": "bar", "material": "steel"}],
//!   "supports": [{"at": {"line": "shaft", "at": 0.0}, "fixed": "clamped"}]
//! }"#;
//! let model = parse_model(text, std::path::Path::new("example.json"))?;
//! let s = validate(&model)?;
//! assert_eq!(s.nodes.len(), 11);
//! assert_eq!(s.beams.len(), 10);
//! let mass = 7850.0 * std::f64::consts::PI * 0.01f64.powi(2);
//! assert!((s.total_mass() - mass).abs() < 1e-9 * mass);
//! # Ok::<(), antinode_mesh::ModelError>(())
//! ```

mod error;
mod export;
mod generate;
mod import;
mod io;
mod model;
mod quality;
mod region;
mod section;
mod structure;
mod validate;
mod vtk;

pub use error::ModelError;
pub use export::{MeshExport, MeshFormat, NODE_ID_ARRAY, PROPERTY_ARRAY, export_mesh};
pub use import::resolve_mesh_files;
pub use io::{load_model, model_schema_json, parse_model, write_atomic};
pub use model::{
    Absorber, AbsorberDesign, AbsorberKind, AmplitudeLaw, AutoWord, Axis, BaseExcitation, BaseResponse, Beam,
    BeamProperty, Bearing, BoxRegion, CandidateSet, CircleSection, CircularTubeSection, Direction, Dof, DofValues,
    EdgePreset, EdgeSupport, ElasticEdge, ElementId, EndPreset, ExplicitSection, Fidelity, Fixity, FixityPreset, Force,
    Ground, Line, Link, LinkKind, LinkMembers, Location, MassMatrix, Material, MeasuredFrequency, MeshImport,
    MeshProperty, MeshRegion, Model, Mount, Node, NodeId, NodesRegion, Objective, Order, Panel, PanelEdge, PanelEdges,
    PanelRegion, PointMass, RectangleSection, RectangularTubeSection, Region, ResponsePoint, RingEnd, Section, Shell,
    ShellProperty, Sphere, SphereRegion, Spring, SpringEnd, Stiffener, Study, Support, Targets, Tube, TubeEnd,
    TubeEnds, TubeFitting, TubeFittings, TubeRegion, TubeSegment, Uncertainty,
};
pub use quality::{
    ASPECT_RATIO_WARNING, JACOBIAN_RATIO_WARNING, SKEW_WARNING_DEG, ShapeDefect, ShellShape, WARP_WARNING_DEG,
    shell_shape,
};
pub use section::{SectionProperties, section_properties};
pub use structure::{
    AbsorberDamping, AbsorberSpec, BaseSpec, BeamElement, DampingSpec, DesignSpec, DirectionSpec, ElastomerSpec,
    ElementParts, LineNodes, LinkSpec, MaterialProperties, MeshNodes, NodalMass, OrderAmplitude, OrderSpec, PanelNodes,
    PointForce, RandomSpec, ResponseSpec, RingCandidate, ShellElement, SpringElement, StiffenerNodes, Structure,
    StructureNode, StudySpec, TargetSpec, TubeNodes, UncertaintySpec, bounding_diagonal, distance,
};
pub use validate::{DEFAULT_MODAL_DAMPING_RATIO, Limits, validate, validate_in, validate_with};
pub use vtk::{
    NodalScalars, NodalVectors, build_vtu, build_vtu_displaced, kind as cell_kind, pvd_collection, vtu_bytes, write_vtu,
};
