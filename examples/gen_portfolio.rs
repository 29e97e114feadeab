//! Writes a synthetic, invented portfolio as a visit file, for the benchmarks:
//! `gen_portfolio PROPERTIES OUT.csv [CIRCUITS VISITS PREFIX]` gives PROPERTIES × CIRCUITS
//! × VISITS rows (default 12 circuits, 5 visits, references `SMP-00000` on). More than 12
//! circuits repeat the 12 kinds; other than 5 visits (at most 10, so none is in the future)
//! fall two years apart from 2005.
//! The same arguments always give the same file (fixed seed).
//! With `--newest-apart` as the last argument, the newest visit of every property goes to a
//! second file beside OUT.csv, named with `.newest.csv` in place of `.csv`, and OUT.csv holds the
//! earlier visits: the two files together hold the same rows as the one file without it.

use std::fs::File;
use std::io::{BufWriter, Write};

use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;

const HEADER: &str = "property_ref,address,board,earthing,circuit,description,ring,device,rcd_ma,live_mm2,cpc_mm2,length_m,visit_date,inspector,instrument,ambient_c,ze_ohm,ring_r1_ohm,ring_rn_ohm,ring_r2_ohm,r1r2_ohm,r2_ohm,r1rn_ohm,zs_ohm,ir_ll_mohm,ir_le_mohm,rcd_ms,rcd_5x_ms,note";

/// Description, ring, device, live and cpc csa (mm²), cable length range (m; a ring's loop).
type Kind = (&'static str, &'static str, &'static str, f64, f64, f64, f64);
const CIRCUITS: [Kind; 12] = [
    ("Sockets ground floor", "yes", "B32", 2.5, 1.5, 40.0, 80.0),
    ("Sockets first floor", "yes", "B32", 2.5, 1.5, 40.0, 80.0),
    ("Kitchen sockets", "yes", "B32", 2.5, 1.5, 30.0, 60.0),
    ("Cooker", "no", "B32", 6.0, 2.5, 5.0, 20.0),
    ("Shower", "no", "B40", 10.0, 4.0, 5.0, 20.0),
    ("Immersion heater", "no", "B16", 2.5, 1.5, 5.0, 20.0),
    ("Lights ground floor", "no", "B6", 1.5, 1.0, 10.0, 40.0),
    ("Lights first floor", "no", "B6", 1.5, 1.0, 10.0, 40.0),
    ("Smoke alarms", "no", "B6", 1.5, 1.0, 10.0, 30.0),
    ("Garage sockets", "no", "B20", 2.5, 1.5, 10.0, 30.0),
    ("Outside lights", "no", "B6", 1.5, 1.0, 5.0, 25.0),
    ("Boiler spur", "no", "B16", 2.5, 1.5, 5.0, 15.0),
];

/// Copper resistance at 20 °C in mΩ/m (IEC 60228, the limits module's table); every size in
/// [`CIRCUITS`] is tabulated.
fn copper_mohm_per_m(csa: f64) -> f64 {
    ohmtrail::limits::copper_mohm_per_m(csa)
        .expect("a tabulated size")
        .mohm_per_m
}

/// How one circuit ages over the visits: most stay as installed.
#[derive(Clone, Copy, PartialEq)]
enum Story {
    Healthy,
    /// A termination working loose: added resistance from the third visit on.
    Loosening,
    /// Insulation drying out or taking in moisture: IR falling visit by visit.
    IrFalling,
}

const VISIT_DATES: [&str; 5] = [
    "2005-05-10",
    "2010-06-15",
    "2015-07-20",
    "2020-08-25",
    "2025-01-30",
];

fn main() -> std::io::Result<()> {
    let mut args: Vec<String> = std::env::args().collect();
    let newest_apart = args.last().is_some_and(|a| a == "--newest-apart");
    if newest_apart {
        args.pop();
    }
    let number = |i: usize, default: usize| match args.get(i) {
        None => Some(default),
        Some(s) => s.parse::<usize>().ok().filter(|n| *n > 0),
    };
    let visits_ok = |v: usize| (1..=10).contains(&v);
    let (Some(n), Some(out), Some(circuits), Some(visits)) = (
        number(1, 0),
        args.get(2),
        number(3, 12),
        number(4, 5).filter(|v| visits_ok(*v)),
    ) else {
        eprintln!(
            "usage: gen_portfolio PROPERTIES OUT.csv [CIRCUITS VISITS PREFIX] [--newest-apart]"
        );
        std::process::exit(2);
    };
    let prefix = args.get(5).map(String::as_str).unwrap_or("SMP");
    let dates: Vec<String> = if visits == 5 {
        VISIT_DATES.iter().map(|d| d.to_string()).collect()
    } else {
        (0..visits)
            .map(|v| format!("{}-0{}-1{}", 2005 + 2 * v, 1 + v % 9, v % 10))
            .collect()
    };
    let mut rng = ChaCha8Rng::seed_from_u64(7);
    let mut w = BufWriter::with_capacity(1 << 20, File::create(out)?);
    writeln!(w, "{HEADER}")?;
    let mut newest = if newest_apart {
        let path = format!("{}.newest.csv", out.strip_suffix(".csv").unwrap_or(out));
        let mut n = BufWriter::with_capacity(1 << 20, File::create(path)?);
        writeln!(n, "{HEADER}")?;
        Some(n)
    } else {
        None
    };
    for p in 0..n {
        // Two in three homes on a PME supply, the rest on the supplier's cable sheath.
        let (earthing, ze_base) = if p % 3 == 2 {
            ("TN-S", rng.random_range(0.25..0.5))
        } else {
            ("TN-C-S", rng.random_range(0.12..0.3))
        };
        let address = format!("\"{} Sample Street, Sampleton\"", p + 1);
        let plan: Vec<(f64, f64, Story)> = (0..circuits)
            .map(|c| {
                let k = CIRCUITS[c % CIRCUITS.len()];
                let length = rng.random_range(k.5..k.6);
                let rcd = rng.random_range(15.0..30.0);
                let story = match rng.random_range(0..100) {
                    0 | 1 => Story::Loosening,
                    2 => Story::IrFalling,
                    _ => Story::Healthy,
                };
                (length, rcd, story)
            })
            .collect();
        for (v, date) in dates.iter().enumerate() {
            let ambient: f64 = rng.random_range(5.0..25.0_f64).round();
            let heat =
                ohmtrail::limits::temperature_factor(ambient).expect("an ambient from 5 to 25 °C");
            let ze = ze_base * rng.random_range(0.97..1.03);
            let w: &mut BufWriter<File> = match newest.as_mut() {
                Some(n) if v + 1 == dates.len() => n,
                _ => &mut w,
            };
            for (c, &(length, rcd, story)) in plan.iter().enumerate() {
                let (desc, ring, device, live, cpc, _, _) = CIRCUITS[c % CIRCUITS.len()];
                let (rl, rc) = (copper_mohm_per_m(live), copper_mohm_per_m(cpc));
                let loose = if story == Story::Loosening && v >= 2 {
                    0.08 * (v - 1) as f64
                } else {
                    0.0
                };
                let (r1r2, ring_cells) = if ring == "yes" {
                    // End-to-end resistances of the loop; R1+R2 at a socket is (r1 + r2) / 4.
                    let r1 = length * rl / 1000.0 * heat;
                    let r2 = length * rc / 1000.0 * heat;
                    ((r1 + r2) / 4.0 + loose, format!("{r1:.2},{r1:.2},{r2:.2}"))
                } else {
                    (length * (rl + rc) / 1000.0 * heat + loose, ",,".into())
                };
                let zs = r1r2 + ze;
                let ir_le = match story {
                    Story::IrFalling if v > 0 => format!("{:.1}", 200.0 / 4f64.powi(v as i32)),
                    _ => ">200".into(),
                };
                let rcd_ms = rcd + rng.random_range(-1.5..1.5);
                writeln!(
                    w,
                    "{prefix}-{p:05},{address},DB1,{earthing},{},{desc},{ring},{device},30,{live},{cpc},{length:.0},{date},A. Sample,IT-{:04},{ambient},{ze:.2},{ring_cells},{r1r2:.2},,,{zs:.2},>200,{ir_le},{rcd_ms:.1},,",
                    c + 1,
                    p % 50,
                )?;
            }
        }
    }
    if let Some(mut n) = newest {
        n.flush()?;
    }
    w.flush()
}
