//! `antinode modes`: natural modes with effective masses and the Sturm check; modes.json,
//! modes.csv, modes.vtu. Works on a model file or on K and M given as MatrixMarket files.

use std::fmt::Write as _;
use std::path::{Path, PathBuf};
use std::time::Instant;

use antinode_mesh::NodalVectors;
use antinode_solver::{
    EigenParams, ModalSolution, ModeRequest, SolveStats, SturmCheck, System, participation, solve_modes,
    system_from_matrix_market,
};
use anyhow::{Context, Result, bail};
use serde::Serialize;

use crate::output::{Xyz, print_json, table};
use crate::pipeline::{CAUTION, Outputs, Progress, assemble_checked, confirm_zero_energy, eigen_params, load};

/// Where the matrices come from.
pub enum Source {
    /// A model file.
    Model(PathBuf),
    /// K and M in MatrixMarket files.
    Matrices {
        /// Stiffness file.
        stiffness: PathBuf,
        /// Mass file.
        mass: PathBuf,
    },
}

pub struct Options {
    pub source: Source,
    pub json: bool,
    pub count: Option<usize>,
    pub min_frequency: Option<f64>,
    pub max_frequency: Option<f64>,
    pub out: Option<PathBuf>,
    pub with_absorbers: bool,
    pub block_size: Option<usize>,
}

/// Default number of modes when neither a count nor a frequency is given.
const DEFAULT_COUNT: usize = 20;

#[derive(Serialize)]
struct ModeRow {
    number: usize,
    frequency_hz: f64,
    eigenvalue_rad2_per_s2: f64,
    /// Absent for matrices without geometry.
    effective_mass_fraction: Option<Xyz>,
    effective_mass_kg: Option<Xyz>,
    relative_residual: f64,
    zero_energy: bool,
}

#[derive(Serialize)]
struct Solver {
    method: &'static str,
    shift_rad2_per_s2: f64,
    block_size: usize,
    orthogonality_error: f64,
    max_relative_residual: f64,
    stats: SolveStats,
    /// Wall time of reading or assembling the matrices, symbolic analysis included, in s.
    setup_seconds: f64,
    /// Part of `setup_seconds` spent in the symbolic analysis (fill-reducing orderings), in s.
    analysis_seconds: f64,
    /// Wall time of the eigen solution (all factorizations included), in s.
    solve_seconds: f64,
}

#[derive(Serialize)]
struct ModesReport {
    model: String,
    title: String,
    with_absorbers: bool,
    /// Absent for matrices without geometry.
    total_mass_kg: Option<f64>,
    unrestrained_mass_kg: Option<Xyz>,
    n_dofs: usize,
    zero_energy_modes: usize,
    modes: Vec<ModeRow>,
    cumulative_mass_fraction: Option<Xyz>,
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
        fields.push(NodalVectors { name: name.clone(), values: nodes.iter().map(|d| [d[0], d[1], d[2]]).collect() });
        fields.push(NodalVectors {
            name: format!("{name}_rotation"),
            values: nodes.iter().map(|d| [d[3], d[4], d[5]]).collect(),
        });
    }
    fields
}

/// Residual above which a mode is flagged (relative residual ‖Kφ − λMφ‖/(|λ|‖Mφ‖ + ‖Kφ‖)).
const RESIDUAL_WARNING: f64 = 1e-6;

/// Warnings for modes whose residual shows lost accuracy.
fn residual_warnings(sol: &ModalSolution) -> Vec<String> {
    let bad: Vec<String> = (0..sol.n_modes())
        .filter(|&i| sol.residuals[i] > RESIDUAL_WARNING)
        .map(|i| format!("{} ({:.1e})", i + 1, sol.residuals[i]))
        .collect();
    if bad.is_empty() {
        return vec![];
    }
    vec![format!(
        "relative residual above {RESIDUAL_WARNING:.0e} for mode(s) {}: round-off limits their accuracy (a very fine \
         beam mesh or a very soft mode under a stiff part makes K ill-conditioned); coarsen the mesh or check \
         the frequencies against a second model",
        bad.join(", ")
    )]
}

fn request(o: &Options, n_dofs: usize) -> Result<ModeRequest> {
    Ok(match (o.count, o.min_frequency, o.max_frequency) {
        (Some(c), lo, Some(hi)) => ModeRequest::BandCapped { low_hz: lo.unwrap_or(0.0), high_hz: hi, max_count: c },
        (None, lo, Some(hi)) => ModeRequest::Band { low_hz: lo.unwrap_or(0.0), high_hz: hi },
        (_, Some(_), None) => bail!("--min-frequency needs --max-frequency"),
        (Some(c), None, None) => ModeRequest::Lowest(c),
        (None, None, None) => ModeRequest::Lowest(DEFAULT_COUNT.min(n_dofs)),
    })
}

pub fn run(o: &Options) -> Result<()> {
    let progress = Progress::new();
    progress.stage("assembling");
    let t0 = Instant::now();
    let (loaded, system, name, mut params) = match &o.source {
        Source::Model(path) => {
            let l = load(path)?;
            let (system, zero) = assemble_checked(&l, o.with_absorbers)?;
            let params = eigen_params(&l, zero);
            (Some(l), system, path.clone(), params)
        }
        Source::Matrices { stiffness, mass } => {
            let system = system_from_matrix_market(stiffness, mass)?;
            (None, system, stiffness.clone(), EigenParams::default())
        }
    };
    let setup_seconds = t0.elapsed().as_secs_f64();
    let req = request(o, system.n_dofs())?;
    progress.stage("computing modes");
    if let Some(p) = o.block_size {
        if p == 0 {
            bail!("--block-size must be at least 1");
        }
        params.block_size = p;
    }
    let t1 = Instant::now();
    let sol = solve_modes(&system, req, &params).with_context(|| format!("modes of {}", name.display()))?;
    let solve_seconds = t1.elapsed().as_secs_f64();
    if let Some(l) = &loaded {
        confirm_zero_energy(l, &system, &sol)?;
    }
    progress.stage("writing files");
    let total = loaded
        .as_ref()
        .map(|l| l.structure.total_mass() + if o.with_absorbers { l.structure.absorber_mass() } else { 0.0 });
    let l_part = participation(&system, &sol);
    let mut cumulative = [0.0; 3];
    let mut rows = Vec::new();
    for i in 0..sol.n_modes() {
        let m_eff = l_part[i].map(|v| v * v);
        if let Some(t) = total {
            for d in 0..3 {
                cumulative[d] += m_eff[d] / t;
            }
        }
        rows.push(ModeRow {
            number: i + 1,
            frequency_hz: sol.frequency_hz(i),
            eigenvalue_rad2_per_s2: sol.eigenvalues[i],
            effective_mass_fraction: total.map(|t| m_eff.map(|m| m / t).into()),
            effective_mass_kg: total.map(|_| m_eff.into()),
            relative_residual: sol.residuals[i],
            zero_energy: i < sol.n_zero_energy,
        });
    }
    let mut outputs = Outputs::create(&name, o.out.as_deref())?;
    let mut files = vec![outputs.path("modes.json"), outputs.path("modes.csv")];
    if loaded.is_some() {
        files.push(outputs.path("modes.vtu"));
    }
    let mut warnings = residual_warnings(&sol);
    if let Some(l) = &loaded {
        warnings.extend(l.structure.warnings.iter().cloned());
    }
    let report = ModesReport {
        model: match &o.source {
            Source::Model(p) => p.display().to_string(),
            Source::Matrices { stiffness, mass } => format!("{} and {}", stiffness.display(), mass.display()),
        },
        title: loaded.as_ref().map(|l| l.structure.title.clone()).unwrap_or_default(),
        with_absorbers: o.with_absorbers,
        total_mass_kg: total,
        unrestrained_mass_kg: loaded.as_ref().map(|_| system.unrestrained_mass().into()),
        n_dofs: system.n_dofs(),
        zero_energy_modes: sol.n_zero_energy,
        modes: rows,
        cumulative_mass_fraction: total.map(|_| cumulative.into()),
        sturm_check: sol.sturm_check,
        solver: Solver {
            method: if sol.stats.lanczos_runs > 0 { "block shift-invert Lanczos" } else { "dense (small model)" },
            shift_rad2_per_s2: sol.shift,
            block_size: params.block_size,
            orthogonality_error: sol.orthogonality_error,
            max_relative_residual: sol.residuals.iter().copied().fold(0.0, f64::max),
            stats: sol.stats,
            setup_seconds,
            analysis_seconds: system.analysis_seconds(),
            solve_seconds,
        },
        files: files.iter().map(|p| p.display().to_string()).collect(),
        warnings,
    };
    let mut csv = String::from(
        "number,frequency_hz,effective_mass_fraction_x,effective_mass_fraction_y,effective_mass_fraction_z,relative_residual\n",
    );
    for r in &report.modes {
        let f = |v: Option<f64>| v.map(|x| format!("{x:.6e}")).unwrap_or_default();
        let e = r.effective_mass_fraction;
        let _ = writeln!(
            csv,
            "{},{:.9e},{},{},{},{:.3e}",
            r.number,
            r.frequency_hz,
            f(e.map(|e| e.x)),
            f(e.map(|e| e.y)),
            f(e.map(|e| e.z)),
            r.relative_residual
        );
    }
    if let Some(l) = &loaded {
        let fields = mode_fields(&system, &sol);
        outputs.write_vtu("modes.vtu", &l.structure, &fields)?;
    }
    outputs.write("modes.csv", csv.as_bytes())?;
    outputs.write("modes.json", serde_json::to_string_pretty(&report)?.as_bytes())?;
    outputs.commit()?;
    drop(progress);
    if o.json {
        return print_json(&report);
    }
    print_human(&report, &sol);
    Ok(())
}

fn print_human(report: &ModesReport, sol: &ModalSolution) {
    match report.total_mass_kg {
        Some(t) => {
            println!("{}: {} modes, {} free DOFs, total mass {:.4} kg", report.model, sol.n_modes(), report.n_dofs, t)
        }
        None => println!("{}: {} modes, {} DOFs", report.model, sol.n_modes(), report.n_dofs),
    }
    let pct = |v: Option<f64>| v.map(|x| format!("{:.2}", 100.0 * x)).unwrap_or_else(|| "-".into());
    let table_rows = report
        .modes
        .iter()
        .map(|r| {
            let e = r.effective_mass_fraction;
            vec![
                r.number.to_string(),
                if r.zero_energy { format!("{:.4} (rigid)", r.frequency_hz) } else { format!("{:.4}", r.frequency_hz) },
                pct(e.map(|e| e.x)),
                pct(e.map(|e| e.y)),
                pct(e.map(|e| e.z)),
                format!("{:.1e}", r.relative_residual),
            ]
        })
        .collect();
    println!(
        "{}",
        table(&["mode", "frequency [Hz]", "m_eff x [%]", "m_eff y [%]", "m_eff z [%]", "residual"], table_rows)
    );
    if let Some(c) = report.cumulative_mass_fraction {
        println!("cumulative effective mass: x {:.2} %, y {:.2} %, z {:.2} %", 100.0 * c.x, 100.0 * c.y, 100.0 * c.z);
    }
    let st = &sol.sturm_check;
    println!(
        "Sturm check: {} eigenvalues below {:.4} Hz by the inertia of K - sigma M, {} found: {}",
        st.count_expected,
        st.shift_hz,
        st.count_found,
        if st.passed { "passed" } else { "FAILED" }
    );
    println!(
        "solver: {}, block size {}, {} factorizations, {} block solves, M-orthogonality error {:.1e}, {:.3} s",
        report.solver.method,
        report.solver.block_size,
        report.solver.stats.factorizations,
        report.solver.stats.block_solves,
        report.solver.orthogonality_error,
        report.solver.solve_seconds
    );
    for w in &report.warnings {
        println!("warning: {w}");
    }
    println!("wrote {}", report.files.join(", "));
    println!("{CAUTION}");
}

/// `antinode export-matrices`: K and M after constraints as MatrixMarket files.
pub fn export(model: &Path, out: Option<&Path>, with_absorbers: bool) -> Result<()> {
    let l = load(model)?;
    let (system, _) = assemble_checked(&l, with_absorbers)?;
    let mut outputs = Outputs::create(model, out)?;
    let (k, m) = (outputs.path("K.mtx"), outputs.path("M.mtx"));
    let (k_stage, m_stage) = (outputs.staging("K.mtx"), outputs.staging("M.mtx"));
    antinode_solver::write_matrix_market(&system, &k_stage, &m_stage)?;
    outputs.commit()?;
    println!(
        "wrote {} and {} ({} DOFs, {} stored entries of K)",
        k.display(),
        m.display(),
        system.n_dofs(),
        system.n_stored()
    );
    Ok(())
}
