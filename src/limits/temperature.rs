//! Normalising a copper resistance to 20 °C, so winter and summer readings compare.

use super::LimitsError;

/// Temperature coefficient of resistance of copper at 20 °C, per kelvin (IEC 60228).
pub const ALPHA_CU: f64 = 0.00393;

/// Temperatures accepted for a conductor, °C: a cold site up to a conductor at 90 °C working
/// temperature, with room to spare.
pub const TEMP_RANGE_C: std::ops::RangeInclusive<f64> = -30.0..=100.0;

pub(crate) fn check_temperature(t: f64) -> Result<f64, LimitsError> {
    if t.is_finite() && TEMP_RANGE_C.contains(&t) {
        Ok(t)
    } else {
        Err(LimitsError::BadValue {
            what: "temperature °C",
            value: t,
            expected: "a conductor temperature from -30 to 100 °C",
        })
    }
}

/// Resistance at t °C relative to 20 °C: 1 + α(t − 20).
pub fn factor(temp_c: f64) -> Result<f64, LimitsError> {
    Ok(1.0 + ALPHA_CU * (check_temperature(temp_c)? - 20.0))
}

/// R20 = Rt / (1 + α(t − 20)).
pub fn to_r20(r_t: f64, temp_c: f64) -> Result<f64, LimitsError> {
    let r_t = super::check_ohms("resistance", r_t)?;
    Ok(r_t / factor(temp_c)?)
}

/// Rt = R20 × (1 + α(t − 20)).
pub fn from_r20(r20: f64, temp_c: f64) -> Result<f64, LimitsError> {
    let r20 = super::check_ohms("resistance", r20)?;
    Ok(r20 * factor(temp_c)?)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn handbook_correction_factors() {
        // Reference: R20 = Rt / (1 + α(t − 20)); 10 °C → ×1.04, 25 °C → ×0.98 (handbook
        // correction tables agree). Worked: 1 / (1 − 0.0393) = 1.0409; 1 / 1.01965 = 0.9807.
        assert_eq!((to_r20(1.0, 10.0).unwrap() * 100.0).round() / 100.0, 1.04);
        assert_eq!((to_r20(1.0, 25.0).unwrap() * 100.0).round() / 100.0, 0.98);
        assert_eq!(to_r20(0.5, 20.0).unwrap(), 0.5);
    }

    #[test]
    fn operating_temperature_factors() {
        // Reference: 1 + 0.00393 × 50 = 1.197 (70 °C), 1 + 0.00393 × 70 = 1.275 (90 °C).
        assert!((factor(70.0).unwrap() - 1.1965).abs() < 1e-12);
        assert!((factor(90.0).unwrap() - 1.2751).abs() < 1e-12);
    }

    #[test]
    fn refuses_impossible_values() {
        assert!(to_r20(1.0, f64::NAN).is_err());
        assert!(to_r20(1.0, -300.0).is_err());
        assert!(from_r20(-1.0, 20.0).is_err());
    }

    mod props {
        use super::*;
        use proptest::prelude::*;

        proptest! {
            #[test]
            fn r20_round_trips(r in 0.0f64..5000.0, t in -30.0f64..100.0) {
                let back = from_r20(to_r20(r, t).unwrap(), t).unwrap();
                prop_assert!((back - r).abs() <= 1e-9 * r.max(1.0));
            }

            #[test]
            fn cold_reading_normalises_upwards(r in 0.01f64..100.0, t in -30.0f64..20.0) {
                // Below 20 °C a conductor reads low, so its R20 is at least the reading.
                prop_assert!(to_r20(r, t).unwrap() >= r);
            }
        }
    }
}
