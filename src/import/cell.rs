//! One cell of a visit file, read as its column says. Pure: no I/O, no clock, no database,
//! so property tests and a fuzz target can call it with any text.

use std::fmt;

use std::borrow::Cow;

use chrono::{Datelike, NaiveDate};

use crate::model::{
    Bonding, ButtonTest, CircuitKind, Device, Earthing, Insulation, MAX_POINTS, ObservationCode,
    Polarity, RcdDelay, RcdMarking, RefMethod, parse_interval_months, validate_breaking_ka,
    validate_code, validate_csa, validate_ir_test_v, validate_length, validate_points,
    validate_rcd_ma, validate_u0,
};

/// Longest cell accepted, in bytes. A longer cell is almost certainly a broken file.
pub const MAX_CELL_BYTES: usize = 10_000;

/// Every column a visit file or an observation file may carry.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub enum Column {
    PropertyRef,
    Address,
    Board,
    Earthing,
    Circuit,
    Description,
    Ring,
    Device,
    RcdMa,
    RcdType,
    RcdDelay,
    LiveMm2,
    CpcMm2,
    LengthM,
    Insulation,
    WiringType,
    RefMethod,
    Points,
    BreakingKa,
    Afdd,
    RcdId,
    VisitDate,
    Inspector,
    Instrument,
    AmbientC,
    ZeOhm,
    RingR1Ohm,
    RingRnOhm,
    RingR2Ohm,
    R1r2Ohm,
    R2Ohm,
    R1rnOhm,
    ZsOhm,
    Polarity,
    IrTestV,
    IrLlMohm,
    IrLeMohm,
    RcdMs,
    Rcd5xMs,
    RcdButton,
    Note,
    Code,
    Text,
    // The board's feed and what was measured at the board (per board and visit).
    FedFrom,
    ZdbOhm,
    SubmainR1r2Ohm,
    PfcKa,
    // The visit's supply characteristics and main bonding, and its report as recorded.
    U0V,
    RaOhm,
    BondingCsaMm2,
    BondingWater,
    BondingGas,
    BondingOther,
    ReportRef,
    Outcome,
    IntervalMonths,
    Extent,
    Limitations,
}

/// How a column's cells are read.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Kind {
    /// A name that identifies a row (property, board, circuit): required, trimmed.
    Key,
    /// Free text kept exactly as written.
    Text,
    Date,
    Celsius,
    Device,
    RcdMa,
    RcdType,
    RcdDelay,
    Mm2,
    Metres,
    Ring,
    Earthing,
    Ohms,
    Megohms,
    Millis,
    Code,
    Insulation,
    RefMethod,
    /// A whole number of things (points).
    Count,
    /// Prospective fault current in kA.
    KiloAmps,
    /// A device's breaking capacity in kA.
    BreakingKa,
    /// yes or no.
    YesNo,
    /// A short code as recorded (a wiring type, an RCD's identifier): trimmed and checked.
    ShortCode,
    Polarity,
    /// An insulation test voltage: 250, 500 or 1000 V.
    TestVolts,
    Button,
    /// A nominal voltage in V.
    Volts,
    /// Main bonding continuity: yes, no or none.
    Bonding,
    /// An inspection interval: months, or years with the unit.
    Interval,
}

impl Column {
    /// Visit-file columns, in the order export writes them.
    pub const VISIT: [Column; 56] = [
        Column::PropertyRef,
        Column::Address,
        Column::Board,
        Column::Earthing,
        Column::FedFrom,
        Column::Circuit,
        Column::Description,
        Column::Ring,
        Column::Device,
        Column::RcdMa,
        Column::RcdType,
        Column::RcdDelay,
        Column::LiveMm2,
        Column::CpcMm2,
        Column::LengthM,
        Column::Insulation,
        Column::WiringType,
        Column::RefMethod,
        Column::Points,
        Column::BreakingKa,
        Column::Afdd,
        Column::RcdId,
        Column::VisitDate,
        Column::Inspector,
        Column::Instrument,
        Column::AmbientC,
        Column::ZeOhm,
        Column::ZdbOhm,
        Column::SubmainR1r2Ohm,
        Column::PfcKa,
        Column::U0V,
        Column::RaOhm,
        Column::BondingCsaMm2,
        Column::BondingWater,
        Column::BondingGas,
        Column::BondingOther,
        Column::ReportRef,
        Column::Outcome,
        Column::IntervalMonths,
        Column::Extent,
        Column::Limitations,
        Column::RingR1Ohm,
        Column::RingRnOhm,
        Column::RingR2Ohm,
        Column::R1r2Ohm,
        Column::R2Ohm,
        Column::R1rnOhm,
        Column::ZsOhm,
        Column::Polarity,
        Column::IrTestV,
        Column::IrLlMohm,
        Column::IrLeMohm,
        Column::RcdMs,
        Column::Rcd5xMs,
        Column::RcdButton,
        Column::Note,
    ];

    /// Observation-file columns, in the order export writes them.
    pub const OBSERVATION: [Column; 6] = [
        Column::PropertyRef,
        Column::VisitDate,
        Column::Board,
        Column::Circuit,
        Column::Code,
        Column::Text,
    ];

    pub const VISIT_REQUIRED: [Column; 4] = [
        Column::PropertyRef,
        Column::Board,
        Column::Circuit,
        Column::VisitDate,
    ];

    pub const OBSERVATION_REQUIRED: [Column; 4] = [
        Column::PropertyRef,
        Column::VisitDate,
        Column::Code,
        Column::Text,
    ];

    pub fn name(self) -> &'static str {
        match self {
            Column::PropertyRef => "property_ref",
            Column::Address => "address",
            Column::Board => "board",
            Column::Earthing => "earthing",
            Column::Circuit => "circuit",
            Column::Description => "description",
            Column::Ring => "ring",
            Column::Device => "device",
            Column::RcdMa => "rcd_ma",
            Column::RcdType => "rcd_type",
            Column::RcdDelay => "rcd_delay",
            Column::LiveMm2 => "live_mm2",
            Column::CpcMm2 => "cpc_mm2",
            Column::LengthM => "length_m",
            Column::Insulation => "insulation",
            Column::WiringType => "wiring_type",
            Column::RefMethod => "ref_method",
            Column::Points => "points",
            Column::BreakingKa => "breaking_ka",
            Column::Afdd => "afdd",
            Column::RcdId => "rcd_id",
            Column::VisitDate => "visit_date",
            Column::Inspector => "inspector",
            Column::Instrument => "instrument",
            Column::AmbientC => "ambient_c",
            Column::ZeOhm => "ze_ohm",
            Column::RingR1Ohm => "ring_r1_ohm",
            Column::RingRnOhm => "ring_rn_ohm",
            Column::RingR2Ohm => "ring_r2_ohm",
            Column::R1r2Ohm => "r1r2_ohm",
            Column::R2Ohm => "r2_ohm",
            Column::R1rnOhm => "r1rn_ohm",
            Column::ZsOhm => "zs_ohm",
            Column::Polarity => "polarity",
            Column::IrTestV => "ir_test_v",
            Column::IrLlMohm => "ir_ll_mohm",
            Column::IrLeMohm => "ir_le_mohm",
            Column::RcdMs => "rcd_ms",
            Column::Rcd5xMs => "rcd_5x_ms",
            Column::RcdButton => "rcd_button",
            Column::Note => "note",
            Column::Code => "code",
            Column::Text => "text",
            Column::FedFrom => "fed_from",
            Column::ZdbOhm => "zdb_ohm",
            Column::SubmainR1r2Ohm => "submain_r1r2_ohm",
            Column::PfcKa => "pfc_ka",
            Column::U0V => "u0_v",
            Column::RaOhm => "ra_ohm",
            Column::BondingCsaMm2 => "bonding_csa_mm2",
            Column::BondingWater => "bonding_water",
            Column::BondingGas => "bonding_gas",
            Column::BondingOther => "bonding_other",
            Column::ReportRef => "report_ref",
            Column::Outcome => "outcome",
            Column::IntervalMonths => "interval_months",
            Column::Extent => "extent",
            Column::Limitations => "limitations",
        }
    }

    /// The column with this header name: case-insensitive, surrounding spaces ignored.
    pub fn from_name(name: &str) -> Option<Column> {
        let n = name.trim().to_ascii_lowercase();
        Column::VISIT
            .iter()
            .chain(Column::OBSERVATION.iter())
            .copied()
            .find(|c| c.name() == n)
    }

    pub fn kind(self) -> Kind {
        match self {
            Column::PropertyRef | Column::Board | Column::Circuit => Kind::Key,
            Column::Address
            | Column::Description
            | Column::Inspector
            | Column::Instrument
            | Column::Note
            | Column::Text
            | Column::FedFrom
            | Column::ReportRef
            | Column::Outcome
            | Column::Extent
            | Column::Limitations => Kind::Text,
            Column::PfcKa => Kind::KiloAmps,
            Column::U0V => Kind::Volts,
            Column::BondingWater | Column::BondingGas | Column::BondingOther => Kind::Bonding,
            Column::IntervalMonths => Kind::Interval,
            Column::BondingCsaMm2 => Kind::Mm2,
            Column::VisitDate => Kind::Date,
            Column::AmbientC => Kind::Celsius,
            Column::Device => Kind::Device,
            Column::RcdMa => Kind::RcdMa,
            Column::RcdType => Kind::RcdType,
            Column::RcdDelay => Kind::RcdDelay,
            Column::LiveMm2 | Column::CpcMm2 => Kind::Mm2,
            Column::LengthM => Kind::Metres,
            Column::Ring => Kind::Ring,
            Column::Earthing => Kind::Earthing,
            Column::ZeOhm
            | Column::RingR1Ohm
            | Column::RingRnOhm
            | Column::RingR2Ohm
            | Column::R1r2Ohm
            | Column::R2Ohm
            | Column::R1rnOhm
            | Column::ZsOhm
            | Column::ZdbOhm
            | Column::SubmainR1r2Ohm
            | Column::RaOhm => Kind::Ohms,
            Column::IrLlMohm | Column::IrLeMohm => Kind::Megohms,
            Column::RcdMs | Column::Rcd5xMs => Kind::Millis,
            Column::Code => Kind::Code,
            Column::Insulation => Kind::Insulation,
            Column::WiringType | Column::RcdId => Kind::ShortCode,
            Column::RefMethod => Kind::RefMethod,
            Column::Points => Kind::Count,
            Column::BreakingKa => Kind::BreakingKa,
            Column::Afdd => Kind::YesNo,
            Column::Polarity => Kind::Polarity,
            Column::IrTestV => Kind::TestVolts,
            Column::RcdButton => Kind::Button,
        }
    }

    /// Whether `LIM` (a recorded limitation) is accepted: only for a circuit's measured
    /// quantities (a limitation is kept with the circuit's test record).
    pub fn takes_limitation(self) -> bool {
        matches!(self.kind(), Kind::Ohms | Kind::Megohms | Kind::Millis) && !self.per_visit()
    }

    /// Whether the column is about the board or the visit rather than the row's circuit: its
    /// value must agree on every row of one board (or visit) within a file.
    pub fn per_visit(self) -> bool {
        matches!(
            self,
            Column::FedFrom
                | Column::ZdbOhm
                | Column::SubmainR1r2Ohm
                | Column::PfcKa
                | Column::U0V
                | Column::RaOhm
                | Column::BondingCsaMm2
                | Column::BondingWater
                | Column::BondingGas
                | Column::BondingOther
                | Column::ReportRef
                | Column::Outcome
                | Column::IntervalMonths
                | Column::Extent
                | Column::Limitations
        )
    }
}

impl fmt::Display for Column {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.name())
    }
}

/// Choices that change how a cell is read.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct ParseOptions {
    /// Numbers use a decimal comma (`0,35`) instead of a decimal point.
    pub decimal_comma: bool,
    /// The last date a visit may have; later dates are errors.
    pub today: NaiveDate,
}

/// A cell's value.
#[derive(Debug, Clone, PartialEq)]
pub enum Cell {
    /// Not recorded: empty, `N/A`, `NA` or `-`.
    Missing,
    /// `LIM`: a recorded limitation.
    Limitation,
    Text(String),
    Date(NaiveDate),
    Number(f64),
    /// An over-range reading: at least this value.
    OverRange(f64),
    Device(Device),
    RcdMa(u16),
    RcdType(RcdMarking),
    RcdDelay(RcdDelay),
    Ring(CircuitKind),
    Earthing(Earthing),
    Code(ObservationCode),
    Insulation(Insulation),
    RefMethod(RefMethod),
    Count(u32),
    YesNo(bool),
    Polarity(Polarity),
    Volts(u16),
    Button(ButtonTest),
    Bonding(Bonding),
    /// An inspection interval in months.
    Months(u32),
}

/// Why a cell was refused. Each message quotes the cell and says what was expected.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum CellError {
    #[error("missing: every row needs one")]
    MissingKey,
    #[error("{0:?} is not a name: every row needs one, not a not-recorded mark")]
    MarkAsKey(String),
    #[error("is {0} bytes long: expected at most {MAX_CELL_BYTES}")]
    TooLong(usize),
    #[error(
        "has control character U+{code:04X} at offset {offset} in the cell: remove it (only a tab or a line break may stand in free text)"
    )]
    Control { code: u32, offset: usize },
    #[error("{text:?} is not a number: expected {expected}")]
    NotANumber { text: String, expected: String },
    #[error("{0:?} is not a reading: expected a finite number")]
    NotFinite(String),
    #[error("{0:?} is negative: expected zero or more")]
    Negative(String),
    #[error("{text:?} has unit {unit} but the column is in {expected}")]
    WrongUnit {
        text: String,
        unit: String,
        expected: &'static str,
    },
    #[error("{0:?} has a decimal comma: pass --decimal-comma when the file uses them")]
    DecimalComma(String),
    #[error("{0:?} has a decimal point but --decimal-comma was given: write it as 0,35")]
    DecimalPoint(String),
    #[error(
        "{0:?} is an over-range mark: only insulation resistance (ir_ll_mohm, ir_le_mohm) may be over range"
    )]
    OverRangeNotAllowed(String),
    #[error("LIM (a limitation) applies only to measured readings, not to this column")]
    LimitationNotAllowed,
    #[error(
        "LIM (a limitation) is kept with a circuit's readings, not the board's or the visit's: write the visit's limitations in the limitations column"
    )]
    LimitationOfVisit,
    #[error("{0:?} is not a date: expected YYYY-MM-DD or DD/MM/YYYY")]
    NotADate(String),
    #[error("{0:?} is not a date in the calendar")]
    ImpossibleDate(String),
    #[error(
        "{text:?} reads only month first (US order): write the day first ({day_first}) or as ISO {iso}"
    )]
    MonthFirst {
        text: String,
        day_first: String,
        iso: String,
    },
    #[error("{text:?} has a two-digit year: write all four digits")]
    ShortYear { text: String },
    #[error("{date} is in the future (today is {today})")]
    Future { date: NaiveDate, today: NaiveDate },
    #[error("{0}")]
    Value(String),
}

/// Marks that mean "not recorded".
fn is_missing_mark(t: &str) -> bool {
    t.is_empty() || t == "-" || t.eq_ignore_ascii_case("n/a") || t.eq_ignore_ascii_case("na")
}

/// Whether export prefixes this text with `'`: OWASP's formula characters, plus our own
/// escape character and the not-recorded marks, so that [`unescape`] undoes exactly this.
pub fn needs_escape(text: &str) -> bool {
    text.starts_with(['=', '+', '-', '@', '\t', '\r', '\''])
        || is_missing_mark(text.trim())
        || text.trim().eq_ignore_ascii_case("lim")
}

/// Neutralise a cell against spreadsheet formula injection (OWASP CSV injection guidance).
pub fn escape(text: &str) -> String {
    if !text.is_empty() && needs_escape(text) {
        format!("'{text}")
    } else {
        text.to_string()
    }
}

/// Undo [`escape`]: drop a leading `'` only where escape would have added it.
pub fn unescape(text: &str) -> &str {
    match text.strip_prefix('\'') {
        Some(rest) if !rest.is_empty() && needs_escape(rest) => rest,
        _ => text,
    }
}

/// Read one cell of `column`.
pub fn parse_cell(column: Column, text: &str, opts: &ParseOptions) -> Result<Cell, CellError> {
    if text.len() > MAX_CELL_BYTES {
        return Err(CellError::TooLong(text.len()));
    }
    let kind = column.kind();
    // Control characters would be stored, printed raw to a terminal (where an escape sequence
    // acts) and written into HTML, where most are not allowed; free text may keep a tab or a
    // line break, which a quoted cell may hold.
    let allowed = |c: char| kind == Kind::Text && matches!(c, '\t' | '\n' | '\r');
    if let Some((offset, c)) = text
        .char_indices()
        .find(|&(_, c)| c.is_control() && !allowed(c))
    {
        return Err(CellError::Control {
            code: c as u32,
            offset,
        });
    }
    if kind == Kind::Text {
        // Free text keeps its spaces; only a blank cell or a not-recorded mark is missing.
        if is_missing_mark(text.trim()) {
            return Ok(Cell::Missing);
        }
        return Ok(Cell::Text(unescape(text).to_string()));
    }
    if kind == Kind::ShortCode {
        // As free text: a not-recorded mark is missing, and export's quote before a code that
        // would read as one is taken off again.
        let raw = text.trim();
        if is_missing_mark(raw) {
            return Ok(Cell::Missing);
        }
        let t = unescape(raw).trim();
        return validate_code(column.name(), t)
            .map(|()| Cell::Text(t.to_string()))
            .map_err(CellError::Value);
    }
    let t = unescape(text.trim()).trim();
    if kind == Kind::Key {
        if t.is_empty() {
            return Err(CellError::MissingKey);
        }
        if is_missing_mark(t) {
            return Err(CellError::MarkAsKey(t.to_string()));
        }
        if column == Column::Circuit {
            return Ok(Cell::Text(normalise_circuit(t).into_owned()));
        }
        return Ok(Cell::Text(t.to_string()));
    }
    if is_missing_mark(t) {
        return Ok(Cell::Missing);
    }
    if t.eq_ignore_ascii_case("lim") {
        return if column.takes_limitation() {
            Ok(Cell::Limitation)
        } else if column.per_visit() && matches!(kind, Kind::Ohms | Kind::KiloAmps) {
            Err(CellError::LimitationOfVisit)
        } else {
            Err(CellError::LimitationNotAllowed)
        };
    }
    match kind {
        Kind::Key | Kind::Text => unreachable!("handled above"),
        Kind::Date => parse_date(t, opts.today).map(Cell::Date),
        Kind::Device => t
            .parse::<Device>()
            .map(Cell::Device)
            .map_err(|e| CellError::Value(e.to_string())),
        Kind::Ring => t
            .parse::<CircuitKind>()
            .map(Cell::Ring)
            .map_err(CellError::Value),
        Kind::Earthing => t
            .parse::<Earthing>()
            .map(Cell::Earthing)
            .map_err(CellError::Value),
        Kind::RcdType => t
            .parse::<RcdMarking>()
            .map(Cell::RcdType)
            .map_err(CellError::Value),
        Kind::RcdDelay => t
            .parse::<RcdDelay>()
            .map(Cell::RcdDelay)
            .map_err(CellError::Value),
        Kind::Code => t
            .parse::<ObservationCode>()
            .map(Cell::Code)
            .map_err(CellError::Value),
        Kind::Insulation => t
            .parse::<Insulation>()
            .map(Cell::Insulation)
            .map_err(CellError::Value),
        Kind::RefMethod => t
            .parse::<RefMethod>()
            .map(Cell::RefMethod)
            .map_err(CellError::Value),
        Kind::Polarity => t
            .parse::<Polarity>()
            .map(Cell::Polarity)
            .map_err(CellError::Value),
        Kind::Button => t
            .parse::<ButtonTest>()
            .map(Cell::Button)
            .map_err(CellError::Value),
        Kind::YesNo => match t.to_ascii_lowercase().as_str() {
            "yes" | "y" => Ok(Cell::YesNo(true)),
            "no" | "n" => Ok(Cell::YesNo(false)),
            _ => Err(CellError::Value(format!("{t:?} is not yes or no"))),
        },
        Kind::ShortCode => unreachable!("handled above"),
        Kind::Count => {
            if !t.bytes().all(|b| b.is_ascii_digit()) {
                return Err(CellError::NotANumber {
                    text: t.to_string(),
                    expected: "a whole number of points such as 8".into(),
                });
            }
            t.parse::<u32>()
                .map_err(|_| {
                    CellError::Value(format!(
                        "{t:?} is out of range: expected at most {MAX_POINTS}"
                    ))
                })
                .and_then(|n| validate_points(n).map_err(CellError::Value))
                .map(Cell::Count)
        }
        Kind::Bonding => t
            .parse::<Bonding>()
            .map(Cell::Bonding)
            .map_err(CellError::Value),
        Kind::Interval => parse_interval_months(t)
            .map(Cell::Months)
            .map_err(CellError::Value),
        Kind::KiloAmps | Kind::BreakingKa | Kind::Volts | Kind::TestVolts => {
            let unit = if matches!(kind, Kind::KiloAmps | Kind::BreakingKa) {
                Unit::KiloAmps
            } else {
                Unit::Volts
            };
            let n = parse_quantity(t, unit, opts)?;
            if n.negative {
                return Err(CellError::Negative(t.to_string()));
            }
            if n.over {
                return Err(CellError::OverRangeNotAllowed(t.to_string()));
            }
            match kind {
                Kind::BreakingKa => validate_breaking_ka(n.value)
                    .map(Cell::Number)
                    .map_err(CellError::Value),
                Kind::Volts => validate_u0(n.value)
                    .map(Cell::Number)
                    .map_err(CellError::Value),
                Kind::TestVolts => {
                    if n.value.fract() != 0.0 || n.value > f64::from(u16::MAX) {
                        return Err(CellError::Value(format!(
                            "{t:?} is not an insulation test voltage: expected 250, 500 or 1000 V (BS 7671 Table 64)"
                        )));
                    }
                    validate_ir_test_v(n.value as u16)
                        .map(Cell::Volts)
                        .map_err(CellError::Value)
                }
                _ => {
                    if n.value > MAX_KILOAMPS {
                        return Err(CellError::Value(format!(
                            "{t:?} is out of range: expected at most {MAX_KILOAMPS} kA for a prospective fault current"
                        )));
                    }
                    Ok(Cell::Number(n.value))
                }
            }
        }
        Kind::RcdMa => {
            let n = parse_quantity(t, Unit::MilliAmps, opts)?;
            if n.negative {
                return Err(CellError::Negative(t.to_string()));
            }
            if n.over {
                return Err(CellError::OverRangeNotAllowed(t.to_string()));
            }
            if n.value.fract() != 0.0 || n.value > f64::from(u16::MAX) {
                return Err(CellError::Value(format!(
                    "{t:?} is not a rated residual current: expected whole mA such as 30"
                )));
            }
            validate_rcd_ma(n.value as u16)
                .map(Cell::RcdMa)
                .map_err(CellError::Value)
        }
        Kind::Celsius => {
            let n = parse_quantity(t, Unit::Celsius, opts)?;
            if n.over {
                return Err(CellError::OverRangeNotAllowed(t.to_string()));
            }
            if !(-40.0..=60.0).contains(&n.value) {
                return Err(CellError::Value(format!(
                    "ambient temperature {t:?} is out of range: expected -40 to 60 °C"
                )));
            }
            Ok(Cell::Number(n.value))
        }
        Kind::Mm2 | Kind::Metres | Kind::Ohms | Kind::Megohms | Kind::Millis => {
            let unit = match kind {
                Kind::Mm2 => Unit::SquareMm,
                Kind::Metres => Unit::Metres,
                Kind::Ohms => Unit::Ohms,
                Kind::Megohms => Unit::Megohms,
                _ => Unit::Millis,
            };
            let n = parse_quantity(t, unit, opts)?;
            if n.negative {
                return Err(CellError::Negative(t.to_string()));
            }
            let most = match kind {
                Kind::Ohms => Some((MAX_OHMS, "Ω")),
                Kind::Megohms => Some((MAX_MEGOHMS, "MΩ")),
                Kind::Millis => Some((MAX_MILLIS, "ms")),
                _ => None,
            };
            if let Some((most, unit)) = most
                && n.value > most
            {
                return Err(CellError::Value(format!(
                    "{t:?} is out of range: expected at most {most} {unit} for a reading"
                )));
            }
            if n.over {
                return if kind != Kind::Megohms {
                    Err(CellError::OverRangeNotAllowed(t.to_string()))
                } else if n.value <= 0.0 {
                    Err(CellError::Value(format!(
                        "{t:?} is an over-range mark with no range: expected the instrument's top of range, such as >200"
                    )))
                } else {
                    Ok(Cell::OverRange(n.value))
                };
            }
            match kind {
                Kind::Mm2 => validate_csa(column.name(), n.value)
                    .map(Cell::Number)
                    .map_err(CellError::Value),
                Kind::Metres => validate_length(n.value)
                    .map(Cell::Number)
                    .map_err(CellError::Value),
                _ => Ok(Cell::Number(n.value)),
            }
        }
    }
}

/// The units a cell may carry after its number.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Unit {
    Ohms,
    Milliohms,
    Megohms,
    Millis,
    Celsius,
    SquareMm,
    Metres,
    MilliAmps,
    KiloAmps,
    Volts,
}

impl Unit {
    fn plural(self) -> &'static str {
        match self {
            Unit::Ohms => "ohms",
            Unit::Milliohms => "milliohms",
            Unit::Megohms => "megohms (MΩ)",
            Unit::Millis => "milliseconds (ms)",
            Unit::Celsius => "°C",
            Unit::SquareMm => "mm²",
            Unit::Metres => "metres",
            Unit::MilliAmps => "mA",
            Unit::KiloAmps => "kA",
            Unit::Volts => "volts (V)",
        }
    }

    fn example(self) -> &'static str {
        match self {
            Unit::Ohms | Unit::Milliohms => "a resistance in ohms such as 0.35",
            Unit::Megohms => "an insulation resistance in MΩ such as 200 or >200",
            Unit::Millis => "a time in ms such as 25",
            Unit::Celsius => "a temperature in °C such as 18",
            Unit::SquareMm => "a conductor size in mm² such as 2.5",
            Unit::Metres => "a length in metres such as 24",
            Unit::MilliAmps => "a residual current in mA such as 30",
            Unit::KiloAmps => {
                "a current in kA such as 1.6 (a fault current) or 6 (a breaking capacity)"
            }
            Unit::Volts => "a voltage in V such as 230 (U0) or 500 (an insulation test)",
        }
    }
}

/// The unit written after a number, if it is one we know.
fn unit_of(s: &str) -> Option<Unit> {
    // The ohm may be written as GREEK CAPITAL OMEGA or as the OHM SIGN.
    let s = s.replace('\u{2126}', "Ω");
    match s.as_str() {
        "Ω" => return Some(Unit::Ohms),
        "MΩ" => return Some(Unit::Megohms),
        "mΩ" => return Some(Unit::Milliohms),
        "°C" | "℃" | "° C" => return Some(Unit::Celsius),
        "mm²" => return Some(Unit::SquareMm),
        "mA" => return Some(Unit::MilliAmps),
        "kA" => return Some(Unit::KiloAmps),
        "V" => return Some(Unit::Volts),
        _ => {}
    }
    match s.to_ascii_lowercase().as_str() {
        "ohm" | "ohms" => Some(Unit::Ohms),
        "mohm" | "mohms" | "megohm" | "megohms" | "m ohm" | "m ohms" => Some(Unit::Megohms),
        "ms" => Some(Unit::Millis),
        "c" | "degc" => Some(Unit::Celsius),
        "mm2" | "sqmm" => Some(Unit::SquareMm),
        "m" => Some(Unit::Metres),
        "ma" => Some(Unit::MilliAmps),
        "ka" => Some(Unit::KiloAmps),
        "v" | "volt" | "volts" => Some(Unit::Volts),
        _ => None,
    }
}

struct Quantity {
    value: f64,
    over: bool,
    negative: bool,
}

/// A number with an optional `>` before it and an optional unit after it. Exponents, signs
/// other than a leading minus, thousands separators and words such as NaN are refused.
fn parse_quantity(t: &str, unit: Unit, opts: &ParseOptions) -> Result<Quantity, CellError> {
    let not_a_number = || CellError::NotANumber {
        text: t.to_string(),
        expected: unit.example().to_string(),
    };
    let lower = t.to_ascii_lowercase();
    let bare = lower.trim_start_matches(['-', '+', '>']).trim();
    if matches!(bare, "nan" | "inf" | "infinity") {
        return Err(CellError::NotFinite(t.to_string()));
    }
    let mut rest = t;
    let over = if let Some(r) = rest.strip_prefix('>') {
        rest = r.trim_start();
        true
    } else {
        false
    };
    let negative = if let Some(r) = rest.strip_prefix('-') {
        rest = r;
        true
    } else {
        false
    };
    let end = rest
        .find(|c: char| !(c.is_ascii_digit() || c == '.' || c == ','))
        .unwrap_or(rest.len());
    let (digits, suffix) = rest.split_at(end);
    let suffix = suffix.trim();
    if !suffix.is_empty() {
        match unit_of(suffix) {
            Some(u) if u == unit => {}
            Some(_) => {
                return Err(CellError::WrongUnit {
                    text: t.to_string(),
                    unit: suffix.to_string(),
                    expected: unit.plural(),
                });
            }
            None => return Err(not_a_number()),
        }
    }
    let (sep, other) = if opts.decimal_comma {
        (',', '.')
    } else {
        ('.', ',')
    };
    if digits.contains(other) {
        return Err(if opts.decimal_comma {
            CellError::DecimalPoint(t.to_string())
        } else {
            CellError::DecimalComma(t.to_string())
        });
    }
    if digits.matches(sep).count() > 1 || !digits.chars().any(|c| c.is_ascii_digit()) {
        return Err(not_a_number());
    }
    let value: f64 = digits
        .replace(sep, ".")
        .parse()
        .map_err(|_| not_a_number())?;
    if !value.is_finite() {
        return Err(CellError::NotFinite(t.to_string()));
    }
    if negative && over {
        return Err(CellError::Negative(t.to_string()));
    }
    // -0 is not a negative reading.
    let negative = negative && value != 0.0;
    Ok(Quantity {
        value: if negative { -value } else { value },
        over,
        negative,
    })
}

/// A visit date: ISO 8601 or day first. A date that reads only month first, an impossible
/// date, a two-digit year or a date after `today` is an error.
pub fn parse_date(t: &str, today: NaiveDate) -> Result<NaiveDate, CellError> {
    let not_a_date = || CellError::NotADate(t.to_string());
    let parts: Vec<&str> = t.split(['-', '/']).collect();
    let seps: Vec<char> = t.chars().filter(|c| *c == '-' || *c == '/').collect();
    if parts.len() != 3
        || seps[0] != seps[1]
        || parts
            .iter()
            .any(|p| p.is_empty() || p.len() > 4 || !p.bytes().all(|b| b.is_ascii_digit()))
    {
        return Err(not_a_date());
    }
    let num = |s: &str| s.parse::<u32>().map_err(|_| not_a_date());
    let date = if parts[0].len() == 4 {
        // ISO 8601 is always year-month-day, with a hyphen.
        if seps[0] != '-' || parts[1].len() > 2 || parts[2].len() > 2 {
            return Err(not_a_date());
        }
        let (y, m, d) = (num(parts[0])?, num(parts[1])?, num(parts[2])?);
        NaiveDate::from_ymd_opt(y as i32, m, d)
            .ok_or_else(|| CellError::ImpossibleDate(t.to_string()))?
    } else {
        if parts[0].len() > 2 || parts[1].len() > 2 {
            return Err(not_a_date());
        }
        if parts[2].len() != 4 {
            return Err(CellError::ShortYear {
                text: t.to_string(),
            });
        }
        let (d, m, y) = (num(parts[0])?, num(parts[1])?, num(parts[2])? as i32);
        match NaiveDate::from_ymd_opt(y, m, d) {
            Some(date) => date,
            None => {
                if m > 12
                    && let Some(us) = NaiveDate::from_ymd_opt(y, d, m)
                {
                    return Err(CellError::MonthFirst {
                        text: t.to_string(),
                        day_first: format!("{:02}/{:02}/{}", us.day(), us.month(), us.year()),
                        iso: us.to_string(),
                    });
                }
                return Err(CellError::ImpossibleDate(t.to_string()));
            }
        }
    };
    if date > today {
        return Err(CellError::Future { date, today });
    }
    if date < EARLIEST_VISIT {
        return Err(CellError::Value(format!(
            "{t:?} is before {EARLIEST_VISIT}: expected the date of an inspection and test, which no record in use predates"
        )));
    }
    Ok(date)
}

/// A circuit number as stored: a whole number loses its leading zeros and a decimal part of
/// zeros (`01`, `1.0` and `1` are one circuit, as a spreadsheet may write it any of those
/// ways); anything else (`1L2`, `2.1`, `A`) is kept as written.
pub fn normalise_circuit(t: &str) -> Cow<'_, str> {
    let whole = match t.split_once('.') {
        Some((w, frac)) if !frac.is_empty() && frac.bytes().all(|b| b == b'0') => w,
        Some(_) => return Cow::Borrowed(t),
        None => t,
    };
    if whole.is_empty() || !whole.bytes().all(|b| b.is_ascii_digit()) {
        return Cow::Borrowed(t);
    }
    let trimmed = whole.trim_start_matches('0');
    let normal = if trimmed.is_empty() { "0" } else { trimmed };
    if normal == t {
        Cow::Borrowed(t)
    } else {
        Cow::Owned(normal.to_string())
    }
}

/// The earliest visit date read. Recorded periodic inspection and testing of homes is far
/// younger than this; an earlier date is a slip (a year of 1899, or 1, from a spreadsheet's
/// empty date). Common practice, no source.
pub const EARLIEST_VISIT: NaiveDate = match NaiveDate::from_ymd_opt(1950, 1, 1) {
    Some(d) => d,
    None => panic!("a valid date"),
};

/// The largest value read in each unit of reading. Above these the number is not a reading
/// a test instrument gives but a slip (a serial number in the wrong column, digits run
/// together): continuity and loop testers read up to a few kilohms, insulation testers up to
/// some gigohms, RCD testers stop timing within a few seconds. Common practice, no source.
pub const MAX_OHMS: f64 = 2_000.0;
pub const MAX_MEGOHMS: f64 = 10_000.0;
pub const MAX_MILLIS: f64 = 5_000.0;
/// A home's prospective fault current is a few kA (16 kA is the usual rating asked of its
/// devices); 100 kA is far beyond any supply a visit file describes. Common practice, no source.
pub const MAX_KILOAMPS: f64 = 100.0;

/// Text of a number as export writes it: the shortest decimal that reads back the same.
pub fn format_number(v: f64) -> String {
    format!("{v}")
}

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::*;

    fn opts() -> ParseOptions {
        ParseOptions {
            decimal_comma: false,
            today: NaiveDate::from_ymd_opt(2025, 7, 1).unwrap(),
        }
    }

    fn p(c: Column, t: &str) -> Result<Cell, CellError> {
        parse_cell(c, t, &opts())
    }

    #[test]
    fn units_that_match_the_column_are_accepted() {
        for t in [
            "0.35",
            "0.35Ω",
            "0.35 Ω",
            "0.35 ohm",
            "0.35 ohms",
            "0.35 Ohms",
            "0.35\u{2126}",
        ] {
            assert_eq!(p(Column::R1r2Ohm, t), Ok(Cell::Number(0.35)), "{t}");
        }
        for t in ["200 MΩ", "200MΩ", "200 Mohm", "200"] {
            assert_eq!(p(Column::IrLeMohm, t), Ok(Cell::Number(200.0)), "{t}");
        }
        assert_eq!(p(Column::RcdMs, "25ms"), Ok(Cell::Number(25.0)));
        assert_eq!(p(Column::LiveMm2, "2.5 mm²"), Ok(Cell::Number(2.5)));
        assert_eq!(p(Column::RcdMa, "30mA"), Ok(Cell::RcdMa(30)));
    }

    #[test]
    fn units_that_do_not_match_are_errors() {
        assert_eq!(
            p(Column::R1r2Ohm, "0.35 MΩ").unwrap_err().to_string(),
            "\"0.35 MΩ\" has unit MΩ but the column is in ohms"
        );
        assert_eq!(
            p(Column::IrLlMohm, "200 ohm").unwrap_err().to_string(),
            "\"200 ohm\" has unit ohm but the column is in megohms (MΩ)"
        );
        assert!(matches!(
            p(Column::ZsOhm, "25 ms"),
            Err(CellError::WrongUnit { .. })
        ));
        assert!(matches!(
            p(Column::ZsOhm, "350 mΩ"),
            Err(CellError::WrongUnit { .. })
        ));
        assert!(matches!(
            p(Column::ZsOhm, "0.35 kV"),
            Err(CellError::NotANumber { .. })
        ));
        // Volts are a unit (u0_v, ir_test_v), so in an ohm column they are the wrong one.
        assert!(matches!(
            p(Column::ZsOhm, "0.35 V"),
            Err(CellError::WrongUnit { .. })
        ));
    }

    #[test]
    fn the_schedule_columns_read_as_the_trade_writes_them() {
        // BS 7671:2018 Table 64: 250, 500 or 1000 V d.c.; a unit may be written.
        assert_eq!(p(Column::IrTestV, "500"), Ok(Cell::Volts(500)));
        assert_eq!(p(Column::IrTestV, "250 V"), Ok(Cell::Volts(250)));
        assert_eq!(p(Column::IrTestV, "1000v"), Ok(Cell::Volts(1000)));
        for bad in ["400", "500.5", ">500", "-500", "500 ms"] {
            assert!(p(Column::IrTestV, bad).is_err(), "{bad}");
        }
        assert!(
            p(Column::IrTestV, "400")
                .unwrap_err()
                .to_string()
                .contains("250, 500 or 1000")
        );
        // Polarity and the test button: the plain words, or a tick and a cross (common
        // practice, no source).
        assert_eq!(
            p(Column::Polarity, "✓"),
            Ok(Cell::Polarity(Polarity::Correct))
        );
        assert_eq!(
            p(Column::Polarity, " incorrect "),
            Ok(Cell::Polarity(Polarity::Incorrect))
        );
        assert!(p(Column::Polarity, "ok").is_err());
        assert_eq!(
            p(Column::RcdButton, "✗"),
            Ok(Cell::Button(ButtonTest::Failed))
        );
        assert_eq!(p(Column::Polarity, "N/A"), Ok(Cell::Missing));
        // BS 7671 Appendix 4 reference methods (from memory).
        assert_eq!(p(Column::RefMethod, "c"), Ok(Cell::RefMethod(RefMethod::C)));
        assert_eq!(
            p(Column::RefMethod, "103"),
            Ok(Cell::RefMethod(RefMethod::M103))
        );
        assert!(p(Column::RefMethod, "104").is_err());
        assert_eq!(p(Column::Points, "08"), Ok(Cell::Count(8)));
        for bad in ["8.5", "-1", "1000", "eight", "99999999999"] {
            assert!(p(Column::Points, bad).is_err(), "{bad}");
        }
        assert_eq!(p(Column::BreakingKa, "6kA"), Ok(Cell::Number(6.0)));
        assert!(p(Column::BreakingKa, "0").is_err());
        assert!(p(Column::BreakingKa, "6 mA").is_err());
        assert_eq!(p(Column::Afdd, "Yes"), Ok(Cell::YesNo(true)));
        assert!(p(Column::Afdd, "maybe").is_err());
        assert_eq!(
            p(Column::Insulation, "XLPE"),
            Ok(Cell::Insulation(Insulation::Thermosetting90))
        );
        // Short codes are trimmed; a not-recorded mark is missing, export's quote comes off.
        assert_eq!(p(Column::RcdId, " RCD1 "), Ok(Cell::Text("RCD1".into())));
        assert_eq!(p(Column::RcdId, "-"), Ok(Cell::Missing));
        assert_eq!(p(Column::WiringType, "'-"), Ok(Cell::Text("-".into())));
        assert!(p(Column::RcdId, &"R".repeat(41)).is_err());
    }

    #[test]
    fn the_schedule_s_own_cells_read_with_their_units() {
        // Common practice, no source: a schedule writes U0 as 230 V, the prospective fault
        // current in kA, the interval in years or months, bonding continuity as yes / no.
        assert_eq!(p(Column::U0V, "230 V"), Ok(Cell::Number(230.0)));
        assert_eq!(p(Column::U0V, "230"), Ok(Cell::Number(230.0)));
        assert_eq!(p(Column::PfcKa, "1.6kA"), Ok(Cell::Number(1.6)));
        assert_eq!(p(Column::IntervalMonths, "5 years"), Ok(Cell::Months(60)));
        assert_eq!(p(Column::IntervalMonths, "N/A"), Ok(Cell::Missing));
        assert_eq!(
            p(Column::BondingGas, "No"),
            Ok(Cell::Bonding(crate::model::Bonding::No))
        );
        assert_eq!(p(Column::RaOhm, "85 Ω"), Ok(Cell::Number(85.0)));
        assert_eq!(
            p(Column::Outcome, "Unsatisfactory"),
            Ok(Cell::Text("Unsatisfactory".into()))
        );
        assert!(matches!(p(Column::PfcKa, "101"), Err(CellError::Value(_))));
        assert!(matches!(
            p(Column::PfcKa, "1.6 mA"),
            Err(CellError::WrongUnit { .. })
        ));
        assert_eq!(p(Column::ZdbOhm, "LIM"), Err(CellError::LimitationOfVisit));
        assert_eq!(p(Column::U0V, "LIM"), Err(CellError::LimitationNotAllowed));
    }

    #[test]
    fn over_range_is_a_lower_bound_for_insulation_only() {
        for t in [">200", "> 200", ">200MΩ", "> 200 MΩ"] {
            assert_eq!(p(Column::IrLlMohm, t), Ok(Cell::OverRange(200.0)), "{t}");
        }
        assert_eq!(p(Column::IrLeMohm, ">999"), Ok(Cell::OverRange(999.0)));
        assert!(matches!(
            p(Column::ZsOhm, ">2"),
            Err(CellError::OverRangeNotAllowed(_))
        ));
    }

    #[test]
    fn not_recorded_and_limitation() {
        for t in ["", " ", "N/A", "n/a", "NA", "-"] {
            assert_eq!(p(Column::ZsOhm, t), Ok(Cell::Missing), "{t:?}");
            assert_eq!(p(Column::Device, t), Ok(Cell::Missing), "{t:?}");
        }
        assert_eq!(p(Column::ZsOhm, "LIM"), Ok(Cell::Limitation));
        assert_eq!(p(Column::IrLlMohm, "lim"), Ok(Cell::Limitation));
        assert_eq!(
            p(Column::Device, "LIM"),
            Err(CellError::LimitationNotAllowed)
        );
        assert_eq!(p(Column::Board, ""), Err(CellError::MissingKey));
    }

    #[test]
    fn decimal_comma_only_when_asked() {
        assert_eq!(
            p(Column::ZsOhm, "0,35"),
            Err(CellError::DecimalComma("0,35".into()))
        );
        let comma = ParseOptions {
            decimal_comma: true,
            ..opts()
        };
        assert_eq!(
            parse_cell(Column::ZsOhm, "0,35", &comma),
            Ok(Cell::Number(0.35))
        );
        assert_eq!(
            parse_cell(Column::ZsOhm, "0.35", &comma),
            Err(CellError::DecimalPoint("0.35".into()))
        );
    }

    #[test]
    fn negative_nan_and_infinite_are_errors() {
        assert_eq!(
            p(Column::R1r2Ohm, "-0.3"),
            Err(CellError::Negative("-0.3".into()))
        );
        assert_eq!(
            p(Column::RcdMs, "-5ms"),
            Err(CellError::Negative("-5ms".into()))
        );
        for t in ["NaN", "nan", "inf", "-inf", "Infinity"] {
            assert_eq!(p(Column::ZsOhm, t), Err(CellError::NotFinite(t.into())));
        }
        assert!(matches!(
            p(Column::ZsOhm, "1e3"),
            Err(CellError::NotANumber { .. })
        ));
        // Ambient temperature may be below zero.
        assert_eq!(p(Column::AmbientC, "-4"), Ok(Cell::Number(-4.0)));
        assert_eq!(p(Column::AmbientC, "'-4"), Ok(Cell::Number(-4.0)));
    }

    #[test]
    fn dates() {
        let d = |y, m, d| Ok(Cell::Date(NaiveDate::from_ymd_opt(y, m, d).unwrap()));
        assert_eq!(p(Column::VisitDate, "2025-06-14"), d(2025, 6, 14));
        assert_eq!(p(Column::VisitDate, "14/06/2025"), d(2025, 6, 14));
        assert_eq!(p(Column::VisitDate, "14-06-2025"), d(2025, 6, 14));
        assert_eq!(p(Column::VisitDate, "4/6/2025"), d(2025, 6, 4));
        assert_eq!(
            p(Column::VisitDate, "06/14/2025").unwrap_err().to_string(),
            "\"06/14/2025\" reads only month first (US order): write the day first (14/06/2025) or as ISO 2025-06-14"
        );
        assert_eq!(
            p(Column::VisitDate, "31/02/2025"),
            Err(CellError::ImpossibleDate("31/02/2025".into()))
        );
        assert_eq!(
            p(Column::VisitDate, "2025-02-30"),
            Err(CellError::ImpossibleDate("2025-02-30".into()))
        );
        assert!(matches!(
            p(Column::VisitDate, "2025-07-02"),
            Err(CellError::Future { .. })
        ));
        assert!(matches!(
            p(Column::VisitDate, "14/06/25"),
            Err(CellError::ShortYear { .. })
        ));
        assert!(matches!(
            p(Column::VisitDate, "14/06-2025"),
            Err(CellError::NotADate(_))
        ));
    }

    #[test]
    fn escape_examples() {
        // OWASP CSV injection: formula starters get a leading quote.
        assert_eq!(escape("=1+1"), "'=1+1");
        assert_eq!(escape("-ve reading"), "'-ve reading");
        assert_eq!(escape("@home"), "'@home");
        assert_eq!(escape("plain"), "plain");
        assert_eq!(unescape("'=1+1"), "=1+1");
        // A quote a person typed before ordinary text is kept.
        assert_eq!(unescape("'quoted"), "'quoted");
        assert_eq!(
            p(Column::Note, "'=HYPERLINK(x)"),
            Ok(Cell::Text("=HYPERLINK(x)".into()))
        );
    }

    fn any_text() -> impl Strategy<Value = String> {
        prop_oneof![
            "[=+@'\\-\t\r ]{0,2}[ -~]{0,12}",
            any::<String>(),
            Just("NA".to_string()),
            Just("-".to_string()),
            Just("LIM".to_string()),
        ]
    }

    #[test]
    fn circuit_numbers_are_one_number_however_written() {
        for (given, stored) in [
            ("1", "1"),
            ("01", "1"),
            ("001", "1"),
            ("1.0", "1"),
            ("01.00", "1"),
            ("0", "0"),
            ("00", "0"),
            ("10", "10"),
            ("2.1", "2.1"),
            ("1L2", "1L2"),
            ("A", "A"),
            (".0", ".0"),
            ("1.", "1."),
        ] {
            assert_eq!(normalise_circuit(given), stored, "{given}");
            if given != ".0" {
                assert_eq!(p(Column::Circuit, given), Ok(Cell::Text(stored.into())));
            }
        }
    }

    proptest! {
        #[test]
        fn unescape_undoes_escape(s in any_text()) {
            let e = escape(&s);
            prop_assert_eq!(unescape(&e), s.as_str());
        }

        #[test]
        fn escaped_cells_never_start_a_formula(s in any_text()) {
            let e = escape(&s);
            prop_assert!(!e.starts_with(['=', '+', '-', '@', '\t', '\r']));
        }

        #[test]
        fn free_text_round_trips_through_escape(s in any_text()) {
            prop_assume!(!s.trim().is_empty());
            prop_assume!(!s.chars().any(|c| c.is_control() && !matches!(c, '\t' | '\n' | '\r')));
            let cell = parse_cell(Column::Note, &escape(&s), &opts()).unwrap();
            prop_assert_eq!(cell, Cell::Text(s));
        }

        #[test]
        fn parse_cell_never_panics(s in any::<String>(), i in 0usize..35) {
            let all: Vec<Column> = Column::VISIT.iter().chain(Column::OBSERVATION.iter()).copied().collect();
            let _ = parse_cell(all[i % all.len()], &s, &opts());
        }

        #[test]
        fn readings_round_trip_through_their_text(v in 0.0f64..=MAX_OHMS) {
            let text = format_number(v);
            prop_assert_eq!(p(Column::ZsOhm, &text), Ok(Cell::Number(v)));
            let over = format!(">{text}");
            if v > 0.0 {
                prop_assert_eq!(p(Column::IrLlMohm, &over), Ok(Cell::OverRange(v)));
            } else {
                prop_assert!(p(Column::IrLlMohm, &over).is_err());
            }
        }

        #[test]
        fn readings_past_their_range_are_refused(v in 0.0f64..1.0e9) {
            let text = format_number(v);
            prop_assert_eq!(p(Column::ZsOhm, &text).is_ok(), v <= MAX_OHMS);
            prop_assert_eq!(p(Column::IrLeMohm, &text).is_ok(), v <= MAX_MEGOHMS);
            prop_assert_eq!(p(Column::RcdMs, &text).is_ok(), v <= MAX_MILLIS);
        }

        #[test]
        fn control_characters_are_refused_except_tab_and_line_breaks(s in any::<String>()) {
            let bad = s.chars().any(|c| c.is_control() && !matches!(c, '\t' | '\n' | '\r'));
            if bad {
                let is_control_error = matches!(
                    parse_cell(Column::Note, &s, &opts()),
                    Err(CellError::Control { .. }) | Err(CellError::TooLong(_))
                );
                prop_assert!(is_control_error);
            }
        }

        #[test]
        fn accepted_readings_are_finite_and_not_negative(s in "[-+>0-9.,eE a-zA-ZΩ]{0,10}") {
            if let Ok(Cell::Number(v) | Cell::OverRange(v)) = p(Column::R1r2Ohm, &s) {
                prop_assert!(v.is_finite() && v >= 0.0);
            }
        }

        #[test]
        fn day_first_dates_read_as_written(days in 0i64..20000) {
            let date = NaiveDate::from_ymd_opt(1970, 1, 1).unwrap() + chrono::Duration::days(days);
            let uk = date.format("%d/%m/%Y").to_string();
            prop_assert_eq!(parse_date(&uk, opts().today), Ok(date));
            prop_assert_eq!(parse_date(&date.to_string(), opts().today), Ok(date));
        }
    }
}
