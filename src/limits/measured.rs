//! The limit for a reading taken cold. Tabulated Zs holds at conductor operating temperature;
//! a test is made at room temperature, where the same circuit reads lower, so the reading is
//! judged against a lower figure.
//!
//! The default rule is [`MeasuredRule::TemperatureCorrected`]: it uses the test temperature
//! and the cable's insulation, and the 80 % rule of thumb is not conservative for 90 °C
//! thermosetting cable (1 / 1.28 = 0.78). Where the insulation is not recorded, the
//! database's assumed insulation is used (default 70 °C thermoplastic, the twin and earth of
//! nearly every UK home, so the figure matches the contractor's own charts), and every limit
//! that used the assumption says so.
//!
//! Only the circuit's own conductors warm up in service: when Ze is known, the loop limit
//! corrects R1+R2 (or R1+Rn) and leaves Ze as measured ([`measured_loop_limit`]). Every figure
//! is rounded once, at the end, by [`round_down_2dp`].

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

/// The insulation taken for a circuit whose insulation is not recorded: 70 °C thermoplastic,
/// the twin and earth of almost every UK home, so the limit agrees with the charts a domestic
/// contractor works from (common practice, no source).
pub const DEFAULT_ASSUMED_INSULATION: Insulation = Insulation::Thermoplastic70;

/// Limits settings chosen per database.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
pub struct LimitsConfig {
    pub measured_rule: MeasuredRule,
    /// Insulation taken where a circuit's is not recorded.
    pub assumed_insulation: Insulation,
}

impl Default for LimitsConfig {
    fn default() -> LimitsConfig {
        LimitsConfig {
            measured_rule: MeasuredRule::default(),
            assumed_insulation: DEFAULT_ASSUMED_INSULATION,
        }
    }
}

impl LimitsConfig {
    /// Key under which the measured-value rule is kept in a database's settings.
    pub const MEASURED_RULE_KEY: &'static str = "limits.measured_rule";
    /// Key under which the insulation assumed for unrecorded cable is kept.
    pub const ASSUMED_INSULATION_KEY: &'static str = "limits.assumed_insulation";

    /// Build from the stored setting; a missing setting means the documented default.
    pub fn from_setting(measured_rule: Option<&str>) -> Result<LimitsConfig, LimitsError> {
        Ok(LimitsConfig {
            measured_rule: match measured_rule {
                Some(s) => s.parse()?,
                None => MeasuredRule::default(),
            },
            ..LimitsConfig::default()
        })
    }
}

/// Conditions of the test that move the limit.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct TestConditions {
    /// Conductor (or ambient) temperature at the test, °C.
    pub temp_c: Option<f64>,
    pub insulation: Option<Insulation>,
    /// Taken when `insulation` is not recorded, and said so.
    pub assumed_insulation: Insulation,
}

impl Default for TestConditions {
    fn default() -> TestConditions {
        TestConditions {
            temp_c: None,
            insulation: None,
            assumed_insulation: DEFAULT_ASSUMED_INSULATION,
        }
    }
}

/// The figure a cold reading is judged against.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct MeasuredLimit {
    pub rule: MeasuredRule,
    /// The tabulated limit the rule starts from, Ω.
    pub tabulated_ohm: f64,
    /// The measured-value limit, rounded down to 2 dp, Ω.
    pub limit_ohm: f64,
    /// Ze left out of the correction, when the limit is for a loop with a known Ze.
    pub ze_ohm: Option<f64>,
    /// The most the circuit's own conductors (R1+R2 or R1+Rn) may read: the limit less Ze,
    /// rounded down once from the exact figure. Known only with Ze.
    pub circuit_part_ohm: Option<f64>,
    pub temp_c: Option<f64>,
    /// The insulation the factor was taken for.
    pub insulation: Option<Insulation>,
    /// True when the insulation was not recorded and the assumed insulation was used.
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

/// The insulation in words, e.g. "70 °C thermoplastic".
pub fn insulation_words(i: Insulation) -> &'static str {
    match i {
        Insulation::Thermoplastic70 => "70 °C thermoplastic",
        Insulation::Thermosetting90 => "90 °C thermosetting",
    }
}

/// The measured-value limit for a tabulated Zs under a rule, for the whole loop as measured
/// (Ze not known apart: the whole loop is corrected, which gives the lower limit).
pub fn measured_limit(
    tabulated_ohm: f64,
    rule: MeasuredRule,
    conditions: &TestConditions,
) -> Result<MeasuredLimit, LimitsError> {
    limit_with(tabulated_ohm, rule, conditions, None)
}

/// The measured-value limit for a loop Ze + R whose Ze is known: only the circuit's part R
/// is corrected for temperature, Ze is taken as measured. Under the 80 % rule the limit is
/// 0.8 × tabulated for the loop as a whole, as the rule is used.
pub fn measured_loop_limit(
    tabulated_ohm: f64,
    rule: MeasuredRule,
    conditions: &TestConditions,
    ze_ohm: f64,
) -> Result<MeasuredLimit, LimitsError> {
    let ze = super::check_ohms("Ze", ze_ohm)?;
    limit_with(tabulated_ohm, rule, conditions, Some(ze))
}

fn limit_with(
    tabulated_ohm: f64,
    rule: MeasuredRule,
    conditions: &TestConditions,
    ze: Option<f64>,
) -> Result<MeasuredLimit, LimitsError> {
    let tabulated_ohm = super::check_ohms("tabulated Zs", tabulated_ohm)?;
    if let Some(t) = conditions.temp_c {
        check_temperature(t)?;
    }
    match rule {
        MeasuredRule::RuleOfThumb80 => {
            let exact = 0.8 * tabulated_ohm;
            let limit = round_down_2dp(exact);
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
                ze_ohm: ze,
                circuit_part_ohm: ze.map(|z| round_down_2dp((exact - z).max(0.0))),
                temp_c: conditions.temp_c,
                insulation: conditions.insulation,
                insulation_assumed: false,
                source: Source::new(
                    "BS 7671:2018+A2:2022 Appendix 3; IET Guidance Note 3; IET On-Site Guide Appendix B",
                    SourceStatus::Published,
                    "",
                )
                .with_rule(format!(
                    "rule of thumb: measured Zs ≤ 0.8 × tabulated Zs = 0.8 × {tabulated_ohm:.2} = {limit:.2} Ω, rounded down to 2 dp (conservative)"
                )),
                caution,
            })
        }
        MeasuredRule::TemperatureCorrected => {
            let t = conditions.temp_c.ok_or(LimitsError::MissingTemperature)?;
            let (insulation, assumed) = match conditions.insulation {
                Some(i) => (i, false),
                None => (conditions.assumed_insulation, true),
            };
            let k = hot_factor(insulation);
            let f = 1.0 + ALPHA_CU * (t - 20.0);
            let assumed_words = if assumed {
                format!(
                    " (insulation not recorded: {} assumed)",
                    insulation_words(insulation)
                )
            } else {
                String::new()
            };
            // Only the circuit's part is corrected; Ze stays as measured.
            let z = ze.unwrap_or(0.0);
            let part_exact = (tabulated_ohm - z).max(0.0) * f / k;
            let exact = z + part_exact;
            let limit = round_down_2dp(exact);
            let formula = match ze {
                Some(z) => format!(
                    "limit at {t} °C = Ze + (Zs − Ze) × (1 + 0.00393 × (t − 20)) / k = {z:.2} + ({tabulated_ohm:.2} − {z:.2}) × {f:.5} / {k:.2} = {limit:.2} Ω, only the circuit's conductors corrected, Ze as measured"
                ),
                None => format!(
                    "limit at {t} °C = Zs × (1 + 0.00393 × (t − 20)) / k = {tabulated_ohm:.2} × {f:.5} / {k:.2} = {limit:.2} Ω, the whole loop corrected (Ze not known apart)"
                ),
            };
            Ok(MeasuredLimit {
                rule,
                tabulated_ohm,
                limit_ohm: limit,
                ze_ohm: ze,
                circuit_part_ohm: ze.map(|_| round_down_2dp(part_exact)),
                temp_c: Some(t),
                insulation: Some(insulation),
                insulation_assumed: assumed,
                source: Source::new(
                    "IET On-Site Guide Appendix I; α = 0.00393 /K from IEC 60228",
                    SourceStatus::FromMemory,
                    "",
                )
                .with_rule(format!(
                    "{formula}, for {}{assumed_words}, rounded down to 2 dp once, at the end (conservative); k 1.20 / 1.28 from memory, agreeing with 1 + 0.00393 × 50 = 1.197 and 1 + 0.00393 × 70 = 1.275",
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
        TestConditions {
            temp_c,
            insulation,
            ..TestConditions::default()
        }
    }

    #[test]
    fn rule_of_thumb_worked_examples() {
        // Reference (common practice, GN3 / OSG App B), rounded down: 0.8 × 1.37 = 1.096 → 1.09.
        let m = measured_limit(1.37, MeasuredRule::RuleOfThumb80, &at(None, None)).unwrap();
        assert_eq!(m.limit_ohm, 1.09);
        assert!(m.source.rule.contains("rounded down"));
        // The rule of thumb is printed in BS 7671 Appendix 3 as well as in GN3.
        assert_eq!(m.source.status, SourceStatus::Published);
        assert!(m.source.citation.contains("Appendix 3"));
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
    fn hot_factors_agree_with_copper_at_operating_temperature() {
        // The multipliers 1.20 / 1.28 are from memory; IEC 60228's α = 0.00393 /K gives
        // 1 + 0.00393 × (70 − 20) = 1.1965 and 1 + 0.00393 × (90 − 20) = 1.2751. Each held
        // factor must sit within half a hundredth of its physics.
        let iec_alpha = 0.00393;
        for (ins, max_c) in [
            (Insulation::Thermoplastic70, 70.0),
            (Insulation::Thermosetting90, 90.0),
        ] {
            let physics = 1.0 + iec_alpha * (max_c - 20.0);
            assert!((hot_factor(ins) - physics).abs() < 0.005, "{ins:?}");
        }
    }

    #[test]
    fn rule_of_thumb_warns_on_90_degree_cable() {
        // The 80 % rule is not conservative for 90 °C cable: for B32 (Table 41.3 1.37 Ω) at
        // 20 °C the 80 % figure 0.8 × 1.37 = 1.096 → 1.09 Ω is above the corrected
        // 1.37 / 1.28 = 1.0703 → 1.07 Ω.
        let cold90 = TestConditions {
            temp_c: Some(20.0),
            insulation: Some(Insulation::Thermosetting90),
            ..TestConditions::default()
        };
        let by80 = measured_limit(1.37, MeasuredRule::RuleOfThumb80, &cold90).unwrap();
        let corrected = measured_limit(1.37, MeasuredRule::TemperatureCorrected, &cold90).unwrap();
        assert_eq!((by80.limit_ohm, corrected.limit_ohm), (1.09, 1.07));
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
    fn unknown_insulation_takes_the_assumed_insulation_and_says_so() {
        // Default 70 °C thermoplastic (common practice, no source: UK homes are wired in
        // twin and earth): B32 at 12 °C 1.37 × 0.96856 / 1.20 = 1.10577 → 1.10 Ω.
        let m = measured_limit(
            1.37,
            MeasuredRule::TemperatureCorrected,
            &at(Some(12.0), None),
        )
        .unwrap();
        assert_eq!(m.limit_ohm, 1.10);
        assert!(m.insulation_assumed);
        assert!(
            m.source.rule.contains("70 °C thermoplastic assumed"),
            "{}",
            m.source.rule
        );
        // A database that chose 90 °C thermosetting: / 1.28 = 1.03666 → 1.03 Ω.
        let m = measured_limit(
            1.37,
            MeasuredRule::TemperatureCorrected,
            &TestConditions {
                assumed_insulation: Insulation::Thermosetting90,
                ..at(Some(12.0), None)
            },
        )
        .unwrap();
        assert_eq!(m.limit_ohm, 1.03);
        assert!(m.source.rule.contains("90 °C thermosetting assumed"));
    }

    #[test]
    fn with_ze_only_the_circuit_part_is_corrected_and_rounded_once() {
        // Invented B32 at 20 °C, 70 °C cable, Ze 0.30: the circuit may read
        // (1.37 − 0.30) / 1.20 = 0.891667 → 0.89 Ω; the loop 0.30 + 0.891667 = 1.191667 →
        // 1.19 Ω. Each figure is rounded once, from the exact value.
        let m = measured_loop_limit(
            1.37,
            MeasuredRule::TemperatureCorrected,
            &at(Some(20.0), Some(Insulation::Thermoplastic70)),
            0.30,
        )
        .unwrap();
        assert_eq!((m.limit_ohm, m.circuit_part_ohm), (1.19, Some(0.89)));
        assert_eq!(m.ze_ohm, Some(0.30));
        // A Ze at or above the table leaves nothing for the circuit.
        let m = measured_loop_limit(
            1.37,
            MeasuredRule::TemperatureCorrected,
            &at(Some(20.0), Some(Insulation::Thermoplastic70)),
            1.50,
        )
        .unwrap();
        assert_eq!(m.circuit_part_ohm, Some(0.0));
        assert!(
            measured_loop_limit(1.37, MeasuredRule::RuleOfThumb80, &at(None, None), -0.1).is_err()
        );
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
        assert_eq!(
            LimitsConfig::default().assumed_insulation,
            Insulation::Thermoplastic70
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
