//! The visit brief as one printable HTML page (A4), in the report's own design (its style
//! sheet, masthead, headings and tables). Every piece of user text is escaped. The words are
//! built here once, for the HTML and the PDF alike.

use std::fmt::Write as _;

use super::css::CSS;
use super::html::{PAGE_END, attr, date_words, esc, page_start};
use super::model::Contractor;
use super::property::letterhead;
use crate::onsite::brief::{BoardBrief, CircuitBrief};
use crate::onsite::entry::{fmt_in, fmt_num};
use crate::onsite::verdict::expectation_text;
use crate::onsite::{Brief, Expectation};

fn last_text(e: &Expectation) -> String {
    match &e.last {
        Some(l) => {
            let v = if l.over_range {
                format!(">{}", fmt_in(e.unit(), l.raw))
            } else {
                fmt_in(e.unit(), l.raw)
            };
            match l.ambient_c {
                Some(t) => format!("{v} at {t} °C, {}", l.date),
                None => format!("{v}, {}", l.date),
            }
        }
        None => "–".into(),
    }
}

fn band_text(e: &Expectation) -> String {
    let u = e.unit();
    match e.band {
        Some(b) => match (b.low, b.high) {
            (Some(lo), Some(hi)) => format!("{} – {}", fmt_num(u, lo), fmt_in(u, hi)),
            (Some(lo), None) => format!("≥ {}", fmt_in(u, lo)),
            (None, Some(hi)) => format!("≤ {}", fmt_in(u, hi)),
            (None, None) => "–".into(),
        },
        None => "–".into(),
    }
}

/// The limit as the brief writes it: "max 1.37 Ω", "min 1.0 MΩ", "advisory 0.35 Ω".
pub(crate) fn limit_text(e: &Expectation) -> String {
    e.limit
        .as_ref()
        .map(|l| {
            format!(
                "{}{}",
                match (l.kind, l.advisory) {
                    (_, true) => "advisory ",
                    (crate::trend::LimitKind::Min, _) => "min ",
                    _ => "max ",
                },
                fmt_in(e.unit(), l.value)
            )
        })
        .unwrap_or_else(|| "–".into())
}

/// One quantity's row: quantity, last, expected, band, limit, basis (the reading box is
/// left empty for the pen).
pub(crate) fn row_words(e: &Expectation) -> [String; 6] {
    [
        e.field.label().to_string(),
        last_text(e),
        e.expected
            .map(|x| fmt_in(e.unit(), x))
            .unwrap_or_else(|| "–".into()),
        band_text(e),
        limit_text(e),
        e.basis_words(),
    ]
}

/// The brief's header facts, as label and value.
pub(crate) fn facts(b: &Brief) -> Vec<(String, String)> {
    vec![
        ("Planned visit".into(), date_words(b.date)),
        (
            "Expected ambient".into(),
            format!(
                "{} °C{}",
                b.temp_c,
                if b.temp_assumed {
                    " (assumed: none was given)"
                } else {
                    ""
                }
            ),
        ),
        (
            "Last visit".into(),
            b.last_visit
                .map(date_words)
                .unwrap_or_else(|| "none on record".into()),
        ),
        ("Measured-value rule".into(), b.measured_rule.words().into()),
    ]
}

/// "Test first" items: the board and circuit in bold, then the rest.
pub(crate) fn test_first(b: &Brief) -> Vec<(String, String)> {
    b.test_first
        .iter()
        .map(|p| {
            (
                format!(
                    "{} {}",
                    p.board,
                    p.circuit
                        .as_ref()
                        .map(|c| format!("circuit {c}"))
                        .unwrap_or_else(|| "origin".into())
                ),
                format!(" ({}, {}): {}", p.severity, p.quantity, p.reason),
            )
        })
        .collect()
}

/// "Before leaving": the instruments to check, or one sentence that they are in calibration.
pub(crate) fn before_leaving(b: &Brief) -> Vec<String> {
    if b.instruments.is_empty() {
        return vec![if b.instruments_known == 0 {
            "No instruments in the register: check the calibration of the instrument you take."
                .to_string()
        } else if b.instruments_known == 1 {
            format!(
                "The one instrument in the register is in calibration on {}.",
                date_words(b.date)
            )
        } else {
            format!(
                "All {} instruments in the register are in calibration on {}.",
                b.instruments_known,
                date_words(b.date)
            )
        }];
    }
    b.instruments
        .iter()
        .map(|i| {
            format!(
                "{}{}: {}",
                i.serial,
                i.description
                    .as_deref()
                    .map(|d| format!(" ({d})"))
                    .unwrap_or_default(),
                i.why
            )
        })
        .collect()
}

/// The observations recorded last time, each with its code as recorded.
pub(crate) fn observations(b: &Brief) -> Vec<String> {
    b.observations
        .iter()
        .map(|o| {
            let at = match (&o.board, &o.circuit) {
                (Some(bd), Some(c)) => format!("{bd}/{c}: "),
                (Some(bd), None) => format!("{bd}: "),
                _ => String::new(),
            };
            format!("[{}] {at}{}", o.code.as_str(), o.text)
        })
        .collect()
}

pub(crate) fn board_title(board: &BoardBrief) -> String {
    format!(
        "Board {}{}{}",
        board.designation,
        board
            .location
            .as_deref()
            .map(|l| format!(", {l}"))
            .unwrap_or_default(),
        board
            .earthing
            .as_deref()
            .map(|e| format!(" ({e})"))
            .unwrap_or_default()
    )
}

pub(crate) fn ze_line(board: &BoardBrief) -> String {
    format!(
        "{} at this board: {}",
        if board.origin { "Ze" } else { "Zdb" },
        expectation_text(&board.ze)
    )
}

pub(crate) fn circuit_title(c: &CircuitBrief) -> String {
    format!(
        "Circuit {}{}",
        c.number,
        c.description
            .as_deref()
            .map(|d| format!(" – {d}"))
            .unwrap_or_default()
    )
}

pub(crate) fn register_line(c: &CircuitBrief) -> String {
    let mut reg = vec![c.kind.as_str().to_string()];
    if let Some(d) = &c.device {
        reg.push(d.clone());
    }
    if let Some(cable) = c.cable() {
        reg.push(cable);
    }
    if let Some(ma) = c.rcd_ma {
        reg.push(format!("RCD {ma} mA"));
    }
    format!(
        "Register: {}. Last tested {}.",
        reg.join(", "),
        c.last_visit
            .map(date_words)
            .unwrap_or_else(|| "never".into())
    )
}

/// The brief's caution: the safety caution, once.
pub(crate) fn caution_words(b: &Brief) -> String {
    b.caution.to_string()
}

pub(crate) const ROW_HEADER: [&str; 7] = [
    "Quantity", "Last", "Expected", "Band", "Limit", "Basis", "Reading",
];

/// The brief as a self-contained HTML page in the report's design, laid out for A4 paper.
pub fn brief_html(b: &Brief, contractor: Option<&Contractor>) -> String {
    let title = format!("Visit brief: {}, {}", b.property_ref, date_words(b.date));
    let mut h = page_start(&title, CSS);
    h.push_str("<div class=\"page brief\">\n");
    letterhead(&mut h, contractor);
    h.push_str("<header class=\"masthead\">\n<div>\n<p class=\"what\">Visit brief</p>\n");
    let _ = writeln!(
        h,
        "<h1>{}</h1>\n<span class=\"ref\">Property {}</span>",
        esc(b.address.as_deref().unwrap_or(&b.property_ref)),
        esc(&b.property_ref)
    );
    h.push_str("</div>\n<dl class=\"facts\">\n");
    for (k, v) in facts(b) {
        let _ = writeln!(h, "<dt>{}</dt><dd>{}</dd>", esc(&k), esc(&v));
    }
    h.push_str("</dl>\n</header>\n<main>\n");
    // The caution comes first: the brief is short, and a last page must never hold it alone.
    let _ = writeln!(
        h,
        "<aside class=\"cautions\"><h2>Please note</h2><p>{}</p></aside>",
        esc(&caution_words(b))
    );
    h.push_str("<section><h2>Test first</h2>\n");
    let first = test_first(b);
    if first.is_empty() {
        h.push_str("<p>Nothing flagged: no circuit exceeds, approaches or has moved beyond the noise floor.</p>\n");
    } else {
        h.push_str("<ol class=\"first\">");
        for (who, what) in first {
            let _ = write!(h, "<li><strong>{}</strong>{}</li>", esc(&who), esc(&what));
        }
        h.push_str("</ol>\n");
    }
    h.push_str("</section>\n<section><h2>Before leaving</h2>\n<ul>");
    for line in before_leaving(b) {
        let _ = write!(h, "<li>{}</li>", esc(&line));
    }
    h.push_str("</ul>\n</section>\n");

    if !b.observations.is_empty() {
        let _ = write!(
            h,
            "<section><h2>Observations recorded last time ({})</h2><ul class=\"obs\">",
            b.last_observations_date.map(date_words).unwrap_or_default()
        );
        for line in observations(b) {
            let _ = write!(h, "<li>{}</li>", esc(&line));
        }
        h.push_str("</ul></section>\n");
    }

    for board in &b.boards {
        let _ = writeln!(
            h,
            "<section class=\"board\"><h2>{}</h2>\n<p>{}</p>",
            esc(&board_title(board)),
            esc(&ze_line(board))
        );
        if board.circuits.is_empty() {
            let _ = write!(
                h,
                "<p class=\"note\">Note: {}</p>",
                esc(crate::onsite::NO_CIRCUITS)
            );
        }
        for c in &board.circuits {
            let _ = write!(
                h,
                "<div class=\"circuit\"><h3>{}</h3><p class=\"small\">{}</p>",
                esc(&circuit_title(c)),
                esc(&register_line(c))
            );
            // Each flag is given once, in "test first"; the circuit points there.
            if let Some(refs) = crate::onsite::test_first_refs(c) {
                let _ = write!(h, "<p class=\"flag\">{}</p>", esc(&refs));
            }
            for f in &c.other_flags {
                let _ = write!(h, "<p class=\"flag\">Flag: {}</p>", esc(f));
            }
            h.push_str("<table><thead><tr>");
            for (i, col) in ROW_HEADER.iter().enumerate() {
                let class = if (2..=4).contains(&i) {
                    " class=\"num\""
                } else {
                    ""
                };
                let _ = write!(h, "<th scope=\"col\"{class}>{col}</th>");
            }
            h.push_str("</tr></thead><tbody>");
            for e in &c.expectations {
                let [q, last, expected, band, limit, basis] = row_words(e);
                let limit_words = e.limit.as_ref().map(|l| l.words.as_str()).unwrap_or("");
                let _ = write!(
                    h,
                    "<tr><th scope=\"row\">{}</th><td>{}</td><td class=\"num\">{}</td><td class=\"num\">{}</td><td class=\"num\"><span title=\"{}\">{}</span></td><td class=\"basis\">{}</td><td class=\"box\"></td></tr>",
                    esc(&q),
                    esc(&last),
                    esc(&expected),
                    esc(&band),
                    attr(limit_words),
                    esc(&limit),
                    esc(&basis)
                );
            }
            h.push_str("</tbody></table>");
            for n in &c.notes {
                let _ = write!(h, "<p class=\"small\">Note: {}</p>", esc(n));
            }
            h.push_str("</div>\n");
        }
        h.push_str("</section>\n");
    }

    if !b.notes.is_empty() {
        h.push_str("<section><h2>Notes</h2><ul>");
        for n in &b.notes {
            let _ = write!(h, "<li>{}</li>", esc(n));
        }
        h.push_str("</ul></section>\n");
    }
    let _ = writeln!(
        h,
        "</main>\n<footer>ohmtrail {} · brief for {} on {}</footer>\n</div>",
        env!("CARGO_PKG_VERSION"),
        esc(&b.property_ref),
        date_words(b.date)
    );
    h.push_str(PAGE_END);
    h
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::onsite::brief::{Band, BoardBrief, CircuitBrief, LimitAt};
    use crate::onsite::entry::Field;
    use crate::trend::LimitKind;
    use chrono::NaiveDate;

    #[test]
    fn user_text_is_escaped() {
        let e = Expectation {
            field: Field::Zs,
            last: None,
            expected: Some(0.5),
            band: Some(Band {
                low: Some(0.4),
                high: Some(0.6),
            }),
            basis: "<b>".into(),
            wide: None,
            limit: Some(LimitAt {
                value: 1.09,
                kind: LimitKind::Max,
                words: "\"quoted\" <x>".into(),
                advisory: false,
            }),
        };
        let b = Brief {
            property_ref: "<script>alert(1)</script>".into(),
            address: Some("1 & 2 Row".into()),
            date: NaiveDate::from_ymd_opt(2026, 1, 5).unwrap(),
            temp_c: 15.0,
            temp_assumed: true,
            last_visit: None,
            measured_rule: Default::default(),
            boards: vec![BoardBrief {
                board_id: 1,
                designation: "DB<1>".into(),
                location: None,
                earthing: None,
                origin: true,
                ze: e.clone(),
                circuits: vec![CircuitBrief {
                    circuit_id: 1,
                    number: "1".into(),
                    description: Some("Kitchen <sockets>".into()),
                    kind: crate::model::CircuitKind::Ring,
                    device: None,
                    live_mm2: None,
                    cpc_mm2: None,
                    rcd_ma: None,
                    last_visit: None,
                    last_readings: None,
                    expectations: vec![e],
                    flags: vec![],
                    test_first: vec![],
                    other_flags: vec![],
                    notes: vec![],
                }],
            }],
            test_first: vec![],
            observations: vec![],
            last_observations_date: None,
            instruments: vec![],
            instruments_known: 0,
            notes: vec![],
            caution: crate::CAUTION,
        };
        let h = brief_html(&b, None);
        assert!(!h.contains("<script>"));
        assert!(h.contains("&lt;script&gt;"));
        assert!(h.contains("Kitchen &lt;sockets&gt;"));
        assert!(h.contains("DB&lt;1&gt;"));
        assert!(!h.contains("<b>"));
        assert!(!h.contains("\"quoted\""));
        assert!(h.contains("size:A4"));
        assert_eq!(h.matches(crate::CAUTION).count(), 1, "the caution once");
        assert!(h.contains("assumed"));
    }
}
