//! The input side: what was measured, when, and against which limit.

use chrono::NaiveDate;
use serde::{Serialize, Serializer};

use super::TrendError;

/// One leg of a ring final circuit's end-to-end readings.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum RingLeg {
    R1,
    Rn,
    R2,
}

/// A measured quantity. Serialises to its stable key (`ze`, `ra`, `zs`, `r1r2`, `r1rn`, `r2`,
/// `ring`, `ir_ll`, `ir_le`, `rcd`); the three ring legs share the key `ring`.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub enum Quantity {
    Ze,
    /// Ze of a TT installation: the supply's loop and the installation's own earth electrode.
    /// It swings with the seasons by a factor, so it is judged on a log scale.
    ZeTt,
    /// The resistance of a TT installation's own earth electrode, measured on its own. It
    /// swings with the seasons as the electrode's part of a TT Ze does, so it is judged on a
    /// log scale too.
    Ra,
    Zs,
    R1r2,
    R1rn,
    R2,
    Ring(RingLeg),
    IrLl,
    IrLe,
    Rcd,
}

/// Which way a reading moves when the installation gets worse.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Worse {
    /// Resistances, impedances, trip times: the limit is a maximum.
    Higher,
    /// Insulation resistance: the limit is a minimum.
    Lower,
}

/// The scale on which changes are judged.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Scale {
    Linear,
    /// Insulation resistance spans decades, so changes are judged as ratios (log10).
    Log10,
}

impl Quantity {
    pub fn key(self) -> &'static str {
        match self {
            Quantity::Ze | Quantity::ZeTt => "ze",
            Quantity::Ra => "ra",
            Quantity::Zs => "zs",
            Quantity::R1r2 => "r1r2",
            Quantity::R1rn => "r1rn",
            Quantity::R2 => "r2",
            Quantity::Ring(_) => "ring",
            Quantity::IrLl => "ir_ll",
            Quantity::IrLe => "ir_le",
            Quantity::Rcd => "rcd",
        }
    }

    /// The name used in sentences, in the trade's own terms.
    pub fn label(self) -> &'static str {
        match self {
            Quantity::Ze => "Ze",
            Quantity::ZeTt => "Ze (TT, with the earth electrode)",
            Quantity::Ra => "Ra (earth electrode)",
            Quantity::Zs => "Zs",
            Quantity::R1r2 => "R1+R2",
            Quantity::R1rn => "R1+Rn",
            Quantity::R2 => "R2",
            Quantity::Ring(RingLeg::R1) => "ring r1",
            Quantity::Ring(RingLeg::Rn) => "ring rn",
            Quantity::Ring(RingLeg::R2) => "ring r2",
            Quantity::IrLl => "IR L–L",
            Quantity::IrLe => "IR L–E",
            Quantity::Rcd => "RCD trip time",
        }
    }

    pub fn unit(self) -> &'static str {
        match self {
            Quantity::IrLl | Quantity::IrLe => "MΩ",
            Quantity::Rcd => "ms",
            _ => "Ω",
        }
    }

    pub fn worse(self) -> Worse {
        match self {
            Quantity::IrLl | Quantity::IrLe => Worse::Lower,
            _ => Worse::Higher,
        }
    }

    pub fn scale(self) -> Scale {
        match self {
            Quantity::IrLl | Quantity::IrLe | Quantity::ZeTt | Quantity::Ra => Scale::Log10,
            _ => Scale::Linear,
        }
    }

    /// Conductor resistances that change with copper temperature, so a reading without an
    /// ambient temperature could not be normalised to 20 °C.
    pub fn temperature_sensitive(self) -> bool {
        matches!(
            self,
            Quantity::Zs | Quantity::R1r2 | Quantity::R1rn | Quantity::R2 | Quantity::Ring(_)
        )
    }

    /// The kind of limit that fits this quantity.
    pub fn limit_kind(self) -> LimitKind {
        match self.worse() {
            Worse::Higher => LimitKind::Max,
            Worse::Lower => LimitKind::Min,
        }
    }
}

impl Serialize for Quantity {
    fn serialize<S: Serializer>(&self, s: S) -> Result<S::Ok, S::Error> {
        s.serialize_str(self.key())
    }
}

impl std::fmt::Display for Quantity {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str(self.label())
    }
}

#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum LimitKind {
    Max,
    Min,
}

/// A limit in the same units and on the same basis (20 °C or not) as the points' `value`.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Limit {
    pub value: f64,
    pub kind: LimitKind,
}

impl Limit {
    pub fn max(value: f64) -> Limit {
        Limit {
            value,
            kind: LimitKind::Max,
        }
    }

    pub fn min(value: f64) -> Limit {
        Limit {
            value,
            kind: LimitKind::Min,
        }
    }
}

/// One reading at one visit.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Point {
    pub date: NaiveDate,
    /// As read from the instrument.
    pub raw: f64,
    /// Normalised to 20 °C when `ambient_c` is known; otherwise equal to `raw`.
    pub value: f64,
    pub ambient_c: Option<f64>,
    /// Over-range: the true value is at least `value` (a lower bound, never a value).
    pub censored: bool,
}

impl Point {
    /// A reading with no temperature correction.
    pub fn raw(date: NaiveDate, raw: f64) -> Point {
        Point {
            date,
            raw,
            value: raw,
            ambient_c: None,
            censored: false,
        }
    }

    /// A reading the caller has normalised to 20 °C from the ambient temperature.
    pub fn normalised(date: NaiveDate, raw: f64, value: f64, ambient_c: f64) -> Point {
        Point {
            date,
            raw,
            value,
            ambient_c: Some(ambient_c),
            censored: false,
        }
    }

    /// An over-range reading such as `>200`: the bound, not a value.
    pub fn over_range(date: NaiveDate, bound: f64) -> Point {
        Point {
            date,
            raw: bound,
            value: bound,
            ambient_c: None,
            censored: true,
        }
    }
}

/// A level short of the limit at which a reading already calls for investigation: 2 MΩ for
/// insulation resistance, 200 Ω for a TT installation's Ze. Projections aim at it when the
/// series has one.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Concern {
    pub level: Limit,
    /// What the level is, in words: "the investigation level".
    pub words: &'static str,
    /// What a reading past it calls for, in words.
    pub advice: &'static str,
}

/// Every reading of one quantity on one circuit (or origin), with the events that restart it.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Series {
    pub quantity: Quantity,
    /// In any order; analysis sorts them by date.
    pub points: Vec<Point>,
    /// Register events (device changed, circuit replaced, terminations remade, board
    /// replaced). The trend restarts from the first point on or after the latest reset.
    pub baseline_resets: Vec<NaiveDate>,
    pub limit: Option<Limit>,
    pub concern: Option<Concern>,
}

impl Series {
    pub fn new(quantity: Quantity, points: Vec<Point>) -> Series {
        Series {
            quantity,
            points,
            baseline_resets: Vec::new(),
            limit: None,
            concern: None,
        }
    }

    pub fn with_limit(mut self, limit: Limit) -> Series {
        self.limit = Some(limit);
        self
    }

    pub fn with_reset(mut self, date: NaiveDate) -> Series {
        self.baseline_resets.push(date);
        self
    }

    /// The points sorted by date, checked for values the analysis cannot use.
    pub fn sorted_points(&self) -> Result<Vec<Point>, TrendError> {
        let mut pts = self.points.clone();
        self.sort_and_check(&mut pts)?;
        Ok(pts)
    }

    /// [`Self::sorted_points`] without the copy: the points are taken out of the series.
    pub(crate) fn take_sorted_points(&mut self) -> Result<Vec<Point>, TrendError> {
        let mut pts = std::mem::take(&mut self.points);
        self.sort_and_check(&mut pts)?;
        Ok(pts)
    }

    fn sort_and_check(&self, pts: &mut [Point]) -> Result<(), TrendError> {
        let q = self.quantity;
        pts.sort_by_key(|p| p.date);
        for p in pts.iter() {
            for (field, v) in [("raw", p.raw), ("value", p.value)] {
                if !v.is_finite() {
                    return Err(TrendError::NotFinite {
                        quantity: q,
                        date: p.date,
                        field,
                    });
                }
            }
            if let Some(t) = p.ambient_c
                && !t.is_finite()
            {
                return Err(TrendError::NotFinite {
                    quantity: q,
                    date: p.date,
                    field: "ambient_c",
                });
            }
            let bad = match q.scale() {
                Scale::Log10 => p.value <= 0.0,
                Scale::Linear => p.value < 0.0,
            };
            if bad {
                return Err(TrendError::OutOfRange {
                    quantity: q,
                    date: p.date,
                    value: p.value,
                    expected: match q.scale() {
                        Scale::Log10 => "above 0",
                        Scale::Linear => "0 or more",
                    },
                });
            }
        }
        if let Some(w) = pts.windows(2).find(|w| w[0].date == w[1].date) {
            return Err(TrendError::DuplicateDate {
                quantity: q,
                date: w[0].date,
            });
        }
        if let Some(l) = self.limit {
            if !l.value.is_finite() || l.value <= 0.0 {
                return Err(TrendError::BadLimit {
                    quantity: q,
                    value: l.value,
                });
            }
            if l.kind != q.limit_kind() {
                return Err(TrendError::LimitKind {
                    quantity: q,
                    expected: q.limit_kind(),
                });
            }
        }
        Ok(())
    }

    /// The latest reset date, if any.
    pub fn last_reset(&self) -> Option<NaiveDate> {
        self.baseline_resets.iter().copied().max()
    }
}

/// The points of the current baseline: those on or after the latest reset.
pub fn current_baseline(sorted: &[Point], last_reset: Option<NaiveDate>) -> &[Point] {
    match last_reset {
        None => sorted,
        Some(r) => {
            let start = sorted.partition_point(|p| p.date < r);
            &sorted[start..]
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn d(y: i32, m: u32, day: u32) -> NaiveDate {
        NaiveDate::from_ymd_opt(y, m, day).unwrap()
    }

    #[test]
    fn keys_are_stable_and_ring_legs_share_one() {
        let keys: Vec<String> = [
            Quantity::Ze,
            Quantity::Zs,
            Quantity::R1r2,
            Quantity::R1rn,
            Quantity::R2,
            Quantity::Ring(RingLeg::R1),
            Quantity::Ring(RingLeg::Rn),
            Quantity::Ring(RingLeg::R2),
            Quantity::IrLl,
            Quantity::IrLe,
            Quantity::Rcd,
        ]
        .iter()
        .map(|q| serde_json::to_string(q).unwrap())
        .collect();
        assert_eq!(
            keys,
            [
                "\"ze\"",
                "\"zs\"",
                "\"r1r2\"",
                "\"r1rn\"",
                "\"r2\"",
                "\"ring\"",
                "\"ring\"",
                "\"ring\"",
                "\"ir_ll\"",
                "\"ir_le\"",
                "\"rcd\""
            ]
        );
    }

    #[test]
    fn baseline_starts_on_or_after_the_latest_reset() {
        let pts = [
            Point::raw(d(2015, 1, 1), 1.0),
            Point::raw(d(2018, 1, 1), 1.0),
            Point::raw(d(2021, 1, 1), 1.0),
        ];
        assert_eq!(current_baseline(&pts, None).len(), 3);
        assert_eq!(current_baseline(&pts, Some(d(2018, 1, 1))).len(), 2);
        assert_eq!(current_baseline(&pts, Some(d(2019, 6, 1))).len(), 1);
        assert_eq!(current_baseline(&pts, Some(d(2022, 1, 1))).len(), 0);
    }

    #[test]
    fn bad_points_are_named() {
        let s = Series::new(Quantity::IrLe, vec![Point::raw(d(2020, 1, 1), 0.0)]);
        let e = s.sorted_points().unwrap_err().to_string();
        assert!(e.contains("IR L–E") && e.contains("2020-01-01"), "{e}");
        let s = Series::new(
            Quantity::R1r2,
            vec![
                Point::raw(d(2020, 1, 1), 0.5),
                Point::raw(d(2020, 1, 1), 0.6),
            ],
        );
        assert!(matches!(
            s.sorted_points(),
            Err(TrendError::DuplicateDate { .. })
        ));
        let s = Series::new(Quantity::R1r2, vec![Point::raw(d(2020, 1, 1), f64::NAN)]);
        assert!(matches!(
            s.sorted_points(),
            Err(TrendError::NotFinite { .. })
        ));
        let s = Series::new(Quantity::IrLe, vec![]).with_limit(Limit::max(1.0));
        assert!(matches!(
            s.sorted_points(),
            Err(TrendError::LimitKind { .. })
        ));
    }
}
