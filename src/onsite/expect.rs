//! What a sound reading should be on the day, and the band it should fall in: the history's
//! own level where it is steady (its median at 20 °C), the new level after a step, or the fitted
//! line where it drifts; the band from how far ordinary site noise moves a reading from one
//! visit to the next, widened honestly where the history is short, scatters more than noise
//! explains, or the temperature is not known.
//!
//! The noise model is the one the worklist's rules are calibrated on, `ohmtrail::sim::noise`
//! (each figure there marked published, common practice or from memory; `bench/calibrate.sh`
//! backtests this band against it). One standard deviation of a reading at another visit, with
//! another instrument, of a circuit that has not changed, is `√(a² + (b × value)²)`:
//!
//! | quantity | a | b |
//! |---|---|---|
//! | continuity (R1+R2, R1+Rn, R2, ring legs) | the reading's own scatter and the 0.01 Ω display step (0.006 Ω) | scatter, the spread of instruments' calibration (a few of them reading a few per cent high) and conductors a few °C off the ambient (2.1 %) |
//! | Zs (loop tester) | 0.012 Ω | 5.5 %: the loop tester's scatter and calibration, and the supply's own variation inside Zs |
//! | Ze, TN | 0.01 Ω | Ze's variation with network load and test method, and the loop tester's (9 %) |
//! | Ze, TT (log scale) | — | 0.12 decades: an electrode's seasonal swing |
//! | RCD trip time | 1 ms | the point-on-wave scatter |
//!
//! The band is the expectation ± 2 standard deviations of (reading noise and the expectation's
//! own uncertainty), about 95 % for normal errors.

use chrono::NaiveDate;

use super::brief::{Band, Expectation, LastReading};
use super::entry::{Field, fmt_num};
use crate::analysis::SeriesAnalysis;
use crate::model::{Megohms, Readings};
use crate::trend::stats::{least_squares, median};
use crate::trend::{FindingKind, Point, Quantity, Scale, SeriesReport, TrendConfig};

/// Half-width of the band in standard deviations.
pub const BAND_K: f64 = 2.0;
/// Extra relative spread when the conductor temperature is not known (no ambient at the last
/// visit, or no temperature given for the day): about ±5 °C of copper at 0.00393 per K.
const UNKNOWN_TEMPERATURE: f64 = 0.02;
/// The median of n readings is less certain than their mean: its standard error is about
/// 1.25 σ / √n for normal errors.
const MEDIAN_EFFICIENCY: f64 = 1.25;
/// How many readings' worth of weight the noise model carries against a circuit's own scatter.
const PRIOR_READINGS: f64 = 4.0;

/// One standard deviation of a reading about its true value, in the working scale: the noise
/// model of the module's table, worked out from the simulator's figures.
pub fn reading_sigma(q: Quantity, value: f64) -> f64 {
    use crate::sim::noise as n;
    let (a, b) = match q {
        Quantity::Zs => (0.012, 0.055),
        Quantity::Ze => {
            let uniform = n::LOOP_GAIN * n::LOOP_GAIN / 3.0;
            let b2 = n::ZE_SIGMA.powi(2)
                + n::ZE_WITHIN_VISIT_SIGMA.powi(2)
                + n::LOOP_SCATTER.0.powi(2)
                + uniform;
            (n::LOOP_SCATTER.1, b2.sqrt())
        }
        // Seasonal swing on a log scale: natural-log amplitude to decades, as a standard
        // deviation of a sine's value (amplitude / √2), with the year-to-year wetness.
        Quantity::ZeTt | Quantity::Ra => {
            let ln = ((n::TT_SEASON_LOG / 2f64.sqrt()).powi(2) + n::TT_YEAR_SIGMA.powi(2)).sqrt();
            return ln / std::f64::consts::LN_10;
        }
        Quantity::Rcd => (1.0, n::RCD_SIGMA),
        // Insulation resistance on a log scale: healthy readings wander by a factor of several.
        Quantity::IrLl | Quantity::IrLe => return n::IR_WANDER_SIGMA / std::f64::consts::LN_10,
        _ => {
            let step = n::CONTINUITY_RESOLUTION_OHM;
            let a2 = n::CONTINUITY_SCATTER.1.powi(2) + step * step / 12.0;
            let (lo, hi) = n::HIGH_READING_GAIN;
            let high = n::HIGH_READING_INSTRUMENTS * (lo + hi).powi(2) / 4.0;
            let b2 = n::CONTINUITY_SCATTER.0.powi(2)
                + n::CONTINUITY_GAIN.powi(2) / 3.0
                + high
                + (crate::limits::ALPHA_CU * n::CONDUCTOR_TEMP_SIGMA_C).powi(2);
            (a2.sqrt(), b2.sqrt())
        }
    };
    (a * a + (b * value).powi(2)).sqrt()
}

fn years_between(a: NaiveDate, b: NaiveDate) -> f64 {
    (b - a).num_days() as f64 / 365.25
}

fn to_work(scale: Scale, v: f64) -> f64 {
    match scale {
        Scale::Linear => v,
        Scale::Log10 => v.log10(),
    }
}

fn from_work(scale: Scale, w: f64) -> f64 {
    match scale {
        Scale::Linear => w,
        Scale::Log10 => 10f64.powf(w),
    }
}

/// The value expected on `date` at 20 °C (where the series is normalised), with its band.
/// Converting to the visit's temperature is left to the caller. `temp_known` says whether the
/// day's temperature was given.
pub(super) fn expectation(
    f: Field,
    series: Option<&SeriesAnalysis>,
    last_readings: Option<&Readings>,
    last_visit: Option<NaiveDate>,
    (date, temp_known): (NaiveDate, bool),
    cfg: &TrendConfig,
) -> Expectation {
    let q = series.map_or(f.quantity(), |s| s.report.quantity);
    let Some(s) = series else {
        // No series: the last reading as taken, if any.
        let last = last_readings.and_then(|r| f.get(r)).zip(last_visit);
        return match last {
            Some((m, d)) => from_last_only(f, m, d, cfg),
            None => Expectation {
                field: f,
                last: None,
                expected: None,
                band: None,
                basis: "no reading on record: nothing to compare with yet".into(),
                wide: None,
                limit: None,
            },
        };
    };
    let report: &SeriesReport = &s.report;
    let mut e = Expectation {
        field: f,
        last: report.points.last().map(|p| LastReading {
            date: p.date,
            raw: p.raw,
            over_range: p.censored,
            ambient_c: p.ambient_c,
        }),
        expected: None,
        band: None,
        basis: String::new(),
        wide: None,
        limit: None,
    };
    let base: Vec<&Point> = report
        .points
        .iter()
        .filter(|p| report.baseline_start.is_none_or(|b| p.date >= b))
        .collect();
    let Some(last_base) = base.last().copied() else {
        e.basis = report
            .note
            .clone()
            .unwrap_or_else(|| "no reading since the baseline was reset".into());
        return e;
    };
    let scale = q.scale();
    if last_base.censored {
        // Over range last time: a lower bound, never a value.
        let floor = cfg.floor_for(q);
        let lo = from_work(scale, to_work(scale, last_base.value) - floor.at(0.0));
        e.band = Some(Band {
            low: Some(lo),
            high: None,
        });
        e.basis = format!(
            "over range last time (>{} {unit}): at least {} {unit} expected",
            fmt_num(f.unit(), last_base.value),
            fmt_num(f.unit(), lo),
            unit = f.unit().symbol()
        );
        return e;
    }
    let level = Level::of(report, &base, date);
    let y = level.value;
    let sigma_read = reading_sigma(q, from_work(scale, y));
    let mut wide = Vec::new();
    // Extra spread in the working scale when the conductors' temperature is not known.
    let sigma_temp = if q.temperature_sensitive() && (last_base.ambient_c.is_none() || !temp_known)
    {
        if last_base.ambient_c.is_none() {
            wide.push("no ambient at the last visit".to_string());
        } else {
            wide.push("no temperature given for the day".to_string());
        }
        UNKNOWN_TEMPERATURE * y
    } else {
        0.0
    };
    match level.n {
        1 => wide.push("only one earlier reading".into()),
        2 => wide.push("only two earlier readings".into()),
        _ => {}
    }
    if level.scatter > sigma_read * 1.5 {
        wide.push("the earlier readings scatter more than ordinary noise".into());
    }
    // The circuit's own steadiness counts alongside the model: the model's spread weighs as
    // PRIOR_READINGS readings, the history's scatter as its own number of degrees of freedom.
    let sigma_read = if level.n >= 2 {
        let dof = (level.n - 1) as f64;
        ((PRIOR_READINGS * sigma_read.powi(2) + dof * level.scatter.powi(2))
            / (PRIOR_READINGS + dof))
            .sqrt()
    } else {
        sigma_read
    };
    let sigma_level = level
        .se
        .max(MEDIAN_EFFICIENCY * sigma_read / (level.n as f64).sqrt());
    let sigma = (sigma_read.powi(2) + sigma_level.powi(2) + sigma_temp.powi(2)).sqrt();
    let half = BAND_K * sigma;
    e.basis = level.words(f, q, from_work(scale, y));
    e.expected = Some(from_work(scale, y).max(0.0));
    e.band = Some(match q.worse() {
        crate::trend::Worse::Higher => Band {
            low: Some(from_work(scale, y - half).max(0.0)),
            high: Some(from_work(scale, y + half)),
        },
        // Higher insulation resistance is never worse: the band has no top.
        crate::trend::Worse::Lower => Band {
            low: Some(from_work(scale, y - half)),
            high: None,
        },
    });
    if !wide.is_empty() {
        e.wide = Some(format!("wider than usual: {}", wide.join("; ")));
    }
    e
}

/// The level a series is expected at on the day, in the working scale.
struct Level {
    value: f64,
    /// Readings it rests on.
    n: usize,
    /// Its own standard error beyond what the readings' number gives (a fitted line's, at the
    /// date); 0 for a median.
    se: f64,
    /// The readings' standard deviation about the level, from two readings on; 0 with one.
    scatter: f64,
    how: How,
    since: NaiveDate,
}

enum How {
    Median,
    AfterStep,
    Trend { per_year: f64 },
}

impl Level {
    fn of(report: &SeriesReport, base: &[&Point], date: NaiveDate) -> Level {
        let q = report.quantity;
        let scale = q.scale();
        let has = |k: FindingKind| report.findings.iter().any(|f| f.kind == k);
        // After a step the circuit sits at its new level: the readings from the step on.
        let step = report
            .findings
            .iter()
            .filter(|f| f.kind == FindingKind::Step)
            .map(|f| f.date)
            .max();
        let pts: Vec<&Point> = base
            .iter()
            .copied()
            .filter(|p| !p.censored && step.is_none_or(|s| p.date >= s))
            .collect();
        let since = pts.first().map_or(date, |p| p.date);
        let ys: Vec<f64> = pts.iter().map(|p| to_work(scale, p.value)).collect();
        // The readings' standard deviation about the level, from two readings on.
        let scatter_of = |resid: &mut Vec<f64>| -> f64 {
            if resid.len() < 2 {
                return 0.0;
            }
            let ss: f64 = resid.iter().map(|r| r * r).sum();
            (ss / (resid.len() - 1) as f64).sqrt()
        };
        let drifting = step.is_none()
            && (has(FindingKind::Drift)
                || has(FindingKind::Approaching)
                || has(FindingKind::NeutralDivergence)
                || has(FindingKind::ZeRise));
        if drifting && ys.len() >= 2 {
            let xs: Vec<f64> = pts.iter().map(|p| years_between(since, p.date)).collect();
            if let Some(ls) = least_squares(&xs, &ys) {
                let x = years_between(since, date);
                let mut resid: Vec<f64> = xs.iter().zip(&ys).map(|(a, b)| b - ls.at(*a)).collect();
                // The line's standard error on the day, with its spread never taken as less
                // than the reading noise.
                let s = ls
                    .residual_se
                    .unwrap_or(0.0)
                    .max(reading_sigma(q, from_work(scale, ls.at(x))));
                let se = s * (1.0 / ls.n as f64 + (x - ls.x_mean).powi(2) / ls.sxx).sqrt();
                return Level {
                    value: ls.at(x),
                    n: ls.n,
                    se,
                    scatter: scatter_of(&mut resid),
                    how: How::Trend { per_year: ls.slope },
                    since,
                };
            }
        }
        let mut sorted = ys.clone();
        let value =
            median(&mut sorted).unwrap_or_else(|| to_work(scale, base[base.len() - 1].value));
        let mut resid: Vec<f64> = ys.iter().map(|y| y - value).collect();
        Level {
            value,
            n: ys.len().max(1),
            se: 0.0,
            scatter: scatter_of(&mut resid),
            how: if step.is_some() {
                How::AfterStep
            } else {
                How::Median
            },
            since,
        }
    }

    fn words(&self, f: Field, q: Quantity, value: f64) -> String {
        let unit = f.unit().symbol();
        let at20 = if q.temperature_sensitive() {
            " at 20 °C"
        } else {
            ""
        };
        let readings = if self.n == 1 {
            "1 reading".to_string()
        } else {
            format!("{} readings", self.n)
        };
        match self.how {
            How::Median if self.n == 1 => {
                format!(
                    "the last reading{at20}, {} {unit} ({})",
                    fmt_num(f.unit(), value),
                    self.since
                )
            }
            How::Median => format!(
                "steady: the median of {readings} since {}{at20}, {} {unit}",
                self.since,
                fmt_num(f.unit(), value)
            ),
            How::AfterStep => format!(
                "the level since the step of {}: the median of {readings}{at20}, {} {unit}",
                self.since,
                fmt_num(f.unit(), value)
            ),
            How::Trend { per_year } => format!(
                "trend over {readings} since {}: {per_year:+.3} {}/year{at20}",
                self.since,
                if q.scale() == Scale::Log10 {
                    "decades"
                } else {
                    unit
                }
            ),
        }
    }
}

fn from_last_only(f: Field, m: Megohms, d: NaiveDate, cfg: &TrendConfig) -> Expectation {
    let q = f.quantity();
    let scale = q.scale();
    let floor = cfg.floor_for(q);
    let y = to_work(scale, m.value);
    let half = floor.at(y);
    Expectation {
        field: f,
        last: Some(LastReading {
            date: d,
            raw: m.value,
            over_range: m.over_range,
            ambient_c: None,
        }),
        expected: (!m.over_range).then_some(m.value),
        band: Some(match (scale, m.over_range) {
            (Scale::Linear, _) => Band {
                low: Some((y - half).max(0.0)),
                high: Some(y + half),
            },
            (Scale::Log10, over) => Band {
                low: Some(from_work(
                    scale,
                    y - if over { floor.at(0.0) } else { half },
                )),
                high: None,
            },
        }),
        basis: format!("the last reading as taken, {d}"),
        wide: Some("wider than usual: only the last reading, not trended".into()),
        limit: None,
    }
}
