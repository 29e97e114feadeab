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
    /// resolution of low-resistance ohmmeters) + 0.02 Ω + 5 %. Reasoned, common practice,
    /// no source: lead nulling and probe contact leave a few hundredths of an ohm, and
    /// repeated tests of one circuit commonly agree within a few per cent. The instrument
    /// standard allows far more (±30 %, from memory), which would hide every real fault, so
    /// the floor reflects repeatability of one tester on one circuit, not the permitted
    /// error. Example: at 0.50 Ω the floor is 0.01 + 0.02 + 0.025 = 0.055 Ω.
    pub resistance: NoiseFloor,
    /// Ze in Ω. Default 0.01 Ω + 0.02 Ω + 10 %: the supply impedance moves with the network's
    /// load through the day, so its tolerance is doubled. Reasoned, no source.
    pub ze: NoiseFloor,
    /// Insulation resistance in decades (log10 MΩ). Default 0.3 decades, a factor of 2.
    /// Readings move with humidity and with what is left connected; a halving is the smallest
    /// change worth reporting. Resolution (0.01 MΩ) is below 0.01 decades above 1 MΩ, so it is
    /// folded in. Common practice, no source.
    pub insulation_log10: NoiseFloor,
    /// RCD trip time in ms. Default 1 ms resolution + 5 ms + 10 %: trip times scatter from
    /// one test to the next with the point on the wave at which the test starts. Reasoned,
    /// no source.
    pub rcd_ms: NoiseFloor,
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
                absolute: 0.02,
                relative: 0.05,
            },
            ze: NoiseFloor {
                resolution: 0.01,
                absolute: 0.02,
                relative: 0.10,
            },
            insulation_log10: NoiseFloor {
                resolution: 0.0,
                absolute: 0.3,
                relative: 0.0,
            },
            rcd_ms: NoiseFloor {
                resolution: 1.0,
                absolute: 5.0,
                relative: 0.10,
            },
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
        // 0.01 + 0.02 + 0.05 × 0.50 = 0.055 Ω (the documented example).
        let c = TrendConfig::default();
        assert!((c.resistance.at(0.50) - 0.055).abs() < 1e-12);
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
