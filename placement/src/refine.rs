//! Joint refinement of the designed absorbers on the coupled reduced model, over every
//! uncertainty scenario, under the stroke limit and with the mass budget's split free within the
//! per-absorber limits.
//!
//! Parameters per absorber: ln ω_a (ω_a = √(k/m)) and ln ζ_a (ζ_a = c/(2 m ω_a)), and, when the
//! split of a total budget T may change, weights w_i with m_i = T e^{w_i}/Σ_j e^{w_j} (so Σ m_i = T
//! exactly). Box: ω_a within ×/÷ √2 and ζ_a within ×/÷ 5 of the closed-form start (×/÷ 20 upward
//! when a stroke limit is set: damping is what buys stroke), masses within their limits.
//!
//! Objective J: per scenario, for `peak` a soft maximum (8-norm) of the band peak and every target
//! window's peak (so every absorber stays tuned where another mode dominates), for `rms` the band
//! RMS; then the worst scenario. With a stroke limit L the cost is J·(1 + 100·max(0, r − 1)),
//! r = worst stroke over absorbers and scenarios / L (an exact exterior penalty). Nelder–Mead first
//! on grid peaks sharpened by resonance fits, then a polish on peaks located by golden-section
//! search on the full modal model (accurate to ~1e-9 in frequency).

use antinode_mesh::{AbsorberDamping, Objective};
use antinode_solver::AbsorberLink;
use argmin::core::{CostFunction, Error as ArgminError, Executor, State};
use argmin::solver::neldermead::NelderMead;

use crate::error::PlacementError;
use crate::robust::{Evaluator, ScenarioValues};

/// What to minimise.
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) enum Goal {
    /// The response objective (with the stroke penalty).
    Response,
    /// The worst stroke ratio alone (to report the best achievable stroke).
    Stroke,
}

/// The refinement problem.
pub(crate) struct Problem<'a> {
    pub ev: Evaluator<'a>,
    pub fixed: Vec<AbsorberLink>,
    pub start: Vec<AbsorberLink>,
    /// Second directions of lateral absorbers: (index into `start`, coordinate). Each is a link of
    /// the same mass, stiffness and damping as its body, appended after the `start` links.
    pub twins: Vec<(usize, usize)>,
    /// Total budget and per-absorber limits when the split is free.
    pub mass_split: Option<(f64, [f64; 2])>,
    /// Stroke limit per newton of the reference force, in m/N.
    pub stroke_limit: Option<f64>,
    pub objective: Objective,
    pub goal: Goal,
    pub accurate: bool,
    pub scale: f64,
}

/// Result of a refinement.
pub(crate) struct Refined {
    pub links: Vec<AbsorberLink>,
    pub iterations: u64,
    pub param: Vec<f64>,
}

fn viscous(l: &AbsorberLink) -> f64 {
    match l.damping {
        AbsorberDamping::Viscous(c) => c,
        _ => 0.0,
    }
}

impl Problem<'_> {
    pub fn start_point(&self) -> Vec<f64> {
        let mut x: Vec<f64> = self
            .start
            .iter()
            .flat_map(|l| {
                let wa = l.natural_omega();
                [wa.ln(), (viscous(l) / (2.0 * l.mass * wa)).max(1e-9).ln()]
            })
            .collect();
        if self.mass_split.is_some() {
            x.extend(self.start.iter().map(|_| 0.0));
        }
        x
    }

    fn masses(&self, x: &[f64]) -> Vec<f64> {
        let n = self.start.len();
        match self.mass_split {
            Some((total, _)) => {
                let w = &x[2 * n..];
                let top = w.iter().copied().fold(f64::NEG_INFINITY, f64::max);
                let e: Vec<f64> = w.iter().map(|v| (v - top).exp()).collect();
                let sum: f64 = e.iter().sum();
                e.iter().map(|v| total * v / sum).collect()
            }
            None => self.start.iter().map(|l| l.mass).collect(),
        }
    }

    /// New absorbers at parameters `x`: one link per absorber, then the twins.
    pub fn links(&self, x: &[f64]) -> Vec<AbsorberLink> {
        let mut out = self.bodies(x);
        let twins: Vec<AbsorberLink> = self.twins.iter().map(|&(i, coord)| AbsorberLink { coord, ..out[i] }).collect();
        out.extend(twins);
        out
    }

    fn bodies(&self, x: &[f64]) -> Vec<AbsorberLink> {
        let m = self.masses(x);
        self.start
            .iter()
            .enumerate()
            .map(|(i, l)| {
                let (wa, z) = (x[2 * i].exp(), x[2 * i + 1].exp());
                AbsorberLink {
                    mass: m[i],
                    stiffness: m[i] * wa * wa,
                    damping: AbsorberDamping::Viscous(2.0 * z * m[i] * wa),
                    ..*l
                }
            })
            .collect()
    }

    fn all(&self, new: &[AbsorberLink]) -> Vec<AbsorberLink> {
        let mut all = self.fixed.clone();
        all.extend_from_slice(new);
        all
    }

    /// Values in every scenario.
    pub fn evaluate(&self, new: &[AbsorberLink]) -> Vec<ScenarioValues> {
        self.ev.all(&self.all(new), self.accurate)
    }

    /// The objective J (worst scenario), in m/N.
    pub fn objective_value(&self, v: &[ScenarioValues]) -> f64 {
        v.iter()
            .map(|s| match self.objective {
                Objective::Rms => s.rms,
                Objective::Peak => s.window_peaks.iter().map(|p| p.powi(8)).sum::<f64>().powf(1.0 / 8.0),
            })
            .fold(0.0, f64::max)
    }

    /// Worst stroke over absorbers and scenarios, in m/N.
    pub fn worst_stroke(v: &[ScenarioValues]) -> f64 {
        v.iter().flat_map(|s| s.max_stroke.iter().copied()).fold(0.0, f64::max)
    }

    fn inside(&self, x: &[f64], x0: &[f64]) -> bool {
        let n = self.start.len();
        let up = if self.stroke_limit.is_some() { 20f64.ln() } else { 5f64.ln() };
        let ok = (0..n).all(|i| {
            let dz = x[2 * i + 1] - x0[2 * i + 1];
            (x[2 * i] - x0[2 * i]).abs() <= 0.5 * 2f64.ln() && dz <= up && dz >= -(5f64.ln())
        });
        ok && match self.mass_split {
            Some((_, [lo, hi])) => self.masses(x).iter().all(|&m| m >= lo * (1.0 - 1e-12) && m <= hi * (1.0 + 1e-12)),
            None => true,
        }
    }
}

impl CostFunction for Problem<'_> {
    type Param = Vec<f64>;
    type Output = f64;

    fn cost(&self, x: &Self::Param) -> Result<f64, ArgminError> {
        let x0 = self.start_point();
        let v = self.evaluate(&self.links(x));
        let ratio = self.stroke_limit.map(|l| Problem::worst_stroke(&v) / l);
        let c = match self.goal {
            Goal::Stroke => ratio.unwrap_or(0.0),
            Goal::Response => {
                let j = self.objective_value(&v) / self.scale;
                j * (1.0 + 100.0 * ratio.map_or(0.0, |r| (r - 1.0).max(0.0)))
            }
        };
        Ok(if self.inside(x, &x0) { c } else { 1e3 * (1.0 + c) })
    }
}

/// Nelder–Mead from `x`, with initial steps of `scale` × (0.01 in ln ω_a, 0.1 in ln ζ_a and in
/// the mass weights), at most `iters` iterations per dimension, stopping when the simplex's costs
/// have a standard deviation below `tolerance` (relative to the start's objective).
pub(crate) fn run(
    problem: Problem<'_>,
    x: Vec<f64>,
    scale: f64,
    iters: u64,
    tolerance: f64,
) -> Result<(Refined, Problem<'_>), PlacementError> {
    let dim = x.len();
    let n = problem.start.len();
    let step = |i: usize| scale * if i < 2 * n && i % 2 == 0 { 0.01 } else { 0.1 };
    let v0 = problem.cost(&x).map_err(|e| PlacementError::Design(format!("refinement: {e}")))?;
    let mut simplex = vec![x.clone()];
    for i in 0..dim {
        let mut v = x.clone();
        v[i] += step(i);
        simplex.push(v);
    }
    let solver = NelderMead::new(simplex)
        .with_sd_tolerance(tolerance)
        .map_err(|e| PlacementError::Design(format!("refinement setup: {e}")))?;
    let result = Executor::new(problem, solver)
        .configure(|s| s.max_iters(iters * dim as u64))
        .run()
        .map_err(|e| PlacementError::Design(format!("refinement: {e}")))?;
    let best = result.state().get_best_param().cloned().unwrap_or(x.clone());
    let v1 = result.state().get_best_cost();
    let iterations = result.state().get_iter();
    let problem = result.problem.problem.ok_or_else(|| PlacementError::Design("refinement lost its problem".into()))?;
    // Never worse than where it started.
    let param = if v1 <= v0 { best } else { x };
    let links = problem.links(&param);
    Ok((Refined { links, iterations, param }, problem))
}
