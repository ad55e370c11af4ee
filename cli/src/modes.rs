//! `antinode modes`: natural modes with effective masses and the Sturm check; modes.json,
//! modes.csv, modes.vtu.

use std::fmt::Write as _;
use std::path::PathBuf;

use antinode_mesh::NodalVectors;
use antinode_solver::{
    EigenParams, ModalSolution, ModeRequest, SolveStats, SturmCheck, System, participation,
    solve_modes,
};
use anyhow::{Context, Result};
use serde::Serialize;

use crate::output::{Xyz, print_json, table};
use crate::pipeline::{CAUTION, Outputs, Progress, assemble_checked, confirm_zero_energy, load};

pub struct Options {
    pub model: PathBuf,
    pub json: bool,
    pub count: Option<usize>,
    pub max_frequency: Option<f64>,
    pub out: Option<PathBuf>,
    pub with_absorbers: bool,
}

/// Default number of modes when neither a count nor a frequency is given.
const DEFAULT_COUNT: usize = 20;

#[derive(Serialize)]
struct ModeRow {
    number: usize,
    frequency_hz: f64,
    eigenvalue_rad2_per_s2: f64,
    effective_mass_fraction: Xyz,
    effective_mass_kg: Xyz,
    relative_residual: f64,
    zero_energy: bool,
}

#[derive(Serialize)]
struct Solver {
    method: &'static str,
    shift_rad2_per_s2: f64,
    block_size: usize,
    orthogonality_error: f64,
    stats: SolveStats,
}

#[derive(Serialize)]
struct ModesReport {
    model: String,
    title: String,
    with_absorbers: bool,
    total_mass_kg: f64,
    unrestrained_mass_kg: Xyz,
    n_dofs: usize,
    zero_energy_modes: usize,
    modes: Vec<ModeRow>,
    cumulative_mass_fraction: Xyz,
    sturm_check: SturmCheck,
    solver: Solver,
    files: Vec<String>,
    warnings: Vec<String>,
}

/// Mode shapes as VTK point arrays: translations and rotations of every mode.
pub fn mode_fields(system: &System, sol: &ModalSolution) -> Vec<NodalVectors> {
    let mut fields = Vec::new();
    for i in 0..sol.n_modes() {
        let nodes = system.dof_map().expand(sol.shape(i));
        let name = format!("mode_{}_{:.4}Hz", i + 1, sol.frequency_hz(i));
        fields.push(NodalVectors {
            name: name.clone(),
            values: nodes.iter().map(|d| [d[0], d[1], d[2]]).collect(),
        });
        fields.push(NodalVectors {
            name: format!("{name}_rotation"),
            values: nodes.iter().map(|d| [d[3], d[4], d[5]]).collect(),
        });
    }
    fields
}

pub fn run(o: &Options) -> Result<()> {
    let l = load(&o.model)?;
    let progress = Progress::new();
    progress.stage("assembling");
    let (system, _) = assemble_checked(&l, o.with_absorbers)?;
    let request = match (o.count, o.max_frequency) {
        (Some(c), _) => ModeRequest::Lowest(c),
        (None, Some(f)) => ModeRequest::Band {
            low_hz: 0.0,
            high_hz: f,
        },
        (None, None) => ModeRequest::Lowest(DEFAULT_COUNT.min(system.n_dofs())),
    };
    progress.stage("computing modes");
    let params = EigenParams::default();
    let sol = solve_modes(&system, request, &params)
        .with_context(|| format!("modes of {}", o.model.display()))?;
    confirm_zero_energy(&l, &system, &sol)?;
    progress.stage("writing files");
    let s = &l.structure;
    let total = s.total_mass()
        + if o.with_absorbers {
            s.absorber_mass()
        } else {
            0.0
        };
    let l_part = participation(&system, &sol);
    let mut cumulative = [0.0; 3];
    let mut rows = Vec::new();
    for i in 0..sol.n_modes() {
        let m_eff = l_part[i].map(|v| v * v);
        for d in 0..3 {
            cumulative[d] += m_eff[d] / total;
        }
        rows.push(ModeRow {
            number: i + 1,
            frequency_hz: sol.frequency_hz(i),
            eigenvalue_rad2_per_s2: sol.eigenvalues[i],
            effective_mass_fraction: m_eff.map(|m| m / total).into(),
            effective_mass_kg: m_eff.into(),
            relative_residual: sol.residuals[i],
            zero_energy: i < sol.n_zero_energy,
        });
    }
    let mut outputs = Outputs::create(&o.model, o.out.as_deref())?;
    let json_path = outputs.path("modes.json");
    let csv_path = outputs.path("modes.csv");
    let vtu_path = outputs.path("modes.vtu");
    let report = ModesReport {
        model: o.model.display().to_string(),
        title: s.title.clone(),
        with_absorbers: o.with_absorbers,
        total_mass_kg: total,
        unrestrained_mass_kg: system.unrestrained_mass().into(),
        n_dofs: system.n_dofs(),
        zero_energy_modes: sol.n_zero_energy,
        modes: rows,
        cumulative_mass_fraction: cumulative.into(),
        sturm_check: sol.sturm_check,
        solver: Solver {
            method: if sol.stats.lanczos_runs > 0 {
                "block shift-invert Lanczos"
            } else {
                "dense (small model)"
            },
            shift_rad2_per_s2: sol.shift,
            block_size: params.block_size,
            orthogonality_error: sol.orthogonality_error,
            stats: sol.stats,
        },
        files: [&json_path, &csv_path, &vtu_path]
            .iter()
            .map(|p| p.display().to_string())
            .collect(),
        warnings: s.warnings.clone(),
    };
    let mut csv = String::from(
        "number,frequency_hz,effective_mass_fraction_x,effective_mass_fraction_y,effective_mass_fraction_z,relative_residual\n",
    );
    for r in &report.modes {
        let f = r.effective_mass_fraction;
        let _ = writeln!(
            csv,
            "{},{:.9e},{:.6e},{:.6e},{:.6e},{:.3e}",
            r.number, r.frequency_hz, f.x, f.y, f.z, r.relative_residual
        );
    }
    let fields = mode_fields(&system, &sol);
    outputs.write_vtu("modes.vtu", s, &fields)?;
    outputs.write("modes.csv", csv.as_bytes())?;
    outputs.write(
        "modes.json",
        serde_json::to_string_pretty(&report)?.as_bytes(),
    )?;
    outputs.commit()?;
    drop(progress);
    if o.json {
        return print_json(&report);
    }
    println!(
        "{}: {} modes, {} free DOFs, total mass {:.4} kg",
        report.model,
        sol.n_modes(),
        report.n_dofs,
        total
    );
    let table_rows = report
        .modes
        .iter()
        .map(|r| {
            let f = r.effective_mass_fraction;
            vec![
                r.number.to_string(),
                if r.zero_energy {
                    format!("{:.4} (rigid)", r.frequency_hz)
                } else {
                    format!("{:.4}", r.frequency_hz)
                },
                format!("{:.2}", 100.0 * f.x),
                format!("{:.2}", 100.0 * f.y),
                format!("{:.2}", 100.0 * f.z),
                format!("{:.1e}", r.relative_residual),
            ]
        })
        .collect();
    println!(
        "{}",
        table(
            &[
                "mode",
                "frequency [Hz]",
                "m_eff x [%]",
                "m_eff y [%]",
                "m_eff z [%]",
                "residual"
            ],
            table_rows
        )
    );
    let c = report.cumulative_mass_fraction;
    println!(
        "cumulative effective mass: x {:.2} %, y {:.2} %, z {:.2} %",
        100.0 * c.x,
        100.0 * c.y,
        100.0 * c.z
    );
    let st = &sol.sturm_check;
    println!(
        "Sturm check: {} eigenvalues below {:.4} Hz by the inertia of K - sigma M, {} found: {}",
        st.count_expected,
        st.shift_hz,
        st.count_found,
        if st.passed { "passed" } else { "FAILED" }
    );
    for w in &report.warnings {
        println!("warning: {w}");
    }
    println!("wrote {}", report.files.join(", "));
    println!("{CAUTION}");
    Ok(())
}
