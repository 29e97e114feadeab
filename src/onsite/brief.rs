//! The visit brief: for each circuit in service, what it read last time, what it should read
//! on the planned date at the expected ambient, the band a sound reading falls in, and the
//! measured-value limit at that temperature.

use chrono::NaiveDate;
use serde::Serialize;

use super::entry::{Field, Unit};
use super::expect::expectation;
use crate::analysis::{CircuitAnalysis, PropertyAnalysis, SeriesAnalysis};
use crate::limits::{
    self, IrCircuit, LimitsConfig, MeasuredRule, RcdTest, RcdTiming, TestConditions, from_r20,
};
use crate::model::{CircuitKind, Instrument, Observation, RcdDelay, Readings, Status};
use crate::trend::{LimitKind, TrendConfig};

/// The ambient temperature assumed when none is given: a mild indoor day in a cool climate.
/// Stated on every brief that uses it.
pub const DEFAULT_TEMP_C: f64 = 15.0;

/// What the brief says of a board whose register has no circuits yet (a first visit, or a
/// sub-board added without them): it is listed all the same, so `record` walks it.
pub const NO_CIRCUITS: &str =
    "no circuits recorded on this board: note those found on site (record asks for them)";

/// The last reading of a quantity.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct LastReading {
    pub date: NaiveDate,
    /// As read from the instrument.
    pub raw: f64,
    pub over_range: bool,
    pub ambient_c: Option<f64>,
}

/// The band a sound reading is expected in. A missing end is unbounded (insulation resistance
/// has no top: higher is never worse).
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Band {
    pub low: Option<f64>,
    pub high: Option<f64>,
}

/// A limit at the visit's temperature.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct LimitAt {
    pub value: f64,
    /// Maximum or minimum.
    pub kind: LimitKind,
    pub words: String,
    /// Advice rather than a limit (the typical declared Ze).
    pub advisory: bool,
}

/// What to expect of one quantity at the visit.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Expectation {
    pub field: Field,
    pub last: Option<LastReading>,
    /// At the visit's temperature; `None` when there is nothing to go on (no reading yet, or
    /// the last was over range).
    pub expected: Option<f64>,
    pub band: Option<Band>,
    /// How the expectation was formed, in words.
    pub basis: String,
    /// Why the band is wider than usual, in words, when it is ("only two earlier readings").
    pub wide: Option<String>,
    pub limit: Option<LimitAt>,
}

impl Expectation {
    pub fn unit(&self) -> Unit {
        self.field.unit()
    }

    /// How the expectation was formed and, when the band is wide, why.
    pub fn basis_words(&self) -> String {
        match &self.wide {
            Some(w) => format!("{}; band {w}", self.basis),
            None => self.basis.clone(),
        }
    }
}

/// One circuit in the brief.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct CircuitBrief {
    pub circuit_id: i64,
    pub number: String,
    pub description: Option<String>,
    pub kind: CircuitKind,
    /// The device as the register has it, e.g. "B32".
    pub device: Option<String>,
    pub live_mm2: Option<f64>,
    pub cpc_mm2: Option<f64>,
    pub rcd_ma: Option<u16>,
    pub last_visit: Option<NaiveDate>,
    pub last_readings: Option<Readings>,
    pub expectations: Vec<Expectation>,
    /// Open flags on this circuit, most urgent first: "exceeds: …" (`record` shows them as it
    /// reaches the circuit).
    pub flags: Vec<String>,
    /// Where this circuit's flags stand in the brief's "test first" list, counting from 1: a
    /// printed brief refers to them there rather than giving each flag twice.
    pub test_first: Vec<usize>,
    /// This circuit's flags that the "test first" list does not give, to be shown with it.
    pub other_flags: Vec<String>,
    pub notes: Vec<String>,
}

impl CircuitBrief {
    /// The register's cable as "2.5/1.5 mm²".
    pub fn cable(&self) -> Option<String> {
        match (self.live_mm2, self.cpc_mm2) {
            (Some(l), Some(c)) => Some(format!(
                "{}/{} mm²",
                crate::store::fmt_num(l),
                crate::store::fmt_num(c)
            )),
            (Some(l), None) => Some(format!("{} mm² live", crate::store::fmt_num(l))),
            _ => None,
        }
    }
}

/// One board in the brief.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct BoardBrief {
    pub board_id: i64,
    pub designation: String,
    pub location: Option<String>,
    pub earthing: Option<String>,
    /// Whether the board is fed from the origin (its Ze is the supply's).
    pub origin: bool,
    /// Ze at the origin; at a sub-board (Zdb) there is no history here to expect from.
    pub ze: Expectation,
    pub circuits: Vec<CircuitBrief>,
}

/// A circuit to test first, and why.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Priority {
    pub board: String,
    pub circuit: Option<String>,
    pub quantity: &'static str,
    pub severity: &'static str,
    pub reason: String,
}

/// An instrument to see to before leaving.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct InstrumentCheck {
    pub serial: String,
    pub description: Option<String>,
    pub calibration_due: Option<NaiveDate>,
    pub why: String,
}

/// Everything the brief says, ready to print as text, CSV or HTML.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Brief {
    pub property_ref: String,
    pub address: Option<String>,
    pub date: NaiveDate,
    pub temp_c: f64,
    /// True when the temperature is the default, not given.
    pub temp_assumed: bool,
    pub last_visit: Option<NaiveDate>,
    pub measured_rule: MeasuredRule,
    pub boards: Vec<BoardBrief>,
    pub test_first: Vec<Priority>,
    /// Observations recorded at the last visit.
    pub observations: Vec<Observation>,
    pub last_observations_date: Option<NaiveDate>,
    pub instruments: Vec<InstrumentCheck>,
    /// How many instruments the register holds.
    pub instruments_known: usize,
    pub notes: Vec<String>,
    pub caution: &'static str,
}

/// Prepare the brief for a visit on `date` at an ambient of `temp_c` (default
/// [`DEFAULT_TEMP_C`]). Pure: everything comes from the analysis and the instrument list.
pub fn brief(
    analysis: &PropertyAnalysis,
    date: NaiveDate,
    temp_c: Option<f64>,
    instruments: &[Instrument],
) -> Brief {
    let temp = temp_c.unwrap_or(DEFAULT_TEMP_C);
    let cfg = &analysis.settings.trend;
    let rule = analysis.settings.limits.measured_rule;
    let mut notes = Vec::new();
    if temp_c.is_none() {
        notes.push(format!(
            "no ambient temperature given: expected values are for {DEFAULT_TEMP_C} °C; give the expected ambient with --temp"
        ));
    }
    if !analysis.visits_without_ambient.is_empty() {
        notes.push(format!(
            "no ambient recorded at {}: those readings are compared as taken",
            crate::report::html::count(analysis.visits_without_ambient.len(), "visit", "visits")
        ));
    }
    let origin_ze = analysis
        .supply
        .as_ref()
        .and_then(|s| s.report.points.last())
        .map(|p| p.raw);

    let mut boards = Vec::new();
    for b in analysis
        .boards
        .iter()
        .filter(|b| b.status == Status::InService)
    {
        let origin = b.fed_from.is_none();
        let ze = ze_expectation(analysis.supply.as_ref().filter(|_| origin), date, cfg);
        let circuits = analysis
            .circuits
            .iter()
            .filter(|c| c.circuit.board_id == b.id)
            .map(|c| {
                let ze_here = if origin { origin_ze } else { None };
                circuit_brief(
                    c,
                    date,
                    (temp, temp_c.is_some()),
                    analysis.settings.limits,
                    ze_here,
                    cfg,
                )
            })
            .collect::<Vec<_>>();
        boards.push(BoardBrief {
            board_id: b.id,
            designation: b.designation.clone(),
            location: b.location.clone(),
            earthing: b.earthing.map(|e| e.as_str().to_string()),
            origin,
            ze,
            circuits,
        });
    }

    // Every finding of every circuit; an overdue inspection is not a reading to take.
    let test_first: Vec<Priority> = analysis
        .flags
        .iter()
        .flat_map(|row| &row.findings)
        .filter(|f| f.finding().is_some())
        .map(|f| Priority {
            board: f.board.clone(),
            circuit: f.circuit.clone(),
            quantity: f.quantity,
            severity: f.severity,
            reason: f.reason.clone(),
        })
        .collect();

    // Each circuit's flags are listed once, under "test first"; the circuit points there.
    for board in &mut boards {
        for c in &mut board.circuits {
            let here = |p: &Priority| {
                p.board == board.designation && p.circuit.as_deref() == Some(c.number.as_str())
            };
            c.test_first = (1..)
                .zip(&test_first)
                .filter(|(_, p)| here(p))
                .map(|(n, _)| n)
                .collect();
            c.other_flags = c
                .flags
                .iter()
                .filter(|f| {
                    !test_first
                        .iter()
                        .any(|p| here(p) && **f == format!("{}: {}", p.severity, p.reason))
                })
                .cloned()
                .collect();
        }
    }

    let last = analysis.visits.last();
    let today = analysis.settings.today;
    let instrument_checks = instruments
        .iter()
        .filter_map(|i| match i.calibration_due {
            Some(due) if due < date => Some(InstrumentCheck {
                serial: i.serial.clone(),
                description: i.description.clone(),
                calibration_due: Some(due),
                why: calibration_words(due, date, today),
            }),
            Some(_) => None,
            None => Some(InstrumentCheck {
                serial: i.serial.clone(),
                description: i.description.clone(),
                calibration_due: None,
                why: "no calibration date recorded: check the certificate before using it".into(),
            }),
        })
        .collect();

    Brief {
        property_ref: analysis.property.reference.clone(),
        address: analysis.property.address.clone(),
        date,
        temp_c: temp,
        temp_assumed: temp_c.is_none(),
        last_visit: analysis.last_visit,
        measured_rule: rule,
        boards,
        test_first,
        observations: last.map(|v| v.observations.clone()).unwrap_or_default(),
        last_observations_date: last.map(|v| v.visit.date),
        instruments: instrument_checks,
        instruments_known: instruments.len(),
        notes,
        caution: crate::CAUTION,
    }
}

/// Why an instrument whose calibration runs out on `due`, before the visit on `date`, must be
/// seen to: one that has already lapsed (by `today`) says so, with the date and how long ago.
fn calibration_words(due: NaiveDate, date: NaiveDate, today: NaiveDate) -> String {
    if due < today {
        format!(
            "calibration lapsed on {due}, {} ago: recalibrate it or take another instrument",
            elapsed(due, today)
        )
    } else {
        format!(
            "calibration runs out on {due}, before the visit on {date}: recalibrate it or take another instrument"
        )
    }
}

/// The whole years and months from `from` to `to` ("10 years 10 months", "1 year", "3
/// months"), or the days when under a month.
fn elapsed(from: NaiveDate, to: NaiveDate) -> String {
    use chrono::Datelike;
    let mut months = (to.year() - from.year()) * 12 + to.month() as i32 - from.month() as i32;
    if to.day() < from.day() {
        months -= 1;
    }
    let plural =
        |n: i64, one: &str, many: &str| crate::report::html::count(n.max(0) as usize, one, many);
    if months <= 0 {
        return plural((to - from).num_days(), "day", "days");
    }
    let (y, m) = (months / 12, months % 12);
    match (y, m) {
        (0, m) => plural(m.into(), "month", "months"),
        (y, 0) => plural(y.into(), "year", "years"),
        (y, m) => format!(
            "{} {}",
            plural(y.into(), "year", "years"),
            plural(m.into(), "month", "months")
        ),
    }
}

/// The fields prompted for and briefed on a circuit: ring legs on a ring, R2 where it was
/// recorded before, RCD times where there is an RCD or a history of them.
pub fn fields_for(c: &CircuitAnalysis) -> Vec<Field> {
    let has = |key: &str| c.series.iter().any(|s| s.quantity == key);
    let had = |f: Field| c.last_readings.as_ref().is_some_and(|r| f.answered(r));
    Field::CIRCUIT
        .into_iter()
        .filter(|f| match f {
            Field::RingR1 | Field::RingRn | Field::RingR2 => c.circuit.kind == CircuitKind::Ring,
            Field::R2 => has("r2") || had(Field::R2),
            Field::Rcd5x | Field::Rcd => c.circuit.rcd_ma.is_some() || had(*f),
            _ => true,
        })
        .collect()
}

fn circuit_brief(
    c: &CircuitAnalysis,
    date: NaiveDate,
    (temp, temp_known): (f64, bool),
    lc: LimitsConfig,
    ze: Option<f64>,
    cfg: &TrendConfig,
) -> CircuitBrief {
    let mut notes = c.notes.clone();
    let zs_limit = zs_limit_at(c, temp, lc, &mut notes);
    let expectations = fields_for(c)
        .into_iter()
        .map(|f| {
            let series = series_for(c, f);
            let mut e = expectation(
                f,
                series,
                c.last_readings.as_ref(),
                c.last_visit,
                (date, temp_known),
                cfg,
            );
            if e.field.quantity().temperature_sensitive() {
                convert_to(&mut e, temp, if f == Field::Zs { ze } else { None });
            }
            e.limit = match f {
                Field::Zs => zs_limit.clone(),
                Field::R1rn => r1rn_limit_at(c, zs_limit.as_ref(), ze, series),
                Field::IrLl | Field::IrLe => {
                    let m = limits::ir_minimum(IrCircuit::UpTo500V);
                    Some(LimitAt {
                        value: m.minimum_mohm,
                        kind: LimitKind::Min,
                        words: format!(
                            "minimum for a circuit up to 500 V, {} V test",
                            m.test_voltage_v
                        ),
                        advisory: false,
                    })
                }
                Field::Rcd5x | Field::Rcd => {
                    let timing = RcdTiming::of(c.circuit.rcd_delay.unwrap_or(RcdDelay::General));
                    let test = if f == Field::Rcd5x {
                        RcdTest::AtFive
                    } else {
                        RcdTest::AtRated
                    };
                    let m = limits::rcd_max_ms(timing, test);
                    Some(LimitAt {
                        value: m.max_ms,
                        kind: LimitKind::Max,
                        words: m.words(),
                        advisory: false,
                    })
                }
                _ => None,
            };
            e
        })
        .collect();
    CircuitBrief {
        circuit_id: c.circuit.id,
        number: c.circuit.number.clone(),
        description: c.circuit.description.clone(),
        kind: c.circuit.kind,
        device: c.circuit.device.map(|d| d.to_string()),
        live_mm2: c.circuit.live_mm2,
        cpc_mm2: c.circuit.cpc_mm2,
        rcd_ma: c.circuit.rcd_ma,
        last_visit: c.last_visit,
        last_readings: c.last_readings.clone(),
        expectations,
        flags: c
            .flags
            .iter()
            .map(|f| format!("{}: {}", f.severity, f.reason))
            .collect(),
        test_first: Vec::new(),
        other_flags: Vec::new(),
        notes,
    }
}

/// The analysed series a field belongs to.
fn series_for(c: &CircuitAnalysis, f: Field) -> Option<&SeriesAnalysis> {
    let label = match f {
        Field::RingR1 => "ring r1",
        Field::RingRn => "ring rn",
        Field::RingR2 => "ring r2",
        Field::Rcd5x => crate::analysis::RCD_FIVE_LABEL,
        Field::Rcd => "RCD trip time at 1 × IΔn",
        _ => {
            let key = f.quantity().key();
            return c.series.iter().find(|s| s.quantity == key);
        }
    };
    c.series.iter().find(|s| s.label == label)
}

/// The measured-value maximum Zs at the visit's temperature.
fn zs_limit_at(
    c: &CircuitAnalysis,
    temp: f64,
    lc: LimitsConfig,
    notes: &mut Vec<String>,
) -> Option<LimitAt> {
    let (rule, assumed) = (lc.measured_rule, lc.assumed_insulation);
    if let Some(z) = &c.zs_limit {
        return match limits::measured_limit(
            z.zs_max_ohm,
            rule,
            &TestConditions {
                temp_c: Some(temp),
                insulation: c.circuit.insulation,
                assumed_insulation: assumed,
            },
        ) {
            Ok(m) => Some(LimitAt {
                value: m.limit_ohm,
                kind: LimitKind::Max,
                words: match rule {
                    MeasuredRule::TemperatureCorrected => format!(
                        "measured-value maximum Zs for {} at {temp} °C ({:.2} Ω tabulated{})",
                        z.device_text,
                        z.zs_max_ohm,
                        match m.insulation {
                            Some(i) if m.insulation_assumed => format!(
                                "; insulation not recorded, {} assumed",
                                limits::insulation_words(i)
                            ),
                            _ => String::new(),
                        }
                    ),
                    MeasuredRule::RuleOfThumb80 => format!(
                        "80 % of the tabulated {:.2} Ω for {}",
                        z.zs_max_ohm, z.device_text
                    ),
                },
                advisory: false,
            }),
            Err(e) => {
                notes.push(format!("measured-value limit: {e}"));
                None
            }
        };
    }
    // TT: the series carries the 50 V / IΔn limit, which does not move with temperature.
    c.series.iter().find(|s| s.quantity == "zs").and_then(|s| {
        Some(LimitAt {
            value: s.limit?,
            kind: LimitKind::Max,
            words: s.limit_words.as_deref().unwrap_or_default().to_string(),
            advisory: false,
        })
    })
}

/// The limit on R1+Rn alone: the line–neutral loop Ze + R1+Rn against the same device limit.
fn r1rn_limit_at(
    c: &CircuitAnalysis,
    zs: Option<&LimitAt>,
    ze: Option<f64>,
    series: Option<&SeriesAnalysis>,
) -> Option<LimitAt> {
    let zs = zs.filter(|_| c.zs_limit.is_some())?;
    let (value, ze_words) = match (ze, series.and_then(|s| s.limit)) {
        (Some(z), _) if zs.value > z => (zs.value - z, format!("the latest Ze {z:.2} Ω")),
        // A sub-board: the analysis took its Zdb off the limit at 20 °C; take it off here too.
        (None, Some(l20)) => {
            let at20 = c.series.iter().find(|s| s.quantity == "zs")?.limit?;
            (
                l20 + (zs.value - at20),
                "the latest Ze at this board".into(),
            )
        }
        _ => return None,
    };
    let value = limits::round_down_2dp(value);
    Some(LimitAt {
        value,
        kind: LimitKind::Max,
        words: format!(
            "line–neutral check value (ohmtrail's practice, Reg 434.5.2; R1+Rn has no published maximum): {} less {ze_words}",
            zs.words
        ),
        advisory: false,
    })
}

/// Convert an expectation at 20 °C to the visit's temperature (R_t = R20 × (1 + α(t − 20))).
/// For Zs only the circuit's part moves with temperature; Ze is the supply's.
fn convert_to(e: &mut Expectation, temp: f64, ze: Option<f64>) {
    if e.basis.contains("not converted") || e.last.as_ref().is_none_or(|l| l.ambient_c.is_none()) {
        return;
    }
    let conv = |v: f64| -> Option<f64> {
        match ze {
            Some(z) if v > z => from_r20(v - z, temp).ok().map(|p| z + p),
            _ => from_r20(v, temp).ok(),
        }
    };
    e.expected = e.expected.and_then(conv);
    if let Some(b) = &mut e.band {
        b.low = b.low.and_then(conv);
        b.high = b.high.and_then(conv);
    }
    e.basis.push_str(&format!(", converted to {temp} °C"));
}

fn ze_expectation(
    supply: Option<&SeriesAnalysis>,
    date: NaiveDate,
    cfg: &TrendConfig,
) -> Expectation {
    let mut e = expectation(Field::Ze, supply, None, None, (date, true), cfg);
    if supply.is_none() {
        e.basis = "no Ze on record at this board".into();
    }
    e.limit = supply.and_then(|s| {
        Some(LimitAt {
            value: s.limit?,
            kind: LimitKind::Max,
            words: s.limit_words.as_deref().unwrap_or_default().to_string(),
            advisory: true,
        })
    });
    e
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::analysis::{Settings, analyse};
    use crate::model::{Earthing, Insulation, ObservationCode, VisitState};
    use crate::store::{CircuitDetails, NewBoard, NewProperty, NewVisit, Store};

    fn day(s: &str) -> NaiveDate {
        s.parse().unwrap()
    }

    /// An invented property: one TN-C-S board, one B32 radial in 70 °C thermoplastic cable.
    fn invented(visits: &[(&str, f64, f64, f64)]) -> (Store, i64) {
        let s = Store::open_in_memory().unwrap();
        let p = s
            .add_property(&NewProperty {
                reference: "INV-1".into(),
                ..Default::default()
            })
            .unwrap();
        s.add_board(
            "INV-1",
            &NewBoard {
                designation: "CU".into(),
                earthing: Some(Earthing::TnCS),
                ..Default::default()
            },
        )
        .unwrap();
        let c = s
            .add_circuit(
                "INV-1",
                "CU",
                "1",
                &CircuitDetails {
                    device: Some("B32".parse().unwrap()),
                    live_mm2: Some(2.5),
                    cpc_mm2: Some(1.5),
                    insulation: Some(Insulation::Thermoplastic70),
                    ..Default::default()
                },
            )
            .unwrap();
        for (date, ambient, r1r2, zs) in visits {
            let v = s
                .add_visit(
                    p.id,
                    &NewVisit {
                        date: Some(day(date)),
                        ambient_c: Some(*ambient),
                        ze_ohm: Some(0.20),
                        ..Default::default()
                    },
                    VisitState::Complete,
                )
                .unwrap();
            s.put_test_record(
                v.id,
                c.id,
                &Readings {
                    r1r2_ohm: Some(*r1r2),
                    zs_ohm: Some(*zs),
                    ..Default::default()
                },
            )
            .unwrap();
        }
        (s, p.id)
    }

    fn exp(b: &Brief, f: Field) -> &Expectation {
        b.boards[0].circuits[0]
            .expectations
            .iter()
            .find(|e| e.field == f)
            .unwrap()
    }

    fn close(a: f64, b: f64) {
        assert!((a - b).abs() < 1e-6, "{a} vs {b}");
    }

    #[test]
    fn a_steady_circuit_s_band_by_hand() {
        // Four invented readings at 20 °C (no correction), as noisy as ordinary site work:
        // R1+R2 0.48, 0.50, 0.49, 0.51 Ω. Nothing moves beyond the noise floor, so the
        // expectation is their median, 0.495 Ω.
        let (s, id) = invented(&[
            ("2010-05-01", 20.0, 0.48, 0.68),
            ("2014-05-01", 20.0, 0.50, 0.70),
            ("2018-05-01", 20.0, 0.49, 0.69),
            ("2022-05-01", 20.0, 0.51, 0.71),
        ]);
        let a = analyse(
            &s.history(id).unwrap(),
            &Settings::defaults(day("2025-01-01")),
        );
        let b = brief(&a, day("2026-05-01"), Some(20.0), &[]);
        let r = exp(&b, Field::R1r2);
        close(r.expected.unwrap(), 0.495);
        // The noise model (sim::noise): a² = 0.005² + 0.01² / 12 = 3.3333e-5;
        // b² = 0.005² + 0.015² / 3 + 0.15 × (0.04)² + (0.00393 × 2.5)² = 4.3653e-4;
        // σ_model at 0.495 = √(3.3333e-5 + 4.3653e-4 × 0.495²) = 0.0118446 Ω.
        // The circuit's own scatter about the median: √((0.015² + 0.005² + 0.005² + 0.015²) / 3)
        // = 0.0129099 Ω; weighed with the model as 4 readings against its 3 degrees of freedom:
        // σ = √((4 × 0.0118446² + 3 × 0.0129099²) / 7) = 0.0123125 Ω. The median's own
        // uncertainty 1.25 × σ / √4 = 0.0076953 Ω. Half-width 2 × √(σ² + 0.0076953²)
        // = 2 × 0.0145194 = 0.0290389 Ω: the band 0.4659611 to 0.5240389 Ω, 11.7 % wide.
        let band = r.band.unwrap();
        close(band.low.unwrap(), 0.4659611);
        close(band.high.unwrap(), 0.5240389);
        assert!(r.basis.contains("median of 4 readings"), "{}", r.basis);
        assert_eq!(r.wide, None);
        // A loose cpc termination adding 0.15 Ω would read 0.65 Ω: far outside.
        assert!(0.645 > band.high.unwrap());

        // Zs: only the circuit's part moves with temperature. Median Zs 0.695 Ω at 20 °C;
        // at 10 °C = Ze 0.20 + (0.695 − 0.20) × 0.9607 = 0.675546 Ω.
        let cold = brief(&a, day("2026-05-01"), Some(10.0), &[]);
        let z = exp(&cold, Field::Zs);
        close(z.expected.unwrap(), 0.20 + 0.495 * 0.9607);
        // Limit: B32 tabulated 1.37 Ω (BS 7671:2018+A2:2022 Table 41.3); measured-value limit
        // at 10 °C = 1.37 × 0.9607 / 1.20 = 1.0968 → 1.09 Ω, rounded down (On-Site Guide
        // Appendix I, k = 1.20 for 70 °C thermoplastic, from memory).
        let l = z.limit.as_ref().unwrap();
        assert_eq!(l.value, 1.09);
        assert_eq!(l.kind, LimitKind::Max);
        assert!(l.words.contains("at 10 °C"), "{}", l.words);
        // R1+Rn: the same loop limit less the latest Ze: 1.09 − 0.20 = 0.89 Ω.
        assert_eq!(exp(&cold, Field::R1rn).limit.as_ref().unwrap().value, 0.89);
        // At 25 °C the limit is higher: 1.37 × 1.01965 / 1.20 = 1.1641 → 1.16 Ω.
        let warm = brief(&a, day("2026-05-01"), Some(25.0), &[]);
        assert_eq!(exp(&warm, Field::Zs).limit.as_ref().unwrap().value, 1.16);
    }

    #[test]
    fn one_visit_gives_the_last_value_at_20_converted_with_a_wide_band() {
        // One visit at 10 °C reading 0.4804 Ω: R20 = 0.4804 / 0.9607 = 0.5000520 Ω; on any
        // day, at 25 °C, expect 0.5000520 × (1 + 0.00393 × 5) = 0.5098781 Ω.
        let (s, id) = invented(&[("2024-03-01", 10.0, 0.4804, 0.69)]);
        let a = analyse(
            &s.history(id).unwrap(),
            &Settings::defaults(day("2025-01-01")),
        );
        let b = brief(&a, day("2026-03-01"), Some(25.0), &[]);
        let r = exp(&b, Field::R1r2);
        close(r.expected.unwrap(), 0.4804 / 0.9607 * 1.01965);
        // σ_model at 0.5000520 = √(3.3333e-5 + 4.3653e-4 × 0.5000520²) = 0.0119369 Ω; one
        // reading, so the level is as uncertain again (1.25 σ / √1): half-width
        // 2 × σ × √(1 + 1.25²) = 0.0382166 Ω at 20 °C, then × 1.01965 at 25 °C.
        let band = r.band.unwrap();
        close(band.high.unwrap(), (0.5000520 + 0.0382166) * 1.01965);
        close(band.low.unwrap(), (0.5000520 - 0.0382166) * 1.01965);
        assert!(r.basis.starts_with("the last reading"), "{}", r.basis);
        assert!(
            r.wide
                .as_deref()
                .unwrap()
                .contains("only one earlier reading")
        );
        // Nothing recorded for insulation: no expectation, but the minimum is there
        // (BS 7671 Table 64: 1.0 MΩ for circuits up to 500 V).
        let ir = exp(&b, Field::IrLe);
        assert_eq!(ir.expected, None);
        assert_eq!(ir.limit.as_ref().unwrap().value, 1.0);
        assert_eq!(ir.limit.as_ref().unwrap().kind, LimitKind::Min);
    }

    #[test]
    fn elapsed_time_in_whole_years_months_or_days() {
        assert_eq!(elapsed(day("2024-01-31"), day("2024-02-29")), "29 days");
        assert_eq!(elapsed(day("2025-01-15"), day("2025-03-15")), "2 months");
        assert_eq!(elapsed(day("2025-01-15"), day("2025-03-14")), "1 month");
        assert_eq!(elapsed(day("2024-03-01"), day("2025-03-01")), "1 year");
        assert_eq!(
            elapsed(day("2016-01-31"), day("2026-12-02")),
            "10 years 10 months"
        );
    }

    #[test]
    fn default_temperature_flags_calibration_and_observations() {
        let (s, id) = invented(&[
            ("2020-01-01", 20.0, 0.50, 0.70),
            ("2024-01-01", 20.0, 0.90, 1.10),
        ]);
        let v = s.visit_on(id, day("2024-01-01")).unwrap().unwrap();
        s.add_observation(
            v.id,
            None,
            None,
            ObservationCode::C3,
            "No RCD on the lighting",
        )
        .unwrap();
        let a = analyse(
            &s.history(id).unwrap(),
            &Settings::defaults(day("2025-01-01")),
        );
        let insts = [
            Instrument {
                id: 1,
                serial: "MFT-A".into(),
                description: None,
                calibration_due: Some(day("2026-02-01")),
            },
            Instrument {
                id: 2,
                serial: "MFT-B".into(),
                description: None,
                calibration_due: Some(day("2026-06-01")),
            },
            Instrument {
                id: 3,
                serial: "MFT-C".into(),
                description: None,
                calibration_due: None,
            },
            Instrument {
                id: 4,
                serial: "MFT-OLD".into(),
                description: None,
                calibration_due: Some(day("2016-01-31")),
            },
        ];
        let b = brief(&a, day("2026-03-01"), None, &insts);
        assert_eq!(b.temp_c, DEFAULT_TEMP_C);
        assert!(b.temp_assumed);
        assert!(b.notes.iter().any(|n| n.contains("15 °C")));
        // R1+R2 rose 0.40 Ω, far beyond the noise floor, so the circuit is on the worklist.
        assert!(!b.test_first.is_empty());
        assert_eq!(b.test_first[0].circuit.as_deref(), Some("1"));
        assert!(!b.boards[0].circuits[0].flags.is_empty());
        // MFT-A lapses before the visit, MFT-B does not, MFT-C has no date, and MFT-OLD
        // lapsed long before today (2025-01-01): 2016-01-31 to 2024-12-31 is 8 years 11 months.
        let serials: Vec<&str> = b.instruments.iter().map(|i| i.serial.as_str()).collect();
        assert_eq!(serials, ["MFT-A", "MFT-C", "MFT-OLD"]);
        assert_eq!(
            b.instruments[0].why,
            "calibration runs out on 2026-02-01, before the visit on 2026-03-01: recalibrate it or take another instrument"
        );
        assert_eq!(
            b.instruments[2].why,
            "calibration lapsed on 2016-01-31, 8 years 11 months ago: recalibrate it or take another instrument"
        );
        // The circuit's flags are the brief's "test first" items, given there and pointed at.
        let c = &b.boards[0].circuits[0];
        assert_eq!(c.test_first, (1..=b.test_first.len()).collect::<Vec<_>>());
        assert_eq!(c.flags.len(), b.test_first.len());
        assert!(c.other_flags.is_empty(), "{:?}", c.other_flags);
        assert_eq!(b.observations.len(), 1);
        assert_eq!(b.observations[0].text, "No RCD on the lighting");
        assert_eq!(b.caution, crate::CAUTION);
        // Ze: no temperature correction; the last Ze is 0.20 at both visits.
        close(b.boards[0].ze.expected.unwrap(), 0.20);
    }
}
