//! The portfolio index: every property, most urgent first, each linking to its own report
//! file beside the index (`report-REF.html`, see [`super::html::property_file_name`]).

use std::cmp::Ordering;
use std::fmt::Write as _;

use chrono::NaiveDate;
use serde::Serialize;

use super::css::CSS;
use super::html::{PAGE_END, attr, count, esc, page_start, property_file_name, time};
use super::model::{CAUTIONS, Contractor, PropertyReport, SEVERITIES};
use super::property::{badge, cautions, letterhead};
use crate::analysis::PropertyAnalysis;
use crate::trend::{Finding, compare_urgency};

#[derive(Debug, Clone, Serialize)]
pub struct PortfolioReport {
    pub generated: NaiveDate,
    pub ohmtrail_version: &'static str,
    /// The client whose properties these are, as stored; `None` for the whole register.
    pub client: Option<String>,
    /// Who made the index, from the `contractor.*` settings.
    pub contractor: Option<Contractor>,
    pub properties: usize,
    /// Properties by their worst state.
    pub with_exceeds: usize,
    pub with_approaching: usize,
    pub with_changed: usize,
    pub with_nothing_to_report: usize,
    pub without_visits: usize,
    /// Most urgent first.
    pub entries: Vec<PortfolioEntry>,
    pub cautions: Vec<String>,
}

#[derive(Debug, Clone, Serialize)]
pub struct PortfolioEntry {
    /// 1 for the most urgent.
    pub rank: usize,
    pub property_ref: String,
    pub address: Option<String>,
    pub client: Option<String>,
    /// The property's report, relative to the index.
    pub file: String,
    pub worst: Option<&'static str>,
    pub circuits: usize,
    pub exceeds: usize,
    pub approaching: usize,
    pub changed: usize,
    pub supply_flagged: bool,
    pub last_visit: Option<NaiveDate>,
    pub next_inspection: Option<NaiveDate>,
    pub next_inspection_shortened: bool,
    pub next_inspection_overdue: bool,
    pub headline: String,
    /// The most urgent finding's reason, with its circuit.
    pub first_reason: Option<String>,
    #[serde(skip)]
    top: Option<Finding>,
}

/// One index line from a property's analysis and report; `ext` is the report files' extension.
pub fn entry(a: &PropertyAnalysis, r: &PropertyReport, ext: &str) -> PortfolioEntry {
    let s = &r.summary;
    let top = super::model::trend_rows(a).next();
    PortfolioEntry {
        rank: 0,
        property_ref: r.header.property_ref.clone(),
        address: r.header.address.clone(),
        client: r.header.client.clone(),
        file: property_file_name(&r.header.property_ref, ext),
        worst: s.worst,
        circuits: s.circuits,
        exceeds: s.exceeds,
        approaching: s.approaching,
        changed: s.changed,
        supply_flagged: s.supply_flagged,
        last_visit: r.header.last_visit,
        next_inspection: s.next_inspection,
        next_inspection_shortened: s.next_inspection_shortened,
        next_inspection_overdue: s.next_inspection_overdue,
        headline: s.headline.clone(),
        first_reason: top.map(|f| match &f.circuit {
            Some(c) => format!("{}/{c}: {}", f.board, f.reason),
            None => format!("{} supply: {}", f.board, f.reason),
        }),
        top: top.and_then(|f| f.finding().cloned()),
    }
}

fn severity_rank(s: Option<&str>) -> usize {
    s.and_then(|s| SEVERITIES.iter().position(|x| *x == s))
        .unwrap_or(SEVERITIES.len())
}

/// Most urgent first: the worst state, then the most urgent finding, then the earliest
/// recommended inspection (a property with no date last), then the reference.
fn compare(a: &PortfolioEntry, b: &PortfolioEntry) -> Ordering {
    severity_rank(a.worst)
        .cmp(&severity_rank(b.worst))
        .then_with(|| match (&a.top, &b.top) {
            (Some(x), Some(y)) => compare_urgency(x, y),
            _ => Ordering::Equal,
        })
        .then_with(|| match (a.next_inspection, b.next_inspection) {
            (Some(x), Some(y)) => x.cmp(&y),
            (Some(_), None) => Ordering::Less,
            (None, Some(_)) => Ordering::Greater,
            (None, None) => Ordering::Equal,
        })
        .then_with(|| a.property_ref.cmp(&b.property_ref))
}

/// Rank the entries and total them.
pub fn assemble(mut entries: Vec<PortfolioEntry>, generated: NaiveDate) -> PortfolioReport {
    entries.sort_by(compare);
    for (i, e) in entries.iter_mut().enumerate() {
        e.rank = i + 1;
    }
    let with = |s: &str| entries.iter().filter(|e| e.worst == Some(s)).count();
    PortfolioReport {
        generated,
        ohmtrail_version: env!("CARGO_PKG_VERSION"),
        client: None,
        contractor: None,
        properties: entries.len(),
        with_exceeds: with("exceeds"),
        with_approaching: with("approaching"),
        with_changed: with("changed"),
        with_nothing_to_report: entries
            .iter()
            .filter(|e| e.worst.is_none() && e.last_visit.is_some())
            .count(),
        without_visits: entries.iter().filter(|e| e.last_visit.is_none()).count(),
        cautions: CAUTIONS.iter().map(|s| s.to_string()).collect(),
        entries,
    }
}

/// Render the index as HTML.
pub fn render(p: &PortfolioReport) -> String {
    let mut o = page_start("Portfolio · wiring trend index", CSS);
    o.push_str("<div class=\"page\">\n");
    letterhead(&mut o, p.contractor.as_ref());
    o.push_str("<header class=\"masthead\">\n<div>\n");
    o.push_str("<p class=\"what\">Wiring condition over time</p>\n<h1>Portfolio index</h1>\n");
    let whose = p
        .client
        .as_deref()
        .map(|c| format!(" of {}", esc(c)))
        .unwrap_or_default();
    let _ = writeln!(
        o,
        "<p>{}{whose} ranked most urgent first. Open a property for its full report.</p>",
        count(p.properties, "property", "properties")
    );
    o.push_str("</div>\n<dl class=\"facts\">\n");
    let _ = writeln!(
        o,
        "<dt>Index made</dt><dd>{}</dd>\n<dt>ohmtrail</dt><dd>{}</dd>",
        time(p.generated),
        esc(p.ohmtrail_version)
    );
    o.push_str("</dl>\n</header>\n<main>\n");

    o.push_str("<section class=\"summary\" aria-labelledby=\"summary-h\">\n<h2 id=\"summary-h\">Summary</h2>\n");
    o.push_str("<ul class=\"tally\" aria-label=\"Properties by their worst state\">\n");
    for (sev, n, words) in [
        (
            Some("exceeds"),
            p.with_exceeds,
            "with a circuit past a limit",
        ),
        (
            Some("approaching"),
            p.with_approaching,
            "with a circuit nearing a limit",
        ),
        (Some("changed"), p.with_changed, "with a change to look at"),
        (None, p.with_nothing_to_report, "with nothing to report"),
    ] {
        let (mark, _) = super::model::severity_words(sev);
        let class = match sev {
            Some(s) => format!("sev-{s}"),
            None => "sev-none".into(),
        };
        let _ = writeln!(
            o,
            "<li class=\"{class}\"><i class=\"mark\" aria-hidden=\"true\">{mark}</i><span class=\"n\">{n}</span><span class=\"w\">{}</span></li>",
            esc(words)
        );
    }
    o.push_str("</ul>\n");
    if p.without_visits > 0 {
        let _ = writeln!(
            o,
            "<p>{} no completed visit on record yet.</p>",
            if p.without_visits == 1 {
                "1 property has".to_string()
            } else {
                format!("{} properties have", p.without_visits)
            }
        );
    }
    o.push_str("</section>\n");

    o.push_str("<section aria-labelledby=\"list-h\">\n<h2 id=\"list-h\">Properties, most urgent first</h2>\n");
    o.push_str(
        "<table>\n<thead><tr><th scope=\"col\" class=\"num\">#</th><th scope=\"col\">Property</th>\
         <th scope=\"col\">State</th><th scope=\"col\">Circuits</th><th scope=\"col\">First thing to look at</th>\
         <th scope=\"col\">Next inspection</th></tr></thead>\n<tbody>\n",
    );
    for e in &p.entries {
        let mut prop = format!(
            "<a href=\"{}\"><b>{}</b></a>",
            attr(&e.file),
            esc(&e.property_ref)
        );
        if let Some(a) = &e.address {
            let _ = write!(prop, "<br><span class=\"small\">{}</span>", esc(a));
        }
        if let Some(c) = &e.client {
            let _ = write!(prop, "<br><span class=\"small\">{}</span>", esc(c));
        }
        let mut counts = vec![format!("{} in service", e.circuits)];
        for (n, w) in [
            (e.exceeds, "past"),
            (e.approaching, "nearing"),
            (e.changed, "changed"),
        ] {
            if n > 0 {
                counts.push(format!("{n} {w}"));
            }
        }
        let next = match e.next_inspection {
            None => "not known".to_string(),
            Some(d) => {
                let mut s = time(d);
                if e.next_inspection_overdue {
                    s.push_str("<br><span class=\"small\"><strong>▲ overdue</strong></span>");
                } else if e.next_inspection_shortened {
                    s.push_str("<br><span class=\"small\">brought forward</span>");
                }
                s
            }
        };
        let _ = writeln!(
            o,
            "<tr><td class=\"num rank\">{}</td><td class=\"prop\">{prop}</td><td>{}</td><td>{}</td><td>{}</td><td class=\"next-date\">{next}</td></tr>",
            e.rank,
            badge(e.worst),
            esc(&counts.join(", ")),
            esc(e
                .first_reason
                .as_deref()
                .unwrap_or(if e.last_visit.is_some() {
                    "nothing to report"
                } else {
                    "no completed visit yet"
                })),
        );
    }
    o.push_str("</tbody>\n</table>\n</section>\n");
    cautions(&mut o, &p.cautions);
    o.push_str("</main>\n");
    let _ = writeln!(
        o,
        "<footer>Made by ohmtrail {} on {}. Each property's report is the file named in its link, in the same folder as this index.</footer>",
        esc(p.ohmtrail_version),
        time(p.generated)
    );
    o.push_str("</div>\n");
    o.push_str(PAGE_END);
    o
}
