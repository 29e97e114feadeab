//! Protective devices as recorded on a circuit: a circuit-breaker or RCBO with its curve and
//! rating, or a fuse with its standard and rating.
//!
//! The text form is what a contractor writes on a schedule: `B32`, `C16`, `RCBO B20`,
//! `BS 88-3 32A`, `BS3036 15`, `BS 1361 30A`, `BS 3871 type 2 32A`. Parsing is strict: an
//! unknown type, curve or rating is an error that lists what is known, never a silent default,
//! and a spelling that could mean two devices ("BS 88 32A") is refused with both choices.

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
    /// Multiple of In at which the breaker trips instantaneously: the upper limit of the
    /// instantaneous tripping range of BS EN 60898-1 (and BS EN 61009-1), as BS 7671 Appendix 3
    /// uses it for Ia.
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
    /// BS 1361 cartridge fuse, the older standard BS 88-3 replaced; its 15 A and 30 A sizes
    /// have no BS 88-3 counterpart, so it is kept apart.
    #[serde(rename = "BS 1361")]
    Bs1361,
}

impl FuseStandard {
    pub const ALL: [FuseStandard; 5] = [
        FuseStandard::Bs88_2,
        FuseStandard::Bs88_3,
        FuseStandard::Bs1361,
        FuseStandard::Bs3036,
        FuseStandard::Bs1362,
    ];

    pub fn name(self) -> &'static str {
        match self {
            FuseStandard::Bs88_2 => "BS 88-2",
            FuseStandard::Bs88_3 => "BS 88-3",
            FuseStandard::Bs3036 => "BS 3036",
            FuseStandard::Bs1362 => "BS 1362",
            FuseStandard::Bs1361 => "BS 1361",
        }
    }

    /// Ratings made to this standard that a domestic or small commercial board carries.
    pub fn ratings(self) -> &'static [u16] {
        match self {
            FuseStandard::Bs88_2 => &[
                2, 4, 6, 10, 16, 20, 25, 32, 40, 50, 63, 80, 100, 125, 160, 200,
            ],
            FuseStandard::Bs88_3 => &[5, 16, 20, 32, 45, 63, 80, 100],
            FuseStandard::Bs1361 => &[5, 15, 20, 30, 45, 60, 80, 100],
            FuseStandard::Bs3036 => &[5, 15, 20, 30, 45, 60, 100],
            FuseStandard::Bs1362 => &[3, 5, 13],
        }
    }
}

/// Breaker ratings for which BS 7671 Table 41.3 gives a maximum Zs.
pub const BREAKER_RATINGS: [u16; 13] = [3, 6, 10, 16, 20, 25, 32, 40, 50, 63, 80, 100, 125];

/// The type of a BS 3871 circuit-breaker, the standard before BS EN 60898: types 1, 2 and 3
/// trip instantaneously at up to 4, 7 and 10 × In (from memory).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord, Serialize, Deserialize)]
pub enum Bs3871Type {
    #[serde(rename = "1")]
    T1,
    #[serde(rename = "2")]
    T2,
    #[serde(rename = "3")]
    T3,
}

impl Bs3871Type {
    /// Multiple of In for instantaneous tripping: 4, 7, 10 (from memory).
    pub fn ia_multiple(self) -> u16 {
        match self {
            Bs3871Type::T1 => 4,
            Bs3871Type::T2 => 7,
            Bs3871Type::T3 => 10,
        }
    }

    pub fn number(self) -> u8 {
        match self {
            Bs3871Type::T1 => 1,
            Bs3871Type::T2 => 2,
            Bs3871Type::T3 => 3,
        }
    }
}

/// Ratings of BS 3871 circuit-breakers found on older boards (common practice, no source).
pub const BS3871_RATINGS: [u16; 14] = [5, 6, 10, 15, 16, 20, 25, 30, 32, 40, 45, 50, 60, 63];

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
    /// A BS 3871 miniature circuit-breaker (withdrawn; still on older boards).
    Bs3871 { mcb_type: Bs3871Type, rating_a: u16 },
}

impl Device {
    pub fn rating_a(&self) -> u16 {
        match *self {
            Device::Breaker { rating_a, .. }
            | Device::Fuse { rating_a, .. }
            | Device::Bs3871 { rating_a, .. } => rating_a,
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

    /// Build a BS 3871 breaker, checking the rating.
    pub fn bs3871(mcb_type: Bs3871Type, rating_a: u16) -> Result<Device, DeviceError> {
        if !BS3871_RATINGS.contains(&rating_a) {
            return Err(DeviceError::Rating {
                text: format!("BS 3871 type {} {}A", mcb_type.number(), rating_a),
                known: join_ratings(&BS3871_RATINGS),
            });
        }
        Ok(Device::Bs3871 { mcb_type, rating_a })
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
            Device::Bs3871 { mcb_type, rating_a } => {
                write!(f, "BS 3871 type {} {}A", mcb_type.number(), rating_a)
            }
        }
    }
}

#[derive(Debug, Clone, PartialEq, Eq, thiserror::Error)]
pub enum DeviceError {
    #[error(
        "unknown protective device {0:?}: expected a breaker curve and rating such as B16, C32, D6 or RCBO B20, an older breaker such as BS 3871 type 2 30A, or a fuse standard and rating such as BS 88-3 32A, BS 88-2 32A, BS 1361 30A, BS 3036 15A, BS 1362 13A"
    )]
    Unknown(String),
    #[error(
        "{0:?} could be a BS 88-2 (industrial, gG) or a BS 88-3 (domestic cartridge, formerly BS 1361) fuse, whose limits differ: write BS 88-2 {1}A or BS 88-3 {1}A"
    )]
    AmbiguousBs88(String, u16),
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
        const FUSE_PREFIXES: [(&str, FuseStandard); 5] = [
            ("BS88-2", FuseStandard::Bs88_2),
            ("BS88-3", FuseStandard::Bs88_3),
            ("BS1361", FuseStandard::Bs1361),
            ("BS3036", FuseStandard::Bs3036),
            ("BS1362", FuseStandard::Bs1362),
        ];
        for (prefix, standard) in FUSE_PREFIXES {
            if let Some(rest) = squashed.strip_prefix(prefix) {
                let rest = rest.trim_start_matches(['-', '/', ':']);
                let rating = parse_rating(rest).ok_or_else(unknown)?;
                // BS 88-3 has no 15, 30 or 60 A size; those are the BS 1361 fuses it replaced,
                // still written "BS 88-3" on many schedules, and the only fuse they can be.
                if standard == FuseStandard::Bs88_3 && [15, 30, 60].contains(&rating) {
                    return Device::fuse(FuseStandard::Bs1361, rating);
                }
                return Device::fuse(standard, rating);
            }
        }
        // "BS 88" alone: in a home usually BS 88-3, on an industrial board BS 88-2. Guessing
        // would pick the wrong table for one of them, so both are offered.
        if let Some(rest) = squashed.strip_prefix("BS88") {
            let rating = parse_rating(rest.trim_start_matches([':', '/'])).ok_or_else(unknown)?;
            return Err(DeviceError::AmbiguousBs88(s.trim().to_string(), rating));
        }
        // BS 3871 breakers: "BS 3871 type 2 32A", "BS3871 T2 32". The word type (or T) is
        // needed: without spaces, "BS 3871 2 32A" would read as 232 A.
        if let Some(rest) = squashed.strip_prefix("BS3871") {
            let rest = rest.trim_start_matches(['-', '/', ':', ',']);
            let rest = rest
                .strip_prefix("TYPE")
                .or_else(|| rest.strip_prefix('T'))
                .ok_or_else(unknown)?;
            let mut chars = rest.chars();
            let mcb_type = match chars.next() {
                Some('1') => Bs3871Type::T1,
                Some('2') => Bs3871Type::T2,
                Some('3') => Bs3871Type::T3,
                _ => return Err(unknown()),
            };
            let rating = parse_rating(chars.as_str().trim_start_matches(['-', '/', ',']))
                .ok_or_else(unknown)?;
            return Device::bs3871(mcb_type, rating);
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
        let fuse = "BS 88-3 32A".parse::<Device>().unwrap();
        assert_eq!(
            fuse,
            Device::Fuse {
                standard: FuseStandard::Bs88_3,
                rating_a: 32
            }
        );
        // BS 88-3 replaced BS 1361 (IET Wiring Matters, Spring 2011, "Impact of fuse standard
        // developments on BS 7671:2008 (2011)"); the 15 and 30 A sizes are BS 1361's only.
        let bs1361 = Device::Fuse {
            standard: FuseStandard::Bs1361,
            rating_a: 30,
        };
        assert_eq!("BS1361 30".parse::<Device>().unwrap(), bs1361);
        assert_eq!("BS 88-3 30A".parse::<Device>().unwrap(), bs1361);
        assert_eq!(bs1361.to_string(), "BS 1361 30A");
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
            "BS 88-3 32A",
            "BS 1361 15A",
            "BS 1362 13A",
            "BS 3871 type 1 30A",
            "BS 3871 type 3 5A",
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
        for s in ["BS 3871 type 4 30A", "BS 3871 30A", "BS3871 T"] {
            assert!(
                matches!(s.parse::<Device>(), Err(DeviceError::Unknown(_))),
                "{s}"
            );
        }
        assert!(matches!(
            "BS 3871 type 2 33A".parse::<Device>(),
            Err(DeviceError::Rating { .. })
        ));
    }

    #[test]
    fn old_breakers_parse_in_the_usual_spellings() {
        let t2 = Device::Bs3871 {
            mcb_type: Bs3871Type::T2,
            rating_a: 32,
        };
        for s in [
            "BS 3871 type 2 32A",
            "BS3871 T2 32",
            "bs 3871 type2 32a",
            "BS 3871: Type 2 32A",
        ] {
            assert_eq!(s.parse::<Device>().unwrap(), t2, "{s}");
        }
    }

    #[test]
    fn bare_bs_88_is_refused_with_both_choices() {
        // In a home "BS 88" usually means BS 88-3 (domestic cartridge), on a commercial board
        // BS 88-2: their tables differ (common practice, no source), so neither is guessed.
        for s in ["BS 88 32A", "BS88 32", "bs 88 32 a"] {
            let err = s.parse::<Device>().unwrap_err();
            assert!(matches!(err, DeviceError::AmbiguousBs88(_, 32)), "{s}");
            let msg = err.to_string();
            assert!(
                msg.contains("BS 88-2 32A") && msg.contains("BS 88-3 32A"),
                "{msg}"
            );
        }
        assert!(matches!(
            "BS 88".parse::<Device>(),
            Err(DeviceError::Unknown(_))
        ));
    }
}
