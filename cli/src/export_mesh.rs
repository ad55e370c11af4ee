//! `antinode export-mesh`: the model's beams and shells as a VTK mesh and a model that imports it.

use std::path::Path;

use antinode_mesh::{MeshFormat, export_mesh};
use anyhow::{Context, Result};

use crate::pipeline::{Outputs, load};

/// Mesh file format on the command line.
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum Format {
    /// XML unstructured grid (.vtu).
    Vtu,
    /// Legacy ASCII (.vtk).
    Vtk,
}

pub fn run(path: &Path, out: Option<&Path>, format: Format) -> Result<()> {
    let l = load(path)?;
    let stem = path.file_stem().map(|s| s.to_string_lossy().into_owned()).unwrap_or_else(|| "model".into());
    let (ext, fmt) = match format {
        Format::Vtu => ("vtu", MeshFormat::Vtu),
        Format::Vtk => ("vtk", MeshFormat::LegacyVtk),
    };
    let mesh_name = format!("{stem}-mesh.{ext}");
    let model_name = format!("{stem}-mesh.json");
    let export = export_mesh(&l.model, &l.structure, &mesh_name, fmt)
        .with_context(|| format!("cannot export the mesh of {}", path.display()))?;
    let mut outputs = Outputs::create(path, out)?;
    let mesh_path = outputs.path(&mesh_name);
    let model_path = outputs.path(&model_name);
    outputs.write(&mesh_name, &export.mesh)?;
    let mut text = serde_json::to_string_pretty(&export.model)?;
    text.push('\n');
    outputs.write(&model_name, text.as_bytes())?;
    outputs.commit()?;
    let s = &l.structure;
    println!(
        "{}: {} nodes, {} beams, {} shells, {} mesh properties",
        path.display(),
        s.nodes.len(),
        s.beams.len(),
        s.shells.len(),
        export.n_properties
    );
    println!("wrote {}", mesh_path.display());
    println!("wrote {}", model_path.display());
    if l.model.study.is_some() {
        println!(
            "note: the study block is not exported (its locations may name lines or tubes); regions are exported as \
             node lists, so the study can be copied in with locations by node, coordinates or region"
        );
    }
    Ok(())
}
