//! Visits, their test records and observations.

use chrono::NaiveDate;
use rusqlite::{OptionalExtension, Row, params};

use super::Store;
use crate::error::{Error, Result};
use crate::model::{
    BoardTest, Bonding, Observation, ObservationCode, Readings, SupplyRecord, TestRecord, Visit,
    VisitReport, VisitState,
};

/// A visit to add to the history.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct NewVisit {
    pub date: Option<NaiveDate>,
    pub inspector: Option<String>,
    /// Serial of an instrument; created in the register on first sight.
    pub instrument: Option<String>,
    pub ambient_c: Option<f64>,
    pub ze_ohm: Option<f64>,
    pub pfc_ka: Option<f64>,
    /// The report as the inspector recorded it.
    pub report: VisitReport,
    /// Supply characteristics and main bonding at the origin.
    pub supply: SupplyRecord,
}

/// Refuse a recorded report or supply that no schedule holds: control characters, an empty
/// outcome, an interval outside 1 to 120 months, readings that are not readings.
pub fn validate_report_supply(r: &VisitReport, s: &SupplyRecord) -> Result<()> {
    super::check_text("report reference", r.report_ref.as_deref())?;
    super::check_text("extent", r.extent.as_deref())?;
    super::check_text("limitations", r.limitations.as_deref())?;
    if let Some(o) = &r.outcome {
        crate::model::validate_outcome(o).map_err(Error::Invalid)?;
    }
    if r.report_ref.as_deref().is_some_and(|t| t.trim().is_empty()) {
        return Err(Error::invalid("report reference is empty"));
    }
    if let Some(m) = r.interval_months
        && !(1..=120).contains(&m)
    {
        return Err(Error::invalid(format!(
            "interval {m} months is out of range: expected 1 to 120 months"
        )));
    }
    if let Some(v) = s.u0_v {
        crate::model::validate_u0(v).map_err(Error::Invalid)?;
    }
    if let Some(x) = s.ra_ohm
        && !(x.is_finite() && x >= 0.0)
    {
        return Err(Error::invalid(format!(
            "Ra {x} is not a reading: expected a number of zero or more"
        )));
    }
    if let Some(v) = s.bonding_csa_mm2 {
        crate::model::validate_csa("main bonding csa", v).map_err(Error::Invalid)?;
    }
    Ok(())
}

fn bonding_str(b: Option<Bonding>) -> Option<&'static str> {
    b.map(Bonding::as_str)
}

fn bonding_at(r: &Row, i: usize) -> rusqlite::Result<Option<Bonding>> {
    let t: Option<String> = r.get(i)?;
    Ok(t.and_then(|t| t.parse().ok()))
}

impl Store {
    /// Add a visit. `state` decides whether it is part of the history yet.
    pub fn add_visit(&self, property_id: i64, v: &NewVisit, state: VisitState) -> Result<Visit> {
        let date = v
            .date
            .ok_or_else(|| Error::invalid("visit date is missing"))?;
        super::check_text("inspector", v.inspector.as_deref())?;
        super::check_text("instrument serial", v.instrument.as_deref())?;
        if let Some(t) = v.ambient_c
            && !(t.is_finite() && (-40.0..=60.0).contains(&t))
        {
            return Err(Error::invalid(format!(
                "ambient temperature {t} °C is out of range: expected -40 to 60 °C"
            )));
        }
        validate_report_supply(&v.report, &v.supply)?;
        for (name, x) in [("Ze", v.ze_ohm), ("prospective fault current", v.pfc_ka)] {
            if let Some(x) = x
                && !(x.is_finite() && x >= 0.0)
            {
                return Err(Error::invalid(format!(
                    "{name} {x} is not a reading: expected a number of zero or more"
                )));
            }
        }
        self.atomic(|s| {
            if let Some(existing) = s.visit_on(property_id, date)? {
                return Err(Error::invalid(format!(
                    "property already has a visit on {date} ({})",
                    match existing.state {
                        VisitState::Pending => "pending",
                        VisitState::Complete => "complete",
                    }
                )));
            }
            let instrument_id = match v.instrument.as_deref() {
                None => None,
                Some(serial) => Some(match s.instrument(serial)? {
                    Some(i) => i.id,
                    None => s.add_instrument(serial, None, None)?.id,
                }),
            };
            s.conn.execute(
                "INSERT INTO visit (property_id, date, inspector, instrument_id, ambient_c, ze_ohm, pfc_ka, state)
                 VALUES (?1, ?2, ?3, ?4, ?5, ?6, ?7, ?8)",
                params![
                    property_id,
                    date,
                    v.inspector,
                    instrument_id,
                    v.ambient_c,
                    v.ze_ohm,
                    v.pfc_ka,
                    state_str(state)
                ],
            )?;
            let id = s.conn.last_insert_rowid();
            s.set_visit_report_supply(id, &v.report, &v.supply)?;
            s.visit_by_id(id)
        })
    }

    pub(super) const VISIT_COLS: &'static str = "v.id, v.property_id, v.date, v.inspector,
        (SELECT i.serial FROM instrument i WHERE i.id = v.instrument_id),
        v.ambient_c, v.ze_ohm, v.pfc_ka, v.state, v.report_ref, v.outcome, v.interval_months,
        v.extent, v.agreed_limitations, v.u0_v, v.ra_ohm, v.bonding_csa_mm2, v.bonding_water,
        v.bonding_gas, v.bonding_other";

    /// Write a visit's recorded report and supply details, replacing those stored (a `None`
    /// clears a value). Validated first.
    pub fn set_visit_report_supply(
        &self,
        visit_id: i64,
        r: &VisitReport,
        s: &SupplyRecord,
    ) -> Result<()> {
        validate_report_supply(r, s)?;
        let mut st = self.conn.prepare_cached(
            "UPDATE visit SET report_ref = ?2, outcome = ?3, interval_months = ?4, extent = ?5,
                 agreed_limitations = ?6, u0_v = ?7, ra_ohm = ?8, bonding_csa_mm2 = ?9,
                 bonding_water = ?10, bonding_gas = ?11, bonding_other = ?12
             WHERE id = ?1",
        )?;
        st.execute(params![
            visit_id,
            r.report_ref,
            r.outcome,
            r.interval_months,
            r.extent,
            r.limitations,
            s.u0_v,
            s.ra_ohm,
            s.bonding_csa_mm2,
            bonding_str(s.bonding_water),
            bonding_str(s.bonding_gas),
            bonding_str(s.bonding_other),
        ])?;
        Ok(())
    }

    pub(super) fn visit_from_row(r: &Row) -> rusqlite::Result<Visit> {
        let state: String = r.get(8)?;
        Ok(Visit {
            id: r.get(0)?,
            property_id: r.get(1)?,
            date: r.get(2)?,
            inspector: r.get(3)?,
            instrument: r.get(4)?,
            ambient_c: r.get(5)?,
            ze_ohm: r.get(6)?,
            pfc_ka: r.get(7)?,
            state: if state == "pending" {
                VisitState::Pending
            } else {
                VisitState::Complete
            },
            report: VisitReport {
                report_ref: r.get(9)?,
                outcome: r.get(10)?,
                interval_months: r.get(11)?,
                extent: r.get(12)?,
                limitations: r.get(13)?,
            },
            supply: SupplyRecord {
                u0_v: r.get(14)?,
                ra_ohm: r.get(15)?,
                bonding_csa_mm2: r.get(16)?,
                bonding_water: bonding_at(r, 17)?,
                bonding_gas: bonding_at(r, 18)?,
                bonding_other: bonding_at(r, 19)?,
            },
        })
    }

    pub fn visit_by_id(&self, id: i64) -> Result<Visit> {
        let sql = format!("SELECT {} FROM visit v WHERE v.id = ?1", Self::VISIT_COLS);
        Ok(self.conn.query_row(&sql, [id], Self::visit_from_row)?)
    }

    /// The property's visit on a date, pending or complete.
    pub fn visit_on(&self, property_id: i64, date: NaiveDate) -> Result<Option<Visit>> {
        let sql = format!(
            "SELECT {} FROM visit v WHERE v.property_id = ?1 AND v.date = ?2",
            Self::VISIT_COLS
        );
        Ok(self
            .conn
            .query_row(&sql, params![property_id, date], Self::visit_from_row)
            .optional()?)
    }

    /// A property's completed visits, oldest first.
    pub fn property_visits(&self, property_id: i64) -> Result<Vec<Visit>> {
        let sql = format!(
            "SELECT {} FROM visit v WHERE v.property_id = ?1 AND v.state = 'complete' ORDER BY v.date",
            Self::VISIT_COLS
        );
        let mut stmt = self.conn.prepare(&sql)?;
        let rows = stmt.query_map([property_id], Self::visit_from_row)?;
        Ok(rows.collect::<rusqlite::Result<_>>()?)
    }

    /// Mark a pending visit complete: from now on it is part of the history.
    pub fn complete_visit(&self, visit_id: i64) -> Result<()> {
        self.conn.execute(
            "UPDATE visit SET state = 'complete' WHERE id = ?1",
            [visit_id],
        )?;
        Ok(())
    }

    /// Remove a visit and everything recorded at it (test records, observations, changes).
    pub fn delete_visit(&self, visit_id: i64) -> Result<()> {
        self.conn
            .execute("DELETE FROM visit WHERE id = ?1", [visit_id])?;
        Ok(())
    }

    /// Record Zdb and the sub-main's R1+R2 at a board fed from another, keeping its Ze and
    /// fault current.
    pub fn set_board_submain(
        &self,
        visit_id: i64,
        board_id: i64,
        zdb_ohm: Option<f64>,
        submain_r1r2_ohm: Option<f64>,
    ) -> Result<()> {
        for (name, x) in [("Zdb", zdb_ohm), ("sub-main R1+R2", submain_r1r2_ohm)] {
            if let Some(x) = x
                && !(x.is_finite() && x >= 0.0)
            {
                return Err(Error::invalid(format!(
                    "{name} {x} is not a reading: expected a number of zero or more"
                )));
            }
        }
        self.conn
            .prepare_cached(
                "INSERT INTO board_test (visit_id, board_id, zdb_ohm, submain_r1r2_ohm)
                 VALUES (?1, ?2, ?3, ?4)
                 ON CONFLICT (visit_id, board_id) DO UPDATE SET zdb_ohm = excluded.zdb_ohm,
                     submain_r1r2_ohm = excluded.submain_r1r2_ohm",
            )?
            .execute(params![visit_id, board_id, zdb_ohm, submain_r1r2_ohm])?;
        Ok(())
    }

    /// Everything measured at a board at a visit; all `None` when nothing is stored.
    pub fn board_test_record(&self, visit_id: i64, board_id: i64) -> Result<BoardTest> {
        let mut st = self.conn.prepare_cached(
            "SELECT ze_ohm, pfc_ka, zdb_ohm, submain_r1r2_ohm FROM board_test
             WHERE visit_id = ?1 AND board_id = ?2",
        )?;
        let found = st
            .query_row(params![visit_id, board_id], |r| {
                Ok(BoardTest {
                    visit_id,
                    board_id,
                    ze_ohm: r.get(0)?,
                    pfc_ka: r.get(1)?,
                    zdb_ohm: r.get(2)?,
                    submain_r1r2_ohm: r.get(3)?,
                })
            })
            .optional()?;
        Ok(found.unwrap_or(BoardTest {
            visit_id,
            board_id,
            ..Default::default()
        }))
    }

    /// Write Zdb, the sub-main's R1+R2 and the fault current measured at a board, keeping its
    /// Ze. The visit's own fault current (at the origin) is filled from a board fed from no
    /// other when still empty, as the visit's Ze is.
    pub fn set_board_measured(&self, t: &BoardTest) -> Result<()> {
        for (name, x) in [
            ("Zdb", t.zdb_ohm),
            ("sub-main R1+R2", t.submain_r1r2_ohm),
            ("prospective fault current", t.pfc_ka),
        ] {
            if let Some(x) = x
                && !(x.is_finite() && x >= 0.0)
            {
                return Err(Error::invalid(format!(
                    "{name} {x} is not a reading: expected a number of zero or more"
                )));
            }
        }
        self.conn
            .prepare_cached(
                "INSERT INTO board_test (visit_id, board_id, zdb_ohm, submain_r1r2_ohm, pfc_ka)
                 VALUES (?1, ?2, ?3, ?4, ?5)
                 ON CONFLICT (visit_id, board_id) DO UPDATE SET zdb_ohm = excluded.zdb_ohm,
                     submain_r1r2_ohm = excluded.submain_r1r2_ohm, pfc_ka = excluded.pfc_ka",
            )?
            .execute(params![
                t.visit_id,
                t.board_id,
                t.zdb_ohm,
                t.submain_r1r2_ohm,
                t.pfc_ka
            ])?;
        if let Some(pfc) = t.pfc_ka {
            self.conn
                .prepare_cached(
                    "UPDATE visit SET pfc_ka = ?2 WHERE id = ?1 AND pfc_ka IS NULL
                     AND (SELECT fed_from_board_id FROM board WHERE id = ?3) IS NULL",
                )?
                .execute(params![t.visit_id, pfc, t.board_id])?;
        }
        Ok(())
    }

    /// The board feeding a board: its id and designation, `None` at the origin.
    pub fn board_feed(&self, board_id: i64) -> Result<Option<(i64, String)>> {
        let mut st = self.conn.prepare_cached(
            "SELECT f.id, f.designation FROM board b JOIN board f ON f.id = b.fed_from_board_id
             WHERE b.id = ?1",
        )?;
        Ok(st
            .query_row([board_id], |r| Ok((r.get(0)?, r.get(1)?)))
            .optional()?)
    }

    /// Record which board feeds a board (both of one property).
    pub fn set_board_feed(&self, board_id: i64, fed_from_board_id: i64) -> Result<()> {
        if board_id == fed_from_board_id {
            return Err(Error::invalid("a board cannot be fed from itself"));
        }
        self.conn
            .prepare_cached(
                "UPDATE board SET fed_from_board_id = ?2 WHERE id = ?1
                 AND property_id = (SELECT property_id FROM board WHERE id = ?2)",
            )?
            .execute(params![board_id, fed_from_board_id])?;
        Ok(())
    }

    /// Record Ze (or Zdb for a sub-board) and fault current measured at a board.
    pub fn set_board_test(
        &self,
        visit_id: i64,
        board_id: i64,
        ze_ohm: Option<f64>,
        pfc_ka: Option<f64>,
    ) -> Result<()> {
        self.conn.execute(
            "INSERT INTO board_test (visit_id, board_id, ze_ohm, pfc_ka) VALUES (?1, ?2, ?3, ?4)
             ON CONFLICT (visit_id, board_id) DO UPDATE SET ze_ohm = excluded.ze_ohm, pfc_ka = excluded.pfc_ka",
            params![visit_id, board_id, ze_ohm, pfc_ka],
        )?;
        Ok(())
    }

    /// Ze and fault current measured at a board at a visit.
    pub fn board_test(
        &self,
        visit_id: i64,
        board_id: i64,
    ) -> Result<Option<(Option<f64>, Option<f64>)>> {
        Ok(self
            .conn
            .query_row(
                "SELECT ze_ohm, pfc_ka FROM board_test WHERE visit_id = ?1 AND board_id = ?2",
                params![visit_id, board_id],
                |r| Ok((r.get(0)?, r.get(1)?)),
            )
            .optional()?)
    }

    /// Write one circuit's readings at a visit, replacing any already there (the record keeps
    /// its id).
    pub fn put_test_record(&self, visit_id: i64, circuit_id: i64, r: &Readings) -> Result<i64> {
        self.write_record(
            concat!(
                "INSERT INTO test_record (visit_id, circuit_id, ",
                record_values!(),
                ") VALUES (",
                record_placeholders!(),
                ")
                 ON CONFLICT (visit_id, circuit_id) DO UPDATE SET
                 r1r2_ohm = excluded.r1r2_ohm, r2_ohm = excluded.r2_ohm, r1rn_ohm = excluded.r1rn_ohm,
                 ring_r1_ohm = excluded.ring_r1_ohm, ring_rn_ohm = excluded.ring_rn_ohm,
                 ring_r2_ohm = excluded.ring_r2_ohm, zs_ohm = excluded.zs_ohm,
                 ir_ll_mohm = excluded.ir_ll_mohm, ir_ll_over = excluded.ir_ll_over,
                 ir_le_mohm = excluded.ir_le_mohm, ir_le_over = excluded.ir_le_over,
                 rcd_ms = excluded.rcd_ms, rcd_5x_ms = excluded.rcd_5x_ms,
                 limitations = excluded.limitations, note = excluded.note,
                 polarity = excluded.polarity, ir_test_v = excluded.ir_test_v,
                 rcd_button = excluded.rcd_button"
            ),
            visit_id,
            circuit_id,
            r,
        )?;
        Ok(self.conn.query_row(
            "SELECT id FROM test_record WHERE visit_id = ?1 AND circuit_id = ?2",
            params![visit_id, circuit_id],
            |row| row.get(0),
        )?)
    }

    pub fn test_record(&self, visit_id: i64, circuit_id: i64) -> Result<Option<TestRecord>> {
        let sql = format!(
            "SELECT {} FROM test_record WHERE visit_id = ?1 AND circuit_id = ?2",
            Self::RECORD_COLS
        );
        Ok(self
            .conn
            .query_row(&sql, params![visit_id, circuit_id], Self::record_from_row)
            .optional()?)
    }

    /// Every test record of a circuit at completed visits, oldest visit first.
    pub fn circuit_records(&self, circuit_id: i64) -> Result<Vec<(Visit, TestRecord)>> {
        // Reached through the property's visits, as the indexes are laid out: records are
        // indexed by (visit, circuit), not by circuit alone.
        let sql = format!(
            "SELECT {} FROM circuit c JOIN board b ON b.id = c.board_id
             JOIN visit v ON v.property_id = b.property_id AND v.state = 'complete'
             JOIN test_record t ON t.visit_id = v.id AND t.circuit_id = c.id
             WHERE c.id = ?1 ORDER BY v.date",
            Self::RECORD_COLS
                .split(',')
                .map(|c| format!("t.{}", c.trim()))
                .collect::<Vec<_>>()
                .join(", ")
        );
        let mut stmt = self.conn.prepare(&sql)?;
        let records = stmt
            .query_map([circuit_id], Self::record_from_row)?
            .collect::<rusqlite::Result<Vec<_>>>()?;
        records
            .into_iter()
            .map(|r| Ok((self.visit_by_id(r.visit_id)?, r)))
            .collect()
    }

    pub fn add_observation(
        &self,
        visit_id: i64,
        board_id: Option<i64>,
        circuit_id: Option<i64>,
        code: ObservationCode,
        text: &str,
    ) -> Result<i64> {
        self.conn.execute(
            "INSERT INTO observation (visit_id, board_id, circuit_id, code, text) VALUES (?1, ?2, ?3, ?4, ?5)",
            params![visit_id, board_id, circuit_id, code.as_str(), text],
        )?;
        Ok(self.conn.last_insert_rowid())
    }

    /// A visit's observations in the order they were recorded.
    pub fn observations(&self, visit_id: i64) -> Result<Vec<Observation>> {
        let mut stmt = self.conn.prepare(
            "SELECT o.id, o.visit_id, b.designation, c.number, o.code, o.text
             FROM observation o LEFT JOIN board b ON b.id = o.board_id
             LEFT JOIN circuit c ON c.id = o.circuit_id
             WHERE o.visit_id = ?1 ORDER BY o.id",
        )?;
        let rows = stmt.query_map([visit_id], super::observation_from_row)?;
        Ok(rows.collect::<rusqlite::Result<_>>()?)
    }
}

fn state_str(s: VisitState) -> &'static str {
    match s {
        VisitState::Pending => "pending",
        VisitState::Complete => "complete",
    }
}

/// Refuse readings that no instrument shows: negative, NaN or infinite.
pub fn validate_readings(r: &Readings) -> Result<()> {
    let all = [
        ("r1r2_ohm", r.r1r2_ohm),
        ("r2_ohm", r.r2_ohm),
        ("r1rn_ohm", r.r1rn_ohm),
        ("ring_r1_ohm", r.ring_r1_ohm),
        ("ring_rn_ohm", r.ring_rn_ohm),
        ("ring_r2_ohm", r.ring_r2_ohm),
        ("zs_ohm", r.zs_ohm),
        ("ir_ll_mohm", r.ir_ll.map(|m| m.value)),
        ("ir_le_mohm", r.ir_le.map(|m| m.value)),
        ("rcd_ms", r.rcd_ms),
        ("rcd_5x_ms", r.rcd_5x_ms),
    ];
    if let Some(v) = r.ir_test_v {
        crate::model::validate_ir_test_v(v).map_err(Error::Invalid)?;
    }
    for (name, v) in all {
        if let Some(v) = v
            && !(v.is_finite() && v >= 0.0)
        {
            return Err(Error::invalid(format!(
                "{name} {v} is not a reading: expected a number of zero or more"
            )));
        }
    }
    Ok(())
}
