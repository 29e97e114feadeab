//! The inspector's report as recorded, the due date and its basis, the supply, sub-boards and
//! main bonding, and their figures visit by visit: `report::schedule`'s section as blocks, in
//! the HTML's order and words.

use super::doc::{Block, Cell, Doc, Line, Span, text};
use crate::report::html::date_words;
use crate::report::property::upper_first;
use crate::report::schedule::{Fact, ScheduleSection, report_facts};

fn dl(facts: &[Fact]) -> Block {
    Block::Facts {
        items: facts
            .iter()
            .map(|f| {
                let value = match f.date {
                    Some(d) => format!("{} (recorded {})", f.value, date_words(d)),
                    None => f.value.clone(),
                };
                (f.what.to_string(), value)
            })
            .collect(),
    }
}

pub fn blocks(d: &mut Doc, s: &ScheduleSection) {
    d.push(Block::H2 {
        t: "The inspector's report, the supply and main bonding".into(),
    });
    match &s.latest_report {
        None => d.push(Block::P {
            spans: text("No visit on record gives its report's reference, outcome or interval."),
        }),
        Some(r) => {
            d.push(Block::P {
                spans: text(format!(
                    "The latest report recorded, at the visit of {}:",
                    date_words(r.date)
                )),
            });
            d.push(dl(&report_facts(r)));
            d.push(Block::Small {
                spans: text(
                    "ohmtrail shows the outcome exactly as the inspector recorded it and assigns \
                     none of its own.",
                ),
            });
        }
    }
    if let (Some(due), Some(m), Some(basis)) =
        (s.next_due, s.next_due_interval_months, s.next_due_basis)
    {
        d.push(Block::P {
            spans: text(format!(
                "The next inspection is due {}: {m} months after the last full inspection \
                 ({basis}).",
                date_words(due)
            )),
        });
    }
    if !s.supply.is_empty() {
        d.push(Block::H3 {
            t: "Supply at the origin".into(),
        });
        d.push(dl(&s.supply));
    }
    for b in &s.sub_boards {
        d.push(Block::H3 {
            t: format!("Board {} (fed from {})", b.board, b.fed_from),
        });
        if b.facts.is_empty() {
            d.push(Block::Small {
                spans: text(
                    "No Zdb and no sub-main R1+R2 recorded: a Zs worked out here from Ze at the \
                     origin leaves the sub-main out.",
                ),
            });
        } else {
            d.push(dl(&b.facts));
        }
    }
    if !s.series.columns.is_empty() && s.series.rows.len() > 1 {
        let n = s.series.columns.len();
        let mut header = vec!["Date".to_string()];
        header.extend(s.series.columns.iter().cloned());
        let mut aligns = vec!["l"];
        aligns.extend(std::iter::repeat_n("r", n));
        let mut widths = vec![1.4];
        widths.extend(std::iter::repeat_n(1.0, n));
        let rows = s
            .series
            .rows
            .iter()
            .rev()
            .map(|(date, values)| {
                let mut cells: Vec<Cell> = vec![vec![Line::plain(date_words(*date))]];
                cells.extend(
                    values
                        .iter()
                        .map(|v| vec![Line::plain(v.as_deref().unwrap_or("–"))]),
                );
                cells
            })
            .collect();
        d.push(Block::Table {
            caption: Some("Visit by visit".into()),
            header,
            aligns,
            widths,
            rows,
            size: if n > 7 { 6.6 } else { 7.2 },
        });
    }
    if !s.bonding.is_empty() {
        d.push(Block::H3 {
            t: "Main protective bonding".into(),
        });
        d.push(dl(&s.bonding));
    }
    if let Some(f) = &s.bonding_finding {
        d.push(Block::P {
            spans: vec![Span {
                t: format!("▲ {}", upper_first(f)),
                b: true,
            }],
        });
    }
    if !s.notes.is_empty() {
        d.push(Block::List {
            items: s.notes.iter().map(|n| upper_first(n)).collect(),
        });
    }
}
