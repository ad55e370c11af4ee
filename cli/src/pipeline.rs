//! Shared steps of the commands: load and check the model, assemble, compute modes, output folder,
//! progress display.

use std::path::{Path, PathBuf};
use std::time::Duration;

use antinode_mesh::{Model, Structure, load_model, validate};
use antinode_solver::{
    AssemblyOptions, EigenParams, ModalSolution, ModeRequest, System, assemble, check_zero_energy,
    solve_modes,
};
use anyhow::{Context, Result, bail};
use indicatif::{ProgressBar, ProgressStyle};

/// A loaded, checked model.
pub struct Loaded {
    /// The file.
    pub path: PathBuf,
    /// As written.
    pub model: Model,
    /// Checked and resolved.
    pub structure: Structure,
}

/// Reads and validates a model file; errors name the file.
pub fn load(path: &Path) -> Result<Loaded> {
    let model = load_model(path)?;
    let structure =
        validate(&model).with_context(|| format!("invalid model {}", path.display()))?;
    Ok(Loaded {
        path: path.to_path_buf(),
        model,
        structure,
    })
}

/// Assembles and checks zero-energy motions against the supports; returns the system and the count.
pub fn assemble_checked(l: &Loaded, include_absorbers: bool) -> Result<(System, usize)> {
    let system = assemble(&l.structure, AssemblyOptions { include_absorbers })
        .with_context(|| format!("cannot assemble {}", l.path.display()))?;
    let zero = check_zero_energy(&l.structure, &system)
        .with_context(|| format!("in {}", l.path.display()))?;
    Ok((system, zero))
}

/// Modes for the study: every mode up to the study's `max_mode_frequency_hz`.
pub fn study_modes(l: &Loaded, system: &System, progress: &Progress) -> Result<ModalSolution> {
    let Some(study) = &l.structure.study else {
        bail!(
            "{}: the model has no study block (band, excitation, response points)",
            l.path.display()
        );
    };
    progress.stage(&format!(
        "computing modes up to {:.1} Hz",
        study.max_mode_frequency_hz
    ));
    let sol = solve_modes(
        system,
        ModeRequest::Band {
            low_hz: 0.0,
            high_hz: study.max_mode_frequency_hz,
        },
        &EigenParams::default(),
    )
    .with_context(|| format!("modes of {}", l.path.display()))?;
    Ok(sol)
}

/// The output folder: `out` if given, else `out/<model file stem>`; created if missing.
pub fn out_dir(model: &Path, out: Option<&Path>) -> Result<PathBuf> {
    let dir = match out {
        Some(d) => d.to_path_buf(),
        None => {
            let stem = model
                .file_stem()
                .map(|s| s.to_string_lossy().into_owned())
                .unwrap_or_else(|| "model".into());
            PathBuf::from("out").join(stem)
        }
    };
    std::fs::create_dir_all(&dir)
        .with_context(|| format!("cannot create output folder {}", dir.display()))?;
    Ok(dir)
}

/// A spinner on standard error for long steps (hidden when standard error is not a terminal).
pub struct Progress(ProgressBar);

impl Progress {
    /// Starts a spinner.
    pub fn new() -> Self {
        let bar = ProgressBar::new_spinner();
        bar.set_style(
            ProgressStyle::with_template("{spinner} {elapsed} {msg}")
                .unwrap_or_else(|_| ProgressStyle::default_spinner()),
        );
        bar.enable_steady_tick(Duration::from_millis(120));
        Self(bar)
    }

    /// Shows what is being done.
    pub fn stage(&self, what: &str) {
        self.0.set_message(what.to_string());
    }
}

impl Drop for Progress {
    fn drop(&mut self) {
        self.0.finish_and_clear();
    }
}

/// Writes bytes atomically, naming the file on failure.
pub fn write_file(path: &Path, bytes: &[u8]) -> Result<()> {
    antinode_mesh::write_atomic(path, bytes)
        .with_context(|| format!("cannot write {}", path.display()))
}

/// The caution printed with results that engineers may act on.
pub const CAUTION: &str = "Caution: these are predictions of a linear model. A shaft running near a bending critical \
speed can fail violently, and elastomer absorber springs fatigue, creep and stiffen or soften with temperature and \
age. Confirm frequencies and absorber performance by test, and follow the applicable codes and licensed engineering \
practice before relying on these numbers.";
