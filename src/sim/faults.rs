//! Planted faults: what deteriorates, where, from which visit, and by how much by the last.
//!
//! Each fault is planted at a size a contractor would want to know about by the last visit.
//! The sizes are our own choice for the simulation (invented data), set to the ranges the
//! calibration targets talk about.

use chrono::NaiveDate;
use rand::Rng;
use rand_chacha::ChaCha8Rng;
use serde::Serialize;

use super::noise::log_uniform;

/// The kinds of fault the simulator plants.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum FaultKind {
    /// A loose cpc termination: R1+R2, R2 and Zs up by 0.1–0.5 Ω from one visit on.
    LooseCpc,
    /// A termination that worsens visit by visit: R1+R2 (and R2 or R1+Rn) climbing to
    /// 0.25–0.8 Ω more by the last visit.
    WorseningTermination,
    /// The neutral path: R1+Rn up 0.1–0.5 Ω while R1+R2 stays.
    NeutralPath,
    /// A high-resistance or nearly open joint in one leg of a ring: that leg's end-to-end
    /// reading up 0.3–1.5 Ω and the ring relations broken.
    RingLeg,
    /// Insulation L–E falling on a log scale to 0.35–2.75 MΩ at the last visit.
    InsulationFalling,
    /// An RCD slowing: its 1 × IΔn time climbing to 150–400 ms at the last visit.
    RcdSlowing,
    /// TN-C-S: Ze rising with the PEN conductor's deterioration, to 0.4–0.85 Ω.
    PenDeterioration,
    /// TT: the electrode's resistance rising well beyond seasonal swing, to 300–600 Ω.
    TtElectrode,
}

impl FaultKind {
    pub const ALL: [FaultKind; 8] = [
        FaultKind::LooseCpc,
        FaultKind::WorseningTermination,
        FaultKind::NeutralPath,
        FaultKind::RingLeg,
        FaultKind::InsulationFalling,
        FaultKind::RcdSlowing,
        FaultKind::PenDeterioration,
        FaultKind::TtElectrode,
    ];

    pub fn key(self) -> &'static str {
        match self {
            FaultKind::LooseCpc => "loose_cpc",
            FaultKind::WorseningTermination => "worsening_termination",
            FaultKind::NeutralPath => "neutral_path",
            FaultKind::RingLeg => "ring_leg",
            FaultKind::InsulationFalling => "insulation_falling",
            FaultKind::RcdSlowing => "rcd_slowing",
            FaultKind::PenDeterioration => "pen_deterioration",
            FaultKind::TtElectrode => "tt_electrode",
        }
    }

    /// The worklist quantities a correct flag for this fault may be on.
    pub fn quantities(self) -> &'static [&'static str] {
        match self {
            FaultKind::LooseCpc => &["r1r2", "zs", "r2"],
            FaultKind::WorseningTermination => &["r1r2", "zs", "r2", "r1rn"],
            FaultKind::NeutralPath => &["r1rn"],
            FaultKind::RingLeg => &["ring"],
            FaultKind::InsulationFalling => &["ir_le", "ir_ll"],
            FaultKind::RcdSlowing => &["rcd"],
            FaultKind::PenDeterioration => &["ze"],
            // The electrode shows in the TT Ze and, where recorded, in Ra.
            FaultKind::TtElectrode => &["ze", "ra"],
        }
    }

    /// A supply fault belongs to the home's origin, not to a circuit.
    pub fn is_supply(self) -> bool {
        matches!(self, FaultKind::PenDeterioration | FaultKind::TtElectrode)
    }
}

/// The conductor a termination fault sits in.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Conductor {
    Line,
    Neutral,
    Cpc,
}

/// A leg of a ring final circuit.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum RingLegName {
    R1,
    Rn,
    R2,
}

/// What a fault does at its full size (the last visit).
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
#[serde(tag = "shape", rename_all = "snake_case")]
pub enum FaultSize {
    /// Resistance added in a conductor from the first visit on, Ω (at full size throughout).
    Step { conductor: Conductor, ohm: f64 },
    /// Resistance added in a conductor growing visit by visit to `ohm` at the last.
    Growing { conductor: Conductor, ohm: f64 },
    /// A joint of `ohm` in one leg of a ring, from the first visit on.
    RingJoint { leg: RingLegName, ohm: f64 },
    /// Insulation falling on a log scale to `last_mohm` (true value) at the last visit.
    Insulation { last_mohm: f64, line_line_too: bool },
    /// An RCD's 1 × IΔn time climbing on a log scale to `last_ms` (true value).
    Rcd { last_ms: f64 },
    /// Ze (PEN: the whole Ze; TT: the electrode before the weather) climbing to `last_ohm`.
    Ze { last_ohm: f64 },
}

/// One planted fault, with when it first appears.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct PlantedFault {
    pub id: usize,
    pub property_ref: String,
    pub board: String,
    /// The circuits it is on: one, every circuit an RCD protects, or none for a supply fault.
    pub circuits: Vec<String>,
    pub kind: FaultKind,
    pub size: FaultSize,
    /// Index of the first visit at which it is present.
    pub first_visit: usize,
    pub first_date: NaiveDate,
    /// Present at each visit of the home, in date order.
    pub present: Vec<bool>,
    /// The worklist quantities a correct flag may be on.
    pub quantities: Vec<&'static str>,
}

impl PlantedFault {
    /// How much of its full size the fault has at a visit: 0 before it appears; steps are
    /// whole from the first visit, growing faults reach 1 at the last.
    pub fn progress(&self, visit: usize) -> f64 {
        if visit < self.first_visit {
            return 0.0;
        }
        match self.size {
            FaultSize::Step { .. } | FaultSize::RingJoint { .. } => 1.0,
            _ => {
                let n = self.present.len();
                (visit - self.first_visit + 1) as f64 / (n - self.first_visit) as f64
            }
        }
    }

    /// The last visit is the first at which it is present.
    pub fn new_at_last_visit(&self) -> bool {
        self.first_visit + 1 == self.present.len()
    }

    /// One line for a dump: kind, where, size, since when.
    pub fn describe(&self) -> String {
        let place = if self.circuits.is_empty() {
            format!("{} {} origin", self.property_ref, self.board)
        } else {
            format!(
                "{} {}/{}",
                self.property_ref,
                self.board,
                self.circuits.join(",")
            )
        };
        let size = match self.size {
            FaultSize::Step { conductor, ohm } => format!("+{ohm:.2} Ω in the {conductor:?}"),
            FaultSize::Growing { conductor, ohm } => {
                format!("growing to +{ohm:.2} Ω in the {conductor:?}")
            }
            FaultSize::RingJoint { leg, ohm } => format!("{ohm:.2} Ω joint in leg {leg:?}"),
            FaultSize::Insulation { last_mohm, .. } => format!("IR falling to {last_mohm:.2} MΩ"),
            FaultSize::Rcd { last_ms } => format!("1 × IΔn slowing to {last_ms:.0} ms"),
            FaultSize::Ze { last_ohm } => format!("Ze rising to {last_ohm:.2} Ω"),
        };
        format!(
            "{} at {place}: {size}, from {} (visit {} of {})",
            self.kind.key(),
            self.first_date,
            self.first_visit + 1,
            self.present.len()
        )
    }
}

/// Share of circuits given a circuit fault (RCDs apart): our own choice.
pub const CIRCUIT_FAULT_RATE: f64 = 0.055;
/// Share of RCD devices that slow down: our own choice.
pub const RCD_FAULT_RATE: f64 = 0.03;
/// Share of TN-C-S homes whose PEN deteriorates: our own choice.
pub const PEN_FAULT_RATE: f64 = 0.04;
/// Share of TT homes whose electrode's resistance rises: our own choice.
pub const ELECTRODE_FAULT_RATE: f64 = 0.2;
/// Share of faults (other than growing terminations) that first appear at the last visit, so
/// the brief's backtest has enough of them: our own choice.
pub const NEW_AT_LAST: f64 = 0.35;

/// Which visit a fault first appears at, of `n` (at least 3).
pub fn first_visit(rng: &mut ChaCha8Rng, kind: FaultKind, n: usize) -> usize {
    if kind != FaultKind::WorseningTermination && rng.random_bool(NEW_AT_LAST) {
        n - 1
    } else {
        rng.random_range(1..=n - 2)
    }
}

/// The circuit fault kinds, with their shares among circuit faults: our own choice.
const CIRCUIT_KINDS: [(FaultKind, f64); 5] = [
    (FaultKind::LooseCpc, 0.25),
    (FaultKind::WorseningTermination, 0.17),
    (FaultKind::NeutralPath, 0.15),
    (FaultKind::RingLeg, 0.13),
    (FaultKind::InsulationFalling, 0.30),
];

/// A circuit fault kind; a ring fault on a radial becomes a loose cpc.
pub fn circuit_kind(rng: &mut ChaCha8Rng, ring: bool) -> FaultKind {
    let mut u: f64 = rng.random();
    for (k, share) in CIRCUIT_KINDS {
        if u < share {
            return if k == FaultKind::RingLeg && !ring {
                FaultKind::LooseCpc
            } else {
                k
            };
        }
        u -= share;
    }
    FaultKind::InsulationFalling
}

/// The full size of a fault of this kind. `ze_base` is the supply's healthy Ze (PEN).
pub fn size(rng: &mut ChaCha8Rng, kind: FaultKind, ze_base: f64) -> FaultSize {
    match kind {
        FaultKind::LooseCpc => FaultSize::Step {
            conductor: Conductor::Cpc,
            ohm: rng.random_range(0.1..=0.5),
        },
        FaultKind::WorseningTermination => FaultSize::Growing {
            conductor: if rng.random_bool(0.5) {
                Conductor::Line
            } else {
                Conductor::Cpc
            },
            ohm: rng.random_range(0.25..=0.8),
        },
        FaultKind::NeutralPath => FaultSize::Step {
            conductor: Conductor::Neutral,
            ohm: rng.random_range(0.1..=0.5),
        },
        FaultKind::RingLeg => FaultSize::RingJoint {
            leg: match rng.random_range(0..3) {
                0 => RingLegName::R1,
                1 => RingLegName::Rn,
                _ => RingLegName::R2,
            },
            ohm: rng.random_range(0.3..=1.5),
        },
        FaultKind::InsulationFalling => FaultSize::Insulation {
            last_mohm: log_uniform(rng, (0.35, 2.75)),
            line_line_too: rng.random_bool(0.3),
        },
        FaultKind::RcdSlowing => FaultSize::Rcd {
            last_ms: rng.random_range(150.0..=400.0),
        },
        FaultKind::PenDeterioration => {
            let lo = (ze_base + 0.2).max(0.4);
            FaultSize::Ze {
                last_ohm: rng.random_range(lo..=0.85_f64.max(lo + 0.05)),
            }
        }
        FaultKind::TtElectrode => FaultSize::Ze {
            last_ohm: rng.random_range(300.0..=600.0),
        },
    }
}

/// Interpolate on a log scale from a healthy value to the fault's last value.
pub fn log_towards(healthy: f64, last: f64, progress: f64) -> f64 {
    (healthy.ln() + (last.ln() - healthy.ln()) * progress).exp()
}
