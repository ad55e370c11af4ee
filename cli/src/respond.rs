//! `antinode respond`: the study's response with and without the model's absorbers.

use std::fmt::Write as _;
use std::path::PathBuf;

use antinode_placement::{Curves, StudyModel, VerifyPoint};
use antinode_solver::{AbsorberLink, refined_peaks};
use anyhow::{Context, Result, bail};
use serde::Serialize;

use crate::output::{print_json, table};
use crate::pipeline::{CAUTION, Outputs, Progress, assemble_checked, load, study_modes};
use crate::plot::{Series, frf_svg};

#[derive(Serialize)]
pub struct PeakOut {
    pub frequency_hz: f64,
    /// Largest displacement over the response points per newton, in m/N.
    pub receptance: f64,
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
}

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

/// Peaks of the largest response over the points, refined between grid neighbours.
pub fn peaks(sm: &StudyModel, curves: &Curves, links: &[AbsorberLink]) -> Vec<PeakOut> {
    let vals: Vec<f64> = (0..curves.frequency_hz.len())
        .map(|i| curves.response.iter().map(|r| r[i].norm()).fold(0.0, f64::max))
        .collect();
    refined_peaks(&curves.frequency_hz, &vals, |f| sm.response_at(f, links).0)
        .into_iter()
        .map(|(f, v)| PeakOut {
            frequency_hz: f,
            receptance: v,
            point: sm.response_names[sm.response_at(f, links).1].clone(),
        })
        .collect()
}

/// CSV of curves: frequency, then magnitude and phase per response point (before, after), then the
/// absorbers' stroke and force magnitudes (after).
pub fn curves_csv(sm: &StudyModel, before: &Curves, after: Option<&Curves>, absorber_names: &[String]) -> String {
    let mut s = String::from("frequency_hz");
    for n in &sm.response_names {
        let _ = write!(s, ",{n} before [m/N],{n} before phase [deg]");
        if after.is_some() {
            let _ = write!(s, ",{n} after [m/N],{n} after phase [deg]");
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

pub fn run(o: &Options) -> Result<()> {
    let (path, json, out) = (o.model.as_path(), o.json, o.out.clone());
    let l = load(path)?;
    let Some(study) = l.structure.study.clone() else {
        bail!("{}: the model has no study block (band, excitation, response points)", path.display());
    };
    if study.excitation.is_empty() {
        bail!(
            "{}: the study has no excitation in study.excitation: respond needs at least one harmonic force \
             (study.random is evaluated beside it)",
            path.display()
        );
    }
    let progress = Progress::new();
    progress.stage("assembling");
    let (system, zero) = assemble_checked(&l, false)?;
    let modes = study_modes(&l, &system, zero, &progress)?;
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
    let before = sm.curves(&sm.grid_hz, &[]);
    let has_absorbers = !sm.existing.is_empty();
    let after = has_absorbers.then(|| sm.curves(&sm.grid_hz, &sm.existing));
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
    let svg =
        frf_svg(&format!("Receptance: {}", l.structure.title), "displacement per newton [m/N]", &series, &markers)?;
    let peaks_before = peaks(&sm, &before, &[]);
    let peaks_after = after.as_ref().map(|a| peaks(&sm, a, &sm.existing)).unwrap_or_default();
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
        files: [&csv_path, &svg_path, &json_path].iter().map(|p| p.display().to_string()).collect(),
        verification,
        temperature_cases,
        random: (!sm.random.is_empty()).then(|| RandomOut {
            rms_before_m: sm.random_rms(&[]),
            rms_after_m: has_absorbers.then(|| sm.random_rms(&sm.existing)),
        }),
    };
    outputs.write("response.csv", curves_csv(&sm, &before, after.as_ref(), &names).as_bytes())?;
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
    let rows = |p: &[PeakOut]| -> Vec<Vec<String>> {
        p.iter()
            .map(|k| vec![format!("{:.4}", k.frequency_hz), format!("{:.4e}", k.receptance), k.point.clone()])
            .collect()
    };
    println!("peaks without absorbers (per newton of excitation):");
    println!("{}", table(&["frequency [Hz]", "receptance [m/N]", "point"], rows(&report.peaks_before)));
    if has_absorbers {
        println!("peaks with the model's {} absorber(s):", names.len());
        println!("{}", table(&["frequency [Hz]", "receptance [m/N]", "point"], rows(&report.peaks_after)));
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
        println!("{}", table(&["absorber", "max stroke [m/N]", "max spring force [N/N]"], arows));
    } else {
        println!("the model has no absorbers: only the bare structure is shown");
    }
    if let Some(r) = &report.random {
        println!("random forces: RMS displacement over the band [m]:");
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
    println!("wrote {}", report.files.join(", "));
    println!("{CAUTION}");
    Ok(())
}
