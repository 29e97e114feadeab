//! The asset register and the readings taken on each visit, as plain values.
//!
//! This module knows nothing about SQL, files or terminals. Names follow the trade where the
//! trade has one (R1+R2, Zs, Ze, IR, RCD); our own names otherwise.

pub mod device;
pub mod schedule;

use std::fmt;
use std::str::FromStr;

use chrono::NaiveDate;
use serde::{Deserialize, Serialize};

pub use device::{BreakerStandard, Bs3871Type, Curve, Device, DeviceError, FuseStandard};
pub use schedule::{
    ButtonTest, IR_TEST_VOLTAGES, MAX_CODE_LEN, MAX_POINTS, Polarity, RefMethod,
    validate_breaking_ka, validate_code, validate_ir_test_v, validate_points,
};

/// A landlord or managing agent.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Client {
    pub id: i64,
    pub name: String,
}

/// A rented home, known by the contractor's own reference.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Property {
    pub id: i64,
    #[serde(rename = "property_ref")]
    pub reference: String,
    pub address: Option<String>,
    pub client: Option<String>,
    pub interval_months: u32,
    pub notes: Option<String>,
}

/// Default inspection interval for a private rented home in England: five years
/// (The Electrical Safety Standards in the Private Rented Sector (England) Regulations 2020, reg. 3).
pub const DEFAULT_INTERVAL_MONTHS: u32 = 60;

/// Earthing arrangement of the supply at a board.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize, Deserialize)]
pub enum Earthing {
    #[serde(rename = "TN-S")]
    TnS,
    #[serde(rename = "TN-C-S")]
    TnCS,
    #[serde(rename = "TT")]
    Tt,
}

impl Earthing {
    pub fn as_str(self) -> &'static str {
        match self {
            Earthing::TnS => "TN-S",
            Earthing::TnCS => "TN-C-S",
            Earthing::Tt => "TT",
        }
    }
}

impl fmt::Display for Earthing {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.as_str())
    }
}

impl FromStr for Earthing {
    type Err = String;
    fn from_str(s: &str) -> Result<Self, String> {
        let t: String = s
            .trim()
            .to_ascii_uppercase()
            .chars()
            .filter(|c| !c.is_whitespace())
            .collect();
        match t.as_str() {
            "TN-S" | "TNS" => Ok(Earthing::TnS),
            "TN-C-S" | "TNCS" | "PME" => Ok(Earthing::TnCS),
            "TT" => Ok(Earthing::Tt),
            _ => Err(format!(
                "unknown earthing arrangement {s:?}: expected TN-S, TN-C-S or TT"
            )),
        }
    }
}

/// A distribution board or consumer unit.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Board {
    pub id: i64,
    pub property_id: i64,
    pub designation: String,
    pub location: Option<String>,
    /// `None` when fed from the origin; otherwise the designation of the board feeding it.
    pub fed_from: Option<String>,
    pub earthing: Option<Earthing>,
    pub status: Status,
}

/// Ring final or radial circuit.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum CircuitKind {
    Ring,
    Radial,
}

impl CircuitKind {
    pub fn as_str(self) -> &'static str {
        match self {
            CircuitKind::Ring => "ring",
            CircuitKind::Radial => "radial",
        }
    }
}

impl FromStr for CircuitKind {
    type Err = String;
    fn from_str(s: &str) -> Result<Self, String> {
        match s.trim().to_ascii_lowercase().as_str() {
            "ring" | "yes" | "y" | "true" => Ok(CircuitKind::Ring),
            "radial" | "no" | "n" | "false" => Ok(CircuitKind::Radial),
            _ => Err(format!(
                "unknown circuit kind {s:?}: expected ring or radial (yes or no)"
            )),
        }
    }
}

/// Whether a board or circuit is still part of the installation.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum Status {
    InService,
    Retired,
}

impl Status {
    pub fn as_str(self) -> &'static str {
        match self {
            Status::InService => "in_service",
            Status::Retired => "retired",
        }
    }
}

impl FromStr for Status {
    type Err = String;
    fn from_str(s: &str) -> Result<Self, String> {
        match s {
            "in_service" => Ok(Status::InService),
            "retired" => Ok(Status::Retired),
            _ => Err(format!("unknown status {s:?}")),
        }
    }
}

/// Maximum permitted conductor operating temperature, set by the cable's insulation.
/// It decides how far a cold test reading sits below the tabulated (hot) limit.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum Insulation {
    /// 70 °C thermoplastic (PVC), the usual twin and earth.
    Thermoplastic70,
    /// 90 °C thermosetting (XLPE, LSF thermosetting).
    Thermosetting90,
}

impl Insulation {
    pub fn as_str(self) -> &'static str {
        match self {
            Insulation::Thermoplastic70 => "thermoplastic70",
            Insulation::Thermosetting90 => "thermosetting90",
        }
    }
}

impl FromStr for Insulation {
    type Err = String;
    fn from_str(s: &str) -> Result<Self, String> {
        match s.trim().to_ascii_lowercase().as_str() {
            "thermoplastic70" | "70" | "pvc" | "thermoplastic" => Ok(Insulation::Thermoplastic70),
            "thermosetting90" | "90" | "xlpe" | "thermosetting" => Ok(Insulation::Thermosetting90),
            _ => Err(format!(
                "unknown insulation {s:?}: expected thermoplastic70 (PVC) or thermosetting90 (XLPE)"
            )),
        }
    }
}

/// Residual current device waveform type (BS EN 61008 / 61009 / 62423 marking): which
/// residual currents it responds to. The time delay (type S) is a separate attribute,
/// [`RcdDelay`], so a "type A, S" device is recorded as both.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize, Deserialize)]
pub enum RcdType {
    AC,
    A,
    F,
    B,
}

impl RcdType {
    pub fn as_str(self) -> &'static str {
        match self {
            RcdType::AC => "AC",
            RcdType::A => "A",
            RcdType::F => "F",
            RcdType::B => "B",
        }
    }
}

impl FromStr for RcdType {
    type Err = String;
    fn from_str(s: &str) -> Result<Self, String> {
        match s.trim().to_ascii_uppercase().as_str() {
            "AC" => Ok(RcdType::AC),
            "A" => Ok(RcdType::A),
            "F" => Ok(RcdType::F),
            "B" => Ok(RcdType::B),
            _ => Err(format!(
                "unknown RCD waveform type {s:?}: expected AC, A, F or B (give a time delay as S, e.g. \"A S\")"
            )),
        }
    }
}

/// Whether an RCD operates without intended delay (general) or with one (type S, selective).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum RcdDelay {
    General,
    #[serde(rename = "S")]
    S,
}

impl RcdDelay {
    pub fn as_str(self) -> &'static str {
        match self {
            RcdDelay::General => "general",
            RcdDelay::S => "S",
        }
    }
}

impl FromStr for RcdDelay {
    type Err = String;
    fn from_str(s: &str) -> Result<Self, String> {
        match s.trim().to_ascii_lowercase().as_str() {
            "general" | "g" => Ok(RcdDelay::General),
            "s" => Ok(RcdDelay::S),
            _ => Err(format!(
                "unknown RCD delay {s:?}: expected general or S (time-delayed)"
            )),
        }
    }
}

/// An RCD marking as written on a schedule: a waveform type, a delay, or both, as in
/// `A`, `S`, `A S` or `A-S` (a space or a hyphen separates the two).
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq, Hash)]
pub struct RcdMarking {
    pub waveform: Option<RcdType>,
    pub delay: Option<RcdDelay>,
}

impl FromStr for RcdMarking {
    type Err = String;
    fn from_str(s: &str) -> Result<Self, String> {
        let bad = || {
            format!(
                "unknown RCD type {s:?}: expected a waveform type AC, A, F or B, optionally followed by the delay S (time-delayed), as in \"A S\" or \"A-S\", or S alone"
            )
        };
        let parts: Vec<&str> = s
            .split(|c: char| c.is_whitespace() || c == '-')
            .filter(|p| !p.is_empty())
            .collect();
        match parts.as_slice() {
            [one] if one.eq_ignore_ascii_case("s") => Ok(RcdMarking {
                waveform: None,
                delay: Some(RcdDelay::S),
            }),
            [one] => Ok(RcdMarking {
                waveform: Some(one.parse().map_err(|_| bad())?),
                delay: None,
            }),
            [w, d] if d.eq_ignore_ascii_case("s") => Ok(RcdMarking {
                waveform: Some(w.parse().map_err(|_| bad())?),
                delay: Some(RcdDelay::S),
            }),
            _ => Err(bad()),
        }
    }
}

/// RCD rated residual operating currents IΔn in mA that the tool accepts.
pub const RCD_RATINGS_MA: [u16; 6] = [10, 30, 100, 300, 500, 1000];

/// One final or distribution circuit on a board.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Circuit {
    pub id: i64,
    pub board_id: i64,
    pub number: String,
    pub description: Option<String>,
    pub kind: CircuitKind,
    pub live_mm2: Option<f64>,
    pub cpc_mm2: Option<f64>,
    pub length_m: Option<f64>,
    pub device: Option<Device>,
    pub rcd_ma: Option<u16>,
    pub rcd_type: Option<RcdType>,
    /// General or time-delayed (type S); `None` when not recorded.
    pub rcd_delay: Option<RcdDelay>,
    pub insulation: Option<Insulation>,
    /// Maximum disconnection time in seconds when it is not the default for the circuit.
    pub disconnect_s: Option<f64>,
    /// Wiring type as recorded on the schedule (a short code or text).
    pub wiring_type: Option<String>,
    pub ref_method: Option<RefMethod>,
    /// Number of points served.
    pub points: Option<u32>,
    /// Breaking capacity of the protective device, kA.
    pub breaking_ka: Option<f64>,
    /// Whether an arc fault detection device protects the circuit.
    pub afdd: Option<bool>,
    /// The RCD protecting the circuit, by its identifier on the board (`RCD1`): circuits of
    /// one board with the same identifier share one device.
    pub rcd_id: Option<String>,
    pub status: Status,
    /// The circuit this one replaced, so its history carries on.
    pub replaces: Option<i64>,
}

/// A test instrument.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Instrument {
    pub id: i64,
    pub serial: String,
    pub description: Option<String>,
    pub calibration_due: Option<NaiveDate>,
}

/// Whether a visit's readings form part of the history yet.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum VisitState {
    /// Readings are being taken on site; not yet part of the history.
    Pending,
    Complete,
}

/// One inspection and test visit to a property.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Visit {
    pub id: i64,
    pub property_id: i64,
    pub date: NaiveDate,
    pub inspector: Option<String>,
    pub instrument: Option<String>,
    pub ambient_c: Option<f64>,
    /// External earth fault loop impedance at the origin, Ω.
    pub ze_ohm: Option<f64>,
    /// Prospective fault current at the origin, kA.
    pub pfc_ka: Option<f64>,
    pub state: VisitState,
    /// The report as the inspector recorded it (reference, outcome, interval, extent).
    #[serde(flatten)]
    pub report: VisitReport,
    /// The supply characteristics and main bonding recorded at the origin.
    #[serde(flatten)]
    pub supply: SupplyRecord,
}

/// A visit's report as the inspector recorded it. ohmtrail assigns none of it: the overall
/// outcome is kept in the inspector's own words and shown as theirs.
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
pub struct VisitReport {
    /// The report's own reference number.
    pub report_ref: Option<String>,
    /// The overall outcome as recorded (e.g. Satisfactory, Unsatisfactory).
    pub outcome: Option<String>,
    /// The interval to the next inspection the inspector recommended, in months.
    pub interval_months: Option<u32>,
    /// The extent of the installation covered by the report.
    pub extent: Option<String>,
    /// The limitations agreed for the inspection.
    pub limitations: Option<String>,
}

/// The supply characteristics and main protective bonding recorded at a visit (Ze and the
/// prospective fault current are the visit's own fields).
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
pub struct SupplyRecord {
    /// Nominal voltage to earth U0, V.
    pub u0_v: Option<f64>,
    /// Earth electrode resistance Ra of a TT installation, Ω.
    pub ra_ohm: Option<f64>,
    /// Main protective bonding conductor csa, mm².
    pub bonding_csa_mm2: Option<f64>,
    /// Main bonding continuity to the water service.
    pub bonding_water: Option<Bonding>,
    /// Main bonding continuity to the gas service.
    pub bonding_gas: Option<Bonding>,
    /// Main bonding continuity to other services (oil, structural steel, ...).
    pub bonding_other: Option<Bonding>,
}

/// Whether the continuity of a main bonding connection to a service was confirmed.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum Bonding {
    /// Continuity confirmed.
    Yes,
    /// Continuity not confirmed (absent, disconnected or not verified).
    No,
    /// No such service to bond.
    None,
}

impl Bonding {
    pub fn as_str(self) -> &'static str {
        match self {
            Bonding::Yes => "yes",
            Bonding::No => "no",
            Bonding::None => "none",
        }
    }
}

impl FromStr for Bonding {
    type Err = String;
    fn from_str(s: &str) -> Result<Self, String> {
        match s.trim().to_ascii_lowercase().as_str() {
            "yes" | "y" | "ok" | "confirmed" | "\u{2713}" => Ok(Bonding::Yes),
            "no" | "n" | "not confirmed" | "\u{2717}" => Ok(Bonding::No),
            "none" | "no service" => Ok(Bonding::None),
            _ => Err(format!(
                "unknown bonding continuity {s:?}: expected yes (confirmed), no (not confirmed) or none (no such service)"
            )),
        }
    }
}

/// Read an inspection interval as months: a whole number of months (`60`, `60 months`) or
/// of years (`5 years`, `5 yr`), from 1 month to 10 years.
pub fn parse_interval_months(s: &str) -> Result<u32, String> {
    let t = s.trim().to_ascii_lowercase();
    let bad = || {
        format!(
            "interval {s:?} is not an interval: expected whole months or years, such as 60, 60 months or 5 years"
        )
    };
    let split = t.find(|c: char| !c.is_ascii_digit()).unwrap_or(t.len());
    let (digits, unit) = t.split_at(split);
    if digits.is_empty() || digits.len() > 4 {
        return Err(bad());
    }
    let n: u32 = digits.parse().map_err(|_| bad())?;
    let months = match unit.trim() {
        "" | "m" | "mo" | "month" | "months" => n,
        "y" | "yr" | "yrs" | "year" | "years" => n * 12,
        _ => return Err(bad()),
    };
    if !(1..=120).contains(&months) {
        return Err(format!(
            "interval {s:?} is out of range: expected 1 month to 10 years (120 months)"
        ));
    }
    Ok(months)
}

/// Check a recorded nominal voltage U0 in volts.
pub fn validate_u0(v: f64) -> Result<f64, String> {
    if !v.is_finite() || !(1.0..=1000.0).contains(&v) {
        return Err(format!(
            "U0 {v} V is out of range: expected a nominal voltage to earth such as 230 V (1 to 1000 V)"
        ));
    }
    Ok(v)
}

/// Check a visit's recorded outcome: kept as written, but not empty.
pub fn validate_outcome(text: &str) -> Result<&str, String> {
    if text.trim().is_empty() {
        return Err(
            "outcome is empty: give the overall outcome as the inspector recorded it".into(),
        );
    }
    check_text("outcome", text)?;
    Ok(text)
}

/// What was measured at one board at one visit: Ze (at a sub-board, the loop impedance at
/// its incoming terminals), the prospective fault current, and at a board fed from another,
/// Zdb and the sub-main's R1+R2.
#[derive(Debug, Clone, Copy, Default, PartialEq, Serialize, Deserialize)]
pub struct BoardTest {
    pub visit_id: i64,
    pub board_id: i64,
    pub ze_ohm: Option<f64>,
    pub pfc_ka: Option<f64>,
    /// Zdb: the earth fault loop impedance measured at a sub-board's incoming terminals, Ω.
    pub zdb_ohm: Option<f64>,
    /// R1+R2 of the sub-main feeding the board, Ω.
    pub submain_r1r2_ohm: Option<f64>,
}

/// An insulation resistance reading. An over-range reading (`>200`) is a lower bound only.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct Megohms {
    pub value: f64,
    /// True when the instrument showed over-range: the resistance is at least `value`.
    pub over_range: bool,
}

impl fmt::Display for Megohms {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        if self.over_range {
            write!(f, ">{}", self.value)
        } else {
            write!(f, "{}", self.value)
        }
    }
}

/// The readings for one circuit at one visit. Every quantity may be missing.
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
pub struct Readings {
    pub r1r2_ohm: Option<f64>,
    pub r2_ohm: Option<f64>,
    pub r1rn_ohm: Option<f64>,
    pub ring_r1_ohm: Option<f64>,
    pub ring_rn_ohm: Option<f64>,
    pub ring_r2_ohm: Option<f64>,
    pub zs_ohm: Option<f64>,
    pub ir_ll: Option<Megohms>,
    pub ir_le: Option<Megohms>,
    pub rcd_ms: Option<f64>,
    pub rcd_5x_ms: Option<f64>,
    pub polarity: Option<Polarity>,
    /// The d.c. test voltage of the insulation readings, V (250, 500 or 1000).
    pub ir_test_v: Option<u16>,
    /// Whether the RCD operated on its own test button.
    pub rcd_button: Option<ButtonTest>,
    /// Quantities recorded as a limitation (`LIM`), by their visit-file column name.
    pub limitations: Vec<String>,
    pub note: Option<String>,
}

/// A stored test record: readings tied to a circuit and a visit.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct TestRecord {
    pub id: i64,
    pub visit_id: i64,
    pub circuit_id: i64,
    pub readings: Readings,
}

/// What happened to a circuit, as a dated event. Later analysis treats each as a new baseline.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum ChangeKind {
    DeviceChanged,
    CableReplaced,
    TerminationsRemade,
    BoardReplaced,
    CircuitReplaced,
    Renumbered,
    /// A register detail corrected (csa, ring/radial, length) without work on the circuit.
    RegisterCorrected,
    Retired,
}

impl ChangeKind {
    pub const ALL: [ChangeKind; 8] = [
        ChangeKind::DeviceChanged,
        ChangeKind::CableReplaced,
        ChangeKind::TerminationsRemade,
        ChangeKind::BoardReplaced,
        ChangeKind::CircuitReplaced,
        ChangeKind::Renumbered,
        ChangeKind::RegisterCorrected,
        ChangeKind::Retired,
    ];

    pub fn as_str(self) -> &'static str {
        match self {
            ChangeKind::DeviceChanged => "device_changed",
            ChangeKind::CableReplaced => "cable_replaced",
            ChangeKind::TerminationsRemade => "terminations_remade",
            ChangeKind::BoardReplaced => "board_replaced",
            ChangeKind::CircuitReplaced => "circuit_replaced",
            ChangeKind::Renumbered => "renumbered",
            ChangeKind::RegisterCorrected => "register_corrected",
            ChangeKind::Retired => "retired",
        }
    }

    /// Whether readings before this event describe a different physical path, so a trend
    /// must start again from the next reading.
    pub fn resets_baseline(self) -> bool {
        !matches!(self, ChangeKind::RegisterCorrected | ChangeKind::Retired)
    }
}

impl FromStr for ChangeKind {
    type Err = String;
    fn from_str(s: &str) -> Result<Self, String> {
        let t = s.trim().to_ascii_lowercase().replace(['-', ' '], "_");
        ChangeKind::ALL
            .into_iter()
            .find(|k| k.as_str() == t)
            .ok_or_else(|| {
                format!(
                    "unknown change kind {s:?}: expected one of {}",
                    ChangeKind::ALL.map(|k| k.as_str()).join(", ")
                )
            })
    }
}

/// A dated change to a circuit, with the register field it touched where there is one.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct CircuitChange {
    pub id: i64,
    pub circuit_id: i64,
    pub date: NaiveDate,
    pub kind: ChangeKind,
    pub field: Option<String>,
    pub old_value: Option<String>,
    pub new_value: Option<String>,
    pub note: Option<String>,
}

/// An observation code exactly as the inspector recorded it. The tool never assigns one.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize, Deserialize)]
pub enum ObservationCode {
    C1,
    C2,
    C3,
    FI,
}

impl ObservationCode {
    pub fn as_str(self) -> &'static str {
        match self {
            ObservationCode::C1 => "C1",
            ObservationCode::C2 => "C2",
            ObservationCode::C3 => "C3",
            ObservationCode::FI => "FI",
        }
    }
}

impl FromStr for ObservationCode {
    type Err = String;
    fn from_str(s: &str) -> Result<Self, String> {
        match s.trim().to_ascii_uppercase().as_str() {
            "C1" => Ok(ObservationCode::C1),
            "C2" => Ok(ObservationCode::C2),
            "C3" => Ok(ObservationCode::C3),
            "FI" => Ok(ObservationCode::FI),
            _ => Err(format!(
                "unknown observation code {s:?}: expected C1, C2, C3 or FI as recorded"
            )),
        }
    }
}

/// An observation recorded at a visit.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Observation {
    pub id: i64,
    pub visit_id: i64,
    pub board: Option<String>,
    pub circuit: Option<String>,
    pub code: ObservationCode,
    pub text: String,
}

/// The first control character in `text` (NUL, escape, backspace and the like; a tab or a
/// line break may stay), with its byte offset. Stored, it would reach a terminal as an escape
/// sequence and HTML as a character it does not allow, so text holding one is refused.
pub fn control_character(text: &str) -> Option<(usize, char)> {
    text.char_indices()
        .find(|&(_, c)| c.is_control() && !matches!(c, '\t' | '\n' | '\r'))
}

/// Refuse text holding a control character, naming the character and its position.
pub fn check_text(what: &str, text: &str) -> Result<(), String> {
    match control_character(text) {
        Some((offset, c)) => Err(format!(
            "{what} has control character U+{:04X} at offset {offset}: remove it",
            c as u32
        )),
        None => Ok(()),
    }
}

/// Check a cross-sectional area in mm², as the register stores it.
pub fn validate_csa(what: &str, mm2: f64) -> Result<f64, String> {
    if !mm2.is_finite() || mm2 <= 0.0 {
        return Err(format!(
            "{what} {mm2} mm² is not a conductor size: expected a positive size such as 1.5, 2.5 or 6"
        ));
    }
    if mm2 > 1000.0 {
        return Err(format!(
            "{what} {mm2} mm² is out of range: expected at most 1000 mm²"
        ));
    }
    Ok(mm2)
}

/// Check a circuit length in metres.
pub fn validate_length(m: f64) -> Result<f64, String> {
    if !m.is_finite() || m <= 0.0 {
        return Err(format!(
            "length {m} m is not a length: expected a positive number of metres"
        ));
    }
    if m > 10_000.0 {
        return Err(format!(
            "length {m} m is out of range: expected at most 10000 m"
        ));
    }
    Ok(m)
}

/// Check an RCD rated residual current.
pub fn validate_rcd_ma(ma: u16) -> Result<u16, String> {
    if RCD_RATINGS_MA.contains(&ma) {
        Ok(ma)
    } else {
        Err(format!(
            "{ma} mA is not a rated residual current: expected one of {}",
            RCD_RATINGS_MA.map(|x| x.to_string()).join(", ")
        ))
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn an_rcd_marking_reads_waveform_and_delay_apart() {
        // BS EN 61008-1 / 61009-1 mark the waveform type (AC, A, F, B) and the time delay (S)
        // separately, so a selective type A device is "A" and "S" (common practice, no source,
        // for the spellings "A S" and "A-S" on schedules).
        let m = |s: &str| s.parse::<RcdMarking>();
        let both = RcdMarking {
            waveform: Some(RcdType::A),
            delay: Some(RcdDelay::S),
        };
        assert_eq!(m("A S"), Ok(both));
        assert_eq!(m("a-s"), Ok(both));
        assert_eq!(m(" A  S "), Ok(both));
        assert_eq!(
            m("S"),
            Ok(RcdMarking {
                waveform: None,
                delay: Some(RcdDelay::S)
            })
        );
        assert_eq!(
            m("AC"),
            Ok(RcdMarking {
                waveform: Some(RcdType::AC),
                delay: None
            })
        );
        // Bad combinations are refused, listing what is known.
        for bad in ["S S", "A B", "X S", "A S S", "S A", "", "AS"] {
            let e = m(bad).unwrap_err();
            assert!(e.contains("AC, A, F or B") && e.contains("S"), "{bad}: {e}");
        }
        assert!("S".parse::<RcdType>().is_err());
        assert_eq!("general".parse::<RcdDelay>(), Ok(RcdDelay::General));
        assert!(
            "T".parse::<RcdDelay>()
                .unwrap_err()
                .contains("general or S")
        );
    }

    #[test]
    fn intervals_read_as_months() {
        // The longest interval for a private rented home in England is 5 years (The Electrical
        // Safety Standards in the Private Rented Sector (England) Regulations 2020, reg. 3);
        // 5 years = 60 months, 10 years = 120 months (arithmetic).
        for (text, months) in [
            ("60", 60),
            ("60 months", 60),
            ("5 years", 60),
            ("5 Years", 60),
            ("5yr", 60),
            (" 1 year ", 12),
            ("10 years", 120),
            ("6 months", 6),
        ] {
            assert_eq!(parse_interval_months(text), Ok(months), "{text}");
        }
        for bad in [
            "",
            "five years",
            "0",
            "11 years",
            "121",
            "5 weeks",
            "-5",
            "5.5 years",
            "99999999999",
        ] {
            assert!(parse_interval_months(bad).is_err(), "{bad}");
        }
    }

    #[test]
    fn bonding_and_outcome_are_read_as_recorded() {
        // Main bonding continuity is confirmed, not confirmed, or there is no such service
        // (common practice, no source).
        assert_eq!("Yes".parse::<Bonding>(), Ok(Bonding::Yes));
        assert_eq!("no".parse::<Bonding>(), Ok(Bonding::No));
        assert_eq!("none".parse::<Bonding>(), Ok(Bonding::None));
        assert!("maybe".parse::<Bonding>().is_err());
        assert_eq!(validate_outcome("Unsatisfactory"), Ok("Unsatisfactory"));
        assert!(validate_outcome("  ").is_err());
        assert!(validate_outcome("Sat\u{1b}[2J").is_err());
        assert!(validate_u0(230.0).is_ok());
        assert!(validate_u0(0.0).is_err());
        assert!(validate_u0(f64::NAN).is_err());
    }

    #[test]
    fn validation_refuses_nonsense() {
        assert!(validate_csa("live", 0.0).is_err());
        assert!(validate_csa("live", -2.5).is_err());
        assert!(validate_csa("live", f64::NAN).is_err());
        assert_eq!(validate_csa("live", 2.5), Ok(2.5));
        assert!(validate_length(0.0).is_err());
        assert!(validate_length(f64::INFINITY).is_err());
        assert!(validate_rcd_ma(25).is_err());
        assert_eq!(validate_rcd_ma(30), Ok(30));
    }

    #[test]
    fn parses_register_words() {
        assert_eq!("tn-c-s".parse::<Earthing>(), Ok(Earthing::TnCS));
        assert_eq!("yes".parse::<CircuitKind>(), Ok(CircuitKind::Ring));
        assert!("spur".parse::<CircuitKind>().is_err());
        assert_eq!(
            "terminations remade".parse::<ChangeKind>(),
            Ok(ChangeKind::TerminationsRemade)
        );
        assert!("c4".parse::<ObservationCode>().is_err());
    }
}
