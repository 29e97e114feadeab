//! Reports as self-contained HTML. The only module that writes HTML or SVG.
//!
//! This first version tabulates each circuit's readings visit by visit; the trend charts and
//! findings come with the trend engine.

pub mod brief;
pub mod chart;

use std::fmt::Write as _;

use crate::error::Result;
use crate::store::Store;

/// The caution every report carries.
pub const CAUTION: &str = "These figures support, and never replace, the judgement of a competent, \
licensed person inspecting and testing to BS 7671 or the local code. ohmtrail assigns no condition \
codes; any reading that exceeds a limit needs prompt attention by a qualified electrician.";

fn esc(s: &str) -> String {
    html_escape::encode_text(s).into_owned()
}

fn num(v: Option<f64>) -> String {
    v.map(|x| format!("{x:.2}")).unwrap_or_else(|| "–".into())
}

/// One property's readings, visit by visit, as a self-contained HTML page.
pub fn property_html(store: &Store, property_ref: &str) -> Result<String> {
    let p = store.property(property_ref)?;
    let visits = store.property_visits(p.id)?;
    let mut h = String::new();
    let _ = write!(
        h,
        "<!DOCTYPE html>\n<html lang=\"en\"><head><meta charset=\"utf-8\">\
         <title>ohmtrail: {r}</title><style>{css}</style></head><body>\
         <h1>Test history for {r}</h1><p>{a}</p><p>Client: {c}</p>",
        r = esc(&p.reference),
        a = esc(p.address.as_deref().unwrap_or("")),
        c = esc(p.client.as_deref().unwrap_or("not recorded")),
        css = CSS
    );
    for b in store.boards(p.id)? {
        let _ = write!(h, "<h2>Board {}</h2>", esc(&b.designation));
        for c in store.circuits(b.id)? {
            let _ = write!(
                h,
                "<h3>Circuit {} – {} ({})</h3><table><thead><tr><th>Visit</th><th>Ambient °C</th>\
                 <th>R1+R2 Ω</th><th>R1+Rn Ω</th><th>Zs Ω</th><th>IR L–E MΩ</th></tr></thead><tbody>",
                esc(&c.number),
                esc(c.description.as_deref().unwrap_or("")),
                c.device
                    .map(|d| d.to_string())
                    .unwrap_or_else(|| "device not recorded".into())
            );
            for (v, t) in store.circuit_records(c.id)? {
                let r = &t.readings;
                let _ = write!(
                    h,
                    "<tr><td>{}</td><td>{}</td><td>{}</td><td>{}</td><td>{}</td><td>{}</td></tr>",
                    v.date,
                    v.ambient_c
                        .map(|a| format!("{a:.1}"))
                        .unwrap_or_else(|| "–".into()),
                    num(r.r1r2_ohm),
                    num(r.r1rn_ohm),
                    num(r.zs_ohm),
                    r.ir_le
                        .map(|m| esc(&m.to_string()))
                        .unwrap_or_else(|| "–".into()),
                );
            }
            h.push_str("</tbody></table>");
        }
    }
    let _ = writeln!(
        h,
        "<p>{} visits on record.</p><p class=\"caution\">{}</p><footer>ohmtrail {}</footer></body></html>",
        visits.len(),
        esc(CAUTION),
        env!("CARGO_PKG_VERSION")
    );
    Ok(h)
}

const CSS: &str = "body{font-family:system-ui,sans-serif;max-width:60rem;margin:2rem auto;padding:0 1rem;color:#1d232a}\
table{border-collapse:collapse;margin-bottom:1rem}th,td{border-bottom:1px solid #c9ced6;padding:.25rem .6rem;text-align:right}\
th:first-child,td:first-child{text-align:left}.caution{border-left:4px solid #5a4a00;padding-left:.6rem}";
