//! Benchmark (not a test): the time to build one property's report, with 30 circuits × 10
//! visits, from a portfolio of 1,000 and of 100,000 properties. Target: under 50 ms, and the
//! time should not grow with the portfolio (ratio ≤ 1.2).
//!
//! Run with `cargo bench --bench report`. The databases are generated with the store API in
//! one transaction and cached under `target/bench-cache/` (delete them to rebuild). Every
//! figure is invented.

use std::path::{Path, PathBuf};
use std::time::{Duration, Instant};

use chrono::NaiveDate;

use ohmtrail::analysis::{self, Settings};
use ohmtrail::model::{CircuitKind, Earthing, Megohms, Readings, VisitState};
use ohmtrail::report;
use ohmtrail::store::{CircuitDetails, NewBoard, NewProperty, NewVisit, Store};

const TARGET: &str = "BENCH-TARGET";
const CIRCUITS: usize = 30;
const VISITS: usize = 10;
/// Bump when the generated data changes, so stale caches are not reused.
const GENERATOR: u32 = 1;
const RUNS: usize = 40;

fn date(year: i32, month: u32) -> NaiveDate {
    NaiveDate::from_ymd_opt(year, month, 14).expect("the 14th exists in every month")
}

/// A small deterministic scatter in [-1, 1], so readings are not all identical.
fn wobble(i: usize, j: usize) -> f64 {
    let x = (i as u64).wrapping_mul(2_654_435_761) ^ (j as u64).wrapping_mul(40_503);
    ((x % 2001) as f64 / 1000.0) - 1.0
}

fn add_property(
    s: &Store,
    reference: &str,
    circuits: usize,
    visits: usize,
) -> ohmtrail::Result<()> {
    s.add_property(&NewProperty {
        reference: reference.into(),
        address: Some(format!("{reference} Invented Street, Benchtown")),
        client: Some("Bench Lettings (invented)".into()),
        interval_months: Some(60),
        notes: None,
    })?;
    let p = s.property(reference)?;
    s.add_board(
        reference,
        &NewBoard {
            designation: "CU1".into(),
            location: Some("Hall".into()),
            fed_from: None,
            earthing: Some(Earthing::TnCS),
        },
    )?;
    let device = "B32".parse().expect("B32 is a device");
    let mut ids = Vec::with_capacity(circuits);
    for c in 0..circuits {
        let circuit = s.add_circuit(
            reference,
            "CU1",
            &(c + 1).to_string(),
            &CircuitDetails {
                description: Some(format!("Circuit {} (invented)", c + 1)),
                kind: Some(if c % 3 == 0 {
                    CircuitKind::Ring
                } else {
                    CircuitKind::Radial
                }),
                live_mm2: Some(2.5),
                cpc_mm2: Some(1.5),
                device: Some(device),
                rcd_ma: Some(30),
                ..Default::default()
            },
        )?;
        ids.push(circuit.id);
    }
    for v in 0..visits {
        let visit = s.add_visit(
            p.id,
            &NewVisit {
                date: Some(date(2000 + 2 * v as i32, 1 + (v as u32 * 5) % 12)),
                inspector: Some("Bench Inspector (invented)".into()),
                instrument: Some("BENCH-1".into()),
                ambient_c: Some(12.0 + 6.0 * wobble(v, 7)),
                ze_ohm: Some(0.22),
                pfc_ka: Some(1.1),
                ..Default::default()
            },
            VisitState::Complete,
        )?;
        for (c, id) in ids.iter().enumerate() {
            // A third of the circuits drift upwards, so the report has findings and charts.
            let drift = if c % 3 == 1 { 0.04 * v as f64 } else { 0.0 };
            let r1r2 = 0.30 + 0.02 * c as f64 + drift + 0.005 * wobble(v, c);
            s.put_test_record(
                visit.id,
                *id,
                &Readings {
                    r1r2_ohm: Some((r1r2 * 100.0).round() / 100.0),
                    r1rn_ohm: Some((r1r2 * 0.76 * 100.0).round() / 100.0),
                    zs_ohm: Some(((0.22 + r1r2) * 100.0).round() / 100.0),
                    ir_ll: Some(Megohms {
                        value: 200.0,
                        over_range: true,
                    }),
                    ir_le: Some(Megohms {
                        value: 200.0,
                        over_range: true,
                    }),
                    rcd_5x_ms: Some(18.0 + wobble(v, c)),
                    ..Default::default()
                },
            )?;
        }
    }
    Ok(())
}

/// A portfolio of `n` properties: the target (30 circuits × 10 visits) in the middle of the
/// reference order, the rest small (3 circuits × 2 visits).
fn build(path: &Path, n: usize) -> ohmtrail::Result<()> {
    let store = Store::open(path)?;
    store.atomic(|s| {
        for i in 0..n - 1 {
            if i == n / 2 {
                add_property(s, TARGET, CIRCUITS, VISITS)?;
            }
            add_property(s, &format!("BENCH-{i:06}"), 3, 2)?;
        }
        if n == 1 {
            add_property(s, TARGET, CIRCUITS, VISITS)?;
        }
        Ok(())
    })
}

fn cached_db(n: usize) -> PathBuf {
    let dir = Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("target")
        .join("bench-cache");
    std::fs::create_dir_all(&dir).expect("can create target/bench-cache");
    let schema = ohmtrail::store::migrate::latest_version();
    let path = dir.join(format!("report-{n}-g{GENERATOR}-s{schema}.db"));
    if !path.exists() {
        let tmp = path.with_extension("building");
        let _ = std::fs::remove_file(&tmp);
        let t = Instant::now();
        eprintln!("building {n} properties into {} …", path.display());
        build(&tmp, n).expect("the bench database builds");
        std::fs::rename(&tmp, &path).expect("can move the built database into place");
        eprintln!("built in {:.1} s", t.elapsed().as_secs_f64());
    }
    path
}

struct Timing {
    total: Duration,
    fastest: Duration,
    load: Duration,
    analyse: Duration,
    render: Duration,
}

fn median(mut v: Vec<Duration>) -> Duration {
    v.sort();
    v[v.len() / 2]
}

fn time_report(path: &Path, settings: &Settings) -> (Timing, usize) {
    let store = Store::open(path).expect("the bench database opens");
    let mut total = Vec::new();
    let mut load = Vec::new();
    let mut analyse = Vec::new();
    let mut render = Vec::new();
    let mut size = 0;
    // Warm the page cache and prepared statements first, as a second report in a run would.
    for _ in 0..3 {
        size = report::property_html(&store, TARGET, settings)
            .expect("the report renders")
            .len();
    }
    for _ in 0..RUNS {
        let t0 = Instant::now();
        let html = report::property_html(&store, TARGET, settings).expect("the report renders");
        total.push(t0.elapsed());
        std::hint::black_box(html);
    }
    for _ in 0..RUNS {
        // The same work in its three phases.
        let t0 = Instant::now();
        let id = store.property(TARGET).expect("target exists").id;
        let h = store.history(id).expect("history loads");
        let t1 = Instant::now();
        let a = analysis::analyse(&h, settings);
        let t2 = Instant::now();
        let page = report::property::render(&report::model::build(&a));
        let t3 = Instant::now();
        std::hint::black_box(page);
        load.push(t1 - t0);
        analyse.push(t2 - t1);
        render.push(t3 - t2);
    }
    (
        Timing {
            fastest: total.iter().copied().min().unwrap_or_default(),
            total: median(total),
            load: median(load),
            analyse: median(analyse),
            render: median(render),
        },
        size,
    )
}

fn ms(d: Duration) -> f64 {
    d.as_secs_f64() * 1000.0
}

fn main() {
    // `cargo test --benches` runs this with no `--bench`: do nothing then.
    if !std::env::args().any(|a| a == "--bench") {
        return;
    }
    let settings = Settings::defaults(date(2020, 6));
    let mut results = Vec::new();
    for n in [1_000, 100_000] {
        let path = cached_db(n);
        let (t, size) = time_report(&path, &settings);
        println!(
            "portfolio {n:>7} properties: one report (30 circuits × 10 visits, {:.0} kB) median {:.2} ms, \
             fastest {:.2} ms over {RUNS} runs [phases, medians: load {:.2} ms, analyse {:.2} ms, render {:.2} ms]",
            size as f64 / 1024.0,
            ms(t.total),
            ms(t.fastest),
            ms(t.load),
            ms(t.analyse),
            ms(t.render)
        );
        results.push((t.total, t.fastest));
    }
    let ratio = results[1].0.as_secs_f64() / results[0].0.as_secs_f64();
    let ratio_fastest = results[1].1.as_secs_f64() / results[0].1.as_secs_f64();
    println!(
        "ratio 100,000 / 1,000: {ratio:.2} by median, {ratio_fastest:.2} by fastest (target ≤ 1.2); \
         target < 50 ms: {}",
        if ms(results[1].0) < 50.0 && ms(results[0].0) < 50.0 {
            "met"
        } else {
            "not met"
        }
    );
}
