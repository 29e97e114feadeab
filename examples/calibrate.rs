//! Calibrate the worklist and the visit brief on a simulated, noisy portfolio with known faults.
//!
//! ```sh
//! cargo run --release --example calibrate -- --homes 1000 --seed 1 --noise 1.0 \
//!     [--csv OUT.csv] [--keep DIR] [--dump-false N] [--dump-missed N] [--no-backtest]
//! ```
//!
//! Generates the portfolio (`ohmtrail::sim`), writes its visit file, imports it into a fresh
//! database, runs the worklist with the settings the database holds (as `ohmtrail flags`
//! does), scores it against the truth, then holds out each home's last visit and backtests the
//! brief's band. Prints a compact table; `--csv` appends one line per figure (`seed, noise,
//! homes, section, name, value`) for the benchmark script. Invented data throughout.

use std::collections::BTreeMap;
use std::io::Write;
use std::path::PathBuf;
use std::time::Instant;

use anyhow::{Context, Result, bail};
use clap::Parser;

use ohmtrail::sim::score::reason_pattern;
use ohmtrail::sim::{self, FlagKey, RowClass, SimConfig};

#[derive(Parser, Debug)]
#[command(about = "Score the worklist and the brief's band on a simulated noisy portfolio")]
struct Args {
    /// Homes to simulate
    #[arg(long, default_value_t = 1000)]
    homes: usize,
    /// Seed of the simulation
    #[arg(long, default_value_t = 1)]
    seed: u64,
    /// Noise multiplier (1.0 = the model's figures)
    #[arg(long, default_value_t = 1.0)]
    noise: f64,
    /// Append the figures to this CSV file (header written when the file is new or empty)
    #[arg(long, value_name = "OUT")]
    csv: Option<PathBuf>,
    /// Keep the visit files and databases in DIR instead of a temporary directory
    #[arg(long, value_name = "DIR")]
    keep: Option<PathBuf>,
    /// Print the reasons of N false rows, and the commonest false reasons
    #[arg(long, value_name = "N", default_value_t = 0)]
    dump_false: usize,
    /// Print N missed faults with what was flagged on their circuit instead
    #[arg(long, value_name = "N", default_value_t = 0)]
    dump_missed: usize,
    /// Skip the brief's backtest
    #[arg(long)]
    no_backtest: bool,
}

fn pct(x: Option<f64>) -> String {
    x.map_or_else(|| "-".into(), |v| format!("{:.1} %", v * 100.0))
}

fn main() -> Result<()> {
    let args = Args::parse();
    if args.homes == 0 || !(args.noise.is_finite() && args.noise >= 0.0) {
        bail!("--homes must be at least 1 and --noise a number of 0 or more");
    }
    let cfg = SimConfig::new(args.homes, args.seed, args.noise);
    let tmp;
    let dir = match &args.keep {
        Some(d) => {
            std::fs::create_dir_all(d).with_context(|| format!("{}", d.display()))?;
            d.clone()
        }
        None => {
            tmp = tempfile::tempdir()?;
            tmp.path().to_path_buf()
        }
    };

    let t = Instant::now();
    let p = sim::generate(&cfg);
    let t_gen = t.elapsed();
    let t = Instant::now();
    let flags = sim::run::portfolio_worklist(&p, &dir)?;
    let t_flags = t.elapsed();
    let keys: Vec<FlagKey> = flags.iter().map(FlagKey::from).collect();
    let scored = sim::score(&p.truth, &keys);
    let t = Instant::now();
    let bt = if args.no_backtest {
        None
    } else {
        Some(sim::backtest(&p, &dir)?)
    };
    let t_bt = t.elapsed();
    eprintln!(
        "generate {:.1} s, import + worklist {:.1} s, backtest {:.1} s",
        t_gen.as_secs_f64(),
        t_flags.as_secs_f64(),
        t_bt.as_secs_f64()
    );

    let c = &scored.card;
    let mut out = std::io::stdout().lock();
    writeln!(
        out,
        "seed {} noise {} homes {} circuits {} planted faults {} worklist rows {}",
        cfg.seed, cfg.noise, c.homes, c.circuits, c.faults, c.rows
    )?;
    writeln!(
        out,
        "recall {} ({}/{})  healthy circuits flagged {} ({}/{})  supply false alarms {} ({}/{})  rows per real fault {:.2}",
        pct(Some(c.recall)),
        c.found,
        c.faults,
        pct(Some(c.false_alarm_rate)),
        c.healthy_circuits_flagged,
        c.healthy_circuits,
        pct(Some(c.supply_false_alarm_rate)),
        c.supply_false_alarms,
        c.healthy_supplies,
        c.rows_per_fault
    )?;
    writeln!(
        out,
        "\n{:<24} {:>7} {:>6} {:>8}",
        "fault kind", "planted", "found", "recall"
    )?;
    for (k, s) in &c.per_kind {
        writeln!(
            out,
            "{k:<24} {:>7} {:>6} {:>8}",
            s.planted,
            s.found,
            pct(s.recall)
        )?;
    }
    writeln!(
        out,
        "\n{:<20} {:<9} {:>6} {:>6} {:>6} {:>6} {:>6}",
        "flag kind", "quantity", "true", "false", "conseq", "wrongq", "prop"
    )?;
    for r in &c.rows_by_kind {
        writeln!(
            out,
            "{:<20} {:<9} {:>6} {:>6} {:>6} {:>6} {:>6}",
            r.kind,
            r.quantity,
            r.true_rows,
            r.false_rows,
            r.consequence_rows,
            r.wrong_quantity_rows,
            r.property_rows
        )?;
    }
    if let Some(bt) = &bt {
        writeln!(
            out,
            "\nbrief backtest (last visit held out, {} homes)\n{:<8} {:>7} {:>9} {:>8} {:>12} {:>9} {:>11} {:>9} {:>11}",
            bt.homes,
            "quantity",
            "healthy",
            "coverage",
            "no band",
            "median width",
            "new fault",
            "outside",
            "unnulled",
            "outside"
        )?;
        for q in &bt.quantities {
            writeln!(
                out,
                "{:<8} {:>7} {:>9} {:>8} {:>12} {:>9} {:>11} {:>9} {:>11}",
                q.quantity,
                q.healthy,
                pct(q.coverage),
                q.no_band,
                pct(q.median_width),
                q.new_faults,
                pct(q.new_outside_share),
                q.unnulled,
                pct((q.unnulled > 0).then(|| q.unnulled_outside as f64 / q.unnulled as f64))
            )?;
        }
    }

    if args.dump_false > 0 {
        dump_false(&mut out, &p, &keys, &scored.classes, args.dump_false)?;
    }
    if args.dump_missed > 0 {
        writeln!(out, "\nmissed faults (first {}):", args.dump_missed)?;
        for &id in scored.missed.iter().take(args.dump_missed) {
            let f = &p.truth.faults[id];
            writeln!(out, "- {}", f.describe())?;
            for k in keys.iter().filter(|k| {
                k.property_ref == f.property_ref
                    && (k.circuit.is_none()
                        || f.circuits
                            .contains(k.circuit.as_ref().unwrap_or(&String::new())))
            }) {
                writeln!(
                    out,
                    "    flagged {} {} {}: {}",
                    k.circuit.as_deref().unwrap_or("origin"),
                    k.quantity,
                    k.kind,
                    k.reason
                )?;
            }
        }
    }

    if let Some(path) = &args.csv {
        write_csv(path, &cfg, c, bt.as_ref())?;
    }
    Ok(())
}

/// The commonest false reasons (figures taken out), then `n` false rows with their reasons.
fn dump_false(
    out: &mut impl Write,
    p: &sim::Portfolio,
    keys: &[FlagKey],
    classes: &[RowClass],
    n: usize,
) -> Result<()> {
    let false_rows: Vec<&FlagKey> = keys
        .iter()
        .zip(classes)
        .filter(|(_, c)| **c == RowClass::False)
        .map(|(k, _)| k)
        .collect();
    let mut patterns: BTreeMap<(String, String, String), (usize, &FlagKey)> = BTreeMap::new();
    for k in &false_rows {
        let e = patterns
            .entry((
                k.kind.clone(),
                k.quantity.clone(),
                reason_pattern(&k.reason),
            ))
            .or_insert((0, k));
        e.0 += 1;
    }
    let mut by_count: Vec<_> = patterns.into_iter().collect();
    by_count.sort_by_key(|e| std::cmp::Reverse(e.1.0));
    writeln!(
        out,
        "\ncommonest false reasons ({} false rows):",
        false_rows.len()
    )?;
    for ((kind, q, _), (count, example)) in by_count.iter().take(n.max(5)) {
        writeln!(
            out,
            "{count:>6}  {kind} {q}: e.g. {} {}: {}",
            example.property_ref,
            example.circuit.as_deref().unwrap_or("origin"),
            example.reason
        )?;
    }
    writeln!(out, "\nfalse rows (first {n}):")?;
    let home_of = |r: &str| p.truth.homes.iter().find(|h| h.property_ref == r);
    for k in false_rows.iter().take(n) {
        let leads: Vec<String> = home_of(&k.property_ref)
            .map(|h| {
                h.visits
                    .iter()
                    .filter(|v| v.lead_offset_ohm > 0.0)
                    .map(|v| format!("{} +{:.2} Ω", v.date, v.lead_offset_ohm))
                    .collect()
            })
            .unwrap_or_default();
        writeln!(
            out,
            "- {} {} {} {}: {}{}",
            k.property_ref,
            k.circuit.as_deref().unwrap_or("origin"),
            k.quantity,
            k.kind,
            k.reason,
            if leads.is_empty() {
                String::new()
            } else {
                format!(" [truth: leads not nulled {}]", leads.join(", "))
            }
        )?;
    }
    Ok(())
}

fn write_csv(
    path: &PathBuf,
    cfg: &SimConfig,
    c: &sim::Scorecard,
    bt: Option<&sim::Backtest>,
) -> Result<()> {
    // A new or empty file (such as one from mktemp) gets the header.
    let new = std::fs::metadata(path).map_or(true, |m| m.len() == 0);
    let file = std::fs::OpenOptions::new()
        .create(true)
        .append(true)
        .open(path)
        .with_context(|| format!("{}", path.display()))?;
    let mut w = csv::Writer::from_writer(file);
    if new {
        w.write_record(["seed", "noise", "homes", "section", "name", "value"])?;
    }
    let mut put = |section: &str, name: &str, value: String| {
        w.write_record([
            cfg.seed.to_string(),
            cfg.noise.to_string(),
            cfg.homes.to_string(),
            section.to_string(),
            name.to_string(),
            value,
        ])
    };
    let f = |x: f64| format!("{x:.4}");
    put("worklist", "faults", c.faults.to_string())?;
    put("worklist", "recall", f(c.recall))?;
    put("worklist", "false_alarm_rate", f(c.false_alarm_rate))?;
    put(
        "worklist",
        "supply_false_alarm_rate",
        f(c.supply_false_alarm_rate),
    )?;
    put("worklist", "rows", c.rows.to_string())?;
    put("worklist", "rows_per_fault", f(c.rows_per_fault))?;
    for (k, s) in &c.per_kind {
        if let Some(r) = s.recall {
            put("recall", k, f(r))?;
        }
    }
    for r in &c.rows_by_kind {
        let name = format!("{}/{}", r.kind, r.quantity);
        put("true_rows", &name, r.true_rows.to_string())?;
        put("false_rows", &name, r.false_rows.to_string())?;
    }
    if let Some(bt) = bt {
        for q in &bt.quantities {
            if let Some(v) = q.coverage {
                put("band_coverage", q.quantity, f(v))?;
            }
            if let Some(v) = q.median_width {
                put("band_median_width", q.quantity, f(v))?;
            }
            if let Some(v) = q.new_outside_share {
                put("band_new_fault_outside", q.quantity, f(v))?;
            }
        }
    }
    w.flush()?;
    Ok(())
}
