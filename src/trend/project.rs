//! When a fitted line reaches its limit, and what interval would re-test before then.

use chrono::{Datelike, Duration, NaiveDate};

use super::Worse;
use super::finding::Projection;
use super::stats::LeastSquares;

pub(crate) const DAYS_PER_YEAR: f64 = 365.25;

/// The date `years` after `start`, or `None` past chrono's range.
pub(crate) fn date_at(start: NaiveDate, years: f64) -> Option<NaiveDate> {
    let days = (years * DAYS_PER_YEAR).round();
    if !days.is_finite() || days.abs() > 1.0e6 {
        return None;
    }
    start.checked_add_signed(Duration::days(days as i64))
}

/// Years from `start` to `date`.
pub(crate) fn years_between(start: NaiveDate, date: NaiveDate) -> f64 {
    // The same whole days as `(date - start).num_days()`, without building a duration.
    f64::from(date.num_days_from_ce() - start.num_days_from_ce()) / DAYS_PER_YEAR
}

/// Whole calendar months from `from` to `to`, rounded down; 0 when `to` is not later.
pub fn whole_months(from: NaiveDate, to: NaiveDate) -> u32 {
    if to <= from {
        return 0;
    }
    let mut m = (to.year() - from.year()) * 12 + to.month() as i32 - from.month() as i32;
    if to.day() < from.day() {
        m -= 1;
    }
    m.max(0) as u32
}

/// Inputs for one projection, all in the working scale with x in years from `start`.
pub(crate) struct ProjectionInput<'a> {
    pub fit: &'a LeastSquares,
    /// Standard error of the slope to use for the range (already floored).
    pub slope_se: f64,
    pub k: f64,
    pub limit_work: f64,
    pub limit: f64,
    pub worse: Worse,
    pub start: NaiveDate,
    /// x of the last visit.
    pub x_last: f64,
    pub horizon_years: f64,
}

/// The crossing of the limit by a line through the fit's centroid with slope `slope`, as x in
/// years; never before the last visit. `None` when the line moves away from the limit or is
/// flat, or when the crossing lies beyond the horizon.
fn crossing(inp: &ProjectionInput<'_>, slope: f64) -> Option<f64> {
    let toward = match inp.worse {
        Worse::Higher => slope > 0.0,
        Worse::Lower => slope < 0.0,
    };
    if !toward || !slope.is_finite() {
        return None;
    }
    // Pivoting on the centroid: the slope and the centroid's height are uncorrelated in least
    // squares, so the slope's error alone sets the spread of the crossing.
    let x = inp.fit.x_mean + (inp.limit_work - inp.fit.y_mean) / slope;
    let x = x.max(inp.x_last);
    (x - inp.x_last <= inp.horizon_years).then_some(x)
}

pub(crate) fn project(inp: &ProjectionInput<'_>) -> Option<Projection> {
    let b = inp.fit.slope;
    let x = crossing(inp, b)?;
    let spread = inp.k * inp.slope_se;
    let (faster, slower) = match inp.worse {
        Worse::Higher => (b + spread, b - spread),
        Worse::Lower => (b - spread, b + spread),
    };
    // The steeper line always reaches the limit no later than the fitted one.
    let x_early = crossing(inp, faster).unwrap_or(x).min(x);
    let x_late = crossing(inp, slower);
    Some(Projection {
        date: date_at(inp.start, x)?,
        earliest: date_at(inp.start, x_early)?,
        latest: x_late.and_then(|x| date_at(inp.start, x)),
        slope_per_year: b,
        slope_se_per_year: inp.slope_se,
        limit: inp.limit,
    })
}

/// Months from the last visit to the earliest projected crossing, rounded down so the re-test
/// comes first, at least 1, and never longer than the interval already set (`next_due`).
pub fn recommended_interval(last: NaiveDate, earliest: NaiveDate, next_due: NaiveDate) -> u32 {
    let to_crossing = whole_months(last, earliest).max(1);
    let current = whole_months(last, next_due).max(1);
    to_crossing.min(current)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::trend::stats::least_squares;

    fn d(y: i32, m: u32, day: u32) -> NaiveDate {
        NaiveDate::from_ymd_opt(y, m, day).unwrap()
    }

    #[test]
    fn years_count_whole_days_across_leap_years_and_backwards() {
        let dates = [
            d(1999, 12, 31),
            d(2000, 2, 29),
            d(2000, 3, 1),
            d(2024, 2, 29),
            d(2026, 12, 2),
        ];
        for a in dates {
            for b in dates {
                let days = (b - a).num_days() as f64;
                assert_eq!(years_between(a, b), days / DAYS_PER_YEAR, "{a} {b}");
            }
        }
    }

    #[test]
    fn months_round_down() {
        assert_eq!(whole_months(d(2024, 3, 5), d(2025, 3, 5)), 12);
        assert_eq!(whole_months(d(2024, 3, 5), d(2025, 3, 4)), 11);
        assert_eq!(whole_months(d(2024, 3, 5), d(2024, 3, 1)), 0);
        assert_eq!(
            recommended_interval(d(2024, 3, 5), d(2024, 3, 20), d(2029, 3, 5)),
            1
        );
        assert_eq!(
            recommended_interval(d(2024, 3, 5), d(2026, 9, 30), d(2029, 3, 5)),
            30
        );
    }

    #[test]
    fn crossing_of_a_known_line() {
        // y = 0.5 + 0.1x at x = 0, 1, 2 (years); limit 1.0 is reached at x = 5.
        let fit = least_squares(&[0.0, 1.0, 2.0], &[0.5, 0.6, 0.7]).unwrap();
        let start = d(2020, 1, 1);
        let inp = ProjectionInput {
            fit: &fit,
            slope_se: 0.02,
            k: 2.0,
            limit_work: 1.0,
            limit: 1.0,
            worse: Worse::Higher,
            start,
            x_last: 2.0,
            horizon_years: 100.0,
        };
        let p = project(&inp).unwrap();
        // x = 1 + (1.0 − 0.6) / 0.1 = 5 → 5 × 365.25 = 1826.25 → 1826 days.
        assert_eq!(p.date, start + Duration::days(1826));
        // Steeper 0.14: x = 1 + 0.4 / 0.14 = 3.857 → 1408.8 → 1409 days.
        assert_eq!(p.earliest, start + Duration::days(1409));
        // Shallower 0.06: x = 1 + 0.4 / 0.06 = 7.667 → 2800.25 → 2800 days.
        assert_eq!(p.latest, Some(start + Duration::days(2800)));

        // Moving away, or too slow to arrive within the horizon: no projection.
        let away = least_squares(&[0.0, 1.0, 2.0], &[0.7, 0.6, 0.5]).unwrap();
        assert!(project(&ProjectionInput { fit: &away, ..inp }).is_none());
        let slow = least_squares(&[0.0, 1.0, 2.0], &[0.5, 0.5001, 0.5002]).unwrap();
        assert!(project(&ProjectionInput { fit: &slow, ..inp }).is_none());
    }
}
