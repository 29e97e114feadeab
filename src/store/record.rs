//! A test record's columns, in one place: the list every statement uses, the decoder and the
//! writer. Declared first in `store` so its macro is in scope for the other store files.

use rusqlite::types::ValueRef;
use rusqlite::{Row, Statement, params};

use super::Store;
use crate::error::Result;
use crate::model::{Megohms, Readings, TestRecord};

/// The value columns of a test record, as a literal so that statements can be built with
/// `concat!` once instead of formatted on every row.
macro_rules! record_values {
    () => {
        "r1r2_ohm, r2_ohm, r1rn_ohm, ring_r1_ohm, ring_rn_ohm, ring_r2_ohm,
    zs_ohm, ir_ll_mohm, ir_ll_over, ir_le_mohm, ir_le_over, rcd_ms, rcd_5x_ms, limitations, note,
    polarity, ir_test_v, rcd_button"
    };
}
pub(super) const RECORD_VALUES: &str = record_values!();

/// Decode the [`RECORD_VALUES`] columns starting at `o`.
pub(super) fn readings_at(r: &Row, o: usize) -> rusqlite::Result<Readings> {
    // Each value is read once through `get_ref`; `get` would ask SQLite for the column count
    // and type again for every one of the fifteen columns.
    let real = |i: usize| -> rusqlite::Result<Option<f64>> {
        Ok(match r.get_ref(o + i)? {
            ValueRef::Null => None,
            ValueRef::Real(v) => Some(v),
            ValueRef::Integer(v) => Some(v as f64),
            other => {
                return Err(rusqlite::Error::InvalidColumnType(
                    o + i,
                    RECORD_VALUE_NAMES[i].into(),
                    other.data_type(),
                ));
            }
        })
    };
    let flag = |i: usize| -> rusqlite::Result<bool> { Ok(r.get_ref(o + i)?.as_i64()? != 0) };
    let mohm = |v: Option<f64>, over: bool| {
        v.map(|value| Megohms {
            value,
            over_range: over,
        })
    };
    // Read in place: almost every record has none, and a copy would cost an allocation each.
    let limitations = r.get_ref(o + 13)?.as_str()?;
    Ok(Readings {
        r1r2_ohm: real(0)?,
        r2_ohm: real(1)?,
        r1rn_ohm: real(2)?,
        ring_r1_ohm: real(3)?,
        ring_rn_ohm: real(4)?,
        ring_r2_ohm: real(5)?,
        zs_ohm: real(6)?,
        ir_ll: mohm(real(7)?, flag(8)?),
        ir_le: mohm(real(9)?, flag(10)?),
        rcd_ms: real(11)?,
        rcd_5x_ms: real(12)?,
        limitations: limitations
            .split(',')
            .filter(|s| !s.is_empty())
            .map(String::from)
            .collect(),
        note: r.get(o + 14)?,
        polarity: match r.get_ref(o + 15)?.as_str_or_null()? {
            Some(t) => t.parse().ok(),
            None => None,
        },
        ir_test_v: r.get(o + 16)?,
        rcd_button: match r.get_ref(o + 17)?.as_str_or_null()? {
            Some(t) => t.parse().ok(),
            None => None,
        },
    })
}

/// How many columns [`RECORD_VALUES`] names.
pub(super) const RECORD_VALUE_COUNT: usize = RECORD_VALUE_NAMES.len();

/// The [`RECORD_VALUES`] one by one, for error messages.
const RECORD_VALUE_NAMES: [&str; 18] = [
    "r1r2_ohm",
    "r2_ohm",
    "r1rn_ohm",
    "ring_r1_ohm",
    "ring_rn_ohm",
    "ring_r2_ohm",
    "zs_ohm",
    "ir_ll_mohm",
    "ir_ll_over",
    "ir_le_mohm",
    "ir_le_over",
    "rcd_ms",
    "rcd_5x_ms",
    "limitations",
    "note",
    "polarity",
    "ir_test_v",
    "rcd_button",
];

impl Store {
    /// A stored test record's columns: its keys, then the [`RECORD_VALUES`].
    pub(super) const RECORD_COLS: &'static str =
        concat!("id, visit_id, circuit_id, ", record_values!());

    /// How many columns [`Self::RECORD_COLS`] names.
    pub(super) const RECORD_COL_COUNT: usize = 3 + RECORD_VALUE_NAMES.len();

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

/// The placeholders of an insert of (visit, circuit, the [`RECORD_VALUES`]).
macro_rules! record_placeholders {
    () => {
        "?1, ?2, ?3, ?4, ?5, ?6, ?7, ?8, ?9, ?10, ?11, ?12, ?13, ?14, ?15, ?16, ?17, ?18, ?19, ?20"
    };
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
        r.polarity.map(|p| p.as_str()),
        r.ir_test_v,
        r.rcd_button.map(|b| b.as_str()),
    ])?;
    Ok(())
}
