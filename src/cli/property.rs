use std::io::Write;

use anyhow::Result;
use clap::Subcommand;
use serde::Serialize;

use ohmtrail::model::{Board, Circuit, Property};
use ohmtrail::store::NewProperty;

use super::Context;
use super::output::{cell, json, table};

#[derive(Subcommand, Debug)]
pub enum Cmd {
    /// Add a property under the contractor's own reference
    Add {
        /// The contractor's reference for the property (unique)
        reference: String,
        /// The property's postal address, as the landlord's report shows it
        #[arg(long)]
        address: Option<String>,
        /// Landlord or managing agent; created on first use, spelled as stored after that (a name differing only in case is refused)
        #[arg(long)]
        client: Option<String>,
        /// Inspection interval in months
        #[arg(long, value_name = "MONTHS", default_value_t = ohmtrail::model::DEFAULT_INTERVAL_MONTHS)]
        interval: u32,
        /// Free text kept with the property (access, keys, occupier)
        #[arg(long)]
        notes: Option<String>,
    },
    /// List every property with its boards, circuits and last visit
    List {
        /// Print as JSON instead of a table
        #[arg(long)]
        json: bool,
    },
    /// Show one property's boards and circuits
    Show {
        /// The property's reference
        reference: String,
        /// Print as JSON instead of a table
        #[arg(long)]
        json: bool,
    },
}

#[derive(Serialize)]
struct Shown {
    #[serde(flatten)]
    property: Property,
    boards: Vec<ShownBoard>,
}

#[derive(Serialize)]
struct ShownBoard {
    #[serde(flatten)]
    board: Board,
    circuits: Vec<Circuit>,
}

pub fn run(cmd: &Cmd, ctx: &Context, out: &mut dyn Write) -> Result<()> {
    // Adding creates the database on first use; listing and showing need one that exists.
    let store = match cmd {
        Cmd::Add { .. } => ctx.open()?,
        Cmd::List { .. } | Cmd::Show { .. } => ctx.open_existing()?,
    };
    match cmd {
        Cmd::Add {
            reference,
            address,
            client,
            interval,
            notes,
        } => {
            let p = store.add_property(&NewProperty {
                reference: reference.clone(),
                address: address.clone(),
                client: client.clone(),
                interval_months: Some(*interval),
                notes: notes.clone(),
            })?;
            writeln!(out, "added property {}", p.reference)?;
        }
        Cmd::List { json: as_json } => {
            let list = store.list_properties()?;
            if *as_json {
                return json(out, &list);
            }
            let rows = list
                .iter()
                .map(|p| {
                    vec![
                        p.property_ref.clone(),
                        cell(&p.address),
                        cell(&p.client),
                        p.boards.to_string(),
                        p.circuits.to_string(),
                        p.visits.to_string(),
                        cell(&p.last_visit),
                        p.interval_months.to_string(),
                    ]
                })
                .collect();
            table(
                out,
                &[
                    "PROPERTY",
                    "ADDRESS",
                    "CLIENT",
                    "BOARDS",
                    "CIRCUITS",
                    "VISITS",
                    "LAST VISIT",
                    "INTERVAL (MONTHS)",
                ],
                rows,
            )?;
        }
        Cmd::Show {
            reference,
            json: as_json,
        } => {
            let property = store.property(reference)?;
            let mut boards = Vec::new();
            for b in store.boards(property.id)? {
                let circuits = store.circuits(b.id)?;
                boards.push(ShownBoard { board: b, circuits });
            }
            let shown = Shown { property, boards };
            if *as_json {
                return json(out, &shown);
            }
            let p = &shown.property;
            writeln!(out, "property  {}", p.reference)?;
            writeln!(out, "address   {}", cell(&p.address))?;
            writeln!(out, "client    {}", cell(&p.client))?;
            writeln!(out, "interval  {} months", p.interval_months)?;
            if let Some(n) = &p.notes {
                writeln!(out, "notes     {n}")?;
            }
            for b in &shown.boards {
                writeln!(out)?;
                writeln!(
                    out,
                    "board {} ({}; fed from {}; {}{})",
                    b.board.designation,
                    b.board
                        .location
                        .as_deref()
                        .unwrap_or("location not recorded"),
                    b.board.fed_from.as_deref().unwrap_or("the origin"),
                    b.board
                        .earthing
                        .map(|e| e.to_string())
                        .unwrap_or_else(|| "earthing not recorded".into()),
                    if b.board.status == ohmtrail::model::Status::Retired {
                        "; retired"
                    } else {
                        ""
                    }
                )?;
                let rows = b
                    .circuits
                    .iter()
                    .map(|c| {
                        vec![
                            c.number.clone(),
                            cell(&c.description),
                            c.kind.as_str().to_string(),
                            cell(&c.device),
                            rcd_cell(c),
                            match (c.live_mm2, c.cpc_mm2) {
                                (Some(l), Some(p)) => format!("{l}/{p}"),
                                (Some(l), None) => format!("{l}/-"),
                                _ => "-".into(),
                            },
                            cell(&c.length_m),
                            c.status.as_str().replace('_', " "),
                        ]
                    })
                    .collect();
                table(
                    out,
                    &[
                        "CIRCUIT",
                        "DESCRIPTION",
                        "KIND",
                        "DEVICE",
                        "RCD",
                        "CSA MM²",
                        "LENGTH M",
                        "STATUS",
                    ],
                    rows,
                )?;
            }
        }
    }
    Ok(())
}

/// The RCD as the register holds it: IΔn, waveform type, delay S and the RCD's identifier on
/// the board, each where recorded, e.g. "100 mA A S (RCD1)".
fn rcd_cell(c: &ohmtrail::model::Circuit) -> String {
    let parts: Vec<String> = [
        c.rcd_ma.map(|m| format!("{m} mA")),
        c.rcd_type.map(|t| t.as_str().to_string()),
        (c.rcd_delay == Some(ohmtrail::model::RcdDelay::S)).then(|| "S".to_string()),
    ]
    .into_iter()
    .flatten()
    .chain(c.rcd_id.as_ref().map(|r| format!("({r})")))
    .collect();
    if parts.is_empty() {
        "-".to_string()
    } else {
        parts.join(" ")
    }
}
