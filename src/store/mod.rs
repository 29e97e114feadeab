//! The SQLite history. This is the only module that talks SQL.
//!
//! A [`Store`] is one connection with foreign keys on, WAL, and a busy timeout long enough for
//! another process's import to finish. Register operations check their input and write nothing
//! when it is wrong.

#[macro_use]
mod record;

mod circuits;
mod history;
mod ingest;
pub mod migrate;
mod open;
mod pending;
mod register;
mod visits;

pub use history::{ALL_PROPERTIES, HistoryParts, PropertyHistory};
pub use ingest::{
    ExportObservation, ExportRecord, HeldInserts, IngestBoard, IngestChange, IngestProperty,
    IngestVisit, LaterHistory,
};
pub use open::APPLICATION_ID;
pub use pending::Abandoned;
pub use visits::{NewVisit, validate_readings};

use std::path::{Path, PathBuf};
use std::time::Duration;

use chrono::NaiveDate;
use rusqlite::{Connection, OpenFlags, OptionalExtension, Row, params};
use serde::Serialize;

use crate::error::{Error, Result};
use crate::model::{
    Board, ChangeKind, Circuit, CircuitChange, CircuitKind, Device, Earthing, Instrument,
    Insulation, Property, RcdDelay, RcdMarking, RcdType, RefMethod, Status, validate_breaking_ka,
    validate_code, validate_csa, validate_length, validate_points, validate_rcd_ma,
};

/// How long a writer waits for another process's transaction before giving up.
pub const BUSY_TIMEOUT: Duration = Duration::from_secs(60);

/// A property by its reference without regard to ASCII case, through the index migration 007
/// made for exactly this comparison.
const PROPERTY_REF_SQL: &str =
    "SELECT id, ref FROM property WHERE ref = ?1 COLLATE NOCASE ORDER BY ref";

/// The page size of a database ohmtrail creates, in bytes.
pub const DEFAULT_PAGE_SIZE: i64 = 16_384;

/// Test hook, not a setting: caps the database at this many pages (`PRAGMA max_page_count`)
/// so that tests can fill the "disk" without filling the machine's.
pub const MAX_PAGE_COUNT_ENV: &str = "OHMTRAIL_MAX_PAGE_COUNT";

pub struct Store {
    conn: Connection,
    path: PathBuf,
    read_only: bool,
    /// Opened read-only because its directory cannot be written, though the file could be.
    in_read_only_dir: bool,
}

/// A new property for the register.
#[derive(Debug, Clone, Default)]
pub struct NewProperty {
    pub reference: String,
    pub address: Option<String>,
    pub client: Option<String>,
    pub interval_months: Option<u32>,
    pub notes: Option<String>,
}

/// A new board for the register.
#[derive(Debug, Clone, Default)]
pub struct NewBoard {
    pub designation: String,
    pub location: Option<String>,
    /// Designation of the feeding board; `None` for the origin.
    pub fed_from: Option<String>,
    pub earthing: Option<Earthing>,
}

/// The register details of a circuit, as given when adding or editing one.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct CircuitDetails {
    pub description: Option<String>,
    pub kind: Option<CircuitKind>,
    pub live_mm2: Option<f64>,
    pub cpc_mm2: Option<f64>,
    pub length_m: Option<f64>,
    pub device: Option<Device>,
    pub rcd_ma: Option<u16>,
    pub rcd_type: Option<RcdType>,
    pub rcd_delay: Option<RcdDelay>,
    pub insulation: Option<Insulation>,
    pub disconnect_s: Option<f64>,
    pub wiring_type: Option<String>,
    pub ref_method: Option<RefMethod>,
    pub points: Option<u32>,
    pub breaking_ka: Option<f64>,
    pub afdd: Option<bool>,
    /// The identifier of the RCD protecting the circuit on its board (`RCD1`).
    pub rcd_id: Option<String>,
}

impl CircuitDetails {
    /// Check every given value; the first fault is the error.
    pub fn validate(&self) -> Result<()> {
        check_text("circuit description", self.description.as_deref())?;
        let bad = |m: String| Err(Error::Invalid(m));
        if let Some(v) = self.live_mm2
            && let Err(m) = validate_csa("live csa", v)
        {
            return bad(m);
        }
        if let Some(v) = self.cpc_mm2
            && let Err(m) = validate_csa("cpc csa", v)
        {
            return bad(m);
        }
        if let Some(v) = self.length_m
            && let Err(m) = validate_length(v)
        {
            return bad(m);
        }
        if let Some(v) = self.rcd_ma
            && let Err(m) = validate_rcd_ma(v)
        {
            return bad(m);
        }
        if let Some(t) = self.disconnect_s
            && !(t.is_finite() && t > 0.0 && t <= 5.0)
        {
            return bad(format!(
                "disconnection time {t} s is out of range: expected 0.2, 0.4, 1 or 5 s"
            ));
        }
        if let Some(w) = &self.wiring_type
            && let Err(m) = validate_code("wiring type", w)
        {
            return bad(m);
        }
        if let Some(r) = &self.rcd_id
            && let Err(m) = validate_code("RCD identifier", r)
        {
            return bad(m);
        }
        if let Some(n) = self.points
            && let Err(m) = validate_points(n)
        {
            return bad(m);
        }
        if let Some(ka) = self.breaking_ka
            && let Err(m) = validate_breaking_ka(ka)
        {
            return bad(m);
        }
        Ok(())
    }
}

/// A property with the counts a listing shows.
#[derive(Debug, Clone, Serialize)]
pub struct PropertySummary {
    pub property_ref: String,
    pub address: Option<String>,
    pub client: Option<String>,
    pub interval_months: u32,
    pub boards: i64,
    pub circuits: i64,
    pub visits: i64,
    pub last_visit: Option<NaiveDate>,
}

/// A visit with the names a listing shows.
#[derive(Debug, Clone, Serialize)]
pub struct VisitSummary {
    pub property_ref: String,
    pub date: NaiveDate,
    pub inspector: Option<String>,
    pub instrument: Option<String>,
    pub ambient_c: Option<f64>,
    pub ze_ohm: Option<f64>,
    pub pfc_ka: Option<f64>,
    pub test_records: i64,
    pub observations: i64,
    /// The visit's report as the inspector recorded it: reference, overall outcome, interval.
    pub report_ref: Option<String>,
    pub outcome: Option<String>,
    pub interval_months: Option<u32>,
}

/// Refuse text holding a control character (NUL, escape, backspace and the like; a tab or a
/// line break may stay), naming the character and its position (`model::check_text`).
pub fn check_text(what: &str, text: Option<&str>) -> Result<()> {
    match text {
        Some(t) => crate::model::check_text(what, t).map_err(Error::Invalid),
        None => Ok(()),
    }
}

/// The columns [`change_from_row`] reads, in order.
pub(crate) const CHANGE_COLS: &str =
    "id, circuit_id, date, kind, field, old_value, new_value, note";

/// Decode a circuit change from the first eight columns of a row ([`CHANGE_COLS`]).
pub(crate) fn change_from_row(r: &Row) -> rusqlite::Result<CircuitChange> {
    let kind: String = r.get(3)?;
    Ok(CircuitChange {
        id: r.get(0)?,
        circuit_id: r.get(1)?,
        date: r.get(2)?,
        kind: kind.parse().unwrap_or(ChangeKind::RegisterCorrected),
        field: r.get(4)?,
        old_value: r.get(5)?,
        new_value: r.get(6)?,
        note: r.get(7)?,
    })
}

/// Decode an observation from (id, visit_id, board designation, circuit number, code, text).
pub(crate) fn observation_from_row(r: &Row) -> rusqlite::Result<crate::model::Observation> {
    let code: String = r.get(4)?;
    Ok(crate::model::Observation {
        id: r.get(0)?,
        visit_id: r.get(1)?,
        board: r.get(2)?,
        circuit: r.get(3)?,
        code: code.parse().unwrap_or(crate::model::ObservationCode::FI),
        text: r.get(5)?,
    })
}

/// Shortest decimal text of a number, as the register shows it (2.5, not 2.5000).
pub fn fmt_num(v: f64) -> String {
    let s = format!("{v}");
    if s.contains('e') {
        format!("{v:.6}")
    } else {
        s
    }
}

#[cfg(test)]
mod tests;
