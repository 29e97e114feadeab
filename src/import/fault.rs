//! Faults found while applying a row, and what a kept row did.

use super::{Column, RegisterChange};
use crate::error::Error;

/// What one row did; added to the summary only when the row is kept.
#[derive(Debug, Default)]
pub(super) struct Effect {
    pub(super) properties: u64,
    pub(super) boards: u64,
    pub(super) circuits: u64,
    pub(super) visits: u64,
    pub(super) written: u64,
    pub(super) replaced: u64,
    pub(super) unchanged: u64,
    pub(super) details_replaced: u64,
    pub(super) observations: u64,
    pub(super) observations_unchanged: u64,
    pub(super) changes: Vec<RegisterChange>,
    pub(super) wrote: bool,
}

/// A fault found while applying a row: the column it concerns, if one, and why.
#[derive(Debug, Clone)]
pub(super) struct Fault {
    pub(super) column: Option<Column>,
    pub(super) message: String,
}

/// Why a row was not applied.
pub(super) enum Faults {
    /// Faults in the row itself: reported at its line, and the rest of the file is still read.
    Row(Vec<Fault>),
    /// The database itself failed (full, I/O, locked). SQLite may already have rolled the
    /// transaction back, so nothing more may be written: the whole file stops.
    Fatal(Error),
}

impl From<Error> for Faults {
    fn from(e: Error) -> Faults {
        if is_fatal(&e) {
            return Faults::Fatal(e);
        }
        Faults::Row(vec![Fault {
            column: None,
            message: e.to_string(),
        }])
    }
}

/// Whether an error is the database failing rather than the row being wrong. A constraint
/// failure is about the row; any other SQLite failure (full, I/O, busy, corrupt) is not, and
/// after some of them SQLite has rolled back the whole transaction.
pub(super) fn is_fatal(e: &Error) -> bool {
    match e {
        Error::Invalid(_) | Error::NotFound { .. } => false,
        Error::Sql(rusqlite::Error::SqliteFailure(f, _))
        | Error::Database {
            source: rusqlite::Error::SqliteFailure(f, _),
            ..
        } => f.code != rusqlite::ErrorCode::ConstraintViolation,
        _ => true,
    }
}

pub(super) fn fault<T>(column: Column, message: String) -> std::result::Result<T, Faults> {
    Err(Faults::Row(vec![Fault {
        column: Some(column),
        message,
    }]))
}

pub(super) type RowResult<T> = std::result::Result<T, Faults>;

pub(super) fn shown(v: &Option<String>) -> String {
    match v {
        Some(t) => format!("{t:?}"),
        None => "not recorded".to_string(),
    }
}

/// Two rows of one file that give one thing two values.
pub(super) fn in_file_conflict(
    what: &str,
    earlier: &Option<String>,
    this: &Option<String>,
) -> String {
    format!(
        "conflicts with an earlier row of this file for {what}: earlier {}, this row {}",
        shown(earlier),
        shown(this)
    )
}

pub(super) fn conflict(what: &str, stored: &Option<String>, file: &Option<String>) -> String {
    format!(
        "conflicts with {what}: stored {}, file {} (pass --replace to overwrite)",
        shown(stored),
        shown(file)
    )
}
