//! The `measure`, `compare` and `synthesize` verbs.

use std::collections::HashMap;
use std::path::{Path, PathBuf};

use anyhow::{Context, bail};

use anlage::compare::{self, MeasuredRow};
use anlage::measure::{self, Channel, Head, Planes, synth};
use anlage::render::{Style, StyleError};

fn bad_option(option: &str, value: &str, fix: &str) -> anyhow::Error {
    StyleError::OutOfRange { option: option.into(), value: value.into(), fix: fix.into() }.into()
}

/// Loads the planes of one image plus any per-channel files named in `specs`,
/// and the channels to read.
fn planes_and_channels(image: &Path, specs: &[String]) -> anyhow::Result<(Planes, Vec<Channel>)> {
    let mut planes = measure::load(image)?;
    let mut channels = Vec::new();
    for spec in specs {
        let (what, gene) =
            spec.split_once('=').ok_or_else(|| bad_option("--channel", spec, "write PLANE=gene or FILE=gene"))?;
        let plane = match what.parse::<usize>() {
            Ok(k) => k,
            Err(_) => {
                let extra = measure::load(&image.with_file_name(what))?;
                if (extra.width, extra.height) != (planes.width, planes.height) {
                    bail!(measure::MeasureError::SizeMismatch {
                        path: extra.path,
                        got: (extra.width, extra.height),
                        want: (planes.width, planes.height)
                    });
                }
                planes.planes.push(extra.planes[0].clone());
                planes.planes.len() - 1
            }
        };
        channels.push(Channel { gene: gene.trim().to_string(), plane });
    }
    Ok((planes, channels))
}

fn colors_of(channels: &[Channel]) -> Vec<(String, [u8; 3])> {
    channels
        .iter()
        .enumerate()
        .map(|(k, c)| (c.gene.clone(), anlage::model::PALETTE[k % anlage::model::PALETTE.len()]))
        .collect()
}

fn parse_time(time: &Option<String>) -> Option<f64> {
    time.as_ref().and_then(|t| t.parse::<f64>().ok())
}

/// `anlage measure`.
pub fn measure_verb(
    image: &Path,
    specs: &[String],
    head: Head,
    time: &Option<String>,
    out: &Option<PathBuf>,
) -> anyhow::Result<()> {
    let images: Vec<PathBuf> = if image.is_dir() {
        let mut v: Vec<PathBuf> = std::fs::read_dir(image)
            .with_context(|| format!("reading {}", image.display()))?
            .filter_map(|e| e.ok().map(|e| e.path()))
            .filter(|p| {
                p.extension()
                    .is_some_and(|x| ["png", "tif", "tiff"].contains(&x.to_string_lossy().to_lowercase().as_str()))
            })
            .filter(|p| !p.file_stem().is_some_and(|s| s.to_string_lossy().ends_with("_check")))
            .collect();
        v.sort();
        if v.is_empty() {
            bail!(measure::MeasureError::Empty { path: image.to_path_buf() });
        }
        v
    } else {
        vec![image.to_path_buf()]
    };
    let mut rows: Vec<MeasuredRow> = Vec::new();
    for path in &images {
        let (planes, channels) = planes_and_channels(path, specs)?;
        let m = measure::measure(&planes, &channels, head)?;
        let check = anlage::render::check_picture(&planes, &m, &colors_of(&channels));
        let stem = path.file_stem().map_or_else(|| "image".into(), |s| s.to_string_lossy().into_owned());
        let check_path = path.with_file_name(format!("{stem}_check.png"));
        anlage::export::write_atomic(&check_path, |w| w.write_all(&check.png()?))?;
        println!(
            "{}: embryo {:.0} px long at {:.1}°; {} boundaries",
            path.display(),
            m.length_px,
            m.embryo.angle_deg(),
            m.boundaries.len()
        );
        for b in &m.boundaries {
            println!("  {:<12} {:<8} {:>6.2} % of length", b.gene, b.direction, b.position_pct);
            rows.push(MeasuredRow {
                sample: stem.clone(),
                time_min: parse_time(time),
                gene: b.gene.clone(),
                direction: b.direction.to_string(),
                position_pct: b.position_pct,
                sd_pct: None,
                n: Some(1),
            });
        }
    }
    let table = if images.len() > 1 { aggregate(&rows, image, time) } else { rows };
    let out = out.clone().unwrap_or_else(|| {
        if image.is_dir() {
            image.join("measured.csv")
        } else {
            image.with_extension("").with_file_name(format!(
                "{}_boundaries.csv",
                image.file_stem().map_or_else(|| "image".into(), |s| s.to_string_lossy().into_owned())
            ))
        }
    });
    anlage::export::write_measured(&table, &out)?;
    println!("wrote {} (measured from images)", out.display());
    Ok(())
}

/// Mean and sd per boundary over images: boundaries grouped by gene,
/// direction and order along the axis.
fn aggregate(rows: &[MeasuredRow], folder: &Path, time: &Option<String>) -> Vec<MeasuredRow> {
    let mut groups: Vec<((String, String, usize), Vec<f64>)> = Vec::new();
    let mut seen: HashMap<(String, String, String), usize> = HashMap::new();
    for r in rows {
        let k = seen.entry((r.sample.clone(), r.gene.clone(), r.direction.clone())).or_insert(0);
        let key = (r.gene.clone(), r.direction.clone(), *k);
        *k += 1;
        match groups.iter_mut().find(|(g, _)| *g == key) {
            Some((_, v)) => v.push(r.position_pct),
            None => groups.push((key, vec![r.position_pct])),
        }
    }
    let sample = folder.file_name().map_or_else(|| "batch".into(), |s| s.to_string_lossy().into_owned());
    groups
        .into_iter()
        .map(|((gene, direction, _), v)| {
            let n = v.len() as f64;
            let mean = v.iter().sum::<f64>() / n;
            let sd =
                if v.len() > 1 { (v.iter().map(|x| (x - mean).powi(2)).sum::<f64>() / (n - 1.0)).sqrt() } else { 0.0 };
            MeasuredRow {
                sample: sample.clone(),
                time_min: parse_time(time),
                gene,
                direction,
                position_pct: mean,
                sd_pct: Some(sd),
                n: Some(v.len() as u32),
            }
        })
        .collect()
}

/// `anlage compare`.
pub fn compare_verb(run_dir: &Path, measured: &Path, stages: &[String], out: &Option<PathBuf>) -> anyhow::Result<()> {
    let mut map = HashMap::new();
    for s in stages {
        let (label, min) = s.split_once('=').ok_or_else(|| bad_option("--stage", s, "write LABEL=MINUTES"))?;
        let min: f64 =
            min.trim().parse().map_err(|_| bad_option("--stage", s, "write LABEL=MINUTES with a number of minutes"))?;
        map.insert(label.trim().to_string(), min);
    }
    let saved = anlage::run_dir::load(run_dir)?;
    let rows = compare::read_measured(measured, &map)?;
    let rec = &saved.recording;
    let cmp = compare::compare(rec, &rows)?;
    let dir = out.clone().unwrap_or_else(|| run_dir.to_path_buf());
    std::fs::create_dir_all(&dir).with_context(|| format!("creating {}", dir.display()))?;
    anlage::export::write_comparison(&cmp, &dir.join("comparison.csv"))?;
    let s = (0..rec.times.len())
        .find(|&s| cmp.rows.iter().any(|r| r.time_min == rec.times[s]))
        .unwrap_or(rec.times.len() - 1);
    let mut style = Style::for_recording(rec);
    style.title = format!("{}: simulated vs measured", saved.title);
    let overlay = anlage::render::comparison_overlay(rec, s, &cmp, &style)?;
    anlage::export::write_atomic(&dir.join("comparison.png"), |w| w.write_all(&overlay.png()?))?;
    println!("simulated (model prediction) vs measured boundaries:");
    for r in &cmp.rows {
        let f = |v: Option<f64>| v.map_or_else(|| "-".into(), |x| format!("{x:.2}"));
        println!(
            "  {:<10} t = {:<6} {:<10} {:<8} measured {:>7} sim {:>7} diff {:>7} z {:>6}  {}",
            r.sample,
            r.time_min,
            r.gene,
            r.direction,
            f(r.measured_pct),
            f(r.simulated_pct),
            f(r.difference_pct),
            f(r.z),
            r.status
        );
    }
    match cmp.rmse_pct {
        Some(e) => println!(
            "root-mean-square difference: {e:.3} % of axis length over {} matched boundaries",
            cmp.rows.iter().filter(|r| r.status == "matched").count()
        ),
        None => println!("no boundary could be matched"),
    }
    println!("wrote {}", dir.join("comparison.csv").display());
    Ok(())
}

/// `anlage synthesize`.
pub fn synthesize_verb(run_dir: &Path, out: &Path, count: usize, seed: u64) -> anyhow::Result<()> {
    let saved = anlage::run_dir::load(run_dir)?;
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
