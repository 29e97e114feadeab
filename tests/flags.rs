//! The worklist and trend commands through the real binary, on the demo portfolio.

use assert_cmd::Command;
use predicates::prelude::*;

fn demo() -> (tempfile::TempDir, std::path::PathBuf) {
    let dir = tempfile::tempdir().unwrap();
    Command::cargo_bin("ohmtrail")
        .unwrap()
        .args(["demo", "--dir"])
        .arg(dir.path())
        .assert()
        .success();
    let db = dir.path().join("demo.db");
    (dir, db)
}

fn run(db: &std::path::Path, args: &[&str]) -> assert_cmd::assert::Assert {
    Command::cargo_bin("ohmtrail")
        .unwrap()
        .env_remove("OHMTRAIL_DB")
        .arg("--db")
        .arg(db)
        .args(args)
        .assert()
}

fn json(db: &std::path::Path, args: &[&str]) -> serde_json::Value {
    let out = run(db, args).success().get_output().stdout.clone();
    serde_json::from_slice(&out).unwrap()
}

#[test]
fn flags_json_keeps_the_contract_fields_and_order() {
    let (_dir, db) = demo();
    let flags = json(&db, &["flags", "--json"]);
    let flags = flags.as_array().unwrap();
    assert!(!flags.is_empty());
    let rank = |s: &str| match s {
        "exceeds" => 0,
        "approaching" => 1,
        "changed" => 2,
        other => panic!("unknown severity {other}"),
    };
    let mut last = 0;
    for f in flags {
        for key in [
            "property_ref",
            "board",
            "circuit",
            "quantity",
            "severity",
            "reason",
            "last_value",
            "limit",
            "projected_date",
            "limit_source",
        ] {
            assert!(f.get(key).is_some(), "{key} missing in {f}");
        }
        let q = f["quantity"].as_str().unwrap();
        assert!(
            [
                "ze", "zs", "r1r2", "r1rn", "r2", "ring", "ir_ll", "ir_le", "rcd"
            ]
            .contains(&q),
            "{q}"
        );
        let r = rank(f["severity"].as_str().unwrap());
        assert!(r >= last, "most urgent first");
        last = r;
        assert!(!f["reason"].as_str().unwrap().is_empty());
    }
    // One property only.
    let one = json(&db, &["flags", "--property", "QL-002", "--json"]);
    assert!(
        one.as_array()
            .unwrap()
            .iter()
            .all(|f| f["property_ref"] == "QL-002")
    );
    assert!(!one.as_array().unwrap().is_empty());
}

#[test]
fn flags_table_and_caution() {
    let (_dir, db) = demo();
    run(&db, &["flags"]).success().stdout(
        predicate::str::contains("SEVERITY")
            .and(predicate::str::contains("QL-003"))
            .and(predicate::str::contains("BS 7671")),
    );
    run(&db, &["flags", "--property", "NOPE"])
        .code(1)
        .stderr(predicate::str::contains("property \"NOPE\" not found"));
}

#[test]
fn trend_shows_every_series_with_raw_and_corrected_points() {
    let (_dir, db) = demo();
    let t = json(&db, &["trend", "QL-002", "--circuit", "CU1/2", "--json"]);
    let circuits = t["circuits"].as_array().unwrap();
    assert_eq!(circuits.len(), 1);
    let series = circuits[0]["series"].as_array().unwrap();
    let r1rn = series.iter().find(|s| s["quantity"] == "r1rn").unwrap();
    let points = r1rn["report"]["points"].as_array().unwrap();
    assert_eq!(points.len(), 6);
    for p in points {
        // R20 = Rt / (1 + 0.00393 (t − 20)) (IEC 60228 α), within rounding.
        let (raw, value, t) = (
            p["raw"].as_f64().unwrap(),
            p["value"].as_f64().unwrap(),
            p["ambient_c"].as_f64().unwrap(),
        );
        assert!((value - raw / (1.0 + 0.00393 * (t - 20.0))).abs() < 1e-9);
    }
    assert!(
        r1rn["report"]["findings"]
            .as_array()
            .unwrap()
            .iter()
            .any(|f| f["kind"] == "neutral_divergence")
    );
    run(&db, &["trend", "QL-002", "--circuit", "CU9/9"])
        .code(1)
        .stderr(predicate::str::contains("known circuits are CU1/1"));
    run(&db, &["trend", "QL-001"])
        .success()
        .stdout(predicate::str::contains(
            "no ambient temperature recorded on",
        ));
}
