//! The archive (`export --archive`) and its merge (`merge`), driven through the real binary on
//! temporary databases. Tables are compared through SQLite's own schema introspection, read
//! here independently of the code under test, so a column the archive failed to carry shows.
//! The data is the invented demo portfolio and invented visit files.

use std::collections::{BTreeMap, HashMap};
use std::path::{Path, PathBuf};

use assert_cmd::Command;
use rusqlite::Connection;
use rusqlite::types::Value;
use tempfile::TempDir;

fn bin(db: &Path) -> Command {
    let mut c = Command::cargo_bin("ohmtrail").unwrap();
    c.arg("--db").arg(db);
    c
}

fn run(db: &Path, args: &[&str]) -> String {
    let out = bin(db).args(args).output().unwrap();
    assert!(
        out.status.success(),
        "{args:?}: {}",
        String::from_utf8_lossy(&out.stderr)
    );
    String::from_utf8(out.stdout).unwrap()
}

/// The demo portfolio with what the demo leaves out: a setting, a board fed from another with
/// its location, Ze at a board, and an imported visit with observations.
fn demo(dir: &TempDir) -> PathBuf {
    Command::cargo_bin("ohmtrail")
        .unwrap()
        .args(["demo", "--dir"])
        .arg(dir.path().join("demo"))
        .assert()
        .success();
    let db = dir.path().join("demo/demo.db");
    run(
        &db,
        &[
            "settings",
            "set",
            "limits.assumed_insulation",
            "thermosetting90",
        ],
    );
    run(
        &db,
        &[
            "board",
            "add",
            "QL-001",
            "DB2",
            "--fed-from",
            "CU1",
            "--location",
            "Garage",
        ],
    );
    // The schedule details of migration 010: two circuits behind one named RCD (a row of the
    // rcd_device table, which has no identifier of its own and is matched by its board and
    // designation), the second naming it in another case.
    for (n, rcd, more) in [
        (
            "1",
            "RCD1",
            &[
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
            ][..],
        ),
        ("2", "rcd1", &[][..]),
    ] {
        let mut args = vec![
            "circuit",
            "edit",
            "QL-001",
            "CU1",
            n,
            "--rcd-id",
            rcd,
            "--date",
            "2026-03-01",
        ];
        args.extend_from_slice(more);
        run(&db, &args);
    }
    let fixtures = PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("fixtures/visits");
    bin(&db)
        .arg("import")
        .arg(fixtures.join("sampleton.csv"))
        .arg(fixtures.join("sampleton-observations.csv"))
        .assert()
        .success();
    db
}

/// Every table of the database (SQLite's own aside), each row without its row number and
/// with every reference replaced by what it refers to: the row's uuid where the referenced
/// table has one, else the referenced row itself, rendered the same way. Sorted.
fn tables(db: &Path) -> BTreeMap<String, Vec<String>> {
    let conn = Connection::open(db).unwrap();
    let names: Vec<String> = conn
        .prepare("SELECT name FROM sqlite_schema WHERE type = 'table' AND name NOT LIKE 'sqlite_%'")
        .unwrap()
        .query_map([], |r| r.get(0))
        .unwrap()
        .collect::<rusqlite::Result<_>>()
        .unwrap();
    let mut memo: HashMap<(String, i64), String> = HashMap::new();
    let mut out = BTreeMap::new();
    for t in &names {
        let ids: Vec<i64> = conn
            .prepare(&format!("SELECT rowid FROM {t}"))
            .unwrap()
            .query_map([], |r| r.get(0))
            .unwrap()
            .collect::<rusqlite::Result<_>>()
            .unwrap();
        let mut rows: Vec<String> = ids
            .into_iter()
            .map(|id| render(&conn, t, id, &mut memo))
            .collect();
        rows.sort();
        out.insert(t.clone(), rows);
    }
    out
}

fn render(
    conn: &Connection,
    table: &str,
    id: i64,
    memo: &mut HashMap<(String, i64), String>,
) -> String {
    if let Some(s) = memo.get(&(table.to_string(), id)) {
        return s.clone();
    }
    let cols: Vec<(String, String, i64)> = conn
        .prepare("SELECT name, upper(type), pk FROM pragma_table_info(?1)")
        .unwrap()
        .query_map([table], |r| Ok((r.get(0)?, r.get(1)?, r.get(2)?)))
        .unwrap()
        .collect::<rusqlite::Result<_>>()
        .unwrap();
    let fks: HashMap<String, String> = conn
        .prepare("SELECT \"from\", \"table\" FROM pragma_foreign_key_list(?1)")
        .unwrap()
        .query_map([table], |r| Ok((r.get(0)?, r.get(1)?)))
        .unwrap()
        .collect::<rusqlite::Result<_>>()
        .unwrap();
    let row_number = cols.iter().filter(|c| c.2 > 0).count() == 1
        && cols.iter().any(|c| c.2 > 0 && c.1 == "INTEGER");
    let mut parts = Vec::new();
    for (name, _, pk) in &cols {
        if row_number && *pk > 0 {
            continue;
        }
        let v: Value = conn
            .query_row(
                &format!("SELECT {name} FROM {table} WHERE rowid = ?1"),
                [id],
                |r| r.get(0),
            )
            .unwrap();
        let shown = match (fks.get(name), &v) {
            (Some(t), Value::Integer(rid)) => {
                let has_uuid: bool = conn
                    .query_row(
                        "SELECT count(*) FROM pragma_table_info(?1) WHERE name = 'uuid'",
                        [t],
                        |r| r.get::<_, i64>(0),
                    )
                    .unwrap()
                    > 0;
                if has_uuid {
                    let u: Value = conn
                        .query_row(
                            &format!("SELECT uuid FROM {t} WHERE rowid = ?1"),
                            [rid],
                            |r| r.get(0),
                        )
                        .unwrap();
                    format!("{name}->{u:?}")
                } else if t == table {
                    format!("{name}->self")
                } else {
                    format!("{name}->[{}]", render(conn, t, *rid, memo))
                }
            }
            _ => format!("{name}={v:?}"),
        };
        parts.push(shown);
    }
    let s = parts.join("|");
    memo.insert((table.to_string(), id), s.clone());
    s
}

/// What the worklist, every property's trend and one property's report say, as JSON.
fn outputs(db: &Path) -> Vec<String> {
    let mut out = vec![run(db, &["flags", "--json"])];
    for p in ["QL-001", "QL-002", "QL-003", "QL-007", "SMP-002"] {
        out.push(run(db, &["trend", p, "--json"]));
    }
    let dir = TempDir::new().unwrap();
    let file = dir.path().join("r.json");
    run(
        db,
        &[
            "report",
            "QL-003",
            "--format",
            "json",
            "-o",
            file.to_str().unwrap(),
        ],
    );
    out.push(std::fs::read_to_string(&file).unwrap());
    out
}

fn archive(db: &Path, file: &Path) {
    bin(db)
        .args(["export", "--archive"])
        .arg(file)
        .assert()
        .success();
}

fn merge(db: &Path, file: &Path, extra: &[&str]) -> std::process::Output {
    bin(db).arg("merge").arg(file).args(extra).output().unwrap()
}

#[test]
fn archive_then_merge_into_an_empty_database_gives_the_same_tables_and_outputs() {
    let dir = TempDir::new().unwrap();
    let db = demo(&dir);
    let file = dir.path().join("all.ohmtrail.jsonl");
    archive(&db, &file);
    let copy = dir.path().join("copy.db");
    let out = merge(&copy, &file, &[]);
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let before = tables(&db);
    // The things the visit file loses are all there to be carried.
    for t in [
        "client",
        "setting",
        "board_test",
        "circuit_change",
        "observation",
        "rcd_device",
    ] {
        assert!(!before[t].is_empty(), "{t} is empty in the source");
    }
    // One RCD for the two circuits that name it, and the columns of migrations 009 and 010
    // hold values to be carried.
    assert_eq!(before["rcd_device"].len(), 1, "{:?}", before["rcd_device"]);
    assert!(
        before["circuit"]
            .iter()
            .filter(|c| c.contains("rcd_device_id->["))
            .count()
            >= 2
    );
    assert!(
        before["circuit"]
            .iter()
            .any(|c| c.contains("ref_method=Text(\"101\")"))
    );
    assert!(
        before["visit"]
            .iter()
            .any(|v| v.contains("u0_v=Real(230.0)"))
    );
    assert!(before["board"].iter().any(|b| b.contains("Garage")));
    assert!(
        before["circuit"]
            .iter()
            .any(|c| c.contains("replaces_circuit_id->Blob"))
    );
    assert_eq!(tables(&copy), before);
    assert_eq!(outputs(&copy), outputs(&db));
    // Merging the same archive again changes nothing.
    let out = merge(&copy, &file, &[]);
    assert!(out.status.success());
    assert!(
        String::from_utf8_lossy(&out.stderr).contains(" 0 rows added"),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    assert_eq!(tables(&copy), before);
}

/// Every column of every table appears in the archive's header, except a table's own row
/// number: read from SQLite's schema here, so a column that a later migration adds and the
/// archive does not carry fails this test.
#[test]
fn the_archive_header_names_every_column_of_every_table() {
    let dir = TempDir::new().unwrap();
    let db = dir.path().join("x.db");
    run(&db, &["init"]);
    let file = dir.path().join("a.jsonl");
    archive(&db, &file);
    let text = std::fs::read_to_string(&file).unwrap();
    let header: serde_json::Value = serde_json::from_str(text.lines().next().unwrap()).unwrap();
    assert_eq!(header["format"], "ohmtrail-archive");
    assert_eq!(header["version"], 1);
    let carried: HashMap<String, Vec<String>> = header["tables"]
        .as_array()
        .unwrap()
        .iter()
        .map(|t| {
            let cols = t["columns"]
                .as_array()
                .unwrap()
                .iter()
                .map(|c| c["name"].as_str().unwrap().to_string())
                .collect();
            (t["name"].as_str().unwrap().to_string(), cols)
        })
        .collect();
    let conn = Connection::open(&db).unwrap();
    let names: Vec<String> = conn
        .prepare("SELECT name FROM sqlite_schema WHERE type = 'table' AND name NOT LIKE 'sqlite_%'")
        .unwrap()
        .query_map([], |r| r.get(0))
        .unwrap()
        .collect::<rusqlite::Result<_>>()
        .unwrap();
    assert!(names.len() >= 11, "{names:?}");
    for t in names {
        if ohmtrail::store::MACHINE_STATE_TABLES.contains(&t.as_str()) {
            continue;
        }
        let cols: Vec<(String, String, i64)> = conn
            .prepare("SELECT name, upper(type), pk FROM pragma_table_info(?1)")
            .unwrap()
            .query_map([&t], |r| Ok((r.get(0)?, r.get(1)?, r.get(2)?)))
            .unwrap()
            .collect::<rusqlite::Result<_>>()
            .unwrap();
        let single_pk = cols.iter().filter(|c| c.2 > 0).count() == 1;
        for (c, ty, pk) in cols {
            if single_pk && pk > 0 && ty == "INTEGER" {
                continue;
            }
            assert!(
                carried.get(&t).is_some_and(|cs| cs.contains(&c)),
                "{t}.{c} is not carried by the archive"
            );
        }
    }
}

/// A visit file of one new visit to QL-001's four circuits, with site noise in the readings.
fn visit_file(dir: &Path, name: &str, date: &str, inspector: &str, r1r2: [f64; 4]) -> PathBuf {
    // Migration 010's facts of a visit ride along: polarity, the IR test voltage and the RCD's
    // test button.
    let mut text = String::from(
        "property_ref,board,circuit,visit_date,inspector,r1r2_ohm,zs_ohm,polarity,ir_test_v,rcd_button\n",
    );
    for (i, r) in r1r2.iter().enumerate() {
        text.push_str(&format!(
            "QL-001,CU1,{},{date},{inspector},{r},{:.2},correct,500,{}\n",
            i + 1,
            0.24 + r,
            if i < 2 { "operates" } else { "" }
        ));
    }
    let p = dir.join(name);
    std::fs::write(&p, text).unwrap();
    p
}

fn visits_of(db: &Path, reference: &str) -> Vec<String> {
    let v: serde_json::Value = serde_json::from_str(&run(
        db,
        &["visit", "list", "--property", reference, "--json"],
    ))
    .unwrap();
    v.as_array()
        .unwrap()
        .iter()
        .map(|x| x["date"].as_str().unwrap().to_string())
        .collect()
}

#[test]
fn two_laptops_merge_into_the_office_with_both_visits_and_no_duplicates() {
    let dir = TempDir::new().unwrap();
    let office = demo(&dir);
    let a = dir.path().join("laptop-a.db");
    let b = dir.path().join("laptop-b.db");
    std::fs::copy(&office, &a).unwrap();
    std::fs::copy(&office, &b).unwrap();
    let before = tables(&office);
    let fa = visit_file(
        dir.path(),
        "a.csv",
        "2026-09-01",
        "A. Tester (demo)",
        [0.36, 0.41, 0.19, 0.52],
    );
    let fb = visit_file(
        dir.path(),
        "b.csv",
        "2026-10-15",
        "B. Tester (demo)",
        [0.37, 0.40, 0.20, 0.55],
    );
    bin(&a).arg("import").arg(&fa).assert().success();
    bin(&b).arg("import").arg(&fb).assert().success();
    let (aa, ab) = (dir.path().join("a.jsonl"), dir.path().join("b.jsonl"));
    archive(&a, &aa);
    archive(&b, &ab);
    for f in [&aa, &ab] {
        let out = merge(&office, f, &[]);
        assert!(
            out.status.success(),
            "{}",
            String::from_utf8_lossy(&out.stderr)
        );
    }
    let after = tables(&office);
    let visits = visits_of(&office, "QL-001");
    assert!(visits.contains(&"2026-09-01".to_string()), "{visits:?}");
    assert!(visits.contains(&"2026-10-15".to_string()), "{visits:?}");
    assert_eq!(after["visit"].len(), before["visit"].len() + 2);
    assert_eq!(after["test_record"].len(), before["test_record"].len() + 8);
    // Migration 010's facts of the visits came with them.
    assert_eq!(
        after["test_record"]
            .iter()
            .filter(|r| r.contains("polarity=Text(\"correct\")")
                && r.contains("ir_test_v=Integer(500)"))
            .count(),
        8
    );
    // No duplicates: the register is the office's, row for row, the lineage included.
    for t in [
        "property",
        "board",
        "circuit",
        "circuit_change",
        "client",
        "instrument",
        "setting",
    ] {
        assert_eq!(after[t], before[t], "{t}");
    }
    // The laptops' own records of the visits are the office's now.
    let records = |db: &Path| -> Vec<String> {
        tables(db)["test_record"]
            .iter()
            .filter(|r| !before["test_record"].contains(r))
            .cloned()
            .collect()
    };
    let mut both = records(&a);
    both.extend(records(&b));
    both.sort();
    assert_eq!(records(&office), both);
    // Merging either again changes nothing.
    for f in [&aa, &ab] {
        assert!(merge(&office, f, &[]).status.success());
    }
    assert_eq!(tables(&office), after);
}

#[test]
fn two_visits_on_one_date_are_a_conflict_and_nothing_is_written() {
    let dir = TempDir::new().unwrap();
    let office = demo(&dir);
    let a = dir.path().join("a.db");
    let b = dir.path().join("b.db");
    std::fs::copy(&office, &a).unwrap();
    std::fs::copy(&office, &b).unwrap();
    let fa = visit_file(
        dir.path(),
        "a.csv",
        "2026-09-01",
        "A. Tester (demo)",
        [0.36, 0.41, 0.19, 0.52],
    );
    let fb = visit_file(
        dir.path(),
        "b.csv",
        "2026-09-01",
        "B. Tester (demo)",
        [0.37, 0.40, 0.20, 0.55],
    );
    bin(&a).arg("import").arg(&fa).assert().success();
    bin(&b).arg("import").arg(&fb).assert().success();
    let (aa, ab) = (dir.path().join("a.jsonl"), dir.path().join("b.jsonl"));
    archive(&a, &aa);
    archive(&b, &ab);
    assert!(merge(&office, &aa, &[]).status.success());
    let merged_a = tables(&office);
    let out = merge(&office, &ab, &[]);
    assert_eq!(out.status.code(), Some(1));
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(
        err.contains("conflict: visit 2026-09-01 of property QL-001 exists here and in the archive under two identifiers"),
        "{err}"
    );
    assert!(err.contains("1 conflict, nothing written"), "{err}");
    assert_eq!(tables(&office), merged_a);
    // --prefer archive cannot settle it; --prefer local leaves B's visit and its records out.
    assert_eq!(
        merge(&office, &ab, &["--prefer", "archive"]).status.code(),
        Some(1)
    );
    assert_eq!(tables(&office), merged_a);
    let out = merge(&office, &ab, &["--prefer", "local"]);
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let stderr = String::from_utf8_lossy(&out.stderr);
    assert!(
        stderr.contains("4 held back with a conflicting row"),
        "{stderr}"
    );
    assert_eq!(tables(&office), merged_a);
}

#[test]
fn a_changed_reading_is_reported_with_both_values_and_written_only_when_asked() {
    let dir = TempDir::new().unwrap();
    let office = demo(&dir);
    let a = dir.path().join("a.db");
    std::fs::copy(&office, &a).unwrap();
    let fa = visit_file(
        dir.path(),
        "a.csv",
        "2026-09-01",
        "A. Tester (demo)",
        [0.36, 0.41, 0.19, 0.52],
    );
    bin(&a).arg("import").arg(&fa).assert().success();
    let first = dir.path().join("a1.jsonl");
    archive(&a, &first);
    assert!(merge(&office, &first, &[]).status.success());
    // The laptop corrects circuit 2's reading after the office has the visit.
    let fix = visit_file(
        dir.path(),
        "fix.csv",
        "2026-09-01",
        "A. Tester (demo)",
        [0.36, 0.44, 0.19, 0.52],
    );
    bin(&a)
        .args(["import", "--replace"])
        .arg(&fix)
        .assert()
        .success();
    let second = dir.path().join("a2.jsonl");
    archive(&a, &second);
    let held = tables(&office);
    let out = merge(&office, &second, &[]);
    assert_eq!(out.status.code(), Some(1));
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(err.contains("r1r2_ohm: here 0.41, archive 0.44"), "{err}");
    assert!(err.contains("zs_ohm: here 0.65, archive 0.68"), "{err}");
    assert_eq!(tables(&office), held);
    assert!(
        merge(&office, &second, &["--prefer", "local"])
            .status
            .success()
    );
    assert_eq!(tables(&office), held);
    let out = merge(&office, &second, &["--prefer", "archive"]);
    assert!(out.status.success());
    assert!(String::from_utf8_lossy(&out.stdout).contains("took the archive's"));
    assert_eq!(tables(&office)["test_record"], tables(&a)["test_record"]);
}

#[test]
fn one_reference_made_on_two_machines_is_reported_not_merged() {
    let dir = TempDir::new().unwrap();
    let (x, y) = (dir.path().join("x.db"), dir.path().join("y.db"));
    run(
        &x,
        &["property", "add", "P-9", "--address", "9 Sample Street"],
    );
    run(
        &y,
        &["property", "add", "P-9", "--address", "9 Sample Street"],
    );
    run(&y, &["board", "add", "P-9", "CU1"]);
    let file = dir.path().join("y.jsonl");
    archive(&y, &file);
    let held = tables(&x);
    let out = merge(&x, &file, &[]);
    assert_eq!(out.status.code(), Some(1));
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(
        err.contains("conflict: property P-9 exists here and in the archive under two identifiers"),
        "{err}"
    );
    assert!(err.contains("uuid: here "), "{err}");
    assert_eq!(tables(&x), held);
}

/// The database file's bytes, to show that a refused merge wrote nothing.
fn bytes(db: &Path) -> Vec<u8> {
    std::fs::read(db).unwrap()
}

#[test]
fn a_damaged_or_newer_archive_is_refused_with_its_place_and_nothing_written() {
    let dir = TempDir::new().unwrap();
    let db = demo(&dir);
    let file = dir.path().join("a.jsonl");
    archive(&db, &file);
    let text = std::fs::read_to_string(&file).unwrap();
    let lines: Vec<&str> = text.lines().collect();
    let n = lines.len();
    let target = dir.path().join("target.db");
    run(&target, &["property", "add", "T-1"]);
    let cases: Vec<(&str, String, String)> = vec![
        (
            "cut short",
            lines[..n - 40].join("\n") + "\n",
            format!("{}: the archive ends here without its closing line", n - 40),
        ),
        (
            "cut mid-line",
            text[..text.len() - 30].to_string(),
            format!(":{n}:"),
        ),
        (
            "a changed value",
            text.replacen(",0.36,", ",0.63,", 1),
            format!(":{n}: checksum"),
        ),
        (
            "bad JSON",
            {
                let mut l: Vec<String> = lines.iter().map(|s| s.to_string()).collect();
                l[n / 2] = l[n / 2].replacen(',', ";", 1);
                l.join("\n") + "\n"
            },
            format!(":{}:", n / 2 + 1),
        ),
        (
            "a newer version",
            text.replacen("\"version\":1", "\"version\":2", 1),
            "archive format version 2 is newer than this ohmtrail reads (version 1)".into(),
        ),
        (
            "an unknown column",
            text.replacen(
                "{\"name\":\"notes\"}",
                "{\"name\":\"notes\"},{\"name\":\"colour\"}",
                1,
            ),
            "column property.colour, which this database does not have".into(),
        ),
    ];
    for (what, body, expected) in cases {
        assert_ne!(body, text, "{what}: the damage was not made");
        let bad = dir.path().join("bad.jsonl");
        std::fs::write(&bad, &body).unwrap();
        let before = bytes(&target);
        let out = merge(&target, &bad, &[]);
        assert_eq!(out.status.code(), Some(1), "{what}");
        let err = String::from_utf8_lossy(&out.stderr);
        assert!(err.contains("bad.jsonl:"), "{what}: {err}");
        assert!(
            err.contains(&expected),
            "{what}: expected {expected:?} in {err}"
        );
        assert_eq!(bytes(&target), before, "{what}: the database changed");
    }
}

#[test]
fn no_archive_while_a_visit_is_being_recorded() {
    let store = ohmtrail::store::Store::open_in_memory().unwrap();
    let p = store
        .add_property(&ohmtrail::store::NewProperty {
            reference: "P-1".into(),
            ..Default::default()
        })
        .unwrap();
    store
        .add_visit(
            p.id,
            &ohmtrail::store::NewVisit {
                date: chrono::NaiveDate::from_ymd_opt(2025, 6, 1),
                ..Default::default()
            },
            ohmtrail::model::VisitState::Pending,
        )
        .unwrap();
    let err = ohmtrail::archive::write_archive(&store, &mut Vec::new()).unwrap_err();
    assert!(
        err.to_string()
            .starts_with("property \"P-1\" has a visit on 2025-06-01 still being recorded"),
        "{err}"
    );
}

#[test]
fn the_csv_export_carries_ze_per_board_and_reads_it_back() {
    let dir = TempDir::new().unwrap();
    let db = demo(&dir);
    let csv = dir.path().join("v.csv");
    bin(&db).args(["export", "-o"]).arg(&csv).assert().success();
    let copy = dir.path().join("copy.db");
    bin(&copy).arg("import").arg(&csv).assert().success();
    // The demo keeps Ze on the visit (measured at the origin, where its one board is).
    let ze = |db: &Path| -> Vec<(String, String, Option<f64>)> {
        let v: serde_json::Value =
            serde_json::from_str(&run(db, &["visit", "list", "--json"])).unwrap();
        let mut out: Vec<_> = v
            .as_array()
            .unwrap()
            .iter()
            .map(|x| {
                (
                    x["property_ref"].as_str().unwrap().to_string(),
                    x["date"].as_str().unwrap().to_string(),
                    x["ze_ohm"].as_f64(),
                )
            })
            .collect();
        out.sort_by(|a, b| (&a.0, &a.1).cmp(&(&b.0, &b.1)));
        out
    };
    let source = ze(&db);
    assert!(
        source
            .iter()
            .filter(|v| v.0.starts_with("QL-"))
            .all(|v| v.2.is_some())
    );
    assert_eq!(ze(&copy), source);
}

/// A circuit replaced on a laptop: the old circuit is retired there and in service at the
/// office, so the merge reports it and writes nothing; taken with `--prefer archive`, the new
/// circuit arrives pointing at the old one, with both events, and the history follows it.
#[test]
fn a_circuit_replaced_on_a_laptop_is_a_conflict_and_merges_with_its_lineage_when_asked() {
    let dir = TempDir::new().unwrap();
    let office = demo(&dir);
    let a = dir.path().join("a.db");
    std::fs::copy(&office, &a).unwrap();
    run(
        &a,
        &[
            "circuit",
            "replace",
            "QL-002",
            "CU1",
            "3",
            "--to-number",
            "7",
            "--date",
            "2026-09-01",
        ],
    );
    let file = dir.path().join("a.jsonl");
    archive(&a, &file);
    let held = tables(&office);
    let out = merge(&office, &file, &[]);
    assert_eq!(out.status.code(), Some(1));
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(
        err.contains("conflict: circuit 3 of board CU1 of property QL-002 differs (not settled); status: here \"in_service\", archive \"retired\""),
        "{err}"
    );
    assert_eq!(tables(&office), held);
    let out = merge(&office, &file, &["--prefer", "archive"]);
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    assert_eq!(tables(&office), tables(&a));
    assert_eq!(
        run(&office, &["trend", "QL-002", "--json"]),
        run(&a, &["trend", "QL-002", "--json"])
    );
}
