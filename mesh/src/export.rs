//! Mesh export for the round trip: a checked structure's beams and shells as one VTK
//! unstructured grid with a `property` cell array and a `node_id` point array, and a model that
//! imports it (`meshes`) with everything else resolved to node ids.
//!
//! What the exported model holds: the materials, the sections the beams use (a section the
//! model names is copied; a generated tube's section becomes `properties` with the same numbers),
//! one mesh property per distinct (section, material, orientation) of beams and per distinct
//! (thickness, material) of shells, and supports, springs, point masses, links, absorbers and
//! regions as node ids, in the structure's order. Every node of the structure is a point of the
//! file, in node order, so the re-imported model numbers its DOFs exactly as the original and
//! gives the same K and M. Not exported: the study block (its locations may name lines and tubes
//! that the exported model no longer has; regions are kept as node lists, so it can be copied in).

use std::collections::BTreeMap;

use vtkio::model::{
    Attribute, Attributes, ByteOrder, CellType, Cells, DataSet, IOBuffer, UnstructuredGridPiece, Version,
    VertexNumbers, Vtk,
};

use crate::error::ModelError;
use crate::model::{
    Absorber, BeamProperty, Dof, DofValues, ExplicitSection, Fixity, FixityPreset, Link, LinkMembers, Location,
    MeshImport, MeshProperty, Model, NodesRegion, PointMass, Region, Section, ShellProperty, Spring, SpringEnd,
    Support,
};
use crate::section::section_properties;
use crate::structure::{AbsorberDamping, Structure};

/// Name of the cell array of property ids in exported meshes.
pub const PROPERTY_ARRAY: &str = "property";

/// Name of the point array of node ids in exported meshes.
pub const NODE_ID_ARRAY: &str = "node_id";

/// File format of an exported mesh.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum MeshFormat {
    /// XML `.vtu`, inline base64, uncompressed.
    Vtu,
    /// Legacy `.vtk`, ASCII (coordinates written with the shortest text that reads back exactly).
    LegacyVtk,
}

/// An exported mesh file and the model that imports it.
#[derive(Debug, Clone)]
pub struct MeshExport {
    /// The mesh file's content.
    pub mesh: Vec<u8>,
    /// The model, whose `meshes[0].file` is the file name given to [`export_mesh`].
    pub model: Model,
    /// Number of mesh properties written.
    pub n_properties: usize,
}

fn bits(v: [f64; 3]) -> [u64; 3] {
    v.map(f64::to_bits)
}

/// Exports `structure` (checked from `model`) as a mesh file named `file_name` (to be written in
/// the same folder as the exported model) in `format`.
///
/// # Errors
/// [`ModelError::Write`] if vtkio cannot encode the file, [`ModelError::Invalid`] for a point
/// mass whose inertia tensor has off-diagonal terms (the model file holds only diagonal inertia).
pub fn export_mesh(
    model: &Model,
    structure: &Structure,
    file_name: &str,
    format: MeshFormat,
) -> Result<MeshExport, ModelError> {
    let s = structure;
    let id = |n: usize| s.nodes[n].id;
    // Sections and beam properties.
    let mut sections: BTreeMap<String, Section> = BTreeMap::new();
    let mut explicit_names: BTreeMap<(String, [u64; 7]), String> = BTreeMap::new();
    let mut properties: BTreeMap<String, MeshProperty> = BTreeMap::new();
    let mut beam_keys: BTreeMap<(String, String, [u64; 3]), i32> = BTreeMap::new();
    let mut shell_keys: BTreeMap<(u64, String), i32> = BTreeMap::new();
    let mut next = 1i32;
    let mut cell_props: Vec<i32> = Vec::with_capacity(s.beams.len() + s.shells.len());
    for b in &s.beams {
        // A named section is copied only if it is what the beam was built from (a generated
        // tube's section has a name of its own, which a model section could repeat).
        let named = model
            .sections
            .get(&b.section_name)
            .filter(|sec| section_properties(sec, b.material.poisson_ratio) == b.section);
        let section = match named {
            Some(sec) => {
                sections.insert(b.section_name.clone(), sec.clone());
                b.section_name.clone()
            }
            None => {
                let p = b.section;
                let key = (
                    b.section_name.clone(),
                    [
                        p.area,
                        p.second_moment_y,
                        p.second_moment_z,
                        p.torsion_constant,
                        p.polar_moment,
                        p.shear_area_y.unwrap_or(-1.0),
                        p.shear_area_z.unwrap_or(-1.0),
                    ]
                    .map(f64::to_bits),
                );
                if let Some(name) = explicit_names.get(&key) {
                    name.clone()
                } else {
                    let base: String = b.section_name.chars().filter(|&c| c != '"').collect();
                    let mut name = base.clone();
                    let mut k = 2;
                    while sections.contains_key(&name) || model.sections.contains_key(&name) {
                        name = format!("{base} #{k}");
                        k += 1;
                    }
                    sections.insert(
                        name.clone(),
                        Section::Properties(ExplicitSection {
                            area: p.area,
                            second_moment_y: p.second_moment_y,
                            second_moment_z: p.second_moment_z,
                            torsion_constant: p.torsion_constant,
                            polar_moment: Some(p.polar_moment),
                            shear_area_y: p.shear_area_y,
                            shear_area_z: p.shear_area_z,
                        }),
                    );
                    explicit_names.insert(key, name.clone());
                    name
                }
            }
        };
        let key = (section.clone(), b.material_name.clone(), bits(b.orientation));
        let pid = *beam_keys.entry(key).or_insert_with(|| {
            properties.insert(
                next.to_string(),
                MeshProperty::Beam(BeamProperty {
                    section,
                    material: b.material_name.clone(),
                    orientation: Some(b.orientation),
                }),
            );
            next += 1;
            next - 1
        });
        cell_props.push(pid);
    }
    for e in &s.shells {
        let key = (e.thickness.to_bits(), e.material_name.clone());
        let pid = *shell_keys.entry(key).or_insert_with(|| {
            properties.insert(
                next.to_string(),
                MeshProperty::Shell(ShellProperty { thickness: e.thickness, material: e.material_name.clone() }),
            );
            next += 1;
            next - 1
        });
        cell_props.push(pid);
    }
    // Cells.
    let mut conn: Vec<u64> = Vec::new();
    let mut offsets: Vec<u64> = Vec::new();
    let mut types: Vec<CellType> = Vec::new();
    for b in &s.beams {
        conn.extend(b.nodes.map(|n| n as u64));
        offsets.push(conn.len() as u64);
        types.push(CellType::Line);
    }
    for e in &s.shells {
        conn.extend(e.nodes.iter().map(|&n| n as u64));
        offsets.push(conn.len() as u64);
        types.push(if e.nodes.len() == 4 { CellType::Quad } else { CellType::Triangle });
    }
    let cell_verts = match format {
        MeshFormat::Vtu => VertexNumbers::XML { connectivity: conn, offsets },
        MeshFormat::LegacyVtk => {
            let mut vertices = Vec::with_capacity(conn.len() + offsets.len());
            let mut start = 0usize;
            for &end in &offsets {
                let end = end as usize;
                vertices.push((end - start) as u32);
                vertices.extend(conn[start..end].iter().map(|&v| v as u32));
                start = end;
            }
            VertexNumbers::Legacy { num_cells: offsets.len() as u32, vertices }
        }
    };
    let node_ids: Vec<i64> = s.nodes.iter().map(|n| n.id.0 as i64).collect();
    let vtk = Vtk {
        version: match format {
            MeshFormat::Vtu => Version::new((1, 0)),
            MeshFormat::LegacyVtk => Version::new((4, 2)),
        },
        // One line; the legacy header line holds at most 256 characters.
        title: if s.title.is_empty() {
            "antinode mesh".into()
        } else {
            s.title.replace(['\n', '\r'], " ").chars().take(255).collect()
        },
        byte_order: ByteOrder::BigEndian,
        file_path: None,
        data: DataSet::inline(UnstructuredGridPiece {
            points: IOBuffer::F64(s.nodes.iter().flat_map(|n| n.xyz).collect()),
            cells: Cells { cell_verts, types },
            data: Attributes {
                point: vec![Attribute::scalars(NODE_ID_ARRAY, 1).with_data(node_ids)],
                cell: vec![Attribute::scalars(PROPERTY_ARRAY, 1).with_data(cell_props)],
            },
        }),
    };
    let write_error = |e: String| ModelError::Write { path: file_name.into(), message: e };
    let mesh = match format {
        MeshFormat::Vtu => {
            let mut bytes = Vec::new();
            vtk.write_xml(&mut bytes).map_err(|e| write_error(e.to_string()))?;
            bytes
        }
        MeshFormat::LegacyVtk => {
            let mut text = String::new();
            vtk.write_legacy_ascii(&mut text).map_err(|e| write_error(e.to_string()))?;
            text.into_bytes()
        }
    };
    // Everything else, by node id.
    let mut supports = Vec::new();
    for (n, f) in s.fixed.iter().enumerate() {
        if f.iter().all(|&x| x) {
            supports.push(Support { at: Location::node(id(n)), fixed: Fixity::Preset(FixityPreset::Clamped) });
        } else if f.iter().any(|&x| x) {
            let dofs: Vec<Dof> = Dof::ALL.iter().copied().filter(|d| f[d.index()]).collect();
            supports.push(Support { at: Location::node(id(n)), fixed: Fixity::Dofs(dofs) });
        }
    }
    let springs = s
        .springs
        .iter()
        .map(|sp| {
            let k = sp.stiffness.map(|v| (v != 0.0).then_some(v));
            Spring {
                at: Location::node(id(sp.node)),
                to: sp.other.map(|o| SpringEnd::Location(Location::node(id(o)))),
                stiffness: DofValues { ux: k[0], uy: k[1], uz: k[2], rx: k[3], ry: k[4], rz: k[5] },
            }
        })
        .collect();
    let mut point_masses = Vec::new();
    for (i, p) in s.point_masses.iter().enumerate() {
        let t = p.inertia;
        if [t[0][1], t[0][2], t[1][0], t[1][2], t[2][0], t[2][1]].iter().any(|&v| v != 0.0) {
            return Err(ModelError::Invalid {
                at: format!("point mass {} at node {}", i + 1, id(p.node)),
                message: "its inertia tensor has off-diagonal terms (a fitting on a tube not along X, Y or Z), which \
                          a model file cannot hold; export works for parts along the global axes"
                    .into(),
            });
        }
        let inertia = [t[0][0], t[1][1], t[2][2]];
        if p.mass == 0.0 && inertia.iter().all(|&v| v == 0.0) {
            continue;
        }
        point_masses.push(PointMass {
            at: Location::node(id(p.node)),
            mass: p.mass,
            inertia: inertia.iter().any(|&v| v != 0.0).then_some(inertia),
        });
    }
    let links = s
        .links
        .iter()
        .map(|l| Link {
            name: l.name.clone(),
            kind: l.kind,
            reference: Some(Location::node(id(l.reference))),
            reference_point: None,
            members: LinkMembers { region: None, nodes: l.members.iter().map(|&m| id(m)).collect() },
        })
        .collect();
    if let Some(study) = &s.study {
        if let Some(i) = study.absorber_elastomers.iter().position(Option::is_some) {
            return Err(ModelError::Invalid {
                at: format!("absorber \"{}\"", s.absorbers[i].name),
                message: "its spring follows an elastomer table of the study, which the exported model (without \
                          its study block) cannot carry; export the model without the elastomer, then add it back"
                    .into(),
            });
        }
    }
    // A lateral absorber's second direction is written back as `second_direction` of its body.
    let second = |i: usize| s.absorbers.iter().find(|b| b.same_body_as == Some(i)).map(|b| b.direction.given.clone());
    let absorbers = s
        .absorbers
        .iter()
        .enumerate()
        .filter(|(_, a)| a.same_body_as.is_none())
        .map(|(i, a)| Absorber {
            elastomer: None,
            name: Some(a.name.clone()),
            at: Location::node(id(a.node)),
            direction: a.direction.given.clone(),
            second_direction: second(i),
            mass: a.mass,
            stiffness: a.stiffness,
            damping: match a.damping {
                AbsorberDamping::Viscous(c) => Some(c),
                _ => None,
            },
            loss_factor: match a.damping {
                AbsorberDamping::LossFactor(eta) => Some(eta),
                _ => None,
            },
        })
        .collect();
    let regions = s
        .regions
        .iter()
        .map(|(name, nodes)| {
            (name.clone(), Region::Nodes(NodesRegion { nodes: nodes.iter().map(|&n| id(n)).collect() }))
        })
        .collect();
    let n_properties = properties.len();
    let mesh_name = std::path::Path::new(file_name)
        .file_stem()
        .map(|s| s.to_string_lossy().into_owned())
        .filter(|s| !s.is_empty())
        .unwrap_or_else(|| "mesh".into());
    let out = Model {
        title: s.title.clone(),
        materials: model.materials.clone(),
        sections,
        meshes: vec![MeshImport {
            name: mesh_name,
            file: file_name.to_string(),
            property_array: Some(PROPERTY_ARRAY.into()),
            node_id_array: Some(NODE_ID_ARRAY.into()),
            properties,
            scale: None,
            offset: None,
        }],
        regions,
        supports,
        springs,
        point_masses,
        links,
        absorbers,
        mass_matrix: Some(s.mass_matrix),
        rigid_body_modes: s.rigid_body_modes,
        ..Model::default()
    };
    Ok(MeshExport { mesh, model: out, n_properties })
}
