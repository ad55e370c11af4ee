//! Benchmark of the absorber design optimiser (issue 8): the screening map and the robust design.
//!
//! Model: a pinned-pinned steel tube shaft (outer diameter 80 mm, wall 4 mm, 4 m), beam elements,
//! force 100 N in z at 0.1 L, response points at 0.1 L, 0.37 L and 0.71 L in z, band [5, 400] Hz,
//! modal damping 1 %.
//!
//! a. Screening: the shaft with 10,000 elements, its 20 lowest modes, every node from 0.05 % to
//!    99.95 % of the length a candidate in z (~10k candidates): `ModalModel::build` of the
//!    candidate coordinates (no residual) and `screen` of μ per kg on all 20 modes. Also 1k
//!    candidates and 5 modes. Target: 10k × 20 under 0.2 s.
//! b. Robust design: the shaft with 2,000 elements (~2k candidates: every node from 0.05 % to
//!    99.95 %), 4 absorbers of 0.75 kg on the auto targets, `uncertainty` ±5 % frequency and ±10 %
//!    stiffness on a 3 × 3 grid (9 scenarios): `StudyModel::build` with candidates and `design`,
//!    timed apart (the modes are solved once, untimed). Also 1 and 2 absorbers, and 500 candidates.
//!    Target: 4 absorbers, 2k candidates, 9 scenarios under 5 s on 2 cores.
//!
//! Each measurement is repeated N times (`ANTINODE_BENCH_REPS`, default 3): median and minimum.
//! Run: `cargo bench -p antinode --bench optimiser`. Figures: `docs/benchmarks.md`.

use antinode::mesh::{Structure, parse_model, validate};
use antinode::placement::screening::screen;
use antinode::placement::{StudyModel, design};
use antinode::solver::{
    AssemblyOptions, Coordinate, EigenParams, ModalModel, ModalSolution, ModeRequest, System, assemble, solve_modes,
};
use serde_json::json;

mod common;
use common::{Res, ms, repeat, reps};

fn shaft(elements: usize, count: usize, uncertainty: bool, from: f64, to: f64) -> Res<Structure> {
    let at = |f: f64| json!({"line": "shaft", "at": f});
    let mut d = json!({
        "targets": "auto", "count": count, "mass_each": 0.75,
        "candidates": [{"line": "shaft", "from": from, "to": to}], "directions": ["z"], "objective": "peak"
    });
    if uncertainty {
        d["uncertainty"] = json!({"frequency_scatter": 0.05, "stiffness_scatter": 0.1});
    }
    let text = json!({
        "title": "Benchmark: pinned-pinned steel tube shaft",
        "materials": {"steel": {"youngs_modulus": 2.1e11, "poisson_ratio": 0.3, "density": 7850.0}},
        "sections": {"tube": {"circular_tube": {"outer_diameter": 0.08, "wall_thickness": 0.004}}},
        "lines": [{"name": "shaft", "from": [0.0, 0.0, 0.0], "to": [4.0, 0.0, 0.0],
                   "elements": elements, "section": "tube", "material": "steel"}],
        "supports": [{"at": at(0.0), "fixed": ["ux", "uy", "uz", "rx"]}, {"at": at(1.0), "fixed": ["uy", "uz"]}],
        "study": {
            "band_hz": [5.0, 400.0],
            "excitation": [{"at": at(0.1), "direction": "z", "amplitude": 100.0}],
            "response_points": [
                {"name": "drive point", "at": at(0.1), "direction": "z"},
                {"name": "0.37 L", "at": at(0.37), "direction": "z"},
                {"name": "0.71 L", "at": at(0.71), "direction": "z"}
            ],
            "modal_damping_ratio": 0.01,
            "absorber_design": d
        }
    })
    .to_string();
    Ok(validate(&parse_model(&text, std::path::Path::new("bench.json"))?)?)
}

fn solved(s: &Structure, request: ModeRequest) -> Res<(System, ModalSolution)> {
    let sys = assemble(s, AssemblyOptions::default())?;
    let sol = solve_modes(&sys, request, &EigenParams::default())?;
    Ok((sys, sol))
}

fn screening(n: usize) -> Res<()> {
    let s = shaft(10_000, 1, false, 0.0005, 0.9995)?;
    let (sys, sol) = solved(&s, ModeRequest::Lowest(20))?;
    let nodes = s.study.as_ref().and_then(|st| st.design.as_ref()).map(|d| d.candidates.clone()).ok_or("design")?;
    println!(
        "## a. Screening (shaft of 10,000 elements, {} modes, {} candidate nodes in z)\n",
        sol.n_modes(),
        nodes.len()
    );
    println!(
        "| candidates | modes | build coordinates [ms] (median / min) | screen [ms] (median / min) | total [ms] |"
    );
    println!("|---|---|---|---|---|");
    for cands in [1_000, nodes.len()] {
        for modes in [5, 20] {
            let step = nodes.len() / cands;
            let coords: Vec<Coordinate> = nodes
                .iter()
                .step_by(step.max(1))
                .take(cands)
                .map(|&node| Coordinate { node, direction: [0.0, 0.0, 1.0], rotational: false })
                .collect();
            let (bm, bmin, model) = repeat(n, || Ok(ModalModel::build(&sys, &sol, &coords, 0.01, false)?))?;
            let idx: Vec<usize> = (0..coords.len()).collect();
            let targets: Vec<usize> = (0..modes).collect();
            let others: Vec<usize> = (modes..sol.n_modes()).collect();
            let (sm_, smin, rows) = repeat(n, || Ok(screen(&model, &idx, &targets, &others)))?;
            assert_eq!(rows.len(), coords.len());
            println!(
                "| {} | {modes} | {} / {} | {} / {} | {} |",
                coords.len(),
                ms(bm),
                ms(bmin),
                ms(sm_),
                ms(smin),
                ms(bm + sm_)
            );
        }
    }
    println!();
    Ok(())
}

fn robust(n: usize) -> Res<()> {
    println!("## b. Robust design (shaft of 2,000 elements, 9 scenarios)\n");
    println!(
        "| candidates | absorbers | scenarios | modes kept | StudyModel::build [ms] | design [ms] (median / min) | peak change [dB] nominal / worst |"
    );
    println!("|---|---|---|---|---|---|---|");
    for (cands, count) in [(2000usize, 1usize), (2000, 2), (2000, 4), (500, 4)] {
        let (from, to) = if cands == 2000 { (0.0005, 0.9995) } else { (0.125, 0.375) };
        let s = shaft(2_000, count, true, from, to)?;
        let study = s.study.clone().ok_or("study")?;
        let spec = study.design.clone().ok_or("design")?;
        let (sys, sol) = solved(&s, ModeRequest::Band { low_hz: 0.0, high_hz: study.max_mode_frequency_hz })?;
        let (bm, _, sm) = repeat(n, || Ok(StudyModel::build(&s, &sys, &sol, &study, true)?))?;
        let (dm, dmin, d) = repeat(n, || Ok(design(&sm, &spec, &s)?))?;
        println!(
            "| {} | {count} | {} | {} | {} | {} / {} | {:.2} / {:.2} |",
            sm.candidates.len(),
            d.scenarios.len(),
            sol.n_modes(),
            ms(bm),
            ms(dm),
            ms(dmin),
            20.0 * (d.after.receptance / d.before.receptance).log10(),
            20.0 * (d.worst_case_after / d.worst_case_before).log10()
        );
    }
    println!();
    Ok(())
}

fn main() -> Res<()> {
    let n = reps(3);
    println!("threads: {}, repetitions: {n}\n", rayon::current_num_threads());
    match std::env::var("ANTINODE_BENCH_ONLY").as_deref() {
        Ok("screening") => screening(n),
        Ok("robust") => robust(n),
        _ => {
            screening(n)?;
            robust(n)
        }
    }
}
