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
    let out = Process::new(chromium())
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

fn demo_reports(dir: &Path) -> Vec<PathBuf> {
    let out = Command::cargo_bin("ohmtrail")
        .unwrap()
        .args(["demo", "--dir"])
        .arg(dir)
        .assert()
        .success()
        .get_output()
        .stdout
        .clone();
    let text = String::from_utf8(out).unwrap();
    let mut files: Vec<PathBuf> = text
        .lines()
        .filter_map(|l| l.strip_prefix("wrote trend report "))
        .map(PathBuf::from)
        .collect();
    files.sort();
    assert!(!files.is_empty(), "the demo wrote no reports: {text}");
    files
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

#[test]
fn report_renders_in_chromium_without_console_messages() {
    let dir = tempfile::tempdir().unwrap();
    let report = demo_reports(dir.path()).remove(0);
    let shot = dir.path().join("shot.png");
    let stderr = run_chromium(
        &report,
        &[
            format!("--screenshot={}", shot.display()),
            "--window-size=1024,1400".into(),
        ],
    );
    let console: Vec<&str> = stderr.lines().filter(|l| l.contains("CONSOLE")).collect();
    assert!(console.is_empty(), "console messages: {console:#?}");
    assert!(shot.exists(), "no screenshot: {stderr}");
    let ink = ink_fraction(&shot);
    assert!(
        ink > 0.02,
        "the screenshot looks blank ({ink:.4} of pixels differ)"
    );
}

#[test]
fn report_prints_to_a_sane_number_of_pages() {
    let dir = tempfile::tempdir().unwrap();
    let report = demo_reports(dir.path()).remove(0);
    let pdf = dir.path().join("report.pdf");
    let stderr = run_chromium(
        &report,
        &[
            format!("--print-to-pdf={}", pdf.display()),
            "--no-pdf-header-footer".into(),
        ],
    );
    let bytes = std::fs::read(&pdf).unwrap_or_else(|e| panic!("no PDF ({e}): {stderr}"));
    let text = String::from_utf8_lossy(&bytes);
    // Each page object is "/Type /Page"; the page tree is "/Type /Pages".
    let pages = text.matches("/Type /Page").count() - text.matches("/Type /Pages").count();
    assert!((1..=30).contains(&pages), "{pages} pages");
}
