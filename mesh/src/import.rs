//! Reading VTK unstructured grids (legacy `.vtk`, XML `.vtu`) into points and beam/shell cells.
//!
//! This module only reads the file and sorts its cells; [`crate::validate`] maps property ids to
//! sections, materials and thicknesses and builds the elements.
//!
//! Rules (docs/model-format.md repeats them):
//! - Formats: what vtkio 0.6.3 reads. Legacy `.vtk` ASCII and binary (big-endian, as the legacy
//!   format prescribes); XML `.vtu` uncompressed, with inline (`ascii` or base64 `binary`) or
//!   appended (`raw` or `base64`) data. Compressed `.vtu` files (zlib, as VTK writes them) are not
//!   read by vtkio 0.6.3: they are an error saying so (tests below).
//! - Data sets: unstructured grids only, one or more inline pieces (joined in file order).
//! - Cells: line → one two-node beam; polyline of k points → k − 1 beams; triangle, quad →
//!   shells; vertex, poly-vertex → skipped (counted); every other type → an error naming the
//!   cell index (from 0, as VTK viewers count) and the VTK type.
//! - The property array: a one-component integer cell-data array (`DataArray` or a legacy `FIELD`
//!   array). Floating-point arrays are rejected rather than rounded.

use std::path::{Path, PathBuf};

use vtkio::model::{Attribute, CellType, DataSet, IOBuffer, Piece, VertexNumbers, Vtk};

use crate::error::ModelError;

/// What a kept cell becomes.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) enum CellKind {
    /// A two-node beam (a line, or one segment of a polyline).
    Beam,
    /// A three-node shell.
    Triangle,
    /// A four-node shell.
    Quad,
}

impl CellKind {
    /// Words for messages.
    pub(crate) fn noun(self) -> &'static str {
        match self {
            Self::Beam => "a line",
            Self::Triangle => "a triangle",
            Self::Quad => "a quad",
        }
    }
}

/// One beam or shell of a mesh file.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct MeshCell {
    /// Index of the VTK cell it comes from, counting from 0 over all pieces.
    pub index: usize,
    /// Segment of a polyline (from 0), otherwise 0.
    pub segment: usize,
    /// What it becomes.
    pub kind: CellKind,
    /// Point indices, as stored.
    pub points: Vec<usize>,
    /// The cell's value in the property array.
    pub property: i64,
}

/// The content of a mesh file that the model uses.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct MeshData {
    /// The file, for messages.
    pub path: PathBuf,
    /// Coordinates as stored, in the file's unit.
    pub points: Vec<[f64; 3]>,
    /// Beams and shells in file order (a polyline's segments in order).
    pub cells: Vec<MeshCell>,
    /// Node id of each point, when the model names a node-id array.
    pub node_ids: Option<Vec<u64>>,
    /// Vertex and poly-vertex cells skipped.
    pub skipped_vertices: usize,
}

fn mesh_error(path: &Path, at: impl Into<String>, message: impl Into<String>) -> ModelError {
    ModelError::MeshFile { path: path.to_path_buf(), at: at.into(), message: message.into() }
}

/// Reads the unstructured grid at `path`. `property_array` names the integer cell array of
/// property ids; `node_id_array`, if given, the integer point array of node ids.
///
/// # Errors
/// [`ModelError::MeshFile`] naming the file and, where it applies, the cell, point or array.
/// Reads `path` with vtkio. vtkio is a third-party parser that panics on some malformed files (an
/// XML piece without its points, found by fuzzing): the panic is caught and becomes an error, and
/// the process's panic hook is silenced meanwhile so that no panic message reaches the user (or a
/// fuzzer's abort-on-panic hook). Imports are serialised so the hook swap does not race.
fn import_quietly(path: &Path) -> std::thread::Result<Result<Vtk, vtkio::Error>> {
    static IMPORT: std::sync::Mutex<()> = std::sync::Mutex::new(());
    let _one_at_a_time = IMPORT.lock().unwrap_or_else(std::sync::PoisonError::into_inner);
    let hook = std::panic::take_hook();
    std::panic::set_hook(Box::new(|_| {}));
    let read = std::panic::catch_unwind(|| Vtk::import(path));
    std::panic::set_hook(hook);
    read
}

/// Keywords of legacy VTK header lines whose integers are counts of values that follow.
const LEGACY_COUNT_KEYWORDS: [&str; 17] = [
    "POINTS",
    "CELLS",
    "CELL_TYPES",
    "POINT_DATA",
    "CELL_DATA",
    "VERTICES",
    "LINES",
    "POLYGONS",
    "TRIANGLE_STRIPS",
    "DIMENSIONS",
    "LOOKUP_TABLE",
    "FIELD",
    "SCALARS",
    "COLOR_SCALARS",
    "TEXTURE_COORDINATES",
    "OFFSETS",
    "CONNECTIVITY",
];

/// Data type names of legacy VTK arrays (the last word of a `FIELD` array's header line).
const LEGACY_TYPES: [&str; 12] = [
    "bit",
    "unsigned_char",
    "char",
    "unsigned_short",
    "short",
    "unsigned_int",
    "int",
    "unsigned_long",
    "long",
    "float",
    "double",
    "vtkIdType",
];

/// Checks the counts in the header lines of a legacy VTK file against the file's size before the
/// file reaches vtkio. vtkio 0.6.3 reserves memory for as many values as a header announces, and a
/// failed reservation aborts the process (no error, no unwinding: found by the `mesh` fuzz target
/// with `POINTS 1942857945`). Every value takes at least one byte of the file, in ASCII and in
/// binary, so a header announcing more values than the file has bytes is refused; the checked
/// counts are each integer of a keyword line (3 per point for `POINTS`, the product for
/// `DIMENSIONS`) and components × tuples of a `FIELD` array line. Returns the 1-based line and
/// the message of the first bad count.
fn check_legacy_counts(bytes: &[u8]) -> Result<(), (usize, String)> {
    let size = bytes.len() as u128;
    for (i, raw) in bytes.split(|&b| b == b'\n').enumerate() {
        // Binary payloads are not text; only short text lines can be headers.
        let Some(line) = std::str::from_utf8(raw).ok().filter(|l| l.len() <= 256) else { continue };
        let words: Vec<&str> = line.split_whitespace().collect();
        let Some(&first) = words.first() else { continue };
        let ints: Vec<u128> = words[1..].iter().filter_map(|w| w.parse::<u128>().ok()).collect();
        let values = if LEGACY_COUNT_KEYWORDS.contains(&first) {
            match first {
                "POINTS" => ints.first().map(|n| n.saturating_mul(3)),
                "DIMENSIONS" => Some(ints.iter().fold(1u128, |a, &n| a.saturating_mul(n))),
                _ => ints.iter().copied().max(),
            }
        } else if words.len() == 4 && LEGACY_TYPES.contains(&words[3]) && ints.len() == 2 {
            Some(ints[0].saturating_mul(ints[1]))
        } else {
            None
        };
        if let Some(n) = values.filter(|&n| n > size) {
            return Err((
                i + 1,
                format!(
                    "announces {n} values (`{}`) but the file has only {size} bytes; the header count is wrong \
                     or the file is cut short",
                    line.trim()
                ),
            ));
        }
    }
    Ok(())
}

pub(crate) fn read_mesh(
    path: &Path,
    property_array: &str,
    node_id_array: Option<&str>,
) -> Result<MeshData, ModelError> {
    let ext = path.extension().and_then(|e| e.to_str()).map(str::to_ascii_lowercase);
    if !matches!(ext.as_deref(), Some("vtk" | "vtu")) {
        return Err(mesh_error(
            path,
            "file name",
            "is not a .vtk (legacy) or .vtu (XML) file; give an unstructured grid in one of those formats",
        ));
    }
    if !path.is_file() {
        return Err(mesh_error(
            path,
            "file",
            "does not exist or is not a file; give the path relative to the model file",
        ));
    }
    if ext.as_deref() == Some("vtk") {
        let bytes = std::fs::read(path)
            .map_err(|e| mesh_error(path, "file", format!("cannot be read ({e}); check the path and permissions")))?;
        check_legacy_counts(&bytes).map_err(|(line, message)| mesh_error(path, format!("line {line}"), message))?;
    }
    let read = import_quietly(path);
    let vtk = match read {
        Ok(Ok(v)) => v,
        Ok(Err(e)) => {
            return Err(mesh_error(
                path,
                "file",
                format!(
                    "cannot be read as VTK ({e}); antinode reads legacy .vtk (ASCII or big-endian binary) and \
                     uncompressed .vtu"
                ),
            ));
        }
        Err(_) => {
            return Err(mesh_error(
                path,
                "file",
                "cannot be read as VTK (the reader stopped on malformed content); check the file in a VTK viewer",
            ));
        }
    };
    let pieces = match vtk.data {
        DataSet::UnstructuredGrid { pieces, .. } => pieces,
        other => {
            let kind = match other {
                DataSet::ImageData { .. } => "image data",
                DataSet::StructuredGrid { .. } => "a structured grid",
                DataSet::RectilinearGrid { .. } => "a rectilinear grid",
                DataSet::PolyData { .. } => "poly data",
                _ => "field data",
            };
            return Err(mesh_error(
                path,
                "data set",
                format!("is {kind}; antinode imports unstructured grids (DATASET UNSTRUCTURED_GRID, or .vtu)"),
            ));
        }
    };
    let mut data = MeshData {
        path: path.to_path_buf(),
        points: Vec::new(),
        cells: Vec::new(),
        node_ids: None,
        skipped_vertices: 0,
    };
    let mut node_ids: Vec<u64> = Vec::new();
    let mut cell_base = 0usize;
    for (pi, piece) in pieces.into_iter().enumerate() {
        let Piece::Inline(piece) = piece else {
            return Err(mesh_error(
                path,
                format!("piece {pi}"),
                "refers to another file (a parallel data set); give a serial file with the data inline",
            ));
        };
        let base = data.points.len();
        let coords: Vec<f64> = match piece.points {
            IOBuffer::F64(v) => v,
            IOBuffer::F32(v) => v.into_iter().map(f64::from).collect(),
            other => other.cast_into::<f64>().ok_or_else(|| {
                mesh_error(path, format!("piece {pi} points"), "are not numbers; give float or double coordinates")
            })?,
        };
        if coords.len() % 3 != 0 {
            return Err(mesh_error(path, format!("piece {pi} points"), "do not come in triples (x, y, z)"));
        }
        for (k, p) in coords.chunks_exact(3).enumerate() {
            let p = [p[0], p[1], p[2]];
            if !p.iter().all(|v| v.is_finite()) {
                return Err(mesh_error(
                    path,
                    format!("point {}", base + k),
                    format!("has coordinates {p:?} that are not finite"),
                ));
            }
            data.points.push(p);
        }
        let n_points = data.points.len() - base;
        let n_cells = piece.cells.types.len();
        let cell_points = cell_point_lists(path, pi, piece.cells.cell_verts, n_cells)?;
        let properties = int_array(path, &piece.data.cell, property_array, n_cells, "cell", &format!("piece {pi}"))?;
        if let Some(name) = node_id_array {
            let ids = int_array(path, &piece.data.point, name, n_points, "point", &format!("piece {pi}"))?;
            for (k, id) in ids.into_iter().enumerate() {
                let id = u64::try_from(id).ok().filter(|&v| v > 0).ok_or_else(|| {
                    mesh_error(
                        path,
                        format!("point {}", base + k),
                        format!("has node id {id} in the array \"{name}\"; node ids are positive integers"),
                    )
                })?;
                node_ids.push(id);
            }
        }
        for (c, (ty, pts)) in piece.cells.types.iter().zip(cell_points).enumerate() {
            let index = cell_base + c;
            for &p in &pts {
                if p >= n_points {
                    return Err(mesh_error(
                        path,
                        format!("cell {index}"),
                        format!("refers to point {p}, but its piece has {n_points} points"),
                    ));
                }
            }
            let pts: Vec<usize> = pts.into_iter().map(|p| p + base).collect();
            let property = properties[c];
            let expect = |n: usize, name: &str| -> Result<(), ModelError> {
                if pts.len() == n {
                    Ok(())
                } else {
                    Err(mesh_error(
                        path,
                        format!("cell {index}"),
                        format!("is {name} with {} points instead of {n}", pts.len()),
                    ))
                }
            };
            match ty {
                CellType::Vertex | CellType::PolyVertex => data.skipped_vertices += 1,
                CellType::Line => {
                    expect(2, "a line")?;
                    data.cells.push(MeshCell { index, segment: 0, kind: CellKind::Beam, points: pts, property });
                }
                CellType::PolyLine => {
                    if pts.len() < 2 {
                        return Err(mesh_error(
                            path,
                            format!("cell {index}"),
                            format!("is a polyline with {} point(s); a polyline needs at least 2", pts.len()),
                        ));
                    }
                    for (s, w) in pts.windows(2).enumerate() {
                        data.cells.push(MeshCell {
                            index,
                            segment: s,
                            kind: CellKind::Beam,
                            points: w.to_vec(),
                            property,
                        });
                    }
                }
                CellType::Triangle => {
                    expect(3, "a triangle")?;
                    data.cells.push(MeshCell { index, segment: 0, kind: CellKind::Triangle, points: pts, property });
                }
                CellType::Quad => {
                    expect(4, "a quad")?;
                    data.cells.push(MeshCell { index, segment: 0, kind: CellKind::Quad, points: pts, property });
                }
                other => {
                    return Err(mesh_error(
                        path,
                        format!("cell {index}"),
                        format!(
                            "has VTK cell type {} ({}), which antinode cannot use; it imports lines and polylines \
                             (beams), triangles and quads (shells), and skips vertices; export the surface or \
                             wire-frame of the part, split into linear triangles or quads",
                            *other as u8,
                            cell_type_name(*other)
                        ),
                    ));
                }
            }
        }
        cell_base += n_cells;
    }
    if node_id_array.is_some() {
        data.node_ids = Some(node_ids);
    }
    Ok(data)
}

/// Each cell's point indices, from either connectivity layout; malformed layouts are errors.
fn cell_point_lists(
    path: &Path,
    piece: usize,
    verts: VertexNumbers,
    n_cells: usize,
) -> Result<Vec<Vec<usize>>, ModelError> {
    let bad = |what: String| mesh_error(path, format!("piece {piece} cells"), what);
    let mut out = Vec::with_capacity(n_cells);
    match verts {
        VertexNumbers::Legacy { num_cells, vertices } => {
            if num_cells as usize != n_cells {
                return Err(bad(format!("number {num_cells} differs from the {n_cells} cell types")));
            }
            let mut k = 0usize;
            for c in 0..n_cells {
                let Some(&n) = vertices.get(k) else {
                    return Err(bad(format!("list ends before cell {c}")));
                };
                let end = k + 1 + n as usize;
                let Some(list) = vertices.get(k + 1..end) else {
                    return Err(bad(format!("list ends inside cell {c}")));
                };
                out.push(list.iter().map(|&v| v as usize).collect());
                k = end;
            }
        }
        VertexNumbers::XML { connectivity, offsets } => {
            if offsets.len() != n_cells {
                return Err(bad(format!("have {} offsets for {n_cells} cell types", offsets.len())));
            }
            let mut start = 0usize;
            for (c, &end) in offsets.iter().enumerate() {
                let end = end as usize;
                let Some(list) = connectivity.get(start..end) else {
                    return Err(bad(format!("offset of cell {c} ({end}) is out of order or past the connectivity")));
                };
                out.push(list.iter().map(|&v| v as usize).collect());
                start = end;
            }
        }
    }
    Ok(out)
}

/// The one-component integer array `name` of `attrs` (cell or point data), `n` values.
fn int_array(
    path: &Path,
    attrs: &[Attribute],
    name: &str,
    n: usize,
    what: &str,
    piece: &str,
) -> Result<Vec<i64>, ModelError> {
    let mut found: Option<(&IOBuffer, usize)> = None;
    let mut names: Vec<String> = Vec::new();
    for a in attrs {
        match a {
            Attribute::DataArray(d) => {
                names.push(format!("\"{}\"", d.name));
                if d.name == name {
                    found = Some((&d.data, d.num_comp()));
                }
            }
            Attribute::Field { data_array, .. } => {
                for f in data_array {
                    names.push(format!("\"{}\"", f.name));
                    if f.name == name {
                        found = Some((&f.data, f.num_comp()));
                    }
                }
            }
        }
    }
    let at = format!("{what} data \"{name}\"");
    let Some((buf, comps)) = found else {
        let have = if names.is_empty() {
            format!("it has no {what} data")
        } else {
            format!("its {what} arrays are {}", names.join(", "))
        };
        return Err(mesh_error(
            path,
            at,
            format!("is missing ({piece}); {have}; name the integer {what} array in the model, or add one"),
        ));
    };
    if comps != 1 {
        return Err(mesh_error(path, at, format!("has {comps} components; it must have one integer per {what}")));
    }
    let values: Option<Vec<i64>> = match buf {
        IOBuffer::U8(v) => Some(v.iter().map(|&x| i64::from(x)).collect()),
        IOBuffer::I8(v) => Some(v.iter().map(|&x| i64::from(x)).collect()),
        IOBuffer::U16(v) => Some(v.iter().map(|&x| i64::from(x)).collect()),
        IOBuffer::I16(v) => Some(v.iter().map(|&x| i64::from(x)).collect()),
        IOBuffer::U32(v) => Some(v.iter().map(|&x| i64::from(x)).collect()),
        IOBuffer::I32(v) => Some(v.iter().map(|&x| i64::from(x)).collect()),
        IOBuffer::U64(v) => v.iter().map(|&x| i64::try_from(x).ok()).collect(),
        IOBuffer::I64(v) => Some(v.clone()),
        _ => {
            return Err(mesh_error(
                path,
                at,
                format!(
                    "holds {:?} values, not integers; write it as an integer array (Int32 or Int64)",
                    buf.scalar_type()
                ),
            ));
        }
    };
    let Some(values) = values else {
        return Err(mesh_error(path, at, "holds a value too large for a 64-bit signed integer"));
    };
    if values.len() != n {
        return Err(mesh_error(path, at, format!("has {} values for {n} {what}s ({piece})", values.len())));
    }
    Ok(values)
}

/// Rewrites the relative mesh file names of `model` (relative to `folder`, the model file's
/// folder) as absolute paths, so that a copy of the model written to another folder (such as a
/// designed model in an output folder) still finds its meshes.
pub fn resolve_mesh_files(model: &mut crate::model::Model, folder: &Path) {
    for m in &mut model.meshes {
        let joined = folder.join(&m.file);
        let absolute = std::fs::canonicalize(&joined)
            .unwrap_or_else(|_| std::env::current_dir().map(|d| d.join(&joined)).unwrap_or(joined.clone()));
        m.file = absolute.to_string_lossy().into_owned();
    }
}

/// A readable name of a VTK cell type.
fn cell_type_name(t: CellType) -> String {
    let s = format!("{t:?}");
    let mut out = String::new();
    for (i, ch) in s.chars().enumerate() {
        if ch.is_uppercase() && i > 0 {
            out.push(' ');
        }
        out.push(ch.to_ascii_lowercase());
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;
    use vtkio::model::{Attributes, ByteOrder, Cells, DataArray, ElementType, UnstructuredGridPiece, Version};

    struct Dir(PathBuf);
    impl Dir {
        fn new(tag: &str) -> Self {
            let d = std::env::temp_dir().join(format!("antinode-import-{tag}-{}", std::process::id()));
            std::fs::create_dir_all(&d).ok();
            Self(d)
        }
    }
    impl Drop for Dir {
        fn drop(&mut self) {
            std::fs::remove_dir_all(&self.0).ok();
        }
    }

    /// Four points of a unit square, cells as given, cell array `property` with `props`.
    fn grid(types: Vec<CellType>, conn: Vec<u64>, offsets: Vec<u64>, cell: Vec<Attribute>) -> Vtk {
        Vtk {
            version: Version::new((1, 0)),
            title: "test".into(),
            byte_order: ByteOrder::BigEndian,
            file_path: None,
            data: DataSet::inline(UnstructuredGridPiece {
                points: IOBuffer::F64(vec![0.0, 0.0, 0.0, 1.0, 0.0, 0.0, 1.0, 1.0, 0.0, 0.0, 1.0, 0.0, 0.5, 0.5, 0.0]),
                cells: Cells { cell_verts: VertexNumbers::XML { connectivity: conn, offsets }, types },
                data: Attributes { point: Vec::new(), cell },
            }),
        }
    }

    fn prop(values: Vec<i32>) -> Vec<Attribute> {
        vec![Attribute::scalars("property", 1).with_data(values)]
    }

    fn write_vtu(dir: &Dir, name: &str, vtk: Vtk) -> PathBuf {
        let p = dir.0.join(name);
        let mut bytes = Vec::new();
        vtk.write_xml(&mut bytes).unwrap_or_else(|e| panic!("{e}"));
        std::fs::write(&p, bytes).unwrap_or_else(|e| panic!("{e}"));
        p
    }

    fn err(p: &Path, array: &str) -> String {
        read_mesh(p, array, None).err().map(|e| e.to_string()).unwrap_or_default()
    }

    /// Found by the `mesh` fuzz target: an XML piece whose points are missing makes vtkio panic; the
    /// import reports it as an error on the file and prints no panic message.
    #[test]
    fn a_piece_without_points_is_an_error_not_a_crash() {
        let d = Dir::new("nopoints");
        let p = d.0.join("m.vtu");
        let text = r#"<VTKFile type="UnstructuredGrid" version="1.0" byte_order="BigEndian" header_type="UInt64"><UnstructuredGrid><Piece NumberOfPoints="42" NumberOfCells="30" NumberOfLines="0" NumberOfSAAAAGwAAAAAAwAAAAAAQAAADQAAAls></Piece></UnstructuredGrid></VTKFile>"#;
        std::fs::write(&p, text).unwrap_or_else(|e| panic!("{e}"));
        let e = err(&p, "property");
        assert!(e.contains("m.vtu") && e.contains("cannot be read as VTK"), "{e}");
        // The panic hook is back in place afterwards.
        assert!(std::panic::catch_unwind(|| panic!("still reported")).is_err());
    }

    #[test]
    fn each_kept_cell_type_becomes_beams_or_shells() {
        let d = Dir::new("types");
        // line, polyline of 3 points, triangle, quad, vertex
        let vtk = grid(
            vec![CellType::Line, CellType::PolyLine, CellType::Triangle, CellType::Quad, CellType::Vertex],
            vec![0, 1, 1, 2, 3, 0, 1, 4, 0, 1, 2, 3, 4],
            vec![2, 5, 8, 12, 13],
            prop(vec![7, 8, 9, 10, 11]),
        );
        let p = write_vtu(&d, "m.vtu", vtk);
        let m = read_mesh(&p, "property", None).unwrap_or_else(|e| panic!("{e}"));
        assert_eq!(m.points.len(), 5);
        assert_eq!(m.skipped_vertices, 1);
        let kinds: Vec<(usize, usize, CellKind, Vec<usize>, i64)> =
            m.cells.iter().map(|c| (c.index, c.segment, c.kind, c.points.clone(), c.property)).collect();
        assert_eq!(
            kinds,
            vec![
                (0, 0, CellKind::Beam, vec![0, 1], 7),
                (1, 0, CellKind::Beam, vec![1, 2], 8),
                (1, 1, CellKind::Beam, vec![2, 3], 8),
                (2, 0, CellKind::Triangle, vec![0, 1, 4], 9),
                (3, 0, CellKind::Quad, vec![0, 1, 2, 3], 10),
            ]
        );
    }

    #[test]
    fn legacy_ascii_and_big_endian_binary_read_alike() {
        let d = Dir::new("legacy");
        let vtk = grid(vec![CellType::Quad, CellType::Line], vec![0, 1, 2, 3, 3, 4], vec![4, 6], prop(vec![1, 2]));
        let mut ascii = String::new();
        vtk.clone().write_legacy_ascii(&mut ascii).unwrap_or_else(|e| panic!("{e}"));
        let pa = d.0.join("a.vtk");
        std::fs::write(&pa, ascii).unwrap_or_else(|e| panic!("{e}"));
        let mut binary = Vec::new();
        vtk.write_legacy(&mut binary).unwrap_or_else(|e| panic!("{e}"));
        let pb = d.0.join("b.vtk");
        std::fs::write(&pb, binary).unwrap_or_else(|e| panic!("{e}"));
        let a = read_mesh(&pa, "property", None).unwrap_or_else(|e| panic!("{e}"));
        let b = read_mesh(&pb, "property", None).unwrap_or_else(|e| panic!("{e}"));
        assert_eq!(a.points, b.points);
        assert_eq!(a.cells, b.cells);
        assert_eq!(a.cells.len(), 2);
        assert_eq!(a.points[4], [0.5, 0.5, 0.0]);
    }

    #[test]
    fn little_endian_legacy_binary_is_an_error_not_a_misread() {
        // Legacy binary VTK is big-endian by definition; a little-endian file must not be read as
        // if it were (that would give wrong coordinates silently).
        let d = Dir::new("le");
        let mut vtk = grid(vec![CellType::Quad, CellType::Line], vec![0, 1, 2, 3, 3, 4], vec![4, 6], prop(vec![1, 2]));
        vtk.byte_order = ByteOrder::LittleEndian;
        let mut binary = Vec::new();
        vtk.write_legacy(&mut binary).unwrap_or_else(|e| panic!("{e}"));
        let p = d.0.join("le.vtk");
        std::fs::write(&p, binary).unwrap_or_else(|e| panic!("{e}"));
        let e = err(&p, "property");
        assert!(e.contains("le.vtk") && e.contains("cannot be read as VTK"), "{e}");
    }

    #[test]
    fn unsupported_cell_type_names_file_cell_and_type() {
        let d = Dir::new("tetra");
        let vtk = grid(vec![CellType::Line, CellType::Tetra], vec![0, 1, 0, 1, 2, 4], vec![2, 6], prop(vec![1, 1]));
        let p = write_vtu(&d, "solid.vtu", vtk);
        let e = err(&p, "property");
        assert!(e.contains("solid.vtu") && e.contains("cell 1") && e.contains("type 10 (tetra)"), "{e}");
        let vtk = grid(vec![CellType::QuadraticTriangle], vec![0, 1, 2, 3, 4, 0], vec![6], prop(vec![1]));
        let p = write_vtu(&d, "quadratic.vtu", vtk);
        let e = err(&p, "property");
        assert!(e.contains("cell 0") && e.contains("type 22 (quadratic triangle)"), "{e}");
    }

    #[test]
    fn property_array_errors_name_the_array() {
        let d = Dir::new("arrays");
        let p = write_vtu(&d, "none.vtu", grid(vec![CellType::Line], vec![0, 1], vec![2], Vec::new()));
        let e = err(&p, "property");
        assert!(e.contains("none.vtu") && e.contains("\"property\"") && e.contains("is missing"), "{e}");
        let other = vec![Attribute::scalars("tag", 1).with_data(vec![1i32])];
        let p = write_vtu(&d, "other.vtu", grid(vec![CellType::Line], vec![0, 1], vec![2], other));
        let e = err(&p, "property");
        assert!(e.contains("its cell arrays are \"tag\""), "{e}");
        let float = vec![Attribute::scalars("property", 1).with_data(vec![1.0f64])];
        let p = write_vtu(&d, "float.vtu", grid(vec![CellType::Line], vec![0, 1], vec![2], float));
        let e = err(&p, "property");
        assert!(e.contains("not integers"), "{e}");
        let two = vec![Attribute::DataArray(DataArray {
            name: "property".into(),
            elem: ElementType::Generic(2),
            data: IOBuffer::I32(vec![1, 2]),
        })];
        let p = write_vtu(&d, "two.vtu", grid(vec![CellType::Line], vec![0, 1], vec![2], two));
        let e = err(&p, "property");
        assert!(e.contains("2 components"), "{e}");
    }

    #[test]
    fn node_ids_come_from_a_point_array_and_must_be_positive() {
        let d = Dir::new("ids");
        let mut vtk = grid(vec![CellType::Line], vec![0, 1], vec![2], prop(vec![1]));
        if let DataSet::UnstructuredGrid { pieces, .. } = &mut vtk.data {
            if let Some(Piece::Inline(p)) = pieces.first_mut() {
                p.data.point.push(Attribute::scalars("node_id", 1).with_data(vec![10i64, 11, 12, 13, 14]));
            }
        }
        let p = write_vtu(&d, "ids.vtu", vtk.clone());
        let m = read_mesh(&p, "property", Some("node_id")).unwrap_or_else(|e| panic!("{e}"));
        assert_eq!(m.node_ids, Some(vec![10, 11, 12, 13, 14]));
        if let DataSet::UnstructuredGrid { pieces, .. } = &mut vtk.data {
            if let Some(Piece::Inline(p)) = pieces.first_mut() {
                p.data.point = vec![Attribute::scalars("node_id", 1).with_data(vec![10i64, 0, 12, 13, 14])];
            }
        }
        let p = write_vtu(&d, "zero.vtu", vtk);
        let e = read_mesh(&p, "property", Some("node_id")).err().map(|e| e.to_string()).unwrap_or_default();
        assert!(e.contains("point 1") && e.contains("node id 0"), "{e}");
    }

    /// Found by the `mesh` fuzz target (input kept in fuzz/regressions/mesh/): a legacy file whose
    /// POINTS header announces 1942857945 points made vtkio reserve 46 GB and abort the process.
    #[test]
    fn a_huge_header_count_is_an_error_not_an_abort() {
        let d = Dir::new("huge");
        let input = std::fs::read(
            Path::new(env!("CARGO_MANIFEST_DIR")).join("../fuzz/regressions/mesh/legacy-huge-point-count"),
        )
        .expect("the committed fuzz input");
        let p = d.0.join("huge.vtk");
        std::fs::write(&p, &input[1..]).ok();
        let e = err(&p, "property");
        assert!(e.contains("line 5") && e.contains("announces 5828573835 values") && e.contains("167 bytes"), "{e}");
        // Counts that fit pass the check, whatever the numbers in the data lines.
        assert!(check_legacy_counts(b"POINTS 2 float\n0 0 5000000 1 1 1\n").is_ok());
        assert_eq!(check_legacy_counts(b"x\nCELLS 1 900\n").map_err(|e| e.0), Err(2));
        assert!(check_legacy_counts(b"FIELD FieldData 1\nprop 1 99 int\n1\n").is_err());
    }

    #[test]
    fn wrong_point_counts_and_bad_files_are_errors() {
        let d = Dir::new("bad");
        let p = write_vtu(&d, "tri.vtu", grid(vec![CellType::Triangle], vec![0, 1], vec![2], prop(vec![1])));
        assert!(err(&p, "property").contains("a triangle with 2 points instead of 3"));
        let p = write_vtu(&d, "far.vtu", grid(vec![CellType::Line], vec![0, 9], vec![2], prop(vec![1])));
        assert!(err(&p, "property").contains("refers to point 9"));
        let p = d.0.join("junk.vtu");
        std::fs::write(&p, "<VTKFile type=\"UnstructuredGrid\"><oops").ok();
        assert!(err(&p, "property").contains("cannot be read as VTK"));
        let p = d.0.join("junk.vtk");
        std::fs::write(&p, "# vtk DataFile Version 2.0\nx\nASCII\nDATASET UNSTRUCTURED_GRID\nPOINTS 2 float\n0 0").ok();
        assert!(err(&p, "property").contains("cannot be read as VTK"));
        assert!(err(&d.0.join("missing.vtu"), "property").contains("does not exist"));
        assert!(err(&d.0.join("m.stl"), "property").contains("is not a .vtk"));
    }

    /// A model importing `file` (in `dir`) with `properties` and `regions`.
    fn model(dir: &Dir, file: &str, properties: &str, extra: &str) -> Result<crate::Structure, ModelError> {
        let text = format!(
            r#"{{
            "materials": {{"s": {{"youngs_modulus": 2e11, "poisson_ratio": 0.3, "density": 7800}}}},
            "sections": {{"r": {{"circle": {{"diameter": 0.01}}}}}},
            "meshes": [{{"name": "part", "file": "{file}", "properties": {properties}, "scale": 0.5, "offset": [0, 0, 2]}}]
            {extra}
        }}"#
        );
        let m = crate::io::parse_model(&text, Path::new("t.json"))?;
        crate::validate::validate_in(&m, &dir.0)
    }

    const SHELL_AND_BEAM: &str = r#"{"1": {"shell": {"thickness": 0.002, "material": "s"}},
                                     "2": {"beam": {"section": "r", "material": "s", "orientation": [0, 0, 1]}}}"#;

    /// A quad (property 1), a triangle (property 1) and a line (property `line_prop`).
    fn plate(dir: &Dir, name: &str, line_prop: i32) -> PathBuf {
        let vtk = grid(
            vec![CellType::Quad, CellType::Triangle, CellType::Line],
            vec![0, 1, 2, 3, 1, 4, 2, 3, 4],
            vec![4, 7, 9],
            prop(vec![1, 1, line_prop]),
        );
        write_vtu(dir, name, vtk)
    }

    #[test]
    fn imported_cells_become_elements_with_their_properties_scale_and_offset() {
        let d = Dir::new("model");
        plate(&d, "p.vtu", 2);
        let s = model(&d, "p.vtu", SHELL_AND_BEAM, "").unwrap_or_else(|e| panic!("{e}"));
        assert_eq!(s.nodes.len(), 5);
        assert_eq!(s.nodes[2].xyz, [0.5, 0.5, 2.0]);
        assert_eq!(s.shells.len(), 2);
        assert_eq!(s.beams.len(), 1);
        assert_eq!(s.beams[0].label, "mesh \"part\" cell 2");
        assert_eq!(s.beams[0].orientation, [0.0, 0.0, 1.0]);
        assert!(s.shells.iter().all(|e| e.thickness == 0.002));
        assert_eq!(s.meshes[0].property_nodes.get(&2), Some(&vec![3, 4]));
        // Shell area: the quad (0.5 × 0.5) and the triangle under the scale 0.5.
        let area: f64 = s.shells.iter().map(|e| e.shape.area).sum();
        assert!((area - (0.25 + 0.25 * 0.5 * 0.5)).abs() < 1e-12, "{area}");
    }

    #[test]
    fn mesh_regions_select_all_points_or_one_property() {
        let d = Dir::new("regions");
        plate(&d, "p.vtu", 2);
        let regions = r#", "regions": {"all": {"mesh": "part"}, "bar": {"mesh": "part", "property": 2},
                                          "corner": {"box": [[0.4, 0.4, 1.9], [0.6, 0.6, 2.1]]}},
                           "supports": [{"at": {"region": "bar"}, "fixed": "clamped"}]"#;
        let s = model(&d, "p.vtu", SHELL_AND_BEAM, regions).unwrap_or_else(|e| panic!("{e}"));
        assert_eq!(s.regions["all"], vec![0, 1, 2, 3, 4]);
        assert_eq!(s.regions["bar"], vec![3, 4]);
        assert_eq!(s.regions["corner"], vec![2]);
        assert_eq!(s.fixed[3], [true; 6]);
        let bad = r#", "regions": {"none": {"mesh": "part", "property": 7}}"#;
        let e = model(&d, "p.vtu", SHELL_AND_BEAM, bad).err().map(|e| e.to_string()).unwrap_or_default();
        assert!(
            e.contains("regions.none.property") && e.contains("property 7") && e.contains("selects no node"),
            "{e}"
        );
        let bad = r#", "regions": {"none": {"mesh": "other"}}"#;
        let e = model(&d, "p.vtu", SHELL_AND_BEAM, bad).err().map(|e| e.to_string()).unwrap_or_default();
        assert!(e.contains("mesh \"other\" is not defined"), "{e}");
    }

    #[test]
    fn unknown_and_wrong_kind_properties_name_file_cell_and_value() {
        let d = Dir::new("props");
        plate(&d, "p.vtu", 3);
        let e = model(&d, "p.vtu", SHELL_AND_BEAM, "").err().map(|e| e.to_string()).unwrap_or_default();
        assert!(e.contains("p.vtu: cell 2 (a line) has property 3") && e.contains("defined: 1, 2"), "{e}");
        plate(&d, "q.vtu", 1);
        let e = model(&d, "q.vtu", SHELL_AND_BEAM, "").err().map(|e| e.to_string()).unwrap_or_default();
        assert!(e.contains("q.vtu: cell 2 is a line with property 1, which is a shell property"), "{e}");
        let beams_only = r#"{"1": {"beam": {"section": "r", "material": "s"}}}"#;
        let e = model(&d, "q.vtu", beams_only, "").err().map(|e| e.to_string()).unwrap_or_default();
        assert!(e.contains("cell 0 is a quad with property 1, which is a beam property"), "{e}");
        let e = model(&d, "q.vtu", r#"{"one": {"shell": {"thickness": 0.002, "material": "s"}}}"#, "")
            .err()
            .map(|e| e.to_string())
            .unwrap_or_default();
        assert!(e.contains("properties.\"one\"") && e.contains("not a property id"), "{e}");
        let e = model(&d, "q.vtu", r#"{"1": {"shell": {"thickness": 0, "material": "s"}}}"#, "")
            .err()
            .map(|e| e.to_string())
            .unwrap_or_default();
        assert!(e.contains("thickness = 0"), "{e}");
        let e = model(&d, "q.vtu", r#"{"1": {"shell": {"thickness": 0.001, "material": "x"}}}"#, "")
            .err()
            .map(|e| e.to_string())
            .unwrap_or_default();
        assert!(e.contains("material \"x\" is not defined"), "{e}");
    }

    #[test]
    fn coincident_points_are_kept_apart_with_a_warning() {
        let d = Dir::new("coincident");
        // Two triangles on the same four corners, the second with its own copy of corner 2.
        let mut vtk =
            grid(vec![CellType::Triangle, CellType::Triangle], vec![0, 1, 2, 0, 4, 3], vec![3, 6], prop(vec![1, 1]));
        if let DataSet::UnstructuredGrid { pieces, .. } = &mut vtk.data {
            if let Some(Piece::Inline(p)) = pieces.first_mut() {
                p.points =
                    IOBuffer::F64(vec![0.0, 0.0, 0.0, 1.0, 0.0, 0.0, 1.0, 1.0, 0.0, 0.0, 1.0, 0.0, 1.0, 1.0, 0.0]);
            }
        }
        write_vtu(&d, "c.vtu", vtk);
        let s = model(&d, "c.vtu", SHELL_AND_BEAM, "").unwrap_or_else(|e| panic!("{e}"));
        assert_eq!(s.nodes.len(), 5);
        assert_ne!(s.shells[0].nodes[2], s.shells[1].nodes[1]);
        assert!(s.warnings.iter().any(|w| w.contains("1 point(s)") && w.contains("not joined")), "{:?}", s.warnings);
    }

    #[test]
    fn missing_file_and_duplicate_mesh_names_are_errors() {
        let d = Dir::new("files");
        let e = model(&d, "nothing.vtu", SHELL_AND_BEAM, "").err().map(|e| e.to_string()).unwrap_or_default();
        assert!(e.contains("nothing.vtu") && e.contains("does not exist"), "{e}");
        plate(&d, "p.vtu", 2);
        let text = r#"{"materials": {"s": {"youngs_modulus": 2e11, "poisson_ratio": 0.3, "density": 7800}},
            "meshes": [{"name": "a", "file": "p.vtu", "properties": {}}, {"name": "a", "file": "p.vtu", "properties": {}}]}"#;
        let m = crate::io::parse_model(text, Path::new("t.json")).unwrap_or_else(|e| panic!("{e}"));
        let e = crate::validate::validate_in(&m, &d.0).err().map(|e| e.to_string()).unwrap_or_default();
        assert!(e.contains("meshes[1]") && e.contains("defined twice"), "{e}");
    }

    /// The XML head of a one-quad `.vtu` with `compressor` (an attribute, or empty).
    fn vtu_head(compressor: &str) -> String {
        format!(
            "<?xml version=\"1.0\"?>\n<VTKFile type=\"UnstructuredGrid\" version=\"1.0\" byte_order=\"LittleEndian\" \
             header_type=\"UInt64\"{compressor}>\n<UnstructuredGrid><Piece NumberOfPoints=\"4\" NumberOfCells=\"1\">\n"
        )
    }

    #[test]
    fn ascii_and_appended_vtu_are_read() {
        let d = Dir::new("xmlforms");
        // format="ascii" data arrays.
        let ascii = format!(
            "{}<CellData><DataArray type=\"Int32\" Name=\"property\" format=\"ascii\">1</DataArray></CellData>\
             <Points><DataArray type=\"Float64\" Name=\"Points\" NumberOfComponents=\"3\" format=\"ascii\">\
             0 0 0 0.1 0 0 0.1 0.1 0 0 0.1 0</DataArray></Points>\
             <Cells><DataArray type=\"Int64\" Name=\"connectivity\" format=\"ascii\">0 1 2 3</DataArray>\
             <DataArray type=\"Int64\" Name=\"offsets\" format=\"ascii\">4</DataArray>\
             <DataArray type=\"UInt8\" Name=\"types\" format=\"ascii\">9</DataArray></Cells>\n\
             </Piece></UnstructuredGrid></VTKFile>\n",
            vtu_head("")
        );
        let p = d.0.join("ascii.vtu");
        std::fs::write(&p, ascii).unwrap_or_else(|e| panic!("{e}"));
        let m = read_mesh(&p, "property", None).unwrap_or_else(|e| panic!("{e}"));
        assert_eq!((m.points.len(), m.cells.len(), m.points[2]), (4, 1, [0.1, 0.1, 0.0]));
        // Appended raw data: each block a UInt64 byte count and the little-endian values.
        let blocks: Vec<Vec<u8>> = vec![
            1i32.to_le_bytes().to_vec(),
            [0.0f64, 0.0, 0.0, 0.1, 0.0, 0.0, 0.1, 0.1, 0.0, 0.0, 0.1, 0.0]
                .iter()
                .flat_map(|v| v.to_le_bytes())
                .collect(),
            [0i64, 1, 2, 3].iter().flat_map(|v| v.to_le_bytes()).collect(),
            4i64.to_le_bytes().to_vec(),
            vec![9u8],
        ];
        let mut data = Vec::new();
        let mut offsets = Vec::new();
        for b in &blocks {
            offsets.push(data.len());
            data.extend((b.len() as u64).to_le_bytes());
            data.extend(b);
        }
        let arr = |t: &str, name: &str, nc: usize, k: usize| {
            format!(
                "<DataArray type=\"{t}\" Name=\"{name}\" NumberOfComponents=\"{nc}\" format=\"appended\" offset=\"{}\"/>",
                offsets[k]
            )
        };
        let mut file = format!(
            "{}<CellData>{}</CellData><Points>{}</Points><Cells>{}{}{}</Cells>\n</Piece></UnstructuredGrid>\n\
             <AppendedData encoding=\"raw\">_",
            vtu_head(""),
            arr("Int32", "property", 1, 0),
            arr("Float64", "Points", 3, 1),
            arr("Int64", "connectivity", 1, 2),
            arr("Int64", "offsets", 1, 3),
            arr("UInt8", "types", 1, 4)
        )
        .into_bytes();
        file.extend(data);
        file.extend(b"</AppendedData></VTKFile>\n");
        let p = d.0.join("appended.vtu");
        std::fs::write(&p, file).unwrap_or_else(|e| panic!("{e}"));
        let m = read_mesh(&p, "property", None).unwrap_or_else(|e| panic!("{e}"));
        assert_eq!((m.points.len(), m.cells.len(), m.points[2]), (4, 1, [0.1, 0.1, 0.0]));
        assert_eq!(m.cells[0].kind, CellKind::Quad);
    }

    #[test]
    fn zlib_compressed_vtu_is_a_clear_error() {
        // A one-quad file as VTK writes it with zlib: per array a base64 header (blocks, block
        // size, last size, compressed size) followed by the base64 compressed block.
        let d = Dir::new("zlib");
        let text = format!(
            "{}<CellData><DataArray type=\"Int32\" Name=\"property\" format=\"binary\">\
             AQAAAAAAAAAEAAAAAAAAAAQAAAAAAAAADAAAAAAAAAA=eJxjZGBgAAAACAAC</DataArray></CellData>\
             <Points><DataArray type=\"Float64\" Name=\"Points\" NumberOfComponents=\"3\" format=\"binary\">\
             AQAAAAAAAABgAAAAAAAAAGAAAAAAAAAAFwAAAAAAAAA=eJxjYMAOZs0EgZ32uMQJycP4AOa2Ej0=</DataArray></Points>\
             <Cells><DataArray type=\"Int64\" Name=\"connectivity\" format=\"binary\">\
             AQAAAAAAAAAgAAAAAAAAACAAAAAAAAAAEwAAAAAAAAA=eJxjYIAARijNBKWZoTQAAHAABw==</DataArray>\
             <DataArray type=\"Int64\" Name=\"offsets\" format=\"binary\">\
             AQAAAAAAAAAIAAAAAAAAAAgAAAAAAAAACwAAAAAAAAA=eJxjYYAAAAAoAAU=</DataArray>\
             <DataArray type=\"UInt8\" Name=\"types\" format=\"binary\">\
             AQAAAAAAAAABAAAAAAAAAAEAAAAAAAAACQAAAAAAAAA=eJzjBAAACgAK</DataArray></Cells>\n\
             </Piece></UnstructuredGrid></VTKFile>\n",
            vtu_head(" compressor=\"vtkZLibDataCompressor\"")
        );
        let p = d.0.join("zlib.vtu");
        std::fs::write(&p, text).unwrap_or_else(|e| panic!("{e}"));
        let e = err(&p, "property");
        assert!(e.contains("zlib.vtu") && e.contains("cannot be read as VTK") && e.contains("uncompressed"), "{e}");
    }
}
