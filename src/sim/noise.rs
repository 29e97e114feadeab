//! The noise model: how readings taken on site scatter around the installation's true values.
//!
//! Every figure sits beside its constant with its status: `published` (a standard or handbook
//! says so), `common practice, no source` (how the trade works, written nowhere we can cite),
//! or `from memory` (a value recalled, not checked against a document). The
//! [`NoiseModel::scale`] multiplier scales every spread, bias and offset below (for
//! sensitivity runs at 0.5 and 1.5); it leaves probabilities and resolutions alone.
//!
//! | what | figure | status |
//! |---|---|---|
//! | continuity instrument accuracy | ±2 % + 2 digits, 0.01 Ω resolution | from memory (a typical maker's figure) |
//! | continuity gain bias per instrument | uniform ±1.5 % | from memory |
//! | instruments reading a few per cent high | 15 % of them, +3 to +5 % | common practice, no source |
//! | continuity scatter per reading (probe contact) | σ = 0.5 % + 0.005 Ω | from memory |
//! | loop tester accuracy | ±5 %, 0.01 Ω resolution | from memory |
//! | loop tester gain bias per instrument | uniform ±3 % | from memory |
//! | loop scatter per reading | σ = 1.5 % + 0.01 Ω | from memory |
//! | loop resolution at high values | 0.1 Ω from 20 Ω, 1 Ω from 200 Ω | from memory |
//! | operating uncertainty BS EN 61557 allows | ±30 % | from memory (BS EN 61557-3/-4) |
//! | conductor temperature off the recorded ambient | σ = 2.5 °C | common practice, no source |
//! | indoor ambient over the year | 15 + 5 cos(season) °C, σ = 2 °C | from memory |
//! | visits with no ambient recorded | 12 % | common practice, no source |
//! | Ze visit to visit (network load, test method) | log-normal, σ = 0.08 (±16 % at 2σ) | from memory |
//! | Ze again at the moment of each Zs test | log-normal, σ = 0.03 | from memory |
//! | TT electrode resistance | log-uniform 20–140 Ω | from memory |
//! | TT seasonal swing | × exp(0.3 cos(2π (day − 200) / 365)): summer/winter ≈ 1.8 | from memory |
//! | TT year-to-year wetness | log-normal, σ = 0.1 | from memory |
//! | TT visits recording Ra, the electrode measured on its own | 70 % | common practice, no source |
//! | Ra measurement scatter (test spikes, method) | log-normal, σ = 0.05, loop resolution | from memory |
//! | main bonding csa recorded | 10 mm² on TN-C-S; 10 or 6 mm² (a third) on TN-S and TT; at 85 % of visits | common practice, no source |
//! | healthy IR, per circuit | log-uniform 100–3,000 MΩ | from memory |
//! | healthy IR wander visit to visit (humidity, what is left connected) | log-normal, σ = ln 2.2 | from memory |
//! | healthy IR with equipment left connected | 4 % of readings, log-uniform 4–60 MΩ | common practice, no source |
//! | healthy IR never below | 4 MΩ | the model's own floor |
//! | IR instrument top (over range) | 200, 299, 500 or 999 MΩ | from memory |
//! | IR instrument error | uniform ±3 % | from memory |
//! | RCD 1 × IΔn, healthy | uniform 16–38 ms per device | from memory |
//! | RCD 5 × IΔn, healthy | uniform 8–20 ms per device | from memory |
//! | RCD scatter visit to visit (point on wave) | log-normal, σ = 0.09 (±18 % at 2σ) | from memory |
//! | visits that record a 5 × IΔn time | 40 % | common practice, no source |
//! | visits with the test leads not nulled | 8 %, every continuity reading +0.05–0.2 Ω | common practice, no source |

use rand::Rng;
use rand_chacha::ChaCha8Rng;
use rand_distr::{Distribution, Normal};

/// Continuity resolution, Ω: from memory (a typical continuity range).
pub const CONTINUITY_RESOLUTION_OHM: f64 = 0.01;
/// Continuity gain bias of an ordinary instrument, ± fraction: from memory (inside ±2 %).
pub const CONTINUITY_GAIN: f64 = 0.015;
/// Share of instruments reading a few per cent high: common practice, no source.
pub const HIGH_READING_INSTRUMENTS: f64 = 0.15;
/// How high those read, fraction: common practice, no source.
pub const HIGH_READING_GAIN: (f64, f64) = (0.03, 0.05);
/// Continuity scatter per reading, relative and absolute (Ω): from memory.
pub const CONTINUITY_SCATTER: (f64, f64) = (0.005, 0.005);
/// Loop tester gain bias, ± fraction: from memory (inside ±5 %).
pub const LOOP_GAIN: f64 = 0.03;
/// Loop scatter per reading, relative and absolute (Ω): from memory.
pub const LOOP_SCATTER: (f64, f64) = (0.015, 0.01);
/// Conductor temperature off the recorded ambient, σ °C: common practice, no source.
pub const CONDUCTOR_TEMP_SIGMA_C: f64 = 2.5;
/// Indoor ambient: mean, seasonal amplitude, σ (°C): from memory.
pub const AMBIENT: (f64, f64, f64) = (15.0, 5.0, 2.0);
/// Share of visits with no ambient recorded: common practice, no source.
pub const NO_AMBIENT: f64 = 0.12;
/// Ze visit to visit, log-normal σ: from memory (±10–20 % with network load and test method).
pub const ZE_SIGMA: f64 = 0.08;
/// Ze again at each Zs test within the visit, log-normal σ: from memory.
pub const ZE_WITHIN_VISIT_SIGMA: f64 = 0.03;
/// TT electrode resistance, log-uniform Ω: from memory.
pub const TT_ELECTRODE_OHM: (f64, f64) = (20.0, 140.0);
/// TT seasonal amplitude on a log scale (summer/winter = e^0.6 ≈ 1.8): from memory.
pub const TT_SEASON_LOG: f64 = 0.3;
/// TT year-to-year wetness, log-normal σ: from memory.
pub const TT_YEAR_SIGMA: f64 = 0.1;
/// Share of TT visits that record Ra, the electrode's resistance measured on its own: common
/// practice, no source (many inspectors record only the Ze that includes it).
pub const RA_RECORDED: f64 = 0.7;
/// Ra measurement scatter (where the test spikes go, the method), log-normal σ: from memory.
pub const RA_SIGMA: f64 = 0.05;
/// Share of visits recording the main bonding's csa: common practice, no source.
pub const BONDING_RECORDED: f64 = 0.85;
/// The supply's own part of a TT Ze, Ω: from memory.
pub const TT_SUPPLY_OHM: f64 = 0.3;
/// Healthy insulation resistance per circuit, log-uniform MΩ: from memory.
pub const IR_BASE_MOHM: (f64, f64) = (100.0, 3000.0);
/// Healthy IR wander visit to visit, log-normal σ (a factor of 2.2 at 1σ): from memory.
pub const IR_WANDER_SIGMA: f64 = 0.788_457_360_364_270_3; // ln 2.2
/// Share of healthy IR readings taken with equipment left connected: common practice, no source.
pub const IR_EQUIPMENT: f64 = 0.04;
/// Those readings, log-uniform MΩ: common practice, no source.
pub const IR_EQUIPMENT_MOHM: (f64, f64) = (4.0, 60.0);
/// A healthy circuit's insulation never reads below this, MΩ: the model's own floor.
pub const HEALTHY_IR_FLOOR_MOHM: f64 = 4.0;
/// IR instrument error, ± fraction: from memory.
pub const IR_ERROR: f64 = 0.03;
/// Instrument tops on the insulation range, MΩ: from memory.
pub const IR_TOPS_MOHM: [f64; 4] = [200.0, 299.0, 500.0, 999.0];
/// RCD 1 × IΔn healthy trip time, uniform ms per device: from memory.
pub const RCD_1X_MS: (f64, f64) = (16.0, 38.0);
/// RCD 5 × IΔn healthy trip time, uniform ms per device: from memory.
pub const RCD_5X_MS: (f64, f64) = (8.0, 20.0);
/// RCD scatter visit to visit, log-normal σ (point on wave): from memory.
pub const RCD_SIGMA: f64 = 0.09;
/// Share of visits recording a 5 × IΔn time: common practice, no source.
pub const FIVE_X_RECORDED: f64 = 0.4;
/// Share of visits with the test leads not nulled: common practice, no source.
pub const LEADS_NOT_NULLED: f64 = 0.08;
/// The lead offset then added to every continuity reading, Ω: common practice, no source.
pub const LEAD_OFFSET_OHM: (f64, f64) = (0.05, 0.2);

/// The noise model at one scale.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct NoiseModel {
    /// Multiplies every spread, bias and offset (1.0 = the figures above).
    pub scale: f64,
}

/// One test instrument of the simulated contractor's pool.
#[derive(Debug, Clone, PartialEq)]
pub struct Instrument {
    pub serial: String,
    /// Continuity reads `true × (1 + gain)`.
    pub continuity_gain: f64,
    /// Loop impedance reads `true × (1 + gain)`.
    pub loop_gain: f64,
    /// The insulation range's top, MΩ: above it the reading is over range.
    pub ir_top_mohm: f64,
}

/// A reading of insulation resistance as the instrument shows it.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum IrReading {
    Value(f64),
    /// Over range: `>top`.
    OverRange(f64),
}

impl IrReading {
    /// The value, or the lower bound of an over-range reading.
    pub fn value(self) -> f64 {
        match self {
            IrReading::Value(v) | IrReading::OverRange(v) => v,
        }
    }
}

/// A standard normal draw.
pub fn gauss(rng: &mut ChaCha8Rng) -> f64 {
    // Normal::new fails only on a non-finite or negative σ.
    Normal::new(0.0, 1.0).map_or(0.0, |n| n.sample(rng))
}

/// Log-uniform between `lo` and `hi`.
pub fn log_uniform(rng: &mut ChaCha8Rng, (lo, hi): (f64, f64)) -> f64 {
    (rng.random_range(lo.ln()..=hi.ln())).exp()
}

/// The seasonal phase of a day of the year: 1 at the height of summer (day 200), −1 in winter.
pub fn season(day_of_year: u32) -> f64 {
    (2.0 * std::f64::consts::PI * (f64::from(day_of_year) - 200.0) / 365.0).cos()
}

/// Round to a resolution.
pub fn quantise(v: f64, step: f64) -> f64 {
    ((v / step).round() * step).max(0.0)
}

/// The loop tester's display resolution at a value: from memory.
pub fn loop_resolution(v: f64) -> f64 {
    if v >= 200.0 {
        1.0
    } else if v >= 20.0 {
        0.1
    } else {
        0.01
    }
}

/// The insulation range's display resolution: from memory.
pub fn ir_resolution(v: f64) -> f64 {
    if v >= 100.0 {
        1.0
    } else if v >= 10.0 {
        0.1
    } else {
        0.01
    }
}

impl NoiseModel {
    pub fn new(scale: f64) -> NoiseModel {
        NoiseModel { scale }
    }

    /// An instrument of the pool.
    pub fn instrument(&self, rng: &mut ChaCha8Rng, serial: String) -> Instrument {
        let s = self.scale;
        let continuity_gain = if rng.random_bool(HIGH_READING_INSTRUMENTS) {
            rng.random_range(HIGH_READING_GAIN.0..=HIGH_READING_GAIN.1) * s
        } else {
            rng.random_range(-CONTINUITY_GAIN..=CONTINUITY_GAIN) * s
        };
        let loop_gain = rng.random_range(-LOOP_GAIN..=LOOP_GAIN) * s;
        let ir_top_mohm = IR_TOPS_MOHM[rng.random_range(0..IR_TOPS_MOHM.len())];
        Instrument {
            serial,
            continuity_gain,
            loop_gain,
            ir_top_mohm,
        }
    }

    /// A continuity reading of `true_ohm` (at the conductor's temperature), with the visit's
    /// lead offset, to the instrument's resolution.
    pub fn continuity(
        &self,
        rng: &mut ChaCha8Rng,
        inst: &Instrument,
        true_ohm: f64,
        lead_offset: f64,
    ) -> f64 {
        let sigma = (CONTINUITY_SCATTER.0 * true_ohm + CONTINUITY_SCATTER.1) * self.scale;
        let v = true_ohm * (1.0 + inst.continuity_gain) + sigma * gauss(rng) + lead_offset;
        quantise(v, CONTINUITY_RESOLUTION_OHM)
    }

    /// A loop impedance reading (Ze or Zs) of `true_ohm`, to the tester's resolution.
    pub fn loop_reading(&self, rng: &mut ChaCha8Rng, inst: &Instrument, true_ohm: f64) -> f64 {
        let sigma = (LOOP_SCATTER.0 * true_ohm + LOOP_SCATTER.1) * self.scale;
        let v = true_ohm * (1.0 + inst.loop_gain) + sigma * gauss(rng);
        quantise(v, loop_resolution(v))
    }

    /// Ra of an electrode of `true_ohm`, measured on its own, to the loop resolution.
    pub fn ra_reading(&self, rng: &mut ChaCha8Rng, true_ohm: f64) -> f64 {
        let v = true_ohm * self.log_factor(rng, RA_SIGMA);
        quantise(v, loop_resolution(v))
    }

    /// A log-normal factor with σ scaled by the model.
    pub fn log_factor(&self, rng: &mut ChaCha8Rng, sigma: f64) -> f64 {
        (sigma * self.scale * gauss(rng)).exp()
    }

    /// The conductor's temperature at a visit, from the room's.
    pub fn conductor_temp(&self, rng: &mut ChaCha8Rng, ambient_c: f64) -> f64 {
        ambient_c + CONDUCTOR_TEMP_SIGMA_C * self.scale * gauss(rng)
    }

    /// A healthy circuit's true insulation resistance at one visit.
    pub fn healthy_ir(&self, rng: &mut ChaCha8Rng, base_mohm: f64) -> f64 {
        let wander = base_mohm * self.log_factor(rng, IR_WANDER_SIGMA);
        let v = if rng.random_bool(IR_EQUIPMENT) {
            wander.min(log_uniform(rng, IR_EQUIPMENT_MOHM))
        } else {
            wander
        };
        v.max(HEALTHY_IR_FLOOR_MOHM)
    }

    /// The instrument's insulation reading of a true value.
    pub fn ir_reading(&self, rng: &mut ChaCha8Rng, inst: &Instrument, true_mohm: f64) -> IrReading {
        let v = true_mohm * (1.0 + rng.random_range(-IR_ERROR..=IR_ERROR) * self.scale);
        if v >= inst.ir_top_mohm {
            IrReading::OverRange(inst.ir_top_mohm)
        } else {
            IrReading::Value(quantise(v, ir_resolution(v)))
        }
    }

    /// An RCD trip time at one visit, to 1 ms.
    pub fn rcd_ms(&self, rng: &mut ChaCha8Rng, true_ms: f64) -> f64 {
        quantise(true_ms * self.log_factor(rng, RCD_SIGMA), 1.0).max(1.0)
    }

    /// TT: the electrode's seasonal and yearly factor at a visit.
    pub fn tt_weather(&self, rng: &mut ChaCha8Rng, day_of_year: u32) -> f64 {
        (TT_SEASON_LOG * self.scale * season(day_of_year)).exp()
            * self.log_factor(rng, TT_YEAR_SIGMA)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use rand::SeedableRng;

    #[test]
    fn readings_sit_on_the_instrument_resolution() {
        let m = NoiseModel::new(1.0);
        let mut rng = ChaCha8Rng::seed_from_u64(3);
        let inst = m.instrument(&mut rng, "X".into());
        for _ in 0..200 {
            let v = m.continuity(&mut rng, &inst, 0.437, 0.0);
            assert!(((v * 100.0).round() - v * 100.0).abs() < 1e-6, "{v}");
            let z = m.loop_reading(&mut rng, &inst, 85.3);
            assert!(((z * 10.0).round() - z * 10.0).abs() < 1e-6, "{z}");
        }
    }

    #[test]
    fn healthy_insulation_keeps_above_the_floor_and_wanders() {
        let m = NoiseModel::new(1.5);
        let mut rng = ChaCha8Rng::seed_from_u64(4);
        let v: Vec<f64> = (0..5000).map(|_| m.healthy_ir(&mut rng, 100.0)).collect();
        assert!(v.iter().all(|&x| x >= HEALTHY_IR_FLOOR_MOHM));
        let (lo, hi) = v
            .iter()
            .fold((f64::MAX, 0.0f64), |(l, h), &x| (l.min(x), h.max(x)));
        // A factor of several between readings of the same healthy circuit.
        assert!(hi / lo > 10.0, "{lo} {hi}");
    }

    #[test]
    fn over_range_at_the_instrument_top() {
        let m = NoiseModel::new(1.0);
        let mut rng = ChaCha8Rng::seed_from_u64(5);
        let mut inst = m.instrument(&mut rng, "X".into());
        inst.ir_top_mohm = 299.0;
        assert_eq!(
            m.ir_reading(&mut rng, &inst, 2000.0),
            IrReading::OverRange(299.0)
        );
        assert!(matches!(
            m.ir_reading(&mut rng, &inst, 50.0),
            IrReading::Value(v) if (48.0..=52.0).contains(&v)
        ));
    }
}
