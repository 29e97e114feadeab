//! A visit being recorded on site: its readings are written one at a time, each in its own
//! small transaction, so a crash loses nothing; it can be carried on or abandoned.

use rusqlite::{OptionalExtension, params};

use super::CircuitDetails;
use super::Store;
use crate::error::{Error, Result};
use crate::model::{ChangeKind, Circuit, CircuitChange, Readings, TestRecord, Visit, VisitState};

/// A board reading at a visit: (board id, Ze or Zdb in Ω, prospective fault current in kA).
pub type BoardReading = (i64, Option<f64>, Option<f64>);

/// What abandoning a pending visit discarded.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub struct Abandoned {
    pub test_records: usize,
    pub board_readings: usize,
    /// Register changes made at the visit and put back as they were.
    pub changes_reverted: usize,
    /// Circuits added to the register at the visit, taken out of it again.
    pub circuits_removed: usize,
}

/// The change that marks a circuit as added to the register at a pending visit: field
/// `circuit`, no old value, the new value `BOARD/NUMBER`, the visit's id. Abandoning the visit
/// removes such a circuit again; completing it keeps the change as the circuit's first event.
const ADDED_FIELD: &str = "circuit";
const ADDED_NOTE: &str = "added to the register on site";

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

    /// Add a circuit the register lacks, found at the pending visit `visit_id`, as `add_circuit`
    /// does, and record the addition on the visit (a register correction dated the visit's
    /// day), so abandoning the visit takes the circuit out again. One transaction.
    pub fn add_circuit_at_visit(
        &self,
        visit_id: i64,
        property_ref: &str,
        board: &str,
        number: &str,
        details: &CircuitDetails,
    ) -> Result<Circuit> {
        self.atomic(|s| {
            let v = s.visit_by_id(visit_id)?;
            if v.state != VisitState::Pending {
                return Err(Error::invalid(format!(
                    "the visit of {} is complete: circuits are added at a pending visit",
                    v.date
                )));
            }
            let c = s.add_circuit(property_ref, board, number, details)?;
            let designation = s.board_by_id(c.board_id)?.designation;
            s.record_change(
                c.id,
                v.date,
                ChangeKind::RegisterCorrected,
                Some(ADDED_FIELD),
                None,
                Some(&format!("{designation}/{}", c.number)),
                Some(visit_id),
                Some(ADDED_NOTE),
            )?;
            Ok(c)
        })
    }

    /// Discard a pending visit: its readings, board readings and observations are deleted,
    /// register changes made at it are put back as they were, and circuits added at it are
    /// taken out of the register. A complete visit is refused.
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
                circuits_removed: 0,
            };
            let mut changes = s.visit_changes(visit_id)?;
            changes.reverse();
            let mut added = Vec::new();
            for ch in &changes {
                match ch.field.as_deref() {
                    Some(ADDED_FIELD) if ch.old_value.is_none() => added.push(ch.circuit_id),
                    Some(field) => {
                        s.restore_field(ch.circuit_id, field, ch.old_value.as_deref())?;
                        out.changes_reverted += 1;
                    }
                    None => {}
                }
            }
            s.delete_visit(visit_id)?;
            for id in added {
                s.remove_added_circuit(id, &v)?;
                out.circuits_removed += 1;
            }
            Ok(out)
        })
    }

    /// Delete a circuit added at the pending visit `v`, once the visit's own records are gone.
    /// Anything else recorded on it since (another visit's readings, an observation, a change,
    /// a circuit replacing it) is refused with a sentence saying so, and nothing is removed.
    fn remove_added_circuit(&self, circuit_id: i64, v: &Visit) -> Result<()> {
        let c = self.circuit_by_id(circuit_id)?;
        let uses: i64 = self.conn.query_row(
            "SELECT (SELECT count(*) FROM test_record WHERE circuit_id = ?1)
                  + (SELECT count(*) FROM observation WHERE circuit_id = ?1)
                  + (SELECT count(*) FROM circuit_change WHERE circuit_id = ?1)
                  + (SELECT count(*) FROM circuit WHERE replaces_circuit_id = ?1)",
            [circuit_id],
            |r| r.get(0),
        )?;
        if uses > 0 {
            return Err(Error::invalid(format!(
                "circuit {}, added to the register at the pending visit of {}, has been recorded elsewhere since (another visit, an observation or a register change): nothing was abandoned; finish the visit with `record --resume` instead",
                c.number, v.date
            )));
        }
        self.conn
            .execute("DELETE FROM circuit WHERE id = ?1", [circuit_id])?;
        Ok(())
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

    fn property_with_board(s: &Store) -> i64 {
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
        p.id
    }

    fn visit_on(s: &Store, property_id: i64, day: u32, state: VisitState) -> Visit {
        s.add_visit(
            property_id,
            &NewVisit {
                date: chrono::NaiveDate::from_ymd_opt(2025, 6, day),
                ..Default::default()
            },
            state,
        )
        .unwrap()
    }

    #[test]
    fn a_circuit_added_at_a_pending_visit_goes_when_it_is_abandoned() {
        let s = Store::open_in_memory().unwrap();
        let pid = property_with_board(&s);
        let v = visit_on(&s, pid, 1, VisitState::Pending);
        let c = s
            .add_circuit_at_visit(v.id, "P-1", "CU", "3", &CircuitDetails::default())
            .unwrap();
        s.update_reading(v.id, c.id, |r| r.zs_ohm = Some(0.8))
            .unwrap();
        let out = s.abandon_visit(v.id).unwrap();
        assert_eq!((out.circuits_removed, out.test_records), (1, 1));
        assert!(s.circuit_by_id(c.id).is_err());
    }

    #[test]
    fn a_circuit_added_at_a_pending_visit_and_recorded_elsewhere_is_not_abandoned() {
        let s = Store::open_in_memory().unwrap();
        let pid = property_with_board(&s);
        let v = visit_on(&s, pid, 1, VisitState::Pending);
        let c = s
            .add_circuit_at_visit(v.id, "P-1", "CU", "3", &CircuitDetails::default())
            .unwrap();
        // Another visit, complete, recorded the circuit meanwhile (a visit file imported).
        let other = visit_on(&s, pid, 2, VisitState::Complete);
        s.update_reading(other.id, c.id, |r| r.zs_ohm = Some(0.8))
            .unwrap();
        let e = s.abandon_visit(v.id).unwrap_err().to_string();
        assert!(e.contains("circuit 3, added to the register"), "{e}");
        // Nothing was changed: the visit, its change and the circuit are all still there.
        assert_eq!(s.pending_visit(pid).unwrap().map(|x| x.id), Some(v.id));
        assert_eq!(s.visit_changes(v.id).unwrap().len(), 1);
        assert!(s.circuit_by_id(c.id).is_ok());
        // A complete visit takes no circuit added at it.
        let e = s
            .add_circuit_at_visit(other.id, "P-1", "CU", "4", &CircuitDetails::default())
            .unwrap_err()
            .to_string();
        assert!(e.contains("is complete"), "{e}");
    }

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
