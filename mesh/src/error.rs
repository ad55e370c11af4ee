//! Errors of the mesh crate: reading, parsing and validating models, and writing VTK files.

use std::path::PathBuf;

/// What can go wrong with a model or a mesh file. Each message names the place (JSON path or element)
/// and what is wrong, as a sentence a user can act on.
#[derive(Debug, thiserror::Error)]
#[non_exhaustive]
pub enum ModelError {
    /// The file could not be read.
    #[error("cannot read {path}: {source}")]
    Io {
        /// The file.
        path: PathBuf,
        /// The operating-system error.
        source: std::io::Error,
    },
    /// The JSON is malformed or does not have the model's shape.
    #[error("{path}: {}: {message}", json_place(.json_path, .line, .column))]
    Parse {
        /// The file.
        path: PathBuf,
        /// Where in the JSON document, e.g. `study.excitation[0].direction`.
        json_path: String,
        /// Line in the file, from 1.
        line: usize,
        /// Column in the line, from 1.
        column: usize,
        /// What serde found wrong.
        message: String,
    },
    /// A name that refers to nothing.
    #[error("{at}: {kind} \"{name}\" is not defined{hint}")]
    UnknownName {
        /// JSON path of the reference.
        at: String,
        /// What kind of thing (section, material, line).
        kind: &'static str,
        /// The name given.
        name: String,
        /// Suggestion, e.g. the defined names.
        hint: String,
    },
    /// A node id that refers to nothing.
    #[error("{at}: node {id} does not exist; give the id of a defined node{hint}")]
    UnknownNode {
        /// JSON path of the reference.
        at: String,
        /// The id given.
        id: u64,
        /// The ids that exist, in words, e.g. ` (defined: 1 to 49)`.
        hint: String,
    },
    /// Two items with one id or name.
    #[error("{at}: {kind} {id} is defined twice (first at {first}); give each {kind} its own {key}")]
    Duplicate {
        /// JSON path of the second definition.
        at: String,
        /// What kind of thing.
        kind: &'static str,
        /// The repeated id or name.
        id: String,
        /// JSON path of the first definition.
        first: String,
        /// What must be unique: `id` or `name`.
        key: &'static str,
    },
    /// A number outside its allowed range.
    #[error("{at}: {field} = {value} is not allowed; it must be {allowed}")]
    OutOfRange {
        /// JSON path of the item.
        at: String,
        /// The field.
        field: &'static str,
        /// The value given.
        value: f64,
        /// The allowed range in words.
        allowed: String,
    },
    /// A beam whose two nodes coincide.
    #[error(
        "{element}: its two nodes {a} and {b} are at the same place, so the beam has zero length; \
         a beam needs two nodes at different places"
    )]
    ZeroLength {
        /// The element: JSON path and label.
        element: String,
        /// First node id.
        a: u64,
        /// Second node id.
        b: u64,
    },
    /// An orientation vector along the beam axis.
    #[error("{element}: the orientation vector {vector:?} is parallel to the beam axis; give a vector across the beam")]
    OrientationParallel {
        /// The element: JSON path and label.
        element: String,
        /// The vector given.
        vector: [f64; 3],
    },
    /// Coordinates that snap to no node.
    #[error(
        "{at}: no node lies within {tolerance:.3e} m of {xyz:?}; the nearest (node {nearest}) is \
         {distance:.3e} m away; give coordinates within the tolerance of a node, or a larger \"tolerance\" (m)"
    )]
    NoNodeNear {
        /// JSON path of the location.
        at: String,
        /// The coordinates given.
        xyz: [f64; 3],
        /// The nearest node id.
        nearest: u64,
        /// Its distance, in m.
        distance: f64,
        /// The tolerance used, in m.
        tolerance: f64,
    },
    /// A model without any mass.
    #[error(
        "the model has no mass: its total mass is 0 kg and it must be positive; add beams of a material \
         with a positive density, or point_masses"
    )]
    NoMass,
    /// Anything else that is wrong with an item, said in words.
    #[error("{at}: {message}")]
    Invalid {
        /// JSON path or element.
        at: String,
        /// What is wrong and how to fix it.
        message: String,
    },
    /// A mesh file that cannot be imported: its format, a cell, a point or an array.
    #[error("{path}: {at} {message}")]
    MeshFile {
        /// The mesh file.
        path: PathBuf,
        /// The place in the file, e.g. `cell 17` (cells and points count from 0).
        at: String,
        /// What is wrong and what is allowed.
        message: String,
    },
    /// Writing an output file failed.
    #[error("cannot write {path}: {message}")]
    Write {
        /// The file.
        path: PathBuf,
        /// What failed.
        message: String,
    },
}

/// Where a parse error is, for its message: `` at `path` (line L, column C) ``, or only the line and
/// column when serde could not tell the JSON path (a syntax error, an early end of the file).
fn json_place(json_path: &str, line: &usize, column: &usize) -> String {
    if json_path.is_empty() || json_path == "?" || json_path == "." {
        format!("line {line}, column {column}")
    } else {
        format!("at `{json_path}` (line {line}, column {column})")
    }
}
