//! The register commands, driven through the real binary on temporary databases.

use assert_cmd::Command;
use predicates::prelude::*;
use tempfile::TempDir;

struct Env {
    dir: TempDir,
}

impl Env {
    fn new() -> Env {
        Env {
            dir: tempfile::tempdir().unwrap(),
        }
    }

    fn db(&self) -> std::path::PathBuf {
        self.dir.path().join("t.db")
    }

    fn cmd(&self, args: &[&str]) -> assert_cmd::assert::Assert {
        Command::cargo_bin("ohmtrail")
            .unwrap()
            .env_remove("OHMTRAIL_DB")
            .arg("--db")
            .arg(self.db())
            .args(args)
            .assert()
    }

    fn ok(&self, args: &[&str]) -> String {
        let out = self.cmd(args).success().get_output().stdout.clone();
        String::from_utf8(out).unwrap()
    }

    /// A property with one board, for the circuit tests.
    fn with_board() -> Env {
        let e = Env::new();
        e.ok(&[
            "property",
            "add",
            "P-1",
            "--address",
            "1 Example Row, Sampleton",
            "--client",
            "Agent (test)",
        ]);
        e.ok(&["board", "add", "P-1", "DB1", "--earthing", "TN-C-S"]);
        e
    }

    fn circuits_json(&self) -> serde_json::Value {
        let v: serde_json::Value =
            serde_json::from_str(&self.ok(&["property", "show", "P-1", "--json"])).unwrap();
        v["boards"][0]["circuits"].clone()
    }

    fn db_bytes(&self) -> Vec<u8> {
        std::fs::read(self.db()).unwrap()
    }
}

#[test]
fn help_lists_every_command_with_a_description() {
    let out = Command::cargo_bin("ohmtrail")
        .unwrap()
        .arg("--help")
        .assert()
        .success()
        .get_output()
        .stdout
        .clone();
    let text = String::from_utf8(out).unwrap();
    for cmd in [
        "init",
        "property",
        "board",
        "circuit",
        "instrument",
        "visit",
        "import",
        "export",
        "flags",
        "trend",
        "report",
        "brief",
        "record",
        "settings",
        "limits",
        "check",
        "demo",
    ] {
        let line = text
            .lines()
            .find(|l| l.trim_start().starts_with(&format!("{cmd} ")))
            .unwrap_or_else(|| panic!("{cmd} missing from --help:\n{text}"));
        assert!(
            line.split_whitespace().count() > 2,
            "{cmd} has no description"
        );
    }
    assert!(text.contains("BS 7671"), "the caution is part of --help");
}

#[test]
fn init_creates_the_database_where_told() {
    let e = Env::new();
    let out = e.ok(&["init"]);
    let latest = ohmtrail::store::migrate::latest_version();
    assert!(out.contains(&format!("schema version {latest}")), "{out}");
    assert!(e.db().exists());

    // The environment variable works as well as the flag.
    let other = e.dir.path().join("nested/dir/env.db");
    Command::cargo_bin("ohmtrail")
        .unwrap()
        .env("OHMTRAIL_DB", &other)
        .arg("init")
        .assert()
        .success();
    assert!(other.exists());
}

#[test]
fn reading_commands_refuse_a_missing_database_and_say_how_to_start() {
    let e = Env::new();
    let html = e.dir.path().join("p.html");
    let html = html.to_str().unwrap();
    let reading: &[&[&str]] = &[
        &["flags"],
        &["trend", "P-1"],
        &["report", "P-1", "-o", html],
        &["brief", "P-1"],
        &["property", "list"],
        &["property", "show", "P-1"],
        &["visit", "list"],
        &["export"],
    ];
    for args in reading {
        e.cmd(args)
            .code(1)
            .stdout(predicate::str::contains("nothing to report").not())
            .stderr(predicate::str::contains("no database at"))
            .stderr(predicate::str::contains("init"))
            .stderr(predicate::str::contains("ohmtrail demo"));
        assert!(!e.db().exists(), "{args:?} created the database");
    }
    // Writing commands still create it on first use.
    e.ok(&["property", "add", "P-1"]);
    assert!(e.db().exists());
    e.ok(&["flags"]);
}

/// The page size of a database file, read with SQLite itself.
fn page_size(db: &std::path::Path) -> i64 {
    rusqlite::Connection::open(db)
        .unwrap()
        .query_row("PRAGMA page_size", [], |r| r.get(0))
        .unwrap()
}

#[test]
fn a_new_database_gets_large_pages_and_an_old_one_keeps_its_own() {
    let e = Env::new();
    e.ok(&["init"]);
    assert_eq!(page_size(&e.db()), ohmtrail::store::DEFAULT_PAGE_SIZE);

    // A database an earlier build made with SQLite's default 4 KiB pages, at schema version 3.
    let old = e.dir.path().join("old.db");
    let conn = rusqlite::Connection::open(&old).unwrap();
    for (_, sql) in &ohmtrail::store::migrate::MIGRATIONS[..3] {
        conn.execute_batch(sql).unwrap();
    }
    conn.execute_batch("PRAGMA user_version = 3; INSERT INTO property (ref) VALUES ('OLD-1');")
        .unwrap();
    drop(conn);
    assert_eq!(page_size(&old), 4096);
    let run = |args: &[&str]| {
        Command::cargo_bin("ohmtrail")
            .unwrap()
            .env_remove("OHMTRAIL_DB")
            .arg("--db")
            .arg(&old)
            .args(args)
            .assert()
            .success()
    };
    run(&["property", "add", "OLD-2"]);
    let listed = String::from_utf8(run(&["property", "list"]).get_output().stdout.clone()).unwrap();
    assert!(
        listed.contains("OLD-1") && listed.contains("OLD-2"),
        "{listed}"
    );
    assert_eq!(page_size(&old), 4096);
}

#[test]
fn property_add_list_show() {
    let e = Env::with_board();
    e.ok(&[
        "circuit", "add", "P-1", "DB1", "1", "--kind", "ring", "--live", "2.5", "--cpc", "1.5",
        "--device", "B32", "--rcd", "30",
    ]);
    let list: serde_json::Value =
        serde_json::from_str(&e.ok(&["property", "list", "--json"])).unwrap();
    assert_eq!(list[0]["property_ref"], "P-1");
    assert_eq!(list[0]["client"], "Agent (test)");
    assert_eq!(list[0]["interval_months"], 60);
    assert_eq!(list[0]["circuits"], 1);

    let table = e.ok(&["property", "list"]);
    assert!(table.lines().next().unwrap().starts_with("PROPERTY"));
    assert!(table.contains("1 Example Row, Sampleton"));

    let c = &e.circuits_json()[0];
    assert_eq!(c["kind"], "ring");
    assert_eq!(c["live_mm2"], 2.5);
    assert_eq!(c["device"]["curve"], "B");
    assert_eq!(c["device"]["rating_a"], 32);
    let shown = e.ok(&["property", "show", "P-1"]);
    assert!(shown.contains("B32"), "{shown}");
    assert!(shown.contains("fed from the origin; TN-C-S"), "{shown}");
}

/// A new client given in another case than a stored one is refused, naming the stored
/// spelling, and nothing is written; the exact stored spelling joins that client.
#[test]
fn a_client_differing_only_in_case_is_refused_with_the_stored_spelling() {
    let e = Env::new();
    e.ok(&["property", "add", "P-1", "--client", "Acme Lets (test)"]);
    e.cmd(&["property", "add", "P-2", "--client", "acme lets (TEST)"])
        .code(1)
        .stderr(predicates::str::contains(
            "client \"acme lets (TEST)\" differs from the stored \"Acme Lets (test)\" only in case",
        ));
    // Nothing written: the property is not there.
    e.cmd(&["property", "show", "P-2"]).code(1);
    e.ok(&["property", "add", "P-2", "--client", "Acme Lets (test)"]);
    let list: serde_json::Value =
        serde_json::from_str(&e.ok(&["property", "list", "--json"])).unwrap();
    let clients: Vec<&str> = list
        .as_array()
        .unwrap()
        .iter()
        .map(|p| p["client"].as_str().unwrap())
        .collect();
    assert_eq!(clients, ["Acme Lets (test)", "Acme Lets (test)"]);
    // A name that differs in more than case is a new client.
    e.ok(&["property", "add", "P-3", "--client", "Acme Lettings (test)"]);
    let out = e.ok(&["flags", "--client", "Acme Lettings (test)"]);
    assert!(!out.contains("P-1"), "{out}");
}

#[test]
fn unknown_property_or_board_is_an_error_naming_it() {
    let e = Env::with_board();
    e.cmd(&["board", "add", "NOPE", "DB1"])
        .code(1)
        .stderr(predicate::str::contains("property \"NOPE\" not found"));
    e.cmd(&["circuit", "add", "P-1", "DB9", "1"])
        .code(1)
        .stderr(
            predicate::str::contains("board \"DB9\" not found")
                .and(predicate::str::contains("has boards DB1")),
        );
    e.cmd(&["property", "show", "NOPE"]).code(1);
}

#[test]
fn duplicate_circuit_number_is_refused_and_nothing_written() {
    let e = Env::with_board();
    e.ok(&["circuit", "add", "P-1", "DB1", "1", "--device", "B32"]);
    let before = e.db_bytes();
    e.cmd(&["circuit", "add", "P-1", "DB1", "1", "--device", "B16"])
        .code(1)
        .stderr(predicate::str::contains(
            "already has a circuit 1 in service",
        ));
    assert_eq!(e.circuits_json().as_array().unwrap().len(), 1);
    assert_eq!(e.circuits_json()[0]["device"]["rating_a"], 32);
    drop(before);
}

#[test]
fn bad_register_values_are_refused_with_what_was_expected() {
    let e = Env::with_board();
    let cases: [(&[&str], &str); 6] = [
        (&["--live", "-2.5"], "is not a conductor size"),
        (&["--cpc", "0"], "is not a conductor size"),
        (&["--length", "0"], "is not a length"),
        (&["--device", "B33"], "B33 is not a standard rating"),
        (&["--device", "E32"], "unknown protective device \"E32\""),
        (&["--rcd", "25"], "25 mA is not a rated residual current"),
    ];
    for (flags, message) in cases {
        let mut args = vec!["circuit", "add", "P-1", "DB1", "7"];
        args.extend_from_slice(flags);
        let out = e.cmd(&args).failure().get_output().clone();
        let stderr = String::from_utf8(out.stderr).unwrap();
        assert!(stderr.contains(message), "{flags:?}: {stderr}");
        assert_eq!(stderr.lines().count(), 1, "one line on stderr: {stderr}");
        assert_eq!(out.status.code(), Some(1), "{flags:?}");
    }
    assert!(e.circuits_json().as_array().unwrap().is_empty());
}

#[test]
fn usage_errors_exit_2_and_other_errors_exit_1() {
    let e = Env::new();
    e.cmd(&["property", "frobnicate"]).code(2);
    e.cmd(&["property", "add"]).code(2);
    e.cmd(&["property", "show", "X"])
        .code(1)
        .stderr(predicate::str::starts_with("ohmtrail: error: "));
}

#[test]
fn edit_records_a_dated_change_and_replace_keeps_lineage() {
    let e = Env::with_board();
    e.ok(&["board", "add", "P-1", "DB2", "--fed-from", "DB1"]);
    e.ok(&["circuit", "add", "P-1", "DB1", "3", "--device", "B32"]);
    let out = e.ok(&[
        "circuit",
        "edit",
        "P-1",
        "DB1",
        "3",
        "--device",
        "B20",
        "--date",
        "14/06/2025",
    ]);
    assert!(
        out.contains("B32 -> B20 (device_changed, from 2025-06-14)"),
        "{out}"
    );
    assert_eq!(
        e.ok(&["circuit", "edit", "P-1", "DB1", "3", "--device", "B20"]),
        "nothing changed\n"
    );
    let out = e.ok(&[
        "circuit",
        "replace",
        "P-1",
        "DB1",
        "3",
        "--to-board",
        "DB2",
        "--to-number",
        "5",
        "--date",
        "2026-01-10",
    ]);
    assert!(out.contains("replaced by DB2/5"), "{out}");
    let v: serde_json::Value =
        serde_json::from_str(&e.ok(&["property", "show", "P-1", "--json"])).unwrap();
    let old = &v["boards"][0]["circuits"][0];
    let new = &v["boards"][1]["circuits"][0];
    assert_eq!(old["status"], "retired");
    assert_eq!(new["replaces"], old["id"]);
    // The new circuit carries the old one's details unless told otherwise.
    assert_eq!(new["device"]["rating_a"], 20);
    e.cmd(&["circuit", "edit", "P-1", "DB1", "3", "--device", "B16"])
        .code(1)
        .stderr(predicate::str::contains("no circuit 3 in service"));
}

#[test]
fn instruments_and_visits_list() {
    let e = Env::new();
    e.ok(&[
        "instrument",
        "add",
        "SN-100",
        "--description",
        "multifunction tester",
        "--calibration-due",
        "2020-01-01",
    ]);
    let out = e.ok(&["instrument", "list"]);
    assert!(out.contains("SN-100") && out.contains("lapsed"), "{out}");
    let v: serde_json::Value =
        serde_json::from_str(&e.ok(&["instrument", "list", "--json"])).unwrap();
    assert_eq!(v[0]["calibration_due"], "2020-01-01");
    let v: serde_json::Value = serde_json::from_str(&e.ok(&["visit", "list", "--json"])).unwrap();
    assert_eq!(v, serde_json::json!([]));
}

#[test]
fn a_database_from_a_newer_version_is_refused_and_left_untouched() {
    let e = Env::new();
    e.ok(&["init"]);
    let conn = rusqlite::Connection::open(e.db()).unwrap();
    conn.pragma_update(None, "journal_mode", "DELETE").unwrap();
    conn.pragma_update(None, "user_version", 99).unwrap();
    drop(conn);
    let before = e.db_bytes();
    e.cmd(&["property", "list"]).code(1).stderr(
        predicate::str::contains("schema version 99")
            .and(predicate::str::contains("left untouched")),
    );
    assert_eq!(
        before,
        e.db_bytes(),
        "the newer database must be byte-identical"
    );
}

#[test]
fn demo_builds_a_database_and_reports() {
    let e = Env::new();
    let dir = e.dir.path().join("demo");
    let out = Command::cargo_bin("ohmtrail")
        .unwrap()
        .env_remove("OHMTRAIL_DB")
        .args(["demo", "--dir"])
        .arg(&dir)
        .assert()
        .success()
        .get_output()
        .stderr
        .clone();
    let out = String::from_utf8(out).unwrap();
    assert!(out.contains("open first:"), "{out}");
    let report = out
        .lines()
        .find_map(|l| l.strip_prefix("open first: "))
        .unwrap();
    let html = std::fs::read_to_string(report).unwrap();
    assert!(html.contains("BS 7671"));
    // Running it again starts from nothing and gives the same database contents.
    Command::cargo_bin("ohmtrail")
        .unwrap()
        .env_remove("OHMTRAIL_DB")
        .args(["demo", "--dir"])
        .arg(&dir)
        .assert()
        .success();
    assert_eq!(html, std::fs::read_to_string(report).unwrap());
}

#[test]
fn demo_names_its_database_in_the_next_commands_and_refuses_another() {
    let e = Env::new();
    let dir = e.dir.path().join("demo");
    let out = Command::cargo_bin("ohmtrail")
        .unwrap()
        .env_remove("OHMTRAIL_DB")
        .args(["demo", "--dir"])
        .arg(&dir)
        .assert()
        .success()
        .get_output()
        .stderr
        .clone();
    let out = String::from_utf8(out).unwrap();
    let db = dir.join("demo.db");
    // Each suggested command names the demo's database, and runs as printed.
    let next: Vec<&str> = out
        .lines()
        .filter_map(|l| l.trim().strip_prefix("ohmtrail "))
        .collect();
    assert_eq!(next.len(), 3, "{out}");
    for cmd in next {
        let args: Vec<&str> = cmd.split_whitespace().collect();
        assert_eq!(args[..2], ["--db", db.to_str().unwrap()], "{cmd}");
        Command::cargo_bin("ohmtrail")
            .unwrap()
            .env_remove("OHMTRAIL_DB")
            .args(&args)
            .assert()
            .success();
    }
    // Pointed at another database, the demo refuses and leaves it alone: it wipes its own.
    let other = e.dir.path().join("mine.db");
    Command::cargo_bin("ohmtrail")
        .unwrap()
        .env_remove("OHMTRAIL_DB")
        .arg("--db")
        .arg(&other)
        .args(["demo", "--dir"])
        .arg(&dir)
        .assert()
        .code(1)
        .stderr(predicate::str::contains(
            "never uses the database named by --db",
        ));
    assert!(!other.exists());
}

#[test]
fn a_read_only_database_can_be_read_but_not_written() {
    let e = Env::with_board();
    let mut perms = std::fs::metadata(e.db()).unwrap().permissions();
    perms.set_readonly(true);
    std::fs::set_permissions(e.db(), perms).unwrap();
    let before = e.db_bytes();
    assert!(e.ok(&["property", "list"]).contains("P-1"));
    e.cmd(&["property", "add", "P-2"])
        .code(1)
        .stderr(predicate::str::contains("is read-only"));
    e.cmd(&["circuit", "add", "P-1", "DB1", "1"])
        .code(1)
        .stderr(predicate::str::contains("is read-only"));
    assert_eq!(before, e.db_bytes());
}

/// The RCD series of each circuit in `trend --json`, by circuit number: (limit, last reading).
fn rcd_limits(db: &std::path::Path) -> Vec<(String, f64, f64)> {
    let out = Command::cargo_bin("ohmtrail")
        .unwrap()
        .env_remove("OHMTRAIL_DB")
        .arg("--db")
        .arg(db)
        .args(["trend", "P-1", "--json"])
        .assert()
        .success()
        .get_output()
        .stdout
        .clone();
    let v: serde_json::Value = serde_json::from_slice(&out).unwrap();
    let mut found = Vec::new();
    for c in v["circuits"].as_array().unwrap() {
        for s in c["series"].as_array().unwrap() {
            if s["quantity"] == "rcd" {
                let points = s["report"]["points"].as_array().unwrap();
                found.push((
                    c["circuit"]["number"].as_str().unwrap().to_string(),
                    s["limit"].as_f64().unwrap(),
                    points.last().unwrap()["raw"].as_f64().unwrap(),
                ));
            }
        }
    }
    found
}

#[test]
fn a_type_a_s_rcd_keeps_its_delay_through_export_and_import_and_gets_the_delayed_times() {
    let e = Env::with_board();
    // A "type A, S, 100 mA" main switch ahead of circuit 1 (waveform and delay as two flags),
    // the same written as one marking on circuit 2, and a general type A 30 mA on circuit 3.
    e.ok(&[
        "circuit",
        "add",
        "P-1",
        "DB1",
        "1",
        "--device",
        "B32",
        "--rcd",
        "100",
        "--rcd-type",
        "A",
        "--rcd-delay",
        "S",
    ]);
    e.ok(&[
        "circuit",
        "add",
        "P-1",
        "DB1",
        "2",
        "--device",
        "B16",
        "--rcd",
        "100",
        "--rcd-type",
        "A-S",
    ]);
    e.ok(&[
        "circuit",
        "add",
        "P-1",
        "DB1",
        "3",
        "--device",
        "B16",
        "--rcd",
        "30",
        "--rcd-type",
        "a",
    ]);
    let c = e.circuits_json();
    for (i, delay) in [(0, "S"), (1, "S")] {
        assert_eq!(c[i]["rcd_type"], "A", "{}", c[i]);
        assert_eq!(c[i]["rcd_delay"], delay, "{}", c[i]);
    }
    assert_eq!(c[2]["rcd_delay"], serde_json::Value::Null);
    let shown = e.ok(&["property", "show", "P-1"]);
    assert!(shown.contains("100 mA A S"), "{shown}");
    assert!(shown.contains("30 mA A "), "{shown}");
    // Invented readings, 1 × IΔn at 400 ms on circuits 1 and 3 (402 ms on circuit 2).
    let visit = e.dir.path().join("visit.csv");
    std::fs::write(
        &visit,
        "property_ref,board,circuit,visit_date,ambient_c,zs_ohm,rcd_ms\n\
         P-1,DB1,1,2025-03-04,11.5,0.62,400\n\
         P-1,DB1,2,2025-03-04,11.5,0.93,402\n\
         P-1,DB1,3,2025-03-04,11.5,0.91,400\n",
    )
    .unwrap();
    e.ok(&["import", visit.to_str().unwrap()]);
    // BS EN 61008-1 / 61009-1 (reference sheet, RCD operating times at 1 × IΔn): type S at most
    // 500 ms, general at most 300 ms. 400 <= 500, within for the type A S devices;
    // 400 > 300, over for the general type A.
    let want = vec![
        ("1".to_string(), 500.0, 400.0),
        ("2".to_string(), 500.0, 402.0),
        ("3".to_string(), 300.0, 400.0),
    ];
    assert_eq!(rcd_limits(&e.db()), want);
    let flags: serde_json::Value = serde_json::from_str(&e.ok(&["flags", "--json"])).unwrap();
    let rcd_rows: Vec<_> = flags
        .as_array()
        .unwrap()
        .iter()
        .filter(|f| f["quantity"] == "rcd")
        .map(|f| (f["circuit"].as_str().unwrap(), f["kind"].as_str().unwrap()))
        .collect();
    assert_eq!(rcd_rows, [("3", "exceeds")]);

    // Export, then import into a new database: the delay and the times survive.
    let out = e.dir.path().join("out.csv");
    e.ok(&["export", "-o", out.to_str().unwrap()]);
    let text = std::fs::read_to_string(&out).unwrap();
    assert!(
        text.lines()
            .next()
            .unwrap()
            .contains(",rcd_ma,rcd_type,rcd_delay,")
    );
    let other = Env::new();
    other.ok(&["import", out.to_str().unwrap()]);
    let c = other.circuits_json();
    assert_eq!(
        (&c[0]["rcd_type"], &c[0]["rcd_delay"]),
        (&"A".into(), &"S".into())
    );
    assert_eq!(c[0]["rcd_ma"], 100);
    assert_eq!(c[2]["rcd_delay"], serde_json::Value::Null);
    assert_eq!(rcd_limits(&other.db()), want);
}

#[test]
fn a_bad_rcd_marking_is_refused_with_the_known_values() {
    let e = Env::with_board();
    let before = e.db_bytes();
    // BS EN 61008-1 / 61009-1 waveform types AC, A, F, B; the delay S is the only second mark.
    for bad in ["S S", "A B", "X S", "AS", "A S S"] {
        let out = e
            .cmd(&["circuit", "add", "P-1", "DB1", "7", "--rcd-type", bad])
            .code(2)
            .get_output()
            .clone();
        let stderr = String::from_utf8(out.stderr).unwrap();
        assert!(
            stderr.contains("AC, A, F or B") && stderr.contains("S (time-delayed)"),
            "{bad}: {stderr}"
        );
    }
    e.cmd(&["circuit", "add", "P-1", "DB1", "7", "--rcd-delay", "T"])
        .code(2)
        .stderr(predicate::str::contains("expected general or S"));
    // The delay given twice, differently.
    e.cmd(&[
        "circuit",
        "add",
        "P-1",
        "DB1",
        "7",
        "--rcd-type",
        "A S",
        "--rcd-delay",
        "general",
    ])
    .code(1)
    .stderr(predicate::str::contains("give one delay, general or S"));
    assert!(e.circuits_json().as_array().unwrap().is_empty());
    assert_eq!(e.db_bytes(), before);
}

#[test]
fn circuit_add_and_edit_take_the_rest_of_the_schedule_line() {
    let e = Env::with_board();
    e.ok(&[
        "circuit",
        "add",
        "P-1",
        "DB1",
        "1",
        "--device",
        "B6",
        "--rcd",
        "30",
        "--rcd-id",
        "RCD1",
        "--wiring-type",
        "A",
        "--ref-method",
        "101",
        "--points",
        "8",
        "--breaking-ka",
        "6",
        "--afdd",
        "no",
    ]);
    e.ok(&["circuit", "add", "P-1", "DB1", "2", "--rcd-id", "rcd1"]);
    let c = e.circuits_json();
    assert_eq!(c[0]["ref_method"], "101");
    assert_eq!(c[0]["points"], 8);
    assert_eq!(c[0]["breaking_ka"], 6.0);
    assert_eq!(c[0]["afdd"], false);
    assert_eq!(c[0]["wiring_type"], "A");
    // One RCD: the second circuit names the first's in another case.
    assert_eq!(c[1]["rcd_id"], "RCD1");
    let table = e.ok(&["property", "show", "P-1"]);
    assert!(table.contains("30 mA (RCD1)"), "{table}");
    let out = e.ok(&[
        "circuit",
        "edit",
        "P-1",
        "DB1",
        "1",
        "--afdd",
        "yes",
        "--ref-method",
        "C",
        "--date",
        "2025-06-14",
    ]);
    assert!(
        out.contains("101 -> C (register_corrected, from 2025-06-14)"),
        "{out}"
    );
    assert!(
        out.contains("no -> yes (device_changed, from 2025-06-14)"),
        "{out}"
    );
    // BS 7671 Appendix 4 has no reference method H (from memory); a usage error, nothing
    // written.
    let before = e.db_bytes();
    e.cmd(&["circuit", "edit", "P-1", "DB1", "1", "--ref-method", "H"])
        .code(2)
        .stderr(predicate::str::contains("100, 101, 102, 103"));
    e.cmd(&["circuit", "edit", "P-1", "DB1", "1", "--breaking-ka", "0"])
        .code(1)
        .stderr(predicate::str::contains("breaking capacity"));
    assert_eq!(e.db_bytes(), before);
}
