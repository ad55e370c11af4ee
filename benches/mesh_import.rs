//! Mesh import benchmark: a generated panel of 316 × 316 quadrilateral shells (100,489 nodes,
//! 99,856 shells) is checked from its generator (`validate`), exported (`export_mesh`) as XML
//! `.vtu` and as legacy ASCII `.vtk`, written to a temporary folder, and checked again from the
//! file (`load_model` + `validate_in`, which reads the mesh). The figure to read is the ratio of
//! the import to the generator path for the same mesh, measured side by side in one run (the
//! machine is shared and absolute times vary between runs).
//!
//! Each measurement is repeated N times (`ANTINODE_BENCH_REPS`, default 5); the table gives the
//! median and the minimum. Run from the workspace root:
//! `cargo bench -p antinode --bench mesh_import`. Figures: `docs/benchmarks.md`.

use std::time::Duration;

use antinode::mesh::{MeshFormat, export_mesh, load_model, parse_model, validate, validate_in};

mod common;
use common::{Res, ms, repeat, reps};

/// Quadrilaterals along each side of the panel.
const DIVISIONS: usize = 316;

fn main() -> Res<()> {
    antinode::solver::init();
    let n = reps(5);
    let text = format!(
        r#"{{"title": "benchmark panel",
            "materials": {{"al": {{"youngs_modulus": 7e10, "poisson_ratio": 0.33, "density": 2700}}}},
            "panels": [{{"name": "p", "size": [1.0, 0.8], "thickness": 0.002, "material": "al",
                         "divisions": [{DIVISIONS}, {DIVISIONS}]}}]}}"#
    );
    let model = parse_model(&text, std::path::Path::new("bench.json"))?;
    let dir = std::env::temp_dir().join(format!("antinode-bench-import-{}", std::process::id()));
    std::fs::create_dir_all(&dir)?;
    let (gen_med, gen_min, structure) = repeat(n, || Ok(validate(&model)?))?;
    println!(
        "## Mesh import: panel of {} shells, {} nodes ({n} runs each)\n",
        structure.shells.len(),
        structure.nodes.len()
    );
    println!("| stage | median [ms] | min [ms] | median / generator |");
    println!("|---|---|---|---|");
    println!("| generator: `validate` of the panel block | {} | {} | 1.00 |", ms(gen_med), ms(gen_min));
    for (format, file) in [(MeshFormat::Vtu, "bench.vtu"), (MeshFormat::LegacyVtk, "bench.vtk")] {
        let (exp_med, exp_min, export) = repeat(n, || Ok(export_mesh(&model, &structure, file, format)?))?;
        std::fs::write(dir.join(file), &export.mesh)?;
        let model_path = dir.join("bench-mesh.json");
        std::fs::write(&model_path, serde_json::to_string(&export.model)?)?;
        let (imp_med, imp_min, imported) = repeat(n, || {
            let m = load_model(&model_path)?;
            Ok(validate_in(&m, &dir)?)
        })?;
        if imported.nodes.len() != structure.nodes.len() || imported.shells.len() != structure.shells.len() {
            return Err("the imported panel differs from the generated one".into());
        }
        let ratio = |d: Duration| d.as_secs_f64() / gen_med.as_secs_f64();
        let mib = export.mesh.len() as f64 / (1024.0 * 1024.0);
        println!(
            "| export to {file} ({mib:.1} MiB, in memory) | {} | {} | {:.2} |",
            ms(exp_med),
            ms(exp_min),
            ratio(exp_med)
        );
        println!(
            "| import from {file}: `load_model` + `validate_in` | {} | {} | {:.2} |",
            ms(imp_med),
            ms(imp_min),
            ratio(imp_med)
        );
    }
    std::fs::remove_dir_all(&dir).ok();
    Ok(())
}
