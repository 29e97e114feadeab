//! The analysis of one series: limit check, steps, drift, Ze rise and projection; and the
//! neutral divergence check over a pair of series.
//!
//! Only the current baseline is analysed: points on or after the latest register reset.
//! Earlier baselines belong to wiring that has since been repaired or replaced, so the fall at
//! a repair is neither a step nor an improvement, and a new baseline's first reading is not a
//! step.
//!
//! Changes are judged on a working scale: the value itself, or log10 of it for insulation
//! resistance. Only worsening counts (a rise, or a fall for IR); a reading that improves
//! without a recorded repair is shown in the series but not flagged.
//!
//! Censored readings (over-range, a lower bound) are never used as values. A pair of readings
//! is used only where the bound understates the worsening: for IR, a fall from `>200` to 2 is
//! a fall of at least 200 → 2; for a maximum-limited quantity, a rise to an over-range reading
//! is a rise of at least the bound. Two censored readings say nothing. Least squares, and so
//! the projection, use uncensored readings only.

use chrono::{Datelike, NaiveDate};
use serde::Serialize;

use super::config::Checked;
use super::finding::{Finding, FindingKind, Projection};
use super::project::{DAYS_PER_YEAR, ProjectionInput, project, years_between};
use super::sentences::{approaching, concern_check, drift_finding, limit_check, step_finding};
use super::series::current_baseline;
use super::stats::{least_squares, median, median_intercept, theil_sen, theil_sen_in};
use super::{LimitKind, Point, Quantity, Scale, Series, TrendConfig, TrendError, Worse};

/// Slopes of the current baseline, in the working scale per year (decades per year for IR).
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Fit {
    /// Uncensored points fitted.
    pub n: usize,
    pub least_squares_per_year: f64,
    /// From three uncensored points on.
    pub theil_sen_per_year: Option<f64>,
    /// `None` with two points.
    pub residual_se: Option<f64>,
    /// The slope's standard error used for the projection: from the residuals, but never less
    /// than the noise floor allows (see [`analyse`]).
    pub slope_se_per_year: f64,
    /// The least-squares line's value at the baseline's first date, in the working scale
    /// (decades for IR), so the line can be drawn.
    pub intercept: f64,
}

/// Everything known about one series after analysis.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SeriesReport {
    pub quantity: Quantity,
    pub label: &'static str,
    pub unit: &'static str,
    pub scale: Scale,
    /// All points, sorted by date, including those before the current baseline.
    pub points: Vec<Point>,
    /// The latest register reset, if any.
    pub reset: Option<NaiveDate>,
    /// Date of the first point of the current baseline.
    pub baseline_start: Option<NaiveDate>,
    pub baseline_len: usize,
    /// Baseline points of a temperature-sensitive quantity with no ambient recorded, so not
    /// normalised to 20 °C.
    pub not_normalised: usize,
    pub fit: Option<Fit>,
    /// The fitted line's crossing of the limit, whether or not it falls before the next due
    /// inspection.
    pub projection: Option<Projection>,
    /// Most urgent first.
    pub findings: Vec<Finding>,
    /// Why there is no trend, when there is none.
    pub note: Option<String>,
}

impl SeriesReport {
    /// The fitted least-squares line's value on `date`, in the quantity's own units; `None`
    /// without a fit.
    pub fn fitted_at(&self, date: NaiveDate) -> Option<f64> {
        let fit = self.fit.as_ref()?;
        let start = self.baseline_start?;
        let w = fit.intercept + fit.least_squares_per_year * years_between(start, date);
        Some(from_work(self.quantity, w))
    }
}

/// The baseline in the working scale, x in years from the baseline's first point.
pub(super) struct Work<'a> {
    pub(super) q: Quantity,
    pub(super) pts: &'a [Point],
    pub(super) x: &'a [f64],
    pub(super) y: &'a [f64],
    pub(super) censored: &'a [bool],
    pub(super) sign: f64,
}

/// Buffers one thread reuses from series to series: the worklist analyses hundreds of
/// thousands of short series, and a fresh allocation for each working vector would be a
/// fifth of the time.
#[derive(Default)]
struct Scratch {
    x: Vec<f64>,
    y: Vec<f64>,
    censored: Vec<bool>,
    adjusted: Vec<f64>,
    ux: Vec<f64>,
    uy: Vec<f64>,
    slopes: Vec<f64>,
}

thread_local! {
    static SCRATCH: std::cell::RefCell<Scratch> = std::cell::RefCell::default();
}

/// See [`Work::unknown_temperature`].
const UNKNOWN_TEMPERATURE_SHARE: f64 = 0.04;

fn to_work(q: Quantity, v: f64) -> f64 {
    match q.scale() {
        Scale::Linear => v,
        Scale::Log10 => v.log10(),
    }
}

fn from_work(q: Quantity, w: f64) -> f64 {
    match q.scale() {
        Scale::Linear => w,
        Scale::Log10 => 10f64.powf(w),
    }
}

impl<'a> Work<'a> {
    fn new(
        q: Quantity,
        pts: &'a [Point],
        (x, y, censored): (&'a mut Vec<f64>, &'a mut Vec<f64>, &'a mut Vec<bool>),
    ) -> Work<'a> {
        // Years from the first point, as `years_between` counts them, with the first
        // point's day number worked out once.
        let start = pts.first().map_or(0, |p| p.date.num_days_from_ce());
        x.clear();
        x.extend(
            pts.iter()
                .map(|p| f64::from(p.date.num_days_from_ce() - start) / DAYS_PER_YEAR),
        );
        y.clear();
        y.extend(pts.iter().map(|p| to_work(q, p.value)));
        censored.clear();
        censored.extend(pts.iter().map(|p| p.censored));
        Work {
            q,
            pts,
            x,
            y,
            censored,
            sign: match q.worse() {
                Worse::Higher => 1.0,
                Worse::Lower => -1.0,
            },
        }
    }

    /// The worsening from reading `a` to reading `b` (values `ya`, `yb`), at least; `None`
    /// when censoring leaves it unknown.
    fn worsening_at_least(&self, (ya, ca): (f64, bool), (yb, cb): (f64, bool)) -> Option<f64> {
        let w = self.sign * (yb - ya);
        match (ca, cb) {
            (false, false) => Some(w),
            // A fall from a lower bound: the true fall is larger.
            (true, false) if self.sign < 0.0 && w > 0.0 => Some(w),
            // A rise to a lower bound: the true rise is larger.
            (false, true) if self.sign > 0.0 && w > 0.0 => Some(w),
            _ => None,
        }
    }

    /// Median of the usable pairwise slopes of `y` (Theil–Sen, censor-aware).
    fn robust_slope(&self, y: &[f64], slopes: &mut Vec<f64>) -> Option<f64> {
        slopes.clear();
        for i in 0..y.len() {
            for j in i + 1..y.len() {
                let dx = self.x[j] - self.x[i];
                if dx <= 0.0 {
                    continue;
                }
                // A pair with an over-range bound counts only where the bound fixes the
                // direction, worse or better alike: a bound then a lower reading is a fall of
                // at least the difference, a reading then a higher bound a rise of at least it.
                // Keeping only the worsening pairs would bias the median towards a fall.
                let usable = match (self.censored[i], self.censored[j]) {
                    (false, false) => true,
                    (true, true) => false,
                    (true, false) => y[j] < y[i],
                    (false, true) => y[j] > y[i],
                };
                if usable {
                    slopes.push((y[j] - y[i]) / dx);
                }
            }
        }
        median(slopes)
    }

    /// What a conductor resistance compared across readings `idx` may be off by when one of
    /// them had no ambient recorded and so was not corrected to 20 °C: 4 % of the larger
    /// reading, about 10 °C of copper at 0.00393 per K (the spread of indoor temperatures
    /// over a year; reasoned, no source). Nothing for other quantities or when every reading
    /// was corrected.
    pub(super) fn unknown_temperature(&self, idx: &[usize]) -> f64 {
        if !self.q.temperature_sensitive() || idx.iter().all(|&i| self.pts[i].ambient_c.is_some()) {
            return 0.0;
        }
        UNKNOWN_TEMPERATURE_SHARE * idx.iter().map(|&i| self.y[i]).fold(0.0, f64::max)
    }

    fn uncensored(&self, xs: &mut Vec<f64>, ys: &mut Vec<f64>) {
        xs.clear();
        ys.clear();
        for i in 0..self.y.len() {
            if !self.censored[i] {
                xs.push(self.x[i]);
                ys.push(self.y[i]);
            }
        }
    }
}

/// Analyses one series against the next due inspection date.
///
/// - Limit check on the last reading, from one visit on. A censored reading (a lower bound)
///   fails a maximum only when the bound is past it, and never fails a minimum.
/// - Steps, from the third point of the baseline on: the jump from the previous reading must
///   exceed the noise floor, and so must its excess over what the earlier readings predict
///   (their robust line when it is worsening, otherwise the previous reading). A found step is taken out of the later readings before going on, so one loose
///   termination is one step, not a step and a drift.
/// - Drift, from two points on: the robust slope times the baseline's span, against the
///   floor at the first reading.
/// - For Ze, steps and drift are reported as a Ze rise.
/// - Projection: the least-squares line over uncensored readings. The slope's standard error
///   is the residuals' (n ≥ 3), but the residual spread is taken as at least half the noise
///   floor, so a few readings that happen to fall on a line do not give a falsely narrow
///   range. Reasoned: a change beyond the floor between two readings is then beyond about
///   1.4 standard deviations of their difference.
/// - Approaching when the fitted line reaches the limit before `next_due` and its change over
///   the baseline exceeds the floor (a slope within the noise projects nothing). The
///   recommended interval is the whole months from the last visit to the earliest crossing.
pub fn analyse(
    series: &Series,
    next_due: NaiveDate,
    cfg: &TrendConfig,
) -> Result<SeriesReport, TrendError> {
    analyse_sorted(series, series.sorted_points()?, next_due, cfg.checked()?)
}

/// [`analyse`] for a caller analysing many series under one configuration: the series is
/// taken by value, so its points are sorted where they are rather than copied, and the
/// configuration was checked once beforehand.
pub fn analyse_series(
    mut series: Series,
    next_due: NaiveDate,
    cfg: Checked<'_>,
) -> Result<SeriesReport, TrendError> {
    let points = series.take_sorted_points()?;
    analyse_sorted(&series, points, next_due, cfg)
}

/// The analysis of `points`, the series' points sorted and checked; the series gives the rest.
fn analyse_sorted(
    series: &Series,
    points: Vec<Point>,
    next_due: NaiveDate,
    cfg: Checked<'_>,
) -> Result<SeriesReport, TrendError> {
    let cfg = cfg.config();
    let q = series.quantity;
    let reset = series.last_reset();
    let base = current_baseline(&points, reset);
    let baseline_start = base.first().map(|p| p.date);
    let baseline_len = base.len();
    let not_normalised = if q.temperature_sensitive() {
        base.iter()
            .filter(|p| p.ambient_c.is_none() && !p.censored)
            .count()
    } else {
        0
    };
    let report = |points, fit, projection, findings, note| SeriesReport {
        quantity: q,
        label: q.label(),
        unit: q.unit(),
        scale: q.scale(),
        points,
        reset,
        baseline_start,
        baseline_len,
        not_normalised,
        fit,
        projection,
        findings,
        note,
    };
    let Some(last) = base.last().copied() else {
        let note = match (points.is_empty(), reset) {
            (true, _) | (false, None) => "no readings".to_string(),
            (false, Some(r)) => format!("no reading since the baseline was reset on {r}"),
        };
        return Ok(report(points, None, None, Vec::new(), Some(note)));
    };
    let (fit, projection, findings, note) = SCRATCH
        .with_borrow_mut(|scratch| analyse_baseline(series, base, last, (next_due, cfg), scratch));
    Ok(report(points, fit, projection, findings, note))
}

/// What a series' current baseline `base` (ending in `last`) says: its fit, projection,
/// findings (most urgent first) and a note when there is no trend.
fn analyse_baseline(
    series: &Series,
    base: &[Point],
    last: Point,
    (next_due, cfg): (NaiveDate, &TrendConfig),
    scratch: &mut Scratch,
) -> (
    Option<Fit>,
    Option<Projection>,
    Vec<Finding>,
    Option<String>,
) {
    let q = series.quantity;
    let floor = cfg.floor_for(q);
    let Scratch {
        x,
        y,
        censored,
        adjusted,
        ux,
        uy,
        slopes,
    } = scratch;
    let w = Work::new(q, base, (x, y, censored));

    let mut note = None;
    let mut findings = Vec::new();
    let exceeds = limit_check(series, &last);
    let exceeded = exceeds.is_some();
    findings.extend(exceeds);
    let concerned = concern_check(series, &last).filter(|_| !exceeded);
    let past_concern = concerned.is_some();
    findings.extend(concerned);

    if base.len() < 2 {
        note = Some("one visit in this baseline: no trend yet".to_string());
    }

    let before_steps = findings.len();
    let mut stepped = steps(&w, floor, &mut findings, adjusted);
    let (mut drift_finding, mut drift_slope) = drift(&w, adjusted, floor, slopes);
    // Two or more steps in one baseline that add up to a climb are told as one drift over the
    // readings as they are, with its projection, not as a run of sudden rises.
    if findings.len() - before_steps >= 2 {
        let (climb, slope) = drift(&w, w.y, floor, slopes);
        if climb.is_some() {
            findings.truncate(before_steps);
            adjusted.clear();
            adjusted.extend_from_slice(w.y);
            (drift_finding, drift_slope, stepped) = (climb, slope, false);
        }
    }
    findings.extend(drift_finding);
    // Insulation that ends well clear of any level of concern has only wandered: healthy
    // readings move by a factor of several with humidity and what is left connected.
    if matches!(q, Quantity::IrLl | Quantity::IrLe)
        && (last.censored || last.value >= cfg.insulation_concern_mohm)
    {
        findings.retain(|f| !matches!(f.kind, FindingKind::Step | FindingKind::Drift));
    }

    let (mut fit, mut projection) = (None, None);
    w.uncensored(ux, uy);
    if let Some(ls) = least_squares(ux, uy) {
        let sigma_floor = floor.at(ls.y_mean) / 2.0;
        let sigma = ls.residual_se.unwrap_or(0.0).max(sigma_floor);
        let slope_se = sigma / ls.sxx.sqrt();
        // With nothing censored and no step taken out, drift's robust slope was worked out
        // over these very points.
        let theil_sen_per_year = if ls.n < 3 {
            None
        } else if !stepped && ux.len() == w.x.len() {
            drift_slope
        } else {
            theil_sen_in(ux, uy, slopes)
        };
        fit = Some(Fit {
            n: ls.n,
            least_squares_per_year: ls.slope,
            theil_sen_per_year,
            residual_se: ls.residual_se,
            slope_se_per_year: slope_se,
            intercept: ls.intercept,
        });
        // Projections aim at the level of concern while the last reading is short of it, then
        // at the limit.
        let target = match series.concern {
            Some(c) if !past_concern && !exceeded => Some((c.level, Some(c.words))),
            _ => series.limit.map(|l| (l, None)),
        };
        if let Some((limit, words)) = target {
            let x_last = *w.x.last().unwrap_or(&0.0);
            let inp = ProjectionInput {
                fit: &ls,
                slope_se,
                k: cfg.projection_k,
                limit_work: to_work(q, limit.value),
                limit: limit.value,
                worse: q.worse(),
                start: base[0].date,
                x_last,
                horizon_years: cfg.horizon_years,
            };
            projection = project(&inp);
            let span = ux.last().unwrap_or(&0.0) - ux.first().unwrap_or(&0.0);
            let beyond_noise = w.sign * ls.slope * span > floor.at(uy[0]);
            // A line already past the level at the last visit while the reading is not says
            // the line does not fit; and insulation resistance wanders too far for two
            // readings to make a trend.
            // Insulation is projected only once it is in the range of concern.
            let fits = match q {
                Quantity::IrLl | Quantity::IrLe => {
                    ls.n >= 3 && last.value < cfg.insulation_concern_mohm
                }
                _ => q.scale() == Scale::Linear || ls.n >= 3,
            };
            if let Some(p) = projection
                && !exceeded
                && beyond_noise
                && fits
                && p.date > last.date
                && p.date < next_due
            {
                findings.push(approaching(q, &last, (limit.value, words), &p, next_due));
            }
        }
    } else if base.len() >= 2 {
        note = Some("fewer than two uncensored readings: no fitted slope".to_string());
    }

    let margin = series
        .limit
        .map(|l| margin_used(l.kind, l.value, last.value));
    for f in &mut findings {
        f.last_value = last.value;
        f.last_censored = last.censored;
        f.limit = series.limit;
        f.margin_used = margin;
    }
    super::finding::rank(&mut findings);
    (fit, projection, findings, note)
}

fn margin_used(kind: LimitKind, limit: f64, value: f64) -> f64 {
    match kind {
        LimitKind::Max => value / limit,
        LimitKind::Min => limit / value,
    }
}

/// Finds steps, pushing a finding for each, and leaves in `adj` the working values with every
/// found step taken out of the readings after it. True when a step was found.
fn steps(
    w: &Work<'_>,
    floor: &super::NoiseFloor,
    out: &mut Vec<Finding>,
    adj: &mut Vec<f64>,
) -> bool {
    let q = w.q;
    adj.clear();
    adj.extend_from_slice(w.y);
    let mut stepped = false;
    for i in 2..adj.len() {
        let prev = i - 1;
        let Some(jump) =
            w.worsening_at_least((adj[prev], w.censored[prev]), (adj[i], w.censored[i]))
        else {
            continue;
        };
        let f = floor.at(w.y[prev]) + w.unknown_temperature(&[prev, i]);
        if jump <= f {
            continue;
        }
        let predicted = predict(w, &adj[..i], w.x[i]);
        let unexplained = w.sign * (adj[i] - predicted);
        if unexplained <= f {
            continue;
        }
        let (from, to) = (&w.pts[prev], &w.pts[i]);
        let shift = adj[i] - predicted;
        for v in &mut adj[i..] {
            *v -= shift;
        }
        stepped = true;
        // The prediction on the readings' own scale (with earlier steps put back), so that the
        // reading less the prediction is the unexplained part the sentence names.
        out.push(step_finding(
            q,
            from,
            to,
            from_work(q, w.y[i] - shift),
            unexplained,
            f,
        ));
    }
    stepped
}

/// What the readings before `x` predict at `x`: their robust line when it is worsening and
/// none of them is censored, else the last of them. An improving earlier line is not carried
/// forward, since a noisy fall would otherwise make the next ordinary reading look like a step.
fn predict(w: &Work<'_>, earlier: &[f64], x: f64) -> f64 {
    let last = earlier[earlier.len() - 1];
    if w.censored[..earlier.len()].iter().any(|&c| c) {
        return last;
    }
    let xs = &w.x[..earlier.len()];
    let Some(b) = theil_sen(xs, earlier) else {
        return last;
    };
    if w.sign * b <= 0.0 {
        return last;
    }
    match median_intercept(xs, earlier, b) {
        Some(a) => a + b * x,
        None => last,
    }
}

/// The drift finding, if any, and the robust slope it was judged on.
fn drift(
    w: &Work<'_>,
    adjusted: &[f64],
    floor: &super::NoiseFloor,
    slopes: &mut Vec<f64>,
) -> (Option<Finding>, Option<f64>) {
    let n = adjusted.len();
    if n < 2 {
        return (None, None);
    }
    let slope = w.robust_slope(adjusted, slopes);
    (
        slope.and_then(|b| drift_finding(w, adjusted, floor, b)),
        slope,
    )
}
