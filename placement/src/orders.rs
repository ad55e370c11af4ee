//! Running-speed orders: the response to forces at a multiple of the shaft speed, swept over the
//! study's speed range, and the crossings of orders with natural frequencies (the interference, or
//! speed–frequency, diagram).
//!
//! Order k at speed n (rev/min) is a harmonic force at f = k·n/60 Hz with amplitude F_k(n)
//! (constant, ∝ n², or a table). The response to it is the coupled receptance at that frequency
//! times F_k(n): x_p(n) = Σ_l H_pl(2πf) F_l(n) e^{iφ_l}. Different orders act at different
//! frequencies, so their responses are reported one by one; their amplitudes add at worst (the
//! sum is an upper bound of the combined peak in time).

use antinode_mesh::OrderSpec;
use antinode_solver::{AbsorberLink, Complex64, Load, frequency_grid, golden_max};
use rayon::prelude::*;
use serde::Serialize;

use crate::quantity::Quantity;
use crate::study::StudyModel;

/// The response to one order over the speed grid.
#[derive(Debug, Clone, Serialize)]
pub struct OrderResponse {
    /// Order name.
    pub name: String,
    /// Multiple of the shaft speed.
    pub order: f64,
    /// Per response point, complex motion (displacement, velocity or acceleration, as asked) at
    /// each grid speed, in m, m/s or m/s².
    #[serde(skip)]
    pub response: Vec<Vec<Complex64>>,
    /// Per absorber, complex stroke at each grid speed, in m.
    #[serde(skip)]
    pub stroke: Vec<Vec<Complex64>>,
    /// Per absorber, complex spring force at each grid speed, in N.
    #[serde(skip)]
    pub spring_force: Vec<Vec<Complex64>>,
    /// The highest response over the speed range.
    pub peak: SpeedPeak,
}

/// The highest response of an order over the speed range.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct SpeedPeak {
    /// Speed, in rev/min.
    pub rpm: f64,
    /// Excitation frequency there, in Hz.
    pub frequency_hz: f64,
    /// Largest motion amplitude over the response points in the quantity asked for (m, m/s or
    /// m/s²).
    pub value: f64,
    /// Largest displacement amplitude over the response points at that speed, in m.
    pub displacement_m: f64,
    /// Index of the response point.
    pub point: usize,
}

/// A natural frequency met by an order inside the speed range: k · n / 60 = f_r.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Crossing {
    /// Order name.
    pub order_name: String,
    /// Multiple of the shaft speed.
    pub order: f64,
    /// Mode number (from 1, zero-energy modes included in the count).
    pub mode: usize,
    /// Natural frequency of the mode (without absorbers), in Hz.
    pub frequency_hz: f64,
    /// Speed of the crossing, n = 60 f_r / k, in rev/min.
    pub rpm: f64,
}

/// Crossings of `orders` with the elastic natural frequencies `natural_hz` (the first
/// `n_zero_energy` are skipped) inside `[r0, r1]` rev/min, sorted by speed then order.
pub fn crossings(orders: &[OrderSpec], natural_hz: &[f64], n_zero_energy: usize, [r0, r1]: [f64; 2]) -> Vec<Crossing> {
    let mut out = Vec::new();
    for o in orders {
        for (r, &f) in natural_hz.iter().enumerate().skip(n_zero_energy) {
            let rpm = 60.0 * f / o.order;
            if rpm >= r0 && rpm <= r1 {
                out.push(Crossing { order_name: o.name.clone(), order: o.order, mode: r + 1, frequency_hz: f, rpm });
            }
        }
    }
    out.sort_by(|a, b| a.rpm.total_cmp(&b.rpm).then(a.order.total_cmp(&b.order)));
    out
}

impl StudyModel {
    /// Speeds at which every order is evaluated, in rev/min: for each order, the study's frequency
    /// grid (steps of ζ/2 and every natural frequency) over its frequency span mapped to speed, n =
    /// 60 f / k; the union, sorted, with both ends of the range. Empty without orders.
    pub fn speed_grid(&self) -> Vec<f64> {
        let Some([r0, r1]) = self.rpm_range else { return Vec::new() };
        let mut rpm = vec![r0, r1];
        for (_, o) in &self.orders {
            let band = [o.frequency_hz(r0), o.frequency_hz(r1)];
            rpm.extend(
                frequency_grid(band, &self.natural_hz, self.damping_ratio)
                    .into_iter()
                    .map(|f| 60.0 * f / o.order)
                    .filter(|&n| n >= r0 && n <= r1),
            );
        }
        rpm.sort_by(f64::total_cmp);
        rpm.dedup_by(|a, b| (*a - *b).abs() <= 1e-9 * b.abs());
        rpm
    }

    /// Response at the response points, absorber strokes and spring forces under order `k` (index
    /// into [`StudyModel::orders`]) at `rpm` rev/min, with `absorbers`; in m, m and N.
    pub fn order_at(
        &self,
        k: usize,
        rpm: f64,
        absorbers: &[AbsorberLink],
    ) -> (Vec<Complex64>, Vec<Complex64>, Vec<Complex64>) {
        let (coord, o) = &self.orders[k];
        let f = o.frequency_hz(rpm);
        let omega = 2.0 * std::f64::consts::PI * f;
        let load = [Load { coord: *coord, amplitude: Complex64::from_polar(o.amplitude_at(rpm), o.phase_rad) }];
        let links = self.links_at(f, absorbers);
        let r = self.model.coupled_response(omega, &load, &self.responses, &links);
        (r.displacement, r.stroke, r.spring_force)
    }

    /// Largest displacement over the response points under order `k` at `rpm`, in m, and the point.
    fn order_largest(&self, k: usize, rpm: f64, absorbers: &[AbsorberLink]) -> (f64, usize) {
        let (x, _, _) = self.order_at(k, rpm, absorbers);
        x.iter().enumerate().fold((0.0, 0), |best, (i, z)| if z.norm() > best.0 { (z.norm(), i) } else { best })
    }

    /// Every order's response over `rpm` (from [`StudyModel::speed_grid`]) with `absorbers`, in
    /// `quantity`'s motion, and its peak, refined by golden-section search between the grid
    /// neighbours of each local maximum.
    pub fn sweep(&self, rpm: &[f64], absorbers: &[AbsorberLink], quantity: Quantity) -> Vec<OrderResponse> {
        (0..self.orders.len())
            .map(|k| {
                let (_, o) = &self.orders[k];
                let scale = |n: f64| quantity.factor(2.0 * std::f64::consts::PI * o.frequency_hz(n));
                let largest = |n: f64| self.order_largest(k, n, absorbers).0 * scale(n).norm();
                let rows: Vec<_> = rpm
                    .par_iter()
                    .map(|&n| {
                        let (x, s, g) = self.order_at(k, n, absorbers);
                        (x.into_iter().map(|z| z * scale(n)).collect::<Vec<_>>(), s, g)
                    })
                    .collect();
                let np = self.responses.len();
                let na = absorbers.len();
                let mut response = vec![Vec::with_capacity(rpm.len()); np];
                let mut stroke = vec![Vec::with_capacity(rpm.len()); na];
                let mut spring_force = vec![Vec::with_capacity(rpm.len()); na];
                for (x, s, g) in &rows {
                    for p in 0..np {
                        response[p].push(x[p]);
                    }
                    for a in 0..na {
                        stroke[a].push(s[a]);
                        spring_force[a].push(g[a]);
                    }
                }
                let vals: Vec<f64> =
                    (0..rpm.len()).map(|i| response.iter().map(|r| r[i].norm()).fold(0.0, f64::max)).collect();
                let mut best = (rpm[0], vals[0]);
                for i in 0..rpm.len() {
                    let left = if i > 0 { vals[i - 1] } else { f64::NEG_INFINITY };
                    let right = if i + 1 < rpm.len() { vals[i + 1] } else { f64::NEG_INFINITY };
                    if !(vals[i] >= left && vals[i] >= right) {
                        continue;
                    }
                    let cand = if i == 0 || i + 1 == rpm.len() {
                        (rpm[i], vals[i])
                    } else {
                        let (n, v) = golden_max(rpm[i - 1], rpm[i + 1], 1e-9, largest);
                        if v >= vals[i] { (n, v) } else { (rpm[i], vals[i]) }
                    };
                    if cand.1 > best.1 {
                        best = cand;
                    }
                }
                let (displacement_m, point) = self.order_largest(k, best.0, absorbers);
                OrderResponse {
                    name: o.name.clone(),
                    order: o.order,
                    response,
                    stroke,
                    spring_force,
                    peak: SpeedPeak {
                        rpm: best.0,
                        frequency_hz: o.frequency_hz(best.0),
                        value: best.1,
                        displacement_m,
                        point,
                    },
                }
            })
            .collect()
    }
}
