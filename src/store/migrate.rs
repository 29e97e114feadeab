//! Schema migrations: the numbered files in `schema/`, applied in order, tracked with
//! `PRAGMA user_version`. Append-only: a released migration is never edited.

use rusqlite::Connection;

/// Every migration, in order. Migration `i` (1-based) brings the schema to version `i`.
pub const MIGRATIONS: &[(&str, &str)] = &[
    ("001_init", include_str!("../../schema/001_init.sql")),
    (
        "002_circuit_board_index",
        include_str!("../../schema/002_circuit_board_index.sql"),
    ),
    (
        "003_drop_record_circuit_index",
        include_str!("../../schema/003_drop_record_circuit_index.sql"),
    ),
    (
        "004_checks_without_in_lists",
        include_str!("../../schema/004_checks_without_in_lists.sql"),
    ),
    (
        "005_partial_replaces_index",
        include_str!("../../schema/005_partial_replaces_index.sql"),
    ),
    (
        "006_application_id",
        include_str!("../../schema/006_application_id.sql"),
    ),
    (
        "007_property_ref_nocase_index",
        include_str!("../../schema/007_property_ref_nocase_index.sql"),
    ),
    (
        "008_rcd_delay",
        include_str!("../../schema/008_rcd_delay.sql"),
    ),
    (
        "009_visit_report_supply",
        include_str!("../../schema/009_visit_report_supply.sql"),
    ),
    (
        "010_circuit_schedule",
        include_str!("../../schema/010_circuit_schedule.sql"),
    ),
];

/// The last version whose databases carry no application id: an unmarked database at a
/// version up to this one, holding ohmtrail's tables, is one of ours from before the mark.
pub const UNMARKED_VERSIONS: i64 = 5;

/// A migration that rebuilds tables starts with this line: SQLite's procedure for changing a
/// table's constraints needs foreign keys off while the old table is dropped, and the
/// pragma has no effect inside a transaction, so the runner turns them off around it.
const FOREIGN_KEYS_OFF: &str = "-- ohmtrail: foreign_keys off";

/// The schema version this build writes and understands.
pub fn latest_version() -> i64 {
    MIGRATIONS.len() as i64
}

pub fn user_version(conn: &Connection) -> rusqlite::Result<i64> {
    conn.query_row("PRAGMA user_version", [], |r| r.get(0))
}

/// Apply every migration newer than the database's version, each in its own transaction
/// together with its version stamp, so a crash leaves the database at a whole version.
/// The caller has already refused databases newer than [`latest_version`].
pub fn apply(conn: &mut Connection) -> rusqlite::Result<Vec<&'static str>> {
    let current = user_version(conn)?;
    let mut applied = Vec::new();
    for (i, (name, sql)) in MIGRATIONS.iter().enumerate() {
        let version = i as i64 + 1;
        if version <= current {
            continue;
        }
        if sql.starts_with(FOREIGN_KEYS_OFF) {
            conn.pragma_update(None, "foreign_keys", false)?;
            let result = apply_rebuild(conn, version, sql);
            conn.pragma_update(None, "foreign_keys", true)?;
            if result? {
                applied.push(*name);
            }
            continue;
        }
        let tx = conn.transaction_with_behavior(rusqlite::TransactionBehavior::Immediate)?;
        // Another process may have migrated while we waited for the write lock.
        if user_version(&tx)? >= version {
            continue;
        }
        tx.execute_batch(sql)?;
        tx.pragma_update(None, "user_version", version)?;
        tx.commit()?;
        applied.push(*name);
    }
    Ok(applied)
}

/// One table-rebuilding migration with foreign keys off; refuses to commit if the rebuilt
/// tables break a foreign key. `Ok(false)` when another process applied it meanwhile.
fn apply_rebuild(conn: &mut Connection, version: i64, sql: &str) -> rusqlite::Result<bool> {
    let tx = conn.transaction_with_behavior(rusqlite::TransactionBehavior::Immediate)?;
    if user_version(&tx)? >= version {
        return Ok(false);
    }
    tx.execute_batch(sql)?;
    let broken: i64 = tx.query_row("SELECT count(*) FROM pragma_foreign_key_check", [], |r| {
        r.get(0)
    })?;
    if broken > 0 {
        return Err(rusqlite::Error::SqliteFailure(
            rusqlite::ffi::Error::new(rusqlite::ffi::SQLITE_CONSTRAINT_FOREIGNKEY),
            Some(format!(
                "migration {version} would leave {broken} broken foreign key(s); nothing changed"
            )),
        ));
    }
    tx.pragma_update(None, "user_version", version)?;
    tx.commit()?;
    Ok(true)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::model::{RcdDelay, RcdType};

    #[test]
    fn empty_to_latest_and_again_is_a_no_op() {
        let mut conn = Connection::open_in_memory().unwrap();
        let applied = apply(&mut conn).unwrap();
        assert_eq!(applied.len(), MIGRATIONS.len());
        assert_eq!(user_version(&conn).unwrap(), latest_version());
        assert!(apply(&mut conn).unwrap().is_empty());
    }

    #[test]
    fn migration_names_are_numbered_in_order() {
        for (i, (name, _)) in MIGRATIONS.iter().enumerate() {
            assert!(name.starts_with(&format!("{:03}_", i + 1)), "{name}");
        }
    }

    #[test]
    fn a_stored_type_s_becomes_the_delay_with_no_waveform() {
        // Before 008 the type column held S, the time delay of BS EN 61008-1 / 61009-1, in
        // place of a waveform type: the delay is kept and the waveform is not recorded.
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("old.db");
        {
            let conn = Connection::open(&path).unwrap();
            conn.pragma_update(None, "foreign_keys", true).unwrap();
            for (_, sql) in &MIGRATIONS[..6] {
                conn.execute_batch(sql).unwrap();
            }
            conn.pragma_update(None, "user_version", 6).unwrap();
            conn.execute_batch(
                "INSERT INTO property (id, ref) VALUES (1, 'P1');
                 INSERT INTO board (id, property_id, designation, earthing) VALUES (1, 1, 'CU1', 'TN-C-S');
                 INSERT INTO circuit (id, board_id, number, device, rcd_ma, rcd_type)
                     VALUES (1, 1, '1', 'B32', 100, 'S'), (2, 1, '2', 'B16', 30, 'A'),
                            (3, 1, '3', 'B6', NULL, NULL);",
            )
            .unwrap();
        }
        let store = crate::store::Store::open(&path).unwrap();
        let c = |id| store.circuit_by_id(id).unwrap();
        assert_eq!((c(1).rcd_type, c(1).rcd_delay), (None, Some(RcdDelay::S)));
        assert_eq!(c(1).rcd_ma, Some(100));
        assert_eq!((c(2).rcd_type, c(2).rcd_delay), (Some(RcdType::A), None));
        assert_eq!((c(3).rcd_type, c(3).rcd_delay), (None, None));
        drop(store);
        let conn = Connection::open(&path).unwrap();
        assert_eq!(user_version(&conn).unwrap(), latest_version());
        let rows: Vec<(Option<String>, Option<String>)> = conn
            .prepare("SELECT rcd_type, rcd_delay FROM circuit ORDER BY id")
            .unwrap()
            .query_map([], |r| Ok((r.get(0)?, r.get(1)?)))
            .unwrap()
            .collect::<rusqlite::Result<_>>()
            .unwrap();
        let s = |t: &str| Some(t.to_string());
        assert_eq!(rows, [(None, s("S")), (s("A"), None), (None, None)]);
        // The new column's check takes only general and S.
        let refuses = |sql: &str| conn.execute(sql, []).is_err();
        assert!(refuses("UPDATE circuit SET rcd_delay = 's' WHERE id = 1"));
        assert!(refuses("UPDATE circuit SET rcd_delay = 'A' WHERE id = 1"));
        assert!(!refuses(
            "UPDATE circuit SET rcd_delay = 'general' WHERE id = 1"
        ));
        assert!(refuses("UPDATE circuit SET rcd_type = 'S' WHERE id = 2"));
        // The rebuild kept the indexes and the foreign keys.
        let indexes: Vec<String> = conn
            .prepare("SELECT name FROM sqlite_schema WHERE type = 'index' AND tbl_name = 'circuit' ORDER BY name")
            .unwrap()
            .query_map([], |r| r.get(0))
            .unwrap()
            .collect::<rusqlite::Result<_>>()
            .unwrap();
        assert_eq!(
            indexes,
            [
                "circuit_board",
                "circuit_number_in_service",
                "circuit_replaces"
            ]
        );
        assert!(refuses(
            "INSERT INTO circuit (board_id, number) VALUES (9, '1')"
        ));
    }

    #[test]
    fn visit_report_and_supply_columns_are_added_empty_with_their_checks() {
        // 009 adds nullable columns: a visit stored before it keeps its values and has none
        // of the new ones; each new column refuses what it cannot hold.
        let conn = Connection::open_in_memory().unwrap();
        for (_, sql) in &MIGRATIONS[..8] {
            conn.execute_batch(sql).unwrap();
        }
        conn.execute_batch(
            "INSERT INTO property (id, ref) VALUES (1, 'P1');
             INSERT INTO board (id, property_id, designation) VALUES (1, 1, 'CU1');
             INSERT INTO visit (id, property_id, date, ze_ohm) VALUES (1, 1, '2024-05-01', 0.31);
             INSERT INTO board_test (visit_id, board_id, ze_ohm) VALUES (1, 1, 0.31);",
        )
        .unwrap();
        conn.execute_batch(MIGRATIONS[8].1).unwrap();
        assert_eq!(
            dump(
                &conn,
                "SELECT ze_ohm, report_ref, outcome, interval_months, extent, agreed_limitations,
                        u0_v, ra_ohm, bonding_csa_mm2, bonding_water, bonding_gas, bonding_other
                 FROM visit"
            ),
            ["Real(0.31)|Null|Null|Null|Null|Null|Null|Null|Null|Null|Null|Null"]
        );
        assert_eq!(
            dump(
                &conn,
                "SELECT ze_ohm, zdb_ohm, submain_r1r2_ohm FROM board_test"
            ),
            ["Real(0.31)|Null|Null"]
        );
        let refuses = |sql: &str| conn.execute(sql, []).is_err();
        for bad in [
            "outcome = ' '",
            "report_ref = ''",
            "interval_months = 0",
            "interval_months = 121",
            "u0_v = 0",
            "ra_ohm = -1",
            "bonding_csa_mm2 = 0",
            "bonding_water = 'n/a'",
            "bonding_gas = 'Yes'",
            "bonding_other = 'maybe'",
        ] {
            assert!(refuses(&format!("UPDATE visit SET {bad}")), "{bad}");
        }
        assert!(!refuses(
            "UPDATE visit SET outcome = 'Satisfactory', interval_months = 60, u0_v = 230,
             ra_ohm = 85, bonding_csa_mm2 = 10, bonding_water = 'yes', bonding_gas = 'none',
             bonding_other = 'no'"
        ));
        assert!(refuses("UPDATE board_test SET zdb_ohm = -0.1"));
        assert!(refuses("UPDATE board_test SET submain_r1r2_ohm = -0.1"));
    }

    /// A database at version 3 with a register in it, as an earlier build left it.
    fn at_version_3() -> Connection {
        let conn = Connection::open_in_memory().unwrap();
        conn.pragma_update(None, "foreign_keys", true).unwrap();
        for (_, sql) in &MIGRATIONS[..3] {
            conn.execute_batch(sql).unwrap();
        }
        conn.pragma_update(None, "user_version", 3).unwrap();
        conn.execute_batch(
            "INSERT INTO property (id, ref) VALUES (1, 'P1');
             INSERT INTO board (id, property_id, designation, earthing) VALUES (1, 1, 'CU1', 'TN-C-S');
             INSERT INTO board (id, property_id, designation, fed_from_board_id) VALUES (2, 1, 'DB2', 1);
             INSERT INTO circuit (id, board_id, number, device, rcd_type) VALUES (1, 1, '1', 'B32', 'A');
             INSERT INTO circuit (id, board_id, number, status) VALUES (2, 2, '1', 'retired');
             INSERT INTO circuit (id, board_id, number, replaces_circuit_id) VALUES (3, 2, '1', 2);
             INSERT INTO visit (id, property_id, date) VALUES (1, 1, '2024-05-01');
             INSERT INTO test_record (visit_id, circuit_id, r1r2_ohm) VALUES (1, 1, 0.41);
             INSERT INTO circuit_change (circuit_id, date, visit_id, kind, field, old_value, new_value)
                 VALUES (1, '2024-05-01', 1, 'device_changed', 'device', 'B20', 'B32');
             INSERT INTO observation (visit_id, board_id, circuit_id, code, text)
                 VALUES (1, 1, 1, 'C3', 'no label');",
        )
        .unwrap();
        conn
    }

    fn dump(conn: &Connection, sql: &str) -> Vec<String> {
        let mut st = conn.prepare(sql).unwrap();
        let n = st.column_count();
        st.query_map([], |r| {
            (0..n)
                .map(|i| r.get_ref(i).map(|v| format!("{v:?}")))
                .collect::<rusqlite::Result<Vec<_>>>()
                .map(|v| v.join("|"))
        })
        .unwrap()
        .collect::<rusqlite::Result<_>>()
        .unwrap()
    }

    #[test]
    fn rebuilding_the_checks_keeps_every_row_index_and_constraint() {
        let mut conn = at_version_3();
        let tables = [
            "board",
            "circuit",
            "circuit_change",
            "observation",
            "test_record",
        ];
        let before: Vec<_> = tables
            .iter()
            .map(|t| dump(&conn, &format!("SELECT * FROM {t} ORDER BY id")))
            .collect();
        let indexes = "SELECT name FROM sqlite_schema WHERE type = 'index' ORDER BY name";
        let indexes_before = dump(&conn, indexes);
        assert_eq!(
            apply(&mut conn).unwrap(),
            vec![
                "004_checks_without_in_lists",
                "005_partial_replaces_index",
                "006_application_id",
                "007_property_ref_nocase_index",
                "008_rcd_delay",
                "009_visit_report_supply",
                "010_circuit_schedule"
            ]
        );
        assert_eq!(user_version(&conn).unwrap(), latest_version());
        for (t, rows) in tables.iter().zip(&before) {
            // 008 adds rcd_delay as the circuit's last column and 010 six more, NULL for these
            // rows; 010 adds three to test records.
            let added = match *t {
                "circuit" => 7,
                "test_record" => 3,
                _ => 0,
            };
            let mut after = dump(&conn, &format!("SELECT * FROM {t} ORDER BY id"));
            for row in &mut after {
                for _ in 0..added {
                    *row = row.strip_suffix("|Null").unwrap().to_string();
                }
            }
            assert_eq!(&after, rows, "{t}");
        }
        // Every index is kept; 007 adds one, 010 the unique index of its RCD table.
        let mut expected = indexes_before.clone();
        for name in ["property_ref_nocase", "sqlite_autoindex_rcd_device_1"] {
            expected.push(format!(
                "{:?}",
                rusqlite::types::ValueRef::Text(name.as_bytes())
            ));
        }
        expected.sort();
        let mut after = dump(&conn, indexes);
        after.sort();
        assert_eq!(after, expected);
        // No table of the old names is left behind, and no IN list of more than two values.
        // Read as text: `dump` shows values in their debug form, where no SQL could be found.
        let sql: String = conn
            .prepare("SELECT sql FROM sqlite_schema WHERE sql IS NOT NULL")
            .unwrap()
            .query_map([], |r| r.get::<_, String>(0))
            .unwrap()
            .collect::<rusqlite::Result<Vec<_>>>()
            .unwrap()
            .join("\n");
        assert!(sql.contains("CREATE TABLE"), "{sql}");
        assert!(!sql.contains("_004"), "{sql}");
        // IN lists of two values are allowed; longer ones cost a temporary B-tree per row.
        let upper = sql.to_ascii_uppercase();
        for (at, _) in upper.match_indices(" IN (") {
            let list = &upper[at + 5..];
            let list = &list[..list.find(')').unwrap_or(list.len())];
            assert!(
                list.matches(',').count() < 2,
                "an IN list of three or more: {list}"
            );
        }
        // Foreign keys are on again and hold.
        let fk: i64 = conn
            .query_row("PRAGMA foreign_keys", [], |r| r.get(0))
            .unwrap();
        assert_eq!(fk, 1);
        assert!(
            conn.execute(
                "INSERT INTO circuit (board_id, number) VALUES (99, '1')",
                []
            )
            .is_err()
        );
        // The rewritten checks refuse and accept what the IN lists did.
        let refuses = |sql: &str| conn.execute(sql, []).is_err();
        assert!(refuses("UPDATE circuit SET rcd_type = 'X' WHERE id = 1"));
        assert!(refuses("UPDATE circuit SET rcd_type = 'a' WHERE id = 1"));
        assert!(!refuses("UPDATE circuit SET rcd_type = NULL WHERE id = 1"));
        for t in ["AC", "A", "F", "B"] {
            assert!(!refuses(&format!(
                "UPDATE circuit SET rcd_type = '{t}' WHERE id = 1"
            )));
        }
        // Since 008 the delay S has its own column.
        assert!(refuses("UPDATE circuit SET rcd_type = 'S' WHERE id = 1"));
        assert!(!refuses("UPDATE circuit SET rcd_delay = 'S' WHERE id = 1"));
        assert!(refuses("UPDATE board SET earthing = 'TN' WHERE id = 1"));
        assert!(!refuses("UPDATE board SET earthing = 'TT' WHERE id = 1"));
        assert!(!refuses("UPDATE board SET earthing = NULL WHERE id = 1"));
        assert!(refuses(
            "UPDATE circuit_change SET kind = 'moved' WHERE id = 1"
        ));
        assert!(!refuses(
            "UPDATE circuit_change SET kind = 'retired' WHERE id = 1"
        ));
        assert!(refuses("UPDATE observation SET code = 'C4' WHERE id = 1"));
        assert!(!refuses("UPDATE observation SET code = 'FI' WHERE id = 1"));
        // The partial unique index still allows one circuit in service per number.
        assert!(refuses(
            "INSERT INTO circuit (board_id, number) VALUES (2, '1')"
        ));
    }

    #[test]
    fn a_rebuild_that_would_break_a_foreign_key_is_refused_whole() {
        let mut conn = at_version_3();
        // A dangling reference made while enforcement was off, as a damaged file might hold.
        conn.pragma_update(None, "foreign_keys", false).unwrap();
        conn.execute(
            "INSERT INTO circuit (board_id, number) VALUES (77, '9')",
            [],
        )
        .unwrap();
        conn.pragma_update(None, "foreign_keys", true).unwrap();
        let err = apply(&mut conn).unwrap_err().to_string();
        assert!(err.contains("broken foreign key"), "{err}");
        assert_eq!(user_version(&conn).unwrap(), 3);
        let fk: i64 = conn
            .query_row("PRAGMA foreign_keys", [], |r| r.get(0))
            .unwrap();
        assert_eq!(fk, 1);
        let tables = dump(
            &conn,
            "SELECT name FROM sqlite_schema WHERE name LIKE '%_004'",
        );
        assert!(tables.is_empty(), "{tables:?}");
    }

    #[test]
    fn the_schedule_columns_take_only_what_the_schedule_allows() {
        let mut conn = at_version_3();
        apply(&mut conn).unwrap();
        let refuses = |sql: &str| conn.execute(sql, []).is_err();
        // BS 7671:2018 Appendix 4: reference methods A to G, and 100 to 103 for cable in
        // thermal insulation (from memory).
        for m in ["A", "C", "G", "100", "103"] {
            assert!(!refuses(&format!(
                "UPDATE circuit SET ref_method = '{m}' WHERE id = 1"
            )));
        }
        for m in ["H", "c", "104", "99", ""] {
            assert!(
                refuses(&format!(
                    "UPDATE circuit SET ref_method = '{m}' WHERE id = 1"
                )),
                "{m}"
            );
        }
        // BS 7671:2018 Table 64: test voltages 250, 500 and 1000 V d.c.
        for v in [250, 500, 1000] {
            assert!(!refuses(&format!(
                "UPDATE test_record SET ir_test_v = {v} WHERE id = 1"
            )));
        }
        assert!(refuses(
            "UPDATE test_record SET ir_test_v = 400 WHERE id = 1"
        ));
        assert!(refuses(
            "UPDATE test_record SET polarity = 'ok' WHERE id = 1"
        ));
        assert!(!refuses(
            "UPDATE test_record SET polarity = 'incorrect' WHERE id = 1"
        ));
        assert!(refuses(
            "UPDATE test_record SET rcd_button = 'yes' WHERE id = 1"
        ));
        assert!(!refuses(
            "UPDATE test_record SET rcd_button = 'failed' WHERE id = 1"
        ));
        assert!(refuses("UPDATE circuit SET afdd = 2 WHERE id = 1"));
        assert!(refuses("UPDATE circuit SET points = -1 WHERE id = 1"));
        assert!(refuses("UPDATE circuit SET breaking_ka = 0 WHERE id = 1"));
        assert!(refuses("UPDATE circuit SET wiring_type = ' ' WHERE id = 1"));
        // An RCD belongs to a board; its identifier is unique there without regard to case.
        assert!(!refuses(
            "INSERT INTO rcd_device (board_id, designation) VALUES (1, 'RCD1')"
        ));
        assert!(refuses(
            "INSERT INTO rcd_device (board_id, designation) VALUES (1, 'rcd1')"
        ));
        assert!(!refuses(
            "INSERT INTO rcd_device (board_id, designation) VALUES (2, 'RCD1')"
        ));
        assert!(refuses(
            "INSERT INTO rcd_device (board_id, designation) VALUES (9, 'RCD2')"
        ));
        assert!(refuses(
            "UPDATE circuit SET rcd_device_id = 99 WHERE id = 1"
        ));
        assert!(!refuses(
            "UPDATE circuit SET rcd_device_id = 1 WHERE id = 1"
        ));
    }

    #[test]
    fn a_migrated_database_carries_ohmtrails_mark() {
        let mut conn = Connection::open_in_memory().unwrap();
        apply(&mut conn).unwrap();
        let id: i32 = conn
            .query_row("PRAGMA application_id", [], |r| r.get(0))
            .unwrap();
        assert_eq!(id, crate::store::APPLICATION_ID);
    }

    #[test]
    fn the_lineage_lookup_still_uses_the_partial_index() {
        let mut conn = Connection::open_in_memory().unwrap();
        apply(&mut conn).unwrap();
        let plan: String = conn
            .query_row(
                "EXPLAIN QUERY PLAN SELECT id FROM circuit WHERE replaces_circuit_id = ?1",
                [1],
                |r| r.get(3),
            )
            .unwrap();
        assert!(plan.contains("circuit_replaces"), "{plan}");
    }
}
