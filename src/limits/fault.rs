//! Both fault paths of one circuit against its device.
//!
//! Earth fault: Ze + (R1+R2), or a measured Zs, against the device's maximum Zs (Chapter 41,
//! automatic disconnection). Line–neutral: Ze + (R1+Rn) against a check value, ohmtrail's own
//! practice: the same figure as the earth fault path, so the device operates as fast on a
//! line–neutral fault (fault current protection, Regulation 434.5.2). R1+Rn has no published
//! maximum and Chapter 41's times are for earth faults, so the check value is never called a
//! maximum. Readings are taken cold: with Ze known, only the circuit's own conductors are
//! corrected for temperature, Ze is taken as measured.

use serde::{Deserialize, Serialize};

use super::measured::{
    LimitsConfig, MeasuredLimit, MeasuredRule, TestConditions, insulation_words, measured_limit,
    measured_loop_limit,
};
use super::source::{Source, SourceStatus};
use super::supply::typical_max_ze;
use super::zs::{CMIN, DisconnectionTime, RcdZsLimit, U0_V, ZsLimit, max_zs, tt_rcd_zs_max};
use super::{LimitsError, check_ohms};
use crate::model::{Device, Earthing};

/// One set of readings for a circuit, and what is known about it.
#[derive(Debug, Clone, PartialEq)]
pub struct FaultPathInputs {
    pub device: Device,
    pub disconnection: DisconnectionTime,
    pub earthing: Option<Earthing>,
    /// RCD rated residual current, mA, when the circuit has one.
    pub rcd_ma: Option<u16>,
    pub ze_ohm: Option<f64>,
    pub r1r2_ohm: Option<f64>,
    pub r1rn_ohm: Option<f64>,
    /// Earth fault loop impedance measured directly at the circuit.
    pub zs_ohm: Option<f64>,
    pub conditions: TestConditions,
    pub rule: MeasuredRule,
}

impl FaultPathInputs {
    /// Inputs with no readings yet, the default rule and the given device and time.
    pub fn new(device: Device, disconnection: DisconnectionTime) -> FaultPathInputs {
        FaultPathInputs {
            device,
            disconnection,
            earthing: None,
            rcd_ma: None,
            ze_ohm: None,
            r1r2_ohm: None,
            r1rn_ohm: None,
            zs_ohm: None,
            conditions: TestConditions::default(),
            rule: MeasuredRule::default(),
        }
    }
}

#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum FaultPath {
    EarthFault,
    LineNeutral,
}

impl FaultPath {
    pub fn as_str(self) -> &'static str {
        match self {
            FaultPath::EarthFault => "earth fault",
            FaultPath::LineNeutral => "line–neutral",
        }
    }
}

#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum PathOutcome {
    /// Within the measured-value limit.
    Within,
    /// Over the measured-value limit but within the tabulated one: it may exceed the table
    /// once the conductors are at operating temperature.
    OverMeasuredLimit,
    /// Over the tabulated limit as measured.
    OverTabulatedLimit,
}

/// One fault path judged.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct PathResult {
    pub path: FaultPath,
    pub impedance_ohm: f64,
    /// How the impedance was made up, with the figures.
    pub made_of: String,
    /// The figure the reading is judged against, Ω.
    pub limit_ohm: f64,
    /// The tabulated figure behind it, Ω.
    pub tabulated_ohm: f64,
    /// Share of the limit used, %.
    pub used_pct: f64,
    /// Minimum fault current Cmin·U0 / Z, A: the least the supply is expected to drive round
    /// this loop, not the prospective fault current (a maximum) recorded on a schedule.
    pub min_fault_current_a: f64,
    /// Current needed to operate the protection in time, A.
    pub ia_a: f64,
    pub outcome: PathOutcome,
    /// What the figures mean, in plain words.
    pub consequence: String,
    pub sources: Vec<Source>,
}

/// Both paths of one circuit, with the limits used and the notes that go with them.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct FaultPathReport {
    pub device_limit: ZsLimit,
    pub measured_limit: MeasuredLimit,
    /// Table 41.5 limit used for the earth fault path of an RCD-protected TT circuit.
    pub rcd_limit: Option<RcdZsLimit>,
    pub earth_fault: Option<PathResult>,
    pub line_neutral: Option<PathResult>,
    pub notes: Vec<String>,
}

const FAULT_CURRENT: Source = Source::new(
    "BS 7671:2018+A2:2022 Regulation 411.4.5",
    SourceStatus::Derived,
    "minimum fault current If = Cmin × U0 / Z = 0.95 × 230 V / Z: the least current expected, not the prospective fault current (a maximum)",
);
const LINE_NEUTRAL: Source = Source::new(
    "BS 7671:2018+A2:2022 Regulation 434.5.2 (fault current protection); ohmtrail's own practice",
    SourceStatus::CommonPractice,
    "check value: the line–neutral loop Ze + R1+Rn is held to the device's earth fault figure, so the device operates as fast on a line–neutral fault; R1+Rn has no published maximum, and Chapter 41's disconnection times are for earth faults",
);

fn opt(what: &'static str, v: Option<f64>) -> Result<Option<f64>, LimitsError> {
    v.map(|x| check_ohms(what, x)).transpose()
}

/// Evaluate both fault paths of one circuit.
pub fn evaluate_fault_paths(inputs: &FaultPathInputs) -> Result<FaultPathReport, LimitsError> {
    let ze = opt("Ze", inputs.ze_ohm)?;
    let r1r2 = opt("R1+R2", inputs.r1r2_ohm)?;
    let r1rn = opt("R1+Rn", inputs.r1rn_ohm)?;
    let zs = opt("Zs", inputs.zs_ohm)?;
    let tt = inputs.earthing == Some(Earthing::Tt);
    if tt && inputs.rcd_ma.is_none() {
        return Err(LimitsError::TtWithoutRcd);
    }
    let mut notes = Vec::new();

    let device_limit = max_zs(&inputs.device, inputs.disconnection)?;
    let (rule, fell_back) = if inputs.rule == MeasuredRule::TemperatureCorrected
        && inputs.conditions.temp_c.is_none()
    {
        (MeasuredRule::RuleOfThumb80, true)
    } else {
        (inputs.rule, false)
    };
    if fell_back {
        notes.push(
            "test temperature not given: the temperature-corrected rule needs it, so the 80 % rule was applied"
                .to_string(),
        );
    }
    // With Ze known only the circuit's conductors are corrected; without it the whole loop is.
    let measured = match ze {
        Some(z) if !tt => {
            measured_loop_limit(device_limit.zs_max_ohm, rule, &inputs.conditions, z)?
        }
        _ => measured_limit(device_limit.zs_max_ohm, rule, &inputs.conditions)?,
    };
    if let Some(c) = &measured.caution {
        notes.push(c.clone());
    }
    // On TT the earth fault path is judged against the RCD, so no assumption is used there.
    if measured.insulation_assumed
        && !tt
        && let Some(i) = measured.insulation
    {
        notes.push(format!(
            "insulation not recorded: {} assumed (setting {}); the limit is {:.2} Ω on that basis",
            insulation_words(i),
            LimitsConfig::ASSUMED_INSULATION_KEY,
            measured.limit_ohm
        ));
    }
    if !tt && ze.is_none() && rule == MeasuredRule::TemperatureCorrected {
        notes.push(
            "Ze not given: the whole loop was corrected for temperature, which gives the lower limit"
                .to_string(),
        );
    }

    let earth_z = match (zs, ze, r1r2) {
        (Some(z), Some(e), Some(r)) => {
            let sum = e + r;
            Some(if z >= sum {
                (
                    z,
                    format!(
                        "measured Zs {z:.2}, the higher of it and Ze + R1+R2 = {e:.2} + {r:.2} = {sum:.2}"
                    ),
                )
            } else {
                (
                    sum,
                    format!(
                        "Ze + R1+R2 = {e:.2} + {r:.2} = {sum:.2}, the higher of it and measured Zs {z:.2}"
                    ),
                )
            })
        }
        (Some(z), _, _) => Some((z, format!("measured Zs {z:.2}"))),
        (None, Some(e), Some(r)) => Some((e + r, format!("Ze + R1+R2 = {e:.2} + {r:.2}"))),
        _ => None,
    };
    // On TT, Ze runs through the installation's electrode, so Ze + R1+Rn is not the
    // line–neutral loop.
    let ln_z = match (ze, r1rn) {
        (Some(e), Some(r)) if !tt => Some((e + r, format!("Ze + R1+Rn = {e:.2} + {r:.2}"))),
        _ => None,
    };
    if earth_z.is_none() && ln_z.is_none() {
        return Err(LimitsError::NothingToJudge(
            "give Ze with R1+R2 or R1+Rn, or a measured Zs",
        ));
    }
    if earth_z.is_none() {
        notes.push("earth fault path not judged: it needs Ze and R1+R2, or a measured Zs".into());
    }
    if ln_z.is_none() {
        notes.push(if tt {
            "line–neutral path not judged: on TT, Ze includes the earth electrode, so Ze + R1+Rn is not the line–neutral loop".into()
        } else {
            "line–neutral path not judged: it needs Ze and R1+Rn".into()
        });
    }

    let time = inputs.disconnection.as_str();
    let rcd_limit = if tt {
        // Checked above: a TT circuit here always has an RCD.
        inputs.rcd_ma.map(tt_rcd_zs_max).transpose()?
    } else {
        None
    };

    let earth_fault = earth_z.map(|(z, made_of)| match &rcd_limit {
        Some(rl) => judge_rcd_path(z, made_of, rl),
        None => judge_device_path(
            FaultPath::EarthFault,
            z,
            made_of,
            &device_limit,
            &measured,
            time,
        ),
    });
    let line_neutral = ln_z.map(|(z, made_of)| {
        let mut r = judge_device_path(
            FaultPath::LineNeutral,
            z,
            made_of,
            &device_limit,
            &measured,
            time,
        );
        r.sources.push(LINE_NEUTRAL);
        r
    });

    if let (Some(e), Some(l)) = (&earth_fault, &line_neutral)
        && e.outcome == PathOutcome::Within
        && l.outcome != PathOutcome::Within
    {
        notes.push(
            "the earth fault path passes but the line–neutral path does not: a high-resistance neutral can leave the device too slow"
                .to_string(),
        );
    }
    if inputs.rcd_ma.is_some() && !tt {
        notes.push(
            "an RCD is recorded: the earth fault path is still judged against the device's own limit"
                .to_string(),
        );
    }
    match inputs.earthing {
        None => notes.push(
            "earthing not recorded: the circuit is judged as TN, against the device's own limit"
                .to_string(),
        ),
        Some(e) => {
            // A TT Ze includes the installation's electrode, which the typical figure excludes.
            if e != Earthing::Tt
                && let Some(n) = ze.and_then(|z| typical_max_ze(e).note_for(z))
            {
                notes.push(n);
            }
            if e == Earthing::Tt
                && let Some(z) = ze.filter(|z| *z > 200.0)
            {
                notes.push(format!(
                    "Ze {z:.0} Ω on TT is above 200 Ω, where an earth electrode's resistance may not be stable (BS 7671 Table 41.5, note): the installation's electrode is the likely cause, the landlord's to put right"
                ));
            }
        }
    }

    Ok(FaultPathReport {
        device_limit,
        measured_limit: measured,
        rcd_limit,
        earth_fault,
        line_neutral,
        notes,
    })
}

fn fault_current(z: f64) -> f64 {
    if z > 0.0 {
        CMIN * U0_V / z
    } else {
        f64::INFINITY
    }
}

fn judge_device_path(
    path: FaultPath,
    z: f64,
    made_of: String,
    dl: &ZsLimit,
    ml: &MeasuredLimit,
    time: &str,
) -> PathResult {
    let i_f = fault_current(z);
    let ia = dl.ia_a;
    let limit = ml.limit_ohm;
    let tab = dl.zs_max_ohm;
    let device = &dl.device_text;
    let (outcome, consequence) = match path {
        FaultPath::EarthFault => {
            if z <= limit + 1e-9 {
                (
                    PathOutcome::Within,
                    format!(
                        "within the measured-value limit {limit:.2} Ω: a minimum fault current of about {i_f:.0} A exceeds Ia {ia:.0} A, so the {device} is expected to disconnect within {time}"
                    ),
                )
            } else if z <= tab + 1e-9 {
                (
                    PathOutcome::OverMeasuredLimit,
                    format!(
                        "over the measured-value limit {limit:.2} Ω though within the tabulated {tab:.2} Ω: with the conductors at operating temperature the loop may exceed {tab:.2} Ω, and the {device} may not disconnect within {time}"
                    ),
                )
            } else {
                (
                    PathOutcome::OverTabulatedLimit,
                    format!(
                        "over the tabulated {tab:.2} Ω: a minimum fault current of about {i_f:.0} A is below Ia {ia:.0} A, so the {device} may not disconnect within {time}"
                    ),
                )
            }
        }
        // No published maximum and no Chapter 41 time: the words say what the check is.
        FaultPath::LineNeutral => {
            if z <= limit + 1e-9 {
                (
                    PathOutcome::Within,
                    format!(
                        "within the check value {limit:.2} Ω: a minimum line–neutral fault current of about {i_f:.0} A exceeds the {ia:.0} A that operates the {device} as on an earth fault"
                    ),
                )
            } else if z <= tab + 1e-9 {
                (
                    PathOutcome::OverMeasuredLimit,
                    format!(
                        "over the check value {limit:.2} Ω at the test temperature though within {tab:.2} Ω: warm in service, the line–neutral loop may pass {tab:.2} Ω, and the {device} may operate more slowly on a line–neutral fault than on an earth fault"
                    ),
                )
            } else {
                (
                    PathOutcome::OverTabulatedLimit,
                    format!(
                        "over the check value {tab:.2} Ω: a minimum line–neutral fault current of about {i_f:.0} A is below the {ia:.0} A that operates the {device} as on an earth fault, so it may be slow to clear a line–neutral fault"
                    ),
                )
            }
        }
    };
    PathResult {
        path,
        impedance_ohm: z,
        made_of,
        limit_ohm: limit,
        tabulated_ohm: tab,
        used_pct: z / limit * 100.0,
        min_fault_current_a: i_f,
        ia_a: ia,
        outcome,
        consequence,
        sources: vec![
            dl.source.clone(),
            ml.source.clone(),
            dl.ia_source.clone(),
            FAULT_CURRENT,
        ],
    }
}

fn judge_rcd_path(z: f64, made_of: String, rl: &RcdZsLimit) -> PathResult {
    let i_f = fault_current(z);
    let ia = f64::from(rl.rcd_ma) / 1000.0;
    let limit = rl.zs_max_ohm;
    let ma = rl.rcd_ma;
    let (outcome, consequence) = if z <= limit {
        (
            PathOutcome::Within,
            format!(
                "within {limit:.0} Ω (50 V / {ma} mA): the touch voltage stays under 50 V while the {ma} mA RCD operates"
            ),
        )
    } else {
        (
            PathOutcome::OverTabulatedLimit,
            format!(
                "over {limit:.0} Ω (50 V / {ma} mA): the touch voltage may exceed 50 V before the {ma} mA RCD operates"
            ),
        )
    };
    PathResult {
        path: FaultPath::EarthFault,
        impedance_ohm: z,
        made_of,
        limit_ohm: limit,
        tabulated_ohm: limit,
        used_pct: z / limit * 100.0,
        min_fault_current_a: i_f,
        ia_a: ia,
        outcome,
        consequence,
        sources: vec![rl.source.clone(), FAULT_CURRENT],
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::model::Insulation;

    fn b16() -> FaultPathInputs {
        // The contract example: B16, Ze 0.30, R1+R2 0.60, R1+Rn 0.50, tested at 15 °C.
        FaultPathInputs {
            ze_ohm: Some(0.30),
            r1r2_ohm: Some(0.60),
            r1rn_ohm: Some(0.50),
            earthing: Some(Earthing::TnCS),
            conditions: TestConditions {
                temp_c: Some(15.0),
                insulation: Some(Insulation::Thermoplastic70),
                ..TestConditions::default()
            },
            ..FaultPathInputs::new("B16".parse().unwrap(), DisconnectionTime::S0_4)
        }
    }

    #[test]
    fn worked_example_b16_both_paths_within() {
        // Table 41.3: B16 2.73 Ω, Ia = 5 × 16 = 80 A.
        // Corrected limit at 15 °C, 70 °C cable, only the circuit's part corrected (Ze as
        // measured): 0.30 + (2.73 − 0.30) × (1 − 0.00393 × 5) / 1.20
        //   = 0.30 + 2.43 × 0.98035 / 1.20 = 0.30 + 1.98521 = 2.28521 → 2.28 Ω (rounded down);
        //   the circuit's part alone 1.98521 → 1.98 Ω.
        // Earth fault: 0.30 + 0.60 = 0.90 Ω; used 0.90 / 2.28 = 39.47 %;
        //   minimum If = 218.5 / 0.9 = 242.8 A.
        // Line–neutral: 0.30 + 0.50 = 0.80 Ω; If = 218.5 / 0.8 = 273.1 A.
        let r = evaluate_fault_paths(&b16()).unwrap();
        assert_eq!(r.device_limit.zs_max_ohm, 2.73);
        assert_eq!(r.measured_limit.limit_ohm, 2.28);
        assert_eq!(r.measured_limit.circuit_part_ohm, Some(1.98));
        let e = r.earth_fault.unwrap();
        assert!((e.impedance_ohm - 0.90).abs() < 1e-12);
        assert!((e.used_pct - 39.47).abs() < 0.01, "{}", e.used_pct);
        assert!((e.min_fault_current_a - 242.78).abs() < 0.01);
        assert_eq!(e.ia_a, 80.0);
        assert_eq!(e.outcome, PathOutcome::Within);
        assert!(
            e.consequence
                .contains("expected to disconnect within 0.4 s")
        );
        let l = r.line_neutral.unwrap();
        assert!((l.min_fault_current_a - 273.125).abs() < 1e-9);
        assert_eq!(l.outcome, PathOutcome::Within);
        // The line–neutral figure is a check value, never a maximum nor a Chapter 41 time.
        assert!(
            l.consequence.contains("check value 2.28 Ω"),
            "{}",
            l.consequence
        );
        assert!(!l.consequence.contains("0.4 s"), "{}", l.consequence);
        assert!(l.sources.iter().any(|s| s.citation.contains("434.5.2")));
        assert!(
            e.sources
                .iter()
                .any(|s| s.rule.contains("minimum fault current"))
        );
    }

    #[test]
    fn ze_is_not_corrected_for_temperature() {
        // Invented B32 radial, 10 °C, 70 °C cable, noisy readings: Ze 0.31, R1+R2 0.83.
        // Only R1+R2 warms in service: hot loop ≈ 0.31 + 0.83 × 1.20 / 0.9607 = 1.3468 Ω,
        // under 1.37 Ω. The limit: 0.31 + (1.37 − 0.31) × 0.9607 / 1.20 = 0.31 + 0.84862
        // = 1.15862 → 1.15 Ω, and Ze + R1+R2 = 1.14 Ω is within it. Correcting Ze too
        // (1.37 × 0.9607 / 1.20 = 1.0968 → 1.09 Ω) would call this circuit over its limit.
        let inputs = FaultPathInputs {
            ze_ohm: Some(0.31),
            r1r2_ohm: Some(0.83),
            r1rn_ohm: None,
            conditions: TestConditions {
                temp_c: Some(10.0),
                insulation: Some(Insulation::Thermoplastic70),
                ..TestConditions::default()
            },
            ..FaultPathInputs::new("B32".parse().unwrap(), DisconnectionTime::S0_4)
        };
        let r = evaluate_fault_paths(&inputs).unwrap();
        assert_eq!(r.measured_limit.limit_ohm, 1.15);
        assert_eq!(r.measured_limit.circuit_part_ohm, Some(0.84));
        assert_eq!(r.earth_fault.unwrap().outcome, PathOutcome::Within);
        assert!(r.measured_limit.source.rule.contains("Ze as measured"));
        // Without Ze apart (a measured Zs alone) the whole loop is corrected, and said so.
        let zs_only = FaultPathInputs {
            ze_ohm: None,
            r1r2_ohm: None,
            zs_ohm: Some(1.14),
            ..inputs
        };
        let r = evaluate_fault_paths(&zs_only).unwrap();
        assert_eq!(r.measured_limit.limit_ohm, 1.09);
        assert!(
            r.notes.iter().any(|n| n.contains("whole loop")),
            "{:?}",
            r.notes
        );
    }

    #[test]
    fn unrecorded_insulation_is_assumed_and_said() {
        // The example: B32 at 10 °C. 70 °C thermoplastic (the default assumption):
        // 1.37 × 0.9607 / 1.20 = 1.0968 → 1.09 Ω, where the trade's charts for ordinary twin
        // and earth give 1.09–1.10 Ω (from memory). 90 °C: / 1.28 = 1.0283 → 1.02 Ω.
        // Measured Zs only, so the whole loop is corrected.
        let mut inputs = FaultPathInputs {
            zs_ohm: Some(0.98),
            conditions: TestConditions {
                temp_c: Some(10.0),
                ..TestConditions::default()
            },
            ..FaultPathInputs::new("B32".parse().unwrap(), DisconnectionTime::S0_4)
        };
        let r = evaluate_fault_paths(&inputs).unwrap();
        assert_eq!(r.measured_limit.limit_ohm, 1.09);
        assert!(r.measured_limit.insulation_assumed);
        assert!(
            r.notes
                .iter()
                .any(|n| n.contains("70 °C thermoplastic assumed") && n.contains("1.09 Ω")),
            "{:?}",
            r.notes
        );
        inputs.conditions.assumed_insulation = Insulation::Thermosetting90;
        let r = evaluate_fault_paths(&inputs).unwrap();
        assert_eq!(r.measured_limit.limit_ohm, 1.02);
        assert!(
            r.notes
                .iter()
                .any(|n| n.contains("90 °C thermosetting assumed"))
        );
        // Recorded insulation is no assumption.
        inputs.conditions.insulation = Some(Insulation::Thermoplastic70);
        let r = evaluate_fault_paths(&inputs).unwrap();
        assert!(!r.measured_limit.insulation_assumed);
        assert!(!r.notes.iter().any(|n| n.contains("assumed")));
    }

    #[test]
    fn high_resistance_neutral_is_caught_when_earth_passes() {
        // Invented B32 ring, 10 °C, 70 °C cable. Limit: 0.25 + (1.37 − 0.25) × 0.9607 / 1.20
        //   = 0.25 + 0.89665 = 1.14665 → 1.14 Ω.
        // Earth: 0.25 + 0.55 = 0.80 Ω within. Line–neutral: 0.25 + 1.30 = 1.55 Ω > 1.37:
        // minimum If = 218.5 / 1.55 = 141 A < 160 A.
        let inputs = FaultPathInputs {
            ze_ohm: Some(0.25),
            r1r2_ohm: Some(0.55),
            r1rn_ohm: Some(1.30),
            conditions: TestConditions {
                temp_c: Some(10.0),
                insulation: Some(Insulation::Thermoplastic70),
                ..TestConditions::default()
            },
            ..FaultPathInputs::new("B32".parse().unwrap(), DisconnectionTime::S0_4)
        };
        let r = evaluate_fault_paths(&inputs).unwrap();
        assert_eq!(r.measured_limit.limit_ohm, 1.14);
        assert_eq!(r.earth_fault.unwrap().outcome, PathOutcome::Within);
        let l = r.line_neutral.unwrap();
        assert_eq!(l.outcome, PathOutcome::OverTabulatedLimit);
        assert!(
            l.consequence.contains("141 A is below the 160 A"),
            "{}",
            l.consequence
        );
        assert!(l.consequence.contains("over the check value 1.37 Ω"));
        assert!(!l.consequence.contains("0.4 s"));
        assert!(
            r.notes
                .iter()
                .any(|n| n.contains("high-resistance neutral"))
        );
    }

    #[test]
    fn over_the_measured_limit_only() {
        // B16 at 15 °C, 70 °C cable: measured limit 2.23 Ω (above). Zs 2.50 lies between 2.23
        // and 2.73: within the table cold, but may exceed it hot.
        let inputs = FaultPathInputs {
            zs_ohm: Some(2.50),
            ..b16()
        };
        let e = evaluate_fault_paths(&inputs).unwrap().earth_fault.unwrap();
        assert_eq!(e.outcome, PathOutcome::OverMeasuredLimit);
        assert!(e.made_of.starts_with("measured Zs 2.50"), "{}", e.made_of);
    }

    #[test]
    fn higher_of_measured_zs_and_sum_is_judged() {
        // Ze + R1+R2 = 0.90 against a measured 0.85: the 0.90 is judged (conservative).
        let inputs = FaultPathInputs {
            zs_ohm: Some(0.85),
            ..b16()
        };
        let e = evaluate_fault_paths(&inputs).unwrap().earth_fault.unwrap();
        assert!((e.impedance_ohm - 0.90).abs() < 1e-12);
    }

    #[test]
    fn no_temperature_falls_back_to_the_80_percent_rule_and_says_so() {
        // 0.8 × 2.73 = 2.184 → 2.18 Ω (BS 7671 Appendix 3; GN3). The part left for the
        // circuit, rounded once: 2.184 − 0.30 = 1.884 → 1.88 Ω.
        let mut inputs = b16();
        inputs.conditions.temp_c = None;
        let r = evaluate_fault_paths(&inputs).unwrap();
        assert_eq!(r.measured_limit.rule, MeasuredRule::RuleOfThumb80);
        assert_eq!(r.measured_limit.limit_ohm, 2.18);
        assert_eq!(r.measured_limit.circuit_part_ohm, Some(1.88));
        assert!(r.notes.iter().any(|n| n.contains("80 % rule was applied")));
    }

    #[test]
    fn tt_with_rcd_uses_table_41_5() {
        // Invented TT circuit: Ze 85 + R1+R2 0.6 = 85.6 Ω against 50 V / 30 mA = 1667 Ω
        // (Table 41.5): used 5.1 %.
        let inputs = FaultPathInputs {
            earthing: Some(Earthing::Tt),
            rcd_ma: Some(30),
            ze_ohm: Some(85.0),
            ..b16()
        };
        let r = evaluate_fault_paths(&inputs).unwrap();
        let e = r.earth_fault.unwrap();
        assert_eq!(e.limit_ohm, 1667.0);
        assert_eq!(e.outcome, PathOutcome::Within);
        assert!((e.used_pct - 85.6 / 1667.0 * 100.0).abs() < 1e-9);
        // Ze on TT includes the electrode, so Ze + R1+Rn is not the line–neutral loop.
        assert_eq!(r.line_neutral, None);
        assert!(
            r.notes
                .iter()
                .any(|n| n.contains("includes the earth electrode"))
        );
        // A TT Ze includes the electrode, so the 21 Ω typical figure is not compared.
        assert!(!r.notes.iter().any(|n| n.contains("advisory")));
        // Above 200 Ω the electrode may not be stable (BS 7671 Table 41.5, note).
        let high = FaultPathInputs {
            ze_ohm: Some(240.0),
            ..inputs.clone()
        };
        let r = evaluate_fault_paths(&high).unwrap();
        assert!(
            r.notes
                .iter()
                .any(|n| n.contains("may not be stable") && n.contains("electrode")),
            "{:?}",
            r.notes
        );
        let no_rcd = FaultPathInputs {
            rcd_ma: None,
            ..inputs
        };
        assert_eq!(
            evaluate_fault_paths(&no_rcd).unwrap_err(),
            LimitsError::TtWithoutRcd
        );
    }

    #[test]
    fn refusals_are_clear() {
        let empty = FaultPathInputs::new("B16".parse().unwrap(), DisconnectionTime::S0_4);
        assert!(matches!(
            evaluate_fault_paths(&empty),
            Err(LimitsError::NothingToJudge(_))
        ));
        let bad = FaultPathInputs {
            ze_ohm: Some(-0.3),
            ..b16()
        };
        assert!(
            evaluate_fault_paths(&bad)
                .unwrap_err()
                .to_string()
                .contains("Ze -0.3")
        );
        let fuse_5s = FaultPathInputs {
            device: "BS 88-3 32A".parse().unwrap(),
            disconnection: DisconnectionTime::S5,
            ..b16()
        };
        assert!(matches!(
            evaluate_fault_paths(&fuse_5s),
            Err(LimitsError::NotTabulated { .. })
        ));
    }

    #[test]
    fn supply_advice_rides_along() {
        // TN-C-S Ze 0.42 is above the 0.35 Ω typically declared (common practice, no source).
        let inputs = FaultPathInputs {
            ze_ohm: Some(0.42),
            ..b16()
        };
        let r = evaluate_fault_paths(&inputs).unwrap();
        assert!(
            r.notes
                .iter()
                .any(|n| n.contains("0.35 Ω typically declared"))
        );
    }

    #[test]
    fn report_serialises_with_sources() {
        let r = evaluate_fault_paths(&b16()).unwrap();
        let json = serde_json::to_value(&r).unwrap();
        assert_eq!(
            json["device_limit"]["source"]["citation"],
            "BS 7671:2018+A2:2022 Table 41.3"
        );
        assert_eq!(json["earth_fault"]["outcome"], "within");
    }
}
