//! The `antinode` program: model file in, modes, responses and absorber designs out.

mod check;
mod correlate;
mod design;
mod export_mesh;
mod init;
mod modes;
mod output;
mod pipeline;
mod plot;
mod respond;

use std::path::PathBuf;
use std::process::ExitCode;

use clap::{Args, Parser, Subcommand, ValueEnum};

/// Finite-element modal solver that decides where to attach tuned vibration absorbers and how to
/// tune them. Model files are JSON in SI units (see docs/model-format.md).
#[derive(Parser)]
#[command(name = "antinode", version, about, long_about = None, propagate_version = true)]
struct Cli {
    #[command(subcommand)]
    command: Command,
    /// Worker threads for the parallel parts (element matrices, candidates, shifted
    /// factorizations); default: RAYON_NUM_THREADS, else one per core. Results do not depend on it.
    #[arg(long, global = true, value_parser = clap::value_parser!(u16).range(1..=1024))]
    threads: Option<u16>,
    /// Replace existing files in an output folder that holds no earlier antinode results (a
    /// folder antinode wrote before is replaced without asking).
    #[arg(long, global = true)]
    force: bool,
    /// Memory the eigen solution may use, in GiB (default: the memory available, MemAvailable in
    /// /proc/meminfo). A model whose estimated need is larger is refused before it is factorized.
    #[arg(long, global = true, value_name = "GIB", value_parser = parse_gib)]
    memory_limit: Option<f64>,
}

/// A positive, finite number of GiB.
fn parse_gib(s: &str) -> Result<f64, String> {
    match s.parse::<f64>() {
        Ok(v) if v.is_finite() && v > 0.0 && v < 1e9 => Ok(v),
        _ => Err(format!("{s} is not a memory size: give a positive number of GiB, e.g. 8 or 0.5")),
    }
}

#[derive(Subcommand)]
enum Command {
    /// Validate a model: counts, total mass, centre of mass, free motions, warnings.
    Check(CheckArgs),
    /// Natural modes: frequencies, effective masses, Sturm check; writes modes.json, modes.csv
    /// and modes.vtu.
    Modes(ModesArgs),
    /// Forced response of the study with and without the model's absorbers; writes CSV and an SVG
    /// plot.
    Respond(RespondArgs),
    /// Design the study's absorbers: ranked candidates, chosen absorbers, response before and
    /// after; writes design.json (the model with the absorbers added), plots and VTK.
    Design(DesignArgs),
    /// Write K and M after constraints as MatrixMarket files (K.mtx, M.mtx), so other libraries can
    /// be compared on the same matrices.
    ExportMatrices(ExportArgs),
    /// Compare the model's modes with measured modes (--measured FILE.csv, docs/correlation.md) or
    /// with a second model on the same nodes (--against MODEL): MAC matrix, pairs, frequency
    /// errors, poor pairs flagged; writes correlation.json and correlation.svg.
    Correlate(CorrelateArgs),
    /// Write the model's beams and shells as one VTK mesh (a `property` cell array, a `node_id`
    /// point array) and a model file that imports it, with supports, springs, masses, links and
    /// absorbers by node id: <name>-mesh.vtu (or .vtk) and <name>-mesh.json.
    ExportMesh(ExportMeshArgs),
    /// Print the JSON Schema of the model file.
    Schema,
    /// Write a complete starter model to edit (an invented scenario with a study and a small
    /// absorber design request): a shell tube, a panel or a beam. Never overwrites a file.
    Init(InitArgs),
}

#[derive(Args)]
struct InitArgs {
    /// Which starter model.
    #[arg(value_enum)]
    kind: init::Kind,
    /// File to write (default: tube.json, panel.json or beam.json in the working folder).
    #[arg(long)]
    out: Option<PathBuf>,
}

#[derive(Args)]
struct Common {
    /// Model file (JSON).
    model: PathBuf,
    /// Machine-readable JSON on standard output instead of tables.
    #[arg(long)]
    json: bool,
}

#[derive(Args)]
struct CheckArgs {
    #[command(flatten)]
    common: Common,
}

#[derive(Args)]
struct ModesArgs {
    /// Model file (JSON); or give --stiffness and --mass instead.
    #[arg(required_unless_present_all = ["stiffness", "mass"], conflicts_with_all = ["stiffness", "mass"])]
    model: Option<PathBuf>,
    /// Stiffness matrix K (MatrixMarket, real symmetric coordinate).
    #[arg(long, requires = "mass")]
    stiffness: Option<PathBuf>,
    /// Mass matrix M (MatrixMarket, real symmetric coordinate).
    #[arg(long, requires = "stiffness")]
    mass: Option<PathBuf>,
    /// Machine-readable JSON on standard output instead of tables.
    #[arg(long)]
    json: bool,
    /// Number of lowest modes (zero-frequency modes included); with --max-frequency, a cap.
    #[arg(long)]
    count: Option<usize>,
    /// Every mode up to this frequency, in Hz.
    #[arg(long)]
    max_frequency: Option<f64>,
    /// With --max-frequency: the band's lower edge, in Hz.
    #[arg(long)]
    min_frequency: Option<f64>,
    /// Lanczos block size (at least the largest multiplicity expected; default 4).
    #[arg(long)]
    block_size: Option<usize>,
    /// Output directory (default: out/<model name>).
    #[arg(long)]
    out: Option<PathBuf>,
    /// Include the model's absorbers as extra degrees of freedom (undamped coupled modes).
    #[arg(long)]
    with_absorbers: bool,
    /// Reference point X,Y,Z (m) of the rotational effective masses (default: the centre of mass).
    #[arg(long, value_delimiter = ',', allow_negative_numbers = true)]
    reference_point: Option<Vec<f64>>,
    /// Write mode-N.pvd and its frames: mode N (from 1) animated over one period.
    #[arg(long, value_name = "MODE")]
    animate: Option<usize>,
    /// Frames of the animation over one period.
    #[arg(long, default_value_t = modes::DEFAULT_FRAMES, requires = "animate")]
    frames: usize,
    /// Largest translation in the animation, in m (default: 5 % of the model's size).
    #[arg(long, requires = "animate")]
    amplitude: Option<f64>,
}

#[derive(Args)]
struct CorrelateArgs {
    #[command(flatten)]
    common: Common,
    /// Measured points and modes (CSV, see docs/correlation.md).
    #[arg(long, required_unless_present = "against", conflicts_with = "against")]
    measured: Option<PathBuf>,
    /// A second model file on the same nodes (e.g. after a change).
    #[arg(long)]
    against: Option<PathBuf>,
    /// Elastic modes of the model to compute (default: twice the reference modes, at least 10; with
    /// --against also the second model's, default 20).
    #[arg(long)]
    count: Option<usize>,
    /// Output directory (default: out/<model name>).
    #[arg(long)]
    out: Option<PathBuf>,
}

#[derive(Args)]
struct ExportArgs {
    /// Model file (JSON).
    model: PathBuf,
    /// Output directory (default: out/<model name>).
    #[arg(long)]
    out: Option<PathBuf>,
    /// Include the model's absorbers as extra degrees of freedom.
    #[arg(long)]
    with_absorbers: bool,
}

#[derive(Args)]
struct ExportMeshArgs {
    /// Model file (JSON).
    model: PathBuf,
    /// Output directory (default: out/<model name>).
    #[arg(long)]
    out: Option<PathBuf>,
    /// Mesh file format: `vtu` (XML, default) or `vtk` (legacy ASCII).
    #[arg(long, value_enum, default_value_t = export_mesh::Format::Vtu)]
    format: export_mesh::Format,
}

#[derive(Args)]
struct RespondArgs {
    #[command(flatten)]
    common: Common,
    /// Output directory (default: out/<model name>).
    #[arg(long)]
    out: Option<PathBuf>,
    /// Check the modal result against a direct sparse complex solve of the whole model (with its
    /// absorbers) at frequencies across the band, the natural frequencies and the peaks.
    #[arg(long)]
    verify: bool,
    /// With --verify: number of evenly (geometrically) spaced check frequencies across the band,
    /// besides the natural frequencies and peaks (default 24).
    #[arg(long, requires = "verify", value_parser = clap::value_parser!(u32).range(2..=10000))]
    verify_count: Option<u32>,
    /// What the curves, peaks and speed sweeps report: displacement (receptance, m/N), velocity
    /// (mobility) or acceleration (accelerance).
    #[arg(long, value_enum, default_value = "receptance")]
    quantity: QuantityArg,
}

/// Response quantity of `respond`.
#[derive(Clone, Copy, ValueEnum)]
enum QuantityArg {
    Receptance,
    Mobility,
    Accelerance,
}

#[derive(Args)]
struct DesignArgs {
    #[command(flatten)]
    common: Common,
    /// Output directory (default: out/<model name>).
    #[arg(long)]
    out: Option<PathBuf>,
}

fn main() -> ExitCode {
    antinode_solver::init();
    let cli = Cli::parse();
    if cli.force {
        pipeline::force_overwrite();
    }
    if let Some(gib) = cli.memory_limit {
        pipeline::set_memory_limit(gib);
    }
    if let Some(n) = cli.threads {
        if let Err(e) = rayon::ThreadPoolBuilder::new().num_threads(usize::from(n)).build_global() {
            eprintln!("error: cannot start {n} worker threads: {e}");
            return ExitCode::FAILURE;
        }
    }
    let result = match cli.command {
        Command::Check(a) => check::run(&a.common.model, a.common.json),
        Command::Modes(a) => modes::run(&modes::Options {
            source: match (a.model, a.stiffness, a.mass) {
                (Some(m), _, _) => modes::Source::Model(m),
                (None, Some(stiffness), Some(mass)) => modes::Source::Matrices { stiffness, mass },
                _ => {
                    eprintln!("error: give a model file, or both --stiffness and --mass");
                    return ExitCode::FAILURE;
                }
            },
            json: a.json,
            count: a.count,
            min_frequency: a.min_frequency,
            max_frequency: a.max_frequency,
            out: a.out,
            with_absorbers: a.with_absorbers,
            block_size: a.block_size,
            reference_point: a.reference_point,
            animate: a.animate,
            frames: a.frames,
            amplitude: a.amplitude,
        }),
        Command::ExportMatrices(a) => modes::export(&a.model, a.out.as_deref(), a.with_absorbers),
        Command::ExportMesh(a) => export_mesh::run(&a.model, a.out.as_deref(), a.format),
        Command::Respond(a) => respond::run(&respond::Options {
            model: a.common.model,
            json: a.common.json,
            out: a.out,
            verify: a.verify.then(|| a.verify_count.unwrap_or(24) as usize),
            quantity: match a.quantity {
                QuantityArg::Receptance => antinode_placement::Quantity::Receptance,
                QuantityArg::Mobility => antinode_placement::Quantity::Mobility,
                QuantityArg::Accelerance => antinode_placement::Quantity::Accelerance,
            },
        }),
        Command::Design(a) => design::run(&a.common.model, a.common.json, a.out),
        Command::Init(a) => init::run(a.kind, a.out),
        Command::Correlate(a) => correlate::run(&correlate::Options {
            model: a.common.model,
            reference: match (a.measured, a.against) {
                (Some(m), _) => correlate::Reference::Measured(m),
                (None, Some(b)) => correlate::Reference::Model(b),
                (None, None) => {
                    eprintln!("error: give --measured FILE.csv or --against MODEL");
                    return ExitCode::FAILURE;
                }
            },
            count: a.count,
            out: a.out,
            json: a.common.json,
        }),
        Command::Schema => {
            print!("{}", antinode_mesh::model_schema_json());
            Ok(())
        }
    };
    match result {
        Ok(()) => ExitCode::SUCCESS,
        Err(e) => {
            eprintln!("error: {e:#}");
            ExitCode::FAILURE
        }
    }
}
