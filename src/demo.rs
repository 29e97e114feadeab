//! The invented demo portfolio: a fictional managing agent's rented homes, each with a history
//! of visits over about twenty years, seeded so that every run builds the same database.
//! Every name, address and figure here is made up.
//!
//! Planted among plenty of healthy circuits: a termination working loose, a neutral going
//! high-resistance, insulation drying out, a supply whose Ze creeps up, a board replaced with
//! its circuits renumbered, a breaker downgraded, and a repair that resets a baseline.

use chrono::{Datelike, NaiveDate};
use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;

use crate::error::{Error, Result};
use crate::model::{
    Bonding, ChangeKind, CircuitKind, Device, Earthing, Megohms, ObservationCode, Readings,
    SupplyRecord, VisitReport, VisitState,
};
use crate::store::{CircuitDetails, NewBoard, NewProperty, NewVisit, Store};

/// The fictional managing agent every demo property belongs to.
pub const DEMO_CLIENT: &str = "Quillfeather Lettings (demo)";

/// What the demo built.
#[derive(Debug, Clone, Default)]
pub struct DemoSummary {
    pub properties: Vec<String>,
    pub visits: usize,
    pub test_records: usize,
    /// One line per planted story: where to look and what it shows.
    pub stories: Vec<String>,
}

/// Ambient temperature on a day of the year indoors in a temperate climate: coolest in late
/// January, warmest in late July, plus a little weather.
fn seasonal_ambient(date: NaiveDate, rng: &mut ChaCha8Rng) -> f64 {
    let day = date.ordinal0() as f64;
    let phase = (day - 205.0) / 365.25 * std::f64::consts::TAU;
    let t = 13.0 + 7.0 * phase.cos() + rng.random_range(-1.5..1.5);
    (t * 10.0).round() / 10.0
}

/// A resistance at 20 °C as an instrument would show it at `t` °C, to 0.01 Ω.
fn at_temp(r20: f64, t: f64) -> f64 {
    round2(r20 * (1.0 + crate::limits::ALPHA_CU * (t - 20.0)))
}

fn round2(v: f64) -> f64 {
    (v * 100.0).round() / 100.0
}

/// Extra resistance on each conductor at a visit (by index), and the insulation reading.
#[derive(Clone, Copy, Default)]
struct Effect {
    line: f64,
    neutral: f64,
    cpc: f64,
    /// Insulation resistance L–E in MΩ when it is no longer over range.
    ir_le: Option<f64>,
}

type Story = fn(usize) -> Effect;

fn healthy(_: usize) -> Effect {
    Effect::default()
}

/// A line termination working loose from the third visit.
fn loosening(i: usize) -> Effect {
    Effect {
        line: [0.0, 0.0, 0.11, 0.24, 0.41, 0.55][i.min(5)],
        ..Default::default()
    }
}

/// A neutral going high-resistance while R1+R2 stays.
fn neutral_going(i: usize) -> Effect {
    Effect {
        neutral: [0.0, 0.04, 0.12, 0.31, 0.58, 0.80][i.min(5)],
        ..Default::default()
    }
}

/// Insulation drying out on an outside circuit: over range, then falling away.
fn insulation_drying(i: usize) -> Effect {
    Effect {
        ir_le: [None, None, Some(48.0), Some(9.5), Some(2.1), Some(0.9)][i.min(5)],
        ..Default::default()
    }
}

/// A loose cpc found and remade: a jump at the third visit, the repair after it.
fn remade_after_step(i: usize) -> Effect {
    Effect {
        cpc: if i == 2 { 0.36 } else { 0.0 },
        ..Default::default()
    }
}

struct DemoCircuit {
    number: &'static str,
    description: &'static str,
    kind: CircuitKind,
    live: f64,
    cpc: f64,
    device: &'static str,
    rcd_ma: Option<u16>,
    /// R1+R2 at 20 °C when sound.
    r1r2: f64,
    story: Story,
}

const fn circuit(
    number: &'static str,
    description: &'static str,
    kind: CircuitKind,
    cable: (f64, f64),
    device: &'static str,
    r1r2: f64,
    story: Story,
) -> DemoCircuit {
    DemoCircuit {
        number,
        description,
        kind,
        live: cable.0,
        cpc: cable.1,
        device,
        rcd_ma: Some(30),
        r1r2,
        story,
    }
}

/// A register event between visits: after the visit with this index.
enum Event {
    /// A breaker changed to another device.
    Device {
        board: &'static str,
        number: &'static str,
        to: &'static str,
        note: &'static str,
    },
    /// Terminations remade on a circuit: a new baseline.
    Remade {
        board: &'static str,
        number: &'static str,
        note: &'static str,
    },
    /// The board replaced by a new one, circuits renumbered (old number → new number).
    NewBoard {
        old: &'static str,
        new: &'static str,
        location: &'static str,
        renumber: &'static [(&'static str, &'static str)],
    },
}

struct DemoBoard {
    designation: &'static str,
    location: &'static str,
    fed_from: Option<&'static str>,
    circuits: Vec<DemoCircuit>,
}

/// An observation recorded at a visit (by index), optionally on (board, circuit).
type DemoObservation = (
    usize,
    ObservationCode,
    Option<(&'static str, &'static str)>,
    &'static str,
);

struct DemoHome {
    reference: &'static str,
    address: &'static str,
    earthing: Earthing,
    boards: Vec<DemoBoard>,
    /// Visit dates (year, month).
    visits: &'static [(i32, u32)],
    /// Ze at the origin at each visit before noise.
    ze: fn(usize) -> f64,
    events: Vec<(usize, Event)>,
    observations: &'static [DemoObservation],
    /// Visits whose ambient temperature was not written down.
    no_ambient: &'static [usize],
}

fn steady_ze(_: usize) -> f64 {
    0.24
}

/// A supply whose Ze creeps up: a deteriorating PEN or service joint upstream.
fn creeping_ze(i: usize) -> f64 {
    [0.19, 0.21, 0.26, 0.33, 0.41, 0.47][i.min(5)]
}

fn homes() -> Vec<DemoHome> {
    use CircuitKind::{Radial, Ring};
    vec![
        DemoHome {
            reference: "QL-001",
            address: "Flat 2, 17 Example Terrace, Sampleton SX1 0AA",
            earthing: Earthing::TnCS,
            boards: vec![DemoBoard {
                designation: "CU1",
                location: "Hall cupboard",
                fed_from: None,
                circuits: vec![
                    circuit(
                        "1",
                        "Sockets ring, ground floor",
                        Ring,
                        (2.5, 1.5),
                        "B32",
                        0.38,
                        loosening,
                    ),
                    circuit("2", "Lighting", Radial, (1.5, 1.0), "B6", 0.92, healthy),
                    circuit("3", "Cooker", Radial, (6.0, 2.5), "B32", 0.21, healthy),
                    circuit(
                        "4",
                        "Sockets ring, first floor",
                        Ring,
                        (2.5, 1.5),
                        "B32",
                        0.44,
                        healthy,
                    ),
                ],
            }],
            visits: &[
                (2006, 3),
                (2011, 2),
                (2015, 9),
                (2019, 11),
                (2023, 1),
                (2026, 2),
            ],
            ze: steady_ze,
            events: vec![],
            observations: &[
                (
                    4,
                    ObservationCode::C3,
                    None,
                    "No RCD label on the consumer unit",
                ),
                (
                    5,
                    ObservationCode::FI,
                    Some(("CU1", "1")),
                    "R1+R2 on the ground floor ring higher than at the last visit; terminations not inspected at this visit",
                ),
            ],
            no_ambient: &[0],
        },
        DemoHome {
            reference: "QL-002",
            address: "8 Placeholder Lane, Sampleton SX2 0BB",
            earthing: Earthing::TnS,
            boards: vec![DemoBoard {
                designation: "CU1",
                location: "Under the stairs",
                fed_from: None,
                circuits: vec![
                    circuit("1", "Sockets ring", Ring, (2.5, 1.5), "B32", 0.45, healthy),
                    circuit(
                        "2",
                        "Immersion heater",
                        Radial,
                        (2.5, 1.5),
                        "B16",
                        0.33,
                        neutral_going,
                    ),
                    circuit("3", "Lighting", Radial, (1.5, 1.0), "B6", 0.71, healthy),
                    circuit("4", "Shower", Radial, (10.0, 4.0), "B40", 0.19, healthy),
                ],
            }],
            visits: &[
                (2005, 6),
                (2010, 5),
                (2014, 8),
                (2018, 10),
                (2022, 4),
                (2025, 10),
            ],
            ze: |_| 0.36,
            events: vec![],
            observations: &[(
                3,
                ObservationCode::C3,
                Some(("CU1", "4")),
                "Shower isolator cover cracked",
            )],
            no_ambient: &[],
        },
        DemoHome {
            reference: "QL-003",
            address: "Ground Floor Flat, 3 Fictional Mews, Sampleton SX3 0CC",
            earthing: Earthing::TnCS,
            boards: vec![
                DemoBoard {
                    designation: "CU1",
                    location: "Kitchen",
                    fed_from: None,
                    circuits: vec![
                        circuit(
                            "1",
                            "Sockets radial",
                            Radial,
                            (4.0, 1.5),
                            "B32",
                            0.29,
                            healthy,
                        ),
                        circuit("2", "Lighting", Radial, (1.5, 1.0), "B6", 0.84, healthy),
                        circuit(
                            "3",
                            "Garage sub-main",
                            Radial,
                            (6.0, 2.5),
                            "B32",
                            0.18,
                            healthy,
                        ),
                    ],
                },
                DemoBoard {
                    designation: "DB2",
                    location: "Garage",
                    fed_from: Some("CU1"),
                    circuits: vec![
                        circuit(
                            "1",
                            "Garden sockets",
                            Radial,
                            (2.5, 1.5),
                            "B16",
                            0.52,
                            insulation_drying,
                        ),
                        circuit(
                            "2",
                            "Garage lighting",
                            Radial,
                            (1.5, 1.0),
                            "B6",
                            0.61,
                            healthy,
                        ),
                    ],
                },
            ],
            visits: &[
                (2007, 4),
                (2012, 3),
                (2016, 12),
                (2020, 7),
                (2023, 9),
                (2026, 6),
            ],
            ze: steady_ze,
            events: vec![],
            observations: &[(
                5,
                ObservationCode::C2,
                Some(("DB2", "1")),
                "Garden socket enclosure damaged; water ingress evident",
            )],
            no_ambient: &[],
        },
        DemoHome {
            reference: "QL-004",
            address: "14 Sample Row, Sampleton SX4 0DD",
            earthing: Earthing::TnCS,
            boards: vec![DemoBoard {
                designation: "CU1",
                location: "Porch",
                fed_from: None,
                circuits: vec![
                    circuit("1", "Sockets ring", Ring, (2.5, 1.5), "B32", 0.41, healthy),
                    circuit("2", "Lighting", Radial, (1.5, 1.0), "B6", 0.77, healthy),
                    circuit("3", "Cooker", Radial, (6.0, 2.5), "B32", 0.24, healthy),
                ],
            }],
            visits: &[(2006, 10), (2011, 9), (2016, 6), (2021, 5), (2026, 4)],
            ze: creeping_ze,
            events: vec![],
            observations: &[],
            no_ambient: &[],
        },
        DemoHome {
            reference: "QL-005",
            address: "Top Flat, 29 Imaginary Road, Sampleton SX5 0EE",
            earthing: Earthing::TnCS,
            boards: vec![DemoBoard {
                designation: "CU1",
                location: "Landing cupboard",
                fed_from: None,
                circuits: vec![
                    circuit("1", "Sockets ring", Ring, (2.5, 1.5), "B32", 0.47, healthy),
                    circuit("2", "Lighting", Radial, (1.0, 1.0), "B6", 1.10, healthy),
                    circuit(
                        "3",
                        "Kitchen sockets",
                        Radial,
                        (2.5, 1.5),
                        "B20",
                        0.36,
                        healthy,
                    ),
                ],
            }],
            visits: &[(2005, 11), (2010, 10), (2015, 4), (2019, 3), (2024, 2)],
            ze: steady_ze,
            events: vec![(
                2,
                Event::NewBoard {
                    old: "CU1",
                    new: "CU2",
                    location: "Landing cupboard",
                    renumber: &[("1", "2"), ("2", "1"), ("3", "4")],
                },
            )],
            observations: &[(
                2,
                ObservationCode::C2,
                None,
                "Consumer unit of combustible construction; replaced after this visit",
            )],
            no_ambient: &[],
        },
        DemoHome {
            reference: "QL-006",
            address: "2 Pretend Close, Sampleton SX6 0FF",
            earthing: Earthing::TnS,
            boards: vec![DemoBoard {
                designation: "CU1",
                location: "Garage",
                fed_from: None,
                circuits: vec![
                    circuit("1", "Sockets ring", Ring, (2.5, 1.5), "B32", 0.39, healthy),
                    circuit(
                        "2",
                        "Utility radial",
                        Radial,
                        (2.5, 1.5),
                        "B32",
                        0.62,
                        healthy,
                    ),
                    circuit("3", "Lighting", Radial, (1.5, 1.0), "B6", 0.88, healthy),
                ],
            }],
            visits: &[(2008, 2), (2013, 1), (2017, 3), (2022, 2), (2026, 1)],
            ze: |_| 0.42,
            events: vec![(
                1,
                Event::Device {
                    board: "CU1",
                    number: "2",
                    to: "B20",
                    note: "32 A breaker on a long 2.5 mm² radial downgraded to 20 A",
                },
            )],
            observations: &[(
                1,
                ObservationCode::C2,
                Some(("CU1", "2")),
                "Utility radial: Zs close to the limit for a B32 on this length of cable",
            )],
            no_ambient: &[],
        },
        DemoHome {
            reference: "QL-007",
            address: "Flat 5, 40 Hypothetical Street, Sampleton SX7 0GG",
            earthing: Earthing::TnCS,
            boards: vec![DemoBoard {
                designation: "CU1",
                location: "Kitchen",
                fed_from: None,
                circuits: vec![
                    circuit(
                        "1",
                        "Sockets ring",
                        Ring,
                        (2.5, 1.5),
                        "B32",
                        0.43,
                        remade_after_step,
                    ),
                    circuit("2", "Lighting", Radial, (1.5, 1.0), "B6", 0.69, healthy),
                    circuit("3", "Oven", Radial, (4.0, 1.5), "B20", 0.26, healthy),
                ],
            }],
            visits: &[(2009, 5), (2013, 6), (2017, 8), (2021, 9), (2025, 8)],
            ze: steady_ze,
            events: vec![(
                2,
                Event::Remade {
                    board: "CU1",
                    number: "1",
                    note: "Loose cpc at a socket found and remade",
                },
            )],
            observations: &[],
            no_ambient: &[],
        },
        DemoHome {
            reference: "QL-008",
            address: "11 Notional Gardens, Sampleton SX8 0HH",
            earthing: Earthing::TnCS,
            boards: vec![
                DemoBoard {
                    designation: "CU1",
                    location: "Hall",
                    fed_from: None,
                    circuits: vec![
                        circuit(
                            "1",
                            "Sockets ring, downstairs",
                            Ring,
                            (2.5, 1.5),
                            "B32",
                            0.40,
                            healthy,
                        ),
                        circuit(
                            "2",
                            "Sockets ring, upstairs",
                            Ring,
                            (2.5, 1.5),
                            "B32",
                            0.46,
                            healthy,
                        ),
                        circuit("3", "Lighting", Radial, (1.5, 1.0), "B6", 0.81, healthy),
                        circuit(
                            "4",
                            "Annexe sub-main",
                            Radial,
                            (10.0, 4.0),
                            "B40",
                            0.12,
                            healthy,
                        ),
                    ],
                },
                DemoBoard {
                    designation: "DB2",
                    location: "Annexe",
                    fed_from: Some("CU1"),
                    circuits: vec![
                        circuit(
                            "1",
                            "Annexe sockets",
                            Radial,
                            (2.5, 1.5),
                            "B20",
                            0.34,
                            healthy,
                        ),
                        circuit(
                            "2",
                            "Annexe lighting",
                            Radial,
                            (1.5, 1.0),
                            "B6",
                            0.58,
                            healthy,
                        ),
                    ],
                },
            ],
            visits: &[(2010, 9), (2014, 10), (2019, 7), (2024, 6)],
            ze: steady_ze,
            events: vec![],
            observations: &[],
            no_ambient: &[],
        },
    ]
}

fn device(text: &str) -> Result<Device> {
    text.parse()
        .map_err(|e: crate::model::DeviceError| Error::invalid(e.to_string()))
}

/// Build the demo portfolio into an empty store.
pub fn build(store: &Store) -> Result<DemoSummary> {
    let mut rng = ChaCha8Rng::seed_from_u64(0x0f_7e_a1);
    let mut summary = DemoSummary {
        stories: vec![
            "QL-001 CU1/1: a termination working loose (R1+R2 and R1+Rn step up from 2015)".into(),
            "QL-002 CU1/2: a neutral going high-resistance (R1+Rn climbs while R1+R2 stays)".into(),
            "QL-003 DB2/1: insulation drying out on the garden sockets (IR L–E from >200 MΩ to 0.9 MΩ)".into(),
            "QL-004: Ze creeping up at the origin, 0.19 to 0.41 Ω (a supply matter)".into(),
            "QL-005: consumer unit replaced in 2015 with circuits renumbered; histories carry on".into(),
            "QL-006 CU1/2: breaker downgraded from B32 to B20 in 2013; the limit changes with it".into(),
            "QL-007 CU1/1: a loose cpc remade after 2017; the baseline restarts and the drop is not 'improving'".into(),
            "QL-003 DB2/1: the C2 on the garden socket made safe on the day and remedied 18 days later; QL-001's FI still open and overdue".into(),
        ],
        ..Default::default()
    };
    store.atomic(|s| {
        s.add_instrument(
            "DEMO-MFT-01",
            Some("multifunction tester (demo)"),
            NaiveDate::from_ymd_opt(2016, 1, 31),
        )?;
        s.add_instrument(
            "DEMO-MFT-02",
            Some("multifunction tester (demo)"),
            NaiveDate::from_ymd_opt(2027, 3, 31),
        )?;
        for home in homes() {
            build_home(s, &home, &mut rng, &mut summary)?;
            summary.properties.push(home.reference.to_string());
        }
        remedial_work(s)
    })?;
    Ok(summary)
}

/// The demo's remedial follow-up: QL-003's C2 made safe at the visit and remedied 18 days
/// later (invented names and dates).
fn remedial_work(s: &Store) -> Result<()> {
    use crate::model::remedial::{NewRemedialEvent, RemedialKind};
    let p = s.property("QL-003")?;
    let h = s.history(p.id)?;
    let Some(o) = h
        .observations
        .iter()
        .find(|o| o.code == ObservationCode::C2)
    else {
        return Ok(());
    };
    let at = |y, m, d| NaiveDate::from_ymd_opt(y, m, d).expect("valid date");
    for (kind, date, what) in [
        (
            RemedialKind::MadeSafe,
            at(2026, 6, 6),
            "Garden socket circuit DB2/1 isolated at the board and labelled",
        ),
        (
            RemedialKind::Remedied,
            at(2026, 6, 24),
            "Damaged enclosure replaced with a weatherproof one; DB2/1 re-tested, IR L-E over range",
        ),
    ] {
        let event = NewRemedialEvent {
            kind,
            date: Some(date),
            by: Some("C. Quillon (demo)".into()),
            what: Some(what.into()),
            period_days: None,
        };
        s.add_remedial_event(o.id, &event, date)?;
    }
    Ok(())
}

fn build_home(
    s: &Store,
    home: &DemoHome,
    rng: &mut ChaCha8Rng,
    summary: &mut DemoSummary,
) -> Result<()> {
    s.add_property(&NewProperty {
        reference: home.reference.into(),
        address: Some(home.address.into()),
        client: Some(DEMO_CLIENT.into()),
        interval_months: None,
        notes: None,
    })?;
    let property = s.property(home.reference)?;
    // (board, number) now in service for each planted circuit, updated by renumbering.
    let mut live: Vec<(String, String, &DemoCircuit)> = Vec::new();
    for b in &home.boards {
        s.add_board(
            home.reference,
            &NewBoard {
                designation: b.designation.into(),
                location: Some(b.location.into()),
                fed_from: b.fed_from.map(Into::into),
                earthing: Some(home.earthing),
            },
        )?;
        for c in &b.circuits {
            s.add_circuit(
                home.reference,
                b.designation,
                c.number,
                &CircuitDetails {
                    description: Some(c.description.into()),
                    kind: Some(c.kind),
                    live_mm2: Some(c.live),
                    cpc_mm2: Some(c.cpc),
                    device: Some(device(c.device)?),
                    rcd_ma: c.rcd_ma,
                    insulation: Some(crate::model::Insulation::Thermoplastic70),
                    ..Default::default()
                },
            )?;
            live.push((b.designation.into(), c.number.into(), c));
        }
    }
    // Per-circuit RCD speed, steady from visit to visit.
    let rcd_speed: Vec<f64> = live.iter().map(|_| rng.random_range(16.0..23.0)).collect();

    for (i, (year, month)) in home.visits.iter().enumerate() {
        let date = NaiveDate::from_ymd_opt(*year, *month, rng.random_range(3..=26))
            .expect("day 3 to 26 exists in every month");
        let ambient = seasonal_ambient(date, rng);
        let recorded_ambient = (!home.no_ambient.contains(&i)).then_some(ambient);
        let ze = round2((home.ze)(i) + rng.random_range(-0.006..0.006));
        let visit = s.add_visit(
            property.id,
            &NewVisit {
                date: Some(date),
                inspector: Some(
                    if *year < 2016 {
                        "A. Tester (demo)"
                    } else {
                        "B. Meter (demo)"
                    }
                    .into(),
                ),
                instrument: Some(
                    if *year < 2016 {
                        "DEMO-MFT-01"
                    } else {
                        "DEMO-MFT-02"
                    }
                    .into(),
                ),
                ambient_c: recorded_ambient,
                ze_ohm: Some(ze),
                pfc_ka: Some(round2(0.23 / ze.max(0.05))),
                ..Default::default()
            },
            VisitState::Complete,
        )?;
        summary.visits += 1;
        // The inspector's report and the supply as recorded (invented): the outcome in the
        // inspector's own words, unsatisfactory where they recorded a C1 or C2 at the visit.
        let coded = home.observations.iter().any(|(at, code, _, _)| {
            *at == i && matches!(code, ObservationCode::C1 | ObservationCode::C2)
        });
        s.set_visit_report_supply(
            visit.id,
            &VisitReport {
                report_ref: Some(format!("{}-{year}", home.reference)),
                outcome: Some(
                    if coded {
                        "Unsatisfactory"
                    } else {
                        "Satisfactory"
                    }
                    .into(),
                ),
                interval_months: Some(60),
                extent: Some("Whole installation".into()),
                limitations: None,
            },
            &SupplyRecord {
                u0_v: Some(230.0),
                bonding_csa_mm2: Some(10.0),
                bonding_water: Some(Bonding::Yes),
                bonding_gas: Some(Bonding::Yes),
                ..Default::default()
            },
        )?;
        // A sub-board's Zdb is Ze plus its sub-main's R1+R2 (the feeding board's circuit
        // described as a sub-main); the demo records Zdb at even visits and only the sub-main's
        // R1+R2 at odd ones.
        let mut board_ze: Vec<(&str, f64)> = Vec::new();
        for b in home.boards.iter().filter(|b| b.fed_from.is_some()) {
            let submain = home
                .boards
                .iter()
                .filter(|p| Some(p.designation) == b.fed_from)
                .flat_map(|p| &p.circuits)
                .find(|c| c.description.contains("sub-main"))
                .map_or(0.0, |c| round2(at_temp(c.r1r2, ambient)));
            let zdb = round2(ze + submain);
            let board = s.board(property.id, home.reference, b.designation)?;
            let (zdb_rec, sub_rec) = if i % 2 == 0 {
                (Some(zdb), None)
            } else {
                (None, Some(submain))
            };
            s.set_board_submain(visit.id, board.id, zdb_rec, sub_rec)?;
            board_ze.push((b.designation, zdb));
        }
        for (k, (board, number, c)) in live.iter().enumerate() {
            let ze_here = board_ze
                .iter()
                .find(|(b, _)| b == board)
                .map_or(ze, |(_, z)| *z);
            let circuit = s.find_circuit(home.reference, board, number)?;
            let e = (c.story)(i);
            let noise = |rng: &mut ChaCha8Rng| rng.random_range(-0.006..0.006);
            let rho = |csa| {
                crate::limits::copper_mohm_per_m(csa)
                    .map(|r| r.mohm_per_m)
                    .map_err(|e| Error::invalid(e.to_string()))
            };
            let (rl, rc) = (rho(c.live)?, rho(c.cpc)?);
            let line = c.r1r2 * rl / (rl + rc);
            let cpc = c.r1r2 - line;
            let r1r2 = at_temp(line + cpc + e.line + e.cpc + noise(rng), ambient);
            let r1rn = at_temp(line * 2.0 + e.line + e.neutral + noise(rng), ambient);
            let mut readings = Readings {
                r1r2_ohm: Some(r1r2),
                r1rn_ohm: Some(r1rn),
                ir_ll: Some(Megohms {
                    value: if *year < 2012 { 200.0 } else { 999.0 },
                    over_range: true,
                }),
                ir_le: Some(match e.ir_le {
                    Some(v) => Megohms {
                        value: v,
                        over_range: false,
                    },
                    None => Megohms {
                        value: if *year < 2012 { 200.0 } else { 999.0 },
                        over_range: true,
                    },
                }),
                rcd_ms: Some((rcd_speed[k] * 1.6 + rng.random_range(-1.0..1.0)).round()),
                // Many inspectors record a 5 × IΔn time too, though since A2:2022 only the
                // IΔn test is required (Reg 643.8); this one is supplementary.
                rcd_5x_ms: (*year >= 2012)
                    .then(|| (rcd_speed[k] + rng.random_range(-1.0..1.0)).round()),
                ..Default::default()
            };
            // Measured Zs at most visits; the rest leave it to Ze + R1+R2.
            if i % 3 != 1 {
                readings.zs_ohm = Some(round2(ze_here + r1r2 + noise(rng)));
            }
            if c.kind == CircuitKind::Ring {
                // End to end: r1 = rn = 4 × line share, r2 = 4 × cpc share (IET Guidance Note 3 relations).
                readings.ring_r1_ohm = Some(at_temp(4.0 * line + noise(rng), ambient));
                readings.ring_rn_ohm = Some(at_temp(4.0 * line + noise(rng), ambient));
                readings.ring_r2_ohm = Some(at_temp(4.0 * cpc + 4.0 * e.cpc + noise(rng), ambient));
            }
            s.put_test_record(visit.id, circuit.id, &readings)?;
            summary.test_records += 1;
        }
        for (at, code, place, text) in home.observations {
            if *at != i {
                continue;
            }
            let (board_id, circuit_id) = match place {
                Some((b, n)) => {
                    let c = s.find_circuit(home.reference, b, n)?;
                    (Some(c.board_id), Some(c.id))
                }
                None => (None, None),
            };
            s.add_observation(visit.id, board_id, circuit_id, *code, text)?;
        }
        // Work done after this visit takes effect a few months later.
        let work_date = NaiveDate::from_ymd_opt(*year, 12, 15).expect("valid date");
        for (after, event) in &home.events {
            if *after != i {
                continue;
            }
            match event {
                Event::Device {
                    board,
                    number,
                    to,
                    note,
                } => {
                    let c = s.find_circuit(home.reference, board, number)?;
                    s.edit_circuit(
                        c.id,
                        &CircuitDetails {
                            device: Some(device(to)?),
                            ..Default::default()
                        },
                        work_date,
                        Some(ChangeKind::DeviceChanged),
                        None,
                        Some(note),
                    )?;
                }
                Event::Remade {
                    board,
                    number,
                    note,
                } => {
                    let c = s.find_circuit(home.reference, board, number)?;
                    s.record_change(
                        c.id,
                        work_date,
                        ChangeKind::TerminationsRemade,
                        None,
                        None,
                        None,
                        None,
                        Some(note),
                    )?;
                }
                Event::NewBoard {
                    old,
                    new,
                    location,
                    renumber,
                } => {
                    s.add_board(
                        home.reference,
                        &NewBoard {
                            designation: (*new).into(),
                            location: Some((*location).into()),
                            fed_from: None,
                            earthing: Some(home.earthing),
                        },
                    )?;
                    for (from, to) in renumber.iter() {
                        let c = s.find_circuit(home.reference, old, from)?;
                        s.replace_circuit(
                            c.id,
                            Some(new),
                            Some(to),
                            &CircuitDetails::default(),
                            work_date,
                            ChangeKind::BoardReplaced,
                            Some("consumer unit replaced; circuit renumbered"),
                        )?;
                        for entry in live.iter_mut() {
                            if entry.0 == *old && entry.1 == *from {
                                entry.0 = (*new).into();
                                entry.1 = (*to).into();
                            }
                        }
                    }
                    s.retire_board(property.id, old)?;
                }
            }
        }
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn demo_is_deterministic() {
        let a = Store::open_in_memory().unwrap();
        let b = Store::open_in_memory().unwrap();
        let sa = build(&a).unwrap();
        let sb = build(&b).unwrap();
        assert_eq!(sa.properties, sb.properties);
        assert_eq!(sa.properties.len(), 8);
        let readings = |s: &Store| {
            let mut all = Vec::new();
            s.for_each_history(|h| {
                all.extend(h.records.into_iter().map(|r| r.readings));
                Ok(())
            })
            .unwrap();
            all
        };
        assert_eq!(readings(&a), readings(&b));
    }

    #[test]
    fn seasonal_readings_follow_copper() {
        // 0.50 Ω at 20 °C reads 0.50 × (1 + 0.00393 × (5 − 20)) = 0.4705 → 0.47 Ω at 5 °C
        // (IEC 60228 temperature coefficient 0.00393 per K).
        assert_eq!(at_temp(0.50, 5.0), 0.47);
    }

    #[test]
    fn every_planted_story_is_found() {
        let s = Store::open_in_memory().unwrap();
        build(&s).unwrap();
        let settings =
            crate::analysis::Settings::defaults(NaiveDate::from_ymd_opt(2026, 12, 1).unwrap());
        let flags = crate::analysis::worklist(&s, &settings, &Default::default()).unwrap();
        // A circuit's row holds every finding on it, the most serious first.
        let has = |p: &str, c: Option<&str>, q: &str| {
            flags.iter().any(|f| {
                f.property_ref == p
                    && f.circuit.as_deref() == c
                    && f.findings.iter().any(|g| g.quantity == q)
            })
        };
        assert!(has("QL-001", Some("1"), "r1r2"), "loose termination");
        assert!(has("QL-002", Some("2"), "r1rn"), "neutral");
        assert!(has("QL-003", Some("1"), "ir_le"), "insulation");
        assert!(has("QL-004", None, "ze"), "Ze rise");
        // The repaired ring is not flagged after its repair.
        assert!(
            !flags
                .iter()
                .any(|f| f.property_ref == "QL-007" && f.circuit.as_deref() == Some("1")),
            "{flags:#?}"
        );
        // The renumbered circuits keep their history.
        let a = crate::analysis::analyse_property(&s, "QL-005", &settings).unwrap();
        let c = a
            .circuits
            .iter()
            .find(|c| c.board == "CU2" && c.circuit.number == "2")
            .unwrap();
        assert_eq!(c.lineage, vec!["CU1/1".to_string(), "CU2/2".to_string()]);
        // The downgraded breaker is judged as a B20.
        let a = crate::analysis::analyse_property(&s, "QL-006", &settings).unwrap();
        let c = a.circuits.iter().find(|c| c.circuit.number == "2").unwrap();
        assert_eq!(c.zs_limit.as_ref().unwrap().device_text, "B20");
        // Healthy circuits are the majority and stay quiet.
        let flagged: std::collections::HashSet<_> = flags
            .iter()
            .map(|f| (f.property_ref.clone(), f.board.clone(), f.circuit.clone()))
            .collect();
        let circuits: usize = s
            .list_properties()
            .unwrap()
            .iter()
            .map(|p| p.circuits as usize)
            .sum();
        assert!(
            flagged.len() * 3 < circuits,
            "{} of {circuits} circuits flagged: {flags:#?}",
            flagged.len()
        );
    }
}
