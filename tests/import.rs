//! The visit-file import and export, driven through the real binary on temporary databases.
//! Expected messages are the exact `FILE:LINE:COLUMN: message` lines, so a wrong line or
//! column number fails the test. Fixture data is invented (the Sampleton portfolio).

use std::path::{Path, PathBuf};
use std::process::Command as StdCommand;

use assert_cmd::Command;
use ohmtrail::store::Store;
use tempfile::TempDir;

fn fixtures() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("fixtures")
}

fn bin(db: &Path) -> Command {
    let mut c = Command::cargo_bin("ohmtrail").unwrap();
    c.arg("--db").arg(db);
    c
}

/// A database holding the Sampleton visits and observations.
fn baseline(dir: &TempDir) -> PathBuf {
    let db = dir.path().join("base.db");
    bin(&db)
        .arg("import")
        .arg(fixtures().join("visits/sampleton.csv"))
        .arg(fixtures().join("visits/sampleton-observations.csv"))
        .assert()
        .success();
    db
}

/// Everything in the database that an import could change: row counts and a full export.
fn dump(db: &Path) -> String {
    let store = Store::open(db).unwrap();
    let mut out = format!("{:?}\n", store.row_counts().unwrap());
    let mut visits = Vec::new();
    let mut obs = Vec::new();
    ohmtrail::export::export_csv(&store, None, &mut visits, Some(&mut obs)).unwrap();
    out.push_str(&String::from_utf8(visits).unwrap());
    out.push_str(&String::from_utf8(obs).unwrap());
    out
}

fn count(db: &Path, table: &str) -> i64 {
    let store = Store::open(db).unwrap();
    store
        .row_counts()
        .unwrap()
        .into_iter()
        .find(|(t, _)| *t == table)
        .unwrap()
        .1
}

/// Import `file` (run from `dir`, so messages name it as given) and check that it is refused
/// with exactly `expected` on stderr and that the database is unchanged.
fn refuse_in(dir: &Path, file: &str, expected: &[&str]) {
    let tmp = TempDir::new().unwrap();
    let db = baseline(&tmp);
    let before = dump(&db);
    let out = bin(&db)
        .current_dir(dir)
        .arg("import")
        .arg(file)
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(1), "{file} was not refused");
    let stderr = String::from_utf8(out.stderr).unwrap();
    let lines: Vec<&str> = stderr.lines().collect();
    let (errors, last) = lines.split_at(lines.len() - 1);
    assert_eq!(errors, expected, "{file}");
    // Past the cap the last line counts the rest: "FILE: and 50 more errors".
    let more = expected
        .last()
        .and_then(|l| l.strip_suffix(" more errors"))
        .and_then(|l| l.rsplit(' ').next())
        .and_then(|n| n.parse::<usize>().ok());
    let n = match more {
        Some(more) => ohmtrail::import::ERROR_CAP + more,
        None => expected.len(),
    };
    let plural = if n == 1 { "" } else { "s" };
    assert_eq!(
        last[0],
        format!("ohmtrail: error: {file}: {n} error{plural}, nothing written from this file")
    );
    assert_eq!(dump(&db), before, "{file} changed the database");
}

fn refuse(file: &str, expected: &[&str]) {
    refuse_in(&fixtures().join("bad"), file, expected);
}

macro_rules! bad {
    ($($name:ident: $file:literal => [$($line:expr),+ $(,)?];)+) => {
        $(
            #[test]
            fn $name() {
                refuse($file, &[$($line),+]);
            }
        )+
    };
}

bad! {
    empty_file: "empty.csv" => ["empty.csv:1:1: the file is empty: expected a header row naming property_ref, board, circuit and visit_date (or property_ref, visit_date, code and text for observations)"];
    header_only: "header_only.csv" => ["header_only.csv:2:1: no rows under the header: nothing to import"];
    bom_does_not_shift_columns: "bom.csv" => ["bom.csv:3:6: r1r2_ohm: \"0.4x\" is not a number: expected a resistance in ohms such as 0.35"];
    crlf_line_numbers: "crlf.csv" => ["crlf.csv:4:7: zs_ohm: \"-0.5\" is negative: expected zero or more"];
    blank_lines_are_counted: "blank_lines_inside.csv" => ["blank_lines_inside.csv:6:5: zs_ohm: \"x\" is not a number: expected a resistance in ohms such as 0.35"];
    trailing_empty_lines: "trailing_empty_line.csv" => ["trailing_empty_line.csv:3:9: rcd_ms: \"NaN\" is not a reading: expected a finite number"];
    ragged_short_row: "ragged_short.csv" => ["ragged_short.csv:3:7: row has 6 fields but the header has 10: check for a missing or extra comma, or quote a value that contains one"];
    ragged_long_row: "ragged_long.csv" => ["ragged_long.csv:3:11: row has 11 fields but the header has 10: check for a missing or extra comma, or quote a value that contains one"];
    quoted_commas_keep_columns: "quoted_commas.csv" => ["quoted_commas.csv:3:6: r1r2_ohm: \"0,95\" has a decimal comma: pass --decimal-comma when the file uses them"];
    header_with_spaces: "header_spaces.csv" => ["header_spaces.csv:1:4: unknown column \"visit date\": did you mean visit_date? (or pass --ignore-unknown)"];
    duplicated_column: "duplicated_column.csv" => ["duplicated_column.csv:1:7: zs_ohm: duplicated column: already given as column 5"];
    non_utf8_cell: "non_utf8.csv" => ["non_utf8.csv:3:10: note: not UTF-8 text (byte 0xE9 at offset 3 in the cell): save the file as UTF-8"];
    non_utf8_header: "non_utf8_header.csv" => ["non_utf8_header.csv:1:5: column name is not UTF-8 text: save the file as UTF-8"];
    unit_mismatch: "unit_mismatch.csv" => ["unit_mismatch.csv:2:6: r1r2_ohm: \"0.35 MΩ\" has unit MΩ but the column is in ohms"];
    time_unit_in_ohm_column: "wrong_unit_ms.csv" => ["wrong_unit_ms.csv:2:7: zs_ohm: \"25ms\" has unit ms but the column is in ohms"];
    decimal_comma_without_flag: "decimal_comma.csv" => ["decimal_comma.csv:2:6: r1r2_ohm: \"0,42\" has a decimal comma: pass --decimal-comma when the file uses them"];
    negative_resistance: "negative.csv" => ["negative.csv:2:6: r1r2_ohm: \"-0.42\" is negative: expected zero or more"];
    nan: "nan.csv" => ["nan.csv:2:7: zs_ohm: \"NaN\" is not a reading: expected a finite number"];
    infinite: "infinite.csv" => ["infinite.csv:2:8: ir_le_mohm: \"inf\" is not a reading: expected a finite number"];
    exponent: "exponent.csv" => ["exponent.csv:2:9: rcd_ms: \"1e3\" is not a number: expected a time in ms such as 25"];
    us_order_date: "us_date.csv" => ["us_date.csv:2:4: visit_date: \"06/14/2023\" reads only month first (US order): write the day first (14/06/2023) or as ISO 2023-06-14"];
    impossible_date: "impossible_date.csv" => ["impossible_date.csv:2:4: visit_date: \"31/02/2023\" is not a date in the calendar"];
    short_year: "short_year.csv" => ["short_year.csv:2:4: visit_date: \"14/06/23\" has a two-digit year: write all four digits"];
    unknown_column: "unknown_column.csv" => ["unknown_column.csv:1:5: unknown column \"colour\": expected one of property_ref, address, board, earthing, fed_from, circuit, description, ring, device, rcd_ma, rcd_type, rcd_delay, live_mm2, cpc_mm2, length_m, insulation, wiring_type, ref_method, points, breaking_ka, afdd, rcd_id, visit_date, inspector, instrument, ambient_c, ze_ohm, zdb_ohm, submain_r1r2_ohm, pfc_ka, u0_v, ra_ohm, bonding_csa_mm2, bonding_water, bonding_gas, bonding_other, report_ref, outcome, interval_months, extent, limitations, ring_r1_ohm, ring_rn_ohm, ring_r2_ohm, r1r2_ohm, r2_ohm, r1rn_ohm, zs_ohm, polarity, ir_test_v, ir_ll_mohm, ir_le_mohm, rcd_ms, rcd_5x_ms, rcd_button, note (or pass --ignore-unknown)"];
    missing_required_column: "missing_required.csv" => ["missing_required.csv:1:1: missing required column visit_date: a visit file needs property_ref, board, circuit, visit_date"];
    unknown_device: "unknown_device.csv" => ["unknown_device.csv:2:5: device: unknown protective device \"X32\": expected a breaker curve and rating such as B16, C32, D6 or RCBO B20, an older breaker such as BS 3871 type 2 30A, or a fuse standard and rating such as BS 88-3 32A, BS 88-2 32A, BS 1361 30A, BS 3036 15A, BS 1362 13A"];
    non_standard_rating: "non_standard_rating.csv" => ["non_standard_rating.csv:2:5: device: B33 is not a standard rating: known ratings are 3, 6, 10, 16, 20, 25, 32, 40, 50, 63, 80, 100, 125 A"];
    over_range_outside_insulation: "over_range_in_ohms.csv" => ["over_range_in_ohms.csv:2:7: zs_ohm: \">2\" is an over-range mark: only insulation resistance (ir_ll_mohm, ir_le_mohm) may be over range"];
    limitation_in_device: "lim_in_device.csv" => ["lim_in_device.csv:2:5: device: LIM (a limitation) applies only to measured readings, not to this column"];
    missing_board: "missing_board.csv" => ["missing_board.csv:3:2: board: missing: every row needs one"];
    bad_earthing: "bad_earthing.csv" => ["bad_earthing.csv:2:3: earthing: unknown earthing arrangement \"TN-X\": expected TN-S, TN-C-S or TT"];
    bad_ring: "bad_ring.csv" => ["bad_ring.csv:2:4: ring: unknown circuit kind \"spur\": expected ring or radial (yes or no)"];
    bad_rcd_rating: "bad_rcd_rating.csv" => ["bad_rcd_rating.csv:2:4: rcd_ma: 25 mA is not a rated residual current: expected one of 10, 30, 100, 300, 500, 1000"];
    bad_csa: "bad_csa.csv" => ["bad_csa.csv:2:4: live_mm2: live_mm2 0 mm² is not a conductor size: expected a positive size such as 1.5, 2.5 or 6"];
    ambient_out_of_range: "ambient_out_of_range.csv" => ["ambient_out_of_range.csv:2:5: ambient_c: ambient temperature \"75\" is out of range: expected -40 to 60 °C"];
    every_fault_in_a_row: "several_errors_in_a_row.csv" => [
        "several_errors_in_a_row.csv:2:4: visit_date: \"2024-13-01\" is not a date in the calendar",
        "several_errors_in_a_row.csv:2:6: r1r2_ohm: \"abc\" is not a number: expected a resistance in ohms such as 0.35",
        "several_errors_in_a_row.csv:2:8: ir_le_mohm: \"-3\" is negative: expected zero or more",
    ];
    conflict_shows_both_values: "conflict.csv" => [
        "conflict.csv:2:5: r1r2_ohm: conflicts with the stored record for SMP-001 DB1/1 on 2024-05-20: stored \"0.454\", file \"0.51\" (pass --replace to overwrite)",
        "conflict.csv:2:6: zs_ohm: conflicts with the stored record for SMP-001 DB1/1 on 2024-05-20: stored \"0.724\", file \"0.73\" (pass --replace to overwrite)",
    ];
    conflicting_visit_field: "conflict_inspector.csv" => ["conflict_inspector.csv:2:5: inspector: conflicts with the visit to SMP-001 on 2024-05-20: stored \"C. Leadbetter\", file \"D. Sparkford\" (pass --replace to overwrite)"];
    duplicate_row_in_one_file: "duplicate_row_conflict.csv" => ["duplicate_row_conflict.csv:3:6: r1r2_ohm: conflicts with an earlier row of this file for SMP-009 DB1/1 on 2024-05-20: earlier \"0.42\", this row \"0.44\""];
    visit_details_conflict_in_one_file: "visit_details_conflict_in_file.csv" => [
        "visit_details_conflict_in_file.csv:3:5: inspector: conflicts with an earlier row of this file for the visit to SMP-077 on 2024-05-20: earlier \"E. Northcote\", this row \"F. Southwell\"",
        "visit_details_conflict_in_file.csv:3:6: ambient_c: conflicts with an earlier row of this file for the visit to SMP-077 on 2024-05-20: earlier \"18\", this row \"25\"",
    ];
    report_and_board_values_conflict_in_one_file: "visit_report_conflict_in_file.csv" => [
        "visit_report_conflict_in_file.csv:3:8: zdb_ohm: conflicts with an earlier row of this file for board DB2 at SMP-078 on 2024-05-20: earlier \"0.35\", this row \"0.38\"",
        "visit_report_conflict_in_file.csv:3:9: outcome: conflicts with an earlier row of this file for the visit to SMP-078 on 2024-05-20: earlier \"Satisfactory\", this row \"Unsatisfactory\"",
    ];
    schedule_values_refused: "bad_schedule_values.csv" => [
        "bad_schedule_values.csv:2:7: bonding_gas: unknown bonding continuity \"maybe\": expected yes (confirmed), no (not confirmed) or none (no such service)",
        "bad_schedule_values.csv:2:8: interval_months: interval \"five years\" is not an interval: expected whole months or years, such as 60, 60 months or 5 years",
        "bad_schedule_values.csv:2:9: u0_v: U0 0 V is out of range: expected a nominal voltage to earth such as 230 V (1 to 1000 V)",
        "bad_schedule_values.csv:2:10: pfc_ka: \"2 kV\" is not a number: expected a current in kA such as 1.6 (a fault current) or 6 (a breaking capacity)",
        "bad_schedule_values.csv:2:11: ra_ohm: LIM (a limitation) is kept with a circuit's readings, not the board's or the visit's: write the visit's limitations in the limitations column",
        "bad_schedule_values.csv:3:3: fed_from: board DB2 cannot be fed from itself: expected the designation of the board feeding it, or empty at the origin",
    ];
    ze_conflict_in_one_file: "ze_conflict_in_file.csv" => ["ze_conflict_in_file.csv:3:5: ze_ohm: conflicts with an earlier row of this file for Ze at board DB1 on 2024-05-20: earlier \"0.21\", this row \"0.23\""];
    register_change_out_of_order: "out_of_order_change.csv" => ["out_of_order_change.csv:2:5: device: SMP-001 DB1/3 on 2018-03-01 has \"B40\" but the register has \"B32\" and a later visit (2024-05-20) is already recorded: import visit files oldest first, or record the change with `ohmtrail circuit edit`"];
    control_character_in_text: "control_character_in_note.csv" => ["control_character_in_note.csv:2:6: note: has control character U+001B at offset 4 in the cell: remove it (only a tab or a line break may stand in free text)"];
    nul_in_a_reference: "nul_in_reference.csv" => ["nul_in_reference.csv:2:1: property_ref: has control character U+0000 at offset 5 in the cell: remove it (only a tab or a line break may stand in free text)"];
    observation_for_an_unknown_property: "observation_unknown_property.csv" => ["observation_unknown_property.csv:2:1: property_ref: property \"SMP-404\" not found: import its visit file first"];
    readings_and_dates_out_of_range: "out_of_range_readings.csv" => [
        "out_of_range_readings.csv:2:5: r1r2_ohm: \"99999999999999999999\" is out of range: expected at most 2000 Ω for a reading",
        "out_of_range_readings.csv:2:6: ir_le_mohm: \">0\" is an over-range mark with no range: expected the instrument's top of range, such as >200",
        "out_of_range_readings.csv:3:4: visit_date: \"1899-12-30\" is before 1950-01-01: expected the date of an inspection and test, which no record in use predates",
        "out_of_range_readings.csv:3:7: rcd_ms: \"99999\" is out of range: expected at most 5000 ms for a reading",
    ];
    schedule_values_refused_each_in_place: "schedule_values.csv" => [
        "schedule_values.csv:2:5: polarity: unknown polarity \"yes\": expected correct or incorrect (or ✓ / ✗)",
        "schedule_values.csv:2:6: ir_test_v: 400 V is not an insulation test voltage: expected 250, 500 or 1000 V (BS 7671 Table 64)",
        "schedule_values.csv:2:7: rcd_button: unknown RCD test button result \"ok\": expected operates or failed (or ✓ / ✗)",
        "schedule_values.csv:2:8: ref_method: unknown reference method \"H\": expected one of A, B, C, D, E, F, G, 100, 101, 102, 103 (BS 7671 Appendix 4)",
        "schedule_values.csv:2:9: points: \"8.5\" is not a number: expected a whole number of points such as 8",
        "schedule_values.csv:2:10: afdd: \"maybe\" is not yes or no",
    ];
    observation_code: "observation_bad_code.csv" => ["observation_bad_code.csv:2:3: code: unknown observation code \"C4\": expected C1, C2, C3 or FI as recorded"];
    observation_unknown_board: "observation_unknown_board.csv" => ["observation_unknown_board.csv:2:3: board: board \"DB7\" not found at property SMP-001: import its visit file first"];
    observation_with_reading_column: "observation_mixed_columns.csv" => ["observation_mixed_columns.csv:1:5: column zs_ohm does not belong in an observation file (it has a code column): split readings and observations into two files, or pass --ignore-unknown"];
}

#[test]
fn future_date() {
    let today = chrono::Local::now().date_naive();
    refuse(
        "future_date.csv",
        &[&format!(
            "future_date.csv:2:4: visit_date: 2999-01-01 is in the future (today is {today})"
        )],
    );
}

#[test]
fn errors_stop_at_the_cap_then_count() {
    let mut expected: Vec<String> = (2..=101)
        .map(|l| {
            format!("many_errors.csv:{l}:7: zs_ohm: \"bad\" is not a number: expected a resistance in ohms such as 0.35")
        })
        .collect();
    expected.push("many_errors.csv: and 50 more errors".into());
    let refs: Vec<&str> = expected.iter().map(String::as_str).collect();
    refuse("many_errors.csv", &refs);
}

#[test]
fn one_megabyte_field() {
    let dir = TempDir::new().unwrap();
    let note = "x".repeat(1 << 20);
    std::fs::write(
        dir.path().join("big_field.csv"),
        format!("property_ref,board,circuit,visit_date,note\nSMP-009,DB1,1,2024-05-20,{note}\n"),
    )
    .unwrap();
    refuse_in(
        dir.path(),
        "big_field.csv",
        &[&format!("big_field.csv:2:1: {TOO_LONG}")],
    );
}

const TOO_LONG: &str = "row is longer than 65536 bytes (64 KiB): expected one row of a visit or observation file per line; check the file is one, and that every quote is closed";

/// A cell over the limit in a row under the row limit is the cell's own error.
#[test]
fn a_cell_over_its_limit() {
    let dir = TempDir::new().unwrap();
    let note = "x".repeat(20_000);
    std::fs::write(
        dir.path().join("long_note.csv"),
        format!("property_ref,board,circuit,visit_date,note\nSMP-009,DB1,1,2024-05-20,{note}\n"),
    )
    .unwrap();
    refuse_in(
        dir.path(),
        "long_note.csv",
        &["long_note.csv:2:5: note: is 20000 bytes long: expected at most 10000"],
    );
}

/// Input with no end to its lines is refused at the row limit, not read whole: a file with
/// no newline at all, an unclosed quote that swallows the lines after it, and a header name
/// or a header too wide to be one.
#[test]
fn unbounded_input_is_refused_at_a_limit() {
    let dir = TempDir::new().unwrap();
    let write = |name: &str, body: &[u8]| std::fs::write(dir.path().join(name), body).unwrap();
    write("no_newline.csv", &vec![b'x'; 8 << 20]);
    refuse_in(
        dir.path(),
        "no_newline.csv",
        &[&format!("no_newline.csv:1:1: {TOO_LONG}")],
    );
    let mut unclosed = b"property_ref,board,circuit,visit_date,note\nSMP-009,DB1,1,2024-05-20,ok\nSMP-009,DB1,2,2024-05-20,\"open\n".to_vec();
    for _ in 0..20_000 {
        unclosed.extend_from_slice(b"SMP-009,DB1,3,2024-05-20,ok\n");
    }
    write("unclosed_quote.csv", &unclosed);
    refuse_in(
        dir.path(),
        "unclosed_quote.csv",
        &[&format!("unclosed_quote.csv:3:1: {TOO_LONG}")],
    );
    let long_name = "y".repeat(2 << 20);
    write(
        "long_name.csv",
        format!("property_ref,board,circuit,visit_date,{long_name}\nSMP-009,DB1,1,2024-05-20,1\n")
            .as_bytes(),
    );
    refuse_in(
        dir.path(),
        "long_name.csv",
        &[&format!("long_name.csv:1:1: {TOO_LONG}")],
    );
    let name = "z".repeat(5_000);
    write(
        "wide_name.csv",
        format!("property_ref,board,circuit,visit_date,{name}\nSMP-009,DB1,1,2024-05-20,1\n")
            .as_bytes(),
    );
    refuse_in(
        dir.path(),
        "wide_name.csv",
        &[&format!(
            "wide_name.csv:1:5: unknown column \"{}\"… (5000 bytes long): expected one of property_ref, address, board, earthing, fed_from, circuit, description, ring, device, rcd_ma, rcd_type, rcd_delay, live_mm2, cpc_mm2, length_m, insulation, wiring_type, ref_method, points, breaking_ka, afdd, rcd_id, visit_date, inspector, instrument, ambient_c, ze_ohm, zdb_ohm, submain_r1r2_ohm, pfc_ka, u0_v, ra_ohm, bonding_csa_mm2, bonding_water, bonding_gas, bonding_other, report_ref, outcome, interval_months, extent, limitations, ring_r1_ohm, ring_rn_ohm, ring_r2_ohm, r1r2_ohm, r2_ohm, r1rn_ohm, zs_ohm, polarity, ir_test_v, ir_ll_mohm, ir_le_mohm, rcd_ms, rcd_5x_ms, rcd_button, note (or pass --ignore-unknown)",
            "z".repeat(60)
        )],
    );
    let wide = format!(
        "property_ref,board,circuit,visit_date{}\n",
        ",c".repeat(30_000)
    );
    write("wide_header.csv", wide.as_bytes());
    refuse_in(
        dir.path(),
        "wide_header.csv",
        &[
            "wide_header.csv:1:257: the header has 30004 columns: expected at most 256 (a visit file has 56 known columns)",
        ],
    );
}

#[test]
fn the_bad_corpus_has_at_least_thirty_files() {
    let n = std::fs::read_dir(fixtures().join("bad")).unwrap().count();
    assert!(n >= 30, "{n}");
}

#[test]
fn awkward_but_valid_files_import() {
    let dir = TempDir::new().unwrap();
    let db = dir.path().join("t.db");
    for f in [
        "bom_crlf.csv",
        "trailing_blank_rows.csv",
        "header_case_and_spaces.csv",
    ] {
        bin(&db)
            .arg("import")
            .arg(fixtures().join("good").join(f))
            .assert()
            .success();
    }
    bin(&db)
        .arg("import")
        .arg("--decimal-comma")
        .arg(fixtures().join("good/decimal_comma_semicolons.csv"))
        .assert()
        .success();
    let store = Store::open(&db).unwrap();
    let c = store.find_circuit("SMP-009", "DB1", "1").unwrap();
    let records = store.circuit_records(c.id).unwrap();
    let dates: Vec<String> = records.iter().map(|(v, _)| v.date.to_string()).collect();
    assert_eq!(dates, vec!["2024-05-14", "2024-05-20"]);
    // "0.42 Ω" under a header with odd case and spaces.
    assert_eq!(records[0].1.readings.r1r2_ohm, Some(0.42));
    // "0,42" read with --decimal-comma, and ">200" kept as a lower bound.
    let c2 = store.find_circuit("SMP-009", "DB1", "2").unwrap();
    let r = &store.circuit_records(c2.id).unwrap()[0].1.readings;
    assert_eq!(r.r1r2_ohm, Some(0.42));
    let ir = r.ir_le.unwrap();
    assert!(ir.over_range && ir.value == 200.0);
    // The blank row of commas was skipped, not refused.
    assert_eq!(count(&db, "test_record"), 4);
}

#[test]
fn reimport_ten_times_writes_nothing() {
    let dir = TempDir::new().unwrap();
    let db = baseline(&dir);
    let before = dump(&db);
    for _ in 0..10 {
        bin(&db)
            .arg("import")
            .arg(fixtures().join("visits/sampleton.csv"))
            .arg(fixtures().join("visits/sampleton-observations.csv"))
            .assert()
            .success()
            .stdout(predicates::str::contains(
                "sampleton.csv: nothing new: all 27 rows are already in the database; nothing written",
            ));
    }
    assert_eq!(dump(&db), before);
    assert_eq!(count(&db, "test_record"), 27);
    assert_eq!(count(&db, "observation"), 4);
    assert_eq!(count(&db, "circuit_change"), 1);
}

#[test]
fn summary_lists_register_changes_and_json_has_counts() {
    let dir = TempDir::new().unwrap();
    let db = dir.path().join("t.db");
    let out = bin(&db)
        .arg("import")
        .arg("--json")
        .arg(fixtures().join("visits/sampleton.csv"))
        .output()
        .unwrap();
    assert!(out.status.success());
    let v: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    let s = &v[0];
    assert_eq!(s["properties_created"], 3);
    assert_eq!(s["circuits_created"], 9);
    assert_eq!(s["visits_created"], 9);
    assert_eq!(s["test_records_written"], 27);
    let ch = &s["changes"][0];
    assert_eq!(ch["field"], "device");
    assert_eq!(ch["old_value"], "B6");
    assert_eq!(ch["new_value"], "B10");
    assert_eq!(ch["date"], "2024-05-20");
    // The change is effective from the visit, so the earlier readings keep their old device.
    let store = Store::open(&db).unwrap();
    let c = store.find_circuit("SMP-001", "DB1", "2").unwrap();
    assert_eq!(c.device.unwrap().to_string(), "B10");
    let changes = store.changes(c.id).unwrap();
    assert_eq!(changes.len(), 1);
    assert_eq!(changes[0].date.to_string(), "2024-05-20");
}

#[test]
fn export_then_import_reproduces_the_records() {
    let dir = TempDir::new().unwrap();
    let db = baseline(&dir);
    // A later visit that gives the rest of the schedule: register details (changes from the
    // register as it stood) and the visit's recorded results.
    let later = dir.path().join("later.csv");
    std::fs::write(
        &later,
        "property_ref,board,circuit,visit_date,insulation,wiring_type,ref_method,points,breaking_ka,afdd,rcd_id,polarity,ir_test_v,ir_le_mohm,rcd_ms,rcd_button\n\
         SMP-001,DB1,1,2025-03-04,thermoplastic70,A,C,9,6 kA,no,RCD1,✓,500 V,>200,21,operates\n\
         SMP-001,DB1,2,2025-03-04,,'-,101,6,6,yes,rcd1,incorrect,250,180,22,✗\n",
    )
    .unwrap();
    bin(&db).arg("import").arg(&later).assert().success();
    let a = dir.path().join("a.csv");
    bin(&db).args(["export", "-o"]).arg(&a).assert().success();
    let copy = dir.path().join("copy.db");
    bin(&copy)
        .arg("import")
        .arg(&a)
        .arg(dir.path().join("a.observations.csv"))
        .assert()
        .success();
    assert_eq!(dump(&copy), dump(&db));
    let text = std::fs::read_to_string(&a).unwrap();
    // Text that a spreadsheet would run as a formula is neutralised, and read back as written.
    assert!(
        text.contains(",'-ve terminal discoloured; retest due"),
        "{text}"
    );
    let obs = std::fs::read_to_string(dir.path().join("a.observations.csv")).unwrap();
    assert!(obs.contains("'=No RCD label"), "{obs}");
    let store = Store::open(&copy).unwrap();
    let c = store.find_circuit("SMP-002", "DB1", "2").unwrap();
    let notes: Vec<Option<String>> = store
        .circuit_records(c.id)
        .unwrap()
        .into_iter()
        .map(|(_, r)| r.readings.note)
        .collect();
    assert_eq!(
        notes[1].as_deref(),
        Some("-ve terminal discoloured; retest due")
    );
    // The new columns went out and came back (a wiring type that reads as a not-recorded mark
    // with its protecting quote), and both circuits name the one RCD.
    assert!(text.contains(",'-,101,6,6,yes,RCD1,"), "{text}");
    let c1 = store.find_circuit("SMP-001", "DB1", "1").unwrap();
    let c2 = store.find_circuit("SMP-001", "DB1", "2").unwrap();
    assert_eq!(c2.wiring_type.as_deref(), Some("-"));
    assert_eq!(
        (c1.rcd_id.as_deref(), c2.rcd_id.as_deref()),
        (Some("RCD1"), Some("RCD1"))
    );
    assert_eq!((c1.points, c2.afdd), (Some(9), Some(true)));
    let last = store
        .circuit_records(c2.id)
        .unwrap()
        .pop()
        .unwrap()
        .1
        .readings;
    assert_eq!(
        (last.polarity, last.ir_test_v, last.rcd_button),
        (
            Some(ohmtrail::model::Polarity::Incorrect),
            Some(250),
            Some(ohmtrail::model::ButtonTest::Failed)
        )
    );
    // Earlier visits keep the register as it stood: no RCD named before 2025.
    assert!(
        text.lines().any(|l| l.starts_with("SMP-001,")
            && l.contains(",2019-04-11,")
            && !l.contains("RCD1")),
        "{text}"
    );
}

#[test]
fn the_rest_of_the_schedule_survives_export_and_import() {
    // A sub-board fed from the origin with Zdb, its sub-main's R1+R2 and the fault current,
    // and each visit's supply, main bonding and report as recorded (invented data).
    let dir = TempDir::new().unwrap();
    let db = dir.path().join("db.db");
    bin(&db)
        .arg("import")
        .arg(fixtures().join("visits/sampleton.csv"))
        .arg(fixtures().join("visits/sampleton-schedule.csv"))
        .assert()
        .success();
    let a = dir.path().join("a.csv");
    bin(&db).args(["export", "-o"]).arg(&a).assert().success();
    let copy = dir.path().join("copy.db");
    bin(&copy).arg("import").arg(&a).assert().success();
    assert_eq!(dump(&copy), dump(&db));
    // Importing the export again writes nothing: every value reads back the same.
    bin(&copy)
        .arg("import")
        .arg(&a)
        .assert()
        .success()
        .stdout(predicates::str::contains("test records unchanged   31"));
    let store = Store::open(&copy).unwrap();
    let p = store.property("SMP-020").unwrap();
    let h = store.history(p.id).unwrap();
    let db2 = h.boards.iter().find(|b| b.designation == "DB2").unwrap();
    assert_eq!(db2.fed_from.as_deref(), Some("CU1"));
    let (v19, v24) = (&h.visits[0], &h.visits[1]);
    assert_eq!(v19.report.outcome.as_deref(), Some("Satisfactory"));
    assert_eq!(v19.report.interval_months, Some(60));
    assert_eq!(v24.report.interval_months, Some(36));
    assert_eq!(v24.report.report_ref.as_deref(), Some("SMP-020/24"));
    assert_eq!(
        v24.report.limitations.as_deref(),
        Some("-Loft boarded, not inspected")
    );
    assert_eq!(v24.supply.bonding_csa_mm2, Some(6.0));
    assert_eq!(v24.supply.bonding_gas, Some(ohmtrail::model::Bonding::No));
    assert_eq!(v19.supply.u0_v, Some(230.0));
    // The origin's fault current is the visit's.
    assert_eq!(v19.pfc_ka, Some(1.4));
    let t = h
        .board_tests
        .iter()
        .find(|t| t.visit_id == v19.id && t.board_id == db2.id)
        .unwrap();
    assert_eq!(
        (t.zdb_ohm, t.submain_r1r2_ohm, t.pfc_ka),
        (Some(0.41), Some(0.12), Some(0.9))
    );
    let text = std::fs::read_to_string(&a).unwrap();
    assert!(
        text.contains(",\"'-Loft boarded, not inspected\","),
        "{text}"
    );
    // visit list gives the outcome as recorded, newest first.
    let out = bin(&copy)
        .args(["visit", "list", "--property", "SMP-020", "--json"])
        .output()
        .unwrap();
    let v: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    assert_eq!(v[0]["outcome"], "Unsatisfactory");
    assert_eq!(v[0]["interval_months"], 36);
    assert_eq!(v[1]["report_ref"], "SMP-020/19");
    let table = bin(&copy)
        .args(["visit", "list", "--property", "SMP-020"])
        .output()
        .unwrap();
    let table = String::from_utf8(table.stdout).unwrap();
    assert!(
        table.contains("OUTCOME (AS RECORDED)") && table.contains("Satisfactory"),
        "{table}"
    );
}

#[test]
fn a_sub_board_s_ze_is_its_zdb_and_never_the_visit_s() {
    // The first row is a sub-board's: its ze_ohm is the loop impedance at that board (its
    // Zdb), so the visit's own Ze (at the origin) comes from the origin's row, not from it.
    let dir = TempDir::new().unwrap();
    let db = dir.path().join("db.db");
    let f = dir.path().join("sub_first.csv");
    std::fs::write(
        &f,
        "property_ref,board,fed_from,circuit,visit_date,ze_ohm,r1r2_ohm\n\
         SMP-091,DB2,CU1,1,2024-05-20,0.45,0.50\n\
         SMP-091,CU1,,1,2024-05-20,0.28,0.40\n",
    )
    .unwrap();
    bin(&db).arg("import").arg(&f).assert().success();
    let store = Store::open(&db).unwrap();
    let p = store.property("SMP-091").unwrap();
    let h = store.history(p.id).unwrap();
    assert_eq!(h.visits[0].ze_ohm, Some(0.28));
    let db2 = h.boards.iter().find(|b| b.designation == "DB2").unwrap();
    assert_eq!(db2.fed_from.as_deref(), Some("CU1"));
}

#[test]
fn a_second_file_with_another_outcome_is_a_conflict_unless_replaced() {
    let dir = TempDir::new().unwrap();
    let db = dir.path().join("db.db");
    let file = |name: &str, outcome: &str| {
        let f = dir.path().join(name);
        std::fs::write(
            &f,
            format!(
                "property_ref,board,circuit,visit_date,r1r2_ohm,outcome\nSMP-090,DB1,1,2024-05-20,0.42,{outcome}\n"
            ),
        )
        .unwrap();
        f
    };
    let first = file("first.csv", "Satisfactory");
    bin(&db).arg("import").arg(&first).assert().success();
    let second = file("second.csv", "Unsatisfactory");
    bin(&db)
        .arg("import")
        .arg(&second)
        .assert()
        .code(1)
        .stderr(predicates::str::contains(
            "second.csv:2:6: outcome: conflicts with the visit to SMP-090 on 2024-05-20: stored \"Satisfactory\", file \"Unsatisfactory\" (pass --replace to overwrite)",
        ));
    bin(&db)
        .args(["import", "--replace"])
        .arg(&second)
        .assert()
        .success()
        .stdout(predicates::str::contains("details replaced         1"));
    let store = Store::open(&db).unwrap();
    let p = store.property("SMP-090").unwrap();
    assert_eq!(
        store.property_visits(p.id).unwrap()[0]
            .report
            .outcome
            .as_deref(),
        Some("Unsatisfactory")
    );
}

#[test]
fn export_of_one_property_as_json() {
    let dir = TempDir::new().unwrap();
    let db = baseline(&dir);
    let out = bin(&db)
        .args(["export", "--property", "SMP-003", "--format", "json"])
        .output()
        .unwrap();
    assert!(out.status.success());
    let v: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    assert_eq!(v["visits"].as_array().unwrap().len(), 9);
    assert_eq!(v["observations"].as_array().unwrap().len(), 2);
    assert_eq!(v["visits"][0]["ir_ll_mohm"], ">200");
    assert_eq!(v["visits"][0]["earthing"], "TT");
}

#[test]
fn skip_invalid_writes_valid_rows_and_a_sidecar() {
    let dir = TempDir::new().unwrap();
    let db = baseline(&dir);
    let file = dir.path().join("mixed.csv");
    std::fs::copy(fixtures().join("bad/missing_board.csv"), &file).unwrap();
    let sidecar = dir.path().join("mixed.rejected.csv");
    bin(&db)
        .arg("import")
        .arg("--skip-invalid")
        .arg(&file)
        .assert()
        .success()
        .stderr(predicates::str::contains(format!(
            "rejected rows written to {}",
            sidecar.display()
        )));
    let side = std::fs::read_to_string(&sidecar).unwrap();
    let lines: Vec<&str> = side.lines().collect();
    assert_eq!(
        lines[0],
        "property_ref,board,circuit,visit_date,device,r1r2_ohm,zs_ohm,ir_le_mohm,rcd_ms,note,reason"
    );
    assert_eq!(
        lines[1],
        format!(
            "SMP-009,,2,2024-05-20,B32,0.42,0.66,>200,18,,{}:3:2: board: missing: every row needs one",
            file.display()
        )
    );
    let store = Store::open(&db).unwrap();
    assert!(store.find_circuit("SMP-009", "DB1", "1").is_ok());
}

#[test]
fn replace_overwrites_a_conflicting_record() {
    let dir = TempDir::new().unwrap();
    let db = baseline(&dir);
    bin(&db)
        .arg("import")
        .arg("--replace")
        .arg(fixtures().join("bad/conflict.csv"))
        .assert()
        .success()
        .stdout(predicates::str::contains("test records replaced    1"));
    let store = Store::open(&db).unwrap();
    let c = store.find_circuit("SMP-001", "DB1", "1").unwrap();
    let last = store.circuit_records(c.id).unwrap().pop().unwrap().1;
    assert_eq!(last.readings.r1r2_ohm, Some(0.51));
    assert_eq!(last.readings.zs_ohm, Some(0.73));
    // Columns the file does not carry keep their stored values.
    assert!(last.readings.ir_ll.unwrap().over_range);
}

/// A file of `n` properties with 10 circuits and 2 visits each, all invented.
fn portfolio(path: &Path, prefix: &str, n: usize) {
    let mut s =
        String::from("property_ref,board,circuit,visit_date,device,r1r2_ohm,zs_ohm,ir_le_mohm\n");
    for p in 0..n {
        for date in ["2021-03-01", "2024-03-01"] {
            for c in 1..=10 {
                s.push_str(&format!(
                    "{prefix}-{p:04},DB1,{c},{date},B16,0.{c}5,0.{c}9,>200\n"
                ));
            }
        }
    }
    std::fs::write(path, s).unwrap();
}

#[test]
fn two_processes_import_into_one_database_at_once() {
    let dir = TempDir::new().unwrap();
    let db = dir.path().join("shared.db");
    bin(&db).arg("init").assert().success();
    let a = dir.path().join("a.csv");
    let b = dir.path().join("b.csv");
    portfolio(&a, "NORTH", 300);
    portfolio(&b, "SOUTH", 300);
    let exe = assert_cmd::cargo::cargo_bin("ohmtrail");
    let spawn = |f: &Path| {
        StdCommand::new(&exe)
            .arg("--db")
            .arg(&db)
            .arg("import")
            .arg(f)
            .output()
            .unwrap()
    };
    let (ra, rb) = std::thread::scope(|s| {
        let ha = s.spawn(|| spawn(&a));
        let hb = s.spawn(|| spawn(&b));
        (ha.join().unwrap(), hb.join().unwrap())
    });
    for r in [&ra, &rb] {
        assert!(r.status.success(), "{}", String::from_utf8_lossy(&r.stderr));
    }
    assert_eq!(count(&db, "property"), 600);
    assert_eq!(count(&db, "test_record"), 12_000);
}

/// `1`, `01` and `1.0` are one circuit; two circuits stored before numbers were read this way
/// (`1` and `01`) make a row for either ambiguous, and it is refused rather than guessed.
#[test]
fn circuit_numbers_written_differently_are_one_circuit() {
    let dir = TempDir::new().unwrap();
    let db = dir.path().join("t.db");
    let file = dir.path().join("v.csv");
    std::fs::write(
        &file,
        "property_ref,board,circuit,visit_date,r1r2_ohm\n\
         N-1,DB1,01,2020-03-01,0.41\nN-1,DB1,1.0,2022-03-01,0.43\nN-1,DB1,1,2024-03-01,0.42\n\
         N-1,DB1,010,2024-03-01,0.9\n",
    )
    .unwrap();
    bin(&db).arg("import").arg(&file).assert().success();
    let store = Store::open(&db).unwrap();
    let c = store.find_circuit("N-1", "DB1", "1").unwrap();
    assert_eq!(store.circuit_records(c.id).unwrap().len(), 3);
    assert!(store.find_circuit("N-1", "DB1", "10").is_ok());
    assert!(store.find_circuit("N-1", "DB1", "01").is_err());
    let board = c.board_id;
    drop(store);

    // A circuit stored as "01" before numbers were normalised, beside "1".
    rusqlite::Connection::open(&db)
        .unwrap()
        .execute(
            "INSERT INTO circuit (board_id, number) VALUES (?1, '01')",
            [board],
        )
        .unwrap();
    let again = dir.path().join("w.csv");
    std::fs::write(
        &again,
        "property_ref,board,circuit,visit_date,r1r2_ohm\nN-1,DB1,1,2025-03-01,0.44\n",
    )
    .unwrap();
    let out = bin(&db).arg("import").arg(&again).output().unwrap();
    let err = String::from_utf8_lossy(&out.stderr);
    assert_eq!(out.status.code(), Some(1), "{err}");
    assert!(
        err.contains("could be any of the stored circuits \"1\", \"01\""),
        "{err}"
    );
}

/// Observation files read circuit numbers as visit files do: `3`, `003` and `3.0` find a
/// circuit stored as `03` (as `circuit add` keeps it), and a number two stored circuits share
/// once read that way (`1` and `01`) is refused with the same message as a visit file's row,
/// nothing written.
#[test]
fn observation_files_find_circuits_written_differently() {
    let dir = TempDir::new().unwrap();
    let db = dir.path().join("t.db");
    let visits = dir.path().join("v.csv");
    std::fs::write(
        &visits,
        "property_ref,board,circuit,visit_date,r1r2_ohm\n\
         N-1,DB1,1,2020-03-01,0.41\nN-1,DB1,2,2020-03-01,0.38\n",
    )
    .unwrap();
    bin(&db).arg("import").arg(&visits).assert().success();
    bin(&db)
        .args(["circuit", "add", "N-1", "DB1", "03"])
        .assert()
        .success();
    let obs = dir.path().join("o.csv");
    std::fs::write(
        &obs,
        "property_ref,board,circuit,visit_date,code,text\n\
         N-1,DB1, 3 ,2020-03-01,C3,no RCD protection for the outdoor socket\n\
         N-1,DB1,003,2020-03-01,C2,cpc not continuous at the garage\n\
         N-1,DB1,3.0,2020-03-01,FI,cable route unknown\n\
         N-1,DB1,01,2020-03-01,C3,\"  scorched faceplate, kitchen\"\n",
    )
    .unwrap();
    bin(&db).arg("import").arg(&obs).assert().success();
    let store = Store::open(&db).unwrap();
    let p = store.property("N-1").unwrap();
    let date = chrono::NaiveDate::from_ymd_opt(2020, 3, 1).unwrap();
    let v = store.visit_on(p.id, date).unwrap().unwrap();
    let circuits: Vec<_> = store
        .observations(v.id)
        .unwrap()
        .into_iter()
        .map(|o| o.circuit.unwrap_or_default())
        .collect();
    assert_eq!(circuits, ["03", "03", "03", "1"]);
    let board = store.find_circuit("N-1", "DB1", "1").unwrap().board_id;
    drop(store);

    // A circuit stored as "01" beside "1", from before numbers were normalised.
    rusqlite::Connection::open(&db)
        .unwrap()
        .execute(
            "INSERT INTO circuit (board_id, number) VALUES (?1, '01')",
            [board],
        )
        .unwrap();
    let before = dump(&db);
    let again = dir.path().join("w.csv");
    std::fs::write(
        &again,
        "property_ref,board,circuit,visit_date,code,text\nN-1,DB1,1.0,2020-03-01,C2,exposed conductor\n",
    )
    .unwrap();
    let out = bin(&db).arg("import").arg(&again).output().unwrap();
    let err = String::from_utf8_lossy(&out.stderr);
    assert_eq!(out.status.code(), Some(1), "{err}");
    assert!(
        err.contains(":2:3: circuit: circuit \"1\" of board DB1 at N-1 could be any of the stored circuits \"1\", \"01\""),
        "{err}"
    );
    assert_eq!(dump(&db), before);
}
