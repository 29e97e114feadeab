//! Reports rendered in headless Chromium (Debian's `chromium` package, installed by `.ci/run`):
//! they load without console messages, the screenshot is not blank, and they print to a sane
//! number of A4 pages.

use std::path::{Path, PathBuf};
use std::process::Command as Process;

use assert_cmd::Command;

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
fn report_prints_to_a_sane_number_of_pages() {
    let dir = tempfile::tempdir().unwrap();
    let (reports, index) = demo_files(dir.path());
    let pages = pdf_pages(&reports[0], &dir.path().join("report.pdf"));
    assert!((1..=30).contains(&pages), "{pages} pages");
    // The index of a three-property demo fits on a page or two.
    let pages = pdf_pages(&index, &dir.path().join("index.pdf"));
    assert!((1..=2).contains(&pages), "index: {pages} pages");
}
