//! The report page (`report.html`): what it holds, read as text, and how it
//! loads in a real browser, Debian's `chromium` run headless, started and
//! stopped by process id. Without chromium the browser test says so loudly
//! and passes, except when `ANLAGE_REQUIRE_BROWSER=1` (set by `.ci/run`,
//! which installs chromium), where a missing browser fails it.

use std::path::{Path, PathBuf};
use std::process::{Command, Stdio};
use std::time::{Duration, Instant};

use crate::common::{anlage, root, temp_dir};

fn run_quietly(args: &[&str]) {
    let o = anlage(args);
    assert!(o.status.success(), "anlage {args:?}: {}", String::from_utf8_lossy(&o.stderr));
}

/// A run folder of the ribbon (with SVGs) and a screen folder of its knock-outs.
fn folders(name: &str) -> (PathBuf, PathBuf) {
    let dir = temp_dir(name);
    let model = root().join("patterns/ribbon.toml");
    let (run, screen) = (dir.join("run"), dir.join("screen"));
    run_quietly(&["run", model.to_str().unwrap(), "-o", run.to_str().unwrap(), "-q", "--svg"]);
    run_quietly(&["screen", model.to_str().unwrap(), "--knockouts", "-o", screen.to_str().unwrap()]);
    (run, screen)
}

/// The page of a run embeds every PNG and the animation of its folder, shows
/// the final boundaries, the model text (escaped) and how it was stepped,
/// under the model-prediction notice; the same folder gives the same bytes;
/// a screen's page shows its chart and its table; `render` into the run
/// folder rewrites the page and keeps the folder's manifest whole.
#[test]
fn pages_hold_the_folders_pictures_tables_and_model() {
    let (run, screen) = folders("page-text");
    let page = std::fs::read_to_string(run.join("report.html")).unwrap();
    let pngs: Vec<String> = std::fs::read_dir(&run)
        .unwrap()
        .filter_map(|e| e.ok().map(|e| e.file_name().to_string_lossy().into_owned()))
        .filter(|n| n.ends_with(".png") || n.ends_with(".gif"))
        .collect();
    assert!(pngs.len() >= 5, "{pngs:?}");
    assert_eq!(page.matches("<img src=\"data:image/").count(), pngs.len(), "every picture embedded once");
    for name in &pngs {
        assert!(page.contains(&format!("<code>{name}</code>")), "{name} is not on the page");
    }
    assert!(page.contains("Model prediction."));
    assert!(!page.contains("http://") && !page.contains("https://"), "nothing from the network");
    let summary: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(run.join("summary.json")).unwrap()).unwrap();
    assert!(page.contains(summary["stepping"].as_str().unwrap()), "the stepping summary");
    let steps = format!("{} steps ({} rejected)", summary["steps"], summary["rejected_steps"]);
    assert!(page.contains(&steps), "{steps}");
    // The model text, escaped: its quotes and any < or & become entities.
    let model = std::fs::read_to_string(root().join("patterns/ribbon.toml")).unwrap();
    let first_quoted = model.lines().find(|l| l.contains('"')).unwrap();
    assert!(page.contains(&first_quoted.replace('"', "&quot;")), "{first_quoted}");
    // Final boundaries: each position of the summary appears in the table.
    for b in summary["final_boundaries"].as_array().unwrap() {
        let gene = b["gene"].as_str().unwrap();
        assert!(page.contains(&format!("<td>{gene}</td>")), "{gene}");
    }
    let again = {
        anlage::page::write_page(&run, "ignored: the summary names it").unwrap();
        std::fs::read_to_string(run.join("report.html")).unwrap()
    };
    assert!(again == page, "the same folder gives the same page");
    let screen_page = std::fs::read_to_string(screen.join("report.html")).unwrap();
    assert!(screen_page.contains("<code>shifts.png</code>") && screen_page.contains("<code>shifts.csv</code>"));
    // Redrawn pictures and a rewritten page stay in the run's set.
    run_quietly(&["render", run.to_str().unwrap(), "--kind", "kymograph", "--light", "-q"]);
    assert_eq!(anlage::run_folder::incomplete(&run, &[]), None);
    // A comparison written into the run folder joins its page.
    run_quietly(&["compare", run.to_str().unwrap(), root().join("demo-data/fit/wild_type.csv").to_str().unwrap()]);
    assert_eq!(anlage::run_folder::incomplete(&run, &[]), None, "after compare");
    let page = std::fs::read_to_string(run.join("report.html")).unwrap();
    assert!(page.contains("<code>comparison.png</code>") && page.contains("<code>comparison.csv</code>"));
}

/// The path of Debian's chromium, if installed.
fn browser() -> Option<PathBuf> {
    ["chromium", "chromium-browser"].iter().find_map(|name| {
        let out = Command::new("sh").args(["-c", &format!("command -v {name}")]).output().ok()?;
        let path = String::from_utf8(out.stdout).ok()?.trim().to_string();
        (!path.is_empty()).then(|| PathBuf::from(path))
    })
}

/// Runs headless chromium on `page` with `args`, in a profile of its own;
/// stops it by process id if it has not finished in 90 s. Returns stdout
/// and stderr.
fn headless(exe: &Path, page: &Path, profile: &Path, args: &[&str]) -> (String, String) {
    let out = profile.with_extension("out");
    let err = profile.with_extension("err");
    let mut child = Command::new(exe)
        .args(["--headless", "--no-sandbox", "--disable-gpu", "--enable-logging=stderr", "--v=0"])
        .arg(format!("--user-data-dir={}", profile.display()))
        .args(args)
        .arg(format!("file://{}", page.display()))
        .stdout(Stdio::from(std::fs::File::create(&out).unwrap()))
        .stderr(Stdio::from(std::fs::File::create(&err).unwrap()))
        .spawn()
        .expect("start chromium");
    let pid = child.id();
    let start = Instant::now();
    loop {
        if child.try_wait().unwrap().is_some() {
            break;
        }
        if start.elapsed() > Duration::from_secs(90) {
            // Stopped by its process id; the test then fails.
            let _ = Command::new("kill").args(["-9", &pid.to_string()]).status();
            let _ = child.wait();
            panic!("chromium (pid {pid}) did not finish within 90 s on {}", page.display());
        }
        std::thread::sleep(Duration::from_millis(100));
    }
    (std::fs::read_to_string(&out).unwrap(), std::fs::read_to_string(&err).unwrap())
}

/// In headless chromium the run's and the screen's pages load with no
/// console message (the page logs nothing of its own, so any is an error),
/// every picture is shown (the page's own check counts them on the body:
/// as many as its `<img>` elements, none broken), and a screenshot is not
/// blank (many colours, and not all background).
#[test]
fn pages_load_in_a_real_browser() {
    let Some(exe) = browser() else {
        if std::env::var("ANLAGE_REQUIRE_BROWSER").as_deref() == Ok("1") {
            panic!("ANLAGE_REQUIRE_BROWSER=1 but chromium is not installed (apt-get install chromium)");
        }
        eprintln!(
            "\n\n!!!!! SKIPPED: the report-page browser test needs chromium (apt-get install chromium); \
             it did NOT run !!!!!\n\n"
        );
        return;
    };
    let (run, screen) = folders("page-browser");
    for (k, dir) in [run, screen].iter().enumerate() {
        let page = dir.join("report.html");
        let html = std::fs::read_to_string(&page).unwrap();
        let images = html.matches("<img ").count();
        let profile = dir.parent().unwrap().join(format!("profile{k}"));
        let (dom, log) = headless(&exe, &page, &profile, &["--dump-dom"]);
        let console: Vec<&str> = log.lines().filter(|l| l.contains(":CONSOLE")).collect();
        assert!(console.is_empty(), "{}: console messages:\n{}", page.display(), console.join("\n"));
        let want = format!("data-pictures-shown=\"{images}\" data-pictures-broken=\"0\"");
        assert!(
            dom.contains(&want),
            "{}: wanted {want} in {}",
            page.display(),
            dom.lines().find(|l| l.contains("<body")).unwrap_or("no body")
        );
        let shot = dir.join("screenshot.png");
        let profile = dir.parent().unwrap().join(format!("profile-shot{k}"));
        headless(&exe, &page, &profile, &[&format!("--screenshot={}", shot.display()), "--window-size=1200,1600"]);
        let img = image::open(&shot).unwrap().to_rgb8();
        let background = img.get_pixel(2, img.height() - 2).0;
        let mut colours = std::collections::HashSet::new();
        let mut not_background = 0usize;
        for p in img.pixels() {
            colours.insert(p.0);
            not_background += usize::from(p.0 != background);
        }
        let share = not_background as f64 / (img.width() * img.height()) as f64;
        assert!(
            colours.len() > 200 && share > 0.1,
            "{}: {} colours, {share:.2} not background",
            shot.display(),
            colours.len()
        );
    }
}

/// Rewriting a run folder's page refreshes only the page's manifest entry:
/// a table changed since the run is still found out afterwards.
#[test]
fn a_rewritten_page_does_not_bless_a_changed_file() {
    let dir = temp_dir("page-manifest");
    let run = dir.join("run");
    run_quietly(&["run", root().join("patterns/ribbon.toml").to_str().unwrap(), "-o", run.to_str().unwrap(), "-q"]);
    let table = run.join("boundaries.csv");
    let mut text = std::fs::read_to_string(&table).unwrap();
    text.push_str("amber,falling,1,1,1,1,1\n");
    std::fs::write(&table, text).unwrap();
    anlage::page::write_page(&run, "t").unwrap();
    let why = anlage::run_folder::incomplete(&run, &[]).expect("the changed table is found");
    assert!(why.contains("boundaries.csv"), "{why}");
}

/// From a user trial: running the model again into its folder removes what
/// other verbs drew from the earlier run (a comparison, basins, a figure), so
/// the new page cannot show them beside the new boundaries; a figure is not
/// part of the run's set, so deleting its SVG leaves the folder readable.
#[test]
fn a_rerun_clears_what_was_drawn_from_the_earlier_run() {
    let dir = temp_dir("page-rerun");
    let run = dir.join("run");
    let model = root().join("patterns/ribbon.toml");
    let (m, r) = (model.to_str().unwrap(), run.to_str().unwrap());
    run_quietly(&["run", m, "-o", r, "-q"]);
    run_quietly(&["compare", r, root().join("demo-data/fit/wild_type.csv").to_str().unwrap()]);
    run_quietly(&["figure", r, "--svg", "-q"]);
    std::fs::remove_file(run.join("figure.svg")).unwrap();
    assert_eq!(anlage::run_folder::incomplete(&run, &[]), None, "a deleted figure SVG");
    run_quietly(&["render", r, "--kind", "kymograph", "-q"]);
    run_quietly(&["run", m, "-o", r, "-q"]);
    for gone in ["comparison.csv", "comparison.png", "figure.png"] {
        assert!(!run.join(gone).exists(), "{gone} of the earlier run is still there");
    }
    let page = std::fs::read_to_string(run.join("report.html")).unwrap();
    assert!(!page.contains("comparison.csv") && !page.contains("figure.png"));
}
