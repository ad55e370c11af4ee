//! `antinode check`: validate a model and describe it.

use std::path::Path;

use anyhow::Result;
use serde::Serialize;

use crate::output::{Xyz, print_json, table};
use crate::pipeline::{PLANNED_MODES, assemble_checked_for, load};

#[derive(Serialize)]
struct CheckReport {
    model: String,
    title: String,
    nodes: usize,
    beams: usize,
    shells: usize,
    shell_quality: Option<ShellQuality>,
    lines: usize,
    tubes: Vec<String>,
    panels: Vec<String>,
    /// Imported meshes: name, file and point count.
    meshes: Vec<MeshRow>,
    /// Region name → number of nodes it selects.
    regions: std::collections::BTreeMap<String, usize>,
    /// Link name → kind and number of member nodes.
    links: Vec<LinkRow>,
    springs: usize,
    point_masses: usize,
    absorbers: usize,
    fixed_dofs: usize,
    free_dofs: usize,
    total_mass_kg: f64,
    absorber_mass_kg: f64,
    centre_of_mass: Xyz,
    zero_energy_modes: usize,
    /// Estimated peak memory of the eigen solution for the default 20 modes, in bytes (parts in
    /// `memory_estimate`).
    memory_estimate_bytes: u64,
    memory_estimate: antinode_solver::MemoryEstimate,
    warnings: Vec<String>,
}

/// Worst shape measures over the shells (definitions in the model-format docs).
/// One link as `check` reports it.
#[derive(Serialize)]
struct LinkRow {
    name: String,
    kind: &'static str,
    reference_node: u64,
    members: usize,
}

/// One imported mesh as `check` reports it.
#[derive(Serialize)]
struct MeshRow {
    name: String,
    file: String,
    nodes: usize,
}

#[derive(Serialize)]
struct ShellQuality {
    quadrilaterals: usize,
    triangles: usize,
    max_aspect_ratio: f64,
    max_warp_deg: f64,
    max_skew_deg: f64,
    min_jacobian_ratio: f64,
    thickness_range_m: [f64; 2],
}

fn shell_quality(s: &antinode_mesh::Structure) -> Option<ShellQuality> {
    if s.shells.is_empty() {
        return None;
    }
    let max = |f: fn(&antinode_mesh::ShellElement) -> f64| s.shells.iter().map(f).fold(f64::NEG_INFINITY, f64::max);
    let min = |f: fn(&antinode_mesh::ShellElement) -> f64| s.shells.iter().map(f).fold(f64::INFINITY, f64::min);
    let quads = s.shells.iter().filter(|e| e.nodes.len() == 4).count();
    Some(ShellQuality {
        quadrilaterals: quads,
        triangles: s.shells.len() - quads,
        max_aspect_ratio: max(|e| e.shape.aspect_ratio),
        max_warp_deg: max(|e| e.shape.warp_deg),
        max_skew_deg: max(|e| e.shape.skew_deg),
        min_jacobian_ratio: min(|e| e.shape.jacobian_ratio),
        thickness_range_m: [min(|e| e.thickness), max(|e| e.thickness)],
    })
}

fn list(names: &[String]) -> String {
    if names.is_empty() { "-".into() } else { names.join(", ") }
}

pub fn run(path: &Path, json: bool) -> Result<()> {
    let l = load(path)?;
    let (system, zero, memory) = assemble_checked_for(&l, false, PLANNED_MODES)?;
    let s = &l.structure;
    let report = CheckReport {
        model: path.display().to_string(),
        title: s.title.clone(),
        nodes: s.nodes.len(),
        beams: s.beams.len(),
        shells: s.shells.len(),
        shell_quality: shell_quality(s),
        lines: s.lines.len(),
        tubes: s.tubes.iter().map(|t| t.name.clone()).collect(),
        panels: s.panels.iter().map(|p| p.name.clone()).collect(),
        meshes: s
            .meshes
            .iter()
            .map(|m| MeshRow { name: m.name.clone(), file: m.file.display().to_string(), nodes: m.nodes.len() })
            .collect(),
        regions: s.regions.iter().map(|(k, v)| (k.clone(), v.len())).collect(),
        links: s
            .links
            .iter()
            .map(|l| LinkRow {
                name: l.name.clone(),
                kind: match l.kind {
                    antinode_mesh::LinkKind::Rigid => "rigid",
                    antinode_mesh::LinkKind::Average => "average",
                },
                reference_node: s.nodes[l.reference].id.0,
                members: l.members.len(),
            })
            .collect(),
        springs: s.springs.len(),
        point_masses: s.point_masses.len(),
        absorbers: s.absorbers.len(),
        fixed_dofs: s.fixed.iter().flatten().filter(|&&f| f).count(),
        free_dofs: system.n_dofs(),
        total_mass_kg: s.total_mass(),
        absorber_mass_kg: s.absorber_mass(),
        centre_of_mass: s.centre_of_mass().into(),
        zero_energy_modes: zero,
        memory_estimate_bytes: memory.total_bytes,
        memory_estimate: memory,
        warnings: s.warnings.iter().cloned().chain(antinode_solver::conditioning_warnings(&system, Some(s))).collect(),
    };
    if json {
        return print_json(&report);
    }
    println!("{}: {}", report.model, if report.title.is_empty() { "(no title)" } else { &report.title });
    let c = report.centre_of_mass;
    let mut rows = vec![
        vec!["nodes".into(), report.nodes.to_string()],
        vec!["beam elements".into(), report.beams.to_string()],
        vec!["shell elements".into(), report.shells.to_string()],
        vec!["lines".into(), report.lines.to_string()],
        vec!["tubes".into(), list(&report.tubes)],
        vec!["panels".into(), list(&report.panels)],
        vec![
            "meshes (nodes)".into(),
            list(
                &report.meshes.iter().map(|m| format!("{} from {} ({})", m.name, m.file, m.nodes)).collect::<Vec<_>>(),
            ),
        ],
        vec![
            "regions (nodes)".into(),
            list(&report.regions.iter().map(|(k, v)| format!("{k} ({v})")).collect::<Vec<_>>()),
        ],
        vec![
            "links (members)".into(),
            list(&report.links.iter().map(|l| format!("{} {} ({})", l.name, l.kind, l.members)).collect::<Vec<_>>()),
        ],
        vec!["springs".into(), report.springs.to_string()],
        vec!["point masses".into(), report.point_masses.to_string()],
        vec!["absorbers".into(), format!("{} ({:.4} kg)", report.absorbers, report.absorber_mass_kg)],
        vec!["fixed DOFs".into(), report.fixed_dofs.to_string()],
        vec!["free DOFs".into(), report.free_dofs.to_string()],
        vec!["total mass".into(), format!("{:.6} kg", report.total_mass_kg)],
        vec!["centre of mass".into(), format!("({:.6}, {:.6}, {:.6}) m", c.x, c.y, c.z)],
        vec!["zero-energy modes".into(), report.zero_energy_modes.to_string()],
        vec![format!("memory for {} modes", report.memory_estimate.modes), report.memory_estimate.describe()],
    ];
    if let Some(q) = &report.shell_quality {
        rows.extend([
            vec!["shells: quads / triangles".into(), format!("{} / {}", q.quadrilaterals, q.triangles)],
            vec![
                "shells: thickness".into(),
                format!("{:.4e} to {:.4e} m", q.thickness_range_m[0], q.thickness_range_m[1]),
            ],
            vec!["shells: worst aspect ratio".into(), format!("{:.2}", q.max_aspect_ratio)],
            vec!["shells: worst warp".into(), format!("{:.2}°", q.max_warp_deg)],
            vec!["shells: worst skew".into(), format!("{:.2}°", q.max_skew_deg)],
            vec!["shells: worst Jacobian ratio".into(), format!("{:.3}", q.min_jacobian_ratio)],
        ]);
    }
    println!("{}", table(&["item", "value"], rows));
    if report.warnings.is_empty() {
        println!("no warnings");
    } else {
        for w in &report.warnings {
            println!("warning: {w}");
        }
    }
    Ok(())
}
