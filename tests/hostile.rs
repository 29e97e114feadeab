//! A hostile environment: a database from a newer version, a read-only database, a full disk
//! (simulated with the `OHMTRAIL_MAX_PAGE_COUNT` test hook, which sets SQLite's
//! `PRAGMA max_page_count`), output paths that cannot be written, files that are not
//! databases. Each must give one clear line on stderr, exit 1, and leave everything as it was.
//! The data is invented.

use std::path::{Path, PathBuf};

use assert_cmd::Command;
use ohmtrail::store::Store;
use rusqlite::Connection;
use tempfile::TempDir;

const HEADER: &str = "property_ref,board,circuit,visit_date,device,r1r2_ohm,zs_ohm,ir_le_mohm,note";

/// A visit file of `n` invented properties, 10 circuits and 2 visits each.
fn visits(path: &Path, prefix: &str, n: usize) {
    let mut s = format!("{HEADER}\n");
    for p in 0..n {
        for date in ["2021-03-01", "2024-03-01"] {
            for c in 1..=10 {
                s.push_str(&format!(
                    "{prefix}-{p:04},DB1,{c},{date},B16,0.{c}5,0.{c}9,>200,note for circuit {c} of {p}\n"
                ));
            }
        }
    }
    std::fs::write(path, s).unwrap();
}

fn bin(db: &Path) -> Command {
    let mut c = Command::cargo_bin("ohmtrail").unwrap();
    c.env_remove("OHMTRAIL_DB")
        .env_remove("OHMTRAIL_MAX_PAGE_COUNT")
        .arg("--db")
        .arg(db);
    c
}

/// Run and expect failure with exit 1 and one line on stderr containing every `needle`.
fn refused(cmd: &mut Command, needles: &[&str]) -> String {
    let out = cmd.output().unwrap();
    let stderr = String::from_utf8_lossy(&out.stderr).into_owned();
    assert_eq!(out.status.code(), Some(1), "exit status; stderr: {stderr}");
    assert_eq!(stderr.lines().count(), 1, "one line on stderr: {stderr}");
    assert!(stderr.starts_with("ohmtrail: error: "), "{stderr}");
    for n in needles {
        assert!(stderr.contains(n), "{n:?} missing from: {stderr}");
    }
    assert!(
        !stderr.trim_end().ends_with('.'),
        "no trailing full stop: {stderr}"
    );
    stderr
}

/// Everything an import could change: row counts and a full export.
fn dump(db: &Path) -> String {
    let store = Store::open(db).unwrap();
    let mut out = format!("{:?}\n", store.row_counts().unwrap());
    let mut v = Vec::new();
    let mut o = Vec::new();
    ohmtrail::export::export_csv(&store, None, &mut v, Some(&mut o)).unwrap();
    out.push_str(&String::from_utf8(v).unwrap());
    out.push_str(&String::from_utf8(o).unwrap());
    out
}

fn integrity(db: &Path) -> String {
    Connection::open(db)
        .unwrap()
        .query_row("PRAGMA integrity_check", [], |r| r.get(0))
        .unwrap()
}

fn pages(db: &Path) -> i64 {
    Connection::open(db)
        .unwrap()
        .query_row("PRAGMA page_count", [], |r| r.get(0))
        .unwrap()
}

/// A database holding one small file's records, and that file.
fn seeded(dir: &TempDir) -> (PathBuf, PathBuf) {
    let db = dir.path().join("t.db");
    let a = dir.path().join("a.csv");
    visits(&a, "A", 5);
    bin(&db).arg("import").arg(&a).assert().success();
    (db, a)
}

#[test]
fn a_newer_database_is_refused_by_every_command_and_left_untouched() {
    let dir = TempDir::new().unwrap();
    let (db, a) = seeded(&dir);
    let conn = Connection::open(&db).unwrap();
    conn.pragma_update(None, "journal_mode", "DELETE").unwrap();
    conn.pragma_update(None, "user_version", 99).unwrap();
    drop(conn);
    let before = std::fs::read(&db).unwrap();
    let b = dir.path().join("b.csv");
    visits(&b, "B", 2);
    let out = dir.path().join("out.csv");
    let report = dir.path().join("report.html");
    let commands: [&[&str]; 10] = [
        &["import", b.to_str().unwrap()],
        &["import", a.to_str().unwrap()],
        &["flags"],
        &["flags", "--json"],
        &["trend", "A-0000"],
        &["export"],
        &["export", "-o", out.to_str().unwrap()],
        &["report", "A-0000", "-o", report.to_str().unwrap()],
        &["report", "--portfolio", "-o", report.to_str().unwrap()],
        &[
            "report",
            "A-0000",
            "--format",
            "json",
            "-o",
            report.to_str().unwrap(),
        ],
    ];
    for args in commands {
        refused(
            bin(&db).args(args),
            &["schema version 99", "left untouched", db.to_str().unwrap()],
        );
        assert_eq!(before, std::fs::read(&db).unwrap(), "{args:?} changed it");
    }
    assert!(!out.exists(), "no export file from a refused database");
    assert!(!report.exists(), "no report from a refused database");
    assert!(!PathBuf::from(format!("{}-wal", db.display())).exists());
}

#[test]
fn a_read_only_database_refuses_an_import_and_keeps_its_bytes() {
    let dir = TempDir::new().unwrap();
    let (db, _) = seeded(&dir);
    let before_dump = dump(&db);
    let mut perms = std::fs::metadata(&db).unwrap().permissions();
    perms.set_readonly(true);
    std::fs::set_permissions(&db, perms.clone()).unwrap();
    let before = std::fs::read(&db).unwrap();
    let b = dir.path().join("b.csv");
    visits(&b, "B", 3);
    refused(
        bin(&db).arg("import").arg(&b),
        &["is read-only", db.to_str().unwrap()],
    );
    assert_eq!(before, std::fs::read(&db).unwrap());
    // Reading still works: it is the write that is refused.
    bin(&db).arg("flags").assert().success();
    bin(&db).arg("export").assert().success();
    assert_eq!(before, std::fs::read(&db).unwrap());
    #[allow(clippy::permissions_set_readonly_false)]
    perms.set_readonly(false);
    std::fs::set_permissions(&db, perms).unwrap();
    assert_eq!(before_dump, dump(&db));
}

#[test]
fn a_full_disk_stops_the_import_whole_and_the_database_stays_sound() {
    let dir = TempDir::new().unwrap();
    let (db, _) = seeded(&dir);
    let before = dump(&db);
    let cap = (pages(&db) + 4).to_string();
    let b = dir.path().join("b.csv");
    visits(&b, "B", 300);
    for extra in [&[][..], &["--skip-invalid"][..], &["--replace"][..]] {
        refused(
            bin(&db)
                .env("OHMTRAIL_MAX_PAGE_COUNT", &cap)
                .arg("import")
                .args(extra)
                .arg(&b),
            &[
                "database or disk is full",
                b.to_str().unwrap(),
                db.to_str().unwrap(),
                "nothing from this file was written",
            ],
        );
        assert_eq!(integrity(&db), "ok", "{extra:?}");
        assert_eq!(before, dump(&db), "{extra:?}: nothing half-written");
        assert!(
            !dir.path().join("b.rejected.csv").exists(),
            "no sidecar from a rolled-back file"
        );
    }
    // With room again the same file imports whole.
    bin(&db).arg("import").arg(&b).assert().success();
    assert_eq!(integrity(&db), "ok");
    let store = Store::open(&db).unwrap();
    let counts = store.row_counts().unwrap();
    let records = counts.iter().find(|(t, _)| *t == "test_record").unwrap().1;
    assert_eq!(records, (5 + 300) * 20);
}

#[test]
fn a_full_disk_during_a_register_command_is_a_clear_error() {
    let dir = TempDir::new().unwrap();
    let (db, _) = seeded(&dir);
    let before = dump(&db);
    let cap = pages(&db).to_string();
    // Notes longer than many pages, so the new property cannot fit in the free pages (the
    // table rebuild of migration 004 leaves some) or free space of existing ones.
    let notes = "n".repeat(100_000);
    refused(
        bin(&db)
            .env("OHMTRAIL_MAX_PAGE_COUNT", &cap)
            .args(["property", "add", "FULL-1", "--notes", &notes]),
        &["database or disk is full", db.to_str().unwrap()],
    );
    assert_eq!(integrity(&db), "ok");
    assert_eq!(before, dump(&db));
}

#[test]
fn the_test_hook_refuses_a_value_that_is_not_a_page_count() {
    let dir = TempDir::new().unwrap();
    let (db, a) = seeded(&dir);
    refused(
        bin(&db)
            .env("OHMTRAIL_MAX_PAGE_COUNT", "lots")
            .arg("import")
            .arg(&a),
        &["OHMTRAIL_MAX_PAGE_COUNT", "\"lots\"", "whole number"],
    );
}

/// A regular file standing where a directory is wanted. Root may write anywhere, so a
/// permission cannot be relied on to refuse a write; a file in the way can.
struct Blocker(PathBuf);

impl Blocker {
    fn new(dir: &TempDir) -> Blocker {
        let path = dir.path().join("file.txt");
        std::fs::write(&path, "not a directory\n").unwrap();
        Blocker(path)
    }

    /// A path that would need the file to be a directory.
    fn under(&self, name: &str) -> PathBuf {
        self.0.join(name)
    }

    fn assert_untouched(&self) {
        assert_eq!(
            std::fs::read_to_string(&self.0).unwrap(),
            "not a directory\n"
        );
    }
}

/// An empty directory where a file is wanted.
fn empty_dir(dir: &TempDir, name: &str) -> PathBuf {
    let path = dir.path().join(name);
    std::fs::create_dir(&path).unwrap();
    path
}

#[test]
fn export_to_a_path_that_cannot_be_written_is_a_clear_error() {
    let dir = TempDir::new().unwrap();
    let (db, _) = seeded(&dir);
    let before = std::fs::read(&db).unwrap();
    let blocker = Blocker::new(&dir);
    let under_file = blocker.under("out.csv");
    let missing = dir.path().join("no/such/dir/out.csv");
    let a_dir = empty_dir(&dir, "a-directory");
    let cases: [(&Path, &str, &str); 4] = [
        (&under_file, "csv", "is a file, not a directory"),
        (&under_file, "json", "is a file, not a directory"),
        (&missing, "csv", "does not exist: create it first"),
        (&a_dir, "csv", "it is a directory"),
    ];
    for (path, format, why) in cases {
        refused(
            bin(&db)
                .args(["export", "--format", format, "-o"])
                .arg(path),
            &["cannot write", path.to_str().unwrap(), why],
        );
    }
    blocker.assert_untouched();
    assert!(!dir.path().join("no").exists());
    assert_eq!(std::fs::read_dir(&a_dir).unwrap().count(), 0);
    assert_eq!(before, std::fs::read(&db).unwrap());
}

#[test]
fn demo_into_a_directory_that_cannot_be_made_is_a_clear_error() {
    let dir = TempDir::new().unwrap();
    let blocker = Blocker::new(&dir);
    let target = blocker.under("demo");
    let mut cmd = Command::cargo_bin("ohmtrail").unwrap();
    cmd.env_remove("OHMTRAIL_DB")
        .env_remove("OHMTRAIL_DB")
        .args(["demo", "--dir"])
        .arg(&target);
    refused(
        &mut cmd,
        &["cannot create the demo directory", target.to_str().unwrap()],
    );
    blocker.assert_untouched();
}

#[test]
fn a_database_path_that_cannot_hold_a_database_is_a_clear_error() {
    let dir = TempDir::new().unwrap();
    let blocker = Blocker::new(&dir);
    let under_file = blocker.under("t.db");
    refused(
        bin(&under_file).args(["property", "list"]),
        &[under_file.to_str().unwrap(), "is a file, not a directory"],
    );
    let a_dir = empty_dir(&dir, "dir.db");
    refused(
        bin(&a_dir).arg("flags"),
        &[a_dir.to_str().unwrap(), "is a directory"],
    );
    blocker.assert_untouched();
    assert_eq!(std::fs::read_dir(&a_dir).unwrap().count(), 0);
}

#[test]
fn a_file_that_is_not_a_database_is_refused_and_left_as_it_was() {
    let dir = TempDir::new().unwrap();
    let junk = dir.path().join("junk.db");
    let bytes: Vec<u8> = (0..4096u32).map(|i| (i * 7 + 3) as u8).collect();
    std::fs::write(&junk, &bytes).unwrap();
    let a = dir.path().join("a.csv");
    visits(&a, "A", 1);
    for args in [
        &["import", a.to_str().unwrap()][..],
        &["flags"][..],
        &["init"][..],
    ] {
        refused(
            bin(&junk).args(args),
            &[junk.to_str().unwrap(), "not an ohmtrail database"],
        );
        assert_eq!(bytes, std::fs::read(&junk).unwrap(), "{args:?}");
    }
}

#[test]
fn a_report_to_a_path_that_cannot_be_written_is_a_clear_error() {
    let dir = TempDir::new().unwrap();
    let (db, _) = seeded(&dir);
    let before = std::fs::read(&db).unwrap();
    let blocker = Blocker::new(&dir);
    let under_file = blocker.under("out.html");
    let missing = dir.path().join("no/such/dir/out.html");
    let a_dir = empty_dir(&dir, "a-directory");
    let property = ["report", "A-0000", "-o"];
    let portfolio = ["report", "--portfolio", "-o"];
    let cases: [(&[&str], &Path, &str); 5] = [
        (&property, &under_file, "is a file, not a directory"),
        (&portfolio, &under_file, "is a file, not a directory"),
        (&property, &missing, "does not exist"),
        (&portfolio, &missing, "does not exist"),
        (&property, &a_dir, "is a directory"),
    ];
    for (args, path, why) in cases {
        let out = refused(bin(&db).args(args).arg(path), &[why]);
        let named = path.to_str().unwrap();
        let parent = path.parent().unwrap().to_str().unwrap();
        assert!(out.contains(named) || out.contains(parent), "{out}");
    }
    blocker.assert_untouched();
    assert!(!dir.path().join("no").exists());
    assert_eq!(std::fs::read_dir(&a_dir).unwrap().count(), 0);
    assert_eq!(before, std::fs::read(&db).unwrap());
}

/// Make a special file in `dir` with the system's own tool (`mkfifo`, or `mknod NAME c MAJOR
/// MINOR` for a character device, which needs root); `None` when the tool refuses.
fn special(dir: &TempDir, name: &str, tool: &str, args: &[&str]) -> Option<PathBuf> {
    let path = dir.path().join(name);
    let ok = std::process::Command::new(tool)
        .arg(&path)
        .args(args)
        .status()
        .is_ok_and(|s| s.success());
    ok.then_some(path)
}

fn is_fifo(path: &Path) -> bool {
    use std::os::unix::fs::FileTypeExt;
    std::fs::metadata(path).is_ok_and(|m| m.file_type().is_fifo())
}

fn is_char_device(path: &Path) -> bool {
    use std::os::unix::fs::FileTypeExt;
    std::fs::metadata(path).is_ok_and(|m| m.file_type().is_char_device())
}

/// Output to a pipe is written into the pipe, never renamed over it; the portfolio, whose
/// property reports go beside the index, is refused there.
#[test]
fn output_to_a_pipe_streams_into_it_and_leaves_it_a_pipe() {
    let dir = TempDir::new().unwrap();
    let (db, _) = seeded(&dir);
    let fifo = special(&dir, "out.fifo", "mkfifo", &[]).expect("mkfifo");
    let cases: [(&[&str], &str); 3] = [
        (&["export", "-o"], "property_ref,address,board"),
        (&["export", "--format", "json", "-o"], "\"visits\""),
        (&["report", "A-0000", "-o"], "<html"),
    ];
    for (args, expected) in cases {
        // The reader waits for a writer; it is started first so the writer does not wait. It
        // copies into a file, not a pipe this test reads only afterwards: an export larger than
        // a pipe's buffer would otherwise stall the reader and so the writer.
        let copy = dir.path().join("read.out");
        let reader = std::process::Command::new("cat")
            .arg(&fifo)
            .stdout(std::fs::File::create(&copy).unwrap())
            .spawn()
            .unwrap();
        let out = bin(&db).args(args).arg(&fifo).output().unwrap();
        let still_fifo = is_fifo(&fifo);
        if !still_fifo {
            let mut reader = reader;
            let _ = reader.kill();
            let _ = reader.wait();
            panic!(
                "{args:?} replaced the pipe; stderr: {}",
                String::from_utf8_lossy(&out.stderr)
            );
        }
        assert!(out.status.success(), "{args:?}: {out:?}");
        let mut reader = reader;
        assert!(reader.wait().unwrap().success());
        let text = std::fs::read_to_string(&copy).unwrap();
        assert!(text.contains(expected), "{args:?}: {text:.200}");
    }
    refused(
        bin(&db).args(["report", "--portfolio", "-o"]).arg(&fifo),
        &["not a regular file", "--index-only"],
    );
    assert!(is_fifo(&fifo));
    let names: Vec<_> = std::fs::read_dir(dir.path())
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .collect();
    assert!(!names.iter().any(|n| n.starts_with("report-")), "{names:?}");
}

/// A device that is always full (the kernel's `full` device, made here with `mknod`, so the
/// real one is never at risk) must give "no space", not "wrote"; the null device takes the
/// output and stays a device. Needs root for `mknod`; skipped, saying so, without it.
#[test]
fn output_to_a_device_is_written_into_it_and_a_full_one_is_an_error() {
    let dir = TempDir::new().unwrap();
    let (db, _) = seeded(&dir);
    // Linux's memory devices: 1,3 is null and 1,7 is full (the kernel's devices.txt).
    let (Some(full), Some(null)) = (
        special(&dir, "full", "mknod", &["c", "1", "7"]),
        special(&dir, "null", "mknod", &["c", "1", "3"]),
    ) else {
        eprintln!("skipped: mknod needs root here");
        return;
    };
    for args in [
        &["export", "-o"][..],
        &["export", "--format", "json", "-o"][..],
        &["report", "A-0000", "-o"][..],
    ] {
        let err = refused(bin(&db).args(args).arg(&full), &["No space left"]);
        assert!(!err.contains("wrote"), "{err}");
        assert!(is_char_device(&full), "{args:?} replaced the device");
        let out = bin(&db).args(args).arg(&null).output().unwrap();
        assert!(out.status.success(), "{args:?}: {out:?}");
        assert!(is_char_device(&null), "{args:?} replaced the device");
    }
}

/// `record` refuses a register change dated before a visit already recorded, as import does:
/// it would alter what that later visit shows, and export could not give it back.
#[test]
fn record_refuses_a_change_that_would_rewrite_a_later_visit() {
    let dir = TempDir::new().unwrap();
    let (db, _) = seeded(&dir);
    let changes = |db: &Path| {
        let s = Store::open(db).unwrap();
        s.row_counts()
            .unwrap()
            .into_iter()
            .find(|(t, _)| *t == "circuit_change")
            .unwrap()
            .1
    };
    let out = bin(&db)
        .args(["record", "A-0001", "--date", "2022-05-01", "--temp", "20"])
        .write_stdin("DB1,1,device,B20\n")
        .output()
        .unwrap();
    let text = format!(
        "{}{}",
        String::from_utf8_lossy(&out.stdout),
        String::from_utf8_lossy(&out.stderr)
    );
    assert!(!out.status.success(), "{text}");
    assert!(text.contains("later visit (2024-03-01)"), "{text}");
    assert_eq!(changes(&db), 0);
    // Every exported row of the property still shows the device it was tested with.
    let export = bin(&db)
        .args(["export", "--property", "A-0001"])
        .output()
        .unwrap();
    let csv = String::from_utf8(export.stdout).unwrap();
    assert!(csv.lines().skip(1).all(|l| l.contains(",B16,")), "{csv}");

    // After the latest visit, the same change is the latest word and is recorded.
    bin(&db)
        .args(["record", "A-0001", "--abandon"])
        .assert()
        .success();
    bin(&db)
        .args(["record", "A-0001", "--date", "2025-01-10", "--temp", "20"])
        .write_stdin("DB1,1,device,B20\nDB1,1,r1r2_ohm,0.15\n")
        .assert()
        .success();
    assert_eq!(changes(&db), 1);
}

/// Two rows of one file that give one visit, one Ze or one record two values are refused even
/// with --replace, which overwrites what is stored, not what the same file says twice.
#[test]
fn a_file_that_contradicts_itself_is_refused_even_with_replace() {
    let dir = TempDir::new().unwrap();
    let (db, _) = seeded(&dir);
    let before = dump(&db);
    let bad = Path::new(env!("CARGO_MANIFEST_DIR")).join("fixtures/bad");
    for (file, needle) in [
        ("visit_details_conflict_in_file.csv", "inspector"),
        ("ze_conflict_in_file.csv", "ze_ohm"),
        ("duplicate_row_conflict.csv", "r1r2_ohm"),
    ] {
        let out = bin(&db)
            .args(["import", "--replace"])
            .arg(bad.join(file))
            .output()
            .unwrap();
        let err = String::from_utf8_lossy(&out.stderr);
        assert_eq!(out.status.code(), Some(1), "{file}: {err}");
        assert!(
            err.contains(needle) && err.contains("an earlier row of this file"),
            "{err}"
        );
    }
    assert_eq!(before, dump(&db));
}

/// A SQLite file that another program made is refused by every command, byte for byte
/// untouched (not even switched to WAL), with a short message, including when its tables
/// share names with ohmtrail's.
#[test]
fn another_programs_database_is_refused_untouched() {
    let dir = TempDir::new().unwrap();
    let a = dir.path().join("a.csv");
    visits(&a, "A", 1);
    for (name, sql) in [
        (
            "shop.db",
            "CREATE TABLE customer (id INTEGER PRIMARY KEY, name TEXT);",
        ),
        (
            "clash.db",
            "CREATE TABLE property (id INTEGER PRIMARY KEY, owner TEXT, price REAL);",
        ),
        ("marked.db", "PRAGMA application_id = 1234;"),
    ] {
        let db = dir.path().join(name);
        let conn = Connection::open(&db).unwrap();
        conn.execute_batch(sql).unwrap();
        conn.execute_batch(
            "CREATE TABLE IF NOT EXISTS note (t TEXT); INSERT INTO note VALUES ('kept');",
        )
        .unwrap();
        drop(conn);
        let before = std::fs::read(&db).unwrap();
        for args in [
            &["import", a.to_str().unwrap()][..],
            &["property", "list"][..],
            &["flags"][..],
        ] {
            let err = refused(
                bin(&db).args(args),
                &[
                    db.to_str().unwrap(),
                    "ohmtrail did not make",
                    "left untouched",
                ],
            );
            assert!(err.len() < 400, "{err}");
            assert_eq!(before, std::fs::read(&db).unwrap(), "{name} {args:?}");
            assert!(!dir.path().join(format!("{name}-wal")).exists());
        }
    }
}

/// A database ohmtrail made before it marked its files is still opened, and marked.
#[test]
fn an_unmarked_ohmtrail_database_from_before_the_mark_is_opened_and_marked() {
    let dir = TempDir::new().unwrap();
    let db = dir.path().join("old.db");
    let mut conn = Connection::open(&db).unwrap();
    let tx = conn.transaction().unwrap();
    for (_, sql) in &ohmtrail::store::migrate::MIGRATIONS[..5] {
        tx.execute_batch(sql).unwrap();
    }
    tx.pragma_update(None, "user_version", 5).unwrap();
    tx.commit().unwrap();
    drop(conn);
    bin(&db).args(["property", "list"]).assert().success();
    let id: i32 = Connection::open(&db)
        .unwrap()
        .query_row("PRAGMA application_id", [], |r| r.get(0))
        .unwrap();
    assert_eq!(id, ohmtrail::store::APPLICATION_ID);
}

/// Makes a directory unwritable, even for root, with the file system's immutable attribute
/// (`chattr +i`); undone when dropped, so the temporary directory can be removed.
struct Immutable(PathBuf);

impl Immutable {
    fn set(dir: &Path) -> Option<Immutable> {
        let ok = std::process::Command::new("chattr")
            .arg("+i")
            .arg(dir)
            .status()
            .is_ok_and(|s| s.success());
        ok.then(|| Immutable(dir.to_path_buf()))
    }
}

impl Drop for Immutable {
    fn drop(&mut self) {
        let _ = std::process::Command::new("chattr")
            .arg("-i")
            .arg(&self.0)
            .status();
    }
}

/// In a directory that cannot be written, reading commands work (the database is opened
/// read-only) and writing ones say in words why they cannot. Needs `chattr +i` (root on a
/// file system that has it); skipped, saying so, without it.
#[test]
fn a_read_only_directory_can_be_read_and_writing_is_refused_in_words() {
    let dir = TempDir::new().unwrap();
    let inner = dir.path().join("ro");
    std::fs::create_dir(&inner).unwrap();
    let db = inner.join("t.db");
    let a = dir.path().join("a.csv");
    visits(&a, "A", 2);
    bin(&db).arg("import").arg(&a).assert().success();
    let before = std::fs::read(&db).unwrap();
    let Some(_guard) = Immutable::set(&inner) else {
        eprintln!("skipped: chattr +i is not available here");
        return;
    };
    let out = bin(&db).args(["property", "list"]).output().unwrap();
    assert!(out.status.success(), "{out:?}");
    assert!(String::from_utf8_lossy(&out.stdout).contains("A-0001"));
    let html = dir.path().join("r.html");
    let html = html.to_str().unwrap();
    for args in [
        &["flags", "--json"][..],
        &["export"][..],
        &["report", "A-0000", "-o", html][..],
    ] {
        let out = bin(&db).args(args).output().unwrap();
        assert!(out.status.success(), "{args:?}: {out:?}");
    }
    for args in [
        &["import", a.to_str().unwrap()][..],
        &["property", "add", "B-1"][..],
    ] {
        let err = refused(
            bin(&db).args(args),
            &["is read-only", "its directory", "cannot be written"],
        );
        assert!(
            !err.contains("attempt to write a readonly database"),
            "{err}"
        );
    }
    assert_eq!(before, std::fs::read(&db).unwrap());
}

/// `--skip-invalid`: the sidecar replaces a symbolic link planted at its name instead of
/// writing through it, protects text from formula injection as export does, and the summary
/// counts only the rows written as imported.
#[test]
fn skip_invalid_sidecar_is_safe_and_the_summary_counts_what_was_written() {
    let dir = TempDir::new().unwrap();
    let (db, _) = seeded(&dir);
    let file = dir.path().join("mixed.csv");
    std::fs::write(
        &file,
        format!(
            "{HEADER}\nB-0001,DB1,1,2024-03-01,B16,0.15,0.19,>200,fine\n\
             B-0001,DB1,2,2024-03-01,B16,bad,0.29,>200,=cmd|' /C calc'!A0\n\
             B-0001,DB1,3,2024-03-01,B16,0.35,bad,>200,@SUM(1)\n"
        ),
    )
    .unwrap();
    let victim = dir.path().join("victim.txt");
    std::fs::write(&victim, "keep me\n").unwrap();
    let sidecar = dir.path().join("mixed.rejected.csv");
    std::os::unix::fs::symlink(&victim, &sidecar).unwrap();
    let out = bin(&db)
        .args(["import", "--skip-invalid"])
        .arg(&file)
        .output()
        .unwrap();
    let stdout = String::from_utf8_lossy(&out.stdout);
    assert!(out.status.success(), "{out:?}");
    assert_eq!(std::fs::read_to_string(&victim).unwrap(), "keep me\n");
    assert!(!sidecar.symlink_metadata().unwrap().is_symlink());
    let side = std::fs::read_to_string(&sidecar).unwrap();
    assert!(side.contains(",'=cmd|"), "{side}");
    assert!(side.contains(",'@SUM(1)"), "{side}");
    assert!(!side.contains(",=cmd"), "{side}");
    assert!(
        stdout.contains("imported 1 row; 2 skipped as invalid"),
        "{stdout}"
    );
    assert!(stdout.contains("rows skipped (invalid)   2"), "{stdout}");
}

/// `--replace` that changes a stored visit's details says so in the summary, instead of
/// reporting nothing but an unchanged record.
#[test]
fn replace_that_changes_a_visits_details_is_counted() {
    let dir = TempDir::new().unwrap();
    let (db, _) = seeded(&dir);
    let first = dir.path().join("v1.csv");
    std::fs::write(
        &first,
        "property_ref,board,circuit,visit_date,ambient_c,r1r2_ohm\nC-1,DB1,1,2024-03-01,18,0.15\n",
    )
    .unwrap();
    bin(&db).arg("import").arg(&first).assert().success();
    let second = dir.path().join("v2.csv");
    std::fs::write(
        &second,
        "property_ref,board,circuit,visit_date,ambient_c,r1r2_ohm\nC-1,DB1,1,2024-03-01,22,0.15\n",
    )
    .unwrap();
    let out = bin(&db)
        .args(["import", "--replace"])
        .arg(&second)
        .output()
        .unwrap();
    let stdout = String::from_utf8_lossy(&out.stdout);
    assert!(out.status.success(), "{out:?}");
    assert!(stdout.contains("details replaced         1"), "{stdout}");
    assert!(!stdout.contains("nothing new"), "{stdout}");
}

/// Two properties whose report file names could coincide (a reference made safe for a file
/// name, and a reference that is already that safe name) get two files, and the index links
/// both.
#[test]
fn two_properties_never_share_one_report_file() {
    let dir = TempDir::new().unwrap();
    let db = dir.path().join("t.db");
    let first = "a/b/c";
    let name = ohmtrail::report::property_file_name(first, "html");
    let second = name
        .strip_prefix("report-")
        .and_then(|n| n.strip_suffix(".html"))
        .unwrap()
        .to_string();
    let file = dir.path().join("v.csv");
    std::fs::write(
        &file,
        format!(
            "property_ref,board,circuit,visit_date,r1r2_ohm\n\
             \"{first}\",DB1,1,2024-03-01,0.41\n{second},DB1,1,2024-03-01,0.42\n"
        ),
    )
    .unwrap();
    bin(&db).arg("import").arg(&file).assert().success();
    let out_dir = dir.path().join("out");
    std::fs::create_dir(&out_dir).unwrap();
    let index = out_dir.join("portfolio.html");
    // The second reference is spelled exactly like the first one's made-safe name: it gets a
    // hash of its own, so the two names differ by construction.
    assert_ne!(ohmtrail::report::property_file_name(&second, "html"), name);
    bin(&db)
        .args(["report", "--portfolio", "-o"])
        .arg(&index)
        .assert()
        .success();
    let reports = std::fs::read_dir(&out_dir)
        .unwrap()
        .filter(|e| {
            e.as_ref()
                .unwrap()
                .file_name()
                .to_string_lossy()
                .starts_with("report-")
        })
        .count();
    assert_eq!(reports, 2);
}

/// The register commands refuse a control character in text, with its position, as import
/// does: escape sequences would otherwise reach the terminal of whoever lists the register.
#[test]
fn register_commands_refuse_control_characters() {
    let dir = TempDir::new().unwrap();
    let db = dir.path().join("t.db");
    refused(
        bin(&db).args(["property", "add", "P-\u{1b}[2J1"]),
        &["property reference has control character U+001B at offset 2"],
    );
    bin(&db)
        .args(["property", "add", "P-1", "--address", "1 Row\u{8}\u{8}X"])
        .assert()
        .failure()
        .stderr(predicates::str::contains(
            "address has control character U+0008 at offset 5",
        ));
    bin(&db).args(["property", "add", "P-1"]).assert().success();
    refused(
        bin(&db).args(["board", "add", "P-1", "DB\u{7f}1"]),
        &["board designation has control character U+007F at offset 2"],
    );
    bin(&db)
        .args(["board", "add", "P-1", "DB1"])
        .assert()
        .success();
    refused(
        bin(&db).args([
            "circuit",
            "add",
            "P-1",
            "DB1",
            "1",
            "--description",
            "Lights\u{1b}]0;x\u{7}",
        ]),
        &["circuit description has control character U+001B at offset 6"],
    );
    // The note of a dated change, and an instrument's serial and description, likewise.
    bin(&db)
        .args(["circuit", "add", "P-1", "DB1", "1", "--device", "B16"])
        .assert()
        .success();
    refused(
        bin(&db).args([
            "circuit",
            "edit",
            "P-1",
            "DB1",
            "1",
            "--device",
            "B20",
            "--note",
            "swapped\u{1b}[8m",
        ]),
        &["note has control character U+001B at offset 7"],
    );
    refused(
        bin(&db).args(["instrument", "add", "IT\u{9b}7"]),
        &["instrument serial has control character U+009B at offset 2"],
    );
    let store = Store::open(&db).unwrap();
    let c = store.find_circuit("P-1", "DB1", "1").unwrap();
    assert!(store.changes(c.id).unwrap().is_empty());
    assert_eq!(c.device.unwrap().to_string(), "B16");
    assert!(store.instruments().unwrap().is_empty());
}

/// `circuit edit --date` refuses a register change dated before a visit already recorded for
/// the circuit, or before a later change of the same detail, as import and `record` do: the
/// register at a date is the register now with later changes undone, so the change would
/// alter what that later history shows. A change of another detail is not held back.
#[test]
fn circuit_edit_refuses_a_change_that_would_rewrite_later_history() {
    let dir = TempDir::new().unwrap();
    let (db, _) = seeded(&dir);
    let edit = |date: &str, flags: &[&str]| {
        let mut c = bin(&db);
        c.args(["circuit", "edit", "A-0001", "DB1", "1", "--date", date])
            .args(flags);
        c
    };
    let before = dump(&db);
    refused(
        &mut edit("2022-05-01", &["--device", "B20"]),
        &[
            "circuit 1: a change of device dated 2022-05-01",
            "later visit (2024-03-01) already recorded",
        ],
    );
    assert_eq!(dump(&db), before, "nothing written");

    // After the last visit, the change is the latest word and is recorded.
    edit("2025-01-10", &["--device", "B20"]).assert().success();
    let after = dump(&db);
    // An earlier change of the same detail, after the last visit, would undo it in between.
    refused(
        &mut edit("2024-12-01", &["--device", "C20"]),
        &["later change of device (2025-01-10) already recorded"],
    );
    assert_eq!(dump(&db), after, "nothing written");
    // Another detail on that date alters nothing later.
    edit("2024-12-01", &["--live", "4"]).assert().success();
    let store = Store::open(&db).unwrap();
    let c = store.find_circuit("A-0001", "DB1", "1").unwrap();
    let fields: Vec<_> = store
        .changes(c.id)
        .unwrap()
        .into_iter()
        .map(|ch| (ch.date.to_string(), ch.field.unwrap_or_default()))
        .collect();
    assert_eq!(
        fields,
        [
            ("2024-12-01".to_string(), "live_mm2".to_string()),
            ("2025-01-10".to_string(), "device".to_string())
        ]
    );
}

/// `record` refuses control characters in its own free text as import refuses them in a cell:
/// the inspector and instrument given on the command line (before a visit is started) and
/// every field of the line mode's input, each named with its code and position.
#[test]
fn record_refuses_control_characters_in_its_text() {
    let dir = TempDir::new().unwrap();
    let (db, _) = seeded(&dir);
    let before = dump(&db);
    for (flag, value, message) in [
        (
            "--inspector",
            "A. Brightwire\u{1b}[2J",
            "inspector has control character U+001B at offset 13",
        ),
        (
            "--instrument",
            "IT-0042\u{7}",
            "instrument serial has control character U+0007 at offset 7",
        ),
    ] {
        refused(
            bin(&db)
                .args(["record", "A-0001", "--date", "2025-01-10", "--temp", "19.5"])
                .args([flag, value])
                .write_stdin("DB1,1,r1r2_ohm,0.16\n"),
            &[message],
        );
        assert_eq!(dump(&db), before, "{flag}: nothing written");
    }

    // Line mode: a line holding one is refused with its line, field and offset, nothing is
    // stored from it, and the others are stored.
    let out = bin(&db)
        .args(["record", "A-0001", "--date", "2025-01-10", "--temp", "19.5"])
        .write_stdin(
            "DB1,1,r1r2_ohm,0.16\n\
             DB1\u{1b}]0;x\u{7},2,r1r2_ohm,0.27\n\
             DB1,3,r1r2_ohm,0.3\u{8}9\n\
             DB1,4,r1r2_ohm, 0.41 \n",
        )
        .output()
        .unwrap();
    let stderr = String::from_utf8_lossy(&out.stderr);
    assert_eq!(out.status.code(), Some(1), "{stderr}");
    assert!(
        stderr.contains("line 2: the board has control character U+001B at offset 3"),
        "{stderr}"
    );
    assert!(
        stderr.contains("line 3: the value has control character U+0008 at offset 3"),
        "{stderr}"
    );
    assert!(
        stderr.contains("2 lines refused and nothing stored from them (2 values stored"),
        "{stderr}"
    );
    assert!(
        !stderr.contains('\u{1b}') && !stderr.contains('\u{8}'),
        "{stderr}"
    );
}

/// `ohmtrail flags | head`: the reader going away is not an error. Each listing is run with
/// its standard output a pipe whose reading end is already closed, so every write it makes
/// fails with a broken pipe; it must still exit 0 and print nothing on stderr.
#[test]
fn a_reader_that_goes_away_is_not_an_error() {
    let dir = tempfile::tempdir().unwrap();
    Command::cargo_bin("ohmtrail")
        .unwrap()
        .env_remove("OHMTRAIL_DB")
        .args(["demo", "--dir"])
        .arg(dir.path())
        .assert()
        .success();
    let db = dir.path().join("demo.db");
    let listings: &[&[&str]] = &[
        &["flags"],
        &["flags", "--json"],
        &["trend", "QL-001"],
        &["trend", "QL-001", "--json"],
        &["brief", "QL-001"],
        &["report", "QL-001", "--format", "json"],
        &["report", "QL-001", "-o", "-"],
        &["report", "--portfolio", "--index-only", "-o", "-"],
        &["export"],
        &["export", "--format", "json"],
        &["export", "--format", "json", "-o", "-"],
        &["property", "list"],
        &["property", "list", "--json"],
        &["property", "show", "QL-001"],
        &["visit", "list"],
        &["visit", "list", "--json"],
        &["instrument", "list"],
        &["settings", "show"],
        &["limits", "B32"],
    ];
    for args in listings {
        let (reader, writer) = std::io::pipe().unwrap();
        drop(reader);
        let out = std::process::Command::new(assert_cmd::cargo::cargo_bin("ohmtrail"))
            .env_remove("OHMTRAIL_DB")
            .arg("--db")
            .arg(&db)
            .args(*args)
            .current_dir(dir.path())
            .stdout(writer)
            .stderr(std::process::Stdio::piped())
            .output()
            .unwrap();
        let stderr = String::from_utf8_lossy(&out.stderr);
        assert_eq!(out.status.code(), Some(0), "{args:?}: {stderr}");
        assert!(stderr.is_empty(), "{args:?}: {stderr}");
    }
}
