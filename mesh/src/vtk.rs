//! VTK XML unstructured-grid (`.vtu`) output of a structure with nodal fields (mode shapes).
//!
//! Cells: beams and node-to-node springs as lines; shells as quads and triangles; point masses and
//! absorbers as vertices at their node. Cell data: `kind` (1 beam, 2 spring, 3 point mass,
//! 4 absorber, 5 shell), `line` (1-based line index, 0 for other cells), `id` (beam or shell id, or
//! position in its list), `thickness` (shell wall thickness in m, 0 for other cells) and `part` (index
//! into [`Structure::element_parts`] names, from 0). Data are written uncompressed (inline base64),
//! which every VTK reader accepts. [`pvd_collection`] writes a `.pvd` collection of such files (a
//! time series, e.g. a mode shape animated over one period).

use std::path::Path;

use vtkio::model::{
    Attribute, Attributes, ByteOrder, CellType, Cells, DataArray, DataSet, ElementType, IOBuffer,
    UnstructuredGridPiece, Version, VertexNumbers, Vtk,
};

use crate::error::ModelError;
use crate::io::write_atomic;
use crate::structure::Structure;

/// A 3-component value per node (e.g. a mode's translations), in node order of the structure.
#[derive(Debug, Clone, PartialEq)]
pub struct NodalVectors {
    /// Array name shown in the viewer.
    pub name: String,
    /// One vector per node.
    pub values: Vec<[f64; 3]>,
}

/// A scalar per node, in node order of the structure.
#[derive(Debug, Clone, PartialEq)]
pub struct NodalScalars {
    /// Array name shown in the viewer.
    pub name: String,
    /// One value per node.
    pub values: Vec<f64>,
}

/// Cell kind codes written in the `kind` cell array.
pub mod kind {
    /// A beam element.
    pub const BEAM: i32 = 1;
    /// A spring between two nodes.
    pub const SPRING: i32 = 2;
    /// A point mass.
    pub const POINT_MASS: i32 = 3;
    /// A tuned absorber.
    pub const ABSORBER: i32 = 4;
    /// A shell element (quadrilateral or triangle).
    pub const SHELL: i32 = 5;
}

/// Builds the VTK document of `structure` with the given nodal fields.
///
/// # Errors
/// [`ModelError::Invalid`] if a field does not have one value per node.
pub fn build_vtu(structure: &Structure, vectors: &[NodalVectors], scalars: &[NodalScalars]) -> Result<Vtk, ModelError> {
    build_vtu_displaced(structure, None, vectors, scalars)
}

/// As [`build_vtu`], with every point moved by `displacement` (one vector per node, in m), e.g. a
/// frame of an animated mode shape.
///
/// # Errors
/// [`ModelError::Invalid`] if a field or the displacement does not have one value per node.
pub fn build_vtu_displaced(
    structure: &Structure,
    displacement: Option<&[[f64; 3]]>,
    vectors: &[NodalVectors],
    scalars: &[NodalScalars],
) -> Result<Vtk, ModelError> {
    let n = structure.nodes.len();
    if let Some(d) = displacement.filter(|d| d.len() != n) {
        return Err(ModelError::Invalid {
            at: "VTK point displacement".into(),
            message: format!("has {} values for {n} nodes", d.len()),
        });
    }
    for v in vectors {
        if v.values.len() != n {
            return Err(ModelError::Invalid {
                at: format!("VTK field {}", v.name),
                message: format!("has {} values for {n} nodes", v.values.len()),
            });
        }
    }
    for s in scalars {
        if s.values.len() != n {
            return Err(ModelError::Invalid {
                at: format!("VTK field {}", s.name),
                message: format!("has {} values for {n} nodes", s.values.len()),
            });
        }
    }
    let points: Vec<f64> = match displacement {
        Some(d) => structure.nodes.iter().zip(d).flat_map(|(p, u)| [0, 1, 2].map(|k| p.xyz[k] + u[k])).collect(),
        None => structure.nodes.iter().flat_map(|p| p.xyz).collect(),
    };
    let parts = structure.element_parts();
    let mut part: Vec<i32> = Vec::new();
    let mut conn: Vec<u64> = Vec::new();
    let mut offsets: Vec<u64> = Vec::new();
    let mut types: Vec<CellType> = Vec::new();
    let mut kinds: Vec<i32> = Vec::new();
    let mut lines: Vec<i32> = Vec::new();
    let mut ids: Vec<i64> = Vec::new();
    let mut thickness: Vec<f64> = Vec::new();
    for b in &structure.beams {
        conn.extend([b.nodes[0] as u64, b.nodes[1] as u64]);
        offsets.push(conn.len() as u64);
        types.push(CellType::Line);
        kinds.push(kind::BEAM);
        lines.push(b.line.map_or(0, |l| l as i32 + 1));
        ids.push(b.id.0 as i64);
        thickness.push(0.0);
    }
    part.extend(parts.beams.iter().map(|&p| p as i32));
    part.extend(parts.shells.iter().map(|&p| p as i32));
    for e in &structure.shells {
        conn.extend(e.nodes.iter().map(|&n| n as u64));
        offsets.push(conn.len() as u64);
        types.push(if e.nodes.len() == 4 { CellType::Quad } else { CellType::Triangle });
        kinds.push(kind::SHELL);
        lines.push(0);
        ids.push(e.id.0 as i64);
        thickness.push(e.thickness);
    }
    for (i, s) in structure.springs.iter().enumerate() {
        if let Some(o) = s.other {
            conn.extend([s.node as u64, o as u64]);
            offsets.push(conn.len() as u64);
            types.push(CellType::Line);
            kinds.push(kind::SPRING);
            lines.push(0);
            ids.push(i as i64 + 1);
            thickness.push(0.0);
            part.push(parts.springs as i32);
        }
    }
    for (i, p) in structure.point_masses.iter().enumerate() {
        conn.push(p.node as u64);
        offsets.push(conn.len() as u64);
        types.push(CellType::Vertex);
        kinds.push(kind::POINT_MASS);
        lines.push(0);
        ids.push(i as i64 + 1);
        thickness.push(0.0);
        part.push(parts.point_masses as i32);
    }
    for (i, a) in structure.absorbers.iter().enumerate() {
        conn.push(a.node as u64);
        offsets.push(conn.len() as u64);
        types.push(CellType::Vertex);
        kinds.push(kind::ABSORBER);
        lines.push(0);
        ids.push(i as i64 + 1);
        thickness.push(0.0);
        part.push(parts.absorbers as i32);
    }
    let mut point_data = Vec::new();
    for v in vectors {
        point_data.push(Attribute::DataArray(DataArray {
            name: v.name.clone(),
            elem: ElementType::Vectors,
            data: IOBuffer::F64(v.values.iter().flatten().copied().collect()),
        }));
    }
    for s in scalars {
        point_data.push(Attribute::scalars(s.name.clone(), 1).with_data(s.values.clone()));
    }
    let cell_data = vec![
        Attribute::scalars("kind", 1).with_data(kinds),
        Attribute::scalars("line", 1).with_data(lines),
        Attribute::scalars("id", 1).with_data(ids),
        Attribute::scalars("thickness", 1).with_data(thickness),
        Attribute::scalars("part", 1).with_data(part),
    ];
    Ok(Vtk {
        version: Version::new((1, 0)),
        title: structure.title.clone(),
        byte_order: ByteOrder::LittleEndian,
        file_path: None,
        data: DataSet::inline(UnstructuredGridPiece {
            points: IOBuffer::F64(points),
            cells: Cells { cell_verts: VertexNumbers::XML { connectivity: conn, offsets }, types },
            data: Attributes { point: point_data, cell: cell_data },
        }),
    })
}

/// Writes `structure` with nodal fields to a `.vtu` file, atomically.
///
/// # Errors
/// [`ModelError::Invalid`] for a field of the wrong length, [`ModelError::Write`] if the file
/// cannot be written.
pub fn write_vtu(
    path: &Path,
    structure: &Structure,
    vectors: &[NodalVectors],
    scalars: &[NodalScalars],
) -> Result<(), ModelError> {
    let vtk = build_vtu(structure, vectors, scalars)?;
    let mut bytes = Vec::new();
    vtk.write_xml(&mut bytes).map_err(|e| ModelError::Write { path: path.to_path_buf(), message: e.to_string() })?;
    write_atomic(path, &bytes).map_err(|e| ModelError::Write { path: path.to_path_buf(), message: e.to_string() })
}

/// The VTK document of `structure` as `.vtu` bytes (see [`build_vtu_displaced`]).
///
/// # Errors
/// [`ModelError::Invalid`] for a field of the wrong length or a document vtkio cannot write.
pub fn vtu_bytes(
    structure: &Structure,
    displacement: Option<&[[f64; 3]]>,
    vectors: &[NodalVectors],
    scalars: &[NodalScalars],
) -> Result<Vec<u8>, ModelError> {
    let vtk = build_vtu_displaced(structure, displacement, vectors, scalars)?;
    let mut bytes = Vec::new();
    vtk.write_xml(&mut bytes).map_err(|e| ModelError::Invalid { at: "VTK output".into(), message: e.to_string() })?;
    Ok(bytes)
}

/// A `.pvd` collection (VTK's XML time-series index) of `(time, file name)` entries; file names are
/// relative to the collection's folder. Names are written as given: they must not hold `"`, `<` or `&`.
pub fn pvd_collection(entries: &[(f64, String)]) -> String {
    let mut out = String::from(
        "<?xml version=\"1.0\"?>\n<VTKFile type=\"Collection\" version=\"0.1\" byte_order=\"LittleEndian\">\n  <Collection>\n",
    );
    for (t, file) in entries {
        out.push_str(&format!("    <DataSet timestep=\"{t:e}\" group=\"\" part=\"0\" file=\"{file}\"/>\n"));
    }
    out.push_str("  </Collection>\n</VTKFile>\n");
    out
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::io::parse_model;
    use crate::validate::validate;

    #[test]
    fn round_trip_through_vtkio_keeps_points_cells_and_fields() {
        let text = r#"{
            "materials": {"s": {"youngs_modulus": 2e11, "poisson_ratio": 0.3, "density": 7800}},
            "sections": {"r": {"circle": {"diameter": 0.01}}},
            "lines": [{"name": "a", "from": [0,0,0], "to": [1,0,0], "elements": 4, "section": "r", "material": "s"}],
            "absorbers": [{"at": {"line": "a", "at": 0.5}, "direction": "z", "mass": 0.1, "stiffness": 100, "damping": 1}]
        }"#;
        let model = parse_model(text, Path::new("t.json")).ok();
        let s = model.as_ref().and_then(|m| validate(m).ok());
        let Some(s) = s else { panic!("test model must be valid") };
        let field = NodalVectors { name: "mode_1".into(), values: (0..5).map(|i| [0.0, 0.0, i as f64]).collect() };
        let dir = std::env::temp_dir().join(format!("antinode-vtk-{}", std::process::id()));
        std::fs::create_dir_all(&dir).ok();
        let path = dir.join("t.vtu");
        assert!(write_vtu(&path, &s, &[field], &[]).is_ok());
        let back = Vtk::import(&path);
        let Ok(back) = back else { panic!("vtkio must read its own file") };
        let DataSet::UnstructuredGrid { pieces, .. } = back.data else { panic!("unstructured grid expected") };
        let Some(vtkio::model::Piece::Inline(piece)) = pieces.into_iter().next() else { panic!("inline piece") };
        assert_eq!(piece.num_points(), 5);
        assert_eq!(piece.cells.types.len(), 5); // 4 beams + 1 absorber
        assert_eq!(piece.cells.types[4], CellType::Vertex);
        let names: Vec<String> = piece
            .data
            .point
            .iter()
            .map(|a| match a {
                Attribute::DataArray(d) => d.name.clone(),
                Attribute::Field { name, .. } => name.clone(),
            })
            .collect();
        assert_eq!(names, vec!["mode_1".to_string()]);
        std::fs::remove_dir_all(&dir).ok();
    }

    #[test]
    fn shells_become_quad_and_triangle_cells_with_their_thickness() {
        let text = r#"{
            "materials": {"s": {"youngs_modulus": 2e11, "poisson_ratio": 0.3, "density": 7800}},
            "nodes": [{"id": 1, "xyz": [0,0,0]}, {"id": 2, "xyz": [1,0,0]}, {"id": 3, "xyz": [1,1,0]},
                      {"id": 4, "xyz": [0,1,0]}, {"id": 5, "xyz": [2,0.5,0]}],
            "shells": [{"id": 7, "nodes": [1, 2, 3, 4], "thickness": 0.002, "material": "s"},
                       {"id": 8, "nodes": [2, 5, 3], "thickness": 0.003, "material": "s"}]
        }"#;
        let s = parse_model(text, Path::new("t.json")).ok().and_then(|m| validate(&m).ok());
        let Some(s) = s else { panic!("test model must be valid") };
        let vtk = build_vtu(&s, &[], &[]);
        let Ok(Vtk { data: DataSet::UnstructuredGrid { pieces, .. }, .. }) = vtk else {
            panic!("an unstructured grid")
        };
        let Some(vtkio::model::Piece::Inline(piece)) = pieces.into_iter().next() else { panic!("inline piece") };
        assert_eq!(piece.cells.types, vec![CellType::Quad, CellType::Triangle]);
        let VertexNumbers::XML { connectivity, offsets } = &piece.cells.cell_verts else { panic!("XML cells") };
        assert_eq!(connectivity, &vec![0, 1, 2, 3, 1, 4, 2]);
        assert_eq!(offsets, &vec![4, 7]);
        let thickness = piece.data.cell.iter().find_map(|a| match a {
            Attribute::DataArray(d) if d.name == "thickness" => Some(d.data.clone()),
            _ => None,
        });
        assert_eq!(thickness, Some(IOBuffer::F64(vec![0.002, 0.003])));
        let part = piece.data.cell.iter().find_map(|a| match a {
            Attribute::DataArray(d) if d.name == "part" => Some(d.data.clone()),
            _ => None,
        });
        // Explicit shells form one part.
        assert_eq!(part, Some(IOBuffer::I32(vec![0, 0])));
    }

    #[test]
    fn displaced_points_and_a_collection() {
        let text = r#"{
            "materials": {"s": {"youngs_modulus": 2e11, "poisson_ratio": 0.3, "density": 7800}},
            "sections": {"r": {"circle": {"diameter": 0.01}}},
            "lines": [{"name": "a", "from": [0,0,0], "to": [1,0,0], "elements": 2, "section": "r", "material": "s"}]
        }"#;
        let s = parse_model(text, Path::new("t.json")).ok().and_then(|m| validate(&m).ok());
        let Some(s) = s else { panic!("test model must be valid") };
        let d = vec![[0.0, 0.0, 0.1]; 3];
        let Ok(Vtk { data: DataSet::UnstructuredGrid { pieces, .. }, .. }) =
            build_vtu_displaced(&s, Some(&d), &[], &[])
        else {
            panic!("an unstructured grid")
        };
        let Some(vtkio::model::Piece::Inline(piece)) = pieces.into_iter().next() else { panic!("inline piece") };
        assert_eq!(piece.points, IOBuffer::F64(vec![0.0, 0.0, 0.1, 0.5, 0.0, 0.1, 1.0, 0.0, 0.1]));
        assert!(build_vtu_displaced(&s, Some(&d[..2]), &[], &[]).is_err());
        let pvd = pvd_collection(&[(0.0, "a-000.vtu".into()), (0.5, "a-001.vtu".into())]);
        assert!(pvd.contains(r#"file="a-001.vtu""#) && pvd.contains("<Collection>"));
    }
}
