//! The sets of files the verbs other than `run` write (the run folder is
//! [`crate::run_folder`]'s): pictures redrawn from a run, basins and
//! portraits, screens, sensitivities and fits. Each file is written through
//! [`crate::export`] and appears whole or not at all.

use std::path::{Path, PathBuf};

use crate::model::Model;
use crate::phase::{BasinAnalysis, BasinOptions, Landscape};
use crate::progress::Progress;
use crate::{Recording, export, readout, render};

/// Outputs that could not be written.
#[derive(Debug, thiserror::Error)]
pub enum WriteError {
    /// A file could not be written.
    #[error(transparent)]
    Export(#[from] export::ExportError),
    /// A picture option is wrong.
    #[error(transparent)]
    Style(#[from] render::StyleError),
    /// A simulation failed.
    #[error(transparent)]
    Step(#[from] crate::StepError),
    /// A streamed snapshot could not be read back.
    #[error(transparent)]
    ReadBack(#[from] crate::integrate::ReadBackError),
    /// Replicate embryos failed.
    #[error(transparent)]
    Replicates(#[from] crate::replicates::ReplicateError),
}

/// Which pictures to draw.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum PictureKind {
    /// Every picture that fits the tissue.
    All,
    /// `kymograph.png` (on a sheet, along x over the central rows).
    Kymograph,
    /// `boundary_positions.png`, boundary position against time.
    Boundaries,
    /// `pattern.png`, the final state.
    Pattern,
    /// `profiles.png`.
    Profiles,
    /// `pattern.gif`.
    Animation,
    /// `contours.png` (sheets only): the final pattern with its boundary contours.
    Contours,
}

/// Pictures written, and notes on any that were changed to meet a size
/// asked for (`--gif-max-mb`), to be shown to the user.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct Pictures {
    /// The files written.
    pub files: Vec<PathBuf>,
    /// What was given up, file by file.
    pub notes: Vec<String>,
}

/// Draws pictures of a recording into `dir`: `kymograph.png`,
/// `boundary_positions.png`, `pattern.png`, `profiles.png` and
/// `pattern.gif`; returns the files written.
///
/// # Errors
/// [`export::ExportError`] if a file cannot be written.
pub fn write_pictures(
    rec: &Recording,
    boundaries: &[readout::Boundary],
    style: &render::Style,
    dir: &Path,
    kind: PictureKind,
) -> Result<Pictures, export::ExportError> {
    let wants = |k: PictureKind| kind == PictureKind::All || kind == k;
    let mut written = Vec::new();
    let mut notes = Vec::new();
    let snaps = style.snapshots(rec);
    let Some(&last) = snaps.last() else {
        return Ok(Pictures::default());
    };
    let mut png = |name: &str, canvas: render::Canvas| -> Result<(), export::ExportError> {
        written.extend(write_picture(&dir.join(name), &canvas, style.svg)?);
        Ok(())
    };
    if wants(PictureKind::Kymograph) {
        png("kymograph.png", render::kymograph(rec, boundaries, style)?.0)?;
    }
    if wants(PictureKind::Boundaries) {
        png("boundary_positions.png", render::boundary_positions(rec, boundaries, style)?.0)?;
    }
    if wants(PictureKind::Pattern) {
        let max = render::gene_maxima(rec, &snaps)?;
        png("pattern.png", render::pattern(rec, last, style, &max)?.0)?;
    }
    if wants(PictureKind::Contours) && rec.grid.is_sheet() {
        let max = render::gene_maxima(rec, &snaps)?;
        let read = readout::sheet::sheet_at(rec, last)?;
        png("contours.png", render::contours_picture(rec, last, style, &max, &read)?)?;
    }
    if wants(PictureKind::Profiles) {
        let final_boundaries: Vec<readout::Boundary> =
            boundaries.iter().filter(|b| b.time_min == rec.times[last]).cloned().collect();
        png("profiles.png", render::profiles(rec, &final_boundaries, style)?)?;
    }
    if wants(PictureKind::Animation) {
        let path = dir.join("pattern.gif");
        let mut made = None;
        export::write_atomic(&path, |w| {
            made = Some(render::write_gif(rec, style, w)?);
            Ok(())
        })?;
        notes.extend(made.and_then(|m| m.describe("pattern.gif")));
        written.push(path);
    }
    Ok(Pictures { files: written, notes })
}

/// Writes `canvas` as PNG at `path` and, with `svg`, as SVG beside it (the
/// same name ending `.svg`); returns the files written.
///
/// # Errors
/// [`export::ExportError`] if a file cannot be written.
pub fn write_picture(path: &Path, canvas: &render::Canvas, svg: bool) -> Result<Vec<PathBuf>, export::ExportError> {
    export::write_atomic(path, |w| w.write_all(&canvas.png()?))?;
    let mut files = vec![path.to_path_buf()];
    let svg_path = path.with_extension("svg");
    if svg {
        let text = canvas.svg().ok_or_else(|| export::ExportError::Content {
            path: svg_path.clone(),
            message: "the picture was drawn without its SVG (its style did not ask for one)".into(),
        })?;
        export::write_atomic(&svg_path, |w| w.write_all(text.as_bytes()))?;
        files.push(svg_path);
    } else {
        // An SVG of an earlier drawing would no longer match its PNG.
        let _ = std::fs::remove_file(&svg_path);
    }
    Ok(files)
}

/// Draws the run's figure ([`render::figure`]: pattern, kymograph,
/// boundary positions, and the attractors of gene `gene` along the axis at
/// the last snapshot) into `path` (PNG, and SVG beside it with
/// `style.svg`); returns the files written.
///
/// # Errors
/// [`WriteError`] if a snapshot cannot be read back or a file cannot be written.
pub fn write_figure(
    model: &Model,
    rec: &Recording,
    gene: usize,
    style: &render::Style,
    path: &Path,
) -> Result<Vec<PathBuf>, WriteError> {
    let boundaries = readout::find_boundaries(rec)?;
    let last = rec.times.len() - 1;
    let hi: Vec<f64> = rec.max_levels(0..rec.len())?.into_iter().map(|m| 1.2 * m.max(1e-3)).collect();
    let landscape = crate::phase::landscape(model, rec.times[last], &hi);
    let canvas = render::figure(rec, &boundaries, Some((&landscape, gene)), style)?;
    Ok(write_picture(path, &canvas, style.svg)?)
}

/// What `anlage basins` found.
#[derive(Debug, Clone)]
pub struct BasinReport {
    /// The per-nucleus analysis.
    pub analysis: BasinAnalysis,
    /// Attractors along the axis at the last snapshot.
    pub landscape: Landscape,
    /// Files written.
    pub files: Vec<PathBuf>,
}

/// Analyses the basins of every nucleus of a run and writes `attractors.csv`,
/// `basins.csv`, `commitment.csv`, `landscape.csv`, `basins.png` and
/// `landscape.png` (for gene `gene`) into `dir`.
///
/// # Errors
/// [`WriteError`] if a file cannot be written.
pub fn write_basins(
    model: &Model,
    rec: &Recording,
    opts: &BasinOptions,
    style: &render::Style,
    gene: usize,
    dir: &Path,
    progress: &dyn Progress,
) -> Result<BasinReport, WriteError> {
    std::fs::create_dir_all(dir).map_err(|source| export::ExportError::Io { path: dir.to_path_buf(), source })?;
    let analysis = crate::phase::basins::analyse_with_progress(model, rec, opts, progress)?;
    let last = rec.times.len() - 1;
    let hi: Vec<f64> = rec.max_levels(0..rec.len())?.into_iter().map(|m| 1.2 * m.max(1e-3)).collect();
    let landscape = crate::phase::landscape(model, rec.times[last], &hi);
    let path = |name: &str| dir.join(name);
    export::write_attractors(rec, &analysis, &path("attractors.csv"))?;
    export::write_basins(rec, &analysis, &path("basins.csv"))?;
    export::write_commitment(rec, &analysis, &path("commitment.csv"))?;
    export::write_landscape(&rec.genes, &landscape, &path("landscape.csv"))?;
    let mut files: Vec<PathBuf> =
        ["attractors.csv", "basins.csv", "commitment.csv", "landscape.csv"].iter().map(|n| path(n)).collect();
    let kymo = render::basin_kymograph(rec, &analysis, style);
    files.extend(write_picture(&path("basins.png"), &kymo, style.svg)?);
    let land = render::landscape_picture(rec, &landscape, gene, &analysis.on_level, style);
    files.extend(write_picture(&path("landscape.png"), &land, style.svg)?);
    Ok(BasinReport { analysis, landscape, files })
}

/// Draws the phase portrait of `nucleus` in the plane of genes `a`, `b` at
/// snapshot `s` into `path`; with `cloud`, also the animation of all nuclei
/// over it, beside it as `<path stem>_cloud.gif`.
///
/// # Errors
/// [`WriteError`] if the file cannot be written.
pub fn write_portrait(
    model: &Model,
    rec: &Recording,
    nucleus: usize,
    genes: [usize; 2],
    s: usize,
    style: &render::Style,
    path: &Path,
    cloud: bool,
) -> Result<crate::phase::PortraitData, WriteError> {
    let data = crate::phase::portrait_data(model, rec, nucleus, genes[0], genes[1], s)?;
    let canvas = render::portrait(rec, &data, style);
    write_picture(path, &canvas, style.svg)?;
    if cloud {
        let stem = path.file_stem().map_or_else(|| "portrait".into(), |s| s.to_string_lossy().into_owned());
        let gif = path.with_file_name(format!("{stem}_cloud.gif"));
        export::write_atomic(&gif, |w| render::write_cloud_gif(rec, &data, style, w).map(|_| ()))?;
    }
    Ok(data)
}

/// Writes a bifurcation diagram into `dir`: `bifurcation_branches.csv`,
/// `bifurcation_points.csv` and `bifurcation.png` (gene `gene`'s level;
/// SVG beside it when the style asks).
///
/// # Errors
/// [`WriteError`] if a file cannot be written.
pub fn write_bifurcation(
    d: &crate::phase::Diagram,
    genes: &[String],
    gene: usize,
    style: &render::Style,
    dir: &Path,
) -> Result<(), WriteError> {
    export::write_atomic(&dir.join("bifurcation_branches.csv"), |w| export::write_branches_to(d, genes, w))?;
    export::write_atomic(&dir.join("bifurcation_points.csv"), |w| export::write_special_points_to(d, genes, w))?;
    let canvas = render::bifurcation_picture(d, genes, gene, style);
    write_picture(&dir.join("bifurcation.png"), &canvas, style.svg)?;
    Ok(())
}

/// Runs a screen of `mutants` and writes `shifts.csv` and `shifts.png` into
/// `dir`; with `animate`, also `pair_<mutant>.gif` (wild type above, that
/// mutant below, both simulated in full).
///
/// # Errors
/// [`WriteError`] if the wild type fails or a file cannot be written.
pub fn write_screen(
    model: &Model,
    mutants: &[crate::model::Mutant],
    style: &render::Style,
    dir: &Path,
    animate: Option<&crate::model::Mutant>,
    parallel: bool,
    progress: &dyn Progress,
) -> Result<(crate::screen::Screen, Option<String>), WriteError> {
    let screen = crate::screen::run_screen_with(model, mutants, parallel, progress)?;
    let note = write_screen_files(model, &screen, style, dir, animate, parallel)?;
    Ok((screen, note))
}

/// Writes a finished (or merged) screen's `shifts.csv` and `shifts.png`
/// into `dir`, and with `animate` the wild type beside that mutant
/// (`pair_<name>.gif`); returns a note if the animation gave up frames or
/// colours to meet `--gif-max-mb`.
///
/// # Errors
/// [`WriteError`] if a file cannot be written or an animated run fails.
pub fn write_screen_files(
    model: &Model,
    screen: &crate::screen::Screen,
    style: &render::Style,
    dir: &Path,
    animate: Option<&crate::model::Mutant>,
    parallel: bool,
) -> Result<Option<String>, WriteError> {
    std::fs::create_dir_all(dir).map_err(|source| export::ExportError::Io { path: dir.to_path_buf(), source })?;
    export::write_shifts(screen, &dir.join("shifts.csv"))?;
    let genes: Vec<String> = model.genes.iter().map(|g| g.name.clone()).collect();
    let chart = render::shift_chart(screen, &genes, style);
    write_picture(&dir.join("shifts.png"), &chart, style.svg)?;
    if let Some(m) = animate {
        let quiet = crate::RunOptions { parallel, ..Default::default() };
        let wt = crate::simulate(model, &quiet)?.recording;
        let mutant_model = model.with_mutant(m);
        let mt = crate::simulate(&mutant_model, &quiet)?.recording;
        let mut wt_style = style.clone();
        wt_style.title = format!("{}: wild type", style.title);
        let mut mt_style = style.clone();
        mt_style.title = format!("{}: {}", style.title, m.name);
        let safe: String =
            m.name.chars().map(|c| if c.is_alphanumeric() || c == '-' || c == '_' { c } else { '_' }).collect();
        let name = format!("pair_{safe}.gif");
        let mut made = None;
        export::write_atomic(&dir.join(&name), |w| {
            made = Some(render::write_pair_gif(&wt, &mt, &wt_style, &mt_style, w)?);
            Ok(())
        })?;
        return Ok(made.and_then(|m| m.describe(&name)));
    }
    Ok(None)
}

/// The picture of `screen --over-time`.
pub const SHIFTS_OVER_TIME: &str = "shifts_over_time.png";

/// Runs the wild type and every mutant with all their snapshots (mutants in
/// parallel when `parallel`) and draws [`SHIFTS_OVER_TIME`] into `dir`: each
/// mutant's boundaries over time against the wild type's. A mutant whose run
/// fails gets its panel with the reason. Returns the files written.
///
/// # Errors
/// [`WriteError`] if the wild type fails or a file cannot be written.
pub fn write_shifts_over_time(
    model: &Model,
    mutants: &[crate::model::Mutant],
    style: &render::Style,
    dir: &Path,
    parallel: bool,
) -> Result<Vec<PathBuf>, WriteError> {
    use rayon::prelude::*;
    let quiet = crate::RunOptions { parallel, ..Default::default() };
    let wt = crate::simulate(model, &quiet)?.recording;
    let wt_bounds = readout::find_boundaries(&wt)?;
    let one = |m: &crate::model::Mutant| -> render::MutantRun {
        let run = crate::simulate(&model.with_mutant(m), &crate::RunOptions::default())
            .map_err(|e| format!("run failed: {e}"))
            .and_then(|r| {
                let b = readout::find_boundaries(&r.recording).map_err(|e| e.to_string())?;
                Ok((r.recording, b))
            });
        (m.name.clone(), run)
    };
    let runs: Vec<render::MutantRun> =
        if parallel { mutants.par_iter().map(one).collect() } else { mutants.iter().map(one).collect() };
    let mut titled = style.clone();
    titled.title = format!("{}: boundaries over time in mutants", style.title);
    let canvas = render::shifts_over_time((&wt, &wt_bounds), &runs, &titled)?;
    Ok(write_picture(&dir.join(SHIFTS_OVER_TIME), &canvas, style.svg)?)
}

/// Runs a sweep ([`crate::sweep::run_sweep`]) and writes `sweep.csv`,
/// `sweep_boundaries.csv` and `sweep.png` into `dir`.
///
/// # Errors
/// [`WriteError`] if a file cannot be written.
pub fn write_sweep(
    model: &Model,
    axes: &[crate::sweep::Axis],
    style: &render::Style,
    dir: &Path,
    parallel: bool,
    progress: &dyn Progress,
) -> Result<crate::sweep::Sweep, WriteError> {
    let sweep = crate::sweep::run_sweep(model, axes, parallel, progress);
    write_sweep_files(&sweep, style, dir)?;
    Ok(sweep)
}

/// Writes a finished (or merged) sweep's `sweep.csv`, `sweep_boundaries.csv`
/// and `sweep.png` into `dir`.
///
/// # Errors
/// [`WriteError`] if a file cannot be written.
pub fn write_sweep_files(sweep: &crate::sweep::Sweep, style: &render::Style, dir: &Path) -> Result<(), WriteError> {
    std::fs::create_dir_all(dir).map_err(|source| export::ExportError::Io { path: dir.to_path_buf(), source })?;
    export::write_sweep(sweep, dir)?;
    let picture = render::sweep_picture(sweep, style);
    write_picture(&dir.join("sweep.png"), &picture, style.svg)?;
    Ok(())
}

/// The table `screen --replicates` writes beside `shifts.csv`.
pub const SCREEN_REPLICATES: &str = "replicate_shifts.csv";

/// Runs `n` replicate embryos of the wild type and of every mutant with the
/// same seeds ([`crate::replicates::paired_shifts`]) and writes
/// [`SCREEN_REPLICATES`] into `dir`: each final boundary's shift with its
/// 95 % interval and the change of its positional error.
///
/// # Errors
/// [`WriteError`] if an embryo fails or the file cannot be written.
pub fn write_screen_replicates(
    model: &Model,
    mutants: &[crate::model::Mutant],
    n: usize,
    dir: &Path,
    embryos: &dyn crate::replicates::Embryos,
    progress: &dyn Progress,
) -> Result<Vec<crate::replicates::PairedShift>, WriteError> {
    let models = crate::replicates::shard::screen_models(model, mutants);
    let passes: Vec<String> = models.iter().map(|(name, _)| crate::replicates::pass::mutant(name)).collect();
    let rows = crate::replicates::paired_shifts_with(embryos, model, &models, &passes, n, progress)?;
    export::write_shifts_over_embryos(&rows, &dir.join(SCREEN_REPLICATES))?;
    Ok(rows)
}

/// Computes boundary sensitivities and writes `sensitivity.csv` and `sensitivity.png`.
///
/// # Errors
/// [`WriteError`] if the wild type fails or a file cannot be written.
pub fn write_sensitivity(
    model: &Model,
    step_ln: f64,
    style: &render::Style,
    dir: &Path,
    parallel: bool,
    progress: &dyn Progress,
) -> Result<Vec<crate::screen::SensitivityRow>, WriteError> {
    let rows = crate::screen::sensitivity_with(model, step_ln, parallel, progress)?;
    write_sensitivity_files(&rows, style, dir)?;
    Ok(rows)
}

/// Writes `sensitivity.csv` and `sensitivity.png` of finished `rows` (of a
/// whole run or merged shards).
///
/// # Errors
/// [`WriteError`] if a file cannot be written.
pub fn write_sensitivity_files(
    rows: &[crate::screen::SensitivityRow],
    style: &render::Style,
    dir: &Path,
) -> Result<(), WriteError> {
    std::fs::create_dir_all(dir).map_err(|source| export::ExportError::Io { path: dir.to_path_buf(), source })?;
    export::write_sensitivity(rows, &dir.join("sensitivity.csv"))?;
    let map = render::sensitivity_map(rows, style);
    write_picture(&dir.join("sensitivity.png"), &map, style.svg)?;
    Ok(())
}

/// Writes a finished fit: `fit.csv`, `fit_trace.csv`, `fit_residuals.csv`,
/// `fit_correlation.csv`, the fitted model `fitted.toml`, `fit_trace.png`,
/// `fit_boundaries.png` and, if profiles were asked for, `fit_profiles.csv`
/// and `fit_profiles.png`.
///
/// # Errors
/// [`WriteError`] if a file cannot be written.
pub fn write_fit(
    problem: &crate::fit::FitProblem,
    result: &crate::fit::FitResult,
    style: &render::Style,
    dir: &Path,
) -> Result<(), WriteError> {
    std::fs::create_dir_all(dir).map_err(|source| export::ExportError::Io { path: dir.to_path_buf(), source })?;
    export::write_fit(problem, result, &dir.join("fit.csv"))?;
    export::write_trace(result, &dir.join("fit_trace.csv"))?;
    export::write_residuals(result, &dir.join("fit_residuals.csv"))?;
    export::write_correlation(problem, result, &dir.join("fit_correlation.csv"))?;
    export::write_fit_profiles(problem, result, &dir.join("fit_profiles.csv"))?;
    export::write_starts(problem, result, &dir.join("fit_starts.csv"))?;
    export::write_combinations(problem, result, &dir.join("fit_combinations.csv"))?;
    let text = crate::fit::fitted_model_text(problem, &result.values(), result.objective)
        .map_err(|message| export::ExportError::Content { path: dir.join("fitted.toml"), message })?;
    export::write_atomic(&dir.join("fitted.toml"), |w| w.write_all(text.as_bytes()))?;
    let title = &problem.model.title;
    let trace = render::fit_trace(result, title, style);
    write_picture(&dir.join("fit_trace.png"), &trace, style.svg)?;
    let names: Vec<String> = problem.genotypes.iter().map(|g| g.name.clone()).collect();
    let genes: Vec<(String, [u8; 3])> = problem.model.genes.iter().map(|g| (g.name.clone(), g.color)).collect();
    let chart = render::fit_boundaries(result, &names, &genes, title, style);
    write_picture(&dir.join("fit_boundaries.png"), &chart, style.svg)?;
    if !result.profiles.is_empty() {
        let params: Vec<String> = problem.params.iter().map(|p| p.name.clone()).collect();
        let chart = render::fit_profiles(result, &params, title, style);
        write_picture(&dir.join("fit_profiles.png"), &chart, style.svg)?;
    }
    Ok(())
}

/// The animation of `replicates --animate K`.
pub const EMBRYOS_GIF: &str = "embryos.gif";

/// What `anlage replicates` is asked to do.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct ReplicateJob {
    /// Embryos.
    pub n: usize,
    /// Also rerun with each noise source alone.
    pub attribute: bool,
    /// Also rerun with half the noise step.
    pub check_step: bool,
    /// Animate the first this many embryos side by side (0: no animation).
    pub animate: usize,
}

/// What `anlage replicates` found.
#[derive(Debug, Clone)]
pub struct ReplicateReport {
    /// The embryos with every noise source.
    pub replicates: crate::replicates::Replicates,
    /// Each source alone (when asked).
    pub shares: Vec<crate::replicates::Share>,
    /// Half the noise step (when asked, for stochastic models).
    pub step: Vec<crate::replicates::StepChange>,
    /// For a mutant: how it moves each wild-type boundary, embryo by embryo.
    pub shifts: Vec<crate::replicates::PairedShift>,
    /// What the animation gave up to meet `--gif-max-mb`, if anything.
    pub notes: Vec<String>,
}

/// Runs the replicate embryos and writes `precision.csv`, `widths.csv`,
/// `decoding.csv`, `embryo_boundaries.csv` (written as the embryos finish)
/// and `replicates.png` into `dir`; with `attribute`, also reruns the
/// embryos with each noise source alone and writes `attribution.csv`; with
/// `check_step`, reruns them with half the noise step and writes
/// `step_check.csv`; given the name of the mutant that `model` is and its
/// `wild_type`, also
/// runs the same embryos of the wild type and writes `shift.csv` (each
/// boundary's shift with its standard error). A table not asked for this
/// time is removed, so that one from an earlier run cannot pass for this run's.
///
/// # Errors
/// [`WriteError`] if an embryo fails or a file cannot be written.
pub fn write_replicates(
    model: &Model,
    job: ReplicateJob,
    wild_type: Option<(&str, &Model)>,
    style: &render::Style,
    dir: &Path,
    embryos: &dyn crate::replicates::Embryos,
    progress: &dyn Progress,
) -> Result<ReplicateReport, WriteError> {
    use crate::replicates::{self, Sources, pass};
    std::fs::create_dir_all(dir).map_err(|source| export::ExportError::Io { path: dir.to_path_buf(), source })?;
    // Every embryo of every set runs before any table is written, so that a
    // set that fails leaves the folder as it was: the embryos' table goes to
    // a side file first and takes its name with the others.
    let rows = dir.join("embryo_boundaries.csv");
    let pending = dir.join(".embryo_boundaries.csv.pending");
    let mut outcome = None;
    let written = export::write_atomic(&pending, |w| {
        let mut failed = export::embryo_header(w).err();
        let r = replicates::run_with(embryos, pass::ALL, model, job.n, &Sources::all(model), progress, &mut |i, bs| {
            if failed.is_none()
                && let Err(e) = export::embryo_rows(i, bs, w)
            {
                failed = Some(e);
            }
        });
        let ok = r.is_ok();
        outcome = Some(r);
        match failed {
            Some(e) => Err(e),
            None if ok => Ok(()),
            // Nothing is kept of a set of embryos that failed.
            None => Err(std::io::Error::other("the embryos failed")),
        }
    });
    let all = match (outcome, written) {
        (Some(Err(e)), _) => return Err(e.into()),
        (_, Err(e)) => return Err(e.into()),
        (Some(Ok(all)), Ok(())) => all,
        (None, Ok(())) => unreachable!("the table's body ran"),
    };
    let reruns = (|| -> Result<_, WriteError> {
        let shares =
            if job.attribute { replicates::attribute_with(embryos, model, job.n, &all, progress)? } else { Vec::new() };
        let step = if job.check_step {
            replicates::halved_step_with(embryos, model, job.n, &all, progress)?
        } else {
            Vec::new()
        };
        // The mutant's embryos in the pairing are those of every source on.
        let shifts = match wild_type {
            Some((name, w)) => replicates::paired_shifts_with(
                embryos,
                w,
                &[(name.to_string(), model.clone())],
                &[pass::ALL.to_string()],
                job.n,
                progress,
            )?,
            None => Vec::new(),
        };
        let runs = if job.animate > 0 { replicates::recordings(model, job.animate)? } else { Vec::new() };
        Ok((shares, step, shifts, runs))
    })();
    let (shares, step, shifts, runs) = match reruns {
        Ok(done) => done,
        Err(e) => {
            let _ = std::fs::remove_file(&pending);
            return Err(e);
        }
    };
    std::fs::rename(&pending, &rows).map_err(|source| export::ExportError::Io { path: rows.clone(), source })?;
    export::write_precision(&all, &dir.join("precision.csv"))?;
    // Where these replicates came from, so that `compare --replicates` can
    // refuse them for a run of another model.
    let origin = serde_json::json!({
        "kind": "replicates",
        "model_prediction": true,
        "model_text_sha256": crate::replicates::text_sha256(&model.text),
        "model_inputs_sha256": model.inputs_sha256(),
        "mutant": wild_type.map(|(name, _)| name),
        "embryos": job.n,
        "seed": model.seed,
    });
    export::write_atomic(&dir.join(crate::replicates::ORIGIN), |w| {
        serde_json::to_writer_pretty(&mut *w, &origin).map_err(std::io::Error::other)?;
        w.write_all(b"\n")
    })?;
    export::write_widths(&all, &dir.join("widths.csv"))?;
    export::write_decoding(&all, &dir.join("decoding.csv"))?;
    if wild_type.is_some() {
        export::write_shifts_over_embryos(&shifts, &dir.join("shift.csv"))?;
    }
    for (asked, name) in
        [(job.attribute, "attribution.csv"), (job.check_step, "step_check.csv"), (wild_type.is_some(), "shift.csv")]
    {
        if !asked {
            let _ = std::fs::remove_file(dir.join(name));
        }
    }
    if job.attribute {
        export::write_attribution(&shares, &dir.join("attribution.csv"))?;
    }
    if job.check_step {
        export::write_step_check(&step, &dir.join("step_check.csv"))?;
    }
    let picture = render::replicates_picture(&all, style);
    write_picture(&dir.join("replicates.png"), &picture, style.svg)?;
    let bands = render::boundary_bands(&all, style);
    write_picture(&dir.join("boundary_bands.png"), &bands, style.svg)?;
    let mut notes = Vec::new();
    if job.animate > 0 {
        let columns = (job.animate as f64).sqrt().ceil() as usize;
        let styles: Vec<render::Style> = (0..runs.len())
            .map(|i| render::Style {
                title: format!("embryo {i}"),
                width: (style.width / columns as u32).max(320),
                pixel_width: style.pixel_width.map(|p| (p / columns as u32).max(1)),
                ..style.clone()
            })
            .collect();
        let panels: Vec<(&crate::Recording, &render::Style)> = runs.iter().zip(&styles).collect();
        let mut made = None;
        export::write_atomic(&dir.join(EMBRYOS_GIF), |w| {
            made = Some(render::write_grid_gif(&panels, columns, true, w)?);
            Ok(())
        })?;
        notes.extend(made.and_then(|m| m.describe(EMBRYOS_GIF)));
    } else {
        let _ = std::fs::remove_file(dir.join(EMBRYOS_GIF));
    }
    Ok(ReplicateReport { replicates: all, shares, step, shifts, notes })
}

/// Writes `fold_curves.csv`, `fold_cusps.csv` and `fold_curves.png` into `dir`.
///
/// # Errors
/// [`WriteError`] if a file cannot be written.
pub fn write_fold_curves(
    plane: &render::FoldPlane,
    genes: &[String],
    style: &render::Style,
    dir: &Path,
) -> Result<(), WriteError> {
    let names = (plane.p.0, plane.q.0);
    export::write_atomic(&dir.join("fold_curves.csv"), |w| {
        export::write_fold_curves_to(plane.curves, names, genes, false, w)
    })?;
    export::write_atomic(&dir.join("fold_cusps.csv"), |w| {
        export::write_fold_curves_to(plane.curves, names, genes, true, w)
    })?;
    write_picture(&dir.join("fold_curves.png"), &render::fold_curves_picture(plane, style), style.svg)?;
    Ok(())
}
