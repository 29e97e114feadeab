//! Visit-wide shifts of the continuity readings: test leads that were not nulled.
//!
//! When the leads of a low-resistance ohmmeter are not nulled, every continuity reading of that
//! visit (R1+R2, R1+Rn, R2, the ring's end-to-end legs) reads high by the same amount, the
//! leads' own resistance, typically 0.05–0.2 Ω (common practice, no source). Circuit by
//! circuit that looks like a termination working loose everywhere at once. Seen across the
//! property it is one thing: most circuits moved up together by about the same number of ohms.
//! Such a visit gets one note, and its continuity readings are taken less that amount before
//! the circuits are trended. The loop tester's Zs is measured another way and is not touched.

use chrono::NaiveDate;
use foldhash::{HashMap, HashMapExt};
use serde::Serialize;

use crate::model::Readings;
use crate::store::PropertyHistory;
use crate::trend::stats::median;

/// A visit whose continuity readings sit above the others by about the same amount.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct VisitOffset {
    pub visit_id: i64,
    pub date: NaiveDate,
    /// How far the visit's continuity readings sit above what the other visits say, Ω: the
    /// median of the circuits' departures.
    pub offset_ohm: f64,
    /// Circuits that moved together, of those read at this visit and at another.
    pub agreeing: usize,
    pub compared: usize,
    /// The note, once, in words.
    pub note: String,
}

/// The smallest shared rise taken for unnulled leads, Ω: below it the visit's readings are
/// within ordinary repeatability (common practice, no source).
const MIN_OFFSET_OHM: f64 = 0.04;
/// How closely the circuits must agree on the shift: within 0.02 Ω + 4 % of the reading of
/// the shift's median (two display digits and the instrument's accuracy; common practice, no
/// source).
const AGREE_ABS_OHM: f64 = 0.02;
const AGREE_REL: f64 = 0.04;
/// At least this many circuits, and this share of those compared, must agree.
const MIN_CIRCUITS: usize = 3;
const MIN_SHARE: f64 = 0.7;

/// The visit whose continuity readings stand highest above the others together, with the
/// offsets already found (`taken`) taken off first; `None` when no visit stands out.
fn clearest_offset(
    h: &PropertyHistory,
    by_circuit: &HashMap<i64, Vec<(i64, f64)>>,
    taken: &HashMap<i64, f64>,
) -> Option<VisitOffset> {
    // Each circuit's departure at each visit from the median of its other visits.
    let mut departures: HashMap<i64, Vec<(f64, f64)>> = HashMap::new();
    let mut others = Vec::new();
    let less = |visit: i64, v: f64| v - taken.get(&visit).copied().unwrap_or(0.0);
    for readings in by_circuit.values().filter(|r| r.len() >= 2) {
        for (i, &(visit, v)) in readings.iter().enumerate() {
            if taken.contains_key(&visit) {
                continue;
            }
            others.clear();
            others.extend(
                readings
                    .iter()
                    .enumerate()
                    .filter(|&(j, _)| j != i)
                    .map(|(_, &(w, x))| less(w, x)),
            );
            if let Some(m) = median(&mut others) {
                departures.entry(visit).or_default().push((v - m, v));
            }
        }
    }
    let mut best: Option<VisitOffset> = None;
    for visit in &h.visits {
        let Some(d) = departures.get(&visit.id) else {
            continue;
        };
        if d.len() < MIN_CIRCUITS {
            continue;
        }
        let mut shifts: Vec<f64> = d.iter().map(|x| x.0).collect();
        let Some(shift) = median(&mut shifts) else {
            continue;
        };
        if shift < MIN_OFFSET_OHM || best.as_ref().is_some_and(|b| b.offset_ohm >= shift) {
            continue;
        }
        let agreeing = d
            .iter()
            .filter(|(dep, v)| (dep - shift).abs() <= AGREE_ABS_OHM + AGREE_REL * v)
            .count();
        if agreeing < MIN_CIRCUITS || (agreeing as f64) < MIN_SHARE * d.len() as f64 {
            continue;
        }
        // Rounded once, here: the note and the correction use the same figure.
        let shown = (shift * 100.0).round() / 100.0;
        best = Some(VisitOffset {
            visit_id: visit.id,
            date: visit.date,
            offset_ohm: shown,
            agreeing,
            compared: d.len(),
            note: format!(
                "continuity readings at the visit of {} sit about {shown:.2} Ω above the other visits' on {agreeing} of {} circuits: test leads probably not nulled; that visit's continuity readings are taken less {shown:.2} Ω in the trends",
                visit.date,
                d.len()
            ),
        });
    }
    best
}

/// The readings of one circuit a visit offset is judged on: R1+R2 where read, else R1+Rn.
fn probe(r: &Readings) -> Option<f64> {
    r.r1r2_ohm.or(r.r1rn_ohm).filter(|v| v.is_finite())
}

/// Every visit of the history whose continuity readings moved up together.
pub fn visit_offsets(h: &PropertyHistory) -> Vec<VisitOffset> {
    if h.visits.len() < 2 {
        return Vec::new();
    }
    let ambient: HashMap<i64, Option<f64>> = h.visits.iter().map(|v| (v.id, v.ambient_c)).collect();
    // Each circuit's readings by visit, at 20 °C where the ambient is known.
    let mut by_circuit: HashMap<i64, Vec<(i64, f64)>> = HashMap::with_capacity(h.circuits.len());
    for r in &h.records {
        let Some(v) = probe(&r.readings) else {
            continue;
        };
        let v = match ambient.get(&r.visit_id).copied().flatten() {
            Some(t) => crate::limits::to_r20(v, t).unwrap_or(v),
            None => v,
        };
        by_circuit
            .entry(r.circuit_id)
            .or_default()
            .push((r.visit_id, v));
    }
    // Several visits may have had unnulled leads, and each contaminates the others' medians:
    // take the clearest one out, then look again, until no visit stands out.
    let mut out: Vec<VisitOffset> = Vec::new();
    for _ in 0..h.visits.len() {
        let taken: HashMap<i64, f64> = out.iter().map(|o| (o.visit_id, o.offset_ohm)).collect();
        let Some(next) = clearest_offset(h, &by_circuit, &taken) else {
            break;
        };
        out.push(next);
    }
    out.sort_by_key(|o| o.date);
    out
}
