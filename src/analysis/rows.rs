//! One circuit, one row: the worklist groups a circuit's flags into one entry ranked by its
//! most serious, with the others kept as supporting findings. The supply (Ze) flags of a
//! property are one row too. This is a pass over the flags after they are made, so how a flag
//! is made does not need to know about it.

use std::cmp::Ordering;

use chrono::NaiveDate;
use foldhash::HashMap;
use serde::{Serialize, Serializer};

use super::Flag;
use crate::trend;

/// Group one property's flags by circuit (and the supply by itself), most serious first.
/// Each row carries the fields of its most serious finding and, in `findings`, every finding
/// grouped in it, most serious first.
pub fn group(mut flags: Vec<Flag>) -> Vec<Flag> {
    rank(&mut flags);
    let mut rows: Vec<Flag> = Vec::new();
    let mut at: HashMap<(String, String, Option<String>, &'static str), usize> = HashMap::default();
    for f in flags {
        // A property's inspection row never shares a row with its supply's.
        let key = (
            f.property_ref.clone(),
            f.board.clone(),
            f.circuit.clone(),
            if f.quantity == "inspection" {
                "inspection"
            } else {
                ""
            },
        );
        match at.get(&key) {
            Some(&i) => rows[i].findings.push(f),
            None => {
                at.insert(key, rows.len());
                let mut row = f.clone();
                row.findings = vec![f];
                rows.push(row);
            }
        }
    }
    rows
}

/// Sort flags (or rows) most urgent first: exceeds, then approaching, then changed, by the
/// trend engine's order ([`trend::compare_urgency`]). A row with no trend finding behind it
/// (an overdue inspection, always an exceeds) goes among the exceeds by the share of its limit
/// used, before the first exceeds that uses less; ties keep the trend's row first.
pub fn rank(flags: &mut Vec<Flag>) {
    let (mut trend_rows, mut others): (Vec<Flag>, Vec<Flag>) =
        flags.drain(..).partition(|f| f.finding.is_some());
    trend_rows.sort_by(|a, b| match (&a.finding, &b.finding) {
        (Some(x), Some(y)) => trend::compare_urgency(x, y).then_with(|| place(a, b)),
        _ => place(a, b),
    });
    others.sort_by(|a, b| share(b).total_cmp(&share(a)).then_with(|| place(a, b)));
    let mut others = others.into_iter().peekable();
    for t in trend_rows {
        while let Some(o) = others.peek()
            && goes_before(o, &t)
        {
            flags.extend(others.next());
        }
        flags.push(t);
    }
    flags.extend(others);
}

/// Property, board, circuit: the order among equally urgent rows.
fn place(a: &Flag, b: &Flag) -> Ordering {
    a.property_ref
        .cmp(&b.property_ref)
        .then_with(|| a.board.cmp(&b.board))
        .then_with(|| a.circuit.cmp(&b.circuit))
}

/// The share of the limit used, as a fraction; a row with none sorts last.
fn share(f: &Flag) -> f64 {
    match &f.finding {
        Some(x) => x.margin_used,
        None => f.limit.filter(|l| *l > 0.0).map(|l| f.last_value / l),
    }
    .unwrap_or(f64::NEG_INFINITY)
}

/// Whether a row with no trend finding goes before trend row `t`.
fn goes_before(other: &Flag, t: &Flag) -> bool {
    t.severity != "exceeds" || share(t) < share(other)
}

/// A grouped finding as the worklist's JSON gives it: the row's place is not repeated.
#[derive(Serialize)]
struct FindingJson<'a> {
    quantity: &'static str,
    kind: &'static str,
    severity: &'static str,
    reason: &'a str,
    last_value: f64,
    last_date: NaiveDate,
    limit: Option<f64>,
    projected_date: Option<NaiveDate>,
    projected_earliest: Option<NaiveDate>,
    limit_source: Option<&'a str>,
    margin_used_pct: Option<f64>,
    recommended_interval_months: Option<u32>,
}

pub(super) fn serialize_findings<S: Serializer>(
    findings: &[Flag],
    s: S,
) -> Result<S::Ok, S::Error> {
    s.collect_seq(findings.iter().map(|f| FindingJson {
        quantity: f.quantity,
        kind: f.kind,
        severity: f.severity,
        reason: &f.reason,
        last_value: f.last_value,
        last_date: f.last_date,
        limit: f.limit,
        projected_date: f.projected_date,
        projected_earliest: f.projected_earliest,
        limit_source: f.limit_source.as_deref(),
        margin_used_pct: f.margin_used_pct,
        recommended_interval_months: f.recommended_interval_months,
    }))
}
