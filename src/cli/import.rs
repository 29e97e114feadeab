use std::io::{IsTerminal, Write};
use std::path::PathBuf;

use super::output::count;
use anyhow::{Result, bail};
use clap::Args as ClapArgs;
use indicatif::{ProgressBar, ProgressStyle};

use ohmtrail::import::{ImportOptions, Summary, import_file};

use super::output::{json, status};
use super::{Context, today};

/// Import visit files (one row per circuit per visit) or observation files
#[derive(ClapArgs, Debug)]
pub struct Args {
    /// CSV files to import; each is one transaction
    #[arg(required = true, value_name = "FILE")]
    pub files: Vec<PathBuf>,
    /// Numbers use a decimal comma (0,35) instead of a decimal point
    #[arg(long)]
    pub decimal_comma: bool,
    /// Write the valid rows; put the rejected ones, with a reason, in FILE.rejected.csv
    #[arg(long)]
    pub skip_invalid: bool,
    /// Overwrite stored values that the file contradicts instead of refusing the file
    #[arg(long)]
    pub replace: bool,
    /// Ignore unknown columns instead of refusing the file
    #[arg(long)]
    pub ignore_unknown: bool,
    /// Print the summary as JSON
    #[arg(long)]
    pub json: bool,
}

pub fn run(args: &Args, ctx: &Context, out: &mut dyn Write) -> Result<()> {
    let store = ctx.open()?;
    let mut opts = ImportOptions::new(today());
    opts.parse.decimal_comma = args.decimal_comma;
    opts.skip_invalid = args.skip_invalid;
    opts.replace = args.replace;
    opts.ignore_unknown = args.ignore_unknown;

    let mut summaries = Vec::new();
    for file in &args.files {
        let bar = if std::io::stderr().is_terminal() {
            let bar = ProgressBar::new(0);
            if let Ok(style) =
                ProgressStyle::with_template("{msg} [{bar:40}] {bytes}/{total_bytes} ({eta} left)")
            {
                bar.set_style(style.progress_chars("=> "));
            }
            bar.set_message(file.display().to_string());
            bar
        } else {
            ProgressBar::hidden()
        };
        let summary = import_file(&store, file, &opts, &mut |done, total| {
            bar.set_length(total);
            bar.set_position(done);
        });
        bar.finish_and_clear();
        let summary = summary?;
        let mut err = std::io::stderr().lock();
        for e in &summary.errors {
            writeln!(err, "{e}")?;
        }
        if summary.errors_total > summary.errors.len() as u64 {
            writeln!(
                err,
                "{}: and {} more errors",
                summary.file,
                summary.errors_total - summary.errors.len() as u64
            )?;
        }
        if !args.json {
            print_summary(out, &summary)?;
        }
        if let Some(p) = &summary.sidecar {
            status(
                out,
                format_args!("{}: rejected rows written to {}", summary.file, p.display()),
            )?;
        }
        summaries.push(summary);
    }
    if args.json {
        json(out, &summaries)?;
    }
    let failed: Vec<&Summary> = summaries.iter().filter(|s| s.failed()).collect();
    match failed.as_slice() {
        [] => Ok(()),
        [one] => bail!(
            "{}: {} error{}, nothing written from this file",
            one.file,
            one.errors_total,
            if one.errors_total == 1 { "" } else { "s" }
        ),
        many => bail!(
            "{} files refused ({}), nothing written from them",
            many.len(),
            many.iter()
                .map(|s| s.file.as_str())
                .collect::<Vec<_>>()
                .join(", ")
        ),
    }
}

/// How many register changes the human summary lists before counting the rest.
const CHANGES_SHOWN: usize = 50;

fn print_summary(out: &mut dyn Write, s: &Summary) -> Result<()> {
    if s.failed() {
        writeln!(out, "{}: refused, nothing written", s.file)?;
        return Ok(());
    }
    let kept = s.rows - s.rows_rejected;
    let skipped = if s.rows_rejected > 0 {
        format!("; {} skipped as invalid", s.rows_rejected)
    } else {
        String::new()
    };
    if !s.written {
        let which = if s.rows_rejected > 0 {
            "the valid"
        } else {
            "all"
        };
        writeln!(
            out,
            "{}: nothing new: {which} {} already in the database{skipped}; nothing written",
            s.file,
            if kept == 1 {
                "1 row is".to_string()
            } else {
                format!("{kept} rows are")
            }
        )?;
    } else {
        writeln!(
            out,
            "{}: imported {}{skipped}",
            s.file,
            count(kept, "row", "rows")
        )?;
    }
    let lines = [
        ("properties created", s.properties_created),
        ("boards created", s.boards_created),
        ("circuits created", s.circuits_created),
        ("visits created", s.visits_created),
        ("test records written", s.test_records_written),
        ("test records replaced", s.test_records_replaced),
        ("test records unchanged", s.test_records_unchanged),
        ("details replaced", s.details_replaced),
        ("observations written", s.observations_written),
        ("observations unchanged", s.observations_unchanged),
        ("register changes", s.changes.len() as u64),
        ("rows skipped (invalid)", s.rows_rejected),
    ];
    for (what, n) in lines {
        if n > 0 || matches!(what, "test records written" | "register changes") {
            writeln!(out, "  {what:<24} {n}")?;
        }
    }
    for c in s.changes.iter().take(CHANGES_SHOWN) {
        writeln!(
            out,
            "  change: {} {}/{} {} from {} (line {}): {} {} -> {}",
            c.property_ref,
            c.board,
            c.circuit,
            c.field,
            c.date,
            c.line,
            c.kind,
            c.old_value.as_deref().unwrap_or("(none)"),
            c.new_value.as_deref().unwrap_or("(none)")
        )?;
    }
    if s.changes.len() > CHANGES_SHOWN {
        writeln!(
            out,
            "  and {} more changes",
            s.changes.len() - CHANGES_SHOWN
        )?;
    }
    Ok(())
}
