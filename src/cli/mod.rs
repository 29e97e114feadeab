//! Argument parsing and printing. Each subcommand lives in its own file with a `run` that
//! opens nothing it does not need; all computation is in the library.

pub mod board;
pub mod brief;
pub mod check;
pub mod circuit;
pub mod demo;
pub mod export;
pub mod flags;
pub mod import;
pub mod init;
pub mod instrument;
pub mod limits;
pub mod output;
pub mod property;
pub mod record;
pub mod report;
pub mod settings;
pub mod trend;
pub mod visit;

use std::io::Write;
use std::path::PathBuf;

use anyhow::{Context as _, Result};
use chrono::NaiveDate;
use clap::{Parser, Subcommand};

use ohmtrail::store::Store;

pub use ohmtrail::CAUTION;

/// The caution as `--help` shows it under the commands.
pub fn caution_help() -> String {
    format!("Caution: {CAUTION}")
}

/// Test history of rented homes' fixed wiring: see, visit after visit, which circuits are
/// deteriorating before they fail a limit.
#[derive(Parser, Debug)]
#[command(name = "ohmtrail", version, about, after_help = caution_help())]
pub struct Cli {
    /// Database file [default: ohmtrail.db in the platform data directory]
    #[arg(long, global = true, env = "OHMTRAIL_DB", value_name = "PATH")]
    pub db: Option<PathBuf>,

    #[command(subcommand)]
    pub command: Command,
}

#[derive(Subcommand, Debug)]
pub enum Command {
    /// Create the database, or bring its schema up to date, and print where it is
    Init,
    /// Add, list and show properties (rented homes)
    #[command(subcommand)]
    Property(property::Cmd),
    /// Add boards (consumer units, distribution boards) to a property
    #[command(subcommand)]
    Board(board::Cmd),
    /// Add, edit, retire and replace circuits on a board
    #[command(subcommand)]
    Circuit(Box<circuit::Cmd>),
    /// Add and list test instruments and their calibration dates
    #[command(subcommand)]
    Instrument(instrument::Cmd),
    /// Import visit or observation files (CSV): all rows or nothing, with exact errors
    Import(import::Args),
    /// Export test records and observations as CSV or JSON, in the format import reads
    Export(export::Args),
    /// List the visits in the history
    #[command(subcommand)]
    Visit(visit::Cmd),
    /// The portfolio worklist, one row per circuit: circuits past, approaching or moving toward their limits, and overdue inspections, most urgent first
    Flags(flags::Args),
    /// Every series of a property's circuits with its points, slopes and findings
    Trend(trend::Args),
    /// Write a property's trend report (HTML or JSON), or the portfolio index with --portfolio
    Report(report::Args),
    /// The brief for a coming visit: what each circuit should read on the day, and what to test first
    Brief(brief::Args),
    /// Take readings on site into a pending visit, each compared at once with what was expected
    Record(record::Args),
    /// Show or change this database's settings: the measured-value rule and the noise floors
    #[command(subcommand)]
    Settings(settings::Cmd),
    /// Show the published limits for a protective device, with their sources
    Limits(limits::Args),
    /// Judge one set of readings through the limits engine, to see what it concludes
    Check(check::Args),
    /// Build an invented demo portfolio and write its trend reports and portfolio index
    Demo(demo::Args),
}

/// What every command may need: where the database is, and where to print.
pub struct Context {
    pub db: Option<PathBuf>,
}

impl Context {
    pub fn new(db: Option<PathBuf>) -> Context {
        Context { db }
    }

    /// The database path: `--db`, then `OHMTRAIL_DB`, then the platform data directory.
    pub fn db_path(&self) -> Result<PathBuf> {
        if let Some(p) = &self.db {
            return Ok(p.clone());
        }
        let dirs = directories::ProjectDirs::from("", "", "ohmtrail").context(
            "no home directory to keep the database in: pass --db PATH or set OHMTRAIL_DB",
        )?;
        Ok(dirs.data_dir().join("ohmtrail.db"))
    }

    /// Open the database, creating it on first use.
    pub fn open(&self) -> Result<Store> {
        let path = self.db_path()?;
        Ok(Store::open(&path)?)
    }

    /// Open a database that must already exist: reading commands never create an empty one,
    /// whose silence would read as "nothing to report".
    pub fn open_existing(&self) -> Result<Store> {
        let path = self.db_path()?;
        // Only a path that is plainly absent: anything else (a file where a directory should
        // be, no permission) is for `Store::open` to name.
        if matches!(std::fs::metadata(&path), Err(e) if e.kind() == std::io::ErrorKind::NotFound) {
            anyhow::bail!(
                "no database at {}: start one with `ohmtrail --db {} init`, or run `ohmtrail demo` \
                 and use the --db it prints",
                path.display(),
                path.display()
            );
        }
        Ok(Store::open(&path)?)
    }
}

pub fn run(cli: Cli, out: &mut dyn Write) -> Result<()> {
    let ctx = Context::new(cli.db);
    match cli.command {
        Command::Init => init::run(&ctx, out),
        Command::Property(cmd) => property::run(&cmd, &ctx, out),
        Command::Board(cmd) => board::run(&cmd, &ctx, out),
        Command::Circuit(cmd) => circuit::run(&cmd, &ctx, out),
        Command::Instrument(cmd) => instrument::run(&cmd, &ctx, out),
        Command::Visit(cmd) => visit::run(&cmd, &ctx, out),
        Command::Flags(args) => flags::run(&args, &ctx, out),
        Command::Trend(args) => trend::run(&args, &ctx, out),
        Command::Report(args) => report::run(&args, &ctx, out),
        Command::Settings(cmd) => settings::run(&cmd, &ctx, out),
        Command::Limits(args) => limits::run(&args, out),
        Command::Check(args) => check::run(&args, &ctx, out),
        Command::Demo(args) => demo::run(&args, &ctx, out),
        Command::Import(args) => import::run(&args, &ctx, out),
        Command::Export(args) => export::run(&args, &ctx, out),
        Command::Brief(args) => brief::run(&args, &ctx, out),
        Command::Record(args) => record::run(&args, &ctx, out),
    }
}

/// Parse a date given on the command line: ISO 8601 or day-first (14/06/2025).
pub fn parse_date(s: &str) -> std::result::Result<NaiveDate, String> {
    let t = s.trim();
    if let Ok(d) = NaiveDate::parse_from_str(t, "%Y-%m-%d") {
        return Ok(d);
    }
    for f in ["%d/%m/%Y", "%d-%m-%Y"] {
        if let Ok(d) = NaiveDate::parse_from_str(t, f) {
            return Ok(d);
        }
    }
    Err(format!(
        "{s:?} is not a date: expected YYYY-MM-DD or DD/MM/YYYY"
    ))
}

pub fn today() -> NaiveDate {
    chrono::Local::now().date_naive()
}

#[cfg(test)]
mod tests {
    use clap::CommandFactory;

    /// Every command and every argument of every command, at any depth, as `path: what`, for
    /// each one that `--help` would show without a word of explanation.
    fn missing_help(cmd: &clap::Command, path: &str, missing: &mut Vec<String>) {
        let path = if path.is_empty() {
            cmd.get_name().to_string()
        } else {
            format!("{path} {}", cmd.get_name())
        };
        if cmd.get_about().is_none() && cmd.get_long_about().is_none() {
            missing.push(format!("{path}: the command"));
        }
        for arg in cmd.get_arguments() {
            // clap's own --help and --version carry clap's text.
            if matches!(arg.get_id().as_str(), "help" | "version") {
                continue;
            }
            if arg.get_help().is_none() && arg.get_long_help().is_none() {
                missing.push(format!("{path}: {}", arg.get_id()));
            }
            // A choice of values (--format html|json) says what each one is.
            if arg.get_action().takes_values() {
                for v in arg.get_possible_values() {
                    if v.get_help().is_none() {
                        missing.push(format!("{path}: {} {}", arg.get_id(), v.get_name()));
                    }
                }
            }
        }
        for sub in cmd.get_subcommands() {
            missing_help(sub, &path, missing);
        }
    }

    #[test]
    fn every_command_and_argument_has_help() {
        let cmd = super::Cli::command();
        cmd.clone().debug_assert();
        let mut missing = Vec::new();
        missing_help(&cmd, "", &mut missing);
        assert!(
            missing.is_empty(),
            "no help text for:\n{}",
            missing.join("\n")
        );
    }
}
