//! Reports rendered in headless Chromium (Debian's `chromium` package, installed by `.ci/run`):
//! they load without console messages, the screenshot is not blank, and they print to A4
//! within the print targets: a 4-circuit home on at most 4 pages, a 30-circuit home on at
//! most 10, the brief of a 4-circuit home on at most 4.

use std::path::{Path, PathBuf};
use std::process::Command as Process;

use assert_cmd::Command;

mod common;

fn chromium() -> PathBuf {
    for p in ["/usr/bin/chromium", "/usr/bin/chromium-browser"] {
        if Path::new(p).exists() {
            return PathBuf::from(p);
        }
    }
    panic!(
        "Chromium is not installed: run `bash .ci/run`, which installs Debian's chromium package"
    );
}

/// Run Chromium headless on a file with the flags a root sandbox needs, returning stderr.
fn run_chromium(page: &Path, extra: &[String]) -> String {
    let profile = tempfile::tempdir().unwrap();
    // A browser that hangs must fail the test, not stall the run: coreutils' timeout ends it.
    let out = Process::new("timeout")
        .arg("180")
        .arg(chromium())
        .args([
            "--headless",
            "--no-sandbox",
            "--disable-gpu",
            "--disable-background-networking",
            "--disable-component-update",
            "--disable-sync",
            "--no-first-run",
            "--enable-logging=stderr",
            "--v=0",
        ])
        .arg(format!("--user-data-dir={}", profile.path().display()))
        .args(extra)
        .arg(format!("file://{}", page.display()))
        .output()
        .expect("Chromium starts");
    String::from_utf8_lossy(&out.stderr).into_owned()
}

/// The demo's per-property reports, sorted, and its portfolio index.
fn demo_files(dir: &Path) -> (Vec<PathBuf>, PathBuf) {
    let out = Command::cargo_bin("ohmtrail")
        .unwrap()
        .env_remove("OHMTRAIL_DB")
        .args(["demo", "--dir"])
        .arg(dir)
        .assert()
        .success()
        .get_output()
        .stderr
        .clone();
    let text = String::from_utf8(out).unwrap();
    let mut files: Vec<PathBuf> = text
        .lines()
        .filter_map(|l| l.strip_prefix("wrote trend report "))
        .map(PathBuf::from)
        .collect();
    files.sort();
    assert!(!files.is_empty(), "the demo wrote no reports: {text}");
    let index = text
        .lines()
        .find_map(|l| l.strip_prefix("wrote portfolio index "))
        .map(PathBuf::from)
        .unwrap_or_else(|| panic!("the demo wrote no portfolio index: {text}"));
    assert!(
        text.contains(&format!("open first: {}", index.display())),
        "the demo should say to open the index first: {text}"
    );
    (files, index)
}

fn demo_reports(dir: &Path) -> Vec<PathBuf> {
    demo_files(dir).0
}

/// Fraction of pixels that differ from the top-left pixel: 0 for a blank page.
fn ink_fraction(png_path: &Path) -> f64 {
    let decoder = png::Decoder::new(std::io::BufReader::new(
        std::fs::File::open(png_path).unwrap(),
    ));
    let mut reader = decoder.read_info().unwrap();
    let mut buf = vec![0; reader.output_buffer_size().unwrap()];
    let info = reader.next_frame(&mut buf).unwrap();
    let bytes = &buf[..info.buffer_size()];
    let px = info.color_type.samples();
    let first = &bytes[..px];
    let differing = bytes.chunks(px).filter(|p| *p != first).count();
    differing as f64 / (bytes.len() / px) as f64
}

/// Load a page, screenshot it, and check there were no console messages and it is not blank.
fn assert_renders(page: &Path, shot: &Path) {
    let stderr = run_chromium(
        page,
        &[
            format!("--screenshot={}", shot.display()),
            "--window-size=1024,1400".into(),
        ],
    );
    let console: Vec<&str> = stderr.lines().filter(|l| l.contains("CONSOLE")).collect();
    assert!(console.is_empty(), "console messages: {console:#?}");
    assert!(shot.exists(), "no screenshot: {stderr}");
    let ink = ink_fraction(shot);
    assert!(
        ink > 0.02,
        "the screenshot looks blank ({ink:.4} of pixels differ)"
    );
}

/// Print a page to PDF and count its pages.
fn pdf_pages(page: &Path, pdf: &Path) -> usize {
    let stderr = run_chromium(
        page,
        &[
            format!("--print-to-pdf={}", pdf.display()),
            "--no-pdf-header-footer".into(),
        ],
    );
    let bytes = std::fs::read(pdf).unwrap_or_else(|e| panic!("no PDF ({e}): {stderr}"));
    let text = String::from_utf8_lossy(&bytes);
    // Each page object is "/Type /Page"; the page tree is "/Type /Pages".
    text.matches("/Type /Page").count() - text.matches("/Type /Pages").count()
}

#[test]
fn report_renders_in_chromium_without_console_messages() {
    let dir = tempfile::tempdir().unwrap();
    let report = demo_reports(dir.path()).remove(0);
    assert_renders(&report, &dir.path().join("shot.png"));
}

#[test]
fn portfolio_index_renders_in_chromium_without_console_messages() {
    let dir = tempfile::tempdir().unwrap();
    let (_, index) = demo_files(dir.path());
    assert_renders(&index, &dir.path().join("index.png"));
}

#[test]
fn reports_print_within_the_page_targets() {
    let dir = tempfile::tempdir().unwrap();
    let (reports, index) = demo_files(dir.path());
    let db = dir.path().join("demo.db");
    for report in &reports {
        // The demo's homes: two 4-circuit ones and one with two boards (6 circuits).
        let json = dir.path().join("r.json");
        let reference = report
            .file_stem()
            .and_then(|s| s.to_str())
            .and_then(|s| s.strip_prefix("report-"))
            .unwrap()
            .to_string();
        Command::cargo_bin("ohmtrail")
            .unwrap()
            .env_remove("OHMTRAIL_DB")
            .arg("--db")
            .arg(&db)
            .args(["report", &reference, "--format", "json", "-o"])
            .arg(&json)
            .assert()
            .success();
        let v: serde_json::Value = serde_json::from_slice(&std::fs::read(&json).unwrap()).unwrap();
        let circuits = v["summary"]["circuits"].as_u64().unwrap();
        let pages = pdf_pages(report, &dir.path().join("report.pdf"));
        let most = if circuits <= 4 { 4 } else { 10 };
        assert!(
            (1..=most).contains(&pages),
            "{reference}: {circuits} circuits on {pages} pages"
        );
    }
    // The index of a three-property demo fits on a page or two.
    let pages = pdf_pages(&index, &dir.path().join("index.pdf"));
    assert!((1..=2).contains(&pages), "index: {pages} pages");
    // The brief of the 4-circuit flat, in the report's design.
    let brief = dir.path().join("brief.html");
    Command::cargo_bin("ohmtrail")
        .unwrap()
        .env_remove("OHMTRAIL_DB")
        .arg("--db")
        .arg(&db)
        .args(["brief", "QL-001", "--temp", "12", "-o"])
        .arg(&brief)
        .assert()
        .success();
    let pages = pdf_pages(&brief, &dir.path().join("brief.pdf"));
    assert!((1..=4).contains(&pages), "brief: {pages} pages");
}

#[test]
fn a_thirty_circuit_home_prints_on_at_most_ten_pages() {
    let dir = tempfile::tempdir().unwrap();
    let (db, reference) = common::thirty_circuit_home(dir.path());
    let html = dir.path().join("thirty.html");
    Command::cargo_bin("ohmtrail")
        .unwrap()
        .env_remove("OHMTRAIL_DB")
        .arg("--db")
        .arg(&db)
        .args(["report", &reference, "-o"])
        .arg(&html)
        .assert()
        .success();
    let pages = pdf_pages(&html, &dir.path().join("thirty.pdf"));
    assert!((2..=10).contains(&pages), "30 circuits on {pages} pages");
}
