//! Building each circuit's series from the history, with the limit each is judged against.

use foldhash::{HashMap, HashMapExt};
use std::borrow::Cow;
use std::rc::Rc;

use chrono::NaiveDate;

use super::rcd_devices::RcdVisit;
use super::{CircuitAnalysis, Flag, SeriesAnalysis, Settings, make_flag, note_limits_error};
use crate::limits::{
    self, CircuitFacts, CircuitUse, DisconnectionChoice, FaultPathInputs, IrCircuit, MeasuredRule,
    RcdTest, RcdTiming, RingFindingKind, RingReadings, RingTolerance, Source, SourceStatus,
    TestConditions, ZsLimit,
};
use crate::model::{
    Board, BoardTest, ChangeKind, Circuit, CircuitChange, CircuitKind, Device, Earthing,
    Insulation, Megohms, Readings, TestRecord, Visit,
};
use crate::store::PropertyHistory;
use crate::trend::{
    self, Concern, Finding, FindingKind, Limit, Point, Quantity, RingLeg, Series, Severity,
};

/// Insulation resistance below 2 MΩ is usually investigated and its source found, though it is
/// above the Table 64 minimum of 1 MΩ (from memory: the trade's usual practice, as in IET
/// Guidance Note 3).
pub const IR_INVESTIGATION_MOHM: f64 = 2.0;

const IR_CONCERN: Concern = Concern {
    level: Limit {
        value: IR_INVESTIGATION_MOHM,
        kind: crate::trend::LimitKind::Min,
    },
    words: "the investigation level",
    advice: "insulation this low is usually investigated and its source found, though it is above the Table 64 minimum of 1 MΩ",
};

/// How a supplementary series' label ends.
const SUPPLEMENTARY: &str = "(supplementary)";
/// The label of the RCD's supplementary series at 5 × IΔn.
pub const RCD_FIVE_LABEL: &str = "RCD trip time at 5 × IΔn (supplementary)";

/// One reading of the lineage: the visit and the circuit's readings at it.
struct Row<'a> {
    visit: &'a Visit,
    readings: &'a Readings,
    /// The visit's shared continuity offset (leads not nulled), taken off its continuity
    /// readings; 0 at most visits.
    offset: f64,
    /// Ze at the circuit's board at that visit, on the basis [`Index::board_ze`] names.
    ze: Option<f64>,
    how: ZeHow,
    /// The board the lineage's circuit was on at that visit.
    board_id: i64,
}

/// How the Ze a circuit's loop is built on was found at its board (BS 7671 Part 6: at a
/// distribution board fed from another, the loop impedance at its incoming terminals, Zdb,
/// takes the place of Ze; common practice, no source, for the sum when Zdb was not measured).
#[derive(Debug, Clone, Copy, PartialEq)]
pub(super) enum ZeHow {
    /// At the origin: Ze measured there (or the visit's Ze).
    Origin,
    /// Zdb measured at the circuit's own board, fed from another.
    Zdb,
    /// The feeding board's Ze (or Zdb) plus the sub-main's R1+R2.
    SubMain { submain_ohm: f64 },
    /// Neither Zdb nor the sub-main's R1+R2 recorded at the board: the feeding board's figure
    /// alone, which leaves the sub-main out.
    LeavesOutSubMain,
}

/// A resistance reading as a point: normalised to 20 °C when the ambient is known.
fn resistance_point(date: NaiveDate, raw: f64, ambient: Option<f64>) -> Option<Point> {
    if !raw.is_finite() || raw < 0.0 {
        return None;
    }
    Some(
        match ambient.and_then(|t| limits::to_r20(raw, t).ok().map(|v| (t, v))) {
            Some((t, v)) => Point::normalised(date, raw, v, t),
            None => Point::raw(date, raw),
        },
    )
}

fn ir_point(date: NaiveDate, m: Megohms) -> Option<Point> {
    if !m.value.is_finite() || m.value <= 0.0 {
        return None;
    }
    Some(if m.over_range {
        Point::over_range(date, m.value)
    } else {
        Point::raw(date, m.value)
    })
}

/// The lineage of a circuit: the circuits it replaced, oldest first, then itself.
fn lineage<'a>(c: &'a Circuit, by_id: &HashMap<i64, &'a Circuit>) -> Vec<&'a Circuit> {
    let mut chain = vec![c];
    while let Some(prev) = chain.last().and_then(|x| x.replaces) {
        match by_id.get(&prev) {
            // A chain is a few circuits long: a linear search for a loop costs less than a set.
            Some(p) if !chain.iter().any(|x| x.id == p.id) => chain.push(p),
            _ => break,
        }
    }
    chain.reverse();
    chain
}

fn event_words(
    kind: ChangeKind,
    field: Option<&str>,
    old: Option<&str>,
    new: Option<&str>,
) -> String {
    let what = kind.as_str().replace('_', " ");
    match (field, old, new) {
        (Some(f), Some(o), Some(n)) if f != "circuit" => format!("{what}: {f} {o} → {n}"),
        (_, Some(o), Some(n)) => format!("{what}: {o} → {n}"),
        // A circuit the register lacked, added at a visit (`Store::add_circuit_at_visit`).
        (Some("circuit"), None, Some(n)) => format!("{n} added to the register"),
        _ => what,
    }
}

/// Lookups over one property's history, built once and shared by its circuits.
pub(super) struct Index<'a> {
    pub(super) by_id: HashMap<i64, &'a Circuit>,
    boards: HashMap<i64, &'a Board>,
    pub(super) visits: HashMap<i64, &'a Visit>,
    pub(super) records: HashMap<i64, Vec<&'a TestRecord>>,
    /// What was measured at a board at a visit: (visit_id, board_id) → the board test.
    board_tests: HashMap<(i64, i64), &'a BoardTest>,
    /// A property's boards by designation, for the board feeding a sub-board.
    by_designation: HashMap<&'a str, &'a Board>,
    changes: HashMap<i64, Vec<&'a CircuitChange>>,
    /// Visits whose continuity readings sit high by a shared amount (leads not nulled), Ω.
    offsets: HashMap<i64, f64>,
}

impl<'a> Index<'a> {
    pub(super) fn new(
        h: &'a PropertyHistory,
        offsets: &[super::offsets::VisitOffset],
    ) -> Index<'a> {
        let mut records: HashMap<i64, Vec<&TestRecord>> = HashMap::with_capacity(h.circuits.len());
        for r in &h.records {
            records.entry(r.circuit_id).or_default().push(r);
        }
        let mut changes: HashMap<i64, Vec<&CircuitChange>> = HashMap::new();
        for ch in &h.changes {
            changes.entry(ch.circuit_id).or_default().push(ch);
        }
        Index {
            by_id: h.circuits.iter().map(|x| (x.id, x)).collect(),
            boards: h.boards.iter().map(|b| (b.id, b)).collect(),
            visits: h.visits.iter().map(|v| (v.id, v)).collect(),
            records,
            board_tests: h
                .board_tests
                .iter()
                .map(|t| ((t.visit_id, t.board_id), t))
                .collect(),
            by_designation: h
                .boards
                .iter()
                .map(|b| (b.designation.as_str(), b))
                .collect(),
            changes,
            offsets: offsets.iter().map(|o| (o.visit_id, o.offset_ohm)).collect(),
        }
    }
}

impl Index<'_> {
    /// A board's feeding board, when it has one in the register.
    fn parent(&self, board_id: i64) -> Option<&Board> {
        let b = self.boards.get(&board_id)?;
        let p = self.by_designation.get(b.fed_from.as_deref()?)?;
        (p.id != board_id).then_some(*p)
    }

    /// Ze at a board at a visit and how it was found: at the origin, Ze measured there or the
    /// visit's; at a board fed from another, Zdb when recorded (a Ze recorded at that board is
    /// its Zdb), else the feeding board's figure plus the sub-main's R1+R2, else the feeding
    /// board's figure alone, which leaves the sub-main out.
    pub(super) fn board_ze(&self, visit: &Visit, board_id: i64) -> (Option<f64>, ZeHow) {
        self.board_ze_at(visit, board_id, 0)
    }

    fn board_ze_at(&self, visit: &Visit, board_id: i64, depth: u8) -> (Option<f64>, ZeHow) {
        let test = self.board_tests.get(&(visit.id, board_id));
        let parent = self.parent(board_id).filter(|_| depth < 8);
        let Some(parent) = parent else {
            return (test.and_then(|t| t.ze_ohm).or(visit.ze_ohm), ZeHow::Origin);
        };
        if let Some(z) = test.and_then(|t| t.zdb_ohm.or(t.ze_ohm)) {
            return (Some(z), ZeHow::Zdb);
        }
        let (up, up_how) = self.board_ze_at(visit, parent.id, depth + 1);
        match (up, test.and_then(|t| t.submain_r1r2_ohm)) {
            (Some(u), Some(sm)) if up_how != ZeHow::LeavesOutSubMain => {
                (Some(u + sm), ZeHow::SubMain { submain_ohm: sm })
            }
            (up, _) => (up, ZeHow::LeavesOutSubMain),
        }
    }

    /// The words of [`Self::board_ze`]'s figure: "Ze 0.28 Ω at the origin", "Zdb 0.41 Ω
    /// measured at DB2", "Ze 0.28 Ω at the origin + sub-main R1+R2 0.10 Ω".
    pub(super) fn board_ze_words(&self, visit: &Visit, board_id: i64) -> String {
        self.words_at(visit, board_id, 0)
    }

    fn words_at(&self, visit: &Visit, board_id: i64, depth: u8) -> String {
        let (ze, how) = self.board_ze_at(visit, board_id, depth);
        let ze = ze.unwrap_or_default();
        let name = self
            .boards
            .get(&board_id)
            .map_or("?", |b| b.designation.as_str());
        let up = || {
            self.parent(board_id)
                .map(|p| self.words_at(visit, p.id, depth + 1))
                .unwrap_or_default()
        };
        match how {
            ZeHow::Origin => format!("Ze {ze:.2} Ω at the origin"),
            ZeHow::Zdb => format!("Zdb {ze:.2} Ω measured at {name}"),
            ZeHow::SubMain { submain_ohm } => {
                format!("{} + sub-main R1+R2 {submain_ohm:.2} Ω", up())
            }
            ZeHow::LeavesOutSubMain => up(),
        }
    }
}

/// What a circuit's loop readings are judged against, from its register details alone.
#[derive(Clone)]
struct LoopLimits {
    disconnection: Option<DisconnectionChoice>,
    zs_limit: Option<ZsLimit>,
    /// The measured-value maximum Zs at 20 °C (or the TT limit), with its words and source.
    limit: Option<f64>,
    words: Option<String>,
    source: Option<Source>,
    notes: Vec<String>,
}

/// Everything [`LoopLimits`] depend on.
#[derive(Clone, Copy, PartialEq, Eq, Hash)]
struct LoopKey {
    ring: bool,
    device: Option<Device>,
    disconnect_s: Option<u64>,
    earthing: Option<Earthing>,
    rcd_ma: Option<u16>,
    insulation: Option<Insulation>,
    assumed_insulation: Insulation,
    rule: MeasuredRule,
    words: bool,
}

/// Limits already worked out, kept by one thread across the properties it analyses: most
/// circuits of a portfolio share a few kinds of device, and working a limit out again means
/// formatting its rule texts again (a tenth of the worklist's time).
#[derive(Default)]
pub(crate) struct LimitMemo {
    /// Shared rather than copied out: the limits' texts would be an allocation each.
    loops: HashMap<LoopKey, Rc<LoopLimits>>,
}

impl LimitMemo {
    /// Enough for any real portfolio's variety; past it the memo starts again.
    const CAPACITY: usize = 4096;

    fn loop_limits(&mut self, k: LoopKey) -> Rc<LoopLimits> {
        if let Some(l) = self.loops.get(&k) {
            return Rc::clone(l);
        }
        if self.loops.len() >= Self::CAPACITY {
            self.loops.clear();
        }
        let l = Rc::new(loop_limits(&k));
        self.loops.insert(k, Rc::clone(&l));
        l
    }
}

fn loop_limits(k: &LoopKey) -> LoopLimits {
    let mut notes = Vec::new();
    let tt = k.earthing == Some(Earthing::Tt);

    let disconnection = match limits::default_disconnection(&CircuitFacts {
        circuit_use: k.ring.then_some(CircuitUse::Sockets),
        rating_a: k.device.map(|d| d.rating_a()),
        recorded_s: k.disconnect_s.map(f64::from_bits),
        earthing: k.earthing,
    }) {
        Ok(d) => Some(d),
        Err(e) => {
            note_limits_error(&mut notes, "disconnection time", &e);
            None
        }
    };

    let zs_limit = match (k.device, &disconnection) {
        (Some(d), Some(t)) if !tt => match limits::max_zs(&d, t.time) {
            Ok(z) => Some(z),
            Err(e) => {
                note_limits_error(&mut notes, "maximum Zs", &e);
                None
            }
        },
        (None, _) => {
            notes.push(
                "protective device not recorded: Zs and R1+Rn are not judged against a limit"
                    .into(),
            );
            None
        }
        _ => None,
    };

    // The Zs limit the series are compared with: readings are normalised to 20 °C, so the
    // measured-value limit is taken at 20 °C.
    let (limit, words, source): (Option<f64>, Option<String>, Option<Source>) = if tt {
        match k.rcd_ma.map(limits::tt_rcd_zs_max) {
            Some(Ok(l)) => (
                Some(l.zs_max_ohm),
                k.words.then(|| {
                    format!(
                        "maximum Zs for a TT circuit with a {} mA RCD (50 V / IΔn)",
                        l.rcd_ma
                    )
                }),
                Some(l.source),
            ),
            Some(Err(e)) => {
                note_limits_error(&mut notes, "TT limit", &e);
                (None, None, None)
            }
            None => {
                notes.push(
                    "TT circuit without an RCD recorded: earth fault loop not judged here".into(),
                );
                (None, None, None)
            }
        }
    } else if let Some(z) = &zs_limit {
        match limits::measured_limit(
            z.zs_max_ohm,
            k.rule,
            &TestConditions {
                temp_c: Some(20.0),
                insulation: k.insulation,
                assumed_insulation: k.assumed_insulation,
            },
        ) {
            Ok(m) => (
                Some(m.limit_ohm),
                k.words.then(|| match k.rule {
                    MeasuredRule::TemperatureCorrected => format!(
                        "measured-value maximum Zs for {} at 20 °C ({} tabulated)",
                        z.device_text, z.zs_max_ohm
                    ),
                    MeasuredRule::RuleOfThumb80 => format!(
                        "80 % of the tabulated {} Ω for {}",
                        z.zs_max_ohm, z.device_text
                    ),
                }),
                Some(Source {
                    citation: format!("{}; {}", z.source.citation, m.source.citation).into(),
                    status: if m.source.status == SourceStatus::Published {
                        z.source.status
                    } else {
                        m.source.status
                    },
                    rule: m.source.rule.clone(),
                }),
            ),
            Err(e) => {
                note_limits_error(&mut notes, "measured-value limit", &e);
                (None, None, None)
            }
        }
    } else {
        (None, None, None)
    };

    LoopLimits {
        disconnection,
        zs_limit,
        limit,
        words,
        source,
        notes,
    }
}

/// What every circuit of one property is analysed with.
pub(super) struct PropertyContext<'a> {
    pub h: &'a PropertyHistory,
    pub idx: &'a Index<'a>,
    /// The date projections are judged against: the next due inspection.
    pub horizon: NaiveDate,
    pub settings: &'a Settings,
    pub detail: super::Detail,
    /// The RCDs the register names, shared by several circuits.
    pub rcds: &'a super::rcd_devices::RecordedRcds,
}

pub(super) fn circuit_analysis(
    ctx: &PropertyContext,
    c: &Circuit,
    board: Option<&Board>,
    memo: &mut LimitMemo,
) -> CircuitAnalysis {
    let &PropertyContext {
        h,
        idx,
        horizon,
        settings,
        detail,
        rcds,
    } = ctx;
    // What only a report shows (words, report-only figures, series with nothing to say) is
    // not worked out for the worklist.
    let full = detail == super::Detail::Full;
    let chain = lineage(c, &idx.by_id);
    let board_name = board.map(|b| b.designation.clone()).unwrap_or_default();
    let lineage_labels = chain
        .iter()
        .filter(|_| full)
        .map(|x| {
            let b = idx
                .boards
                .get(&x.board_id)
                .map(|b| b.designation.as_str())
                .unwrap_or("?");
            format!("{b}/{}", x.number)
        })
        .collect();

    let mut rows: Vec<(Row, i64)> = Vec::with_capacity(
        chain
            .iter()
            .map(|x| idx.records.get(&x.id).map_or(0, Vec::len))
            .sum(),
    );
    rows.extend(
        chain
            .iter()
            .flat_map(|x| {
                idx.records
                    .get(&x.id)
                    .into_iter()
                    .flatten()
                    .map(move |r| (x, r))
            })
            .filter_map(|(x, r)| {
                let visit = idx.visits.get(&r.visit_id)?;
                let (ze, how) = idx.board_ze(visit, x.board_id);
                Some((
                    Row {
                        visit,
                        readings: &r.readings,
                        offset: idx.offsets.get(&r.visit_id).copied().unwrap_or(0.0),
                        ze,
                        how,
                        board_id: x.board_id,
                    },
                    r.circuit_id,
                ))
            }),
    );
    rows.sort_by_key(|(row, id)| (row.visit.date, *id == c.id));
    // Two lineage circuits read at one visit (should not happen): keep the later circuit's.
    rows.dedup_by(|later, earlier| {
        if later.0.visit.date == earlier.0.visit.date {
            std::mem::swap(later, earlier);
            true
        } else {
            false
        }
    });
    let rows: Vec<Row> = rows.into_iter().map(|(row, _)| row).collect();

    let mut events = Vec::new();
    let mut resets = Vec::new();
    let mut lineage_changes: Vec<&CircuitChange> = chain
        .iter()
        .flat_map(|x| idx.changes.get(&x.id).into_iter().flatten().copied())
        .collect();
    lineage_changes.sort_by_key(|ch| (ch.date, ch.id));
    for ch in lineage_changes {
        if ch.kind == ChangeKind::Retired {
            continue;
        }
        if full {
            events.push((
                ch.date,
                event_words(
                    ch.kind,
                    ch.field.as_deref(),
                    ch.old_value.as_deref(),
                    ch.new_value.as_deref(),
                ),
            ));
        }
        if ch.kind.resets_baseline() {
            resets.push(ch.date);
        }
    }

    let earthing = board.and_then(|b| b.earthing);
    let tt = earthing == Some(Earthing::Tt);
    let limits = memo.loop_limits(LoopKey {
        ring: c.kind == CircuitKind::Ring,
        device: c.device,
        disconnect_s: c.disconnect_s.map(f64::to_bits),
        earthing,
        rcd_ma: c.rcd_ma,
        insulation: c.insulation,
        assumed_insulation: settings.limits.assumed_insulation,
        rule: settings.limits.measured_rule,
        words: full,
    });
    let LoopLimits {
        disconnection,
        zs_limit,
        limit: loop_limit,
        words: loop_words,
        source: loop_source,
        notes,
    } = &*limits;
    let loop_limit = *loop_limit;
    let mut notes = notes.clone();

    let last_ze = rows.iter().rev().find_map(|r| r.ze);

    // Continuity readings less the visit's shared offset, if any; the point keeps the reading
    // as measured in `raw`.
    let resistance = |get: &dyn Fn(&Readings) -> Option<f64>| -> Vec<Point> {
        let mut points = Vec::with_capacity(rows.len());
        points.extend(rows.iter().filter_map(|r| {
            let raw = get(r.readings)?;
            let mut p =
                resistance_point(r.visit.date, (raw - r.offset).max(0.0), r.visit.ambient_c)?;
            p.raw = raw;
            Some(p)
        }));
        points
    };

    let checked = settings.trend.checked();
    let mut out: Vec<SeriesAnalysis> = Vec::with_capacity(10);
    let mut run = |quantity: Quantity,
                   key: &'static str,
                   label: &'static str,
                   basis: Option<Cow<'static, str>>,
                   points: Vec<Point>,
                   limit: Option<Limit>,
                   limit_words: Option<Cow<'static, str>>,
                   source: Option<&Source>,
                   notes: &mut Vec<String>| {
        if points.is_empty() {
            return;
        }
        let mut s = Series::new(quantity, points);
        s.baseline_resets = resets.clone();
        s.limit = limit;
        if matches!(quantity, Quantity::IrLl | Quantity::IrLe) {
            s.concern = Some(IR_CONCERN);
        }
        let mut analysed = match &checked {
            Ok(cfg) => trend::analyse_series(s, horizon, *cfg),
            Err(e) => Err(e.clone()),
        };
        // A supplementary test (RCD at 5 × IΔn) is judged on its last reading only, never
        // trended.
        if label.ends_with(SUPPLEMENTARY)
            && let Ok(r) = &mut analysed
        {
            r.findings.retain(|f| f.kind == FindingKind::Exceeds);
        }
        match analysed {
            // The worklist keeps only the series with something to say, and those the
            // cross-checks below read (R1+R2 and R1+Rn for the neutral, the ring's legs).
            Ok(report)
                if !full
                    && report.findings.is_empty()
                    && !matches!(key, "r1r2" | "r1rn" | "ring") => {}
            Ok(report) => out.push(SeriesAnalysis {
                quantity: key,
                label: Cow::Borrowed(label),
                basis: basis.filter(|_| full),
                limit: limit.map(|l| l.value),
                limit_words: limit_words.filter(|_| full),
                limit_source: source.cloned(),
                events: events.clone(),
                report,
            }),
            Err(e) => notes.push(format!("{label}: not analysed: {e}")),
        }
    };

    // Zs: measured where it was, otherwise Ze + R1+R2. Only the circuit's own part is
    // corrected for temperature; Ze is the supply's.
    let mut derived = 0;
    // Derived points at a board fed from another: (row, R1+R2 used), for the basis sentence.
    let mut at_sub_board: Vec<(&Row, f64)> = Vec::new();
    let zs_points: Vec<Point> = rows
        .iter()
        .filter_map(|r| {
            let amb = r.visit.ambient_c;
            let r1r2 = r.readings.r1r2_ohm.map(|v| (v - r.offset).max(0.0));
            let (raw, circuit_raw, ze) = match (r.readings.zs_ohm, r.ze, r1r2) {
                (Some(zs), ze, r12) => {
                    let part = r12.or(ze.map(|z| (zs - z).max(0.0))).unwrap_or(zs);
                    (zs, part, zs - part)
                }
                (None, Some(ze), Some(r12)) => {
                    derived += 1;
                    if r.how != ZeHow::Origin {
                        at_sub_board.push((r, r12));
                    }
                    (ze + r12, r12, ze)
                }
                _ => return None,
            };
            let p = resistance_point(r.visit.date, circuit_raw, amb)?;
            Some(match p.ambient_c {
                Some(t) => Point::normalised(r.visit.date, raw, ze + p.value, t),
                None => Point::raw(r.visit.date, raw),
            })
        })
        .collect();
    let zs_basis = full.then(|| {
        let how = if derived == 0 {
            "measured Zs".to_string()
        } else if derived == zs_points.len() {
            "Ze + R1+R2 (Zs not measured)".to_string()
        } else {
            format!(
                "measured Zs; Ze + R1+R2 at {} where Zs was not measured",
                crate::report::html::count(derived, "visit", "visits")
            )
        };
        format!("{how}; circuit part corrected to 20 °C where the ambient was recorded").into()
    });
    run(
        Quantity::Zs,
        "zs",
        "Zs",
        zs_basis,
        zs_points,
        loop_limit.map(Limit::max),
        loop_words.clone().map(Cow::Owned),
        loop_source.as_ref(),
        &mut notes,
    );

    run(
        Quantity::R1r2,
        "r1r2",
        "R1+R2",
        Some(Cow::Borrowed(
            "corrected to 20 °C where the ambient was recorded",
        )),
        resistance(&|r| r.r1r2_ohm),
        None,
        None,
        None,
        &mut notes,
    );
    run(
        Quantity::R2,
        "r2",
        "R2",
        Some(Cow::Borrowed(
            "corrected to 20 °C where the ambient was recorded",
        )),
        resistance(&|r| r.r2_ohm),
        None,
        None,
        None,
        &mut notes,
    );
    // The line–neutral loop Ze + R1+Rn is judged against the same device limit: the limit on
    // R1+Rn alone is that limit less the latest Ze.
    let rn_limit = match (loop_limit, last_ze) {
        (Some(l), Some(z)) if !tt && l > z => Some(limits::less_ze(l, z)),
        _ => None,
    };
    run(
        Quantity::R1rn,
        "r1rn",
        "R1+Rn",
        Some(Cow::Borrowed(
            "corrected to 20 °C where the ambient was recorded",
        )),
        resistance(&|r| r.r1rn_ohm),
        rn_limit.map(Limit::max),
        rn_limit.filter(|_| full).map(|l| {
            format!(
                "line–neutral check value (ohmtrail's practice, Reg 434.5.2; R1+Rn has no published maximum): {} less the latest Ze {:.2} Ω = {l:.2} Ω",
                loop_words.clone().unwrap_or_default(),
                last_ze.unwrap_or_default()
            )
            .into()
        }),
        loop_source.as_ref(),
        &mut notes,
    );
    for (leg, label, get) in [
        (
            RingLeg::R1,
            "ring r1",
            (|r: &Readings| r.ring_r1_ohm) as fn(&Readings) -> Option<f64>,
        ),
        (RingLeg::Rn, "ring rn", |r: &Readings| r.ring_rn_ohm),
        (RingLeg::R2, "ring r2", |r: &Readings| r.ring_r2_ohm),
    ] {
        run(
            Quantity::Ring(leg),
            "ring",
            label,
            Some(Cow::Borrowed(
                "end-to-end, corrected to 20 °C where the ambient was recorded",
            )),
            resistance(&get),
            None,
            None,
            None,
            &mut notes,
        );
    }
    // Judged against Table 64's minimum at the test voltage the latest reading recorded, where
    // it did; a circuit up to 500 V otherwise, at 500 V.
    let ir_min = rows
        .iter()
        .rev()
        .filter(|r| r.readings.ir_ll.is_some() || r.readings.ir_le.is_some())
        .find_map(|r| r.readings.ir_test_v)
        .and_then(|v| limits::ir_minimum_tested_at(IrCircuit::UpTo500V, v).ok())
        .unwrap_or_else(|| limits::ir_minimum(IrCircuit::UpTo500V));
    for (q, key, label, get) in [
        (
            Quantity::IrLl,
            "ir_ll",
            "IR L–L",
            (|r: &Readings| r.ir_ll) as fn(&Readings) -> Option<Megohms>,
        ),
        (Quantity::IrLe, "ir_le", "IR L–E", |r: &Readings| r.ir_le),
    ] {
        let points = rows
            .iter()
            .filter_map(|r| get(r.readings).and_then(|m| ir_point(r.visit.date, m)))
            .collect();
        run(
            q,
            key,
            label,
            Some(Cow::Borrowed(
                "as measured; over-range readings are lower bounds",
            )),
            points,
            Some(Limit::min(ir_min.minimum_mohm)),
            full.then(|| {
                format!(
                    "minimum for a circuit up to 500 V, {} V test",
                    ir_min.test_voltage_v
                )
                .into()
            }),
            Some(&ir_min.source),
            &mut notes,
        );
    }
    // RCD: the test at 1 × IΔn decides and is trended (BS 7671:2018+A2:2022 Reg 643.8). The
    // 5 × IΔn test, where recorded, is supplementary: judged against its own maximum, never
    // trended, and it never hides a 1 × IΔn reading.
    // An RCD the register names as protecting several circuits is one device: its results are
    // gathered from all of them and judged once, on the first.
    let shared = rcds.shared(c.id);
    let own = rows.iter().map(|r| RcdVisit::of(r.visit.date, r.readings));
    let rcd_visits = super::rcd_devices::device_visits(c, shared, own, idx, &mut notes);
    let timing = RcdTiming::of(c.rcd_delay.unwrap_or(crate::model::RcdDelay::General));
    for (test, label, get) in [
        (
            RcdTest::AtRated,
            "RCD trip time at 1 × IΔn",
            (|r: &RcdVisit| r.rated_ms) as fn(&RcdVisit) -> Option<f64>,
        ),
        (RcdTest::AtFive, RCD_FIVE_LABEL, |r: &RcdVisit| r.five_ms),
    ] {
        let points: Vec<Point> = rcd_visits
            .iter()
            .filter_map(|r| get(r).map(|v| Point::raw(r.date, v)))
            .collect();
        let rcd_max = limits::rcd_max_ms(timing, test);
        run(
            Quantity::Rcd,
            "rcd",
            label,
            full.then(|| match shared {
                Some(rcd) => format!(
                    "as measured at {}; at each visit the slowest time recorded against circuits {}, which {} protects",
                    test.as_str(),
                    super::rcd_devices::list_words(&rcd.numbers()),
                    rcd.designation
                )
                .into(),
                None => format!("as measured at {}", test.as_str()).into(),
            }),
            points,
            Some(Limit::max(rcd_max.max_ms)),
            full.then(|| rcd_max.words().into()),
            Some(&rcd_max.source),
            &mut notes,
        );
    }

    sub_board_zs(idx, &mut out, &at_sub_board, rows.last(), &mut notes);

    let last = rows.last();
    let mut findings: Vec<(usize, Finding)> = Vec::new();
    let has_r1r2 = out.iter().any(|s| s.quantity == "r1r2");
    for (i, s) in out.iter().enumerate() {
        for f in &s.report.findings {
            // Zs changes are told by the R1+R2 and Ze series; Zs keeps its limit findings.
            if s.quantity == "zs" && has_r1r2 && f.severity == Severity::Changed {
                continue;
            }
            findings.push((i, f.clone()));
        }
    }

    // Neutral divergence needs the conductor sizes to know the expected ratio.
    if let (Some(i12), Some(i1n)) = (
        out.iter().position(|s| s.quantity == "r1r2"),
        out.iter().position(|s| s.quantity == "r1rn"),
    ) {
        match expected_rn_ratio(c) {
            Some(ratio) => {
                // Both reports hold their points sorted and checked, under the same resets,
                // and the configuration passed its check (or there would be no reports).
                let found = (ratio.is_finite() && ratio > 0.0)
                    .then(|| {
                        trend::divergence_sorted(
                            (&out[i12].report.points, &out[i1n].report.points),
                            resets.iter().copied().max(),
                            ratio,
                            None,
                            &settings.trend,
                        )
                    })
                    .flatten();
                if let Some(f) = found {
                    // The divergence says it better than a bare R1+Rn step or drift.
                    findings.retain(|(j, g)| {
                        !(*j == i1n && matches!(g.kind, FindingKind::Step | FindingKind::Drift))
                    });
                    // The series view shows it beside R1+Rn's own findings.
                    out[i1n].report.findings.push(f.clone());
                    findings.push((i1n, f));
                }
            }
            None => {
                notes.push("conductor sizes not recorded: R1+Rn is not compared with R1+R2".into())
            }
        }
    }

    // The ring relations at the last visit where the ends were read; each departure is a flag
    // against its own tolerance.
    let mut ring_check = None;
    let mut ring_flags: Vec<Flag> = Vec::new();
    let tolerance = RingTolerance::default();
    if c.kind == CircuitKind::Ring
        && let Some(r) = rows
            .iter()
            .rev()
            .find(|r| r.readings.ring_r1_ohm.is_some() && r.readings.ring_rn_ohm.is_some())
    {
        // Less the visit's shared lead offset, which would skew the ratios.
        let less = |v: Option<f64>| v.map(|x| (x - r.offset).max(0.0));
        let rr = RingReadings {
            r1_ohm: less(r.readings.ring_r1_ohm).unwrap_or_default(),
            rn_ohm: less(r.readings.ring_rn_ohm).unwrap_or_default(),
            r2_ohm: less(r.readings.ring_r2_ohm),
            live_mm2: c.live_mm2,
            cpc_mm2: c.cpc_mm2,
            r1r2_ohm: less(r.readings.r1r2_ohm),
            r1rn_ohm: less(r.readings.r1rn_ohm),
        };
        match limits::check_ring(&rr, &tolerance) {
            Ok(check) => {
                if let Some(i) = out.iter().position(|s| s.quantity == "ring")
                    && last.is_some_and(|l| l.visit.date == r.visit.date)
                {
                    for rf in &check.findings {
                        let mut f = Finding::new(
                            FindingKind::Exceeds,
                            Quantity::Ring(RingLeg::R1),
                            r.visit.date,
                            rf.text.clone(),
                        );
                        f.last_value = rr.r1_ohm;
                        let mut flag = make_flag(&h.property, &board_name, Some(c), &out[i], &f);
                        flag.kind = "ring_check";
                        // The ratio check is in per cent, not on the ohms of last_value.
                        flag.limit = match rf.kind {
                            RingFindingKind::LineNeutralEnds => Some(tolerance.ends_ohm),
                            RingFindingKind::CrossR1R2 | RingFindingKind::CrossR1Rn => {
                                Some(tolerance.cross_ohm)
                            }
                            RingFindingKind::CpcRatio => None,
                        };
                        flag.limit_source = Some(super::source_text(&rf.source));
                        ring_flags.push(flag);
                    }
                }
                ring_check = Some(check);
            }
            Err(e) => note_limits_error(&mut notes, "ring check", &e),
        }
    }

    let fault_paths = match (c.device, disconnection, last) {
        (Some(device), Some(t), Some(l)) if detail == super::Detail::Full => {
            let mut inputs = FaultPathInputs::new(device, t.time);
            inputs.earthing = earthing;
            inputs.rcd_ma = c.rcd_ma;
            inputs.ze_ohm = l.ze;
            inputs.r1r2_ohm = l.readings.r1r2_ohm;
            inputs.r1rn_ohm = l.readings.r1rn_ohm;
            inputs.zs_ohm = l.readings.zs_ohm;
            inputs.conditions = TestConditions {
                temp_c: l.visit.ambient_c,
                insulation: c.insulation,
                assumed_insulation: settings.limits.assumed_insulation,
            };
            inputs.rule = settings.limits.measured_rule;
            limits::evaluate_fault_paths(&inputs).ok()
        }
        _ => None,
    };

    let mut flags: Vec<Flag> = findings
        .iter()
        .map(|(i, f)| make_flag(&h.property, &board_name, Some(c), &out[*i], f))
        .chain(ring_flags)
        .collect();
    // The worklist keeps one flag per quantity: the most severe, and among changes the most
    // telling (a step before a divergence before a drift), the latest first. The report still
    // shows every finding under its series.
    let telling = |k: &str| match k {
        "exceeds" | "ring_check" => 0,
        "investigate" => 1,
        "approaching" => 2,
        "step" => 3,
        "neutral_divergence" => 4,
        "ze_rise" => 5,
        _ => 6,
    };
    flags.sort_by(|a, b| {
        a.quantity
            .cmp(b.quantity)
            .then(telling(a.kind).cmp(&telling(b.kind)))
            .then(b.last_date.cmp(&a.last_date))
    });
    flags.dedup_by(|later, earlier| later.quantity == earlier.quantity);
    flags.extend(super::facts::polarity(
        &h.property,
        &board_name,
        c,
        rows.iter().map(|r| (r.visit.date, r.readings.polarity)),
    ));
    flags.extend(super::facts::button(
        &h.property,
        &board_name,
        c,
        rcd_visits.iter().map(|r| (r.date, r.button)),
    ));
    super::rank_flags(&mut flags);

    CircuitAnalysis {
        board: board_name,
        circuit: c.clone(),
        lineage: lineage_labels,
        // Report-only figures, left out of the worklist's analysis.
        disconnection: full.then(|| disconnection.clone()).flatten(),
        zs_limit: full.then(|| zs_limit.clone()).flatten(),
        fault_paths,
        ring_check,
        last_visit: last.map(|l| l.visit.date),
        last_readings: last.map(|l| l.readings.clone()),
        series: out,
        flags,
        notes,
    }
}

/// A Zs worked out as Ze + R1+R2 on a board fed from another says what it is built on: each
/// of its findings resting on such a point gets the sum in words, and when the last such
/// point left the sub-main out (no Zdb, no sub-main R1+R2) the circuit gets a note saying so.
fn sub_board_zs(
    idx: &Index,
    out: &mut [SeriesAnalysis],
    at_sub_board: &[(&Row, f64)],
    last: Option<&Row>,
    notes: &mut Vec<String>,
) {
    if at_sub_board.is_empty() {
        return;
    }
    let words = |r: &Row, r12: f64| {
        let ze = r.ze.unwrap_or_default();
        let base = idx.board_ze_words(r.visit, r.board_id);
        match r.how {
            ZeHow::LeavesOutSubMain => format!(
                "Zs here leaves out the sub-main: no Zdb and no sub-main R1+R2 recorded at {} on {}, so it is {base} + R1+R2 {r12:.2} Ω = {:.2} Ω, and the true Zs is higher",
                board_name(idx, r.board_id),
                r.visit.date,
                ze + r12
            ),
            _ => format!(
                "Zs here is {base} + R1+R2 {r12:.2} Ω = {:.2} Ω (Zs not measured)",
                ze + r12
            ),
        }
    };
    if let Some(zs) = out.iter_mut().find(|s| s.quantity == "zs") {
        for f in &mut zs.report.findings {
            if let Some(&(r, r12)) = at_sub_board.iter().find(|(r, _)| r.visit.date == f.date) {
                let end = f.sentence.trim_end_matches('.').len();
                f.sentence.truncate(end);
                f.sentence.push_str("; ");
                f.sentence.push_str(&words(r, r12));
                f.sentence.push('.');
            }
        }
    }
    if let (Some(&(r, r12)), Some(l)) = (at_sub_board.last(), last)
        && r.visit.date == l.visit.date
        && r.how == ZeHow::LeavesOutSubMain
    {
        notes.push(format!("{}.", words(r, r12)));
    }
}

fn board_name<'a>(idx: &'a Index, board_id: i64) -> &'a str {
    idx.boards
        .get(&board_id)
        .map_or("?", |b| b.designation.as_str())
}

/// R1+Rn / R1+R2 for sound copper conductors of the recorded sizes (IEC 60228 resistances).
fn expected_rn_ratio(c: &Circuit) -> Option<f64> {
    let live = limits::copper_mohm_per_m(c.live_mm2?).ok()?.mohm_per_m;
    let cpc = limits::copper_mohm_per_m(c.cpc_mm2?).ok()?.mohm_per_m;
    Some((live + live) / (live + cpc))
}
