//! A study on the reduced (modal) model: excitation, response points, absorbers already in the
//! model and candidate places, all as coordinates of one [`ModalModel`]; response curves and
//! peaks with any set of absorbers coupled.

use antinode_mesh::{
    AbsorberDamping, AbsorberKind, AbsorberSpec, BaseSpec, DirectionSpec, ElastomerSpec, OrderSpec, RandomSpec,
    Structure, StudySpec,
};
use antinode_solver::{
    AbsorberLink, BaseMotion, Complex64, Coordinate, CoupledResponse, DirectSolver, Load, ModalDampingLaw, ModalModel,
    ModalSolution, StructureDamping, System, absorber_forces, frequency_grid, golden_max, relative_difference,
    resonance_peak,
};
use rayon::prelude::*;
use serde::Serialize;

use crate::error::PlacementError;

/// A candidate attachment: node and direction, with its coordinate in the modal model.
#[derive(Debug, Clone, PartialEq)]
pub struct Candidate {
    /// Node index.
    pub node: usize,
    /// Direction of action.
    pub direction: DirectionSpec,
    /// Coordinate index in the modal model.
    pub coord: usize,
    /// Lateral absorbers: the second direction and its coordinate (same node, same body).
    pub second: Option<(DirectionSpec, usize)>,
}

impl Candidate {
    /// Mass ratio per kilogram on mode `r`, in 1/kg: φ² along the direction, plus φ² along the
    /// second direction of a lateral absorber (the two decouple for an isotropic spring).
    pub fn mass_ratio_per_kg(&self, model: &ModalModel, r: usize) -> f64 {
        let second = self.second.as_ref().map_or(0.0, |(_, c)| model.coupling(*c, r).powi(2));
        model.coupling(self.coord, r).powi(2) + second
    }
}

/// The study's excitation, responses and candidates on the modal model.
#[derive(Debug, Clone)]
pub struct StudyModel {
    /// Modal data at all coordinates below.
    pub model: ModalModel,
    /// Every coordinate of the modal model (loads, responses, existing absorbers, candidates).
    pub coords: Vec<Coordinate>,
    /// Damping of the structure used by the modal model.
    pub damping: StructureDamping,
    /// Forces.
    pub loads: Vec<Load>,
    /// Response coordinates, one per response point.
    pub responses: Vec<usize>,
    /// Response point names.
    pub response_names: Vec<String>,
    /// The model's own absorbers.
    pub existing: Vec<AbsorberLink>,
    /// Candidate attachments (empty unless asked for).
    pub candidates: Vec<Candidate>,
    /// Band, in Hz.
    pub band_hz: [f64; 2],
    /// Evaluation frequencies over the band, in Hz.
    pub grid_hz: Vec<f64>,
    /// Largest force amplitude, in N: responses are reported per newton of it.
    pub reference_force: f64,
    /// Natural frequencies of the kept modes, in Hz.
    pub natural_hz: Vec<f64>,
    /// Number of zero-energy modes among the kept ones.
    pub n_zero_energy: usize,
    /// Smallest equivalent damping ratio of the kept elastic modes (sets the grid spacing).
    pub damping_ratio: f64,
    /// Elastomer of each of the model's absorbers (same order as `existing`), if it uses one.
    pub elastomers: Vec<Option<ElastomerSpec>>,
    /// Temperature at which elastomers are evaluated, in °C (one of the study's temperatures).
    pub temperature_c: Option<f64>,
    /// Random forces: coordinate index and PSD.
    pub random: Vec<(usize, RandomSpec)>,
    /// Operating speed range, in rev/min (with `orders`).
    pub rpm_range: Option<[f64; 2]>,
    /// Running-speed orders and the coordinate of each one's force.
    pub orders: Vec<(usize, OrderSpec)>,
    /// Base excitation, if the study is driven by the base: its inertia load is the modal model's
    /// coordinate `base_coord` (after `coords`), and responses are per m/s² of base acceleration.
    pub base: Option<BaseSpec>,
    /// Coordinate of the base's inertia load vector (meaningful with `base`).
    pub base_coord: usize,
    /// Modal factors at each grid frequency (shared by every evaluation).
    grid_factors: Vec<Vec<Complex64>>,
}

/// Response curves over frequency.
#[derive(Debug, Clone, Serialize)]
pub struct Curves {
    /// Frequencies, in Hz.
    pub frequency_hz: Vec<f64>,
    /// Per response point, complex displacement per newton of the reference force, in m/N.
    #[serde(skip)]
    pub response: Vec<Vec<Complex64>>,
    /// Per absorber, complex stroke per newton, in m/N.
    #[serde(skip)]
    pub stroke: Vec<Vec<Complex64>>,
    /// Per absorber, complex spring force per newton of the reference force (N/N).
    #[serde(skip)]
    pub spring_force: Vec<Vec<Complex64>>,
}

/// Receptances among a fixed set of attachment coordinates at every grid frequency. Evaluating a
/// tuning (the absorbers' masses, stiffnesses and dampings at those coordinates) then costs only
/// the small coupled solve per frequency: the inner loop of the optimiser.
pub struct GridTable {
    na: usize,
    nr: usize,
    /// Attachment motion under the loads alone, nf × na.
    fa: Vec<Complex64>,
    /// Response-point motion under the loads alone, nf × nr.
    fr: Vec<Complex64>,
    /// Receptances among attachments, nf × na × na.
    haa: Vec<Complex64>,
    /// Receptances from attachments to response points, nf × nr × na.
    hra: Vec<Complex64>,
}

impl GridTable {
    /// Rows of single frequencies, in order, as one table.
    pub(crate) fn concat(na: usize, nr: usize, rows: Vec<GridTable>) -> GridTable {
        let mut t = GridTable { na, nr, fa: Vec::new(), fr: Vec::new(), haa: Vec::new(), hra: Vec::new() };
        for row in rows {
            t.fa.extend(row.fa);
            t.fr.extend(row.fr);
            t.haa.extend(row.haa);
            t.hra.extend(row.hra);
        }
        t
    }

    /// Absorber forces `g` and strokes `s` at grid point `i` with `links` at ω (rad/s).
    pub(crate) fn forces(
        &self,
        i: usize,
        omega: f64,
        links: &[AbsorberLink],
        g: &mut [Complex64],
        s: &mut [Complex64],
    ) {
        let na = self.na;
        if na > 0 {
            absorber_forces(
                omega,
                &self.haa[i * na * na..(i + 1) * na * na],
                &self.fa[i * na..(i + 1) * na],
                links,
                g,
                s,
            );
        }
    }

    /// Largest response over the points at grid point `i` under absorber forces `g`, in m.
    pub(crate) fn largest_response(&self, i: usize, g: &[Complex64]) -> f64 {
        let (na, nr) = (self.na, self.nr);
        let mut best: f64 = 0.0;
        for r in 0..nr {
            let mut x = self.fr[i * nr + r];
            for a in 0..na {
                x += self.hra[(i * nr + r) * na + a] * g[a];
            }
            best = best.max(x.norm());
        }
        best
    }
}

/// The modal result against the direct sparse solve at one frequency.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct VerifyPoint {
    /// Frequency, in Hz.
    pub frequency_hz: f64,
    /// ‖x_modal − x_direct‖ / ‖x_direct‖ over the response points.
    pub relative_difference: f64,
    /// Largest |x_modal − x_direct| over the response points divided by the largest response
    /// over all checked frequencies (meaningful also at anti-resonances).
    pub difference_to_peak: f64,
    /// Largest absorber stroke difference over the largest stroke over all checked frequencies
    /// (0 without absorbers).
    pub stroke_difference: f64,
    /// Relative residual ‖A x − b‖/‖b‖ of the direct solve.
    pub direct_residual: f64,
}

/// A response peak.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Peak {
    /// Frequency, in Hz.
    pub frequency_hz: f64,
    /// Largest displacement over the response points per newton of the reference force, in m/N.
    pub receptance: f64,
    /// Index of the response point where it occurs.
    pub point: usize,
}

fn coordinate(node: usize, d: &DirectionSpec) -> Coordinate {
    Coordinate { node, direction: d.unit, rotational: false }
}

/// The solver's damping of a checked study.
pub fn structure_damping(study: &StudySpec) -> StructureDamping {
    let d = &study.damping;
    let modal = match (&d.per_mode, &d.table) {
        (Some(list), _) => ModalDampingLaw::PerMode(list.clone()),
        (None, Some(t)) => ModalDampingLaw::Table(t.clone()),
        (None, None) => ModalDampingLaw::Uniform(d.modal_ratio),
    };
    StructureDamping { modal, rayleigh: d.rayleigh, loss_factor: d.loss_factor }
}

/// The link of an absorber of the model at coordinate `coord`.
pub fn link_of(a: &AbsorberSpec, coord: usize) -> AbsorberLink {
    AbsorberLink { coord, mass: a.mass, stiffness: a.stiffness, damping: a.damping }
}

impl StudyModel {
    /// Builds the study model from computed modes (the kept ones) of the structure without
    /// absorbers. With `with_candidates`, every candidate node × allowed direction of the design
    /// request becomes a coordinate too.
    ///
    /// # Errors
    /// [`PlacementError::Study`] if the study lacks an excitation or response points;
    /// solver errors from the residual flexibility.
    pub fn build(
        structure: &Structure,
        system: &System,
        modes: &ModalSolution,
        study: &StudySpec,
        with_candidates: bool,
    ) -> Result<Self, PlacementError> {
        if study.excitation.is_empty() && study.random.is_empty() && study.base.is_none() {
            return Err(PlacementError::Study(
                "the study has no excitation: add study.excitation (harmonic forces), study.random or \
                 study.base_excitation"
                    .into(),
            ));
        }
        if study.response_points.is_empty() {
            return Err(PlacementError::Study("the study has no response point: add study.response_points".into()));
        }
        let mut coords = Vec::new();
        let mut loads = Vec::new();
        for f in &study.excitation {
            loads.push(Load { coord: coords.len(), amplitude: Complex64::from_polar(f.amplitude, f.phase_rad) });
            coords.push(Coordinate { node: f.node, direction: f.direction.unit, rotational: f.moment });
        }
        let mut random = Vec::new();
        for r in &study.random {
            random.push((coords.len(), r.clone()));
            coords.push(coordinate(r.node, &r.direction));
        }
        let mut orders = Vec::new();
        for o in &study.orders {
            orders.push((coords.len(), o.clone()));
            coords.push(Coordinate { node: o.node, direction: o.direction.unit, rotational: o.moment });
        }
        let mut responses = Vec::new();
        for r in &study.response_points {
            responses.push(coords.len());
            coords.push(coordinate(r.node, &r.direction));
        }
        let mut existing = Vec::new();
        for a in &structure.absorbers {
            existing.push(link_of(a, coords.len()));
            coords.push(coordinate(a.node, &a.direction));
        }
        let mut candidates = Vec::new();
        if with_candidates {
            if let Some(d) = &study.design {
                for &node in &d.candidates {
                    if d.kind == AbsorberKind::Lateral {
                        // One body on an isotropic spring: both (perpendicular) directions at once.
                        let (a, b) = (&d.directions[0], &d.directions[1]);
                        let coord = coords.len();
                        coords.push(coordinate(node, a));
                        coords.push(coordinate(node, b));
                        candidates.push(Candidate {
                            node,
                            direction: a.clone(),
                            coord,
                            second: Some((b.clone(), coord + 1)),
                        });
                        continue;
                    }
                    for dir in &d.directions {
                        candidates.push(Candidate { node, direction: dir.clone(), coord: coords.len(), second: None });
                        coords.push(coordinate(node, dir));
                    }
                }
            }
        }
        let damping = structure_damping(study);
        // A base excitation's inertia load −b ü_g (b = M r, see `BaseMotion`) is one more coordinate.
        let base_coord = coords.len();
        let load_vectors: Vec<Vec<f64>> = study.base.iter().map(|b| system.base_load(b.direction.unit)).collect();
        if let Some(b) = &study.base {
            if load_vectors[0].iter().all(|&v| v == 0.0) {
                return Err(PlacementError::Study(
                    "study.base_excitation: the base's motion puts no inertia load on the free DOFs (no mass moves \
                     along its direction)"
                        .into(),
                ));
            }
            loads.push(Load { coord: base_coord, amplitude: -Complex64::from_polar(b.acceleration, b.phase_rad) });
        }
        let model = ModalModel::build_with_loads(system, modes, &coords, &load_vectors, &damping, true)?;
        let natural_hz: Vec<f64> = (0..modes.n_modes()).map(|i| modes.frequency_hz(i)).collect();
        // Grid spacing from the lightest equivalent damping of the kept elastic modes.
        let lightest = (modes.n_zero_energy..modes.n_modes())
            .map(|r| damping.equivalent_ratio(r, modes.eigenvalues[r], false))
            .fold(f64::INFINITY, f64::min);
        let grid_ratio = if lightest.is_finite() && lightest > 0.0 { lightest } else { study.modal_damping_ratio };
        let grid_hz = frequency_grid(study.band_hz, &natural_hz, grid_ratio);
        let reference_force = study.reference_force;
        let grid_factors = grid_hz.iter().map(|&f| model.modal_factors(2.0 * std::f64::consts::PI * f)).collect();
        Ok(Self {
            model,
            coords,
            damping,
            loads,
            responses,
            response_names: study.response_points.iter().map(|r| r.name.clone()).collect(),
            existing,
            candidates,
            band_hz: study.band_hz,
            grid_hz,
            reference_force,
            natural_hz,
            n_zero_energy: modes.n_zero_energy,
            damping_ratio: grid_ratio,
            elastomers: study.absorber_elastomers.clone(),
            random,
            rpm_range: study.rpm_range,
            orders,
            temperature_c: study.temperatures_c.first().copied(),
            base: study.base.clone(),
            base_coord,
            grid_factors,
        })
    }

    /// The base motion at ω (rad/s) for a base acceleration of complex amplitude `acceleration`
    /// (m/s²): u_g = −ü_g/ω². `None` without a base excitation.
    fn base_motion_for(&self, omega: f64, acceleration: Complex64) -> Option<BaseMotion> {
        self.base.as_ref().map(|b| BaseMotion {
            displacement: -acceleration / (omega * omega),
            direction: b.direction.unit,
            absolute: b.absolute,
        })
    }

    /// The base motion at ω (rad/s) of the study's harmonic base excitation.
    pub fn base_motion(&self, omega: f64) -> Option<BaseMotion> {
        let a =
            self.base.as_ref().map_or(Complex64::new(0.0, 0.0), |b| Complex64::from_polar(b.acceleration, b.phase_rad));
        self.base_motion_for(omega, a)
    }

    /// The study's harmonic response at ω (rad/s) with `links` coupled (forces or base motion),
    /// not divided by the reference amplitude.
    pub fn coupled(&self, omega: f64, links: &[AbsorberLink]) -> CoupledResponse {
        let factors = self.model.modal_factors(omega);
        self.model.coupled_response_base(
            &factors,
            omega,
            &self.loads,
            &self.responses,
            links,
            self.base_motion(omega).as_ref(),
        )
    }

    /// Largest response over the response points at `f_hz` with `absorbers`, per newton, and the
    /// index of that point.
    pub fn response_at(&self, f_hz: f64, absorbers: &[AbsorberLink]) -> (f64, usize) {
        let omega = 2.0 * std::f64::consts::PI * f_hz;
        let factors = self.model.modal_factors(omega);
        self.response_with(&factors, omega, absorbers)
    }

    fn response_on_grid(&self, i: usize, absorbers: &[AbsorberLink]) -> (f64, usize) {
        let omega = 2.0 * std::f64::consts::PI * self.grid_hz[i];
        self.response_with(&self.grid_factors[i], omega, absorbers)
    }

    /// `links` with the model's elastomer absorbers (the first `existing.len()` entries) evaluated at
    /// `f_hz` and [`StudyModel::temperature_c`]: k = k_ref · factor(f, T), k* = k(1 + iη(f, T)).
    pub fn links_at(&self, f_hz: f64, links: &[AbsorberLink]) -> Vec<AbsorberLink> {
        let mut out = links.to_vec();
        let t = self.temperature_c.unwrap_or(0.0);
        for (link, e) in out.iter_mut().zip(&self.elastomers) {
            if let Some(e) = e {
                let (factor, eta) = e.at(f_hz, t);
                link.stiffness *= factor;
                link.damping = AbsorberDamping::LossFactor(eta);
            }
        }
        out
    }

    /// Whether any of the model's absorbers uses an elastomer.
    pub fn has_elastomers(&self) -> bool {
        self.elastomers.iter().any(Option::is_some)
    }

    fn response_with(&self, factors: &[Complex64], omega: f64, absorbers: &[AbsorberLink]) -> (f64, usize) {
        let evaluated;
        let absorbers = if self.has_elastomers() {
            evaluated = self.links_at(omega / (2.0 * std::f64::consts::PI), absorbers);
            &evaluated[..]
        } else {
            absorbers
        };
        let base = self.base_motion(omega);
        let r =
            self.model.coupled_response_base(factors, omega, &self.loads, &self.responses, absorbers, base.as_ref());
        let mut best = (0.0, 0);
        for (i, x) in r.displacement.iter().enumerate() {
            let v = x.norm() / self.reference_force;
            if v > best.0 {
                best = (v, i);
            }
        }
        best
    }

    /// The modal response with `absorbers` against the direct sparse complex solve of the whole
    /// structure with the same absorbers and damping ([`DirectSolver`]) at each of `freq_hz`.
    ///
    /// # Errors
    /// Solver errors of the direct solve.
    pub fn verify(
        &self,
        system: &System,
        modes: &ModalSolution,
        freq_hz: &[f64],
        absorbers: &[AbsorberLink],
    ) -> Result<Vec<VerifyPoint>, PlacementError> {
        // Elastomer springs change with frequency: then one solver per frequency.
        let shared = if self.has_elastomers() {
            None
        } else {
            Some(DirectSolver::new(system, modes, &self.damping, &self.coords, absorbers)?)
        };
        let rows: Vec<(f64, CoupledResponse, CoupledResponse, f64)> = freq_hz
            .par_iter()
            .map(|&f| {
                let omega = 2.0 * std::f64::consts::PI * f;
                let links = self.links_at(f, absorbers);
                let m = self.coupled(omega, &links);
                let own;
                let direct = match &shared {
                    Some(direct) => direct,
                    None => {
                        own = DirectSolver::new(system, modes, &self.damping, &self.coords, &links)?;
                        &own
                    }
                };
                let d = match &self.base {
                    None => direct.solve(omega, &self.loads, &self.responses)?,
                    Some(b) => {
                        // Relative-motion form: −ü_g b on the structure and −ü_g m (t·d) on each
                        // absorber's mass; absolute responses add the base's own motion.
                        let acc = Complex64::from_polar(b.acceleration, b.phase_rad);
                        let load: Vec<Complex64> =
                            system.base_load(b.direction.unit).iter().map(|&v| -acc * v).collect();
                        let on_absorbers: Vec<Complex64> = links
                            .iter()
                            .map(|l| -acc * l.mass * self.model.base_offset(l.coord, b.direction.unit))
                            .collect();
                        let mut d = direct.solve_with_absorber_loads(omega, &load, &on_absorbers, &self.responses)?;
                        if b.absolute {
                            let ug = -acc / (omega * omega);
                            for (x, &c) in d.response.displacement.iter_mut().zip(&self.responses) {
                                *x += ug * self.model.base_offset(c, b.direction.unit);
                            }
                        }
                        d
                    }
                };
                Ok((f, m, d.response, d.residual))
            })
            .collect::<Result<_, antinode_solver::SolverError>>()?;
        let largest = |pick: &dyn Fn(&CoupledResponse) -> &Vec<Complex64>| -> f64 {
            rows.iter().flat_map(|r| pick(&r.2).iter().map(|z| z.norm())).fold(0.0, f64::max)
        };
        let peak = largest(&|r| &r.displacement);
        let stroke_peak = largest(&|r| &r.stroke);
        let worst = |a: &[Complex64], b: &[Complex64]| -> f64 {
            a.iter().zip(b).map(|(x, y)| (x - y).norm()).fold(0.0, f64::max)
        };
        Ok(rows
            .iter()
            .map(|(f, m, d, res)| VerifyPoint {
                frequency_hz: *f,
                relative_difference: relative_difference(&m.displacement, &d.displacement),
                difference_to_peak: if peak > 0.0 { worst(&m.displacement, &d.displacement) / peak } else { 0.0 },
                stroke_difference: if stroke_peak > 0.0 { worst(&m.stroke, &d.stroke) / stroke_peak } else { 0.0 },
                direct_residual: *res,
            })
            .collect())
    }

    /// RMS displacement at each response point under the study's random forces (uncorrelated),
    /// with `absorbers`, in m:
    ///
    /// ```text
    /// σ_p² = Σ_l ∫_band |H_pl(f)|² G_l(f) df
    /// ```
    ///
    /// with G_l the one-sided force PSD (N²/Hz) and H_pl the coupled receptance. The integral runs
    /// over the band on the study grid (spacing ζf/2 around every mode, plus the band's lower
    /// edge) with Simpson's rule on each grid interval, which resolves the lightly damped peaks.
    pub fn random_rms(&self, absorbers: &[AbsorberLink]) -> Vec<f64> {
        let [lo, hi] = self.band_hz;
        let mut grid: Vec<f64> = self.grid_hz.iter().copied().filter(|&f| f >= lo && f <= hi).collect();
        // The grid starts above 0 (10⁻³ of the top at the lowest): the quasi-static stretch below
        // is smooth, one Simpson interval covers it.
        if grid.first().is_some_and(|&g| g > lo) {
            grid.insert(0, lo);
        }
        let density = |f: f64| -> Vec<f64> {
            let omega = 2.0 * std::f64::consts::PI * f;
            let links = self.links_at(f, absorbers);
            let mut s = vec![0.0; self.responses.len()];
            if let Some(b) = &self.base {
                let g = b.psd_at(f);
                if g > 0.0 {
                    // Unit base acceleration: load −b, base displacement −1/ω². At 0 Hz the base
                    // displacement is unbounded while the relative response tends to its static
                    // value: evaluate just above (10⁻⁶ of the band's top).
                    let omega = omega.max(2.0 * std::f64::consts::PI * 1e-6 * hi);
                    let unit = Complex64::new(1.0, 0.0);
                    let load = [Load { coord: self.base_coord, amplitude: -unit }];
                    let factors = self.model.modal_factors(omega);
                    let base = self.base_motion_for(omega, unit);
                    let r = self.model.coupled_response_base(
                        &factors,
                        omega,
                        &load,
                        &self.responses,
                        &links,
                        base.as_ref(),
                    );
                    for (sp, x) in s.iter_mut().zip(&r.displacement) {
                        *sp += x.norm_sqr() * g;
                    }
                }
            }
            for (coord, spec) in &self.random {
                let g = spec.psd_at(f);
                if g == 0.0 {
                    continue;
                }
                let unit = [Load { coord: *coord, amplitude: Complex64::new(1.0, 0.0) }];
                let r = self.model.coupled_response(omega, &unit, &self.responses, &links);
                for (sp, x) in s.iter_mut().zip(&r.displacement) {
                    *sp += x.norm_sqr() * g;
                }
            }
            s
        };
        let intervals: Vec<Vec<f64>> = grid
            .par_windows(2)
            .map(|w| {
                let (a, b) = (w[0], w[1]);
                let (fa, fm, fb) = (density(a), density(0.5 * (a + b)), density(b));
                (0..fa.len()).map(|p| (b - a) / 6.0 * (fa[p] + 4.0 * fm[p] + fb[p])).collect()
            })
            .collect();
        let mut total = vec![0.0; self.responses.len()];
        for v in intervals {
            for (t, x) in total.iter_mut().zip(v) {
                *t += x;
            }
        }
        total.into_iter().map(f64::sqrt).collect()
    }

    /// Curves over `freq_hz` with `absorbers` coupled.
    pub fn curves(&self, freq_hz: &[f64], absorbers: &[AbsorberLink]) -> Curves {
        let f0 = self.reference_force;
        let mut response = vec![Vec::with_capacity(freq_hz.len()); self.responses.len()];
        let mut stroke = vec![Vec::with_capacity(freq_hz.len()); absorbers.len()];
        let mut spring_force = vec![Vec::with_capacity(freq_hz.len()); absorbers.len()];
        for &f in freq_hz {
            let omega = 2.0 * std::f64::consts::PI * f;
            let at_f = self.links_at(f, absorbers);
            let r = self.coupled(omega, &at_f);
            for (i, x) in r.displacement.iter().enumerate() {
                response[i].push(x / f0);
            }
            for (i, s) in r.stroke.iter().enumerate() {
                stroke[i].push(s / f0);
                spring_force[i].push(r.spring_force[i] / f0);
            }
        }
        Curves { frequency_hz: freq_hz.to_vec(), response, stroke, spring_force }
    }

    /// The highest peak in [lo, hi] Hz with `absorbers`: grid maximum, refined by golden-section
    /// search around the three highest local maxima.
    pub fn peak(&self, lo: f64, hi: f64, absorbers: &[AbsorberLink]) -> Peak {
        let idx: Vec<usize> =
            (0..self.grid_hz.len()).filter(|&i| self.grid_hz[i] >= lo && self.grid_hz[i] <= hi).collect();
        let (grid, vals): (Vec<f64>, Vec<(f64, usize)>) = if idx.len() < 3 {
            let g = vec![lo, 0.5 * (lo + hi), hi];
            let v = g.iter().map(|&f| self.response_at(f, absorbers)).collect();
            (g, v)
        } else {
            (
                idx.iter().map(|&i| self.grid_hz[i]).collect(),
                idx.iter().map(|&i| self.response_on_grid(i, absorbers)).collect(),
            )
        };
        let mut maxima: Vec<usize> = (0..vals.len())
            .filter(|&i| {
                let l = if i > 0 { vals[i - 1].0 } else { f64::NEG_INFINITY };
                let r = if i + 1 < vals.len() { vals[i + 1].0 } else { f64::NEG_INFINITY };
                vals[i].0 >= l && vals[i].0 >= r
            })
            .collect();
        maxima.sort_by(|&a, &b| vals[b].0.total_cmp(&vals[a].0));
        maxima.truncate(3);
        let mut best = Peak { frequency_hz: grid[0], receptance: vals[0].0, point: vals[0].1 };
        for &i in &maxima {
            let (a, b) = (grid[i.saturating_sub(1)], grid[(i + 1).min(grid.len() - 1)]);
            let (f, v) =
                if b > a { golden_max(a, b, 1e-9, |f| self.response_at(f, absorbers).0) } else { (grid[i], vals[i].0) };
            let (f, v) = if v >= vals[i].0 { (f, v) } else { (grid[i], vals[i].0) };
            if v > best.receptance {
                best = Peak { frequency_hz: f, receptance: v, point: self.response_at(f, absorbers).1 };
            }
        }
        best
    }

    /// The receptance table of the attachment coordinates `coords` on the grid.
    pub fn table(&self, coords: &[usize]) -> GridTable {
        // One row per grid frequency, concatenated in grid order.
        let rows: Vec<GridTable> = (0..self.grid_hz.len())
            .into_par_iter()
            .map(|i| self.table_row(2.0 * std::f64::consts::PI * self.grid_hz[i], &self.grid_factors[i], coords))
            .collect();
        GridTable::concat(coords.len(), self.responses.len(), rows)
    }

    /// The receptance table of `coords` at ω (rad/s), given its modal factors
    /// ([`ModalModel::modal_factors`]). Under a base excitation the attachments' motion is the
    /// absolute one (the absorbers' springs see it), the response points' as the study asks.
    pub(crate) fn table_row(&self, omega: f64, f: &[Complex64], coords: &[usize]) -> GridTable {
        let (na, nr) = (coords.len(), self.responses.len());
        let base = self.base_motion(omega);
        let offset = |c: usize| self.model.base_displacement(c, base.as_ref());
        let forced = |c: usize| -> Complex64 {
            self.loads.iter().map(|l| self.model.receptance_with(f, c, l.coord) * l.amplitude).sum()
        };
        let fa = coords.iter().map(|&c| forced(c) + offset(c)).collect();
        let absolute = base.is_some_and(|b| b.absolute);
        let fr = self
            .responses
            .iter()
            .map(|&r| forced(r) + if absolute { offset(r) } else { Complex64::new(0.0, 0.0) })
            .collect();
        let haa = coords
            .iter()
            .flat_map(|&a| coords.iter().map(move |&b| (a, b)))
            .map(|(a, b)| self.model.receptance_with(f, a, b))
            .collect();
        let hra = self
            .responses
            .iter()
            .flat_map(|&r| coords.iter().map(move |&a| (r, a)))
            .map(|(r, a)| self.model.receptance_with(f, r, a))
            .collect();
        GridTable { na, nr, fa, fr, haa, hra }
    }

    /// Largest response over the points at grid frequency `i`, per newton, with `links` at the
    /// table's coordinates (in the same order).
    pub fn table_response(&self, t: &GridTable, i: usize, links: &[AbsorberLink]) -> f64 {
        let na = t.na;
        let omega = 2.0 * std::f64::consts::PI * self.grid_hz[i];
        let zero = Complex64::new(0.0, 0.0);
        let mut g = vec![zero; na];
        let mut s = vec![zero; na];
        t.forces(i, omega, links, &mut g, &mut s);
        t.largest_response(i, &g) / self.reference_force
    }

    /// Fast estimate of the highest peak in [lo, hi] Hz with `absorbers`: grid values, with the two
    /// highest local maxima refined by a resonance fit through their grid neighbours
    /// ([`resonance_peak`]); within a fraction of a percent of [`StudyModel::peak`] on the study's
    /// grid, at a fraction of the cost. Used to rank candidates.
    pub fn peak_estimate(&self, lo: f64, hi: f64, absorbers: &[AbsorberLink]) -> f64 {
        let g = &self.grid_hz;
        let idx: Vec<usize> = (0..g.len()).filter(|&i| g[i] >= lo && g[i] <= hi).collect();
        if idx.len() < 3 {
            return self.peak(lo, hi, absorbers).receptance;
        }
        let (first, last) = (idx[0], idx[idx.len() - 1]);
        let vals: Vec<f64> = (first..=last).map(|i| self.response_on_grid(i, absorbers).0).collect();
        let v = |i: usize| vals[i - first];
        let mut best = vals.iter().copied().fold(0.0, f64::max);
        let mut maxima: Vec<usize> = ((first + 1)..last).filter(|&i| v(i) >= v(i - 1) && v(i) >= v(i + 1)).collect();
        maxima.sort_by(|&a, &b| v(b).total_cmp(&v(a)).then(a.cmp(&b)));
        for &i in maxima.iter().take(2) {
            best = best.max(resonance_peak([g[i - 1], g[i], g[i + 1]], [v(i - 1), v(i), v(i + 1)]).1);
        }
        best
    }

    /// Root-mean-square response over [lo, hi] Hz (trapezoidal rule on the grid, largest response
    /// point at each frequency), per newton, in m/N.
    pub fn rms(&self, lo: f64, hi: f64, absorbers: &[AbsorberLink]) -> f64 {
        let idx: Vec<usize> =
            (0..self.grid_hz.len()).filter(|&i| self.grid_hz[i] >= lo && self.grid_hz[i] <= hi).collect();
        if idx.len() < 2 {
            return self.response_at(0.5 * (lo + hi), absorbers).0;
        }
        let g: Vec<f64> = idx.iter().map(|&i| self.grid_hz[i]).collect();
        let vals: Vec<f64> = idx.iter().map(|&i| self.response_on_grid(i, absorbers).0.powi(2)).collect();
        let mut s = 0.0;
        for i in 1..g.len() {
            s += 0.5 * (vals[i] + vals[i - 1]) * (g[i] - g[i - 1]);
        }
        (s / (g[g.len() - 1] - g[0])).sqrt()
    }

    /// Modal peak of mode r at the response points: max_p |Σ_l φ_pr φ_lr F_l| / (2ζ λ_r F_ref), the
    /// height its resonance alone would reach, in m/N.
    pub fn modal_peak(&self, r: usize) -> f64 {
        let m = &self.model;
        let lambda = m.eigenvalues()[r];
        if r < self.n_zero_energy || lambda <= 0.0 {
            return 0.0;
        }
        let force: Complex64 = self.loads.iter().map(|l| l.amplitude * m.coupling(l.coord, r)).sum();
        let at = self.responses.iter().map(|&p| (force * m.coupling(p, r)).norm()).fold(0.0, f64::max);
        at / (2.0 * self.damping_ratio * lambda * self.reference_force)
    }
}
