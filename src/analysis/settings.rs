//! Per-database choices: the measured-value rule and the noise floors. Built-in defaults,
//! overridden by what `ohmtrail settings set` stored in the database.

use chrono::NaiveDate;
use serde::Serialize;

use crate::error::{Error, Result};
use crate::limits::{LimitsConfig, MeasuredRule};
use crate::store::Store;
use crate::trend::TrendConfig;

/// Everything the analysis needs besides the history.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Settings {
    pub limits: LimitsConfig,
    pub trend: TrendConfig,
    /// The date the analysis is made on (reports print it; nothing is dated after it).
    pub today: NaiveDate,
}

/// A setting's key, what it means and its built-in default.
pub struct Key {
    pub key: &'static str,
    pub help: &'static str,
    pub default: fn() -> String,
}

fn d() -> TrendConfig {
    TrendConfig::default()
}

/// Every setting a database may hold.
pub const KEYS: &[Key] = &[
    Key {
        key: LimitsConfig::MEASURED_RULE_KEY,
        help: "measured-value rule for Zs: temperature_corrected (default) or rule_of_thumb_80",
        default: || MeasuredRule::default().as_str().to_string(),
    },
    Key {
        key: "trend.resistance.resolution_ohm",
        help: "instrument resolution for resistances, Ω",
        default: || d().resistance.resolution.to_string(),
    },
    Key {
        key: "trend.resistance.absolute_ohm",
        help: "tolerance added to the resolution for resistances, Ω",
        default: || d().resistance.absolute.to_string(),
    },
    Key {
        key: "trend.resistance.relative",
        help: "tolerance for resistances as a fraction of the reading",
        default: || d().resistance.relative.to_string(),
    },
    Key {
        key: "trend.ze.absolute_ohm",
        help: "tolerance added to the resolution for Ze, Ω",
        default: || d().ze.absolute.to_string(),
    },
    Key {
        key: "trend.ze.relative",
        help: "tolerance for Ze as a fraction of the reading",
        default: || d().ze.relative.to_string(),
    },
    Key {
        key: "trend.ir.decades",
        help: "change in insulation resistance that counts, in decades (log10)",
        default: || d().insulation_log10.absolute.to_string(),
    },
    Key {
        key: "trend.rcd.absolute_ms",
        help: "tolerance added to the resolution for RCD trip times, ms",
        default: || d().rcd_ms.absolute.to_string(),
    },
];

impl Settings {
    /// Built-in defaults, for `today`.
    pub fn defaults(today: NaiveDate) -> Settings {
        Settings {
            limits: LimitsConfig::default(),
            trend: TrendConfig::default(),
            today,
        }
    }

    /// Defaults overridden by the database's settings.
    pub fn load(store: &Store, today: NaiveDate) -> Result<Settings> {
        let mut s = Settings::defaults(today);
        for k in KEYS {
            if let Some(v) = store.setting(k.key)? {
                s.apply(k.key, &v)?;
            }
        }
        Ok(s)
    }

    /// Apply one setting, checking its value.
    pub fn apply(&mut self, key: &str, value: &str) -> Result<()> {
        let num = || -> Result<f64> {
            value
                .trim()
                .parse::<f64>()
                .ok()
                .filter(|v| v.is_finite() && *v >= 0.0)
                .ok_or_else(|| {
                    Error::invalid(format!(
                        "setting {key}: {value:?} is not a number of zero or more"
                    ))
                })
        };
        match key {
            LimitsConfig::MEASURED_RULE_KEY => {
                self.limits.measured_rule = value
                    .parse()
                    .map_err(|e: crate::limits::LimitsError| Error::invalid(e.to_string()))?
            }
            "trend.resistance.resolution_ohm" => self.trend.resistance.resolution = num()?,
            "trend.resistance.absolute_ohm" => self.trend.resistance.absolute = num()?,
            "trend.resistance.relative" => self.trend.resistance.relative = num()?,
            "trend.ze.absolute_ohm" => self.trend.ze.absolute = num()?,
            "trend.ze.relative" => self.trend.ze.relative = num()?,
            "trend.ir.decades" => self.trend.insulation_log10.absolute = num()?,
            "trend.rcd.absolute_ms" => self.trend.rcd_ms.absolute = num()?,
            _ => {
                return Err(Error::invalid(format!(
                    "unknown setting {key:?}: known settings are {}",
                    KEYS.iter().map(|k| k.key).collect::<Vec<_>>().join(", ")
                )));
            }
        }
        self.trend
            .validate()
            .map_err(|e| Error::invalid(format!("setting {key}: {e}")))?;
        Ok(())
    }

    /// The current value of a setting as text.
    pub fn value(&self, key: &str) -> Option<String> {
        Some(match key {
            LimitsConfig::MEASURED_RULE_KEY => self.limits.measured_rule.as_str().to_string(),
            "trend.resistance.resolution_ohm" => self.trend.resistance.resolution.to_string(),
            "trend.resistance.absolute_ohm" => self.trend.resistance.absolute.to_string(),
            "trend.resistance.relative" => self.trend.resistance.relative.to_string(),
            "trend.ze.absolute_ohm" => self.trend.ze.absolute.to_string(),
            "trend.ze.relative" => self.trend.ze.relative.to_string(),
            "trend.ir.decades" => self.trend.insulation_log10.absolute.to_string(),
            "trend.rcd.absolute_ms" => self.trend.rcd_ms.absolute.to_string(),
            _ => return None,
        })
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn settings_apply_and_refuse() {
        let mut s = Settings::defaults(NaiveDate::from_ymd_opt(2026, 1, 1).unwrap());
        s.apply("limits.measured_rule", "rule_of_thumb_80").unwrap();
        assert_eq!(s.limits.measured_rule, MeasuredRule::RuleOfThumb80);
        s.apply("trend.resistance.absolute_ohm", "0.03").unwrap();
        assert_eq!(s.trend.resistance.absolute, 0.03);
        assert!(s.apply("trend.resistance.absolute_ohm", "-1").is_err());
        assert!(s.apply("trend.nope", "1").is_err());
        assert!(s.apply("limits.measured_rule", "guess").is_err());
        for k in KEYS {
            assert!(s.value(k.key).is_some(), "{}", k.key);
            let mut t = s.clone();
            t.apply(k.key, &(k.default)()).unwrap();
        }
    }
}
