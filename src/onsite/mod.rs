//! On site: the brief before a visit, and the live comparison while testing. Pure: the
//! analysis and the typed text come in, expectations, verdicts and prompt order go out; the
//! terminal and the store belong to the caller.
//!
//! - [`brief`]: each circuit's last readings, the value expected on the day at the expected
//!   ambient, the acceptance band and the limit at that temperature; what to test first.
//! - [`entry`]: the quantities prompted for and the parsing of what is typed.
//! - [`verdict`]: within the band, outside it, or past the limit, in words.
//! - [`session`]: the order of prompts, where a resumed session carries on, and the
//!   `board,circuit,quantity,value` lines of the non-interactive mode.

pub mod brief;
pub mod entry;
mod expect;
pub mod session;
pub mod verdict;

pub use brief::{
    Band, BoardBrief, Brief, CircuitBrief, DEFAULT_TEMP_C, Expectation, LimitAt, NO_CIRCUITS, brief,
};
pub use entry::{Entry, EntryError, Field, Unit, parse_entry};
pub use verdict::{Judgement, Verdict, judge};

/// Where a circuit's flags stand in the brief's "test first" list, for the printed brief to
/// point at rather than repeat ("flagged: see test first 1, 2, 3"); `None` when none are there.
pub fn test_first_refs(c: &CircuitBrief) -> Option<String> {
    if c.test_first.is_empty() {
        return None;
    }
    let items: Vec<String> = c.test_first.iter().map(|n| n.to_string()).collect();
    Some(format!("flagged: see test first {}", items.join(", ")))
}

/// Header of the brief's CSV.
pub const CSV_HEADER: [&str; 15] = [
    "property_ref",
    "visit_date",
    "temp_c",
    "board",
    "circuit",
    "description",
    "quantity",
    "last_date",
    "last_value",
    "last_ambient_c",
    "expected",
    "band_low",
    "band_high",
    "limit",
    "basis",
];

/// The brief as CSV rows, one per board Ze and per circuit quantity. Text cells that a
/// spreadsheet would take for a formula are neutralised with a leading apostrophe.
pub fn csv_rows(b: &Brief) -> Vec<Vec<String>> {
    let num = |v: Option<f64>| v.map(|x| format!("{x:.4}")).map(trim0).unwrap_or_default();
    let mut rows = Vec::new();
    let mut push = |board: &str, circuit: &str, desc: &str, e: &Expectation| {
        rows.push(vec![
            safe(&b.property_ref),
            b.date.to_string(),
            format!("{}", b.temp_c),
            safe(board),
            safe(circuit),
            safe(desc),
            e.field.column().to_string(),
            e.last
                .as_ref()
                .map(|l| l.date.to_string())
                .unwrap_or_default(),
            e.last
                .as_ref()
                .map(|l| {
                    let v = trim0(format!("{:.4}", l.raw));
                    if l.over_range { format!(">{v}") } else { v }
                })
                .unwrap_or_default(),
            num(e.last.as_ref().and_then(|l| l.ambient_c)),
            num(e.expected),
            num(e.band.and_then(|x| x.low)),
            num(e.band.and_then(|x| x.high)),
            num(e.limit.as_ref().map(|l| l.value)),
            safe(&e.basis_words()),
        ]);
    };
    for board in &b.boards {
        push(&board.designation, "", "", &board.ze);
        for c in &board.circuits {
            for e in &c.expectations {
                push(
                    &board.designation,
                    &c.number,
                    c.description.as_deref().unwrap_or(""),
                    e,
                );
            }
        }
    }
    rows
}

fn trim0(s: String) -> String {
    if s.contains('.') {
        s.trim_end_matches('0').trim_end_matches('.').to_string()
    } else {
        s
    }
}

/// Neutralise a cell a spreadsheet would run as a formula (OWASP CSV injection guidance).
fn safe(s: &str) -> String {
    if s.starts_with(['=', '+', '-', '@', '\t', '\r']) {
        format!("'{s}")
    } else {
        s.to_string()
    }
}
