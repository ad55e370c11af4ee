//! `antinode modes`: natural modes with effective masses and the Sturm check; for a model also the
//! mode insight (six-direction effective masses, classes, energy shares); modes.json, modes.csv,
//! modes.vtu, plots and an optional animation. Works on a model file or on K and M given as
//! MatrixMarket files.

use std::fmt::Write as _;
use std::path::{Path, PathBuf};
use std::time::Instant;

use antinode_mesh::{NodalScalars, NodalVectors, Structure};
use antinode_solver::{
    EigenParams, InsightOptions, ModalSolution, ModeClass, ModeInsight, ModeKind, ModeRequest, RIGID_DIRECTIONS,
    SolveStats, SturmCheck, System, conditioning_warnings, mac_matrix, mass_ratio_maps, memory_estimate, mode_insight,
    participation, sampled_shapes, solve_modes, system_from_matrix_market, tube_profiles,
};
use anyhow::{Context, Result, bail};
use serde::Serialize;

use crate::output::{Six, Xyz, print_json, table};
use crate::pipeline::{
    CAUTION, Outputs, Progress, assemble_checked, assemble_checked_for, confirm_zero_energy, eigen_params, load,
    memory_guard,
};
use crate::plot;

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
    /// Reference point of the rotational effective masses, in m (default: the centre of mass).
    pub reference_point: Option<Vec<f64>>,
    /// Mode (from 1) to animate.
    pub animate: Option<usize>,
    /// Frames of the animation over one period.
    pub frames: usize,
    /// Largest translation in the animation, in m (default 5 % of the model's size).
    pub amplitude: Option<f64>,
}

/// Default number of animation frames over one period.
pub const DEFAULT_FRAMES: usize = 24;

/// Default number of modes when neither a count nor a frequency is given.
const DEFAULT_COUNT: usize = 20;

#[derive(Serialize)]
struct ModeRow {
    number: usize,
    frequency_hz: f64,
    eigenvalue_rad2_per_s2: f64,
    /// Absent for matrices without geometry (as every field below but the last two).
    effective_mass_fraction: Option<Six>,
    effective_mass_kg: Option<Six>,
    participation: Option<Six>,
    cumulative_fraction: Option<Six>,
    /// φᵀ M φ for the shape scaled to a largest translation of 1 m, in kg.
    generalised_mass: Option<f64>,
    class: Option<ModeClass>,
    /// Direction with the largest effective-mass fraction (absent when every fraction is below 1e-9).
    dominant_direction: Option<&'static str>,
    energy_fractions: Option<Vec<Share>>,
    region_energy_fractions: Option<Vec<Share>>,
    /// Where the mode moves most: the node with the largest translation.
    largest_translation: Option<Largest>,
    relative_residual: f64,
    zero_energy: bool,
}

/// The node of a mode's largest translation.
#[derive(Serialize)]
struct Largest {
    node: u64,
    /// Position of the node in the VTK files' points, from 0.
    point_index: usize,
    xyz: [f64; 3],
    /// The mass-normalised translation there (the VTK mode vector), in m per unit modal coordinate.
    translation: [f64; 3],
}

/// Kinetic and strain energy share of a part or region.
#[derive(Serialize)]
struct Share {
    name: String,
    kinetic: f64,
    strain: f64,
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
    /// Reference point of the rotational directions, in m.
    reference_point_m: Option<[f64; 3]>,
    /// Diagonal of the rigid-body mass matrix: kg for x, y, z; kg·m² about the reference point.
    rigid_body_mass: Option<Six>,
    /// Part names (the `part` cell array of the VTK files counts from 0 in this list).
    parts: Vec<String>,
    modes: Vec<ModeRow>,
    cumulative_mass_fraction: Option<Six>,
    sturm_check: SturmCheck,
    solver: Solver,
    /// Estimated peak memory of the eigen solution before it ran, in bytes (parts in
    /// `memory_estimate`; from the symbolic factorization).
    memory_estimate_bytes: u64,
    memory_estimate: antinode_solver::MemoryEstimate,
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

/// Most modes one `--count` asks for: beyond this a band request (`--max-frequency`) is the way to
/// get every mode up to a frequency, with the Sturm check proving none is missing.
const MAX_COUNT: usize = 2000;

/// The eigen request of the options; a count above the number of free DOFs or above [`MAX_COUNT`]
/// is capped, with a note on standard error.
fn request(o: &Options, n_dofs: usize) -> Result<ModeRequest> {
    let count = o.count.map(|c| {
        let capped = c.min(n_dofs).min(MAX_COUNT);
        if capped < c {
            let why = if capped == n_dofs {
                format!("the model has {n_dofs} free DOFs, so that is every mode")
            } else {
                format!("more than {MAX_COUNT} modes: give --max-frequency HZ to get every mode up to a frequency")
            };
            eprintln!("note: --count {c} capped at {capped} ({why})");
        }
        capped
    });
    Ok(match (count, o.min_frequency, o.max_frequency) {
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
    // Modes the memory estimate is made for: the count asked for (a band's count is known only
    // after a factorization, so a band without --count is estimated for the default count).
    let planned = o.count.unwrap_or(DEFAULT_COUNT).min(MAX_COUNT);
    let block = o.block_size.unwrap_or(EigenParams::default().block_size);
    let (loaded, system, name, mut params, memory) = match &o.source {
        Source::Model(path) => {
            let l = load(path)?;
            let (system, zero, memory) = assemble_checked_for(&l, o.with_absorbers, planned)?;
            let params = eigen_params(&l, zero);
            (Some(l), system, path.clone(), params, memory)
        }
        Source::Matrices { stiffness, mass } => {
            let system = system_from_matrix_market(stiffness, mass)?;
            let memory = memory_estimate(&system, planned, block);
            (None, system, stiffness.clone(), EigenParams::default(), memory)
        }
    };
    // A model was checked for the default block size before its first factorization; matrices and
    // another block size are checked here, before the eigen solution.
    let memory = if loaded.is_none() || memory.block_size != block.max(1) {
        let m = memory_estimate(&system, planned, block);
        memory_guard(&m).with_context(|| format!("{} is too large for this machine", name.display()))?;
        m
    } else {
        memory
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
    let mut sol = solve_modes(&system, req, &params).with_context(|| format!("modes of {}", name.display()))?;
    let solve_seconds = t1.elapsed().as_secs_f64();
    if let Some(l) = &loaded {
        confirm_zero_energy(l, &system, &sol)?;
    }
    progress.stage("writing files");
    let total = loaded
        .as_ref()
        .map(|l| l.structure.total_mass() + if o.with_absorbers { l.structure.absorber_mass() } else { 0.0 });
    let insight = match &loaded {
        Some(l) => {
            let reference_point = match &o.reference_point {
                None => None,
                Some(v) => match v.as_slice() {
                    [x, y, z] if v.iter().all(|c| c.is_finite()) => Some([*x, *y, *z]),
                    _ => bail!("--reference-point needs three finite coordinates X,Y,Z in m, got {v:?}"),
                },
            };
            let opts = InsightOptions { reference_point, ..InsightOptions::default() };
            Some(
                mode_insight(&l.structure, &system, &mut sol, &opts)
                    .with_context(|| format!("in {}", l.path.display()))?,
            )
        }
        None => {
            if o.reference_point.is_some() || o.animate.is_some() {
                bail!("--reference-point and --animate need a model file (matrices carry no geometry)");
            }
            None
        }
    };
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
        let facts = insight.as_ref().map(|ins| &ins.modes[i]);
        let shares = |names: &[String], k: &[f64], st: &[f64]| -> Vec<Share> {
            names
                .iter()
                .enumerate()
                .map(|(p, n)| Share { name: n.clone(), kinetic: k[p], strain: st[p] })
                .filter(|s| s.kinetic > 0.0 || s.strain > 0.0)
                .collect()
        };
        rows.push(ModeRow {
            number: i + 1,
            frequency_hz: sol.frequency_hz(i),
            eigenvalue_rad2_per_s2: sol.eigenvalues[i],
            effective_mass_fraction: facts.map(|f| f.effective_mass_fraction.into()),
            effective_mass_kg: facts.map(|f| f.effective_mass.into()),
            participation: facts.map(|f| f.participation.into()),
            cumulative_fraction: facts.map(|f| f.cumulative_fraction.into()),
            generalised_mass: facts.map(|f| f.generalised_mass),
            class: facts.map(|f| f.class.clone()),
            dominant_direction: facts.and_then(|f| {
                let d = dominant(&f.effective_mass_fraction);
                (f.effective_mass_fraction[d] > 1e-9).then_some(RIGID_DIRECTIONS[d])
            }),
            energy_fractions: insight
                .as_ref()
                .zip(facts)
                .map(|(ins, f)| shares(&ins.part_names, &f.kinetic_fraction, &f.strain_fraction)),
            region_energy_fractions: insight
                .as_ref()
                .zip(facts)
                .map(|(ins, f)| shares(&ins.region_names, &f.region_kinetic_fraction, &f.region_strain_fraction)),
            largest_translation: loaded.as_ref().map(|l| {
                let u = system.dof_map().expand(sol.shape(i));
                let size = |v: &[f64; 6]| v[0] * v[0] + v[1] * v[1] + v[2] * v[2];
                let k = (0..u.len()).fold(0, |b, k| if size(&u[k]) > size(&u[b]) { k } else { b });
                Largest {
                    node: l.structure.nodes[k].id.0,
                    point_index: k,
                    xyz: l.structure.nodes[k].xyz,
                    translation: [u[k][0], u[k][1], u[k][2]],
                }
            }),
            relative_residual: sol.residuals[i],
            zero_energy: i < sol.n_zero_energy,
        });
    }
    if let Some(a) = o.animate {
        if a == 0 || a > sol.n_modes() {
            bail!("--animate {a}: there are modes 1 to {}", sol.n_modes());
        }
        if o.frames < 2 {
            bail!("--frames {}: at least 2 frames are needed", o.frames);
        }
    }
    if let Some(a) = o.amplitude {
        if !(a.is_finite() && a > 0.0) {
            bail!("--amplitude {a}: the largest translation of the animation must be a positive length in m");
        }
    }
    let mut outputs = Outputs::create(&name, o.out.as_deref())?;
    let mut files = vec![outputs.path("modes.json"), outputs.path("modes.csv")];
    if let Some(l) = &loaded {
        for f in ["modes.vtu", "modes.svg", "mac.svg"] {
            files.push(outputs.path(f));
        }
        if !l.structure.tubes.is_empty() {
            files.push(outputs.path("shape.svg"));
        }
        if let Some(a) = o.animate {
            files.push(outputs.path(&format!("mode-{a}.pvd")));
        }
    }
    let mut warnings = residual_warnings(&sol);
    if let Some(l) = &loaded {
        warnings.extend(l.structure.warnings.iter().cloned());
    }
    warnings.extend(conditioning_warnings(&system, loaded.as_ref().map(|l| &l.structure)));
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
        reference_point_m: insight.as_ref().map(|i| i.reference_point),
        rigid_body_mass: insight.as_ref().map(|i| i.rigid_mass.into()),
        parts: insight.as_ref().map(|i| i.part_names.clone()).unwrap_or_default(),
        modes: rows,
        cumulative_mass_fraction: match &insight {
            Some(ins) => ins.modes.last().map(|m| m.cumulative_fraction.into()),
            None => total.map(|_| [cumulative[0], cumulative[1], cumulative[2], 0.0, 0.0, 0.0].into()),
        },
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
        memory_estimate_bytes: memory.total_bytes,
        memory_estimate: memory,
        files: files.iter().map(|p| p.display().to_string()).collect(),
        warnings,
    };
    let csv = modes_csv(&report);
    if let (Some(l), Some(ins)) = (&loaded, &insight) {
        write_model_files(&mut outputs, l, &system, &sol, ins, o)?;
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

/// Index of the largest value.
fn dominant(v: &[f64; 6]) -> usize {
    (0..6).fold(0, |best, d| if v[d] > v[best] { d } else { best })
}

/// The class in a few words, e.g. `ovaling n=2 m=1, pair 9`.
fn class_words(c: &ModeClass) -> String {
    let mut w = c.kind.word().replace('_', " ");
    if c.kind == ModeKind::Panel {
        if let (Some(m), Some(n)) = (c.m, c.n) {
            w.push_str(&format!(" ({m},{n})"));
        }
    } else {
        if let Some(p) = c.plane {
            w.push_str(&format!(" {p}"));
        }
        if let Some(n) = c.n {
            w.push_str(&format!(" n={n}"));
        }
        if let Some(m) = c.m {
            w.push_str(&format!(" m={m}"));
        }
    }
    if let Some(p) = c.pair {
        w.push_str(&format!(", pair {p}"));
    }
    w
}

/// modes.csv: the original columns first, then the insight columns (empty without a model).
fn modes_csv(report: &ModesReport) -> String {
    let mut csv = String::from(
        "number,frequency_hz,effective_mass_fraction_x,effective_mass_fraction_y,effective_mass_fraction_z,relative_residual,\
         effective_mass_fraction_rx,effective_mass_fraction_ry,effective_mass_fraction_rz,\
         cumulative_fraction_x,cumulative_fraction_y,cumulative_fraction_z,cumulative_fraction_rx,cumulative_fraction_ry,\
         cumulative_fraction_rz,generalised_mass_kg,class,n,m,plane,pair\n",
    );
    let f = |v: Option<f64>| v.map(|x| format!("{x:.6e}")).unwrap_or_default();
    let u = |v: Option<usize>| v.map(|x| x.to_string()).unwrap_or_default();
    for r in &report.modes {
        let e = r.effective_mass_fraction;
        let c = r.cumulative_fraction;
        let _ = writeln!(
            csv,
            "{},{:.9e},{},{},{},{:.3e},{},{},{},{},{},{},{},{},{},{},{},{},{},{},{}",
            r.number,
            r.frequency_hz,
            f(e.map(|e| e.x)),
            f(e.map(|e| e.y)),
            f(e.map(|e| e.z)),
            r.relative_residual,
            f(e.map(|e| e.rx)),
            f(e.map(|e| e.ry)),
            f(e.map(|e| e.rz)),
            f(c.map(|e| e.x)),
            f(c.map(|e| e.y)),
            f(c.map(|e| e.z)),
            f(c.map(|e| e.rx)),
            f(c.map(|e| e.ry)),
            f(c.map(|e| e.rz)),
            f(r.generalised_mass),
            r.class.as_ref().map(|c| c.kind.word()).unwrap_or_default(),
            u(r.class.as_ref().and_then(|c| c.n)),
            u(r.class.as_ref().and_then(|c| c.m)),
            r.class.as_ref().and_then(|c| c.plane).unwrap_or_default(),
            u(r.class.as_ref().and_then(|c| c.pair)),
        );
    }
    csv
}

/// Translations of every mode at every node (3 per node), for the auto-MAC.
fn translations(system: &System, sol: &ModalSolution, n_nodes: usize) -> Vec<Vec<f64>> {
    let points: Vec<(usize, [f64; 6])> = (0..n_nodes)
        .flat_map(|v| {
            [[1.0, 0.0, 0.0, 0.0, 0.0, 0.0], [0.0, 1.0, 0.0, 0.0, 0.0, 0.0], [0.0, 0.0, 1.0, 0.0, 0.0, 0.0]]
                .map(|d| (v, d))
        })
        .collect();
    sampled_shapes(system, sol, &points)
}

/// The VTK files and plots of a model's modes.
fn write_model_files(
    outputs: &mut Outputs,
    l: &crate::pipeline::Loaded,
    system: &System,
    sol: &ModalSolution,
    ins: &ModeInsight,
    o: &Options,
) -> Result<()> {
    let s: &Structure = &l.structure;
    let fields = mode_fields(system, sol);
    let mut scalars = Vec::new();
    for (i, [normal, axial]) in mass_ratio_maps(s, system, sol).into_iter().enumerate() {
        scalars.push(NodalScalars { name: format!("mode_{}_mass_ratio_per_kg_normal", i + 1), values: normal });
        scalars.push(NodalScalars { name: format!("mode_{}_mass_ratio_per_kg_axial", i + 1), values: axial });
    }
    outputs.write_vtu_with("modes.vtu", s, &fields, &scalars)?;
    let title = if s.title.is_empty() { l.path.display().to_string() } else { s.title.clone() };
    let short: String = title.chars().take(70).collect();
    let classes: Vec<(usize, f64, String)> = ins
        .modes
        .iter()
        .enumerate()
        .map(|(i, m)| (i + 1, sol.frequency_hz(i), m.class.kind.word().to_string()))
        .collect();
    outputs.write("modes.svg", plot::modes_svg(&format!("modes of {short}"), &classes)?.as_bytes())?;
    let t = translations(system, sol, s.nodes.len());
    let auto = mac_matrix(&t, &t);
    outputs.write("mac.svg", plot::heat_map_svg("auto-MAC of the modes", "mode", "mode", &auto)?.as_bytes())?;
    if !s.tubes.is_empty() {
        let (x, profiles) = tube_profiles(s, system, sol, 0);
        let series: Vec<(String, Vec<f64>)> = profiles
            .into_iter()
            .enumerate()
            .skip(sol.n_zero_energy)
            .take(6)
            .map(|(i, p)| {
                (format!("mode {} {:.1} Hz: {}", i + 1, sol.frequency_hz(i), class_words(&ins.modes[i].class)), p)
            })
            .collect();
        let name = &s.tubes[0].name;
        let svg = plot::profiles_svg(
            &format!("motion across the axis along tube \"{name}\""),
            "distance from the tube's start [m]",
            &x,
            &series,
        )?;
        outputs.write("shape.svg", svg.as_bytes())?;
    }
    if let Some(a) = o.animate {
        let i = a - 1;
        let u = system.dof_map().expand(sol.shape(i));
        let umax = u.iter().map(|v| (v[0] * v[0] + v[1] * v[1] + v[2] * v[2]).sqrt()).fold(0.0, f64::max);
        let amplitude = o.amplitude.unwrap_or(0.05 * s.size());
        let scale = if umax > 0.0 { amplitude / umax } else { 0.0 };
        let f = sol.frequency_hz(i);
        let period = if f > 0.0 { 1.0 / f } else { 1.0 };
        let mut entries = Vec::new();
        for k in 0..o.frames {
            let phase = 2.0 * std::f64::consts::PI * k as f64 / o.frames as f64;
            let d: Vec<[f64; 3]> = u.iter().map(|v| [0, 1, 2].map(|c| scale * phase.cos() * v[c])).collect();
            let name = format!("mode-{a}-{k:03}.vtu");
            let field = NodalVectors { name: "displacement".into(), values: d.clone() };
            let bytes = antinode_mesh::vtu_bytes(s, Some(&d), &[field], &[])?;
            outputs.write(&name, &bytes)?;
            entries.push((period * k as f64 / o.frames as f64, name));
        }
        outputs.write(&format!("mode-{a}.pvd"), antinode_mesh::pvd_collection(&entries).as_bytes())?;
    }
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
            let dominant = match (r.dominant_direction, e) {
                (Some(d), Some(e)) => {
                    let v =
                        [e.x, e.y, e.z, e.rx, e.ry, e.rz][RIGID_DIRECTIONS.iter().position(|x| *x == d).unwrap_or(0)];
                    format!("{d} {:.2} %", 100.0 * v)
                }
                _ => "-".into(),
            };
            vec![
                r.number.to_string(),
                if r.zero_energy { format!("{:.4} (rigid)", r.frequency_hz) } else { format!("{:.4}", r.frequency_hz) },
                r.class.as_ref().map(class_words).unwrap_or_else(|| "-".into()),
                dominant,
                pct(e.map(|e| e.x)),
                pct(e.map(|e| e.y)),
                pct(e.map(|e| e.z)),
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
                "class",
                "largest m_eff",
                "m_eff x [%]",
                "m_eff y [%]",
                "m_eff z [%]",
                "residual"
            ],
            table_rows
        )
    );
    if let Some(c) = report.cumulative_mass_fraction {
        println!(
            "cumulative effective mass: x {:.2} %, y {:.2} %, z {:.2} %, rx {:.2} %, ry {:.2} %, rz {:.2} %",
            100.0 * c.x,
            100.0 * c.y,
            100.0 * c.z,
            100.0 * c.rx,
            100.0 * c.ry,
            100.0 * c.rz
        );
    }
    if let Some(p) = report.reference_point_m {
        println!("rotations about the reference point ({:.4}, {:.4}, {:.4}) m", p[0], p[1], p[2]);
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
