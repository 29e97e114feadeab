//! The report as data: everything the HTML shows, built once from a property's analysis.
//! `--format json` serialises this; the HTML renderer reads only this.

use std::collections::BTreeMap;

use chrono::NaiveDate;
use serde::Serialize;

use super::html::{and_list, count, date_words, reading};
use crate::analysis::{Flag, PropertyAnalysis, SeriesAnalysis, add_months};
use crate::limits::{self, Source};
use crate::trend::{LimitKind, NoiseFloor, Quantity, Scale};

/// The cautions every report carries, in the order they are printed.
pub const CAUTIONS: [&str; 4] = [
    crate::CAUTION,
    "Any code shown (C1, C2, C3, FI) is exactly as the inspector recorded it at the visit.",
    "Any reading that exceeds a limit needs prompt attention by a qualified electrician.",
    "A projection is a straight line through past readings. A circuit can get worse faster, for \
     example when a connection works loose between visits, so a projected date is not a promise.",
];

/// Severity keys as the `flags` contract spells them, most urgent first.
pub const SEVERITIES: [&str; 3] = ["exceeds", "approaching", "changed"];

fn severity_rank(s: &str) -> usize {
    SEVERITIES
        .iter()
        .position(|x| *x == s)
        .unwrap_or(SEVERITIES.len())
}

/// One property's report.
#[derive(Debug, Clone, Serialize)]
pub struct PropertyReport {
    /// The date the report was made (the analysis date).
    pub generated: NaiveDate,
    pub ohmtrail_version: &'static str,
    /// Who made the report, from the `contractor.*` settings; `None` when none is set.
    pub contractor: Option<Contractor>,
    pub header: Header,
    pub summary: Summary,
    /// Remedial work still to do on observations coded C1, C2 or FI (open or made safe, and
    /// not superseded by a later full inspection), most overdue first.
    pub open_remedials: Vec<crate::analysis::remedial::RemedialItem>,
    /// Circuits (and the supply) with something to report, most urgent first.
    pub flagged: Vec<FlaggedCircuit>,
    /// Every board with every circuit's last readings.
    pub boards: Vec<BoardTable>,
    /// The inspector's latest report as recorded, the due date's basis, the supply and bonding.
    pub schedule: super::schedule::ScheduleSection,
    /// Visits oldest first.
    pub visits: Vec<VisitEntry>,
    pub method: Method,
    pub cautions: Vec<String>,
}

/// The contractor's details as set, printed at the top of every document.
#[derive(Debug, Clone, Serialize)]
pub struct Contractor {
    pub name: Option<String>,
    pub address: Option<String>,
    pub registration: Option<String>,
    /// The logo file as set.
    pub logo_file: Option<String>,
    /// The logo's contents, read when the document is made ([`super::load_logo`]).
    #[serde(skip)]
    pub logo: Option<std::sync::Arc<Logo>>,
}

/// A logo image to embed.
#[derive(Debug, Clone)]
pub struct Logo {
    pub bytes: Vec<u8>,
    pub svg: bool,
}

impl Contractor {
    /// The details from the settings, without the logo's contents; `None` when none is set.
    pub fn from_settings(c: &crate::analysis::settings::ContractorSettings) -> Option<Contractor> {
        c.is_set().then(|| Contractor {
            name: c.name.clone(),
            address: c.address.clone(),
            registration: c.registration.clone(),
            logo_file: c.logo.clone(),
            logo: None,
        })
    }

    /// The lines under the name: address, then registration.
    pub fn lines(&self) -> Vec<String> {
        let mut v = Vec::new();
        if let Some(a) = &self.address {
            v.push(a.clone());
        }
        if let Some(r) = &self.registration {
            v.push(format!("Registration {r}"));
        }
        v
    }
}

#[derive(Debug, Clone, Serialize)]
pub struct Header {
    pub property_ref: String,
    pub address: Option<String>,
    pub client: Option<String>,
    pub interval_months: u32,
    pub boards: Vec<BoardHeader>,
    pub last_visit: Option<NaiveDate>,
    /// The last visit that was a full inspection; earlier than `last_visit` when the last
    /// visit was a partial re-test, which does not restart the due date.
    pub last_full_inspection: Option<NaiveDate>,
    /// The last full inspection plus the interval recorded at it, else the property's.
    pub next_due: Option<NaiveDate>,
    pub next_due_interval_months: Option<u32>,
    /// Which interval `next_due` runs by, in words.
    pub next_due_basis: Option<&'static str>,
}

#[derive(Debug, Clone, Serialize)]
pub struct BoardHeader {
    pub designation: String,
    pub location: Option<String>,
    pub earthing: Option<String>,
    pub fed_from: Option<String>,
    pub in_service: bool,
}

/// The first screen: counts, what to do next and by when.
#[derive(Debug, Clone, Serialize)]
pub struct Summary {
    /// Circuits in service.
    pub circuits: usize,
    /// Circuits counted once each, at their worst.
    pub exceeds: usize,
    pub approaching: usize,
    pub changed: usize,
    /// Circuits with readings and nothing to report.
    pub within_limits: usize,
    /// Circuits in service with no readings on record.
    pub not_tested: usize,
    /// The supply (Ze at the origin) has something to report.
    pub supply_flagged: bool,
    /// The worst severity on the property, if any.
    pub worst: Option<&'static str>,
    /// One or two plain sentences for the landlord.
    pub headline: String,
    /// What should happen next, most urgent first.
    pub actions: Vec<Action>,
    /// The recommended date of the next full inspection.
    pub next_inspection: Option<NaiveDate>,
    /// The recommendation is earlier than the usual interval because of a projection.
    pub next_inspection_shortened: bool,
    /// The recommended date is on or before the report date.
    pub next_inspection_overdue: bool,
    /// Visits without an ambient temperature (readings compared as read).
    pub visits_without_ambient: usize,
}

#[derive(Debug, Clone, Serialize)]
pub struct Action {
    /// The severity this action answers, or `None` for the routine inspection.
    pub severity: Option<&'static str>,
    pub what: String,
    /// The date to act by, when there is one.
    pub by: Option<NaiveDate>,
    /// When, in words: "as soon as possible", "by 8 July 2027".
    pub when: String,
}

/// A circuit, or the supply, with its findings and charts.
#[derive(Debug, Clone, Serialize)]
pub struct FlaggedCircuit {
    pub board: String,
    /// `None` for the supply at the board's origin.
    pub circuit: Option<String>,
    pub description: Option<String>,
    pub device: Option<String>,
    /// The RCD protecting the circuit, by its identifier on the board, where recorded.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub rcd_id: Option<String>,
    /// Where the history came from, oldest first, when the circuit moved or was replaced.
    pub lineage: Vec<String>,
    /// The worst severity among the findings.
    pub severity: &'static str,
    pub findings: Vec<FlaggedFinding>,
}

#[derive(Debug, Clone, Serialize)]
pub struct FlaggedFinding {
    /// The `flags` quantity key.
    pub quantity: &'static str,
    /// The quantity in the trade's words, e.g. "ring rn".
    pub label: &'static str,
    pub severity: &'static str,
    pub kind: &'static str,
    /// One sentence with the figures.
    pub reason: String,
    /// The last value the finding judged: corrected to 20 °C where the ambient was recorded.
    pub last_value: f64,
    pub last_date: NaiveDate,
    /// The last reading as measured (`None` for a ring check, which has no series).
    pub last_measured: Option<f64>,
    /// The date of that reading.
    pub last_measured_date: Option<NaiveDate>,
    /// The last reading corrected to 20 °C, when it was corrected.
    pub last_at_20c: Option<f64>,
    /// The last reading is an over-range lower bound.
    pub last_over_range: bool,
    pub unit: &'static str,
    pub limit: Option<f64>,
    pub limit_words: Option<String>,
    pub limit_source: Option<Source>,
    pub projected_date: Option<NaiveDate>,
    pub projected_earliest: Option<NaiveDate>,
    pub chart: Option<Chart>,
}

/// One quantity over the visits, as the chart draws it.
#[derive(Debug, Clone, Serialize)]
pub struct Chart {
    pub title: String,
    pub unit: &'static str,
    pub log_scale: bool,
    /// How the points were formed.
    pub basis: Option<String>,
    pub points: Vec<ChartPoint>,
    pub limit: Option<f64>,
    pub limit_kind: Option<&'static str>,
    /// The least-squares line over the current baseline: start and end.
    pub fit: Option<[(NaiveDate, f64); 2]>,
    /// The line carried on to the limit, when it gets there within the drawn span.
    pub projection: Option<[(NaiveDate, f64); 2]>,
    pub events: Vec<Event>,
    /// The first date of the current baseline (after the latest register event).
    pub baseline_start: Option<NaiveDate>,
    /// The last reading is past the limit (so there is nothing left to project).
    pub past_limit: bool,
}

#[derive(Debug, Clone, Serialize)]
pub struct ChartPoint {
    pub date: NaiveDate,
    /// As read from the instrument.
    pub raw: f64,
    /// Corrected to 20 °C, when the ambient was recorded.
    pub at_20c: Option<f64>,
    pub ambient_c: Option<f64>,
    /// An over-range reading: the true value is at least `raw`.
    pub over_range: bool,
}

#[derive(Debug, Clone, Serialize)]
pub struct Event {
    pub date: NaiveDate,
    pub what: String,
}

/// One board's circuits and their last readings.
#[derive(Debug, Clone, Serialize)]
pub struct BoardTable {
    pub designation: String,
    pub location: Option<String>,
    pub earthing: Option<String>,
    /// The quantities with a reading on any circuit of this board, in table order.
    pub columns: Vec<Column>,
    pub circuits: Vec<CircuitRow>,
}

#[derive(Debug, Clone, Serialize)]
pub struct Column {
    /// The quantity in the trade's words, which is also the key of a row's cell.
    pub label: &'static str,
    pub unit: &'static str,
}

#[derive(Debug, Clone, Serialize)]
pub struct CircuitRow {
    pub circuit: String,
    pub description: Option<String>,
    pub device: Option<String>,
    pub kind: &'static str,
    pub last_visit: Option<NaiveDate>,
    /// The worst severity on this circuit, `None` when there is nothing to report.
    pub severity: Option<&'static str>,
    /// Readings at the last visit, keyed by the column label.
    pub cells: BTreeMap<&'static str, Cell>,
    /// The rest of the circuit's line on the schedule; left out when nothing is recorded.
    #[serde(skip_serializing_if = "ScheduleDetails::is_empty")]
    pub schedule: ScheduleDetails,
    /// Why something could not be judged.
    pub notes: Vec<String>,
}

/// The rest of a circuit's line on the schedule of test results: its register details, and
/// what its last visit recorded besides the readings. Each is `None` when not recorded.
#[derive(Debug, Clone, Default, PartialEq, Serialize)]
pub struct ScheduleDetails {
    /// `thermoplastic70` or `thermosetting90`, as recorded (not the assumed insulation).
    pub insulation: Option<&'static str>,
    pub wiring_type: Option<String>,
    /// BS 7671 Appendix 4 reference method: A to G, 100 to 103.
    pub ref_method: Option<&'static str>,
    pub points: Option<u32>,
    /// The protective device's breaking capacity, kA.
    pub breaking_ka: Option<f64>,
    pub afdd: Option<bool>,
    /// The RCD protecting the circuit, by its identifier on the board.
    pub rcd_id: Option<String>,
    /// At the last visit: `correct` or `incorrect`.
    pub polarity: Option<&'static str>,
    /// At the last visit: the insulation test voltage, V.
    pub ir_test_v: Option<u16>,
    /// At the last visit: `operates` or `failed`.
    pub rcd_button: Option<&'static str>,
}

impl ScheduleDetails {
    pub fn is_empty(&self) -> bool {
        *self == ScheduleDetails::default()
    }

    /// Each recorded detail as a few plain words, for a compact line under the circuit.
    pub fn words(&self) -> Vec<String> {
        let mut out = Vec::new();
        if let Some(i) = self.insulation {
            out.push(
                match i {
                    "thermosetting90" => "90 °C thermosetting",
                    _ => "70 °C thermoplastic",
                }
                .to_string(),
            );
        }
        if let Some(w) = &self.wiring_type {
            out.push(format!("wiring {w}"));
        }
        if let Some(m) = self.ref_method {
            out.push(format!("ref. method {m}"));
        }
        if let Some(n) = self.points {
            out.push(crate::report::html::count(n as usize, "point", "points"));
        }
        if let Some(ka) = self.breaking_ka {
            out.push(format!("{} kA", crate::store::fmt_num(ka)));
        }
        if let Some(a) = self.afdd {
            out.push(if a { "AFDD" } else { "no AFDD" }.to_string());
        }
        if let Some(r) = &self.rcd_id {
            out.push(format!("on {r}"));
        }
        if let Some(p) = self.polarity {
            out.push(format!("polarity {p}"));
        }
        if let Some(v) = self.ir_test_v {
            out.push(format!("IR at {v} V"));
        }
        if let Some(b) = self.rcd_button {
            out.push(format!("test button {b}"));
        }
        out
    }
}

/// A last reading and its margin to the limit.
#[derive(Debug, Clone, Serialize)]
pub struct Cell {
    /// As read (for Zs not measured: Ze + R1+R2).
    pub raw: f64,
    pub over_range: bool,
    /// Corrected to 20 °C, when the ambient was recorded.
    pub at_20c: Option<f64>,
    pub unit: &'static str,
    pub limit: Option<f64>,
    /// `max` or `min`.
    pub limit_kind: Option<&'static str>,
    /// The reading (at 20 °C where corrected) as a share of its limit: value / maximum, or
    /// minimum / value. 100 % or more is at or past the limit.
    pub share_of_limit_pct: Option<f64>,
    /// Zs worked out as Ze + R1+R2 because it was not measured.
    pub calculated: bool,
}

#[derive(Debug, Clone, Serialize)]
pub struct VisitEntry {
    pub date: NaiveDate,
    pub inspector: Option<String>,
    pub instrument: Option<String>,
    /// Whether the instrument was within its calibration on the visit date; `None` when the
    /// register has no calibration date for it.
    pub instrument_in_calibration: Option<bool>,
    pub ambient_c: Option<f64>,
    pub ze_ohm: Option<f64>,
    pub pfc_ka: Option<f64>,
    /// The visit's report as the inspector recorded it (reference, outcome, interval, extent,
    /// limitations); ohmtrail assigns none of it.
    pub report: crate::model::VisitReport,
    /// Supply characteristics and main bonding recorded at the visit.
    pub supply: crate::model::SupplyRecord,
    pub observations: Vec<ObservationEntry>,
}

#[derive(Debug, Clone, Serialize)]
pub struct ObservationEntry {
    /// Exactly as recorded.
    pub code: &'static str,
    pub board: Option<String>,
    pub circuit: Option<String>,
    pub text: String,
}

/// How the figures were worked out.
#[derive(Debug, Clone, Serialize)]
pub struct Method {
    pub measured_rule: &'static str,
    pub measured_rule_words: String,
    pub temperature_rule: String,
    pub alpha_per_k: f64,
    /// Every limit source the report's judgements rest on.
    pub limits: Vec<LimitUsed>,
    pub noise_floors: Vec<FloorEntry>,
    pub trend_words: Vec<String>,
    pub visits_without_ambient: Vec<NaiveDate>,
    /// One note per visit whose continuity readings all sat high together (leads not nulled).
    pub continuity_offsets: Vec<String>,
}

#[derive(Debug, Clone, Serialize)]
pub struct LimitUsed {
    /// What the limit was applied to, e.g. "Zs", "IR L–E".
    pub applies_to: Vec<String>,
    /// The circuits it was applied to ("CU1/3"); empty for the supply.
    pub circuits: Vec<String>,
    pub citation: String,
    /// `published`, `derived`, `from memory` or `common practice`.
    pub status: &'static str,
    pub rule: String,
}

#[derive(Debug, Clone, Serialize)]
pub struct FloorEntry {
    pub applies_to: &'static str,
    pub resolution: f64,
    pub absolute: f64,
    pub relative: f64,
    /// The floor in words, e.g. "0.01 Ω + 0.03 Ω + 6 % of the reading".
    pub words: String,
}

/// Severity in words for a landlord, with the shape that goes with it so that colour never
/// carries the meaning alone.
pub fn severity_words(s: Option<&str>) -> (&'static str, &'static str) {
    match s {
        Some("exceeds") => ("▲", "Past a limit"),
        Some("approaching") => ("◆", "Nearing a limit"),
        Some("changed") => ("●", "Changed"),
        _ => ("○", "Within limits"),
    }
}

fn worst<'a>(it: impl Iterator<Item = &'a str>) -> Option<&'static str> {
    it.map(severity_rank)
        .min()
        .and_then(|i| SEVERITIES.get(i).copied())
}

/// A circuit named for a landlord: "circuit CU1/3 (kitchen sockets)".
fn circuit_words(board: &str, circuit: Option<&str>, description: Option<&str>) -> String {
    match (circuit, description) {
        (Some(c), Some(d)) if !d.trim().is_empty() => format!("circuit {board}/{c} ({})", d.trim()),
        (Some(c), _) => format!("circuit {board}/{c}"),
        (None, _) => format!("the supply at board {board}"),
    }
}

/// Build the report from an analysis. Pure: no store, no I/O.
pub fn build(a: &PropertyAnalysis) -> PropertyReport {
    let today = a.settings.today;
    let p = &a.property;
    let header = Header {
        property_ref: p.reference.clone(),
        address: p.address.clone(),
        client: p.client.clone(),
        interval_months: p.interval_months,
        boards: a
            .boards
            .iter()
            .map(|b| BoardHeader {
                designation: b.designation.clone(),
                location: b.location.clone(),
                earthing: b.earthing.map(|e| e.to_string()),
                fed_from: b.fed_from.clone(),
                in_service: b.status == crate::model::Status::InService,
            })
            .collect(),
        last_visit: a.last_visit,
        last_full_inspection: a.last_full_inspection,
        next_due: a.next_due,
        next_due_interval_months: a.next_due_interval_months,
        next_due_basis: a.next_due.map(|_| a.next_due_basis.words()),
    };
    let flagged = flagged(a);
    let summary = summary(a, &flagged, today);
    PropertyReport {
        generated: today,
        ohmtrail_version: env!("CARGO_PKG_VERSION"),
        contractor: Contractor::from_settings(&a.settings.contractor),
        header,
        summary,
        open_remedials: open_remedials(a),
        flagged,
        boards: boards(a),
        schedule: super::schedule::build(a),
        visits: visits(a),
        method: method(a),
        cautions: cautions(a),
    }
}

/// The first thing to do when remedial work is still open: have it done by its due date
/// (SI 2020/312 regulation 3(4)) and keep the written confirmation.
fn remedial_action(a: &PropertyAnalysis, today: NaiveDate) -> Option<Action> {
    let open: Vec<_> = a.remedials.iter().filter(|i| i.status.is_open()).collect();
    let due = open.iter().map(|i| i.due).min()?;
    let items: Vec<String> = open
        .iter()
        .map(|i| format!("{} {}", i.code.as_str(), i.observation))
        .collect();
    let overdue = due < today;
    Some(Action {
        severity: Some("exceeds"),
        what: format!(
            "Have the work the inspection report requires on {} ({}) carried out by a qualified              person, and keep their written confirmation (The Electrical Safety Standards in the              Private Rented Sector (England) Regulations 2020, regulation 3(4)).",
            count(open.len(), "observation", "observations"),
            and_list(&items)
        ),
        by: Some(due),
        when: if overdue {
            format!("now: it was due by {}", date_words(due))
        } else {
            format!("by {}", date_words(due))
        },
    })
}

/// The remedial items still open, the earliest due first.
fn open_remedials(a: &PropertyAnalysis) -> Vec<crate::analysis::remedial::RemedialItem> {
    let mut open: Vec<_> = a
        .remedials
        .iter()
        .filter(|i| i.status.is_open())
        .cloned()
        .collect();
    open.sort_by_key(|i| (i.due, i.observation));
    open
}

fn cautions(a: &PropertyAnalysis) -> Vec<String> {
    let mut c: Vec<String> = CAUTIONS.iter().map(|s| s.to_string()).collect();
    if !a.visits_without_ambient.is_empty() {
        c.push(format!(
            "{} had no ambient temperature recorded: their resistances are compared as read, \
             so part of any change between them may be temperature.",
            count(a.visits_without_ambient.len(), "visit", "visits")
        ));
    }
    c
}

fn summary(a: &PropertyAnalysis, flagged: &[FlaggedCircuit], today: NaiveDate) -> Summary {
    let counts = a.counts;
    let not_tested = a
        .circuits
        .iter()
        .filter(|c| c.last_readings.is_none())
        .count();
    let flagged_circuits = counts.exceeds + counts.approaching + counts.changed;
    let within_limits = counts
        .circuits
        .saturating_sub(flagged_circuits)
        .saturating_sub(not_tested);
    let supply_flagged = flagged.iter().any(|f| f.circuit.is_none());
    // The summary's own lines say when the inspection is due (and overdue).
    let worst = worst(trend_rows(a).map(|f| f.severity));

    let names = |sev: &str| -> Vec<String> {
        flagged
            .iter()
            .filter(|f| f.circuit.is_some() && f.severity == sev)
            .map(|f| circuit_words(&f.board, f.circuit.as_deref(), f.description.as_deref()))
            .collect()
    };
    let is_are = |n: usize| if n == 1 { "is" } else { "are" };
    let mut headline = if a.last_visit.is_none() {
        "No completed visit is on record yet, so nothing can be judged.".to_string()
    } else if counts.exceeds > 0 {
        format!(
            "{} of {} {} past a safety limit and {} prompt attention by a qualified electrician.",
            counts.exceeds,
            count(counts.circuits, "circuit", "circuits"),
            is_are(counts.exceeds),
            if counts.exceeds == 1 { "needs" } else { "need" }
        )
    } else if counts.approaching > 0 {
        format!(
            "No circuit is past a limit, but {} {} on course to reach one before the next \
             inspection is due.",
            count(counts.approaching, "circuit", "circuits"),
            is_are(counts.approaching)
        )
    } else if counts.changed > 0 {
        format!(
            "Every circuit is within its limits. {} changed since earlier visits in a way an \
             electrician should look at.",
            if counts.changed == 1 {
                "One has".to_string()
            } else {
                format!("{} have", counts.changed)
            }
        )
    } else {
        "Every circuit tested is within its limits, and no reading has moved beyond the normal \
         scatter between visits."
            .to_string()
    };
    if counts.exceeds > 0 && counts.approaching > 0 {
        headline.push_str(&format!(
            " {} more {} on course to reach a limit before the next inspection.",
            counts.approaching,
            is_are(counts.approaching)
        ));
    }
    // The supply row's findings: Ze is the network operator's matter on TN; a TT Ze or an
    // electrode's Ra is the installation's own earth electrode, the landlord's.
    let electrode_only = supply_flagged
        && flagged
            .iter()
            .filter(|f| f.circuit.is_none())
            .flat_map(|f| &f.findings)
            .all(|f| f.quantity == "ra");
    if electrode_only {
        headline.push_str(
            " The earth electrode's resistance (Ra) has risen or is high: the installation's \
             own, for the landlord to put right.",
        );
    } else if supply_flagged {
        headline.push_str(
            " The supply's earth fault loop impedance (Ze) has risen or is high: a matter for \
             the network operator.",
        );
    }
    let bonding = a.flags.iter().find(|f| f.quantity == "bonding");
    if bonding.is_some() {
        headline.push_str(
            " The main protective bonding recorded is smaller than the supply calls for.",
        );
    }

    let next_inspection = a.recommended_next;
    let next_inspection_shortened =
        matches!((a.recommended_next, a.next_due), (Some(r), Some(d)) if r < d);
    let next_inspection_overdue = next_inspection.is_some_and(|d| d <= today);

    let mut actions = Vec::new();
    if let Some(action) = remedial_action(a, today) {
        actions.push(action);
    }
    let exceeds = names("exceeds");
    if !exceeds.is_empty() {
        actions.push(Action {
            severity: Some("exceeds"),
            what: format!(
                "Have a qualified electrician investigate and put right {}. Do not wait for the \
                 next inspection.",
                and_list(&exceeds)
            ),
            by: None,
            when: "as soon as possible".into(),
        });
    }
    let approaching = names("approaching");
    if !approaching.is_empty() {
        // Re-test before the earliest projected crossing.
        let by = trend_rows(a)
            .filter(|r| r.severity == "approaching")
            .flat_map(|r| &r.findings)
            .filter(|f| f.severity == "approaching")
            .filter_map(|f| {
                f.recommended_interval_months
                    .map(|m| add_months(f.last_date, m.max(1)))
            })
            .min();
        let soon = by.is_none_or(|d| d <= today)
            || trend_rows(a)
                .filter(|r| r.severity == "approaching")
                .flat_map(|r| &r.findings)
                .any(|f| {
                    f.severity == "approaching" && f.projected_earliest.is_some_and(|e| e <= today)
                });
        actions.push(Action {
            severity: Some("approaching"),
            what: format!(
                "Have {} re-tested before {} reach{} {} limit.",
                and_list(&approaching),
                if approaching.len() == 1 { "it" } else { "they" },
                if approaching.len() == 1 { "es" } else { "" },
                if approaching.len() == 1 {
                    "its"
                } else {
                    "their"
                },
            ),
            by: if soon { None } else { by },
            when: match (soon, by) {
                (false, Some(d)) => format!("by {}", date_words(d)),
                _ => "as soon as possible: the earliest projected date is already close or past"
                    .into(),
            },
        });
    }
    let changed = names("changed");
    if !changed.is_empty() {
        actions.push(Action {
            severity: Some("changed"),
            what: format!(
                "Ask the electrician to look into the change on {} (for example a connection \
                 working loose) while it is still within its limits.",
                and_list(&changed)
            ),
            by: next_inspection,
            when: match next_inspection {
                Some(d) if d > today => {
                    format!("at or before the next inspection, {}", date_words(d))
                }
                _ => "at the next inspection, which is due now".into(),
            },
        });
    }
    if let Some(b) = bonding {
        actions.push(Action {
            severity: Some("exceeds"),
            what: format!(
                "Have a qualified electrician check the main protective bonding: {}.",
                b.reason
            ),
            by: None,
            when: "as soon as possible".into(),
        });
    }
    if electrode_only {
        actions.push(Action {
            severity: Some("changed"),
            what: "Ask the electrician to test the installation's earth electrode and its \
                   connection and, if need be, improve it."
                .into(),
            by: None,
            when: "soon".into(),
        });
    } else if supply_flagged {
        actions.push(Action {
            severity: Some("changed"),
            what: "Ask the electrician to report the supply's earth fault loop impedance (Ze) to \
                   the network operator and to check the main earthing and bonding."
                .into(),
            by: None,
            when: "soon".into(),
        });
    }
    if let Some(d) = next_inspection {
        let usual = match (a.next_due_interval_months, a.next_due_basis) {
            (Some(m), crate::analysis::due::IntervalBasis::Recorded) => format!(
                "{}, the interval the inspector recorded",
                p_interval_words(m)
            ),
            _ => p_interval_words(a.property.interval_months),
        };
        actions.push(Action {
            severity: None,
            what: if next_inspection_shortened {
                format!(
                    "Book the next full inspection and test earlier than the usual {usual}, \
                     because a reading is projected to reach its limit before then."
                )
            } else {
                format!("Book the next full inspection and test ({usual} after the last one).")
            },
            by: Some(d),
            when: if next_inspection_overdue {
                format!("now: it was due {}", date_words(d))
            } else {
                format!("by {}", date_words(d))
            },
        });
    } else {
        actions.push(Action {
            severity: None,
            what: "Arrange a full inspection and test so that a history can start.".into(),
            by: None,
            when: "as soon as convenient".into(),
        });
    }

    Summary {
        circuits: counts.circuits,
        exceeds: counts.exceeds,
        approaching: counts.approaching,
        changed: counts.changed,
        within_limits,
        not_tested,
        supply_flagged,
        worst,
        headline,
        actions,
        next_inspection,
        next_inspection_shortened,
        next_inspection_overdue,
        visits_without_ambient: a.visits_without_ambient.len(),
    }
}

fn p_interval_words(months: u32) -> String {
    if months.is_multiple_of(12) {
        count((months / 12) as usize, "year", "years")
    } else {
        count(months as usize, "month", "months")
    }
}

/// The worklist rows of a circuit or the supply: those with trend findings behind them (an
/// overdue inspection is in the summary's own lines instead).
pub(super) fn trend_rows(a: &PropertyAnalysis) -> impl Iterator<Item = &Flag> {
    a.flags.iter().filter(|r| r.quantity != "inspection")
}

/// Every finding by circuit, most urgent circuit first (the rows arrive ranked, each with its
/// findings most serious first).
fn flagged(a: &PropertyAnalysis) -> Vec<FlaggedCircuit> {
    let mut out: Vec<FlaggedCircuit> = Vec::new();
    for f in trend_rows(a).flat_map(|r| &r.findings) {
        // A recorded fact (polarity, test button) has no series behind it.
        let fact = crate::analysis::facts::label(f.quantity);
        let found = f.finding();
        if found.is_none() && fact.is_none() {
            continue;
        }
        let pos = out
            .iter()
            .position(|g| g.board == f.board && g.circuit == f.circuit);
        // A ring check compares the ends with R1+R2 at one visit: there is no series to draw.
        let ring_check = f.kind == "ring_check";
        let series = find_series(a, f).filter(|_| !ring_check);
        let circuit = f.circuit.as_ref().and_then(|n| {
            a.circuits
                .iter()
                .find(|c| c.board == f.board && &c.circuit.number == n)
        });
        // The series' last reading, as measured and as corrected, with its own date (a step's
        // finding rests on an earlier visit).
        let last_point = series.and_then(|s| s.report.points.last());
        let finding = FlaggedFinding {
            quantity: f.quantity,
            label: match (ring_check, found, fact) {
                (true, _, _) => "ring check",
                (false, Some(found), _) => found.label,
                (false, None, fact) => fact.unwrap_or_default(),
            },
            severity: f.severity,
            kind: f.kind,
            reason: f.reason.clone(),
            last_value: f.last_value,
            last_date: f.last_date,
            last_measured: last_point.map(|p| p.raw),
            last_measured_date: last_point.map(|p| p.date),
            last_at_20c: last_point.and_then(|p| p.ambient_c.map(|_| p.value)),
            last_over_range: last_point.is_some_and(|p| p.censored),
            unit: found.map_or("", |x| x.quantity.unit()),
            limit: f.limit,
            limit_words: if ring_check {
                Some("tolerance between the ring's end-to-end readings and R1+R2".into())
            } else {
                series.and_then(|s| s.limit_words.as_deref().map(String::from))
            },
            limit_source: if ring_check {
                circuit
                    .and_then(|c| c.ring_check.as_ref())
                    .map(|rc| rc.source.clone())
            } else if found.is_none() {
                crate::analysis::facts::source(f.quantity)
            } else {
                series.and_then(|s| s.limit_source.clone())
            },
            projected_date: f.projected_date,
            projected_earliest: f.projected_earliest,
            chart: series.map(|s| chart(s, a.next_due)),
        };
        match pos {
            Some(i) => {
                // One chart per quantity: a second finding on the same series shares it.
                let dup = out[i]
                    .findings
                    .iter()
                    .any(|g| g.label == finding.label && g.chart.is_some());
                let mut finding = finding;
                if dup {
                    finding.chart = None;
                }
                out[i].findings.push(finding);
            }
            None => out.push(FlaggedCircuit {
                board: f.board.clone(),
                circuit: f.circuit.clone(),
                description: f.description.clone(),
                device: circuit.and_then(|c| c.circuit.device.map(|d| d.to_string())),
                rcd_id: circuit.and_then(|c| c.circuit.rcd_id.clone()),
                lineage: circuit
                    .map(|c| c.lineage.clone())
                    .filter(|l| l.len() > 1)
                    .unwrap_or_default(),
                severity: f.severity,
                findings: vec![finding],
            }),
        }
    }
    for g in &mut out {
        g.severity = worst(g.findings.iter().map(|f| f.severity)).unwrap_or("changed");
    }
    out.sort_by_key(|g| severity_rank(g.severity));
    out
}

fn find_series<'a>(a: &'a PropertyAnalysis, f: &Flag) -> Option<&'a SeriesAnalysis> {
    let q = f.finding()?.quantity;
    match &f.circuit {
        None if q == Quantity::Ra => a.electrode.as_ref(),
        None => a.supply.as_ref(),
        Some(n) => a
            .circuits
            .iter()
            .find(|c| c.board == f.board && &c.circuit.number == n)
            .and_then(|c| c.series.iter().find(|s| s.report.quantity == q)),
    }
}

fn limit_kind_key(k: LimitKind) -> &'static str {
    match k {
        LimitKind::Max => "max",
        LimitKind::Min => "min",
    }
}

fn chart(s: &SeriesAnalysis, next_due: Option<NaiveDate>) -> Chart {
    let r = &s.report;
    let points: Vec<ChartPoint> = r
        .points
        .iter()
        .map(|p| ChartPoint {
            date: p.date,
            raw: p.raw,
            at_20c: p.ambient_c.map(|_| p.value),
            ambient_c: p.ambient_c,
            over_range: p.censored,
        })
        .collect();
    let last = r.points.last().map(|p| p.date);
    // The line is fitted to the uncensored readings of the baseline: draw it over those.
    let first_fitted = r
        .points
        .iter()
        .filter(|p| r.baseline_start.is_none_or(|b| p.date >= b) && !p.censored)
        .map(|p| p.date)
        .next();
    let fit = match (first_fitted, last) {
        (Some(a), Some(b)) if a < b => match (r.fitted_at(a), r.fitted_at(b)) {
            (Some(ya), Some(yb)) if ya.is_finite() && yb.is_finite() => Some([(a, ya), (b, yb)]),
            _ => None,
        },
        _ => None,
    };
    // Draw the projection only when it lands within a span that keeps the readings legible:
    // up to the later of the next due inspection and ten years after the last visit.
    let projection = match (fit, r.projection, last) {
        (Some([_, end]), Some(p), Some(l)) => {
            let reach = next_due.unwrap_or(l).max(add_months(l, 120));
            (p.date > l && p.date <= reach).then_some([end, (p.date, p.limit)])
        }
        _ => None,
    };
    Chart {
        title: s.label.to_string(),
        unit: r.unit,
        log_scale: r.scale == Scale::Log10,
        basis: s.basis.as_deref().map(String::from),
        points,
        limit: s.limit,
        limit_kind: s.limit.map(|_| limit_kind_key(r.quantity.limit_kind())),
        fit,
        projection,
        events: s
            .events
            .iter()
            .map(|(d, w)| Event {
                date: *d,
                what: w.clone(),
            })
            .collect(),
        baseline_start: r.baseline_start,
        past_limit: match (s.limit, r.points.last()) {
            (Some(l), Some(p)) => match r.quantity.limit_kind() {
                LimitKind::Max => p.value > l,
                LimitKind::Min => !p.censored && p.value < l,
            },
            _ => false,
        },
    }
}

/// Column order of the board tables.
const COLUMNS: [Quantity; 10] = [
    Quantity::R1r2,
    Quantity::R2,
    Quantity::R1rn,
    Quantity::Ring(crate::trend::RingLeg::R1),
    Quantity::Ring(crate::trend::RingLeg::Rn),
    Quantity::Ring(crate::trend::RingLeg::R2),
    Quantity::Zs,
    Quantity::IrLl,
    Quantity::IrLe,
    Quantity::Rcd,
];

fn schedule_details(c: &crate::analysis::CircuitAnalysis) -> ScheduleDetails {
    let x = &c.circuit;
    let last = c.last_readings.as_ref();
    ScheduleDetails {
        insulation: x.insulation.map(|i| i.as_str()),
        wiring_type: x.wiring_type.clone(),
        ref_method: x.ref_method.map(|m| m.as_str()),
        points: x.points,
        breaking_ka: x.breaking_ka,
        afdd: x.afdd,
        rcd_id: x.rcd_id.clone(),
        polarity: last.and_then(|r| r.polarity).map(|p| p.as_str()),
        ir_test_v: last.and_then(|r| r.ir_test_v),
        rcd_button: last.and_then(|r| r.rcd_button).map(|b| b.as_str()),
    }
}

fn boards(a: &PropertyAnalysis) -> Vec<BoardTable> {
    let mut out = Vec::new();
    for b in a
        .boards
        .iter()
        .filter(|b| b.status == crate::model::Status::InService)
    {
        let mut rows = Vec::new();
        for c in a.circuits.iter().filter(|c| c.board == b.designation) {
            let mut cells = BTreeMap::new();
            for s in &c.series {
                let Some(p) = s.report.points.last() else {
                    continue;
                };
                // Only readings taken at the circuit's last visit are its last readings.
                if Some(p.date) != c.last_visit {
                    continue;
                }
                let share = s.limit.map(|l| match s.report.quantity.limit_kind() {
                    LimitKind::Max => p.value / l * 100.0,
                    LimitKind::Min => l / p.value * 100.0,
                });
                // The RCD's column is the test at IΔn, analysed before the supplementary
                // 5 × IΔn one: the first series of a quantity keeps its cell.
                cells.entry(s.report.label).or_insert(Cell {
                    raw: p.raw,
                    over_range: p.censored,
                    at_20c: p.ambient_c.map(|_| p.value),
                    unit: s.report.unit,
                    limit: s.limit,
                    limit_kind: s
                        .limit
                        .map(|_| limit_kind_key(s.report.quantity.limit_kind())),
                    share_of_limit_pct: share.map(|x| (x * 10.0).round() / 10.0),
                    calculated: s.report.quantity == Quantity::Zs
                        && c.last_readings.as_ref().is_some_and(|r| r.zs_ohm.is_none()),
                });
            }
            rows.push(CircuitRow {
                circuit: c.circuit.number.clone(),
                description: c.circuit.description.clone(),
                device: c.circuit.device.map(|d| d.to_string()),
                kind: c.circuit.kind.as_str(),
                last_visit: c.last_visit,
                severity: worst(c.flags.iter().map(|f| f.severity)),
                cells,
                schedule: schedule_details(c),
                notes: c.notes.clone(),
            });
        }
        let columns = COLUMNS
            .iter()
            .filter(|q| rows.iter().any(|r| r.cells.contains_key(q.label())))
            .map(|q| Column {
                label: q.label(),
                unit: q.unit(),
            })
            .collect();
        out.push(BoardTable {
            designation: b.designation.clone(),
            location: b.location.clone(),
            earthing: b.earthing.map(|e| e.to_string()),
            columns,
            circuits: rows,
        });
    }
    out
}

fn visits(a: &PropertyAnalysis) -> Vec<VisitEntry> {
    a.visits
        .iter()
        .map(|v| VisitEntry {
            date: v.visit.date,
            inspector: v.visit.inspector.clone(),
            instrument: v.visit.instrument.clone(),
            instrument_in_calibration: v.instrument_in_calibration,
            ambient_c: v.visit.ambient_c,
            ze_ohm: v.visit.ze_ohm,
            pfc_ka: v.visit.pfc_ka,
            report: v.visit.report.clone(),
            supply: v.visit.supply.clone(),
            observations: v
                .observations
                .iter()
                .map(|o| ObservationEntry {
                    code: o.code.as_str(),
                    board: o.board.clone(),
                    circuit: o.circuit.clone(),
                    text: o.text.clone(),
                })
                .collect(),
        })
        .collect()
}

fn floor_words(f: &NoiseFloor, unit: &str) -> String {
    format!(
        "{} {unit} resolution + {} {unit} + {} % of the reading",
        f.resolution,
        f.absolute,
        (f.relative * 1000.0).round() / 10.0
    )
}

fn method(a: &PropertyAnalysis) -> Method {
    let s = &a.settings;
    let mut limits_used: Vec<LimitUsed> = Vec::new();
    let all = a
        .supply
        .iter()
        .map(|s| (None, s))
        .chain(a.circuits.iter().flat_map(|c| {
            let name = format!("{}/{}", c.board, c.circuit.number);
            c.series.iter().map(move |s| (Some(name.clone()), s))
        }));
    for (circuit, series) in all {
        let Some(src) = &series.limit_source else {
            continue;
        };
        let applies = series.report.label.to_string();
        let i = match limits_used
            .iter()
            .position(|l| l.citation == src.citation && l.rule == src.rule)
        {
            Some(i) => i,
            None => {
                limits_used.push(LimitUsed {
                    applies_to: Vec::new(),
                    circuits: Vec::new(),
                    citation: src.citation.to_string(),
                    status: src.status.as_str(),
                    rule: src.rule.to_string(),
                });
                limits_used.len() - 1
            }
        };
        let entry = &mut limits_used[i];
        if !entry.applies_to.contains(&applies) {
            entry.applies_to.push(applies);
        }
        if let Some(c) = circuit
            && !entry.circuits.contains(&c)
        {
            entry.circuits.push(c);
        }
    }
    for c in &a.circuits {
        if let Some(rc) = &c.ring_check
            && !limits_used.iter().any(|l| l.citation == rc.source.citation)
        {
            limits_used.push(LimitUsed {
                applies_to: vec!["ring end-to-end readings".into()],
                circuits: Vec::new(),
                citation: rc.source.citation.to_string(),
                status: rc.source.status.as_str(),
                rule: rc.source.rule.to_string(),
            });
        }
    }
    let t = &s.trend;
    Method {
        measured_rule: s.limits.measured_rule.as_str(),
        measured_rule_words: match s.limits.measured_rule {
            limits::MeasuredRule::TemperatureCorrected => "Maximum Zs for a reading taken cold: \
                the tabulated value corrected from conductor operating temperature to 20 °C \
                (setting limits.measured_rule = temperature_corrected)."
                .into(),
            limits::MeasuredRule::RuleOfThumb80 => "Maximum Zs for a reading taken cold: 80 % \
                of the tabulated value (setting limits.measured_rule = rule_of_thumb_80)."
                .into(),
        },
        temperature_rule: format!(
            "Conductor resistances (R1+R2, R2, R1+Rn, ring ends and the circuit's part of Zs) are \
             corrected to 20 °C with R20 = Rt / (1 + α(t − 20)), α = {} per K for copper \
             (IEC 60228), using the ambient temperature recorded at the visit. Ze, insulation \
             resistance and RCD times are not corrected.",
            limits::ALPHA_CU
        ),
        alpha_per_k: limits::ALPHA_CU,
        limits: limits_used,
        noise_floors: vec![
            FloorEntry {
                applies_to: "resistances and Zs (Ω)",
                resolution: t.resistance.resolution,
                absolute: t.resistance.absolute,
                relative: t.resistance.relative,
                words: floor_words(&t.resistance, "Ω"),
            },
            FloorEntry {
                applies_to: "Ze (Ω)",
                resolution: t.ze.resolution,
                absolute: t.ze.absolute,
                relative: t.ze.relative,
                words: floor_words(&t.ze, "Ω"),
            },
            FloorEntry {
                applies_to: "insulation resistance (decades of MΩ)",
                resolution: t.insulation_log10.resolution,
                absolute: t.insulation_log10.absolute,
                relative: t.insulation_log10.relative,
                words: format!(
                    "{} decades (a factor of {:.1})",
                    t.insulation_log10.at(0.0),
                    10f64.powf(t.insulation_log10.at(0.0))
                ),
            },
            FloorEntry {
                applies_to: "RCD trip times (ms)",
                resolution: t.rcd_ms.resolution,
                absolute: t.rcd_ms.absolute,
                relative: t.rcd_ms.relative,
                words: floor_words(&t.rcd_ms, "ms"),
            },
        ],
        trend_words: vec![
            "A change smaller than its noise floor is treated as no change.".into(),
            "Drift is the robust (Theil–Sen) slope from three visits on, checked against the \
             floor; a step is a jump between visits that the earlier readings do not explain."
                .into(),
            format!(
                "Projections follow the least-squares line over the readings since the last \
                 register event (repair, device change, replacement); the range is ±{} standard \
                 errors of its slope.",
                t.projection_k
            ),
            "Insulation resistance is compared on a log scale; an over-range reading (such as \
             >200 MΩ) is a lower bound, never a value."
                .into(),
            format!(
                "“Nearing a limit” means the fitted line reaches the limit before the next \
                 inspection due (last visit + {}).",
                p_interval_words(a.property.interval_months)
            ),
        ],
        visits_without_ambient: a.visits_without_ambient.clone(),
        continuity_offsets: a
            .continuity_offsets
            .iter()
            .map(|o| o.note.clone())
            .collect(),
    }
}

/// A figure with its unit for sentences: "0.83 Ω", "more than 200 MΩ".
pub fn value_words(v: f64, unit: &str, over_range: bool) -> String {
    let n = reading(v, unit);
    if over_range {
        format!("more than {n} {unit}")
    } else {
        format!("{n} {unit}")
    }
}
