//! The visit brief as document blocks, in the report's design and the HTML brief's words.

use super::doc::{Block, Doc, Line, Span, text};
use crate::onsite::Brief;
use crate::report::brief::{
    ROW_HEADER, before_leaving, board_title, caution_words, circuit_title, facts, observations,
    register_line, row_words, test_first, ze_line,
};
use crate::report::html::date_words;
use crate::report::model::Contractor;

pub fn blocks(b: &Brief, contractor: Option<&Contractor>) -> Doc {
    let mut d = Doc::new(
        format!("Visit brief: {}, {}", b.property_ref, date_words(b.date)),
        format!(
            "Visit brief · property {} · {} · ohmtrail {}",
            b.property_ref,
            date_words(b.date),
            env!("CARGO_PKG_VERSION")
        ),
    );
    let contractor = super::contractor(&mut d, contractor);
    d.push(Block::Masthead {
        what: "Visit brief".into(),
        title: b.address.clone().unwrap_or_else(|| b.property_ref.clone()),
        badge: Some(format!("Property {}", b.property_ref)),
        lines: Vec::new(),
        facts: facts(b),
        contractor,
    });
    // The caution comes first: the brief is short, and a last page must never hold it alone.
    d.push(Block::Cautions {
        title: "Please note".into(),
        items: vec![caution_words(b)],
    });
    d.push(Block::H2 {
        t: "Test first".into(),
    });
    let first = test_first(b);
    if first.is_empty() {
        d.push(Block::P {
            spans: text(
                "Nothing flagged: no circuit exceeds, approaches or has moved beyond the noise floor.",
            ),
        });
    }
    for (i, (who, what)) in first.into_iter().enumerate() {
        d.push(Block::P {
            spans: vec![
                Span {
                    t: format!("{}. {who}", i + 1),
                    b: true,
                },
                Span { t: what, b: false },
            ],
        });
    }
    d.push(Block::H2 {
        t: "Before leaving".into(),
    });
    d.push(Block::List {
        items: before_leaving(b),
    });
    if !b.observations.is_empty() {
        d.push(Block::H2 {
            t: format!(
                "Observations recorded last time ({})",
                b.last_observations_date.map(date_words).unwrap_or_default()
            ),
        });
        d.push(Block::List {
            items: observations(b),
        });
    }
    for board in &b.boards {
        d.push(Block::H2 {
            t: board_title(board),
        });
        d.push(Block::P {
            spans: text(ze_line(board)),
        });
        for c in &board.circuits {
            // A circuit's heading, flags, table and notes stay on one page.
            let mut g = vec![
                Block::H3 {
                    t: circuit_title(c),
                },
                Block::Small {
                    spans: text(register_line(c)),
                },
            ];
            // Each flag is given once, in "test first"; the circuit points there.
            if let Some(refs) = crate::onsite::test_first_refs(c) {
                g.push(Block::P {
                    spans: vec![Span { t: refs, b: true }],
                });
            }
            for f in &c.other_flags {
                g.push(Block::P {
                    spans: vec![
                        Span {
                            t: "Flag: ".into(),
                            b: true,
                        },
                        Span {
                            t: f.clone(),
                            b: false,
                        },
                    ],
                });
            }
            let rows = c
                .expectations
                .iter()
                .map(|e| {
                    let [q, last, expected, band, limit, basis] = row_words(e);
                    vec![
                        vec![Line::styled(q, "b")],
                        vec![Line::plain(last)],
                        vec![Line::plain(expected)],
                        vec![Line::plain(band)],
                        vec![Line::plain(limit)],
                        vec![Line::styled(basis, "m")],
                        vec![Line::styled("", "box")],
                    ]
                })
                .collect();
            g.push(Block::Table {
                caption: None,
                header: ROW_HEADER.map(String::from).to_vec(),
                aligns: vec!["l", "l", "r", "r", "r", "l", "l"],
                widths: vec![0.9, 1.6, 0.9, 1.2, 1.1, 2.6, 1.1],
                rows,
                size: 7.2,
            });
            for n in &c.notes {
                g.push(Block::Small {
                    spans: text(format!("Note: {n}")),
                });
            }
            d.push(Block::Group { blocks: g });
        }
    }
    if !b.notes.is_empty() {
        d.push(Block::H2 { t: "Notes".into() });
        d.push(Block::List {
            items: b.notes.clone(),
        });
    }
    d
}
