//! The limit for a reading taken cold. Tabulated Zs holds at conductor operating temperature;
//! a test is made at room temperature, where the same circuit reads lower, so the reading is
//! judged against a lower figure.
//!
//! The default rule is [`MeasuredRule::TemperatureCorrected`]: it uses the test temperature
//! and the cable's insulation, and the 80 % rule of thumb is not conservative for 90 °C
//! thermosetting cable (1 / 1.28 = 0.78). Where the insulation is not recorded, 90 °C
//! thermosetting is assumed, because its factor 1.28 gives the lower (safer) limit.

use std::fmt;
use std::str::FromStr;

use serde::{Deserialize, Serialize};

use super::source::{Source, SourceStatus};
use super::temperature::{ALPHA_CU, check_temperature};
use super::{LimitsError, round_down_2dp};
use crate::model::Insulation;

/// How a cold reading is judged against a tabulated limit.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Default, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum MeasuredRule {
    /// Reading ≤ 0.8 × tabulated Zs (common practice).
    RuleOfThumb80,
    /// Reading ≤ Zs × (1 + α(t − 20)) / k, with k from the insulation.
    #[default]
    TemperatureCorrected,
}

impl MeasuredRule {
    pub const ALL: [MeasuredRule; 2] = [
        MeasuredRule::TemperatureCorrected,
        MeasuredRule::RuleOfThumb80,
    ];

    /// The rule in words for people.
    pub fn words(self) -> &'static str {
        match self {
            MeasuredRule::RuleOfThumb80 => "80 % rule",
            MeasuredRule::TemperatureCorrected => "temperature corrected",
        }
    }

    /// The word stored in a database's settings.
    pub fn as_str(self) -> &'static str {
        match self {
            MeasuredRule::RuleOfThumb80 => "rule_of_thumb_80",
            MeasuredRule::TemperatureCorrected => "temperature_corrected",
        }
    }
}

impl fmt::Display for MeasuredRule {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.as_str())
    }
}

impl FromStr for MeasuredRule {
    type Err = LimitsError;
    fn from_str(s: &str) -> Result<Self, LimitsError> {
        match s
            .trim()
            .to_ascii_lowercase()
            .replace(['-', ' '], "_")
            .as_str()
        {
            "rule_of_thumb_80" | "rule_of_thumb" | "80" | "80%" | "0.8" => {
                Ok(MeasuredRule::RuleOfThumb80)
            }
            "temperature_corrected" | "corrected" | "temperature" => {
                Ok(MeasuredRule::TemperatureCorrected)
            }
            _ => Err(LimitsError::UnknownRule(s.to_string())),
        }
    }
}

/// Limits settings chosen per database.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize)]
pub struct LimitsConfig {
    pub measured_rule: MeasuredRule,
}

impl LimitsConfig {
    /// Key under which the measured-value rule is kept in a database's settings.
    pub const MEASURED_RULE_KEY: &'static str = "limits.measured_rule";

    /// Build from the stored setting; a missing setting means the documented default.
    pub fn from_setting(measured_rule: Option<&str>) -> Result<LimitsConfig, LimitsError> {
        Ok(LimitsConfig {
            measured_rule: match measured_rule {
                Some(s) => s.parse()?,
                None => MeasuredRule::default(),
            },
        })
    }
}

/// Conditions of the test that move the limit.
#[derive(Debug, Clone, Copy, Default, PartialEq, Serialize, Deserialize)]
pub struct TestConditions {
    /// Conductor (or ambient) temperature at the test, °C.
    pub temp_c: Option<f64>,
    pub insulation: Option<Insulation>,
}

/// The figure a cold reading is judged against.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct MeasuredLimit {
    pub rule: MeasuredRule,
    /// The tabulated limit the rule starts from, Ω.
    pub tabulated_ohm: f64,
    /// The measured-value limit, rounded down to 2 dp, Ω.
    pub limit_ohm: f64,
    pub temp_c: Option<f64>,
    /// The insulation the factor was taken for.
    pub insulation: Option<Insulation>,
    /// True when the insulation was not recorded and 90 °C thermosetting was assumed.
    pub insulation_assumed: bool,
    pub source: Source,
    /// A warning that goes with this limit, e.g. the 80 % rule on 90 °C cable.
    pub caution: Option<String>,
}

/// Ratio of conductor resistance at maximum operating temperature to that at 20 °C.
pub fn hot_factor(insulation: Insulation) -> f64 {
    match insulation {
        Insulation::Thermoplastic70 => 1.20,
        Insulation::Thermosetting90 => 1.28,
    }
}

fn insulation_words(i: Insulation) -> &'static str {
    match i {
        Insulation::Thermoplastic70 => "70 °C thermoplastic",
        Insulation::Thermosetting90 => "90 °C thermosetting",
    }
}

/// The measured-value limit for a tabulated Zs under a rule.
pub fn measured_limit(
    tabulated_ohm: f64,
    rule: MeasuredRule,
    conditions: &TestConditions,
) -> Result<MeasuredLimit, LimitsError> {
    let tabulated_ohm = super::check_ohms("tabulated Zs", tabulated_ohm)?;
    if let Some(t) = conditions.temp_c {
        check_temperature(t)?;
    }
    match rule {
        MeasuredRule::RuleOfThumb80 => {
            let limit = round_down_2dp(0.8 * tabulated_ohm);
            let caution = match conditions.insulation {
                Some(Insulation::Thermosetting90) => Some(
                    "the 80 % rule is not conservative for 90 °C thermosetting cable (1 / 1.28 = 0.78)"
                        .to_string(),
                ),
                None => Some(
                    "insulation not recorded: if the cable is 90 °C thermosetting, the 80 % rule is not conservative (1 / 1.28 = 0.78)"
                        .to_string(),
                ),
                Some(Insulation::Thermoplastic70) => None,
            };
            Ok(MeasuredLimit {
                rule,
                tabulated_ohm,
                limit_ohm: limit,
                temp_c: conditions.temp_c,
                insulation: conditions.insulation,
                insulation_assumed: false,
                source: Source::new(
                    "IET Guidance Note 3; IET On-Site Guide Appendix B",
                    SourceStatus::CommonPractice,
                    "",
                )
                .with_rule(format!(
                    "measured Zs ≤ 0.8 × tabulated Zs = 0.8 × {tabulated_ohm:.2} = {limit:.2} Ω, rounded down to 2 dp (conservative)"
                )),
                caution,
            })
        }
        MeasuredRule::TemperatureCorrected => {
            let t = conditions.temp_c.ok_or(LimitsError::MissingTemperature)?;
            let (insulation, assumed) = match conditions.insulation {
                Some(i) => (i, false),
                None => (Insulation::Thermosetting90, true),
            };
            let k = hot_factor(insulation);
            let exact = tabulated_ohm * (1.0 + ALPHA_CU * (t - 20.0)) / k;
            let limit = round_down_2dp(exact);
            let assumed_words = if assumed {
                " (insulation not recorded: 90 °C thermosetting assumed, the lower limit)"
            } else {
                ""
            };
            Ok(MeasuredLimit {
                rule,
                tabulated_ohm,
                limit_ohm: limit,
                temp_c: Some(t),
                insulation: Some(insulation),
                insulation_assumed: assumed,
                source: Source::new(
                    "IET On-Site Guide Appendix I; α = 0.00393 /K from IEC 60228",
                    SourceStatus::FromMemory,
                    "",
                )
                .with_rule(format!(
                    "limit at {t} °C = Zs × (1 + 0.00393 × (t − 20)) / k = {tabulated_ohm:.2} × {:.5} / {k:.2} = {limit:.2} Ω for {}{assumed_words}, rounded down to 2 dp (conservative); k 1.20 / 1.28 from memory, agreeing with 1 + 0.00393 × 50 = 1.197 and 1 + 0.00393 × 70 = 1.275",
                    1.0 + ALPHA_CU * (t - 20.0),
                    insulation_words(insulation),
                )),
                caution: None,
            })
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn at(temp_c: Option<f64>, insulation: Option<Insulation>) -> TestConditions {
        TestConditions { temp_c, insulation }
    }

    #[test]
    fn rule_of_thumb_worked_examples() {
        // Reference (common practice, GN3 / OSG App B), rounded down: 0.8 × 1.37 = 1.096 → 1.09.
        let m = measured_limit(1.37, MeasuredRule::RuleOfThumb80, &at(None, None)).unwrap();
        assert_eq!(m.limit_ohm, 1.09);
        assert!(m.source.rule.contains("rounded down"));
        assert_eq!(m.source.status, SourceStatus::CommonPractice);
        // Invented C63 circuit: 0.8 × 0.35 = 0.28 exactly; float error must not cut it to 0.27.
        let m = measured_limit(0.35, MeasuredRule::RuleOfThumb80, &at(None, None)).unwrap();
        assert_eq!(m.limit_ohm, 0.28);
        // Invented B6: 0.8 × 7.28 = 5.824 → 5.82.
        let m = measured_limit(
            7.28,
            MeasuredRule::RuleOfThumb80,
            &at(None, Some(Insulation::Thermoplastic70)),
        )
        .unwrap();
        assert_eq!(m.limit_ohm, 5.82);
        assert_eq!(m.caution, None);
    }

    #[test]
    fn rule_of_thumb_warns_on_90_degree_cable() {
        // Reference: 1 / 1.28 = 0.78 < 0.8, so the 80 % rule is not conservative at 90 °C.
        assert!(1.0 / hot_factor(Insulation::Thermosetting90) < 0.8);
        let m = measured_limit(
            1.37,
            MeasuredRule::RuleOfThumb80,
            &at(None, Some(Insulation::Thermosetting90)),
        )
        .unwrap();
        assert!(m.caution.unwrap().contains("not conservative"));
    }

    #[test]
    fn temperature_corrected_worked_examples() {
        // Invented B32 circuit tested at 12 °C (OSG App I rule, k from memory):
        // 70 °C: 1.37 × (1 + 0.00393 × (12 − 20)) / 1.20 = 1.37 × 0.96856 / 1.20 = 1.10577 → 1.10
        // 90 °C: 1.37 × 0.96856 / 1.28 = 1.03666 → 1.03
        let m70 = measured_limit(
            1.37,
            MeasuredRule::TemperatureCorrected,
            &at(Some(12.0), Some(Insulation::Thermoplastic70)),
        )
        .unwrap();
        assert_eq!(m70.limit_ohm, 1.10);
        let m90 = measured_limit(
            1.37,
            MeasuredRule::TemperatureCorrected,
            &at(Some(12.0), Some(Insulation::Thermosetting90)),
        )
        .unwrap();
        assert_eq!(m90.limit_ohm, 1.03);
        assert!(!m90.insulation_assumed);
        // Invented B16 at 20 °C, 70 °C cable: 2.73 / 1.20 = 2.275 → 2.27 (down, not 2.28).
        let m = measured_limit(
            2.73,
            MeasuredRule::TemperatureCorrected,
            &at(Some(20.0), Some(Insulation::Thermoplastic70)),
        )
        .unwrap();
        assert_eq!(m.limit_ohm, 2.27);
    }

    #[test]
    fn unknown_insulation_takes_the_lower_limit() {
        // Documented choice: 1.28 (90 °C) divides to the lower figure, so it is assumed.
        let m = measured_limit(
            1.37,
            MeasuredRule::TemperatureCorrected,
            &at(Some(12.0), None),
        )
        .unwrap();
        assert_eq!(m.limit_ohm, 1.03);
        assert!(m.insulation_assumed);
        assert!(m.source.rule.contains("assumed"));
    }

    #[test]
    fn corrected_rule_refuses_without_a_temperature() {
        let err = measured_limit(1.37, MeasuredRule::TemperatureCorrected, &at(None, None));
        assert_eq!(err.unwrap_err(), LimitsError::MissingTemperature);
        let err = measured_limit(
            1.37,
            MeasuredRule::TemperatureCorrected,
            &at(Some(400.0), None),
        );
        assert!(matches!(err, Err(LimitsError::BadValue { .. })));
    }

    #[test]
    fn rule_names_round_trip_for_settings() {
        for r in MeasuredRule::ALL {
            assert_eq!(r.as_str().parse::<MeasuredRule>(), Ok(r));
        }
        assert_eq!(MeasuredRule::default(), MeasuredRule::TemperatureCorrected);
        assert!("ninety".parse::<MeasuredRule>().is_err());
        assert_eq!(
            LimitsConfig::from_setting(Some("rule_of_thumb_80"))
                .unwrap()
                .measured_rule,
            MeasuredRule::RuleOfThumb80
        );
        assert_eq!(
            LimitsConfig::from_setting(None),
            Ok(LimitsConfig::default())
        );
        assert!(LimitsConfig::from_setting(Some("x")).is_err());
    }

    mod props {
        use super::*;
        use proptest::prelude::*;

        proptest! {
            #[test]
            fn corrected_limit_rises_with_temperature(
                zs in 0.05f64..20.0, t1 in -10.0f64..40.0, dt in 0.0f64..30.0, hot in any::<bool>()
            ) {
                let ins = if hot { Insulation::Thermosetting90 } else { Insulation::Thermoplastic70 };
                let lim = |t| measured_limit(zs, MeasuredRule::TemperatureCorrected, &at(Some(t), Some(ins)))
                    .unwrap().limit_ohm;
                prop_assert!(lim(t1 + dt) >= lim(t1));
                // Never above the tabulated figure at any test temperature up to 40 °C.
                prop_assert!(lim(t1) <= zs);
            }

            #[test]
            fn rounding_down_never_exceeds_the_exact_limit(zs in 0.05f64..20.0) {
                let m = measured_limit(zs, MeasuredRule::RuleOfThumb80, &at(None, None)).unwrap();
                prop_assert!(m.limit_ohm <= 0.8 * zs + 1e-9);
                prop_assert!(0.8 * zs - m.limit_ohm < 0.01 + 1e-9);
            }
        }
    }
}
