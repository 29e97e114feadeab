//! A property's whole history in one value, for the pure analysis to work on.
//!
//! [`Store::for_each_history`] streams the portfolio: one ordered query per table, merged by
//! property, so memory holds one property at a time and no query runs per property.

use std::collections::HashMap;

use chrono::NaiveDate;
use rusqlite::{Row, Statement};

use super::{Store, change_from_row, observation_from_row};
use crate::error::Result;
use crate::model::{
    Board, BoardTest, Circuit, CircuitChange, Observation, Property, TestRecord, Visit,
};

/// Everything recorded about one property: the register (retired parts included), the completed
/// visits, their test records, the dated circuit changes and the observations.
#[derive(Debug, Clone)]
pub struct PropertyHistory {
    pub property: Property,
    pub boards: Vec<Board>,
    pub circuits: Vec<Circuit>,
    /// Completed visits, oldest first.
    pub visits: Vec<Visit>,
    /// Test records at completed visits, by visit date.
    pub records: Vec<TestRecord>,
    /// What was measured at each board per visit (Ze, fault current, Zdb, sub-main R1+R2).
    pub board_tests: Vec<BoardTest>,
    /// Circuit changes, oldest first.
    pub changes: Vec<CircuitChange>,
    pub observations: Vec<Observation>,
    /// Calibration due date per instrument serial used at these visits.
    pub calibration: Vec<(String, Option<NaiveDate>)>,
}

fn qualified(cols: &str, alias: &str) -> String {
    cols.split(',')
        .map(|c| {
            let c = c.trim();
            if c.contains('(') || c.contains('.') {
                c.to_string()
            } else {
                format!("{alias}.{c}")
            }
        })
        .collect::<Vec<_>>()
        .join(", ")
}

/// The SQL of each stream. Every query takes `?1` (one property id, or NULL for all) and the
/// run of property ids `?2` to `?3`, and puts the property id in the column named at `pid`.
struct Queries {
    properties: String,
    boards: String,
    circuits: String,
    visits: String,
    records: String,
    board_tests: String,
    changes: String,
    observations: String,
}

/// Which parts of a history to load.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct HistoryParts {
    /// The visits' observations, which only reports show; the worklist goes without.
    pub observations: bool,
}

impl HistoryParts {
    /// Everything.
    pub const ALL: HistoryParts = HistoryParts { observations: true };
    /// What the worklist reads.
    pub const FOR_FLAGS: HistoryParts = HistoryParts {
        observations: false,
    };
}

/// The queries for the whole portfolio (`one` false) or for one property. For one property the
/// `?1 IS NULL OR` guard is dropped: SQLite cannot use an index through it, so it would scan
/// every table of the portfolio to load one property.
fn queries(one: bool) -> Queries {
    let q = all_queries();
    if !one {
        return q;
    }
    let f = |s: String| s.replace("?1 IS NULL OR ", "");
    Queries {
        properties: f(q.properties),
        boards: f(q.boards),
        circuits: f(q.circuits),
        visits: f(q.visits),
        records: f(q.records),
        board_tests: f(q.board_tests),
        changes: f(q.changes),
        observations: f(q.observations),
    }
}

fn all_queries() -> Queries {
    Queries {
        properties: format!(
            "SELECT {} FROM property p LEFT JOIN client c ON c.id = p.client_id
             WHERE (?1 IS NULL OR p.id = ?1) AND p.id BETWEEN ?2 AND ?3 ORDER BY p.id",
            Store::PROPERTY_COLS
        ),
        boards: format!(
            "SELECT {} FROM board b WHERE (?1 IS NULL OR b.property_id = ?1)
             AND b.property_id BETWEEN ?2 AND ?3 ORDER BY b.property_id, b.id",
            Store::BOARD_COLS
        ),
        // Ordered by property only, which the indexes give without sorting the portfolio's
        // circuits; each property's are put in register order as they are taken.
        circuits: format!(
            "SELECT {}, b.property_id FROM board b JOIN circuit c ON c.board_id = b.id
             WHERE (?1 IS NULL OR b.property_id = ?1) AND b.property_id BETWEEN ?2 AND ?3
             ORDER BY b.property_id",
            qualified(Store::CIRCUIT_COLS, "c")
        ),
        visits: format!(
            "SELECT {} FROM visit v WHERE v.state = 'complete' AND (?1 IS NULL OR v.property_id = ?1)
             AND v.property_id BETWEEN ?2 AND ?3 ORDER BY v.property_id, v.date",
            Store::VISIT_COLS
        ),
        records: format!(
            "SELECT {}, v.property_id FROM visit v JOIN test_record t ON t.visit_id = v.id
             WHERE v.state = 'complete' AND (?1 IS NULL OR v.property_id = ?1)
             AND v.property_id BETWEEN ?2 AND ?3 ORDER BY v.property_id, v.date, t.circuit_id",
            qualified(Store::RECORD_COLS, "t")
        ),
        board_tests: "SELECT bt.visit_id, bt.board_id, bt.ze_ohm, bt.pfc_ka, bt.zdb_ohm,
                bt.submain_r1r2_ohm, v.property_id
             FROM visit v JOIN board_test bt ON bt.visit_id = v.id
             WHERE v.state = 'complete' AND (?1 IS NULL OR v.property_id = ?1)
             AND v.property_id BETWEEN ?2 AND ?3 ORDER BY v.property_id"
            .into(),
        changes: "SELECT ch.id, ch.circuit_id, ch.date, ch.kind, ch.field, ch.old_value, ch.new_value,
                    ch.note, b.property_id
             FROM circuit_change ch JOIN circuit c ON c.id = ch.circuit_id JOIN board b ON b.id = c.board_id
             LEFT JOIN visit pv ON pv.id = ch.visit_id
             -- A change made during a visit still being recorded is not history yet.
             WHERE (ch.visit_id IS NULL OR pv.state = 'complete') AND (?1 IS NULL OR b.property_id = ?1)
             AND b.property_id BETWEEN ?2 AND ?3 ORDER BY b.property_id, ch.date, ch.id"
            .into(),
        observations: "SELECT o.id, o.visit_id, b.designation, c.number, o.code, o.text, v.property_id
             FROM visit v JOIN observation o ON o.visit_id = v.id
             LEFT JOIN board b ON b.id = o.board_id LEFT JOIN circuit c ON c.id = o.circuit_id
             WHERE v.state = 'complete' AND (?1 IS NULL OR v.property_id = ?1)
             AND v.property_id BETWEEN ?2 AND ?3 ORDER BY v.property_id, o.id"
            .into(),
    }
}

/// One query's rows, taken property by property. Rows are decoded straight into the
/// property's vector; only the first row of the next property waits, decoded, in `stash`.
struct Stream<'s, T> {
    rows: rusqlite::Rows<'s>,
    /// The column holding the property id.
    pid: usize,
    decode: fn(&Row) -> rusqlite::Result<T>,
    stash: Option<(i64, T)>,
}

fn stream<'s, T>(
    stmt: &'s mut Statement<'_>,
    (filter, run): (Option<i64>, (i64, i64)),
    pid: usize,
    decode: fn(&Row) -> rusqlite::Result<T>,
) -> rusqlite::Result<Stream<'s, T>> {
    Ok(Stream {
        rows: stmt.query(rusqlite::params![filter, run.0, run.1])?,
        pid,
        decode,
        stash: None,
    })
}

/// A property's circuits in register order: by board, those in service first, then by
/// number as the register lists them (`ORDER BY board_id, status = 'retired',
/// CAST(number AS INTEGER), number, id`).
fn register_order(c: &Circuit) -> (i64, bool, i64, String, i64) {
    (
        c.board_id,
        c.status == crate::model::Status::Retired,
        sqlite_integer_prefix(&c.number),
        c.number.clone(),
        c.id,
    )
}

/// SQLite's `CAST(text AS INTEGER)`: leading spaces skipped, then the longest prefix that reads
/// as an integer (an optional sign and digits), 0 when there is none, clamped to the 64-bit
/// range (https://www.sqlite.org/lang_expr.html#castexpr).
fn sqlite_integer_prefix(text: &str) -> i64 {
    let t = text.trim_start_matches([' ', '\t', '\n', '\r', '\x0c']);
    let (negative, digits) = match t.as_bytes().first() {
        Some(b'-') => (true, &t[1..]),
        Some(b'+') => (false, &t[1..]),
        _ => (false, t),
    };
    let mut value: i128 = 0;
    for b in digits.bytes().take_while(u8::is_ascii_digit) {
        value = (value * 10 + i128::from(b - b'0')).min(i128::from(i64::MAX) + 1);
    }
    let value = if negative { -value } else { value };
    value.clamp(i128::from(i64::MIN), i128::from(i64::MAX)) as i64
}

/// Every property id.
pub const ALL_PROPERTIES: (i64, i64) = (i64::MIN, i64::MAX);

/// Take every leading item of `s` that belongs to property `id`.
fn take<T>(s: &mut Stream<'_, T>, id: i64) -> Result<Vec<T>> {
    let mut out = Vec::new();
    match s.stash.take() {
        Some((pid, v)) if pid > id => {
            s.stash = Some((pid, v));
            return Ok(out);
        }
        Some((pid, v)) if pid == id => out.push(v),
        _ => {}
    }
    while let Some(row) = s.rows.next()? {
        let pid: i64 = row.get(s.pid)?;
        match pid.cmp(&id) {
            // Rows of a property the outer stream does not have (cannot happen with foreign
            // keys on); skip them rather than stall.
            std::cmp::Ordering::Less => {}
            std::cmp::Ordering::Equal => out.push((s.decode)(row)?),
            std::cmp::Ordering::Greater => {
                s.stash = Some((pid, (s.decode)(row)?));
                break;
            }
        }
    }
    Ok(out)
}

impl Store {
    /// Load one property's history.
    pub fn history(&self, property_id: i64) -> Result<PropertyHistory> {
        let mut found = None;
        self.histories(Some(property_id), ALL_PROPERTIES, HistoryParts::ALL, |h| {
            found = Some(h);
            Ok(())
        })?;
        found.ok_or_else(|| crate::Error::not_found("property", property_id.to_string()))
    }

    /// Call `f` with each property's history in turn, in property-id order. One ordered query
    /// per table, merged as they stream, so only one property is in memory at a time.
    pub fn for_each_history(&self, f: impl FnMut(PropertyHistory) -> Result<()>) -> Result<()> {
        self.histories(None, ALL_PROPERTIES, HistoryParts::ALL, f)
    }

    /// [`Self::for_each_history`] over the properties whose ids run from `first` to `last`,
    /// loading only `parts` (the rest left empty).
    pub fn for_each_history_in(
        &self,
        (first, last): (i64, i64),
        parts: HistoryParts,
        f: impl FnMut(PropertyHistory) -> Result<()>,
    ) -> Result<()> {
        self.histories(None, (first, last), parts, f)
    }

    /// Property ids in `n` runs of about equal count, in order: (first, last) of each.
    /// Fewer runs when there are fewer properties.
    pub fn property_id_runs(&self, n: usize) -> Result<Vec<(i64, i64)>> {
        let ids: Vec<i64> = {
            let mut st = self.conn.prepare("SELECT id FROM property ORDER BY id")?;
            st.query_map([], |r| r.get(0))?
                .collect::<rusqlite::Result<_>>()?
        };
        let size = ids.len().div_ceil(n.max(1)).max(1);
        Ok(ids.chunks(size).map(|c| (c[0], c[c.len() - 1])).collect())
    }

    fn histories(
        &self,
        filter: Option<i64>,
        run: (i64, i64),
        parts: HistoryParts,
        mut f: impl FnMut(PropertyHistory) -> Result<()>,
    ) -> Result<()> {
        let q = queries(filter.is_some());
        let calibration: HashMap<String, Option<NaiveDate>> = self
            .instruments()?
            .into_iter()
            .map(|i| (i.serial, i.calibration_due))
            .collect();

        let mut st_p = self.conn.prepare(&q.properties)?;
        let mut st_b = self.conn.prepare(&q.boards)?;
        let mut st_c = self.conn.prepare(&q.circuits)?;
        let mut st_v = self.conn.prepare(&q.visits)?;
        let mut st_r = self.conn.prepare(&q.records)?;
        let mut st_t = self.conn.prepare(&q.board_tests)?;
        let mut st_ch = self.conn.prepare(&q.changes)?;
        let mut st_o = if parts.observations {
            Some(self.conn.prepare(&q.observations)?)
        } else {
            None
        };

        let properties = st_p.query_map(
            rusqlite::params![filter, run.0, run.1],
            Store::property_from_row,
        )?;
        let filter = (filter, run);
        let mut boards = stream(&mut st_b, filter, 1, Store::board_from_row)?;
        let mut circuits = stream(
            &mut st_c,
            filter,
            Store::CIRCUIT_COL_COUNT,
            Store::circuit_from_row,
        )?;
        let mut visits = stream(&mut st_v, filter, 1, Store::visit_from_row)?;
        let mut records = stream(
            &mut st_r,
            filter,
            Store::RECORD_COL_COUNT,
            Store::record_from_row,
        )?;
        let mut tests = stream(&mut st_t, filter, 6, |r| {
            Ok(BoardTest {
                visit_id: r.get(0)?,
                board_id: r.get(1)?,
                ze_ohm: r.get(2)?,
                pfc_ka: r.get(3)?,
                zdb_ohm: r.get(4)?,
                submain_r1r2_ohm: r.get(5)?,
            })
        })?;
        let mut changes = stream(&mut st_ch, filter, 8, change_from_row)?;
        let mut observations = match &mut st_o {
            Some(st) => Some(stream(st, filter, 6, observation_from_row)?),
            None => None,
        };

        for property in properties {
            let property = property?;
            let id = property.id;
            let visits = take(&mut visits, id)?;
            let mut used: Vec<(String, Option<NaiveDate>)> = Vec::new();
            for v in &visits {
                if let Some(s) = &v.instrument
                    && !used.iter().any(|(u, _)| u == s)
                {
                    used.push((s.clone(), calibration.get(s).copied().flatten()));
                }
            }
            let mut property_circuits = take(&mut circuits, id)?;
            property_circuits.sort_by_cached_key(register_order);
            f(PropertyHistory {
                property,
                boards: take(&mut boards, id)?,
                circuits: property_circuits,
                records: take(&mut records, id)?,
                board_tests: take(&mut tests, id)?,
                changes: take(&mut changes, id)?,
                observations: match &mut observations {
                    Some(o) => take(o, id)?,
                    None => Vec::new(),
                },
                visits,
                calibration: used,
            })?;
        }
        Ok(())
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Loading one property must not scan a whole table: with 100,000 properties a scan
    /// costs tens of milliseconds per report. Checked on SQLite's own query plan.
    #[test]
    fn one_property_uses_indexes_only() {
        let store = Store::open_in_memory().unwrap();
        let q = queries(true);
        for (name, sql) in [
            ("properties", &q.properties),
            ("boards", &q.boards),
            ("circuits", &q.circuits),
            ("visits", &q.visits),
            ("records", &q.records),
            ("board_tests", &q.board_tests),
            ("changes", &q.changes),
            ("observations", &q.observations),
        ] {
            let mut stmt = store
                .conn
                .prepare(&format!("EXPLAIN QUERY PLAN {sql}"))
                .unwrap();
            let plan: Vec<String> = stmt
                .query_map(
                    rusqlite::params![1_i64, ALL_PROPERTIES.0, ALL_PROPERTIES.1],
                    |r| r.get::<_, String>(3),
                )
                .unwrap()
                .collect::<rusqlite::Result<_>>()
                .unwrap();
            assert!(
                !plan.iter().any(|p| p.starts_with("SCAN ")),
                "{name} scans a table: {plan:?}"
            );
        }
        // The portfolio's circuits are not sorted as a whole.
        let mut stmt = store
            .conn
            .prepare(&format!("EXPLAIN QUERY PLAN {}", queries(false).circuits))
            .unwrap();
        let plan: Vec<String> = stmt
            .query_map(rusqlite::params![None::<i64>, 1, 5000], |r| {
                r.get::<_, String>(3)
            })
            .unwrap()
            .collect::<rusqlite::Result<_>>()
            .unwrap();
        assert!(!plan.iter().any(|p| p.contains("TEMP B-TREE")), "{plan:?}");
        // The portfolio queries keep the NULL guard so one statement serves every property.
        assert!(queries(false).visits.contains("?1 IS NULL OR"));
    }

    #[test]
    fn the_integer_prefix_is_sqlites_cast() {
        let conn = rusqlite::Connection::open_in_memory().unwrap();
        for text in [
            "1",
            "10",
            "2a",
            "a2",
            "",
            " 3",
            "\t7x",
            "-4",
            "+5",
            "-",
            "+",
            " - 1",
            "007",
            "1.9",
            "1e3",
            "99999999999999999999",
            "-99999999999999999999",
            "9223372036854775807",
            "9223372036854775808",
            "-9223372036854775808",
            "L1",
            "١٢",
        ] {
            let expected: i64 = conn
                .query_row("SELECT CAST(?1 AS INTEGER)", [text], |r| r.get(0))
                .unwrap();
            assert_eq!(sqlite_integer_prefix(text), expected, "{text:?}");
        }
    }

    /// The order circuits are taken in is the register's SQL order, numbers that read as
    /// numbers by value, retired circuits after those in service.
    #[test]
    fn circuits_come_in_register_order() {
        use crate::store::{CircuitDetails, NewBoard, NewProperty};
        let store = Store::open_in_memory().unwrap();
        store
            .add_property(&NewProperty {
                reference: "P-1".into(),
                ..Default::default()
            })
            .unwrap();
        for board in ["DB2", "CU1"] {
            store
                .add_board(
                    "P-1",
                    &NewBoard {
                        designation: board.into(),
                        ..Default::default()
                    },
                )
                .unwrap();
        }
        let mut retire = None;
        for (board, number) in [
            ("CU1", "10"),
            ("DB2", "1"),
            ("CU1", "2"),
            ("CU1", "L1"),
            ("CU1", "2a"),
            ("CU1", "1"),
            ("DB2", "A"),
        ] {
            let c = store
                .add_circuit("P-1", board, number, &CircuitDetails::default())
                .unwrap();
            if number == "2" {
                retire = Some(c.id);
            }
        }
        let date = NaiveDate::from_ymd_opt(2024, 1, 1).unwrap();
        store.retire_circuit(retire.unwrap(), date, None).unwrap();
        let id = store.property("P-1").unwrap().id;
        let taken: Vec<i64> = store
            .history(id)
            .unwrap()
            .circuits
            .iter()
            .map(|c| c.id)
            .collect();
        let mut st = store
            .conn
            .prepare(
                "SELECT c.id FROM circuit c JOIN board b ON b.id = c.board_id
                 ORDER BY b.property_id, b.id, c.status = 'retired', CAST(c.number AS INTEGER),
                 c.number, c.id",
            )
            .unwrap();
        let sql: Vec<i64> = st
            .query_map([], |r| r.get(0))
            .unwrap()
            .collect::<rusqlite::Result<_>>()
            .unwrap();
        assert_eq!(taken.len(), 7);
        assert_eq!(taken, sql);
    }

    fn with_properties(store: &Store, n: usize) {
        for i in 0..n {
            store
                .add_property(&crate::store::NewProperty {
                    reference: format!("P-{i}"),
                    ..Default::default()
                })
                .unwrap();
        }
    }

    #[test]
    fn property_ids_are_cut_into_runs_of_about_equal_count() {
        let store = Store::open_in_memory().unwrap();
        assert!(store.property_id_runs(2).unwrap().is_empty());
        with_properties(&store, 5);
        assert_eq!(store.property_id_runs(2).unwrap(), vec![(1, 3), (4, 5)]);
        assert_eq!(store.property_id_runs(1).unwrap(), vec![(1, 5)]);
        assert_eq!(store.property_id_runs(8).unwrap().len(), 5);
        let mut seen = Vec::new();
        for run in store.property_id_runs(2).unwrap() {
            store
                .for_each_history_in(run, HistoryParts::ALL, |h| {
                    seen.push(h.property.id);
                    Ok(())
                })
                .unwrap();
        }
        assert_eq!(seen, vec![1, 2, 3, 4, 5]);
    }

    #[test]
    fn a_shared_read_sees_one_snapshot_until_it_ends() {
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("t.db");
        let a = Store::open(&path).unwrap();
        with_properties(&a, 3);
        let b = a.reader().unwrap().unwrap();
        assert!(Store::begin_shared_read(&[&a, &b]).unwrap());
        // A commit after the read began is not seen by either connection.
        let writer = Store::open(&path).unwrap();
        with_properties_named(&writer, "LATE");
        let count = |s: &Store| -> i64 {
            s.conn
                .query_row("SELECT count(*) FROM property", [], |r| r.get(0))
                .unwrap()
        };
        assert_eq!((count(&a), count(&b)), (3, 3));
        a.end_read().unwrap();
        b.end_read().unwrap();
        assert_eq!((count(&a), count(&b)), (4, 4));
        // A writer holding the lock means no shared read, and nothing left begun.
        writer.conn.execute_batch("BEGIN IMMEDIATE").unwrap();
        assert!(!Store::begin_shared_read(&[&a, &b]).unwrap());
        assert!(a.conn.is_autocommit() && b.conn.is_autocommit());
        writer.conn.execute_batch("ROLLBACK").unwrap();
    }

    /// The worklist's lean read leaves out only what it says it leaves out.
    #[test]
    fn the_worklist_read_keeps_every_reading() {
        let store = Store::open_in_memory().unwrap();
        crate::demo::build(&store).unwrap();
        store
            .conn
            .execute_batch(
                "UPDATE test_record SET note = 'lead reversed at first', limitations = 'zs_ohm'
                 WHERE id = (SELECT min(id) FROM test_record)",
            )
            .unwrap();
        let mut whole = Vec::new();
        store
            .for_each_history_in(ALL_PROPERTIES, HistoryParts::ALL, |h| {
                whole.push(h);
                Ok(())
            })
            .unwrap();
        let mut lean = Vec::new();
        store
            .for_each_history_in(ALL_PROPERTIES, HistoryParts::FOR_FLAGS, |h| {
                lean.push(h);
                Ok(())
            })
            .unwrap();
        assert_eq!(whole.len(), lean.len());
        assert!(whole.iter().any(|h| !h.observations.is_empty()));
        assert!(
            whole
                .iter()
                .flat_map(|h| &h.records)
                .any(|r| r.readings.note.is_some() && !r.readings.limitations.is_empty())
        );
        for (w, l) in whole.iter().zip(&lean) {
            assert!(l.observations.is_empty());
            assert_eq!(w.records.len(), l.records.len());
            assert_eq!(w.records, l.records);
            assert_eq!(w.circuits, l.circuits);
            assert_eq!(w.visits, l.visits);
            assert_eq!(w.changes, l.changes);
            assert_eq!(w.board_tests, l.board_tests);
        }
    }

    fn with_properties_named(store: &Store, reference: &str) {
        store
            .add_property(&crate::store::NewProperty {
                reference: reference.into(),
                ..Default::default()
            })
            .unwrap();
    }
}
