//! What became of an observation that requires work: its remedial status, worked out from
//! dated events that are kept, never overwritten, and the date the work is due.
//!
//! The rule (The Electrical Safety Standards in the Private Rented Sector (England)
//! Regulations 2020, SI 2020/312, regulation 3(4)): where a report requires further
//! investigative or remedial work, the private landlord must ensure it "is carried out by a
//! qualified person within— (a) 28 days; or (b) the period specified in the report if less than
//! 28 days, starting with the date of the inspection and testing." Checked against the
//! regulation's text as quoted in two stored copies (not the legislation.gov.uk page itself).
//! Regulation 3(5), from memory: the landlord obtains written confirmation from a qualified
//! person that the work has been carried out, and supplies it with the report to each existing
//! tenant and to the local housing authority within 28 days of the work's completion.
//!
//! Which observations: those the inspector coded C1 or C2 (remedial work) or FI (further
//! investigation), as recorded; the tool assigns no code. C3 (improvement recommended) requires
//! no work and has no deadline.
//!
//! "Starting with" a date counts that date as the first day (the usual reading of "beginning
//! with" in English statutes, from memory), so 28 days starting with 14 June end on 11 July:
//! the due date is the inspection date plus 27 days.
//!
//! Made safe does not stop the clock: the regulation requires the investigative or remedial
//! work itself, and making safe (isolating a circuit, say) is neither; the item stays due until
//! it is remedied or no longer applicable.

use std::fmt;

use chrono::{Days, NaiveDate};
use serde::Serialize;

use super::ObservationCode;

/// The regulation the due date and the written confirmation follow.
pub const REGULATION: &str = "The Electrical Safety Standards in the Private Rented Sector \
     (England) Regulations 2020, regulation 3(4)";

/// The period the regulation gives when the report gives none shorter.
pub const STATUTORY_PERIOD_DAYS: u32 = 28;

/// Whether an observation so coded requires work the regulation times: C1, C2 and FI.
pub fn requires_work(code: ObservationCode) -> bool {
    !matches!(code, ObservationCode::C3)
}

/// The last day of a period of `days` days starting with `inspected` (the inspection day is
/// day 1): `inspected + days − 1`.
pub fn due_date(inspected: NaiveDate, days: u32) -> NaiveDate {
    inspected
        .checked_add_days(Days::new(u64::from(days.max(1) - 1)))
        .unwrap_or(inspected)
}

/// The day number of `today` in the period starting with `inspected` (the inspection day is
/// day 1); 0 before it.
pub fn day_of_period(inspected: NaiveDate, today: NaiveDate) -> i64 {
    if today < inspected {
        0
    } else {
        (today - inspected).num_days() + 1
    }
}

/// What an event records.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum RemedialKind {
    /// The report gives a period shorter than 28 days.
    PeriodGiven,
    /// Made safe (isolated, say): the work is still required.
    MadeSafe,
    /// The remedial work (for FI, the further investigation) was carried out.
    Remedied,
    /// No longer applicable (the item removed, the observation withdrawn), with why.
    NotApplicable,
}

impl RemedialKind {
    pub fn as_str(self) -> &'static str {
        match self {
            RemedialKind::PeriodGiven => "period_given",
            RemedialKind::MadeSafe => "made_safe",
            RemedialKind::Remedied => "remedied",
            RemedialKind::NotApplicable => "not_applicable",
        }
    }

    pub fn parse(s: &str) -> Option<RemedialKind> {
        [
            RemedialKind::PeriodGiven,
            RemedialKind::MadeSafe,
            RemedialKind::Remedied,
            RemedialKind::NotApplicable,
        ]
        .into_iter()
        .find(|k| k.as_str() == s)
    }
}

/// One stored event on an observation.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct RemedialEvent {
    pub id: i64,
    pub observation_id: i64,
    pub kind: RemedialKind,
    /// When the work was done; `None` for a period given.
    pub date: Option<NaiveDate>,
    pub by: Option<String>,
    /// What was done; for not applicable, why.
    pub what: Option<String>,
    /// The period the report gives, in days; only for a period given.
    pub period_days: Option<u32>,
}

/// Where an observation stands.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum RemedialStatus {
    Open,
    /// Made safe; the remedial work is still required and still due.
    MadeSafe,
    Remedied,
    NotApplicable,
    /// Still open or made safe when a later full inspection was made: that inspection's report
    /// is the one to act on, so this one is no longer followed up.
    Superseded,
}

impl RemedialStatus {
    /// Whether the work is still to do (and so can be overdue).
    pub fn is_open(self) -> bool {
        matches!(self, RemedialStatus::Open | RemedialStatus::MadeSafe)
    }

    pub fn as_str(self) -> &'static str {
        match self {
            RemedialStatus::Open => "open",
            RemedialStatus::MadeSafe => "made safe",
            RemedialStatus::Remedied => "remedied",
            RemedialStatus::NotApplicable => "not applicable",
            RemedialStatus::Superseded => "superseded",
        }
    }
}

impl fmt::Display for RemedialStatus {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.as_str())
    }
}

/// The status the events give (oldest first), before any later inspection is considered.
pub fn status(events: &[RemedialEvent]) -> RemedialStatus {
    events
        .iter()
        .fold(RemedialStatus::Open, |s, e| match e.kind {
            RemedialKind::PeriodGiven => s,
            RemedialKind::MadeSafe => RemedialStatus::MadeSafe,
            RemedialKind::Remedied => RemedialStatus::Remedied,
            RemedialKind::NotApplicable => RemedialStatus::NotApplicable,
        })
}

/// The period in days: the shortest a report gave, else 28.
pub fn period_days(events: &[RemedialEvent]) -> u32 {
    events
        .iter()
        .filter_map(|e| e.period_days)
        .min()
        .unwrap_or(STATUTORY_PERIOD_DAYS)
        .min(STATUTORY_PERIOD_DAYS)
}

/// A new event, as given.
#[derive(Debug, Clone, PartialEq)]
pub struct NewRemedialEvent {
    pub kind: RemedialKind,
    pub date: Option<NaiveDate>,
    pub by: Option<String>,
    pub what: Option<String>,
    pub period_days: Option<u32>,
}

/// Check a new event against the observation and its events so far. `inspected` is the date of
/// the visit that recorded the observation; `today` the day it is entered. The message names
/// what was expected.
pub fn check_event(
    observation_id: i64,
    code: ObservationCode,
    inspected: NaiveDate,
    events: &[RemedialEvent],
    new: &NewRemedialEvent,
    today: NaiveDate,
) -> Result<(), String> {
    if !requires_work(code) {
        return Err(format!(
            "observation {observation_id} is coded {} as recorded (improvement recommended): it \
             has no remedial status; only C1, C2 and FI observations do",
            code.as_str()
        ));
    }
    let current = status(events);
    if new.kind == RemedialKind::PeriodGiven {
        let days = new.period_days.unwrap_or(0);
        if !(1..STATUTORY_PERIOD_DAYS).contains(&days) {
            return Err(format!(
                "a period of {days} days is not shorter than the regulation's 28: expected 1 to \
                 27 days, as the report gives it ({REGULATION})"
            ));
        }
        if !current.is_open() {
            return Err(format!(
                "observation {observation_id} is already {current}: a period can only be given \
                 while the work is open"
            ));
        }
        return Ok(());
    }
    let Some(date) = new.date else {
        return Err("the date the work was done is missing: expected --date".into());
    };
    for (field, value) in [("who did it (--by)", &new.by), ("what (--what)", &new.what)] {
        match value {
            Some(v) if !v.trim().is_empty() => super::check_text(field, v)?,
            _ => return Err(format!("{field} is missing or empty: expected some text")),
        }
    }
    if date < inspected {
        return Err(format!(
            "{date} is before the inspection of {inspected} that recorded observation \
             {observation_id}: expected a date on or after it"
        ));
    }
    if date > today {
        return Err(format!(
            "{date} is in the future: expected a date on or before today ({today})"
        ));
    }
    if let Some(last) = events.iter().filter_map(|e| e.date).max()
        && date < last
    {
        return Err(format!(
            "{date} is before the last event recorded for observation {observation_id} ({last}): \
             expected a date on or after it"
        ));
    }
    match current {
        RemedialStatus::Remedied | RemedialStatus::NotApplicable => {
            let when = events
                .iter()
                .rev()
                .find_map(|e| e.date)
                .map(|d| format!(" on {d}"))
                .unwrap_or_default();
            Err(format!(
                "observation {observation_id} is already {current}{when}: nothing more can be \
                 recorded for it"
            ))
        }
        RemedialStatus::MadeSafe if new.kind == RemedialKind::MadeSafe => Err(format!(
            "observation {observation_id} is already made safe: expected the remedial work \
             (done without --made-safe) or --not-applicable"
        )),
        _ => Ok(()),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn d(y: i32, m: u32, day: u32) -> NaiveDate {
        NaiveDate::from_ymd_opt(y, m, day).unwrap()
    }

    fn event(kind: RemedialKind, date: Option<NaiveDate>, days: Option<u32>) -> RemedialEvent {
        RemedialEvent {
            id: 1,
            observation_id: 7,
            kind,
            date,
            by: Some("A. Tester".into()),
            what: Some("work".into()),
            period_days: days,
        }
    }

    fn new(kind: RemedialKind, date: NaiveDate) -> NewRemedialEvent {
        NewRemedialEvent {
            kind,
            date: Some(date),
            by: Some("A. Tester".into()),
            what: Some("Replaced the damaged enclosure".into()),
            period_days: None,
        }
    }

    #[test]
    fn twenty_eight_days_starting_with_the_inspection_date() {
        // SI 2020/312 regulation 3(4): "within 28 days ... starting with the date of the
        // inspection and testing"; the inspection day is day 1 (from memory, the usual reading
        // of "starting with"). Exact arithmetic.
        assert_eq!(due_date(d(2025, 6, 14), 28), d(2025, 7, 11));
        assert_eq!(day_of_period(d(2025, 6, 14), d(2025, 6, 14)), 1);
        assert_eq!(day_of_period(d(2025, 6, 14), d(2025, 7, 11)), 28);
        // Across a month end and into a leap day.
        assert_eq!(due_date(d(2024, 2, 1), 28), d(2024, 2, 28));
        assert_eq!(due_date(d(2024, 2, 2), 28), d(2024, 2, 29));
        assert_eq!(due_date(d(2023, 12, 20), 28), d(2024, 1, 16));
        // A shorter period the report gives: 7 days starting with 14 June end on 20 June.
        assert_eq!(due_date(d(2025, 6, 14), 7), d(2025, 6, 20));
        assert_eq!(due_date(d(2025, 6, 14), 1), d(2025, 6, 14));
        assert_eq!(day_of_period(d(2025, 6, 14), d(2025, 6, 1)), 0);
    }

    #[test]
    fn the_period_is_the_shortest_given_and_never_longer_than_28_days() {
        assert_eq!(period_days(&[]), 28);
        let given = [
            event(RemedialKind::PeriodGiven, None, Some(14)),
            event(RemedialKind::PeriodGiven, None, Some(7)),
        ];
        assert_eq!(period_days(&given), 7);
    }

    #[test]
    fn made_safe_then_remedied_keeps_both_and_ends_remedied() {
        let inspected = d(2025, 6, 14);
        let today = d(2025, 8, 1);
        let mut events = vec![];
        assert_eq!(status(&events), RemedialStatus::Open);
        let safe = new(RemedialKind::MadeSafe, d(2025, 6, 14));
        check_event(7, ObservationCode::C1, inspected, &events, &safe, today).unwrap();
        events.push(event(RemedialKind::MadeSafe, safe.date, None));
        assert_eq!(status(&events), RemedialStatus::MadeSafe);
        // Made safe is still open: the work is still due.
        assert!(status(&events).is_open());
        // Made safe twice is refused, naming what is expected.
        let e = check_event(7, ObservationCode::C1, inspected, &events, &safe, today).unwrap_err();
        assert!(
            e.contains("already made safe") && e.contains("expected"),
            "{e}"
        );
        let done = new(RemedialKind::Remedied, d(2025, 7, 2));
        check_event(7, ObservationCode::C1, inspected, &events, &done, today).unwrap();
        events.push(event(RemedialKind::Remedied, done.date, None));
        assert_eq!(status(&events), RemedialStatus::Remedied);
        assert!(!status(&events).is_open());
        // Nothing after remedied.
        let again = new(RemedialKind::NotApplicable, d(2025, 7, 3));
        let e = check_event(7, ObservationCode::C1, inspected, &events, &again, today).unwrap_err();
        assert!(e.contains("already remedied on 2025-07-02"), "{e}");
    }

    #[test]
    fn bad_events_are_refused_with_what_was_expected() {
        let inspected = d(2025, 6, 14);
        let today = d(2025, 8, 1);
        let check = |code, n: &NewRemedialEvent| {
            check_event(9, code, inspected, &[], n, today).unwrap_err()
        };
        let e = check(
            ObservationCode::C3,
            &new(RemedialKind::Remedied, d(2025, 7, 1)),
        );
        assert!(
            e.contains("coded C3") && e.contains("only C1, C2 and FI"),
            "{e}"
        );
        let e = check(
            ObservationCode::C2,
            &new(RemedialKind::Remedied, d(2025, 6, 13)),
        );
        assert!(e.contains("before the inspection of 2025-06-14"), "{e}");
        let e = check(
            ObservationCode::C2,
            &new(RemedialKind::Remedied, d(2025, 8, 2)),
        );
        assert!(e.contains("in the future"), "{e}");
        let mut blank = new(RemedialKind::Remedied, d(2025, 7, 1));
        blank.by = Some("  ".into());
        assert!(check(ObservationCode::FI, &blank).contains("who did it"));
        let mut control = new(RemedialKind::Remedied, d(2025, 7, 1));
        control.what = Some("fixed\u{1b}[2J".into());
        assert!(check(ObservationCode::FI, &control).contains("U+001B"));
        for days in [0, 28, 30] {
            let p = NewRemedialEvent {
                kind: RemedialKind::PeriodGiven,
                date: None,
                by: None,
                what: None,
                period_days: Some(days),
            };
            let e = check(ObservationCode::C1, &p);
            assert!(e.contains("expected 1 to 27 days"), "{days}: {e}");
        }
        // An event dated before the last one recorded is refused.
        let events = [event(RemedialKind::MadeSafe, Some(d(2025, 7, 1)), None)];
        let e = check_event(
            9,
            ObservationCode::C2,
            inspected,
            &events,
            &new(RemedialKind::Remedied, d(2025, 6, 20)),
            today,
        )
        .unwrap_err();
        assert!(e.contains("before the last event"), "{e}");
    }
}
