//! Main protective bonding as the inspector recorded it: a csa below the least the supply's
//! earthing asks for is a row on the worklist; a connection whose continuity was not confirmed
//! is a note. Both read the latest visit that recorded the item.

use chrono::NaiveDate;

use super::Flag;
use crate::limits::{self, BondingMinimum};
use crate::model::{Bonding, Earthing, Visit};
use crate::store::PropertyHistory;

/// The latest visit that recorded `get`, with its value.
fn latest<T: Copy>(visits: &[Visit], get: impl Fn(&Visit) -> Option<T>) -> Option<(NaiveDate, T)> {
    visits
        .iter()
        .rev()
        .find_map(|v| get(v).map(|x| (v.date, x)))
}

/// The worklist row for a main bonding conductor below the minimum for the supply's earthing.
pub(super) fn bonding_row(
    h: &PropertyHistory,
    board: &str,
    earthing: Option<Earthing>,
) -> Option<Flag> {
    let (date, csa) = latest(&h.visits, |v| v.supply.bonding_csa_mm2)?;
    let BondingMinimum {
        earthing,
        min_mm2,
        assumes,
        source,
    } = limits::min_main_bonding(earthing?);
    if csa >= min_mm2 - 1e-9 {
        return None;
    }
    let reason = format!(
        "main protective bonding was {} mm² at the visit of {date}, below the minimum of {} mm² for a {earthing} supply ({}, {}; assuming {assumes}): the bonding conductors should be checked and replaced where undersized",
        crate::store::fmt_num(csa),
        crate::store::fmt_num(min_mm2),
        source.citation,
        source.status.as_str(),
    );
    Some(Flag {
        property_ref: h.property.reference.clone(),
        board: board.to_string(),
        circuit: None,
        description: None,
        quantity: "bonding",
        severity: "exceeds",
        kind: "exceeds",
        reason,
        last_value: csa,
        last_date: date,
        limit: Some(min_mm2),
        projected_date: None,
        projected_earliest: None,
        limit_source: Some(super::source_text(&source)),
        // A minimum: the share used is the minimum over the csa, as for insulation.
        margin_used_pct: Some((min_mm2 / csa * 1000.0).round() / 10.0),
        recommended_interval_months: None,
        findings: Vec::new(),
        finding: None,
        code: None,
    })
}

/// A note for each service whose main bonding continuity the latest visit recording it did not
/// confirm.
pub(super) fn bonding_notes(h: &PropertyHistory) -> Vec<String> {
    type Get = fn(&Visit) -> Option<Bonding>;
    let services: [(&str, Get); 3] = [
        ("water", |v| v.supply.bonding_water),
        ("gas", |v| v.supply.bonding_gas),
        ("other services", |v| v.supply.bonding_other),
    ];
    services
        .into_iter()
        .filter_map(|(what, get)| match latest(&h.visits, get)? {
            (date, Bonding::No) => Some(format!(
                "main bonding to {what}: continuity not confirmed at the visit of {date}, as recorded by the inspector; the bond should be found, connected and tested"
            )),
            _ => None,
        })
        .collect()
}
