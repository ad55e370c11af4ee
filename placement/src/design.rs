//! Absorber design on the reduced model: target modes, ranked candidates, greedy placement of each
//! absorber at the candidate that best lowers the response around its target mode (with the
//! absorbers placed before it coupled), then joint refinement of every stiffness and damping on the
//! coupled model.
//!
//! Steps:
//! 1. Targets: the study's mode numbers, or ("auto") the elastic modes in the band whose modal peak
//!    at the response points is at least [`AUTO_TARGET_SHARE`] of the largest, strongest first.
//! 2. Absorbers are assigned to targets in that order (cyclically when there are more absorbers than
//!    targets, so a mode may get several, spaced at least `min_spacing` apart).
//! 3. For each absorber in turn, every candidate (node × allowed direction) is tuned by the closed
//!    form of the objective (Den Hartog/Brock for `peak`, Warburton's H2 rule for `rms`) from its
//!    mass ratio μ = m_a φ² on the target mode, and scored by the objective over the target's window
//!    (between the geometric means with the neighbouring modes, at most ±50 %, within the band)
//!    with the earlier absorbers in place. The best is kept; the ranking is reported.
//! 4. All tunings (and the split of a total mass budget, within the per-absorber limits) are refined
//!    together on the coupled model over every uncertainty scenario, under the stroke limit
//!    ([`crate::refine`]); the objective is the worst scenario's.
//! 5. Each absorber's static sag, stroke and spring force at the stated excitation, worst-case
//!    stroke, and tolerance band of its tuning are reported; so are the peaks before and after,
//!    nominal and worst case, and whether the constraints are met.
use antinode_mesh::{AbsorberDamping, AbsorberKind, DesignSpec, Objective, Structure, TargetSpec, distance};
use antinode_solver::{AbsorberLink, ModeClass, ModeKind};
use rayon::prelude::*;
use serde::Serialize;

use crate::constraints::{ConstraintReport, static_sag, tolerance_band};
use crate::error::PlacementError;
use crate::refine::{Goal, Problem, run};
use crate::robust::{Evaluator, Scenario, scenarios};
use crate::study::{Candidate, Peak, StudyModel};
use crate::tuning::{Tuning, den_hartog_brock, warburton_base_harmonic, warburton_base_random, warburton_random_force};

/// Auto targets: modes whose modal peak is at least this share of the largest (2 %).
pub const AUTO_TARGET_SHARE: f64 = 0.02;

/// Rows kept in each ranking table.
const RANKING_ROWS: usize = 10;

/// Candidates scored on the coupled model for each absorber: those with the largest mass ratio per
/// kilogram on its target mode.
const PRESCREEN: usize = 48;

/// A target mode.
#[derive(Debug, Clone, Serialize)]
pub struct TargetMode {
    /// Mode number, from 1 (zero-energy modes counted).
    pub mode: usize,
    /// Natural frequency, in Hz.
    pub frequency_hz: f64,
    /// Height its resonance alone would reach at the response points, in m/N.
    pub modal_peak: f64,
    /// Window over which candidates are scored, in Hz.
    pub window_hz: [f64; 2],
}

/// One row of a ranking table.
#[derive(Debug, Clone, Serialize)]
pub struct RankedCandidate {
    /// The candidate.
    #[serde(skip)]
    pub candidate: Candidate,
    /// Mass ratio per kilogram of absorber mass, φ², in 1/kg.
    pub mass_ratio_per_kg: f64,
    /// Effective (modal) mass at the candidate, 1/φ², in kg.
    pub effective_mass_kg: f64,
    /// Objective over the target's window with this absorber (and the earlier ones), in m/N.
    pub score: f64,
    /// Reduction of the window objective against no new absorber, in dB.
    pub reduction_db: f64,
}

/// The ranking of candidates for one absorber.
#[derive(Debug, Clone, Serialize)]
pub struct Slot {
    /// Absorber number, from 1.
    pub absorber: usize,
    /// Target mode number, from 1.
    pub target_mode: usize,
    /// Best candidates first.
    pub ranking: Vec<RankedCandidate>,
}

/// A designed absorber.
#[derive(Debug, Clone, Serialize)]
pub struct DesignedAbsorber {
    /// Where and along which direction.
    #[serde(skip)]
    pub candidate: Candidate,
    /// What it is (point, lateral, ring insert).
    pub kind: AbsorberKind,
    /// Target mode number, from 1.
    pub target_mode: usize,
    /// Moving mass, in kg (one body: a lateral absorber's mass counted once).
    pub mass_kg: f64,
    /// Spring stiffness, in N/m.
    pub stiffness_n_per_m: f64,
    /// Viscous damping, in N·s/m.
    pub damping_n_s_per_m: f64,
    /// Undamped natural frequency √(k/m)/2π, in Hz.
    pub tuned_frequency_hz: f64,
    /// Mass ratio μ = m_a φ² on the target mode (φ² summed over both directions of a lateral
    /// absorber).
    pub mass_ratio: f64,
    /// Effective (modal) mass of the target mode at the attachment, in kg.
    pub effective_mass_kg: f64,
    /// Damping ratio relative to the absorber's own frequency, c/(2 m ω_a).
    pub damping_ratio: f64,
    /// Damping ratio relative to the target mode's frequency, c/(2 m ω_j) (Den Hartog's c/c_c).
    pub damping_ratio_of_target: f64,
    /// Tuning ratio f = ω_a/ω_j.
    pub frequency_ratio: f64,
    /// Stiffness and damping of the closed-form rule before refinement.
    pub rule_stiffness_n_per_m: f64,
    /// Damping of the closed-form rule before refinement, in N·s/m.
    pub rule_damping_n_s_per_m: f64,
    /// Largest stroke (mass relative to attachment) over the band per newton of excitation, in m/N.
    pub max_stroke_m_per_n: f64,
    /// Largest spring-and-damper force over the band per newton of excitation (N/N).
    pub max_spring_force_n_per_n: f64,
    /// Largest stroke over the band at the stated excitation (nominal case), in m.
    pub max_stroke_m: f64,
    /// Largest spring-and-damper force over the band at the stated excitation (nominal), in N.
    pub max_spring_force_n: f64,
    /// Largest stroke over the band and every uncertainty scenario at the stated excitation, in m.
    pub worst_case_stroke_m: f64,
    /// Static sag of the mass on its spring under gravity, m g / k, in m.
    pub static_sag_m: f64,
    /// Relative drift of the tuned frequency `[below, above]` at which the reduction (dB) of its
    /// target window's peak halves (capped at ±0.5); absent when the absorber's benefit is < 0.1 dB.
    pub tolerance_band: Option<[f64; 2]>,
    /// The same band as tuned frequencies, in Hz.
    pub tolerance_band_hz: Option<[f64; 2]>,
}

/// The outcome of a design.
#[derive(Debug, Clone, Serialize)]
pub struct Design {
    /// Objective used.
    pub objective: Objective,
    /// Closed-form rule used for the start values.
    pub rule: &'static str,
    /// Target modes, in the order absorbers were assigned.
    pub targets: Vec<TargetMode>,
    /// Designed absorbers, in placement order.
    pub absorbers: Vec<DesignedAbsorber>,
    /// Ranking tables, one per absorber.
    pub slots: Vec<Slot>,
    /// Highest peak over the band before (with the model's own absorbers only).
    pub before: Peak,
    /// Highest peak over the band after.
    pub after: Peak,
    /// Band RMS before, in m/N.
    pub rms_before: f64,
    /// Band RMS after, in m/N.
    pub rms_after: f64,
    /// Refinement: Nelder–Mead iterations, and the objective after relative to the closed-form
    /// start (below 1 when refinement improved on the rules).
    pub refinement: RefinementInfo,
    /// Peaks in each uncertainty scenario (the nominal case alone without uncertainty).
    pub scenarios: Vec<ScenarioResult>,
    /// Highest band peak before over the scenarios, in m/N.
    pub worst_case_before: f64,
    /// Highest band peak after over the scenarios, in m/N.
    pub worst_case_after: f64,
    /// Constraints and whether they are met.
    pub constraints: ConstraintReport,
}

/// Band peaks of one uncertainty scenario.
#[derive(Debug, Clone, Serialize)]
pub struct ScenarioResult {
    /// The scenario.
    #[serde(flatten)]
    pub scenario: Scenario,
    /// Highest band peak before the design, in m/N.
    pub peak_before: f64,
    /// Highest band peak with the designed absorbers, in m/N.
    pub peak_after: f64,
    /// Largest stroke over the designed absorbers at the stated excitation, in m.
    pub max_stroke_m: f64,
}

/// What the joint refinement did.
#[derive(Debug, Clone, Copy, Serialize)]
pub struct RefinementInfo {
    /// Nelder–Mead iterations.
    pub iterations: u64,
    /// Objective after refinement divided by the objective of the closed-form start values.
    pub objective_ratio: f64,
}

fn rule(objective: Objective, base: bool) -> (&'static str, fn(f64) -> Tuning) {
    match (objective, base) {
        (Objective::Peak, false) => {
            ("Den Hartog frequency, Brock damping (harmonic force, H-infinity)", den_hartog_brock)
        }
        (Objective::Rms, false) => ("Warburton 1982 white-noise force (H2)", warburton_random_force),
        (Objective::Peak, true) => ("Warburton 1982 harmonic base acceleration (H-infinity)", warburton_base_harmonic),
        (Objective::Rms, true) => ("Warburton 1982 white-noise base acceleration (H2)", warburton_base_random),
    }
}

/// Designs the absorbers of `spec` on the study model `sm` of `structure`.
///
/// # Errors
/// [`PlacementError::Design`] when no target mode responds, a listed target does not exist among
/// the computed modes, or no candidate can host an absorber.
pub fn design(sm: &StudyModel, spec: &DesignSpec, structure: &Structure) -> Result<Design, PlacementError> {
    if sm.has_elastomers() {
        return Err(PlacementError::Design(
            "the model's absorbers include elastomer springs (absorbers[].elastomer); design works with \
             constant-stiffness absorbers for now: evaluate the elastomer case with `respond`, or give the existing \
             absorbers a stiffness and loss_factor"
                .into(),
        ));
    }
    if !sm.random.is_empty() || sm.loads.is_empty() {
        return Err(PlacementError::Design(
            "design uses the harmonic forces of study.excitation only for now; study.random is evaluated by \
             `respond`: remove it (and give at least one harmonic force) to design"
                .into(),
        ));
    }
    let targets = choose_targets(sm, spec)?;
    let band = sm.band_hz;
    let objective = spec.objective;
    let (rule_name, tune) = rule(objective, sm.base.is_some());
    let window_value = |lo: f64, hi: f64, links: &[AbsorberLink]| -> f64 {
        match objective {
            Objective::Peak => sm.peak_estimate(lo, hi, links),
            Objective::Rms => sm.rms(lo, hi, links),
        }
    };
    // The model's own absorbers, then one link per placed absorber (the second direction of a
    // lateral absorber is a twin link of the same body, kept apart and coupled too).
    let mut links: Vec<AbsorberLink> = sm.existing.clone();
    let mut twins: Vec<(usize, AbsorberLink)> = Vec::new();
    let with_twins = |links: &[AbsorberLink], twins: &[(usize, AbsorberLink)]| -> Vec<AbsorberLink> {
        links.iter().copied().chain(twins.iter().map(|t| t.1)).collect()
    };
    let mut placed: Vec<(usize, usize)> = Vec::new(); // (candidate index, target index)
    let mut slots = Vec::new();
    for k in 0..spec.count {
        let ti = k % targets.len();
        let t = &targets[ti];
        let r = t.mode - 1;
        let omega = 2.0 * std::f64::consts::PI * t.frequency_hz;
        let [lo, hi] = t.window_hz;
        let current = with_twins(&links, &twins);
        let base = window_value(lo, hi, &current);
        let max_phi2 = sm.candidates.iter().map(|c| c.mass_ratio_per_kg(&sm.model, r)).fold(0.0, f64::max);
        let eligible: Vec<usize> = (0..sm.candidates.len())
            .filter(|&ci| {
                let c = &sm.candidates[ci];
                let phi2 = c.mass_ratio_per_kg(&sm.model, r);
                if phi2.is_nan() || phi2 <= 1e-9 * max_phi2 {
                    return false;
                }
                placed.iter().all(|&(pi, pt)| {
                    let p = &sm.candidates[pi];
                    let same_place = p.node == c.node && p.direction.unit == c.direction.unit;
                    let too_close = pt == ti
                        && distance(structure.nodes[p.node].xyz, structure.nodes[c.node].xyz) < spec.min_spacing;
                    !same_place && !too_close
                })
            })
            .collect();
        if eligible.is_empty() {
            return Err(PlacementError::Design(format!(
                "no candidate can host absorber {} for mode {} ({:.2} Hz): every candidate is at a node of the mode, \
                 already used, or closer than min_spacing = {:.4} m to another absorber on this mode",
                k + 1,
                t.mode,
                t.frequency_hz,
                spec.min_spacing
            )));
        }
        // Prescreen: only the candidates with the largest mass ratio per kilogram can be best (the
        // attainable reduction grows with μ); the others are not scored on the coupled model.
        let mut eligible = eligible;
        eligible.sort_by(|&a, &b| {
            let (pa, pb) =
                (sm.candidates[a].mass_ratio_per_kg(&sm.model, r), sm.candidates[b].mass_ratio_per_kg(&sm.model, r));
            pb.total_cmp(&pa).then(a.cmp(&b))
        });
        eligible.truncate(PRESCREEN);
        let mut rows: Vec<(usize, RankedCandidate, AbsorberLink)> = eligible
            .par_iter()
            .map(|&ci| {
                let c = &sm.candidates[ci];
                let phi2 = c.mass_ratio_per_kg(&sm.model, r);
                let mu = spec.mass_each * phi2;
                let (stiffness, damping) = tune(mu).physical(spec.mass_each, omega);
                let link = AbsorberLink {
                    coord: c.coord,
                    mass: spec.mass_each,
                    stiffness,
                    damping: AbsorberDamping::Viscous(damping),
                };
                let mut all = current.clone();
                all.push(link);
                if let Some((_, coord)) = &c.second {
                    all.push(AbsorberLink { coord: *coord, ..link });
                }
                let score = window_value(lo, hi, &all);
                let row = RankedCandidate {
                    candidate: c.clone(),
                    mass_ratio_per_kg: phi2,
                    effective_mass_kg: 1.0 / phi2,
                    score,
                    reduction_db: 20.0 * (base / score).log10(),
                };
                (ci, row, link)
            })
            .collect();
        rows.sort_by(|a, b| a.1.score.total_cmp(&b.1.score).then(a.0.cmp(&b.0)));
        let (best, _, link) = rows[0].clone();
        placed.push((best, ti));
        if let Some((_, coord)) = &sm.candidates[best].second {
            twins.push((links.len() - sm.existing.len(), AbsorberLink { coord: *coord, ..link }));
        }
        links.push(link);
        slots.push(Slot {
            absorber: k + 1,
            target_mode: t.mode,
            ranking: rows.into_iter().take(RANKING_ROWS).map(|(_, row, _)| row).collect(),
        });
    }
    let n_existing = sm.existing.len();
    let start: Vec<AbsorberLink> = links[n_existing..].to_vec();
    let fixed = sm.existing.clone();
    let cases = scenarios(&spec.uncertainty);
    let mut windows = vec![band];
    windows.extend(targets.iter().map(|t| t.window_hz));
    let n_new = start.len();
    let twin_of: Vec<(usize, usize)> = twins.iter().map(|&(i, l)| (i, l.coord)).collect();
    let coords: Vec<usize> = with_twins(&links, &twins).iter().map(|l| l.coord).collect();
    let f0 = sm.reference_force;
    let mass_split = match (spec.total_mass, spec.mass_limits) {
        (Some(t), Some(l)) if spec.count > 1 && l[1] > l[0] => Some((t, l)),
        _ => None,
    };
    let mut problem = Problem {
        ev: Evaluator::new(sm, &coords, n_existing, cases.clone(), windows),
        fixed: fixed.clone(),
        start: start.clone(),
        twins: twin_of.clone(),
        mass_split,
        stroke_limit: spec.stroke_limit.map(|l| l / f0),
        objective,
        goal: Goal::Response,
        accurate: false,
        scale: 1.0,
    };
    let x0 = problem.start_point();
    let start_all = problem.links(&x0);
    let start_values = problem.evaluate(&start_all);
    problem.scale = problem.objective_value(&start_values);
    let (coarse, mut problem) = run(problem, x0, 1.0, 80, 1e-6)?;
    problem.accurate = true;
    let (fine, mut problem) = run(problem, coarse.param.clone(), 0.2, 12, 1e-9)?;
    let mut iterations = coarse.iterations + fine.iterations;
    let mut chosen = fine;
    let mut values = problem.evaluate(&chosen.links);
    // The stroke limit: never a silent best effort.
    let mut best_achievable = None;
    if let Some(limit) = spec.stroke_limit {
        if Problem::worst_stroke(&values) * f0 > limit * (1.0 + 1e-3) {
            problem.goal = Goal::Stroke;
            problem.accurate = false;
            let (least, p) = run(problem, chosen.param.clone(), 1.0, 80, 1e-6)?;
            problem = p;
            iterations += least.iterations;
            let least_values = problem.evaluate(&least.links);
            let achievable = Problem::worst_stroke(&least_values) * f0;
            if achievable <= limit {
                // Feasible: the best response among designs that meet the limit, from there.
                problem.goal = Goal::Response;
                let (again, p) = run(problem, least.param.clone(), 0.5, 60, 1e-6)?;
                problem = p;
                iterations += again.iterations;
                problem.accurate = true;
                let again_values = problem.evaluate(&again.links);
                let ok = Problem::worst_stroke(&again_values) * f0 <= limit * (1.0 + 1e-3);
                let (c, v) = if ok {
                    (again, again_values)
                } else {
                    let v = problem.evaluate(&least.links);
                    (least, v)
                };
                chosen = c;
                values = v;
            } else {
                best_achievable = Some(achievable);
            }
        }
    }
    problem.accurate = true;
    let objective_ratio = problem.objective_value(&values) / problem.objective_value(&problem.evaluate(&start_all));
    let refinement = RefinementInfo { iterations, objective_ratio };
    let refined = chosen.links;
    let mut all = sm.existing.clone();
    all.extend(refined.iter().copied());
    let before = sm.peak(band[0], band[1], &sm.existing);
    let after = sm.peak(band[0], band[1], &all);
    let rms_before = sm.rms(band[0], band[1], &sm.existing);
    let rms_after = sm.rms(band[0], band[1], &all);
    let curves = sm.curves(&sm.grid_hz, &all);
    // Before, in every scenario: the model's own absorbers only.
    let own: Vec<usize> = sm.existing.iter().map(|l| l.coord).collect();
    let before_cases = Evaluator::new(sm, &own, n_existing, cases.clone(), vec![band]).all(&sm.existing, true);
    let scenario_results: Vec<ScenarioResult> = cases
        .iter()
        .zip(&before_cases)
        .zip(&values)
        .map(|((&scenario, b), a)| ScenarioResult {
            scenario,
            peak_before: b.window_peaks[0],
            peak_after: a.window_peaks[0],
            max_stroke_m: a.max_stroke.iter().copied().fold(0.0, f64::max) * f0,
        })
        .collect();
    let worst_case_before = scenario_results.iter().map(|r| r.peak_before).fold(0.0, f64::max);
    let worst_case_after = scenario_results.iter().map(|r| r.peak_after).fold(0.0, f64::max);
    let worst_stroke_m = Problem::worst_stroke(&values) * f0;
    // One body per absorber: the twins' masses are not counted again.
    let total_mass_kg: f64 = refined[..n_new].iter().map(|l| l.mass).sum();
    let message = match (spec.stroke_limit, best_achievable) {
        (Some(limit), Some(best)) => Some(format!(
            "the stroke limit {limit:.4e} m cannot be met: the best achievable worst-case stroke is {best:.4e} m \
             (within the refinement's bounds on tuning, damping and mass split); the design shown reaches \
             {worst_stroke_m:.4e} m. Raise the limit or the absorber mass, or lower the excitation"
        )),
        _ => None,
    };
    let constraints = ConstraintReport {
        constraints_met: message.is_none(),
        message,
        stroke_limit_m: spec.stroke_limit,
        worst_stroke_m,
        best_achievable_stroke_m: best_achievable,
        total_mass_kg,
        mass_limits_kg: spec.mass_limits,
    };
    let absorbers = placed
        .iter()
        .enumerate()
        .map(|(i, &(ci, ti))| {
            let c = sm.candidates[ci].clone();
            let t = &targets[ti];
            let link = refined[i];
            let phi2 = c.mass_ratio_per_kg(&sm.model, t.mode - 1);
            // This absorber's links among `refined`: itself, and its twin if lateral.
            let mine: Vec<usize> =
                std::iter::once(i).chain(twin_of.iter().position(|&(p, _)| p == i).map(|k| n_new + k)).collect();
            let c_visc = match link.damping {
                AbsorberDamping::Viscous(c) => c,
                _ => 0.0,
            };
            let wa = link.natural_omega();
            let wj = 2.0 * std::f64::consts::PI * t.frequency_hz;
            // A lateral absorber's stroke and force: the larger of its two directions.
            let largest = |curves: &[Vec<antinode_solver::Complex64>]| -> f64 {
                mine.iter().flat_map(|&j| curves[n_existing + j].iter().map(|z| z.norm())).fold(0.0, f64::max)
            };
            let max_stroke = largest(&curves.stroke);
            let max_force = largest(&curves.spring_force);
            let before_window = sm.peak_estimate(t.window_hz[0], t.window_hz[1], &sm.existing);
            let indices: Vec<usize> = mine.iter().map(|&j| n_existing + j).collect();
            let tol = tolerance_band(sm, &all, &indices, t.window_hz, before_window);
            let fa = wa / (2.0 * std::f64::consts::PI);
            DesignedAbsorber {
                candidate: c,
                kind: spec.kind,
                target_mode: t.mode,
                mass_kg: link.mass,
                stiffness_n_per_m: link.stiffness,
                damping_n_s_per_m: c_visc,
                tuned_frequency_hz: fa,
                mass_ratio: link.mass * phi2,
                effective_mass_kg: 1.0 / phi2,
                damping_ratio: c_visc / (2.0 * link.mass * wa),
                damping_ratio_of_target: c_visc / (2.0 * link.mass * wj),
                frequency_ratio: wa / wj,
                rule_stiffness_n_per_m: start[i].stiffness,
                rule_damping_n_s_per_m: match start[i].damping {
                    AbsorberDamping::Viscous(c) => c,
                    _ => 0.0,
                },
                max_stroke_m_per_n: max_stroke,
                max_spring_force_n_per_n: max_force,
                max_stroke_m: max_stroke * f0,
                max_spring_force_n: max_force * f0,
                worst_case_stroke_m: values
                    .iter()
                    .flat_map(|v| mine.iter().map(move |&j| v.max_stroke[j]))
                    .fold(0.0, f64::max)
                    * f0,
                static_sag_m: static_sag(link.mass, link.stiffness),
                tolerance_band: tol,
                tolerance_band_hz: tol.map(|[lo, hi]| [fa * (1.0 + lo), fa * (1.0 + hi)]),
            }
        })
        .collect();
    Ok(Design {
        objective,
        rule: rule_name,
        targets,
        absorbers,
        slots,
        before,
        after,
        rms_before,
        rms_after,
        refinement,
        scenarios: scenario_results,
        worst_case_before,
        worst_case_after,
        constraints,
    })
}

fn choose_targets(sm: &StudyModel, spec: &DesignSpec) -> Result<Vec<TargetMode>, PlacementError> {
    let n = sm.natural_hz.len();
    let [blo, bhi] = sm.band_hz;
    let modes: Vec<usize> = match &spec.targets {
        TargetSpec::Modes(list) => {
            for &m in list {
                if m > n {
                    return Err(PlacementError::Design(format!(
                        "study.absorber_design.targets: target mode {m} is not among the {n} computed modes (up to {:.2} Hz); raise \
                         study.max_mode_frequency_hz or choose a lower mode",
                        sm.natural_hz.last().copied().unwrap_or(0.0)
                    )));
                }
                if m <= sm.n_zero_energy {
                    return Err(PlacementError::Design(format!(
                        "target mode {m} is a zero-frequency (rigid-body) mode; an absorber cannot be tuned to it"
                    )));
                }
            }
            list.iter().map(|m| m - 1).collect()
        }
        TargetSpec::Auto => {
            let in_band: Vec<usize> =
                (sm.n_zero_energy..n).filter(|&r| sm.natural_hz[r] >= blo && sm.natural_hz[r] <= bhi).collect();
            let peaks: Vec<f64> = in_band.iter().map(|&r| sm.modal_peak(r)).collect();
            let top = peaks.iter().copied().fold(0.0, f64::max);
            if top.is_nan() || top <= 0.0 {
                return Err(PlacementError::Design(format!(
                    "no mode in the band [{blo}, {bhi}] Hz responds at the response points to this excitation \
                     (is the force or the response point at a node of every mode, or across their direction?)"
                )));
            }
            let mut chosen: Vec<(usize, f64)> = in_band
                .iter()
                .zip(&peaks)
                .filter(|&(_, &p)| p >= AUTO_TARGET_SHARE * top)
                .map(|(&r, &p)| (r, p))
                .collect();
            chosen.sort_by(|a, b| b.1.total_cmp(&a.1).then(a.0.cmp(&b.0)));
            chosen.into_iter().map(|(r, _)| r).collect()
        }
    };
    Ok(modes
        .into_iter()
        .map(|r| TargetMode {
            mode: r + 1,
            frequency_hz: sm.natural_hz[r],
            modal_peak: sm.modal_peak(r),
            window_hz: window(sm, r),
        })
        .collect())
}

/// Scoring window of mode r: from the geometric mean with the next lower distinct elastic mode to
/// that with the next higher one, at most a factor 1.5 each side, within the band.
fn window(sm: &StudyModel, r: usize) -> [f64; 2] {
    let f = sm.natural_hz[r];
    let elastic = &sm.natural_hz[sm.n_zero_energy..];
    let below = elastic.iter().copied().filter(|&g| g < f * (1.0 - 1e-6)).fold(0.0, f64::max);
    let above = elastic.iter().copied().filter(|&g| g > f * (1.0 + 1e-6)).fold(f64::INFINITY, f64::min);
    let lo = if below > 0.0 { (below * f).sqrt().max(f / 1.5) } else { f / 1.5 };
    let hi = if above.is_finite() { (above * f).sqrt().min(1.5 * f) } else { 1.5 * f };
    let [blo, bhi] = sm.band_hz;
    [lo.max(blo), hi.min(bhi)]
}

/// Warnings for ring inserts aimed at modes they cannot reach: one per target mode that `classes`
/// (the mode classification, by mode from 0) calls a shell mode with n ≥ 2 circumferential waves.
///
/// Why (common practice): a rigid insert on an averaging link moves with the ring's average
/// motion. For a ring of N equally spaced nodes at angles θ_k carrying harmonic n, radial
/// w cos nθ and tangential v sin nθ, the averaged translation perpendicular to the axis is
/// (1/N) Σ_k (w cos nθ_k e_r(θ_k) + v sin nθ_k e_θ(θ_k)), whose components are sums of
/// cos((n ± 1)θ_k) and sin((n ± 1)θ_k): zero unless n = 1. The averaged axial motion is
/// (1/N) Σ_k u cos nθ_k, zero unless n = 0. So the insert couples only to n = 0 (axial) and n = 1
/// (bending) motion, and its mass ratio on an ovaling mode is zero up to the mesh's asymmetry.
pub fn ring_insert_warnings(spec: &DesignSpec, design: &Design, sm: &StudyModel, classes: &[ModeClass]) -> Vec<String> {
    if spec.kind != AbsorberKind::RingInsert {
        return Vec::new();
    }
    let mut out = Vec::new();
    for t in &design.targets {
        let Some(class) = classes.get(t.mode - 1) else { continue };
        let n = class.n.unwrap_or(0);
        if class.kind != ModeKind::Ovaling || n < 2 {
            continue;
        }
        let best = sm.candidates.iter().map(|c| c.mass_ratio_per_kg(&sm.model, t.mode - 1)).fold(0.0, f64::max);
        out.push(format!(
            "target mode {} ({:.2} Hz) is a shell mode of class {} with n = {n} circumferential waves: a ring insert \
             moves with the ring's average motion, which holds only n = 0 and n = 1 motion, so it hardly couples to \
             this mode (largest mass ratio per kg over the candidate rings {best:.3e} 1/kg); use point absorbers on \
             the wall for it",
            t.mode,
            t.frequency_hz,
            class.kind.word()
        ));
    }
    out
}
