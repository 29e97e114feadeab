use std::io::Write;

use anyhow::Result;
use clap::Subcommand;

use super::Context;
use super::output::{cell, json, table};

#[derive(Subcommand, Debug)]
pub enum Cmd {
    /// List visits, newest first
    List {
        /// Only this property's visits
        #[arg(long)]
        property: Option<String>,
        /// Print as JSON instead of a table
        #[arg(long)]
        json: bool,
    },
}

pub fn run(cmd: &Cmd, ctx: &Context, out: &mut dyn Write) -> Result<()> {
    let store = ctx.open_existing()?;
    match cmd {
        Cmd::List {
            property,
            json: as_json,
        } => {
            let list = store.visits(property.as_deref())?;
            if *as_json {
                return json(out, &list);
            }
            let rows = list
                .iter()
                .map(|v| {
                    vec![
                        v.property_ref.clone(),
                        v.date.to_string(),
                        cell(&v.inspector),
                        cell(&v.instrument),
                        cell(&v.ambient_c),
                        cell(&v.ze_ohm),
                        v.test_records.to_string(),
                        v.observations.to_string(),
                        cell(&v.outcome),
                    ]
                })
                .collect();
            table(
                out,
                &[
                    "PROPERTY",
                    "DATE",
                    "INSPECTOR",
                    "INSTRUMENT",
                    "AMBIENT °C",
                    "ZE Ω",
                    "CIRCUITS",
                    "OBSERVATIONS",
                    "OUTCOME (AS RECORDED)",
                ],
                rows,
            )?;
        }
    }
    Ok(())
}
