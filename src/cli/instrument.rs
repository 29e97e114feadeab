use std::io::Write;

use anyhow::Result;
use chrono::NaiveDate;
use clap::Subcommand;

use super::output::{cell, json, table};
use super::{Context, parse_date, today};

#[derive(Subcommand, Debug)]
pub enum Cmd {
    /// Add a test instrument by its serial number
    Add {
        /// The instrument's serial number, as on its calibration certificate
        serial: String,
        /// What it is, e.g. "multifunction tester"
        #[arg(long)]
        description: Option<String>,
        /// Date the calibration runs out
        #[arg(long = "calibration-due", value_name = "DATE", value_parser = parse_date)]
        calibration_due: Option<NaiveDate>,
    },
    /// List instruments and whether each is in calibration today
    List {
        /// Print as JSON instead of a table
        #[arg(long)]
        json: bool,
    },
}

pub fn run(cmd: &Cmd, ctx: &Context, out: &mut dyn Write) -> Result<()> {
    let store = ctx.open()?;
    match cmd {
        Cmd::Add {
            serial,
            description,
            calibration_due,
        } => {
            let i = store.add_instrument(serial, description.as_deref(), *calibration_due)?;
            writeln!(out, "added instrument {}", i.serial)?;
        }
        Cmd::List { json: as_json } => {
            let list = store.instruments()?;
            if *as_json {
                return json(out, &list);
            }
            let now = today();
            let rows = list
                .iter()
                .map(|i| {
                    vec![
                        i.serial.clone(),
                        cell(&i.description),
                        cell(&i.calibration_due),
                        match i.calibration_due {
                            None => "not recorded".into(),
                            Some(d) if d < now => "lapsed".into(),
                            Some(_) => "in calibration".into(),
                        },
                    ]
                })
                .collect();
            table(
                out,
                &["SERIAL", "DESCRIPTION", "CALIBRATION DUE", "TODAY"],
                rows,
            )?;
        }
    }
    Ok(())
}
