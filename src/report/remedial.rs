//! The written confirmation of remedial work a landlord can keep: the property, each
//! observation as recorded, what was done, when and by whom, as one printable HTML page.
//! Regulation 3(5) of SI 2020/312 (from memory): the landlord obtains written confirmation from
//! a qualified person that the work has been carried out, and supplies it, with the report that
//! required the work, to each existing tenant and the local housing authority within 28 days of
//! the work's completion. The page is that confirmation once the qualified person signs it.

use std::fmt::Write as _;

use chrono::NaiveDate;
use serde::Serialize;

use super::css::CSS;
use super::html::{PAGE_END, esc, page_start, time};
use crate::analysis::remedial::{ListFilter, RemedialItem, list};
use crate::error::{Error, Result};
use crate::model::remedial::{REGULATION, RemedialKind};
use crate::store::Store;

/// What the confirmation says, as data.
#[derive(Debug, Clone, Serialize)]
pub struct Confirmation {
    pub generated: NaiveDate,
    pub property_ref: String,
    pub address: Option<String>,
    pub client: Option<String>,
    /// The observations confirmed, each with its events.
    pub items: Vec<RemedialItem>,
    /// What the regulation asks of the landlord with this document.
    pub regulation: String,
    pub cautions: Vec<String>,
}

/// The regulation's requirements this page answers, in words.
pub const REGULATION_NOTE: &str = "Where an electrical installation report requires further \
     investigative or remedial work, a private landlord in England must have it carried out by a \
     qualified person within 28 days, or the shorter period the report gives, starting with the \
     date of the inspection and testing (The Electrical Safety Standards in the Private Rented \
     Sector (England) Regulations 2020, regulation 3(4)). The landlord then obtains written \
     confirmation from a qualified person that the work has been carried out, and supplies it, \
     with the report that required the work, to each existing tenant and to the local housing \
     authority within 28 days of the work's completion (regulation 3(5), from memory).";

/// The confirmation for `observations` of a property, or, with none named, for every one of
/// its C1, C2 and FI observations on which work is recorded. Each named observation must be
/// one of the property's and have work recorded.
pub fn confirmation(
    store: &Store,
    property_ref: &str,
    observations: &[i64],
    today: NaiveDate,
) -> Result<Confirmation> {
    let property = store.property(property_ref)?;
    let all = list(
        store,
        today,
        &ListFilter {
            property: Some(property.reference.clone()),
            client: None,
        },
    )?;
    let has_work = |i: &RemedialItem| i.work_events().next().is_some();
    let items: Vec<RemedialItem> = if observations.is_empty() {
        let items: Vec<_> = all.iter().filter(|i| has_work(i)).cloned().collect();
        if items.is_empty() {
            return Err(Error::invalid(format!(
                "no remedial work is recorded for {}: record it with `ohmtrail remedial done \
                 OBSERVATION --date D --by NAME --what TEXT` first",
                property.reference
            )));
        }
        items
    } else {
        let mut items = Vec::new();
        for n in observations {
            let Some(i) = all.iter().find(|i| i.observation == *n) else {
                let known: Vec<String> = all.iter().map(|i| i.observation.to_string()).collect();
                return Err(Error::invalid(format!(
                    "observation {n} is not a C1, C2 or FI observation of {}: expected one of \
                     {}, as `ohmtrail remedial list {}` shows",
                    property.reference,
                    if known.is_empty() {
                        "none (it has no such observation)".into()
                    } else {
                        known.join(", ")
                    },
                    property.reference
                )));
            };
            if !has_work(i) {
                return Err(Error::invalid(format!(
                    "observation {n} has no work recorded: record it with `ohmtrail remedial \
                     done {n} --date D --by NAME --what TEXT` first"
                )));
            }
            if !items.iter().any(|x: &RemedialItem| x.observation == *n) {
                items.push(i.clone());
            }
        }
        items
    };
    Ok(Confirmation {
        generated: today,
        property_ref: property.reference,
        address: property.address,
        client: property.client,
        items,
        regulation: REGULATION_NOTE.into(),
        cautions: vec![
            crate::CAUTION.into(),
            "Each code (C1, C2, FI) is exactly as the inspector recorded it at the visit.".into(),
            "This page records what was entered; it is a written confirmation only when signed \
             by the qualified person who carried out or verified the work."
                .into(),
        ],
    })
}

/// The confirmation as one self-contained, printable HTML page.
pub fn render(c: &Confirmation) -> String {
    let mut o = page_start(
        &format!("{} · confirmation of remedial work", c.property_ref),
        CSS,
    );
    o.push_str("<div class=\"page\">\n<main>\n");
    let _ = writeln!(
        o,
        "<header class=\"masthead\"><div><p class=\"what\">Confirmation of remedial work</p>\
         <h1>{}</h1>{}{}</div></header>",
        esc(&c.property_ref),
        c.address
            .as_deref()
            .map(|a| format!("<p>{}</p>", esc(a)))
            .unwrap_or_default(),
        c.client
            .as_deref()
            .map(|a| format!("<p>For {}</p>", esc(a)))
            .unwrap_or_default(),
    );
    let _ = writeln!(
        o,
        "<section aria-labelledby=\"why-h\"><h2 id=\"why-h\">What this confirms</h2><p>{}</p>\
         </section>",
        esc(&c.regulation)
    );
    o.push_str(
        "<section aria-labelledby=\"items-h\"><h2 id=\"items-h\">Observations and the work \
         done</h2>\n<table>\n<thead><tr><th scope=\"col\">No.</th><th scope=\"col\">Recorded</th>\
         <th scope=\"col\">Code and observation, as recorded</th><th scope=\"col\">Due by</th>\
         <th scope=\"col\">Work done</th></tr></thead>\n<tbody>\n",
    );
    for i in &c.items {
        item_row(&mut o, i);
    }
    o.push_str("</tbody>\n</table>\n</section>\n");
    o.push_str(
        "<section aria-labelledby=\"sign-h\"><h2 id=\"sign-h\">Qualified person</h2>\
         <p>Name: ______________________________ &nbsp; Signature: \
         ______________________________ &nbsp; Date: ______________</p></section>\n",
    );
    super::property::cautions(&mut o, &c.cautions);
    let _ = writeln!(
        o,
        "</main>\n<footer>Made by ohmtrail {} on {} from the records of {}. Basis: {REGULATION}.\
         </footer>\n</div>",
        esc(env!("CARGO_PKG_VERSION")),
        time(c.generated),
        esc(&c.property_ref)
    );
    o.push_str(PAGE_END);
    o
}

/// One observation's row: as recorded, its due date, and every piece of work done on it.
fn item_row(o: &mut String, i: &RemedialItem) {
    let place = match (&i.board, &i.circuit) {
        (Some(b), Some(n)) => format!("{}/{}: ", esc(b), esc(n)),
        (Some(b), None) => format!("{}: ", esc(b)),
        _ => String::new(),
    };
    let done: Vec<String> = i
        .work_events()
        .map(|e| {
            let (what, label) = match e.kind {
                RemedialKind::MadeSafe => ("Made safe", "What was done"),
                RemedialKind::Remedied if i.code == crate::model::ObservationCode::FI => {
                    ("Investigated", "What was done")
                }
                RemedialKind::Remedied => ("Remedied", "What was done"),
                _ => ("No longer applicable", "Why"),
            };
            format!(
                "<p><strong>{what}</strong> on {} by {}.<br>{label}: {}</p>",
                e.date.map(time).unwrap_or_default(),
                esc(e.by.as_deref().unwrap_or("")),
                esc(e.what.as_deref().unwrap_or(""))
            )
        })
        .collect();
    let still = if i.status.is_open() {
        format!(
            "<p class=\"small\"><strong>▲ The {} is still required.</strong></p>",
            i.work_words()
        )
    } else {
        String::new()
    };
    let _ = writeln!(
        o,
        "<tr><td>{}</td><td>{}</td><td><span class=\"code\">{}</span> {place}{}</td>\
         <td>{}<br><span class=\"small\">{}</span></td><td>{}{still}</td></tr>",
        i.observation,
        time(i.inspected),
        i.code.as_str(),
        esc(&i.text),
        time(i.due),
        esc(&i.period_basis),
        done.join("")
    );
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::model::ObservationCode;
    use crate::model::remedial::{RemedialEvent, RemedialStatus};

    #[test]
    fn user_text_is_escaped_never_markup() {
        let d = |s: &str| s.parse::<NaiveDate>().unwrap();
        let item = RemedialItem {
            observation: 3,
            property_ref: "P<1>".into(),
            address: Some("1 \"Quoted\" Row & Co".into()),
            client: None,
            inspected: d("2025-06-14"),
            board: Some("CU1".into()),
            circuit: Some("2".into()),
            code: ObservationCode::C2,
            text: "Cover <script>alert(1)</script> missing".into(),
            period_days: 28,
            period_basis: "28 days".into(),
            due: d("2025-07-11"),
            status: RemedialStatus::Remedied,
            superseded_by: None,
            days_left: None,
            events: vec![RemedialEvent {
                id: 1,
                observation_id: 3,
                kind: RemedialKind::Remedied,
                date: Some(d("2025-07-01")),
                by: Some("A. <b>Tester</b>".into()),
                what: Some("Fitted & tested".into()),
                period_days: None,
            }],
        };
        let c = Confirmation {
            generated: d("2025-07-02"),
            property_ref: "P<1>".into(),
            address: item.address.clone(),
            client: None,
            items: vec![item],
            regulation: REGULATION_NOTE.into(),
            cautions: vec![crate::CAUTION.into()],
        };
        let html = render(&c);
        assert!(!html.contains("<script>") && !html.contains("<b>"));
        assert!(html.contains("Cover &lt;script&gt;alert(1)&lt;/script&gt; missing"));
        assert!(html.contains("A. &lt;b&gt;Tester&lt;/b&gt;"));
        assert!(html.contains("Fitted &amp; tested"));
        assert!(html.contains("<strong>Remedied</strong> on"));
    }
}
