//! Maximum earth fault loop impedance for a protective device, and the disconnection time a
//! circuit needs.
//!
//! Breakers come from BS 7671 Table 41.3, which is Cmin·U0 / Ia rounded half-up to 2 dp.
//! Fuses come from Table 41.2 (0.4 s) where a value could be stated, each group with its own
//! status; Table 41.4 (5 s) is not held here and is refused. BS 3871 breakers use the same
//! formula as Table 41.3 with their own trip multiples (from memory). TT circuits with an RCD
//! use Table 41.5 (50 V / IΔn).

use std::fmt;
use std::str::FromStr;

use serde::{Deserialize, Serialize};

use super::LimitsError;
use super::source::{Source, SourceStatus};
use crate::model::device::BREAKER_RATINGS;
use crate::model::{Curve, Device, Earthing, FuseStandard, RCD_RATINGS_MA};

/// Nominal line voltage to earth, V (BS 7671 Chapter 41).
pub const U0_V: f64 = 230.0;
/// Minimum voltage factor for the fault current (BS 7671:2018 Regulation 411.4.5).
pub const CMIN: f64 = 0.95;
/// Cmin × U0 in tenths of a volt: 218.5 V, kept whole so the table rounding is exact.
const CMIN_U0_DECIVOLTS: u32 = 2185;

/// Maximum disconnection time a circuit must meet in a TN system.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord, Serialize, Deserialize)]
pub enum DisconnectionTime {
    /// Final circuits up to 63 A with sockets, up to 32 A fixed equipment (Reg 411.3.2.2).
    #[serde(rename = "0.4s")]
    S0_4,
    /// Distribution circuits and larger final circuits (Reg 411.3.2.3).
    #[serde(rename = "5s")]
    S5,
}

impl DisconnectionTime {
    pub fn seconds(self) -> f64 {
        match self {
            DisconnectionTime::S0_4 => 0.4,
            DisconnectionTime::S5 => 5.0,
        }
    }

    pub fn as_str(self) -> &'static str {
        match self {
            DisconnectionTime::S0_4 => "0.4 s",
            DisconnectionTime::S5 => "5 s",
        }
    }

    /// The time for a value recorded on a circuit, in seconds.
    pub fn from_seconds(s: f64) -> Result<DisconnectionTime, LimitsError> {
        if (s - 0.4).abs() < 1e-9 {
            Ok(DisconnectionTime::S0_4)
        } else if (s - 5.0).abs() < 1e-9 {
            Ok(DisconnectionTime::S5)
        } else {
            Err(LimitsError::UnknownDisconnection(s.to_string()))
        }
    }
}

impl fmt::Display for DisconnectionTime {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.as_str())
    }
}

impl FromStr for DisconnectionTime {
    type Err = LimitsError;
    fn from_str(s: &str) -> Result<Self, LimitsError> {
        let t = s.trim().to_ascii_lowercase();
        let t = t.strip_suffix('s').unwrap_or(&t).trim();
        match t {
            "0.4" | ".4" => Ok(DisconnectionTime::S0_4),
            "5" | "5.0" => Ok(DisconnectionTime::S5),
            _ => Err(LimitsError::UnknownDisconnection(s.to_string())),
        }
    }
}

/// The maximum Zs for a device at a disconnection time, with the current that operates it.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct ZsLimit {
    pub device: Device,
    /// The device as written on a schedule, e.g. "B32".
    pub device_text: String,
    pub disconnection: DisconnectionTime,
    /// Tabulated maximum Zs at conductor operating temperature, Ω.
    pub zs_max_ohm: f64,
    /// Current causing the device to operate within the time, A.
    pub ia_a: f64,
    pub source: Source,
    pub ia_source: Source,
}

const TABLE_41_3: Source = Source::new(
    "BS 7671:2018+A2:2022 Table 41.3",
    SourceStatus::Published,
    "maximum Zs for BS EN 60898 circuit-breakers and BS EN 61009 RCBOs, U0 230 V, Cmin 0.95; one value covers 0.4 s and 5 s",
);
const TABLE_41_3_FORMULA: Source = Source::new(
    "BS 7671:2018+A2:2022 Regulation 411.4.5",
    SourceStatus::Derived,
    "Zs = Cmin × U0 / Ia = 218.5 V / Ia, rounded half-up to 2 dp as Table 41.3 is printed; the 3 A column is computed, not read from the table",
);
const IA_BREAKER: Source = Source::new(
    "BS EN 60898-1 / BS EN 61009-1 instantaneous tripping ranges; BS 7671:2018+A2:2022 Appendix 3",
    SourceStatus::Published,
    "Ia = 5 × In (type B), 10 × In (type C), 20 × In (type D), the top of each instantaneous range",
);
const IA_FUSE: Source = Source::new(
    "BS 7671:2018+A2:2022 Regulation 411.4.5 (Zs × Ia ≤ Cmin × U0)",
    SourceStatus::Derived,
    "Ia = Cmin × U0 / Zs = 218.5 V / tabulated Zs: the current that melts the fuse within the time, read back from the table",
);

/// Table 41.3 as published, ratings 6 to 125 A: (In, [B, C, D]) in Ω.
pub const TABLE_41_3_OHMS: [(u16, [f64; 3]); 12] = [
    (6, [7.28, 3.64, 1.82]),
    (10, [4.37, 2.19, 1.09]),
    (16, [2.73, 1.37, 0.68]),
    (20, [2.19, 1.09, 0.55]),
    (25, [1.75, 0.87, 0.44]),
    (32, [1.37, 0.68, 0.34]),
    (40, [1.09, 0.55, 0.27]),
    (50, [0.87, 0.44, 0.22]),
    (63, [0.69, 0.35, 0.17]),
    (80, [0.55, 0.27, 0.14]),
    (100, [0.44, 0.22, 0.11]),
    (125, [0.35, 0.17, 0.09]),
];

fn curve_index(curve: Curve) -> usize {
    match curve {
        Curve::B => 0,
        Curve::C => 1,
        Curve::D => 2,
    }
}

/// Cmin·U0 / Ia for a breaker, rounded half-up to 2 dp in whole hundredths (no float error).
pub fn breaker_zs_by_formula(curve: Curve, rating_a: u16) -> f64 {
    zs_for_ia(u32::from(curve.ia_multiple()) * u32::from(rating_a))
}

/// 218.5 V / Ia in ohms, rounded half-up to 2 dp, computed in whole hundredths.
fn zs_for_ia(ia: u32) -> f64 {
    // Zs in hundredths = 21850 / Ia; half-up is (2·21850 + Ia) / (2·Ia) in integers.
    let centiohm = (2 * CMIN_U0_DECIVOLTS * 10 + ia) / (2 * ia);
    f64::from(centiohm) / 100.0
}

/// Fuse values at 0.4 s (Table 41.2) that share one source.
struct FuseGroup {
    rows: &'static [(u16, f64)],
    source: Source,
}

const BS3036_DERIVED: FuseGroup = FuseGroup {
    rows: &[(5, 9.10), (15, 2.42), (20, 1.68), (30, 1.04)],
    source: Source::new(
        "BS 7671:2018 Table 41.2 (BS 3036 semi-enclosed fuses, 0.4 s)",
        SourceStatus::Derived,
        "BS 7671:2008 Table 41.2 values (5 A 9.58, 15 A 2.55, 20 A 1.77, 30 A 1.09 Ω) × Cmin 0.95, rounded half-up to 2 dp; agrees with memory of the 2018 table",
    ),
};
const BS88_3_DERIVED: FuseGroup = FuseGroup {
    rows: &[(5, 9.93), (16, 2.30), (20, 1.93), (32, 0.86)],
    source: Source::new(
        "BS 7671:2018 Table 41.2 (BS 88-3 fuse system C, 0.4 s)",
        SourceStatus::FromMemory,
        "BS 7671:2008+A1:2011 values without Cmin (5 A 10.45, 16 A 2.42, 20 A 2.03, 32 A 0.91 Ω; from memory) × Cmin 0.95, rounded half-up to 2 dp; the 32 A figure agrees with a published measured-value limit of 0.72 Ω (0.8 × 0.91 = 0.728, rounded down); provisional: check against the standard before relying on them",
    ),
};
const BS1361_DERIVED: FuseGroup = FuseGroup {
    rows: &[(5, 9.93), (15, 3.12), (20, 1.62), (30, 1.09)],
    source: Source::new(
        "BS 7671:2008 Table 41.2 (BS 1361 fuses, 0.4 s), brought to Cmin",
        SourceStatus::FromMemory,
        "BS 7671:2008 values (5 A 10.45, 15 A 3.28, 20 A 1.70, 30 A 1.15 Ω; from memory) × Cmin 0.95, rounded half-up to 2 dp; BS 1361 is withdrawn, so no current table lists it; provisional: check against the standard before relying on them",
    ),
};
const BS88_2_DERIVED: FuseGroup = FuseGroup {
    rows: &[
        (6, 7.80),
        (10, 4.65),
        (16, 2.43),
        (20, 1.68),
        (25, 1.28),
        (32, 0.99),
    ],
    source: Source::new(
        "BS 7671:2018 Table 41.2 (BS 88-2 gG fuses, systems E and G, 0.4 s)",
        SourceStatus::Derived,
        "BS 7671:2008+A1:2011 values without Cmin (6 A 8.21, 10 A 4.89, 16 A 2.56, 20 A 1.77, 25 A 1.35, 32 A 1.04 Ω) × Cmin 0.95, rounded half-up to 2 dp",
    ),
};
const BS88_2_MEMORY: FuseGroup = FuseGroup {
    rows: &[(2, 33.1), (4, 15.6), (40, 0.75), (50, 0.57), (63, 0.42)],
    source: Source::new(
        "BS 7671:2018 Table 41.2 (BS 88-2 gG fuses, systems E and G, 0.4 s)",
        SourceStatus::FromMemory,
        "values recalled from the 2018 table, provisional: check against the standard before relying on them",
    ),
};
const BS1362_DERIVED: FuseGroup = FuseGroup {
    rows: &[(3, 15.58), (13, 2.30)],
    source: Source::new(
        "BS 7671:2018 Table 41.2 (BS 1362 fuses, 0.4 s)",
        SourceStatus::FromMemory,
        "BS 7671:2008 values (3 A 16.4, 13 A 2.42 Ω; from memory) × Cmin 0.95, rounded half-up to 2 dp; provisional: check against the standard before relying on them",
    ),
};

static BS3036_GROUPS: [FuseGroup; 1] = [BS3036_DERIVED];
static BS88_3_GROUPS: [FuseGroup; 1] = [BS88_3_DERIVED];
static BS1361_GROUPS: [FuseGroup; 1] = [BS1361_DERIVED];
static BS88_2_GROUPS: [FuseGroup; 2] = [BS88_2_DERIVED, BS88_2_MEMORY];
static BS1362_GROUPS: [FuseGroup; 1] = [BS1362_DERIVED];

fn fuse_groups(standard: FuseStandard) -> &'static [FuseGroup] {
    match standard {
        FuseStandard::Bs3036 => &BS3036_GROUPS,
        FuseStandard::Bs88_3 => &BS88_3_GROUPS,
        FuseStandard::Bs1361 => &BS1361_GROUPS,
        FuseStandard::Bs88_2 => &BS88_2_GROUPS,
        FuseStandard::Bs1362 => &BS1362_GROUPS,
    }
}

/// The ratings of a fuse standard that have a 0.4 s value here, in order.
fn fuse_ratings(standard: FuseStandard) -> Vec<u16> {
    let mut r: Vec<u16> = fuse_groups(standard)
        .iter()
        .flat_map(|g| g.rows.iter().map(|(a, _)| *a))
        .collect();
    r.sort_unstable();
    r
}

/// Why a fuse rating of a held standard has no value here.
fn fuse_gap_reason(standard: FuseStandard, rating_a: u16) -> &'static str {
    match (standard, rating_a) {
        (FuseStandard::Bs88_3, 45 | 63) => {
            "its 0.4 s value is not known here with confidence; a 45 or 63 A fuse usually protects fixed equipment or a distribution circuit, which takes 5 s (Table 41.4, not held either)"
        }
        _ => "no value for this rating is held here, so the check is refused rather than guessed",
    }
}

const BS3871: Source = Source::new(
    "BS 7671 Regulation 411.4.5 applied to BS 3871 circuit-breakers",
    SourceStatus::FromMemory,
    "Zs = Cmin × U0 / Ia = 218.5 V / Ia with Ia = 4, 7, 10 × In for types 1, 2, 3 (from memory), rounded half-up to 2 dp; instantaneous operation, so one value covers 0.4 s and 5 s",
);
const IA_BS3871: Source = Source::new(
    "BS 3871-1 instantaneous tripping (type 1, 2, 3)",
    SourceStatus::FromMemory,
    "Ia = 4 × In (type 1), 7 × In (type 2), 10 × In (type 3)",
);

fn list(ratings: impl Iterator<Item = u16>) -> String {
    ratings
        .map(|r| r.to_string())
        .collect::<Vec<_>>()
        .join(", ")
}

/// The tabulated maximum Zs for a device at the circuit's disconnection time.
pub fn max_zs(device: &Device, time: DisconnectionTime) -> Result<ZsLimit, LimitsError> {
    match *device {
        Device::Breaker {
            curve, rating_a, ..
        } => {
            if !BREAKER_RATINGS.contains(&rating_a) {
                return Err(LimitsError::UnknownRating {
                    device: device.to_string(),
                    table: "BS 7671 Table 41.3",
                    known: format!(
                        "known ratings are {} A for types B, C and D",
                        list(BREAKER_RATINGS.into_iter())
                    ),
                });
            }
            let ia = f64::from(curve.ia_multiple()) * f64::from(rating_a);
            let (zs, source) = match TABLE_41_3_OHMS.iter().find(|(r, _)| *r == rating_a) {
                Some((_, row)) => (row[curve_index(curve)], TABLE_41_3),
                None => (breaker_zs_by_formula(curve, rating_a), TABLE_41_3_FORMULA),
            };
            Ok(ZsLimit {
                device: *device,
                device_text: device.to_string(),
                disconnection: time,
                zs_max_ohm: zs,
                ia_a: ia,
                source,
                ia_source: IA_BREAKER,
            })
        }
        Device::Fuse { standard, rating_a } => {
            if time == DisconnectionTime::S5 {
                return Err(LimitsError::NotTabulated {
                    device: device.to_string(),
                    time: time.as_str(),
                    table: "BS 7671 Table 41.4",
                    why: "the 5 s values for fuses are not held here, so the check is refused rather than guessed".to_string(),
                });
            }
            let found = fuse_groups(standard).iter().find_map(|g| {
                g.rows
                    .iter()
                    .find(|(r, _)| *r == rating_a)
                    .map(|&(_, zs)| (zs, g.source.clone()))
            });
            let Some((zs, source)) = found else {
                let held = fuse_ratings(standard);
                return Err(LimitsError::NotTabulated {
                    device: device.to_string(),
                    time: time.as_str(),
                    table: "BS 7671 Table 41.2",
                    why: format!(
                        "{}; {} ratings with a value here are {} A; fuses with values: {}",
                        fuse_gap_reason(standard, rating_a),
                        standard.name(),
                        list(held.into_iter()),
                        known_fuses()
                    ),
                });
            };
            Ok(ZsLimit {
                device: *device,
                device_text: device.to_string(),
                disconnection: time,
                zs_max_ohm: zs,
                ia_a: CMIN * U0_V / zs,
                source,
                ia_source: IA_FUSE,
            })
        }
        Device::Bs3871 { mcb_type, rating_a } => {
            let ia = u32::from(mcb_type.ia_multiple()) * u32::from(rating_a);
            Ok(ZsLimit {
                device: *device,
                device_text: device.to_string(),
                disconnection: time,
                zs_max_ohm: zs_for_ia(ia),
                ia_a: f64::from(ia),
                source: BS3871,
                ia_source: IA_BS3871,
            })
        }
    }
}

fn known_fuses() -> String {
    FuseStandard::ALL
        .into_iter()
        .map(|s| format!("{} {} A", s.name(), list(fuse_ratings(s).into_iter())))
        .collect::<Vec<_>>()
        .join("; ")
}

/// The Table 41.5 limit for an RCD-protected circuit in a TT system.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct RcdZsLimit {
    pub rcd_ma: u16,
    pub zs_max_ohm: f64,
    pub source: Source,
}

/// Zs ≤ 50 V / IΔn, rounded half-up to whole ohms as Table 41.5 is printed.
pub fn tt_rcd_zs_max(rcd_ma: u16) -> Result<RcdZsLimit, LimitsError> {
    if !RCD_RATINGS_MA.contains(&rcd_ma) {
        return Err(LimitsError::UnknownRcdRating {
            ma: rcd_ma,
            known: list(RCD_RATINGS_MA.into_iter()),
        });
    }
    let ma = u32::from(rcd_ma);
    // 50 V / (mA / 1000) = 50000 / mA Ω; half-up in integers.
    let ohm = (2 * 50_000 + ma) / (2 * ma);
    let source = if [30, 100, 300, 500].contains(&rcd_ma) {
        Source::new(
            "BS 7671:2018+A2:2022 Table 41.5",
            SourceStatus::Published,
            "TT, RCD-protected: Zs ≤ 50 V / IΔn",
        )
    } else {
        Source::new(
            "BS 7671:2018+A2:2022 Table 41.5",
            SourceStatus::Derived,
            "TT, RCD-protected: Zs ≤ 50 V / IΔn, computed for a rating the reference table does not list, rounded half-up to whole ohms",
        )
    };
    Ok(RcdZsLimit {
        rcd_ma,
        zs_max_ohm: f64::from(ohm),
        source,
    })
}

/// What a circuit supplies, as far as the disconnection time cares.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum CircuitUse {
    /// A final circuit with one or more socket-outlets.
    Sockets,
    /// A final circuit supplying only fixed current-using equipment.
    FixedEquipment,
    /// A circuit feeding another board.
    Distribution,
}

/// What is known about a circuit when choosing its disconnection time.
#[derive(Debug, Clone, Copy, Default, PartialEq)]
pub struct CircuitFacts {
    pub circuit_use: Option<CircuitUse>,
    pub rating_a: Option<u16>,
    /// A time recorded on the circuit, in seconds; it wins over any default.
    pub recorded_s: Option<f64>,
    pub earthing: Option<Earthing>,
}

/// The disconnection time chosen for a circuit, and why.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct DisconnectionChoice {
    /// The TN time, which also picks the device's row in Tables 41.2–41.4.
    pub time: DisconnectionTime,
    /// On TT, the time Table 41.1 asks instead: 0.2 s (final) or 1 s (distribution).
    pub tt_time_s: Option<f64>,
    /// True when the time rests on an assumption rather than on recorded facts.
    pub assumed: bool,
    pub reason: String,
    pub source: Source,
}

const REG_411_3_2_2: Source = Source::new(
    "BS 7671:2018+A2:2022 Regulation 411.3.2.2, Table 41.1",
    SourceStatus::Published,
    "TN: 0.4 s for final circuits up to 63 A with sockets and up to 32 A supplying fixed equipment",
);
const TT_TIMES: Source = Source::new(
    "BS 7671:2018+A2:2022 Table 41.1, Regulation 411.3.2.4",
    SourceStatus::Published,
    "TT: 0.2 s for final circuits up to 63 A with sockets and up to 32 A supplying fixed equipment; 1 s for distribution circuits and other final circuits",
);
const REG_411_3_2_3: Source = Source::new(
    "BS 7671:2018+A2:2022 Regulation 411.3.2.3",
    SourceStatus::Published,
    "TN: 5 s for distribution circuits and final circuits not covered by 411.3.2.2",
);

/// Pick the disconnection time from what is known. Where the facts run out, the stricter
/// 0.4 s is taken and the reason says so.
pub fn default_disconnection(facts: &CircuitFacts) -> Result<DisconnectionChoice, LimitsError> {
    use DisconnectionTime::{S0_4, S5};
    let tt = facts.earthing == Some(Earthing::Tt);
    let pick = |time, assumed, reason: String| {
        if tt {
            // The TN words would name 0.4 s or 5 s; TT has its own times.
            let (s, what) = if time == S0_4 {
                (0.2, "a final circuit")
            } else {
                (1.0, "a distribution circuit or a larger final circuit")
            };
            let basis = if assumed {
                "facts missing, the stricter time assumed"
            } else {
                "from what is recorded"
            };
            return DisconnectionChoice {
                time,
                tt_time_s: Some(s),
                assumed,
                reason: format!(
                    "TT: {s} s for {what} (Table 41.1), {basis}; the earth fault path is judged against the RCD (Table 41.5)"
                ),
                source: TT_TIMES,
            };
        }
        DisconnectionChoice {
            time,
            tt_time_s: None,
            assumed,
            reason,
            source: if time == S0_4 {
                REG_411_3_2_2
            } else {
                REG_411_3_2_3
            },
        }
    };
    if let Some(s) = facts.recorded_s {
        let time = DisconnectionTime::from_seconds(s)?;
        return Ok(pick(
            time,
            false,
            format!("{time} as recorded on the circuit"),
        ));
    }
    let r = facts.rating_a;
    Ok(match (facts.circuit_use, r) {
        (Some(CircuitUse::Distribution), _) => {
            pick(S5, false, "5 s for a distribution circuit".to_string())
        }
        (Some(CircuitUse::Sockets), Some(a)) if a <= 63 => pick(
            S0_4,
            false,
            format!("0.4 s for a {a} A final circuit with sockets (up to 63 A)"),
        ),
        (Some(CircuitUse::Sockets), Some(a)) => pick(
            S5,
            false,
            format!("5 s for a {a} A final circuit with sockets (above 63 A)"),
        ),
        (Some(CircuitUse::FixedEquipment), Some(a)) if a <= 32 => pick(
            S0_4,
            false,
            format!("0.4 s for a {a} A final circuit to fixed equipment (up to 32 A)"),
        ),
        (Some(CircuitUse::FixedEquipment), Some(a)) => pick(
            S5,
            false,
            format!("5 s for a {a} A final circuit to fixed equipment (above 32 A)"),
        ),
        (Some(_), None) => pick(
            S0_4,
            true,
            "rating not known: the stricter 0.4 s is assumed".to_string(),
        ),
        (None, Some(a)) if a > 63 => pick(
            S5,
            false,
            format!("5 s: no final circuit above 63 A needs 0.4 s, and this one is {a} A"),
        ),
        (None, Some(a)) => pick(
            S0_4,
            true,
            format!(
                "use not recorded: a {a} A circuit is taken as a final circuit, the stricter 0.4 s"
            ),
        ),
        (None, None) => pick(
            S0_4,
            true,
            "neither use nor rating recorded: the stricter 0.4 s is assumed".to_string(),
        ),
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::limits::round_half_up_2dp;
    use crate::model::BreakerStandard;

    fn breaker(curve: Curve, rating_a: u16) -> Device {
        Device::breaker(BreakerStandard::En60898, curve, rating_a).unwrap()
    }

    // BS 7671:2018+A2:2022 Table 41.3, transcribed here independently of TABLE_41_3_OHMS
    // from /shared/reference/limits.md, one row per curve.
    const PUBLISHED_RATINGS: [u16; 12] = [6, 10, 16, 20, 25, 32, 40, 50, 63, 80, 100, 125];
    const PUBLISHED_B: [f64; 12] = [
        7.28, 4.37, 2.73, 2.19, 1.75, 1.37, 1.09, 0.87, 0.69, 0.55, 0.44, 0.35,
    ];
    const PUBLISHED_C: [f64; 12] = [
        3.64, 2.19, 1.37, 1.09, 0.87, 0.68, 0.55, 0.44, 0.35, 0.27, 0.22, 0.17,
    ];
    const PUBLISHED_D: [f64; 12] = [
        1.82, 1.09, 0.68, 0.55, 0.44, 0.34, 0.27, 0.22, 0.17, 0.14, 0.11, 0.09,
    ];

    #[test]
    fn every_table_41_3_value_matches_the_published_table() {
        // BS 7671:2018+A2:2022 Table 41.3: all 36 values for B, C, D at 6–125 A.
        for (curve, row) in [
            (Curve::B, PUBLISHED_B),
            (Curve::C, PUBLISHED_C),
            (Curve::D, PUBLISHED_D),
        ] {
            for (i, &rating) in PUBLISHED_RATINGS.iter().enumerate() {
                for time in [DisconnectionTime::S0_4, DisconnectionTime::S5] {
                    let lim = max_zs(&breaker(curve, rating), time).unwrap();
                    assert_eq!(lim.zs_max_ohm, row[i], "{curve:?}{rating} at {time}");
                    assert_eq!(lim.source.status, SourceStatus::Published);
                    // Regulation 411.4.5: Ia = 5, 10, 20 × In.
                    assert_eq!(lim.ia_a, f64::from(rating) * f64::from(curve.ia_multiple()));
                }
            }
        }
    }

    #[test]
    fn the_formula_reproduces_table_41_3_after_rounding() {
        // BS 7671:2018+A2:2022 Reg 411.4.5: Zs = 0.95 × 230 / Ia, rounded half-up to 2 dp,
        // agrees with every Table 41.3 value. Worked: B20 218.5 / 100 = 2.185 → 2.19.
        for (curve, row) in [
            (Curve::B, PUBLISHED_B),
            (Curve::C, PUBLISHED_C),
            (Curve::D, PUBLISHED_D),
        ] {
            for (i, &rating) in PUBLISHED_RATINGS.iter().enumerate() {
                assert_eq!(
                    breaker_zs_by_formula(curve, rating),
                    row[i],
                    "{curve:?}{rating}"
                );
                // The float route agrees too once rounded half-up.
                let ia = f64::from(rating) * f64::from(curve.ia_multiple());
                assert_eq!(
                    round_half_up_2dp(CMIN * U0_V / ia),
                    row[i],
                    "{curve:?}{rating}"
                );
            }
        }
    }

    #[test]
    fn three_amp_column_is_derived_from_the_formula() {
        // Derived (Reg 411.4.5): B3 218.5 / 15 = 14.567 → 14.57; C3 / 30 = 7.283 → 7.28;
        // D3 / 60 = 3.642 → 3.64. The reference table has no 3 A column, so status is derived.
        for (curve, want) in [(Curve::B, 14.57), (Curve::C, 7.28), (Curve::D, 3.64)] {
            let lim = max_zs(&breaker(curve, 3), DisconnectionTime::S0_4).unwrap();
            assert_eq!(lim.zs_max_ohm, want);
            assert_eq!(lim.source.status, SourceStatus::Derived);
        }
    }

    #[test]
    fn the_2008_values_without_cmin_are_not_the_ones_held() {
        // BS 7671:2008 Table 41.3 was U0 / Ia (reference sheet: B6 7.67, B32 1.44, C6 3.83,
        // D6 1.92). The 2018 table is lower by Cmin: held / old ≈ 0.95, within the two
        // roundings (B6: 7.28 / 7.67 = 0.9492; B32: 1.37 / 1.44 = 0.9514).
        for (text, old_2008) in [("B6", 7.67), ("B32", 1.44), ("C6", 3.83), ("D6", 1.92)] {
            let d: Device = text.parse().unwrap();
            let held = max_zs(&d, DisconnectionTime::S0_4).unwrap().zs_max_ohm;
            assert!(held < old_2008, "{text}: {held} is the 2008 value");
            assert!(
                (held / old_2008 - CMIN).abs() < 0.005,
                "{text}: {held} / {old_2008}"
            );
        }
    }

    #[test]
    fn rcbo_uses_the_same_column() {
        // Table 41.3 covers BS EN 61009 RCBOs alongside BS EN 60898 breakers.
        let rcbo: Device = "RCBO C20".parse().unwrap();
        assert_eq!(
            max_zs(&rcbo, DisconnectionTime::S0_4).unwrap().zs_max_ohm,
            1.09
        );
    }

    #[test]
    fn fuses_at_0_4_s_hold_the_values_and_their_status() {
        // The reference sheet's Table 41.2 figures, with their status there: BS 3036 and
        // BS 88-2 6–32 A derived; BS 88-3 from memory / derived (provisional).
        let cases: [(&str, f64, SourceStatus); 14] = [
            ("BS 3036 5A", 9.10, SourceStatus::Derived),
            ("BS 3036 15A", 2.42, SourceStatus::Derived),
            ("BS 3036 20A", 1.68, SourceStatus::Derived),
            ("BS 3036 30A", 1.04, SourceStatus::Derived),
            ("BS 88-3 5A", 9.93, SourceStatus::FromMemory),
            ("BS 88-3 16A", 2.30, SourceStatus::FromMemory),
            ("BS 88-3 20A", 1.93, SourceStatus::FromMemory),
            ("BS 88-3 32A", 0.86, SourceStatus::FromMemory),
            ("BS 88-2 6A", 7.80, SourceStatus::Derived),
            ("BS 88-2 10A", 4.65, SourceStatus::Derived),
            ("BS 88-2 16A", 2.43, SourceStatus::Derived),
            ("BS 88-2 20A", 1.68, SourceStatus::Derived),
            ("BS 88-2 25A", 1.28, SourceStatus::Derived),
            ("BS 88-2 32A", 0.99, SourceStatus::Derived),
        ];
        for (text, want, status) in cases {
            let d: Device = text.parse().unwrap();
            let lim = max_zs(&d, DisconnectionTime::S0_4).unwrap();
            assert_eq!(lim.zs_max_ohm, want, "{text}");
            assert_eq!(lim.source.status, status, "{text}");
        }
    }

    #[test]
    fn every_derived_fuse_value_is_its_older_value_times_cmin() {
        // Each fuse value is the value printed before Cmin × 0.95, rounded half-up to 2 dp.
        // Older values, transcribed here apart from the code:
        // - BS 3036, BS 7671:2008 Table 41.2 (reference sheet): 9.58, 2.55, 1.77, 1.09.
        //   9.58 × 0.95 = 9.101 → 9.10; 2.55 → 2.4225 → 2.42; 1.77 → 1.6815 → 1.68;
        //   1.09 → 1.0355 → 1.04.
        // - BS 88-2, BS 7671:2008+A1:2011 Table 41.2, as reprinted in Connections, Winter
        //   2011-12, "Changes to cartridge fuse standards", Table 2: 8.21, 4.89, 2.56, 1.77,
        //   1.35, 1.04. 8.21 → 7.7995 → 7.80; 4.89 → 4.6455 → 4.65; 2.56 → 2.432 → 2.43;
        //   1.77 → 1.68; 1.35 → 1.2825 → 1.28; 1.04 → 0.988 → 0.99.
        // - BS 88-3, 2011 (from memory, reference sheet): 10.45, 2.42, 2.03, 0.91.
        //   10.45 → 9.9275 → 9.93; 2.42 → 2.299 → 2.30; 2.03 → 1.9285 → 1.93;
        //   0.91 → 0.8645 → 0.86 (not 0.91: that was the value before Cmin).
        // - BS 1361, BS 7671:2008 (from memory): 10.45, 3.28, 1.70, 1.15.
        //   10.45 → 9.93; 3.28 → 3.116 → 3.12; 1.70 → 1.615 → 1.62; 1.15 → 1.0925 → 1.09.
        // - BS 1362, BS 7671:2008 (from memory): 16.4, 2.42. 16.4 → 15.58; 2.42 → 2.30.
        let older: [(&str, &[(u16, f64)]); 5] = [
            ("BS 3036", &[(5, 9.58), (15, 2.55), (20, 1.77), (30, 1.09)]),
            (
                "BS 88-2",
                &[
                    (6, 8.21),
                    (10, 4.89),
                    (16, 2.56),
                    (20, 1.77),
                    (25, 1.35),
                    (32, 1.04),
                ],
            ),
            ("BS 88-3", &[(5, 10.45), (16, 2.42), (20, 2.03), (32, 0.91)]),
            ("BS 1361", &[(5, 10.45), (15, 3.28), (20, 1.70), (30, 1.15)]),
            ("BS 1362", &[(3, 16.4), (13, 2.42)]),
        ];
        for (std, rows) in older {
            for &(a, old) in rows {
                let d: Device = format!("{std} {a}A").parse().unwrap();
                let lim = max_zs(&d, DisconnectionTime::S0_4).unwrap();
                assert_eq!(round_half_up_2dp(old * CMIN), lim.zs_max_ohm, "{std} {a}A");
                assert!(lim.source.rule.contains("0.95"), "{std} {a}A");
            }
        }
        // The hand results above, for the values most easily got wrong.
        for (text, want) in [
            ("BS 88-3 32A", 0.86),
            ("BS 1361 20A", 1.62),
            ("BS 1361 15A", 3.12),
            ("BS 1362 3A", 15.58),
        ] {
            let d: Device = text.parse().unwrap();
            let got = max_zs(&d, DisconnectionTime::S0_4).unwrap().zs_max_ohm;
            assert_eq!(got, want, "{text}");
        }
    }

    #[test]
    fn bs_88_3_32a_agrees_with_a_published_measured_value_limit() {
        // Connections, Spring 2015 (technical article on limiting values of measured earth
        // fault loop impedance, before Cmin): a 32 A BS 88-3 fuse at 0.4 s has a measured-value
        // limit of 0.72 Ω, 0.8 × the tabulated value rounded down. So that value was 0.90 or
        // 0.91 (0.8 × 0.90 = 0.720, 0.8 × 0.91 = 0.728, 0.8 × 0.92 = 0.736 → 0.73). Both give
        // 0.86 with Cmin: 0.90 × 0.95 = 0.855 → 0.86, 0.91 × 0.95 = 0.8645 → 0.86.
        let held = max_zs(&"BS 88-3 32A".parse().unwrap(), DisconnectionTime::S0_4)
            .unwrap()
            .zs_max_ohm;
        let candidates: Vec<f64> = (85..=95)
            .map(|c| f64::from(c) / 100.0)
            .filter(|old| crate::limits::round_down_2dp(0.8 * old) == 0.72)
            .collect();
        assert_eq!(candidates, vec![0.90, 0.91]);
        for old in candidates {
            assert_eq!(round_half_up_2dp(old * CMIN), held, "from {old}");
        }
    }

    #[test]
    fn a_fuse_melts_at_the_same_current_in_either_edition() {
        // Ia is the fuse's own: Cmin changed the voltage in Zs × Ia ≤ Cmin U0, not the fuse.
        // So 218.5 / (2018 value) must agree with 230 / (2011 value) within the rounding of
        // two tables (under 1 %). 2011 BS 88-2 values from Connections, Winter 2011-12,
        // Table 2. Worked, 32 A: 218.5 / 0.99 = 220.7 A; 230 / 1.04 = 221.2 A (0.2 % apart).
        for (a, old_2011) in [
            (6, 8.21),
            (10, 4.89),
            (16, 2.56),
            (20, 1.77),
            (25, 1.35),
            (32, 1.04),
        ] {
            let d: Device = format!("BS 88-2 {a}A").parse().unwrap();
            let ia = max_zs(&d, DisconnectionTime::S0_4).unwrap().ia_a;
            let ia_2011 = U0_V / old_2011;
            assert!(
                (ia / ia_2011 - 1.0).abs() < 0.01,
                "{a} A: {ia:.1} A against {ia_2011:.1} A"
            );
        }
        let b = max_zs(&"BS 88-2 32A".parse().unwrap(), DisconnectionTime::S0_4).unwrap();
        assert!((b.ia_a - 220.7).abs() < 0.05, "{}", b.ia_a);
    }

    #[test]
    fn recalled_bs_88_2_values_are_held_and_marked() {
        // From memory (BS 7671:2018 Table 41.2): 2 A 33.1, 4 A 15.6, 40 A 0.75, 50 A 0.57,
        // 63 A 0.42 Ω; marked so, and provisional in words.
        for (a, want) in [(2, 33.1), (4, 15.6), (40, 0.75), (50, 0.57), (63, 0.42)] {
            let d: Device = format!("BS 88-2 {a}A").parse().unwrap();
            let lim = max_zs(&d, DisconnectionTime::S0_4).unwrap();
            assert_eq!(lim.zs_max_ohm, want, "{a} A");
            assert_eq!(lim.source.status, SourceStatus::FromMemory);
            assert!(lim.source.rule.contains("provisional"));
        }
        // Each recalled value keeps the order of the table: a larger fuse never allows more.
        let r = fuse_ratings(FuseStandard::Bs88_2);
        let z: Vec<f64> = r
            .iter()
            .map(|a| {
                let d: Device = format!("BS 88-2 {a}A").parse().unwrap();
                max_zs(&d, DisconnectionTime::S0_4).unwrap().zs_max_ohm
            })
            .collect();
        assert!(z.windows(2).all(|w| w[1] < w[0]), "{r:?} {z:?}");
    }

    #[test]
    fn bs_3871_breakers_follow_the_formula_with_their_multiples() {
        // Zs = 218.5 / (k × In), k = 4, 7, 10 for types 1, 2, 3 (from memory), rounded
        // half-up: type 1 30 A 218.5 / 120 = 1.8208 → 1.82; type 2 30 A / 210 = 1.0405 →
        // 1.04; type 2 15 A / 105 = 2.0810 → 2.08; type 3 30 A / 300 = 0.7283 → 0.73.
        for (text, want, ia) in [
            ("BS 3871 type 1 30A", 1.82, 120.0),
            ("BS 3871 type 2 30A", 1.04, 210.0),
            ("BS 3871 type 2 15A", 2.08, 105.0),
            ("BS 3871 type 3 30A", 0.73, 300.0),
        ] {
            let d: Device = text.parse().unwrap();
            for time in [DisconnectionTime::S0_4, DisconnectionTime::S5] {
                let lim = max_zs(&d, time).unwrap();
                assert_eq!((lim.zs_max_ohm, lim.ia_a), (want, ia), "{text}");
                assert_eq!(lim.source.status, SourceStatus::FromMemory);
            }
        }
        // A type 3 trips at 10 × In like a BS EN 60898 type C, so it must match the published
        // Table 41.3 C column: 6 A 3.64, 16 A 1.37, 32 A 0.68.
        for (a, c) in [(6, 3.64), (16, 1.37), (32, 0.68)] {
            let d: Device = format!("BS 3871 type 3 {a}A").parse().unwrap();
            let lim = max_zs(&d, DisconnectionTime::S0_4).unwrap();
            assert_eq!(lim.zs_max_ohm, c, "type 3 {a} A");
        }
    }

    #[test]
    fn fuse_5_s_values_are_refused_not_invented() {
        // Table 41.4 is not held (reference: "Do not invent them; say not tabulated").
        let d: Device = "BS 88-3 32A".parse().unwrap();
        let err = max_zs(&d, DisconnectionTime::S5).unwrap_err();
        assert!(matches!(err, LimitsError::NotTabulated { .. }));
        let msg = err.to_string();
        assert!(msg.contains("Table 41.4"), "{msg}");
        assert!(msg.contains("refused"), "{msg}");
    }

    #[test]
    fn untabulated_fuses_name_what_is_known() {
        // BS 88-3 45 A and 63 A are accepted as devices but have no 0.4 s value here.
        for a in [45, 63] {
            let d: Device = format!("BS 88-3 {a}A").parse().unwrap();
            let msg = max_zs(&d, DisconnectionTime::S0_4).unwrap_err().to_string();
            assert!(
                msg.contains("BS 88-3 ratings with a value here are 5, 16, 20, 32 A"),
                "{msg}"
            );
            assert!(msg.contains("not known here with confidence"), "{msg}");
            assert!(!msg.ends_with('.'));
        }
        let d: Device = "BS 3036 45A".parse().unwrap();
        let msg = max_zs(&d, DisconnectionTime::S0_4).unwrap_err().to_string();
        assert!(msg.contains("BS 3036 5, 15, 20, 30 A"), "{msg}");
        assert!(msg.contains("BS 1361 5, 15, 20, 30 A"), "{msg}");
        let d: Device = "BS 1362 5A".parse().unwrap();
        assert!(max_zs(&d, DisconnectionTime::S0_4).is_err());
    }

    #[test]
    fn a_breaker_built_outside_the_parser_is_still_checked() {
        let d = Device::Breaker {
            standard: BreakerStandard::En60898,
            curve: Curve::B,
            rating_a: 33,
        };
        let msg = max_zs(&d, DisconnectionTime::S0_4).unwrap_err().to_string();
        assert!(msg.contains("B33") && msg.contains("3, 6, 10"), "{msg}");
    }

    #[test]
    fn table_41_5_is_50_volts_over_the_residual_current() {
        // BS 7671:2018+A2:2022 Table 41.5: 30 mA 1667, 100 mA 500, 300 mA 167, 500 mA 100 Ω.
        for (ma, want) in [(30, 1667.0), (100, 500.0), (300, 167.0), (500, 100.0)] {
            let lim = tt_rcd_zs_max(ma).unwrap();
            assert_eq!(lim.zs_max_ohm, want, "{ma} mA");
            assert_eq!(lim.source.status, SourceStatus::Published);
        }
        // Derived: 50 / 0.01 = 5000 Ω.
        assert_eq!(tt_rcd_zs_max(10).unwrap().zs_max_ohm, 5000.0);
        assert!(
            tt_rcd_zs_max(25)
                .unwrap_err()
                .to_string()
                .contains("10, 30")
        );
    }

    #[test]
    fn disconnection_time_parses_and_refuses() {
        assert_eq!("0.4".parse(), Ok(DisconnectionTime::S0_4));
        assert_eq!("5s".parse(), Ok(DisconnectionTime::S5));
        assert_eq!("0.4 s".parse(), Ok(DisconnectionTime::S0_4));
        assert!("1".parse::<DisconnectionTime>().is_err());
        assert!(DisconnectionTime::from_seconds(0.2).is_err());
    }

    #[test]
    fn default_disconnection_follows_what_is_known() {
        // BS 7671 Reg 411.3.2.2 / 411.3.2.3.
        let f = |circuit_use, rating_a| CircuitFacts {
            circuit_use,
            rating_a,
            ..CircuitFacts::default()
        };
        use CircuitUse::*;
        use DisconnectionTime::*;
        let cases = [
            (f(Some(Sockets), Some(32)), S0_4, false),
            (f(Some(Sockets), Some(63)), S0_4, false),
            (f(Some(Sockets), Some(80)), S5, false),
            (f(Some(FixedEquipment), Some(32)), S0_4, false),
            (f(Some(FixedEquipment), Some(40)), S5, false),
            (f(Some(Distribution), Some(32)), S5, false),
            (f(None, Some(100)), S5, false),
            (f(None, Some(40)), S0_4, true),
            (f(None, None), S0_4, true),
        ];
        for (facts, time, assumed) in cases {
            let c = default_disconnection(&facts).unwrap();
            assert_eq!((c.time, c.assumed), (time, assumed), "{facts:?}");
        }
        let recorded = CircuitFacts {
            recorded_s: Some(5.0),
            circuit_use: Some(Sockets),
            rating_a: Some(32),
            ..CircuitFacts::default()
        };
        assert_eq!(default_disconnection(&recorded).unwrap().time, S5);
        let bad = CircuitFacts {
            recorded_s: Some(1.0),
            ..CircuitFacts::default()
        };
        assert!(default_disconnection(&bad).is_err());
    }

    #[test]
    fn tt_takes_its_own_times_not_the_tn_ones() {
        // BS 7671:2018+A2:2022 Table 41.1: TT final circuit 0.2 s; Reg 411.3.2.4: 1 s for
        // distribution circuits.
        let f = |circuit_use, rating_a| CircuitFacts {
            circuit_use,
            rating_a,
            earthing: Some(Earthing::Tt),
            ..CircuitFacts::default()
        };
        let c = default_disconnection(&f(Some(CircuitUse::Sockets), Some(32))).unwrap();
        assert_eq!(c.tt_time_s, Some(0.2));
        assert!(c.reason.starts_with("TT: 0.2 s"), "{}", c.reason);
        assert!(!c.reason.contains("0.4"), "{}", c.reason);
        assert!(c.source.citation.contains("Table 41.1"));
        let c = default_disconnection(&f(Some(CircuitUse::Distribution), Some(63))).unwrap();
        assert_eq!(c.tt_time_s, Some(1.0));
        assert!(!c.reason.contains("5 s"), "{}", c.reason);
        let tn = default_disconnection(&CircuitFacts {
            earthing: Some(Earthing::TnCS),
            ..f(Some(CircuitUse::Sockets), Some(32))
        })
        .unwrap();
        assert_eq!(tn.tt_time_s, None);
    }

    mod props {
        use super::*;
        use proptest::prelude::*;

        proptest! {
            #[test]
            fn limit_falls_as_rating_rises(i in 0usize..12, j in 0usize..12, c in 0usize..3) {
                // Zs = 218.5 / (k × In): a higher rating never has a higher limit.
                let curve = [Curve::B, Curve::C, Curve::D][c];
                let (lo, hi) = (BREAKER_RATINGS[i.min(j)], BREAKER_RATINGS[i.max(j) + 1]);
                let a = max_zs(&breaker(curve, lo), DisconnectionTime::S0_4).unwrap().zs_max_ohm;
                let b = max_zs(&breaker(curve, hi), DisconnectionTime::S0_4).unwrap().zs_max_ohm;
                prop_assert!(b < a, "{curve:?}{lo} {a} vs {curve:?}{hi} {b}");
            }

            #[test]
            fn steeper_curve_never_allows_more(i in 0usize..13) {
                let r = BREAKER_RATINGS[i];
                let z = |c| max_zs(&breaker(c, r), DisconnectionTime::S0_4).unwrap().zs_max_ohm;
                prop_assert!(z(Curve::B) > z(Curve::C) && z(Curve::C) > z(Curve::D));
            }
        }
    }
}
