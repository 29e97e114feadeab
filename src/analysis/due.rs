//! When a property's next inspection is due, and the worklist row for one that is overdue.
//!
//! The due date runs from the last *full* inspection. A visit that tested fewer than half of
//! the circuits in service at its date (a remedial visit, a re-test of one or two circuits) is
//! a partial re-test: its readings count for the trends, but it does not restart the due date.
//! A periodic inspection tests every circuit but for agreed limitations, and a re-test after
//! repairs touches the few circuits worked on, so half sits well clear of both.
//!
//! The interval is the one the inspector recorded at that full inspection when there is one
//! (a shorter interval is what "or sooner where the last report says so" means; The Electrical
//! Safety Standards in the Private Rented Sector (England) Regulations 2020, regulation 3),
//! else the property's own interval (60 months unless set). A partial re-test's recorded
//! interval does not count, as its date does not.

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

/// Where the interval to the next inspection comes from.
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "snake_case")]
pub enum IntervalBasis {
    /// The interval the inspector recorded at the last full inspection.
    Recorded,
    /// The property's own interval (`property add --interval`, 60 months by default): none
    /// was recorded at the last full inspection.
    #[default]
    Property,
}

impl IntervalBasis {
    /// The basis in words, after "interval N months".
    pub fn words(self) -> &'static str {
        match self {
            IntervalBasis::Recorded => "as recorded by the inspector at that inspection",
            IntervalBasis::Property => "the property's interval; none recorded at that inspection",
        }
    }
}

/// The property's inspection dates as the worklist reads them.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct Schedule {
    /// The last visit that was a full inspection.
    pub last_full: Option<NaiveDate>,
    /// The last full inspection plus the interval.
    pub next_due: Option<NaiveDate>,
    /// The interval `next_due` runs by, in months, and where it comes from.
    pub interval_months: u32,
    pub basis: IntervalBasis,
    /// Partial re-tests after the last full inspection, oldest first.
    pub partial_since: Vec<Coverage>,
}

/// Each completed visit's coverage, oldest first. A circuit counts as in service at a visit
/// when it had been read at that visit or an earlier one and had not been retired by the
/// visit's date; the circuits read at the visit always count.
pub fn coverage(h: &PropertyHistory) -> Vec<Coverage> {
    let mut out: Vec<Coverage> = h
        .visits
        .iter()
        .map(|v| Coverage {
            date: v.date,
            tested: 0,
            in_service: 0,
        })
        .collect();
    // (circuit, visit index) for every reading, each pair once. A property has a handful of
    // visits, so the index is found by a short scan.
    let mut read: Vec<(i64, usize)> = h
        .records
        .iter()
        .filter_map(|r| {
            let i = h.visits.iter().position(|v| v.id == r.visit_id)?;
            Some((r.circuit_id, i))
        })
        .collect();
    read.sort_unstable();
    read.dedup();
    for one in read.chunk_by(|a, b| a.0 == b.0) {
        let circuit = one[0].0;
        let retired = h
            .changes
            .iter()
            .filter(|ch| ch.circuit_id == circuit && ch.kind == ChangeKind::Retired)
            .map(|ch| ch.date)
            .min();
        let mut at = one.iter().map(|&(_, i)| i).peekable();
        for (i, c) in out.iter_mut().enumerate().skip(one[0].1) {
            let tested = at.next_if_eq(&i).is_some();
            if tested {
                c.tested += 1;
            }
            if tested || retired.is_none_or(|r| r > c.date) {
                c.in_service += 1;
            }
        }
    }
    out
}

/// The last full inspection, the next due date from it, and the partial re-tests since.
pub fn schedule(h: &PropertyHistory) -> Schedule {
    let visits = coverage(h);
    let Some(i) = visits.iter().rposition(Coverage::is_full) else {
        return Schedule::default();
    };
    let last_full = visits[i].date;
    let (interval_months, basis) = match h.visits[i].report.interval_months {
        Some(m) if m > 0 => (m, IntervalBasis::Recorded),
        _ => (h.property.interval_months, IntervalBasis::Property),
    };
    Schedule {
        last_full: Some(last_full),
        next_due: Some(add_months(last_full, interval_months)),
        interval_months,
        basis,
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
    let interval = s.interval_months;
    let since = months_between(last, today);
    let late = since.saturating_sub(interval);
    let lateness = if late > 0 {
        plural(late as i64, "month")
    } else {
        plural((today - due).num_days(), "day")
    };
    let mut reason = format!(
        "inspection due {due}, {lateness} overdue; last full inspection {last}, interval {interval} months ({})",
        s.basis.words()
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
        limit_source: Some(
            match s.basis {
                IntervalBasis::Recorded => {
                    "inspection interval recorded by the inspector at the last full inspection"
                }
                IntervalBasis::Property => "inspection interval recorded for the property",
            }
            .into(),
        ),
        margin_used_pct: share.map(|m| (m * 1000.0).round() / 10.0),
        recommended_interval_months: None,
        findings: Vec::new(),
        finding: None,
        code: None,
    })
}

fn plural(n: i64, unit: &str) -> String {
    if n == 1 {
        format!("1 {unit}")
    } else {
        format!("{n} {unit}s")
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::model::{CircuitKind, Readings, VisitState};
    use crate::store::{CircuitDetails, NewBoard, NewProperty, NewVisit, Store};

    fn d(y: i32, m: u32, day: u32) -> NaiveDate {
        NaiveDate::from_ymd_opt(y, m, day).unwrap()
    }

    /// A property with `n` radial circuits on CU1 and a 60-month interval: the longest the
    /// private-rented rules in England allow (The Electrical Safety Standards in the Private
    /// Rented Sector (England) Regulations 2020, regulation 3: at intervals of no more than 5
    /// years).
    fn property(n: usize) -> Store {
        let s = Store::open_in_memory().unwrap();
        s.add_property(&NewProperty {
            reference: "P-1".into(),
            interval_months: Some(60),
            ..Default::default()
        })
        .unwrap();
        s.add_board(
            "P-1",
            &NewBoard {
                designation: "CU1".into(),
                ..Default::default()
            },
        )
        .unwrap();
        for k in 1..=n {
            s.add_circuit(
                "P-1",
                "CU1",
                &k.to_string(),
                &CircuitDetails {
                    kind: Some(CircuitKind::Radial),
                    device: Some("B16".parse().unwrap()),
                    ..Default::default()
                },
            )
            .unwrap();
        }
        s
    }

    /// A visit reading R1+R2 on the circuits numbered, each near its own value with a few per
    /// cent of visit-to-visit wander.
    fn visit(s: &Store, date: NaiveDate, circuits: &[usize], wander: f64) {
        let p = s.property("P-1").unwrap();
        let v = s
            .add_visit(
                p.id,
                &NewVisit {
                    date: Some(date),
                    ambient_c: Some(16.0),
                    ze_ohm: Some(0.24 * wander),
                    ..Default::default()
                },
                VisitState::Complete,
            )
            .unwrap();
        for k in circuits {
            let c = s.find_circuit("P-1", "CU1", &k.to_string()).unwrap();
            let r = ((0.35 + 0.09 * *k as f64) * wander * 100.0).round() / 100.0;
            let readings = Readings {
                r1r2_ohm: Some(r),
                ..Default::default()
            };
            s.put_test_record(v.id, c.id, &readings).unwrap();
        }
    }

    fn history(s: &Store) -> PropertyHistory {
        s.history(s.property("P-1").unwrap().id).unwrap()
    }

    #[test]
    fn months_are_counted_the_way_due_dates_are() {
        // Exact arithmetic, no readings involved.
        assert_eq!(months_between(d(2019, 6, 14), d(2024, 11, 20)), 65);
        assert_eq!(months_between(d(2019, 6, 14), d(2024, 11, 13)), 64);
        assert_eq!(months_between(d(2019, 6, 14), d(2019, 6, 14)), 0);
        assert_eq!(months_between(d(2024, 1, 1), d(2019, 6, 14)), 0);
        // 31 August plus 6 months is the end of February (add_months clamps), and that is
        // 6 whole months on: the count agrees with the due date.
        assert_eq!(add_months(d(2019, 8, 31), 6), d(2020, 2, 29));
        assert_eq!(months_between(d(2019, 8, 31), d(2020, 2, 29)), 6);
        assert_eq!(months_between(d(2019, 8, 31), d(2020, 2, 28)), 5);
    }

    #[test]
    fn two_of_eight_circuits_a_year_later_is_a_partial_retest() {
        let s = property(8);
        visit(&s, d(2016, 3, 9), &[1, 2, 3, 4, 5, 6, 7, 8], 1.0);
        visit(&s, d(2021, 3, 9), &[1, 2, 3, 4, 5, 6, 7, 8], 1.03);
        visit(&s, d(2022, 3, 15), &[3, 7], 0.98);
        let h = history(&s);
        let c = coverage(&h);
        assert_eq!((c[1].tested, c[1].in_service), (8, 8));
        assert_eq!((c[2].tested, c[2].in_service), (2, 8));
        assert!(c[1].is_full() && !c[2].is_full());
        let sch = schedule(&h);
        assert_eq!(sch.last_full, Some(d(2021, 3, 9)));
        // Full inspection + 60 months, not the re-test + 60 months (2027-03-15).
        assert_eq!(sch.next_due, Some(d(2026, 3, 9)));
        assert_eq!(sch.partial_since, vec![c[2]]);
        // The analysis uses it for the due date, and the re-test's readings still count for
        // the trends: both circuits' series carry its points.
        let a = super::super::analyse(&h, &super::super::Settings::defaults(d(2026, 6, 1)));
        assert_eq!(a.last_visit, Some(d(2022, 3, 15)));
        assert_eq!(a.last_full_inspection, Some(d(2021, 3, 9)));
        assert_eq!(a.next_due, Some(d(2026, 3, 9)));
        let c3 = a.circuits.iter().find(|c| c.circuit.number == "3").unwrap();
        assert_eq!(c3.last_visit, Some(d(2022, 3, 15)));
        let overdue: Vec<_> = a.flags.iter().filter(|f| f.kind == "overdue").collect();
        assert_eq!(overdue.len(), 1);
        // 2021-03-09 to 2026-06-01: 62 whole months, 2 past the 60-month interval.
        assert_eq!(
            overdue[0].reason,
            "inspection due 2026-03-09, 2 months overdue; last full inspection 2021-03-09, \
             interval 60 months (the property's interval; none recorded at that inspection); \
             the partial re-test on 2022-03-15 (2 of 8 circuits) does not restart it"
        );
    }

    #[test]
    fn most_circuits_is_a_full_inspection_and_retired_circuits_do_not_count() {
        // Circuit 9 is on the register but first read at the last visit (a new circuit).
        let s = property(9);
        visit(&s, d(2016, 3, 9), &[1, 2, 3, 4, 5, 6, 7, 8], 1.0);
        // Two circuits inaccessible (a limitation): 6 of 8 is still a full inspection.
        visit(&s, d(2019, 5, 20), &[1, 2, 3, 4, 5, 6], 0.97);
        // Five circuits taken out with a kitchen refit; 3 of the 4 in service is full.
        for k in 4..=8 {
            let c = s.find_circuit("P-1", "CU1", &k.to_string()).unwrap();
            s.retire_circuit(c.id, d(2020, 1, 10), None).unwrap();
        }
        visit(&s, d(2023, 4, 2), &[1, 2, 9], 1.04);
        let h = history(&s);
        let c = coverage(&h);
        // Circuit 9, not yet read, does not count against the earlier visits.
        assert_eq!((c[0].tested, c[0].in_service), (8, 8));
        assert_eq!((c[1].tested, c[1].in_service), (6, 8));
        assert_eq!((c[2].tested, c[2].in_service), (3, 4));
        assert!(c.iter().all(Coverage::is_full));
        assert_eq!(schedule(&h).next_due, Some(d(2028, 4, 2)));
        assert!(schedule(&h).partial_since.is_empty());
    }

    /// Set the interval the inspector recorded at the visit on `date`.
    fn record_interval(s: &Store, date: NaiveDate, months: u32) {
        let p = s.property("P-1").unwrap();
        let v = s.visit_on(p.id, date).unwrap().unwrap();
        let report = crate::model::VisitReport {
            interval_months: Some(months),
            ..v.report
        };
        s.set_visit_report_supply(v.id, &report, &v.supply).unwrap();
    }

    #[test]
    fn the_interval_recorded_at_the_last_full_inspection_sets_the_due_date() {
        // "At intervals of no more than 5 years, or sooner where the last report says so"
        // (The Electrical Safety Standards in the Private Rented Sector (England) Regulations
        // 2020, regulation 3): a recorded 36 months runs from the full inspection.
        let s = property(8);
        visit(&s, d(2016, 3, 9), &[1, 2, 3, 4, 5, 6, 7, 8], 1.0);
        visit(&s, d(2021, 3, 9), &[1, 2, 3, 4, 5, 6, 7, 8], 1.03);
        record_interval(&s, d(2021, 3, 9), 36);
        let sch = schedule(&history(&s));
        // 2021-03-09 + 36 months = 2024-03-09 (arithmetic).
        assert_eq!(sch.next_due, Some(d(2024, 3, 9)));
        assert_eq!(
            (sch.interval_months, sch.basis),
            (36, IntervalBasis::Recorded)
        );
        // A partial re-test recording 60 months restarts neither the date nor the interval.
        visit(&s, d(2022, 3, 15), &[3, 7], 0.98);
        record_interval(&s, d(2022, 3, 15), 60);
        let h = history(&s);
        let sch = schedule(&h);
        assert_eq!(sch.next_due, Some(d(2024, 3, 9)));
        assert_eq!(sch.basis, IntervalBasis::Recorded);
        // Overdue on 2024-11-20: 2021-03-09 to then is 44 whole months, 8 past 36;
        // 44 / 36 = 122.2 %.
        let r = overdue_row(&h.property, "CU1", &sch, d(2024, 11, 20)).unwrap();
        assert_eq!(
            r.reason,
            "inspection due 2024-03-09, 8 months overdue; last full inspection 2021-03-09, \
             interval 36 months (as recorded by the inspector at that inspection); the partial \
             re-test on 2022-03-15 (2 of 8 circuits) does not restart it"
        );
        assert_eq!((r.last_value, r.limit), (44.0, Some(36.0)));
        assert_eq!(r.margin_used_pct, Some(122.2));
        assert!(
            r.limit_source
                .unwrap()
                .contains("recorded by the inspector")
        );
    }

    #[test]
    fn with_no_visit_nothing_is_due_or_overdue() {
        let s = property(2);
        let h = history(&s);
        assert_eq!(schedule(&h), Schedule::default());
        assert!(overdue_row(&h.property, "CU1", &Schedule::default(), d(2030, 1, 1)).is_none());
    }

    #[test]
    fn the_overdue_sentence_adds_up() {
        // Exact arithmetic on the figures of the sentence.
        let s = property(1);
        let p = history(&s).property;
        let sch = |last: NaiveDate| Schedule {
            last_full: Some(last),
            next_due: Some(add_months(last, 60)),
            interval_months: 60,
            basis: IntervalBasis::Property,
            partial_since: vec![],
        };
        let r = overdue_row(&p, "CU1", &sch(d(2019, 6, 14)), d(2024, 11, 20)).unwrap();
        assert_eq!(
            r.reason,
            "inspection due 2024-06-14, 5 months overdue; last full inspection 2019-06-14, \
             interval 60 months (the property's interval; none recorded at that inspection)"
        );
        // 65 months since, against 60: 65 / 60 = 108.3 %.
        assert_eq!((r.last_value, r.limit), (65.0, Some(60.0)));
        assert_eq!(r.margin_used_pct, Some(108.3));
        assert_eq!(r.last_value - r.limit.unwrap(), 5.0);
        // Less than a month late is counted in days: 14 June to 20 June.
        let r = overdue_row(&p, "CU1", &sch(d(2019, 6, 14)), d(2024, 6, 20)).unwrap();
        assert!(
            r.reason
                .starts_with("inspection due 2024-06-14, 6 days overdue;")
        );
        assert_eq!((r.last_value, r.margin_used_pct), (60.0, Some(100.0)));
        // Due today is not overdue yet.
        assert!(overdue_row(&p, "CU1", &sch(d(2019, 6, 14)), d(2024, 6, 14)).is_none());
    }
}
