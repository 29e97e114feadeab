use std::io::Write;

use anyhow::Result;
use clap::Subcommand;

use ohmtrail::model::Earthing;
use ohmtrail::store::NewBoard;

use super::Context;

#[derive(Subcommand, Debug)]
pub enum Cmd {
    /// Add a board to a property
    Add {
        /// The property's reference
        property: String,
        /// The board's designation as written on it (DB1, CU, Garage)
        designation: String,
        /// Where the board is, e.g. "Hall cupboard"
        #[arg(long)]
        location: Option<String>,
        /// The board feeding this one; omit for a board fed from the origin
        #[arg(long, value_name = "BOARD")]
        fed_from: Option<String>,
        /// Earthing arrangement: TN-S, TN-C-S or TT
        #[arg(long, value_parser = parse_earthing)]
        earthing: Option<Earthing>,
    },
}

fn parse_earthing(s: &str) -> Result<Earthing, String> {
    s.parse()
}

pub fn run(cmd: &Cmd, ctx: &Context, out: &mut dyn Write) -> Result<()> {
    let store = ctx.open()?;
    match cmd {
        Cmd::Add {
            property,
            designation,
            location,
            fed_from,
            earthing,
        } => {
            let b = store.add_board(
                property,
                &NewBoard {
                    designation: designation.clone(),
                    location: location.clone(),
                    fed_from: fed_from.clone(),
                    earthing: *earthing,
                },
            )?;
            writeln!(out, "added board {} to {property}", b.designation)?;
        }
    }
    Ok(())
}
