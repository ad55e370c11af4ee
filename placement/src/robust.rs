//! Uncertainty scenarios and the scenario-aware evaluation of a set of absorbers on the reduced
//! model: the inner loop of the refinement (robust pass, stroke limit, mass split).
//!
//! # Scenarios without re-solving
//! A scenario scales every structural natural frequency by s (the structure's stiffness by s², its
//! mass unchanged, so the mass-normalised shapes stay) and every designed absorber's stiffness by
//! t. Then the structure's receptance, residual flexibility included, is H_s(ω) = H(ω/s)/s², and
//! the coupled equations at ω are those of the nominal structure at ω' = ω/s with each absorber's
//! stiffness k/s² and viscous damping c/s (loss factors unchanged), all motions divided by s²
//! and spring forces unchanged. So one table of nominal receptances over a grid that covers
//! [f_lo/s_max, f_hi/s_min] serves every scenario: physical frequency f = s·g for grid point g.

use crate::study::GridTable;
use antinode_mesh::{AbsorberDamping, UncertaintySpec};
use antinode_solver::{AbsorberLink, Complex64, frequency_grid, golden_max, resonance_peak};
use rayon::prelude::*;
use serde::Serialize;

use crate::study::StudyModel;

/// One uncertainty scenario.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Scenario {
    /// Factor on every structural natural frequency.
    pub frequency_scale: f64,
    /// Factor on every designed absorber's stiffness.
    pub stiffness_scale: f64,
}

impl Scenario {
    /// The nominal case.
    pub const NOMINAL: Self = Self { frequency_scale: 1.0, stiffness_scale: 1.0 };
}

/// The scenarios of `u`, frequency level outer, stiffness level inner, each from low to high: a
/// quantity with scatter x takes `levels` even steps over [1 − x, 1 + x], one without takes 1.
pub fn scenarios(u: &UncertaintySpec) -> Vec<Scenario> {
    let levels = |x: f64| -> Vec<f64> {
        if x <= 0.0 || u.levels < 2 {
            return vec![1.0];
        }
        let n = u.levels;
        (0..n).map(|i| 1.0 - x + 2.0 * x * i as f64 / (n - 1) as f64).collect()
    };
    let mut out = Vec::new();
    for &s in &levels(u.frequency_scatter) {
        for &t in &levels(u.stiffness_scatter) {
            out.push(Scenario { frequency_scale: s, stiffness_scale: t });
        }
    }
    out
}

/// Links of the nominal structure equivalent to `links` in scenario `sc`: stiffness k·t/s² for
/// designed absorbers (index ≥ `n_fixed`), k/s² for the model's own, viscous damping c/s.
pub fn scenario_links(sc: Scenario, n_fixed: usize, links: &[AbsorberLink]) -> Vec<AbsorberLink> {
    let s = sc.frequency_scale;
    links
        .iter()
        .enumerate()
        .map(|(i, l)| {
            let t = if i >= n_fixed { sc.stiffness_scale } else { 1.0 };
            AbsorberLink {
                stiffness: l.stiffness * t / (s * s),
                damping: match l.damping {
                    AbsorberDamping::Viscous(c) => AbsorberDamping::Viscous(c / s),
                    other => other,
                },
                ..*l
            }
        })
        .collect()
}

/// Response of a set of absorbers in one scenario: per window the peak of the largest response
/// (m/N), and per absorber the largest stroke over the band (m/N).
#[derive(Debug, Clone, PartialEq)]
pub struct ScenarioValues {
    /// Peak per window, in m/N.
    pub window_peaks: Vec<f64>,
    /// Largest stroke of each absorber over the band, in m/N.
    pub max_stroke: Vec<f64>,
    /// Root-mean-square response over the band, in m/N.
    pub rms: f64,
}

/// Receptance table over an extended grid for a fixed set of attachments, and the scenarios.
pub struct Evaluator<'a> {
    sm: &'a StudyModel,
    /// Scenarios, in the order of [`scenarios`].
    pub scenarios: Vec<Scenario>,
    /// Windows `[lo, hi]` in physical Hz: the band first.
    pub windows: Vec<[f64; 2]>,
    n_fixed: usize,
    na: usize,
    grid: Vec<f64>,
    table: GridTable,
}

impl<'a> Evaluator<'a> {
    /// Table for attachments `coords` (the first `n_fixed` are the model's own absorbers), the
    /// scenarios and the windows (band first).
    pub fn new(
        sm: &'a StudyModel,
        coords: &[usize],
        n_fixed: usize,
        scenarios: Vec<Scenario>,
        windows: Vec<[f64; 2]>,
    ) -> Self {
        let smin = scenarios.iter().map(|s| s.frequency_scale).fold(1.0, f64::min);
        let smax = scenarios.iter().map(|s| s.frequency_scale).fold(1.0, f64::max);
        let [blo, bhi] = sm.band_hz;
        // One grid step beyond each end so that an edge maximum has neighbours. Steps of ζ/2 as the
        // study's grid for the nominal case alone; with several scenarios (each costing a full
        // sweep) steps of ζ, two per half-power bandwidth of a bare mode: the coupled peaks an
        // absorber leaves are wider, and each local maximum is refined (resonance fit, or
        // golden-section search).
        let coarse = if scenarios.len() > 1 { 2.0 } else { 1.0 };
        let grid = frequency_grid([blo / smax * 0.99, bhi / smin * 1.01], &sm.natural_hz, coarse * sm.damping_ratio);
        let (na, nr) = (coords.len(), sm.responses.len());
        let rows: Vec<GridTable> = grid
            .par_iter()
            .map(|&g| {
                let omega = 2.0 * std::f64::consts::PI * g;
                sm.table_row(omega, &sm.model.modal_factors(omega), coords)
            })
            .collect();
        let table = GridTable::concat(na, nr, rows);
        Evaluator { sm, scenarios, windows, n_fixed, na, grid, table }
    }

    /// Largest response and strokes at grid point `i` with `links` (already scaled to the nominal
    /// structure), per newton of the reference force, not yet divided by s².
    fn at_grid(&self, i: usize, links: &[AbsorberLink], stroke: &mut [f64]) -> f64 {
        let na = self.na;
        let omega = 2.0 * std::f64::consts::PI * self.grid[i];
        let zero = Complex64::new(0.0, 0.0);
        // Stack buffers for the usual handful of absorbers.
        let (mut gb, mut sb) = ([zero; 8], [zero; 8]);
        let (mut gv, mut sv) = (Vec::new(), Vec::new());
        let (g, s): (&mut [Complex64], &mut [Complex64]) = if na <= 8 {
            (&mut gb[..na], &mut sb[..na])
        } else {
            gv.resize(na, zero);
            sv.resize(na, zero);
            (&mut gv[..], &mut sv[..])
        };
        self.table.forces(i, omega, links, g, s);
        for (o, v) in stroke.iter_mut().zip(s.iter()) {
            *o = v.norm();
        }
        self.table.largest_response(i, g) / self.sm.reference_force
    }

    /// Window peaks and strokes in scenario `sc` with `links` (model's own first). With
    /// `accurate`, each window's two highest grid maxima are refined by golden-section search on
    /// the full modal model; otherwise by a resonance fit through their grid neighbours.
    pub fn values(&self, sc: Scenario, links: &[AbsorberLink], accurate: bool) -> ScenarioValues {
        let s = sc.frequency_scale;
        let scaled = scenario_links(sc, self.n_fixed, links);
        let [blo, bhi] = self.sm.band_hz;
        let f0 = self.sm.reference_force;
        let n_new = links.len() - self.n_fixed;
        let mut max_stroke = vec![0.0; n_new];
        let mut stroke = vec![0.0; links.len()];
        let mut vals = vec![0.0; self.grid.len()];
        let inside = |i: usize, lo: f64, hi: f64| {
            let f = s * self.grid[i];
            f >= lo && f <= hi
        };
        let mut band: Vec<(f64, f64)> = Vec::new();
        // Grid index of each designed absorber's largest stroke in the band.
        let mut stroke_at = vec![usize::MAX; n_new];
        for i in 0..self.grid.len() {
            // Only the band's points and their neighbours matter in this scenario.
            let near = inside(i, blo, bhi)
                || (i > 0 && inside(i - 1, blo, bhi))
                || (i + 1 < self.grid.len() && inside(i + 1, blo, bhi));
            if !near {
                continue;
            }
            vals[i] = self.at_grid(i, &scaled, &mut stroke) / (s * s);
            if inside(i, blo, bhi) {
                band.push((s * self.grid[i], vals[i]));
                for (j, v) in stroke[self.n_fixed..].iter().enumerate() {
                    if v / (s * s * f0) > max_stroke[j] {
                        max_stroke[j] = v / (s * s * f0);
                        stroke_at[j] = i;
                    }
                }
            }
        }
        // Band RMS by the trapezoidal rule over the physical frequencies, as `StudyModel::rms`.
        let rms = if band.len() < 2 {
            band.first().map_or(0.0, |b| b.1)
        } else {
            let mut acc = 0.0;
            for w in band.windows(2) {
                acc += 0.5 * (w[0].1.powi(2) + w[1].1.powi(2)) * (w[1].0 - w[0].0);
            }
            (acc / (band[band.len() - 1].0 - band[0].0)).sqrt()
        };
        let exact = |g: f64| -> f64 {
            let r = self.sm.coupled(2.0 * std::f64::consts::PI * g, &scaled);
            r.displacement.iter().map(|x| x.norm()).fold(0.0, f64::max) / (f0 * s * s)
        };
        let g = &self.grid;
        if accurate {
            // Each stroke maximum refined by golden-section search between its grid neighbours.
            for (j, &i) in stroke_at.iter().enumerate() {
                if i == usize::MAX || i == 0 || i + 1 >= g.len() {
                    continue;
                }
                let (lo, hi) = ((blo / s).max(g[i - 1]), (bhi / s).min(g[i + 1]));
                let (_, v) = golden_max(lo, hi, 1e-8, |f| {
                    let r = self.sm.coupled(2.0 * std::f64::consts::PI * f, &scaled);
                    r.stroke[self.n_fixed + j].norm() / (f0 * s * s)
                });
                max_stroke[j] = max_stroke[j].max(v);
            }
        }
        // Each window's two highest local maxima; each is refined once for all windows holding it.
        let mut per_window = Vec::with_capacity(self.windows.len());
        let mut refine: Vec<usize> = Vec::new();
        for &[lo, hi] in &self.windows {
            let idx: Vec<usize> = (0..g.len()).filter(|&i| inside(i, lo, hi)).collect();
            let top = idx.iter().map(|&i| vals[i]).fold(0.0, f64::max);
            let mut maxima: Vec<usize> = idx
                .into_iter()
                .filter(|&i| i > 0 && i + 1 < g.len() && vals[i] >= vals[i - 1] && vals[i] >= vals[i + 1])
                .collect();
            maxima.sort_by(|&a, &b| vals[b].total_cmp(&vals[a]).then(a.cmp(&b)));
            maxima.truncate(2);
            refine.extend(maxima.iter().copied());
            per_window.push((top, maxima));
        }
        refine.sort_unstable();
        refine.dedup();
        let refined: Vec<(usize, f64, f64)> = refine
            .iter()
            .map(|&i| {
                let (f, v) = if accurate {
                    golden_max(g[i - 1], g[i + 1], 1e-8, exact)
                } else {
                    resonance_peak([g[i - 1], g[i], g[i + 1]], [vals[i - 1], vals[i], vals[i + 1]])
                };
                (i, s * f, v)
            })
            .collect();
        let window_peaks = self
            .windows
            .iter()
            .zip(per_window)
            .map(|(&[lo, hi], (top, maxima))| {
                refined
                    .iter()
                    .filter(|(i, f, _)| maxima.contains(i) && *f >= lo && *f <= hi)
                    .map(|&(_, _, v)| v)
                    .fold(top, f64::max)
            })
            .collect();
        ScenarioValues { window_peaks, max_stroke, rms }
    }

    /// [`Evaluator::values`] for every scenario, in scenario order (parallel over scenarios; the
    /// order of the result does not depend on the threads).
    pub fn all(&self, links: &[AbsorberLink], accurate: bool) -> Vec<ScenarioValues> {
        self.scenarios.par_iter().map(|&sc| self.values(sc, links, accurate)).collect()
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn grid_of_scenarios() {
        let u = UncertaintySpec { frequency_scatter: 0.05, stiffness_scatter: 0.1, levels: 3 };
        let s = scenarios(&u);
        assert_eq!(s.len(), 9);
        assert_eq!(s[0], Scenario { frequency_scale: 0.95, stiffness_scale: 0.9 });
        assert_eq!(s[4], Scenario::NOMINAL);
        assert!((s[8].frequency_scale - 1.05).abs() < 1e-15 && (s[8].stiffness_scale - 1.1).abs() < 1e-15);
        let only_f = UncertaintySpec { stiffness_scatter: 0.0, ..u };
        assert_eq!(scenarios(&only_f).len(), 3);
        assert_eq!(scenarios(&UncertaintySpec::NONE), vec![Scenario::NOMINAL]);
    }

    #[test]
    fn scenario_links_follow_the_scaling() {
        // k/s² and c/s keep the absorber's frequency ratio to the scaled structure and its damping
        // ratio c/(2 m ω_a): ω_a' = √(t) ω_a / s, ζ' = ζ / √t.
        let l = AbsorberLink { coord: 0, mass: 2.0, stiffness: 800.0, damping: AbsorberDamping::Viscous(4.0) };
        let sc = Scenario { frequency_scale: 1.1, stiffness_scale: 0.9 };
        let out = scenario_links(sc, 0, &[l]);
        assert!((out[0].stiffness - 800.0 * 0.9 / 1.21).abs() < 1e-9);
        assert_eq!(out[0].damping, AbsorberDamping::Viscous(4.0 / 1.1));
        let fixed = scenario_links(sc, 1, &[l]);
        assert!((fixed[0].stiffness - 800.0 / 1.21).abs() < 1e-9);
    }
}
