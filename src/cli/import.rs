use std::io::{IsTerminal, Write};
use std::path::PathBuf;

use super::output::count;
use anyhow::{Result, bail};
use clap::Args as ClapArgs;
use indicatif::{ProgressBar, ProgressStyle};

use ohmtrail::import::{DryRun, ImportOptions, SourceOptions, Summary, check_file, import_from};

use super::output::{json, status};
use super::{Context, today};

/// Import visit files (one row per circuit per visit) or observation files
#[derive(ClapArgs, Debug)]
pub struct Args {
    /// CSV files or spreadsheets (.xlsx, .ods) to import; each is one transaction
    #[arg(required = true, value_name = "FILE")]
    pub files: Vec<PathBuf>,
    /// Read the files with this layout: a layout file, or the name of one kept with
    /// `ohmtrail layout save`
    #[arg(long, value_name = "NAME|FILE")]
    pub layout: Option<String>,
    /// Give a column the same value on every row, as a layout's constant (property_ref=NF-014)
    #[arg(long = "set", value_name = "COLUMN=VALUE", requires = "layout")]
    pub set: Vec<String>,
    /// A spreadsheet's sheet, by name or index (from 1) [default: the first]
    #[arg(long)]
    pub sheet: Option<String>,
    /// Dry run: show the mapping and the first rows as they would be stored, check every row,
    /// write nothing
    #[arg(long)]
    pub check: bool,
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
    let mut opts = ImportOptions::new(today());
    opts.parse.decimal_comma = args.decimal_comma;
    opts.skip_invalid = args.skip_invalid;
    opts.replace = args.replace;
    opts.ignore_unknown = args.ignore_unknown;
    let mut src = SourceOptions {
        sheet: args.sheet.clone(),
        layout: match &args.layout {
            Some(l) => Some(super::layout::resolve(ctx, l)?),
            None => None,
        },
    };
    if let Some(layout) = src.layout.as_mut() {
        for s in &args.set {
            let Some((column, value)) = s.split_once('=') else {
                bail!("--set {s:?}: expected COLUMN=VALUE, such as property_ref=NF-014");
            };
            layout.set_constant(column.trim(), value.trim())?;
        }
    }
    if args.check {
        return check(args, &opts, &src, out);
    }
    let store = ctx.open()?;

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
        let summary = import_from(&store, file, &opts, &src, &mut |done, total| {
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

/// Rows a dry run shows.
const CHECK_ROWS: usize = 5;

/// `--check`: read and parse every row, print the mapping and the first rows as they would be
/// stored, and write nothing. The database is not opened (unless a layout is looked up in it).
fn check(
    args: &Args,
    opts: &ImportOptions,
    src: &SourceOptions,
    out: &mut dyn Write,
) -> Result<()> {
    let mut runs: Vec<DryRun> = Vec::new();
    for file in &args.files {
        let run = check_file(file, opts, src, CHECK_ROWS)?;
        let mut err = std::io::stderr().lock();
        for e in &run.summary.errors {
            writeln!(err, "{e}")?;
        }
        let s = &run.summary;
        if s.errors_total > s.errors.len() as u64 {
            writeln!(
                err,
                "{}: and {} more errors",
                s.file,
                s.errors_total - s.errors.len() as u64
            )?;
        }
        if !args.json {
            print_check(out, &run)?;
        }
        runs.push(run);
    }
    if args.json {
        json(out, &runs)?;
    }
    let bad: u64 = runs.iter().map(|r| r.summary.errors_total).sum();
    if bad > 0 {
        bail!(
            "check: {bad} error{} found; nothing written (a dry run never writes)",
            if bad == 1 { "" } else { "s" }
        );
    }
    Ok(())
}

fn print_check(out: &mut dyn Write, run: &DryRun) -> Result<()> {
    let s = &run.summary;
    writeln!(out, "{}: dry run, nothing written", s.file)?;
    if !run.mapping.is_empty() {
        writeln!(out, "  mapping:")?;
        for (from, to) in &run.mapping {
            if to.is_empty() {
                writeln!(out, "    {from:?} -> (ignored)")?;
            } else if from == to {
                writeln!(out, "    {to}")?;
            } else {
                writeln!(out, "    {from:?} -> {to}")?;
            }
        }
    }
    for r in &run.rows {
        writeln!(out, "  line {}:", r.line)?;
        for c in &r.cells {
            if c.source.trim() == c.stored {
                writeln!(out, "    {:<12} {}", c.column, c.stored)?;
            } else {
                writeln!(out, "    {:<12} {:?} -> {}", c.column, c.source, c.stored)?;
            }
        }
    }
    writeln!(
        out,
        "  {} read, {} with errors{}",
        count(s.rows, "row", "rows"),
        s.rows_rejected,
        if s.blank_rows > 0 {
            format!(", {} blank", s.blank_rows)
        } else {
            String::new()
        }
    )?;
    Ok(())
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
