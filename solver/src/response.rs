//! Harmonic response by modal superposition with static residual flexibility, and absorbers coupled
//! exactly by receptance coupling.
//!
//! A *coordinate* is the displacement of a node along a unit direction, u_c = eᵀ u(node). For kept
//! modes r (mass-normalised, λ_r = ω_r², viscous modal damping ratio ζ_r) the receptance between
//! coordinates a and b is
//!
//! ```text
//! H_ab(ω) = Σ_r φ_ar φ_br / (λ_r − ω² + 2iζ_r ω_r ω) + R_ab,
//! R_ab    = e_aᵀ [(K − σM)⁻¹ − Σ_r φ_r φ_rᵀ/(λ_r − σ)] e_b      (residual flexibility)
//! ```
//!
//! R carries the static contribution of the truncated modes (they respond quasi-statically below
//! their frequencies; Craig & Kurdila, Fundamentals of Structural Dynamics, 2006, mode-acceleration
//! and residual flexibility). It is computed without cancellation: the load is first made
//! M-orthogonal to the kept modes, so the solve returns only truncated-mode content. σ is the
//! shift of the eigen solution (0, or slightly negative for a free body, where the static
//! flexibility does not exist).
//!
//! The truncated modes' first dynamic term is kept too: expanding 1/(λ − ω²) about σ,
//!
//! ```text
//! Σ_trunc φφᵀ/(λ − ω²) ≈ R + (ω² − σ) S,   S_ab = Σ_trunc φ_a φ_b/(λ − σ)² = X_aᵀ M X_b
//! ```
//!
//! where X = [(K − σM)⁻¹ − Σ_r φ_r φ_rᵀ/(λ_r − σ)] E are the residual solutions already computed,
//! so S costs one product with M and no solve (a residual-mass correction; derived here from the
//! series, in the spirit of the higher-order mode-acceleration methods — common practice). The
//! truncation error then falls as (ω²/λ_cut)² instead of ω²/λ_cut. With a structural loss factor
//! the truncated terms are R/(1 + iη) + (ω² − σ) S/(1 + iη)².
//!
//! Absorbers: mass m on a spring of complex stiffness k* (k + iωc viscous, or k(1 + iη) hysteretic)
//! attached at coordinate a along its direction. With y_i = x_ai/(k*_i − ω²m_i) the coupled
//! equations are
//!
//! ```text
//! (k*_j − ω²m_j) y_j − ω² Σ_i H_{a_j a_i} m_i k*_i y_i = Σ_l H_{a_j f_l} F_l,
//! ```
//!
//! which stay finite at an undamped absorber's own frequency (where the attachment motion
//! x_a = (k* − ω²m) y is exactly zero). The absorber's force on the structure is
//! g_i = k*_i(z_i − x_ai) = ω² m_i k*_i y_i, its stroke (relative displacement) s_i = ω² m_i y_i, and
//! any response x_r = Σ_l H_{r f_l} F_l + Σ_i H_{r a_i} g_i. This is the receptance-coupling
//! (structural modification) identity, exact for point attachments.

use antinode_mesh::AbsorberDamping;
use faer::Mat;
use num_complex::Complex64;

use crate::assembly::System;
use crate::eigen::ModalSolution;
use crate::error::SolverError;

/// Displacement of a node along a unit direction, or its rotation about one.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Coordinate {
    /// Node index.
    pub node: usize,
    /// Unit direction.
    pub direction: [f64; 3],
    /// A rotation about `direction` (rad) instead of a translation along it; its load is a moment.
    pub rotational: bool,
}
/// Viscous modal damping ratio as a function of the mode.
#[derive(Debug, Clone, PartialEq)]
pub enum ModalDampingLaw {
    /// One ratio ζ for every elastic mode, dimensionless.
    Uniform(f64),
    /// ζ of each mode by number from 0 (zero-energy modes included in the count); modes past the
    /// end of the list take its last value.
    PerMode(Vec<f64>),
    /// (frequency in Hz, ζ) pairs with ascending frequencies: ζ of a mode is interpolated linearly
    /// at its natural frequency and held at the end values outside the table.
    Table(Vec<(f64, f64)>),
}

impl ModalDampingLaw {
    /// ζ of mode `r` (from 0) with natural frequency `f_hz`.
    pub fn ratio(&self, r: usize, f_hz: f64) -> f64 {
        match self {
            Self::Uniform(z) => *z,
            Self::PerMode(list) => list.get(r).or(list.last()).copied().unwrap_or(0.0),
            Self::Table(t) => interpolate(t, f_hz),
        }
    }
}

/// Linear interpolation in a table of (x, y) pairs with ascending x, held constant outside it.
pub fn interpolate(t: &[(f64, f64)], x: f64) -> f64 {
    match t {
        [] => 0.0,
        [only] => only.1,
        _ => {
            if x <= t[0].0 {
                return t[0].1;
            }
            let last = t[t.len() - 1];
            if x >= last.0 {
                return last.1;
            }
            let i = t.partition_point(|p| p.0 <= x).clamp(1, t.len() - 1);
            let ((x0, y0), (x1, y1)) = (t[i - 1], t[i]);
            y0 + (y1 - y0) * (x - x0) / (x1 - x0)
        }
    }
}

/// Damping of the structure (absorbers carry their own). The three parts add:
///
/// ```text
/// K* = K (1 + iη)            structural loss factor η (hysteretic, frequency independent)
/// C  = αM + βK               Rayleigh damping, α in 1/s, β in s
///    + M Φ diag(2ζ_r ω_r) Φᵀ M   viscous modal damping of the kept modes
/// ```
///
/// In modal coordinates mode r then has the factor 1/(λ_r(1 + iη) − ω² + iω(2ζ_r ω_r + α + βλ_r)),
/// exactly. Zero-energy modes take no modal ratio (Rayleigh α still damps them).
#[derive(Debug, Clone, PartialEq)]
pub struct StructureDamping {
    /// Viscous modal damping ratios.
    pub modal: ModalDampingLaw,
    /// Rayleigh coefficients [α in 1/s, β in s].
    pub rayleigh: [f64; 2],
    /// Structural loss factor η, dimensionless.
    pub loss_factor: f64,
}

impl StructureDamping {
    /// Viscous modal damping ratio ζ on every elastic mode, nothing else.
    pub fn modal(ratio: f64) -> Self {
        Self { modal: ModalDampingLaw::Uniform(ratio), rayleigh: [0.0, 0.0], loss_factor: 0.0 }
    }

    /// The modal-ratio part 2ζ_r ω_r of mode r with eigenvalue λ (rad²/s²), in 1/s;
    /// `zero_energy` modes take none.
    pub fn modal_viscous(&self, r: usize, lambda: f64, zero_energy: bool) -> f64 {
        let w = lambda.max(0.0).sqrt();
        let zeta = if zero_energy { 0.0 } else { self.modal.ratio(r, w / (2.0 * std::f64::consts::PI)) };
        2.0 * zeta * w
    }

    /// Viscous modal coefficient c_r = 2ζ_r ω_r + α + βλ_r of mode r with eigenvalue λ (rad²/s²),
    /// in 1/s; `zero_energy` modes take no modal ratio.
    pub fn modal_coefficient(&self, r: usize, lambda: f64, zero_energy: bool) -> f64 {
        self.modal_viscous(r, lambda, zero_energy) + self.rayleigh[0] + self.rayleigh[1] * lambda.max(0.0)
    }

    /// Equivalent viscous damping ratio of mode r at resonance: c_r/(2ω_r) + η/2.
    pub fn equivalent_ratio(&self, r: usize, lambda: f64, zero_energy: bool) -> f64 {
        let w = lambda.max(0.0).sqrt();
        if w <= 0.0 {
            return 0.0;
        }
        self.modal_coefficient(r, lambda, zero_energy) / (2.0 * w) + 0.5 * self.loss_factor
    }
}

/// A coordinate as weights on the free DOFs: u_c = Σ w q_i (three terms, or a link's), on the
/// node's translations, or on its rotations (DOFs 3–5) for a rotational coordinate.
pub(crate) fn coordinate_taps(system: &System, co: &Coordinate) -> Vec<(usize, f64)> {
    let first = if co.rotational { 3 } else { 0 };
    (0..3)
        .flat_map(|k| system.dofs.terms(co.node, first + k).iter().map(move |&(i, w)| (i, w * co.direction[k])))
        .collect()
}

/// Modal data at a set of coordinates: everything a frequency response needs.
#[derive(Debug, Clone)]
pub struct ModalModel {
    eigenvalues: Vec<f64>,
    /// Viscous modal coefficient c_r of each kept mode, in 1/s.
    viscous: Vec<f64>,
    /// Structural loss factor η.
    loss_factor: f64,
    /// 1/(1 + iη): the residual flexibility's factor.
    residual_factor: Complex64,
    n_coords: usize,
    /// φ[c · n_modes + r] = eᵀ φ_r(node).
    phi: Vec<f64>,
    /// Residual flexibility among the coordinates, row-major n_coords², in m/N.
    residual: Vec<f64>,
    /// Second-order residual S among the coordinates, row-major n_coords², in m·s²/(N·rad²).
    residual_mass: Vec<f64>,
    /// Expansion point σ of the residual terms, in rad²/s².
    sigma: f64,
    /// Unit direction of each translational coordinate (zero for rotations and load vectors): a
    /// rigid base translation d moves coordinate c by (t_c · d) per metre.
    translation: Vec<[f64; 3]>,
}

/// Harmonic rigid translation of the base (every support and spring to ground) at one frequency.
///
/// With the base displacement u_g d (u_g complex, d a unit vector) the free DOFs move by
/// u = r u_g + u_rel, where r is the rigid translation (K r = 0 with the supports moved too), and
///
/// ```text
/// M ü_rel + C u̇_rel + K u_rel = −(M_ff r_f + M_fs r_s) ü_g
/// ```
///
/// (the relative-motion form of base excitation, e.g. Clough & Penzien, Dynamics of Structures,
/// support excitation; damping acts on the relative motion, common practice). The load vector is
/// [`System::base_load`] times −ü_g = ω² u_g; an absorber's spring acts on the absolute motion of
/// its attachment, x_rel + (t·d) u_g.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct BaseMotion {
    /// Complex base displacement amplitude u_g, in m.
    pub displacement: Complex64,
    /// Unit direction d of the base translation.
    pub direction: [f64; 3],
    /// Report absolute (true) or relative (false) displacements at the response coordinates.
    pub absolute: bool,
}

/// Fails on the first non-finite value of a modal model's data, naming the response coordinate
/// (numbered from 1 in the order given) and the mode: mode shape values at the coordinates `phi`
/// (coordinate-major, `nc` × `nm`), modal damping coefficients `viscous`, and the residual
/// matrices `residual` and `residual_mass` (row-major `nc` × `nc`).
fn check_modal_data(
    nm: usize,
    nc: usize,
    phi: &[f64],
    viscous: &[f64],
    residual: &[f64],
    residual_mass: &[f64],
) -> Result<(), SolverError> {
    let fail = |what: String| Err(SolverError::NotFinite { what: format!("the modal model for the response: {what}") });
    if let Some(p) = phi.iter().position(|v| !v.is_finite()) {
        return fail(format!("mode {} at coordinate {}", p % nm.max(1) + 1, p / nm.max(1) + 1));
    }
    if let Some(r) = viscous.iter().position(|v| !v.is_finite()) {
        return fail(format!("the damping coefficient of mode {}", r + 1));
    }
    for (m, name) in [(residual, "residual flexibility"), (residual_mass, "second-order residual")] {
        if let Some(p) = m.iter().position(|v| !v.is_finite()) {
            return fail(format!("the {name} between coordinates {} and {}", p / nc.max(1) + 1, p % nc.max(1) + 1));
        }
    }
    Ok(())
}

/// An absorber attached at a coordinate of a [`ModalModel`].
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct AbsorberLink {
    /// Coordinate index in the modal model.
    pub coord: usize,
    /// Moving mass, in kg.
    pub mass: f64,
    /// Spring stiffness, in N/m.
    pub stiffness: f64,
    /// Damping.
    pub damping: AbsorberDamping,
}

impl AbsorberLink {
    /// Complex stiffness k* at ω (rad/s): k + iωc, or k(1 + iη).
    pub fn complex_stiffness(&self, omega: f64) -> Complex64 {
        match self.damping {
            AbsorberDamping::None => Complex64::new(self.stiffness, 0.0),
            AbsorberDamping::Viscous(c) => Complex64::new(self.stiffness, omega * c),
            AbsorberDamping::LossFactor(eta) => Complex64::new(self.stiffness, self.stiffness * eta),
        }
    }

    /// Undamped natural frequency √(k/m), in rad/s.
    pub fn natural_omega(&self) -> f64 {
        (self.stiffness / self.mass).sqrt()
    }
}

/// A harmonic force at a coordinate: complex amplitude F e^{iφ}, in N.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Load {
    /// Coordinate index in the modal model.
    pub coord: usize,
    /// Complex amplitude, in N.
    pub amplitude: Complex64,
}

/// Response at one frequency with absorbers coupled.
#[derive(Debug, Clone, PartialEq)]
pub struct CoupledResponse {
    /// Displacement at each requested response coordinate, in m.
    pub displacement: Vec<Complex64>,
    /// Stroke of each absorber (its mass relative to its attachment), in m.
    pub stroke: Vec<Complex64>,
    /// Force of each absorber's spring and damper on the structure, in N.
    pub spring_force: Vec<Complex64>,
}

impl ModalModel {
    /// Builds the modal model of `coords` from the modes of `solution`, with modal damping ratio
    /// `damping_ratio` on every elastic mode (zero-energy modes are undamped) and, if
    /// `with_residual`, the residual flexibility of the truncated modes.
    ///
    /// # Errors
    /// [`SolverError::Factorization`] if K − σM cannot be factored for the residual.
    pub fn build(
        system: &System,
        solution: &ModalSolution,
        coords: &[Coordinate],
        damping_ratio: f64,
        with_residual: bool,
    ) -> Result<Self, SolverError> {
        Self::build_damped(system, solution, coords, &StructureDamping::modal(damping_ratio), with_residual)
    }

    /// As [`ModalModel::build`] with any [`StructureDamping`]. With a loss factor η the residual
    /// flexibility is divided by (1 + iη): the truncated modes respond quasi-statically to K(1 + iη).
    ///
    /// # Errors
    /// [`SolverError::Factorization`] if K − σM cannot be factored for the residual.
    pub fn build_damped(
        system: &System,
        solution: &ModalSolution,
        coords: &[Coordinate],
        damping: &StructureDamping,
        with_residual: bool,
    ) -> Result<Self, SolverError> {
        Self::build_with_loads(system, solution, coords, &[], damping, with_residual)
    }

    /// As [`ModalModel::build_damped`], with load vectors over the free DOFs (e.g.
    /// [`System::base_load`]) as further coordinates after `coords`, numbered from `coords.len()`:
    /// the receptance from such a coordinate b to a coordinate a is the response at a to the load
    /// vector b of unit amplitude (its modal coupling is φ_rᵀ b).
    ///
    /// # Errors
    /// [`SolverError::Factorization`] if K − σM cannot be factored for the residual;
    /// [`SolverError::Request`] for a load vector of the wrong length.
    pub fn build_with_loads(
        system: &System,
        solution: &ModalSolution,
        coords: &[Coordinate],
        load_vectors: &[Vec<f64>],
        damping: &StructureDamping,
        with_residual: bool,
    ) -> Result<Self, SolverError> {
        let nm = solution.n_modes();
        if let Some(v) = load_vectors.iter().find(|v| v.len() != system.n_dofs()) {
            return Err(SolverError::Request(format!(
                "a load vector has {} entries, the model {} free DOFs",
                v.len(),
                system.n_dofs()
            )));
        }
        let nc = coords.len() + load_vectors.len();
        // Each coordinate touches a few free DOFs (three, or a link's): gather instead of dense products.
        let taps: Vec<Vec<(usize, f64)>> = coords
            .iter()
            .map(|co| coordinate_taps(system, co))
            .chain(
                load_vectors
                    .iter()
                    .map(|v| v.iter().enumerate().filter(|(_, w)| **w != 0.0).map(|(i, &w)| (i, w)).collect()),
            )
            .collect();
        let translation: Vec<[f64; 3]> = coords
            .iter()
            .map(|co| if co.rotational { [0.0; 3] } else { co.direction })
            .chain(load_vectors.iter().map(|_| [0.0; 3]))
            .collect();
        let gather = |col: &[f64], c: usize| -> f64 { taps[c].iter().map(|&(i, w)| w * col[i]).sum() };
        let mut phi = vec![0.0; nc * nm];
        for r in 0..nm {
            let shape = solution.shape(r);
            for c in 0..nc {
                phi[c * nm + r] = gather(shape, c);
            }
        }
        let viscous: Vec<f64> = (0..nm)
            .map(|r| damping.modal_coefficient(r, solution.eigenvalues[r], r < solution.n_zero_energy))
            .collect();
        let mut residual = vec![0.0; nc * nc];
        let mut residual_mass = vec![0.0; nc * nc];
        if with_residual && nc > 0 {
            let sigma = solution.shift;
            let factor = system.factorizer.llt(system.shifted(sigma))?.ok_or_else(|| SolverError::Factorization {
                shift: sigma,
                detail: "K - sigma M is not positive definite for the residual flexibility".into(),
            })?;
            let shapes = solution.shapes();
            let mphi = system.mul_m(shapes);
            // Load made M-orthogonal to the kept modes: E' = E − MΦ(ΦᵀE), with ΦᵀE = φ gathered.
            let pe = Mat::from_fn(nm, nc, |r, c| phi[c * nm + r]);
            let mut x = Mat::<f64>::zeros(system.n_dofs(), nc);
            for c in 0..nc {
                for &(i, w) in &taps[c] {
                    x[(i, c)] += w;
                }
            }
            x -= &mphi * &pe;
            // Solve in column chunks to bound the work space.
            const CHUNK: usize = 256;
            for start in (0..nc).step_by(CHUNK) {
                let width = CHUNK.min(nc - start);
                factor.solve_in_place(x.as_mut().subcols_mut(start, width));
            }
            // Remove any kept-mode content left by round-off: X ← X − Φ(ΦᵀMX).
            let c = mphi.transpose() * x.as_ref();
            x -= shapes * &c;
            for b in 0..nc {
                let col = x.col(b).try_as_col_major().map(|c| c.as_slice()).unwrap_or(&[]);
                for a in 0..nc {
                    residual[a * nc + b] = gather(col, a);
                }
            }
            let s = x.transpose() * system.mul_m(x.as_ref());
            for a in 0..nc {
                for b in 0..nc {
                    residual_mass[a * nc + b] = 0.5 * (s[(a, b)] + s[(b, a)]);
                }
            }
            for a in 0..nc {
                for b in (a + 1)..nc {
                    let v = 0.5 * (residual[a * nc + b] + residual[b * nc + a]);
                    residual[a * nc + b] = v;
                    residual[b * nc + a] = v;
                }
            }
        }
        check_modal_data(nm, nc, &phi, &viscous, &residual, &residual_mass)?;
        Ok(Self {
            eigenvalues: solution.eigenvalues.clone(),
            viscous,
            loss_factor: damping.loss_factor,
            residual_factor: Complex64::new(1.0, damping.loss_factor).inv(),
            n_coords: nc,
            phi,
            residual,
            residual_mass,
            sigma: solution.shift,
            translation,
        })
    }

    /// Motion of coordinate `c` per metre of a rigid base translation along `d`: t_c · d.
    pub fn base_offset(&self, c: usize, d: [f64; 3]) -> f64 {
        let t = self.translation[c];
        t[0] * d[0] + t[1] * d[1] + t[2] * d[2]
    }

    /// Displacement of coordinate `c` carried by the base motion `base` (0 without one), in m.
    pub fn base_displacement(&self, c: usize, base: Option<&BaseMotion>) -> Complex64 {
        base.map_or(Complex64::new(0.0, 0.0), |b| b.displacement * self.base_offset(c, b.direction))
    }

    /// Number of modes kept.
    pub fn n_modes(&self) -> usize {
        self.eigenvalues.len()
    }

    /// Number of coordinates.
    pub fn n_coords(&self) -> usize {
        self.n_coords
    }

    /// Eigenvalues of the kept modes, in rad²/s².
    pub fn eigenvalues(&self) -> &[f64] {
        &self.eigenvalues
    }

    /// Modal coupling φ_cr = eᵀφ_r at coordinate `c` (kg^-½).
    pub fn coupling(&self, c: usize, r: usize) -> f64 {
        self.phi[c * self.n_modes() + r]
    }

    /// Second-order residual S between coordinates `a` and `b` (see the module notes), in
    /// m·s²/(N·rad²).
    pub fn residual_mass(&self, a: usize, b: usize) -> f64 {
        self.residual_mass[a * self.n_coords + b]
    }

    /// Residual flexibility between coordinates `a` and `b`, in m/N.
    pub fn residual(&self, a: usize, b: usize) -> f64 {
        self.residual[a * self.n_coords + b]
    }

    /// Viscous modal coefficients c_r (= 2ζ_r ω_r + α + βλ_r), in 1/s.
    pub fn viscous_coefficients(&self) -> &[f64] {
        &self.viscous
    }

    /// Modal factors 1/(λ_r(1 + iη) − ω² + iω c_r) at ω (rad/s), one per kept mode, followed by
    /// the two factors of the residual terms, 1/(1 + iη) and (ω² − σ)/(1 + iη)²
    /// (n_modes + 2 values, for [`ModalModel::receptance_with`]).
    pub fn modal_factors(&self, omega: f64) -> Vec<Complex64> {
        let mut f: Vec<Complex64> = self
            .eigenvalues
            .iter()
            .zip(&self.viscous)
            .map(|(&l, &c)| Complex64::new(l - omega * omega, l.max(0.0) * self.loss_factor + c * omega).inv())
            .collect();
        f.push(self.residual_factor);
        f.push(self.residual_factor * self.residual_factor * (omega * omega - self.sigma));
        f
    }

    /// Receptance H_ab from precomputed modal factors, in m/N.
    pub fn receptance_with(&self, factors: &[Complex64], a: usize, b: usize) -> Complex64 {
        let nm = self.n_modes();
        let (pa, pb) = (&self.phi[a * nm..(a + 1) * nm], &self.phi[b * nm..(b + 1) * nm]);
        let ab = a * self.n_coords + b;
        let mut h = factors[nm] * self.residual[ab] + factors[nm + 1] * self.residual_mass[ab];
        for r in 0..nm {
            h += factors[r] * (pa[r] * pb[r]);
        }
        h
    }

    /// Receptance H_ab at ω (rad/s), in m/N.
    pub fn receptance(&self, omega: f64, a: usize, b: usize) -> Complex64 {
        self.receptance_with(&self.modal_factors(omega), a, b)
    }

    /// Response at ω (rad/s) to `loads`, at coordinates `responses`, with `absorbers` coupled.
    pub fn coupled_response(
        &self,
        omega: f64,
        loads: &[Load],
        responses: &[usize],
        absorbers: &[AbsorberLink],
    ) -> CoupledResponse {
        let factors = self.modal_factors(omega);
        self.coupled_response_with(&factors, omega, loads, responses, absorbers)
    }

    /// As [`ModalModel::coupled_response`], with modal factors already computed for ω.
    pub fn coupled_response_with(
        &self,
        factors: &[Complex64],
        omega: f64,
        loads: &[Load],
        responses: &[usize],
        absorbers: &[AbsorberLink],
    ) -> CoupledResponse {
        self.coupled_response_base(factors, omega, loads, responses, absorbers, None)
    }

    /// As [`ModalModel::coupled_response_with`] under a base motion too: `loads` then hold the
    /// base's inertia load (the [`System::base_load`] coordinate with amplitude ω² u_g), the
    /// absorbers act on their attachments' absolute motion and the responses are relative or
    /// absolute as `base` says (see [`BaseMotion`]).
    pub fn coupled_response_base(
        &self,
        factors: &[Complex64],
        omega: f64,
        loads: &[Load],
        responses: &[usize],
        absorbers: &[AbsorberLink],
        base: Option<&BaseMotion>,
    ) -> CoupledResponse {
        let na = absorbers.len();
        let offset = |c: usize| self.base_displacement(c, base);
        let forced = |c: usize| -> Complex64 {
            loads.iter().map(|l| self.receptance_with(factors, c, l.coord) * l.amplitude).sum()
        };
        let mut g = vec![Complex64::new(0.0, 0.0); na];
        let mut stroke = vec![Complex64::new(0.0, 0.0); na];
        if na > 0 {
            let fa: Vec<Complex64> = absorbers.iter().map(|a| forced(a.coord) + offset(a.coord)).collect();
            let mut haa = vec![Complex64::new(0.0, 0.0); na * na];
            for j in 0..na {
                for i in 0..na {
                    haa[j * na + i] = self.receptance_with(factors, absorbers[j].coord, absorbers[i].coord);
                }
            }
            absorber_forces(omega, &haa, &fa, absorbers, &mut g, &mut stroke);
        }
        let displacement = responses
            .iter()
            .map(|&r| {
                let mut x = forced(r);
                if base.is_some_and(|b| b.absolute) {
                    x += offset(r);
                }
                for (i, a) in absorbers.iter().enumerate() {
                    x += self.receptance_with(factors, r, a.coord) * g[i];
                }
                x
            })
            .collect();
        CoupledResponse { displacement, stroke, spring_force: g }
    }
}

/// Largest number of absorbers solved by the in-place elimination of [`absorber_forces`]; more go
/// through faer's LU.
const SMALL: usize = 8;

/// Forces and strokes of absorbers at ω (rad/s) from the receptances among their attachments
/// (`haa`, row-major na × na, m/N) and the attachment motion under the loads alone (`fa`, m): solves
/// (k*_j − ω²m_j) y_j − ω² Σ_i H_ji m_i k*_i y_i = fa_j and writes g_i = ω² m_i k*_i y_i (N) and
/// s_i = ω² m_i y_i (m) into `g` and `stroke`.
///
/// Small systems (the optimiser's inner loop, called millions of times) are eliminated in place
/// with partial pivoting on a stack buffer, which avoids an allocation per call.
pub fn absorber_forces(
    omega: f64,
    haa: &[Complex64],
    fa: &[Complex64],
    links: &[AbsorberLink],
    g: &mut [Complex64],
    stroke: &mut [Complex64],
) {
    let na = links.len();
    let w2 = omega * omega;
    let zero = Complex64::new(0.0, 0.0);
    let mut ks = [zero; SMALL];
    let mut y = [zero; SMALL];
    if na == 1 {
        let a = &links[0];
        let k = a.complex_stiffness(omega);
        let n = k - w2 * a.mass - w2 * haa[0] * a.mass * k;
        y[0] = fa[0] / n;
        ks[0] = k;
    } else if na <= SMALL {
        let mut m = [zero; SMALL * SMALL];
        for i in 0..na {
            ks[i] = links[i].complex_stiffness(omega);
        }
        for j in 0..na {
            for i in 0..na {
                m[j * SMALL + i] = -w2 * haa[j * na + i] * links[i].mass * ks[i];
            }
            m[j * SMALL + j] += ks[j] - w2 * links[j].mass;
            y[j] = fa[j];
        }
        // Gaussian elimination with partial pivoting.
        for c in 0..na {
            let p = (c..na).max_by(|&a, &b| m[a * SMALL + c].norm().total_cmp(&m[b * SMALL + c].norm())).unwrap_or(c);
            if p != c {
                for k in 0..na {
                    m.swap(p * SMALL + k, c * SMALL + k);
                }
                y.swap(p, c);
            }
            let d = m[c * SMALL + c];
            for r in (c + 1)..na {
                let f = m[r * SMALL + c] / d;
                for k in c..na {
                    let v = m[c * SMALL + k];
                    m[r * SMALL + k] -= f * v;
                }
                let v = y[c];
                y[r] -= f * v;
            }
        }
        for c in (0..na).rev() {
            let mut v = y[c];
            for k in (c + 1)..na {
                v -= m[c * SMALL + k] * y[k];
            }
            y[c] = v / m[c * SMALL + c];
        }
    } else {
        let ksv: Vec<Complex64> = links.iter().map(|a| a.complex_stiffness(omega)).collect();
        let mut nmat = Mat::<Complex64>::zeros(na, na);
        for j in 0..na {
            for i in 0..na {
                nmat[(j, i)] = -w2 * haa[j * na + i] * links[i].mass * ksv[i];
            }
            nmat[(j, j)] += ksv[j] - w2 * links[j].mass;
        }
        let b = Mat::<Complex64>::from_fn(na, 1, |i, _| fa[i]);
        use faer::linalg::solvers::Solve;
        let sol = nmat.partial_piv_lu().solve(&b);
        for i in 0..na {
            let gi = w2 * links[i].mass * ksv[i] * sol[(i, 0)];
            g[i] = gi;
            stroke[i] = w2 * links[i].mass * sol[(i, 0)];
        }
        return;
    }
    for i in 0..na {
        g[i] = w2 * links[i].mass * ks[i] * y[i];
        stroke[i] = w2 * links[i].mass * y[i];
    }
}

/// Frequencies (Hz) at which to evaluate a response over `band_hz`: geometric steps of relative
/// size ζ/2 (four points per half-power bandwidth 2ζ of a mode with damping ratio ζ), plus every
/// natural frequency in the band. The lower edge is raised to 10⁻³ of the upper when it is 0.
pub fn frequency_grid(band_hz: [f64; 2], natural_hz: &[f64], damping_ratio: f64) -> Vec<f64> {
    let hi = band_hz[1];
    let lo = band_hz[0].max(1e-3 * hi);
    let step = 1.0 + (damping_ratio / 2.0).clamp(1e-4, 0.05);
    let n = ((hi / lo).ln() / step.ln()).ceil().max(1.0) as usize;
    let mut f: Vec<f64> = (0..=n).map(|i| lo * (hi / lo).powf(i as f64 / n as f64)).collect();
    f.extend(natural_hz.iter().copied().filter(|&x| x > lo && x < hi));
    f.sort_by(f64::total_cmp);
    f.dedup_by(|a, b| (*a - *b).abs() <= 1e-12 * b.abs());
    f
}

/// Maximises `f` on [a, b] by golden-section search to a relative interval of `tol`; returns
/// (argmax, max).
pub fn golden_max(mut a: f64, mut b: f64, tol: f64, f: impl Fn(f64) -> f64) -> (f64, f64) {
    let g = 0.5 * (5f64.sqrt() - 1.0);
    let mut c = b - g * (b - a);
    let mut d = a + g * (b - a);
    let (mut fc, mut fd) = (f(c), f(d));
    while (b - a) > tol * b.abs().max(1e-300) {
        if fc > fd {
            b = d;
            d = c;
            fd = fc;
            c = b - g * (b - a);
            fc = f(c);
        } else {
            a = c;
            c = d;
            fc = fd;
            d = a + g * (b - a);
            fd = f(d);
        }
    }
    if fc > fd { (c, fc) } else { (d, fd) }
}

/// Peak through three samples (f₁ < f₂ < f₃, the middle one highest) of a resonance: near a lightly
/// damped peak |H|² ≈ A / ((f − f₀)² + (ζf₀)²), so 1/|H|² is a parabola in f; fitting it through the
/// three samples gives f₀ and the peak height with no further evaluation (exact for a single-mode
/// resonance). Returns (frequency, height); the middle sample when the fit is not a peak inside
/// [f₁, f₃].
pub fn resonance_peak(f: [f64; 3], v: [f64; 3]) -> (f64, f64) {
    let fallback = (f[1], v[1]);
    if v.iter().any(|&x| x.is_nan() || x <= 0.0) {
        return fallback;
    }
    let y = v.map(|x| 1.0 / (x * x));
    // Parabola through (f_k, y_k) in x = f − f₂: y = a x² + b x + c, c = y₂.
    let (x1, x3) = (f[0] - f[1], f[2] - f[1]);
    let (d1, d3) = ((y[0] - y[1]) / x1, (y[2] - y[1]) / x3);
    let a = (d3 - d1) / (x3 - x1);
    let b = d1 - a * x1;
    if a.is_nan() || a <= 0.0 {
        return fallback;
    }
    let x0 = -b / (2.0 * a);
    let y0 = y[1] - b * b / (4.0 * a);
    if x0 < x1 || x0 > x3 || y0.is_nan() || y0 <= 0.0 {
        return fallback;
    }
    (f[1] + x0, (1.0 / y0.sqrt()).max(v[1]))
}

/// Local maxima of `values` over the grid `freq_hz`, each refined by golden-section search of
/// `eval` between its grid neighbours: (frequency in Hz, value), by ascending frequency.
pub fn refined_peaks(freq_hz: &[f64], values: &[f64], eval: impl Fn(f64) -> f64) -> Vec<(f64, f64)> {
    let n = values.len();
    let mut peaks = Vec::new();
    for i in 0..n {
        let left = if i > 0 { values[i - 1] } else { f64::NEG_INFINITY };
        let right = if i + 1 < n { values[i + 1] } else { f64::NEG_INFINITY };
        if values[i] >= left && values[i] > right {
            if i == 0 || i + 1 == n {
                peaks.push((freq_hz[i], values[i]));
            } else {
                let (f, v) = golden_max(freq_hz[i - 1], freq_hz[i + 1], 1e-9, &eval);
                peaks.push(if v >= values[i] { (f, v) } else { (freq_hz[i], values[i]) });
            }
        }
    }
    peaks
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The modal-model guard names the mode and coordinate of a NaN or an infinity in the gathered
    /// shapes, the mode of a damping coefficient and the coordinates of a residual entry (crafted
    /// data: valid input does not reach it).
    #[test]
    fn non_finite_modal_data_is_named() {
        let (phi, viscous, res) = (vec![1.0; 6], vec![0.1; 3], vec![0.0; 4]);
        assert!(check_modal_data(3, 2, &phi, &viscous, &res, &res).is_ok());
        let mut bad = phi.clone();
        bad[4] = f64::NAN;
        let err = check_modal_data(3, 2, &bad, &viscous, &res, &res).expect_err("NaN shape value");
        assert!(err.to_string().contains("mode 2 at coordinate 2"), "{err}");
        let mut bad = viscous.clone();
        bad[2] = f64::INFINITY;
        let err = check_modal_data(3, 2, &phi, &bad, &res, &res).expect_err("infinite damping");
        assert!(err.to_string().contains("damping coefficient of mode 3"), "{err}");
        let mut bad = res.clone();
        bad[1] = f64::NEG_INFINITY;
        let err = check_modal_data(3, 2, &phi, &viscous, &res, &bad).expect_err("infinite residual");
        assert!(err.to_string().contains("second-order residual between coordinates 1 and 2"), "{err}");
    }

    #[test]
    fn modal_damping_laws() {
        let t = ModalDampingLaw::Table(vec![(10.0, 0.01), (30.0, 0.03)]);
        assert!((t.ratio(0, 20.0) - 0.02).abs() < 1e-15 && t.ratio(0, 50.0) == 0.03 && t.ratio(0, 1.0) == 0.01);
        let p = ModalDampingLaw::PerMode(vec![0.01, 0.02]);
        assert!(p.ratio(1, 0.0) == 0.02 && p.ratio(7, 0.0) == 0.02);
        // Rayleigh: c_r = α + βλ; equivalent ratio c/(2ω) + η/2.
        let d = StructureDamping { modal: ModalDampingLaw::Uniform(0.0), rayleigh: [2.0, 1e-4], loss_factor: 0.02 };
        let lambda: f64 = 1.0e4;
        assert!((d.modal_coefficient(0, lambda, false) - 3.0).abs() < 1e-12);
        assert!((d.equivalent_ratio(0, lambda, false) - (3.0 / 200.0 + 0.01)).abs() < 1e-12);
    }

    #[test]
    fn golden_section_finds_a_parabola_top() {
        let (x, y) = golden_max(0.0, 3.0, 1e-10, |x| -(x - 1.3f64).powi(2) + 2.0);
        assert!((x - 1.3).abs() < 1e-6 && (y - 2.0).abs() < 1e-12);
    }

    #[test]
    fn resonance_peak_is_exact_for_a_single_mode() {
        // |H| = 1/√((f − f₀)² + g²): three samples anywhere around the top recover f₀ and 1/g.
        let (f0, g) = (101.3, 0.7);
        let h = |f: f64| 1.0 / ((f - f0).powi(2) + g * g).sqrt();
        let fs = [100.9, 101.45, 102.2];
        let (f, v) = resonance_peak(fs, fs.map(h));
        assert!((f - f0).abs() < 1e-9 && (v - 1.0 / g).abs() < 1e-9 / g, "{f} {v}");
    }

    #[test]
    fn grid_resolves_half_power_bandwidth() {
        let f = frequency_grid([50.0, 200.0], &[123.4], 0.01);
        assert!(f.contains(&123.4));
        let worst = f.windows(2).map(|w| w[1] / w[0] - 1.0).fold(0.0, f64::max);
        assert!(worst <= 0.005 + 1e-12, "{worst}");
    }
}
