//! Remedial follow-up through the real binary: overdue remedial rows on the worklist, `remedial
//! list | done | period | confirm`, and their errors. The due date follows The Electrical Safety
//! Standards in the Private Rented Sector (England) Regulations 2020 (SI 2020/312), regulation
//! 3(4): the work is carried out "within— (a) 28 days; or (b) the period specified in the report
//! if less than 28 days, starting with the date of the inspection and testing"; the inspection
//! day is day 1 (from memory, the usual reading of "starting with").

use assert_cmd::Command;
use chrono::{Days, NaiveDate};
use predicates::prelude::*;

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

fn today() -> NaiveDate {
    chrono::Local::now().date_naive()
}

const HEADER: &str = "property_ref,address,board,earthing,circuit,description,ring,device,\
rcd_ma,live_mm2,cpc_mm2,visit_date,ambient_c,ze_ohm,r1r2_ohm,zs_ohm,ir_le_mohm,rcd_ms";

/// A property of three circuits inspected in full twice, the last time `days_ago` days before
/// today, with readings that wander as on site; then the observations of the last inspection:
/// a C1 on circuit 2, a C2 with no circuit, a C3. Returns the directory, the database and the
/// last inspection's date.
fn inspected(days_ago: u64) -> (tempfile::TempDir, std::path::PathBuf, NaiveDate) {
    let dir = tempfile::tempdir().unwrap();
    let db = dir.path().join("t.db");
    let last = today() - Days::new(days_ago);
    let first = last - Days::new(1830);
    let circuits = [
        ("1", "Sockets ring", "yes", "B32", 2.5, 1.5, 0.51),
        ("2", "Garden sockets", "no", "B16", 2.5, 1.5, 0.87),
        ("3", "Lighting", "no", "B6", 1.5, 1.0, 1.12),
    ];
    let mut rows = vec![HEADER.to_string()];
    for (date, ambient, ze, wander) in [(first, 16.5, 0.23, 1.0), (last, 12.0, 0.26, 1.03)] {
        for (n, desc, ring, dev, live, cpc, r) in circuits {
            let r1r2 = (r * wander * 100.0_f64).round() / 100.0;
            let zs = ((ze + r1r2) * 100.0_f64).round() / 100.0 + 0.01;
            rows.push(format!(
                "RM-1,\"2 Invented Close, Sampleton\",CU1,TN-C-S,{n},{desc},{ring},{dev},30,{live},\
                 {cpc},{date},{ambient},{ze},{r1r2},{zs},>299,23"
            ));
        }
    }
    let visits = dir.path().join("visits.csv");
    std::fs::write(&visits, rows.join("\n") + "\n").unwrap();
    let obs = dir.path().join("observations.csv");
    std::fs::write(
        &obs,
        format!(
            "property_ref,visit_date,board,circuit,code,text\n\
             RM-1,{last},CU1,2,C1,Garden socket cover missing; live parts exposed\n\
             RM-1,{last},,,C2,No main protective bonding to the water pipe\n\
             RM-1,{last},,,C3,No RCD test notice at the board\n"
        ),
    )
    .unwrap();
    run(
        &db,
        &["property", "add", "RM-1", "--client", "Invented Lets"],
    )
    .success();
    run(
        &db,
        &["import", visits.to_str().unwrap(), obs.to_str().unwrap()],
    )
    .success();
    (dir, db, last)
}

/// The observation numbers by code, as `remedial list --json` gives them.
fn numbers(db: &std::path::Path) -> Vec<(String, i64)> {
    json(db, &["remedial", "list", "--json"])
        .as_array()
        .unwrap()
        .iter()
        .map(|i| {
            (
                i["code"].as_str().unwrap().to_string(),
                i["observation"].as_i64().unwrap(),
            )
        })
        .collect()
}

#[test]
fn overdue_remedial_work_leads_the_worklist_with_figures_that_add_up() {
    // Inspected 40 days ago: that day is day 1, today day 41; the 28th day was 13 days ago.
    let (_dir, db, last) = inspected(40);
    let due = last + Days::new(27);
    let flags = json(&db, &["flags", "--json"]);
    let flags = flags.as_array().unwrap();
    let remedial: Vec<_> = flags
        .iter()
        .filter(|f| f["quantity"] == "remedial")
        .collect();
    // The C1 and the C2; the C3 (improvement recommended) has no deadline.
    assert_eq!(remedial.len(), 2, "{flags:#?}");
    assert_eq!(&flags[..2], &[remedial[0].clone(), remedial[1].clone()]);
    let (c1, c2) = (remedial[0], remedial[1]);
    assert!(c1["reason"].as_str().unwrap().starts_with("C1 recorded"));
    assert_eq!((&c1["board"], &c1["circuit"]), (&"CU1".into(), &"2".into()));
    assert_eq!(c2["circuit"], serde_json::Value::Null);
    for f in [c1, c2] {
        assert_eq!(
            (&f["kind"], &f["severity"]),
            (&"overdue".into(), &"exceeds".into())
        );
        assert_eq!(f["last_value"].as_f64(), Some(41.0));
        assert_eq!(f["limit"].as_f64(), Some(28.0));
        // 41 / 28 = 146.4 %.
        assert_eq!(f["margin_used_pct"].as_f64(), Some(146.4));
        assert_eq!(f["last_date"], last.to_string());
        assert_eq!(f["projected_date"], serde_json::Value::Null);
        assert!(
            f["limit_source"]
                .as_str()
                .unwrap()
                .contains("regulation 3(4)(a)")
        );
        assert_eq!(f["findings"].as_array().unwrap().len(), 1);
    }
    let n = numbers(&db);
    let c2_no = n.iter().find(|(c, _)| c == "C2").unwrap().1;
    assert_eq!(
        c2["reason"],
        format!(
            "C2 recorded {last} (observation {c2_no}): \"No main protective bonding to the water \
             pipe\"; remedial work due by {due}, 28 days starting with the inspection date (The \
             Electrical Safety Standards in the Private Rented Sector (England) Regulations 2020, \
             regulation 3(4)(a)), 13 days overdue; open"
        )
    );
    // The text worklist too.
    run(&db, &["flags"]).success().stdout(
        predicate::str::contains("remedial").and(predicate::str::contains("13 days overdue")),
    );
}

#[test]
fn list_done_and_the_written_confirmation() {
    let (dir, db, last) = inspected(20);
    let n = numbers(&db);
    assert_eq!(
        n.iter().map(|(c, _)| c.as_str()).collect::<Vec<_>>(),
        ["C1", "C2"],
        "C3 has no remedial item"
    );
    let (c1, c2) = (n[0].1.to_string(), n[1].1.to_string());
    // 20 days ago is day 1; the 28th day is 7 days from now.
    let list = json(&db, &["remedial", "list", "RM-1", "--json"]);
    assert_eq!(list[0]["days_left"], 7);
    assert_eq!(list[0]["due"], (last + Days::new(27)).to_string());
    assert_eq!(list[0]["status"], "open");
    run(&db, &["remedial", "list", "--client", "invented lets"])
        .success()
        .stdout(predicate::str::contains("7 days left").and(predicate::str::contains("Caution")));
    // An unknown client is an error naming the known ones, as for `flags --client`.
    run(&db, &["remedial", "list", "--client", "Someone Else"])
        .code(1)
        .stderr(predicate::str::contains(
            "known clients are \"Invented Lets\"",
        ));
    // A shorter period the report gives (regulation 3(4)(b)): 10 days starting with the
    // inspection date end on day 10, `last + 9`; today is day 21.
    run(&db, &["remedial", "period", &c1, "--days", "10"])
        .success()
        .stdout(predicate::str::contains("the report's period of 10 days"));
    let overdue = json(&db, &["remedial", "list", "--overdue", "--json"]);
    assert_eq!(overdue.as_array().unwrap().len(), 1);
    assert_eq!(overdue[0]["due"], (last + Days::new(9)).to_string());
    // Day 21 of a 10-day period: 11 days overdue.
    assert_eq!(overdue[0]["days_left"], -11);
    // Made safe on the day, then remedied: both kept.
    let made_safe = (last + Days::new(0)).to_string();
    run(
        &db,
        &[
            "remedial",
            "done",
            &c1,
            "--date",
            &made_safe,
            "--by",
            "A. Brightwire",
            "--made-safe",
            "--what",
            "Circuit 2 isolated and locked off",
        ],
    )
    .success()
    .stdout(
        predicate::str::contains("still due by").and(predicate::str::contains("11 days overdue")),
    );
    let rows = json(&db, &["flags", "--json"]);
    let row = rows
        .as_array()
        .unwrap()
        .iter()
        .find(|f| f["quantity"] == "remedial")
        .unwrap()
        .clone();
    assert!(
        row["reason"].as_str().unwrap().ends_with(&format!(
            "made safe on {made_safe} by A. Brightwire, the remedial work is still required"
        )),
        "{row}"
    );
    let done_on = (last + Days::new(12)).to_string();
    run(
        &db,
        &[
            "remedial",
            "done",
            &c1,
            "--date",
            &done_on,
            "--by",
            "A. Brightwire",
            "--what",
            "Socket replaced with a weatherproof outlet; circuit re-tested",
        ],
    )
    .success();
    let list = json(&db, &["remedial", "list", "--json"]);
    let kinds: Vec<_> = list[0]["events"]
        .as_array()
        .unwrap()
        .iter()
        .map(|e| e["kind"].as_str().unwrap())
        .collect();
    assert_eq!(kinds, ["period_given", "made_safe", "remedied"]);
    assert_eq!(list[0]["status"], "remedied");
    let open = json(&db, &["remedial", "list", "--open", "--json"]);
    assert_eq!(open.as_array().unwrap().len(), 1);
    assert_eq!(open[0]["code"], "C2");
    // No longer applicable, with why.
    run(
        &db,
        &[
            "remedial",
            "done",
            &c2,
            "--date",
            &done_on,
            "--by",
            "A. Brightwire",
            "--not-applicable",
            "--why",
            "Water supply pipe replaced in plastic throughout",
        ],
    )
    .success();
    // The confirmation: every observation with work recorded, as recorded, with what, when
    // and by whom, the regulation and the caution.
    let out = dir.path().join("confirmation.html");
    run(
        &db,
        &[
            "remedial",
            "confirm",
            "rm-1",
            "--out",
            out.to_str().unwrap(),
        ],
    )
    .success()
    .stdout(predicate::str::is_empty())
    .stderr(
        predicate::str::contains("2 observations confirmed")
            .and(predicate::str::contains("Caution")),
    );
    let html = std::fs::read_to_string(&out).unwrap();
    for want in [
        "RM-1",
        "2 Invented Close, Sampleton",
        "Invented Lets",
        "Garden socket cover missing; live parts exposed",
        "CU1/2",
        "Made safe",
        "Circuit 2 isolated and locked off",
        "Remedied",
        "Socket replaced with a weatherproof outlet; circuit re-tested",
        "No longer applicable",
        "Water supply pipe replaced in plastic throughout",
        "A. Brightwire",
        &done_on,
        "regulation 3(4)",
        "regulation 3(5)",
        "never replace",
        "competent, licensed person",
        "no overall outcome of its own",
        "Signature",
    ] {
        assert!(html.contains(want), "{want} missing from the confirmation");
    }
    assert!(
        !html.contains("No RCD test notice"),
        "the C3 is not confirmed"
    );
    // The caution once, as in every report.
    assert_eq!(html.matches(ohmtrail::CAUTION).count(), 1);
    // To standard output with `-o -`, as `report` does.
    run(&db, &["remedial", "confirm", "RM-1", "-o", "-"])
        .success()
        .stdout(
            predicate::str::starts_with("<!DOCTYPE html>").and(predicate::str::contains(
                "Circuit 2 isolated and locked off",
            )),
        );
    // One observation only.
    run(
        &db,
        &[
            "remedial",
            "confirm",
            "RM-1",
            "--observation",
            &c2,
            "--out",
            out.to_str().unwrap(),
        ],
    )
    .success()
    .stderr(predicate::str::contains("1 observation confirmed"));
    let html = std::fs::read_to_string(&out).unwrap();
    assert!(!html.contains("Garden socket cover missing"));
}

#[test]
fn bad_requests_name_what_was_expected_and_write_nothing() {
    let (dir, db, last) = inspected(5);
    let n = numbers(&db);
    let c1 = n[0].1.to_string();
    let all = json(&db, &["export", "--format", "json"]);
    let listed = json(&db, &["remedial", "list", "--json"]);
    let c3 = (n.iter().map(|x| x.1).max().unwrap() + 1).to_string();
    let refused = |args: &[&str], want: &str| {
        run(&db, args)
            .code(1)
            .stderr(predicate::str::contains(want));
    };
    refused(
        &[
            "remedial",
            "done",
            &c3,
            "--date",
            &last.to_string(),
            "--by",
            "X",
            "--what",
            "y",
        ],
        "coded C3",
    );
    refused(
        &[
            "remedial",
            "done",
            "999",
            "--date",
            &last.to_string(),
            "--by",
            "X",
            "--what",
            "y",
        ],
        "there is no observation 999: expected an observation number",
    );
    let before = (last - Days::new(1)).to_string();
    refused(
        &[
            "remedial", "done", &c1, "--date", &before, "--by", "X", "--what", "y",
        ],
        "before the inspection of",
    );
    let future = (today() + Days::new(3)).to_string();
    refused(
        &[
            "remedial", "done", &c1, "--date", &future, "--by", "X", "--what", "y",
        ],
        "in the future",
    );
    refused(
        &[
            "remedial",
            "done",
            &c1,
            "--date",
            &last.to_string(),
            "--by",
            " ",
            "--what",
            "y",
        ],
        "who did it (--by) is missing",
    );
    refused(
        &["remedial", "period", &c1, "--days", "28"],
        "expected 1 to 27 days",
    );
    let out = dir.path().join("c.html");
    refused(
        &[
            "remedial",
            "confirm",
            "RM-1",
            "--out",
            out.to_str().unwrap(),
        ],
        "no remedial work is recorded for RM-1",
    );
    refused(
        &[
            "remedial",
            "confirm",
            "RM-1",
            "--observation",
            "999",
            "--out",
            out.to_str().unwrap(),
        ],
        "observation 999 is not a C1, C2 or FI observation of RM-1",
    );
    assert!(!out.exists(), "nothing written");
    // Usage errors: --not-applicable needs --why; a date that is not one.
    run(
        &db,
        &[
            "remedial",
            "done",
            &c1,
            "--date",
            &last.to_string(),
            "--by",
            "X",
            "--not-applicable",
        ],
    )
    .code(2);
    run(
        &db,
        &[
            "remedial",
            "done",
            &c1,
            "--date",
            "31/02/2025",
            "--by",
            "X",
            "--what",
            "y",
        ],
    )
    .code(2)
    .stderr(predicate::str::contains(
        "expected YYYY-MM-DD or DD/MM/YYYY",
    ));
    // Nothing was written by any of them.
    assert_eq!(json(&db, &["export", "--format", "json"]), all);
    assert_eq!(json(&db, &["remedial", "list", "--json"]), listed);
    // The help carries the caution.
    run(&db, &["remedial", "confirm", "--help"])
        .success()
        .stdout(predicate::str::contains("never replace"));
    // A reading command refuses a database that does not exist, and does not make one.
    let none = dir.path().join("none.db");
    run(&none, &["remedial", "list"])
        .code(1)
        .stderr(predicate::str::contains("no database at"));
    assert!(!none.exists());
}
