//! Files from other tools: layouts (guessed, kept, used), spreadsheets written by an
//! independent writer (rust_xlsxwriter; an .ods built by hand as the zip of XML it is), the
//! common spellings of schedules, and the dry run. Driven through the real binary on temporary
//! databases. All data is invented.

use std::collections::HashMap;
use std::io::Write as _;
use std::path::{Path, PathBuf};

use assert_cmd::Command;
use ohmtrail::store::Store;
use rust_xlsxwriter::{ExcelDateTime, Format, Workbook};
use tempfile::TempDir;

fn bin(db: &Path) -> Command {
    let mut c = Command::cargo_bin("ohmtrail").unwrap();
    c.arg("--db").arg(db);
    c
}

/// Every stored test record as export writes it: one map of column to text per row.
fn exported(db: &Path) -> Vec<HashMap<String, String>> {
    let store = Store::open(db).unwrap();
    let mut out = Vec::new();
    ohmtrail::export::export_csv(&store, None, &mut out, None).unwrap();
    let mut r = csv::Reader::from_reader(out.as_slice());
    let head: Vec<String> = r.headers().unwrap().iter().map(String::from).collect();
    r.records()
        .map(|rec| {
            head.iter()
                .cloned()
                .zip(rec.unwrap().iter().map(String::from))
                .collect()
        })
        .collect()
}

fn row<'a>(rows: &'a [HashMap<String, String>], circuit: &str) -> &'a HashMap<String, String> {
    rows.iter()
        .find(|r| r["circuit"] == circuit)
        .unwrap_or_else(|| panic!("no circuit {circuit} in {rows:?}"))
}

fn write(dir: &Path, name: &str, text: &str) -> PathBuf {
    let p = dir.join(name);
    std::fs::write(&p, text).unwrap();
    p
}

/// The stderr lines of a refused import, less the closing summary line.
fn refused(out: std::process::Output) -> Vec<String> {
    assert_eq!(out.status.code(), Some(1), "not refused");
    let err = String::from_utf8(out.stderr).unwrap();
    let mut lines: Vec<String> = err.lines().map(String::from).collect();
    lines.pop();
    lines
}

/// An invented tool's export: its own headers, continuity in milliohms, insulation in
/// gigohms, trip times in seconds, its own word for "not tested", no property column.
const FOREIGN: &str = "\
Way Ref,Tested On,Board Name,Cont R1R2 (mΩ),Loop Zs,Ins LE (GΩ),Trip (s),Comment,Limit Zs
1,14.06.2025,DB1,450,0.69,1.2,0.025,,1.37
2,14.06.2025,DB1,1020,1.26,>2,0.031,landing light,7.28
3,14.06.2025,DB1,310,0.55,0.45,Untested,,1.15
";

const FOREIGN_LAYOUT: &str = r#"# An invented tool's export.
date_order = "day_first"
ignore = ["Limit Zs"]

[columns]
"Way Ref" = "circuit"
"Tested On" = "visit_date"
"Board Name" = "board"
"Cont R1R2 (mΩ)" = "r1r2_ohm"
"Loop Zs" = "zs_ohm"
"Ins LE (GΩ)" = "ir_le_mohm"
"Trip (s)" = "rcd_ms"
"Comment" = "note"

[units]
"Cont R1R2 (mΩ)" = "milliohm"
"Ins LE (GΩ)" = "gigohm"
"Trip (s)" = "s"

[values]
"untested" = "N/T"
"#;

/// A layout for an invented header set is kept by name, read back as written, imports the
/// file with its units converted, and the export of what it stored imports again unchanged.
#[test]
fn a_layout_for_a_foreign_header_set_round_trips() {
    let dir = TempDir::new().unwrap();
    let db = dir.path().join("t.db");
    let file = write(dir.path(), "wayfarer.csv", FOREIGN);
    let layout = write(dir.path(), "wayfarer.toml", FOREIGN_LAYOUT);
    bin(&db)
        .args(["layout", "save", "Wayfarer"])
        .arg(&layout)
        .assert()
        .success()
        .stdout("layout Wayfarer saved\n");
    let shown = bin(&db)
        .args(["layout", "show", "wayfarer"])
        .output()
        .unwrap();
    assert_eq!(String::from_utf8(shown.stdout).unwrap(), FOREIGN_LAYOUT);
    let list = bin(&db).args(["layout", "list"]).output().unwrap();
    assert!(String::from_utf8(list.stdout).unwrap().contains("Wayfarer"));

    bin(&db)
        .args([
            "import",
            "--layout",
            "Wayfarer",
            "--set",
            "property_ref=WF-007",
        ])
        .arg(&file)
        .assert()
        .success();
    let rows = exported(&db);
    assert_eq!(rows.len(), 3);
    // SI prefixes: 450 mΩ = 0.45 Ω, 1.2 GΩ = 1200 MΩ, 0.025 s = 25 ms.
    let one = row(&rows, "1");
    assert_eq!(one["property_ref"], "WF-007");
    assert_eq!(one["visit_date"], "2025-06-14");
    assert_eq!(one["r1r2_ohm"], "0.45");
    assert_eq!(one["zs_ohm"], "0.69");
    assert_eq!(one["ir_le_mohm"], "1200");
    assert_eq!(one["rcd_ms"], "25");
    // An over-range mark keeps its meaning through the unit: >2 GΩ is at least 2000 MΩ.
    assert_eq!(row(&rows, "2")["ir_le_mohm"], ">2000");
    assert_eq!(row(&rows, "2")["note"], "landing light");
    assert_eq!(row(&rows, "3")["ir_le_mohm"], "450");
    assert_eq!(row(&rows, "3")["rcd_ms"], "N/T");

    // What was stored exports in ohmtrail's own columns and imports back as nothing new.
    let again = dir.path().join("again.csv");
    bin(&db)
        .args(["export", "-o"])
        .arg(&again)
        .assert()
        .success();
    let out = bin(&db).arg("import").arg(&again).output().unwrap();
    assert!(out.status.success());
    assert!(
        String::from_utf8(out.stdout)
            .unwrap()
            .contains("nothing new")
    );

    bin(&db)
        .args(["layout", "delete", "Wayfarer"])
        .assert()
        .success();
    bin(&db)
        .args(["layout", "show", "Wayfarer"])
        .assert()
        .code(1);
}

/// Under a layout an error names the column as the file writes it, beside the column it fills.
#[test]
fn errors_under_a_layout_name_the_source_column() {
    let dir = TempDir::new().unwrap();
    let db = dir.path().join("t.db");
    let text = FOREIGN.replace("1,14.06.2025,DB1,450,0.69", "1,14.06.2025,DB1,450,OL");
    let file = write(dir.path(), "wayfarer.csv", &text);
    write(dir.path(), "wayfarer.toml", FOREIGN_LAYOUT);
    let out = bin(&db)
        .current_dir(dir.path())
        .args([
            "import",
            "--layout",
            "wayfarer.toml",
            "--set",
            "property_ref=WF-007",
        ])
        .arg("wayfarer.csv")
        .output()
        .unwrap();
    assert_eq!(
        refused(out),
        [
            "wayfarer.csv:2:5: \"Loop Zs\" (zs_ohm): \"OL\" is an over-range mark: only insulation resistance (ir_ll_mohm, ir_le_mohm) may be over range"
        ]
    );
    // A column the layout does not know is refused by its own name, not guessed.
    let text = FOREIGN.replace("Comment,", "Remarks,");
    write(dir.path(), "other.csv", &text);
    let out = bin(&db)
        .current_dir(dir.path())
        .args([
            "import",
            "--layout",
            "wayfarer.toml",
            "--set",
            "property_ref=WF-007",
        ])
        .arg("other.csv")
        .output()
        .unwrap();
    assert_eq!(
        refused(out),
        [
            "other.csv:1:8: column \"Remarks\" is not in the layout: map it in [columns] or list it in ignore"
        ]
    );
    assert!(!file.with_extension("rejected.csv").exists());
}

/// The header set of the issue: every proposal shown with its score and basis, Max Zs never
/// taken for Zs, and a layout with an open question is not saved.
#[test]
fn guess_shows_every_mapping_and_never_maps_a_limit() {
    let dir = TempDir::new().unwrap();
    let db = dir.path().join("t.db");
    let file = write(
        dir.path(),
        "sched.csv",
        "Circuit No,Date,R1+R2,Zs,Max Zs,IR L-E,IR L/L,RCD x1,Ze,Ipf,Cct Descr\n1,14/06/2025,0.45,0.69,1.37,>999,>999,21,0.24,1.2,Sockets\n",
    );
    let out = bin(&db)
        .args(["layout", "guess", "--json"])
        .arg(&file)
        .output()
        .unwrap();
    assert!(out.status.success());
    let v: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    let by = |h: &str| {
        v.as_array()
            .unwrap()
            .iter()
            .find(|r| r["source"] == h)
            .unwrap()
            .clone()
    };
    for (h, c) in [
        ("Circuit No", "circuit"),
        ("Date", "visit_date"),
        ("R1+R2", "r1r2_ohm"),
        ("Zs", "zs_ohm"),
        ("IR L-E", "ir_le_mohm"),
        ("IR L/L", "ir_ll_mohm"),
        ("RCD x1", "rcd_ms"),
        ("Ze", "ze_ohm"),
    ] {
        assert_eq!(by(h)["outcome"], "mapped", "{h}");
        assert_eq!(by(h)["column"], c, "{h}");
        assert!(by(h)["basis"].as_str().unwrap().len() > 5);
    }
    assert_eq!(by("Max Zs")["outcome"], "unmapped");
    assert!(by("Max Zs")["basis"].as_str().unwrap().contains("a limit"));
    assert_eq!(by("Ipf")["column"], "pfc_ka");
    assert_eq!(
        by("Cct Descr")["outcome"],
        "question",
        "{}",
        by("Cct Descr")
    );
    // The table says the same in words, and --save refuses while a question is open.
    let out = bin(&db)
        .args(["layout", "guess", "--save", "sched"])
        .arg(&file)
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(1));
    let text = String::from_utf8(out.stdout).unwrap();
    assert!(
        text.contains("not mapped (put in ignore): \"Max Zs\"\n"),
        "{text}"
    );
    assert!(
        String::from_utf8(out.stderr)
            .unwrap()
            .contains("not saved: 1 question(s) open")
    );
}

/// Twenty-odd spellings of schedules, each accepted (and stored as the export shows) or
/// refused with its line and column. N/R, N/A and N/T are kept apart; over range is a lower
/// bound on insulation only (common practice, no source).
#[test]
fn common_spellings_are_accepted_or_refused_with_their_position() {
    let dir = TempDir::new().unwrap();
    let db = dir.path().join("t.db");
    let head = "property_ref,board,circuit,visit_date,device,zs_ohm,ir_ll_mohm,ir_le_mohm,rcd_ms\n";
    // Accepted: circuit, then the cells, then what export gives back for the column named.
    let accepted: &[(&str, &str, &str, &str)] = &[
        (
            "1",
            "SP-1,DB1,1,14/06/2025,B32,N/R,999+,>999,21",
            "zs_ohm",
            "",
        ),
        (
            "2",
            "SP-1,DB1,2,14.06.2025,B32,N/A,>999,200,21",
            "zs_ohm",
            "N/A",
        ),
        (
            "3",
            "SP-1,DB1,3,14-06-2025,B32,0.5,200,200,N/T",
            "rcd_ms",
            "N/T",
        ),
        (
            "4",
            "SP-1,DB1,4,14 Jun 2025,B32,0.5,999+,200,21",
            "ir_ll_mohm",
            ">999",
        ),
        (
            "5",
            "SP-1,DB1,5,2025-06-14,B32,0.5,> 999,200,21",
            "ir_ll_mohm",
            ">999",
        ),
        (
            "6",
            "SP-1,DB1,6,14/06/2025,BS 3871 Type 2 32A,0.5,200,200,n/a",
            "device",
            "BS 3871 type 2 32A",
        ),
        (
            "7",
            "SP-1,DB1,7,14/06/2025,BS 1361 30A,0.5,200,200,N/A",
            "device",
            "BS 1361 30A",
        ),
        (
            "8",
            "SP-1,DB1,8,14/06/2025,B6,0.5,200,n/t,21",
            "ir_le_mohm",
            "N/T",
        ),
        (
            "9",
            "SP-1,DB1,9,14-Jun-2025,B6,0.5,200,999 +,21",
            "ir_le_mohm",
            ">999",
        ),
        ("10", "SP-1,DB1,10,14/06/2025,B6,-,200,200,21", "zs_ohm", ""),
    ];
    let mut text = head.to_string();
    for (_, cells, _, _) in accepted {
        text.push_str(cells);
        text.push('\n');
    }
    let file = write(dir.path(), "good.csv", &text);
    bin(&db).arg("import").arg(&file).assert().success();
    let rows = exported(&db);
    for (circuit, _, column, want) in accepted {
        assert_eq!(
            row(&rows, circuit)[*column],
            *want,
            "circuit {circuit} {column}"
        );
        assert_eq!(
            row(&rows, circuit)["visit_date"],
            "2025-06-14",
            "circuit {circuit}"
        );
    }
    // Not recorded, not applicable and not tested are three different things.
    assert_ne!(row(&rows, "1")["zs_ohm"], row(&rows, "2")["zs_ohm"]);
    assert_ne!(row(&rows, "2")["zs_ohm"], row(&rows, "3")["rcd_ms"]);

    let bad = "\
property_ref,board,circuit,visit_date,device,zs_ohm,ir_ll_mohm,ir_le_mohm,rcd_ms
SP-2,DB1,1,14/06/2025,B32,OL,200,200,21
SP-2,DB1,2,14/06/2025,B32,999+,200,200,21
SP-2,DB1,3,14/06/2025,B32,>999,200,200,21
SP-2,DB1,4,14/06/2025,B32,0.5,OL,200,21
SP-2,DB1,5,14/06/2025,B32,0.5,200,∞,21
SP-2,DB1,6,14/06/2025,B32,0.5,200,200,∞
SP-2,DB1,7,06/14/2025,B32,0.5,200,200,21
SP-2,DB1,8,14.06.25,B32,0.5,200,200,21
SP-2,DB1,9,14/06/2025,BS 3871 32A,0.5,200,200,21
SP-2,DB1,10,14/06/2025,BS 1361 31A,0.5,200,200,21
SP-2,DB1,11,14/06/2025,B32,0.5,200,200,N/X
SP-2,DB1,12,14.06-2025,B32,0.5,200,200,21
";
    write(dir.path(), "bad.csv", bad);
    let out = bin(&db)
        .current_dir(dir.path())
        .arg("import")
        .arg("bad.csv")
        .output()
        .unwrap();
    let over = "is an over-range mark: only insulation resistance (ir_ll_mohm, ir_le_mohm) may be over range";
    let no_figure = "is over range but gives no figure: write the instrument's top of range as >999 or 999+, or give insulation_top_mohm in a layout";
    assert_eq!(
        refused(out),
        [
            format!("bad.csv:2:6: zs_ohm: \"OL\" {over}"),
            format!("bad.csv:3:6: zs_ohm: \"999+\" {over}"),
            format!("bad.csv:4:6: zs_ohm: \">999\" {over}"),
            format!("bad.csv:5:7: ir_ll_mohm: \"OL\" {no_figure}"),
            format!("bad.csv:6:8: ir_le_mohm: \"∞\" {no_figure}"),
            format!("bad.csv:7:9: rcd_ms: \"∞\" {over}"),
            "bad.csv:8:4: visit_date: \"06/14/2025\" reads only month first (US order): write the day first (14/06/2025) or as ISO 2025-06-14".to_string(),
            "bad.csv:9:4: visit_date: \"14.06.25\" has a two-digit year: write all four digits".to_string(),
            "bad.csv:10:5: device: unknown protective device \"BS 3871 32A\": expected a breaker curve and rating such as B16, C32, D6 or RCBO B20, an older breaker such as BS 3871 type 2 30A, or a fuse standard and rating such as BS 88-3 32A, BS 88-2 32A, BS 1361 30A, BS 3036 15A, BS 1362 13A".to_string(),
            "bad.csv:11:5: device: BS 1361 31A is not a standard rating: known ratings are 5, 15, 20, 30, 45, 60, 80, 100 A".to_string(),
            "bad.csv:12:9: rcd_ms: \"N/X\" is not a number: expected a time in ms such as 25".to_string(),
            "bad.csv:13:4: visit_date: \"14.06-2025\" is not a date: expected YYYY-MM-DD or DD/MM/YYYY (or DD.MM.YYYY, 14 Jun 2025)".to_string(),
        ]
    );

    // With the instrument's top of range in a layout, OL and ∞ on insulation are at least it,
    // and a month-first source is read month first.
    let layout = write(
        dir.path(),
        "us.toml",
        "date_order = \"month_first\"\ninsulation_top_mohm = 500\n[columns]\nproperty_ref = \"property_ref\"\nboard = \"board\"\ncircuit = \"circuit\"\nvisit_date = \"visit_date\"\nir_le_mohm = \"ir_le_mohm\"\n",
    );
    let file = write(
        dir.path(),
        "us.csv",
        "property_ref,board,circuit,visit_date,ir_le_mohm\nSP-3,DB1,1,06/14/2025,OL\nSP-3,DB1,2,06/14/2025,∞\n",
    );
    bin(&db)
        .args(["import", "--layout"])
        .arg(&layout)
        .arg(&file)
        .assert()
        .success();
    let rows: Vec<_> = exported(&db)
        .into_iter()
        .filter(|r| r["property_ref"] == "SP-3")
        .collect();
    assert_eq!(rows.len(), 2);
    for r in &rows {
        assert_eq!(r["ir_le_mohm"], ">500");
        assert_eq!(r["visit_date"], "2025-06-14");
    }
}

/// A workbook as another program writes it (rust_xlsxwriter, not the reader's crate): a first
/// sheet of notes, then the results under a two-row header with a merged group cell, dates as
/// date cells and as bare serial numbers, numbers with display formats, and empty rows.
fn workbook(path: &Path, bad_zs: bool) {
    let mut book = Workbook::new();
    let notes = book.add_worksheet();
    notes.set_name("Notes").unwrap();
    notes
        .write_string(0, 0, "Invented schedule for tests")
        .unwrap();
    let s = book.add_worksheet();
    s.set_name("Results").unwrap();
    let merged = Format::new();
    for (c, h) in ["Property", "DB", "Cct", "Date", "Zs"].iter().enumerate() {
        s.write_string(0, c as u16, *h).unwrap();
    }
    s.merge_range(0, 5, 0, 6, "IR (MΩ)", &merged).unwrap();
    s.write_string(1, 5, "L-L").unwrap();
    s.write_string(1, 6, "L-E").unwrap();
    let date = Format::new().set_num_format("dd/mm/yyyy");
    let two = Format::new().set_num_format("0.00");
    // Row 3: a date cell. Row 4: empty. Row 5: the serial number of the same day, unformatted
    // (45822 is 14 June 2025 in Excel's 1900 system, as Excel itself shows it). Row 6: text.
    s.write_string(2, 0, "XL-1").unwrap();
    s.write_string(2, 1, "DB1").unwrap();
    s.write_number(2, 2, 1).unwrap();
    s.write_datetime_with_format(2, 3, ExcelDateTime::from_ymd(2025, 6, 14).unwrap(), &date)
        .unwrap();
    s.write_number_with_format(2, 4, 0.691, &two).unwrap();
    s.write_string(2, 5, ">999").unwrap();
    s.write_number(2, 6, 250).unwrap();
    s.write_string(4, 0, "XL-1").unwrap();
    s.write_string(4, 1, "DB1").unwrap();
    s.write_number(4, 2, 2).unwrap();
    s.write_number(4, 3, 45822).unwrap();
    if bad_zs {
        s.write_string(4, 4, "OL").unwrap();
    } else {
        s.write_number(4, 4, 1.26).unwrap();
    }
    s.write_string(4, 5, "999+").unwrap();
    s.write_string(4, 6, "N/T").unwrap();
    s.write_string(5, 0, "XL-1").unwrap();
    s.write_string(5, 1, "DB1").unwrap();
    s.write_string(5, 2, "3").unwrap();
    s.write_string(5, 3, "14.06.2025").unwrap();
    s.write_string(5, 4, "N/A").unwrap();
    s.write_number(5, 5, 150).unwrap();
    s.write_number(5, 6, 150).unwrap();
    book.save(path).unwrap();
}

#[test]
fn a_workbook_reads_by_sheet_with_serial_dates_merged_headers_and_empty_rows() {
    let dir = TempDir::new().unwrap();
    let db = dir.path().join("t.db");
    let file = dir.path().join("book.xlsx");
    workbook(&file, false);
    // The merged group heads the two columns under it.
    let out = bin(&db)
        .args(["layout", "guess", "--sheet", "Results", "--json"])
        .arg(&file)
        .output()
        .unwrap();
    let v: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    let sources: Vec<&str> = v
        .as_array()
        .unwrap()
        .iter()
        .map(|r| r["source"].as_str().unwrap())
        .collect();
    assert_eq!(
        sources,
        [
            "Property",
            "DB",
            "Cct",
            "Date",
            "Zs",
            "IR (MΩ) L-L",
            "IR (MΩ) L-E"
        ]
    );
    assert_eq!(v[5]["column"], "ir_ll_mohm");
    assert_eq!(v[6]["column"], "ir_le_mohm");
    assert_eq!(v[5]["position"], "F");
    bin(&db)
        .args(["layout", "guess", "--sheet", "2", "--save", "xl"])
        .arg(&file)
        .assert()
        .success();
    // The first sheet is the notes: its header is not a schedule's.
    bin(&db)
        .args(["import", "--layout", "xl"])
        .arg(&file)
        .assert()
        .code(1);
    bin(&db)
        .args(["import", "--layout", "xl", "--sheet", "Results"])
        .arg(&file)
        .assert()
        .success();
    let rows = exported(&db);
    assert_eq!(rows.len(), 3, "the empty row is skipped");
    for r in &rows {
        assert_eq!(r["visit_date"], "2025-06-14", "{r:?}");
    }
    // The stored value is the cell's, not its display (0.691 shown as 0.69).
    assert_eq!(row(&rows, "1")["zs_ohm"], "0.691");
    assert_eq!(row(&rows, "1")["ir_ll_mohm"], ">999");
    assert_eq!(row(&rows, "1")["ir_le_mohm"], "250");
    assert_eq!(row(&rows, "2")["ir_ll_mohm"], ">999");
    assert_eq!(row(&rows, "2")["ir_le_mohm"], "N/T");
    assert_eq!(row(&rows, "3")["zs_ohm"], "N/A");

    // A bad cell is placed by sheet, column letter and row, and named as the sheet heads it.
    let db2 = dir.path().join("t2.db");
    let bad = dir.path().join("bad.xlsx");
    workbook(&bad, true);
    bin(&db2)
        .args(["layout", "guess", "--sheet", "Results", "--save", "xl"])
        .arg(&bad)
        .assert()
        .success();
    let out = bin(&db2)
        .current_dir(dir.path())
        .args(["import", "--layout", "xl", "--sheet", "Results", "bad.xlsx"])
        .output()
        .unwrap();
    assert_eq!(
        refused(out),
        [
            "bad.xlsx:Results!E5: \"Zs\" (zs_ohm): \"OL\" is an over-range mark: only insulation resistance (ir_ll_mohm, ir_le_mohm) may be over range"
        ]
    );
}

/// An OpenDocument spreadsheet, built by hand: no independent .ods writer was found among
/// the registry's crates, and the format is a zip of XML (OASIS OpenDocument 1.2, part 1,
/// section 9 for tables; part 3 for the package).
fn ods(path: &Path, rows: &[&[(&str, &str)]]) {
    let mut table = String::new();
    for r in rows {
        table.push_str("<table:table-row>");
        for (kind, v) in *r {
            match *kind {
                "float" => table.push_str(&format!(
                    "<table:table-cell office:value-type=\"float\" office:value=\"{v}\"><text:p>{v}</text:p></table:table-cell>"
                )),
                "date" => table.push_str(&format!(
                    "<table:table-cell office:value-type=\"date\" office:date-value=\"{v}\"><text:p>{v}</text:p></table:table-cell>"
                )),
                "empty" => table.push_str("<table:table-cell/>"),
                _ => table.push_str(&format!(
                    "<table:table-cell office:value-type=\"string\"><text:p>{v}</text:p></table:table-cell>"
                )),
            }
        }
        table.push_str("</table:table-row>");
    }
    let content = format!(
        r#"<?xml version="1.0" encoding="UTF-8"?>
<office:document-content xmlns:office="urn:oasis:names:tc:opendocument:xmlns:office:1.0" xmlns:table="urn:oasis:names:tc:opendocument:xmlns:table:1.0" xmlns:text="urn:oasis:names:tc:opendocument:xmlns:text:1.0" office:version="1.2"><office:body><office:spreadsheet><table:table table:name="Visits">{table}</table:table></office:spreadsheet></office:body></office:document-content>"#
    );
    let manifest = r#"<?xml version="1.0" encoding="UTF-8"?>
<manifest:manifest xmlns:manifest="urn:oasis:names:tc:opendocument:xmlns:manifest:1.0" manifest:version="1.2"><manifest:file-entry manifest:full-path="/" manifest:media-type="application/vnd.oasis.opendocument.spreadsheet"/><manifest:file-entry manifest:full-path="content.xml" manifest:media-type="text/xml"/></manifest:manifest>"#;
    let f = std::fs::File::create(path).unwrap();
    let mut z = zip::ZipWriter::new(f);
    let stored =
        zip::write::SimpleFileOptions::default().compression_method(zip::CompressionMethod::Stored);
    let deflated = zip::write::SimpleFileOptions::default()
        .compression_method(zip::CompressionMethod::Deflated);
    z.start_file("mimetype", stored).unwrap();
    z.write_all(b"application/vnd.oasis.opendocument.spreadsheet")
        .unwrap();
    z.start_file("META-INF/manifest.xml", deflated).unwrap();
    z.write_all(manifest.as_bytes()).unwrap();
    z.start_file("content.xml", deflated).unwrap();
    z.write_all(content.as_bytes()).unwrap();
    z.finish().unwrap();
}

#[test]
fn an_ods_sheet_in_ohmtrails_own_columns_imports_with_sheet_positions() {
    let dir = TempDir::new().unwrap();
    let db = dir.path().join("t.db");
    let head: &[(&str, &str)] = &[
        ("s", "property_ref"),
        ("s", "board"),
        ("s", "circuit"),
        ("s", "visit_date"),
        ("s", "r1r2_ohm"),
        ("s", "ir_le_mohm"),
    ];
    let good: &[(&str, &str)] = &[
        ("s", "OD-1"),
        ("s", "DB1"),
        ("float", "1"),
        ("date", "2025-06-14"),
        ("float", "0.45"),
        ("s", "999+"),
    ];
    let blank: &[(&str, &str)] = &[("empty", ""); 6];
    let bad: &[(&str, &str)] = &[
        ("s", "OD-1"),
        ("s", "DB1"),
        ("float", "2"),
        ("date", "2025-06-14"),
        ("s", "0.4x"),
        ("float", "200"),
    ];
    let path = dir.path().join("visits.ods");
    ods(&path, &[head, good, blank, good]);
    bin(&db).arg("import").arg(&path).assert().success();
    let rows = exported(&db);
    assert_eq!(rows.len(), 1);
    assert_eq!(rows[0]["visit_date"], "2025-06-14");
    assert_eq!(rows[0]["r1r2_ohm"], "0.45");
    assert_eq!(rows[0]["ir_le_mohm"], ">999");

    ods(&dir.path().join("bad.ods"), &[head, good, blank, bad]);
    let out = bin(&db)
        .current_dir(dir.path())
        .args(["import", "bad.ods"])
        .output()
        .unwrap();
    assert_eq!(
        refused(out),
        [
            "bad.ods:Visits!E4: r1r2_ohm: \"0.4x\" is not a number: expected a resistance in ohms such as 0.35"
        ]
    );
}

/// A dry run shows the mapping and the rows as they would be stored and leaves the database
/// as it was, byte for byte, even with a layout read from it.
#[test]
fn check_shows_the_rows_and_writes_nothing() {
    let dir = TempDir::new().unwrap();
    let db = dir.path().join("t.db");
    let file = write(dir.path(), "wayfarer.csv", FOREIGN);
    let layout = write(dir.path(), "wayfarer.toml", FOREIGN_LAYOUT);
    bin(&db)
        .args(["layout", "save", "wayfarer"])
        .arg(&layout)
        .assert()
        .success();
    let bytes = |p: &Path| std::fs::read(p).ok();
    let wal = db.with_extension("db-wal");
    let before = (bytes(&db), bytes(&wal));
    let out = bin(&db)
        .args([
            "import",
            "--check",
            "--layout",
            "wayfarer",
            "--set",
            "property_ref=WF-007",
        ])
        .arg(&file)
        .output()
        .unwrap();
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let text = String::from_utf8(out.stdout).unwrap();
    assert!(text.contains("dry run, nothing written"));
    assert!(text.contains("\"Cont R1R2 (mΩ)\" -> r1r2_ohm"), "{text}");
    assert!(text.contains("\"Limit Zs\" -> (ignored)"), "{text}");
    assert!(text.contains("r1r2_ohm     \"450\" -> 0.45"), "{text}");
    assert!(
        text.contains("rcd_ms       \"Untested\" -> N/T (not tested)"),
        "{text}"
    );
    assert!(text.contains("3 rows read, 0 with errors"), "{text}");
    assert_eq!((bytes(&db), bytes(&wal)), before);
    assert_eq!(exported(&db).len(), 0);
}

/// A schedule's other columns under the trade's own headers: `layout guess` maps each with
/// nothing left to ask, and through the layout (with the source's own words for a pass and a
/// fail in `[values]`) ticks, crosses and those words are stored as polarity and the RCD's
/// test button, beside the test voltage, points, reference method, breaking capacity and AFDD.
/// A bad test voltage is refused at its line under the source's header. Tick and cross for
/// correct and incorrect: common practice, no source; 250/500/1000 V: BS 7671 Table 64
/// (from memory).
#[test]
fn schedule_columns_guessed_and_read_through_a_layout() {
    let dir = TempDir::new().unwrap();
    let db = dir.path().join("t.db");
    let text = "\
Cct,Date,Board,Zs,Polarity,Test voltage (V),IR L-E,RCD test button,Points,Ref Method,Breaking capacity kA,AFDD
1,14/06/2025,DB1,0.69,✓,500,>999,✓,8,C,6,no
2,14/06/2025,DB1,1.26, ✗ ,250,45,✗,4,A,10,yes
3,14/06/2025,DB1,0.55,Pass,500,N/T,Fail,,C,6,
";
    let file = write(dir.path(), "sched.csv", text);
    let proposed = dir.path().join("proposed.toml");
    let out = bin(&db)
        .args(["layout", "guess", "-o"])
        .arg(&proposed)
        .arg(&file)
        .output()
        .unwrap();
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let mut layout = std::fs::read_to_string(&proposed).unwrap();
    for (h, c) in [
        ("Polarity", "polarity"),
        ("Test voltage (V)", "ir_test_v"),
        ("RCD test button", "rcd_button"),
        ("Points", "points"),
        ("Ref Method", "ref_method"),
        ("Breaking capacity kA", "breaking_ka"),
        ("AFDD", "afdd"),
    ] {
        assert!(
            layout.contains(&format!("\n\"{h}\" = \"{c}\"  #")),
            "{h} -> {c}:\n{layout}"
        );
    }
    assert!(!layout.contains("QUESTION"), "{layout}");
    layout.push_str("\n[values]\n\"Pass\" = \"✓\"\n\"Fail\" = \"✗\"\n");
    let layout_file = write(dir.path(), "sched.toml", &layout);
    bin(&db)
        .args(["layout", "save", "Sched"])
        .arg(&layout_file)
        .assert()
        .success();
    bin(&db)
        .args([
            "import",
            "--layout",
            "Sched",
            "--set",
            "property_ref=SC-001",
        ])
        .arg(&file)
        .assert()
        .success();
    let rows = exported(&db);
    let one = row(&rows, "1");
    assert_eq!(one["polarity"], "correct");
    assert_eq!(one["ir_test_v"], "500");
    assert_eq!(one["rcd_button"], "operates");
    assert_eq!(one["points"], "8");
    assert_eq!(one["ref_method"], "C");
    assert_eq!(one["breaking_ka"], "6");
    assert_eq!(one["afdd"], "no");
    let two = row(&rows, "2");
    assert_eq!(two["polarity"], "incorrect");
    assert_eq!(two["ir_test_v"], "250");
    assert_eq!(two["rcd_button"], "failed");
    assert_eq!(two["afdd"], "yes");
    let three = row(&rows, "3");
    assert_eq!(three["polarity"], "correct");
    assert_eq!(three["rcd_button"], "failed");
    assert_eq!(three["ir_le_mohm"], "N/T");
    assert_eq!(three["points"], "");

    // 400 V is no test voltage of Table 64: refused at its line, named as the file names it.
    let bad = write(
        dir.path(),
        "bad.csv",
        &text.replace(
            "2,14/06/2025,DB1,1.26, ✗ ,250",
            "2,14/06/2025,DB1,1.26, ✗ ,400",
        ),
    );
    let lines = refused(
        bin(&db)
            .args([
                "import",
                "--layout",
                "Sched",
                "--set",
                "property_ref=SC-002",
            ])
            .arg(&bad)
            .output()
            .unwrap(),
    );
    assert_eq!(lines.len(), 1, "{lines:?}");
    assert!(lines[0].contains("bad.csv:3:6"), "{lines:?}");
    assert!(lines[0].contains("Test voltage (V)"), "{lines:?}");
    assert!(lines[0].contains("250, 500 or 1000"), "{lines:?}");
}
