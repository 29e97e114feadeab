use std::io::Write;
use std::path::PathBuf;

use anyhow::{Result, bail};
use clap::{Args as ClapArgs, ValueEnum};

use ohmtrail::archive::merge_archive;
use ohmtrail::store::{ConflictKind, Prefer};

use super::Context;
use super::output::{count, json, table};

#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum PreferArg {
    /// Keep this database's values where the two differ
    Local,
    /// Write the archive's values over this database's where the two differ
    Archive,
}

/// Merge an archive written by `export --archive` into this database: new rows added,
/// identical ones skipped, conflicts reported with both values and nothing written unless
/// --prefer settles them
#[derive(ClapArgs, Debug)]
pub struct Args {
    /// The archive file
    pub file: PathBuf,
    /// Settle conflicts: keep this database's values (local) or take the archive's (archive).
    /// Without it, any conflict stops the merge and nothing is written
    #[arg(long, value_enum, value_name = "SIDE")]
    pub prefer: Option<PreferArg>,
    /// Print what was done as JSON
    #[arg(long)]
    pub json: bool,
}

pub fn run(args: &Args, ctx: &Context, out: &mut dyn Write) -> Result<()> {
    let store = ctx.open()?;
    let prefer = match args.prefer {
        None => Prefer::Neither,
        Some(PreferArg::Local) => Prefer::Local,
        Some(PreferArg::Archive) => Prefer::Archive,
    };
    let rep = merge_archive(&store, &args.file, prefer)?;
    if args.json {
        json(out, &rep)?;
    } else {
        let rows = rep
            .outcome
            .tables
            .iter()
            .filter(|(_, c)| c.added + c.unchanged + c.replaced + c.kept + c.held_back > 0)
            .map(|(t, c)| {
                vec![
                    t.clone(),
                    c.added.to_string(),
                    c.unchanged.to_string(),
                    c.replaced.to_string(),
                    c.kept.to_string(),
                    c.held_back.to_string(),
                ]
            })
            .collect();
        table(
            out,
            &[
                "table",
                "added",
                "unchanged",
                "archive's taken",
                "ours kept",
                "held back",
            ],
            rows,
        )?;
    }
    let blocking = rep.outcome.blocking(prefer);
    for c in &rep.outcome.conflicts {
        let settled = match (prefer, &c.kind) {
            (Prefer::Local, _) => "kept this database's",
            (Prefer::Archive, ConflictKind::Differs) => "took the archive's",
            _ => "not settled",
        };
        let what = match c.kind {
            ConflictKind::Differs => "differs",
            ConflictKind::TwoIdentities => {
                "exists here and in the archive under two identifiers (made separately on two machines)"
            }
        };
        let diffs: Vec<String> = c
            .differences
            .iter()
            .map(|(col, here, there)| format!("{col}: here {here}, archive {there}"))
            .collect();
        let line = format!(
            "conflict: {} {what} ({settled}); {}",
            c.row,
            diffs.join("; ")
        );
        if rep.written {
            writeln!(out, "{line}")?;
        } else {
            eprintln!("{line}");
        }
    }
    if !rep.written {
        let advice = if prefer == Prefer::Archive {
            "a row made separately on two machines cannot be replaced: merge with --prefer local to leave it (and what hangs from it) out, or remove it from one side first"
        } else {
            "pass --prefer local to keep this database's values or --prefer archive to take the archive's"
        };
        bail!(
            "{}: {}, nothing written: {advice}",
            args.file.display(),
            count(blocking as u64, "conflict", "conflicts")
        );
    }
    if !args.json {
        let t = rep.outcome.total();
        eprintln!(
            "merged {}: {} added, {} unchanged{}{}{}",
            args.file.display(),
            count(t.added, "row", "rows"),
            t.unchanged,
            if t.replaced > 0 {
                format!(", {} taken from the archive", t.replaced)
            } else {
                String::new()
            },
            if t.kept > 0 {
                format!(", {} kept as they were here", t.kept)
            } else {
                String::new()
            },
            if t.held_back > 0 {
                format!(", {} held back with a conflicting row", t.held_back)
            } else {
                String::new()
            },
        );
    }
    Ok(())
}
