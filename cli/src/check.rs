//! `antinode check`: validate a model and describe it.

use std::path::Path;

use anyhow::Result;
use serde::Serialize;

use crate::output::{Xyz, print_json, table};
use crate::pipeline::{assemble_checked, load};

#[derive(Serialize)]
struct CheckReport {
    model: String,
    title: String,
    nodes: usize,
    beams: usize,
    lines: usize,
    springs: usize,
    point_masses: usize,
    absorbers: usize,
    fixed_dofs: usize,
    free_dofs: usize,
    total_mass_kg: f64,
    absorber_mass_kg: f64,
    centre_of_mass: Xyz,
    zero_energy_modes: usize,
    warnings: Vec<String>,
}

pub fn run(path: &Path, json: bool) -> Result<()> {
    let l = load(path)?;
    let (system, zero) = assemble_checked(&l, false)?;
    let s = &l.structure;
    let report = CheckReport {
        model: path.display().to_string(),
        title: s.title.clone(),
        nodes: s.nodes.len(),
        beams: s.beams.len(),
        lines: s.lines.len(),
        springs: s.springs.len(),
        point_masses: s.point_masses.len(),
        absorbers: s.absorbers.len(),
        fixed_dofs: s.fixed.iter().flatten().filter(|&&f| f).count(),
        free_dofs: system.n_dofs(),
        total_mass_kg: s.total_mass(),
        absorber_mass_kg: s.absorber_mass(),
        centre_of_mass: s.centre_of_mass().into(),
        zero_energy_modes: zero,
        warnings: s.warnings.clone(),
    };
    if json {
        return print_json(&report);
    }
    println!("{}: {}", report.model, if report.title.is_empty() { "(no title)" } else { &report.title });
    let c = report.centre_of_mass;
    let rows = vec![
        vec!["nodes".into(), report.nodes.to_string()],
        vec!["beam elements".into(), report.beams.to_string()],
        vec!["lines".into(), report.lines.to_string()],
        vec!["springs".into(), report.springs.to_string()],
        vec!["point masses".into(), report.point_masses.to_string()],
        vec!["absorbers".into(), format!("{} ({:.4} kg)", report.absorbers, report.absorber_mass_kg)],
        vec!["fixed DOFs".into(), report.fixed_dofs.to_string()],
        vec!["free DOFs".into(), report.free_dofs.to_string()],
        vec!["total mass".into(), format!("{:.6} kg", report.total_mass_kg)],
        vec!["centre of mass".into(), format!("({:.6}, {:.6}, {:.6}) m", c.x, c.y, c.z)],
        vec!["zero-energy modes".into(), report.zero_energy_modes.to_string()],
    ];
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
