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
//! 4. All stiffnesses and dampings are refined together by Nelder–Mead in log coordinates
//!    (stiffness within ×/÷ 2 and damping within ×/÷ 5 of the start) on the whole-band objective:
//!    for `peak` a soft maximum (8-norm) of the band peak and every target window's peak, so each
//!    absorber stays well tuned even where another mode's peak dominates; for `rms` the band RMS.

use antinode_mesh::{AbsorberDamping, DesignSpec, Objective, Structure, TargetSpec, distance};
use antinode_solver::AbsorberLink;
use argmin::core::{CostFunction, Error as ArgminError, Executor, State};
use argmin::solver::neldermead::NelderMead;
use rayon::prelude::*;
use serde::Serialize;

use crate::error::PlacementError;
use antinode_solver::resonance_peak;

use crate::study::{Candidate, GridTable, Peak, StudyModel};
use crate::tuning::{Tuning, den_hartog_brock, warburton_random_force};

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
    /// Target mode number, from 1.
    pub target_mode: usize,
    /// Moving mass, in kg.
    pub mass_kg: f64,
    /// Spring stiffness, in N/m.
    pub stiffness_n_per_m: f64,
    /// Viscous damping, in N·s/m.
    pub damping_n_s_per_m: f64,
    /// Undamped natural frequency √(k/m)/2π, in Hz.
    pub tuned_frequency_hz: f64,
    /// Mass ratio μ = m_a φ² on the target mode.
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
}

/// What the joint refinement did.
#[derive(Debug, Clone, Copy, Serialize)]
pub struct RefinementInfo {
    /// Nelder–Mead iterations.
    pub iterations: u64,
    /// Objective after refinement divided by the objective of the closed-form start values.
    pub objective_ratio: f64,
}

fn rule(objective: Objective) -> (&'static str, fn(f64) -> Tuning) {
    match objective {
        Objective::Peak => ("Den Hartog frequency, Brock damping (harmonic force, H-infinity)", den_hartog_brock),
        Objective::Rms => ("Warburton 1982 white-noise force (H2)", warburton_random_force),
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
    let (rule_name, tune) = rule(objective);
    let window_value = |lo: f64, hi: f64, links: &[AbsorberLink]| -> f64 {
        match objective {
            Objective::Peak => sm.peak_estimate(lo, hi, links),
            Objective::Rms => sm.rms(lo, hi, links),
        }
    };
    let mut links: Vec<AbsorberLink> = sm.existing.clone();
    let mut placed: Vec<(usize, usize)> = Vec::new(); // (candidate index, target index)
    let mut slots = Vec::new();
    for k in 0..spec.count {
        let ti = k % targets.len();
        let t = &targets[ti];
        let r = t.mode - 1;
        let omega = 2.0 * std::f64::consts::PI * t.frequency_hz;
        let [lo, hi] = t.window_hz;
        let base = window_value(lo, hi, &links);
        let max_phi2 = sm.candidates.iter().map(|c| sm.model.coupling(c.coord, r).powi(2)).fold(0.0, f64::max);
        let eligible: Vec<usize> = (0..sm.candidates.len())
            .filter(|&ci| {
                let c = &sm.candidates[ci];
                let phi2 = sm.model.coupling(c.coord, r).powi(2);
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
            let (pa, pb) = (
                sm.model.coupling(sm.candidates[a].coord, r).powi(2),
                sm.model.coupling(sm.candidates[b].coord, r).powi(2),
            );
            pb.total_cmp(&pa).then(a.cmp(&b))
        });
        eligible.truncate(PRESCREEN);
        let mut rows: Vec<(usize, RankedCandidate, AbsorberLink)> = eligible
            .par_iter()
            .map(|&ci| {
                let c = &sm.candidates[ci];
                let phi2 = sm.model.coupling(c.coord, r).powi(2);
                let mu = spec.mass_each * phi2;
                let (stiffness, damping) = tune(mu).physical(spec.mass_each, omega);
                let link = AbsorberLink {
                    coord: c.coord,
                    mass: spec.mass_each,
                    stiffness,
                    damping: AbsorberDamping::Viscous(damping),
                };
                let mut all = links.clone();
                all.push(link);
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
        links.push(link);
        slots.push(Slot {
            absorber: k + 1,
            target_mode: t.mode,
            ranking: rows.into_iter().take(RANKING_ROWS).map(|(_, row, _)| row).collect(),
        });
    }
    let n_existing = sm.existing.len();
    let start: Vec<AbsorberLink> = links[n_existing..].to_vec();
    let (refined, refinement) = refine(sm, &targets, objective, &links[..n_existing], &start)?;
    let mut all = sm.existing.clone();
    all.extend(refined.iter().copied());
    let before = sm.peak(band[0], band[1], &sm.existing);
    let after = sm.peak(band[0], band[1], &all);
    let rms_before = sm.rms(band[0], band[1], &sm.existing);
    let rms_after = sm.rms(band[0], band[1], &all);
    let curves = sm.curves(&sm.grid_hz, &all);
    let absorbers = placed
        .iter()
        .enumerate()
        .map(|(i, &(ci, ti))| {
            let c = sm.candidates[ci].clone();
            let t = &targets[ti];
            let link = refined[i];
            let phi2 = sm.model.coupling(c.coord, t.mode - 1).powi(2);
            let c_visc = match link.damping {
                AbsorberDamping::Viscous(c) => c,
                _ => 0.0,
            };
            let wa = link.natural_omega();
            let wj = 2.0 * std::f64::consts::PI * t.frequency_hz;
            let s = &curves.stroke[n_existing + i];
            let f = &curves.spring_force[n_existing + i];
            DesignedAbsorber {
                candidate: c,
                target_mode: t.mode,
                mass_kg: link.mass,
                stiffness_n_per_m: link.stiffness,
                damping_n_s_per_m: c_visc,
                tuned_frequency_hz: wa / (2.0 * std::f64::consts::PI),
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
                max_stroke_m_per_n: s.iter().map(|z| z.norm()).fold(0.0, f64::max),
                max_spring_force_n_per_n: f.iter().map(|z| z.norm()).fold(0.0, f64::max),
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
                        "target mode {m} is not among the {n} computed modes (up to {:.2} Hz); raise \
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

/// Refinement problem for argmin: parameters are (ln k, ln c) per new absorber.
struct Refinement<'a> {
    sm: &'a StudyModel,
    targets: &'a [TargetMode],
    objective: Objective,
    fixed: &'a [AbsorberLink],
    start: &'a [AbsorberLink],
    /// Receptances among all attachments (fixed, then new) on the grid.
    table: GridTable,
    /// Objective of the start point (the cost is relative to it).
    scale: f64,
}

impl Refinement<'_> {
    fn links(&self, x: &[f64]) -> Vec<AbsorberLink> {
        self.start
            .iter()
            .enumerate()
            .map(|(i, l)| AbsorberLink {
                stiffness: x[2 * i].exp(),
                damping: AbsorberDamping::Viscous(x[2 * i + 1].exp()),
                ..*l
            })
            .collect()
    }

    fn start_point(&self) -> Vec<f64> {
        self.start
            .iter()
            .flat_map(|l| {
                let c = match l.damping {
                    AbsorberDamping::Viscous(c) => c,
                    _ => 0.0,
                };
                [l.stiffness.ln(), c.max(1e-12).ln()]
            })
            .collect()
    }

    /// Peaks of the largest response over [lo, hi] for each window `(lo, hi)`: the grid maximum in
    /// the window, or higher where one of its two highest local maxima, refined by a resonance fit
    /// through its grid neighbours ([`resonance_peak`]), rises above it. Each local maximum is
    /// refined once for all the windows that hold it.
    fn window_peaks(&self, values: &[f64], windows: &[[f64; 2]]) -> Vec<f64> {
        let g = &self.sm.grid_hz;
        let mut refine: Vec<usize> = Vec::new();
        let mut grid_max = Vec::with_capacity(windows.len());
        for &[lo, hi] in windows {
            let idx: Vec<usize> = (0..g.len()).filter(|&i| g[i] >= lo && g[i] <= hi).collect();
            grid_max.push(idx.iter().map(|&i| values[i]).fold(0.0, f64::max));
            let mut maxima: Vec<usize> = idx
                .into_iter()
                .filter(|&i| i > 0 && i + 1 < g.len() && values[i] >= values[i - 1] && values[i] >= values[i + 1])
                .collect();
            maxima.sort_by(|&a, &b| values[b].total_cmp(&values[a]).then(a.cmp(&b)));
            refine.extend(maxima.into_iter().take(2));
        }
        refine.sort_unstable();
        refine.dedup();
        let refined: Vec<(f64, f64)> = refine
            .iter()
            .map(|&i| resonance_peak([g[i - 1], g[i], g[i + 1]], [values[i - 1], values[i], values[i + 1]]))
            .collect();
        windows
            .iter()
            .zip(grid_max)
            .map(|(&[lo, hi], m)| {
                refined.iter().filter(|&&(f, _)| f >= lo && f <= hi).map(|&(_, v)| v).fold(m, f64::max)
            })
            .collect()
    }

    /// The objective (m/N) of new absorbers `links`.
    fn value(&self, links: &[AbsorberLink]) -> f64 {
        let mut all = self.fixed.to_vec();
        all.extend_from_slice(links);
        let values: Vec<f64> =
            (0..self.sm.grid_hz.len()).into_par_iter().map(|i| self.sm.table_response(&self.table, i, &all)).collect();
        match self.objective {
            Objective::Rms => {
                let g = &self.sm.grid_hz;
                let mut s = 0.0;
                for i in 1..g.len() {
                    s += 0.5 * (values[i].powi(2) + values[i - 1].powi(2)) * (g[i] - g[i - 1]);
                }
                (s / (g[g.len() - 1] - g[0])).sqrt()
            }
            Objective::Peak => {
                let mut windows = vec![self.sm.band_hz];
                windows.extend(self.targets.iter().map(|t| t.window_hz));
                let peaks = self.window_peaks(&values, &windows);
                peaks.iter().map(|p| p.powi(8)).sum::<f64>().powf(1.0 / 8.0)
            }
        }
    }
}

impl CostFunction for Refinement<'_> {
    type Param = Vec<f64>;
    type Output = f64;

    fn cost(&self, x: &Self::Param) -> Result<f64, ArgminError> {
        let x0 = self.start_point();
        let inside = x.iter().zip(&x0).enumerate().all(|(i, (v, v0))| {
            let span = if i % 2 == 0 { 2f64.ln() } else { 5f64.ln() };
            (v - v0).abs() <= span
        });
        // Relative to the start value, so that the simplex tolerance is relative.
        let v = self.value(&self.links(x)) / self.scale;
        Ok(if inside { v } else { 1e3 * v })
    }
}

fn refine(
    sm: &StudyModel,
    targets: &[TargetMode],
    objective: Objective,
    fixed: &[AbsorberLink],
    start: &[AbsorberLink],
) -> Result<(Vec<AbsorberLink>, RefinementInfo), PlacementError> {
    let coords: Vec<usize> = fixed.iter().chain(start).map(|l| l.coord).collect();
    let mut problem = Refinement { sm, targets, objective, fixed, start, table: sm.table(&coords), scale: 1.0 };
    let x0 = problem.start_point();
    problem.scale = problem.value(&problem.links(&x0));
    let v0 = 1.0;
    let dim = x0.len();
    let mut simplex = vec![x0.clone()];
    for i in 0..dim {
        let mut v = x0.clone();
        v[i] += if i % 2 == 0 { 0.02 } else { 0.1 };
        simplex.push(v);
    }
    let solver = NelderMead::new(simplex)
        .with_sd_tolerance(1e-6)
        .map_err(|e| PlacementError::Design(format!("refinement setup: {e}")))?;
    let result = Executor::new(problem, solver)
        .configure(|s| s.max_iters(80 * dim as u64))
        .run()
        .map_err(|e| PlacementError::Design(format!("refinement: {e}")))?;
    let best = result.state().get_best_param().cloned().unwrap_or(x0.clone());
    let v1 = result.state().get_best_cost();
    let info = RefinementInfo { iterations: result.state().get_iter(), objective_ratio: v1.min(v0) };
    let problem = result.problem.problem.ok_or_else(|| PlacementError::Design("refinement lost its problem".into()))?;
    // Keep the rule's values if refinement did not improve (it never should make things worse).
    Ok((problem.links(if v1 <= v0 { &best } else { &x0 }), info))
}
