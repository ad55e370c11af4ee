//! `antinode respond`: the study's response with and without the model's absorbers.

use std::fmt::Write as _;
use std::path::PathBuf;

use antinode_placement::{Crossing, Curves, OrderResponse, Quantity, SpeedPeak, StudyModel, VerifyPoint, crossings};
use antinode_solver::{AbsorberLink, InsightOptions, ModalSolution, ModeKind, System, mode_insight, refined_peaks};
use anyhow::{Context, Result, bail};
use serde::Serialize;

use crate::output::{print_json, print_measured, table};
use crate::pipeline::{CAUTION, Outputs, Progress, assemble_checked, load, study_modes};
use crate::plot::{Series, curve_svg, frf_svg, interference_svg};

#[derive(Serialize)]
pub struct PeakOut {
    pub frequency_hz: f64,
    /// Largest displacement over the response points per newton, in m/N.
    pub receptance: f64,
    /// The same in the quantity asked for (`--quantity`; equal to `receptance` by default).
    pub value: f64,
    pub point: String,
}

#[derive(Serialize)]
struct AbsorberOut {
    name: String,
    max_stroke_m_per_n: f64,
    max_spring_force_n_per_n: f64,
}

/// Options of `antinode respond`.
pub struct Options {
    /// Model file.
    pub model: PathBuf,
    /// JSON on standard output.
    pub json: bool,
    /// Output folder.
    pub out: Option<PathBuf>,
    /// Direct check with this many band frequencies (besides natural frequencies and peaks).
    pub verify: Option<usize>,
    /// What the curves, peaks and speed sweeps report.
    pub quantity: Quantity,
}

#[derive(Clone, Serialize)]
struct OrderOut {
    name: String,
    order: f64,
    /// Highest response over the speed range without absorbers (`value` in the quantity asked
    /// for, `displacement_m` in m).
    peak_before: SpeedPeakOut,
    #[serde(skip_serializing_if = "Option::is_none")]
    peak_after: Option<SpeedPeakOut>,
    /// With absorbers: each absorber's largest stroke (m) and spring force (N) over the range.
    #[serde(skip_serializing_if = "Vec::is_empty")]
    absorbers: Vec<OrderAbsorberOut>,
}

#[derive(Clone, Serialize)]
struct SpeedPeakOut {
    rpm: f64,
    frequency_hz: f64,
    value: f64,
    displacement_m: f64,
    point: String,
}

#[derive(Clone, Serialize)]
struct OrderAbsorberOut {
    name: String,
    max_stroke_m: f64,
    max_spring_force_n: f64,
}

#[derive(Clone, Serialize)]
struct CriticalSpeed {
    /// Mode number of the lowest bending mode (without absorbers).
    mode: usize,
    frequency_hz: f64,
    /// Speed at which once-per-revolution excitation meets it, 60 f, in rev/min.
    critical_rpm: f64,
    max_rpm: f64,
    /// (critical_rpm − max_rpm) / max_rpm: positive when the part runs below the critical speed.
    margin: f64,
    /// Whether the critical speed lies inside the operating range.
    inside_range: bool,
    /// Lowest margin this report accepts without a warning (common practice; the applicable code
    /// decides).
    warning_below: f64,
    note: String,
}

#[derive(Clone, Serialize)]
struct SpeedOut {
    rpm_range: [f64; 2],
    /// Quantity of `value` fields and of speed.csv.
    quantity: Quantity,
    speeds_evaluated: usize,
    orders: Vec<OrderOut>,
    /// Natural frequencies met by an order inside the range (modes without absorbers).
    crossings: Vec<Crossing>,
    #[serde(skip_serializing_if = "Option::is_none")]
    critical_speed: Option<CriticalSpeed>,
    /// Why there is no critical-speed margin, when there is none.
    #[serde(skip_serializing_if = "Option::is_none")]
    critical_speed_note: Option<String>,
}

/// Lowest critical-speed margin reported without a warning: 20 % separation (common practice for
/// shafts; codes set their own).
const MARGIN_WARNING: f64 = 0.2;

#[derive(Serialize)]
struct VerifyCase {
    /// Whether the model's absorbers are coupled.
    with_absorbers: bool,
    max_relative_difference: f64,
    max_difference_to_peak: f64,
    max_stroke_difference: f64,
    max_direct_residual: f64,
    points: Vec<VerifyPoint>,
}

#[derive(Serialize)]
struct RandomOut {
    /// RMS displacement per response point under the random forces, without absorbers, in m.
    rms_before_m: Vec<f64>,
    /// The same with the model's absorbers, in m.
    #[serde(skip_serializing_if = "Option::is_none")]
    rms_after_m: Option<Vec<f64>>,
}

#[derive(Serialize)]
struct TemperatureCase {
    temperature_c: f64,
    /// Highest response with the model's absorbers at this temperature, m/N.
    peak_after: f64,
    peak_frequency_hz: f64,
}

#[derive(Serialize)]
struct Verification {
    method: &'static str,
    frequencies_checked: usize,
    /// Largest relative difference over every case and frequency.
    max_relative_difference: f64,
    cases: Vec<VerifyCase>,
}

#[derive(Serialize)]
struct RespondReport {
    model: String,
    title: String,
    band_hz: [f64; 2],
    modes_kept: usize,
    response_points: Vec<String>,
    reference_force_n: f64,
    /// What drives the response and what the responses are per.
    excitation: String,
    peaks_before: Vec<PeakOut>,
    peaks_after: Vec<PeakOut>,
    peak_before: f64,
    peak_after: Option<f64>,
    absorbers: Vec<AbsorberOut>,
    files: Vec<String>,
    #[serde(skip_serializing_if = "Option::is_none")]
    verification: Option<Verification>,
    /// With elastomer absorbers: the peak with absorbers at each study temperature (the curves,
    /// peaks and `peak_after` are at the first).
    #[serde(skip_serializing_if = "Vec::is_empty")]
    temperature_cases: Vec<TemperatureCase>,
    /// With study.random: RMS responses over the band.
    #[serde(skip_serializing_if = "Option::is_none")]
    random: Option<RandomOut>,
    /// Quantity of the curves, peak tables and `value` fields.
    quantity: Quantity,
    /// With study.orders: the response versus speed, crossings and critical-speed margin.
    #[serde(skip_serializing_if = "Option::is_none")]
    speed: Option<SpeedOut>,
    /// With study.measured_frequencies: the computed and the measured (used) frequencies.
    #[serde(skip_serializing_if = "Vec::is_empty")]
    measured_frequencies: Vec<antinode_placement::measured::MeasuredOverride>,
}

/// Check frequencies: `n` geometric steps over the band, the natural frequencies in it and the
/// peak frequencies, sorted, without repeats.
fn verify_frequencies(band: [f64; 2], n: usize, natural: &[f64], peaks: &[f64]) -> Vec<f64> {
    let hi = band[1];
    let lo = band[0].max(1e-3 * hi);
    let mut f: Vec<f64> = (0..n).map(|i| lo * (hi / lo).powf(i as f64 / (n - 1) as f64)).collect();
    f.extend(natural.iter().chain(peaks).copied().filter(|&x| x >= lo && x <= hi));
    f.sort_by(f64::total_cmp);
    f.dedup_by(|a, b| (*a - *b).abs() <= 1e-9 * b.abs());
    f
}

fn verify_case(with_absorbers: bool, points: Vec<VerifyPoint>) -> VerifyCase {
    let max = |g: fn(&VerifyPoint) -> f64| points.iter().map(g).fold(0.0, f64::max);
    VerifyCase {
        with_absorbers,
        max_relative_difference: max(|p| p.relative_difference),
        max_difference_to_peak: max(|p| p.difference_to_peak),
        max_stroke_difference: max(|p| p.stroke_difference),
        max_direct_residual: max(|p| p.direct_residual),
        points,
    }
}

/// Peaks of the largest response over the points in quantity `q` (`curves` already in it),
/// refined between grid neighbours.
fn peaks(sm: &StudyModel, curves: &Curves, links: &[AbsorberLink], q: Quantity) -> Vec<PeakOut> {
    let vals: Vec<f64> = (0..curves.frequency_hz.len())
        .map(|i| curves.response.iter().map(|r| r[i].norm()).fold(0.0, f64::max))
        .collect();
    refined_peaks(&curves.frequency_hz, &vals, |f| sm.response_at(f, links).0 * q.scale_at(f))
        .into_iter()
        .map(|(f, v)| {
            let (receptance, point) = sm.response_at(f, links);
            PeakOut { frequency_hz: f, receptance, value: v, point: sm.response_names[point].clone() }
        })
        .collect()
}

/// `c` with the response points' curves turned into quantity `q` (strokes and forces unchanged).
fn in_quantity(mut c: Curves, q: Quantity) -> Curves {
    for r in &mut c.response {
        for (x, &f) in r.iter_mut().zip(&c.frequency_hz) {
            *x *= q.factor(2.0 * std::f64::consts::PI * f);
        }
    }
    c
}

/// CSV of curves: frequency, then magnitude and phase per response point (before, after), then the
/// absorbers' stroke and force magnitudes (after).
pub fn curves_csv(sm: &StudyModel, before: &Curves, after: Option<&Curves>, absorber_names: &[String]) -> String {
    curves_csv_in(sm, before, after, absorber_names, Quantity::Receptance)
}

/// [`curves_csv`] with the response columns in quantity `q` (the curves already converted).
fn curves_csv_in(
    sm: &StudyModel,
    before: &Curves,
    after: Option<&Curves>,
    absorber_names: &[String],
    q: Quantity,
) -> String {
    let u = per_unit(sm, q);
    let mut s = String::from("frequency_hz");
    for n in &sm.response_names {
        let _ = write!(s, ",{n} before [{u}],{n} before phase [deg]");
        if after.is_some() {
            let _ = write!(s, ",{n} after [{u}],{n} after phase [deg]");
        }
    }
    for n in absorber_names {
        let _ = write!(s, ",{n} stroke [m/N],{n} force [N/N]");
    }
    s.push('\n');
    for i in 0..before.frequency_hz.len() {
        let _ = write!(s, "{:.9e}", before.frequency_hz[i]);
        for p in 0..sm.responses.len() {
            let b = before.response[p][i];
            let _ = write!(s, ",{:.9e},{:.4}", b.norm(), b.arg().to_degrees());
            if let Some(a) = after {
                let v = a.response[p][i];
                let _ = write!(s, ",{:.9e},{:.4}", v.norm(), v.arg().to_degrees());
            }
        }
        if let Some(a) = after {
            for k in 0..absorber_names.len() {
                let _ = write!(s, ",{:.9e},{:.9e}", a.stroke[k][i].norm(), a.spring_force[k][i].norm());
            }
        }
        s.push('\n');
    }
    s
}

/// Points (f, |x|) of each response point's curve.
pub fn magnitude_points(c: &Curves) -> Vec<Vec<(f64, f64)>> {
    c.response.iter().map(|r| c.frequency_hz.iter().zip(r).map(|(&f, x)| (f, x.norm())).collect()).collect()
}

/// The speed sweep's files and report.
struct SpeedFiles {
    report: SpeedOut,
    csv: String,
    response_svg: String,
    interference_svg: String,
}

/// The lowest bending mode against the top speed (once-per-revolution excitation, no gyroscopic
/// stiffening or speed-dependent bearings: the non-rotating estimate).
fn critical_speed(
    l: &crate::pipeline::Loaded,
    system: &System,
    modes: &ModalSolution,
    rpm_range: [f64; 2],
) -> Result<std::result::Result<CriticalSpeed, String>> {
    let mut oriented = modes.clone();
    let insight = mode_insight(&l.structure, system, &mut oriented, &InsightOptions::default())?;
    let Some(r) = insight.modes.iter().position(|m| m.class.kind == ModeKind::Bending) else {
        return Ok(Err("no critical-speed margin: no kept mode is classified as bending".into()));
    };
    let f = oriented.frequency_hz(r);
    let critical_rpm = 60.0 * f;
    let max_rpm = rpm_range[1];
    let margin = (critical_rpm - max_rpm) / max_rpm;
    let inside_range = critical_rpm >= rpm_range[0] && critical_rpm <= max_rpm;
    let note = if inside_range {
        format!(
            "the operating range {}-{} rpm passes through the first bending critical speed {critical_rpm:.0} rpm \
             (mode {}, {f:.2} Hz): running there can make the shaft whirl with large amplitude",
            rpm_range[0],
            max_rpm,
            r + 1
        )
    } else if margin < 0.0 {
        format!(
            "the part runs above its first bending critical speed {critical_rpm:.0} rpm (mode {}, {f:.2} Hz): it \
             must pass through it on every run-up and run-down",
            r + 1
        )
    } else if margin < MARGIN_WARNING {
        format!(
            "the first bending critical speed {critical_rpm:.0} rpm (mode {}, {f:.2} Hz) is only {:.1} % above the \
             top speed; a separation of at least {:.0} % is common practice",
            r + 1,
            100.0 * margin,
            100.0 * MARGIN_WARNING
        )
    } else {
        format!(
            "the first bending critical speed {critical_rpm:.0} rpm (mode {}, {f:.2} Hz) is {:.1} % above the top speed",
            r + 1,
            100.0 * margin
        )
    };
    Ok(Ok(CriticalSpeed {
        mode: r + 1,
        frequency_hz: f,
        critical_rpm,
        max_rpm,
        margin,
        inside_range,
        warning_below: MARGIN_WARNING,
        note: format!(
            "{note}. Estimate from the non-rotating model: gyroscopic effects and speed-dependent bearings are not \
             included."
        ),
    }))
}

/// Response versus speed for every order, before and after the model's absorbers; crossings;
/// critical-speed margin; the CSV and the two plots.
fn speed_section(
    l: &crate::pipeline::Loaded,
    system: &System,
    modes: &ModalSolution,
    sm: &StudyModel,
    q: Quantity,
) -> Result<Option<SpeedFiles>> {
    let Some(range) = sm.rpm_range else { return Ok(None) };
    let rpm = sm.speed_grid();
    let before = sm.sweep(&rpm, &[], q);
    let has_absorbers = !sm.existing.is_empty();
    let after = has_absorbers.then(|| sm.sweep(&rpm, &sm.existing, q));
    let specs: Vec<_> = sm.orders.iter().map(|(_, o)| o.clone()).collect();
    let cross = crossings(&specs, &sm.natural_hz, sm.n_zero_energy, range);
    let (critical, note) = match critical_speed(l, system, modes, range)? {
        Ok(c) => (Some(c), None),
        Err(n) => (None, Some(n)),
    };
    let names: Vec<String> = l.structure.absorbers.iter().map(|a| a.name.clone()).collect();
    let peak_out = |p: &SpeedPeak| SpeedPeakOut {
        rpm: p.rpm,
        frequency_hz: p.frequency_hz,
        value: p.value,
        displacement_m: p.displacement_m,
        point: sm.response_names[p.point].clone(),
    };
    let orders = before
        .iter()
        .enumerate()
        .map(|(k, b)| {
            let a = after.as_ref().map(|a| &a[k]);
            OrderOut {
                name: b.name.clone(),
                order: b.order,
                peak_before: peak_out(&b.peak),
                peak_after: a.map(|a| peak_out(&a.peak)),
                absorbers: a
                    .map(|a| {
                        names
                            .iter()
                            .enumerate()
                            .map(|(i, n)| OrderAbsorberOut {
                                name: n.clone(),
                                max_stroke_m: a.stroke[i].iter().map(|z| z.norm()).fold(0.0, f64::max),
                                max_spring_force_n: a.spring_force[i].iter().map(|z| z.norm()).fold(0.0, f64::max),
                            })
                            .collect()
                    })
                    .unwrap_or_default(),
            }
        })
        .collect();
    // speed.csv: rpm, then per order its frequency and per point magnitude (before, after), then
    // per absorber stroke and force (after).
    let unit = q.motion_unit();
    let mut csv = String::from("rpm");
    for b in &before {
        let _ = write!(csv, ",{} frequency [Hz]", b.name);
        for p in &sm.response_names {
            let _ = write!(csv, ",{} {p} before [{unit}]", b.name);
            if has_absorbers {
                let _ = write!(csv, ",{} {p} after [{unit}]", b.name);
            }
        }
        if has_absorbers {
            for n in &names {
                let _ = write!(csv, ",{} {n} stroke [m],{} {n} force [N]", b.name, b.name);
            }
        }
    }
    csv.push('\n');
    for (i, &n) in rpm.iter().enumerate() {
        let _ = write!(csv, "{n:.6e}");
        for (k, b) in before.iter().enumerate() {
            let _ = write!(csv, ",{:.6e}", sm.orders[k].1.frequency_hz(n));
            for p in 0..sm.responses.len() {
                let _ = write!(csv, ",{:.9e}", b.response[p][i].norm());
                if let Some(a) = &after {
                    let _ = write!(csv, ",{:.9e}", a[k].response[p][i].norm());
                }
            }
            if let Some(a) = &after {
                for j in 0..names.len() {
                    let _ = write!(csv, ",{:.9e},{:.9e}", a[k].stroke[j][i].norm(), a[k].spring_force[j][i].norm());
                }
            }
        }
        csv.push('\n');
    }
    // Response versus speed: the largest over the points, one curve per order and case.
    let largest = |r: &OrderResponse| -> Vec<(f64, f64)> {
        (0..rpm.len()).map(|i| (rpm[i], r.response.iter().map(|x| x[i].norm()).fold(0.0, f64::max))).collect()
    };
    let pb: Vec<Vec<(f64, f64)>> = before.iter().map(largest).collect();
    let pa: Option<Vec<Vec<(f64, f64)>>> = after.as_ref().map(|a| a.iter().map(largest).collect());
    let mut series = Vec::new();
    for (k, b) in before.iter().enumerate() {
        series.push(Series { label: format!("{}, without absorbers", b.name), points: &pb[k], dashed: true });
        if let Some(pa) = &pa {
            series.push(Series { label: format!("{}, with absorbers", b.name), points: &pa[k], dashed: false });
        }
    }
    let markers: Vec<f64> = cross.iter().map(|c| c.rpm).collect();
    let response_svg = curve_svg(
        &format!("Response versus speed: {}", l.structure.title),
        "speed [rev/min]",
        &format!("largest {} over the response points [{unit}]", q.motion()),
        &series,
        &markers,
    )?;
    let mode_lines: Vec<(usize, f64)> =
        (sm.n_zero_energy..sm.natural_hz.len()).map(|r| (r + 1, sm.natural_hz[r])).collect();
    let rays: Vec<(String, f64)> = specs.iter().map(|o| (o.name.clone(), o.order)).collect();
    let points: Vec<(f64, f64)> = cross.iter().map(|c| (c.rpm, c.frequency_hz)).collect();
    let interference_svg =
        interference_svg(&format!("Interference chart: {}", l.structure.title), range, &mode_lines, &rays, &points)?;
    Ok(Some(SpeedFiles {
        report: SpeedOut {
            rpm_range: range,
            quantity: q,
            speeds_evaluated: rpm.len(),
            orders,
            crossings: cross,
            critical_speed: critical,
            critical_speed_note: note,
        },
        csv,
        response_svg,
        interference_svg,
    }))
}

pub fn run(o: &Options) -> Result<()> {
    let (path, json, out) = (o.model.as_path(), o.json, o.out.clone());
    let l = load(path)?;
    let Some(study) = l.structure.study.clone() else {
        bail!("{}: the model has no study block (band, excitation, response points)", path.display());
    };
    if study.excitation.is_empty() && study.base.is_none() {
        bail!(
            "{}: the study has no excitation in study.excitation: respond needs at least one harmonic force or a base excitation \
             (study.random is evaluated beside it)",
            path.display()
        );
    }
    let progress = Progress::new();
    progress.stage("assembling");
    let (system, zero) = assemble_checked(&l, false)?;
    let (modes, measured_frequencies) = study_modes(&l, &system, zero, &progress)?;
    progress.stage("response");
    let mut sm = StudyModel::build(&l.structure, &system, &modes, &study, false)
        .with_context(|| format!("in {}", path.display()))?;
    let mut temperature_cases = Vec::new();
    if sm.has_elastomers() {
        for &t in &study.temperatures_c {
            sm.temperature_c = Some(t);
            let p = sm.peak(study.band_hz[0], study.band_hz[1], &sm.existing);
            temperature_cases.push(TemperatureCase {
                temperature_c: t,
                peak_after: p.receptance,
                peak_frequency_hz: p.frequency_hz,
            });
        }
        sm.temperature_c = study.temperatures_c.first().copied();
    }
    let sm = sm;
    let q = o.quantity;
    let before = in_quantity(sm.curves(&sm.grid_hz, &[]), q);
    let has_absorbers = !sm.existing.is_empty();
    let after = has_absorbers.then(|| in_quantity(sm.curves(&sm.grid_hz, &sm.existing), q));
    let names: Vec<String> = l.structure.absorbers.iter().map(|a| a.name.clone()).collect();
    let mut outputs = Outputs::create(path, out.as_deref())?;
    let csv_path = outputs.path("response.csv");
    let svg_path = outputs.path("frf.svg");
    let json_path = outputs.path("response.json");
    let pb = magnitude_points(&before);
    let pa = after.as_ref().map(magnitude_points);
    let mut series = Vec::new();
    for (i, n) in sm.response_names.iter().enumerate() {
        series.push(Series { label: format!("{n}, without absorbers"), points: &pb[i], dashed: true });
        if let Some(pa) = &pa {
            series.push(Series { label: format!("{n}, with absorbers"), points: &pa[i], dashed: false });
        }
    }
    let markers: Vec<f64> =
        sm.natural_hz.iter().copied().filter(|&f| f >= study.band_hz[0] && f <= study.band_hz[1]).collect();
    let word = q.word();
    let svg = frf_svg(
        &format!("{}{}: {}", word[..1].to_uppercase(), &word[1..], l.structure.title),
        &format!("{} {} [{}]", q.motion(), per_words(&sm), per_unit(&sm, q)),
        &series,
        &markers,
    )?;
    let peaks_before = peaks(&sm, &before, &[], q);
    let peaks_after = after.as_ref().map(|a| peaks(&sm, a, &sm.existing, q)).unwrap_or_default();
    let speed = if sm.orders.is_empty() {
        None
    } else {
        progress.stage("orders over the speed range");
        speed_section(&l, &system, &modes, &sm, q)?
    };
    let mut files = vec![csv_path.clone(), svg_path.clone(), json_path.clone()];
    if speed.is_some() {
        files.extend(["speed.csv", "speed.svg", "interference.svg"].iter().map(|n| outputs.path(n)));
    }
    let verification = match o.verify {
        None => None,
        Some(n) => {
            progress.stage("direct check (sparse complex LU)");
            let peak_hz: Vec<f64> = peaks_before.iter().chain(&peaks_after).map(|p| p.frequency_hz).collect();
            let freq = verify_frequencies(study.band_hz, n, &sm.natural_hz, &peak_hz);
            let mut cases = vec![verify_case(false, sm.verify(&system, &modes, &freq, &[])?)];
            if has_absorbers {
                cases.push(verify_case(true, sm.verify(&system, &modes, &freq, &sm.existing)?));
            }
            Some(Verification {
                method: "sparse LU of K(1+i eta) + i omega C - omega^2 M with absorber DOFs (faer)",
                frequencies_checked: freq.len(),
                max_relative_difference: cases.iter().map(|c| c.max_relative_difference).fold(0.0, f64::max),
                cases,
            })
        }
    };
    let report = RespondReport {
        model: path.display().to_string(),
        title: l.structure.title.clone(),
        band_hz: study.band_hz,
        modes_kept: modes.n_modes(),
        response_points: sm.response_names.clone(),
        reference_force_n: sm.reference_force,
        peak_before: sm.peak(study.band_hz[0], study.band_hz[1], &[]).receptance,
        peak_after: has_absorbers.then(|| sm.peak(study.band_hz[0], study.band_hz[1], &sm.existing).receptance),
        peaks_before,
        peaks_after,
        absorbers: after
            .as_ref()
            .map(|a| {
                names
                    .iter()
                    .enumerate()
                    .map(|(k, n)| AbsorberOut {
                        name: n.clone(),
                        max_stroke_m_per_n: a.stroke[k].iter().map(|z| z.norm()).fold(0.0, f64::max),
                        max_spring_force_n_per_n: a.spring_force[k].iter().map(|z| z.norm()).fold(0.0, f64::max),
                    })
                    .collect()
            })
            .unwrap_or_default(),
        files: files.iter().map(|p| p.display().to_string()).collect(),
        verification,
        temperature_cases,
        excitation: match &sm.base {
            None => "forces (responses per newton of the largest force)".into(),
            Some(b) => format!(
                "base acceleration along [{:.6}, {:.6}, {:.6}], {} displacement (responses per m/s^2 of base \
                 acceleration)",
                b.direction.unit[0],
                b.direction.unit[1],
                b.direction.unit[2],
                if b.absolute { "absolute" } else { "relative" }
            ),
        },
        random: (!sm.random.is_empty() || sm.base.as_ref().is_some_and(|b| !b.psd.is_empty())).then(|| RandomOut {
            rms_before_m: sm.random_rms(&[]),
            rms_after_m: has_absorbers.then(|| sm.random_rms(&sm.existing)),
        }),
        quantity: q,
        speed: speed.as_ref().map(|s| s.report.clone()),
        measured_frequencies,
    };
    outputs.write("response.csv", curves_csv_in(&sm, &before, after.as_ref(), &names, q).as_bytes())?;
    if let Some(sp) = &speed {
        outputs.write("speed.csv", sp.csv.as_bytes())?;
        outputs.write("speed.svg", sp.response_svg.as_bytes())?;
        outputs.write("interference.svg", sp.interference_svg.as_bytes())?;
    }
    outputs.write("frf.svg", svg.as_bytes())?;
    outputs.write("response.json", serde_json::to_string_pretty(&report)?.as_bytes())?;
    outputs.commit()?;
    drop(progress);
    if json {
        return print_json(&report);
    }
    println!(
        "{}: band {}-{} Hz, {} modes kept (up to {:.1} Hz) with residual flexibility",
        report.model, study.band_hz[0], study.band_hz[1], report.modes_kept, study.max_mode_frequency_hz
    );
    print_measured(&report.measured_frequencies);
    let rows = |p: &[PeakOut]| -> Vec<Vec<String>> {
        p.iter().map(|k| vec![format!("{:.4}", k.frequency_hz), format!("{:.4e}", k.value), k.point.clone()]).collect()
    };
    let value_head = format!("{word} [{}]", per_unit(&sm, q));
    println!("peaks without absorbers ({}):", per_words(&sm));
    println!("{}", table(&["frequency [Hz]", &value_head, "point"], rows(&report.peaks_before)));
    if has_absorbers {
        println!("peaks with the model's {} absorber(s):", names.len());
        println!("{}", table(&["frequency [Hz]", &value_head, "point"], rows(&report.peaks_after)));
        let arows = report
            .absorbers
            .iter()
            .map(|a| {
                vec![
                    a.name.clone(),
                    format!("{:.4e}", a.max_stroke_m_per_n),
                    format!("{:.4}", a.max_spring_force_n_per_n),
                ]
            })
            .collect();
        let (stroke_head, force_head) = if sm.base.is_some() {
            ("max stroke [m/(m/s^2)]", "max spring force [N/(m/s^2)]")
        } else {
            ("max stroke [m/N]", "max spring force [N/N]")
        };
        println!("{}", table(&["absorber", stroke_head, force_head], arows));
    } else {
        println!("the model has no absorbers: only the bare structure is shown");
    }
    if let Some(r) = &report.random {
        println!("random excitation: RMS displacement over the band [m]:");
        let rows = sm
            .response_names
            .iter()
            .enumerate()
            .map(|(i, n)| {
                let mut row = vec![n.clone(), format!("{:.4e}", r.rms_before_m[i])];
                if let Some(a) = &r.rms_after_m {
                    row.push(format!("{:.4e}", a[i]));
                }
                row
            })
            .collect();
        let head: &[&str] =
            if r.rms_after_m.is_some() { &["point", "without absorbers", "with absorbers"] } else { &["point", "RMS"] };
        println!("{}", table(head, rows));
    }
    if !report.temperature_cases.is_empty() {
        println!("elastomer absorbers, peak with absorbers per temperature (curves at the first):");
        let rows = report
            .temperature_cases
            .iter()
            .map(|c| {
                vec![
                    format!("{}", c.temperature_c),
                    format!("{:.4}", c.peak_frequency_hz),
                    format!("{:.4e}", c.peak_after),
                ]
            })
            .collect();
        println!("{}", table(&["temperature [°C]", "frequency [Hz]", "receptance [m/N]"], rows));
    }
    if let Some(v) = &report.verification {
        println!("direct check at {} frequencies ({}):", v.frequencies_checked, v.method);
        let rows = v
            .cases
            .iter()
            .map(|c| {
                vec![
                    if c.with_absorbers { "with absorbers" } else { "without absorbers" }.to_string(),
                    format!("{:.2e}", c.max_relative_difference),
                    format!("{:.2e}", c.max_difference_to_peak),
                    format!("{:.2e}", c.max_stroke_difference),
                    format!("{:.1e}", c.max_direct_residual),
                ]
            })
            .collect();
        println!(
            "{}",
            table(
                &[
                    "case",
                    "max relative difference",
                    "max difference / peak",
                    "stroke difference / peak",
                    "LU residual"
                ],
                rows
            )
        );
    }
    if let Some(sp) = &report.speed {
        print_speed(sp, q);
    }
    println!("wrote {}", report.files.join(", "));
    println!("{CAUTION}");
    Ok(())
}

fn print_speed(sp: &SpeedOut, q: Quantity) {
    let unit = q.motion_unit();
    println!(
        "running-speed orders over {}-{} rpm ({} speeds), largest {} over the response points:",
        sp.rpm_range[0],
        sp.rpm_range[1],
        sp.speeds_evaluated,
        q.motion()
    );
    let after = sp.orders.iter().any(|o| o.peak_after.is_some());
    let rows = sp
        .orders
        .iter()
        .map(|o| {
            let mut row = vec![
                o.name.clone(),
                format!("{:.0}", o.peak_before.rpm),
                format!("{:.2}", o.peak_before.frequency_hz),
                format!("{:.4e}", o.peak_before.value),
                o.peak_before.point.clone(),
            ];
            if let Some(a) = &o.peak_after {
                row.extend([format!("{:.0}", a.rpm), format!("{:.4e}", a.value)]);
            }
            row
        })
        .collect();
    let peak_head = format!("peak [{unit}]");
    let after_head = format!("with absorbers [{unit}]");
    let mut head = vec!["order", "at rpm", "frequency [Hz]", peak_head.as_str(), "point"];
    if after {
        head.extend(["with absorbers at rpm", after_head.as_str()]);
    }
    println!("{}", table(&head, rows));
    if sp.crossings.is_empty() {
        println!("no order meets a natural frequency inside the speed range");
    } else {
        println!("crossings of orders with natural frequencies inside the speed range:");
        let rows = sp
            .crossings
            .iter()
            .map(|c| {
                vec![
                    c.order_name.clone(),
                    format!("{}", c.mode),
                    format!("{:.3}", c.frequency_hz),
                    format!("{:.0}", c.rpm),
                ]
            })
            .collect();
        println!("{}", table(&["order", "mode", "frequency [Hz]", "speed [rpm]"], rows));
    }
    match (&sp.critical_speed, &sp.critical_speed_note) {
        (Some(c), _) => {
            let flag = if c.inside_range || c.margin < c.warning_below { "WARNING: " } else { "" };
            println!("critical speed: {flag}{}", c.note);
        }
        (None, Some(n)) => println!("critical speed: {n}"),
        (None, None) => {}
    }
}

/// What responses are per: a newton of the largest force, or a m/s² of base acceleration.
fn per_words(sm: &StudyModel) -> &'static str {
    if sm.base.is_some() { "per m/s^2 of base acceleration" } else { "per newton of excitation" }
}

/// The unit of a response value: the quantity per newton, or per m/s² of base acceleration.
fn per_unit(sm: &StudyModel, q: Quantity) -> String {
    if sm.base.is_some() { format!("({})/(m/s^2)", q.motion_unit()) } else { q.unit_per_newton().to_string() }
}
