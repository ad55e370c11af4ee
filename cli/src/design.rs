//! `antinode design`: design the study's absorbers and report them.

use std::path::{Path, PathBuf};

use antinode_mesh::{Absorber, AbsorberKind, Link, LinkKind, LinkMembers, Location, validate};
use antinode_placement::{DesignedAbsorber, StudyModel, design};
use anyhow::{Context, Result, bail};
use serde::Serialize;

use crate::modes::mode_fields;
use crate::output::{LocationOut, db, direction_json, print_json, print_measured, table};
use crate::pipeline::{CAUTION, Outputs, Progress, assemble_checked, load, study_modes};
use crate::plot::{Series, frf_svg, xy_svg};
use crate::respond::{curves_csv, magnitude_points};

#[derive(Serialize)]
struct AbsorberOut {
    name: String,
    location: LocationOut,
    direction: serde_json::Value,
    /// Lateral absorbers: the second direction of the same body.
    #[serde(skip_serializing_if = "Option::is_none")]
    second_direction: Option<serde_json::Value>,
    /// Ring inserts: the ring and the averaging link written to design.json.
    #[serde(skip_serializing_if = "Option::is_none")]
    ring: Option<RingOut>,
    #[serde(flatten)]
    designed: DesignedAbsorber,
}

#[derive(Serialize)]
struct RingOut {
    tube: String,
    station: usize,
    fraction: f64,
    link: String,
}

fn kind_word(k: AbsorberKind) -> &'static str {
    match k {
        AbsorberKind::Point => "point",
        AbsorberKind::Lateral => "lateral",
        AbsorberKind::RingInsert => "ring insert",
    }
}

#[derive(Serialize)]
struct CandidateOut {
    rank: usize,
    location: LocationOut,
    direction: serde_json::Value,
    /// Lateral absorbers: the second direction.
    #[serde(skip_serializing_if = "Option::is_none")]
    second_direction: Option<serde_json::Value>,
    mass_ratio_per_kg: f64,
    effective_mass_kg: f64,
    mass_ratio: f64,
    score: f64,
    reduction_db: f64,
}

#[derive(Serialize)]
struct SlotOut {
    absorber: usize,
    target_mode: usize,
    candidates: Vec<CandidateOut>,
}

#[derive(Serialize)]
struct DesignReport {
    model: String,
    title: String,
    objective: antinode_mesh::Objective,
    start_rule: &'static str,
    damping_ratio_convention: &'static str,
    band_hz: [f64; 2],
    modes_kept: usize,
    candidates_evaluated: usize,
    /// What the design places: point, lateral or ring_insert.
    kind: AbsorberKind,
    /// Warnings about the design request (a ring insert aimed at an ovaling mode).
    warnings: Vec<String>,
    targets: Vec<antinode_placement::TargetMode>,
    absorbers: Vec<AbsorberOut>,
    ranking: Vec<SlotOut>,
    /// Highest receptance at the response points over the band before the design, in m/N.
    peak_before: f64,
    peak_before_hz: f64,
    /// Highest receptance at the response points over the band after the design, in m/N.
    peak_after: f64,
    peak_after_hz: f64,
    peak_change_db: f64,
    rms_before: f64,
    rms_after: f64,
    /// Band peaks in dB re 1 m/N (per newton of the reference force), nominal.
    peak_before_db: f64,
    peak_after_db: f64,
    /// Highest band peak over the uncertainty scenarios, before and after, in m/N and dB re 1 m/N.
    worst_case_peak_before: f64,
    worst_case_peak_after: f64,
    worst_case_peak_before_db: f64,
    worst_case_peak_after_db: f64,
    worst_case_change_db: f64,
    /// Peaks and strokes per uncertainty scenario.
    scenarios: Vec<antinode_placement::ScenarioResult>,
    /// True when the stroke limit (and the mass limits) hold in every scenario.
    constraints_met: bool,
    constraints: antinode_placement::constraints::ConstraintReport,
    /// The design repeated at each of `trade_off_masses` (absent when none were asked for).
    #[serde(skip_serializing_if = "Vec::is_empty")]
    trade_off: Vec<antinode_placement::tradeoff::TradeOffPoint>,
    /// With study.measured_frequencies: the computed and the measured (used) frequencies.
    #[serde(skip_serializing_if = "Vec::is_empty")]
    measured_frequencies: Vec<antinode_placement::measured::MeasuredOverride>,
    /// Final check of the design on the full model (see [`Verification`]).
    verification: Verification,
    files: Vec<String>,
    caution: &'static str,
}

/// The design checked on the full model: the modes of the structure with the designed absorbers as
/// DOFs, and a direct sparse complex solve ([`antinode_solver::DirectSolver`]) of the response at
/// the peak and a few band frequencies, against the reduced (modal) model the design was made on.
#[derive(Serialize)]
struct Verification {
    method: &'static str,
    /// Natural frequencies of the full model with every absorber (model's and designed) in the band, in Hz.
    full_model_modes_hz: Vec<f64>,
    /// Per full-model mode: the nearest peak of the reduced coupled model's response curve, in Hz
    /// (peaks can merge when the absorber damping is optimal, so this is indicative).
    nearest_reduced_peak_hz: Vec<Option<f64>>,
    /// Direct-solve points: response, stroke and residual differences per frequency.
    points: Vec<antinode_placement::VerifyPoint>,
    /// Largest ‖x_reduced − x_direct‖/‖x_direct‖ over the points.
    max_relative_difference: f64,
    /// Largest stroke difference over the largest stroke.
    max_stroke_difference: f64,
    /// Wall time of the verification and of the whole run up to it, in s.
    verification_seconds: f64,
    run_seconds: f64,
}

/// Check frequencies: the peaks before and after, the targets, and 6 geometric steps over the band.
fn verification_frequencies(band: [f64; 2], extra: &[f64]) -> Vec<f64> {
    let hi = band[1];
    let lo = band[0].max(1e-3 * hi);
    let n = 6;
    let mut f: Vec<f64> = (0..n).map(|i| lo * (hi / lo).powf(i as f64 / (n - 1) as f64)).collect();
    f.extend(extra.iter().copied().filter(|&x| x >= lo && x <= hi));
    f.sort_by(f64::total_cmp);
    f.dedup_by(|a, b| (*a - *b).abs() <= 1e-9 * b.abs());
    f
}

/// Local maxima of the largest response over the points on the curve grid, in Hz.
fn curve_peaks(freq: &[f64], curves: &[Vec<(f64, f64)>]) -> Vec<f64> {
    let v: Vec<f64> = (0..freq.len()).map(|i| curves.iter().map(|c| c[i].1).fold(0.0, f64::max)).collect();
    (1..v.len().saturating_sub(1)).filter(|&i| v[i] > v[i - 1] && v[i] >= v[i + 1]).map(|i| freq[i]).collect()
}

pub fn run(path: &Path, json: bool, out: Option<PathBuf>) -> Result<()> {
    let started = std::time::Instant::now();
    let l = load(path)?;
    let Some(study) = l.structure.study.clone() else {
        bail!("{}: the model has no study block", path.display());
    };
    let Some(spec) = study.design.clone() else {
        bail!("{}: the study has no absorber_design block", path.display());
    };
    let progress = Progress::new();
    progress.stage("assembling");
    let (system, zero) = assemble_checked(&l, false)?;
    let (mut modes, measured_frequencies) = study_modes(&l, &system, zero, &progress)?;
    // Ring inserts: the mode classes tell which targets are ovaling modes (repeated pairs are
    // oriented by the classification first, so the study model sees the same shapes).
    let classes: Vec<antinode_solver::ModeClass> = if spec.kind == AbsorberKind::RingInsert {
        let insight = antinode_solver::mode_insight(&l.structure, &system, &mut modes, &Default::default())
            .with_context(|| format!("mode classes of {}", path.display()))?;
        insight.modes.into_iter().map(|m| m.class).collect()
    } else {
        Vec::new()
    };
    progress.stage("screening and ranking candidates");
    let sm = StudyModel::build(&l.structure, &system, &modes, &study, true)
        .with_context(|| format!("in {}", path.display()))?;
    let d = design(&sm, &spec, &l.structure).with_context(|| format!("design for {}", path.display()))?;
    let mut warnings = antinode_placement::ring_insert_warnings(&spec, &d, &sm, &classes);
    if !measured_frequencies.is_empty() {
        warnings.push(format!(
            "the design is tuned to {} measured frequenc{}; the full-model verification knows only the computed \
             frequencies, so it differs from the design near those modes by the frequency change",
            measured_frequencies.len(),
            if measured_frequencies.len() == 1 { "y" } else { "ies" }
        ));
    }
    if !spec.trade_off_masses.is_empty() {
        progress.stage("trade-off: designing at each total mass");
    }
    let trade = antinode_placement::tradeoff::trade_off(&sm, &spec, &l.structure)
        .with_context(|| format!("trade-off for {}", path.display()))?;
    progress.stage("writing files");
    let s = &l.structure;
    // The model with the new absorbers, ready for `antinode respond`.
    let mut model = l.model.clone();
    // design.json goes to the output folder: its mesh files are named by absolute paths.
    antinode_mesh::resolve_mesh_files(&mut model, crate::pipeline::model_folder(path));
    let first = model.absorbers.len();
    let mut rings = Vec::new();
    for (i, a) in d.absorbers.iter().enumerate() {
        let name = match a.kind {
            AbsorberKind::Point => format!("designed {} (mode {})", first + i + 1, a.target_mode),
            k => format!("designed {} (mode {}, {})", first + i + 1, a.target_mode, kind_word(k)),
        };
        let at = match spec.rings.iter().find(|r| r.node == a.candidate.node) {
            Some(r) if a.kind == AbsorberKind::RingInsert => {
                // The ring's averaging link goes into design.json (the model's own when it has one).
                let link = &s.links[r.link];
                let link_name = if model.links.iter().any(|m| m.name == link.name) {
                    link.name.clone()
                } else {
                    let mut n = format!("designed ring insert {}", first + i + 1);
                    while model.links.iter().any(|m| m.name == n) {
                        n.push('\'');
                    }
                    model.links.push(Link {
                        name: n.clone(),
                        kind: LinkKind::Average,
                        reference: None,
                        reference_point: Some(s.nodes[r.node].xyz),
                        members: LinkMembers {
                            region: None,
                            nodes: link.members.iter().map(|&m| s.nodes[m].id).collect(),
                        },
                    });
                    n
                };
                rings.push(Some(RingOut {
                    tube: s.tubes[r.tube].name.clone(),
                    station: r.station,
                    fraction: r.fraction,
                    link: link_name.clone(),
                }));
                Location { link: Some(link_name), ..Location::default() }
            }
            _ => {
                rings.push(None);
                Location::node(s.nodes[a.candidate.node].id)
            }
        };
        model.absorbers.push(Absorber {
            name: Some(name),
            at,
            direction: a.candidate.direction.given.clone(),
            second_direction: a.candidate.second.as_ref().map(|(d, _)| d.given.clone()),
            mass: a.mass_kg,
            stiffness: a.stiffness_n_per_m,
            damping: Some(a.damping_n_s_per_m),
            loss_factor: None,
            elastomer: None,
        });
    }
    let designed = validate(&model).context("the designed model does not validate (please report this)")?;
    let mut outputs = Outputs::create(path, out.as_deref())?;
    let model_path = outputs.path("design.json");
    let result_path = outputs.path("design-result.json");
    let svg_path = outputs.path("frf.svg");
    let csv_path = outputs.path("design.csv");
    let vtu_path = outputs.path("design.vtu");
    let trade_path = outputs.path("trade-off.svg");
    let mut all = sm.existing.clone();
    // In the order of design.json's resolved absorbers: a lateral absorber's second direction
    // right after its first.
    let new_links: Vec<antinode_solver::AbsorberLink> = d
        .absorbers
        .iter()
        .flat_map(|a| {
            let link = antinode_solver::AbsorberLink {
                coord: a.candidate.coord,
                mass: a.mass_kg,
                stiffness: a.stiffness_n_per_m,
                damping: antinode_mesh::AbsorberDamping::Viscous(a.damping_n_s_per_m),
            };
            std::iter::once(link)
                .chain(a.candidate.second.as_ref().map(|(_, c)| antinode_solver::AbsorberLink { coord: *c, ..link }))
        })
        .collect();
    all.extend(new_links);
    let before = sm.curves(&sm.grid_hz, &sm.existing);
    let after = sm.curves(&sm.grid_hz, &all);
    let pb = magnitude_points(&before);
    let pa = magnitude_points(&after);
    let mut series = Vec::new();
    for (i, n) in sm.response_names.iter().enumerate() {
        series.push(Series { label: format!("{n}, before"), points: &pb[i], dashed: true });
        series.push(Series { label: format!("{n}, with designed absorbers"), points: &pa[i], dashed: false });
    }
    let markers: Vec<f64> = d.targets.iter().map(|t| t.frequency_hz).collect();
    progress.stage("verification on the full model (modes with the absorbers, direct solve)");
    let verify_start = std::time::Instant::now();
    let run_seconds = verify_start.duration_since(started).as_secs_f64();
    let full_system =
        antinode_solver::assemble(&designed, antinode_solver::AssemblyOptions { include_absorbers: true })
            .context("cannot assemble the designed model with its absorbers (please report this)")?;
    let full_zero = antinode_solver::check_zero_energy(&designed, &full_system)
        .context("zero-energy modes of the designed model (please report this)")?;
    let params = antinode_solver::EigenParams {
        zero_energy_modes: designed.expected_rigid_body_modes().map(|_| full_zero),
        ..antinode_solver::EigenParams::default()
    };
    let full_modes = antinode_solver::solve_modes(
        &full_system,
        antinode_solver::ModeRequest::Band { low_hz: study.band_hz[0], high_hz: study.band_hz[1] },
        &params,
    )
    .context("modes of the designed model with its absorbers")?;
    let full_hz: Vec<f64> = (full_modes.n_zero_energy..full_modes.n_modes())
        .map(|i| full_modes.frequency_hz(i))
        .filter(|&f| f >= study.band_hz[0] && f <= study.band_hz[1])
        .collect();
    let reduced_peaks = curve_peaks(&sm.grid_hz, &pa);
    let nearest: Vec<Option<f64>> = full_hz
        .iter()
        .map(|&f| reduced_peaks.iter().copied().min_by(|a, b| (a - f).abs().total_cmp(&(b - f).abs())))
        .collect();
    let mut extra = vec![d.after.frequency_hz, d.before.frequency_hz];
    extra.extend(&markers);
    extra.extend(&reduced_peaks);
    let check_hz = verification_frequencies(study.band_hz, &extra);
    let points = sm.verify(&system, &modes, &check_hz, &all).context("direct check of the design")?;
    let verification = Verification {
        method: "modes of K, M with the absorbers as DOFs; sparse LU of K(1+i eta) + i omega C - omega^2 M \
                 with absorber DOFs at the peaks and 6 band frequencies (faer)",
        full_model_modes_hz: full_hz,
        nearest_reduced_peak_hz: nearest,
        max_relative_difference: points.iter().map(|p| p.relative_difference).fold(0.0, f64::max),
        max_stroke_difference: points.iter().map(|p| p.stroke_difference).fold(0.0, f64::max),
        points,
        verification_seconds: verify_start.elapsed().as_secs_f64(),
        run_seconds,
    };
    let svg = frf_svg(
        &format!("Receptance before and after: {}", s.title),
        if sm.base.is_some() {
            "displacement per m/s^2 of base acceleration [m/(m/s^2)]"
        } else {
            "displacement per newton [m/N]"
        },
        &series,
        &markers,
    )?;
    let names: Vec<String> = designed.absorbers.iter().map(|a| a.name.clone()).collect();
    let ranking = d
        .slots
        .iter()
        .map(|slot| SlotOut {
            absorber: slot.absorber,
            target_mode: slot.target_mode,
            candidates: slot
                .ranking
                .iter()
                .enumerate()
                .map(|(i, r)| CandidateOut {
                    rank: i + 1,
                    location: LocationOut::of(s, r.candidate.node),
                    direction: direction_json(&r.candidate.direction),
                    second_direction: r.candidate.second.as_ref().map(|(d, _)| direction_json(d)),
                    mass_ratio_per_kg: r.mass_ratio_per_kg,
                    effective_mass_kg: r.effective_mass_kg,
                    mass_ratio: spec.mass_each * r.mass_ratio_per_kg,
                    score: r.score,
                    reduction_db: r.reduction_db,
                })
                .collect(),
        })
        .collect();
    let report = DesignReport {
        model: path.display().to_string(),
        title: s.title.clone(),
        objective: d.objective,
        start_rule: d.rule,
        damping_ratio_convention: "damping_ratio = c/(2 m w_a), w_a = sqrt(k/m) (the absorber's own frequency); \
                                   damping_ratio_of_target = c/(2 m w_j) (Den Hartog's c/c_c)",
        band_hz: study.band_hz,
        modes_kept: modes.n_modes(),
        candidates_evaluated: sm.candidates.len(),
        kind: spec.kind,
        warnings,
        targets: d.targets.clone(),
        absorbers: d
            .absorbers
            .iter()
            .enumerate()
            .zip(rings)
            .map(|((i, a), ring)| AbsorberOut {
                name: model.absorbers[first + i].name.clone().unwrap_or_default(),
                location: LocationOut::of(s, a.candidate.node),
                direction: direction_json(&a.candidate.direction),
                second_direction: a.candidate.second.as_ref().map(|(d, _)| direction_json(d)),
                ring,
                designed: a.clone(),
            })
            .collect(),
        ranking,
        peak_before: d.before.receptance,
        peak_before_hz: d.before.frequency_hz,
        peak_after: d.after.receptance,
        peak_after_hz: d.after.frequency_hz,
        peak_change_db: db(d.after.receptance, d.before.receptance),
        rms_before: d.rms_before,
        rms_after: d.rms_after,
        peak_before_db: db(d.before.receptance, 1.0),
        peak_after_db: db(d.after.receptance, 1.0),
        worst_case_peak_before: d.worst_case_before,
        worst_case_peak_after: d.worst_case_after,
        worst_case_peak_before_db: db(d.worst_case_before, 1.0),
        worst_case_peak_after_db: db(d.worst_case_after, 1.0),
        worst_case_change_db: db(d.worst_case_after, d.worst_case_before),
        scenarios: d.scenarios.clone(),
        constraints_met: d.constraints.constraints_met,
        constraints: d.constraints.clone(),
        trade_off: trade.clone(),
        verification,
        files: [&model_path, &result_path, &svg_path, &csv_path, &vtu_path]
            .into_iter()
            .chain((!trade.is_empty()).then_some(&trade_path))
            .map(|p| p.display().to_string())
            .collect(),
        caution: CAUTION,
        measured_frequencies,
    };
    let fields = mode_fields(&system, &modes);
    outputs.write_vtu("design.vtu", &designed, &fields)?;
    outputs.write("design.csv", curves_csv(&sm, &before, Some(&after), &names[..]).as_bytes())?;
    outputs.write("frf.svg", svg.as_bytes())?;
    if !trade.is_empty() {
        let nominal: Vec<(f64, f64)> = trade.iter().map(|p| (p.total_mass_kg, -p.change_db)).collect();
        let worst: Vec<(f64, f64)> = trade.iter().map(|p| (p.total_mass_kg, -p.worst_case_change_db)).collect();
        let mut series = vec![Series { label: "nominal".into(), points: &nominal, dashed: false }];
        if d.scenarios.len() > 1 {
            series.push(Series { label: "worst case over the scenarios".into(), points: &worst, dashed: false });
        }
        let plot = xy_svg(
            &format!("Peak reduction against total absorber mass: {}", s.title),
            "total absorber mass [kg]",
            "peak reduction [dB]",
            &series,
        )?;
        outputs.write("trade-off.svg", plot.as_bytes())?;
    }
    outputs.write("design.json", serde_json::to_string_pretty(&model)?.as_bytes())?;
    outputs.write("design-result.json", serde_json::to_string_pretty(&report)?.as_bytes())?;
    outputs.commit()?;
    drop(progress);
    if json {
        print_json(&report)?;
    } else {
        print_human(&report, spec.mass_each);
    }
    if let Some(m) = &report.constraints.message {
        bail!(
            "{}: constraints not met: {m}. The best design found is written, marked \"constraints_met\": false",
            path.display()
        );
    }
    Ok(())
}

fn loc(l: &LocationOut) -> String {
    format!("node {} ({:.4}, {:.4}, {:.4})", l.node, l.xyz[0], l.xyz[1], l.xyz[2])
}

fn dir_text(v: &serde_json::Value) -> String {
    match v {
        serde_json::Value::String(s) => s.clone(),
        other => other.to_string(),
    }
}

fn print_human(r: &DesignReport, mass_each: f64) {
    println!(
        "{}: band {}-{} Hz, {} modes kept, {} candidate attachments (node x direction), objective {:?}",
        r.model, r.band_hz[0], r.band_hz[1], r.modes_kept, r.candidates_evaluated, r.objective
    );
    print_measured(&r.measured_frequencies);
    let trows = r
        .targets
        .iter()
        .map(|t| {
            vec![
                t.mode.to_string(),
                format!("{:.4}", t.frequency_hz),
                format!("{:.4e}", t.modal_peak),
                format!("{:.2}-{:.2}", t.window_hz[0], t.window_hz[1]),
            ]
        })
        .collect();
    println!("target modes:");
    println!("{}", table(&["mode", "frequency [Hz]", "modal peak [m/N]", "window [Hz]"], trows));
    for slot in &r.ranking {
        println!(
            "ranked candidates for absorber {} (mode {}, {:.4} kg, with the absorbers placed before it):",
            slot.absorber, slot.target_mode, mass_each
        );
        let rows = slot
            .candidates
            .iter()
            .map(|c| {
                vec![
                    c.rank.to_string(),
                    loc(&c.location),
                    match &c.second_direction {
                        Some(b) => format!("{} + {}", dir_text(&c.direction), dir_text(b)),
                        None => dir_text(&c.direction),
                    },
                    format!("{:.4e}", c.mass_ratio_per_kg),
                    format!("{:.4}", c.mass_ratio),
                    format!("{:.4e}", c.score),
                    format!("{:.2}", c.reduction_db),
                ]
            })
            .collect();
        println!(
            "{}",
            table(&["rank", "location", "dir", "mu per kg [1/kg]", "mu", "window peak [m/N]", "reduction [dB]"], rows)
        );
    }
    println!("designed absorbers (start: {}; refined on the coupled model):", r.start_rule);
    let rows = r
        .absorbers
        .iter()
        .map(|a| {
            let d = &a.designed;
            let dirs = match &a.second_direction {
                Some(b) => format!("{} + {}", dir_text(&a.direction), dir_text(b)),
                None => dir_text(&a.direction),
            };
            let place = match &a.ring {
                Some(r) => {
                    format!("ring {} of {} (at {:.3}), centre {}", r.station, r.tube, r.fraction, loc(&a.location))
                }
                None => loc(&a.location),
            };
            vec![
                a.name.clone(),
                kind_word(d.kind).to_string(),
                place,
                dirs,
                format!("{:.4}", d.mass_kg),
                format!("{:.5e}", d.stiffness_n_per_m),
                format!("{:.4e}", d.damping_n_s_per_m),
                format!("{:.4}", d.tuned_frequency_hz),
                d.target_mode.to_string(),
                format!("{:.4}", d.mass_ratio),
                format!("{:.4}", d.damping_ratio),
                format!("{:.3e}", d.max_stroke_m_per_n),
            ]
        })
        .collect();
    println!(
        "{}",
        table(
            &[
                "absorber",
                "kind",
                "location",
                "dir",
                "mass [kg]",
                "k [N/m]",
                "c [N s/m]",
                "tuned [Hz]",
                "mode",
                "mu",
                "zeta_a",
                "max stroke [m/N]"
            ],
            rows
        )
    );
    println!("zeta_a = c/(2 m w_a) with w_a = sqrt(k/m); Den Hartog's c/c_c = c/(2 m w_mode) is in the JSON output");
    println!(
        "peak receptance at the response points: before {:.4e} m/N at {:.3} Hz, after {:.4e} m/N at {:.3} Hz ({:+.2} dB)",
        r.peak_before, r.peak_before_hz, r.peak_after, r.peak_after_hz, r.peak_change_db
    );
    println!(
        "band RMS: before {:.4e} m/N, after {:.4e} m/N ({:+.2} dB)",
        r.rms_before,
        r.rms_after,
        db(r.rms_after, r.rms_before)
    );
    let rows = r
        .absorbers
        .iter()
        .map(|a| {
            let d = &a.designed;
            let band = |v: Option<[f64; 2]>, f: fn(f64) -> String| match v {
                Some([lo, hi]) => format!("{} .. {}", f(lo), f(hi)),
                None => "-".into(),
            };
            vec![
                a.name.clone(),
                format!("{:.4e}", d.max_stroke_m),
                format!("{:.4e}", d.worst_case_stroke_m),
                format!("{:.4e}", d.max_spring_force_n),
                format!("{:.4e}", d.static_sag_m),
                band(d.tolerance_band, |x| format!("{:+.1} %", 100.0 * x)),
                band(d.tolerance_band_hz, |x| format!("{x:.3}")),
            ]
        })
        .collect();
    println!("at the stated excitation (tolerance band: drift of the tuning at which the dB benefit halves):");
    println!(
        "{}",
        table(
            &[
                "absorber",
                "stroke [m]",
                "worst-case stroke [m]",
                "spring force [N]",
                "static sag [m]",
                "tolerance band",
                "tuned range [Hz]"
            ],
            rows
        )
    );
    if r.scenarios.len() > 1 {
        println!(
            "worst case over {} scenarios: before {:.4e} m/N, after {:.4e} m/N ({:+.2} dB)",
            r.scenarios.len(),
            r.worst_case_peak_before,
            r.worst_case_peak_after,
            r.worst_case_change_db
        );
    }
    match (&r.constraints.message, r.constraints.stroke_limit_m) {
        (Some(m), _) => println!("CONSTRAINTS NOT MET: {m}"),
        (None, Some(l)) => {
            println!("stroke limit {l:.4e} m met: worst-case stroke {:.4e} m", r.constraints.worst_stroke_m)
        }
        (None, None) => {}
    }
    let v = &r.verification;
    println!("verification on the full model (time in design-result.json): modes with the absorbers in the band:");
    let rows = v
        .full_model_modes_hz
        .iter()
        .zip(&v.nearest_reduced_peak_hz)
        .map(|(f, p)| {
            vec![
                format!("{f:.4}"),
                p.map_or("-".into(), |p| format!("{p:.4}")),
                p.map_or("-".into(), |p| format!("{:+.2} %", 100.0 * (p - f) / f)),
            ]
        })
        .collect();
    println!("{}", table(&["full model [Hz]", "nearest reduced peak [Hz]", "difference"], rows));
    let rows = v
        .points
        .iter()
        .map(|p| {
            vec![
                format!("{:.4}", p.frequency_hz),
                format!("{:.3e}", p.relative_difference),
                format!("{:.3e}", p.stroke_difference),
                format!("{:.1e}", p.direct_residual),
            ]
        })
        .collect();
    println!("direct solve against the reduced model:");
    println!("{}", table(&["frequency [Hz]", "response diff", "stroke diff", "residual"], rows));
    for w in &r.warnings {
        println!("warning: {w}");
    }
    println!("wrote {}", r.files.join(", "));
    println!("{}", r.caution);
}
