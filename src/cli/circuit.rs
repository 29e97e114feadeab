use std::io::Write;

use anyhow::Result;
use chrono::NaiveDate;
use clap::{Args, Subcommand};

use ohmtrail::model::{
    ChangeKind, CircuitKind, Device, Insulation, RcdDelay, RcdMarking, RefMethod,
};
use ohmtrail::store::CircuitDetails;

use super::{Context, parse_date, today};

/// Register details of a circuit. On `edit`, only the flags given change anything.
#[derive(Args, Debug, Clone, Default)]
pub struct Details {
    /// What the circuit supplies, as on the schedule, e.g. "Sockets ring, kitchen"
    #[arg(long)]
    pub description: Option<String>,
    /// ring or radial
    #[arg(long, value_parser = |s: &str| s.parse::<CircuitKind>())]
    pub kind: Option<CircuitKind>,
    /// Line conductor csa in mm²
    #[arg(long, value_name = "MM2", allow_negative_numbers = true)]
    pub live: Option<f64>,
    /// Circuit protective conductor csa in mm²
    #[arg(long, value_name = "MM2", allow_negative_numbers = true)]
    pub cpc: Option<f64>,
    /// Route length in metres, if known
    #[arg(long, value_name = "M", allow_negative_numbers = true)]
    pub length: Option<f64>,
    /// Protective device: B16, C32, D6, RCBO B20, BS 88-3 32A, BS 1361 30A, BS 3036 15A, BS 1362 13A, BS 3871 type 2 30A
    #[arg(long)]
    pub device: Option<String>,
    /// RCD rated residual operating current IΔn in mA
    #[arg(long, value_name = "MA")]
    pub rcd: Option<u16>,
    /// RCD waveform type: AC, A, F or B; may carry the delay too, as "A S", "A-S", or S alone
    #[arg(long, value_name = "TYPE", value_parser = |s: &str| s.parse::<RcdMarking>())]
    pub rcd_type: Option<RcdMarking>,
    /// RCD delay: general, or S for time-delayed (selective)
    #[arg(long, value_name = "DELAY", value_parser = |s: &str| s.parse::<RcdDelay>())]
    pub rcd_delay: Option<RcdDelay>,
    /// Cable insulation: thermoplastic70 (PVC) or thermosetting90 (XLPE)
    #[arg(long, value_parser = |s: &str| s.parse::<Insulation>())]
    pub insulation: Option<Insulation>,
    /// Maximum disconnection time in seconds, when not the default for the circuit
    #[arg(long, value_name = "S", allow_negative_numbers = true)]
    pub disconnect: Option<f64>,
    /// Wiring type as recorded on the schedule (a short code or text)
    #[arg(long, value_name = "TEXT")]
    pub wiring_type: Option<String>,
    /// Reference method (BS 7671 Appendix 4): A to G, or 100 to 103 for cable in thermal insulation
    #[arg(long, value_name = "METHOD", value_parser = |s: &str| s.parse::<RefMethod>())]
    pub ref_method: Option<RefMethod>,
    /// Number of points served
    #[arg(long, value_name = "N")]
    pub points: Option<u32>,
    /// Breaking capacity of the protective device in kA
    #[arg(long, value_name = "KA", allow_negative_numbers = true)]
    pub breaking_ka: Option<f64>,
    /// Whether an arc fault detection device protects the circuit: yes or no
    #[arg(long, value_name = "YES|NO", value_parser = parse_yes_no)]
    pub afdd: Option<bool>,
    /// The RCD protecting the circuit, by its identifier on the board (e.g. RCD1); circuits
    /// naming the same identifier share one RCD
    #[arg(long, value_name = "ID")]
    pub rcd_id: Option<String>,
}

/// `yes` or `no` (also `y`/`n`, `true`/`false`).
pub(super) fn parse_yes_no(s: &str) -> Result<bool, String> {
    match s.trim().to_ascii_lowercase().as_str() {
        "yes" | "y" | "true" => Ok(true),
        "no" | "n" | "false" => Ok(false),
        _ => Err(format!("expected yes or no, not {s:?}")),
    }
}

impl Details {
    /// The details as the store takes them. The device is parsed here rather than by clap so
    /// that a wrong device is a domain error (exit 1) that lists what is known.
    fn to_store(&self) -> Result<CircuitDetails> {
        let device = self
            .device
            .as_deref()
            .map(|d| d.parse::<Device>())
            .transpose()?;
        let marking = self.rcd_type.unwrap_or_default();
        let rcd_delay = match (marking.delay, self.rcd_delay) {
            (Some(a), Some(b)) if a != b => anyhow::bail!(
                "--rcd-type gives the delay {} but --rcd-delay gives {}: give one delay, general or S",
                a.as_str(),
                b.as_str()
            ),
            (a, b) => a.or(b),
        };
        Ok(CircuitDetails {
            description: self.description.clone(),
            kind: self.kind,
            live_mm2: self.live,
            cpc_mm2: self.cpc,
            length_m: self.length,
            device,
            rcd_ma: self.rcd,
            rcd_type: marking.waveform,
            rcd_delay,
            insulation: self.insulation,
            disconnect_s: self.disconnect,
            wiring_type: self.wiring_type.clone(),
            ref_method: self.ref_method,
            points: self.points,
            breaking_ka: self.breaking_ka,
            afdd: self.afdd,
            rcd_id: self.rcd_id.clone(),
        })
    }
}

/// Which circuit: property, board and circuit number.
#[derive(Args, Debug, Clone)]
pub struct Which {
    /// The property's reference
    pub property: String,
    /// The board's designation
    pub board: String,
    /// The circuit number on that board
    pub number: String,
}

#[derive(Subcommand, Debug)]
pub enum Cmd {
    /// Add a circuit to a board
    Add {
        #[command(flatten)]
        which: Which,
        #[command(flatten)]
        details: Details,
    },
    /// Change a circuit's register details; each change is recorded with its date
    Edit {
        #[command(flatten)]
        which: Which,
        #[command(flatten)]
        details: Details,
        /// Date the change took effect [default: today]
        #[arg(long, value_parser = parse_date)]
        date: Option<NaiveDate>,
        /// What was done: device_changed, cable_replaced, terminations_remade, register_corrected, ...
        #[arg(long = "change", value_name = "KIND", value_parser = |s: &str| s.parse::<ChangeKind>())]
        change: Option<ChangeKind>,
        /// Free text kept with the dated change
        #[arg(long)]
        note: Option<String>,
    },
    /// Take a circuit out of service; its history is kept
    Retire {
        #[command(flatten)]
        which: Which,
        /// Date the circuit went out of service [default: today]
        #[arg(long, value_parser = parse_date)]
        date: Option<NaiveDate>,
        /// Free text kept with the dated change
        #[arg(long)]
        note: Option<String>,
    },
    /// Replace a circuit by a new one (new board or number), keeping its history as lineage
    Replace {
        #[command(flatten)]
        which: Which,
        /// Board of the new circuit [default: the same board]
        #[arg(long = "to-board", value_name = "BOARD")]
        to_board: Option<String>,
        /// Number of the new circuit [default: the same number]
        #[arg(long = "to-number", value_name = "N")]
        to_number: Option<String>,
        #[command(flatten)]
        details: Details,
        /// Date the new circuit took over [default: today]
        #[arg(long, value_parser = parse_date)]
        date: Option<NaiveDate>,
        /// Why: circuit_replaced, board_replaced or renumbered [default: circuit_replaced,
        /// or board_replaced when --to-board is given]
        #[arg(long = "change", value_name = "KIND", value_parser = |s: &str| s.parse::<ChangeKind>())]
        change: Option<ChangeKind>,
        /// Free text kept with the dated change
        #[arg(long)]
        note: Option<String>,
    },
}

pub fn run(cmd: &Cmd, ctx: &Context, out: &mut dyn Write) -> Result<()> {
    let store = ctx.open()?;
    match cmd {
        Cmd::Add { which, details } => {
            let c = store.add_circuit(
                &which.property,
                &which.board,
                &which.number,
                &details.to_store()?,
            )?;
            writeln!(
                out,
                "added circuit {}/{} at {}",
                which.board, c.number, which.property
            )?;
        }
        Cmd::Edit {
            which,
            details,
            date,
            change,
            note,
        } => {
            let c = store.find_circuit(&which.property, &which.board, &which.number)?;
            let changes = store.edit_circuit(
                c.id,
                &details.to_store()?,
                date.unwrap_or_else(today),
                *change,
                None,
                note.as_deref(),
            )?;
            if changes.is_empty() {
                writeln!(out, "nothing changed")?;
            }
            for ch in changes {
                writeln!(
                    out,
                    "{} {}: {} -> {} ({}, from {})",
                    which.board,
                    which.number,
                    ch.old_value.as_deref().unwrap_or("-"),
                    ch.new_value.as_deref().unwrap_or("-"),
                    ch.kind.as_str(),
                    ch.date
                )?;
            }
        }
        Cmd::Retire { which, date, note } => {
            let c = store.find_circuit(&which.property, &which.board, &which.number)?;
            store.retire_circuit(c.id, date.unwrap_or_else(today), note.as_deref())?;
            writeln!(out, "retired circuit {}/{}", which.board, which.number)?;
        }
        Cmd::Replace {
            which,
            to_board,
            to_number,
            details,
            date,
            change,
            note,
        } => {
            let c = store.find_circuit(&which.property, &which.board, &which.number)?;
            let kind = change.unwrap_or(if to_board.is_some() {
                ChangeKind::BoardReplaced
            } else {
                ChangeKind::CircuitReplaced
            });
            let new = store.replace_circuit(
                c.id,
                to_board.as_deref(),
                to_number.as_deref(),
                &details.to_store()?,
                date.unwrap_or_else(today),
                kind,
                note.as_deref(),
            )?;
            writeln!(
                out,
                "circuit {}/{} replaced by {}/{}; its history carries on",
                which.board,
                which.number,
                to_board.as_deref().unwrap_or(&which.board),
                new.number
            )?;
        }
    }
    Ok(())
}
