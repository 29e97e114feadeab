//! Per-database choices: the measured-value rule, the insulation assumed where none is
//! recorded, the noise floors, and the contractor's details printed on reports. Built-in defaults,
//! overridden by what `ohmtrail settings set` stored in the database.

use chrono::NaiveDate;
use serde::Serialize;

use crate::error::{Error, Result};
use crate::limits::LimitsConfig;
use crate::store::Store;
use crate::trend::TrendConfig;

/// Everything the analysis needs besides the history.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Settings {
    pub limits: LimitsConfig,
    pub trend: TrendConfig,
    /// The date the analysis is made on (reports print it; nothing is dated after it).
    pub today: NaiveDate,
    /// Who made the report: printed on the report, the portfolio index and the brief.
    pub contractor: ContractorSettings,
}

/// The contractor's details as set (`contractor.*`); all optional, none by default.
#[derive(Debug, Clone, Default, PartialEq, Serialize)]
pub struct ContractorSettings {
    pub name: Option<String>,
    pub address: Option<String>,
    pub registration: Option<String>,
    /// A PNG or SVG file, read and embedded each time a report is made.
    pub logo: Option<String>,
}

impl ContractorSettings {
    /// Whether any detail is set.
    pub fn is_set(&self) -> bool {
        self.name.is_some()
            || self.address.is_some()
            || self.registration.is_some()
            || self.logo.is_some()
    }
}

/// Where a setting lives in [`Settings`].
#[derive(Clone, Copy)]
enum Slot {
    MeasuredRule,
    AssumedInsulation,
    /// A number of zero or more inside the trend configuration.
    Number(fn(&mut TrendConfig) -> &mut f64),
    /// One line of text about the contractor.
    Text(fn(&mut ContractorSettings) -> &mut Option<String>),
    /// The contractor's logo: a file name ending .png or .svg.
    Logo,
}

/// A setting's key, what it means, and where its value lives.
pub struct Key {
    pub key: &'static str,
    pub help: &'static str,
    slot: Slot,
}

impl Key {
    /// The built-in default, as text.
    pub fn default_value(&self) -> String {
        Settings::defaults(NaiveDate::MIN).get(self)
    }
}

/// Every setting a database may hold.
pub const KEYS: &[Key] = &[
    Key {
        key: LimitsConfig::MEASURED_RULE_KEY,
        help: "measured-value rule for Zs: temperature_corrected (default) or rule_of_thumb_80",
        slot: Slot::MeasuredRule,
    },
    Key {
        key: LimitsConfig::ASSUMED_INSULATION_KEY,
        help: "insulation taken where a circuit's is not recorded: thermoplastic70 (default, the usual twin and earth) or thermosetting90; every limit that uses it says so",
        slot: Slot::AssumedInsulation,
    },
    Key {
        key: "trend.resistance.resolution_ohm",
        help: "instrument resolution for resistances, Ω",
        slot: Slot::Number(|t| &mut t.resistance.resolution),
    },
    Key {
        key: "trend.resistance.absolute_ohm",
        help: "tolerance added to the resolution for resistances, Ω",
        slot: Slot::Number(|t| &mut t.resistance.absolute),
    },
    Key {
        key: "trend.resistance.relative",
        help: "tolerance for resistances as a fraction of the reading",
        slot: Slot::Number(|t| &mut t.resistance.relative),
    },
    Key {
        key: "trend.ze.absolute_ohm",
        help: "tolerance added to the resolution for Ze, Ω",
        slot: Slot::Number(|t| &mut t.ze.absolute),
    },
    Key {
        key: "trend.ze.relative",
        help: "tolerance for Ze as a fraction of the reading",
        slot: Slot::Number(|t| &mut t.ze.relative),
    },
    Key {
        key: "trend.ir.decades",
        help: "change in insulation resistance that counts, in decades (log10)",
        slot: Slot::Number(|t| &mut t.insulation_log10.absolute),
    },
    Key {
        key: "trend.ir.concern_mohm",
        help: "insulation resistance at or above this (MΩ) is clear of concern: a fall to it is not reported",
        slot: Slot::Number(|t| &mut t.insulation_concern_mohm),
    },
    Key {
        key: "trend.rcd.absolute_ms",
        help: "tolerance added to the resolution for RCD trip times, ms",
        slot: Slot::Number(|t| &mut t.rcd_ms.absolute),
    },
    Key {
        key: "trend.rcd.relative",
        help: "tolerance for RCD trip times as a fraction of the reading",
        slot: Slot::Number(|t| &mut t.rcd_ms.relative),
    },
    Key {
        key: "trend.ze_tt.decades",
        help: "change in a TT installation's Ze that counts, in decades (log10), beyond seasonal swing",
        slot: Slot::Number(|t| &mut t.ze_tt_log10.absolute),
    },
    Key {
        key: "contractor.name",
        help: "the contractor's name, printed at the top of every report, index and brief",
        slot: Slot::Text(|c| &mut c.name),
    },
    Key {
        key: "contractor.address",
        help: "the contractor's address, on one line",
        slot: Slot::Text(|c| &mut c.address),
    },
    Key {
        key: "contractor.registration",
        help: "the contractor's registration number with its scheme, e.g. \"Scheme 12345\"",
        slot: Slot::Text(|c| &mut c.registration),
    },
    Key {
        key: "contractor.logo",
        help: "a PNG or SVG file with the contractor's logo, read and embedded when a report is made",
        slot: Slot::Logo,
    },
];

/// The longest contractor detail accepted, in characters.
const MAX_TEXT: usize = 200;

/// The setting with this name, or an error listing the known ones.
pub fn key(name: &str) -> Result<&'static Key> {
    KEYS.iter().find(|k| k.key == name).ok_or_else(|| {
        Error::invalid(format!(
            "unknown setting {name:?}: known settings are {}",
            KEYS.iter().map(|k| k.key).collect::<Vec<_>>().join(", ")
        ))
    })
}

impl Settings {
    /// Built-in defaults, for `today`.
    pub fn defaults(today: NaiveDate) -> Settings {
        Settings {
            limits: LimitsConfig::default(),
            trend: TrendConfig::default(),
            today,
            contractor: ContractorSettings::default(),
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
    /// A value the rules refuse leaves the settings as they were.
    pub fn apply(&mut self, name: &str, value: &str) -> Result<()> {
        let k = key(name)?;
        let mut next = self.clone();
        match k.slot {
            Slot::MeasuredRule => {
                next.limits.measured_rule = value
                    .parse()
                    .map_err(|e: crate::limits::LimitsError| Error::invalid(e.to_string()))?
            }
            Slot::AssumedInsulation => {
                next.limits.assumed_insulation = value
                    .parse()
                    .map_err(|e: String| Error::invalid(format!("setting {name}: {e}")))?
            }
            Slot::Number(at) => {
                *at(&mut next.trend) = value
                    .trim()
                    .parse::<f64>()
                    .ok()
                    .filter(|v| v.is_finite() && *v >= 0.0)
                    .ok_or_else(|| {
                        Error::invalid(format!(
                            "setting {name}: {value:?} is not a number of zero or more"
                        ))
                    })?
            }
            Slot::Text(at) => *at(&mut next.contractor) = Some(text_value(name, value)?),
            Slot::Logo => {
                let v = text_value(name, value)?;
                let lower = v.to_ascii_lowercase();
                if !(lower.ends_with(".png") || lower.ends_with(".svg")) {
                    return Err(Error::invalid(format!(
                        "setting {name}: {v:?} is not a PNG or SVG file: expected a file name ending .png or .svg"
                    )));
                }
                next.contractor.logo = Some(v);
            }
        }
        next.trend
            .validate()
            .map_err(|e| Error::invalid(format!("setting {name}: {e}")))?;
        *self = next;
        Ok(())
    }

    /// The current value of a setting as text.
    pub fn value(&self, name: &str) -> Option<String> {
        key(name).ok().map(|k| self.get(k))
    }

    fn get(&self, k: &Key) -> String {
        match k.slot {
            Slot::MeasuredRule => self.limits.measured_rule.as_str().to_string(),
            Slot::AssumedInsulation => self.limits.assumed_insulation.as_str().to_string(),
            Slot::Number(at) => {
                let mut trend = self.trend;
                at(&mut trend).to_string()
            }
            Slot::Text(at) => {
                let mut c = self.contractor.clone();
                at(&mut c).clone().unwrap_or_default()
            }
            Slot::Logo => self.contractor.logo.clone().unwrap_or_default(),
        }
    }
}

/// A contractor detail: one line of text, not empty, at most [`MAX_TEXT`] characters.
fn text_value(name: &str, value: &str) -> Result<String> {
    let v = value.trim();
    if v.is_empty() {
        return Err(Error::invalid(format!(
            "setting {name}: the value is empty: give the text, or `settings reset {name}` to remove it"
        )));
    }
    if v.chars().any(char::is_control) {
        return Err(Error::invalid(format!(
            "setting {name}: {v:?} holds a line break or a control character: expected one line"
        )));
    }
    if v.chars().count() > MAX_TEXT {
        return Err(Error::invalid(format!(
            "setting {name}: the value is {} characters long: expected at most {MAX_TEXT}",
            v.chars().count()
        )));
    }
    Ok(v.to_string())
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::limits::MeasuredRule;

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
        // Unrecorded insulation: 70 °C thermoplastic by default (common practice, no source:
        // the twin and earth of UK homes), 90 °C thermosetting by choice.
        assert_eq!(
            s.value("limits.assumed_insulation").as_deref(),
            Some("thermoplastic70")
        );
        s.apply("limits.assumed_insulation", "xlpe").unwrap();
        assert_eq!(
            s.limits.assumed_insulation,
            crate::model::Insulation::Thermosetting90
        );
        assert!(s.apply("limits.assumed_insulation", "rubber").is_err());
        for k in KEYS.iter().filter(|k| !k.key.starts_with("contractor.")) {
            assert!(s.value(k.key).is_some(), "{}", k.key);
            let mut t = s.clone();
            t.apply(k.key, &k.default_value()).unwrap();
        }
    }

    #[test]
    fn contractor_details_are_one_line_and_the_logo_a_png_or_svg() {
        let mut s = Settings::defaults(NaiveDate::from_ymd_opt(2026, 1, 1).unwrap());
        assert!(!s.contractor.is_set());
        s.apply("contractor.name", "  Example Electrical Ltd ")
            .unwrap();
        assert_eq!(s.contractor.name.as_deref(), Some("Example Electrical Ltd"));
        assert!(s.contractor.is_set());
        assert!(s.apply("contractor.address", "").is_err());
        assert!(s.apply("contractor.address", "1 Road\nTown").is_err());
        assert!(s.apply("contractor.address", &"x".repeat(201)).is_err());
        s.apply("contractor.logo", "/tmp/logo.SVG").unwrap();
        let e = s
            .apply("contractor.logo", "logo.jpg")
            .unwrap_err()
            .to_string();
        assert!(e.contains("logo.jpg") && e.contains(".png or .svg"), "{e}");
        assert_eq!(s.value("contractor.logo").as_deref(), Some("/tmp/logo.SVG"));
    }
}
