//! The portfolio index as document blocks, in the HTML index's order and words.

use super::doc::{Block, Cell, Doc, Line, TallyItem, sev_key, text};
use crate::report::html::{count, date_words};
use crate::report::model::severity_words;
use crate::report::portfolio::PortfolioReport;

pub fn blocks(p: &PortfolioReport) -> Doc {
    let mut d = Doc::new(
        "Portfolio · wiring trend index".into(),
        format!(
            "Portfolio index · made {} by ohmtrail {}",
            date_words(p.generated),
            p.ohmtrail_version
        ),
    );
    let contractor = super::contractor(&mut d, p.contractor.as_ref());
    d.push(Block::Masthead {
        what: "Wiring condition over time".into(),
        title: "Portfolio index".into(),
        badge: None,
        lines: vec![format!(
            "{} ranked most urgent first. Each property's report is its own document.",
            count(p.properties, "property", "properties")
        )],
        facts: vec![
            ("Index made".into(), date_words(p.generated)),
            ("ohmtrail".into(), p.ohmtrail_version.into()),
        ],
        contractor,
    });
    d.push(Block::H2 {
        t: "Summary".into(),
    });
    let tile = |sev: Option<&str>, n: usize, w: &str| TallyItem {
        sev: sev_key(sev),
        mark: severity_words(sev).0,
        n,
        w: w.into(),
    };
    d.push(Block::Tally {
        items: vec![
            tile(
                Some("exceeds"),
                p.with_exceeds,
                "with a circuit past a limit",
            ),
            tile(
                Some("approaching"),
                p.with_approaching,
                "with a circuit nearing a limit",
            ),
            tile(Some("changed"), p.with_changed, "with a change to look at"),
            tile(None, p.with_nothing_to_report, "with nothing to report"),
        ],
    });
    if p.without_visits > 0 {
        d.push(Block::P {
            spans: text(format!(
                "{} no completed visit on record yet.",
                if p.without_visits == 1 {
                    "1 property has".to_string()
                } else {
                    format!("{} properties have", p.without_visits)
                }
            )),
        });
    }
    d.push(Block::H2 {
        t: "Properties, most urgent first".into(),
    });
    let rows = p
        .entries
        .iter()
        .map(|e| {
            let mut prop: Cell = vec![Line::styled(e.property_ref.clone(), "b")];
            for extra in [&e.address, &e.client].into_iter().flatten() {
                prop.push(Line::styled(extra.clone(), "m"));
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
            let next: Cell = match e.next_inspection {
                None => vec![Line::plain("not known")],
                Some(day) => {
                    let mut c = vec![Line::plain(date_words(day))];
                    if e.next_inspection_overdue {
                        c.push(Line::styled("▲ overdue", "past"));
                    } else if e.next_inspection_shortened {
                        c.push(Line::styled("brought forward", "m"));
                    }
                    c
                }
            };
            vec![
                vec![Line::plain(e.rank.to_string())],
                prop,
                vec![Line::badge(e.worst)],
                vec![Line::plain(counts.join(", "))],
                vec![Line::plain(e.first_reason.clone().unwrap_or_else(|| {
                    if e.last_visit.is_some() {
                        "nothing to report".into()
                    } else {
                        "no completed visit yet".into()
                    }
                }))],
                next,
            ]
        })
        .collect();
    d.push(Block::Table {
        caption: None,
        header: [
            "#",
            "Property",
            "State",
            "Circuits",
            "First thing to look at",
            "Next inspection",
        ]
        .map(String::from)
        .to_vec(),
        aligns: vec!["r", "l", "l", "l", "l", "l"],
        widths: vec![0.0, 2.2, 1.4, 1.2, 4.0, 1.3],
        rows,
        size: 7.2,
    });
    d.push(Block::Cautions {
        title: "Please note".into(),
        items: p.cautions.clone(),
    });
    d
}
