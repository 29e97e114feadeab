//! The supply: Ze at the origin, visit by visit. On TN it is read against the typical maximum
//! the network operators declare (advice, not a limit); on TT it includes the installation's
//! own earth electrode and is judged on a log scale against seasonal swing.

use std::borrow::Cow;

use chrono::NaiveDate;

use super::{SeriesAnalysis, Settings};
use crate::limits;
use crate::model::{Board, Earthing};
use crate::store::PropertyHistory;
use crate::trend::{self, Concern, Finding, FindingKind, Limit, Point, Quantity, Series};

/// The supply: Ze at the origin, visit by visit, against the typical declared maximum.
pub(super) fn supply_series(
    h: &PropertyHistory,
    origin: Option<&Board>,
    horizon: NaiveDate,
    settings: &Settings,
) -> Option<SeriesAnalysis> {
    let origin_id = origin.map(|b| b.id);
    let points: Vec<Point> = h
        .visits
        .iter()
        .filter_map(|v| {
            let at_board = origin_id.and_then(|id| {
                h.board_tests
                    .iter()
                    .find(|t| t.visit_id == v.id && t.board_id == id)
                    .and_then(|t| t.ze_ohm)
            });
            at_board
                .or(v.ze_ohm)
                .filter(|z| z.is_finite() && *z >= 0.0)
                .map(|z| Point::raw(v.date, z))
        })
        .collect();
    if points.is_empty() {
        return None;
    }
    if origin.and_then(|b| b.earthing) == Some(Earthing::Tt) {
        return tt_supply_series(points, horizon, settings);
    }
    let advisory = origin.and_then(|b| b.earthing).map(limits::typical_max_ze);
    // The declared maximum is advice, not a limit: the series has none, so it is never the
    // basis of an "exceeds"; a Ze above it is reported as a supply matter below.
    let series = Series::new(Quantity::Ze, points);
    let mut report = trend::analyse(&series, horizon, &settings.trend).ok()?;
    if let (Some(a), Some(last)) = (&advisory, report.points.last())
        && let Some(note) = a.note_for(last.value)
    {
        let mut f = Finding::new(
            FindingKind::ZeRise,
            Quantity::Ze,
            last.date,
            format!(
                "{note}, at the last visit ({}): tell the network operator and check the main earthing and bonding.",
                last.date
            ),
        );
        f.last_value = last.value;
        f.limit = Some(Limit::max(a.typical_max_ze_ohm));
        f.margin_used = Some(last.value / a.typical_max_ze_ohm);
        // Above the declared figure is the more telling reason; a rise within it stays beside.
        report.findings.insert(0, f);
    }
    Some(SeriesAnalysis {
        quantity: "ze",
        label: Cow::Borrowed("Ze at the origin"),
        basis: Some(Cow::Borrowed(
            "as measured; Ze is not corrected for temperature",
        )),
        limit: advisory.as_ref().map(|a| a.typical_max_ze_ohm),
        limit_words: advisory
            .as_ref()
            .map(|a| format!("typical maximum declared for {} (advisory)", a.earthing).into()),
        limit_source: advisory.map(|a| a.source),
        events: Vec::new(),
        report,
    })
}

/// A TT electrode whose resistance is above 200 Ω may not be stable (BS 7671 Table 41.5,
/// note 2; from memory for the note's number).
pub const TT_ELECTRODE_STABLE_OHM: f64 = 200.0;

const TT_CONCERN: Concern = Concern {
    level: Limit {
        value: TT_ELECTRODE_STABLE_OHM,
        kind: crate::trend::LimitKind::Max,
    },
    words: "the level above which an earth electrode's resistance may not be stable (BS 7671 Table 41.5, note)",
    advice: "the installation's earth electrode and its connection should be tested and, if need be, improved: the landlord's to put right, not the network operator's",
};

/// Ze of a TT installation: the supply's loop plus the installation's own electrode, judged on
/// a log scale against seasonal swing, with the electrode named as the cause of a rise. The
/// circuits' loop readings carry their own Table 41.5 limits with the RCD.
fn tt_supply_series(
    points: Vec<Point>,
    horizon: NaiveDate,
    settings: &Settings,
) -> Option<SeriesAnalysis> {
    let points = points.into_iter().filter(|p| p.value > 0.0).collect();
    let mut series = Series::new(Quantity::ZeTt, points);
    series.concern = Some(TT_CONCERN);
    let report = trend::analyse(&series, horizon, &settings.trend).ok()?;
    Some(SeriesAnalysis {
        quantity: "ze",
        label: Cow::Borrowed("Ze at the origin (TT: with the installation's earth electrode)"),
        basis: Some(Cow::Borrowed(
            "as measured; judged on a log scale, since an electrode's resistance swings with the seasons",
        )),
        limit: None,
        limit_words: None,
        limit_source: None,
        events: Vec::new(),
        report,
    })
}

/// The earth electrode's resistance Ra, as recorded visit by visit (a TT installation's own
/// electrode, measured on its own): judged on a log scale like a TT Ze, with the same seasonal
/// floor, and above 200 Ω an electrode that may not be stable is *investigate* (common
/// practice, the team's reference sheet; BS 7671 Table 41.5, note, from memory).
pub(super) fn electrode_series(
    h: &PropertyHistory,
    horizon: NaiveDate,
    settings: &Settings,
) -> Option<SeriesAnalysis> {
    let points: Vec<Point> = h
        .visits
        .iter()
        .filter_map(|v| {
            v.supply
                .ra_ohm
                .filter(|r| r.is_finite() && *r > 0.0)
                .map(|r| Point::raw(v.date, r))
        })
        .collect();
    if points.is_empty() {
        return None;
    }
    let mut series = Series::new(Quantity::Ra, points);
    series.concern = Some(Concern {
        words: "the level above which an earth electrode's resistance may not be stable (BS 7671 Table 41.5, note)",
        ..TT_CONCERN
    });
    let report = trend::analyse(&series, horizon, &settings.trend).ok()?;
    Some(SeriesAnalysis {
        quantity: "ra",
        label: Cow::Borrowed("Ra, the earth electrode's resistance"),
        basis: Some(Cow::Borrowed(
            "as measured; judged on a log scale, since an electrode's resistance swings with the seasons",
        )),
        limit: None,
        limit_words: None,
        limit_source: None,
        events: Vec::new(),
        report,
    })
}
