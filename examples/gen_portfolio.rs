//! Writes a synthetic, invented portfolio as a visit file, for the benchmarks:
//! `gen_portfolio PROPERTIES OUT.csv [CIRCUITS VISITS PREFIX]` gives PROPERTIES × CIRCUITS
//! × VISITS rows (default 12 circuits, 5 visits, references `SMP-00000` on). More than 12
//! circuits repeat the 12 kinds; other than 5 visits (at most 10, so none is in the future)
//! fall two years apart from 2005.
//! The same arguments always give the same file (fixed seed).

use std::fs::File;
use std::io::{BufWriter, Write};

use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;

const HEADER: &str = "property_ref,address,board,earthing,circuit,description,ring,device,rcd_ma,live_mm2,cpc_mm2,length_m,visit_date,inspector,instrument,ambient_c,ze_ohm,ring_r1_ohm,ring_rn_ohm,ring_r2_ohm,r1r2_ohm,r2_ohm,r1rn_ohm,zs_ohm,ir_ll_mohm,ir_le_mohm,rcd_ms,rcd_5x_ms,note";

/// Circuit number, description, ring, device, live, cpc.
const CIRCUITS: [(&str, &str, &str, &str, &str); 12] = [
    ("Sockets ground floor", "yes", "B32", "2.5", "1.5"),
    ("Sockets first floor", "yes", "B32", "2.5", "1.5"),
    ("Kitchen sockets", "yes", "B32", "2.5", "1.5"),
    ("Cooker", "no", "B32", "6", "2.5"),
    ("Shower", "no", "B40", "10", "4"),
    ("Immersion heater", "no", "B16", "2.5", "1.5"),
    ("Lights ground floor", "no", "B6", "1.5", "1.0"),
    ("Lights first floor", "no", "B6", "1.5", "1.0"),
    ("Smoke alarms", "no", "B6", "1.5", "1.0"),
    ("Garage sockets", "no", "B20", "2.5", "1.5"),
    ("Outside lights", "no", "B6", "1.5", "1.0"),
    ("Boiler spur", "no", "B16", "2.5", "1.5"),
];

const VISIT_DATES: [&str; 5] = [
    "2005-05-10",
    "2010-06-15",
    "2015-07-20",
    "2020-08-25",
    "2025-01-30",
];

fn main() -> std::io::Result<()> {
    let args: Vec<String> = std::env::args().collect();
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
        eprintln!("usage: gen_portfolio PROPERTIES OUT.csv [CIRCUITS VISITS PREFIX]");
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
    for p in 0..n {
        let earthing = ["TN-C-S", "TN-S", "TT"][p % 3];
        let address = format!("\"{} Sample Street, Sampleton\"", p + 1);
        let base: Vec<f64> = (0..circuits).map(|_| rng.random_range(0.1..1.2)).collect();
        for (v, date) in dates.iter().enumerate() {
            let ambient = rng.random_range(5..25);
            let ze = 0.2 + 0.01 * v as f64;
            for c in 0..circuits {
                let (desc, ring, device, live, cpc) = CIRCUITS[c % CIRCUITS.len()];
                let r1r2 = base[c] * (1.0 + 0.03 * v as f64);
                let zs = r1r2 + ze;
                let (r1, rn, r2) = if ring == "yes" {
                    (
                        format!("{:.2}", base[c] * 0.6),
                        format!("{:.2}", base[c] * 0.6),
                        format!("{:.2}", base[c] * 1.0),
                    )
                } else {
                    (String::new(), String::new(), String::new())
                };
                let ir_le = if rng.random_bool(0.8) {
                    ">200".to_string()
                } else {
                    format!("{}", rng.random_range(20..200))
                };
                writeln!(
                    w,
                    "{prefix}-{p:05},{address},DB1,{earthing},{},{desc},{ring},{device},30,{live},{cpc},,{date},A. Sample,IT-{:04},{ambient},{ze:.2},{r1},{rn},{r2},{r1r2:.3},,,{zs:.3},>200,{ir_le},{},,",
                    c + 1,
                    p % 50,
                    rng.random_range(12..40)
                )?;
            }
        }
    }
    w.flush()
}
