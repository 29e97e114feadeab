//! The supply, the main bonding and the inspector's own report, as recorded: the latest
//! report's reference, outcome, interval, extent and limitations (ohmtrail assigns no outcome
//! of its own), when the next inspection is due and on what basis, the supply characteristics
//! at the origin, what was measured at each board fed from another, and the main bonding.

use std::fmt::Write as _;

use chrono::NaiveDate;
use serde::Serialize;

use super::html::{esc, time};
use crate::analysis::PropertyAnalysis;
use crate::model::{Bonding, Visit};

/// How the report labels an outcome: the inspector's, never ohmtrail's.
pub const OUTCOME_LABEL: &str = "as recorded by the inspector";

/// The section as data.
#[derive(Debug, Clone, Serialize)]
pub struct ScheduleSection {
    /// The latest visit that recorded any part of its report.
    pub latest_report: Option<RecordedReport>,
    pub next_due: Option<NaiveDate>,
    pub next_due_interval_months: Option<u32>,
    /// Where that interval comes from, in words.
    pub next_due_basis: Option<&'static str>,
    /// The latest recorded figure of each supply characteristic, with its visit date.
    pub supply: Vec<Fact>,
    /// Boards fed from another, each with the latest Zdb, sub-main R1+R2 and fault current.
    pub sub_boards: Vec<SubBoard>,
    /// The latest recorded main bonding: csa and continuity to each service.
    pub bonding: Vec<Fact>,
    /// A main bonding csa below the least for the earthing: the worklist row's reason.
    pub bonding_finding: Option<String>,
    /// Notes on the supply and bonding (a bond not confirmed).
    pub notes: Vec<String>,
    /// The supply's and the boards' figures visit by visit, oldest first: their series as
    /// recorded (Ze and Ra are also trended and judged; the others are shown, not judged).
    pub series: SupplySeries,
}

/// Columns of figures recorded at the origin and each sub-board, one row per visit.
#[derive(Debug, Clone, Serialize)]
pub struct SupplySeries {
    /// Column headings, e.g. "U0 V", "Ze Ω", "DB2 Zdb Ω".
    pub columns: Vec<String>,
    /// One row per visit: its date and a value (as shown) or `None` per column.
    pub rows: Vec<(NaiveDate, Vec<Option<String>>)>,
}

/// A visit's report as the inspector recorded it.
#[derive(Debug, Clone, Serialize)]
pub struct RecordedReport {
    pub date: NaiveDate,
    pub report_ref: Option<String>,
    pub outcome: Option<String>,
    /// Always [`OUTCOME_LABEL`]: the outcome is the inspector's.
    pub outcome_label: &'static str,
    pub interval_months: Option<u32>,
    pub extent: Option<String>,
    pub limitations: Option<String>,
}

/// One recorded figure: what, its value in words, and the visit it comes from.
#[derive(Debug, Clone, Serialize)]
pub struct Fact {
    pub what: &'static str,
    pub value: String,
    pub date: Option<NaiveDate>,
}

#[derive(Debug, Clone, Serialize)]
pub struct SubBoard {
    pub board: String,
    pub fed_from: String,
    pub facts: Vec<Fact>,
}

fn latest<T>(visits: &[&Visit], get: impl Fn(&Visit) -> Option<T>) -> Option<(NaiveDate, T)> {
    visits
        .iter()
        .rev()
        .find_map(|v| get(v).map(|x| (v.date, x)))
}

fn fact<T>(
    what: &'static str,
    found: Option<(NaiveDate, T)>,
    words: impl Fn(T) -> String,
) -> Option<Fact> {
    found.map(|(date, x)| Fact {
        what,
        value: words(x),
        date: Some(date),
    })
}

fn bonding_words(b: Bonding) -> String {
    match b {
        Bonding::Yes => "continuity confirmed",
        Bonding::No => "continuity not confirmed",
        Bonding::None => "no such service",
    }
    .into()
}

pub fn build(a: &PropertyAnalysis) -> ScheduleSection {
    let visits: Vec<&Visit> = a.visits.iter().map(|v| &v.visit).collect();
    let latest_report = visits
        .iter()
        .rev()
        .find(|v| v.report != Default::default())
        .map(|v| RecordedReport {
            date: v.date,
            report_ref: v.report.report_ref.clone(),
            outcome: v.report.outcome.clone(),
            outcome_label: OUTCOME_LABEL,
            interval_months: v.report.interval_months,
            extent: v.report.extent.clone(),
            limitations: v.report.limitations.clone(),
        });
    let origin = a
        .boards
        .iter()
        .find(|b| b.fed_from.is_none() && b.status == crate::model::Status::InService);
    let mut supply: Vec<Fact> = Vec::new();
    if let Some(e) = origin.and_then(|b| b.earthing) {
        supply.push(Fact {
            what: "Earthing arrangement",
            value: e.to_string(),
            date: None,
        });
    }
    let ohm = |x: f64| format!("{x:.2} Ω");
    supply.extend(
        [
            fact("U0", latest(&visits, |v| v.supply.u0_v), |x| {
                format!("{x:.0} V")
            }),
            fact("Ze at the origin", latest(&visits, |v| v.ze_ohm), ohm),
            fact(
                "Prospective fault current at the origin",
                latest(&visits, |v| v.pfc_ka),
                |x| format!("{x:.1} kA"),
            ),
            fact(
                "Ra, the earth electrode's resistance",
                latest(&visits, |v| v.supply.ra_ohm),
                |x| format!("{x:.0} Ω"),
            ),
        ]
        .into_iter()
        .flatten(),
    );
    let sub_boards = a
        .boards
        .iter()
        .filter(|b| b.status == crate::model::Status::InService)
        .filter_map(|b| {
            let fed_from = b.fed_from.clone()?;
            let at = |get: fn(&crate::model::BoardTest) -> Option<f64>| {
                visits.iter().rev().find_map(|v| {
                    a.board_tests
                        .iter()
                        .find(|t| t.visit_id == v.id && t.board_id == b.id)
                        .and_then(get)
                        .map(|x| (v.date, x))
                })
            };
            let facts: Vec<Fact> = [
                fact("Zdb", at(|t| t.zdb_ohm.or(t.ze_ohm)), ohm),
                fact("Sub-main R1+R2", at(|t| t.submain_r1r2_ohm), ohm),
                fact("Prospective fault current", at(|t| t.pfc_ka), |x| {
                    format!("{x:.1} kA")
                }),
            ]
            .into_iter()
            .flatten()
            .collect();
            Some(SubBoard {
                board: b.designation.clone(),
                fed_from,
                facts,
            })
        })
        .collect();
    let bonding = [
        fact(
            "Main bonding conductors",
            latest(&visits, |v| v.supply.bonding_csa_mm2),
            |x| format!("{} mm²", crate::store::fmt_num(x)),
        ),
        fact(
            "To water",
            latest(&visits, |v| v.supply.bonding_water),
            bonding_words,
        ),
        fact(
            "To gas",
            latest(&visits, |v| v.supply.bonding_gas),
            bonding_words,
        ),
        fact(
            "To other services",
            latest(&visits, |v| v.supply.bonding_other),
            bonding_words,
        ),
    ]
    .into_iter()
    .flatten()
    .collect();
    let series = supply_series(a, &visits);
    ScheduleSection {
        series,
        latest_report,
        next_due: a.next_due,
        next_due_interval_months: a.next_due_interval_months,
        next_due_basis: a.next_due.map(|_| a.next_due_basis.words()),
        supply,
        sub_boards,
        bonding,
        bonding_finding: a
            .flags
            .iter()
            .find(|f| f.quantity == "bonding")
            .map(|f| f.reason.clone()),
        notes: a.supply_notes.clone(),
    }
}

/// The figures recorded at the origin and at each board fed from another, visit by visit;
/// a column no visit recorded is left out.
fn supply_series(a: &PropertyAnalysis, visits: &[&Visit]) -> SupplySeries {
    type Get<'a> = Box<dyn Fn(&Visit) -> Option<String> + 'a>;
    let mut cols: Vec<(String, Get)> = vec![
        (
            "U0 V".into(),
            Box::new(|v: &Visit| v.supply.u0_v.map(|x| format!("{x:.0}"))),
        ),
        (
            "Ze Ω".into(),
            Box::new(|v: &Visit| v.ze_ohm.map(|x| format!("{x:.2}"))),
        ),
        (
            "Ipf kA".into(),
            Box::new(|v: &Visit| v.pfc_ka.map(|x| format!("{x:.1}"))),
        ),
        (
            "Ra Ω".into(),
            Box::new(|v: &Visit| v.supply.ra_ohm.map(|x| format!("{x:.0}"))),
        ),
        (
            "Bonding mm²".into(),
            Box::new(|v: &Visit| v.supply.bonding_csa_mm2.map(crate::store::fmt_num)),
        ),
    ];
    for b in a.boards.iter().filter(|b| b.fed_from.is_some()) {
        let test = move |v: &Visit, get: fn(&crate::model::BoardTest) -> Option<f64>| {
            a.board_tests
                .iter()
                .find(|t| t.visit_id == v.id && t.board_id == b.id)
                .and_then(get)
        };
        let name = &b.designation;
        cols.push((
            format!("{name} Zdb Ω"),
            Box::new(move |v: &Visit| {
                test(v, |t| t.zdb_ohm.or(t.ze_ohm)).map(|x| format!("{x:.2}"))
            }),
        ));
        cols.push((
            format!("{name} sub-main R1+R2 Ω"),
            Box::new(move |v: &Visit| test(v, |t| t.submain_r1r2_ohm).map(|x| format!("{x:.2}"))),
        ));
        cols.push((
            format!("{name} Ipf kA"),
            Box::new(move |v: &Visit| test(v, |t| t.pfc_ka).map(|x| format!("{x:.1}"))),
        ));
    }
    cols.retain(|(_, get)| visits.iter().any(|v| get(v).is_some()));
    SupplySeries {
        rows: visits
            .iter()
            .map(|v| (v.date, cols.iter().map(|(_, get)| get(v)).collect()))
            .collect(),
        columns: cols.into_iter().map(|(name, _)| name).collect(),
    }
}

/// The latest report's parts as recorded, each with what it is; the outcome and interval
/// labelled as the inspector's.
pub(super) fn report_facts(r: &RecordedReport) -> Vec<Fact> {
    let mut facts = vec![];
    let text = |what: &'static str, v: &Option<String>| {
        v.as_ref().map(|t| Fact {
            what,
            value: t.clone(),
            date: None,
        })
    };
    facts.extend(text("Report reference", &r.report_ref));
    if let Some(out) = &r.outcome {
        facts.push(Fact {
            what: "Overall outcome",
            value: format!("{out} ({})", r.outcome_label),
            date: None,
        });
    }
    if let Some(m) = r.interval_months {
        facts.push(Fact {
            what: "Interval recommended",
            value: format!("{m} months ({})", r.outcome_label),
            date: None,
        });
    }
    facts.extend(text("Extent covered", &r.extent));
    facts.extend(text("Agreed limitations", &r.limitations));
    facts
}

fn facts_dl(o: &mut String, facts: &[Fact]) {
    o.push_str("<dl class=\"facts\">\n");
    for f in facts {
        let _ = write!(o, "<dt>{}</dt><dd>{}", esc(f.what), esc(&f.value));
        if let Some(d) = f.date {
            let _ = write!(o, " <span class=\"small\">(recorded {})</span>", time(d));
        }
        o.push_str("</dd>\n");
    }
    o.push_str("</dl>\n");
}

/// The section in HTML.
pub(super) fn render(o: &mut String, s: &ScheduleSection) {
    o.push_str("<section class=\"schedule\" aria-labelledby=\"schedule-h\">\n");
    o.push_str("<h2 id=\"schedule-h\">The inspector's report, the supply and main bonding</h2>\n");
    match &s.latest_report {
        None => o.push_str(
            "<p>No visit on record gives its report's reference, outcome or interval.</p>\n",
        ),
        Some(r) => {
            let facts = report_facts(r);
            let _ = writeln!(
                o,
                "<p>The latest report recorded, at the visit of {}:</p>",
                time(r.date)
            );
            facts_dl(o, &facts);
            o.push_str(
                "<p class=\"small\">ohmtrail shows the outcome exactly as the inspector recorded \
                 it and assigns none of its own.</p>\n",
            );
        }
    }
    if let (Some(d), Some(m), Some(basis)) =
        (s.next_due, s.next_due_interval_months, s.next_due_basis)
    {
        let _ = writeln!(
            o,
            "<p>The next inspection is due {}: {m} months after the last full inspection ({}).</p>",
            time(d),
            esc(basis)
        );
    }
    if !s.supply.is_empty() {
        o.push_str("<h3>Supply at the origin</h3>\n");
        facts_dl(o, &s.supply);
    }
    for b in &s.sub_boards {
        let _ = writeln!(
            o,
            "<h3>Board {} (fed from {})</h3>",
            esc(&b.board),
            esc(&b.fed_from)
        );
        if b.facts.is_empty() {
            o.push_str(
                "<p class=\"small\">No Zdb and no sub-main R1+R2 recorded: a Zs worked out here \
                 from Ze at the origin leaves the sub-main out.</p>\n",
            );
        } else {
            facts_dl(o, &b.facts);
        }
    }
    if !s.series.columns.is_empty() && s.series.rows.len() > 1 {
        o.push_str("<h3>Visit by visit</h3>\n<table>\n<thead><tr><th scope=\"col\">Date</th>");
        for c in &s.series.columns {
            let _ = write!(o, "<th scope=\"col\" class=\"num\">{}</th>", esc(c));
        }
        o.push_str("</tr></thead>\n<tbody>\n");
        for (date, values) in s.series.rows.iter().rev() {
            let _ = write!(o, "<tr><td>{}</td>", time(*date));
            for v in values {
                let _ = write!(
                    o,
                    "<td class=\"num\">{}</td>",
                    esc(v.as_deref().unwrap_or("–"))
                );
            }
            o.push_str("</tr>\n");
        }
        o.push_str("</tbody>\n</table>\n");
    }
    if !s.bonding.is_empty() {
        o.push_str("<h3>Main protective bonding</h3>\n");
        facts_dl(o, &s.bonding);
    }
    if let Some(f) = &s.bonding_finding {
        let _ = writeln!(
            o,
            "<p><strong>▲ {}</strong></p>",
            esc(&super::property::upper_first(f))
        );
    }
    if !s.notes.is_empty() {
        o.push_str("<ul class=\"notes\">\n");
        for n in &s.notes {
            let _ = writeln!(o, "<li>{}</li>", esc(&super::property::upper_first(n)));
        }
        o.push_str("</ul>\n");
    }
    o.push_str("</section>\n");
}
