//! Remedial events on observations (migration 012): dated, kept, never overwritten.

use chrono::NaiveDate;
use rusqlite::{OptionalExtension, Row, params};

use super::Store;
use crate::error::{Error, Result};
use crate::model::Observation;
use crate::model::remedial::{NewRemedialEvent, RemedialEvent, RemedialKind, check_event};
#[cfg(test)]
use crate::model::{ObservationCode, VisitState};

/// The columns [`remedial_event_from_row`] reads, in order, from `remedial_event e`.
pub(crate) const REMEDIAL_COLS: &str =
    "e.id, e.observation_id, e.kind, e.date, e.by_whom, e.what, e.period_days";

/// Decode an event from the first seven columns of a row ([`REMEDIAL_COLS`]).
pub(crate) fn remedial_event_from_row(r: &Row) -> rusqlite::Result<RemedialEvent> {
    let kind: String = r.get(2)?;
    Ok(RemedialEvent {
        id: r.get(0)?,
        observation_id: r.get(1)?,
        // The table's CHECK allows only the four kinds.
        kind: RemedialKind::parse(&kind).unwrap_or(RemedialKind::MadeSafe),
        date: r.get(3)?,
        by: r.get(4)?,
        what: r.get(5)?,
        period_days: r.get(6)?,
    })
}

/// An observation with what the remedial rules need to know about it.
#[derive(Debug, Clone, PartialEq)]
pub struct ObservationAt {
    pub observation: Observation,
    pub property_ref: String,
    /// The date of the visit that recorded it: the inspection date the period starts with.
    pub inspected: NaiveDate,
    pub events: Vec<RemedialEvent>,
}

impl Store {
    /// One observation by its number (its id, as `remedial list` shows it), with its property,
    /// its visit's date and its remedial events. Observations of a visit still being recorded
    /// are not part of the history and are not found.
    pub fn observation_at(&self, id: i64) -> Result<ObservationAt> {
        let found = self
            .conn
            .query_row(
                "SELECT o.id, o.visit_id, b.designation, c.number, o.code, o.text, p.ref, v.date,
                        v.state
                 FROM observation o JOIN visit v ON v.id = o.visit_id
                 JOIN property p ON p.id = v.property_id
                 LEFT JOIN board b ON b.id = o.board_id LEFT JOIN circuit c ON c.id = o.circuit_id
                 WHERE o.id = ?1",
                [id],
                |r| {
                    Ok((
                        super::observation_from_row(r)?,
                        r.get::<_, String>(6)?,
                        r.get::<_, NaiveDate>(7)?,
                        r.get::<_, String>(8)?,
                    ))
                },
            )
            .optional()?;
        let Some((observation, property_ref, inspected, state)) = found else {
            return Err(Error::invalid(format!(
                "there is no observation {id}: expected an observation number as `ohmtrail \
                 remedial list` shows it"
            )));
        };
        if state != "complete" {
            return Err(Error::invalid(format!(
                "observation {id} belongs to the visit of {inspected} to {property_ref}, which is \
                 still being recorded: finish the visit first"
            )));
        }
        let events = self.remedial_events(id)?;
        Ok(ObservationAt {
            observation,
            property_ref,
            inspected,
            events,
        })
    }

    /// An observation's remedial events, oldest first.
    pub fn remedial_events(&self, observation_id: i64) -> Result<Vec<RemedialEvent>> {
        let mut st = self.conn.prepare(&format!(
            "SELECT {REMEDIAL_COLS} FROM remedial_event e WHERE e.observation_id = ?1 ORDER BY e.id"
        ))?;
        let rows = st.query_map([observation_id], remedial_event_from_row)?;
        Ok(rows.collect::<rusqlite::Result<_>>()?)
    }

    /// Record an event on an observation after checking it against the observation's code,
    /// its inspection date, the events so far and `today`; in one transaction, so two writers
    /// cannot both close the same item, and nothing is written when it is refused.
    pub fn add_remedial_event(
        &self,
        observation_id: i64,
        new: &NewRemedialEvent,
        today: NaiveDate,
    ) -> Result<RemedialEvent> {
        self.atomic(|s| {
            let at = s.observation_at(observation_id)?;
            check_event(
                observation_id,
                at.observation.code,
                at.inspected,
                &at.events,
                new,
                today,
            )
            .map_err(Error::Invalid)?;
            s.conn.execute(
                "INSERT INTO remedial_event (observation_id, kind, date, by_whom, what, period_days)
                 VALUES (?1, ?2, ?3, ?4, ?5, ?6)",
                params![
                    observation_id,
                    new.kind.as_str(),
                    new.date,
                    new.by.as_deref().map(str::trim),
                    new.what.as_deref().map(str::trim),
                    new.period_days
                ],
            )?;
            let id = s.conn.last_insert_rowid();
            Ok(s.remedial_events(observation_id)?
                .into_iter()
                .find(|e| e.id == id)
                .expect("the event just written"))
        })
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::store::{NewBoard, NewProperty, NewVisit};

    fn d(y: i32, m: u32, day: u32) -> NaiveDate {
        NaiveDate::from_ymd_opt(y, m, day).unwrap()
    }

    fn with_observation(code: ObservationCode) -> (Store, i64) {
        let s = Store::open_in_memory().unwrap();
        s.add_property(&NewProperty {
            reference: "P-1".into(),
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
        let p = s.property("P-1").unwrap();
        let v = s
            .add_visit(
                p.id,
                &NewVisit {
                    date: Some(d(2025, 6, 14)),
                    ..Default::default()
                },
                VisitState::Complete,
            )
            .unwrap();
        let o = s
            .add_observation(v.id, None, None, code, "Garden socket enclosure damaged")
            .unwrap();
        (s, o)
    }

    fn done(kind: RemedialKind, date: NaiveDate) -> NewRemedialEvent {
        NewRemedialEvent {
            kind,
            date: Some(date),
            by: Some(" A. Tester ".into()),
            what: Some("Enclosure replaced".into()),
            period_days: None,
        }
    }

    #[test]
    fn events_are_kept_in_order_and_a_refused_one_writes_nothing() {
        let (s, o) = with_observation(ObservationCode::C2);
        let today = d(2025, 9, 1);
        s.add_remedial_event(o, &done(RemedialKind::MadeSafe, d(2025, 6, 14)), today)
            .unwrap();
        let e = s
            .add_remedial_event(o, &done(RemedialKind::Remedied, d(2025, 7, 2)), today)
            .unwrap();
        assert_eq!(e.by.as_deref(), Some("A. Tester"));
        let kinds: Vec<_> = s
            .remedial_events(o)
            .unwrap()
            .iter()
            .map(|e| (e.kind, e.date))
            .collect();
        assert_eq!(
            kinds,
            [
                (RemedialKind::MadeSafe, Some(d(2025, 6, 14))),
                (RemedialKind::Remedied, Some(d(2025, 7, 2)))
            ]
        );
        let before = s.row_counts().unwrap();
        let err = s
            .add_remedial_event(o, &done(RemedialKind::Remedied, d(2025, 7, 3)), today)
            .unwrap_err()
            .to_string();
        assert!(err.contains("already remedied"), "{err}");
        assert_eq!(s.remedial_events(o).unwrap().len(), 2);
        assert_eq!(s.row_counts().unwrap(), before);
    }

    #[test]
    fn an_unknown_observation_and_a_c3_are_refused() {
        let (s, o) = with_observation(ObservationCode::C3);
        let today = d(2025, 9, 1);
        let err = s
            .add_remedial_event(o + 50, &done(RemedialKind::Remedied, d(2025, 7, 2)), today)
            .unwrap_err()
            .to_string();
        assert!(err.contains(&format!("no observation {}", o + 50)), "{err}");
        assert!(err.contains("remedial list"), "{err}");
        let err = s
            .add_remedial_event(o, &done(RemedialKind::Remedied, d(2025, 7, 2)), today)
            .unwrap_err()
            .to_string();
        assert!(err.contains("coded C3"), "{err}");
        assert!(s.remedial_events(o).unwrap().is_empty());
    }

    #[test]
    fn the_table_refuses_what_the_rules_refuse() {
        // The schema's own checks, below the library's: a period of 28 days or more, a work
        // event with no one named, an unknown kind.
        let (s, o) = with_observation(ObservationCode::C1);
        let refuses = |sql: &str| s.conn.execute(sql, [o]).is_err();
        assert!(refuses(
            "INSERT INTO remedial_event (observation_id, kind, period_days) VALUES (?1, 'period_given', 28)"
        ));
        assert!(refuses(
            "INSERT INTO remedial_event (observation_id, kind, date, what) VALUES (?1, 'remedied', '2025-07-01', 'x')"
        ));
        assert!(refuses(
            "INSERT INTO remedial_event (observation_id, kind, date, by_whom, what) VALUES (?1, 'fixed', '2025-07-01', 'a', 'x')"
        ));
        assert!(refuses(
            "INSERT INTO remedial_event (observation_id, kind, date, by_whom, what, period_days) VALUES (?1, 'remedied', '2025-07-01', 'a', 'x', 7)"
        ));
        assert!(!refuses(
            "INSERT INTO remedial_event (observation_id, kind, period_days) VALUES (?1, 'period_given', 7)"
        ));
        // A reference to no observation is refused (foreign keys are on).
        assert!(
            s.conn
                .execute(
                    "INSERT INTO remedial_event (observation_id, kind, period_days) VALUES (999, 'period_given', 7)",
                    []
                )
                .is_err()
        );
    }
}
