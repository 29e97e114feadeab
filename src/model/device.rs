//! Protective devices as recorded on a circuit: a circuit-breaker or RCBO with its curve and
//! rating, or a fuse with its standard and rating.
//!
//! The text form is what a contractor writes on a schedule: `B32`, `C16`, `RCBO B20`,
//! `BS 88-3 30A`, `BS3036 15`. Parsing is strict: an unknown type, curve or rating is an
//! error that lists what is known, never a silent default.

use std::fmt;
use std::str::FromStr;

use serde::{Deserialize, Serialize};

/// Instantaneous tripping characteristic of a circuit-breaker (BS EN 60898 / BS EN 61009).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord, Serialize, Deserialize)]
pub enum Curve {
    B,
    C,
    D,
}

impl Curve {
    /// Multiple of In at which the breaker trips instantaneously (BS 7671 Regulation 411.4.5).
    pub fn ia_multiple(self) -> u16 {
        match self {
            Curve::B => 5,
            Curve::C => 10,
            Curve::D => 20,
        }
    }

    pub fn letter(self) -> char {
        match self {
            Curve::B => 'B',
            Curve::C => 'C',
            Curve::D => 'D',
        }
    }
}

/// The product standard a circuit-breaker is made to.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord, Serialize, Deserialize)]
pub enum BreakerStandard {
    /// BS EN 60898 circuit-breaker.
    #[serde(rename = "BS EN 60898")]
    En60898,
    /// BS EN 61009 RCBO (circuit-breaker with integral residual current protection).
    #[serde(rename = "BS EN 61009")]
    En61009,
}

impl BreakerStandard {
    pub fn name(self) -> &'static str {
        match self {
            BreakerStandard::En60898 => "BS EN 60898",
            BreakerStandard::En61009 => "BS EN 61009",
        }
    }
}

/// The standard a fuse is made to.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord, Serialize, Deserialize)]
pub enum FuseStandard {
    /// BS 88-2 general purpose (gG) fuse.
    #[serde(rename = "BS 88-2")]
    Bs88_2,
    /// BS 88-3 cartridge fuse for domestic use (formerly BS 1361).
    #[serde(rename = "BS 88-3")]
    Bs88_3,
    /// BS 3036 semi-enclosed (rewirable) fuse.
    #[serde(rename = "BS 3036")]
    Bs3036,
    /// BS 1362 plug-top / fused connection unit cartridge fuse.
    #[serde(rename = "BS 1362")]
    Bs1362,
}

impl FuseStandard {
    pub const ALL: [FuseStandard; 4] = [
        FuseStandard::Bs88_2,
        FuseStandard::Bs88_3,
        FuseStandard::Bs3036,
        FuseStandard::Bs1362,
    ];

    pub fn name(self) -> &'static str {
        match self {
            FuseStandard::Bs88_2 => "BS 88-2",
            FuseStandard::Bs88_3 => "BS 88-3",
            FuseStandard::Bs3036 => "BS 3036",
            FuseStandard::Bs1362 => "BS 1362",
        }
    }

    /// Ratings made to this standard that a domestic or small commercial board carries.
    pub fn ratings(self) -> &'static [u16] {
        match self {
            FuseStandard::Bs88_2 => &[
                2, 4, 6, 10, 16, 20, 25, 32, 40, 50, 63, 80, 100, 125, 160, 200,
            ],
            FuseStandard::Bs88_3 => &[5, 15, 16, 20, 30, 32, 45, 60, 80, 100],
            FuseStandard::Bs3036 => &[5, 15, 20, 30, 45, 60, 100],
            FuseStandard::Bs1362 => &[3, 5, 13],
        }
    }
}

/// Breaker ratings for which BS 7671 Table 41.3 gives a maximum Zs.
pub const BREAKER_RATINGS: [u16; 13] = [3, 6, 10, 16, 20, 25, 32, 40, 50, 63, 80, 100, 125];

/// A circuit's overcurrent protective device.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord, Serialize, Deserialize)]
#[serde(tag = "kind", rename_all = "snake_case")]
pub enum Device {
    Breaker {
        standard: BreakerStandard,
        curve: Curve,
        rating_a: u16,
    },
    Fuse {
        standard: FuseStandard,
        rating_a: u16,
    },
}

impl Device {
    pub fn rating_a(&self) -> u16 {
        match *self {
            Device::Breaker { rating_a, .. } | Device::Fuse { rating_a, .. } => rating_a,
        }
    }

    /// Build a breaker, checking the rating against the standard ratings.
    pub fn breaker(
        standard: BreakerStandard,
        curve: Curve,
        rating_a: u16,
    ) -> Result<Device, DeviceError> {
        if !BREAKER_RATINGS.contains(&rating_a) {
            return Err(DeviceError::Rating {
                text: format!("{}{}", curve.letter(), rating_a),
                known: join_ratings(&BREAKER_RATINGS),
            });
        }
        Ok(Device::Breaker {
            standard,
            curve,
            rating_a,
        })
    }

    /// Build a fuse, checking the rating against that standard's ratings.
    pub fn fuse(standard: FuseStandard, rating_a: u16) -> Result<Device, DeviceError> {
        if !standard.ratings().contains(&rating_a) {
            return Err(DeviceError::Rating {
                text: format!("{} {}A", standard.name(), rating_a),
                known: join_ratings(standard.ratings()),
            });
        }
        Ok(Device::Fuse { standard, rating_a })
    }
}

fn join_ratings(r: &[u16]) -> String {
    r.iter()
        .map(|x| x.to_string())
        .collect::<Vec<_>>()
        .join(", ")
}

impl fmt::Display for Device {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match *self {
            Device::Breaker {
                standard: BreakerStandard::En60898,
                curve,
                rating_a,
            } => write!(f, "{}{}", curve.letter(), rating_a),
            Device::Breaker {
                standard: BreakerStandard::En61009,
                curve,
                rating_a,
            } => write!(f, "RCBO {}{}", curve.letter(), rating_a),
            Device::Fuse { standard, rating_a } => write!(f, "{} {}A", standard.name(), rating_a),
        }
    }
}

#[derive(Debug, Clone, PartialEq, Eq, thiserror::Error)]
pub enum DeviceError {
    #[error(
        "unknown protective device {0:?}: expected a breaker curve and rating such as B16, C32, D6 or RCBO B20, or a fuse standard and rating such as BS 88-3 30A, BS 88-2 32A, BS 3036 15A, BS 1362 13A"
    )]
    Unknown(String),
    #[error("{text} is not a standard rating: known ratings are {known} A")]
    Rating { text: String, known: String },
}

impl FromStr for Device {
    type Err = DeviceError;

    fn from_str(s: &str) -> Result<Device, DeviceError> {
        let unknown = || DeviceError::Unknown(s.to_string());
        // Compare without spaces, case-folded: "bs 88-3 30 a" == "BS88-330A" is ambiguous,
        // so the standard is matched first and the rating is what follows it.
        let squashed: String = s
            .chars()
            .filter(|c| !c.is_whitespace())
            .collect::<String>()
            .to_ascii_uppercase();
        if squashed.is_empty() {
            return Err(unknown());
        }

        // Fuses: standard prefix, then the rating with an optional trailing A.
        const FUSE_PREFIXES: [(&str, FuseStandard); 6] = [
            ("BS88-2", FuseStandard::Bs88_2),
            ("BS88-3", FuseStandard::Bs88_3),
            ("BS1361", FuseStandard::Bs88_3),
            ("BS3036", FuseStandard::Bs3036),
            ("BS1362", FuseStandard::Bs1362),
            ("BS88", FuseStandard::Bs88_2),
        ];
        for (prefix, standard) in FUSE_PREFIXES {
            if let Some(rest) = squashed.strip_prefix(prefix) {
                let rest = rest.trim_start_matches(['-', '/', ':']);
                let rating = parse_rating(rest).ok_or_else(unknown)?;
                return Device::fuse(standard, rating);
            }
        }

        // Breakers: optional standard or RCBO/MCB word, the curve letter, the rating.
        let mut standard = BreakerStandard::En60898;
        let mut rest = squashed.as_str();
        for (prefix, std) in [
            ("BSEN60898", BreakerStandard::En60898),
            ("BSEN61009", BreakerStandard::En61009),
            ("RCBO", BreakerStandard::En61009),
            ("MCB", BreakerStandard::En60898),
        ] {
            if let Some(r) = rest.strip_prefix(prefix) {
                standard = std;
                rest = r.trim_start_matches(['-', '/', ':', ',']);
                break;
            }
        }
        for (suffix, std) in [
            ("RCBO", BreakerStandard::En61009),
            ("MCB", BreakerStandard::En60898),
        ] {
            if let Some(r) = rest.strip_suffix(suffix) {
                standard = std;
                rest = r.trim_end_matches(['-', '/', ',']);
                break;
            }
        }
        let mut chars = rest.chars();
        let curve = match chars.next() {
            Some('B') => Curve::B,
            Some('C') => Curve::C,
            Some('D') => Curve::D,
            _ => return Err(unknown()),
        };
        let rating = parse_rating(chars.as_str()).ok_or_else(unknown)?;
        Device::breaker(standard, curve, rating)
    }
}

fn parse_rating(s: &str) -> Option<u16> {
    let s = s.strip_suffix('A').unwrap_or(s);
    if s.is_empty() || !s.bytes().all(|b| b.is_ascii_digit()) {
        return None;
    }
    s.parse().ok()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn parses_the_usual_forms() {
        let b32 = Device::Breaker {
            standard: BreakerStandard::En60898,
            curve: Curve::B,
            rating_a: 32,
        };
        for s in ["B32", "b32", "B 32", "B32A", "MCB B32", "BS EN 60898 B32"] {
            assert_eq!(s.parse::<Device>().unwrap(), b32, "{s}");
        }
        let rcbo = "RCBO C20".parse::<Device>().unwrap();
        assert_eq!(rcbo.to_string(), "RCBO C20");
        assert_eq!("c20 rcbo".parse::<Device>().unwrap(), rcbo);
        let fuse = "BS 88-3 30A".parse::<Device>().unwrap();
        assert_eq!(
            fuse,
            Device::Fuse {
                standard: FuseStandard::Bs88_3,
                rating_a: 30
            }
        );
        // BS 1361 was renumbered BS 88-3 (common practice, no source).
        assert_eq!("BS1361 30".parse::<Device>().unwrap(), fuse);
        assert_eq!(
            "bs3036 15".parse::<Device>().unwrap().to_string(),
            "BS 3036 15A"
        );
    }

    #[test]
    fn display_round_trips() {
        for s in [
            "B6",
            "C125",
            "D10",
            "RCBO B16",
            "BS 88-2 32A",
            "BS 1362 13A",
        ] {
            assert_eq!(s.parse::<Device>().unwrap().to_string(), s);
        }
    }

    #[test]
    fn refuses_unknown_devices_and_ratings() {
        for s in ["", "E32", "B", "B3.5", "32", "BS 88-3", "fuse 30"] {
            assert!(
                matches!(s.parse::<Device>(), Err(DeviceError::Unknown(_))),
                "{s}"
            );
        }
        let err = "B33".parse::<Device>().unwrap_err();
        assert!(
            err.to_string().contains("B33 is not a standard rating"),
            "{err}"
        );
        assert!(err.to_string().contains("32"), "{err}");
        assert!(matches!(
            "BS 3036 32A".parse::<Device>(),
            Err(DeviceError::Rating { .. })
        ));
    }
}
