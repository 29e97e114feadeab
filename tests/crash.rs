//! Crash safety and concurrency: `ohmtrail import` killed with SIGKILL at random moments never leaves a damaged
//! database or part of a file. Each file is one transaction, so after every kill the database
//! passes `PRAGMA integrity_check` and each file's records are either all there or all absent.
//!
//! The kill delays are seeded: a failure prints the seed, and `OHMTRAIL_CRASH_SEED=N cargo test
//! --test crash` replays it. The data is invented.

#![cfg(unix)]

use std::path::{Path, PathBuf};
use std::process::{Command, Stdio};
use std::time::{Duration, Instant};

use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;
use rusqlite::Connection;
use tempfile::TempDir;

/// How many imports are killed. The issue asks for at least 20.
const KILLS: usize = 24;
const PROPERTIES: usize = 40;
const CIRCUITS: usize = 12;
const VISITS: usize = 5;
/// Circuit 4's breaker is downgraded at the last visit, so each file also writes changes.
const CHANGES_PER_PROPERTY: i64 = 1;

const HEADER: &str = "property_ref,address,board,earthing,circuit,description,ring,device,rcd_ma,live_mm2,cpc_mm2,visit_date,inspector,instrument,ambient_c,ze_ohm,r1r2_ohm,zs_ohm,ir_ll_mohm,ir_le_mohm,rcd_ms,note";

/// A visit file whose every reference starts with `prefix`, so its records can be counted
/// apart from every other file's.
fn write_file(path: &Path, prefix: &str, rng: &mut ChaCha8Rng) {
    let mut s = String::with_capacity(PROPERTIES * CIRCUITS * VISITS * 120);
    s.push_str(HEADER);
    s.push('\n');
    for p in 0..PROPERTIES {
        for v in 0..VISITS {
            let date = format!("{}-0{}-1{}", 2001 + 5 * v, 1 + v, v);
            // Ambient temperature belongs to the visit, so every row of a visit gives the same.
            let amb = rng.random_range(5..25);
            for c in 1..=CIRCUITS {
                let device = if c == 4 && v == VISITS - 1 {
                    "B20"
                } else if c == 4 {
                    "B32"
                } else {
                    "B16"
                };
                let r1r2: f64 = rng.random_range(0.1..1.0);
                let ir = if rng.random_bool(0.7) {
                    ">200".to_string()
                } else {
                    rng.random_range(20..200).to_string()
                };
                s.push_str(&format!(
                    "{prefix}-{p:03},\"{p} Invented Lane, Sampleton\",DB1,TN-C-S,{c},Circuit {c},no,{device},30,2.5,1.5,{date},A. Tester,{prefix}-METER,{amb},0.21,{r1r2:.3},{zs:.3},>200,{ir},{rcd},\n",
                    zs = r1r2 + 0.21,
                    rcd = rng.random_range(12..40),
                ));
            }
        }
    }
    std::fs::write(path, s).unwrap();
}

/// What one whole file writes.
fn full_counts() -> [i64; 6] {
    let p = PROPERTIES as i64;
    [
        p,
        p,
        p * CIRCUITS as i64,
        p * VISITS as i64,
        p * (CIRCUITS * VISITS) as i64,
        p * CHANGES_PER_PROPERTY,
    ]
}

/// Properties, boards, circuits, visits, test records and circuit changes from one file.
fn counts(conn: &Connection, prefix: &str) -> [i64; 6] {
    let like = format!("{prefix}-%");
    let q = |sql: &str| -> i64 { conn.query_row(sql, [&like], |r| r.get(0)).unwrap() };
    [
        q("SELECT count(*) FROM property WHERE ref LIKE ?1"),
        q(
            "SELECT count(*) FROM board b JOIN property p ON p.id = b.property_id WHERE p.ref LIKE ?1",
        ),
        q(
            "SELECT count(*) FROM circuit c JOIN board b ON b.id = c.board_id
           JOIN property p ON p.id = b.property_id WHERE p.ref LIKE ?1",
        ),
        q(
            "SELECT count(*) FROM visit v JOIN property p ON p.id = v.property_id WHERE p.ref LIKE ?1",
        ),
        q(
            "SELECT count(*) FROM test_record t JOIN visit v ON v.id = t.visit_id
           JOIN property p ON p.id = v.property_id WHERE p.ref LIKE ?1",
        ),
        q(
            "SELECT count(*) FROM circuit_change x JOIN circuit c ON c.id = x.circuit_id
           JOIN board b ON b.id = c.board_id JOIN property p ON p.id = b.property_id
           WHERE p.ref LIKE ?1",
        ),
    ]
}

fn instrument_count(conn: &Connection, prefix: &str) -> i64 {
    conn.query_row(
        "SELECT count(*) FROM instrument WHERE serial = ?1",
        [format!("{prefix}-METER")],
        |r| r.get(0),
    )
    .unwrap()
}

/// The database opens, passes SQLite's own checks, and each file is whole or absent.
/// Returns, per file, whether it landed.
fn check(db: &Path, prefixes: &[String], seed: u64) -> Vec<bool> {
    let conn = Connection::open(db).unwrap();
    let integrity: String = conn
        .query_row("PRAGMA integrity_check", [], |r| r.get(0))
        .unwrap();
    assert_eq!(
        integrity, "ok",
        "integrity_check after a kill (seed {seed})"
    );
    let mut stmt = conn.prepare("PRAGMA foreign_key_check").unwrap();
    let dangling = stmt.query_map([], |_| Ok(())).unwrap().count();
    assert_eq!(dangling, 0, "foreign_key_check after a kill (seed {seed})");
    drop(stmt);
    prefixes
        .iter()
        .map(|prefix| {
            let got = counts(&conn, prefix);
            let instruments = instrument_count(&conn, prefix);
            if got == [0; 6] {
                assert_eq!(instruments, 0, "{prefix}: an instrument without its file");
                false
            } else {
                assert_eq!(
                    got,
                    full_counts(),
                    "{prefix} is half-written (seed {seed}): properties, boards, circuits, visits, test records, changes"
                );
                assert_eq!(instruments, 1, "{prefix}: the file's instrument");
                true
            }
        })
        .collect()
}

fn import(exe: &Path, db: &Path, file: &Path) -> Command {
    let mut c = Command::new(exe);
    c.env_remove("OHMTRAIL_DB")
        .arg("--db")
        .arg(db)
        .arg("import")
        .arg(file)
        .stdout(Stdio::null())
        .stderr(Stdio::null());
    c
}

#[test]
fn sigkill_during_import_leaves_each_file_whole_or_absent() {
    let seed: u64 = std::env::var("OHMTRAIL_CRASH_SEED")
        .ok()
        .and_then(|s| s.parse().ok())
        .unwrap_or(20_250_614);
    eprintln!("crash test seed {seed} (replay with OHMTRAIL_CRASH_SEED={seed})");
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    let dir = TempDir::new().unwrap();
    let db = dir.path().join("crash.db");
    let exe = PathBuf::from(env!("CARGO_BIN_EXE_ohmtrail"));

    // One uninterrupted import gives the file's import time, the range the kills are drawn from.
    let calibration = dir.path().join("k00.csv");
    write_file(&calibration, "K00", &mut rng);
    let start = Instant::now();
    let status = import(&exe, &db, &calibration).status().unwrap();
    let import_time = start.elapsed();
    assert!(status.success(), "the uninterrupted import failed");
    let mut prefixes = vec!["K00".to_string()];
    assert_eq!(check(&db, &prefixes, seed), vec![true]);

    let mut absent = Vec::new();
    let mut landed = Vec::new();
    for i in 1..=KILLS {
        let prefix = format!("K{i:02}");
        let file = dir.path().join(format!("{}.csv", prefix.to_lowercase()));
        write_file(&file, &prefix, &mut rng);
        // Up to past the measured time (which varies on a busy machine), so that kills land
        // at startup, mid-transaction, around the commit and sometimes after it.
        let delay = import_time.mul_f64(rng.random_range(0.0..1.5));
        let mut child = import(&exe, &db, &file).spawn().unwrap();
        std::thread::sleep(delay);
        // On Unix, kill sends SIGKILL: no destructor, no rollback, no checkpoint.
        let _ = child.kill();
        child.wait().unwrap();
        prefixes.push(prefix);
        if check(&db, &prefixes, seed)[i] {
            landed.push(file);
        } else {
            absent.push(file);
        }
    }
    eprintln!(
        "{} of {KILLS} killed imports had committed; import time {import_time:?}",
        landed.len()
    );

    // Guards against a test that kills nothing mid-way (kills start at a delay of zero).
    assert!(!absent.is_empty(), "no kill landed before a commit");

    // Every absent file imports afterwards: nothing a killed import left behind gets in the
    // way. A file that had committed is recognised as already there.
    for file in absent.iter().chain(landed.first()) {
        let out = import(&exe, &db, file)
            .stdout(Stdio::piped())
            .stderr(Stdio::piped())
            .output()
            .unwrap();
        assert!(
            out.status.success(),
            "re-import of {} after the kills: {}",
            file.display(),
            String::from_utf8_lossy(&out.stderr)
        );
    }
    let whole = check(&db, &prefixes, seed);
    assert!(whole.iter().all(|w| *w), "every file is whole at the end");
    let conn = Connection::open(&db).unwrap();
    let records: i64 = conn
        .query_row("SELECT count(*) FROM test_record", [], |r| r.get(0))
        .unwrap();
    assert_eq!(records, full_counts()[4] * (KILLS as i64 + 1));
}

#[test]
fn the_generated_file_imports_to_the_expected_counts() {
    // The expected counts come from the generator's parameters, not from an import, so a
    // generator or importer that drops rows fails here first.
    let dir = TempDir::new().unwrap();
    let db = dir.path().join("one.db");
    let file = dir.path().join("one.csv");
    write_file(&file, "ONE", &mut ChaCha8Rng::seed_from_u64(1));
    let text = std::fs::read_to_string(&file).unwrap();
    assert_eq!(text.lines().count(), 1 + PROPERTIES * CIRCUITS * VISITS);
    let exe = PathBuf::from(env!("CARGO_BIN_EXE_ohmtrail"));
    assert!(import(&exe, &db, &file).status().unwrap().success());
    let conn = Connection::open(&db).unwrap();
    assert_eq!(counts(&conn, "ONE"), full_counts());
}

/// Two processes import different files into one database at the same moment. The test holds
/// the write lock while both start, so both must wait on the busy timeout and then run one
/// after the other (rather than fail with "database is locked"); nothing from either is lost.
#[test]
fn two_imports_started_together_both_land_in_full() {
    let dir = TempDir::new().unwrap();
    let db = dir.path().join("shared.db");
    let exe = PathBuf::from(env!("CARGO_BIN_EXE_ohmtrail"));
    assert!(
        Command::new(&exe)
            .env_remove("OHMTRAIL_DB")
            .arg("--db")
            .arg(&db)
            .arg("init")
            .stdout(Stdio::null())
            .status()
            .unwrap()
            .success()
    );
    let mut rng = ChaCha8Rng::seed_from_u64(3);
    let (north, south) = (dir.path().join("north.csv"), dir.path().join("south.csv"));
    write_file(&north, "NORTH", &mut rng);
    write_file(&south, "SOUTH", &mut rng);

    let lock = Connection::open(&db).unwrap();
    lock.execute_batch("BEGIN IMMEDIATE").unwrap();
    let spawn = |f: &Path| import(&exe, &db, f).stderr(Stdio::piped()).spawn().unwrap();
    let mut a = spawn(&north);
    let mut b = spawn(&south);
    // Long enough for both to reach the lock on a busy machine; the assertions below do not
    // depend on it, only the overlap does.
    std::thread::sleep(Duration::from_secs(2));
    assert!(a.try_wait().unwrap().is_none(), "north gave up on the lock");
    assert!(b.try_wait().unwrap().is_none(), "south gave up on the lock");
    lock.execute_batch("COMMIT").unwrap();
    drop(lock);
    for (name, child) in [("north", a), ("south", b)] {
        let out = child.wait_with_output().unwrap();
        assert!(
            out.status.success(),
            "{name}: {}",
            String::from_utf8_lossy(&out.stderr)
        );
    }
    let conn = Connection::open(&db).unwrap();
    assert_eq!(counts(&conn, "NORTH"), full_counts());
    assert_eq!(counts(&conn, "SOUTH"), full_counts());
    let integrity: String = conn
        .query_row("PRAGMA integrity_check", [], |r| r.get(0))
        .unwrap();
    assert_eq!(integrity, "ok");
}
