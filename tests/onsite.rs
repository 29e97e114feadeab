//! The brief and record commands through the real binary, on temporary databases. The
//! register is built with the CLI and the history with `record` in its line mode; the
//! interactive session is driven through a pseudo-terminal.

use std::path::PathBuf;
use std::time::Duration;

use assert_cmd::Command;
use expectrl::process::unix::Signal;
use expectrl::session::OsSession as Session;
use expectrl::{Eof, Expect};
use tempfile::TempDir;

use ohmtrail::model::{Megohms, VisitState};
use ohmtrail::store::Store;

struct Env {
    dir: TempDir,
}

impl Env {
    fn new() -> Env {
        Env {
            dir: tempfile::tempdir().unwrap(),
        }
    }

    fn db(&self) -> PathBuf {
        self.dir.path().join("t.db")
    }

    fn cmd(&self, args: &[&str], stdin: &str) -> assert_cmd::assert::Assert {
        Command::cargo_bin("ohmtrail")
            .unwrap()
            .env_remove("OHMTRAIL_DB")
            .arg("--db")
            .arg(self.db())
            .args(args)
            .write_stdin(stdin)
            .assert()
    }

    fn ok(&self, args: &[&str], stdin: &str) -> String {
        String::from_utf8(self.cmd(args, stdin).success().get_output().stdout.clone()).unwrap()
    }

    /// An invented property: one TN-C-S board with a B32 radial (2.5/1.5, 70 °C
    /// thermoplastic) and a B6 lighting circuit, with two visits at 20 °C four years apart.
    fn with_history() -> Env {
        let e = Env::new();
        e.ok(
            &["property", "add", "P-9", "--address", "9 Invented Row <b>&"],
            "",
        );
        e.ok(&["board", "add", "P-9", "CU", "--earthing", "TN-C-S"], "");
        e.ok(
            &[
                "circuit",
                "add",
                "P-9",
                "CU",
                "1",
                "--description",
                "Sockets <kitchen>",
                "--device",
                "B32",
                "--live",
                "2.5",
                "--cpc",
                "1.5",
                "--insulation",
                "thermoplastic70",
            ],
            "",
        );
        e.ok(
            &[
                "circuit",
                "add",
                "P-9",
                "CU",
                "2",
                "--description",
                "Lights",
                "--device",
                "B6",
                "--live",
                "1.5",
                "--cpc",
                "1.0",
            ],
            "",
        );
        e.ok(
            &["record", "P-9", "--date", "2020-01-01", "--temp", "20"],
            "board,circuit,quantity,value\nCU,,ze_ohm,0.20\nCU,1,r1r2_ohm,0.50\nCU,1,zs_ohm,0.70\n\
             CU,1,ir_le_mohm,>200\nCU,2,r1r2_ohm,1.60\nCU,2,zs_ohm,1.80\n",
        );
        e.ok(
            &["record", "P-9", "--date", "2024-01-01", "--temp", "20"],
            "CU,,ze_ohm,0.20 Ω\nCU,1,r1r2_ohm,0.54\nCU,1,zs_ohm,0.74ohm\nCU,1,ir_le_mohm,>200\n\
             CU,2,r1r2_ohm,1.60\nCU,2,zs_ohm,1.80\n",
        );
        e
    }

    fn store(&self) -> Store {
        Store::open(&self.db()).unwrap()
    }

    fn spawn(&self, args: &[&str]) -> Session {
        let mut c = std::process::Command::new(assert_cmd::cargo::cargo_bin("ohmtrail"));
        c.env_remove("OHMTRAIL_DB")
            .arg("--db")
            .arg(self.db())
            .args(args);
        let mut s = Session::spawn(c).unwrap();
        // Generous, so a slow shared machine does not fail the test; nothing is timed.
        s.set_expect_timeout(Some(Duration::from_secs(60)));
        s
    }
}

/// The readings of circuit `number` on board CU at the property's pending or given visit.
fn readings(store: &Store, visit_id: i64, number: &str) -> ohmtrail::model::Readings {
    let c = store.find_circuit("P-9", "CU", number).unwrap();
    store
        .test_record(visit_id, c.id)
        .unwrap()
        .map(|t| t.readings)
        .unwrap_or_default()
}

fn pending(store: &Store) -> ohmtrail::model::Visit {
    let p = store.property("P-9").unwrap();
    store.pending_visit(p.id).unwrap().expect("a pending visit")
}

#[test]
fn line_mode_builds_history_and_the_brief_projects_it() {
    let e = Env::with_history();
    let s = e.store();
    let p = s.property("P-9").unwrap();
    assert_eq!(s.property_visits(p.id).unwrap().len(), 2);
    assert!(s.pending_visit(p.id).unwrap().is_none());

    let csv_path = e.dir.path().join("brief.csv");
    e.ok(
        &[
            "brief",
            "P-9",
            "--date",
            "2028-01-01",
            "--temp",
            "10",
            "-o",
            csv_path.to_str().unwrap(),
        ],
        "",
    );
    let text = std::fs::read_to_string(&csv_path).unwrap();
    // The caution comes first, as a comment line; a reader told so skips it.
    let mut rdr = csv::ReaderBuilder::new()
        .comment(Some(b'#'))
        .from_reader(text.as_bytes());
    let header = rdr.headers().unwrap().clone();
    let col = |name: &str| header.iter().position(|h| h == name).unwrap();
    let rows: Vec<csv::StringRecord> = rdr.records().map(|r| r.unwrap()).collect();
    let find = |circuit: &str, q: &str| {
        rows.iter()
            .find(|r| &r[col("circuit")] == circuit && &r[col("quantity")] == q)
            .unwrap_or_else(|| panic!("no row {circuit} {q}"))
    };
    // Hand arithmetic: R1+R2 0.50 → 0.54 Ω at 20 °C moved less than the noise floor
    // (0.01 + 0.03 + 0.06 × 0.50 = 0.07 Ω), so the expectation is their median 0.52 Ω; at
    // 10 °C, × (1 + 0.00393 × (10 − 20)) = × 0.9607 → 0.499564 Ω, written to 4 places.
    let r = find("1", "r1r2_ohm");
    assert_eq!(&r[col("expected")], "0.4996");
    assert!(
        r[col("basis")].contains("only two earlier readings"),
        "{r:?}"
    );
    assert_eq!(&r[col("last_value")], "0.54");
    assert_eq!(&r[col("temp_c")], "10");
    // Zs: the median 0.72 Ω at 20 °C; Ze 0.20 + (0.72 − 0.20) × 0.9607 = 0.699564 Ω. Limit:
    // B32 1.37 Ω (BS 7671 Table 41.3) × 0.9607 / 1.20 = 1.0968 → 1.09 Ω (On-Site Guide
    // Appendix I, from memory).
    let z = find("1", "zs_ohm");
    assert_eq!(&z[col("expected")], "0.6996");
    assert_eq!(&z[col("limit")], "1.09");
    // Over range at both visits: no value, a lower bound (200 MΩ / 10^0.3 = 100.24 MΩ).
    let ir = find("1", "ir_le_mohm");
    assert_eq!(&ir[col("last_value")], ">200");
    assert_eq!(&ir[col("expected")], "");
    assert_eq!(&ir[col("band_low")], "100.2374");
    // The description is user text; a formula-like cell would be neutralised.
    assert_eq!(&r[col("description")], "Sockets <kitchen>");

    // The text table states the assumed temperature when none is given.
    let out = e.ok(&["brief", "P-9", "--date", "2028-01-01"], "");
    assert!(out.contains("assumed 15 °C"), "{out}");
    assert!(out.contains("never replace"), "{out}");

    // HTML: printable A4, user text escaped.
    let html_path = e.dir.path().join("brief.html");
    e.ok(
        &[
            "brief",
            "P-9",
            "--date",
            "2028-01-01",
            "-o",
            html_path.to_str().unwrap(),
        ],
        "",
    );
    let html = std::fs::read_to_string(&html_path).unwrap();
    assert!(html.contains("size:A4"));
    assert!(html.contains("Sockets &lt;kitchen&gt;"));
    assert!(html.contains("9 Invented Row &lt;b&gt;&amp;"));
    assert!(!html.contains("<kitchen>"));

    // An unknown output kind is refused with what is expected.
    e.cmd(&["brief", "P-9", "-o", "x.docx"], "")
        .failure()
        .stderr(predicates::str::contains(
            "expected a file name ending .html, .pdf or .csv",
        ));
}

#[test]
fn brief_lists_instruments_that_lapse_before_the_visit() {
    let e = Env::with_history();
    e.ok(
        &[
            "instrument",
            "add",
            "OLD-1",
            "--calibration-due",
            "2027-06-30",
        ],
        "",
    );
    e.ok(
        &[
            "instrument",
            "add",
            "NEW-2",
            "--calibration-due",
            "2029-06-30",
        ],
        "",
    );
    e.ok(
        &[
            "instrument",
            "add",
            "GONE-3",
            "--calibration-due",
            "2019-06-30",
        ],
        "",
    );
    let out = e.ok(&["brief", "P-9", "--date", "2028-01-01"], "");
    assert!(
        out.contains("OLD-1: calibration runs out on 2027-06-30"),
        "{out}"
    );
    assert!(!out.contains("NEW-2:"), "{out}");
    // A calibration that ran out years before today reads as lapsed, with its date.
    assert!(
        out.contains("GONE-3: calibration lapsed on 2019-06-30, ")
            && out.contains(" years ")
            && !out.contains("GONE-3: calibration runs out"),
        "{out}"
    );
}

/// The brief gives each flag once, in its "test first" list; the circuit points there.
#[test]
fn the_brief_lists_each_flag_once() {
    let e = Env::new();
    let demo = e.dir.path().join("demo");
    Command::cargo_bin("ohmtrail")
        .unwrap()
        .env_remove("OHMTRAIL_DB")
        .args(["demo", "--dir"])
        .arg(&demo)
        .assert()
        .success();
    let db = demo.join("demo.db");
    let brief = |extra: &[&str]| {
        let out = Command::cargo_bin("ohmtrail")
            .unwrap()
            .env_remove("OHMTRAIL_DB")
            .arg("--db")
            .arg(&db)
            .args(["brief", "QL-001", "--temp", "12"])
            .args(extra)
            .assert()
            .success();
        String::from_utf8(out.get_output().stdout.clone()).unwrap()
    };
    let text = brief(&[]);
    let page = demo.join("brief.html");
    brief(&["-o", page.to_str().unwrap()]);
    let html = std::fs::read_to_string(&page).unwrap();
    let flags = Command::cargo_bin("ohmtrail")
        .unwrap()
        .env_remove("OHMTRAIL_DB")
        .arg("--db")
        .arg(&db)
        .args(["flags", "--property", "QL-001", "--json"])
        .assert()
        .success()
        .get_output()
        .stdout
        .clone();
    let flags: serde_json::Value = serde_json::from_slice(&flags).unwrap();
    let mut reasons = 0;
    for row in flags.as_array().unwrap() {
        // Overdue remedial work is not a reading to take (like an overdue inspection): the
        // brief gives the observation itself among those recorded last time.
        if row["quantity"] == "remedial" {
            assert!(
                text.contains("terminations not inspected at this visit"),
                "{text}"
            );
            continue;
        }
        for f in row["findings"].as_array().unwrap() {
            let reason = f["reason"].as_str().unwrap();
            reasons += 1;
            assert_eq!(text.matches(reason).count(), 1, "{reason} in {text}");
            let escaped = ohmtrail::report::html::esc(reason);
            assert_eq!(html.matches(escaped.as_str()).count(), 1, "{reason}");
        }
    }
    assert!(
        reasons >= 2,
        "the demo's QL-001 has several flags: {flags:#}"
    );
    assert!(
        text.contains("CU1/1: flagged: see test first 1, 2"),
        "{text}"
    );
}

#[test]
fn refused_lines_store_nothing_and_the_visit_waits_for_resume() {
    let e = Env::with_history();
    let a = e
        .cmd(
            &["record", "P-9", "--date", "2025-02-01", "--temp", "12"],
            "CU,1,r1r2_ohm,0.55\nCU,1,zs_ohm,0.76 MΩ\nCU,9,zs_ohm,0.5\nCU,1,r1r3,0.5\nCU,2,zs_ohm,-1\nCU,2,r1r2_ohm,1.58\n",
        )
        .failure();
    let err = String::from_utf8(a.get_output().stderr.clone()).unwrap();
    assert!(
        err.contains("line 2: \"0.76 MΩ\" is in MΩ, but Zs is read in Ω"),
        "{err}"
    );
    assert!(
        err.contains("line 3: circuit \"9\" not found on board CU"),
        "{err}"
    );
    assert!(err.contains("line 4: unknown quantity \"r1r3\""), "{err}");
    assert!(err.contains("line 5: \"-1\" is negative"), "{err}");
    assert!(err.contains("4 lines refused"), "{err}");

    let s = e.store();
    let v = pending(&s);
    assert_eq!(v.date.to_string(), "2025-02-01");
    assert_eq!(v.state, VisitState::Pending);
    let c1 = readings(&s, v.id, "1");
    assert_eq!(c1.r1r2_ohm, Some(0.55));
    assert_eq!(c1.zs_ohm, None);
    let c2 = readings(&s, v.id, "2");
    assert_eq!(c2.zs_ohm, None);
    assert_eq!(c2.r1r2_ohm, Some(1.58));
    // Not yet history: the trend sees two visits.
    assert_eq!(s.property_visits(v.property_id).unwrap().len(), 2);

    // A new session without --resume is refused and says how to go on.
    e.cmd(&["record", "P-9", "--date", "2025-02-02"], "")
        .failure()
        .stderr(predicates::str::contains("--resume"));

    let out = e.ok(
        &["record", "P-9", "--resume"],
        "CU,1,zs_ohm,0.76\nCU,2,zs_ohm,1.79\n",
    );
    assert!(out.contains("finished"), "{out}");
    let done = s.visit_on(v.property_id, v.date).unwrap().unwrap();
    assert_eq!(done.state, VisitState::Complete);
    assert_eq!(readings(&s, v.id, "1").zs_ohm, Some(0.76));
    assert_eq!(readings(&s, v.id, "1").r1r2_ohm, Some(0.55));
    assert_eq!(s.property_visits(v.property_id).unwrap().len(), 3);
}

#[test]
fn line_mode_verdicts_and_abandon_puts_the_register_back() {
    let e = Env::with_history();
    let out = e.ok(
        &[
            "record",
            "P-9",
            "--date",
            "2025-02-01",
            "--temp",
            "20",
            "--no-finish",
        ],
        "CU,1,r1r2_ohm,0.86\nCU,1,zs_ohm,1.30\nCU,2,device,B10\nCU,1,ir_le_mohm,LIM\n",
    );
    // 0.86 Ω against a band around the trend's 0.551 Ω at 20 °C: outside, and why.
    assert!(out.contains("CU/1 r1r2_ohm: OUTSIDE THE BAND"), "{out}");
    assert!(out.contains("termination"), "{out}");
    // 1.30 Ω is past the B32 limit at 20 °C: 1.37 / 1.20 = 1.1416 → 1.14 Ω.
    assert!(out.contains("CU/1 zs_ohm: EXCEEDS THE LIMIT"), "{out}");
    assert!(out.contains("1.14 Ω"), "{out}");
    assert!(
        out.contains("recorded as a circuit change (device changed): device B6 → B10"),
        "{out}"
    );
    assert!(out.contains("stays pending"), "{out}");

    let s = e.store();
    let v = pending(&s);
    assert_eq!(readings(&s, v.id, "1").limitations, vec!["ir_le_mohm"]);
    let c2 = s.find_circuit("P-9", "CU", "2").unwrap();
    assert_eq!(c2.device.unwrap().to_string(), "B10");
    assert_eq!(s.visit_changes(v.id).unwrap().len(), 1);

    let out = e.ok(&["record", "P-9", "--abandon"], "");
    assert!(out.contains("1 register change put back"), "{out}");
    let c2 = s.find_circuit("P-9", "CU", "2").unwrap();
    assert_eq!(c2.device.unwrap().to_string(), "B6");
    assert!(s.pending_visit(v.property_id).unwrap().is_none());
    assert!(s.visit_on(v.property_id, v.date).unwrap().is_none());
    assert!(s.changes(c2.id).unwrap().is_empty());
    e.cmd(&["record", "P-9", "--abandon"], "")
        .failure()
        .stderr(predicates::str::contains("no pending visit to abandon"));
}

/// Answer one prompt: wait for its text, then type the line.
fn answer(p: &mut Session, prompt: &str, line: &str) {
    p.expect(prompt)
        .unwrap_or_else(|err| panic!("waiting for {prompt:?}: {err}"));
    p.send_line(line).unwrap();
}

#[test]
fn interactive_session_survives_a_kill_and_resumes_every_value() {
    let e = Env::with_history();
    let mut p = e.spawn(&["record", "P-9", "--date", "2025-03-01", "--temp", "15"]);
    answer(&mut p, "Inspector carrying out the test", "A. Tester");
    answer(&mut p, "Ze [Ω]", "0.21");
    p.expect("WITHIN THE BAND").unwrap();
    answer(&mut p, "Fitted as in the register (B32, 2.5/1.5 mm²)", "");
    answer(&mut p, "R1+R2 [Ω]", "0.55");
    p.expect("WITHIN THE BAND").unwrap();
    answer(&mut p, "R1+Rn [Ω]", "");
    p.expect("skipped").unwrap();
    answer(&mut p, "IR L–L [MΩ]", ">200");
    p.expect("over range").unwrap();
    // At the next prompt, the process dies (a flat battery).
    p.expect("IR L–E [MΩ]").unwrap();
    p.get_process_mut().kill(Signal::SIGKILL).unwrap();
    let _ = p.get_process().wait();

    let s = e.store();
    let v = pending(&s);
    assert_eq!(v.ambient_c, Some(15.0));
    assert_eq!(v.inspector.as_deref(), Some("A. Tester"));
    let c1 = readings(&s, v.id, "1");
    assert_eq!(c1.r1r2_ohm, Some(0.55));
    assert_eq!(
        c1.ir_ll,
        Some(Megohms {
            value: 200.0,
            over_range: true
        })
    );
    assert_eq!(c1.r1rn_ohm, None);
    let board = s.boards(v.property_id).unwrap()[0].id;
    assert_eq!(s.board_test(v.id, board).unwrap(), Some((Some(0.21), None)));

    // Resume carries on from the first unanswered prompt after the last stored value.
    let mut p = e.spawn(&["record", "P-9", "--resume"]);
    p.expect("3 values already stored").unwrap();
    answer(&mut p, "IR L–E [MΩ]", ">200");
    answer(&mut p, "Zs [Ω]", "0.75");
    p.expect("WITHIN THE BAND").unwrap();
    answer(&mut p, "Fitted as in the register (B6, 1.5/1 mm²)", "B10");
    p.expect("CU/2: recorded as a circuit change (device changed): device B6 → B10")
        .unwrap();
    answer(&mut p, "R1+R2 [Ω]", "");
    answer(&mut p, "R1+Rn [Ω]", "N/A");
    answer(&mut p, "IR L–L [MΩ]", "LIM");
    p.expect("limitation").unwrap();
    answer(&mut p, "IR L–E [MΩ]", "150");
    answer(&mut p, "Zs [Ω]", "1.81");
    answer(&mut p, "not in the register?", "");
    answer(&mut p, "Finish the visit", "y");
    p.expect("finished").unwrap();
    p.expect(Eof).unwrap();

    let v = s.visit_on(v.property_id, v.date).unwrap().unwrap();
    assert_eq!(v.state, VisitState::Complete);
    let c1 = readings(&s, v.id, "1");
    assert_eq!(c1.r1r2_ohm, Some(0.55));
    assert_eq!(c1.zs_ohm, Some(0.75));
    assert_eq!(
        c1.ir_le,
        Some(Megohms {
            value: 200.0,
            over_range: true
        })
    );
    assert_eq!(c1.ir_ll.map(|m| m.over_range), Some(true));
    let c2 = readings(&s, v.id, "2");
    assert_eq!(c2.r1r2_ohm, None);
    assert_eq!(c2.limitations, vec!["ir_ll_mohm"]);
    assert_eq!(c2.ir_le.map(|m| m.value), Some(150.0));
    assert_eq!(c2.zs_ohm, Some(1.81));
    let circuit2 = s.find_circuit("P-9", "CU", "2").unwrap();
    assert_eq!(circuit2.device.unwrap().to_string(), "B10");
    assert_eq!(s.property_visits(v.property_id).unwrap().len(), 3);
}

#[test]
fn bad_input_at_the_prompt_re_asks_and_stores_nothing_wrong() {
    let e = Env::with_history();
    let mut p = e.spawn(&[
        "record",
        "P-9",
        "--date",
        "2025-03-01",
        "--temp",
        "15",
        "--inspector",
        "A. Tester",
    ]);
    answer(&mut p, "Ze [Ω]", "");
    answer(&mut p, "Fitted as in the register", "Q77");
    p.expect("NOT STORED").unwrap();
    answer(&mut p, "Fitted as in the register", "");
    answer(&mut p, "R1+R2 [Ω]", "0.5x");
    p.expect("NOT STORED: \"0.5x\" has an unknown unit")
        .unwrap();
    answer(&mut p, "R1+R2 [Ω]", "abc");
    p.expect("NOT STORED: \"abc\" is not a reading").unwrap();
    answer(&mut p, "R1+R2 [Ω]", "-0.52");
    p.expect("NOT STORED: \"-0.52\" is negative").unwrap();
    answer(&mut p, "R1+R2 [Ω]", "0.52 MΩ");
    p.expect("NOT STORED: \"0.52 MΩ\" is in MΩ, but R1+R2 is read in Ω")
        .unwrap();
    // The prompt is asked again; nothing was stored meanwhile.
    p.expect("R1+R2 [Ω]").unwrap();
    {
        let s = e.store();
        let v = pending(&s);
        assert_eq!(readings(&s, v.id, "1"), Default::default());
        assert!(s.visit_records(v.id).unwrap().is_empty());
        let c = s.find_circuit("P-9", "CU", "1").unwrap();
        assert_eq!(c.device.unwrap().to_string(), "B32");
    }
    p.send_line("0.92").unwrap();
    // Past the band at 15 °C, still within the limit: outside, with what it usually means.
    p.expect("OUTSIDE THE BAND").unwrap();
    p.expect("termination").unwrap();
    answer(&mut p, "R1+Rn [Ω]", ">2");
    p.expect("NOT STORED").unwrap();
    answer(&mut p, "R1+Rn [Ω]", "0.9");
    // Ctrl-D stops; the visit stays pending with what was entered.
    p.expect("IR L–L").unwrap();
    p.send(expectrl::ControlCode::EndOfTransmission).unwrap();
    p.expect("stays pending").unwrap();
    p.expect(Eof).unwrap();
    let s = e.store();
    let v = pending(&s);
    let r = readings(&s, v.id, "1");
    assert_eq!(r.r1r2_ohm, Some(0.92));
    assert_eq!(r.r1rn_ohm, Some(0.9));
    assert_eq!(r.zs_ohm, None);
}

#[test]
fn record_refuses_what_cannot_be_a_visit() {
    let e = Env::new();
    e.ok(&["property", "add", "P-0"], "");
    e.cmd(&["record", "P-0", "--date", "2025-01-01"], "")
        .failure()
        .stderr(predicates::str::contains("P-0 has no boards"));
    e.ok(&["board", "add", "P-0", "CU"], "");
    e.cmd(&["record", "P-0", "--date", "2999-01-01"], "")
        .failure()
        .stderr(predicates::str::contains("is in the future"));
    e.cmd(&["record", "P-0", "--temp", "90"], "")
        .failure()
        .stderr(predicates::str::contains("out of range"));
    e.cmd(&["record", "P-0", "--resume"], "")
        .failure()
        .stderr(predicates::str::contains("no pending visit to resume"));
    e.cmd(&["record", "NOPE"], "")
        .failure()
        .stderr(predicates::str::contains("property \"NOPE\" not found"));
    // Nothing was started by any of these.
    let s = e.store();
    let p = s.property("P-0").unwrap();
    assert!(s.pending_visit(p.id).unwrap().is_none());
}

#[test]
fn line_mode_reads_a_quantity_by_its_column_or_its_short_name() {
    // The same visit recorded twice, once with the visit-file column names (canonical) and
    // once with the short names the worklist prints, in mixed case: the two databases export
    // the same file. Readings wander a little from the earlier visits, as on site.
    let canonical = "CU,,ze_ohm,0.21\nCU,1,r1r2_ohm,0.52\nCU,1,r1rn_ohm,0.49\nCU,1,r2_ohm,0.31\n\
                     CU,1,zs_ohm,0.73\nCU,1,ir_ll_mohm,>200\nCU,1,ir_le_mohm,180\nCU,1,rcd_ms,23\n\
                     CU,1,rcd_5x_ms,12\nCU,2,r1r2_ohm,1.62\nCU,2,zs_ohm,1.83\n";
    let short = "CU,,Ze,0.21\nCU,1,r1r2,0.52\nCU,1,R1RN,0.49\nCU,1,r2,0.31\n\
                 CU,1,zs,0.73\nCU,1,ir_ll,>200\nCU,1,IR_LE,180\nCU,1,rcd,23\n\
                 CU,1,rcd_5x,12\nCU,2,r1r2,1.62\nCU,2,Zs,1.83\n";
    let mut exports = Vec::new();
    for lines in [canonical, short] {
        let e = Env::with_history();
        e.ok(
            &["record", "P-9", "--date", "2025-03-01", "--temp", "14"],
            lines,
        );
        let s = e.store();
        let visit = s
            .property_visits(s.property("P-9").unwrap().id)
            .unwrap()
            .into_iter()
            .find(|v| v.date.to_string() == "2025-03-01")
            .expect("the visit is recorded and complete");
        let r = readings(&s, visit.id, "1");
        assert_eq!(
            (r.r1r2_ohm, r.zs_ohm, r.rcd_ms),
            (Some(0.52), Some(0.73), Some(23.0))
        );
        exports.push(e.ok(&["export"], ""));
    }
    assert_eq!(exports[0], exports[1]);
    // An unknown name is still refused, listing the canonical names.
    let e = Env::with_history();
    e.cmd(
        &["record", "P-9", "--date", "2025-03-01", "--temp", "14"],
        "CU,1,r1r2_ohmz,0.52\n",
    )
    .failure()
    .stderr(predicates::str::contains("unknown quantity \"r1r2_ohmz\""))
    .stderr(predicates::str::contains("r1r2_ohm"));
}

#[test]
fn counts_of_one_read_in_the_singular() {
    let e = Env::with_history();
    // One refused line and one value stored from the others.
    let a = e
        .cmd(
            &["record", "P-9", "--date", "2025-02-01", "--temp", "12"],
            "CU,1,r1r2_ohm,0.55\nCU,9,zs_ohm,0.5\n",
        )
        .failure();
    let err = String::from_utf8(a.get_output().stderr.clone()).unwrap();
    assert!(
        err.contains("1 line refused and nothing stored from it (1 value stored from the others)"),
        "{err}"
    );
    assert!(!err.contains("(s)"), "{err}");
    let out = e.ok(
        &["record", "P-9", "--resume", "--no-finish"],
        "CU,1,zs_ohm,0.76\n",
    );
    assert!(out.contains("1 value stored;"), "{out}");
    let out = e.ok(&["record", "P-9", "--abandon"], "");
    assert!(
        out.contains(
            "1 circuit record and 0 board readings discarded, 0 register changes put back"
        ),
        "{out}"
    );
    // One instrument, in calibration: the brief says so in the singular.
    e.ok(
        &[
            "instrument",
            "add",
            "ONE-1",
            "--calibration-due",
            "2030-01-31",
        ],
        "",
    );
    let out = e.ok(&["brief", "P-9", "--date", "2028-01-01"], "");
    assert!(
        out.contains("the one instrument in the register is in calibration on 2028-01-01"),
        "{out}"
    );
    assert!(!out.contains("(s)"), "{out}");
    let html = e.dir.path().join("brief.html");
    e.ok(
        &[
            "brief",
            "P-9",
            "--date",
            "2028-01-01",
            "-o",
            html.to_str().unwrap(),
        ],
        "",
    );
    let html = std::fs::read_to_string(&html).unwrap();
    assert!(html.contains("The one instrument in the register is in calibration"));
    assert!(!html.contains("(s)"));
}

/// A first visit to a board with no circuits in the register: `record` asks for the
/// inspector, then for each circuit found (number, what it supplies, device, RCD), adds it to
/// the register as `circuit add` does, and takes its readings. Invented property and readings.
#[test]
fn record_adds_circuits_found_on_a_first_visit() {
    let e = Env::new();
    e.ok(
        &["property", "add", "P-1", "--address", "1 Invented Row"],
        "",
    );
    e.ok(&["board", "add", "P-1", "CU", "--earthing", "TN-C-S"], "");
    let mut p = e.spawn(&["record", "P-1", "--date", "2025-03-01", "--temp", "14"]);
    answer(&mut p, "Inspector carrying out the test", "B. Sparkwright");
    answer(&mut p, "Ze [Ω]", "0.27");
    answer(&mut p, "not in the register?", "1");
    answer(&mut p, "What it supplies", "Sockets, kitchen");
    answer(&mut p, "Protective device", "B77");
    p.expect("NOT STORED").unwrap();
    answer(&mut p, "Protective device", "B32");
    answer(&mut p, "RCD protecting it", "30");
    p.expect("added circuit CU/1 to the register with B32")
        .unwrap();
    answer(&mut p, "R1+R2 [Ω]", "0.46");
    p.expect("no history to compare with").unwrap();
    answer(&mut p, "R1+Rn [Ω]", "0.31");
    answer(&mut p, "IR L–L [MΩ]", ">999");
    answer(&mut p, "IR L–E [MΩ]", "999+");
    answer(&mut p, "Zs [Ω]", "0.74");
    answer(&mut p, "RCD at 5 × IΔn", "19");
    answer(&mut p, "RCD at 1 × IΔn", "27");
    // A number the board already has is refused, and asked again.
    answer(&mut p, "not in the register?", "1");
    answer(&mut p, "What it supplies", "Lights");
    answer(&mut p, "Protective device", "B6");
    answer(&mut p, "RCD protecting it", "");
    p.expect("NOT ADDED").unwrap();
    answer(&mut p, "not in the register?", "2");
    answer(&mut p, "What it supplies", "Lights");
    answer(&mut p, "Protective device", "B6");
    answer(&mut p, "RCD protecting it", "");
    answer(&mut p, "R1+R2 [Ω]", "1.21");
    answer(&mut p, "R1+Rn [Ω]", "");
    answer(&mut p, "IR L–L [MΩ]", "");
    answer(&mut p, "IR L–E [MΩ]", ">200");
    answer(&mut p, "Zs [Ω]", "1.49");
    answer(&mut p, "not in the register?", "");
    answer(&mut p, "Finish the visit", "y");
    p.expect("finished").unwrap();
    p.expect(Eof).unwrap();

    let s = e.store();
    let pid = s.property("P-1").unwrap().id;
    let visits = s.property_visits(pid).unwrap();
    assert_eq!(visits.len(), 1);
    let v = &visits[0];
    assert_eq!(v.state, VisitState::Complete);
    assert_eq!(v.inspector.as_deref(), Some("B. Sparkwright"));
    let c1 = s.find_circuit("P-1", "CU", "1").unwrap();
    assert_eq!(c1.device.unwrap().to_string(), "B32");
    assert_eq!(c1.rcd_ma, Some(30));
    assert_eq!(c1.description.as_deref(), Some("Sockets, kitchen"));
    let c2 = s.find_circuit("P-1", "CU", "2").unwrap();
    assert_eq!(c2.device.unwrap().to_string(), "B6");
    assert_eq!(c2.rcd_ma, None);
    let on_p1 = |c: &ohmtrail::model::Circuit| {
        s.test_record(v.id, c.id)
            .unwrap()
            .map(|t| t.readings)
            .unwrap_or_default()
    };
    let r1 = on_p1(&c1);
    assert_eq!(r1.r1r2_ohm, Some(0.46));
    assert_eq!(r1.zs_ohm, Some(0.74));
    assert_eq!(r1.rcd_ms, Some(27.0));
    assert_eq!(
        r1.ir_le,
        Some(Megohms {
            value: 999.0,
            over_range: true
        })
    );
    assert_eq!(on_p1(&c2).zs_ohm, Some(1.49));
}

/// Insulation over range at the last visit and over range again (`>50`, `50+`: another
/// instrument's lower top of range) is no reason to warn "cannot compare": both readings are
/// lower bounds, and they agree. In the line mode a device change names its circuit.
#[test]
fn an_over_range_insulation_reading_after_an_over_range_one_agrees() {
    let e = Env::with_history();
    let out = e.ok(
        &[
            "record",
            "P-9",
            "--date",
            "2025-03-01",
            "--temp",
            "15",
            "--no-finish",
        ],
        "CU,1,ir_le_mohm,>50\nCU,1,ir_le_mohm,50+\nCU,2,device,B10\n",
    );
    assert_eq!(out.matches("OVER RANGE AS BEFORE").count(), 2, "{out}");
    assert!(!out.contains("CANNOT COMPARE"), "{out}");
    assert!(
        out.contains("CU/2: recorded as a circuit change (device changed): device B6 → B10"),
        "{out}"
    );
}

#[test]
fn line_mode_records_polarity_the_test_voltage_and_the_test_button() {
    // Facts, not readings (polarity: BS 7671:2018 Regulation 643.6, from memory; the test
    // voltage from Table 64; the test button: common practice, no source): stored as given
    // and judged when the visit is history.
    let e = Env::with_history();
    let out = e.ok(
        &["record", "P-9", "--date", "2025-03-01", "--temp", "14"],
        "CU,1,r1r2,0.53\nCU,1,polarity,✗\nCU,1,ir_test_v,500 V\nCU,1,rcd_button,operates\n",
    );
    assert!(out.contains("CU/1 polarity: recorded incorrect"), "{out}");
    assert!(out.contains("CU/1 ir_test_v: recorded 500 V"), "{out}");
    let s = e.store();
    let visit = s
        .property_visits(s.property("P-9").unwrap().id)
        .unwrap()
        .into_iter()
        .find(|v| v.date.to_string() == "2025-03-01")
        .unwrap();
    let r = readings(&s, visit.id, "1");
    assert_eq!(
        (r.polarity, r.ir_test_v, r.rcd_button),
        (
            Some(ohmtrail::model::Polarity::Incorrect),
            Some(500),
            Some(ohmtrail::model::ButtonTest::Operates)
        )
    );
    let flags = e.ok(&["flags", "--property", "P-9"], "");
    assert!(
        flags.contains("Polarity was recorded incorrect at the visit of 2025-03-01"),
        "{flags}"
    );
    // A value the visit file would refuse is refused here, naming the line, and stores nothing.
    let e = Env::with_history();
    e.cmd(
        &["record", "P-9", "--date", "2025-03-01", "--temp", "14"],
        "CU,1,ir_test_v,400\n",
    )
    .failure()
    .stderr(predicates::str::contains(
        "line 1: ir_test_v: 400 V is not an insulation test voltage",
    ));
    let s = e.store();
    let v = pending(&s);
    assert!(
        s.test_record(v.id, s.find_circuit("P-9", "CU", "1").unwrap().id)
            .unwrap()
            .is_none()
    );
}

/// The circuits in service on board CU of P-9, by number.
fn cu_numbers(store: &Store) -> Vec<String> {
    let p = store.property("P-9").unwrap();
    let board = store.boards(p.id).unwrap()[0].id;
    store
        .circuits(board)
        .unwrap()
        .into_iter()
        .map(|c| c.number)
        .collect()
}

/// A circuit added during an interactive visit that is then cut off (killed) and abandoned
/// leaves the register as it was before the visit: the circuit goes with the visit.
#[test]
fn abandoning_a_visit_removes_the_circuit_added_at_it() {
    let e = Env::with_history();
    let mut p = e.spawn(&["record", "P-9", "--date", "2025-03-01", "--temp", "15"]);
    answer(&mut p, "Inspector carrying out the test", "A. Tester");
    answer(&mut p, "Ze [Ω]", "0.21");
    answer(&mut p, "Fitted as in the register (B32, 2.5/1.5 mm²)", "");
    for prompt in ["R1+R2", "R1+Rn", "IR L–L", "IR L–E", "Zs"] {
        answer(&mut p, prompt, "");
    }
    answer(&mut p, "Fitted as in the register (B6, 1.5/1 mm²)", "");
    for prompt in ["R1+R2", "R1+Rn", "IR L–L", "IR L–E", "Zs"] {
        answer(&mut p, prompt, "");
    }
    answer(&mut p, "not in the register?", "3");
    answer(&mut p, "What it supplies", "Garage");
    answer(&mut p, "Protective device", "B16");
    answer(&mut p, "RCD protecting it", "30");
    p.expect("added circuit CU/3 to the register with B16")
        .unwrap();
    answer(&mut p, "R1+R2 [Ω]", "0.83");
    p.expect("R1+Rn [Ω]").unwrap();
    p.get_process_mut().kill(Signal::SIGKILL).unwrap();
    let _ = p.get_process().wait();

    let s = e.store();
    let v = pending(&s);
    assert_eq!(cu_numbers(&s), ["1", "2", "3"]);
    assert_eq!(readings(&s, v.id, "3").r1r2_ohm, Some(0.83));

    let out = e.ok(&["record", "P-9", "--abandon"], "");
    assert!(
        out.contains("1 circuit added at it taken out of the register"),
        "{out}"
    );
    assert_eq!(cu_numbers(&s), ["1", "2"]);
    assert!(s.find_circuit("P-9", "CU", "3").is_err());
    for n in ["1", "2"] {
        let c = s.find_circuit("P-9", "CU", n).unwrap();
        assert!(s.changes(c.id).unwrap().is_empty(), "circuit {n}");
    }
    assert!(s.visit_on(v.property_id, v.date).unwrap().is_none());
    // The number is free again, as before the visit.
    e.ok(&["circuit", "add", "P-9", "CU", "3", "--device", "B20"], "");
}

/// The line mode adds a circuit the register lacks with an `add` line (what it supplies, the
/// device, the RCD, as the prompts ask), takes its readings from the lines after it, and an
/// abandoned visit takes it out again.
#[test]
fn line_mode_adds_a_circuit_and_abandon_takes_it_out() {
    let e = Env::with_history();
    let out = e.ok(
        &["record", "P-9", "--date", "2025-02-01", "--temp", "20"],
        "CU,,ze_ohm,0.21\nCU,3,add,\"Sockets, garage\",RCBO B20,30\nCU,3,r1r2_ohm,0.61\n\
         CU,3,zs_ohm,0.83\nCU,4,add,Loft lights\nCU,4,r1r2_ohm,1.12\n",
    );
    assert!(
        out.contains("added circuit CU/3 to the register with RCBO B20"),
        "{out}"
    );
    assert!(
        out.contains("added circuit CU/4 to the register, device not recorded"),
        "{out}"
    );
    assert!(out.contains("finished"), "{out}");
    let s = e.store();
    let pid = s.property("P-9").unwrap().id;
    let v = s
        .visit_on(pid, chrono::NaiveDate::from_ymd_opt(2025, 2, 1).unwrap())
        .unwrap()
        .unwrap();
    assert_eq!(v.state, VisitState::Complete);
    let c3 = s.find_circuit("P-9", "CU", "3").unwrap();
    assert_eq!(c3.description.as_deref(), Some("Sockets, garage"));
    assert_eq!(c3.device.unwrap().to_string(), "RCBO B20");
    assert_eq!(c3.rcd_ma, Some(30));
    assert_eq!(readings(&s, v.id, "3").zs_ohm, Some(0.83));
    assert_eq!(readings(&s, v.id, "4").r1r2_ohm, Some(1.12));
    // A number the board already has is refused, naming the line.
    e.cmd(
        &["record", "P-9", "--date", "2025-03-01", "--no-finish"],
        "CU,1,add,Sockets\n",
    )
    .failure()
    .stderr(predicates::str::contains(
        "line 1: board \"CU\" already has a circuit 1",
    ));
    e.ok(&["record", "P-9", "--abandon"], "");

    e.ok(
        &["record", "P-9", "--date", "2025-03-01", "--no-finish"],
        "CU,5,add,Shed,B16\nCU,5,r1r2_ohm,0.95\n",
    );
    assert!(cu_numbers(&s).contains(&"5".to_string()));
    let out = e.ok(&["record", "P-9", "--abandon"], "");
    assert!(
        out.contains("1 circuit added at it taken out of the register"),
        "{out}"
    );
    assert_eq!(cu_numbers(&s), ["1", "2", "3", "4"]);
}

/// A sub-board with no circuits in the register is in the brief (text and page), saying so,
/// and `record` walks it: Zdb, then the circuits found there, interactively or by `add` lines.
#[test]
fn a_sub_board_with_no_circuits_is_briefed_and_walked() {
    let e = Env::with_history();
    e.ok(&["board", "add", "P-9", "DB2", "--fed-from", "CU"], "");
    let text = e.ok(&["brief", "P-9", "--date", "2025-03-01"], "");
    let at = text.find("Board DB2").expect(&text);
    assert!(
        text[at..].contains("no circuits recorded on this board"),
        "{text}"
    );
    let html = e.dir.path().join("b.html");
    e.ok(
        &[
            "brief",
            "P-9",
            "--date",
            "2025-03-01",
            "-o",
            html.to_str().unwrap(),
        ],
        "",
    );
    let html = std::fs::read_to_string(&html).unwrap();
    assert!(html.contains("Board DB2"), "{html}");
    assert!(html.contains("no circuits recorded on this board"));

    let mut p = e.spawn(&["record", "P-9", "--date", "2025-03-01", "--temp", "15"]);
    answer(&mut p, "Inspector carrying out the test", "");
    answer(&mut p, "Ze [Ω]", "");
    for _ in 0..2 {
        answer(&mut p, "Fitted as in the register", "");
        for prompt in ["R1+R2", "R1+Rn", "IR L–L", "IR L–E", "Zs"] {
            answer(&mut p, prompt, "");
        }
    }
    answer(
        &mut p,
        "A circuit on board CU that is not in the register?",
        "",
    );
    p.expect("== Board DB2 ==").unwrap();
    p.expect("no circuits recorded on this board").unwrap();
    answer(&mut p, "Zdb [Ω]", "0.35");
    answer(
        &mut p,
        "A circuit on board DB2 that is not in the register?",
        "1",
    );
    answer(&mut p, "What it supplies", "Immersion heater");
    answer(&mut p, "Protective device", "B16");
    answer(&mut p, "RCD protecting it", "");
    answer(&mut p, "R1+R2 [Ω]", "0.42");
    for prompt in ["R1+Rn", "IR L–L", "IR L–E", "Zs"] {
        answer(&mut p, prompt, "");
    }
    answer(
        &mut p,
        "A circuit on board DB2 that is not in the register?",
        "",
    );
    answer(&mut p, "Finish the visit", "y");
    p.expect("finished").unwrap();
    p.expect(Eof).unwrap();
    let s = e.store();
    let c = s.find_circuit("P-9", "DB2", "1").unwrap();
    assert_eq!(c.description.as_deref(), Some("Immersion heater"));

    // The line mode reaches such a board too.
    e.ok(&["board", "add", "P-9", "DB3", "--fed-from", "CU"], "");
    e.ok(
        &["record", "P-9", "--date", "2025-04-01"],
        "DB3,,ze_ohm,0.31\nDB3,1,add,Garage,B20\nDB3,1,zs_ohm,0.88\n",
    );
    assert!(s.find_circuit("P-9", "DB3", "1").is_ok());
}

/// The brief's CSV carries the caution once, as its first line, a `#` comment; a reader that
/// takes `#` as a comment reads the header and rows as before, and a cell that holds a `#`
/// (here a description) is quoted, so it is neither dropped nor cut short.
#[test]
fn the_brief_csv_carries_the_caution_as_a_comment_line() {
    let e = Env::with_history();
    e.ok(
        &[
            "circuit",
            "add",
            "P-9",
            "CU",
            "3",
            "--description",
            "# spare, was #2",
            "--device",
            "B16",
        ],
        "",
    );
    let path = e.dir.path().join("b.csv");
    e.ok(
        &[
            "brief",
            "P-9",
            "--date",
            "2025-03-01",
            "-o",
            path.to_str().unwrap(),
        ],
        "",
    );
    let text = std::fs::read_to_string(&path).unwrap();
    let first = text.lines().next().unwrap();
    assert_eq!(first, format!("# Caution: {}", ohmtrail::CAUTION));
    assert_eq!(text.matches(ohmtrail::CAUTION).count(), 1);
    let mut rdr = csv::ReaderBuilder::new()
        .comment(Some(b'#'))
        .from_reader(text.as_bytes());
    let header = rdr.headers().unwrap().clone();
    assert_eq!(
        header.iter().collect::<Vec<_>>(),
        ohmtrail::onsite::CSV_HEADER
    );
    let rows: Vec<csv::StringRecord> = rdr.records().map(|r| r.unwrap()).collect();
    let desc = header.iter().position(|h| h == "description").unwrap();
    let circuit = header.iter().position(|h| h == "circuit").unwrap();
    let spare: Vec<_> = rows.iter().filter(|r| &r[circuit] == "3").collect();
    assert!(!spare.is_empty());
    for r in spare {
        assert_eq!(&r[desc], "# spare, was #2");
    }
    // Every row has every column: the comment is not a record.
    assert!(rows.iter().all(|r| r.len() == header.len()));
}
