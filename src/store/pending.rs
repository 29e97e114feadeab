//! A visit being recorded on site: its readings are written one at a time, each in its own
//! small transaction, so a crash loses nothing; it can be carried on or abandoned.

use rusqlite::{OptionalExtension, params};

use super::Store;
use crate::error::{Error, Result};
use crate::model::{CircuitChange, Readings, TestRecord, Visit, VisitState};

/// A board reading at a visit: (board id, Ze or Zdb in Ω, prospective fault current in kA).
pub type BoardReading = (i64, Option<f64>, Option<f64>);

/// What abandoning a pending visit discarded.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub struct Abandoned {
    pub test_records: usize,
    pub board_readings: usize,
    /// Register changes made at the visit and put back as they were.
    pub changes_reverted: usize,
}

impl Store {
    /// The property's pending visit, if one is being recorded.
    pub fn pending_visit(&self, property_id: i64) -> Result<Option<Visit>> {
        let id: Option<i64> = self
            .conn
            .query_row(
                "SELECT id FROM visit WHERE property_id = ?1 AND state = 'pending' ORDER BY date LIMIT 1",
                [property_id],
                |r| r.get(0),
            )
            .optional()?;
        id.map(|id| self.visit_by_id(id)).transpose()
    }

    /// Every test record of one visit, pending or complete.
    pub fn visit_records(&self, visit_id: i64) -> Result<Vec<TestRecord>> {
        let sql = format!(
            "SELECT {} FROM test_record WHERE visit_id = ?1 ORDER BY circuit_id",
            Self::RECORD_COLS
        );
        let mut stmt = self.conn.prepare(&sql)?;
        let rows = stmt.query_map([visit_id], Self::record_from_row)?;
        Ok(rows.collect::<rusqlite::Result<_>>()?)
    }

    /// Board readings of one visit: (board id, Ze, fault current).
    pub fn visit_board_tests(&self, visit_id: i64) -> Result<Vec<BoardReading>> {
        let mut stmt = self.conn.prepare(
            "SELECT board_id, ze_ohm, pfc_ka FROM board_test WHERE visit_id = ?1 ORDER BY board_id",
        )?;
        let rows = stmt.query_map([visit_id], |r| Ok((r.get(0)?, r.get(1)?, r.get(2)?)))?;
        Ok(rows.collect::<rusqlite::Result<_>>()?)
    }

    /// Circuit changes recorded at one visit, oldest first.
    pub fn visit_changes(&self, visit_id: i64) -> Result<Vec<CircuitChange>> {
        let mut stmt = self.conn.prepare(&format!(
            "SELECT {} FROM circuit_change WHERE visit_id = ?1 ORDER BY id",
            super::CHANGE_COLS
        ))?;
        let rows = stmt.query_map([visit_id], super::change_from_row)?;
        Ok(rows.collect::<rusqlite::Result<_>>()?)
    }

    /// Change one circuit's readings at a visit in one transaction: read, apply `f`, write.
    /// Returns the readings as stored.
    pub fn update_reading(
        &self,
        visit_id: i64,
        circuit_id: i64,
        f: impl FnOnce(&mut Readings),
    ) -> Result<Readings> {
        self.atomic(|s| {
            let mut r = s
                .test_record(visit_id, circuit_id)?
                .map(|t| t.readings)
                .unwrap_or_default();
            f(&mut r);
            s.put_test_record(visit_id, circuit_id, &r)?;
            Ok(r)
        })
    }

    /// Discard a pending visit: its readings, board readings and observations are deleted, and
    /// register changes made at it are put back as they were. A complete visit is refused.
    pub fn abandon_visit(&self, visit_id: i64) -> Result<Abandoned> {
        self.atomic(|s| {
            let v = s.visit_by_id(visit_id)?;
            if v.state != VisitState::Pending {
                return Err(Error::invalid(format!(
                    "the visit of {} is complete: only a pending visit can be abandoned",
                    v.date
                )));
            }
            let mut out = Abandoned {
                test_records: s.visit_records(visit_id)?.len(),
                board_readings: s.visit_board_tests(visit_id)?.len(),
                changes_reverted: 0,
            };
            let mut changes = s.visit_changes(visit_id)?;
            changes.reverse();
            for ch in &changes {
                if let Some(field) = ch.field.as_deref() {
                    s.restore_field(ch.circuit_id, field, ch.old_value.as_deref())?;
                    out.changes_reverted += 1;
                }
            }
            s.delete_visit(visit_id)?;
            Ok(out)
        })
    }

    /// Put one register field of a circuit back to its text value, as `edit_circuit` wrote it.
    fn restore_field(&self, circuit_id: i64, field: &str, old: Option<&str>) -> Result<()> {
        use rusqlite::types::Value;
        let bad = || {
            Error::invalid(format!(
                "cannot restore {field} = {old:?} on circuit {circuit_id}"
            ))
        };
        // A type S stored before the delay was its own attribute (migration 008) was a delay,
        // not a waveform type: it goes back as the delay.
        if (field, old) == ("rcd_type", Some("S")) {
            self.conn.execute(
                "UPDATE circuit SET rcd_type = NULL, rcd_delay = 'S' WHERE id = ?1",
                params![circuit_id],
            )?;
            return Ok(());
        }
        let mut column = field;
        let value = match (field, old) {
            ("rcd_id", old) => {
                column = "rcd_device_id";
                match old {
                    Some(t) => {
                        let board: i64 = self.conn.query_row(
                            "SELECT board_id FROM circuit WHERE id = ?1",
                            [circuit_id],
                            |r| r.get(0),
                        )?;
                        Value::Integer(self.rcd_device(board, t)?.0)
                    }
                    None => Value::Null,
                }
            }
            (_, None) => Value::Null,
            (
                "description" | "kind" | "device" | "rcd_type" | "rcd_delay" | "insulation"
                | "wiring_type" | "ref_method",
                Some(t),
            ) => Value::Text(t.to_string()),
            ("live_mm2" | "cpc_mm2" | "length_m" | "disconnect_s" | "breaking_ka", Some(t)) => {
                Value::Real(t.parse().map_err(|_| bad())?)
            }
            ("rcd_ma" | "points", Some(t)) => Value::Integer(t.parse().map_err(|_| bad())?),
            ("afdd", Some("yes")) => Value::Integer(1),
            ("afdd", Some("no")) => Value::Integer(0),
            _ => return Err(bad()),
        };
        self.conn.execute(
            &format!("UPDATE circuit SET {column} = ?1 WHERE id = ?2"),
            params![value, circuit_id],
        )?;
        Ok(())
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::store::{CircuitDetails, NewBoard, NewProperty, NewVisit};

    #[test]
    fn abandoning_puts_back_a_type_s_logged_before_the_delay_was_its_own() {
        let s = Store::open_in_memory().unwrap();
        let p = s
            .add_property(&NewProperty {
                reference: "P-1".into(),
                ..Default::default()
            })
            .unwrap();
        s.add_board(
            "P-1",
            &NewBoard {
                designation: "CU".into(),
                ..Default::default()
            },
        )
        .unwrap();
        let c = s
            .add_circuit("P-1", "CU", "1", &CircuitDetails::default())
            .unwrap();
        let v = s
            .add_visit(
                p.id,
                &NewVisit {
                    date: chrono::NaiveDate::from_ymd_opt(2025, 6, 1),
                    ..Default::default()
                },
                VisitState::Pending,
            )
            .unwrap();
        // A change made at the pending visit before migration 008: type S became type A.
        s.conn
            .execute(
                "INSERT INTO circuit_change (circuit_id, date, visit_id, kind, field, old_value, new_value) \
                 VALUES (?1, '2025-06-01', ?2, 'register_corrected', 'rcd_type', 'S', 'A')",
                params![c.id, v.id],
            )
            .unwrap();
        s.conn
            .execute(
                "UPDATE circuit SET rcd_type = 'A' WHERE id = ?1",
                params![c.id],
            )
            .unwrap();
        let out = s.abandon_visit(v.id).unwrap();
        assert_eq!(out.changes_reverted, 1);
        let (ty, delay): (Option<String>, Option<String>) = s
            .conn
            .query_row(
                "SELECT rcd_type, rcd_delay FROM circuit WHERE id = ?1",
                params![c.id],
                |r| Ok((r.get(0)?, r.get(1)?)),
            )
            .unwrap();
        assert_eq!((ty, delay), (None, Some("S".to_string())));
    }
}
