//! The visit brief as one printable HTML page (A4). Every piece of user text is escaped.

use std::fmt::Write as _;

use crate::onsite::entry::{fmt_in, fmt_num};
use crate::onsite::verdict::expectation_text;
use crate::onsite::{Brief, Expectation};

fn esc(s: &str) -> String {
    html_escape::encode_text(s).into_owned()
}

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

fn row(h: &mut String, e: &Expectation) {
    let u = e.unit();
    let _ = write!(
        h,
        "<tr><th scope=\"row\">{}</th><td>{}</td><td class=\"n\">{}</td><td class=\"n\">{}</td><td class=\"n\">{}</td><td class=\"basis\">{}</td><td class=\"box\"></td></tr>",
        esc(e.field.label()),
        esc(&last_text(e)),
        e.expected
            .map(|x| esc(&fmt_in(u, x)))
            .unwrap_or_else(|| "–".into()),
        esc(&band_text(e)),
        e.limit
            .as_ref()
            .map(|l| format!(
                "<span title=\"{}\">{}{}</span>",
                html_escape::encode_double_quoted_attribute(&l.words),
                match (l.kind, l.advisory) {
                    (_, true) => "advisory ",
                    (crate::trend::LimitKind::Min, _) => "min ",
                    _ => "max ",
                },
                esc(&fmt_in(u, l.value))
            ))
            .unwrap_or_else(|| "–".into()),
        esc(&e.basis_words()),
    );
}

/// The brief as a self-contained HTML page, laid out for A4 paper.
pub fn brief_html(b: &Brief) -> String {
    let mut h = String::new();
    let _ = write!(
        h,
        "<!DOCTYPE html>\n<html lang=\"en\"><head><meta charset=\"utf-8\">\
         <meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">\
         <title>Visit brief: {r}, {d}</title><style>{css}</style></head><body>\
         <header><h1>Visit brief: {r}</h1><p class=\"addr\">{a}</p>\
         <dl><dt>Planned visit</dt><dd>{d}</dd><dt>Expected ambient</dt><dd>{t} °C{ta}</dd>\
         <dt>Last visit</dt><dd>{l}</dd><dt>Measured-value rule</dt><dd>{rule}</dd></dl></header>",
        r = esc(&b.property_ref),
        a = esc(b.address.as_deref().unwrap_or("")),
        d = b.date,
        t = b.temp_c,
        ta = if b.temp_assumed {
            " (assumed: none was given)"
        } else {
            ""
        },
        l = b
            .last_visit
            .map(|d| d.to_string())
            .unwrap_or_else(|| "none on record".into()),
        rule = esc(b.measured_rule.words()),
        css = CSS,
    );

    h.push_str("<section><h2>Test first</h2>");
    if b.test_first.is_empty() {
        h.push_str("<p>Nothing flagged: no circuit exceeds, approaches or has moved beyond the noise floor.</p>");
    } else {
        h.push_str("<ol class=\"first\">");
        for p in &b.test_first {
            let _ = write!(
                h,
                "<li><strong>{} {}</strong> ({}, {}): {}</li>",
                esc(&p.board),
                esc(&p
                    .circuit
                    .as_ref()
                    .map(|c| format!("circuit {c}"))
                    .unwrap_or_else(|| "origin".into())),
                esc(p.severity),
                esc(p.quantity),
                esc(&p.reason)
            );
        }
        h.push_str("</ol>");
    }
    h.push_str("</section>");

    h.push_str("<section><h2>Before leaving</h2>");
    if b.instruments.is_empty() {
        let _ = write!(
            h,
            "<p>{}</p>",
            if b.instruments_known == 0 {
                "No instruments in the register: check the calibration of the instrument you take."
                    .to_string()
            } else if b.instruments_known == 1 {
                format!(
                    "The one instrument in the register is in calibration on {}.",
                    b.date
                )
            } else {
                format!(
                    "All {} instruments in the register are in calibration on {}.",
                    b.instruments_known, b.date
                )
            }
        );
    } else {
        h.push_str("<ul>");
        for i in &b.instruments {
            let _ = write!(
                h,
                "<li><strong>{}</strong>{}: {}</li>",
                esc(&i.serial),
                i.description
                    .as_deref()
                    .map(|d| format!(" ({})", esc(d)))
                    .unwrap_or_default(),
                esc(&i.why)
            );
        }
        h.push_str("</ul>");
    }
    h.push_str("</section>");

    if !b.observations.is_empty() {
        let _ = write!(
            h,
            "<section><h2>Observations recorded last time ({})</h2><ul>",
            b.last_observations_date
                .map(|d| d.to_string())
                .unwrap_or_default()
        );
        for o in &b.observations {
            let at = match (&o.board, &o.circuit) {
                (Some(bd), Some(c)) => format!("{bd}/{c}: "),
                (Some(bd), None) => format!("{bd}: "),
                _ => String::new(),
            };
            let _ = write!(
                h,
                "<li><strong>{}</strong> {}{}</li>",
                esc(o.code.as_str()),
                esc(&at),
                esc(&o.text)
            );
        }
        h.push_str("</ul></section>");
    }

    for board in &b.boards {
        let _ = write!(
            h,
            "<section class=\"board\"><h2>Board {}{}{}</h2>",
            esc(&board.designation),
            board
                .location
                .as_deref()
                .map(|l| format!(", {}", esc(l)))
                .unwrap_or_default(),
            board
                .earthing
                .as_deref()
                .map(|e| format!(" ({})", esc(e)))
                .unwrap_or_default()
        );
        let _ = write!(
            h,
            "<p>{} at this board: {}</p>",
            if board.origin { "Ze" } else { "Zdb" },
            esc(&expectation_text(&board.ze))
        );
        if board.circuits.is_empty() {
            let _ = write!(
                h,
                "<p class=\"note\">Note: {}</p>",
                esc(crate::onsite::NO_CIRCUITS)
            );
        }
        for c in &board.circuits {
            let mut reg = Vec::new();
            reg.push(c.kind.as_str().to_string());
            if let Some(d) = &c.device {
                reg.push(d.clone());
            }
            if let Some(cable) = c.cable() {
                reg.push(cable);
            }
            if let Some(ma) = c.rcd_ma {
                reg.push(format!("RCD {ma} mA"));
            }
            let _ = write!(
                h,
                "<div class=\"circuit\"><h3>Circuit {}{}</h3><p class=\"reg\">Register: {}. Last tested {}.</p>",
                esc(&c.number),
                c.description
                    .as_deref()
                    .map(|d| format!(" – {}", esc(d)))
                    .unwrap_or_default(),
                esc(&reg.join(", ")),
                c.last_visit
                    .map(|d| d.to_string())
                    .unwrap_or_else(|| "never".into())
            );
            if let Some(refs) = crate::onsite::test_first_refs(c) {
                let _ = write!(h, "<p class=\"flag\">{}</p>", esc(&refs));
            }
            for f in &c.other_flags {
                let _ = write!(h, "<p class=\"flag\">Flag: {}</p>", esc(f));
            }
            h.push_str(
                "<table><thead><tr><th scope=\"col\">Quantity</th><th scope=\"col\">Last</th>\
                 <th scope=\"col\">Expected</th><th scope=\"col\">Band</th><th scope=\"col\">Limit</th>\
                 <th scope=\"col\">Basis</th><th scope=\"col\">Reading</th></tr></thead><tbody>",
            );
            for e in &c.expectations {
                row(&mut h, e);
            }
            h.push_str("</tbody></table>");
            for n in &c.notes {
                let _ = write!(h, "<p class=\"note\">Note: {}</p>", esc(n));
            }
            h.push_str("</div>");
        }
        h.push_str("</section>");
    }

    if !b.notes.is_empty() {
        h.push_str("<section><h2>Notes</h2><ul>");
        for n in &b.notes {
            let _ = write!(h, "<li>{}</li>", esc(n));
        }
        h.push_str("</ul></section>");
    }
    let _ = writeln!(
        h,
        "<p class=\"caution\"><strong>Caution.</strong> {}</p>\
         <footer>ohmtrail {} · brief for {} on {}</footer></body></html>",
        esc(b.caution),
        env!("CARGO_PKG_VERSION"),
        esc(&b.property_ref),
        b.date
    );
    h
}

const CSS: &str = "@page{size:A4;margin:14mm 12mm}\
body{font-family:system-ui,'Segoe UI',sans-serif;font-size:10.5pt;line-height:1.35;color:#15191e;max-width:186mm;margin:1rem auto;padding:0 .5rem}\
h1{font-size:16pt;margin:0 0 .2rem}h2{font-size:12.5pt;margin:1rem 0 .3rem;border-bottom:2px solid #15191e}\
h3{font-size:11pt;margin:.6rem 0 .1rem}.addr{margin:0 0 .4rem}\
dl{display:grid;grid-template-columns:max-content 1fr;gap:0 .8rem;margin:0}dt{font-weight:600}dd{margin:0}\
table{border-collapse:collapse;width:100%;margin:.2rem 0 .4rem}\
th,td{border:1px solid #8a939e;padding:.15rem .35rem;vertical-align:top;text-align:left}\
thead th{background:#eceff2}td.n{text-align:right;white-space:nowrap}td.basis{font-size:9pt}\
td.box{min-width:22mm}.reg,.note{margin:.1rem 0;font-size:9.5pt}\
.flag{margin:.15rem 0;padding-left:.4rem;border-left:4px double #15191e;font-weight:600}\
.circuit{break-inside:avoid;page-break-inside:avoid}\
.caution{margin-top:1rem;border:1px solid #15191e;padding:.4rem .6rem}\
footer{margin-top:.6rem;font-size:8.5pt;color:#4a525c}\
@media print{body{margin:0;max-width:none}a{color:inherit}}";

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
        let h = brief_html(&b);
        assert!(!h.contains("<script>"));
        assert!(h.contains("&lt;script&gt;"));
        assert!(h.contains("Kitchen &lt;sockets&gt;"));
        assert!(h.contains("DB&lt;1&gt;"));
        assert!(!h.contains("<b>"));
        assert!(!h.contains("\"quoted\""));
        assert!(h.contains("size:A4"));
        assert!(h.contains("assumed"));
        assert_eq!(h.matches(crate::CAUTION).count(), 1);
    }
}
