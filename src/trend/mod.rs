//! Drift, steps and projected limit crossings over one circuit's series of readings.
//! Pure: series in, findings out. No SQL, no I/O, no knowledge of where limits come from.
//!
//! The caller builds a [`Series`] per circuit and quantity: points with their raw reading and
//! the value normalised to 20 °C (when the ambient is known), the register events that restart
//! the baseline, and the limit on the same basis as the values. [`analyse`] returns a
//! [`SeriesReport`] with the slopes, the projection and the [`Finding`]s, most urgent first;
//! [`neutral_divergence`] compares an R1+R2 and an R1+Rn series; [`rank`] orders findings
//! from many series for a worklist.
//!
//! The figures support, and never replace, the judgement of a competent person working to
//! BS 7671; nothing here assigns a condition code.

mod config;
mod detect;
mod finding;
mod neutral;
mod project;
mod sentences;
mod series;
pub mod stats;

#[cfg(test)]
mod tests;

use chrono::NaiveDate;

pub use config::{Checked, NoiseFloor, TrendConfig};
pub use detect::{Fit, SeriesReport, analyse, analyse_series};
pub use finding::{Finding, FindingKind, Projection, Severity, compare_urgency, rank};
pub(crate) use neutral::divergence_sorted;
pub use neutral::neutral_divergence;
pub use project::{recommended_interval, whole_months};
pub use series::{Concern, Limit, LimitKind, Point, Quantity, RingLeg, Scale, Series, Worse};

impl std::fmt::Display for LimitKind {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str(match self {
            LimitKind::Max => "maximum",
            LimitKind::Min => "minimum",
        })
    }
}

/// A series or setting the analysis cannot use.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum TrendError {
    #[error("{quantity} reading of {date}: {field} is not a finite number")]
    NotFinite {
        quantity: Quantity,
        date: NaiveDate,
        field: &'static str,
    },

    #[error("{quantity} reading of {date} is {value}; expected {expected}")]
    OutOfRange {
        quantity: Quantity,
        date: NaiveDate,
        value: f64,
        expected: &'static str,
    },

    #[error("two {quantity} readings dated {date}; expected one a visit")]
    DuplicateDate { quantity: Quantity, date: NaiveDate },

    #[error("{quantity} limit {value} is not usable; expected a finite number above 0")]
    BadLimit { quantity: Quantity, value: f64 },

    #[error("{quantity} limit must be a {expected}")]
    LimitKind {
        quantity: Quantity,
        expected: LimitKind,
    },

    #[error("expected R1+Rn / R1+R2 ratio {value} is not usable; expected a finite number above 0")]
    BadRatio { value: f64 },

    #[error("expected a {expected} series, found {found}")]
    WrongQuantity { expected: Quantity, found: Quantity },

    #[error("trend setting {field}: expected {expected}")]
    BadConfig {
        field: &'static str,
        expected: &'static str,
    },
}
