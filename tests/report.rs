//! The trend report: its structure (snapshot), escaping, inline SVG, JSON and the `report`
//! command's files. The history here is invented for the tests; the limits it is judged
//! against are the published ones, cited beside each check.

use std::path::Path;

use assert_cmd::Command;
use chrono::NaiveDate;
use predicates::prelude::*;

use ohmtrail::analysis::Settings;
use ohmtrail::model::{
    ChangeKind, CircuitKind, Earthing, Megohms, ObservationCode, Readings, VisitState,
};
use ohmtrail::report;
use ohmtrail::store::{CircuitDetails, NewBoard, NewProperty, NewVisit, Store};

const REF: &str = "HC-7";
const HOSTILE: &str = "<script>alert(1)</script> 4 Invented Row, Nowhere NW0 0ZZ";

fn d(s: &str) -> NaiveDate {
    s.parse().unwrap()
}

fn ohm(v: f64) -> Option<f64> {
    Some(v)
}

fn mohm(v: f64, over: bool) -> Option<Megohms> {
    Some(Megohms {
        value: v,
        over_range: over,
    })
}

/// An invented rented flat with four visits: a ring whose termination works loose, a shower
/// circuit whose Zs ends past its limit, outside lights whose insulation falls below the
/// minimum, an immersion circuit whose breaker was changed, and a healthy lighting circuit.
fn fixture(store: &Store, reference: &str, address: &str) {
    store
        .add_property(&NewProperty {
            reference: reference.into(),
            address: Some(address.into()),
            client: Some("Invented Homes & <Co> (test)".into()),
            interval_months: Some(60),
            notes: None,
        })
        .unwrap();
    let p = store.property(reference).unwrap();
    store
        .add_board(
            reference,
            &NewBoard {
                designation: "CU1".into(),
                location: Some("Under the \"stairs\"".into()),
                fed_from: None,
                earthing: Some(Earthing::TnCS),
            },
        )
        .unwrap();
    let board = store.board(p.id, reference, "CU1").unwrap();
    let circuit = |n: &str, desc: &str, kind, live, cpc, dev: &str| {
        store
            .add_circuit(
                reference,
                "CU1",
                n,
                &CircuitDetails {
                    description: Some(desc.into()),
                    kind: Some(kind),
                    live_mm2: Some(live),
                    cpc_mm2: Some(cpc),
                    device: Some(dev.parse().unwrap()),
                    rcd_ma: Some(30),
                    ..Default::default()
                },
            )
            .unwrap()
            .id
    };
    let ring = circuit("1", "Kitchen <sockets>", CircuitKind::Ring, 2.5, 1.5, "B32");
    let lights = circuit(
        "2",
        "Upstairs lighting",
        CircuitKind::Radial,
        1.5,
        1.0,
        "B6",
    );
    let shower = circuit("3", "Shower", CircuitKind::Radial, 10.0, 4.0, "B40");
    let outside = circuit("4", "Outside lights", CircuitKind::Radial, 1.5, 1.0, "B6");
    let immersion = circuit("5", "Immersion", CircuitKind::Radial, 2.5, 1.5, "B16");
    let _ = immersion;
    if store.instrument("TST-9").unwrap().is_none() {
        store
            .add_instrument(
                "TST-9",
                Some("multifunction tester (test)"),
                Some(d("2022-01-01")),
            )
            .unwrap();
    }

    // (date, ambient, Ze)
    let visits = [
        ("2012-03-10", Some(9.0), 0.21),
        ("2016-09-20", Some(18.0), 0.22),
        ("2020-02-14", None, 0.22),
        ("2024-06-18", Some(21.0), 0.23),
    ];
    for (i, (date, ambient, ze)) in visits.iter().enumerate() {
        let v = store
            .add_visit(
                p.id,
                &NewVisit {
                    date: Some(d(date)),
                    inspector: Some("B. Inspector & \"Son\" (test)".into()),
                    instrument: Some("TST-9".into()),
                    ambient_c: *ambient,
                    ze_ohm: Some(*ze),
                    pfc_ka: Some(1.2),
                    ..Default::default()
                },
                VisitState::Complete,
            )
            .unwrap();
        store
            .set_board_test(v.id, board.id, Some(*ze), Some(1.2))
            .unwrap();
        if i == 3 {
            // The last visit's report as the inspector recorded it (invented), with text that
            // must be escaped, and its supply and main bonding.
            store
                .set_visit_report_supply(
                    v.id,
                    &ohmtrail::model::VisitReport {
                        report_ref: Some("HC-7/24 <b>".into()),
                        outcome: Some("Unsatisfactory".into()),
                        // As the property's, so the projections' horizon stays where it was.
                        interval_months: Some(60),
                        extent: Some("Whole house & garden lights".into()),
                        limitations: Some("Loft not accessible".into()),
                    },
                    &ohmtrail::model::SupplyRecord {
                        u0_v: Some(230.0),
                        bonding_csa_mm2: Some(10.0),
                        bonding_water: Some(ohmtrail::model::Bonding::Yes),
                        bonding_gas: Some(ohmtrail::model::Bonding::No),
                        ..Default::default()
                    },
                )
                .unwrap();
        }
        let loose = [0.0, 0.0, 0.20, 0.42][i];
        let put = |c, r: Readings| store.put_test_record(v.id, c, &r).unwrap();
        put(
            ring,
            Readings {
                r1r2_ohm: ohm(0.40 + loose),
                r1rn_ohm: ohm(0.31 + loose),
                ring_r1_ohm: ohm(0.52),
                ring_rn_ohm: ohm(0.52),
                ring_r2_ohm: ohm(0.86),
                zs_ohm: ohm(ze + 0.40 + loose),
                ir_ll: mohm(200.0, true),
                ir_le: mohm(200.0, true),
                rcd_5x_ms: ohm(18.0),
                ..Default::default()
            },
        );
        put(
            lights,
            Readings {
                r1r2_ohm: ohm(0.95),
                r1rn_ohm: ohm(0.80),
                zs_ohm: ohm(ze + 0.95),
                ir_ll: mohm(200.0, true),
                ir_le: mohm(200.0, true),
                rcd_5x_ms: ohm(21.0),
                ..Default::default()
            },
        );
        let sh = [0.52, 0.60, 0.71, 0.86][i];
        put(
            shower,
            Readings {
                r1r2_ohm: ohm(sh),
                r1rn_ohm: ohm(sh * 0.6),
                zs_ohm: ohm(ze + sh),
                ir_ll: mohm(200.0, true),
                ir_le: mohm(200.0, true),
                rcd_5x_ms: ohm(24.0),
                ..Default::default()
            },
        );
        let ir = [(200.0, true), (40.0, false), (6.0, false), (0.8, false)][i];
        put(
            outside,
            Readings {
                r1r2_ohm: ohm(1.10),
                r1rn_ohm: ohm(0.92),
                zs_ohm: ohm(ze + 1.10),
                ir_ll: mohm(200.0, true),
                ir_le: mohm(ir.0, ir.1),
                rcd_5x_ms: ohm(19.0),
                ..Default::default()
            },
        );
        put(
            immersion,
            Readings {
                r1r2_ohm: ohm(0.30),
                r1rn_ohm: ohm(0.24),
                // Zs not measured at the last visit: the report works it out as Ze + R1+R2.
                zs_ohm: if i == 3 { None } else { ohm(ze + 0.30) },
                ir_ll: mohm(200.0, true),
                ir_le: mohm(200.0, true),
                ..Default::default()
            },
        );
        match i {
            1 => {
                store
                    .add_observation(
                        v.id,
                        Some(board.id),
                        Some(ring),
                        ObservationCode::C3,
                        "Socket outlet front <cracked> in kitchen",
                    )
                    .unwrap();
            }
            3 => {
                store
                    .add_observation(
                        v.id,
                        Some(board.id),
                        Some(outside),
                        ObservationCode::FI,
                        "Low insulation resistance on outside lights: investigate",
                    )
                    .unwrap();
                store
                    .add_observation(
                        v.id,
                        None,
                        None,
                        ObservationCode::C2,
                        "No main bonding to gas",
                    )
                    .unwrap();
            }
            _ => {}
        }
    }
    store
        .record_change(
            shower,
            d("2014-05-01"),
            ChangeKind::DeviceChanged,
            Some("device"),
            Some("B32"),
            Some("B40"),
            None,
            Some("breaker replaced for a larger shower"),
        )
        .unwrap();
}

fn settings(today: &str) -> Settings {
    Settings::defaults(d(today))
}

fn html_for(address: &str, today: &str) -> String {
    let store = Store::open_in_memory().unwrap();
    fixture(&store, REF, address);
    report::property_html(&store, REF, &settings(today)).unwrap()
}

/// The page's outline: every heading, section, table caption and figure, in order, with
/// dates and version left out so the snapshot does not move with the generation date.
fn outline(html: &str) -> String {
    let mut out = String::new();
    let mut rest = html;
    while let Some(i) = rest.find('<') {
        rest = &rest[i + 1..];
        let name: String = rest
            .chars()
            .take_while(|c| c.is_ascii_alphanumeric())
            .collect();
        let headline = name == "p" && rest.starts_with("p class=\"headline\"");
        let depth = match name.as_str() {
            "p" if headline => 1,
            "h1" => 0,
            "h2" => 1,
            "h3" | "caption" => 2,
            "figure" | "article" | "section" | "table" => 3,
            _ => continue,
        };
        let end = format!("</{name}>");
        let label = match name.as_str() {
            "figure" | "article" | "section" | "table" => {
                let tag_end = rest.find('>').unwrap_or(0);
                format!("<{}>", &rest[..tag_end])
            }
            _ => {
                let body_start = rest.find('>').unwrap_or(0) + 1;
                let body_end = rest.find(&end).unwrap_or(body_start);
                strip_tags(&rest[body_start..body_end])
            }
        };
        out.push_str(&"  ".repeat(depth));
        out.push_str(&label);
        out.push('\n');
    }
    out
}

fn strip_tags(s: &str) -> String {
    let mut out = String::new();
    let mut inside = false;
    for c in s.chars() {
        match c {
            '<' => inside = true,
            '>' => inside = false,
            _ if !inside => out.push(c),
            _ => {}
        }
    }
    out
}

fn svgs(html: &str) -> Vec<&str> {
    let mut out = Vec::new();
    let mut rest = html;
    while let Some(i) = rest.find("<svg") {
        let end = rest[i..].find("</svg>").expect("every <svg> is closed") + i + "</svg>".len();
        out.push(&rest[i..end]);
        rest = &rest[end..];
    }
    out
}

#[test]
fn structure_snapshot() {
    let html = html_for("Flat 1, 4 Invented Row, Nowhere NW0 0ZZ", "2025-01-15");
    insta::assert_snapshot!("property_outline", outline(&html));
}

#[test]
fn structure_does_not_move_with_the_generation_date() {
    // Both dates fall after the last visit and before anything in the history is due, so
    // only the printed dates may differ.
    let a = html_for("Flat 1", "2025-01-15");
    let b = html_for("Flat 1", "2025-03-02");
    assert_eq!(outline(&a), outline(&b));
    assert!(a.contains("datetime=\"2025-01-15\""));
    assert!(b.contains("datetime=\"2025-03-02\""));
}

#[test]
fn user_text_is_escaped_never_markup() {
    let html = html_for(HOSTILE, "2025-01-15");
    assert!(
        !html.to_ascii_lowercase().contains("<script"),
        "a script element got through"
    );
    assert!(html.contains("&lt;script&gt;alert(1)&lt;/script&gt; 4 Invented Row"));
    // Client, description, board location, inspector and observation text too.
    assert!(html.contains("Invented Homes &amp; &lt;Co&gt; (test)"));
    assert!(html.contains("Kitchen &lt;sockets&gt;"));
    assert!(html.contains("Socket outlet front &lt;cracked&gt; in kitchen"));
    assert!(!html.contains("<sockets>") && !html.contains("<cracked>") && !html.contains("<Co>"));
    // The SVG titles carry the circuit description as well, escaped.
    for svg in svgs(&html) {
        assert!(!svg.contains("<sockets>"));
    }
}

#[test]
fn every_inline_svg_parses_as_xml() {
    let html = html_for(HOSTILE, "2025-01-15");
    let all = svgs(&html);
    let figures = html.matches("<figure>").count();
    assert!(
        figures >= 3,
        "expected charts for the flagged circuits, found {figures}"
    );
    assert_eq!(all.len(), figures, "one SVG per figure");
    for svg in all {
        let doc = roxmltree::Document::parse(svg).unwrap_or_else(|e| {
            panic!(
                "SVG does not parse as XML: {e}\n{}",
                &svg[..svg.len().min(400)]
            )
        });
        assert_eq!(doc.root_element().tag_name().name(), "svg");
    }
}

#[test]
fn no_script_and_no_external_assets() {
    let html = html_for("Flat 1", "2025-01-15");
    for needle in [
        "<script",
        "<link",
        "src=\"http",
        "href=\"http",
        "@import",
        "url(",
    ] {
        assert!(!html.contains(needle), "found {needle}");
    }
    assert!(html.contains("@page{size:A4"));
}

#[test]
fn the_landlords_part_cites_the_standard_plainly() {
    // Source marks ("from memory", "derived") are for the electrician, in the method section;
    // the part the landlord reads cites the standard plainly.
    let html = html_for("Flat 1", "2025-01-15");
    let method = html
        .find("<section class=\"method\"")
        .expect("a method section");
    let (landlord, electrician) = html.split_at(method);
    assert!(
        landlord.contains("BS 7671"),
        "the findings cite the standard"
    );
    for mark in ["from memory", "(derived)", "(published)", "common practice"] {
        assert!(!landlord.contains(mark), "{mark} before the method section");
    }
    assert!(
        electrician.contains("from memory"),
        "the method keeps the marks"
    );
}

#[test]
fn findings_limits_and_cautions_are_all_there() {
    let store = Store::open_in_memory().unwrap();
    fixture(&store, REF, "Flat 1");
    let r = report::property_report(&store, REF, &settings("2025-01-15")).unwrap();
    let html = report::property::render(&r);

    // The shower's Zs 0.23 + 0.86 = 1.09 Ω (corrected to 20 °C: 0.23 + 0.86 / (1 + 0.00393)
    // = 1.087 Ω) is past the measured-value limit for a B40: Table 41.3 gives 1.09 Ω
    // (BS 7671:2018+A2:2022), and at 20 °C with k = 1.20 for the 70 °C thermoplastic assumed
    // where the insulation is not recorded (On-Site Guide Appendix I, from memory) that is
    // 1.09 / 1.20 = 0.908 → 0.90 Ω, rounded down.
    let shower = r
        .flagged
        .iter()
        .find(|f| f.circuit.as_deref() == Some("3"))
        .expect("the shower circuit is flagged");
    assert_eq!(shower.severity, "exceeds");
    let zs = shower.findings.iter().find(|f| f.quantity == "zs").unwrap();
    assert_eq!(zs.limit, Some(0.90));

    // The outside lights' IR L–E of 0.8 MΩ is below the 1.0 MΩ minimum for a circuit up to
    // 500 V tested at 500 V (BS 7671:2018 Table 64).
    let outside = r
        .flagged
        .iter()
        .find(|f| f.circuit.as_deref() == Some("4"))
        .expect("the outside lights are flagged");
    assert_eq!(outside.severity, "exceeds");
    let ir = outside
        .findings
        .iter()
        .find(|f| f.quantity == "ir_le")
        .unwrap();
    assert_eq!(ir.limit, Some(1.0));
    assert!(ir.chart.as_ref().unwrap().log_scale);

    // The ring's loosening termination climbs 0.40 → 0.60 → 0.82 Ω over two visits: one
    // drift, not two sudden steps. Its R1+R2 of 0.82 Ω is above its ends' (r1 + r2) / 4 =
    // (0.52 + 0.86) / 4 = 0.345 Ω (IET On-Site Guide ring test, common practice), which is
    // also what a spur gives, so the ring check does not call it a ring fault.
    let ring = r
        .flagged
        .iter()
        .find(|f| f.circuit.as_deref() == Some("1"))
        .expect("the ring is flagged");
    assert!(ring.findings.iter().any(|f| f.kind == "drift"));
    assert!(!ring.findings.iter().any(|f| f.kind == "step"));
    assert!(!ring.findings.iter().any(|f| f.kind == "ring_check"));
    assert_eq!(r.summary.exceeds, 2);
    assert_eq!(r.summary.within_limits, 2);
    assert!(
        r.summary
            .headline
            .starts_with("2 of 5 circuits are past a safety limit"),
        "{}",
        r.summary.headline
    );
    assert_eq!(r.summary.actions[0].severity, Some("exceeds"));

    // Every reason sentence of the analysis is on the page.
    for f in r.flagged.iter().flat_map(|f| &f.findings) {
        assert!(
            html.contains(&report::html::esc(&f.reason)),
            "missing: {}",
            f.reason
        );
    }
    // The breaker change on the shower circuit is a register event on its chart, and the
    // trend is fitted from the first visit after it.
    let chart = zs.chart.as_ref().unwrap();
    assert!(
        chart
            .events
            .iter()
            .any(|e| e.date == d("2014-05-01") && e.what.contains("B32") && e.what.contains("B40")),
        "{:?}",
        chart.events
    );
    assert_eq!(chart.baseline_start, Some(d("2016-09-20")));
    assert!(html.contains("device changed: device B32 → B40"));
    // Zs on the immersion circuit was not measured at the last visit: Ze + R1+R2.
    let imm = r.boards[0]
        .circuits
        .iter()
        .find(|c| c.circuit == "5")
        .unwrap();
    let cell = &imm.cells["Zs"];
    assert!(cell.calculated);
    assert!((cell.raw - 0.53).abs() < 1e-9, "{}", cell.raw);

    // Visits: the instrument's calibration lapsed on 2022-01-01.
    let cal: Vec<_> = r
        .visits
        .iter()
        .map(|v| v.instrument_in_calibration)
        .collect();
    assert_eq!(cal, vec![Some(true), Some(true), Some(true), Some(false)]);
    assert!(html.contains("calibration had lapsed"));
    // Codes exactly as recorded, and no code the inspector did not record.
    let codes: Vec<_> = r
        .visits
        .iter()
        .flat_map(|v| &v.observations)
        .map(|o| o.code)
        .collect();
    assert_eq!(codes, vec!["C3", "FI", "C2"]);
    assert!(!html.contains(">C1<"));
    // The visit without an ambient temperature is named.
    assert_eq!(r.method.visits_without_ambient, vec![d("2020-02-14")]);

    // The limit sources come from the limits module.
    let citations: Vec<&str> = r
        .method
        .limits
        .iter()
        .map(|l| l.citation.as_str())
        .collect();
    assert!(
        citations.iter().any(|c| c.contains("Table 41.3")),
        "{citations:?}"
    );
    assert!(
        citations.iter().any(|c| c.contains("Table 64")),
        "{citations:?}"
    );

    // The cautions.
    for c in report::CAUTIONS {
        assert!(html.contains(&report::html::esc(c)), "missing caution: {c}");
    }
    assert!(html.contains("never replace"));
    assert!(html.contains("assigns no condition codes"));
    assert!(html.contains("prompt attention by a qualified electrician"));
}

// ----- the command -----

fn db_with_fixture(dir: &Path) -> std::path::PathBuf {
    let db = dir.join("t.db");
    let store = Store::open(&db).unwrap();
    fixture(&store, REF, HOSTILE);
    fixture(&store, "HC/8", "Flat 2, 4 Invented Row");
    db
}

fn cmd(db: &Path, cwd: &Path) -> Command {
    let mut c = Command::cargo_bin("ohmtrail").unwrap();
    c.env_remove("OHMTRAIL_DB")
        .current_dir(cwd)
        .arg("--db")
        .arg(db);
    c
}

#[test]
fn report_writes_to_the_default_name_and_says_where() {
    let dir = tempfile::tempdir().unwrap();
    let db = db_with_fixture(dir.path());
    cmd(&db, dir.path())
        .args(["report", REF])
        .assert()
        .success()
        .stdout(predicate::str::is_empty())
        .stderr(predicate::str::contains("wrote report report-HC-7.html"))
        .stderr(predicate::str::contains("never replace"));
    let html = std::fs::read_to_string(dir.path().join("report-HC-7.html")).unwrap();
    assert!(html.starts_with("<!DOCTYPE html>"));
    // A reference with a slash gets a safe, distinct file name.
    let out = cmd(&db, dir.path())
        .args(["report", "HC/8"])
        .assert()
        .success()
        .get_output()
        .stderr
        .clone();
    let out = String::from_utf8(out).unwrap();
    let name = out
        .lines()
        .find_map(|l| l.strip_prefix("wrote report "))
        .unwrap();
    assert!(
        name.starts_with("report-HC_8-") && name.ends_with(".html"),
        "{name}"
    );
    assert!(dir.path().join(name).exists());
    // No temporary files are left behind.
    let leftovers: Vec<_> = std::fs::read_dir(dir.path())
        .unwrap()
        .filter_map(|e| e.ok())
        .filter(|e| e.file_name().to_string_lossy().ends_with(".tmp"))
        .collect();
    assert!(leftovers.is_empty());
}

#[test]
fn json_is_the_same_content_as_data() {
    let dir = tempfile::tempdir().unwrap();
    let db = db_with_fixture(dir.path());
    cmd(&db, dir.path())
        .args(["report", REF, "--format", "json", "-o", "r.json"])
        .assert()
        .success();
    cmd(&db, dir.path())
        .args(["report", REF, "-o", "r.html"])
        .assert()
        .success();
    let v: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(dir.path().join("r.json")).unwrap()).unwrap();
    let html = std::fs::read_to_string(dir.path().join("r.html")).unwrap();
    assert_eq!(v["header"]["property_ref"], REF);
    assert_eq!(v["header"]["address"], HOSTILE);
    assert_eq!(v["summary"]["exceeds"], 2);
    let flagged = v["flagged"].as_array().unwrap();
    assert!(!flagged.is_empty());
    for f in flagged {
        for finding in f["findings"].as_array().unwrap() {
            let reason = finding["reason"].as_str().unwrap();
            assert!(html.contains(&report::html::esc(reason)));
            assert!(
                ["exceeds", "approaching", "changed"]
                    .contains(&finding["severity"].as_str().unwrap())
            );
        }
    }
    let points = &flagged[0]["findings"][0]["chart"]["points"];
    assert!(points.as_array().is_some_and(|p| p.len() >= 2), "{points}");
    assert!(v["cautions"].as_array().unwrap().len() >= 3);
    assert!(
        v["method"]["limits"]
            .as_array()
            .is_some_and(|l| !l.is_empty())
    );
}

#[test]
fn missing_output_directory_is_a_clear_error_and_writes_nothing() {
    let dir = tempfile::tempdir().unwrap();
    let db = db_with_fixture(dir.path());
    cmd(&db, dir.path())
        .args(["report", REF, "-o", "nowhere/r.html"])
        .assert()
        .code(1)
        .stderr(predicate::str::contains(
            "the output directory nowhere does not exist",
        ));
    assert!(!dir.path().join("nowhere").exists());
    cmd(&db, dir.path())
        .args(["report", "--portfolio", "-o", "nowhere/index.html"])
        .assert()
        .code(1)
        .stderr(predicate::str::contains("does not exist"));
    cmd(&db, dir.path())
        .args(["report", "NO-SUCH"])
        .assert()
        .code(1)
        .stderr(predicate::str::contains("NO-SUCH"));
    // Neither a property nor --portfolio is a usage error.
    cmd(&db, dir.path()).args(["report"]).assert().code(2);
}

#[cfg(unix)]
#[test]
fn unwritable_output_directory_is_a_clear_error() {
    use std::os::unix::fs::PermissionsExt;
    let dir = tempfile::tempdir().unwrap();
    let db = db_with_fixture(dir.path());
    let locked = dir.path().join("locked");
    std::fs::create_dir(&locked).unwrap();
    std::fs::set_permissions(&locked, std::fs::Permissions::from_mode(0o555)).unwrap();
    // Root may write anywhere; then there is nothing to check.
    let probe = locked.join("probe");
    if std::fs::write(&probe, b"x").is_ok() {
        std::fs::remove_file(&probe).unwrap();
        eprintln!("running with permission to write anywhere: check skipped");
        return;
    }
    cmd(&db, dir.path())
        .args(["report", REF, "-o", "locked/r.html"])
        .assert()
        .code(1)
        .stderr(predicate::str::contains(
            "cannot write in the output directory locked",
        ));
    assert_eq!(std::fs::read_dir(&locked).unwrap().count(), 0);
}

#[test]
fn portfolio_index_links_every_property_report() {
    let dir = tempfile::tempdir().unwrap();
    let db = db_with_fixture(dir.path());
    let out_dir = dir.path().join("out");
    std::fs::create_dir(&out_dir).unwrap();
    cmd(&db, dir.path())
        .args(["report", "--portfolio", "-o", "out/index.html"])
        .assert()
        .success()
        .stdout(predicate::str::is_empty())
        .stderr(predicate::str::contains("wrote 2 property reports"))
        .stderr(predicate::str::contains("open first: out/index.html"));
    let index = std::fs::read_to_string(out_dir.join("index.html")).unwrap();
    assert!(!index.to_ascii_lowercase().contains("<script"));
    let links: Vec<&str> = index
        .split("href=\"")
        .skip(1)
        .map(|s| &s[..s.find('"').unwrap()])
        .collect();
    assert_eq!(links.len(), 2, "{links:?}");
    for l in links {
        assert!(out_dir.join(l).exists(), "link to a missing file {l}");
    }
    // Both fixture properties have circuits past a limit; ties go by reference.
    let a = index.find(">HC-7<").unwrap();
    let b = index.find(">HC/8<").unwrap();
    assert!(a < b);
    // Only the index.
    let only = dir.path().join("only");
    std::fs::create_dir(&only).unwrap();
    cmd(&db, dir.path())
        .args(["report", "--portfolio", "--index-only", "-o", "only/p.html"])
        .assert()
        .success();
    assert_eq!(std::fs::read_dir(&only).unwrap().count(), 1);
}

#[test]
fn a_partial_retest_is_shown_and_does_not_move_the_due_date() {
    let store = Store::open_in_memory().unwrap();
    fixture(&store, REF, "1 Invented Row");
    // A remedial visit after the 2024 inspection: only the outside lights re-tested (1 of 5
    // circuits), their insulation a little different from the last reading, as on site.
    let p = store.property(REF).unwrap();
    let v = store
        .add_visit(
            p.id,
            &NewVisit {
                date: Some(d("2025-03-02")),
                ambient_c: Some(11.0),
                ze_ohm: Some(0.24),
                ..Default::default()
            },
            VisitState::Complete,
        )
        .unwrap();
    let outside = store.find_circuit(REF, "CU1", "4").unwrap();
    store
        .put_test_record(
            v.id,
            outside.id,
            &Readings {
                r1r2_ohm: ohm(1.13),
                r1rn_ohm: ohm(0.94),
                ir_le: mohm(0.75, false),
                ..Default::default()
            },
        )
        .unwrap();
    // 2030-01-15 is past 2024-06-18 + 60 months (2029-06-18), though not past the re-test's
    // 2025-03-02 + 60 months.
    let r = report::property_report(&store, REF, &settings("2030-01-15")).unwrap();
    assert_eq!(r.header.last_visit, Some(d("2025-03-02")));
    assert_eq!(r.header.last_full_inspection, Some(d("2024-06-18")));
    assert_eq!(r.header.next_due, Some(d("2029-06-18")));
    assert!(r.summary.next_inspection_overdue);
    // The overdue inspection is in the summary's lines, not a flagged circuit or the supply.
    assert!(r.flagged.iter().all(|f| f.circuit.is_some()));
    assert!(!r.summary.supply_flagged);
    let html = report::property::render(&r);
    assert!(html.contains("Last full inspection"), "{}", outline(&html));
    // Every finding of every worklist row is in the report.
    let a = ohmtrail::analysis::analyse_property(&store, REF, &settings("2030-01-15")).unwrap();
    let in_rows: usize = a
        .flags
        .iter()
        .filter(|f| f.quantity != "inspection")
        .map(|f| f.findings.len())
        .sum();
    let in_report: usize = r.flagged.iter().map(|f| f.findings.len()).sum();
    assert_eq!(in_report, in_rows);
    assert!(a.flags.iter().any(|f| f.kind == "overdue"));
}

/// The caution (the figures support and never replace a competent person; no condition codes
/// and no overall outcome) appears exactly once in each report, brief and worklist: a copy
/// after every part is a line the reader learns to skip.
#[test]
fn the_caution_appears_once_in_each_report_brief_and_worklist() {
    let dir = tempfile::tempdir().unwrap();
    Command::cargo_bin("ohmtrail")
        .unwrap()
        .env_remove("OHMTRAIL_DB")
        .args(["demo", "--dir"])
        .arg(dir.path())
        .assert()
        .success();
    let db = dir.path().join("demo.db");
    let text = |args: &[&str]| {
        let out = cmd(&db, dir.path()).args(args).assert().success();
        String::from_utf8(out.get_output().stdout.clone()).unwrap()
    };
    let once = |what: &str, body: &str| {
        assert_eq!(
            body.matches(ohmtrail::CAUTION).count(),
            1,
            "{what} should carry the caution once: {body}"
        );
    };
    assert!(ohmtrail::CAUTION.contains("no overall outcome of its own"));
    once("flags", &text(&["flags"]));
    once(
        "flags of one property",
        &text(&["flags", "--property", "QL-001"]),
    );
    once("trend", &text(&["trend", "QL-001"]));
    once("brief", &text(&["brief", "QL-001", "--temp", "12"]));
    text(&["brief", "QL-001", "--temp", "12", "-o", "brief.html"]);
    once(
        "the brief's page",
        &std::fs::read_to_string(dir.path().join("brief.html")).unwrap(),
    );
    for entry in std::fs::read_dir(dir.path()).unwrap() {
        let path = entry.unwrap().path();
        if path.extension().is_some_and(|e| e == "html") && path.ends_with("brief.html") {
            continue;
        }
        if path.extension().is_some_and(|e| e == "html") {
            once(
                &path.display().to_string(),
                &std::fs::read_to_string(&path).unwrap(),
            );
        }
    }
    text(&["report", "QL-001", "--format", "json", "-o", "r.json"]);
    once(
        "the report as JSON",
        &std::fs::read_to_string(dir.path().join("r.json")).unwrap(),
    );
}

/// `report --format json` and `export --format json` behave alike: standard output unless
/// `-o FILE` names a file (`-o -` is standard output too), the file holding exactly what
/// standard output would, laid out as serde_json's pretty printing with one newline at the end.
#[test]
fn report_and_export_json_choose_their_output_and_layout_alike() {
    let dir = tempfile::tempdir().unwrap();
    let db = db_with_fixture(dir.path());
    let stdout = |args: &[&str]| {
        let out = cmd(&db, dir.path()).args(args).assert().success();
        out.get_output().stdout.clone()
    };
    let runs: [(&[&str], &str); 2] = [
        (&["report", REF, "--format", "json"], "r.json"),
        (&["export", "--format", "json"], "e.json"),
    ];
    for (args, file) in runs {
        let plain = stdout(args);
        assert_eq!(
            plain,
            stdout(&[args, &["-o", "-"]].concat()),
            "{args:?} -o -"
        );
        let said = stdout(&[args, &["-o", file]].concat());
        assert!(
            !said.contains(&b'{'),
            "{args:?} -o {file} printed the document"
        );
        let written = std::fs::read(dir.path().join(file)).unwrap();
        assert_eq!(
            plain, written,
            "{args:?}: the file and standard output differ"
        );
        let text = String::from_utf8(plain).unwrap();
        assert!(
            text.ends_with("}\n") && !text.ends_with("\n\n"),
            "{args:?}: one newline at the end"
        );
        assert_pretty(&text);
        assert!(!dir.path().join("-").exists(), "-o - made a file named -");
    }
}

/// The text is serde_json's pretty printing of its own value, up to the order of keys within
/// an object (serde_json's map, as built here, sorts them): the same lines, each taken without
/// its trailing comma. Numbers are compared as placeholders: serde_json's default parser may
/// read a float one unit in the last place off, which is not a matter of layout.
fn assert_pretty(text: &str) {
    let v: serde_json::Value = serde_json::from_str(text).unwrap();
    let canon = serde_json::to_string_pretty(&v).unwrap();
    let number = regex::Regex::new(r"-?[0-9]+(\.[0-9]+)?([eE][+-]?[0-9]+)?$").unwrap();
    let lines = |s: &str| {
        let mut l: Vec<String> = s
            .lines()
            .map(|l| number.replace(l.trim_end_matches(','), "N").into_owned())
            .collect();
        l.sort();
        l
    };
    let (a, b) = (lines(text), lines(&canon));
    if a != b {
        let only_a: Vec<_> = a.iter().filter(|l| !b.contains(l)).collect();
        let only_b: Vec<_> = b.iter().filter(|l| !a.contains(l)).collect();
        panic!("not serde_json's pretty layout: {only_a:?} against {only_b:?}");
    }
}

#[test]
fn the_schedule_details_and_recorded_faults_are_shown_where_they_belong() {
    use ohmtrail::model::{ButtonTest, Polarity, RefMethod};
    let store = Store::open_in_memory().unwrap();
    fixture(&store, REF, "4 Invented Row");
    let c = store.find_circuit(REF, "CU1", "2").unwrap();
    store
        .edit_circuit(
            c.id,
            &CircuitDetails {
                wiring_type: Some("A".into()),
                ref_method: Some(RefMethod::M101),
                points: Some(7),
                breaking_ka: Some(6.0),
                afdd: Some(false),
                rcd_id: Some("RCD1".into()),
                ..Default::default()
            },
            d("2024-06-18"),
            None,
            None,
            None,
        )
        .unwrap();
    // The last visit recorded lighting circuit 2's polarity incorrect and its RCD's test
    // button failed, with its other readings as they were.
    let p = store.property(REF).unwrap();
    let v = store.visit_on(p.id, d("2024-06-18")).unwrap().unwrap();
    let mut r = store.test_record(v.id, c.id).unwrap().unwrap().readings;
    r.polarity = Some(Polarity::Incorrect);
    r.ir_test_v = Some(500);
    r.rcd_button = Some(ButtonTest::Failed);
    store.put_test_record(v.id, c.id, &r).unwrap();

    let settings = settings("2024-07-01");
    let html = report::property_html(&store, REF, &settings).unwrap();
    let text = strip_tags(&html);
    assert!(
        text.contains(
            "wiring A · ref. method 101 · 7 points · 6 kA · no AFDD · on RCD1 · polarity incorrect · IR at 500 V · test button failed"
        ),
        "{text}"
    );
    assert!(
        text.contains(
            "Polarity was recorded incorrect at the visit of 2024-06-18, the latest visit to record it"
        ),
        "{text}"
    );
    assert!(
        text.contains("RCD test button recorded as failed at the visit of 2024-06-18"),
        "{text}"
    );
    assert!(text.contains("protective device B6; on RCD1"), "{text}");
    // A recorded fact has no reading to show, only its source.
    let block = &html[html.find("Polarity was recorded incorrect").unwrap()..];
    let sub = &block[block.find("<p class=\"sub\">").unwrap()..];
    let sub = &sub[..sub.find("</p>").unwrap()];
    assert_eq!(sub, "<p class=\"sub\">source BS 7671:2018 Regulation 643.6");
    let model = report::property_report(&store, REF, &settings).unwrap();
    let json = serde_json::to_value(&model).unwrap();
    let row = json["boards"][0]["circuits"]
        .as_array()
        .unwrap()
        .iter()
        .find(|c| c["circuit"] == "2")
        .unwrap()
        .clone();
    assert_eq!(row["schedule"]["ref_method"], "101");
    assert_eq!(row["schedule"]["polarity"], "incorrect");
    assert_eq!(row["schedule"]["rcd_id"], "RCD1");
    // A circuit with nothing more recorded carries no schedule object.
    let other = json["boards"][0]["circuits"]
        .as_array()
        .unwrap()
        .iter()
        .find(|c| c["circuit"] == "3")
        .unwrap()
        .clone();
    assert!(other.get("schedule").is_none(), "{other}");
    let flagged = json["flagged"].as_array().unwrap();
    let two = flagged.iter().find(|f| f["circuit"] == "2").unwrap();
    let labels: Vec<&str> = two["findings"]
        .as_array()
        .unwrap()
        .iter()
        .map(|f| f["label"].as_str().unwrap())
        .collect();
    assert!(labels.contains(&"polarity"), "{labels:?}");
    assert!(labels.contains(&"RCD test button"), "{labels:?}");
}

/// Every command that writes files says what it wrote on standard error, and leaves standard
/// output empty, so a pipe never gets a status line mixed into data: report, brief, export
/// and import's rejected rows alike.
#[test]
fn commands_that_write_files_say_so_on_stderr_only() {
    let dir = tempfile::tempdir().unwrap();
    let db = db_with_fixture(dir.path());
    let runs: &[(&[&str], &str)] = &[
        (&["report", REF, "-o", "r.html"], "wrote report r.html"),
        (
            &["report", "--portfolio", "-o", "index.html"],
            "wrote portfolio index index.html",
        ),
        (
            &["brief", REF, "-o", "b.csv"],
            "wrote the brief for HC-7 to b.csv",
        ),
        (
            &["brief", REF, "-o", "b.html"],
            "wrote the brief for HC-7 to b.html",
        ),
        (&["export", "-o", "e.csv"], "to e.csv"),
        (&["export", "--format", "json", "-o", "e.json"], "to e.json"),
    ];
    for (args, said) in runs {
        let out = cmd(&db, dir.path()).args(*args).assert().success();
        let o = out.get_output();
        assert!(
            o.stdout.is_empty(),
            "{args:?}: stdout {:?}",
            String::from_utf8_lossy(&o.stdout)
        );
        let err = String::from_utf8_lossy(&o.stderr);
        assert!(err.contains(said), "{args:?}: stderr {err}");
    }
    // Data sent to standard output stays clean: no status line comes with it.
    let out = cmd(&db, dir.path())
        .args(["report", REF, "-o", "-", "--format", "json"])
        .assert()
        .success();
    let v: serde_json::Value = serde_json::from_slice(&out.get_output().stdout).unwrap();
    assert!(v.is_object());
}

#[test]
fn the_inspectors_report_and_the_supply_are_shown_as_recorded() {
    // The fixture's last visit records its report, U0, main bonding 10 mm² and gas bonding
    // not confirmed (invented). ohmtrail assigns no outcome: it shows the inspector's, labelled.
    let store = Store::open_in_memory().unwrap();
    fixture(&store, REF, "1 Invented Row");
    let r = report::property_report(&store, REF, &settings("2025-01-10")).unwrap();
    let latest = r.schedule.latest_report.as_ref().unwrap();
    assert_eq!(latest.outcome.as_deref(), Some("Unsatisfactory"));
    assert_eq!(latest.outcome_label, "as recorded by the inspector");
    // 2024-06-18 + 60 months as recorded at that (full) inspection.
    assert_eq!(r.header.next_due, Some(d("2029-06-18")));
    assert_eq!(
        r.header.next_due_basis,
        Some("as recorded by the inspector at that inspection")
    );
    let html = report::property::render(&r);
    assert!(
        html.contains("Unsatisfactory<br><span class=\"small\">as recorded by the inspector"),
        "{}",
        outline(&html)
    );
    assert!(html.contains("HC-7/24 &lt;b&gt;"));
    assert!(!html.contains("HC-7/24 <b>"));
    assert!(
        html.contains("Main bonding to gas: continuity not confirmed at the visit of 2024-06-18")
    );
    assert!(html.contains("<dt>U0</dt><dd>230 V"));
    // The same in the JSON.
    let json = serde_json::to_value(&r).unwrap();
    assert_eq!(
        json["schedule"]["latest_report"]["outcome"],
        "Unsatisfactory"
    );
    assert_eq!(json["visits"][3]["report"]["interval_months"], 60);
    assert_eq!(json["visits"][3]["supply"]["bonding_gas"], "no");
    // The supply's figures visit by visit: Ze 0.21, 0.22, 0.22, 0.23 Ω and 1.2 kA as recorded.
    let series = &r.schedule.series;
    assert_eq!(series.columns, ["U0 V", "Ze Ω", "Ipf kA", "Bonding mm²"]);
    let ze: Vec<Option<&str>> = series.rows.iter().map(|(_, v)| v[1].as_deref()).collect();
    assert_eq!(ze, [Some("0.21"), Some("0.22"), Some("0.22"), Some("0.23")]);
    assert_eq!(series.rows[3].1[0].as_deref(), Some("230"));
    assert_eq!(series.rows[0].1[0], None);
}

#[test]
fn a_rising_earth_electrode_is_charted_on_ra_in_the_report() {
    // A TT home whose electrode's Ra, recorded on its own, rises 58 → 77 → 149 → 410 Ω, past
    // the 200 Ω above which an electrode may not be stable (common practice; the note to
    // BS 7671 Table 41.5). Invented readings with a few ohms of scatter.
    let store = Store::open_in_memory().unwrap();
    store
        .add_property(&NewProperty {
            reference: "TT-1".into(),
            ..Default::default()
        })
        .unwrap();
    store
        .add_board(
            "TT-1",
            &NewBoard {
                designation: "CU1".into(),
                earthing: Some(Earthing::Tt),
                ..Default::default()
            },
        )
        .unwrap();
    let p = store.property("TT-1").unwrap();
    for (date, ra) in [
        ("2012-01-20", 58.0),
        ("2016-07-28", 77.0),
        ("2020-02-11", 149.0),
        ("2024-08-05", 410.0),
    ] {
        store
            .add_visit(
                p.id,
                &NewVisit {
                    date: Some(d(date)),
                    supply: ohmtrail::model::SupplyRecord {
                        ra_ohm: Some(ra),
                        ..Default::default()
                    },
                    ..Default::default()
                },
                VisitState::Complete,
            )
            .unwrap();
    }
    let r = report::property_report(&store, "TT-1", &settings("2025-01-10")).unwrap();
    let supply = r
        .flagged
        .iter()
        .find(|f| f.circuit.is_none())
        .expect("the supply's row");
    let ra = supply
        .findings
        .iter()
        .find(|f| f.quantity == "ra")
        .expect("a finding on Ra");
    assert!(
        ra.chart.is_some(),
        "Ra's finding is charted on its own series"
    );
    assert!(
        r.summary
            .headline
            .contains("earth electrode's resistance (Ra)")
    );
    let html = report::property::render(&r);
    assert!(
        html.contains("Ra, the earth electrode&#x27;s resistance")
            || html.contains("Ra, the earth electrode's resistance")
    );
}
