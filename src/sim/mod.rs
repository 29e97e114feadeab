//! A realistic-noise portfolio simulator with ground truth, to judge the worklist's rules and
//! the visit brief's band against.
//!
//! [`generate`] is pure and seeded: the same [`SimConfig`] gives byte-identical rows and truth
//! (ChaCha8 from the seed, one stream per home, so home *k* is the same whatever the number of
//! homes). It invents a portfolio of homes (references `SIM-00001` on, invented addresses in an
//! invented town) as rows of the visit file (README, "The visit file"), with readings carrying
//! the site noise of [`noise`] and the faults of [`faults`], and a [`Truth`] that says, for
//! every circuit and visit, which planted fault is present and on which quantities a correct
//! flag may be. [`score`] judges a worklist against the truth; [`backtest`] holds out each
//! home's last visit and judges the brief's band; [`run`] ties them to the import and the
//! worklist through a temporary database.
//!
//! Confounders that are not faults: test leads not nulled at a visit (every continuity reading
//! of that visit up by the same 0.05–0.2 Ω, Zs from the loop tester not), instruments reading a
//! few per cent high, visits with no ambient, and spurs on rings (R1+R2 and R1+Rn taken at the
//! spur's end, above (r1 + r2) / 4).
//!
//! Invented data, for simulations only: no real place, person or firm.

pub mod backtest;
pub mod faults;
pub mod home;
pub mod noise;
pub mod run;
pub mod score;

use std::io::Write;

use chrono::{Datelike, NaiveDate};
use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;
use serde::Serialize;

use crate::limits::{copper_mohm_per_m, temperature_factor};
use faults::{FaultKind, FaultSize, PlantedFault};
use home::{BoardStyle, Earthing, HomePlan};
use noise::{Instrument, IrReading, NoiseModel};

pub use backtest::{Backtest, backtest};
pub use score::{FlagKey, RowClass, Scorecard, Scored, score};

/// The visit file's header, in the order the simulator writes it.
pub const HEADER: [&str; 31] = [
    "property_ref",
    "address",
    "board",
    "earthing",
    "circuit",
    "description",
    "ring",
    "device",
    "rcd_ma",
    "live_mm2",
    "cpc_mm2",
    "length_m",
    "visit_date",
    "inspector",
    "instrument",
    "ambient_c",
    "ze_ohm",
    "ra_ohm",
    "bonding_csa_mm2",
    "ring_r1_ohm",
    "ring_rn_ohm",
    "ring_r2_ohm",
    "r1r2_ohm",
    "r2_ohm",
    "r1rn_ohm",
    "zs_ohm",
    "ir_ll_mohm",
    "ir_le_mohm",
    "rcd_ms",
    "rcd_5x_ms",
    "note",
];

/// Xored into the seed for the supply record's own stream.
const SUPPLY_STREAM: u64 = 0x5241_424f_4e44;

/// Every home's single board.
pub const BOARD: &str = "DB1";
/// Instruments in the simulated contractor's pool.
pub const INSTRUMENTS: usize = 30;
/// Inspectors in the simulated contractor's team.
pub const INSPECTORS: usize = 12;
/// Share of circuit visits at which Zs was measured (otherwise left empty): common practice,
/// no source.
pub const ZS_MEASURED: f64 = 0.92;
/// A loose termination's resistance moves with disturbance, log-normal σ: from memory.
pub const LOOSE_JITTER_SIGMA: f64 = 0.1;
/// How a slowing RCD's 5 × IΔn time follows its 1 × time: (t1 / t1 healthy)^0.6. Our own choice.
pub const FIVE_X_FOLLOWS: f64 = 0.6;

/// The date the calibration analyses on: after every simulated visit, so none is overdue by the
/// date alone and the result does not depend on the day it is run.
pub fn as_of() -> NaiveDate {
    NaiveDate::from_ymd_opt(2026, 1, 1).unwrap_or(NaiveDate::MIN)
}

/// What to simulate.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct SimConfig {
    pub homes: usize,
    pub seed: u64,
    /// Multiplies all the noise (1.0 = the model's figures; 0 = none).
    pub noise: f64,
}

impl SimConfig {
    pub fn new(homes: usize, seed: u64, noise: f64) -> SimConfig {
        SimConfig { homes, seed, noise }
    }
}

/// One row of the visit file: one circuit at one visit.
#[derive(Debug, Clone, PartialEq)]
pub struct SimRow {
    /// Index of the home in [`Truth::homes`] and of the visit in its visits.
    pub home: usize,
    pub visit: usize,
    pub circuit_index: usize,
    pub property_ref: String,
    pub address: String,
    pub earthing: Earthing,
    pub circuit: String,
    pub description: &'static str,
    pub ring: bool,
    pub device: String,
    pub rcd_ma: Option<u16>,
    pub live_mm2: f64,
    pub cpc_mm2: f64,
    pub length_m: f64,
    pub visit_date: NaiveDate,
    pub inspector: String,
    pub instrument: String,
    pub ambient_c: Option<f64>,
    pub ze_ohm: f64,
    /// TT: the electrode's resistance measured on its own, where the visit recorded it.
    pub ra_ohm: Option<f64>,
    /// The main bonding conductors' csa, where the visit recorded it.
    pub bonding_csa_mm2: Option<f64>,
    pub ring_r1_ohm: Option<f64>,
    pub ring_rn_ohm: Option<f64>,
    pub ring_r2_ohm: Option<f64>,
    pub r1r2_ohm: f64,
    pub r2_ohm: Option<f64>,
    pub r1rn_ohm: Option<f64>,
    pub zs_ohm: Option<f64>,
    pub ir_ll: IrReading,
    pub ir_le: IrReading,
    pub rcd_ms: Option<f64>,
    pub rcd_5x_ms: Option<f64>,
}

fn fmt_ohm(v: f64) -> String {
    match noise::loop_resolution(v) {
        r if r >= 1.0 => format!("{v:.0}"),
        r if r >= 0.1 => format!("{v:.1}"),
        _ => format!("{v:.2}"),
    }
}

fn fmt_ir(r: IrReading) -> String {
    match r {
        IrReading::OverRange(top) => format!(">{top:.0}"),
        IrReading::Value(v) => match noise::ir_resolution(v) {
            s if s >= 1.0 => format!("{v:.0}"),
            s if s >= 0.1 => format!("{v:.1}"),
            _ => format!("{v:.2}"),
        },
    }
}

fn opt(v: Option<f64>, f: fn(f64) -> String) -> String {
    v.map(f).unwrap_or_default()
}

impl SimRow {
    /// The row's cells, in [`HEADER`] order.
    pub fn cells(&self) -> [String; 31] {
        let ms = |v: f64| format!("{v:.0}");
        [
            self.property_ref.clone(),
            self.address.clone(),
            BOARD.to_string(),
            self.earthing.as_str().to_string(),
            self.circuit.clone(),
            self.description.to_string(),
            if self.ring { "yes" } else { "no" }.to_string(),
            self.device.clone(),
            self.rcd_ma.map(|m| m.to_string()).unwrap_or_default(),
            self.live_mm2.to_string(),
            self.cpc_mm2.to_string(),
            format!("{:.0}", self.length_m),
            self.visit_date.to_string(),
            self.inspector.clone(),
            self.instrument.clone(),
            opt(self.ambient_c, |v| format!("{v:.0}")),
            fmt_ohm(self.ze_ohm),
            opt(self.ra_ohm, fmt_ohm),
            opt(self.bonding_csa_mm2, |v| format!("{v}")),
            opt(self.ring_r1_ohm, fmt_ohm),
            opt(self.ring_rn_ohm, fmt_ohm),
            opt(self.ring_r2_ohm, fmt_ohm),
            fmt_ohm(self.r1r2_ohm),
            opt(self.r2_ohm, fmt_ohm),
            opt(self.r1rn_ohm, fmt_ohm),
            opt(self.zs_ohm, fmt_ohm),
            fmt_ir(self.ir_ll),
            fmt_ir(self.ir_le),
            self.rcd_ms.map(ms).unwrap_or_default(),
            self.rcd_5x_ms.map(ms).unwrap_or_default(),
            String::new(),
        ]
    }
}

/// One visit as it really was (the truth behind the row's `ambient_c` and readings).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct VisitTruth {
    pub date: NaiveDate,
    pub instrument: String,
    pub ambient_recorded: Option<f64>,
    pub conductor_c: f64,
    /// Leads not nulled: what every continuity reading of the visit carries, Ω (0 if nulled).
    pub lead_offset_ohm: f64,
}

/// One circuit as it really is.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct CircuitTruth {
    pub number: String,
    pub description: &'static str,
    pub ring: bool,
    /// A ring whose R1+R2 and R1+Rn are taken at a spur's end (not a fault).
    pub spur: bool,
    /// Index of the RCD protecting it in the home's RCDs.
    pub rcd: Option<usize>,
    /// Ids of the planted faults on it (an RCD fault is on every circuit it protects).
    pub faults: Vec<usize>,
}

/// One home as it really is.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct HomeTruth {
    pub property_ref: String,
    pub board: &'static str,
    pub earthing: Earthing,
    pub style: BoardStyle,
    pub visits: Vec<VisitTruth>,
    pub circuits: Vec<CircuitTruth>,
    /// RCD devices, each with the circuits (indices) it protects.
    pub rcds: Vec<Vec<usize>>,
    /// Id of the supply fault, if any.
    pub supply_fault: Option<usize>,
}

/// The ground truth of a simulated portfolio.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Truth {
    pub homes: Vec<HomeTruth>,
    /// Every planted fault; its `id` is its index here.
    pub faults: Vec<PlantedFault>,
}

impl Truth {
    /// The planted faults present on a circuit at a visit.
    pub fn faults_at(&self, home: usize, circuit: usize, visit: usize) -> Vec<&PlantedFault> {
        self.homes[home].circuits[circuit]
            .faults
            .iter()
            .map(|&id| &self.faults[id])
            .filter(|f| f.present[visit])
            .collect()
    }

    /// The home's supply fault, if any.
    pub fn supply_fault(&self, home: usize) -> Option<&PlantedFault> {
        self.homes[home].supply_fault.map(|id| &self.faults[id])
    }

    /// Circuits in the portfolio.
    pub fn circuits(&self) -> usize {
        self.homes.iter().map(|h| h.circuits.len()).sum()
    }
}

/// A simulated portfolio: the rows of its visit file and the truth behind them.
#[derive(Debug, Clone, PartialEq)]
pub struct Portfolio {
    pub config: SimConfig,
    pub rows: Vec<SimRow>,
    pub truth: Truth,
}

impl Portfolio {
    /// Write the rows `keep` selects as a visit file.
    pub fn write_csv_where<W: Write>(
        &self,
        w: W,
        keep: impl Fn(&SimRow) -> bool,
    ) -> csv::Result<()> {
        let mut out = csv::Writer::from_writer(w);
        out.write_record(HEADER)?;
        for r in self.rows.iter().filter(|r| keep(r)) {
            out.write_record(r.cells())?;
        }
        out.flush()?;
        Ok(())
    }

    /// Write every row as a visit file.
    pub fn write_csv<W: Write>(&self, w: W) -> csv::Result<()> {
        self.write_csv_where(w, |_| true)
    }

    /// Whether a row is its home's last visit.
    pub fn is_last_visit(&self, r: &SimRow) -> bool {
        r.visit + 1 == self.truth.homes[r.home].visits.len()
    }
}

/// Generate the portfolio a configuration describes.
pub fn generate(cfg: &SimConfig) -> Portfolio {
    generate_with(cfg, Leads::AsDrawn)
}

/// Whether the leads' offsets drawn for a visit reach the readings. Tests compare a portfolio
/// with its twin whose leads were always nulled: every other draw is the same.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Leads {
    AsDrawn,
    #[cfg_attr(not(test), allow(dead_code))]
    AlwaysNulled,
}

fn generate_with(cfg: &SimConfig, leads: Leads) -> Portfolio {
    let noise = NoiseModel::new(cfg.noise.max(0.0));
    let mut pool_rng = ChaCha8Rng::seed_from_u64(cfg.seed);
    let instruments: Vec<Instrument> = (0..INSTRUMENTS)
        .map(|i| noise.instrument(&mut pool_rng, format!("SIM-MFT-{:03}", i + 1)))
        .collect();
    let mut rows = Vec::new();
    let mut homes = Vec::with_capacity(cfg.homes);
    let mut all_faults: Vec<PlantedFault> = Vec::new();
    for index in 0..cfg.homes {
        let mut rng = ChaCha8Rng::seed_from_u64(cfg.seed);
        rng.set_stream(index as u64 + 1);
        // The supply record (Ra, bonding) draws from a stream of its own, so adding it left
        // every other reading of the portfolio as it was.
        let mut supply_rng = ChaCha8Rng::seed_from_u64(cfg.seed ^ SUPPLY_STREAM);
        supply_rng.set_stream(index as u64 + 1);
        let mut plan = home::plan_home(&mut rng, index, &noise, INSTRUMENTS, INSPECTORS);
        let mut faults = plant(&mut rng, &mut plan);
        let first_id = all_faults.len();
        for (i, f) in faults.iter_mut().enumerate() {
            f.id = first_id + i;
        }
        let truth = home_truth(&plan, &faults, &instruments);
        if leads == Leads::AlwaysNulled {
            for v in &mut plan.visits {
                v.lead_offset_ohm = 0.0;
            }
        }
        home_rows(
            &mut rng,
            &mut supply_rng,
            &noise,
            index,
            &plan,
            &faults,
            &instruments,
            &mut rows,
        );
        homes.push(truth);
        all_faults.extend(faults);
    }
    Portfolio {
        config: *cfg,
        rows,
        truth: Truth {
            homes,
            faults: all_faults,
        },
    }
}

/// Plant faults in a home (ids are local, renumbered by the caller).
fn plant(rng: &mut ChaCha8Rng, plan: &mut HomePlan) -> Vec<PlantedFault> {
    let n = plan.visits.len();
    let dates: Vec<NaiveDate> = plan.visits.iter().map(|v| v.date).collect();
    let mut out = Vec::new();
    let mut new_fault = |rng: &mut ChaCha8Rng, kind: FaultKind, size, circuits: Vec<String>| {
        let first = faults::first_visit(rng, kind, n);
        out.push(PlantedFault {
            id: 0,
            property_ref: plan.reference.clone(),
            board: BOARD.to_string(),
            circuits,
            kind,
            size,
            first_visit: first,
            first_date: dates[first],
            present: (0..n).map(|v| v >= first).collect(),
            quantities: kind.quantities().to_vec(),
        });
    };
    for rcd in &plan.rcds {
        if rng.random_bool(faults::RCD_FAULT_RATE) {
            let size = faults::size(rng, FaultKind::RcdSlowing, 0.0);
            let members = rcd
                .circuits
                .iter()
                .map(|&c| plan.circuits[c].number.clone())
                .collect();
            new_fault(rng, FaultKind::RcdSlowing, size, members);
        }
    }
    for c in &mut plan.circuits {
        if rng.random_bool(faults::CIRCUIT_FAULT_RATE) {
            let kind = faults::circuit_kind(rng, c.spec.ring);
            if kind == FaultKind::NeutralPath {
                c.records_r1rn = true;
            }
            let size = faults::size(rng, kind, 0.0);
            new_fault(rng, kind, size, vec![c.number.clone()]);
        }
    }
    let supply = match plan.earthing {
        Earthing::TnCS if rng.random_bool(faults::PEN_FAULT_RATE) => {
            Some(FaultKind::PenDeterioration)
        }
        Earthing::Tt if rng.random_bool(faults::ELECTRODE_FAULT_RATE) => {
            // An electrode that deteriorates starts at tens of ohms, well below where it ends.
            plan.ze_base_ohm = noise::log_uniform(rng, (20.0, 100.0));
            Some(FaultKind::TtElectrode)
        }
        _ => None,
    };
    if let Some(kind) = supply {
        let size = faults::size(rng, kind, plan.ze_base_ohm);
        new_fault(rng, kind, size, Vec::new());
    }
    out
}

fn home_truth(plan: &HomePlan, faults: &[PlantedFault], instruments: &[Instrument]) -> HomeTruth {
    HomeTruth {
        property_ref: plan.reference.clone(),
        board: BOARD,
        earthing: plan.earthing,
        style: plan.style,
        visits: plan
            .visits
            .iter()
            .map(|v| VisitTruth {
                date: v.date,
                instrument: instruments[v.instrument].serial.clone(),
                ambient_recorded: v.ambient_recorded,
                conductor_c: v.conductor_c,
                lead_offset_ohm: v.lead_offset_ohm,
            })
            .collect(),
        circuits: plan
            .circuits
            .iter()
            .map(|c| CircuitTruth {
                number: c.number.clone(),
                description: c.spec.description,
                ring: c.spec.ring,
                spur: c.spur_m.is_some(),
                rcd: c.rcd,
                faults: faults
                    .iter()
                    .filter(|f| f.circuits.contains(&c.number))
                    .map(|f| f.id)
                    .collect(),
            })
            .collect(),
        rcds: plan.rcds.iter().map(|r| r.circuits.clone()).collect(),
        supply_fault: faults.iter().find(|f| f.kind.is_supply()).map(|f| f.id),
    }
}

/// Ω per metre at 20 °C of a tabulated copper size (IEC 60228, the limits module's table).
fn ohm_per_m(csa: f64) -> f64 {
    copper_mohm_per_m(csa).map_or(0.0, |p| p.mohm_per_m) / 1000.0
}

/// A ring conductor of end-to-end resistance `r` with a joint of `d` in one half, measured
/// from both ends joined to its midpoint: the two halves in parallel.
fn ring_half(r: f64, d: f64) -> f64 {
    (0.5 * r + d) * (0.5 * r) / (r + d)
}

/// What the planted faults do to one circuit at one visit.
#[derive(Debug, Default, Clone, Copy)]
struct Effect {
    line: f64,
    neutral: f64,
    cpc: f64,
    /// Joints in the ring legs r1, rn, r2.
    joints: [f64; 3],
    /// Insulation falling: (last value, progress, L–L too).
    insulation: Option<(f64, f64, bool)>,
}

fn effect(
    rng: &mut ChaCha8Rng,
    noise: &NoiseModel,
    faults: &[&PlantedFault],
    visit: usize,
) -> Effect {
    let mut e = Effect::default();
    for f in faults {
        let p = f.progress(visit);
        if p <= 0.0 {
            continue;
        }
        match f.size {
            FaultSize::Step { conductor, ohm } | FaultSize::Growing { conductor, ohm } => {
                let jitter = if matches!(f.size, FaultSize::Step { .. }) {
                    noise.log_factor(rng, LOOSE_JITTER_SIGMA)
                } else {
                    1.0
                };
                let add = ohm * p * jitter;
                match conductor {
                    faults::Conductor::Line => e.line += add,
                    faults::Conductor::Neutral => e.neutral += add,
                    faults::Conductor::Cpc => e.cpc += add,
                }
            }
            FaultSize::RingJoint { leg, ohm } => {
                e.joints[leg as usize] += ohm;
            }
            FaultSize::Insulation {
                last_mohm,
                line_line_too,
            } => e.insulation = Some((last_mohm, p, line_line_too)),
            FaultSize::Rcd { .. } | FaultSize::Ze { .. } => {}
        }
    }
    e
}

/// Every row of one home, visit by visit.
#[allow(clippy::too_many_arguments)]
fn home_rows(
    rng: &mut ChaCha8Rng,
    supply_rng: &mut ChaCha8Rng,
    noise: &NoiseModel,
    index: usize,
    plan: &HomePlan,
    faults: &[PlantedFault],
    instruments: &[Instrument],
    rows: &mut Vec<SimRow>,
) {
    let supply_fault = faults.iter().find(|f| f.kind.is_supply());
    let rcd_fault = |r: usize| {
        faults.iter().find(|f| {
            f.kind == FaultKind::RcdSlowing
                && plan.rcds[r]
                    .circuits
                    .first()
                    .is_some_and(|&c| f.circuits.contains(&plan.circuits[c].number))
        })
    };
    // The main bonding as fitted: 10 mm² on PME (BS 7671 Table 54.8 for a supply neutral up
    // to 35 mm², from memory); 10 or 6 mm² elsewhere (Regulation 544.1.1, from memory).
    let bonding_mm2 = match plan.earthing {
        Earthing::TnCS => 10.0,
        _ if supply_rng.random_bool(1.0 / 3.0) => 6.0,
        _ => 10.0,
    };
    for (v, visit) in plan.visits.iter().enumerate() {
        let inst = &instruments[visit.instrument];
        let mut electrode_now = None;
        // Ze at this visit: the network's swing, or the electrode and the weather on TT.
        let ze_true = match plan.earthing {
            Earthing::Tt => {
                let electrode = match supply_fault.map(|f| (f, f.progress(v))) {
                    Some((f, p)) if p > 0.0 => match f.size {
                        FaultSize::Ze { last_ohm } => {
                            faults::log_towards(plan.ze_base_ohm, last_ohm, p)
                        }
                        _ => plan.ze_base_ohm,
                    },
                    _ => plan.ze_base_ohm,
                };
                let now = electrode * noise.tt_weather(rng, visit.date.ordinal());
                electrode_now = Some(now);
                now + noise::TT_SUPPLY_OHM
            }
            _ => {
                let swing = plan.ze_base_ohm * noise.log_factor(rng, noise::ZE_SIGMA);
                match supply_fault.map(|f| (f, f.progress(v))) {
                    Some((f, p)) if p > 0.0 => match f.size {
                        FaultSize::Ze { last_ohm } => faults::log_towards(swing, last_ohm, p),
                        _ => swing,
                    },
                    _ => swing,
                }
            }
        };
        let ze_reading = noise.loop_reading(rng, inst, ze_true);
        // Ra, measured on its own on the same day: the same electrode in the same weather.
        let ra_ohm = electrode_now
            .filter(|_| supply_rng.random_bool(noise::RA_RECORDED))
            .map(|e| noise.ra_reading(supply_rng, e));
        let bonding_csa_mm2 = supply_rng
            .random_bool(noise::BONDING_RECORDED)
            .then_some(bonding_mm2);
        // Each RCD is tested once; its times go on every circuit it protects.
        let rcd_times: Vec<(f64, Option<f64>)> = plan
            .rcds
            .iter()
            .enumerate()
            .map(|(r, d)| {
                let t1 = match rcd_fault(r).map(|f| (f, f.progress(v))) {
                    Some((f, p)) if p > 0.0 => match f.size {
                        FaultSize::Rcd { last_ms } => faults::log_towards(d.base_1x_ms, last_ms, p),
                        _ => d.base_1x_ms,
                    },
                    _ => d.base_1x_ms,
                };
                let t5 = d.base_5x_ms * (t1 / d.base_1x_ms).powf(FIVE_X_FOLLOWS);
                let r1 = noise.rcd_ms(rng, t1);
                let r5 = noise.rcd_ms(rng, t5);
                (r1, visit.five_x_recorded.then_some(r5))
            })
            .collect();
        let heat = temperature_factor(visit.conductor_c).unwrap_or(1.0);
        for (ci, c) in plan.circuits.iter().enumerate() {
            let on_circuit: Vec<&PlantedFault> = faults
                .iter()
                .filter(|f| !f.kind.is_supply() && f.circuits.contains(&c.number))
                .collect();
            let e = effect(rng, noise, &on_circuit, v);
            let rl = ohm_per_m(c.spec.live_mm2) * c.length_m * heat;
            let rc = ohm_per_m(c.spec.cpc_mm2) * c.length_m * heat;
            let lead = visit.lead_offset_ohm;
            let mut read = |true_ohm: f64| noise.continuity(rng, inst, true_ohm, lead);
            let (ring_legs, r1_far, rn_far, r2_far) = if c.spec.ring {
                let legs = [rl + e.joints[0], rl + e.joints[1], rc + e.joints[2]];
                let spur = c.spur_m.unwrap_or(0.0) * heat;
                (
                    Some(legs),
                    ring_half(rl, e.joints[0]) + spur * ohm_per_m(c.spec.live_mm2),
                    ring_half(rl, e.joints[1]) + spur * ohm_per_m(c.spec.live_mm2),
                    ring_half(rc, e.joints[2]) + spur * ohm_per_m(c.spec.cpc_mm2),
                )
            } else {
                (None, rl, rl, rc)
            };
            let r1r2_true = r1_far + r2_far + e.line + e.cpc;
            let r1rn_true = r1_far + rn_far + e.line + e.neutral;
            let r2_true = r2_far + e.cpc;
            let legs = ring_legs.map(|l| l.map(&mut read));
            let r1r2 = read(r1r2_true);
            let r1rn = read(r1rn_true);
            let r2 = read(r2_true);
            let ze_at_test = ze_true * noise.log_factor(rng, noise::ZE_WITHIN_VISIT_SIGMA);
            let zs = noise.loop_reading(rng, inst, ze_at_test + r1r2_true);
            let zs_measured = rng.random_bool(ZS_MEASURED);
            let mut ir_le = noise.healthy_ir(rng, c.ir_le_mohm);
            let mut ir_ll = noise.healthy_ir(rng, c.ir_ll_mohm);
            if let Some((last, p, ll_too)) = e.insulation {
                ir_le = faults::log_towards(ir_le, last, p);
                if ll_too {
                    ir_ll = faults::log_towards(ir_ll, last, p);
                }
            }
            let ir_le = noise.ir_reading(rng, inst, ir_le);
            let ir_ll = noise.ir_reading(rng, inst, ir_ll);
            let (rcd_ms, rcd_5x_ms) = c.rcd.map_or((None, None), |r| {
                let (t1, t5) = rcd_times[r];
                (Some(t1), t5)
            });
            let breaker = format!("B{}", c.spec.rating_a);
            rows.push(SimRow {
                home: index,
                visit: v,
                circuit_index: ci,
                property_ref: plan.reference.clone(),
                address: plan.address.clone(),
                earthing: plan.earthing,
                circuit: c.number.clone(),
                description: c.spec.description,
                ring: c.spec.ring,
                device: if plan.style == BoardStyle::Rcbos {
                    format!("RCBO {breaker}")
                } else {
                    breaker
                },
                rcd_ma: c.rcd.map(|_| 30),
                live_mm2: c.spec.live_mm2,
                cpc_mm2: c.spec.cpc_mm2,
                length_m: c.length_m,
                visit_date: visit.date,
                inspector: format!("Inspector S{:02}", visit.inspector + 1),
                instrument: inst.serial.clone(),
                ambient_c: visit.ambient_recorded,
                ze_ohm: ze_reading,
                ra_ohm,
                bonding_csa_mm2,
                ring_r1_ohm: legs.map(|l| l[0]),
                ring_rn_ohm: legs.map(|l| l[1]),
                ring_r2_ohm: legs.map(|l| l[2]),
                r1r2_ohm: r1r2,
                r2_ohm: c.records_r2.then_some(r2),
                r1rn_ohm: c.records_r1rn.then_some(r1rn),
                zs_ohm: zs_measured.then_some(zs),
                ir_ll,
                ir_le,
                rcd_ms,
                rcd_5x_ms,
            });
        }
    }
}

#[cfg(test)]
mod tests;
