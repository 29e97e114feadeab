//! A test record's columns, in one place: the list every statement uses, the decoder and the
//! writer. Declared first in `store` so its macro is in scope for the other store files.

use rusqlite::{Row, Statement, params};

use super::Store;
use crate::error::Result;
use crate::model::{Megohms, Readings, TestRecord};

/// The value columns of a test record, as a literal so that statements can be built with
/// `concat!` once instead of formatted on every row.
macro_rules! record_values {
    () => {
        "r1r2_ohm, r2_ohm, r1rn_ohm, ring_r1_ohm, ring_rn_ohm, ring_r2_ohm,
    zs_ohm, ir_ll_mohm, ir_ll_over, ir_le_mohm, ir_le_over, rcd_ms, rcd_5x_ms, limitations, note"
    };
}
pub(super) const RECORD_VALUES: &str = record_values!();

/// Decode the [`RECORD_VALUES`] columns starting at `o`.
pub(super) fn readings_at(r: &Row, o: usize) -> rusqlite::Result<Readings> {
    let mohm = |v: Option<f64>, over: bool| {
        v.map(|value| Megohms {
            value,
            over_range: over,
        })
    };
    // Read in place: almost every record has none, and a copy would cost an allocation each.
    let limitations = r.get_ref(o + 13)?.as_str()?;
    Ok(Readings {
        r1r2_ohm: r.get(o)?,
        r2_ohm: r.get(o + 1)?,
        r1rn_ohm: r.get(o + 2)?,
        ring_r1_ohm: r.get(o + 3)?,
        ring_rn_ohm: r.get(o + 4)?,
        ring_r2_ohm: r.get(o + 5)?,
        zs_ohm: r.get(o + 6)?,
        ir_ll: mohm(r.get(o + 7)?, r.get(o + 8)?),
        ir_le: mohm(r.get(o + 9)?, r.get(o + 10)?),
        rcd_ms: r.get(o + 11)?,
        rcd_5x_ms: r.get(o + 12)?,
        limitations: limitations
            .split(',')
            .filter(|s| !s.is_empty())
            .map(String::from)
            .collect(),
        note: r.get(o + 14)?,
    })
}

impl Store {
    /// A stored test record's columns: its keys, then the [`RECORD_VALUES`].
    pub(super) const RECORD_COLS: &'static str =
        concat!("id, visit_id, circuit_id, ", record_values!());

    /// Decode a test record from the columns of [`Self::RECORD_COLS`], in order.
    pub(super) fn record_from_row(r: &Row) -> rusqlite::Result<TestRecord> {
        Ok(TestRecord {
            id: r.get(0)?,
            visit_id: r.get(1)?,
            circuit_id: r.get(2)?,
            readings: readings_at(r, 3)?,
        })
    }

    /// Write one test record with `sql`, an insert whose parameters are (visit, circuit, the
    /// [`RECORD_VALUES`] in order), after checking the readings.
    pub(super) fn write_record(
        &self,
        sql: &str,
        visit_id: i64,
        circuit_id: i64,
        r: &Readings,
    ) -> Result<()> {
        let mut st = self.conn.prepare_cached(sql)?;
        execute_record(&mut st, visit_id, circuit_id, r)
    }
}

/// Run `st`, an insert whose parameters are (visit, circuit, the [`RECORD_VALUES`] in order),
/// for one test record, after checking the readings.
pub(super) fn execute_record(
    st: &mut Statement,
    visit_id: i64,
    circuit_id: i64,
    r: &Readings,
) -> Result<()> {
    super::validate_readings(r)?;
    let split = |m: Option<Megohms>| match m {
        Some(m) => (Some(m.value), m.over_range),
        None => (None, false),
    };
    let (ll, ll_over) = split(r.ir_ll);
    let (le, le_over) = split(r.ir_le);
    st.execute(params![
        visit_id,
        circuit_id,
        r.r1r2_ohm,
        r.r2_ohm,
        r.r1rn_ohm,
        r.ring_r1_ohm,
        r.ring_rn_ohm,
        r.ring_r2_ohm,
        r.zs_ohm,
        ll,
        ll_over,
        le,
        le_over,
        r.rcd_ms,
        r.rcd_5x_ms,
        r.limitations.join(","),
        r.note,
    ])?;
    Ok(())
}
