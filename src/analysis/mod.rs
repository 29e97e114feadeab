//! A property's history judged and trended: the glue between the stored history, the limits
//! engine and the trend engine.
//!
//! [`analyse`] is pure: it takes a [`PropertyHistory`] (loaded by the store) and settings, and
//! returns every circuit's series, findings and flags. [`worklist`] walks the portfolio one
//! property at a time, so memory stays bounded by the largest property.

mod bonding;
pub mod due;
#[cfg(test)]
mod fact_tests;
pub mod facts;
pub mod offsets;
mod rcd_devices;
pub mod rows;
mod series;
pub mod settings;
#[cfg(test)]
mod sub_board_tests;
mod supply;
#[cfg(test)]
mod supply_tests;
#[cfg(test)]
mod tests;
#[cfg(test)]
mod trust_tests;

use foldhash::HashMap;
use std::borrow::Cow;

use chrono::{Months, NaiveDate};
use serde::Serialize;

use crate::error::Result;
use crate::limits::{self, DisconnectionChoice, FaultPathReport, RingCheck, Source, ZsLimit};
use crate::model::{Board, Circuit, Observation, Property, Readings, Visit};
use crate::store::{ALL_PROPERTIES, HistoryParts, PropertyHistory, Store};
use crate::trend::{Finding, FindingKind, SeriesReport, Severity};

pub use series::RCD_FIVE_LABEL;
pub use settings::Settings;

/// One finding on the worklist: a reading against a limit, or a change, on one circuit; or an
/// overdue inspection. A worklist row is a `Flag` too: the fields of its most serious finding,
/// with every finding of the circuit in `findings` ([`rows::group`]).
/// The field names are a contract (see the README's `flags` schema).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Flag {
    pub property_ref: String,
    pub board: String,
    /// `None` for a supply (Ze) flag or an overdue inspection, which belong to the origin.
    pub circuit: Option<String>,
    pub description: Option<String>,
    /// One of `ze`, `zs`, `r1r2`, `r1rn`, `r2`, `ring`, `ir_ll`, `ir_le`, `rcd`, `inspection`.
    pub quantity: &'static str,
    /// `exceeds`, `approaching` or `changed`.
    pub severity: &'static str,
    /// What was found: `exceeds`, `approaching`, `step`, `drift`, `neutral_divergence`, `ze_rise`,
    /// `ring_check`, `overdue`.
    pub kind: &'static str,
    /// One sentence with the figures.
    pub reason: String,
    pub last_value: f64,
    pub last_date: NaiveDate,
    pub limit: Option<f64>,
    pub projected_date: Option<NaiveDate>,
    pub projected_earliest: Option<NaiveDate>,
    pub limit_source: Option<String>,
    /// Share of the limit used by the last reading, in per cent.
    pub margin_used_pct: Option<f64>,
    pub recommended_interval_months: Option<u32>,
    /// On a worklist row: every finding grouped in it, most serious first (the first is the
    /// row's own). Empty on a flag not yet grouped.
    #[serde(
        skip_serializing_if = "Vec::is_empty",
        serialize_with = "rows::serialize_findings"
    )]
    pub findings: Vec<Flag>,
    #[serde(skip)]
    finding: Option<Finding>,
}

impl Flag {
    /// The trend finding behind the flag, for ranking; `None` for an overdue inspection.
    pub fn finding(&self) -> Option<&Finding> {
        self.finding.as_ref()
    }
}

/// A series of one quantity on one circuit (or origin), with the limit it was judged against.
#[derive(Debug, Clone, Serialize)]
pub struct SeriesAnalysis {
    pub quantity: &'static str,
    pub label: Cow<'static, str>,
    /// How the points were formed, e.g. "Ze + R1+R2 (Zs not measured)".
    pub basis: Option<Cow<'static, str>>,
    pub limit: Option<f64>,
    /// What the limit is, in words, e.g. "measured-value maximum Zs at 20 °C".
    pub limit_words: Option<Cow<'static, str>>,
    pub limit_source: Option<Source>,
    /// Register events on this circuit's lineage: (date, what).
    pub events: Vec<(NaiveDate, String)>,
    pub report: SeriesReport,
}

/// One circuit in service, with its lineage merged into one history.
#[derive(Debug, Clone, Serialize)]
pub struct CircuitAnalysis {
    pub board: String,
    pub circuit: Circuit,
    /// Where the history came from, oldest first: "CU1/4", then "DB2/7".
    pub lineage: Vec<String>,
    pub disconnection: Option<DisconnectionChoice>,
    pub zs_limit: Option<ZsLimit>,
    /// The last visit's readings through both fault paths.
    pub fault_paths: Option<FaultPathReport>,
    pub ring_check: Option<RingCheck>,
    pub last_visit: Option<NaiveDate>,
    pub last_readings: Option<Readings>,
    pub series: Vec<SeriesAnalysis>,
    pub flags: Vec<Flag>,
    /// Why something could not be judged (a limit not tabulated, a device not recorded).
    pub notes: Vec<String>,
}

/// A visit as the report lists it.
#[derive(Debug, Clone, Serialize)]
pub struct VisitInfo {
    #[serde(flatten)]
    pub visit: Visit,
    /// `Some(true)` when the instrument was within calibration on the visit date.
    pub instrument_in_calibration: Option<bool>,
    pub observations: Vec<Observation>,
}

/// How many circuits are in each state (a circuit counts once, at its worst).
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq, Serialize)]
pub struct Counts {
    pub exceeds: usize,
    pub approaching: usize,
    pub changed: usize,
    pub circuits: usize,
}

/// Everything ohmtrail concludes about one property.
#[derive(Debug, Clone, Serialize)]
pub struct PropertyAnalysis {
    pub property: Property,
    pub boards: Vec<Board>,
    pub visits: Vec<VisitInfo>,
    pub last_visit: Option<NaiveDate>,
    /// The last visit that was a full inspection (see [`due`]): a partial re-test counts for
    /// the trends but does not restart the due date.
    pub last_full_inspection: Option<NaiveDate>,
    /// The last full inspection plus the interval: the one recorded at that inspection, else
    /// the property's (`next_due_basis` says which).
    pub next_due: Option<NaiveDate>,
    /// The interval `next_due` runs by, in months.
    pub next_due_interval_months: Option<u32>,
    pub next_due_basis: due::IntervalBasis,
    /// The next inspection ohmtrail recommends: earlier than `next_due` when a projection
    /// reaches a limit before it.
    pub recommended_next: Option<NaiveDate>,
    pub recommended_interval_months: Option<u32>,
    /// Ze at the origin, visit by visit.
    pub supply: Option<SeriesAnalysis>,
    /// Ra, the earth electrode's resistance, visit by visit where recorded.
    pub electrode: Option<SeriesAnalysis>,
    /// Notes on the supply and main bonding (a bonding connection not confirmed).
    pub supply_notes: Vec<String>,
    /// What was measured at each board per visit (Ze, fault current, Zdb, sub-main R1+R2).
    pub board_tests: Vec<crate::model::BoardTest>,
    pub circuits: Vec<CircuitAnalysis>,
    /// The property's worklist rows, most urgent first: one per circuit with findings, one for
    /// the supply, one for an overdue inspection. Every finding is in its row's `findings`.
    pub flags: Vec<Flag>,
    pub counts: Counts,
    /// Visits with no ambient temperature: their readings are compared as taken.
    pub visits_without_ambient: Vec<NaiveDate>,
    /// Visits whose continuity readings all sit high by about the same amount (test leads not
    /// nulled), each with its note; the trends take that amount off.
    pub continuity_offsets: Vec<offsets::VisitOffset>,
    pub settings: Settings,
}

/// Severity as the JSON contract spells it.
pub fn severity_key(s: Severity) -> &'static str {
    match s {
        Severity::Exceeds => "exceeds",
        Severity::Approaching => "approaching",
        Severity::Changed => "changed",
    }
}

fn kind_key(k: FindingKind) -> &'static str {
    match k {
        FindingKind::Step => "step",
        FindingKind::Drift => "drift",
        FindingKind::NeutralDivergence => "neutral_divergence",
        FindingKind::ZeRise => "ze_rise",
        FindingKind::Exceeds => "exceeds",
        FindingKind::Approaching => "approaching",
        FindingKind::Investigate => "investigate",
    }
}

/// Add whole months to a date, clamping to the month's end.
pub fn add_months(d: NaiveDate, months: u32) -> NaiveDate {
    d.checked_add_months(Months::new(months)).unwrap_or(d)
}

/// Judge and trend one property's history.
pub fn analyse(h: &PropertyHistory, settings: &Settings) -> PropertyAnalysis {
    analyse_detail(h, settings, Detail::Full)
}

/// How much of the analysis to work out.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) enum Detail {
    /// Everything a report shows.
    Full,
    /// Only what the flags need: the last visit's fault-path report (a report-only figure),
    /// the words only a report shows (series labels, bases and limit texts, lineage labels,
    /// register events) and the series with no finding (but for those the cross-checks read)
    /// are left out; the flags are the same.
    Flags,
}

pub(crate) fn analyse_detail(
    h: &PropertyHistory,
    settings: &Settings,
    detail: Detail,
) -> PropertyAnalysis {
    analyse_with(h, settings, detail, &mut series::LimitMemo::default())
}

/// [`analyse_detail`] with limits already worked out for earlier properties.
fn analyse_with(
    h: &PropertyHistory,
    settings: &Settings,
    detail: Detail,
    memo: &mut series::LimitMemo,
) -> PropertyAnalysis {
    let last_visit = h.visits.last().map(|v| v.date);
    let schedule = due::schedule(h);
    let next_due = schedule.next_due;
    // With no visit yet nothing is due from the history; trends need a date to project to.
    let horizon = next_due.unwrap_or(settings.today);

    let boards_by_id: HashMap<i64, &Board> = h.boards.iter().map(|b| (b.id, b)).collect();
    let origin = h
        .boards
        .iter()
        .find(|b| b.fed_from.is_none() && b.status == crate::model::Status::InService)
        .or_else(|| h.boards.first());

    let supply = supply::supply_series(h, origin, horizon, settings);
    let electrode = supply::electrode_series(h, horizon, settings);

    let continuity_offsets = offsets::visit_offsets(h);
    let index = series::Index::new(h, &continuity_offsets);
    let rcds = rcd_devices::RecordedRcds::new(h);
    let ctx = series::PropertyContext {
        h,
        idx: &index,
        horizon,
        settings,
        detail,
        rcds: &rcds,
    };
    let mut circuits = Vec::with_capacity(h.circuits.len());
    for c in h
        .circuits
        .iter()
        .filter(|c| c.status == crate::model::Status::InService)
    {
        let board = boards_by_id.get(&c.board_id).copied();
        circuits.push(series::circuit_analysis(&ctx, c, board, memo));
    }
    rcd_devices::merge_shared_rcds(&mut circuits, &rcds);

    let mut flags: Vec<Flag> = Vec::new();
    if let Some(o) = origin {
        for s in supply.iter().chain(&electrode) {
            for f in &s.report.findings {
                flags.push(make_flag(&h.property, &o.designation, None, s, f));
            }
        }
    }
    for c in &circuits {
        flags.extend(c.flags.iter().cloned());
    }
    let recommended_interval_months = flags
        .iter()
        .filter_map(|f| f.recommended_interval_months)
        .min();
    let recommended_next = match (last_visit, recommended_interval_months) {
        (Some(l), Some(m)) => {
            let r = add_months(l, m.max(1));
            Some(next_due.map_or(r, |d| d.min(r)))
        }
        _ => next_due,
    };

    let mut flags = rows::group(flags);
    // A circuit counts once, at its most serious finding: its row's.
    let mut counts = Counts {
        circuits: circuits.len(),
        ..Default::default()
    };
    // By the severity's key, which a recorded fault (polarity, test button) has without a
    // trend finding behind it.
    for row in flags.iter().filter(|r| r.circuit.is_some()) {
        match row.severity {
            "exceeds" => counts.exceeds += 1,
            "approaching" => counts.approaching += 1,
            "changed" => counts.changed += 1,
            _ => {}
        }
    }
    let origin_board = origin.map(|o| o.designation.as_str()).unwrap_or_default();
    let own_rows = [
        due::overdue_row(&h.property, origin_board, &schedule, settings.today),
        bonding::bonding_row(h, origin_board, origin.and_then(|o| o.earthing)),
    ];
    for row in own_rows.into_iter().flatten() {
        flags.push(row.clone());
        let last = flags.len() - 1;
        flags[last].findings = vec![row];
    }
    rank_flags(&mut flags);

    let visits = h
        .visits
        .iter()
        .map(|v| VisitInfo {
            visit: v.clone(),
            instrument_in_calibration: v.instrument.as_ref().and_then(|serial| {
                h.calibration
                    .iter()
                    .find(|(s, _)| s == serial)
                    .and_then(|(_, due)| due.map(|due| v.date <= due))
            }),
            observations: h
                .observations
                .iter()
                .filter(|o| o.visit_id == v.id)
                .cloned()
                .collect(),
        })
        .collect();

    PropertyAnalysis {
        property: h.property.clone(),
        boards: h.boards.clone(),
        visits,
        last_visit,
        last_full_inspection: schedule.last_full,
        next_due,
        next_due_interval_months: schedule.next_due.map(|_| schedule.interval_months),
        next_due_basis: schedule.basis,
        recommended_next,
        recommended_interval_months,
        supply,
        electrode,
        supply_notes: bonding::bonding_notes(h),
        board_tests: if detail == Detail::Full {
            h.board_tests.clone()
        } else {
            Vec::new()
        },
        circuits,
        flags,
        counts,
        visits_without_ambient: h
            .visits
            .iter()
            .filter(|v| v.ambient_c.is_none())
            .map(|v| v.date)
            .collect(),
        continuity_offsets,
        settings: settings.clone(),
    }
}

/// Sort flags or worklist rows most urgent first: exceeds, then approaching, then changed
/// ([`rows::rank`]).
pub fn rank_flags(flags: &mut Vec<Flag>) {
    rows::rank(flags);
}

fn make_flag(
    property: &Property,
    board: &str,
    circuit: Option<&Circuit>,
    s: &SeriesAnalysis,
    f: &Finding,
) -> Flag {
    let limit = f.limit.map(|l| l.value).or(s.limit);
    Flag {
        property_ref: property.reference.clone(),
        board: board.to_string(),
        circuit: circuit.map(|c| c.number.clone()),
        description: circuit.and_then(|c| c.description.clone()),
        quantity: s.quantity,
        severity: severity_key(f.severity),
        kind: kind_key(f.kind),
        reason: f.sentence.clone(),
        last_value: f.last_value,
        last_date: f.date,
        limit,
        projected_date: f.projection.map(|p| p.date),
        projected_earliest: f.projection.map(|p| p.earliest),
        limit_source: limit.and(s.limit_source.as_ref()).map(source_text),
        margin_used_pct: f.margin_used.map(|m| (m * 1000.0).round() / 10.0),
        recommended_interval_months: f.recommended_interval_months,
        findings: Vec::new(),
        finding: Some(f.clone()),
    }
}

/// A source as one line of text: citation, then its status.
pub fn source_text(s: &Source) -> String {
    format!("{} ({})", s.citation, s.status.as_str())
}

/// Which properties the worklist covers.
#[derive(Debug, Clone, Default)]
pub struct WorklistFilter {
    pub property: Option<String>,
    /// Only this client's properties (the name matched without regard to case), so one
    /// landlord's worklist never shows another's.
    pub client: Option<String>,
}

/// The portfolio worklist: one row per circuit with findings (and per supply, and per overdue
/// inspection), most urgent first, one property in memory at a time.
pub fn worklist(store: &Store, settings: &Settings, filter: &WorklistFilter) -> Result<Vec<Flag>> {
    let client = match &filter.client {
        Some(c) => Some(store.client_properties(c)?),
        None => None,
    };
    let mut flags = match (&filter.property, &client) {
        (Some(r), _) => {
            let id = store.property(r)?.id;
            if let Some((name, ids)) = &client
                && !ids.contains(&id)
            {
                return Err(crate::Error::invalid(format!(
                    "property {r:?} is not one of client {name:?}'s"
                )));
            }
            analyse_detail(&store.history(id)?, settings, Detail::Flags).flags
        }
        (None, Some((_, ids))) => {
            let mut flags = Vec::new();
            let mut memo = series::LimitMemo::default();
            for &id in ids {
                store.for_each_history_in((id, id), HistoryParts::FOR_FLAGS, |h| {
                    flags.extend(analyse_with(&h, settings, Detail::Flags, &mut memo).flags);
                    Ok(())
                })?;
            }
            flags
        }
        (None, None) => portfolio_flags(store, settings)?,
    };
    rank_flags(&mut flags);
    Ok(flags)
}

/// Every property's flags, on as many threads as the machine has cores (up to eight).
fn portfolio_flags(store: &Store, settings: &Settings) -> Result<Vec<Flag>> {
    let workers = std::thread::available_parallelism()
        .map(|n| n.get())
        .unwrap_or(1)
        .clamp(1, 8);
    if workers > 1
        && let Some(flags) = flags_by_runs(store, settings, workers)?
    {
        return Ok(flags);
    }
    flags_by_queue(store, settings, workers)
}

/// The portfolio cut into runs of properties, each read on its own connection and analysed on
/// its own thread, all from one snapshot of the database. `None` when that cannot be had (a
/// database in memory or read-only, a writer at work, too few properties to share).
fn flags_by_runs(store: &Store, settings: &Settings, workers: usize) -> Result<Option<Vec<Flag>>> {
    let runs = store.property_id_runs(workers)?;
    if runs.len() < 2 {
        return Ok(None);
    }
    // The extra connections are a speed-up only: if one cannot be had, or the snapshot cannot
    // be shared, the single connection does the work.
    let mut others = Vec::new();
    for _ in 1..runs.len() {
        match store.reader() {
            Ok(Some(r)) => others.push(r),
            _ => return Ok(None),
        }
    }
    let all: Vec<&Store> = std::iter::once(store).chain(&others).collect();
    if !Store::begin_shared_read(&all).unwrap_or(false) {
        return Ok(None);
    }
    drop(all);
    let analyse_run = |s: &Store, run: (i64, i64)| -> Result<Vec<Flag>> {
        let mut flags = Vec::new();
        let mut memo = series::LimitMemo::default();
        let read = s.for_each_history_in(run, HistoryParts::FOR_FLAGS, |h| {
            flags.extend(analyse_with(&h, settings, Detail::Flags, &mut memo).flags);
            Ok(())
        });
        // The read transaction ends whether or not the run was read whole.
        let ended = s.end_read();
        read.and(ended).map(|()| flags)
    };
    let analyse_run = &analyse_run;
    std::thread::scope(|scope| {
        let handles: Vec<_> = others
            .into_iter()
            .zip(runs[1..].iter().copied())
            .map(|(s, run)| scope.spawn(move || analyse_run(&s, run)))
            .collect();
        let mut flags = analyse_run(store, runs[0]);
        for h in handles {
            let more = match h.join() {
                Ok(more) => more,
                Err(p) => std::panic::resume_unwind(p),
            };
            if let Ok(all) = &mut flags {
                match more {
                    Ok(more) => all.extend(more),
                    Err(e) => flags = Err(e),
                }
            }
        }
        flags.map(Some)
    })
}

/// Every property's flags. This thread streams the histories out of SQLite while worker threads
/// analyse them; a bounded queue keeps only a few properties in memory at once.
fn flags_by_queue(store: &Store, settings: &Settings, workers: usize) -> Result<Vec<Flag>> {
    use std::sync::{Mutex, mpsc};
    let (tx, rx) = mpsc::sync_channel::<PropertyHistory>(64);
    let rx = Mutex::new(rx);
    std::thread::scope(|scope| {
        let handles: Vec<_> = (0..workers)
            .map(|_| {
                scope.spawn(|| {
                    let mut flags = Vec::new();
                    let mut memo = series::LimitMemo::default();
                    loop {
                        // Hold the lock only to take the next history, not to analyse it.
                        let next = rx.lock().map(|r| r.recv());
                        match next {
                            Ok(Ok(h)) => flags
                                .extend(analyse_with(&h, settings, Detail::Flags, &mut memo).flags),
                            _ => return flags,
                        }
                    }
                })
            })
            .collect();
        let streamed = store.for_each_history_in(ALL_PROPERTIES, HistoryParts::FOR_FLAGS, |h| {
            tx.send(h)
                .map_err(|_| crate::Error::invalid("the analysis workers stopped"))
        });
        drop(tx);
        let mut flags = Vec::new();
        for h in handles {
            match h.join() {
                Ok(f) => flags.extend(f),
                Err(p) => std::panic::resume_unwind(p),
            }
        }
        streamed.map(|()| flags)
    })
}

/// Load and analyse one property by reference.
pub fn analyse_property(
    store: &Store,
    reference: &str,
    settings: &Settings,
) -> Result<PropertyAnalysis> {
    let p = store.property(reference)?;
    Ok(analyse(&store.history(p.id)?, settings))
}

/// Turn a limits error into a note; analysis carries on without that limit.
fn note_limits_error(notes: &mut Vec<String>, what: &str, e: &limits::LimitsError) {
    notes.push(format!("{what}: {e}"));
}
