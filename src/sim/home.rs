//! An invented home: its board, circuits, RCDs and visit dates.

use chrono::{Datelike, Days, NaiveDate};
use rand::Rng;
use rand::seq::SliceRandom;
use rand_chacha::ChaCha8Rng;
use serde::Serialize;

use super::noise::{self, log_uniform};

/// A kind of final circuit: description, ring, breaker rating (type B), live and cpc csa
/// (mm²), cable length range (m; for a ring, the whole loop).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct CircuitSpec {
    pub description: &'static str,
    pub ring: bool,
    pub rating_a: u16,
    pub live_mm2: f64,
    pub cpc_mm2: f64,
    pub length_m: (f64, f64),
    /// Sockets: on the RCD side of an older board that only protects sockets.
    pub sockets: bool,
}

const fn spec(
    description: &'static str,
    ring: bool,
    rating_a: u16,
    live_mm2: f64,
    cpc_mm2: f64,
    length_m: (f64, f64),
    sockets: bool,
) -> CircuitSpec {
    CircuitSpec {
        description,
        ring,
        rating_a,
        live_mm2,
        cpc_mm2,
        length_m,
        sockets,
    }
}

/// The usual circuits of a small home, most common first (common practice, no source): ring
/// finals on B32 in 2.5/1.5 mm², lighting on B6 in 1.5/1.0 mm², a cooker on B32 in 6/2.5 mm²,
/// a shower on B40 in 10/4 mm², radials. Lengths are kept so that every healthy circuit's Zs
/// stays well inside its measured-value limit on the largest healthy Ze the model gives.
const CORE: [CircuitSpec; 4] = [
    spec(
        "Sockets ground floor",
        true,
        32,
        2.5,
        1.5,
        (30.0, 70.0),
        true,
    ),
    spec(
        "Lights ground floor",
        false,
        6,
        1.5,
        1.0,
        (10.0, 40.0),
        false,
    ),
    spec(
        "Sockets first floor",
        true,
        32,
        2.5,
        1.5,
        (30.0, 70.0),
        true,
    ),
    spec(
        "Lights first floor",
        false,
        6,
        1.5,
        1.0,
        (10.0, 40.0),
        false,
    ),
];
const EXTRA: [CircuitSpec; 10] = [
    spec("Cooker", false, 32, 6.0, 2.5, (5.0, 18.0), false),
    spec("Smoke alarms", false, 6, 1.5, 1.0, (10.0, 30.0), false),
    spec("Kitchen sockets", true, 32, 2.5, 1.5, (25.0, 55.0), true),
    spec("Immersion heater", false, 16, 2.5, 1.5, (5.0, 20.0), false),
    spec("Shower", false, 40, 10.0, 4.0, (3.0, 12.0), false),
    spec("Boiler spur", false, 16, 2.5, 1.5, (5.0, 15.0), false),
    spec("Outside lights", false, 6, 1.5, 1.0, (5.0, 25.0), false),
    spec("Garage sockets", false, 20, 2.5, 1.5, (10.0, 30.0), true),
    spec("Loft lights", false, 6, 1.5, 1.0, (8.0, 25.0), false),
    spec("Loft sockets", false, 20, 2.5, 1.5, (10.0, 25.0), true),
];

/// Earthing of the supply.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
pub enum Earthing {
    #[serde(rename = "TN-C-S")]
    TnCS,
    #[serde(rename = "TN-S")]
    TnS,
    #[serde(rename = "TT")]
    Tt,
}

impl Earthing {
    pub fn as_str(self) -> &'static str {
        match self {
            Earthing::TnCS => "TN-C-S",
            Earthing::TnS => "TN-S",
            Earthing::Tt => "TT",
        }
    }
}

/// Shares of earthing arrangements (common practice, no source): most homes TN-C-S, some
/// TN-S, about 9 % TT.
pub const TT_SHARE: f64 = 0.09;
pub const TN_S_SHARE: f64 = 0.25;
/// Healthy Ze, uniform Ω: TN-C-S and TN-S (from memory; inside the typical declared 0.35 and
/// 0.80 Ω with room for the visit-to-visit swing).
pub const ZE_TN_C_S: (f64, f64) = (0.1, 0.28);
pub const ZE_TN_S: (f64, f64) = (0.2, 0.45);

/// How the board gives RCD protection.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum BoardStyle {
    /// An RCBO on every circuit.
    Rcbos,
    /// Two RCDs each protecting half the circuits.
    SplitLoad,
    /// An older board: one RCD on the socket circuits only.
    SocketsOnly,
}

/// One RCD device and the circuits it protects (indices into the home's circuits).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Rcd {
    pub circuits: Vec<usize>,
    /// Healthy trip times, ms.
    pub base_1x_ms: f64,
    pub base_5x_ms: f64,
}

/// One circuit as installed.
#[derive(Debug, Clone, PartialEq)]
pub struct CircuitPlan {
    pub number: String,
    pub spec: CircuitSpec,
    pub length_m: f64,
    /// A ring with a spur: R1+R2 is taken at the spur's end; its length, m.
    pub spur_m: Option<f64>,
    pub rcd: Option<usize>,
    /// Healthy insulation resistance L–E and L–L, MΩ.
    pub ir_le_mohm: f64,
    pub ir_ll_mohm: f64,
    /// R2 recorded (wander lead) at every visit.
    pub records_r2: bool,
    /// R1+Rn recorded at every visit.
    pub records_r1rn: bool,
}

/// One visit's conditions.
#[derive(Debug, Clone, PartialEq)]
pub struct VisitPlan {
    pub date: NaiveDate,
    pub inspector: usize,
    pub instrument: usize,
    /// The room's temperature, °C.
    pub ambient_c: f64,
    /// What the inspector wrote: whole degrees, or nothing.
    pub ambient_recorded: Option<f64>,
    /// The conductors' temperature, °C.
    pub conductor_c: f64,
    /// Test leads not nulled: added to every continuity reading, Ω.
    pub lead_offset_ohm: f64,
    pub five_x_recorded: bool,
}

/// A home before any fault is planted.
#[derive(Debug, Clone, PartialEq)]
pub struct HomePlan {
    pub reference: String,
    pub address: String,
    pub earthing: Earthing,
    /// TN: the supply's Ze; TT: the electrode's resistance (before the weather), Ω.
    pub ze_base_ohm: f64,
    pub style: BoardStyle,
    pub circuits: Vec<CircuitPlan>,
    pub rcds: Vec<Rcd>,
    pub visits: Vec<VisitPlan>,
}

/// Invented streets in an invented town.
const STREETS: [&str; 6] = [
    "Example Road",
    "Sample Street",
    "Placeholder Lane",
    "Fictive Close",
    "Invented Way",
    "Specimen Avenue",
];
pub const TOWN: &str = "Simtown";

/// The last date a visit may fall on, and the first.
pub fn first_possible() -> NaiveDate {
    NaiveDate::from_ymd_opt(2005, 1, 1).unwrap_or(NaiveDate::MIN)
}
pub fn last_possible() -> NaiveDate {
    NaiveDate::from_ymd_opt(2025, 11, 30).unwrap_or(NaiveDate::MIN)
}

/// Visit dates: 3–6 visits, five-yearly periodic or a change of tenancy 1–4 years on, the
/// last between 2021 and late 2025 (so nothing is overdue at the end of 2025), none before 2005.
fn visit_dates(rng: &mut ChaCha8Rng) -> Vec<NaiveDate> {
    let n = rng.random_range(3..=6);
    let last = last_possible() - Days::new(rng.random_range(0..=4 * 365));
    let mut gaps: Vec<f64> = (1..n)
        .map(|_| {
            if rng.random_bool(0.5) {
                // Periodic, five-yearly, give or take a few months.
                5.0 * 365.25 + rng.random_range(-90.0..=60.0)
            } else {
                // A change of tenancy.
                rng.random_range(365.0..=4.0 * 365.0)
            }
        })
        .collect();
    let room = (last - first_possible()).num_days() as f64;
    let span: f64 = gaps.iter().sum();
    if span > room {
        for g in &mut gaps {
            *g *= room / span;
        }
    }
    let mut dates = vec![last];
    for g in gaps {
        let prev = *dates.last().unwrap_or(&last);
        dates.push(prev - Days::new(g.max(180.0) as u64));
    }
    dates.reverse();
    // Gaps kept to at least half a year may push the first a little before 2005: shift all.
    if let Some(&first) = dates.first()
        && first < first_possible()
    {
        let by = (first_possible() - first).num_days() as u64;
        for d in &mut dates {
            *d = *d + Days::new(by);
        }
    }
    dates
}

/// Lay out one invented home (no faults yet). `pool` is the number of instruments and
/// `inspectors` the number of inspectors to choose from.
pub fn plan_home(
    rng: &mut ChaCha8Rng,
    index: usize,
    noise: &noise::NoiseModel,
    pool: usize,
    inspectors: usize,
) -> HomePlan {
    let u: f64 = rng.random();
    let earthing = if u < TT_SHARE {
        Earthing::Tt
    } else if u < TT_SHARE + TN_S_SHARE {
        Earthing::TnS
    } else {
        Earthing::TnCS
    };
    let ze_base_ohm = match earthing {
        Earthing::TnCS => rng.random_range(ZE_TN_C_S.0..=ZE_TN_C_S.1),
        Earthing::TnS => rng.random_range(ZE_TN_S.0..=ZE_TN_S.1),
        Earthing::Tt => log_uniform(rng, noise::TT_ELECTRODE_OHM),
    };
    let style = match (earthing, rng.random_range(0..100)) {
        (_, 0..35) => BoardStyle::Rcbos,
        (Earthing::Tt, _) | (_, 35..80) => BoardStyle::SplitLoad,
        _ => BoardStyle::SocketsOnly,
    };

    let n = rng.random_range(6..=14);
    let mut extra = EXTRA.to_vec();
    // Keep the usual order roughly, but let homes differ.
    extra[..6].shuffle(rng);
    let specs: Vec<CircuitSpec> = CORE.iter().chain(extra.iter()).copied().take(n).collect();
    let mut circuits: Vec<CircuitPlan> = specs
        .into_iter()
        .enumerate()
        .map(|(i, spec)| {
            let length_m = rng.random_range(spec.length_m.0..=spec.length_m.1).round();
            let spur_m = (spec.ring && rng.random_bool(0.3)).then(|| rng.random_range(2.0..=8.0));
            CircuitPlan {
                number: (i + 1).to_string(),
                spec,
                length_m,
                spur_m,
                rcd: None,
                ir_le_mohm: log_uniform(rng, noise::IR_BASE_MOHM),
                ir_ll_mohm: log_uniform(rng, noise::IR_BASE_MOHM),
                records_r2: !spec.ring && rng.random_bool(0.15),
                records_r1rn: spec.ring || rng.random_bool(0.6),
            }
        })
        .collect();

    let mut rcds = Vec::new();
    let mut new_rcd = |rng: &mut ChaCha8Rng, members: Vec<usize>| {
        rcds.push(Rcd {
            circuits: members,
            base_1x_ms: rng.random_range(noise::RCD_1X_MS.0..=noise::RCD_1X_MS.1),
            base_5x_ms: rng.random_range(noise::RCD_5X_MS.0..=noise::RCD_5X_MS.1),
        });
    };
    match style {
        BoardStyle::Rcbos => {
            for i in 0..circuits.len() {
                new_rcd(rng, vec![i]);
            }
        }
        BoardStyle::SplitLoad => {
            // Alternate circuits between the two RCDs so each floor keeps some light.
            new_rcd(rng, (0..circuits.len()).step_by(2).collect());
            new_rcd(rng, (1..circuits.len()).step_by(2).collect());
        }
        BoardStyle::SocketsOnly => {
            let sockets: Vec<usize> = (0..circuits.len())
                .filter(|&i| circuits[i].spec.sockets)
                .collect();
            new_rcd(rng, sockets);
        }
    }
    for (r, rcd) in rcds.iter().enumerate() {
        for &c in &rcd.circuits {
            circuits[c].rcd = Some(r);
        }
    }

    let visits = visit_dates(rng)
        .into_iter()
        .map(|date| {
            let day = date.ordinal();
            let ambient_c = noise::AMBIENT.0
                + noise::AMBIENT.1 * noise::season(day)
                + noise::AMBIENT.2 * noise::gauss(rng);
            let ambient_recorded = (!rng.random_bool(noise::NO_AMBIENT)).then(|| ambient_c.round());
            let conductor_c = noise.conductor_temp(rng, ambient_c);
            let lead_offset_ohm = if rng.random_bool(noise::LEADS_NOT_NULLED) {
                rng.random_range(noise::LEAD_OFFSET_OHM.0..=noise::LEAD_OFFSET_OHM.1) * noise.scale
            } else {
                0.0
            };
            VisitPlan {
                date,
                inspector: rng.random_range(0..inspectors),
                instrument: rng.random_range(0..pool),
                ambient_c,
                ambient_recorded,
                conductor_c,
                lead_offset_ohm,
                five_x_recorded: rng.random_bool(noise::FIVE_X_RECORDED),
            }
        })
        .collect();

    let street = STREETS[index % STREETS.len()];
    HomePlan {
        reference: format!("SIM-{:05}", index + 1),
        address: format!("{} {street}, {TOWN}", index / STREETS.len() + 1),
        earthing,
        ze_base_ohm,
        style,
        circuits,
        rcds,
        visits,
    }
}
