//! The PDF documents, read back with poppler's tools (Debian's `poppler-utils`, installed by
//! `.ci/run`): the text is there and selectable (`pdftotext`), the pages are not blank
//! (`pdftoppm`), the fonts are embedded (`pdffonts`), the charts are vectors (`pdfimages`),
//! and the page counts keep to the print targets (a 4-circuit home on at most 4 A4 pages, a
//! 30-circuit home on at most 10).

use std::path::{Path, PathBuf};
use std::process::Command as Process;

use assert_cmd::Command;

mod common;
use common::thirty_circuit_home;

fn tool(name: &str) -> PathBuf {
    let p = PathBuf::from("/usr/bin").join(name);
    assert!(
        p.exists(),
        "{name} is not installed: run `bash .ci/run`, which installs Debian's poppler-utils package"
    );
    p
}

fn run_tool(name: &str, args: &[&str]) -> String {
    let out = Process::new(tool(name)).args(args).output().unwrap();
    assert!(
        out.status.success(),
        "{name} {args:?}: {}",
        String::from_utf8_lossy(&out.stderr)
    );
    String::from_utf8(out.stdout).unwrap()
}

/// With `OHMTRAIL_KEEP_PDF=DIR` set, keep a copy of a document for a look at it.
fn keep(pdf: &Path, name: &str) {
    if let Some(dir) = std::env::var_os("OHMTRAIL_KEEP_PDF") {
        std::fs::copy(pdf, Path::new(&dir).join(name)).unwrap();
    }
}

fn ohmtrail(db: &Path, cwd: &Path) -> Command {
    let mut c = Command::cargo_bin("ohmtrail").unwrap();
    c.env_remove("OHMTRAIL_DB")
        .arg("--db")
        .arg(db)
        .current_dir(cwd);
    c
}

/// Build the demo portfolio in `dir` and return its database.
fn demo(dir: &Path) -> PathBuf {
    Command::cargo_bin("ohmtrail")
        .unwrap()
        .env_remove("OHMTRAIL_DB")
        .args(["demo", "--dir"])
        .arg(dir)
        .assert()
        .success();
    dir.join("demo.db")
}

/// The report's JSON, for what the PDF must carry.
fn report_json(db: &Path, dir: &Path, reference: &str) -> serde_json::Value {
    let out = dir.join(format!("{reference}.json"));
    ohmtrail(db, dir)
        .args(["report", reference, "--format", "json", "-o"])
        .arg(&out)
        .assert()
        .success();
    serde_json::from_slice(&std::fs::read(out).unwrap()).unwrap()
}

fn report_pdf(db: &Path, dir: &Path, reference: &str) -> PathBuf {
    let out = dir.join(format!("{reference}.pdf"));
    ohmtrail(db, dir)
        .args(["report", reference, "--format", "pdf", "-o"])
        .arg(&out)
        .assert()
        .success();
    out
}

/// The document's text with every run of white space made one space, as a reader would
/// copy it.
fn text_of(pdf: &Path) -> String {
    let raw = run_tool("pdftotext", &[pdf.to_str().unwrap(), "-"]);
    raw.split_whitespace().collect::<Vec<_>>().join(" ")
}

fn pages(pdf: &Path) -> usize {
    let info = run_tool("pdfinfo", &[pdf.to_str().unwrap()]);
    info.lines()
        .find_map(|l| l.strip_prefix("Pages:"))
        .map(|n| n.trim().parse().unwrap())
        .unwrap_or_else(|| panic!("no page count: {info}"))
}

/// Fraction of pixels that are not white.
fn ink_fraction(png_path: &Path) -> f64 {
    let decoder = png::Decoder::new(std::io::BufReader::new(
        std::fs::File::open(png_path).unwrap(),
    ));
    let mut reader = decoder.read_info().unwrap();
    let mut buf = vec![0; reader.output_buffer_size().unwrap()];
    let info = reader.next_frame(&mut buf).unwrap();
    let bytes = &buf[..info.buffer_size()];
    let px = info.color_type.samples();
    let inked = bytes
        .chunks(px)
        .filter(|p| p.iter().take(3).any(|c| *c < 200))
        .count();
    inked as f64 / (bytes.len() / px) as f64
}

/// Render every page at a low resolution and check none is blank.
fn assert_no_blank_page(pdf: &Path, dir: &Path) {
    let prefix = dir.join("page");
    run_tool(
        "pdftoppm",
        &[
            "-png",
            "-r",
            "30",
            pdf.to_str().unwrap(),
            prefix.to_str().unwrap(),
        ],
    );
    let mut shots: Vec<PathBuf> = std::fs::read_dir(dir)
        .unwrap()
        .map(|e| e.unwrap().path())
        .filter(|p| {
            p.file_name()
                .and_then(|n| n.to_str())
                .is_some_and(|n| n.starts_with("page") && n.ends_with(".png"))
        })
        .collect();
    shots.sort();
    assert_eq!(shots.len(), pages(pdf), "one picture a page");
    for s in &shots {
        let ink = ink_fraction(s);
        assert!(ink > 0.004, "{} looks blank ({ink:.4} inked)", s.display());
        std::fs::remove_file(s).unwrap();
    }
}

/// Every font in the PDF is embedded.
fn assert_fonts_embedded(pdf: &Path) {
    let list = run_tool("pdffonts", &[pdf.to_str().unwrap()]);
    let rows: Vec<&str> = list.lines().skip(2).collect();
    assert!(!rows.is_empty(), "no fonts at all: {list}");
    for r in rows {
        // Columns: name, type, encoding, emb, sub, uni, object ID; the name has no spaces.
        let cols: Vec<&str> = r.split_whitespace().collect();
        let n = cols.len();
        assert!(n >= 7, "{r}");
        assert_eq!(cols[n - 5], "yes", "font not embedded: {r}");
    }
}

/// The raster images in the PDF (`pdfimages -list`, after its two header lines).
fn raster_images(pdf: &Path) -> Vec<String> {
    run_tool("pdfimages", &["-list", pdf.to_str().unwrap()])
        .lines()
        .skip(2)
        .map(String::from)
        .collect()
}

fn flagged_circuit_names(json: &serde_json::Value) -> Vec<String> {
    json["flagged"]
        .as_array()
        .unwrap()
        .iter()
        .map(|f| match f["circuit"].as_str() {
            Some(c) => format!("Circuit {}/{c}", f["board"].as_str().unwrap()),
            None => format!("Supply at board {}", f["board"].as_str().unwrap()),
        })
        .collect()
}

#[test]
fn every_demo_report_carries_its_property_its_flags_and_the_caution_once() {
    let dir = tempfile::tempdir().unwrap();
    let db = demo(dir.path());
    let caution = ohmtrail::CAUTION
        .split_whitespace()
        .collect::<Vec<_>>()
        .join(" ");
    for reference in ["QL-001", "QL-002", "QL-003"] {
        let json = report_json(&db, dir.path(), reference);
        let pdf = report_pdf(&db, dir.path(), reference);
        assert!(std::fs::read(&pdf).unwrap().starts_with(b"%PDF-"));
        let text = text_of(&pdf);
        assert!(text.contains(reference), "{reference}: {text}");
        let address = json["header"]["address"].as_str().unwrap();
        assert!(text.contains(address), "{reference}: no address {address}");
        let flagged = flagged_circuit_names(&json);
        assert!(!flagged.is_empty(), "{reference}: the demo plants a story");
        for name in flagged {
            assert!(text.contains(&name), "{reference}: {name} missing");
        }
        assert_eq!(
            text.matches(&caution).count(),
            1,
            "{reference}: the caution once"
        );
        assert!(text.contains("Please note"));
        // The schedule section, and every visit's report reference from the JSON (the older
        // ones appear only in the visit history's column).
        assert!(
            text.contains("The inspector's report, the supply and main bonding"),
            "{reference}: no schedule section"
        );
        for v in json["visits"].as_array().unwrap() {
            if let Some(r) = v["report"]["report_ref"].as_str() {
                assert!(text.contains(r), "{reference}: visit report {r} missing");
            }
        }
        // Open remedial work, as in the HTML: the section and each item's recorded text
        // (the demo leaves QL-001's FI open; SI 2020/312 regulation 3(4)).
        let open = json["open_remedials"].as_array().unwrap();
        assert_eq!(
            text.contains("Remedial work outstanding"),
            !open.is_empty(),
            "{reference}: the remedial section"
        );
        for i in open {
            let words: String = i["text"]
                .as_str()
                .unwrap()
                .split_whitespace()
                .take(4)
                .collect::<Vec<_>>()
                .join(" ");
            assert!(
                text.contains(&words),
                "{reference}: remedial {words} missing"
            );
        }
        if reference == "QL-001" {
            assert!(!open.is_empty(), "the demo leaves QL-001's FI open");
        }
        if reference == "QL-001" {
            // The figures as measured, the corrected one named as such: the same pair as the
            // reason's "1.12 Ω as measured, 1.17 Ω at 20 °C" (the demo's ring, CU1/1).
            assert!(
                text.contains(
                    "last reading 1.12 Ω as measured on 14 February 2026 (1.17 Ω corrected to 20 °C)"
                ),
                "{text}"
            );
        }
        assert_no_blank_page(&pdf, dir.path());
        assert_fonts_embedded(&pdf);
        // The charts are vectors: without a logo there is no raster image at all.
        assert_eq!(
            raster_images(&pdf),
            Vec::<String>::new(),
            "{reference}: a raster image"
        );
        // A4: 595 × 842 points.
        let info = run_tool("pdfinfo", &[pdf.to_str().unwrap()]);
        assert!(info.contains("595.276 x 841.89"), "{info}");
        // The 4-circuit homes print on at most 4 pages; every demo home on at most 10.
        let circuits = json["summary"]["circuits"].as_u64().unwrap();
        let n = pages(&pdf);
        let most = if circuits <= 4 { 4 } else { 10 };
        assert!(
            (1..=most).contains(&n),
            "{reference}: {circuits} circuits on {n} pages"
        );
    }
}

#[test]
fn a_thirty_circuit_home_prints_on_at_most_ten_pages() {
    let dir = tempfile::tempdir().unwrap();
    let (db, reference) = thirty_circuit_home(dir.path());
    let json = report_json(&db, dir.path(), &reference);
    assert_eq!(json["summary"]["circuits"].as_u64(), Some(30));
    let pdf = report_pdf(&db, dir.path(), &reference);
    keep(&pdf, "thirty.pdf");
    let n = pages(&pdf);
    assert!((2..=10).contains(&n), "30 circuits on {n} pages");
    let text = text_of(&pdf);
    for name in flagged_circuit_names(&json) {
        assert!(text.contains(&name), "{name} missing");
    }
    assert_no_blank_page(&pdf, dir.path());
}

#[test]
fn the_portfolio_and_the_brief_come_as_pdf_in_the_reports_design() {
    let dir = tempfile::tempdir().unwrap();
    let db = demo(dir.path());
    let caution = ohmtrail::CAUTION
        .split_whitespace()
        .collect::<Vec<_>>()
        .join(" ");
    let out = dir.path().join("out");
    std::fs::create_dir(&out).unwrap();
    ohmtrail(&db, &out)
        .args(["report", "--portfolio", "--format", "pdf"])
        .assert()
        .success()
        .stderr(predicates::str::contains("portfolio.pdf"));
    let index = out.join("portfolio.pdf");
    let text = text_of(&index);
    for r in ["QL-001", "QL-002", "QL-003"] {
        assert!(text.contains(r), "{r} not in the index");
        // The property reports beside the index are PDF too.
        assert!(out.join(format!("report-{r}.pdf")).exists());
    }
    assert_eq!(text.matches(&caution).count(), 1, "the caution once");
    assert_no_blank_page(&index, dir.path());
    assert_fonts_embedded(&index);

    let brief = dir.path().join("brief.pdf");
    ohmtrail(&db, dir.path())
        .args([
            "brief",
            "QL-001",
            "--date",
            "2026-06-01",
            "--temp",
            "12",
            "-o",
        ])
        .arg(&brief)
        .assert()
        .success();
    let text = text_of(&brief);
    assert!(text.contains("QL-001"));
    assert!(text.contains("Test first"));
    assert!(text.contains("Circuit 1"));
    assert_eq!(text.matches(&caution).count(), 1, "the caution once");
    let n = pages(&brief);
    assert!((1..=4).contains(&n), "a 4-circuit brief on {n} pages");
    assert_no_blank_page(&brief, dir.path());
    assert_fonts_embedded(&brief);
}

/// An invented 8 × 8 PNG, written by the png crate.
fn write_png(path: &Path) {
    let file = std::fs::File::create(path).unwrap();
    let mut enc = png::Encoder::new(std::io::BufWriter::new(file), 8, 8);
    enc.set_color(png::ColorType::Rgb);
    enc.set_depth(png::BitDepth::Eight);
    let mut w = enc.write_header().unwrap();
    let data: Vec<u8> = (0..64).flat_map(|i| [i as u8 * 4, 80, 160]).collect();
    w.write_image_data(&data).unwrap();
}

#[test]
fn the_contractors_details_and_logo_are_on_every_document() {
    let dir = tempfile::tempdir().unwrap();
    let db = demo(dir.path());
    let logo = dir.path().join("logo.png");
    write_png(&logo);
    for (k, v) in [
        ("contractor.name", "Invented Testing Co (example)"),
        ("contractor.address", "1 Nowhere Yard, Sampleton SX9 9ZZ"),
        ("contractor.registration", "Example Scheme 00000"),
    ] {
        ohmtrail(&db, dir.path())
            .args(["settings", "set", k, v])
            .assert()
            .success();
    }
    ohmtrail(&db, dir.path())
        .args(["settings", "set", "contractor.logo"])
        .arg(&logo)
        .assert()
        .success();
    let pdf = report_pdf(&db, dir.path(), "QL-001");
    let text = text_of(&pdf);
    assert!(text.contains("Invented Testing Co (example)"));
    assert!(text.contains("1 Nowhere Yard, Sampleton SX9 9ZZ"));
    assert!(text.contains("Registration Example Scheme 00000"));
    // The PNG logo is the only raster image.
    assert_eq!(raster_images(&pdf).len(), 1, "the logo, once");
    let html = dir.path().join("r.html");
    ohmtrail(&db, dir.path())
        .args(["report", "QL-001", "-o"])
        .arg(&html)
        .assert()
        .success();
    let page = std::fs::read_to_string(&html).unwrap();
    assert!(page.contains("Invented Testing Co (example)"));
    assert!(page.contains("data:image/png;base64,"));
    let brief = dir.path().join("b.pdf");
    ohmtrail(&db, dir.path())
        .args(["brief", "QL-001", "--temp", "12", "-o"])
        .arg(&brief)
        .assert()
        .success();
    assert!(text_of(&brief).contains("Invented Testing Co (example)"));

    // A logo that went missing after it was set is named, and nothing is written.
    std::fs::remove_file(&logo).unwrap();
    let out = dir.path().join("gone.pdf");
    ohmtrail(&db, dir.path())
        .args(["report", "QL-001", "--format", "pdf", "-o"])
        .arg(&out)
        .assert()
        .failure()
        .stderr(predicates::str::contains(logo.to_str().unwrap()));
    assert!(!out.exists());
    // Not a picture at all: refused when set, naming the file.
    let fake = dir.path().join("fake.png");
    std::fs::write(&fake, "not a picture").unwrap();
    ohmtrail(&db, dir.path())
        .args(["settings", "set", "contractor.logo"])
        .arg(&fake)
        .assert()
        .failure()
        .stderr(predicates::str::contains("fake.png"));
}

#[test]
fn an_svg_logo_stays_a_vector() {
    let dir = tempfile::tempdir().unwrap();
    let db = demo(dir.path());
    let logo = dir.path().join("logo.svg");
    std::fs::write(
        &logo,
        r##"<svg xmlns="http://www.w3.org/2000/svg" width="40" height="20"><rect width="40" height="20" fill="#0f5257"/></svg>"##,
    )
    .unwrap();
    ohmtrail(&db, dir.path())
        .args(["settings", "set", "contractor.logo"])
        .arg(&logo)
        .assert()
        .success();
    let pdf = report_pdf(&db, dir.path(), "QL-002");
    assert_eq!(raster_images(&pdf), Vec::<String>::new());
}

#[test]
fn a_pdf_streams_to_standard_output_with_dash() {
    let dir = tempfile::tempdir().unwrap();
    let db = demo(dir.path());
    let out = ohmtrail(&db, dir.path())
        .args(["report", "QL-002", "--format", "pdf", "-o", "-"])
        .assert()
        .success()
        .get_output()
        .stdout
        .clone();
    assert!(
        out.starts_with(b"%PDF-"),
        "standard output holds the PDF alone"
    );
    let pdf = dir.path().join("streamed.pdf");
    std::fs::write(&pdf, out).unwrap();
    assert!(text_of(&pdf).contains("QL-002"));
}
