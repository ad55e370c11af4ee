//! Timing helpers shared by the benchmark binaries.
#![allow(dead_code)]

use std::error::Error;
use std::time::{Duration, Instant};

/// A benchmark's result type.
pub type Res<T> = Result<T, Box<dyn Error>>;

/// Repetitions per timed stage: `ANTINODE_BENCH_REPS`, else `default`.
pub fn reps(default: usize) -> usize {
    std::env::var("ANTINODE_BENCH_REPS")
        .ok()
        .and_then(|s| s.trim().parse::<usize>().ok())
        .filter(|&n| n > 0)
        .unwrap_or(default)
}

/// Median and minimum of `n` runs of `f`, and its last result.
pub fn repeat<T>(n: usize, mut f: impl FnMut() -> Res<T>) -> Res<(Duration, Duration, T)> {
    let mut samples = Vec::with_capacity(n);
    let mut last = None;
    for _ in 0..n {
        let t = Instant::now();
        last = Some(f()?);
        samples.push(t.elapsed());
    }
    samples.sort();
    let median = if n % 2 == 1 { samples[n / 2] } else { (samples[n / 2 - 1] + samples[n / 2]) / 2 };
    Ok((median, samples[0], last.ok_or("no repetition ran")?))
}

/// A duration in milliseconds, one decimal.
pub fn ms(d: Duration) -> String {
    format!("{:.1}", d.as_secs_f64() * 1e3)
}
