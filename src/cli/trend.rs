use std::io::Write;

use anyhow::{Result, bail};
use clap::Args as ClapArgs;
use serde::Serialize;

use ohmtrail::analysis::{CircuitAnalysis, SeriesAnalysis, Settings, analyse_property};

use super::output::{json, table};
use super::{CAUTION, Context, today};

#[derive(ClapArgs, Debug)]
pub struct Args {
    /// The property's reference
    pub property: String,
    /// Only one circuit, as BOARD/NUMBER (e.g. CU1/3)
    #[arg(long, value_name = "BOARD/N")]
    pub circuit: Option<String>,
    /// Print every series with its points, fits and findings as JSON
    #[arg(long)]
    pub json: bool,
}

#[derive(Serialize)]
struct TrendOut<'a> {
    property_ref: &'a str,
    last_visit: Option<chrono::NaiveDate>,
    last_full_inspection: Option<chrono::NaiveDate>,
    next_due: Option<chrono::NaiveDate>,
    recommended_next: Option<chrono::NaiveDate>,
    visits_without_ambient: &'a [chrono::NaiveDate],
    continuity_offsets: &'a [ohmtrail::analysis::offsets::VisitOffset],
    supply: Option<&'a SeriesAnalysis>,
    /// Ra, the earth electrode's resistance, where recorded.
    electrode: Option<&'a SeriesAnalysis>,
    circuits: Vec<&'a CircuitAnalysis>,
}

pub fn run(args: &Args, ctx: &Context, out: &mut dyn Write) -> Result<()> {
    let store = ctx.open_existing()?;
    let settings = Settings::load(&store, today())?;
    let a = analyse_property(&store, &args.property, &settings)?;
    let circuits: Vec<&CircuitAnalysis> = match &args.circuit {
        None => a.circuits.iter().collect(),
        Some(spec) => {
            let Some((board, number)) = spec.split_once('/') else {
                bail!("--circuit {spec:?}: expected BOARD/NUMBER, e.g. CU1/3");
            };
            let found: Vec<_> = a
                .circuits
                .iter()
                .filter(|c| c.board == board && c.circuit.number == number)
                .collect();
            if found.is_empty() {
                bail!(
                    "circuit {spec:?} not found in service at {}: known circuits are {}",
                    args.property,
                    a.circuits
                        .iter()
                        .map(|c| format!("{}/{}", c.board, c.circuit.number))
                        .collect::<Vec<_>>()
                        .join(", ")
                );
            }
            found
        }
    };
    if args.json {
        return json(
            out,
            &TrendOut {
                property_ref: &a.property.reference,
                last_visit: a.last_visit,
                last_full_inspection: a.last_full_inspection,
                next_due: a.next_due,
                recommended_next: a.recommended_next,
                visits_without_ambient: &a.visits_without_ambient,
                continuity_offsets: &a.continuity_offsets,
                supply: if args.circuit.is_none() {
                    a.supply.as_ref()
                } else {
                    None
                },
                electrode: if args.circuit.is_none() {
                    a.electrode.as_ref()
                } else {
                    None
                },
                circuits,
            },
        );
    }
    // A partial re-test does not restart the due date: say which visit it runs from.
    let partial = if a.last_full_inspection != a.last_visit {
        format!(
            " (a partial re-test; last full inspection {})",
            opt(a.last_full_inspection)
        )
    } else {
        String::new()
    };
    writeln!(
        out,
        "{} — last visit {}{partial}, next due {}, recommended next inspection {}",
        a.property.reference,
        opt(a.last_visit),
        opt(a.next_due),
        opt(a.recommended_next)
    )?;
    if !a.visits_without_ambient.is_empty() {
        writeln!(
            out,
            "no ambient temperature recorded on {}: those readings are compared as taken, not at 20 °C",
            a.visits_without_ambient
                .iter()
                .map(|d| d.to_string())
                .collect::<Vec<_>>()
                .join(", ")
        )?;
    }
    for o in &a.continuity_offsets {
        writeln!(out, "{}", o.note)?;
    }
    if args.circuit.is_none() {
        for s in a.supply.iter().chain(&a.electrode) {
            writeln!(out)?;
            series(out, "", s)?;
        }
    }
    for c in circuits {
        writeln!(out)?;
        writeln!(
            out,
            "circuit {}/{} {} ({}{})",
            c.board,
            c.circuit.number,
            c.circuit.description.as_deref().unwrap_or(""),
            c.circuit
                .device
                .map(|d| d.to_string())
                .unwrap_or_else(|| "device not recorded".into()),
            if c.lineage.len() > 1 {
                format!("; history from {}", c.lineage.join(" → "))
            } else {
                String::new()
            }
        )?;
        for n in &c.notes {
            writeln!(out, "  note: {n}")?;
        }
        for s in &c.series {
            series(out, "", s)?;
        }
    }
    writeln!(out)?;
    writeln!(out, "Caution: {CAUTION}")?;
    Ok(())
}

fn opt(d: Option<chrono::NaiveDate>) -> String {
    d.map(|d| d.to_string()).unwrap_or_else(|| "-".into())
}

/// A reading in the table: RCD times in whole milliseconds, as the instrument shows them;
/// everything else to two places.
fn figure(v: f64, unit: &str) -> String {
    match unit {
        "ms" => format!("{v:.0}"),
        _ => format!("{v:.2}"),
    }
}

fn series(out: &mut dyn Write, prefix: &str, s: &SeriesAnalysis) -> Result<()> {
    let r = &s.report;
    let mut head = format!("  {}{} ({})", prefix, s.label, r.unit);
    if let (Some(l), Some(w)) = (s.limit, &s.limit_words) {
        let l = match r.unit {
            "ms" => format!("{l:.0}"),
            "MΩ" => format!("{l:.1}"),
            _ => format!("{l:.2}"),
        };
        head.push_str(&format!(": limit {l} {} — {w}", r.unit));
    }
    writeln!(out, "{head}")?;
    if let Some(b) = &s.basis {
        writeln!(out, "    {b}")?;
    }
    let rows = r
        .points
        .iter()
        .map(|p| {
            vec![
                format!("    {}", p.date),
                if p.censored {
                    format!(">{}", p.raw)
                } else {
                    figure(p.raw, r.unit)
                },
                match p.ambient_c {
                    Some(_) => figure(p.value, r.unit),
                    None => "-".into(),
                },
                p.ambient_c
                    .map(|t| format!("{t:.1}"))
                    .unwrap_or_else(|| "-".into()),
            ]
        })
        .collect();
    table(
        out,
        &["    DATE", "READING", "AT 20 °C", "AMBIENT °C"],
        rows,
    )?;
    if let Some(f) = &r.fit {
        let ts = f
            .theil_sen_per_year
            .map(|t| format!(", Theil–Sen {t:+.4}"))
            .unwrap_or_default();
        writeln!(
            out,
            "    slope per year: least squares {:+.4}{ts} (±{:.4})",
            f.least_squares_per_year, f.slope_se_per_year
        )?;
    }
    if let Some(n) = &r.note {
        writeln!(out, "    {n}")?;
    }
    for f in &r.findings {
        writeln!(
            out,
            "    {}: {}",
            ohmtrail::analysis::severity_key(f.severity),
            f.sentence
        )?;
    }
    Ok(())
}
