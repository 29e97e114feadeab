//! Findings from recorded facts rather than measurements: polarity recorded incorrect, an RCD
//! that failed on its own test button. Each is exact, so it needs no trend and no noise floor:
//! the latest visit that recorded it decides, and a later correct result clears an earlier
//! fault. The tool assigns no code; the sentence says what was recorded and when.

use chrono::NaiveDate;

use super::Flag;
use crate::limits::{Source, SourceStatus};
use crate::model::{ButtonTest, Circuit, Polarity, Property};

/// The `quantity` of a polarity finding on the worklist.
pub const POLARITY: &str = "polarity";
/// The `quantity` of an RCD test button finding on the worklist.
pub const RCD_BUTTON: &str = "rcd_button";

/// Polarity is verified at every visit (BS 7671:2018 Regulation 643.6, from memory for the
/// number).
const POLARITY_SOURCE: Source = Source::new(
    "BS 7671:2018 Regulation 643.6",
    SourceStatus::FromMemory,
    "polarity verified; recorded correct or incorrect by the inspector",
);
/// The test button is part of an RCD's inspection (common practice, no source).
const BUTTON_SOURCE: Source = Source::new(
    "RCD test button operation",
    SourceStatus::CommonPractice,
    "the RCD trips on its own test button; recorded operates or failed by the inspector",
);

/// The source behind a recorded fact's finding, by its quantity.
pub fn source(quantity: &str) -> Option<Source> {
    match quantity {
        POLARITY => Some(POLARITY_SOURCE),
        RCD_BUTTON => Some(BUTTON_SOURCE),
        _ => None,
    }
}

/// The latest recorded value and its date, from (date, value) pairs in date order.
fn latest<T: Copy>(
    recorded: impl DoubleEndedIterator<Item = (NaiveDate, Option<T>)>,
) -> Option<(NaiveDate, T)> {
    recorded.rev().find_map(|(d, v)| v.map(|v| (d, v)))
}

/// A finding when the latest visit that recorded polarity recorded it incorrect.
pub(super) fn polarity(
    property: &Property,
    board: &str,
    c: &Circuit,
    recorded: impl DoubleEndedIterator<Item = (NaiveDate, Option<Polarity>)>,
) -> Option<Flag> {
    match latest(recorded)? {
        (date, Polarity::Incorrect) => Some(fact_flag(
            property,
            board,
            c,
            POLARITY,
            "polarity_incorrect",
            date,
            format!(
                "Polarity was recorded incorrect at the visit of {date}, the latest visit to record it"
            ),
            &POLARITY_SOURCE,
        )),
        (_, Polarity::Correct) => None,
    }
}

/// A finding when the latest visit that recorded the RCD's test button recorded it failed.
pub(super) fn button(
    property: &Property,
    board: &str,
    c: &Circuit,
    recorded: impl DoubleEndedIterator<Item = (NaiveDate, Option<ButtonTest>)>,
) -> Option<Flag> {
    match latest(recorded)? {
        (date, ButtonTest::Failed) => Some(fact_flag(
            property,
            board,
            c,
            RCD_BUTTON,
            "button_failed",
            date,
            format!(
                "RCD test button recorded as failed at the visit of {date}, the latest visit to record it"
            ),
            &BUTTON_SOURCE,
        )),
        (_, ButtonTest::Operates) => None,
    }
}

/// A recorded fault ranks with the readings past their limits: there is no share of a limit to
/// order it by, so it comes after them ([`super::rows::rank`]).
#[allow(clippy::too_many_arguments)]
fn fact_flag(
    property: &Property,
    board: &str,
    c: &Circuit,
    quantity: &'static str,
    kind: &'static str,
    date: NaiveDate,
    reason: String,
    source: &Source,
) -> Flag {
    Flag {
        property_ref: property.reference.clone(),
        board: board.to_string(),
        circuit: Some(c.number.clone()),
        description: c.description.clone(),
        quantity,
        severity: "exceeds",
        kind,
        reason,
        last_value: 0.0,
        last_date: date,
        limit: None,
        projected_date: None,
        projected_earliest: None,
        limit_source: Some(super::source_text(source)),
        margin_used_pct: None,
        recommended_interval_months: None,
        findings: Vec::new(),
        finding: None,
    }
}

/// The words for a fact's quantity, as a report labels it.
pub fn label(quantity: &str) -> Option<&'static str> {
    match quantity {
        POLARITY => Some("polarity"),
        RCD_BUTTON => Some("RCD test button"),
        _ => None,
    }
}
