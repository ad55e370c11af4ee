//! Direct frequency response: one sparse complex solve of the whole structure with its absorbers
//! per frequency, the reference that the modal route ([`crate::ModalModel`]) is checked against.
//!
//! Unknowns: the free DOFs x of the structure, one displacement z_a per absorber (its mass moving
//! along its direction), and one auxiliary q_r = φ_rᵀ M x per kept mode that carries viscous modal
//! damping (formed through a chain of partial sums so that no row of the matrix is dense). At ω
//! (rad/s):
//!
//! ```text
//! [ K(1+iη) + iω(αM + βK) − ω²M + Σ_a k*_a t_a t_aᵀ    −k*_a t_a         iω c_r M φ_r ] [x  ]   [f]
//! [ −k*_a t_aᵀ                                          k*_a − ω² m_a     0            ] [z_a] = [0]
//! [ −iω c_r φ_rᵀ M                                      0                 iω c_r       ] [q_r]   [0]
//! ```
//!
//! with t_a the attachment coordinate (direction e at the node, as free-DOF weights), k*_a the
//! absorber's complex stiffness and c_r = 2ζ_r ω_r the modal viscous coefficient. Eliminating q
//! gives exactly the damping C = αM + βK + M Φ diag(c_r) Φᵀ M of [`StructureDamping`]: the modal
//! damping is a rank-N term, kept sparse by the bordering. The system is factored by faer's sparse
//! LU (COLAMD ordering, partial pivoting; one symbolic analysis for all frequencies) and refined
//! by one step of iterative refinement; the relative residual ‖A x − b‖/‖b‖ is reported.
//!
//! What is exact: for Rayleigh damping and a structural loss factor this is the full-model
//! solution with no modal truncation at all. For viscous modal damping, damping is defined only
//! for the kept modes (the truncated ones are undamped here), so the comparison measures the
//! truncation and residual-flexibility error of the modal route.

use faer::linalg::solvers::Solve;
use faer::sparse::linalg::matmul::sparse_dense_matmul;
use faer::sparse::linalg::solvers::{Lu, SymbolicLu};
use faer::sparse::{Pair, SparseColMat, SymbolicSparseColMat};
use faer::{Accum, Mat, Par};
use num_complex::Complex64;

use crate::assembly::System;
use crate::eigen::ModalSolution;
use crate::error::SolverError;
use crate::response::{AbsorberLink, Coordinate, CoupledResponse, Load, StructureDamping, coordinate_taps};

/// Entries per row of the partial-sum chains that carry modal damping.
const CHAIN_BLOCK: usize = 24;

/// What scales a stored coefficient at a given frequency.
#[derive(Debug, Clone, Copy)]
enum Scale {
    /// Stiffness entry: (1 + iη) + iωβ.
    Stiffness,
    /// Mass entry: −ω² + iωα.
    Mass,
    /// Absorber a's complex stiffness k*_a.
    Spring(usize),
    /// Absorber a's own diagonal: k*_a − ω² m_a.
    AbsorberDiagonal(usize),
    /// Bordering of modal damping b: iω c_b.
    Modal(usize),
}

/// The direct solver of one structure with a fixed set of absorbers and coordinates.
pub struct DirectSolver {
    n: usize,
    n_absorbers: usize,
    pattern: SymbolicSparseColMat<usize>,
    argsort: faer::sparse::Argsort<usize>,
    symbolic: SymbolicLu<usize>,
    /// Per stored entry (before summing duplicates): its coefficient and scale.
    entries: Vec<(f64, Scale)>,
    /// Free-DOF weights of each coordinate.
    taps: Vec<Vec<(usize, f64)>>,
    absorbers: Vec<AbsorberLink>,
    modal_c: Vec<f64>,
    damping: StructureDamping,
}

/// Direct response at one frequency.
#[derive(Debug, Clone, PartialEq)]
pub struct DirectResponse {
    /// Responses, absorber strokes and spring forces, as in the modal route.
    pub response: CoupledResponse,
    /// Relative residual ‖A x − b‖ / ‖b‖ of the solved system.
    pub residual: f64,
}

fn lu_error(what: &str, e: impl std::fmt::Debug) -> SolverError {
    SolverError::Request(format!("direct frequency response: {what}: {e:?}"))
}

impl DirectSolver {
    /// Sets up the system for `coords` of `system` with `absorbers` (their `coord` indices refer to
    /// `coords`), damping `damping` and, for its viscous modal part, the kept modes of `solution`.
    ///
    /// # Errors
    /// [`SolverError::Request`] if the sparse LU cannot analyse the pattern.
    pub fn new(
        system: &System,
        solution: &ModalSolution,
        damping: &StructureDamping,
        coords: &[Coordinate],
        absorbers: &[AbsorberLink],
    ) -> Result<Self, SolverError> {
        let n = system.n_dofs();
        let na = absorbers.len();
        let taps: Vec<Vec<(usize, f64)>> = coords.iter().map(|c| coordinate_taps(system, c)).collect();
        let mut pairs = Vec::new();
        let mut entries = Vec::new();
        let mut push = |row: usize, col: usize, v: f64, s: Scale| {
            pairs.push(Pair { row, col });
            entries.push((v, s));
        };
        for (matrix, scale) in [(&system.k, Scale::Stiffness), (&system.m, Scale::Mass)] {
            let sym = matrix.symbolic();
            for j in 0..n {
                for (p, &i) in sym.col_range(j).zip(sym.row_idx_of_col_raw(j)) {
                    push(i, j, matrix.val()[p], scale);
                }
            }
        }
        for (a, link) in absorbers.iter().enumerate() {
            let t = &taps[link.coord];
            for &(p, wp) in t {
                for &(q, wq) in t {
                    push(p, q, wp * wq, Scale::Spring(a));
                }
                push(p, n + a, -wp, Scale::Spring(a));
                push(n + a, p, -wp, Scale::Spring(a));
            }
            push(n + a, n + a, 1.0, Scale::AbsorberDiagonal(a));
        }
        // Viscous modal damping of the kept modes, bordered: q_r = φ_rᵀ M x enters every structural
        // row (a dense column, which the column ordering puts last), but the defining row is split
        // into a chain of partial sums s_k = s_{k−1} + Σ_{i in block k} (Mφ_r)_i x_i with s_K = q_r,
        // so that no row is dense (a dense row would make the LU's column structure AᵀA full).
        let shapes = solution.shapes();
        let mphi = system.mul_m(shapes);
        let mut modal_c = Vec::new();
        let mut next = n + na;
        for r in 0..solution.n_modes() {
            let c = damping.modal_viscous(r, solution.eigenvalues[r], r < solution.n_zero_energy);
            if c == 0.0 {
                continue;
            }
            let b = modal_c.len();
            modal_c.push(c);
            let nonzero: Vec<(usize, f64)> = (0..n).map(|i| (i, mphi[(i, r)])).filter(|p| p.1 != 0.0).collect();
            let mut previous: Option<usize> = None;
            for block in nonzero.chunks(CHAIN_BLOCK) {
                let sk = next;
                next += 1;
                push(sk, sk, 1.0, Scale::Modal(b));
                if let Some(p) = previous {
                    push(sk, p, -1.0, Scale::Modal(b));
                }
                for &(i, u) in block {
                    push(sk, i, -u, Scale::Modal(b));
                }
                previous = Some(sk);
            }
            if let Some(q) = previous {
                for &(i, u) in &nonzero {
                    push(i, q, u, Scale::Modal(b));
                }
            }
        }
        let size = next;
        for i in 0..size {
            push(i, i, 0.0, Scale::Mass);
        }
        let (pattern, argsort) =
            SymbolicSparseColMat::try_new_from_indices(size, size, &pairs).map_err(|e| lu_error("pattern", e))?;
        let symbolic = SymbolicLu::try_new(pattern.as_ref()).map_err(|e| lu_error("symbolic analysis", e))?;
        Ok(Self {
            n,
            n_absorbers: na,
            pattern,
            argsort,
            symbolic,
            entries,
            taps,
            absorbers: absorbers.to_vec(),
            modal_c,
            damping: damping.clone(),
        })
    }

    /// Number of unknowns of the complex system (free DOFs, absorbers, modal bordering).
    pub fn n_unknowns(&self) -> usize {
        self.pattern.nrows()
    }

    fn matrix(&self, omega: f64) -> Result<SparseColMat<usize, Complex64>, SolverError> {
        let [alpha, beta] = self.damping.rayleigh;
        let eta = self.damping.loss_factor;
        let stiff = Complex64::new(1.0, eta + omega * beta);
        let mass = Complex64::new(-omega * omega, omega * alpha);
        let ks: Vec<Complex64> = self.absorbers.iter().map(|a| a.complex_stiffness(omega)).collect();
        let values: Vec<Complex64> = self
            .entries
            .iter()
            .map(|&(v, s)| {
                v * match s {
                    Scale::Stiffness => stiff,
                    Scale::Mass => mass,
                    Scale::Spring(a) => ks[a],
                    Scale::AbsorberDiagonal(a) => ks[a] - omega * omega * self.absorbers[a].mass,
                    Scale::Modal(b) => Complex64::new(0.0, omega * self.modal_c[b]),
                }
            })
            .collect();
        SparseColMat::new_from_argsort(self.pattern.clone(), &self.argsort, &values).map_err(|e| lu_error("values", e))
    }

    /// Response at ω (rad/s) to `loads` (at coordinates), read at coordinates `responses`.
    ///
    /// # Errors
    /// [`SolverError::Request`] if the LU factorization fails (a singular system: ω at an undamped
    /// resonance).
    pub fn solve(&self, omega: f64, loads: &[Load], responses: &[usize]) -> Result<DirectResponse, SolverError> {
        let size = self.n_unknowns();
        let mut b = Mat::<Complex64>::zeros(size, 1);
        for l in loads {
            for &(i, w) in &self.taps[l.coord] {
                b[(i, 0)] += l.amplitude * w;
            }
        }
        self.solve_rhs(omega, b, responses)
    }

    /// Response at ω (rad/s) to a load vector over the free DOFs of the structure (length
    /// [`System::n_dofs`], in N), read at coordinates `responses`.
    ///
    /// # Errors
    /// As [`DirectSolver::solve`].
    pub fn solve_vector(
        &self,
        omega: f64,
        load: &[Complex64],
        responses: &[usize],
    ) -> Result<DirectResponse, SolverError> {
        let mut b = Mat::<Complex64>::zeros(self.n_unknowns(), 1);
        for (i, &v) in load.iter().enumerate().take(self.n) {
            b[(i, 0)] = v;
        }
        self.solve_rhs(omega, b, responses)
    }

    /// Response at ω (rad/s) to a load vector over the free DOFs (`structure`, length
    /// [`System::n_dofs`], in N) and loads on the absorbers' own DOFs (`absorber`, one per
    /// absorber, in N): e.g. a base excitation's inertia loads in the relative-motion form (see
    /// [`crate::BaseMotion`]).
    ///
    /// # Errors
    /// As [`DirectSolver::solve`]; [`SolverError::Request`] for loads of the wrong lengths.
    pub fn solve_with_absorber_loads(
        &self,
        omega: f64,
        structure: &[Complex64],
        absorber: &[Complex64],
        responses: &[usize],
    ) -> Result<DirectResponse, SolverError> {
        if structure.len() != self.n || absorber.len() != self.n_absorbers {
            return Err(SolverError::Request(format!(
                "loads of {} structure DOFs and {} absorbers for a system of {} and {}",
                structure.len(),
                absorber.len(),
                self.n,
                self.n_absorbers
            )));
        }
        let mut b = Mat::<Complex64>::zeros(self.n_unknowns(), 1);
        for (i, &v) in structure.iter().enumerate() {
            b[(i, 0)] = v;
        }
        for (k, &v) in absorber.iter().enumerate() {
            b[(self.n + k, 0)] = v;
        }
        self.solve_rhs(omega, b, responses)
    }

    fn solve_rhs(&self, omega: f64, b: Mat<Complex64>, responses: &[usize]) -> Result<DirectResponse, SolverError> {
        let a = self.matrix(omega)?;
        let lu = Lu::try_new_with_symbolic(self.symbolic.clone(), a.as_ref()).map_err(|e| lu_error("LU", e))?;
        let mut x = lu.solve(&b);
        let residual_of = |x: &Mat<Complex64>| -> Mat<Complex64> {
            let mut r = b.clone();
            sparse_dense_matmul(r.as_mut(), Accum::Add, a.as_ref(), x.as_ref(), Complex64::new(-1.0, 0.0), Par::Seq);
            r
        };
        // One step of iterative refinement.
        let r = residual_of(&x);
        x += lu.solve(&r);
        let r = residual_of(&x);
        let norm = |m: &Mat<Complex64>| (0..m.nrows()).map(|i| m[(i, 0)].norm_sqr()).sum::<f64>().sqrt();
        let residual = norm(&r) / norm(&b).max(f64::MIN_POSITIVE);
        let at = |c: usize| -> Complex64 { self.taps[c].iter().map(|&(i, w)| x[(i, 0)] * w).sum() };
        let displacement = responses.iter().map(|&c| at(c)).collect();
        let mut stroke = Vec::with_capacity(self.n_absorbers);
        let mut spring_force = Vec::with_capacity(self.n_absorbers);
        for (k, link) in self.absorbers.iter().enumerate() {
            let s = x[(self.n + k, 0)] - at(link.coord);
            stroke.push(s);
            spring_force.push(link.complex_stiffness(omega) * s);
        }
        Ok(DirectResponse { response: CoupledResponse { displacement, stroke, spring_force }, residual })
    }
}

/// Relative difference ‖a − b‖ / ‖b‖ of two complex vectors (0 when both vanish).
pub fn relative_difference(a: &[Complex64], b: &[Complex64]) -> f64 {
    let d: f64 = a.iter().zip(b).map(|(x, y)| (x - y).norm_sqr()).sum::<f64>().sqrt();
    let n: f64 = b.iter().map(|y| y.norm_sqr()).sum::<f64>().sqrt();
    if n == 0.0 { if d == 0.0 { 0.0 } else { f64::INFINITY } } else { d / n }
}
