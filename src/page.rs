//! The report page: one self-contained HTML file (`report.html`) that shows
//! what an output folder holds (a run, a screen, a sweep, a fit, a
//! comparison, basins or replicates): its pictures, its key tables, the
//! model text and how the run was stepped, under the notice that every
//! number is a model prediction. Pictures are embedded as data URIs, and
//! the page loads nothing from the network, so it can be mailed or opened
//! from a USB stick; the files beside it stay the reference.
//!
//! The page is assembled from the files present, in a fixed order, so the
//! same folder gives the same bytes.

use std::fmt::Write as _;
use std::path::{Path, PathBuf};

use base64::Engine as _;

use crate::export;
use crate::render::escape;
use crate::run_folder::{PREDICTION_NOTE, SUMMARY, Summary};

/// The page's file name.
pub const PAGE: &str = "report.html";

/// Animations larger than this are linked rather than embedded, bytes.
pub const EMBED_GIF_BYTES: u64 = 3 << 20;

/// Rows of a table shown on the page (the file holds them all).
pub const TABLE_ROWS: usize = 40;

/// A picture the page shows when its folder has it, with what it shows.
const PICTURES: &[(&str, &str)] = &[
    ("figure.png", "The run in one figure: pattern, kymograph, boundaries over time, attractors along the axis."),
    ("pattern.png", "The final pattern (a row drawn as an embryo, a sheet as itself)."),
    ("kymograph.png", "Levels along the axis (across) over time (down), with each boundary traced."),
    ("boundary_positions.png", "Each boundary's position against time."),
    ("profiles.png", "Expression profiles along the axis at chosen times."),
    ("pattern.gif", "The pattern over time."),
    ("comparison.png", "Simulated boundaries against the measured ones (bands: measured mean ± sd)."),
    ("shifts.png", "How far each mutant moves each wild-type boundary."),
    ("shifts_over_time.png", "Each mutant's boundaries over time (colours) against the wild type's (grey)."),
    ("sensitivity.png", "How far each boundary moves per relative change of each parameter."),
    ("sweep.png", "The kind of pattern over the swept parameters."),
    ("fit_boundaries.png", "Fitted against measured boundaries, genotype by genotype."),
    ("fit_profiles.png", "Profile likelihood of each fitted parameter."),
    ("fit_trace.png", "The objective over the search."),
    ("basins.png", "Which attractor each nucleus is headed for, over time."),
    ("landscape.png", "The attractors along the axis at the last snapshot."),
    ("replicates.png", "Boundary positions over replicate embryos."),
    ("boundary_bands.png", "Each boundary's mean ± sd over embryos, over time."),
];

/// A table the page shows when its folder has it: file, heading, what it
/// holds, and the column whose largest value picks the rows shown (the
/// final time of a run's tables), if any.
const TABLES: &[(&str, &str, &str, Option<&str>)] = &[
    ("boundaries.csv", "Boundaries", "Boundaries at the final time (µm and % of the axis length).", Some("time_min")),
    ("domains.csv", "Domains", "Domains at the final time.", Some("time_min")),
    ("comparison.csv", "Comparison", "Each measured boundary paired with the simulated one.", None),
    ("shifts.csv", "Mutant shifts", "Each mutant's shift of each boundary.", None),
    ("replicate_shifts.csv", "Shifts over embryos", "Shifts with 95 % intervals over paired embryos.", None),
    ("sensitivity.csv", "Sensitivities", "Boundary sensitivities to each parameter.", None),
    ("sweep.csv", "Sweep", "The pattern at each point of the sweep.", None),
    ("fit.csv", "Fitted parameters", "Estimates with their intervals.", None),
    ("fit_residuals.csv", "Residuals", "Each measured boundary's residual at the fit.", None),
    ("attractors.csv", "Attractors", "The attractors found.", None),
    ("precision.csv", "Precision", "Each boundary's mean and positional error over embryos.", None),
];

/// Model texts the page shows verbatim.
const TEXTS: &[(&str, &str)] = &[("model.toml", "The model as run"), ("fitted.toml", "The fitted model")];

/// A table as HTML: the header and up to [`TABLE_ROWS`] rows (those whose
/// `last_of` column holds its largest value, when given), and a line on
/// what was left out.
fn table_html(path: &Path, last_of: Option<&str>) -> Result<String, String> {
    let mut reader = csv::ReaderBuilder::new().flexible(true).from_path(path).map_err(|e| e.to_string())?;
    let headers: Vec<String> = reader.headers().map_err(|e| e.to_string())?.iter().map(str::to_string).collect();
    let mut rows: Vec<Vec<String>> = Vec::new();
    for rec in reader.records() {
        rows.push(rec.map_err(|e| e.to_string())?.iter().map(str::to_string).collect());
    }
    let total = rows.len();
    if let Some(col) = last_of.and_then(|c| headers.iter().position(|h| h == c)) {
        let value = |r: &Vec<String>| r.get(col).and_then(|v| v.parse::<f64>().ok());
        if let Some(last) = rows.iter().filter_map(value).reduce(f64::max) {
            rows.retain(|r| value(r) == Some(last));
        }
    }
    let picked = rows.len();
    rows.truncate(TABLE_ROWS);
    let mut html = String::from("<div class=\"table\"><table>\n<thead><tr>");
    for h in &headers {
        let _ = write!(html, "<th>{}</th>", escape(h));
    }
    html.push_str("</tr></thead>\n<tbody>\n");
    for r in &rows {
        html.push_str("<tr>");
        for c in r {
            let _ = write!(html, "<td>{}</td>", escape(&shown_number(c)));
        }
        html.push_str("</tr>\n");
    }
    html.push_str("</tbody></table></div>\n");
    let name = path.file_name().map_or_else(String::new, |n| n.to_string_lossy().into_owned());
    if rows.len() < total {
        let _ = writeln!(
            html,
            "<p class=\"note\">{} of the {total} rows shown{}; all are in <code>{}</code>.</p>",
            rows.len(),
            if picked < total { " (the final time)" } else { "" },
            escape(&name)
        );
    }
    Ok(html)
}

/// A table cell as shown: numbers written to full precision in the file
/// are shown to six significant figures (at most four decimals); other
/// text as it is.
fn shown_number(cell: &str) -> String {
    let Ok(v) = cell.parse::<f64>() else { return cell.to_string() };
    if !v.is_finite() || !cell.contains('.') || cell.len() <= 8 {
        return cell.to_string();
    }
    if v != 0.0 && v.abs() < 1e-3 {
        return format!("{v:.3e}");
    }
    let decimals = (5 - v.abs().log10().floor() as i32).clamp(0, 4) as usize;
    let text = format!("{v:.decimals$}");
    if text.contains('.') { text.trim_end_matches('0').trim_end_matches('.').to_string() } else { text }
}

fn data_uri(path: &Path, mime: &str) -> std::io::Result<String> {
    let bytes = std::fs::read(path)?;
    Ok(format!("data:{mime};base64,{}", base64::engine::general_purpose::STANDARD.encode(bytes)))
}

/// The run's facts from its `summary.json`.
fn run_facts(s: &Summary) -> String {
    let mut html = String::from("<table class=\"facts\">\n");
    let mut fact = |k: &str, v: String| {
        let _ = writeln!(html, "<tr><th>{}</th><td>{}</td></tr>", escape(k), escape(&v));
    };
    fact("tissue", s.tissue.clone());
    fact("genes", s.genes.join(", "));
    fact("simulated", format!("0 to {} min, {} snapshots", s.final_time_min, s.snapshots));
    fact("stepping", format!("{}; {} steps ({} rejected)", s.stepping, s.steps, s.rejected_steps));
    fact("seed", s.seed.to_string());
    if let Some(d) = &s.model_inputs_sha256 {
        fact("model inputs (SHA-256)", d.clone());
    }
    fact("written by", format!("anlage {}", s.anlage_version));
    html.push_str("</table>\n");
    html
}

/// Writes `report.html` into `dir` from the files there; returns its path.
/// `title` heads the page when the folder has no `summary.json` to name it.
///
/// # Errors
/// [`export::ExportError`] if a file cannot be read or the page written.
pub fn write_page(dir: &Path, title: &str) -> Result<PathBuf, export::ExportError> {
    let io = |path: &Path| {
        let path = path.to_path_buf();
        move |source| export::ExportError::Io { path, source }
    };
    let summary: Option<Summary> =
        std::fs::read_to_string(dir.join(SUMMARY)).ok().and_then(|t| serde_json::from_str(&t).ok());
    let title = summary.as_ref().map_or(title, |s| s.title.as_str()).to_string();
    let mut nav = Vec::new();
    let mut body = String::new();
    let mut section = |id: &str, heading: &str, inner: &str| {
        nav.push(format!("<a href=\"#{id}\">{}</a>", escape(heading)));
        let _ = write!(body, "<section id=\"{id}\">\n<h2>{}</h2>\n{inner}</section>\n", escape(heading));
    };
    if let Some(s) = &summary {
        section("run", "Run", &run_facts(s));
    }
    let mut pictures = String::new();
    let mut shown: Vec<&str> = Vec::new();
    for (name, what) in PICTURES {
        let path = dir.join(name);
        let Ok(meta) = std::fs::metadata(&path) else { continue };
        shown.push(name);
        let mime = if name.ends_with(".gif") { "image/gif" } else { "image/png" };
        let img = if name.ends_with(".gif") && meta.len() > EMBED_GIF_BYTES {
            format!(
                "<p class=\"note\">The animation is {:.1} MB, too large to embed: open <a href=\"{name}\">{name}</a> \
                 beside this page.</p>",
                meta.len() as f64 / 1048576.0
            )
        } else {
            format!("<img src=\"{}\" alt=\"{name}\">", data_uri(&path, mime).map_err(io(&path))?)
        };
        let _ =
            writeln!(pictures, "<figure>{img}<figcaption><code>{name}</code>: {}</figcaption></figure>", escape(what));
    }
    // Portraits and other pictures of the folder, by name.
    let mut others: Vec<String> = std::fs::read_dir(dir)
        .map_err(io(dir))?
        .filter_map(|e| e.ok().map(|e| e.file_name().to_string_lossy().into_owned()))
        .filter(|n| n.ends_with(".png") && !shown.contains(&n.as_str()) && !n.starts_with('.'))
        .collect();
    others.sort();
    for name in &others {
        let path = dir.join(name);
        let _ = writeln!(
            pictures,
            "<figure><img src=\"{}\" alt=\"{}\"><figcaption><code>{}</code></figcaption></figure>",
            data_uri(&path, "image/png").map_err(io(&path))?,
            escape(name),
            escape(name)
        );
    }
    if !pictures.is_empty() {
        section("pictures", "Pictures", &pictures);
    }
    for (file, heading, what, last_of) in TABLES {
        let path = dir.join(file);
        if !path.exists() {
            continue;
        }
        let inner = match table_html(&path, *last_of) {
            Ok(t) => format!("<p>{} <code>{file}</code></p>\n{t}", escape(what)),
            Err(e) => format!("<p class=\"note\"><code>{file}</code> could not be read: {}</p>\n", escape(&e)),
        };
        section(&file.replace('.', "-"), heading, &inner);
    }
    for (file, heading) in TEXTS {
        let path = dir.join(file);
        if let Ok(text) = std::fs::read_to_string(&path) {
            section(&file.replace('.', "-"), heading, &format!("<pre>{}</pre>\n", escape(&text)));
        }
    }
    let page = format!(
        "<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n\
         <meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">\n\
         <title>{t}: anlage report</title>\n<style>{STYLE}</style>\n</head>\n<body>\n\
         <header>\n<h1>{t}</h1>\n<p class=\"notice\"><strong>Model prediction.</strong> Every picture and number \
         on this page was computed by anlage from the model: a {note}. Measured values appear only where a \
         comparison or a fit names them as measured.</p>\n<nav>{nav}</nav>\n</header>\n<main>\n{body}</main>\n\
         <footer>Written by anlage {v} from the files of this folder, which stay the reference. This page needs \
         no network: open it in any web browser.</footer>\n<script>{SCRIPT}</script>\n</body>\n</html>\n",
        t = escape(&title),
        note = PREDICTION_NOTE,
        nav = nav.join(" · "),
        v = env!("CARGO_PKG_VERSION"),
    );
    let path = dir.join(PAGE);
    export::write_atomic(&path, |w| w.write_all(page.as_bytes()))?;
    // In a run folder the page is part of the run's set.
    crate::run_folder::add_to_manifest(dir, &[PAGE.to_string()])?;
    Ok(path)
}

/// The page's look: plain, readable, printable (common practice, no source).
const STYLE: &str = "body{font-family:'DejaVu Sans',Verdana,Arial,sans-serif;margin:0 auto;max-width:1100px;\
padding:0 1.2em 2em;color:#1d1d1d;background:#fbfbf8;line-height:1.45}\
h1{font-size:1.6em;margin:.8em 0 .3em}h2{font-size:1.2em;border-bottom:1px solid #c9c9c0;padding-bottom:.2em}\
.notice{background:#fff4d6;border-left:5px solid #b07a00;padding:.5em .8em}\
nav a{color:#24527a}figure{margin:1em 0}img{max-width:100%;height:auto;border:1px solid #d0d0c8}\
figcaption{font-size:.9em;color:#555}.table{overflow-x:auto}table{border-collapse:collapse;font-size:.85em}\
th,td{border:1px solid #d4d4cc;padding:.2em .5em;text-align:right;white-space:nowrap}th{background:#efefe8}\
pre{background:#f1f1ea;padding:.8em;overflow-x:auto;font-size:.85em}.note{color:#555;font-size:.9em}\
.broken{color:#a00000;font-weight:bold}table.facts th,table.facts td{text-align:left;white-space:normal;border:none;background:none}\
table.facts th{padding-right:2em}footer{margin-top:2em;font-size:.85em;color:#555}";

/// Marks any picture the browser could not show, and counts them on the
/// body (`data-pictures-shown`, `data-pictures-broken`).
const SCRIPT: &str = "window.addEventListener('load',function(){var shown=0,broken=0;\
document.querySelectorAll('img').forEach(function(img){if(img.complete&&img.naturalWidth>0){shown++;}else{broken++;\
img.insertAdjacentHTML('afterend','<p class=\"broken\">This picture could not be shown.</p>');}});\
document.body.setAttribute('data-pictures-shown',shown);document.body.setAttribute('data-pictures-broken',broken);});";

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn long_numbers_are_shown_to_six_figures() {
        assert_eq!(shown_number("239.04852679871533"), "239.049");
        assert_eq!(shown_number("47.80970535974306"), "47.8097");
        assert_eq!(shown_number("-6.650680006712345"), "-6.6507");
        assert_eq!(shown_number("0.000123456789"), "1.235e-4");
        assert_eq!(shown_number("240.5"), "240.5");
        assert_eq!(shown_number("amber"), "amber");
        assert_eq!(shown_number("12"), "12");
        assert_eq!(escape("<a & 'b'>"), "&lt;a &amp; &#39;b&#39;&gt;");
    }
}
