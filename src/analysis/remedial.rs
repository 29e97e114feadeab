//! Remedial follow-up: every observation coded C1, C2 or FI as recorded, with its status, the
//! date its work is due, and the worklist row when that date has passed. The rules are in
//! [`crate::model::remedial`] (SI 2020/312 regulation 3(4)); this is the pure pass over a
//! property's history.

use chrono::NaiveDate;
use serde::Serialize;

use super::Flag;
use crate::error::Result;
use crate::model::ObservationCode;
use crate::model::remedial::{
    self, REGULATION, RemedialEvent, RemedialKind, RemedialStatus, STATUTORY_PERIOD_DAYS,
};
use crate::store::{ALL_PROPERTIES, HistoryParts, PropertyHistory, Store};

/// One observation that requires work, as `remedial list`, the report and the written
/// confirmation show it.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct RemedialItem {
    /// The observation's number (its stored id): what `remedial done` takes.
    pub observation: i64,
    pub property_ref: String,
    pub address: Option<String>,
    pub client: Option<String>,
    /// The date of the visit that recorded it, which the period starts with.
    pub inspected: NaiveDate,
    pub board: Option<String>,
    pub circuit: Option<String>,
    /// As the inspector recorded it.
    pub code: ObservationCode,
    pub text: String,
    /// 28, or the shorter period the report gives.
    pub period_days: u32,
    /// Where the period comes from, in words.
    pub period_basis: String,
    /// The last day of the period: `inspected + period_days − 1`.
    pub due: NaiveDate,
    pub status: RemedialStatus,
    /// The full inspection after which an item left open is no longer followed up.
    pub superseded_by: Option<NaiveDate>,
    /// Days from today to the due date while the work is open: negative when overdue.
    pub days_left: Option<i64>,
    /// Every event, oldest first.
    pub events: Vec<RemedialEvent>,
}

impl RemedialItem {
    /// Whether the work is open and its due date has passed.
    pub fn is_overdue(&self) -> bool {
        self.status.is_open() && self.days_left.is_some_and(|d| d < 0)
    }

    /// "remedial work", or "further investigation" for FI.
    pub fn work_words(&self) -> &'static str {
        work_words(self.code)
    }

    /// The events that record work (made safe, remedied, not applicable), oldest first.
    pub fn work_events(&self) -> impl Iterator<Item = &RemedialEvent> {
        self.events
            .iter()
            .filter(|e| e.kind != RemedialKind::PeriodGiven)
    }
}

/// What the work is called for an observation so coded.
pub fn work_words(code: ObservationCode) -> &'static str {
    match code {
        ObservationCode::FI => "further investigation",
        _ => "remedial work",
    }
}

/// Every C1, C2 and FI observation of a property, oldest first, with its status on `today`.
/// `last_full` is the last full inspection ([`super::due::schedule`]): an item still open from
/// a visit before it is superseded by it.
pub fn items(
    h: &PropertyHistory,
    last_full: Option<NaiveDate>,
    today: NaiveDate,
) -> Vec<RemedialItem> {
    let mut out = Vec::new();
    for o in h
        .observations
        .iter()
        .filter(|o| remedial::requires_work(o.code))
    {
        let Some(visit) = h.visits.iter().find(|v| v.id == o.visit_id) else {
            continue;
        };
        let events: Vec<RemedialEvent> = h
            .remedial_events
            .iter()
            .filter(|e| e.observation_id == o.id)
            .cloned()
            .collect();
        let inspected = visit.date;
        let period_days = remedial::period_days(&events);
        let period_basis = if period_days < STATUTORY_PERIOD_DAYS {
            format!(
                "{period_days} days starting with the inspection date, the period the report \
                 gives ({REGULATION}(b))"
            )
        } else {
            format!("28 days starting with the inspection date ({REGULATION}(a))")
        };
        let due = remedial::due_date(inspected, period_days);
        let mut status = remedial::status(&events);
        let superseded_by = last_full.filter(|l| status.is_open() && inspected < *l);
        if superseded_by.is_some() {
            status = RemedialStatus::Superseded;
        }
        out.push(RemedialItem {
            observation: o.id,
            property_ref: h.property.reference.clone(),
            address: h.property.address.clone(),
            client: h.property.client.clone(),
            inspected,
            board: o.board.clone(),
            circuit: o.circuit.clone(),
            code: o.code,
            text: o.text.clone(),
            period_days,
            period_basis,
            due,
            status,
            superseded_by,
            days_left: status.is_open().then(|| (due - today).num_days()),
            events,
        });
    }
    out.sort_by_key(|i| (i.inspected, i.observation));
    out
}

/// Which items [`list`] gives.
#[derive(Debug, Clone, Default)]
pub struct ListFilter {
    /// One property, by reference (without regard to case).
    pub property: Option<String>,
    /// One client, by name (without regard to case).
    pub client: Option<String>,
}

/// Every C1, C2 and FI observation of the portfolio (or of one property or client), property by
/// property in reference order, each oldest first, with its status on `today`. The histories
/// are read as the worklist reads them (only the observations that need work), one property in
/// memory at a time.
pub fn list(store: &Store, today: NaiveDate, filter: &ListFilter) -> Result<Vec<RemedialItem>> {
    // The client's properties as the worklist finds them: an unknown name is an error listing
    // the known clients, and no other client's property is loaded.
    let client = match &filter.client {
        Some(c) => Some(store.client_properties(c)?),
        None => None,
    };
    let mut out = Vec::new();
    let mut take = |h: &PropertyHistory| {
        if !h.observations.is_empty() {
            let schedule = super::due::schedule(h);
            out.extend(items(h, schedule.last_full, today));
        }
        Ok(())
    };
    match (&filter.property, &client) {
        (Some(r), _) => {
            let id = store.property(r)?.id;
            if let Some((name, ids)) = &client
                && !ids.contains(&id)
            {
                return Err(crate::Error::invalid(format!(
                    "property {r:?} is not one of client {name:?}'s"
                )));
            }
            take(&store.history(id)?)?;
        }
        (None, Some((_, ids))) => {
            for &id in ids {
                store.for_each_history_in((id, id), HistoryParts::FOR_FLAGS, |h| take(&h))?;
            }
        }
        (None, None) => {
            store.for_each_history_in(ALL_PROPERTIES, HistoryParts::FOR_FLAGS, |h| take(&h))?
        }
    }
    out.sort_by(|a, b| {
        a.property_ref
            .cmp(&b.property_ref)
            .then_with(|| (a.inspected, a.observation).cmp(&(b.inspected, b.observation)))
    });
    Ok(out)
}

/// The worklist row of an overdue item: at its board and circuit (the origin board when the
/// observation names none), quantity `remedial`, kind `overdue`, severity `exceeds`. Its figures
/// are days: `last_value` the day of the period today is (the inspection day is day 1),
/// `limit` the period, so `last_value − limit` is the days overdue. `None` unless overdue.
pub fn overdue_row(item: &RemedialItem, origin_board: &str, today: NaiveDate) -> Option<Flag> {
    if !item.is_overdue() {
        return None;
    }
    let day = remedial::day_of_period(item.inspected, today);
    let late = (today - item.due).num_days();
    let mut reason = format!(
        "{} recorded {} (observation {}): \"{}\"; {} due by {}, {}, {} overdue",
        item.code.as_str(),
        item.inspected,
        item.observation,
        item.text,
        item.work_words(),
        item.due,
        item.period_basis,
        days(late)
    );
    match item.work_events().last() {
        Some(e) if item.status == RemedialStatus::MadeSafe => {
            reason.push_str(&format!(
                "; made safe on {} by {}, the {} is still required",
                e.date.map(|d| d.to_string()).unwrap_or_default(),
                e.by.as_deref().unwrap_or("someone not named"),
                item.work_words()
            ));
        }
        _ => reason.push_str("; open"),
    }
    let period = f64::from(item.period_days);
    Some(Flag {
        property_ref: item.property_ref.clone(),
        board: item
            .board
            .clone()
            .unwrap_or_else(|| origin_board.to_string()),
        circuit: item.circuit.clone(),
        description: None,
        quantity: "remedial",
        severity: "exceeds",
        kind: "overdue",
        reason,
        last_value: day as f64,
        last_date: item.inspected,
        limit: Some(period),
        projected_date: None,
        projected_earliest: None,
        limit_source: Some(if item.period_days < STATUTORY_PERIOD_DAYS {
            format!("{REGULATION}(b): the period the report gives")
        } else {
            format!("{REGULATION}(a)")
        }),
        margin_used_pct: Some((day as f64 / period * 1000.0).round() / 10.0),
        recommended_interval_months: None,
        findings: Vec::new(),
        finding: None,
        code: Some(item.code),
    })
}

fn days(n: i64) -> String {
    if n == 1 {
        "1 day".into()
    } else {
        format!("{n} days")
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::analysis::{Settings, analyse};
    use crate::model::remedial::NewRemedialEvent;
    use crate::model::{CircuitKind, Readings, VisitState};
    use crate::store::{CircuitDetails, NewBoard, NewProperty, NewVisit, Store};

    fn d(y: i32, m: u32, day: u32) -> NaiveDate {
        NaiveDate::from_ymd_opt(y, m, day).unwrap()
    }

    /// A property with `n` radial circuits on CU1.
    fn property(n: usize) -> Store {
        let s = Store::open_in_memory().unwrap();
        s.add_property(&NewProperty {
            reference: "P-1".into(),
            client: Some("Demo Lettings".into()),
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
    /// cent of visit-to-visit wander; returns the visit id.
    fn visit(s: &Store, date: NaiveDate, circuits: &[usize], wander: f64) -> i64 {
        let p = s.property("P-1").unwrap();
        let v = s
            .add_visit(
                p.id,
                &NewVisit {
                    date: Some(date),
                    ambient_c: Some(15.5),
                    ..Default::default()
                },
                VisitState::Complete,
            )
            .unwrap();
        for k in circuits {
            let c = s.find_circuit("P-1", "CU1", &k.to_string()).unwrap();
            let r = ((0.33 + 0.11 * *k as f64) * wander * 100.0).round() / 100.0;
            let readings = Readings {
                r1r2_ohm: Some(r),
                ..Default::default()
            };
            s.put_test_record(v.id, c.id, &readings).unwrap();
        }
        v.id
    }

    fn observe(s: &Store, visit: i64, circuit: Option<usize>, code: ObservationCode) -> i64 {
        let c = circuit.map(|k| s.find_circuit("P-1", "CU1", &k.to_string()).unwrap());
        s.add_observation(
            visit,
            c.as_ref().map(|c| c.board_id),
            c.as_ref().map(|c| c.id),
            code,
            "Socket outlet in the garden store damaged; enclosure open",
        )
        .unwrap()
    }

    fn work(kind: RemedialKind, date: NaiveDate) -> NewRemedialEvent {
        NewRemedialEvent {
            kind,
            date: Some(date),
            by: Some("A. Brightwire".into()),
            what: Some("Socket outlet replaced; circuit 3 re-tested".into()),
            period_days: None,
        }
    }

    fn analysed(s: &Store, today: NaiveDate) -> crate::analysis::PropertyAnalysis {
        analyse(
            &s.history(s.property("P-1").unwrap().id).unwrap(),
            &Settings::defaults(today),
        )
    }

    fn remedial_rows(a: &crate::analysis::PropertyAnalysis) -> Vec<&Flag> {
        a.flags
            .iter()
            .filter(|f| f.quantity == "remedial")
            .collect()
    }

    #[test]
    fn a_c2_left_open_is_overdue_from_the_29th_day_and_a_c3_has_no_deadline() {
        let s = property(6);
        let v = visit(&s, d(2025, 6, 14), &[1, 2, 3, 4, 5, 6], 1.0);
        let c2 = observe(&s, v, Some(3), ObservationCode::C2);
        observe(&s, v, None, ObservationCode::C3);
        // SI 2020/312 regulation 3(4): 28 days starting with the inspection date, so the
        // 28th day is 11 July and the work is overdue from 12 July.
        let a = analysed(&s, d(2025, 7, 11));
        assert_eq!(a.remedials.len(), 1, "the C3 has no remedial item");
        let item = &a.remedials[0];
        assert_eq!((item.observation, item.code), (c2, ObservationCode::C2));
        assert_eq!((item.due, item.days_left), (d(2025, 7, 11), Some(0)));
        assert!(remedial_rows(&a).is_empty(), "due today is not overdue");
        let a = analysed(&s, d(2025, 7, 23));
        let rows = remedial_rows(&a);
        assert_eq!(rows.len(), 1);
        let r = rows[0];
        assert_eq!((r.kind, r.severity), ("overdue", "exceeds"));
        assert_eq!((r.board.as_str(), r.circuit.as_deref()), ("CU1", Some("3")));
        // 14 June is day 1, 23 July day 40: 40 − 28 = 12 days overdue; 40 / 28 = 142.9 %.
        assert_eq!((r.last_value, r.limit), (40.0, Some(28.0)));
        assert_eq!(r.margin_used_pct, Some(142.9));
        assert_eq!(r.last_date, d(2025, 6, 14));
        assert_eq!(
            r.reason,
            format!(
                "C2 recorded 2025-06-14 (observation {c2}): \"Socket outlet in the garden store \
                 damaged; enclosure open\"; remedial work due by 2025-07-11, 28 days starting \
                 with the inspection date (The Electrical Safety Standards in the Private Rented \
                 Sector (England) Regulations 2020, regulation 3(4)(a)), 12 days overdue; open"
            )
        );
        // Overdue remedial work goes before an overdue inspection and every trend row.
        assert_eq!(a.flags[0].quantity, "remedial");
    }

    #[test]
    fn made_safe_keeps_the_clock_running_and_remedied_stops_it() {
        let s = property(4);
        let v = visit(&s, d(2025, 6, 14), &[1, 2, 3, 4], 1.0);
        let c1 = observe(&s, v, Some(3), ObservationCode::C1);
        let today = d(2025, 7, 20);
        s.add_remedial_event(c1, &work(RemedialKind::MadeSafe, d(2025, 6, 14)), today)
            .unwrap();
        let a = analysed(&s, today);
        assert_eq!(a.remedials[0].status, RemedialStatus::MadeSafe);
        let rows = remedial_rows(&a);
        assert_eq!(rows.len(), 1);
        assert!(
            rows[0].reason.ends_with(
                "9 days overdue; made safe on 2025-06-14 by A. Brightwire, the remedial work is \
                 still required"
            ),
            "{}",
            rows[0].reason
        );
        s.add_remedial_event(c1, &work(RemedialKind::Remedied, d(2025, 7, 18)), today)
            .unwrap();
        let a = analysed(&s, today);
        let item = &a.remedials[0];
        assert_eq!(item.status, RemedialStatus::Remedied);
        assert_eq!(item.days_left, None);
        // Both events kept, in order.
        let kinds: Vec<_> = item.events.iter().map(|e| e.kind).collect();
        assert_eq!(kinds, [RemedialKind::MadeSafe, RemedialKind::Remedied]);
        assert!(remedial_rows(&a).is_empty());
    }

    #[test]
    fn a_shorter_period_given_by_the_report_brings_the_due_date_forward() {
        let s = property(4);
        let v = visit(&s, d(2025, 6, 14), &[1, 2, 3, 4], 1.0);
        let fi = observe(&s, v, None, ObservationCode::FI);
        let p = NewRemedialEvent {
            kind: RemedialKind::PeriodGiven,
            date: None,
            by: None,
            what: None,
            period_days: Some(7),
        };
        s.add_remedial_event(fi, &p, d(2025, 6, 15)).unwrap();
        let a = analysed(&s, d(2025, 6, 25));
        let item = &a.remedials[0];
        // Regulation 3(4)(b): 7 days starting with 14 June end on 20 June.
        assert_eq!((item.period_days, item.due), (7, d(2025, 6, 20)));
        let rows = remedial_rows(&a);
        // 25 June is day 12 of a 7-day period: 5 days overdue.
        assert_eq!((rows[0].last_value, rows[0].limit), (12.0, Some(7.0)));
        assert!(rows[0].reason.contains(
            "further investigation due by 2025-06-20, 7 days starting with the inspection date, \
             the period the report gives"
        ));
        assert!(
            rows[0]
                .reason
                .contains("regulation 3(4)(b)), 5 days overdue")
        );
        // The origin board when the observation names none.
        assert_eq!(
            (rows[0].board.as_str(), rows[0].circuit.as_deref()),
            ("CU1", None)
        );
    }

    #[test]
    fn a_remedial_visit_retesting_only_the_repaired_circuits_does_not_restart_the_due_date() {
        // Full inspection of 8 circuits, a C2 on circuit 3; 19 days later a remedial visit
        // re-tests circuits 3 and 5 only (2 of 8, fewer than half: a partial re-test, see
        // analysis::due), with readings a couple of per cent off the inspection's.
        let s = property(8);
        let v = visit(&s, d(2024, 3, 9), &[1, 2, 3, 4, 5, 6, 7, 8], 1.0);
        let c2 = observe(&s, v, Some(3), ObservationCode::C2);
        visit(&s, d(2024, 3, 28), &[3, 5], 0.98);
        s.add_remedial_event(
            c2,
            &work(RemedialKind::Remedied, d(2024, 3, 28)),
            d(2024, 4, 1),
        )
        .unwrap();
        let a = analysed(&s, d(2024, 4, 1));
        assert_eq!(a.last_visit, Some(d(2024, 3, 28)));
        assert_eq!(a.last_full_inspection, Some(d(2024, 3, 9)));
        // The next inspection runs from the full inspection, not from the remedial visit.
        assert_eq!(a.next_due, Some(d(2029, 3, 9)));
        assert_eq!(a.remedials[0].status, RemedialStatus::Remedied);
        assert_eq!(a.remedials[0].superseded_by, None);
    }

    #[test]
    fn an_item_left_open_before_a_later_full_inspection_is_superseded() {
        let s = property(4);
        let old = visit(&s, d(2019, 5, 2), &[1, 2, 3, 4], 1.0);
        let c2 = observe(&s, old, Some(2), ObservationCode::C2);
        visit(&s, d(2024, 4, 30), &[1, 2, 3, 4], 1.03);
        let a = analysed(&s, d(2024, 6, 1));
        let item = &a.remedials[0];
        assert_eq!(item.observation, c2);
        assert_eq!(item.status, RemedialStatus::Superseded);
        assert_eq!(item.superseded_by, Some(d(2024, 4, 30)));
        assert!(remedial_rows(&a).is_empty());
    }
}
