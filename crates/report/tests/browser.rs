//! The report in a real browser: headless Chromium loads the page offline, the page's own
//! self-check measures every plot's data elements (non-zero `getBBox()`) and records script
//! and console errors on `<body>`, and a screenshot is kept for a person to look at.
//!
//! Without Chromium the test says "skipped: chromium not found" and passes, unless
//! `ECHOBENCH_REQUIRE_CHROMIUM=1` is set, when it fails.

mod common;

use std::path::{Path, PathBuf};
use std::process::{Command, Output, Stdio};
use std::time::{Duration, Instant};

fn find_chromium() -> Option<PathBuf> {
    let fixed = PathBuf::from("/usr/bin/chromium");
    if fixed.is_file() {
        return Some(fixed);
    }
    let path = std::env::var_os("PATH")?;
    std::env::split_paths(&path)
        .flat_map(|dir| ["chromium", "chromium-browser"].map(|name| dir.join(name)))
        .find(|candidate| candidate.is_file())
}

/// Runs Chromium headless with `extra` arguments on `page`, ending it after `limit`.
fn chromium(
    binary: &Path,
    profile: &Path,
    extra: &[String],
    page: &Path,
    limit: Duration,
) -> Output {
    let mut child = Command::new(binary)
        .args([
            "--headless",
            "--no-sandbox",
            "--disable-gpu",
            "--disable-background-networking",
            "--disable-extensions",
            "--disable-sync",
            "--no-first-run",
            "--no-default-browser-check",
            "--hide-scrollbars",
            "--enable-logging=stderr",
            "--v=0",
        ])
        .arg(format!("--user-data-dir={}", profile.display()))
        .args(extra)
        .arg(format!("file://{}", page.display()))
        .stdin(Stdio::null())
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .expect("chromium starts");
    // Read the pipes on their own threads so a chatty browser cannot block on a full pipe.
    let mut stdout = child.stdout.take().unwrap();
    let mut stderr = child.stderr.take().unwrap();
    let out_thread = std::thread::spawn(move || {
        let mut buffer = Vec::new();
        std::io::Read::read_to_end(&mut stdout, &mut buffer).ok();
        buffer
    });
    let err_thread = std::thread::spawn(move || {
        let mut buffer = Vec::new();
        std::io::Read::read_to_end(&mut stderr, &mut buffer).ok();
        buffer
    });
    let started = Instant::now();
    let status = loop {
        if let Some(status) = child.try_wait().expect("waiting for chromium") {
            break status;
        }
        if started.elapsed() > limit {
            // Only the child this test started, by its handle.
            child.kill().ok();
            panic!("chromium did not finish within {limit:?}");
        }
        std::thread::sleep(Duration::from_millis(50));
    };
    Output {
        status,
        stdout: out_thread.join().unwrap_or_default(),
        stderr: err_thread.join().unwrap_or_default(),
    }
}

fn body_attribute(dom: &str, name: &str) -> Option<String> {
    let body = &dom[dom.find("<body")?..];
    let body = &body[..body.find('>')?];
    let key = format!("{name}=\"");
    let start = body.find(&key)? + key.len();
    let end = body[start..].find('"')? + start;
    Some(
        body[start..end]
            .replace("&quot;", "\"")
            .replace("&amp;", "&"),
    )
}

fn png_size(bytes: &[u8]) -> Option<(u32, u32)> {
    // PNG signature, then the IHDR chunk: width and height, big-endian (ISO/IEC 15948).
    if bytes.len() < 24 || &bytes[..8] != b"\x89PNG\r\n\x1a\n" || &bytes[12..16] != b"IHDR" {
        return None;
    }
    let width = u32::from_be_bytes(bytes[16..20].try_into().ok()?);
    let height = u32::from_be_bytes(bytes[20..24].try_into().ok()?);
    Some((width, height))
}

#[test]
fn the_report_renders_in_a_browser_without_errors_and_every_plot_and_table_draws() {
    let required = std::env::var("ECHOBENCH_REQUIRE_CHROMIUM").is_ok_and(|v| v == "1");
    let Some(binary) = find_chromium() else {
        assert!(
            !required,
            "chromium not found and ECHOBENCH_REQUIRE_CHROMIUM=1"
        );
        println!("skipped: chromium not found");
        return;
    };
    // Two products, one detection cell at Pd 0, a baseline, a run-wide extra section and one
    // inside the second product's part.
    let run = common::two_products_with_a_zero();
    let extra = [
        echobench_report::Section::new("Gate verdict", "<p>(the gate's verdict goes here)</p>"),
        echobench_report::Section::for_product(
            "ceiling <24g> & co",
            "Gallery",
            "<p>(explained trials go here)</p>",
        ),
    ];
    let html = echobench_report::render_html(&run, Some(&run), &extra);
    // The shown per-product tables: a detection and a false-alarm table per product (the
    // tables of the other target rates are folded in closed <details>), and the rare-rate
    // table of each product whose detectors have tail fits.
    let rare_tables = run
        .summary
        .products
        .iter()
        .filter(|p| {
            run.summary
                .detectors
                .iter()
                .any(|d| d.product == p.name && !d.rare_thresholds.is_empty())
        })
        .count();
    assert!(rare_tables > 0, "the fixture's runs have tail fits");
    let tables_shown = 2 * run.summary.products.len() + rare_tables;
    assert_eq!(
        html.matches("data-check=").count(),
        2 * run.summary.products.len() * run.summary.detectors[0].operating_points.len()
            + rare_tables
    );
    let plots_in_page = common::svgs(&html).len();

    let tmp = PathBuf::from(env!("CARGO_TARGET_TMPDIR")).join("report-browser");
    std::fs::create_dir_all(&tmp).unwrap();
    let page = tmp.join("report.html");
    std::fs::write(&page, &html).unwrap();
    let profile = tmp.join(format!("profile-{}", std::process::id()));
    let limit = Duration::from_secs(60);

    let dump = chromium(&binary, &profile, &["--dump-dom".to_string()], &page, limit);
    let dom = String::from_utf8_lossy(&dump.stdout);
    let log = String::from_utf8_lossy(&dump.stderr);
    assert!(dump.status.success(), "chromium failed: {log}");
    let attribute = |name: &str| {
        body_attribute(&dom, name)
            .unwrap_or_else(|| panic!("the self-check did not set {name}; chromium said: {log}"))
    };
    assert_eq!(attribute("data-errors"), "[]", "script or console errors");
    assert_eq!(attribute("data-plots-total"), plots_in_page.to_string());
    assert_eq!(attribute("data-plots-bad"), "", "plots without drawn data");
    // A plot may say it has nothing to draw (here: no false alarm at all in the first
    // product, so its bar chart is empty); every other plot must draw.
    let empty_in_page = html.matches("<svg class=\"plot empty\"").count();
    assert!(
        empty_in_page < plots_in_page / 4,
        "{empty_in_page} empty plots"
    );
    assert_eq!(attribute("data-plots-empty"), empty_in_page.to_string());
    assert_eq!(
        attribute("data-plots-ok"),
        (plots_in_page - empty_in_page).to_string()
    );
    // The detection and false-alarm tables are laid out, with the rows and columns they
    // declare, and the Pd-zero cell has a background of its own.
    assert_eq!(attribute("data-tables-shown"), tables_shown.to_string());
    assert_eq!(attribute("data-tables-ok"), tables_shown.to_string());
    assert_eq!(
        attribute("data-tables-bad"),
        "",
        "tables not drawn as declared"
    );
    assert_eq!(attribute("data-zero-cells"), "1");
    assert_eq!(
        attribute("data-zero-marked"),
        "1",
        "the zero does not stand out"
    );
    // The page writes nothing to the console when all is well.
    let console: Vec<&str> = log.lines().filter(|l| l.contains(":CONSOLE")).collect();
    assert!(console.is_empty(), "console messages: {console:#?}");

    // A screenshot of the whole page, kept under the workspace's target directory.
    let height: u32 = attribute("data-page-height")
        .parse()
        .unwrap_or(4000)
        .clamp(800, 30_000);
    let target = Path::new(env!("CARGO_TARGET_TMPDIR"))
        .parent()
        .expect("the target directory")
        .join("report-browser");
    std::fs::create_dir_all(&target).unwrap();
    let shot = target.join("report.png");
    let _ = std::fs::remove_file(&shot);
    let taken = chromium(
        &binary,
        &profile,
        &[
            format!("--screenshot={}", shot.display()),
            format!("--window-size=1280,{height}"),
        ],
        &page,
        limit,
    );
    assert!(
        taken.status.success(),
        "{}",
        String::from_utf8_lossy(&taken.stderr)
    );
    let bytes = std::fs::read(&shot).expect("the screenshot was written");
    let (width, shot_height) = png_size(&bytes).expect("a PNG");
    assert_eq!(
        (width, shot_height),
        (1280, height),
        "the screenshot covers the page"
    );
    std::fs::remove_dir_all(&profile).ok();
    println!("screenshot: {}", shot.display());
}
