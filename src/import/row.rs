//! A header and the rows under it, read into typed values. Pure, like [`super::cell`].

use chrono::NaiveDate;

use super::cell::{Cell, CellError, Column, ParseOptions, parse_cell};
use crate::model::{
    CircuitKind, Device, Earthing, Insulation, Megohms, ObservationCode, RcdDelay, RcdType,
    Readings, RefMethod, SupplyRecord, VisitReport,
};

/// The two kinds of file, told apart by their header.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "snake_case")]
pub enum FileKind {
    /// One row per circuit per visit.
    Visits,
    /// One row per observation: the header has a `code` column.
    Observations,
}

/// A refused field: its 1-based column number, the column's name where known, and why.
#[derive(Debug, Clone, PartialEq)]
pub struct FieldError {
    pub column: usize,
    pub name: Option<String>,
    pub message: String,
}

impl FieldError {
    fn new(column: usize, name: Option<&str>, message: impl Into<String>) -> FieldError {
        FieldError {
            column,
            name: name.map(String::from),
            message: message.into(),
        }
    }
}

/// The columns of a file, in file order. `None` marks an unknown column being ignored.
#[derive(Debug, Clone, PartialEq)]
pub struct Header {
    pub kind: FileKind,
    pub columns: Vec<Option<Column>>,
}

impl Header {
    /// The 1-based position of a column, if the file has it.
    pub fn position(&self, c: Column) -> Option<usize> {
        self.columns
            .iter()
            .position(|x| *x == Some(c))
            .map(|i| i + 1)
    }

    pub fn has(&self, c: Column) -> bool {
        self.position(c).is_some()
    }

    pub fn len(&self) -> usize {
        self.columns.len()
    }

    pub fn is_empty(&self) -> bool {
        self.columns.is_empty()
    }
}

/// Read a header row. Names are case-insensitive and may be in any order; an unknown name is
/// an error (probably a typo) unless `ignore_unknown`.
pub fn parse_header(names: &[&str], ignore_unknown: bool) -> Result<Header, Vec<FieldError>> {
    let kind = if names
        .iter()
        .any(|n| Column::from_name(n) == Some(Column::Code))
    {
        FileKind::Observations
    } else {
        FileKind::Visits
    };
    let (allowed, required): (&[Column], &[Column]) = match kind {
        FileKind::Visits => (&Column::VISIT, &Column::VISIT_REQUIRED),
        FileKind::Observations => (&Column::OBSERVATION, &Column::OBSERVATION_REQUIRED),
    };
    let mut errors = Vec::new();
    let mut suggested: Vec<&str> = Vec::new();
    let mut columns: Vec<Option<Column>> = Vec::with_capacity(names.len());
    for (i, raw) in names.iter().enumerate() {
        let n = i + 1;
        match Column::from_name(raw) {
            Some(c) if allowed.contains(&c) => {
                if let Some(first) = columns.iter().position(|x| *x == Some(c)) {
                    errors.push(FieldError::new(
                        n,
                        Some(c.name()),
                        format!("duplicated column: already given as column {}", first + 1),
                    ));
                }
                columns.push(Some(c));
            }
            Some(c) if !ignore_unknown => {
                errors.push(FieldError::new(
                    n,
                    None,
                    format!(
                        "column {} does not belong in an observation file (it has a code column): split readings and observations into two files, or pass --ignore-unknown",
                        c.name()
                    ),
                ));
                columns.push(None);
            }
            None if !ignore_unknown => {
                let hint = match suggest(raw, allowed) {
                    Some(s) => {
                        suggested.push(s);
                        format!("did you mean {s}?")
                    }
                    None => format!(
                        "expected one of {}",
                        allowed
                            .iter()
                            .map(|c| c.name())
                            .collect::<Vec<_>>()
                            .join(", ")
                    ),
                };
                let what = if raw.trim().is_empty() {
                    "unnamed column".to_string()
                } else if raw.chars().count() > SHOWN_NAME_CHARS {
                    // A name this long is shown by its start, so the message stays one line.
                    let start: String = raw.chars().take(SHOWN_NAME_CHARS).collect();
                    format!("unknown column {start:?}… ({} bytes long)", raw.len())
                } else {
                    format!("unknown column {raw:?}")
                };
                errors.push(FieldError::new(
                    n,
                    None,
                    format!("{what}: {hint} (or pass --ignore-unknown)"),
                ));
                columns.push(None);
            }
            _ => columns.push(None),
        }
    }
    for r in required {
        // A misspelt required column is already reported, with the right name.
        if !columns.contains(&Some(*r)) && !suggested.contains(&r.name()) {
            let what = match kind {
                FileKind::Visits => "a visit file",
                FileKind::Observations => "an observation file",
            };
            errors.push(FieldError::new(
                1,
                None,
                format!("missing required column {}: {what} needs {}", r.name(), {
                    required
                        .iter()
                        .map(|c| c.name())
                        .collect::<Vec<_>>()
                        .join(", ")
                }),
            ));
        }
    }
    if errors.is_empty() {
        Ok(Header { kind, columns })
    } else {
        Err(errors)
    }
}

/// Unknown column names longer than this are shown by their start.
const SHOWN_NAME_CHARS: usize = 60;

/// The most edits a suggestion may be away from the name given.
const SUGGEST_EDITS: usize = 3;

/// The nearest known column name to a mistyped one, if it is close.
fn suggest(raw: &str, allowed: &[Column]) -> Option<&'static str> {
    // The edit distance is at least the difference in length, so a name much longer than
    // every known one has no suggestion, and is not compared letter by letter.
    let longest = allowed.iter().map(|c| c.name().len()).max().unwrap_or(0);
    if raw.trim().chars().count() > longest + SUGGEST_EDITS {
        return None;
    }
    let n = raw
        .trim()
        .to_ascii_lowercase()
        .replace([' ', '-', '+'], "_");
    allowed
        .iter()
        .map(|c| (edit_distance(&n, c.name()), c.name()))
        .filter(|(d, _)| *d <= SUGGEST_EDITS)
        .min()
        .map(|(_, name)| name)
}

fn edit_distance(a: &str, b: &str) -> usize {
    let b: Vec<char> = b.chars().collect();
    let mut prev: Vec<usize> = (0..=b.len()).collect();
    for (i, ca) in a.chars().enumerate() {
        let mut cur = vec![i + 1];
        for (j, cb) in b.iter().enumerate() {
            let sub = prev[j] + usize::from(ca != *cb);
            cur.push(sub.min(prev[j + 1] + 1).min(cur[j] + 1));
        }
        prev = cur;
    }
    prev[b.len()]
}

/// A circuit's register details as one row gives them; `None` where the row does not say.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct RowRegister {
    pub description: Option<String>,
    pub kind: Option<CircuitKind>,
    pub device: Option<Device>,
    pub rcd_ma: Option<u16>,
    pub rcd_type: Option<RcdType>,
    pub rcd_delay: Option<RcdDelay>,
    pub live_mm2: Option<f64>,
    pub cpc_mm2: Option<f64>,
    pub length_m: Option<f64>,
    pub insulation: Option<Insulation>,
    pub wiring_type: Option<String>,
    pub ref_method: Option<RefMethod>,
    pub points: Option<u32>,
    pub breaking_ka: Option<f64>,
    pub afdd: Option<bool>,
    pub rcd_id: Option<String>,
}

/// What a row says about its board at the visit: the board feeding it, and Zdb, the
/// sub-main's R1+R2 and the prospective fault current measured there.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct RowBoard {
    pub fed_from: Option<String>,
    pub zdb_ohm: Option<f64>,
    pub submain_r1r2_ohm: Option<f64>,
    pub pfc_ka: Option<f64>,
}

/// One row of a visit file.
#[derive(Debug, Clone, PartialEq)]
pub struct VisitRow {
    pub property_ref: String,
    pub address: Option<String>,
    pub board: String,
    pub earthing: Option<Earthing>,
    pub circuit: String,
    pub register: RowRegister,
    pub visit_date: NaiveDate,
    pub inspector: Option<String>,
    pub instrument: Option<String>,
    pub ambient_c: Option<f64>,
    pub ze_ohm: Option<f64>,
    pub board_test: RowBoard,
    /// The visit's report as recorded, and its supply characteristics and main bonding.
    pub report: VisitReport,
    pub supply: SupplyRecord,
    pub readings: Readings,
}

/// One row of an observation file.
#[derive(Debug, Clone, PartialEq)]
pub struct ObservationRow {
    pub property_ref: String,
    pub visit_date: NaiveDate,
    pub board: Option<String>,
    pub circuit: Option<String>,
    pub code: ObservationCode,
    pub text: String,
}

/// Whether every field of a row is blank: spreadsheets leave such rows at the end.
pub fn is_blank(fields: &[&[u8]]) -> bool {
    fields.iter().all(|f| f.iter().all(u8::is_ascii_whitespace))
}

/// Decode and parse each field; `Err` holds every fault in the row.
fn cells(
    header: &Header,
    fields: &[&[u8]],
    opts: &ParseOptions,
    optional: &[Column],
) -> Result<Vec<(Column, Cell)>, Vec<FieldError>> {
    if fields.len() != header.len() {
        let column = fields.len().min(header.len()) + 1;
        return Err(vec![FieldError::new(
            column,
            None,
            format!(
                "row has {} fields but the header has {}: check for a missing or extra comma, or quote a value that contains one",
                fields.len(),
                header.len()
            ),
        )]);
    }
    let mut out = Vec::with_capacity(fields.len());
    let mut errors = Vec::new();
    for (i, (col, bytes)) in header.columns.iter().zip(fields).enumerate() {
        let Some(col) = *col else { continue };
        let text = match std::str::from_utf8(bytes) {
            Ok(t) => t,
            Err(e) => {
                let at = e.valid_up_to();
                errors.push(FieldError::new(
                    i + 1,
                    Some(col.name()),
                    format!(
                        "not UTF-8 text (byte 0x{:02X} at offset {at} in the cell): save the file as UTF-8",
                        bytes[at]
                    ),
                ));
                continue;
            }
        };
        match parse_cell(col, text, opts) {
            Ok(c) => out.push((col, c)),
            Err(CellError::MissingKey | CellError::MarkAsKey(_)) if optional.contains(&col) => {
                out.push((col, Cell::Missing))
            }
            Err(e) => errors.push(cell_error(i + 1, col, &e)),
        }
    }
    if errors.is_empty() {
        Ok(out)
    } else {
        Err(errors)
    }
}

fn cell_error(column: usize, col: Column, e: &CellError) -> FieldError {
    FieldError::new(column, Some(col.name()), e.to_string())
}

/// Read one row of a visit file.
pub fn parse_visit_row(
    header: &Header,
    fields: &[&[u8]],
    opts: &ParseOptions,
) -> Result<VisitRow, Vec<FieldError>> {
    let cells = cells(header, fields, opts, &[])?;
    let mut row = VisitRow {
        property_ref: String::new(),
        address: None,
        board: String::new(),
        earthing: None,
        circuit: String::new(),
        register: RowRegister::default(),
        visit_date: NaiveDate::MIN,
        inspector: None,
        instrument: None,
        ambient_c: None,
        ze_ohm: None,
        board_test: RowBoard::default(),
        report: VisitReport::default(),
        supply: SupplyRecord::default(),
        readings: Readings::default(),
    };
    let mut limitations: Vec<Column> = Vec::new();
    // A delay written in the type column ("A S"), checked against the rcd_delay column.
    let mut marked_delay = None;
    for (col, cell) in cells {
        if cell == Cell::Limitation {
            limitations.push(col);
            continue;
        }
        let text = || match &cell {
            Cell::Text(t) => Some(t.clone()),
            _ => None,
        };
        let num = match cell {
            Cell::Number(v) => Some(v),
            _ => None,
        };
        let mohm = match cell {
            Cell::Number(v) => Some(Megohms {
                value: v,
                over_range: false,
            }),
            Cell::OverRange(v) => Some(Megohms {
                value: v,
                over_range: true,
            }),
            _ => None,
        };
        let r = &mut row.readings;
        match col {
            Column::PropertyRef => row.property_ref = text().unwrap_or_default(),
            Column::Board => row.board = text().unwrap_or_default(),
            Column::Circuit => row.circuit = text().unwrap_or_default(),
            Column::Address => row.address = text(),
            Column::Description => row.register.description = text(),
            Column::Inspector => row.inspector = text(),
            Column::Instrument => row.instrument = text().map(|t| t.trim().to_string()),
            Column::Note => r.note = text(),
            Column::VisitDate => {
                if let Cell::Date(d) = cell {
                    row.visit_date = d;
                }
            }
            Column::Earthing => {
                if let Cell::Earthing(e) = cell {
                    row.earthing = Some(e);
                }
            }
            Column::Ring => {
                if let Cell::Ring(k) = cell {
                    row.register.kind = Some(k);
                }
            }
            Column::Device => {
                if let Cell::Device(d) = cell {
                    row.register.device = Some(d);
                }
            }
            Column::RcdMa => {
                if let Cell::RcdMa(v) = cell {
                    row.register.rcd_ma = Some(v);
                }
            }
            Column::RcdType => {
                if let Cell::RcdType(m) = cell {
                    row.register.rcd_type = m.waveform;
                    marked_delay = m.delay;
                }
            }
            Column::RcdDelay => {
                if let Cell::RcdDelay(d) = cell {
                    row.register.rcd_delay = Some(d);
                }
            }
            Column::LiveMm2 => row.register.live_mm2 = num,
            Column::CpcMm2 => row.register.cpc_mm2 = num,
            Column::LengthM => row.register.length_m = num,
            Column::AmbientC => row.ambient_c = num,
            Column::ZeOhm => row.ze_ohm = num,
            Column::RingR1Ohm => r.ring_r1_ohm = num,
            Column::RingRnOhm => r.ring_rn_ohm = num,
            Column::RingR2Ohm => r.ring_r2_ohm = num,
            Column::R1r2Ohm => r.r1r2_ohm = num,
            Column::R2Ohm => r.r2_ohm = num,
            Column::R1rnOhm => r.r1rn_ohm = num,
            Column::ZsOhm => r.zs_ohm = num,
            Column::IrLlMohm => r.ir_ll = mohm,
            Column::IrLeMohm => r.ir_le = mohm,
            Column::RcdMs => r.rcd_ms = num,
            Column::Rcd5xMs => r.rcd_5x_ms = num,
            Column::Insulation => {
                if let Cell::Insulation(i) = cell {
                    row.register.insulation = Some(i);
                }
            }
            Column::WiringType => row.register.wiring_type = text(),
            Column::RcdId => row.register.rcd_id = text(),
            Column::RefMethod => {
                if let Cell::RefMethod(m) = cell {
                    row.register.ref_method = Some(m);
                }
            }
            Column::Points => {
                if let Cell::Count(n) = cell {
                    row.register.points = Some(n);
                }
            }
            Column::BreakingKa => row.register.breaking_ka = num,
            Column::Afdd => {
                if let Cell::YesNo(a) = cell {
                    row.register.afdd = Some(a);
                }
            }
            Column::Polarity => {
                if let Cell::Polarity(p) = cell {
                    r.polarity = Some(p);
                }
            }
            Column::IrTestV => {
                if let Cell::Volts(v) = cell {
                    r.ir_test_v = Some(v);
                }
            }
            Column::RcdButton => {
                if let Cell::Button(b) = cell {
                    r.rcd_button = Some(b);
                }
            }
            Column::FedFrom => row.board_test.fed_from = text().map(|t| t.trim().to_string()),
            Column::ZdbOhm => row.board_test.zdb_ohm = num,
            Column::SubmainR1r2Ohm => row.board_test.submain_r1r2_ohm = num,
            Column::PfcKa => row.board_test.pfc_ka = num,
            Column::U0V => row.supply.u0_v = num,
            Column::RaOhm => row.supply.ra_ohm = num,
            Column::BondingCsaMm2 => row.supply.bonding_csa_mm2 = num,
            Column::BondingWater | Column::BondingGas | Column::BondingOther => {
                if let Cell::Bonding(b) = cell {
                    match col {
                        Column::BondingWater => row.supply.bonding_water = Some(b),
                        Column::BondingGas => row.supply.bonding_gas = Some(b),
                        _ => row.supply.bonding_other = Some(b),
                    }
                }
            }
            Column::ReportRef => row.report.report_ref = text().map(|t| t.trim().to_string()),
            Column::Outcome => row.report.outcome = text(),
            Column::IntervalMonths => {
                if let Cell::Months(m) = cell {
                    row.report.interval_months = Some(m);
                }
            }
            Column::Extent => row.report.extent = text(),
            Column::Limitations => row.report.limitations = text(),
            Column::Code | Column::Text => {}
        }
    }
    if let Some(f) = &row.board_test.fed_from
        && f.eq_ignore_ascii_case(&row.board)
    {
        return Err(vec![FieldError::new(
            header.position(Column::FedFrom).unwrap_or(1),
            Some("fed_from"),
            format!(
                "board {} cannot be fed from itself: expected the designation of the board feeding it, or empty at the origin",
                row.board
            ),
        )]);
    }
    match (marked_delay, row.register.rcd_delay) {
        (Some(a), Some(b)) if a != b => {
            return Err(vec![FieldError::new(
                header.position(Column::RcdDelay).unwrap_or(1),
                Some("rcd_delay"),
                format!(
                    "the rcd_type column gives the delay {} but rcd_delay gives {}: expected one delay, general or S",
                    a.as_str(),
                    b.as_str()
                ),
            )]);
        }
        (a, b) => row.register.rcd_delay = a.or(b),
    }
    // Canonical order, so the same limitations compare equal whatever the column order.
    limitations.sort();
    row.readings.limitations = limitations.iter().map(|c| c.name().to_string()).collect();
    Ok(row)
}

/// Read one row of an observation file.
pub fn parse_observation_row(
    header: &Header,
    fields: &[&[u8]],
    opts: &ParseOptions,
) -> Result<ObservationRow, Vec<FieldError>> {
    // An observation may be about the whole installation or a whole board.
    let cells = cells(header, fields, opts, &[Column::Board, Column::Circuit])?;
    let mut row = ObservationRow {
        property_ref: String::new(),
        visit_date: NaiveDate::MIN,
        board: None,
        circuit: None,
        code: ObservationCode::FI,
        text: String::new(),
    };
    let mut errors = Vec::new();
    for (col, cell) in cells {
        match (col, cell) {
            (Column::PropertyRef, Cell::Text(t)) => row.property_ref = t,
            (Column::VisitDate, Cell::Date(d)) => row.visit_date = d,
            (Column::Board, Cell::Text(t)) => row.board = Some(t),
            (Column::Circuit, Cell::Text(t)) => row.circuit = Some(t),
            (Column::Code, Cell::Code(c)) => row.code = c,
            (Column::Code, Cell::Missing) => errors.push(FieldError::new(
                header.position(Column::Code).unwrap_or(1),
                Some("code"),
                "missing: expected C1, C2, C3 or FI as recorded",
            )),
            (Column::Text, Cell::Text(t)) => row.text = t,
            (Column::Text, Cell::Missing) => errors.push(FieldError::new(
                header.position(Column::Text).unwrap_or(1),
                Some("text"),
                "missing: every observation needs its text",
            )),
            _ => {}
        }
    }
    if row.circuit.is_some() && row.board.is_none() {
        errors.push(FieldError::new(
            header.position(Column::Circuit).unwrap_or(1),
            Some("circuit"),
            "a circuit needs its board: fill in the board column",
        ));
    }
    if errors.is_empty() {
        Ok(row)
    } else {
        Err(errors)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn opts() -> ParseOptions {
        ParseOptions {
            decimal_comma: false,
            today: NaiveDate::from_ymd_opt(2025, 7, 1).unwrap(),
        }
    }

    fn bytes<'a>(v: &'a [&'a str]) -> Vec<&'a [u8]> {
        v.iter().map(|s| s.as_bytes()).collect()
    }

    #[test]
    fn header_any_order_any_case() {
        let h = parse_header(
            &["Visit_Date", " CIRCUIT ", "board", "property_ref", "zs_ohm"],
            false,
        )
        .unwrap();
        assert_eq!(h.kind, FileKind::Visits);
        assert_eq!(h.position(Column::Circuit), Some(2));
    }

    #[test]
    fn header_faults() {
        let e = parse_header(
            &["property_ref", "board", "circuit", "visit date", "board"],
            false,
        )
        .unwrap_err();
        assert_eq!(e[0].column, 4);
        assert_eq!(
            e[0].message,
            "unknown column \"visit date\": did you mean visit_date? (or pass --ignore-unknown)"
        );
        assert_eq!(e[1].column, 5);
        assert_eq!(e[1].message, "duplicated column: already given as column 2");
        // The misspelt visit_date is reported once, not again as missing.
        assert_eq!(e.len(), 2);
        let e = parse_header(&["property_ref", "board", "circuit"], false).unwrap_err();
        assert!(
            e[0].message
                .starts_with("missing required column visit_date")
        );
        let h = parse_header(
            &["property_ref", "board", "circuit", "visit_date", "colour"],
            true,
        )
        .unwrap();
        assert_eq!(h.columns[4], None);
    }

    #[test]
    fn observation_header_is_told_apart() {
        let h = parse_header(&["property_ref", "visit_date", "code", "text"], false).unwrap();
        assert_eq!(h.kind, FileKind::Observations);
    }

    #[test]
    fn a_row_reads_into_values() {
        let h = parse_header(
            &[
                "property_ref",
                "board",
                "circuit",
                "visit_date",
                "device",
                "ir_le_mohm",
                "zs_ohm",
                "r1r2_ohm",
            ],
            false,
        )
        .unwrap();
        let row = parse_visit_row(
            &h,
            &bytes(&["S1", "DB1", "3", "14/06/2025", "B32", ">200", "LIM", "0.4"]),
            &opts(),
        )
        .unwrap();
        assert_eq!(row.register.device.unwrap().to_string(), "B32");
        assert_eq!(
            row.readings.ir_le,
            Some(Megohms {
                value: 200.0,
                over_range: true
            })
        );
        assert_eq!(row.readings.limitations, vec!["zs_ohm".to_string()]);
        assert_eq!(row.readings.r1r2_ohm, Some(0.4));
    }

    #[test]
    fn an_rcd_marking_reads_into_type_and_delay_and_two_delays_are_refused() {
        // BS EN 61008-1 / 61009-1 mark the waveform type and the delay S apart.
        use crate::model::{RcdDelay, RcdType};
        let h = parse_header(
            &[
                "property_ref",
                "board",
                "circuit",
                "visit_date",
                "rcd_ma",
                "rcd_type",
                "rcd_delay",
            ],
            false,
        )
        .unwrap();
        let read = |t: &str, d: &str| {
            parse_visit_row(
                &h,
                &bytes(&["S1", "DB1", "3", "14/06/2025", "100", t, d]),
                &opts(),
            )
        };
        let both = |t: &str, d: &str| {
            let r = read(t, d).unwrap().register;
            (r.rcd_type, r.rcd_delay)
        };
        assert_eq!(both("A S", ""), (Some(RcdType::A), Some(RcdDelay::S)));
        assert_eq!(both("A", "S"), (Some(RcdType::A), Some(RcdDelay::S)));
        assert_eq!(both("A-S", "s"), (Some(RcdType::A), Some(RcdDelay::S)));
        assert_eq!(both("S", ""), (None, Some(RcdDelay::S)));
        assert_eq!(
            both("F", "general"),
            (Some(RcdType::F), Some(RcdDelay::General))
        );
        let e = read("A S", "general").unwrap_err();
        assert_eq!(e[0].column, 7);
        assert!(e[0].message.contains("expected one delay, general or S"));
        let e = read("A B", "").unwrap_err();
        assert_eq!(e[0].column, 6);
        assert!(e[0].message.contains("AC, A, F or B"), "{}", e[0].message);
    }

    #[test]
    fn every_fault_in_a_row_is_reported() {
        let h = parse_header(
            &["property_ref", "board", "circuit", "visit_date", "zs_ohm"],
            false,
        )
        .unwrap();
        let e =
            parse_visit_row(&h, &bytes(&["S1", "", "3", "2025-13-01", "-1"]), &opts()).unwrap_err();
        let cols: Vec<usize> = e.iter().map(|f| f.column).collect();
        assert_eq!(cols, vec![2, 4, 5]);
        let ragged = parse_visit_row(&h, &bytes(&["S1", "DB1"]), &opts()).unwrap_err();
        assert_eq!(ragged[0].column, 3);
    }

    #[test]
    fn non_utf8_names_the_byte() {
        let h = parse_header(
            &["property_ref", "board", "circuit", "visit_date", "note"],
            false,
        )
        .unwrap();
        let fields: Vec<&[u8]> = vec![b"S1", b"DB1", b"1", b"2025-01-01", b"caf\xe9"];
        let e = parse_visit_row(&h, &fields, &opts()).unwrap_err();
        assert_eq!(e[0].column, 5);
        assert_eq!(
            e[0].message,
            "not UTF-8 text (byte 0xE9 at offset 3 in the cell): save the file as UTF-8"
        );
    }

    mod properties {
        use super::*;
        use crate::import::cell::format_number;
        use proptest::prelude::*;

        const COLUMNS: [&str; 10] = [
            "property_ref",
            "board",
            "circuit",
            "visit_date",
            "device",
            "r1r2_ohm",
            "zs_ohm",
            "ir_le_mohm",
            "rcd_ms",
            "note",
        ];

        /// One valid row's text, and the values it must read as.
        #[derive(Debug, Clone)]
        struct Written {
            fields: Vec<String>,
            date: NaiveDate,
            r1r2: Option<f64>,
            zs_lim: bool,
            ir: (f64, bool),
            rcd: f64,
        }

        fn written() -> impl Strategy<Value = Written> {
            (
                "[A-Z]{1,3}-[0-9]{1,4}",
                "DB[0-9]",
                "[0-9]{1,2}",
                0i64..20_000,
                prop::sample::select(vec!["B6", "B16", "C32", "D6"]),
                prop::option::of(0.0f64..100.0),
                any::<bool>(),
                (0.0f64..2000.0, any::<bool>()),
                0.0f64..500.0,
                any::<bool>(),
            )
                .prop_map(|(p, b, c, days, dev, r1r2, zs_lim, ir, rcd, uk)| {
                    let date =
                        NaiveDate::from_ymd_opt(1970, 1, 1).unwrap() + chrono::Duration::days(days);
                    let date_text = if uk {
                        date.format("%d/%m/%Y").to_string()
                    } else {
                        date.to_string()
                    };
                    let fields = vec![
                        p,
                        b,
                        c,
                        date_text,
                        dev.to_string(),
                        r1r2.map(format_number).unwrap_or_else(|| "N/A".into()),
                        if zs_lim {
                            "LIM".into()
                        } else {
                            "0.5 Ω".into()
                        },
                        format!("{}{} MΩ", if ir.1 { ">" } else { "" }, format_number(ir.0)),
                        format!("{}ms", format_number(rcd)),
                        "checked, ok".into(),
                    ];
                    Written {
                        fields,
                        date,
                        r1r2,
                        zs_lim,
                        ir,
                        rcd,
                    }
                })
        }

        fn read(order: &[usize], w: &Written) -> Result<VisitRow, Vec<FieldError>> {
            let names: Vec<&str> = order.iter().map(|i| COLUMNS[*i]).collect();
            let header = parse_header(&names, false).unwrap();
            let fields: Vec<&[u8]> = order.iter().map(|i| w.fields[*i].as_bytes()).collect();
            parse_visit_row(&header, &fields, &opts())
        }

        proptest! {
            #[test]
            fn a_valid_row_reads_as_written(w in written()) {
                let order: Vec<usize> = (0..COLUMNS.len()).collect();
                let row = read(&order, &w).unwrap();
                prop_assert_eq!(&row.property_ref, &w.fields[0]);
                prop_assert_eq!(row.visit_date, w.date);
                prop_assert_eq!(row.readings.r1r2_ohm, w.r1r2);
                prop_assert_eq!(row.readings.zs_ohm, if w.zs_lim { None } else { Some(0.5) });
                prop_assert_eq!(row.readings.limitations.is_empty(), !w.zs_lim);
                prop_assert_eq!(
                    row.readings.ir_le,
                    Some(Megohms { value: w.ir.0, over_range: w.ir.1 })
                );
                prop_assert_eq!(row.readings.rcd_ms, Some(w.rcd));
                prop_assert_eq!(row.readings.note.as_deref(), Some("checked, ok"));
            }

            #[test]
            fn column_order_does_not_change_a_row(
                w in written(),
                order in Just((0..COLUMNS.len()).collect::<Vec<usize>>()).prop_shuffle(),
            ) {
                let straight: Vec<usize> = (0..COLUMNS.len()).collect();
                prop_assert_eq!(read(&order, &w), read(&straight, &w));
            }

            #[test]
            fn a_ragged_row_is_refused_at_the_first_missing_or_extra_field(
                w in written(),
                n in 0usize..20,
            ) {
                prop_assume!(n != COLUMNS.len());
                let header = parse_header(&COLUMNS, false).unwrap();
                let fields: Vec<&[u8]> =
                    (0..n).map(|i| w.fields.get(i).map_or(&b"x"[..], |f| f.as_bytes())).collect();
                let e = parse_visit_row(&header, &fields, &opts()).unwrap_err();
                prop_assert_eq!(e.len(), 1);
                prop_assert_eq!(e[0].column, n.min(COLUMNS.len()) + 1);
            }

            #[test]
            fn any_bytes_give_a_row_or_located_one_line_errors(
                fields in prop::collection::vec(prop::collection::vec(any::<u8>(), 0..12), 10),
            ) {
                let header = parse_header(&COLUMNS, false).unwrap();
                let refs: Vec<&[u8]> = fields.iter().map(Vec::as_slice).collect();
                if let Err(e) = parse_visit_row(&header, &refs, &opts()) {
                    prop_assert!(!e.is_empty());
                    for f in e {
                        prop_assert!((1..=COLUMNS.len()).contains(&f.column));
                        prop_assert_eq!(f.name.as_deref(), Some(COLUMNS[f.column - 1]));
                        prop_assert!(!f.message.contains(['\n', '\r']), "{:?}", f.message);
                    }
                }
            }

            #[test]
            fn an_observation_row_never_panics_and_keeps_its_text(
                text in "[ -~]{1,40}",
                fields in prop::collection::vec(prop::collection::vec(any::<u8>(), 0..8), 5),
            ) {
                let names = ["property_ref", "visit_date", "code", "text", "circuit"];
                let header = parse_header(&names, false).unwrap();
                let refs: Vec<&[u8]> = fields.iter().map(Vec::as_slice).collect();
                let _ = parse_observation_row(&header, &refs, &opts());
                let ok: Vec<&[u8]> =
                    vec![b"S1", b"2025-06-14", b"C3", text.as_bytes(), b""];
                match parse_observation_row(&header, &ok, &opts()) {
                    Ok(row) => prop_assert_eq!(row.text, crate::import::cell::unescape(&text)),
                    Err(e) => prop_assert!(text.trim().is_empty() || matches!(text.trim(), "-" | "NA" | "na" | "N/A" | "n/a" | "Na" | "nA"), "{:?}", e),
                }
            }
        }
    }
}
