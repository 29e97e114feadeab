use std::io::Write;

use anyhow::Result;
use clap::Args as ClapArgs;

use ohmtrail::analysis::{Flag, Settings, WorklistFilter, worklist};

use super::output::{json, table};
use super::{CAUTION, Context, today};

#[derive(ClapArgs, Debug)]
pub struct Args {
    /// Only this property
    #[arg(long)]
    pub property: Option<String>,
    /// Only this client's properties (landlord or agent, any case), so one client's worklist shows no other's
    #[arg(long, value_name = "NAME")]
    pub client: Option<String>,
    /// Print the worklist as a JSON array (schema in the README)
    #[arg(long)]
    pub json: bool,
}

pub fn run(args: &Args, ctx: &Context, out: &mut dyn Write) -> Result<()> {
    let store = ctx.open_existing()?;
    let settings = Settings::load(&store, today())?;
    let flags = worklist(
        &store,
        &settings,
        &WorklistFilter {
            property: args.property.clone(),
            client: args.client.clone(),
        },
    )?;
    if args.json {
        return json(out, &flags);
    }
    if flags.is_empty() {
        writeln!(
            out,
            "nothing to report: no circuit exceeds, approaches or has moved beyond the noise floor, \
             no inspection is overdue, and no remedial work is overdue"
        )?;
        writeln!(out, "Caution: {CAUTION}")?;
        return Ok(());
    }
    let rows = flags
        .iter()
        .enumerate()
        .map(|(i, f)| {
            vec![
                (i + 1).to_string(),
                f.severity.to_string(),
                f.property_ref.clone(),
                match &f.circuit {
                    Some(c) => format!("{}/{c}", f.board),
                    None => format!("{} origin", f.board),
                },
                f.quantity.to_string(),
                f.projected_date
                    .map(|d| d.to_string())
                    .unwrap_or_else(|| "-".into()),
                reason_with_others(f),
            ]
        })
        .collect();
    table(
        out,
        &[
            "#",
            "SEVERITY",
            "PROPERTY",
            "CIRCUIT",
            "QUANTITY",
            "PROJECTED",
            "REASON",
        ],
        rows,
    )?;
    writeln!(out)?;
    writeln!(out, "Caution: {CAUTION}")?;
    Ok(())
}

/// The row's reason, then its other findings in brief: "also: r1rn step (changed), r1r2
/// approaching, ...".
fn reason_with_others(f: &Flag) -> String {
    let others: Vec<String> = f
        .findings
        .iter()
        .skip(1)
        .map(|g| {
            if g.kind == g.severity {
                format!("{} {}", g.quantity, g.kind)
            } else {
                format!("{} {} ({})", g.quantity, g.kind, g.severity)
            }
        })
        .collect();
    if others.is_empty() {
        f.reason.clone()
    } else {
        format!("{} [also: {}]", f.reason, others.join(", "))
    }
}
