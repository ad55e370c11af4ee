//! Pipeline benchmark of antinode: times the library calls the `antinode` program chains, on two
//! models built in code (no files are read or written).
//!
//! a. A 3D space frame of steel tubes, 8 × 8 × 8 bays of 1 m, every member a `line` of 5 beam
//!    elements joined at coincident nodes (9,720 elements), clamped at the 81 base nodes:
//!    validation, assembly (and its rate in elements per second), the zero-energy check, and the
//!    lowest 20 modes with the solver's work counters.
//! b. The work of `antinode design` on a pinned-pinned steel tube shaft, 4 m long, 2,000 elements,
//!    with 500 candidate nodes spread evenly along the whole shaft (one single-node line range per
//!    candidate, every 4th node from node 2 to node 1,998), direction z, and 5 absorbers of 0.75 kg
//!    on the 5 lowest bending frequencies, each targeted at the member of its y/z pair that moves
//!    most along z at the drive point (mode numbers chosen from an untimed run, as a user would
//!    after `antinode modes`): validate, assemble, check_zero_energy, solve_modes for every mode up
//!    to `study.max_mode_frequency_hz`, `StudyModel::build` with candidates and `design`, each
//!    stage timed separately and the chain as a whole, then a breakdown of `StudyModel::build` and
//!    `design` from their public parts. b2 repeats the run with `"targets": "auto"`. Writing the
//!    output files (which the program also does) is not timed. Target: the whole design run in
//!    under 1 s.
//!
//! c. A thin steel tube as shells (mid radius 0.25 m, wall 2 mm, 2 m long, 128 × 130 quads,
//!    16,768 nodes, ~100k free DOFs), free-free: validation, shell assembly (elements per second on
//!    all rayon threads and on one), the zero-energy check and the lowest 20 modes.
//!
//! Each measurement is repeated N times (`ANTINODE_BENCH_REPS`, default 5); the tables give the
//! median and the minimum. `ANTINODE_BENCH_ONLY=frame`, `shaft` or `tube` runs one part. Threads follow
//! `RAYON_NUM_THREADS` as in the program.
//!
//! Run from the workspace root (whose default member is the CLI, hence `-p`):
//! `cargo bench -p antinode --bench pipeline`. Figures and how to read them: `docs/benchmarks.md`.

use std::error::Error;
use std::path::Path;
use std::time::{Duration, Instant};

use antinode::mesh::{Structure, parse_model, validate};
use antinode::placement::{StudyModel, design};
use antinode::solver::element::beam::MassKind;
use antinode::solver::element::shell_quad::quad_matrices;
use antinode::solver::{
    AssemblyOptions, Coordinate, EigenParams, ModalModel, ModalSolution, ModeRequest, System, assemble,
    check_zero_energy, solve_modes,
};
use serde_json::{Value, json};

type Res<T> = Result<T, Box<dyn Error>>;

/// Bays of the frame along X, Y and Z.
const BAYS: [usize; 3] = [8, 8, 8];
/// Bay length of the frame, in m.
const BAY: f64 = 1.0;
/// Beam elements per frame member.
const ELEMENTS_PER_MEMBER: usize = 5;
/// Lowest modes asked of the frame.
const FRAME_MODES: usize = 20;

/// Shaft length, in m.
const SHAFT_LENGTH: f64 = 4.0;
/// Shaft elements.
const SHAFT_ELEMENTS: usize = 2000;
/// Candidate nodes along the shaft.
const CANDIDATES: usize = 500;
/// Absorbers to design.
const ABSORBERS: usize = 5;

fn reps() -> usize {
    std::env::var("ANTINODE_BENCH_REPS")
        .ok()
        .and_then(|s| s.trim().parse::<usize>().ok())
        .filter(|&n| n > 0)
        .unwrap_or(5)
}

/// Median and minimum of repeated timings.
#[derive(Clone, Copy)]
struct Timing {
    median: Duration,
    min: Duration,
}

impl Timing {
    fn of(samples: &[Duration]) -> Self {
        let mut s = samples.to_vec();
        s.sort();
        let n = s.len();
        let median = if n % 2 == 1 { s[n / 2] } else { (s[n / 2 - 1] + s[n / 2]) / 2 };
        Self { median, min: s.first().copied().unwrap_or_default() }
    }
}

fn ms(d: Duration) -> String {
    format!("{:.2}", d.as_secs_f64() * 1e3)
}

/// Runs `f` `n` times; returns the timings and the last result.
fn repeat<T>(n: usize, mut f: impl FnMut() -> Res<T>) -> Res<(Timing, T)> {
    let mut samples = Vec::with_capacity(n);
    let mut last = None;
    for _ in 0..n {
        let t = Instant::now();
        let v = f()?;
        samples.push(t.elapsed());
        last = Some(v);
    }
    let v = last.ok_or("no repetition ran")?;
    Ok((Timing::of(&samples), v))
}

fn print_table(header: &[&str], rows: &[Vec<String>]) {
    println!("| {} |", header.join(" | "));
    println!("|{}|", header.iter().map(|_| "---").collect::<Vec<_>>().join("|"));
    for r in rows {
        println!("| {} |", r.join(" | "));
    }
    println!();
}

/// Table of stages: median and minimum time, and for rows marked `true` the rate of `elements`
/// per second at the median.
fn stage_rate_table(elements: f64, rows: &[(String, Timing, bool)]) {
    let rows: Vec<Vec<String>> = rows
        .iter()
        .map(|(name, t, rated)| {
            let rate = if *rated { format!("{:.0}", elements / t.median.as_secs_f64()) } else { String::new() };
            vec![name.clone(), ms(t.median), ms(t.min), rate]
        })
        .collect();
    print_table(&["stage", "median [ms]", "min [ms]", "rate (median) [elements/s]"], &rows);
}

fn steel() -> Value {
    json!({"steel": {"youngs_modulus": 2.1e11, "poisson_ratio": 0.3, "density": 7850.0}})
}

/// The frame model as JSON text: explicit joint nodes (ids from 1, x fastest), one line per member.
fn frame_json() -> String {
    let [nx, ny, nz] = BAYS;
    let id = |i: usize, j: usize, k: usize| 1 + i + (nx + 1) * (j + (ny + 1) * k);
    let xyz = |i: usize, j: usize, k: usize| [i as f64 * BAY, j as f64 * BAY, k as f64 * BAY];
    let mut nodes = Vec::new();
    let mut lines = Vec::new();
    let mut supports = Vec::new();
    for k in 0..=nz {
        for j in 0..=ny {
            for i in 0..=nx {
                nodes.push(json!({"id": id(i, j, k), "xyz": xyz(i, j, k)}));
                let mut member = |name: String, to: [f64; 3]| {
                    lines.push(json!({
                        "name": name, "from": xyz(i, j, k), "to": to,
                        "elements": ELEMENTS_PER_MEMBER, "section": "tube", "material": "steel"
                    }));
                };
                if i < nx {
                    member(format!("x {i} {j} {k}"), xyz(i + 1, j, k));
                }
                if j < ny {
                    member(format!("y {i} {j} {k}"), xyz(i, j + 1, k));
                }
                if k < nz {
                    member(format!("z {i} {j} {k}"), xyz(i, j, k + 1));
                }
                if k == 0 {
                    supports.push(json!({"at": {"node": id(i, j, k)}, "fixed": "clamped"}));
                }
            }
        }
    }
    json!({
        "title": "Benchmark: space frame of steel tubes, 8 x 8 x 8 bays of 1 m, clamped at the base",
        "materials": steel(),
        "sections": {"tube": {"circular_tube": {"outer_diameter": 0.06, "wall_thickness": 0.004}}},
        "nodes": nodes,
        "lines": lines,
        "supports": supports,
    })
    .to_string()
}

/// The shaft model as JSON text. Tube 80 × 4 mm: about 7.5 kg/m, 30 kg in all, absorbers of
/// 0.75 kg (2.5 % of it) each. Pinned-pinned bending pairs (one in y, one in z) lie near
/// 13.7 n² Hz (Euler-Bernoulli), so the band [5, 400] Hz holds n = 1 to 5 (about 14 Hz to 342 Hz;
/// n = 6 is near 492 Hz), and `max_mode_frequency_hz` defaults to twice the band's top, 800 Hz.
fn shaft_json(targets: Value) -> String {
    let at = |f: f64| json!({"line": "shaft", "at": f});
    // Candidate k is node 4k + 2 of the line (fractions 0.001 to 0.999, 8 mm apart): 500
    // single-node line ranges, each from = to = that node's fraction.
    let candidates: Vec<Value> = (0..CANDIDATES)
        .map(|k| {
            let f = (4 * k + 2) as f64 / SHAFT_ELEMENTS as f64;
            json!({"line": "shaft", "from": f, "to": f})
        })
        .collect();
    json!({
        "title": "Benchmark: pinned-pinned steel tube shaft, 4 m, 2000 elements, 500 candidates",
        "materials": steel(),
        "sections": {"tube": {"circular_tube": {"outer_diameter": 0.08, "wall_thickness": 0.004}}},
        "lines": [{"name": "shaft", "from": [0.0, 0.0, 0.0], "to": [SHAFT_LENGTH, 0.0, 0.0],
                   "elements": SHAFT_ELEMENTS, "section": "tube", "material": "steel"}],
        "supports": [
            {"at": at(0.0), "fixed": ["ux", "uy", "uz", "rx"]},
            {"at": at(1.0), "fixed": ["uy", "uz"]}
        ],
        "study": {
            "band_hz": [5.0, 400.0],
            "excitation": [{"at": at(0.1), "direction": "z", "amplitude": 100.0}],
            "response_points": [
                {"name": "drive point", "at": at(0.1), "direction": "z"},
                {"name": "0.37 L", "at": at(0.37), "direction": "z"},
                {"name": "0.71 L", "at": at(0.71), "direction": "z"}
            ],
            "modal_damping_ratio": 0.01,
            "absorber_design": {
                "targets": targets,
                "count": ABSORBERS,
                "mass_each": 0.75,
                "candidates": candidates,
                "directions": ["z"],
                "objective": "peak"
            }
        }
    })
    .to_string()
}

fn frame(n: usize) -> Res<()> {
    let text = frame_json();
    let path = Path::new("frame (built in code)");
    let (t_parse, model) = repeat(n, || Ok(parse_model(&text, path)?))?;
    let (t_validate, s) = repeat(n, || Ok(validate(&model)?))?;
    let (t_assemble, system) = repeat(n, || Ok(assemble(&s, AssemblyOptions::default())?))?;
    let (t_zero, zero) = repeat(n, || Ok(check_zero_energy(&s, &system)?))?;
    let (t_modes, sol) =
        repeat(n, || Ok(solve_modes(&system, ModeRequest::Lowest(FRAME_MODES), &EigenParams::default())?))?;
    let elements = s.beams.len() as f64;
    println!(
        "## a. Space frame: {} beam elements, {} nodes, {} free DOFs, {} stored entries of K, \
         {} zero-energy modes, total mass {:.1} kg ({} runs each)\n",
        s.beams.len(),
        s.nodes.len(),
        system.n_dofs(),
        system.n_stored(),
        zero,
        s.total_mass(),
        n
    );
    stage_rate_table(
        elements,
        &[
            ("parse JSON (`parse_model`)".into(), t_parse, true),
            ("validate".into(), t_validate, true),
            ("assemble (K, M, symbolic factorization)".into(), t_assemble, true),
            ("check_zero_energy".into(), t_zero, false),
            (format!("solve_modes, lowest {FRAME_MODES}"), t_modes, false),
        ],
    );
    print_solution(&sol);
    Ok(())
}

/// Elements around and along the shell tube of part c.
const TUBE_CELLS: [usize; 2] = [128, 130];

fn tube_json() -> String {
    let (r, l, t) = (0.25, 2.0, 0.002);
    let [nc, nl] = TUBE_CELLS;
    let id = |k: usize, j: usize| j * nc + (k % nc) + 1;
    let mut nodes = Vec::with_capacity(nc * (nl + 1));
    for j in 0..=nl {
        for k in 0..nc {
            let th = 2.0 * std::f64::consts::PI * k as f64 / nc as f64;
            nodes.push(json!({"id": id(k, j), "xyz": [l * j as f64 / nl as f64, r * th.cos(), r * th.sin()]}));
        }
    }
    let mut shells = Vec::with_capacity(nc * nl);
    for j in 0..nl {
        for k in 0..nc {
            let quad = [id(k, j), id(k + 1, j), id(k + 1, j + 1), id(k, j + 1)];
            shells.push(json!({"id": shells.len() + 1, "nodes": quad, "thickness": t, "material": "steel"}));
        }
    }
    json!({"materials": steel(), "nodes": nodes, "shells": shells}).to_string()
}

fn tube(n: usize) -> Res<()> {
    let text = tube_json();
    let model = parse_model(&text, Path::new("tube (built in code)"))?;
    let (t_validate, s) = repeat(n, || Ok(validate(&model)?))?;
    let (t_assemble, system) = repeat(n, || Ok(assemble(&s, AssemblyOptions::default())?))?;
    let one = rayon::ThreadPoolBuilder::new().num_threads(1).build()?;
    let (t_assemble_1, _) =
        one.install(|| repeat(n, || Ok(assemble(&s, AssemblyOptions::default())?)).map_err(|e| e.to_string()))?;
    // The element kernels alone (no global assembly), as the assembler calls them.
    let kernels = || -> Res<f64> {
        use rayon::prelude::*;
        let sum: Result<f64, String> = s
            .shells
            .par_iter()
            .map(|e| {
                let x = |i: usize| s.nodes[e.nodes[i]].xyz;
                quad_matrices(&[x(0), x(1), x(2), x(3)], e.thickness, &e.material, MassKind::Consistent)
                    .map(|m| m.stiffness[0] + m.mass[0])
                    .map_err(|d| format!("{}: {d:?}", e.label))
            })
            .sum();
        Ok(sum?)
    };
    let (t_kernels, _) = repeat(n, kernels)?;
    let (t_kernels_1, _) = one.install(|| repeat(n, kernels).map_err(|e| e.to_string()))?;
    let (t_zero, zero) = repeat(n, || Ok(check_zero_energy(&s, &system)?))?;
    let (t_modes, sol) =
        repeat(n, || Ok(solve_modes(&system, ModeRequest::Lowest(FRAME_MODES), &EigenParams::default())?))?;
    let elements = s.shells.len() as f64;
    println!(
        "## c. Shell tube: {} quadrilateral shells, {} nodes, {} free DOFs, {} stored entries of K, \
         {} zero-energy modes, total mass {:.2} kg ({} runs each)\n",
        s.shells.len(),
        s.nodes.len(),
        system.n_dofs(),
        system.n_stored(),
        zero,
        s.total_mass(),
        n
    );
    stage_rate_table(
        elements,
        &[
            ("validate".into(), t_validate, true),
            ("shell element matrices only, all threads".into(), t_kernels, true),
            ("shell element matrices only, 1 thread".into(), t_kernels_1, true),
            ("assemble (K, M, symbolic factorization), all threads".into(), t_assemble, true),
            ("assemble, 1 thread".into(), t_assemble_1, true),
            ("check_zero_energy".into(), t_zero, false),
            (format!("solve_modes, lowest {FRAME_MODES}"), t_modes, false),
        ],
    );
    println!(
        "time on all threads / on one thread (medians): element matrices {:.2}, whole assembly {:.2}\n",
        t_kernels.median.as_secs_f64() / t_kernels_1.median.as_secs_f64(),
        t_assemble.median.as_secs_f64() / t_assemble_1.median.as_secs_f64()
    );
    print_solution(&sol);
    Ok(())
}

fn print_solution(sol: &ModalSolution) {
    let st = sol.stats;
    let max_res = sol.residuals.iter().copied().fold(0.0, f64::max);
    print_table(
        &[
            "modes",
            "f first [Hz]",
            "f last [Hz]",
            "factorizations",
            "block solves",
            "Lanczos runs",
            "factor entries",
            "max residual",
            "Sturm check",
        ],
        &[vec![
            sol.n_modes().to_string(),
            format!("{:.3}", sol.frequency_hz(0)),
            format!("{:.3}", sol.frequency_hz(sol.n_modes().saturating_sub(1))),
            st.factorizations.to_string(),
            st.block_solves.to_string(),
            st.lanczos_runs.to_string(),
            st.factor_entries.to_string(),
            format!("{max_res:.1e}"),
            format!(
                "{} ({} of {} below {:.2} Hz)",
                if sol.sturm_check.passed { "passed" } else { "FAILED" },
                sol.sturm_check.count_found,
                sol.sturm_check.count_expected,
                sol.sturm_check.shift_hz
            ),
        ]],
    );
}

/// Per-stage times of one design run.
const STAGES: [&str; 6] = [
    "validate",
    "assemble",
    "check_zero_energy",
    "solve_modes (band 0 to max_mode_frequency_hz)",
    "StudyModel::build (with candidates)",
    "design",
];

struct DesignRun {
    stages: [Duration; 6],
    total: Duration,
    structure: Structure,
    system: System,
    modes: ModalSolution,
    sm: StudyModel,
    design: antinode::placement::Design,
}

fn design_once(model: &antinode::mesh::Model) -> Res<DesignRun> {
    let mut stages = [Duration::ZERO; 6];
    let start = Instant::now();
    let mut t = Instant::now();
    let mut lap = |i: usize, t: &mut Instant| {
        stages[i] = t.elapsed();
        *t = Instant::now();
    };
    let structure = validate(model)?;
    lap(0, &mut t);
    let study = structure.study.clone().ok_or("the shaft model has no study")?;
    let spec = study.design.clone().ok_or("the shaft study has no design")?;
    let system = assemble(&structure, AssemblyOptions::default())?;
    lap(1, &mut t);
    check_zero_energy(&structure, &system)?;
    lap(2, &mut t);
    let modes = solve_modes(
        &system,
        ModeRequest::Band { low_hz: 0.0, high_hz: study.max_mode_frequency_hz },
        &EigenParams::default(),
    )?;
    lap(3, &mut t);
    let sm = StudyModel::build(&structure, &system, &modes, &study, true)?;
    lap(4, &mut t);
    let d = design(&sm, &spec, &structure)?;
    lap(5, &mut t);
    let total = start.elapsed();
    Ok(DesignRun { stages, total, structure, system, modes, sm, design: d })
}

/// The explicit targets: for each of the lowest bending frequencies (modes within a relative
/// 1e-4 in frequency of each other form one group, a y/z pair: on this fine mesh the computed
/// members of a pair differ by up to about 1e-5 relative in eigenvalue), the member moving most
/// along z at the drive point; the first [`ABSORBERS`] groups that move along z at all.
fn z_bending_targets(run: &DesignRun) -> Res<Vec<usize>> {
    let uz = drive_uz(run);
    let top = uz.iter().copied().fold(0.0, f64::max);
    let f: Vec<f64> = (0..run.modes.n_modes()).map(|r| run.modes.frequency_hz(r)).collect();
    let mut targets = Vec::new();
    let mut r = run.modes.n_zero_energy;
    while r < f.len() && targets.len() < ABSORBERS {
        let mut end = r + 1;
        while end < f.len() && (f[end] - f[r]).abs() <= 1e-4 * f[r] {
            end += 1;
        }
        let best = (r..end).max_by(|&a, &b| uz[a].total_cmp(&uz[b])).ok_or("empty mode group")?;
        if uz[best] > 1e-3 * top {
            targets.push(best + 1);
        }
        r = end;
    }
    if targets.len() < ABSORBERS {
        return Err(format!("only {} z-bending modes below the top", targets.len()).into());
    }
    Ok(targets)
}

/// |uz| of every kept mode at the drive point.
fn drive_uz(run: &DesignRun) -> Vec<f64> {
    let node = run.structure.study.as_ref().map_or(0, |s| s.excitation[0].node);
    let dof = run.system.dof_map().dof(node, 2);
    (0..run.modes.n_modes()).map(|r| dof.map_or(0.0, |i| run.modes.shape(r)[i].abs())).collect()
}

fn design_runs(n: usize, text: &str) -> Res<(Vec<DesignRun>, Timing)> {
    let model = parse_model(text, Path::new("shaft (built in code)"))?;
    let mut runs = Vec::with_capacity(n);
    for _ in 0..n {
        runs.push(design_once(&model)?);
    }
    let totals: Vec<Duration> = runs.iter().map(|r| r.total).collect();
    Ok((runs, Timing::of(&totals)))
}

fn stage_table(runs: &[DesignRun], total: Timing) {
    let mut rows = Vec::new();
    for (i, name) in STAGES.iter().enumerate() {
        let samples: Vec<Duration> = runs.iter().map(|r| r.stages[i]).collect();
        let t = Timing::of(&samples);
        rows.push(vec![
            (*name).to_string(),
            ms(t.median),
            ms(t.min),
            format!("{:.1}", 100.0 * t.median.as_secs_f64() / total.median.as_secs_f64()),
        ]);
    }
    rows.push(vec![
        "**whole design run**".into(),
        format!("**{}**", ms(total.median)),
        format!("**{}**", ms(total.min)),
        "100".into(),
    ]);
    print_table(&["stage", "median [ms]", "min [ms]", "share of median total [%]"], &rows);
    println!(
        "target: whole design run under 1000 ms: {} (median {} ms, min {} ms)\n",
        if total.median < Duration::from_secs(1) { "met" } else { "NOT met" },
        ms(total.median),
        ms(total.min)
    );
}

fn targets_table(d: &antinode::placement::Design) {
    let rows: Vec<Vec<String>> = d
        .targets
        .iter()
        .map(|t| {
            vec![
                t.mode.to_string(),
                format!("{:.2}", t.frequency_hz),
                format!("{:.1}-{:.1}", t.window_hz[0], t.window_hz[1]),
                format!("{:.3e}", t.modal_peak),
            ]
        })
        .collect();
    print_table(&["target mode", "frequency [Hz]", "window [Hz]", "modal peak [m/N]"], &rows);
    println!(
        "peak receptance: before {:.3e} m/N at {:.2} Hz, after {:.3e} m/N at {:.2} Hz ({:+.1} dB)\n",
        d.before.receptance,
        d.before.frequency_hz,
        d.after.receptance,
        d.after.frequency_hz,
        20.0 * (d.after.receptance / d.before.receptance).log10()
    );
}

fn shaft(n: usize) -> Res<()> {
    // An untimed run with automatic targets fixes the explicit ones (as a user would after
    // `antinode modes`) and warms up the allocator.
    let auto_text = shaft_json(json!("auto"));
    let warm = design_once(&parse_model(&auto_text, Path::new("shaft"))?)?;
    let targets = z_bending_targets(&warm)?;
    drop(warm);
    let (runs, total) = design_runs(n, &shaft_json(json!(targets)))?;
    let last = runs.last().ok_or("no design run")?;
    let s = &last.structure;
    let study = s.study.as_ref().ok_or("no study")?;
    println!(
        "## b. Design run on the shaft: {} beam elements, {} free DOFs, {} modes kept (up to {:.0} Hz), \
         {} candidates (node x direction), {} absorbers on targets {:?}, shaft mass {:.2} kg ({} runs)\n",
        s.beams.len(),
        last.system.n_dofs(),
        last.modes.n_modes(),
        study.max_mode_frequency_hz,
        last.sm.candidates.len(),
        last.design.absorbers.len(),
        targets,
        s.total_mass(),
        n
    );
    stage_table(&runs, total);
    print_solution(&last.modes);
    print_shaft_modes(last);
    targets_table(&last.design);
    design_breakdown(last, n)?;
    drop(runs);

    let (runs, total) = design_runs(n, &auto_text)?;
    let last = runs.last().ok_or("no design run")?;
    println!(
        "## b2. The same design run with \"targets\": \"auto\" ({} targets chosen, {} absorbers, {} runs)\n",
        last.design.targets.len(),
        last.design.absorbers.len(),
        n
    );
    stage_table(&runs, total);
    targets_table(&last.design);
    Ok(())
}

/// The kept modes of the shaft: frequency, relative gap to the previous eigenvalue, mode shape
/// along y and z at the drive point, residual.
fn print_shaft_modes(run: &DesignRun) {
    let node = run.structure.study.as_ref().map_or(0, |s| s.excitation[0].node);
    let dof = run.system.dof_map();
    let lambda = &run.modes.eigenvalues;
    let rows: Vec<Vec<String>> = (0..run.modes.n_modes())
        .map(|r| {
            let shape = run.modes.shape(r);
            let at = |c: usize| dof.dof(node, c).map_or(0.0, |i| shape[i]);
            vec![
                (r + 1).to_string(),
                format!("{:.3}", run.modes.frequency_hz(r)),
                if r == 0 { String::new() } else { format!("{:.1e}", (lambda[r] - lambda[r - 1]) / lambda[r]) },
                format!("{:+.3e}", at(1)),
                format!("{:+.3e}", at(2)),
                format!("{:.1e}", run.modes.residuals[r]),
            ]
        })
        .collect();
    println!("kept modes of the shaft (shape at the drive point, mass-normalised):\n");
    print_table(&["mode", "f [Hz]", "(λ_r - λ_r-1)/λ_r", "uy [kg^-1/2]", "uz [kg^-1/2]", "residual"], &rows);
}

/// Where the time of `StudyModel::build` goes (the modal model with and without residual
/// flexibility), and what the design's refinement did (its own counters).
fn design_breakdown(run: &DesignRun, n: usize) -> Res<()> {
    let sm = &run.sm;
    let study = run.structure.study.as_ref().ok_or("no study")?;
    let mut coords: Vec<Coordinate> = Vec::new();
    for f in &study.excitation {
        coords.push(Coordinate { node: f.node, direction: f.direction.unit, rotational: false });
    }
    for r in &study.response_points {
        coords.push(Coordinate { node: r.node, direction: r.direction.unit, rotational: false });
    }
    for c in &sm.candidates {
        coords.push(Coordinate { node: c.node, direction: c.direction.unit, rotational: false });
    }
    let zeta = study.modal_damping_ratio;
    let (t_res, _) = repeat(n, || Ok(ModalModel::build(&run.system, &run.modes, &coords, zeta, true)?))?;
    let (t_nores, _) = repeat(n, || Ok(ModalModel::build(&run.system, &run.modes, &coords, zeta, false)?))?;
    let r = run.design.refinement;
    println!(
        "breakdown (diagnostic; {} coordinates in the modal model, {} grid frequencies over the band):\n",
        coords.len(),
        sm.grid_hz.len()
    );
    print_table(
        &["part", "median [ms]", "min [ms]"],
        &[
            vec![
                "StudyModel::build: ModalModel::build with residual flexibility".into(),
                ms(t_res.median),
                ms(t_res.min),
            ],
            vec![
                "StudyModel::build: ModalModel::build without residual flexibility".into(),
                ms(t_nores.median),
                ms(t_nores.min),
            ],
        ],
    );
    println!(
        "refinement: {} Nelder-Mead iterations; objective after / closed-form start = {:.4}\n",
        r.iterations, r.objective_ratio
    );
    Ok(())
}

fn main() -> Res<()> {
    antinode::solver::init();
    // `cargo bench` passes `--bench`; this harness takes no arguments.
    let n = reps();
    println!(
        "# antinode pipeline benchmark: {n} runs per measurement, {} hardware threads, \
         RAYON_NUM_THREADS={}\n",
        std::thread::available_parallelism().map_or(0, |p| p.get()),
        std::env::var("RAYON_NUM_THREADS").unwrap_or_else(|_| "(unset)".into())
    );
    let only = std::env::var("ANTINODE_BENCH_ONLY").unwrap_or_default();
    if only.is_empty() || only == "frame" {
        frame(n)?;
    }
    if only.is_empty() || only == "shaft" {
        shaft(n)?;
    }
    if only.is_empty() || only == "tube" {
        tube(n)?;
    }
    Ok(())
}
