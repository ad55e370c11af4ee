//! Shared steps of the commands: load and check the model, assemble, compute modes, output folder,
//! progress display.

use std::path::{Path, PathBuf};
use std::sync::OnceLock;
use std::sync::atomic::{AtomicBool, Ordering};
use std::time::Duration;

use antinode_mesh::{Model, NodalVectors, Structure, load_model, validate_in};
use antinode_placement::measured::{MeasuredOverride, apply_measured};
use antinode_solver::{
    AssemblyOptions, EigenParams, GIB, MemoryEstimate, ModalSolution, ModeRequest, System, assemble, check_zero_energy,
    memory_estimate, solve_modes,
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

/// The folder of a model file, against which its relative mesh file names are read.
pub fn model_folder(path: &Path) -> &Path {
    path.parent().unwrap_or(Path::new(""))
}

/// Reads and validates a model file (mesh files relative to its folder); errors name the file.
pub fn load(path: &Path) -> Result<Loaded> {
    let model = load_model(path)?;
    let structure =
        validate_in(&model, model_folder(path)).with_context(|| format!("invalid model {}", path.display()))?;
    Ok(Loaded { path: path.to_path_buf(), model, structure })
}

/// Modes the memory estimate assumes when the count is not known before the solve (a band
/// request, the study's modes): the default count of `modes`.
pub const PLANNED_MODES: usize = 20;

/// Assembles and checks zero-energy motions against the supports; returns the system and the count.
/// Refuses a model whose eigen solution would need more memory than available (see
/// [`memory_guard`]), with [`PLANNED_MODES`] modes, before any numeric factorization.
pub fn assemble_checked(l: &Loaded, include_absorbers: bool) -> Result<(System, usize)> {
    let (system, zero, _) = assemble_checked_for(l, include_absorbers, PLANNED_MODES)?;
    Ok((system, zero))
}

/// As [`assemble_checked`], with the memory estimate made for `modes` modes; also returns it.
pub fn assemble_checked_for(
    l: &Loaded,
    include_absorbers: bool,
    modes: usize,
) -> Result<(System, usize, MemoryEstimate)> {
    let system = assemble(&l.structure, AssemblyOptions { include_absorbers })
        .with_context(|| format!("cannot assemble {}", l.path.display()))?;
    let estimate = memory_estimate(&system, modes, EigenParams::default().block_size);
    memory_guard(&estimate).with_context(|| format!("{} is too large for this machine", l.path.display()))?;
    let zero = check_zero_energy(&l.structure, &system).with_context(|| format!("in {}", l.path.display()))?;
    Ok((system, zero, estimate))
}

/// Set by `--memory-limit GIB`: the memory the solve may use, in bytes.
static MEMORY_LIMIT: OnceLock<u64> = OnceLock::new();

/// Sets the memory limit of [`memory_guard`] (`--memory-limit`), in GiB.
pub fn set_memory_limit(gib: f64) {
    let _ = MEMORY_LIMIT.set((gib * GIB) as u64);
}

/// Memory available to a new process: `MemAvailable` of /proc/meminfo, in bytes (`None` where the
/// file is missing or unreadable, e.g. on systems other than Linux).
fn memory_available() -> Option<u64> {
    let text = std::fs::read_to_string("/proc/meminfo").ok()?;
    let line = text.lines().find(|l| l.starts_with("MemAvailable:"))?;
    let mut words = line.split_whitespace().skip(1);
    let kib: u64 = words.next()?.parse().ok()?;
    (words.next() == Some("kB")).then_some(kib * 1024)
}

/// Fails when `estimate` exceeds the memory limit (`--memory-limit`, else the memory available);
/// where neither is known the check is skipped with a note on standard error.
pub fn memory_guard(estimate: &MemoryEstimate) -> Result<()> {
    let (limit, what) = match MEMORY_LIMIT.get() {
        Some(&l) => (l, "the limit given by --memory-limit"),
        None => match memory_available() {
            Some(a) => (a, "the memory available (MemAvailable in /proc/meminfo)"),
            None => {
                eprintln!(
                    "note: the memory available is unknown (/proc/meminfo unreadable); the memory estimate of {} is \
                     not checked (give --memory-limit GIB to check it)",
                    estimate.describe()
                );
                return Ok(());
            }
        },
    };
    if estimate.total_bytes > limit {
        bail!(
            "the eigen solution would need about {} but {what} is {:.3} GiB; coarsen the mesh (fewer nodes), ask for \
             fewer modes, or give --memory-limit GIB if more memory is really free",
            estimate.describe(),
            limit as f64 / GIB
        );
    }
    Ok(())
}

/// Eigensolver settings for a checked model: the zero-energy count `zero` from
/// [`assemble_checked`] is passed on when the supports determined it (so the solver skips
/// re-deriving it).
pub fn eigen_params(l: &Loaded, zero: usize) -> EigenParams {
    EigenParams { zero_energy_modes: l.structure.expected_rigid_body_modes().map(|_| zero), ..EigenParams::default() }
}

/// Fails when `sol` holds more zero-frequency modes than the supports allow.
pub fn confirm_zero_energy(l: &Loaded, system: &System, sol: &ModalSolution) -> Result<()> {
    antinode_solver::confirm_zero_energy(&l.structure, system, sol).with_context(|| format!("in {}", l.path.display()))
}

/// Modes for the study: every mode up to the study's `max_mode_frequency_hz`, with the study's
/// measured frequencies in place of the computed ones (returned as applied; their warnings are
/// printed).
pub fn study_modes(
    l: &Loaded,
    system: &System,
    zero: usize,
    progress: &Progress,
) -> Result<(ModalSolution, Vec<MeasuredOverride>)> {
    let Some(study) = &l.structure.study else {
        bail!("{}: the model has no study block (band, excitation, response points)", l.path.display());
    };
    progress.stage(&format!("computing modes up to {:.1} Hz", study.max_mode_frequency_hz));
    let sol = solve_modes(
        system,
        ModeRequest::Band { low_hz: 0.0, high_hz: study.max_mode_frequency_hz },
        &eigen_params(l, zero),
    )
    .with_context(|| format!("modes of {}", l.path.display()))?;
    confirm_zero_energy(l, system, &sol)?;
    let mut sol = sol;
    let (applied, warnings) =
        apply_measured(&mut sol, &study.measured_frequencies).with_context(|| format!("in {}", l.path.display()))?;
    for w in &warnings {
        progress.warn(w);
    }
    Ok((sol, applied))
}

/// A file marking a folder as holding this program's results: later runs may replace them.
pub const MARKER: &str = ".antinode-outputs";

const MARKER_TEXT: &str = "This folder holds results written by antinode; later runs may replace them.\n";

/// Set by `--force`: existing files in any output folder may be replaced.
static FORCE: AtomicBool = AtomicBool::new(false);

/// Lets every output folder's existing files be replaced (`--force`).
pub fn force_overwrite() {
    FORCE.store(true, Ordering::Relaxed);
}

/// The output files of one command, made all or nothing.
///
/// Each file is first written in full under a hidden staging name in the output folder; only
/// [`Outputs::commit`], once every file is ready, renames them to their real names. If the command
/// fails before that, dropping the value removes what this run wrote, and the folders it created if
/// they are empty, so an error leaves no partial set of outputs behind and earlier results are kept
/// as they were. (Should a rename fail, the files already renamed are removed too.)
pub struct Outputs {
    dir: PathBuf,
    /// The folder is this program's: made by this run, or holding the marker of an earlier run
    /// ([`MARKER`]); its files may be replaced. Otherwise an existing file is replaced only with
    /// `--force`.
    own: bool,
    /// Folders this run created, deepest first.
    created: Vec<PathBuf>,
    /// (staging name, real name) of each file written.
    staged: Vec<(PathBuf, PathBuf)>,
    /// Real names already renamed into place.
    placed: Vec<PathBuf>,
    committed: bool,
}

impl Outputs {
    /// The output folder `out` if given, else `out/<model file stem>`; created if missing.
    pub fn create(model: &Path, out: Option<&Path>) -> Result<Self> {
        let dir = match out {
            Some(d) => d.to_path_buf(),
            None => {
                let stem =
                    model.file_stem().map(|s| s.to_string_lossy().into_owned()).unwrap_or_else(|| "model".into());
                PathBuf::from("out").join(stem)
            }
        };
        let created: Vec<PathBuf> =
            dir.ancestors().take_while(|a| !a.as_os_str().is_empty() && !a.exists()).map(Path::to_path_buf).collect();
        let own = !created.is_empty() || !dir.exists() || dir.join(MARKER).is_file() || FORCE.load(Ordering::Relaxed);
        let outputs = Self { dir, own, created, staged: Vec::new(), placed: Vec::new(), committed: false };
        std::fs::create_dir_all(&outputs.dir)
            .with_context(|| format!("cannot create output folder {}", outputs.dir.display()))?;
        Ok(outputs)
    }

    /// Where the file `name` will be.
    pub fn path(&self, name: &str) -> PathBuf {
        self.dir.join(name)
    }

    /// A staging name for `name`, hidden, in the output folder (so the rename stays on one disk).
    fn stage(&mut self, name: &str) -> PathBuf {
        let staging = self.dir.join(format!(".{name}.{}.staged", std::process::id()));
        self.staged.push((staging.clone(), self.path(name)));
        staging
    }

    /// A staging path for the file `name`, for writers that take a path; put in place by
    /// [`Outputs::commit`].
    pub fn staging(&mut self, name: &str) -> PathBuf {
        self.stage(name)
    }

    /// Writes the file `name`, to be put in place by [`Outputs::commit`].
    pub fn write(&mut self, name: &str, bytes: &[u8]) -> Result<()> {
        let staging = self.stage(name);
        antinode_mesh::write_atomic(&staging, bytes)
            .with_context(|| format!("cannot write {}", self.path(name).display()))
    }

    /// Writes the VTK file `name` of `structure` with point vectors `fields`.
    pub fn write_vtu(&mut self, name: &str, structure: &Structure, fields: &[NodalVectors]) -> Result<()> {
        let staging = self.stage(name);
        antinode_mesh::write_vtu(&staging, structure, fields, &[])
            .with_context(|| format!("cannot write {}", self.path(name).display()))
    }

    /// Writes the VTK file `name` of `structure` with point vectors and scalars.
    pub fn write_vtu_with(
        &mut self,
        name: &str,
        structure: &Structure,
        vectors: &[NodalVectors],
        scalars: &[antinode_mesh::NodalScalars],
    ) -> Result<()> {
        let staging = self.stage(name);
        antinode_mesh::write_vtu(&staging, structure, vectors, scalars)
            .with_context(|| format!("cannot write {}", self.path(name).display()))
    }

    /// Renames every written file to its real name. In a folder that is not this program's (see
    /// `own`), an existing file of the same name is an error and nothing is renamed.
    pub fn commit(mut self) -> Result<()> {
        if !self.own {
            if let Some((_, real)) = self.staged.iter().find(|(_, real)| real.exists()) {
                bail!(
                    "{} exists and {} holds no earlier antinode results; give --force to replace it, or another --out",
                    real.display(),
                    self.dir.display()
                );
            }
        }
        // On a failed rename, dropping `self` removes the rest.
        for (staging, real) in &self.staged {
            std::fs::rename(staging, real).with_context(|| format!("cannot write {}", real.display()))?;
            self.placed.push(real.clone());
        }
        antinode_mesh::write_atomic(&self.dir.join(MARKER), MARKER_TEXT.as_bytes())
            .with_context(|| format!("cannot write {}", self.dir.join(MARKER).display()))?;
        self.committed = true;
        Ok(())
    }
}

impl Drop for Outputs {
    fn drop(&mut self) {
        if self.committed {
            return;
        }
        for (staging, _) in &self.staged {
            let _ = std::fs::remove_file(staging);
        }
        for real in &self.placed {
            let _ = std::fs::remove_file(real);
        }
        // Only empty folders go; anything else in them stays.
        for dir in &self.created {
            let _ = std::fs::remove_dir(dir);
        }
    }
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

    /// Prints a warning to standard error above the spinner.
    pub fn warn(&self, what: &str) {
        self.0.suspend(|| eprintln!("warning: {what}"));
    }
}

impl Drop for Progress {
    fn drop(&mut self) {
        self.0.finish_and_clear();
    }
}

/// The caution printed with results that engineers may act on.
pub const CAUTION: &str = "Caution: these are predictions of a linear model. A shaft running near a bending critical \
speed can fail violently, and elastomer absorber springs fatigue, creep and stiffen or soften with temperature and \
age. Confirm frequencies and absorber performance by test, and follow the applicable codes and licensed engineering \
practice before relying on these numbers.";
