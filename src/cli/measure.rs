//! The `measure` and `synthesize` verbs.

use std::path::{Path, PathBuf};

use anyhow::{Context, bail};

use anlage::measure::{
    self, Channel, Contrast, HeadRule, ImageMeasurement, MeasureOptions, Outline, Planes, Side, batch, synth,
};
use anlage::render::StyleError;

use super::args::{HeadArg, MeasureArgs, StainArg, SynthesizeArgs};
use super::common::{Report, refuse_json_with_stdout, say, table_to_stdout, write_table_to_stdout};

pub(super) fn bad_option(option: &str, value: &str, fix: &str) -> anyhow::Error {
    StyleError::OutOfRange { option: option.into(), value: value.into(), fix: fix.into() }.into()
}

/// Loads the planes of one image plus any per-channel files named in `specs`
/// and the outline file, and the channels to read (and the outline plane).
fn planes_and_channels(
    image: &Path,
    specs: &[String],
    outline: Option<&str>,
) -> anyhow::Result<(Planes, Vec<Channel>, Option<usize>)> {
    let mut planes = measure::load(image)?;
    // A plane of the image (a number), or a file beside the image (FILE or FILE:PLANE).
    let plane_of = |what: &str, planes: &mut Planes| -> anyhow::Result<usize> {
        let what = what.trim();
        if let Ok(k) = what.parse::<usize>() {
            return Ok(k);
        }
        let (file, pick) = match what.rsplit_once(':').map(|(f, k)| (f, k.parse::<usize>())) {
            Some((f, Ok(k))) => (f, Some(k)),
            _ => (what, None),
        };
        let extra = measure::load(&image.with_file_name(file))?;
        if (extra.width, extra.height) != (planes.width, planes.height) {
            bail!(measure::MeasureError::SizeMismatch {
                path: extra.path,
                got: (extra.width, extra.height),
                want: (planes.width, planes.height)
            });
        }
        let plane = match pick {
            Some(k) => extra.planes.get(k).ok_or(measure::MeasureError::NoChannel {
                path: extra.path.clone(),
                index: k,
                count: extra.planes.len(),
            })?,
            None => extra.single_plane()?,
        };
        planes.planes.push(plane.to_vec());
        Ok(planes.planes.len() - 1)
    };
    let mut channels = Vec::new();
    for spec in specs {
        let (what, gene) =
            spec.split_once('=').ok_or_else(|| bad_option("--channel", spec, "write PLANE=gene or FILE=gene"))?;
        if gene.trim().is_empty() {
            bail!(bad_option("--channel", spec, "name the gene after the ="));
        }
        let plane = plane_of(what, &mut planes)?;
        if channels.iter().any(|c: &Channel| c.gene == gene.trim()) {
            bail!(bad_option("--channel", spec, "name each gene once (one plane per gene)"));
        }
        channels.push(Channel { gene: gene.trim().to_string(), plane });
    }
    let outline = outline.map(|o| plane_of(o, &mut planes)).transpose()?;
    Ok((planes, channels, outline))
}

fn colors_of(channels: &[Channel]) -> Vec<(String, [u8; 3])> {
    channels
        .iter()
        .enumerate()
        .map(|(k, c)| (c.gene.clone(), anlage::model::PALETTE[k % anlage::model::PALETTE.len()]))
        .collect()
}

fn stem_of(path: &Path) -> String {
    path.file_stem().map_or_else(|| "image".into(), |s| s.to_string_lossy().into_owned())
}

/// Measures one image, writes its check picture beside it and prints what was found.
fn measure_image(args: &MeasureArgs, path: &Path) -> anyhow::Result<ImageMeasurement> {
    let (planes, channels, outline_plane) = planes_and_channels(path, &args.channels, args.outline.as_deref())?;
    let outline = match (&args.mask, outline_plane) {
        (Some(mask), _) => {
            let file = PathBuf::from(mask.replace("{stem}", &stem_of(path)));
            Outline::Mask(measure::load_mask(&file, (planes.width, planes.height))?)
        }
        (None, Some(k)) => Outline::Plane(k),
        (None, None) => Outline::AllPlanes,
    };
    let head = match args.head {
        HeadArg::Left => HeadRule::Given(Side::Left),
        HeadArg::Right => HeadRule::Given(Side::Right),
        HeadArg::Top => HeadRule::Given(Side::Top),
        HeadArg::Bottom => HeadRule::Given(Side::Bottom),
        HeadArg::Auto => HeadRule::Guess { gene: args.head_high.clone() },
    };
    if args.head_high.is_some() && args.head != HeadArg::Auto {
        bail!(bad_option("--head-high", args.head_high.as_deref().unwrap_or(""), "use it with --head auto only"));
    }
    let contrast = match args.stain {
        StainArg::Bright => Some(Contrast::Bright),
        StainArg::Dark => Some(Contrast::Dark),
        StainArg::Auto => None,
    };
    let options = MeasureOptions { channels: channels.clone(), head, contrast, outline };
    let m = measure::measure(&planes, &options)?;
    let report = Report { to_stderr: Report::for_out(args.out.as_deref()).to_stderr || args.json };
    let how = if m.contrast_how == "given" { "given".to_string() } else { m.contrast_how.clone() };
    say!(report, "{}: stain {}, {how}; outline from {}", path.display(), m.contrast.describe(), m.outline_how);
    for e in &m.embryos {
        let ((hx, hy), (tx, ty)) = (e.head_tail[0], e.head_tail[1]);
        let confidence = e.head.confidence.map_or_else(String::new, |c| format!(", confidence {c:.2}"));
        say!(
            report,
            "  embryo {}: {:.1} px long at {:.1}°, head ({hx:.1}, {hy:.1}) px to tail ({tx:.1}, {ty:.1}) px; head {}{confidence}",
            e.number,
            e.length_px,
            e.embryo.angle_deg(),
            e.head.how
        );
        for b in &e.boundaries {
            say!(report, "    {:<12} {:<8} {:>6.2} % of length", b.gene, b.direction, b.position_pct);
        }
        for f in e.flags() {
            say!(report, "    ! {f}");
        }
    }
    for s in &m.skipped {
        say!(report, "  embryo {}: {}", s.number, s.reason);
    }
    if !table_to_stdout(args.out.as_deref()) {
        let check = anlage::render::check_picture(&planes, &m, &colors_of(&channels));
        let check_path = path.with_file_name(format!("{}_check.png", stem_of(path)));
        anlage::export::write_atomic(&check_path, |w| w.write_all(&check.png()?))?;
        say!(report, "  check picture: {}", check_path.display());
    }
    if let Some(e) = m.none_measured(path) {
        bail!(e);
    }
    Ok(m)
}

/// `anlage measure`.
pub fn measure_verb(args: &MeasureArgs) -> anyhow::Result<()> {
    let image = &args.image;
    let folder = image.is_dir();
    let images: Vec<PathBuf> = if folder {
        let v: Vec<PathBuf> = batch::images_in(image)
            .with_context(|| format!("reading {}", image.display()))?
            .into_iter()
            .filter(|p| !stem_of(p).ends_with("_mask"))
            .collect();
        if v.is_empty() {
            bail!(bad_option("IMAGE", &image.display().to_string(), "the folder holds no PNG or TIFF images"));
        }
        v
    } else {
        vec![image.to_path_buf()]
    };
    let when = batch::When::parse(args.time.as_deref());
    if when.time_min.is_some_and(|t| t < 0.0) {
        bail!(bad_option("--time", args.time.as_deref().unwrap_or(""), "give minutes >= 0, or a stage label"));
    }
    if let Some(o) = &args.out {
        let image_like = o
            .extension()
            .is_some_and(|x| ["png", "tif", "tiff"].contains(&x.to_string_lossy().to_lowercase().as_str()));
        if image_like || images.iter().any(|i| i == o) {
            bail!(bad_option("--out", &o.display().to_string(), "name a .csv table; it must not be one of the images"));
        }
    }
    refuse_json_with_stdout(args.out.as_deref(), args.json)?;
    let report = Report { to_stderr: Report::for_out(args.out.as_deref()).to_stderr || args.json };
    let (mut rows, mut profiles, mut names, mut failures) = (Vec::new(), Vec::new(), Vec::new(), Vec::new());
    let mut notes_seen: Vec<String> = Vec::new();
    let mut written: Vec<PathBuf> = Vec::new();
    let mut aggregated_rows = None;
    for path in &images {
        match measure_image(args, path) {
            Ok(m) => {
                let stem = stem_of(path);
                rows.extend(batch::embryo_rows(&stem, &m, &when));
                profiles.extend(batch::profile_rows(&stem, &m));
                names.extend(m.embryos.iter().map(|e| batch::sample_name(&stem, &m, e)));
            }
            Err(e) if folder => {
                say!(report, "{}: NOT MEASURED: {e:#}", path.display());
                failures.push((path.clone(), format!("{e:#}")));
            }
            Err(e) => return Err(e),
        }
    }
    let out = args.out.clone().unwrap_or_else(|| {
        if folder {
            image.join("measured.csv")
        } else {
            image.with_file_name(format!("{}_boundaries.csv", stem_of(image)))
        }
    });
    // Beside the table: <table>_embryos.csv, <table>_profiles.csv (<image>_profiles.csv by default).
    let base = stem_of(&out);
    let base = if args.out.is_none() && !folder { stem_of(image) } else { base };
    let beside = |what: &str| out.with_file_name(format!("{base}_{what}.csv"));
    if !names.is_empty() {
        let aggregated;
        let table = if folder {
            let sample = image.file_name().map_or_else(|| "batch".into(), |s| s.to_string_lossy().into_owned());
            let notes;
            (aggregated, notes) = batch::aggregate(&rows, &names, &sample);
            say!(
                report,
                "{} embryos measured in {} of {} images",
                names.len(),
                images.len() - failures.len(),
                images.len()
            );
            for n in &notes {
                say!(report, "  note: {n}");
            }
            notes_seen.extend(notes.iter().map(|n| n.to_string()));
            aggregated_rows = Some(aggregated.clone());
            &aggregated
        } else {
            &rows
        };
        if table_to_stdout(args.out.as_deref()) {
            write_table_to_stdout(|w| anlage::export::write_rows_to(table, w))?;
        } else {
            anlage::export::write_measured(table, &out)?;
            written.push(out.clone());
            if folder {
                anlage::export::write_measured(&rows, &beside("embryos"))?;
                written.push(beside("embryos"));
                say!(report, "wrote {} (mean and sd per boundary) and {}", out.display(), beside("embryos").display());
            } else {
                say!(report, "wrote {} (measured from images)", out.display());
            }
            anlage::export::write_measured_profiles(&profiles, &beside("profiles"))?;
            written.push(beside("profiles"));
            say!(report, "wrote {} (profiles along the axis)", beside("profiles").display());
        }
    }
    if args.json {
        let failed: Vec<serde_json::Value> =
            failures.iter().map(|(p, why)| serde_json::json!({ "image": p, "why": why })).collect();
        println!(
            "{}",
            serde_json::json!({
                "kind": "measure",
                "model_prediction": false,
                "images": images.len(),
                "embryos": names.len(),
                "boundaries": aggregated_rows.as_ref().unwrap_or(&rows),
                "embryo_boundaries": if folder { serde_json::json!(rows) } else { serde_json::Value::Null },
                "notes": notes_seen,
                "not_measured": failed,
                "files": written,
            })
        );
    }
    if !failures.is_empty() {
        say!(report, "could not measure {} of {} images:", failures.len(), images.len());
        for (p, why) in &failures {
            say!(report, "  {}: {why}", p.display());
        }
        bail!(measure::MeasureError::Batch { failed: failures.len(), total: images.len() });
    }
    Ok(())
}

/// `anlage synthesize`.
pub fn synthesize_verb(run_dir: &Path, out: &Path, count: usize, seed: u64) -> anyhow::Result<()> {
    let saved = anlage::run_folder::load(run_dir)?;
    let rec = &saved.recording;
    if rec.grid.is_sheet() {
        bail!(bad_option(
            "run",
            &run_dir.display().to_string(),
            "synthesize draws embryos from a row; give a run of a row model"
        ));
    }
    let last = rec.times.len() - 1;
    let profiles = rec.axis_profiles(last, 0..rec.genes.len().min(3))?;
    let maxima: Vec<f64> = profiles.iter().map(|p| p.iter().copied().fold(1e-12, f64::max)).collect();
    std::fs::create_dir_all(out).with_context(|| format!("creating {}", out.display()))?;
    for k in 0..count {
        let angle = -40.0 + 80.0 * ((k as f64 * 0.618_034 + seed as f64 * 0.31) % 1.0);
        let o = synth::SynthOptions {
            width: 360,
            height: 260,
            semi_axes: (150.0, 58.0),
            angle_deg: angle,
            blur_px: 1.5,
            noise: 0.03,
            seed: seed + k as u64,
        };
        let level = |c: usize, pct: f64| {
            anlage::render::level_at(&profiles[c], rec.grid.spacing_um, pct / 100.0 * rec.grid.length_um()) / maxima[c]
        };
        let planes = synth::synthesize(&o, profiles.len(), &level);
        let path = out.join(format!("embryo_{:02}.png", k + 1));
        anlage::export::write_atomic(&path, |w| w.write_all(&synth::png(&planes, o.width, o.height, 16)?))?;
    }
    let note = format!(
        "INVENTED DATA: synthetic stained-embryo images drawn by `anlage synthesize` from the model run in {} \
         (genes {} as red, green, blue; rotated, blurred, with noise and an uneven background). Not measurements.\n",
        run_dir.display(),
        rec.genes.iter().take(3).cloned().collect::<Vec<_>>().join(", ")
    );
    anlage::export::write_atomic(&out.join("README.txt"), |w| w.write_all(note.as_bytes()))?;
    println!("wrote {count} synthetic images (invented data) to {}", out.display());
    Ok(())
}

/// `anlage measure`.
pub fn measure(args: &MeasureArgs) -> anyhow::Result<()> {
    measure_verb(args)
}

/// `anlage synthesize`.
pub fn synthesize(args: &SynthesizeArgs) -> anyhow::Result<()> {
    let SynthesizeArgs { run_dir, out, count, seed } = args;
    synthesize_verb(run_dir, out, *count, *seed)
}
