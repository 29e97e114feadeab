//! `ohmtrail remedial`: follow up the observations coded C1, C2 or FI: list them with their due
//! dates, record the work done, give the shorter period a report sets, and write the written
//! confirmation for the landlord.

use std::io::Write;
use std::path::PathBuf;

use anyhow::Result;
use clap::{Args as ClapArgs, Subcommand};

use ohmtrail::analysis::remedial::{ListFilter, RemedialItem, list};
use ohmtrail::model::remedial::{NewRemedialEvent, RemedialKind, RemedialStatus};
use ohmtrail::report::remedial as confirm;

use super::output::{json, output_dir, status, table, write_atomic};
use super::{CAUTION, Context, parse_date, today};

#[derive(Subcommand, Debug)]
pub enum Cmd {
    /// Every observation coded C1, C2 or FI, with its due date, days left or overdue, and status
    List(ListArgs),
    /// Record the work done on an observation: remedied (the default), made safe, or no longer applicable
    Done(DoneArgs),
    /// Record the period shorter than 28 days that the report gives for an observation's work
    Period(PeriodArgs),
    /// Write the confirmation of the work done, for the landlord to keep and pass on (HTML)
    Confirm(ConfirmArgs),
}

#[derive(ClapArgs, Debug)]
#[command(after_help = super::caution_help())]
pub struct ListArgs {
    /// Only this property
    pub property: Option<String>,
    /// Only work still to do (open or made safe), not superseded by a later full inspection
    #[arg(long, conflicts_with = "overdue")]
    pub open: bool,
    /// Only work past its due date
    #[arg(long)]
    pub overdue: bool,
    /// Only this client's properties
    #[arg(long, value_name = "NAME")]
    pub client: Option<String>,
    /// Print the list as JSON
    #[arg(long)]
    pub json: bool,
}

#[derive(ClapArgs, Debug)]
#[command(after_help = super::caution_help())]
pub struct DoneArgs {
    /// The observation's number, as `remedial list` shows it
    pub observation: i64,
    /// The date the work was done (YYYY-MM-DD or DD/MM/YYYY)
    #[arg(long, value_parser = parse_date)]
    pub date: chrono::NaiveDate,
    /// Who did it
    #[arg(long, value_name = "NAME")]
    pub by: String,
    /// What was done
    #[arg(long, value_name = "TEXT", required_unless_present = "not_applicable")]
    pub what: Option<String>,
    /// Made safe only (isolated, say): the remedial work is still required and still due
    #[arg(long, conflicts_with = "not_applicable")]
    pub made_safe: bool,
    /// No longer applicable (the item removed, say); give --why
    #[arg(long, requires = "why", conflicts_with = "what")]
    pub not_applicable: bool,
    /// Why it no longer applies
    #[arg(long, value_name = "TEXT", requires = "not_applicable")]
    pub why: Option<String>,
}

#[derive(ClapArgs, Debug)]
#[command(after_help = super::caution_help())]
pub struct PeriodArgs {
    /// The observation's number, as `remedial list` shows it
    pub observation: i64,
    /// The period the report gives, in days starting with the inspection date (1 to 27)
    #[arg(long)]
    pub days: u32,
}

#[derive(ClapArgs, Debug)]
#[command(after_help = super::caution_help())]
pub struct ConfirmArgs {
    /// Property reference
    pub property: String,
    /// Only these observations (repeat the flag); by default every one with work recorded
    #[arg(long = "observation", value_name = "N")]
    pub observations: Vec<i64>,
    /// The HTML file to write (`-` for standard output)
    #[arg(
        short = 'o',
        long = "out",
        visible_alias = "output",
        value_name = "FILE"
    )]
    pub out: PathBuf,
}

pub fn run(cmd: &Cmd, ctx: &Context, out: &mut dyn Write) -> Result<()> {
    match cmd {
        Cmd::List(a) => run_list(a, ctx, out),
        Cmd::Done(a) => {
            let kind = if a.not_applicable {
                RemedialKind::NotApplicable
            } else if a.made_safe {
                RemedialKind::MadeSafe
            } else {
                RemedialKind::Remedied
            };
            let new = NewRemedialEvent {
                kind,
                date: Some(a.date),
                by: Some(a.by.clone()),
                what: a.why.clone().or_else(|| a.what.clone()),
                period_days: None,
            };
            record(ctx, out, a.observation, &new)
        }
        Cmd::Period(a) => {
            let new = NewRemedialEvent {
                kind: RemedialKind::PeriodGiven,
                date: None,
                by: None,
                what: None,
                period_days: Some(a.days),
            };
            record(ctx, out, a.observation, &new)
        }
        Cmd::Confirm(a) => {
            let to_stdout = super::report::is_stdout(&a.out);
            if !to_stdout {
                output_dir(&a.out)?;
            }
            let store = ctx.open_existing()?;
            let c = confirm::confirmation(&store, &a.property, &a.observations, today())?;
            let page = confirm::render(&c);
            if to_stdout {
                out.write_all(page.as_bytes())?;
                return Ok(());
            }
            write_atomic(&a.out, page.as_bytes())?;
            // Status lines go to stderr: stdout carries only data.
            status(
                out,
                format_args!(
                    "wrote {} ({} confirmed)",
                    a.out.display(),
                    super::output::count(c.items.len(), "observation", "observations")
                ),
            )?;
            status(out, format_args!("Caution: {CAUTION}"))?;
            Ok(())
        }
    }
}

fn record(ctx: &Context, out: &mut dyn Write, id: i64, new: &NewRemedialEvent) -> Result<()> {
    let store = ctx.open()?;
    let e = store.add_remedial_event(id, new, today())?;
    let at = store.observation_at(id)?;
    let o = &at.observation;
    let what = match e.kind {
        RemedialKind::PeriodGiven => format!(
            "the report's period of {} days",
            e.period_days.unwrap_or_default()
        ),
        RemedialKind::MadeSafe => format!("made safe on {}", e.date.unwrap_or_default()),
        RemedialKind::Remedied => format!("remedied on {}", e.date.unwrap_or_default()),
        RemedialKind::NotApplicable => {
            format!("no longer applicable from {}", e.date.unwrap_or_default())
        }
    };
    writeln!(
        out,
        "recorded for observation {id} ({} at {}, recorded {}): {what}",
        o.code.as_str(),
        at.property_ref,
        at.inspected
    )?;
    // Say what is still due, from the same rules the list uses.
    let items = list(
        &store,
        today(),
        &ListFilter {
            property: Some(at.property_ref.clone()),
            client: None,
        },
    )?;
    if let Some(i) = items.iter().find(|i| i.observation == id)
        && i.status.is_open()
    {
        writeln!(
            out,
            "the {} is still due by {} ({})",
            i.work_words(),
            i.due,
            days_words(i)
        )?;
    }
    Ok(())
}

fn run_list(a: &ListArgs, ctx: &Context, out: &mut dyn Write) -> Result<()> {
    let store = ctx.open_existing()?;
    let items: Vec<RemedialItem> = list(
        &store,
        today(),
        &ListFilter {
            property: a.property.clone(),
            client: a.client.clone(),
        },
    )?
    .into_iter()
    .filter(|i| !a.open || i.status.is_open())
    .filter(|i| !a.overdue || i.is_overdue())
    .collect();
    if a.json {
        return json(out, &items);
    }
    if items.is_empty() {
        writeln!(
            out,
            "nothing to list: no observation coded C1, C2 or FI{}",
            if a.open || a.overdue {
                " is open or overdue"
            } else {
                " is recorded"
            }
        )?;
        return Ok(());
    }
    let rows = items
        .iter()
        .map(|i| {
            let place = match (&i.board, &i.circuit) {
                (Some(b), Some(c)) => format!("{b}/{c}: "),
                (Some(b), None) => format!("{b}: "),
                _ => String::new(),
            };
            vec![
                i.observation.to_string(),
                i.property_ref.clone(),
                i.code.as_str().to_string(),
                format!("{place}{}", i.text),
                i.inspected.to_string(),
                i.due.to_string(),
                days_words(i),
                status_words(i),
            ]
        })
        .collect();
    table(
        out,
        &[
            "#",
            "PROPERTY",
            "CODE",
            "OBSERVATION",
            "RECORDED",
            "DUE",
            "DAYS",
            "STATUS",
        ],
        rows,
    )?;
    writeln!(out)?;
    writeln!(
        out,
        "Due: 28 days starting with the inspection date, or the shorter period the report gives \
         (The Electrical Safety Standards in the Private Rented Sector (England) Regulations \
         2020, regulation 3(4)); made safe does not stop the clock."
    )?;
    writeln!(out, "Caution: {CAUTION}")?;
    Ok(())
}

fn days_words(i: &RemedialItem) -> String {
    match i.days_left {
        Some(n) if n < 0 => format!("{} overdue", plural(-n)),
        Some(0) => "due today".into(),
        Some(n) => format!("{} left", plural(n)),
        None => "-".into(),
    }
}

fn plural(n: i64) -> String {
    if n == 1 {
        "1 day".into()
    } else {
        format!("{n} days")
    }
}

fn status_words(i: &RemedialItem) -> String {
    let last = i.work_events().last();
    let on = |e: Option<&ohmtrail::model::remedial::RemedialEvent>| {
        e.map(|e| {
            format!(
                " {} by {}",
                e.date.map(|d| d.to_string()).unwrap_or_default(),
                e.by.as_deref().unwrap_or("")
            )
        })
        .unwrap_or_default()
    };
    match i.status {
        RemedialStatus::Superseded => format!(
            "superseded by the inspection of {}",
            i.superseded_by.map(|d| d.to_string()).unwrap_or_default()
        ),
        RemedialStatus::Open => "open".into(),
        s => format!("{s}{}", on(last)),
    }
}
