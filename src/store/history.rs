//! A property's whole history in one value, for the pure analysis to work on.

use rusqlite::params;

use super::Store;
use crate::error::Result;
use crate::model::{Board, Circuit, CircuitChange, Observation, Property, TestRecord, Visit};

/// Everything recorded about one property: the register (retired parts included), the completed
/// visits, their test records, the dated circuit changes and the observations.
#[derive(Debug, Clone)]
pub struct PropertyHistory {
    pub property: Property,
    pub boards: Vec<Board>,
    pub circuits: Vec<Circuit>,
    /// Completed visits, oldest first.
    pub visits: Vec<Visit>,
    /// Test records at completed visits.
    pub records: Vec<TestRecord>,
    /// Ze and fault current per board per visit: (visit_id, board_id, ze_ohm, pfc_ka).
    pub board_tests: Vec<(i64, i64, Option<f64>, Option<f64>)>,
    /// Circuit changes, oldest first.
    pub changes: Vec<CircuitChange>,
    pub observations: Vec<Observation>,
    /// Calibration due date per instrument serial used at these visits.
    pub calibration: Vec<(String, Option<chrono::NaiveDate>)>,
}

impl Store {
    /// Every property id, in reference order.
    pub fn property_ids(&self) -> Result<Vec<i64>> {
        let mut stmt = self
            .conn
            .prepare_cached("SELECT id FROM property ORDER BY ref")?;
        let ids = stmt.query_map([], |r| r.get(0))?;
        Ok(ids.collect::<rusqlite::Result<_>>()?)
    }

    /// Load one property's history with a handful of indexed queries.
    pub fn history(&self, property_id: i64) -> Result<PropertyHistory> {
        let reference: String = self.conn.query_row(
            "SELECT ref FROM property WHERE id = ?1",
            [property_id],
            |r| r.get(0),
        )?;
        let property = self.property(&reference)?;
        let boards = self.boards(property_id)?;
        let mut circuits = Vec::new();
        for b in &boards {
            circuits.extend(self.circuits(b.id)?);
        }
        let visits = self.property_visits(property_id)?;

        let sql = format!(
            "SELECT {} FROM test_record t JOIN visit v ON v.id = t.visit_id
             WHERE v.property_id = ?1 AND v.state = 'complete' ORDER BY v.date, t.circuit_id",
            Self::RECORD_COLS
                .split(',')
                .map(|c| format!("t.{}", c.trim()))
                .collect::<Vec<_>>()
                .join(", ")
        );
        let mut stmt = self.conn.prepare_cached(&sql)?;
        let records = stmt
            .query_map([property_id], Self::record_from_row)?
            .collect::<rusqlite::Result<Vec<_>>>()?;

        let mut stmt = self.conn.prepare_cached(
            "SELECT bt.visit_id, bt.board_id, bt.ze_ohm, bt.pfc_ka FROM board_test bt
             JOIN visit v ON v.id = bt.visit_id WHERE v.property_id = ?1 AND v.state = 'complete'",
        )?;
        let board_tests = stmt
            .query_map([property_id], |r| {
                Ok((r.get(0)?, r.get(1)?, r.get(2)?, r.get(3)?))
            })?
            .collect::<rusqlite::Result<Vec<_>>>()?;

        let mut changes = Vec::new();
        for c in &circuits {
            changes.extend(self.changes(c.id)?);
        }
        changes.sort_by_key(|c| (c.date, c.id));

        let mut observations = Vec::new();
        for v in &visits {
            observations.extend(self.observations(v.id)?);
        }

        let mut stmt = self.conn.prepare_cached(
            "SELECT DISTINCT i.serial, i.calibration_due FROM instrument i
             JOIN visit v ON v.instrument_id = i.id WHERE v.property_id = ?1",
        )?;
        let calibration = stmt
            .query_map(params![property_id], |r| Ok((r.get(0)?, r.get(1)?)))?
            .collect::<rusqlite::Result<Vec<_>>>()?;

        Ok(PropertyHistory {
            property,
            boards,
            circuits,
            visits,
            records,
            board_tests,
            changes,
            observations,
            calibration,
        })
    }
}
