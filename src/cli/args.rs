//! Command-line arguments.

use std::path::PathBuf;

use clap::{Args, Parser, Subcommand};

use anlage::render::StyleOptions;

/// anlage: simulate how gene circuits pattern rows and sheets of nuclei.
#[derive(Debug, Parser)]
#[command(name = "anlage", version, about, propagate_version = true)]
pub struct Cli {
    /// What to do.
    #[command(subcommand)]
    pub command: Command,
}

/// Verbs.
#[derive(Debug, Subcommand)]
pub enum Command {
    /// Simulate a model; write tables, states, a summary and pictures.
    Run(RunArgs),
    /// Validate a model and describe what it holds, without simulating.
    Check(CheckArgs),
    /// Redraw the pictures of a finished run from its folder, without simulating.
    Render(RenderArgs),
    /// Predict where boundaries move: the wild type and every mutant (model
    /// file, --mutant, generated families), in parallel.
    Screen(ScreenArgs),
    /// Which parameter moves which boundary: d position / d ln parameter for all.
    Sensitivity(SensitivityArgs),
    /// Sweep one or more parameters over a grid: each point's boundaries, domains and pattern class,
    /// and a phase diagram.
    Sweep(SweepArgs),
    /// Replicate embryos with the noise of the model's [noise] section: each
    /// boundary's mean position and positional error, and the error decoded from all genes.
    Replicates(ReplicatesArgs),
    /// Fit the free parameters of the model's [fit] section to measured boundaries of the wild type and
    /// mutants: global search, approximate intervals, correlations and the fitted model file.
    Fit(FitArgs),
    /// Measure boundaries in stained-embryo images (PNG or TIFF, 8/16-bit);
    /// a folder gives one table with mean and sd per boundary.
    Measure(MeasureArgs),
    /// Score a run against a measured-boundary table.
    Compare(CompareArgs),
    /// Draw synthetic stained-embryo images from a run's last snapshot (invented
    /// data, for demos and for testing `measure`).
    Synthesize(SynthesizeArgs),
    /// Phase space of every nucleus: fixed points, basins over time, commitment,
    /// attractors along the axis (isolated nucleus: inputs frozen).
    Basins(BasinsArgs),
    /// Phase portrait of one nucleus in the plane of two genes.
    Portrait(PortraitArgs),
    /// Bifurcation diagram of one nucleus in any model parameter: branches of fixed points
    /// with their stability, folds, branch points and Hopf points (isolated nucleus: inputs
    /// frozen), without simulating.
    Bifurcation(super::bifurcation::BifurcationArgs),
    /// One figure of a run for a paper or a talk: pattern, kymograph, boundary positions
    /// over time and attractors along the axis, lettered A–D.
    Figure(FigureArgs),
    /// Print a shell completion script (bash, zsh, fish, elvish or powershell) to standard output.
    Completions(CompletionsArgs),
    /// Print the manual page (roff, for `man`) to standard output.
    Manual,
}

/// Arguments of `run`.
#[derive(Debug, Args)]
pub struct RunArgs {
    /// Model file (TOML); not needed with --resume.
    #[arg(required_unless_present = "resume")]
    pub model: Option<PathBuf>,
    /// The level that defines a gene's boundaries, GENE=max:F (fraction of its maximum),
    /// GENE=level:A (a.u.) or GENE=capacity:F (fraction of p/d); GENE `*` for every gene (repeatable).
    #[arg(long = "boundary-level", value_name = "GENE=SPEC", conflicts_with = "resume")]
    pub boundary_levels: Vec<String>,
    /// Output folder (default: `<model name>_run` next to the model file).
    #[arg(short, long)]
    pub out: Option<PathBuf>,
    /// Worker threads (default: all cores). Results are identical for any count.
    #[arg(long)]
    pub threads: Option<usize>,
    /// Print nothing but errors.
    #[arg(short, long)]
    pub quiet: bool,
    /// Write tables, states and the summary but no pictures.
    #[arg(long)]
    pub no_pictures: bool,
    /// Save the run every so often (wall time: 90s, 10m, 2h) as OUT/checkpoint.bin, to continue
    /// with --resume after a crash; removed when the run finishes.
    #[arg(long, value_name = "TIME", value_parser = parse_wall_time)]
    pub checkpoint_every: Option<std::time::Duration>,
    /// Continue the run whose checkpoint is in this folder (outputs go there too); the result is
    /// byte for byte that of an uninterrupted run.
    #[arg(long, value_name = "DIR", conflicts_with = "model")]
    pub resume: Option<PathBuf>,
    /// Write each snapshot to disk as it is taken instead of keeping it in memory (automatic
    /// when the recording would pass 256 MiB).
    #[arg(long)]
    pub stream: bool,
    /// Print one JSON line: solve time (loading the model, set-up and all steps), steps and the sum of
    /// the final state (for comparing implementations).
    #[arg(long)]
    pub timing: bool,
    /// With --timing: solve this many times in one process and report the fastest solve (each one
    /// loads the model again), as a benchmark peer reporting its best of several repeats does.
    #[arg(long, value_name = "N", default_value_t = 1, requires = "timing", conflicts_with = "resume")]
    pub repeat: usize,
    /// How pictures look.
    #[command(flatten)]
    pub look: PictureArgs,
}

/// Arguments of `check`.
#[derive(Debug, Args)]
pub struct CheckArgs {
    /// Model file (TOML).
    pub model: PathBuf,
}

/// Arguments of `render`.
#[derive(Debug, Args)]
pub struct RenderArgs {
    /// Folder written by `anlage run`.
    pub run_dir: PathBuf,
    /// Which picture.
    #[arg(long, value_enum, default_value = "all")]
    pub kind: KindArg,
    /// Output folder (default: the run folder).
    #[arg(short, long)]
    pub out: Option<PathBuf>,
    /// Print nothing (errors still go to standard error).
    #[arg(short, long)]
    pub quiet: bool,
    /// How pictures look.
    #[command(flatten)]
    pub look: PictureArgs,
}

/// Arguments of `screen`.
#[derive(Debug, Args)]
pub struct ScreenArgs {
    /// Model file (TOML).
    pub model: PathBuf,
    /// Extra mutant, as a TOML inline table, e.g.
    /// '{ name = "het", scale = { "amber.production" = 0.5 } }' (repeatable).
    #[arg(long = "mutant")]
    pub mutants: Vec<String>,
    /// Add every single knock-out.
    #[arg(long)]
    pub knockouts: bool,
    /// Add every single link removal.
    #[arg(long)]
    pub link_removals: bool,
    /// Add dosage series: each gene's production x0.5 and x2 (one copy, an extra copy) and each gradient's peak x0.25, x0.5, x2, x4.
    #[arg(long)]
    pub dosage: bool,
    /// Also animate the wild type beside this mutant (its name).
    #[arg(long)]
    pub animate: Option<String>,
    /// Also draw every mutant's boundaries over time against the wild type's
    /// (shifts_over_time.png; runs each mutant again with all its snapshots; at most 24 mutants).
    #[arg(long)]
    pub over_time: bool,
    /// Also screen every pair (2) or triple (3) of the mutants above, with their epistasis: how far
    /// each cross's shift departs from the sum of the single shifts (epistasis.csv).
    #[arg(long, value_name = "2|3")]
    pub crosses: Option<usize>,
    /// Also run N replicate embryos (the model's [noise]) of the wild type and of every mutant with
    /// the same seeds: each shift with its 95 % interval, and whether the mutant makes the boundary
    /// more or less precise (replicate_shifts.csv).
    #[arg(long, value_name = "N")]
    pub replicates: Option<usize>,
    /// Sharding and SLURM job arrays.
    #[command(flatten)]
    pub cluster: ClusterArgs,
    /// Output folder, pictures and report form.
    #[command(flatten)]
    pub output: ScreenOutputArgs,
}

/// Where `screen` and `sensitivity` write, how their pictures look, and
/// whether they print JSON.
#[derive(Debug, Args)]
pub struct ScreenOutputArgs {
    /// Output folder (default: `<model name>_screen` next to the model file; `_replicates` for
    /// replicates, `_sweep` for sweep); `-` (screen, sensitivity): the table (shifts.csv or sensitivity.csv) on standard
    /// output, and nothing written to disk.
    #[arg(short, long)]
    pub out: Option<PathBuf>,
    /// How pictures look.
    #[command(flatten)]
    pub look: PictureArgs,
    /// Print what was found as one JSON document on standard output instead of the report.
    #[arg(long)]
    pub json: bool,
}

/// Arguments of `sensitivity`.
#[derive(Debug, Args)]
pub struct SensitivityArgs {
    /// Model file (TOML).
    pub model: PathBuf,
    /// Step in ln(parameter) for the central differences (default 0.01).
    #[arg(long, default_value_t = anlage::screen::SENSITIVITY_STEP)]
    pub step: f64,
    /// Shards (some parameters each), merge, SLURM job arrays.
    #[command(flatten)]
    pub cluster: ClusterArgs,
    /// Output folder, pictures and report form.
    #[command(flatten)]
    pub output: ScreenOutputArgs,
}

/// Arguments of `sweep`.
#[derive(Debug, Args)]
pub struct SweepArgs {
    /// Model file (TOML).
    pub model: PathBuf,
    /// A swept parameter, NAME=FROM:TO:POINTS[:log] (repeatable; the grid is every combination),
    /// named as in a mutant's scale, e.g. amber.production=0.5:2:21:log.
    #[arg(long = "axis", value_name = "NAME=FROM:TO:POINTS[:log]", required = true)]
    pub axes: Vec<String>,
    /// Sharding and SLURM job arrays.
    #[command(flatten)]
    pub cluster: ClusterArgs,
    /// Output folder, pictures and report form.
    #[command(flatten)]
    pub output: ScreenOutputArgs,
}

/// How a job of independent items (points, mutants) is cut into shards and
/// run on a SLURM cluster.
#[derive(Debug, Args)]
pub struct ClusterArgs {
    /// Run only shard K of N (items K−1, K−1+N, …) into OUT/shards/, e.g. as one task of a job
    /// array; a shard already complete there is not run again, and one stopped by SIGTERM saves what
    /// it finished and runs only the rest next time. Then merge with --merge.
    #[arg(long, value_name = "K/N", conflicts_with_all = ["merge", "slurm"])]
    pub shard: Option<String>,
    /// Merge the shards in OUT/shards/ (same model and settings) into the outputs of an unsharded
    /// run, byte for byte; lists missing shards with the command that runs each.
    #[arg(long, conflicts_with = "slurm")]
    pub merge: bool,
    /// Write a SLURM job array of N shards into OUT/slurm/ (array.sbatch, merge.sbatch that waits
    /// for the array, submit.sh) instead of running; edit them, then run submit.sh, or give --submit.
    #[arg(long, value_name = "N")]
    pub slurm: Option<usize>,
    /// With --slurm: CPUs (threads) per array task.
    #[arg(long, value_name = "C", default_value_t = 1, requires = "slurm")]
    pub cpus_per_task: usize,
    /// With --slurm: the partition (default: sbatch's, e.g. from SBATCH_PARTITION).
    #[arg(long, requires = "slurm")]
    pub partition: Option<String>,
    /// With --slurm: the account to charge (default: sbatch's, e.g. from SBATCH_ACCOUNT).
    #[arg(long, requires = "slurm")]
    pub account: Option<String>,
    /// With --slurm: time limit per task, as sbatch writes it, e.g. 2:00:00 (default: sbatch's).
    #[arg(long, requires = "slurm")]
    pub time: Option<String>,
    /// With --slurm: memory per task, as sbatch writes it, e.g. 4G (default: sbatch's).
    #[arg(long, requires = "slurm")]
    pub mem: Option<String>,
    /// With --slurm: also submit the array and the merge with sbatch.
    #[arg(long, requires = "slurm")]
    pub submit: bool,
}

/// Arguments of `replicates`.
#[derive(Debug, Args)]
pub struct ReplicatesArgs {
    /// Model file (TOML), usually with a [noise] section.
    pub model: PathBuf,
    /// How many embryos (default: noise.replicates, else 100).
    #[arg(short = 'n', long, value_name = "N")]
    pub embryos: Option<usize>,
    /// Also rerun the embryos with each noise source alone: how much of each boundary's variance it explains.
    #[arg(long)]
    pub attribute: bool,
    /// Also rerun the embryos with half the noise step: do the means and spreads change beyond sampling error?
    #[arg(long)]
    pub check_step: bool,
    /// Also animate the first K embryos side by side in embryos.gif (2 to 9; panel "embryo i" is row
    /// embryo = i of embryo_boundaries.csv), all scaled alike so that weaker embryos look weaker.
    #[arg(long, value_name = "K")]
    pub animate: Option<usize>,
    /// Replicates of a mutant: the name of a [[mutant]] in the model, or one written as on `screen --mutant`.
    #[arg(long, value_name = "NAME|'{…}'")]
    pub mutant: Option<String>,
    /// Shards, merge and SLURM job arrays (the items are embryos).
    #[command(flatten)]
    pub cluster: ClusterArgs,
    /// Output folder (default `<model name>_replicates`), pictures and report form.
    #[command(flatten)]
    pub output: ScreenOutputArgs,
}

/// Arguments of `fit`.
#[derive(Debug, Args)]
pub struct FitArgs {
    /// Model file (TOML) with a [fit] section.
    pub model: PathBuf,
    /// Output folder (default: `<model name>_fit` next to the model file).
    #[arg(short, long)]
    pub out: Option<PathBuf>,
    /// Worker threads (default: all cores). Results are identical for any count.
    #[arg(long)]
    pub threads: Option<usize>,
    /// Independent starts of the global search (seeds seed, seed+1, …; overrides `starts` in [fit]).
    #[arg(long, value_name = "N")]
    pub starts: Option<usize>,
    /// Background, size and SVG of the pictures.
    #[command(flatten)]
    pub canvas: CanvasArgs,
    /// Print nothing but errors.
    #[arg(short, long)]
    pub quiet: bool,
    /// Print what was found as one JSON document on standard output instead of the report.
    #[arg(long)]
    pub json: bool,
    /// Shards (one or more starts each), merge, SLURM job arrays.
    #[command(flatten)]
    pub cluster: ClusterArgs,
}

/// Arguments of `compare`.
#[derive(Debug, Args)]
pub struct CompareArgs {
    /// Folder written by `anlage run`.
    pub run_dir: PathBuf,
    /// Measured-boundary table (CSV).
    pub measured: PathBuf,
    /// Stage label in minutes, LABEL=MINUTES (repeatable).
    #[arg(long = "stage")]
    pub stages: Vec<String>,
    /// Smallest sd taken at face value, % of length (raised to each row's resolution if that is larger).
    #[arg(long, default_value_t = anlage::compare::DEFAULT_SD_FLOOR_PCT)]
    pub sd_floor: f64,
    /// Folder written by `anlage replicates` of the same model: also score each measured sd
    /// against the positional error predicted over its embryos (needs the table's n for an interval).
    #[arg(long, value_name = "DIR")]
    pub replicates: Option<PathBuf>,
    /// Output folder (default: the run folder); `-`: comparison.csv on standard output, the
    /// report on standard error, and nothing written to disk.
    #[arg(short, long)]
    pub out: Option<PathBuf>,
    /// Background, size and SVG of comparison.png.
    #[command(flatten)]
    pub canvas: CanvasArgs,
    /// Print what was found as one JSON document on standard output instead of the report.
    #[arg(long)]
    pub json: bool,
}

/// Arguments of `completions`.
#[derive(Debug, Args)]
pub struct CompletionsArgs {
    /// The shell.
    #[arg(value_enum)]
    pub shell: clap_complete::Shell,
}

/// Arguments of `synthesize`.
#[derive(Debug, Args)]
pub struct SynthesizeArgs {
    /// Folder written by `anlage run` (a row).
    pub run_dir: PathBuf,
    /// Output folder.
    #[arg(short, long)]
    pub out: PathBuf,
    /// Number of images (each rotated, blurred and noised differently).
    #[arg(long, default_value_t = 3)]
    pub count: usize,
    /// Seed.
    #[arg(long, default_value_t = 1)]
    pub seed: u64,
}

/// Arguments of `basins`.
#[derive(Debug, Args)]
pub struct BasinsArgs {
    /// Model file (simulated first) or a folder written by `anlage run`.
    pub source: PathBuf,
    /// Output folder (default: the run folder, or `<model name>_run`).
    #[arg(short, long)]
    pub out: Option<PathBuf>,
    /// Also freeze each snapshot's diffusion influx D∇²u as a constant term.
    #[arg(long)]
    pub with_influx: bool,
    /// Gene shown in landscape.png (default: the first).
    #[arg(long)]
    pub gene: Option<String>,
    /// Analyse every N-th snapshot (and the last).
    #[arg(long, value_name = "N", default_value_t = 1, conflicts_with = "at")]
    pub every: usize,
    /// Analyse the snapshots nearest these times, min (comma-separated).
    #[arg(long, value_name = "MIN,…", value_delimiter = ',', num_args = 1)]
    pub at: Vec<f64>,
    /// How pictures look.
    #[command(flatten)]
    pub look: PictureArgs,
    /// Print what was found as one JSON document on standard output instead of the report.
    #[arg(long)]
    pub json: bool,
}

/// Arguments of `figure`.
#[derive(Debug, Args)]
pub struct FigureArgs {
    /// Folder written by `anlage run`.
    pub run_dir: PathBuf,
    /// Gene whose attractors panel D shows (default: the first).
    #[arg(long)]
    pub gene: Option<String>,
    /// Output picture, .png (default: figure.png in the run folder).
    #[arg(short, long)]
    pub out: Option<PathBuf>,
    /// Print nothing but errors.
    #[arg(short, long)]
    pub quiet: bool,
    /// Background, size (of the whole figure; default 1500 px) and SVG.
    #[command(flatten)]
    pub canvas: CanvasArgs,
}

/// Arguments of `portrait`.
#[derive(Debug, Args)]
pub struct PortraitArgs {
    /// Model file (simulated first) or a folder written by `anlage run`.
    pub source: PathBuf,
    /// Nucleus index (row-major on a sheet).
    #[arg(long)]
    pub nucleus: usize,
    /// The two genes of the plane, e.g. amber,cobalt.
    #[arg(long, value_delimiter = ',', num_args = 1)]
    pub genes: Vec<String>,
    /// Freeze the inputs at the snapshot nearest this time, min (default: the last).
    #[arg(long)]
    pub time: Option<f64>,
    /// Output picture (default: portrait_n<N>_<A>_<B>.png in the run folder).
    #[arg(short, long)]
    pub out: Option<PathBuf>,
    /// Background, size and SVG.
    #[command(flatten)]
    pub canvas: CanvasArgs,
    /// Also animate all nuclei moving over the portrait (`<name>_cloud.gif`).
    #[arg(long)]
    pub cloud: bool,
}

/// Picture options of every verb that draws: background, size, SVG.
#[derive(Debug, Args, Clone, Default)]
pub struct CanvasArgs {
    /// White background: genes darken like stains instead of adding like fluorescence.
    #[arg(long)]
    pub light: bool,
    /// Picture width, px (320–4096; default 720). Up to 720 px pictures are laid out
    /// narrower; wider ones are the 720-px layout with text and lines scaled up.
    #[arg(long)]
    pub width: Option<u32>,
    /// Also write every picture as SVG (vector, text as text) beside its PNG.
    #[arg(long)]
    pub svg: bool,
}

impl CanvasArgs {
    /// Refuses (exit 2) any of these options: on `verb` no picture is
    /// drawn, `because` (words that end "…; leave it out").
    ///
    /// # Errors
    /// The first such option given.
    pub fn refuse(&self, verb: &str, because: &str) -> Result<(), anlage::render::StyleError> {
        let given = if self.light {
            Some(("--light", "given".to_string()))
        } else if let Some(w) = self.width {
            Some(("--width", w.to_string()))
        } else {
            self.svg.then(|| ("--svg", "given".to_string()))
        };
        match given {
            Some((option, value)) => Err(anlage::render::StyleError::OutOfRange {
                option: option.into(),
                value,
                fix: format!("it does nothing on `{verb}`, which {because}; leave it out"),
            }),
            None => Ok(()),
        }
    }

    /// As library options (nothing else set).
    pub fn options(&self) -> StyleOptions {
        StyleOptions { light: self.light, width: self.width, svg: self.svg, ..Default::default() }
    }
}

/// Picture options of the verbs that draw a run's genes.
#[derive(Debug, Args, Clone, Default)]
pub struct PictureArgs {
    /// Genes to show, comma-separated (default: all).
    #[arg(long, value_delimiter = ',')]
    pub genes: Option<Vec<String>>,
    /// Gene colour, GENE=#rrggbb (repeatable).
    #[arg(long = "color")]
    pub colors: Vec<String>,
    /// Background, size and SVG.
    #[command(flatten)]
    pub canvas: CanvasArgs,
    /// Draw the one gene chosen with --genes as a heat map (perceptually uniform colours).
    #[arg(long)]
    pub heatmap: bool,
    /// Animation frames per second (default 10).
    #[arg(long)]
    pub fps: Option<u32>,
    /// Animations show every N-th snapshot, and always the last (default 1: every one).
    #[arg(long, value_name = "N")]
    pub frame_every: Option<usize>,
    /// Largest animation, MB: a larger one keeps fewer frames (at least 10), then fewer colours.
    #[arg(long, value_name = "MB")]
    pub gif_max_mb: Option<f64>,
    /// First time shown, min.
    #[arg(long = "from")]
    pub from_min: Option<f64>,
    /// Last time shown, min.
    #[arg(long = "to")]
    pub to_min: Option<f64>,
}

/// A picture option that some verbs have no use for.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Unused {
    /// `--fps`, `--frame-every`, `--gif-max-mb`: no animation is drawn.
    Animation,
    /// `--heatmap`: no picture of gene levels is drawn.
    Heatmap,
    /// `--from`/`--to`: no picture follows the snapshots' times.
    TimeRange,
}

impl PictureArgs {
    /// Refuses (exit 2) the options in `unused` that were given: on `verb`
    /// they would do nothing, `because` (words that end "…; leave it out").
    ///
    /// # Errors
    /// The first such option given.
    pub fn refuse(&self, unused: &[Unused], verb: &str, because: &str) -> Result<(), anlage::render::StyleError> {
        for &u in unused {
            let given = match u {
                Unused::Animation => self
                    .fps
                    .map(|v| ("--fps", v.to_string()))
                    .or_else(|| self.frame_every.map(|v| ("--frame-every", v.to_string())))
                    .or_else(|| self.gif_max_mb.map(|v| ("--gif-max-mb", v.to_string()))),
                Unused::Heatmap => self.heatmap.then(|| ("--heatmap", "given".to_string())),
                Unused::TimeRange => self
                    .from_min
                    .map(|v| ("--from", v.to_string()))
                    .or_else(|| self.to_min.map(|v| ("--to", v.to_string()))),
            };
            if let Some((option, value)) = given {
                return Err(anlage::render::StyleError::OutOfRange {
                    option: option.into(),
                    value,
                    fix: format!("it does nothing on `{verb}`, which {because}; leave it out"),
                });
            }
        }
        Ok(())
    }

    /// Refuses (exit 2) every picture option given: on `verb` no picture
    /// is drawn, `because`.
    ///
    /// # Errors
    /// The first such option given.
    pub fn refuse_all(&self, verb: &str, because: &str) -> Result<(), anlage::render::StyleError> {
        self.refuse(&[Unused::Animation, Unused::Heatmap, Unused::TimeRange], verb, because)?;
        let named = self.genes.as_ref().map(|g| ("--genes", g.join(",")));
        if let Some((option, value)) = named.or_else(|| self.colors.first().map(|c| ("--color", c.clone()))) {
            return Err(anlage::render::StyleError::OutOfRange {
                option: option.into(),
                value,
                fix: format!("it does nothing on `{verb}`, which {because}; leave it out"),
            });
        }
        self.canvas.refuse(verb, because)
    }

    /// As library options.
    pub fn options(&self) -> StyleOptions {
        StyleOptions {
            genes: self.genes.clone(),
            colors: self.colors.clone(),
            fps: self.fps,
            frame_every: self.frame_every,
            gif_max_mb: self.gif_max_mb,
            from_min: self.from_min,
            to_min: self.to_min,
            heatmap: self.heatmap,
            ..self.canvas.options()
        }
    }
}

/// Parses a wall time such as `90s`, `10m`, `2h` or `250ms` (a bare number is seconds).
fn parse_wall_time(text: &str) -> Result<std::time::Duration, String> {
    let t = text.trim();
    let (number, scale) = if let Some(n) = t.strip_suffix("ms") {
        (n, 1e-3)
    } else if let Some(n) = t.strip_suffix('s') {
        (n, 1.0)
    } else if let Some(n) = t.strip_suffix('m') {
        (n, 60.0)
    } else if let Some(n) = t.strip_suffix('h') {
        (n, 3600.0)
    } else {
        (t, 1.0)
    };
    match number.trim().parse::<f64>() {
        Ok(v) if v.is_finite() && v >= 0.0 => Ok(std::time::Duration::from_secs_f64(v * scale)),
        _ => Err(format!("`{text}` is not a wall time; write e.g. 90s, 10m or 2h")),
    }
}

/// Which pictures `render` draws.
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum KindArg {
    /// Every picture that fits the tissue.
    All,
    /// `kymograph.png` (on a sheet, along x over the central rows).
    Kymograph,
    /// `boundary_positions.png`: boundary position against time.
    Boundaries,
    /// `pattern.png`, the final state.
    Pattern,
    /// `profiles.png`.
    Profiles,
    /// `pattern.gif`.
    Animation,
    /// `contours.png` (sheets): the final pattern with its boundary contours.
    Contours,
}

impl From<KindArg> for anlage::PictureKind {
    fn from(k: KindArg) -> Self {
        match k {
            KindArg::All => anlage::PictureKind::All,
            KindArg::Kymograph => anlage::PictureKind::Kymograph,
            KindArg::Boundaries => anlage::PictureKind::Boundaries,
            KindArg::Pattern => anlage::PictureKind::Pattern,
            KindArg::Profiles => anlage::PictureKind::Profiles,
            KindArg::Animation => anlage::PictureKind::Animation,
            KindArg::Contours => anlage::PictureKind::Contours,
        }
    }
}

/// Which end of each embryo is the head.
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum HeadArg {
    /// The end with the smaller image column.
    Left,
    /// The end with the larger image column.
    Right,
    /// The end with the smaller image row.
    Top,
    /// The end with the larger image row.
    Bottom,
    /// Guessed: the end where the head-high gene (--head-high, else the first channel) is higher.
    Auto,
}

/// How the stain shows against the background.
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum StainArg {
    /// Brighter than the background (fluorescence).
    Bright,
    /// Darker than a light background (bright-field, chromogenic); read as optical density.
    Dark,
    /// Detected from the image, and reported.
    Auto,
}

/// `anlage measure`.
#[derive(Debug, Args)]
pub struct MeasureArgs {
    /// An image, or a folder of images.
    pub image: PathBuf,
    /// Channel to read: PLANE=gene (plane of the image, from 0) or FILE=gene (repeatable).
    #[arg(long = "channel", required = true)]
    pub channels: Vec<String>,
    /// Which end is the head.
    #[arg(long, value_enum, default_value = "auto")]
    pub head: HeadArg,
    /// With --head auto: the gene that is higher at the head (default: the first channel, assumed).
    #[arg(long)]
    pub head_high: Option<String>,
    /// Bright stain on a dark background, dark on light, or detect.
    #[arg(long, value_enum, default_value = "auto")]
    pub stain: StainArg,
    /// Outline from one plane (PLANE or FILE), e.g. a nuclear counterstain (default: all planes).
    #[arg(long, conflicts_with = "mask")]
    pub outline: Option<String>,
    /// Outline from a mask image (non-zero = embryo); `{stem}` in the name stands for each image's name.
    #[arg(long)]
    pub mask: Option<String>,
    /// Time of the embryos: minutes, or a stage label (kept as written).
    #[arg(long)]
    pub time: Option<String>,
    /// Output table (default: <image>_boundaries.csv, or measured.csv in the folder); `-`: the
    /// table on standard output, the report on standard error, and nothing written to disk (no
    /// profiles, embryos table or check pictures).
    #[arg(short, long)]
    pub out: Option<PathBuf>,
    /// Print what was measured as one JSON document on standard output (the report goes to standard error).
    #[arg(long)]
    pub json: bool,
}
