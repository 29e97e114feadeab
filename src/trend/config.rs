//! How big a change has to be before it counts, and how the projection's range is drawn.

use serde::Serialize;

use super::{Quantity, TrendError};

/// The smallest change that counts: `resolution + absolute + relative × |reference|`, in the
/// quantity's working scale (Ω, ms, or decades of MΩ for insulation resistance). A change no
/// larger than this is no change.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct NoiseFloor {
    /// The instrument's display resolution: a last-digit flicker is not a change.
    pub resolution: f64,
    /// Fixed tolerance: test-lead nulling, probe contact, reading drift.
    pub absolute: f64,
    /// Tolerance in proportion to the reading (0.05 = 5 %).
    pub relative: f64,
}

impl NoiseFloor {
    pub fn at(&self, reference: f64) -> f64 {
        self.resolution + self.absolute + self.relative * reference.abs()
    }

    fn check(&self, name: &'static str) -> Result<(), TrendError> {
        for v in [self.resolution, self.absolute, self.relative] {
            if !v.is_finite() || v < 0.0 {
                return Err(TrendError::BadConfig {
                    field: name,
                    expected: "finite and 0 or more",
                });
            }
        }
        if self.at(0.0) <= 0.0 && self.relative <= 0.0 {
            return Err(TrendError::BadConfig {
                field: name,
                expected: "a floor above 0",
            });
        }
        Ok(())
    }
}

/// A [`TrendConfig`] that has passed [`TrendConfig::validate`].
#[derive(Debug, Clone, Copy)]
pub struct Checked<'a>(&'a TrendConfig);

impl Checked<'_> {
    pub fn config(&self) -> &TrendConfig {
        self.0
    }
}

/// Thresholds for the trend analysis. `Default` gives the documented values.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct TrendConfig {
    /// R1+R2, R2, R1+Rn, ring legs and Zs, in Ω. Default 0.01 Ω resolution (the typical display
    /// resolution of low-resistance ohmmeters) + 0.03 Ω + 6 %. Reasoned, common practice,
    /// no source: two visits are usually two instruments, each within about ±2 % + 2 digits
    /// and each with its own calibration a per cent or two off, and the conductors are a few
    /// degrees off the recorded ambient; together two readings of a sound circuit commonly
    /// differ by a few hundredths of an ohm and a few per cent. The instrument standard allows
    /// far more (±30 %, from memory), which would hide every real fault, so the floor reflects
    /// what ordinary instruments do, not what they are permitted. Example: at 0.50 Ω the floor
    /// is 0.01 + 0.03 + 0.03 = 0.07 Ω.
    pub resistance: NoiseFloor,
    /// Ze of a TN supply in Ω. Default 0.01 Ω + 0.03 Ω + 35 %: the supply impedance moves with
    /// the network's load and with the test method by 10–20 % from one visit to the next
    /// (common practice, no source), so two visits can differ by a third while nothing is
    /// wrong. A supply concern is also raised when Ze passes the declared typical maximum.
    pub ze: NoiseFloor,
    /// Insulation resistance in decades (log10 MΩ). Default 0.3 decades, a factor of 2.
    /// Readings move with humidity and with what is left connected; a halving is the smallest
    /// change worth reporting. Resolution (0.01 MΩ) is below 0.01 decades above 1 MΩ, so it is
    /// folded in. Common practice, no source.
    pub insulation_log10: NoiseFloor,
    /// RCD trip time in ms. Default 1 ms resolution + 40 ms + 20 %: trip times scatter by
    /// 15–20 % from one test to the next with the point on the wave at which the test starts
    /// (common practice, no source), and a change matters only when it moves the margin to the
    /// 300 ms limit materially: 40 ms is about an eighth of it, so 18 ms becoming 31 ms is not
    /// a finding and 25 ms becoming 150 ms is. Reasoned.
    pub rcd_ms: NoiseFloor,
    /// Ze of a TT installation in decades (log10 Ω). Default 0.35 decades, a factor of about
    /// 2.2: an electrode's resistance swings with the ground's moisture between a wet winter and
    /// a dry summer by a factor of up to about 2 (common practice, no source), so a smaller rise
    /// is the season, not the electrode.
    pub ze_tt_log10: NoiseFloor,
    /// Insulation resistance at or above this many MΩ is well clear of any level of concern:
    /// healthy readings wander by a factor of several with humidity and what is left connected,
    /// so a fall that ends up here is not reported (it still shows in the series). Default
    /// 5 MΩ, two and a half times the 2 MΩ investigation level: readings of a few MΩ to tens
    /// of MΩ are ordinary with equipment left connected. Reasoned, common practice, no source.
    pub insulation_concern_mohm: f64,
    /// Half-width of the projection's slope range in standard errors. Default 2, about 95 %
    /// for normal errors. Reasoned.
    pub projection_k: f64,
    /// Crossings further ahead than this are not dated (reported as none). Default 100 years.
    pub horizon_years: f64,
}

impl Default for TrendConfig {
    fn default() -> Self {
        TrendConfig {
            resistance: NoiseFloor {
                resolution: 0.01,
                absolute: 0.03,
                relative: 0.06,
            },
            ze: NoiseFloor {
                resolution: 0.01,
                absolute: 0.03,
                relative: 0.35,
            },
            insulation_log10: NoiseFloor {
                resolution: 0.0,
                absolute: 0.3,
                relative: 0.0,
            },
            rcd_ms: NoiseFloor {
                resolution: 1.0,
                absolute: 40.0,
                relative: 0.20,
            },
            ze_tt_log10: NoiseFloor {
                resolution: 0.0,
                absolute: 0.35,
                relative: 0.0,
            },
            insulation_concern_mohm: 5.0,
            projection_k: 2.0,
            horizon_years: 100.0,
        }
    }
}

impl TrendConfig {
    /// The floor that applies to a quantity.
    pub fn floor_for(&self, q: Quantity) -> &NoiseFloor {
        match q {
            Quantity::Ze => &self.ze,
            // An electrode's seasonal swing is the same measured alone or within a TT Ze.
            Quantity::ZeTt | Quantity::Ra => &self.ze_tt_log10,
            Quantity::IrLl | Quantity::IrLe => &self.insulation_log10,
            Quantity::Rcd => &self.rcd_ms,
            _ => &self.resistance,
        }
    }

    /// The configuration, checked once for a caller analysing many series under it.
    pub fn checked(&self) -> Result<Checked<'_>, TrendError> {
        self.validate()?;
        Ok(Checked(self))
    }

    pub fn validate(&self) -> Result<(), TrendError> {
        self.resistance.check("resistance")?;
        self.ze.check("ze")?;
        self.insulation_log10.check("insulation_log10")?;
        self.rcd_ms.check("rcd_ms")?;
        self.ze_tt_log10.check("ze_tt_log10")?;
        if !self.insulation_concern_mohm.is_finite() || self.insulation_concern_mohm <= 0.0 {
            return Err(TrendError::BadConfig {
                field: "insulation_concern_mohm",
                expected: "finite and above 0",
            });
        }
        if !self.projection_k.is_finite() || self.projection_k < 0.0 {
            return Err(TrendError::BadConfig {
                field: "projection_k",
                expected: "finite and 0 or more",
            });
        }
        if !self.horizon_years.is_finite() || self.horizon_years <= 0.0 {
            return Err(TrendError::BadConfig {
                field: "horizon_years",
                expected: "finite and above 0",
            });
        }
        Ok(())
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn default_floor_at_half_an_ohm() {
        // 0.01 + 0.03 + 0.06 × 0.50 = 0.07 Ω (the documented example).
        let c = TrendConfig::default();
        assert!((c.resistance.at(0.50) - 0.07).abs() < 1e-12);
        assert!(c.validate().is_ok());
    }

    #[test]
    fn a_zero_floor_is_refused() {
        let c = TrendConfig {
            ze: NoiseFloor {
                resolution: 0.0,
                absolute: 0.0,
                relative: 0.0,
            },
            ..TrendConfig::default()
        };
        let e = c.validate().unwrap_err().to_string();
        assert!(e.contains("ze"), "{e}");
    }
}
