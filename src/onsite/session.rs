//! The order of prompts in a recording session, where a resumed session carries on, and the
//! `board,circuit,quantity,value` lines of the non-interactive mode. Pure: the terminal and
//! the store are the caller's.

use std::collections::HashSet;

use serde::Serialize;

use super::brief::{Brief, CircuitBrief, Expectation};
use super::entry::Field;
use crate::model::Device;

/// One prompt of a session, by position in the brief.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
pub enum Step {
    /// Ze (Zdb at a sub-board) at board `board`.
    Ze { board: usize },
    /// Whether the device and cable fitted are as the register says.
    Fitted { board: usize, circuit: usize },
    /// One quantity of one circuit: expectation `exp` of the circuit.
    Value {
        board: usize,
        circuit: usize,
        exp: usize,
    },
    /// Whether the board has a circuit the register does not (found on site, or a first
    /// visit to a board with no circuits yet), to be added and tested.
    NewCircuit { board: usize },
}

/// Every prompt of a session, board by board, circuit by circuit, each board ending with the
/// question of a circuit the register does not have.
pub fn steps(brief: &Brief) -> Vec<Step> {
    let mut out = Vec::new();
    for (b, board) in brief.boards.iter().enumerate() {
        out.push(Step::Ze { board: b });
        for (c, circuit) in board.circuits.iter().enumerate() {
            out.push(Step::Fitted {
                board: b,
                circuit: c,
            });
            for e in 0..circuit.expectations.len() {
                out.push(Step::Value {
                    board: b,
                    circuit: c,
                    exp: e,
                });
            }
        }
        out.push(Step::NewCircuit { board: b });
    }
    out
}

/// The first reading of the circuit `circuit_id` (one just added: its register details were
/// given, so it is not asked whether it is fitted as the register says).
pub fn first_value_of(brief: &Brief, steps: &[Step], circuit_id: i64) -> Option<usize> {
    steps.iter().position(|s| match *s {
        Step::Value { board, circuit, .. } => {
            brief.boards[board].circuits[circuit].circuit_id == circuit_id
        }
        _ => false,
    })
}

/// What a pending visit already holds, to find where a session stopped.
#[derive(Debug, Clone, Default)]
pub struct Progress {
    /// Boards with Ze stored, by id.
    pub ze: HashSet<i64>,
    /// (circuit id, field) with a value or a limitation stored.
    pub values: HashSet<(i64, Field)>,
    /// Circuits with a register change recorded at this visit.
    pub changed: HashSet<i64>,
}

impl Progress {
    pub fn answered(&self, brief: &Brief, step: Step) -> bool {
        match step {
            Step::Ze { board } => self.ze.contains(&brief.boards[board].board_id),
            Step::Fitted { board, circuit } => self
                .changed
                .contains(&brief.boards[board].circuits[circuit].circuit_id),
            Step::Value {
                board,
                circuit,
                exp,
            } => {
                let c = &brief.boards[board].circuits[circuit];
                self.values
                    .contains(&(c.circuit_id, c.expectations[exp].field))
            }
            // Nothing is stored for it: a circuit added shows as its own readings.
            Step::NewCircuit { .. } => false,
        }
    }

    /// How many values (readings, limitations, Ze) are stored.
    pub fn stored(&self) -> usize {
        self.ze.len() + self.values.len()
    }
}

/// Where a resumed session carries on: just after the last prompt that has something stored.
/// Prompts skipped before it stay passed; those after it are asked again.
pub fn resume_at(brief: &Brief, steps: &[Step], progress: &Progress) -> usize {
    steps
        .iter()
        .rposition(|s| progress.answered(brief, *s))
        .map_or(0, |i| i + 1)
}

/// The circuit and expectation a step is about.
pub fn step_expectation(
    brief: &Brief,
    step: Step,
) -> (Option<&CircuitBrief>, Option<&Expectation>) {
    match step {
        Step::Ze { board } => (None, Some(&brief.boards[board].ze)),
        Step::NewCircuit { .. } => (None, None),
        Step::Fitted { board, circuit } => (Some(&brief.boards[board].circuits[circuit]), None),
        Step::Value {
            board,
            circuit,
            exp,
        } => {
            let c = &brief.boards[board].circuits[circuit];
            (Some(c), Some(&c.expectations[exp]))
        }
    }
}

/// What is fitted, where it differs from the register.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct Fitted {
    pub device: Option<Device>,
    /// Line and protective conductor csa, mm².
    pub cable: Option<(f64, f64)>,
}

/// A fitted check that could not be read.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum FittedError {
    #[error("{text:?}: {why}")]
    Device { text: String, why: String },
    #[error("{text:?} is not a cable size: expected live/cpc in mm², e.g. 2.5/1.5")]
    Cable { text: String },
}

/// Read what the inspector says is fitted: a device (`B20`, `RCBO C16`), a cable as
/// `live/cpc` (`2.5/1.5`), or both (`B20 2.5/1.5`). Empty means as the register says.
pub fn parse_fitted(text: &str) -> Result<Fitted, FittedError> {
    let mut out = Fitted::default();
    let mut device_words = Vec::new();
    for w in text.split_whitespace() {
        if w.contains('/') {
            out.cable = Some(parse_cable(w)?);
        } else {
            device_words.push(w);
        }
    }
    let device_text = device_words.join(" ");
    let device_text = device_text.trim_end_matches([',', ';']);
    if !device_text.is_empty() {
        out.device = Some(
            device_text
                .parse::<Device>()
                .map_err(|e| FittedError::Device {
                    text: device_text.to_string(),
                    why: e.to_string(),
                })?,
        );
    }
    Ok(out)
}

/// `2.5/1.5`, with an optional `mm²` or `mm2`.
pub fn parse_cable(text: &str) -> Result<(f64, f64), FittedError> {
    let t = text
        .trim()
        .trim_end_matches("mm²")
        .trim_end_matches("mm2")
        .trim();
    let bad = || FittedError::Cable { text: text.into() };
    let (l, c) = t.split_once('/').ok_or_else(bad)?;
    let l: f64 = l.trim().parse().map_err(|_| bad())?;
    let c: f64 = c.trim().parse().map_err(|_| bad())?;
    for v in [l, c] {
        if crate::model::validate_csa("csa", v).is_err() {
            return Err(bad());
        }
    }
    Ok((l, c))
}

/// A fact a visit records about a circuit rather than a reading: no band and no limit to
/// compare it with at once, stored as given.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Fact {
    Polarity,
    IrTestV,
    RcdButton,
}

impl Fact {
    pub const ALL: [Fact; 3] = [Fact::Polarity, Fact::IrTestV, Fact::RcdButton];

    /// The visit-file column.
    pub fn column(self) -> &'static str {
        match self {
            Fact::Polarity => "polarity",
            Fact::IrTestV => "ir_test_v",
            Fact::RcdButton => "rcd_button",
        }
    }

    /// Read `value` as the visit file reads the column and put it into the readings (`N/A` or
    /// `-` clears it); the words stored, or why the value was refused.
    pub fn apply(self, r: &mut crate::model::Readings, value: &str) -> Result<String, String> {
        use crate::import::cell::{Cell, Column, ParseOptions, parse_cell};
        let column = Column::from_name(self.column()).expect("a visit-file column");
        let opts = ParseOptions {
            decimal_comma: false,
            today: chrono::NaiveDate::MAX,
        };
        let cell = parse_cell(column, value, &opts).map_err(|e| e.to_string())?;
        let words = match (self, cell) {
            (Fact::Polarity, Cell::Polarity(p)) => {
                r.polarity = Some(p);
                format!("recorded {}", p.as_str())
            }
            (Fact::IrTestV, Cell::Volts(v)) => {
                r.ir_test_v = Some(v);
                format!("recorded {v} V")
            }
            (Fact::RcdButton, Cell::Button(b)) => {
                r.rcd_button = Some(b);
                format!("recorded {}", b.as_str())
            }
            (_, Cell::Missing) => {
                match self {
                    Fact::Polarity => r.polarity = None,
                    Fact::IrTestV => r.ir_test_v = None,
                    Fact::RcdButton => r.rcd_button = None,
                }
                "cleared".to_string()
            }
            _ => return Err(format!("{value:?} cannot be recorded as {}", self.column())),
        };
        Ok(words)
    }
}

/// What a line of the non-interactive mode sets.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum LineWhat {
    /// A reading (Ze when the circuit is empty).
    Value(Field),
    /// A recorded fact: polarity, the insulation test voltage, the RCD's test button.
    Fact(Fact),
    /// The device fitted, recorded as a device change when it differs from the register.
    Device,
    /// The cable fitted, as live/cpc, recorded as a cable replacement when it differs.
    Cable,
    /// A circuit the register does not have, to be added: the value is what it supplies, and
    /// two more fields may give its device and its RCD's IΔn (`Line::added`).
    Add,
}

/// A circuit to add, as a line of the non-interactive mode gives it: what the interactive
/// session asks for one (what it supplies, the device, the RCD), each optional.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct NewCircuit {
    pub description: Option<String>,
    pub device: Option<Device>,
    pub rcd_ma: Option<u16>,
}

/// The rated residual current of the RCD protecting a circuit, as typed: whole mA with an
/// optional `mA`; empty means none.
pub fn parse_rcd_ma(text: &str) -> Result<Option<u16>, String> {
    let t = text.trim().trim_end_matches("mA").trim();
    if t.is_empty() {
        return Ok(None);
    }
    match t.parse::<u16>() {
        Ok(ma) if ma > 0 => Ok(Some(ma)),
        _ => Err(format!(
            "{:?} is not a rated residual current: expected whole mA, e.g. 30",
            text.trim()
        )),
    }
}

/// One `board,circuit,quantity,value` line.
#[derive(Debug, Clone, PartialEq)]
pub struct Line {
    pub number: usize,
    pub board: String,
    /// Empty for a board reading (Ze).
    pub circuit: Option<String>,
    pub what: LineWhat,
    pub value: String,
    /// The circuit to add, for an `add` line.
    pub added: Option<NewCircuit>,
}

/// A line that could not be read; the message names the line and what is expected.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[error("line {line}: {message}")]
pub struct LineError {
    pub line: usize,
    pub message: String,
}

/// Quantity names a line may carry: the visit-file columns, `device`, `cable` and `add`.
pub fn line_quantities() -> Vec<&'static str> {
    std::iter::once(Field::Ze)
        .chain(Field::CIRCUIT)
        .map(|f| f.column())
        .chain(Fact::ALL.map(Fact::column))
        .chain(["device", "cable", "add"])
        .collect()
}

/// Read one line's fields (already split as CSV). Returns `None` for a blank line, a comment
/// (`#`) or the header `board,circuit,quantity,value`.
pub fn parse_line(number: usize, fields: &[&str]) -> Result<Option<Line>, LineError> {
    let err = |message: String| LineError {
        line: number,
        message,
    };
    let all_empty = fields.iter().all(|f| f.trim().is_empty());
    if all_empty
        || fields
            .first()
            .is_some_and(|f| f.trim_start().starts_with('#'))
    {
        return Ok(None);
    }
    let lower: Vec<String> = fields
        .iter()
        .map(|f| f.trim().to_ascii_lowercase())
        .collect();
    if lower == ["board", "circuit", "quantity", "value"] {
        return Ok(None);
    }
    let adding = lower.get(2).is_some_and(|q| q == "add");
    if adding && !(4..=6).contains(&fields.len()) {
        return Err(err(format!(
            "{} fields: expected 4 to 6, board,circuit,add,description[,device[,rcd_ma]]",
            fields.len()
        )));
    }
    if !adding && fields.len() != 4 {
        return Err(err(format!(
            "{} fields: expected 4, board,circuit,quantity,value",
            fields.len()
        )));
    }
    // As import refuses them in a cell: echoed or stored, an escape sequence would act on the
    // terminal.
    for (name, text) in ["board", "circuit", "quantity", "value", "device", "rcd_ma"]
        .iter()
        .zip(fields)
    {
        crate::model::check_text(&format!("the {name}"), text).map_err(err)?;
    }
    let board = fields[0].trim();
    if board.is_empty() {
        return Err(err(
            "the board is empty: expected its designation, e.g. DB1".into(),
        ));
    }
    let circuit = Some(fields[1].trim()).filter(|c| !c.is_empty());
    let q = lower[2].as_str();
    let what = match q {
        "device" => LineWhat::Device,
        "cable" => LineWhat::Cable,
        "add" => LineWhat::Add,
        _ if let Some(f) = Fact::ALL.into_iter().find(|f| f.column() == q) => LineWhat::Fact(f),
        _ => match Field::from_column(q) {
            Some(f) => LineWhat::Value(f),
            None => {
                return Err(err(format!(
                    "unknown quantity {:?}: expected one of {}",
                    fields[2].trim(),
                    line_quantities().join(", ")
                )));
            }
        },
    };
    match (what, circuit) {
        (LineWhat::Value(Field::Ze), Some(c)) => {
            return Err(err(format!(
                "{q} is a board reading: leave the circuit empty (found {c:?})"
            )));
        }
        (LineWhat::Value(Field::Ze), None) => {}
        (_, None) => {
            return Err(err(format!(
                "the circuit is empty: {q} needs a circuit number"
            )));
        }
        _ => {}
    }
    let added = if what == LineWhat::Add {
        let device = match fields.get(4).map(|d| d.trim()).filter(|d| !d.is_empty()) {
            None => None,
            Some(d) => Some(
                d.parse::<Device>()
                    .map_err(|e| err(format!("the device {d:?}: {e}")))?,
            ),
        };
        let rcd_ma = parse_rcd_ma(fields.get(5).copied().unwrap_or(""))
            .map_err(|e| err(format!("the RCD: {e}")))?;
        Some(NewCircuit {
            description: Some(fields[3].trim().to_string()).filter(|d| !d.is_empty()),
            device,
            rcd_ma,
        })
    } else {
        None
    };
    Ok(Some(Line {
        number,
        board: board.to_string(),
        circuit: circuit.map(String::from),
        what,
        value: fields[3].to_string(),
        added,
    }))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn lines_are_read_or_refused_with_the_line_number() {
        assert_eq!(
            parse_line(1, &["board", "circuit", "quantity", "value"]),
            Ok(None)
        );
        assert_eq!(parse_line(2, &[""]), Ok(None));
        assert_eq!(parse_line(3, &["# a comment"]), Ok(None));
        let l = parse_line(4, &["DB1", "3", "r1r2_ohm", "0.47"])
            .unwrap()
            .unwrap();
        assert_eq!(l.what, LineWhat::Value(Field::R1r2));
        assert_eq!(l.circuit.as_deref(), Some("3"));
        let z = parse_line(5, &["DB1", "", "ZE_OHM", "0.21"])
            .unwrap()
            .unwrap();
        assert_eq!(z.circuit, None);
        // The short name the worklist uses reads as the column does.
        let short = parse_line(6, &["DB1", "3", "R1R2", "0.47"])
            .unwrap()
            .unwrap();
        assert_eq!(short.what, LineWhat::Value(Field::R1r2));
        let e = parse_line(6, &["DB1", "3", "r1r2x", "0.47"]).unwrap_err();
        assert!(
            e.to_string()
                .starts_with("line 6: unknown quantity \"r1r2x\""),
            "{e}"
        );
        assert!(parse_line(7, &["DB1", "3", "r1r2_ohm"]).is_err());
        assert!(parse_line(8, &["DB1", "3", "ze_ohm", "0.2"]).is_err());
        assert!(parse_line(9, &["DB1", "", "zs_ohm", "0.2"]).is_err());
    }

    #[test]
    fn an_add_line_gives_a_circuit_as_the_prompts_ask_for_one() {
        let l = parse_line(
            3,
            &["DB1", "7", "add", "Sockets, garage", "RCBO B20", "30mA"],
        )
        .unwrap()
        .unwrap();
        assert_eq!(l.what, LineWhat::Add);
        let n = l.added.unwrap();
        assert_eq!(n.description.as_deref(), Some("Sockets, garage"));
        assert_eq!(n.device.unwrap().to_string(), "RCBO B20");
        assert_eq!(n.rcd_ma, Some(30));
        // Device and RCD may be left out, or left empty.
        let bare = parse_line(4, &["DB1", "8", "ADD", ""]).unwrap().unwrap();
        assert_eq!(bare.added, Some(NewCircuit::default()));
        let e = parse_line(5, &["DB1", "9", "add", "Lights", "B77"]).unwrap_err();
        assert!(
            e.to_string().starts_with("line 5: the device \"B77\""),
            "{e}"
        );
        let e = parse_line(6, &["DB1", "9", "add", "Lights", "B6", "thirty"]).unwrap_err();
        assert!(
            e.to_string().contains("not a rated residual current"),
            "{e}"
        );
        assert!(parse_line(7, &["DB1", "", "add", "Lights"]).is_err());
        assert!(parse_line(8, &["DB1", "9", "add", "a", "B6", "30", "x"]).is_err());
        // Other quantities still take exactly four fields.
        assert!(parse_line(9, &["DB1", "9", "r1r2_ohm", "0.4", "B6"]).is_err());
    }

    #[test]
    fn control_characters_are_refused_with_field_and_offset() {
        for (fields, message) in [
            (
                ["DB1\u{1b}[2J", "3", "r1r2_ohm", "0.47"],
                "line 4: the board has control character U+001B at offset 3: remove it",
            ),
            (
                ["DB1", "3\0", "r1r2_ohm", "0.47"],
                "line 4: the circuit has control character U+0000 at offset 1: remove it",
            ),
            (
                ["DB1", "3", "r1r2_ohm", "0.4\u{8}7"],
                "line 4: the value has control character U+0008 at offset 3: remove it",
            ),
            (
                ["DB1", "3", "device", " B20\u{7f}"],
                "line 4: the value has control character U+007F at offset 4: remove it",
            ),
        ] {
            assert_eq!(
                parse_line(4, &fields).unwrap_err().to_string(),
                message,
                "{fields:?}"
            );
        }
        // A tab is white space, not a control that acts on a terminal.
        assert!(parse_line(4, &["DB1", "3", "r1r2_ohm", "0.47\t"]).is_ok());
    }

    #[test]
    fn fitted_device_and_cable() {
        assert_eq!(parse_fitted(""), Ok(Fitted::default()));
        let f = parse_fitted("B20 2.5/1.5").unwrap();
        assert_eq!(f.device.unwrap().to_string(), "B20");
        assert_eq!(f.cable, Some((2.5, 1.5)));
        assert_eq!(parse_fitted("4/1.5mm²").unwrap().cable, Some((4.0, 1.5)));
        assert!(matches!(
            parse_fitted("Q99"),
            Err(FittedError::Device { .. })
        ));
        assert!(matches!(
            parse_fitted("2.5/x"),
            Err(FittedError::Cable { .. })
        ));
        assert!(matches!(
            parse_fitted("0/1.5"),
            Err(FittedError::Cable { .. })
        ));
    }
}
