//! Minimum insulation resistance, BS 7671:2018 Table 64 (Regulation 643.3).

use std::fmt;
use std::str::FromStr;

use serde::{Deserialize, Serialize};

use super::LimitsError;
use super::source::{Source, SourceStatus};
use crate::model::Megohms;

/// The circuit's nominal voltage band, which sets the test voltage and the minimum.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum IrCircuit {
    /// SELV and PELV circuits.
    SelvPelv,
    /// Up to and including 500 V, including FELV: the usual 230 V circuit.
    UpTo500V,
    /// Above 500 V.
    Above500V,
}

impl IrCircuit {
    pub fn as_str(self) -> &'static str {
        match self {
            IrCircuit::SelvPelv => "selv_pelv",
            IrCircuit::UpTo500V => "up_to_500v",
            IrCircuit::Above500V => "above_500v",
        }
    }
}

impl fmt::Display for IrCircuit {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.as_str())
    }
}

impl FromStr for IrCircuit {
    type Err = LimitsError;
    fn from_str(s: &str) -> Result<Self, LimitsError> {
        match s
            .trim()
            .to_ascii_lowercase()
            .replace(['-', ' '], "_")
            .as_str()
        {
            "selv_pelv" | "selv" | "pelv" => Ok(IrCircuit::SelvPelv),
            "up_to_500v" | "lv" | "felv" | "230v" | "400v" => Ok(IrCircuit::UpTo500V),
            "above_500v" => Ok(IrCircuit::Above500V),
            _ => Err(LimitsError::UnknownIrCircuit(s.to_string())),
        }
    }
}

/// The Table 64 test voltage and minimum for a circuit band.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct IrMinimum {
    pub circuit: IrCircuit,
    pub test_voltage_v: u16,
    pub minimum_mohm: f64,
    pub source: Source,
}

pub fn ir_minimum(circuit: IrCircuit) -> IrMinimum {
    let (v, min, rule) = match circuit {
        IrCircuit::SelvPelv => (250, 0.5, "SELV and PELV: 250 V d.c. test, at least 0.5 MΩ"),
        IrCircuit::UpTo500V => (
            500,
            1.0,
            "up to 500 V including FELV: 500 V d.c. test, at least 1.0 MΩ",
        ),
        IrCircuit::Above500V => (1000, 1.0, "above 500 V: 1000 V d.c. test, at least 1.0 MΩ"),
    };
    IrMinimum {
        circuit,
        test_voltage_v: v,
        minimum_mohm: min,
        source: Source::new(
            "BS 7671:2018 Table 64 (Regulation 643.3)",
            SourceStatus::Published,
            rule,
        ),
    }
}

/// The minimum for a circuit of `circuit`'s band whose insulation was tested at `test_v` volts
/// d.c., as recorded. At the band's own test voltage it is Table 64's row. A circuit up to
/// 500 V tested at 250 V (Regulation 643.3.3 allows the lower voltage where surge protective
/// devices or connected equipment would affect the test or be damaged) must still show the
/// band's 1.0 MΩ, not the 0.5 MΩ of the SELV and PELV row (from memory for the regulation);
/// tested at a higher voltage than its band's, it keeps its band's minimum (common practice,
/// no source). A test voltage Table 64 does not list is an error.
pub fn ir_minimum_tested_at(circuit: IrCircuit, test_v: u16) -> Result<IrMinimum, LimitsError> {
    if !crate::model::IR_TEST_VOLTAGES.contains(&test_v) {
        return Err(LimitsError::BadValue {
            what: "insulation test voltage V",
            value: f64::from(test_v),
            expected: "250, 500 or 1000 V d.c. (Table 64)",
        });
    }
    let band = ir_minimum(circuit);
    if test_v == band.test_voltage_v {
        return Ok(band);
    }
    let min = band.minimum_mohm;
    let (status, rule) = if test_v < band.test_voltage_v {
        (
            SourceStatus::FromMemory,
            format!(
                "tested at {test_v} V d.c. instead of {} V (Regulation 643.3.3, where equipment would affect the test): still at least {min:.1} MΩ, the minimum of the circuit's own row",
                band.test_voltage_v
            ),
        )
    } else {
        (
            SourceStatus::CommonPractice,
            format!(
                "tested at {test_v} V d.c., above the {} V of the circuit's own row: at least {min:.1} MΩ, that row's minimum",
                band.test_voltage_v
            ),
        )
    };
    Ok(IrMinimum {
        circuit,
        test_voltage_v: test_v,
        minimum_mohm: min,
        source: Source::new("BS 7671:2018 Table 64 (Regulation 643.3)", status, "").with_rule(rule),
    })
}

#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum IrOutcome {
    AtLeastMinimum,
    BelowMinimum,
    /// An over-range reading whose lower bound is under the minimum says nothing either way.
    Undetermined,
}

#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct IrJudgement {
    pub reading: Megohms,
    pub minimum: IrMinimum,
    pub outcome: IrOutcome,
    pub text: String,
}

/// Judge an insulation resistance reading against Table 64.
pub fn judge_ir(reading: Megohms, circuit: IrCircuit) -> Result<IrJudgement, LimitsError> {
    if !reading.value.is_finite() || reading.value < 0.0 {
        return Err(LimitsError::BadValue {
            what: "insulation resistance MΩ",
            value: reading.value,
            expected: "a resistance in megohms, 0 or more",
        });
    }
    let minimum = ir_minimum(circuit);
    let min = minimum.minimum_mohm;
    let (outcome, text) = if reading.value >= min {
        (
            IrOutcome::AtLeastMinimum,
            format!("{reading} MΩ meets the {min:.1} MΩ minimum"),
        )
    } else if reading.over_range {
        (
            IrOutcome::Undetermined,
            format!(
                "{reading} MΩ is over-range below the {min:.1} MΩ minimum, so it cannot be judged"
            ),
        )
    } else {
        (
            IrOutcome::BelowMinimum,
            format!("{reading} MΩ is below the {min:.1} MΩ minimum"),
        )
    };
    Ok(IrJudgement {
        reading,
        minimum,
        outcome,
        text,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn table_64_minima() {
        // BS 7671:2018 Table 64: SELV/PELV 250 V 0.5 MΩ; ≤ 500 V 500 V 1.0 MΩ; > 500 V 1000 V 1.0 MΩ.
        for (c, v, m) in [
            (IrCircuit::SelvPelv, 250, 0.5),
            (IrCircuit::UpTo500V, 500, 1.0),
            (IrCircuit::Above500V, 1000, 1.0),
        ] {
            let min = ir_minimum(c);
            assert_eq!((min.test_voltage_v, min.minimum_mohm), (v, m), "{c}");
            assert_eq!(c.as_str().parse::<IrCircuit>(), Ok(c));
        }
    }

    #[test]
    fn the_minimum_follows_the_recorded_test_voltage() {
        // BS 7671:2018 Table 64: a 230 V circuit is tested at 500 V and must show 1.0 MΩ.
        let at = |v| ir_minimum_tested_at(IrCircuit::UpTo500V, v);
        let m = at(500).unwrap();
        assert_eq!((m.test_voltage_v, m.minimum_mohm), (500, 1.0));
        assert_eq!(m.source.status, SourceStatus::Published);
        // Tested at 250 V where equipment would be affected (Regulation 643.3.3, from memory),
        // the circuit must still show 1.0 MΩ, not the SELV row's 0.5 MΩ.
        let m = at(250).unwrap();
        assert_eq!((m.test_voltage_v, m.minimum_mohm), (250, 1.0));
        assert_eq!(m.source.status, SourceStatus::FromMemory);
        // Tested at 1000 V it keeps its row's 1.0 MΩ (common practice, no source).
        let m = at(1000).unwrap();
        assert_eq!((m.test_voltage_v, m.minimum_mohm), (1000, 1.0));
        // A SELV circuit at its own 250 V: 0.5 MΩ (Table 64).
        let m = ir_minimum_tested_at(IrCircuit::SelvPelv, 250).unwrap();
        assert_eq!(m.minimum_mohm, 0.5);
        // Table 64 lists no 400 V test.
        assert!(at(400).is_err());
    }

    #[test]
    fn judging_readings() {
        let r = |value, over_range| Megohms { value, over_range };
        let j = judge_ir(r(200.0, true), IrCircuit::UpTo500V).unwrap();
        assert_eq!(j.outcome, IrOutcome::AtLeastMinimum);
        assert_eq!(j.text, ">200 MΩ meets the 1.0 MΩ minimum");
        let j = judge_ir(r(0.8, false), IrCircuit::UpTo500V).unwrap();
        assert_eq!(j.outcome, IrOutcome::BelowMinimum);
        // 0.8 MΩ is enough on SELV (0.5 MΩ).
        let j = judge_ir(r(0.8, false), IrCircuit::SelvPelv).unwrap();
        assert_eq!(j.outcome, IrOutcome::AtLeastMinimum);
        let j = judge_ir(r(0.5, true), IrCircuit::UpTo500V).unwrap();
        assert_eq!(j.outcome, IrOutcome::Undetermined);
        assert!(judge_ir(r(-1.0, false), IrCircuit::UpTo500V).is_err());
        assert!("9kv".parse::<IrCircuit>().is_err());
    }
}
