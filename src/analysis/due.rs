//! When a property's next inspection is due, and the worklist row for one that is overdue.
//!
//! The due date runs from the last *full* inspection. A visit that tested fewer than half of
//! the circuits in service at its date (a remedial visit, a re-test of one or two circuits) is
//! a partial re-test: its readings count for the trends, but it does not restart the due date.
//! A periodic inspection tests every circuit but for agreed limitations, and a re-test after
//! repairs touches the few circuits worked on, so half sits well clear of both.

use foldhash::{HashMap, HashSet};

use chrono::NaiveDate;

use super::{Flag, add_months};
use crate::model::{ChangeKind, Property};
use crate::store::PropertyHistory;

/// How many circuits a visit tested, out of those in service at its date.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Coverage {
    pub date: NaiveDate,
    pub tested: usize,
    pub in_service: usize,
}

impl Coverage {
    /// A full inspection tested at least half of the circuits in service at its date.
    pub fn is_full(&self) -> bool {
        self.tested * 2 >= self.in_service
    }
}

/// The property's inspection dates as the worklist reads them.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct Schedule {
    /// The last visit that was a full inspection.
    pub last_full: Option<NaiveDate>,
    /// The last full inspection plus the property's interval.
    pub next_due: Option<NaiveDate>,
    /// Partial re-tests after the last full inspection, oldest first.
    pub partial_since: Vec<Coverage>,
}

/// Each completed visit's coverage, oldest first. A circuit counts as in service at a visit's
/// date when it had been read at or before that visit and had not been retired by then; the
/// circuits read at the visit always count.
pub fn coverage(h: &PropertyHistory) -> Vec<Coverage> {
    let visit_date: HashMap<i64, NaiveDate> = h.visits.iter().map(|v| (v.id, v.date)).collect();
    let mut first_read: HashMap<i64, NaiveDate> = HashMap::default();
    let mut tested: HashMap<i64, HashSet<i64>> = HashMap::default();
    for r in &h.records {
        let Some(&d) = visit_date.get(&r.visit_id) else {
            continue;
        };
        first_read
            .entry(r.circuit_id)
            .and_modify(|f| *f = (*f).min(d))
            .or_insert(d);
        tested.entry(r.visit_id).or_default().insert(r.circuit_id);
    }
    let mut retired: HashMap<i64, NaiveDate> = HashMap::default();
    for ch in h.changes.iter().filter(|ch| ch.kind == ChangeKind::Retired) {
        retired
            .entry(ch.circuit_id)
            .and_modify(|r| *r = (*r).min(ch.date))
            .or_insert(ch.date);
    }
    let empty = HashSet::default();
    h.visits
        .iter()
        .map(|v| {
            let at_visit = tested.get(&v.id).unwrap_or(&empty);
            let others = first_read
                .iter()
                .filter(|(c, first)| {
                    **first <= v.date
                        && !at_visit.contains(*c)
                        && retired.get(*c).is_none_or(|r| *r > v.date)
                })
                .count();
            Coverage {
                date: v.date,
                tested: at_visit.len(),
                in_service: at_visit.len() + others,
            }
        })
        .collect()
}

/// The last full inspection, the next due date from it, and the partial re-tests since.
pub fn schedule(h: &PropertyHistory) -> Schedule {
    let visits = coverage(h);
    let Some(i) = visits.iter().rposition(Coverage::is_full) else {
        return Schedule::default();
    };
    let last_full = visits[i].date;
    Schedule {
        last_full: Some(last_full),
        next_due: Some(add_months(last_full, h.property.interval_months)),
        partial_since: visits[i + 1..].to_vec(),
    }
}

/// Whole months from `from` to `to`, counted the way due dates are ([`add_months`]): the
/// largest `n` with `from + n months <= to`; 0 when `to` is not later.
pub fn months_between(from: NaiveDate, to: NaiveDate) -> u32 {
    use chrono::Datelike;
    if to <= from {
        return 0;
    }
    let guess = (to.year() - from.year()) * 12 + to.month() as i32 - from.month() as i32;
    let mut n = guess.max(0) as u32;
    while n > 0 && add_months(from, n) > to {
        n -= 1;
    }
    n
}

/// The worklist row for a property whose next inspection was due before `today`: circuit
/// null, at the origin board, ranked among the exceeds by the share of the interval used.
pub fn overdue_row(
    property: &Property,
    board: &str,
    s: &Schedule,
    today: NaiveDate,
) -> Option<Flag> {
    let (last, due) = (s.last_full?, s.next_due?);
    if due >= today {
        return None;
    }
    let interval = property.interval_months;
    let since = months_between(last, today);
    let late = since.saturating_sub(interval);
    let lateness = if late > 0 {
        plural(late as i64, "month")
    } else {
        plural((today - due).num_days(), "day")
    };
    let mut reason = format!(
        "inspection due {due}, {lateness} overdue; last full inspection {last}, interval {interval} months"
    );
    if let Some(p) = s.partial_since.last() {
        let (k, n) = (p.tested, p.in_service);
        reason.push_str(&match s.partial_since.len() {
            1 => format!(
                "; the partial re-test on {} ({k} of {n} circuits) does not restart it",
                p.date
            ),
            m => format!(
                "; the {m} partial re-tests since (the latest on {}, {k} of {n} circuits) do not restart it",
                p.date
            ),
        });
    }
    let share = (interval > 0).then(|| f64::from(since) / f64::from(interval));
    Some(Flag {
        property_ref: property.reference.clone(),
        board: board.to_string(),
        circuit: None,
        description: None,
        quantity: "inspection",
        severity: "exceeds",
        kind: "overdue",
        reason,
        last_value: f64::from(since),
        last_date: last,
        limit: Some(f64::from(interval)),
        projected_date: None,
        projected_earliest: None,
        limit_source: Some("inspection interval recorded for the property".into()),
        margin_used_pct: share.map(|m| (m * 1000.0).round() / 10.0),
        recommended_interval_months: None,
        findings: Vec::new(),
        finding: None,
    })
}

fn plural(n: i64, unit: &str) -> String {
    if n == 1 {
        format!("1 {unit}")
    } else {
        format!("{n} {unit}s")
    }
}
