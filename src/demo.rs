//! The invented demo portfolio: a fictional managing agent's rented homes with a history of
//! visits, seeded so that every run builds the same database. Every name, address and figure
//! here is made up.

use chrono::{Datelike, NaiveDate};
use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;

use crate::error::Result;
use crate::model::{CircuitKind, Megohms, Readings, VisitState};
use crate::store::{CircuitDetails, NewBoard, NewProperty, NewVisit, Store};

/// The fictional managing agent every demo property belongs to.
pub const DEMO_CLIENT: &str = "Quillfeather Lettings (demo)";

/// What the demo built.
#[derive(Debug, Clone, Default)]
pub struct DemoSummary {
    pub properties: Vec<String>,
    pub visits: usize,
    pub test_records: usize,
}

/// Ambient temperature on a day of the year in a temperate climate: coldest in late January,
/// warmest in late July, plus a little weather.
fn seasonal_ambient(date: NaiveDate, rng: &mut ChaCha8Rng) -> f64 {
    let day = date.ordinal0() as f64;
    let phase = (day - 205.0) / 365.25 * std::f64::consts::TAU;
    let t = 12.0 + 7.0 * phase.cos() + rng.random_range(-2.0..2.0);
    (t * 10.0).round() / 10.0
}

/// A resistance at 20 °C as an instrument would show it at `t` °C, to 0.01 Ω.
fn at_temp(r20: f64, t: f64) -> f64 {
    let rt = r20 * (1.0 + 0.00393 * (t - 20.0));
    (rt * 100.0).round() / 100.0
}

struct DemoCircuit {
    number: &'static str,
    description: &'static str,
    kind: CircuitKind,
    live: f64,
    cpc: f64,
    device: &'static str,
    rcd_ma: Option<u16>,
    /// R1+R2 at 20 °C when installed.
    r1r2: f64,
    /// Extra resistance (Ω) appearing at each visit index, for planted faults.
    story: fn(usize) -> (f64, f64),
}

fn healthy(_: usize) -> (f64, f64) {
    (0.0, 0.0)
}

/// A termination working loose on the line: R1+R2 and R1+Rn both rise from the third visit.
fn loosening(i: usize) -> (f64, f64) {
    let extra = match i {
        0 | 1 => 0.0,
        2 => 0.12,
        3 => 0.27,
        _ => 0.45,
    };
    (extra, extra)
}

/// A neutral going high-resistance: R1+Rn rises while R1+R2 stays.
fn neutral_going(i: usize) -> (f64, f64) {
    (0.0, 0.08 * (i as f64).powf(1.6))
}

/// Build the demo portfolio into an empty store.
pub fn build(store: &Store) -> Result<DemoSummary> {
    let mut rng = ChaCha8Rng::seed_from_u64(0x0f_7e_a1);
    let mut summary = DemoSummary::default();
    let homes: [(&str, &str, Vec<DemoCircuit>); 3] = [
        (
            "QL-001",
            "Flat 2, 17 Example Terrace, Sampleton SX1 0AA",
            vec![
                DemoCircuit {
                    number: "1",
                    description: "Sockets ring, ground floor",
                    kind: CircuitKind::Ring,
                    live: 2.5,
                    cpc: 1.5,
                    device: "B32",
                    rcd_ma: Some(30),
                    r1r2: 0.38,
                    story: loosening,
                },
                DemoCircuit {
                    number: "2",
                    description: "Lighting",
                    kind: CircuitKind::Radial,
                    live: 1.5,
                    cpc: 1.0,
                    device: "B6",
                    rcd_ma: Some(30),
                    r1r2: 0.92,
                    story: healthy,
                },
                DemoCircuit {
                    number: "3",
                    description: "Cooker",
                    kind: CircuitKind::Radial,
                    live: 6.0,
                    cpc: 2.5,
                    device: "B32",
                    rcd_ma: Some(30),
                    r1r2: 0.21,
                    story: healthy,
                },
            ],
        ),
        (
            "QL-002",
            "8 Placeholder Lane, Sampleton SX2 0BB",
            vec![
                DemoCircuit {
                    number: "1",
                    description: "Sockets ring",
                    kind: CircuitKind::Ring,
                    live: 2.5,
                    cpc: 1.5,
                    device: "B32",
                    rcd_ma: Some(30),
                    r1r2: 0.45,
                    story: healthy,
                },
                DemoCircuit {
                    number: "2",
                    description: "Immersion heater",
                    kind: CircuitKind::Radial,
                    live: 2.5,
                    cpc: 1.5,
                    device: "B16",
                    rcd_ma: Some(30),
                    r1r2: 0.33,
                    story: neutral_going,
                },
            ],
        ),
        (
            "QL-003",
            "Ground Floor Flat, 3 Fictional Mews, Sampleton SX3 0CC",
            vec![DemoCircuit {
                number: "1",
                description: "Sockets radial",
                kind: CircuitKind::Radial,
                live: 4.0,
                cpc: 1.5,
                device: "B32",
                rcd_ma: Some(30),
                r1r2: 0.29,
                story: healthy,
            }],
        ),
    ];
    let visit_years = [2006, 2011, 2016, 2021, 2025];

    store.atomic(|s| {
        for (reference, address, circuits) in &homes {
            s.add_property(&NewProperty {
                reference: reference.to_string(),
                address: Some(address.to_string()),
                client: Some(DEMO_CLIENT.into()),
                interval_months: None,
                notes: None,
            })?;
            let property = s.property(reference)?;
            s.add_board(
                reference,
                &NewBoard {
                    designation: "CU1".into(),
                    location: Some("Hall cupboard".into()),
                    fed_from: None,
                    earthing: Some(crate::model::Earthing::TnCS),
                },
            )?;
            let mut ids = Vec::new();
            for c in circuits {
                let circuit = s.add_circuit(
                    reference,
                    "CU1",
                    c.number,
                    &CircuitDetails {
                        description: Some(c.description.into()),
                        kind: Some(c.kind),
                        live_mm2: Some(c.live),
                        cpc_mm2: Some(c.cpc),
                        device: Some(c.device.parse().map_err(
                            |e: crate::model::DeviceError| crate::Error::invalid(e.to_string()),
                        )?),
                        rcd_ma: c.rcd_ma,
                        ..Default::default()
                    },
                )?;
                ids.push(circuit.id);
            }
            for (i, year) in visit_years.iter().enumerate() {
                let month = rng.random_range(1..=12);
                let date = NaiveDate::from_ymd_opt(*year, month, rng.random_range(1..=28))
                    .expect("day 1 to 28 exists in every month");
                let ambient = seasonal_ambient(date, &mut rng);
                let ze = 0.21 + 0.004 * i as f64 + rng.random_range(-0.01..0.01);
                let visit = s.add_visit(
                    property.id,
                    &NewVisit {
                        date: Some(date),
                        inspector: Some("A. Tester (demo)".into()),
                        instrument: Some("DEMO-MFT-01".into()),
                        ambient_c: Some(ambient),
                        ze_ohm: Some((ze * 100.0_f64).round() / 100.0),
                        pfc_ka: Some(1.1),
                    },
                    VisitState::Complete,
                )?;
                summary.visits += 1;
                for (c, id) in circuits.iter().zip(&ids) {
                    let (extra_e, extra_n) = (c.story)(i);
                    // R1+Rn sits below R1+R2 where the cpc is smaller than the line.
                    let rn_ratio = (1.0 / c.live + 1.0 / c.live) / (1.0 / c.live + 1.0 / c.cpc);
                    let r1r2 = at_temp(c.r1r2 + extra_e, ambient);
                    let r1rn = at_temp(c.r1r2 * rn_ratio + extra_n, ambient);
                    let readings = Readings {
                        r1r2_ohm: Some(r1r2),
                        r1rn_ohm: Some(r1rn),
                        zs_ohm: Some(((ze + r1r2) * 100.0).round() / 100.0),
                        ir_ll: Some(Megohms {
                            value: 200.0,
                            over_range: true,
                        }),
                        ir_le: Some(Megohms {
                            value: 200.0,
                            over_range: true,
                        }),
                        rcd_5x_ms: c.rcd_ma.map(|_| rng.random_range(17.0_f64..20.0).round()),
                        ..Default::default()
                    };
                    s.put_test_record(visit.id, *id, &readings)?;
                    summary.test_records += 1;
                }
            }
            summary.properties.push(reference.to_string());
        }
        Ok(())
    })?;
    Ok(summary)
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
        assert_eq!(
            a.visits(None)
                .unwrap()
                .iter()
                .map(|v| v.date)
                .collect::<Vec<_>>(),
            b.visits(None)
                .unwrap()
                .iter()
                .map(|v| v.date)
                .collect::<Vec<_>>()
        );
    }

    #[test]
    fn seasonal_readings_follow_copper() {
        // 0.50 Ω at 20 °C reads 0.50 × (1 + 0.00393 × (5 − 20)) = 0.4705 → 0.47 Ω at 5 °C
        // (IEC 60228 temperature coefficient 0.00393 per K).
        assert_eq!(at_temp(0.50, 5.0), 0.47);
    }
}
