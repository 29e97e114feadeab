use std::io::Write;
use std::path::{Path, PathBuf};

use anyhow::{Context as _, Result, bail};
use clap::Subcommand;

use ohmtrail::import::guess::{self, Outcome};
use ohmtrail::import::sheet::{column_letters, is_spreadsheet};
use ohmtrail::import::{Layout, file_headers};

use super::output::{json, table};
use super::{Context, today};

#[derive(Subcommand, Debug)]
pub enum Cmd {
    /// Propose a layout from a file's headers: every mapping with its score and basis,
    /// doubtful ones as questions, unmatched headers listed
    Guess {
        /// The CSV file or spreadsheet (.xlsx, .ods) whose headers to read
        file: PathBuf,
        /// A spreadsheet's sheet, by name or index (from 1)
        #[arg(long)]
        sheet: Option<String>,
        /// The sheet row holding the headers (from 1) [default: the first used row]
        #[arg(long)]
        header_row: Option<u32>,
        /// Write the proposed layout (TOML) to this file, to check and edit
        #[arg(short, long, value_name = "FILE")]
        output: Option<PathBuf>,
        /// Keep the proposed layout in the database under this name (refused while any
        /// question is open)
        #[arg(long, value_name = "NAME")]
        save: Option<String>,
        /// Print the proposals as JSON
        #[arg(long)]
        json: bool,
    },
    /// Keep a layout file in the database under a name
    Save {
        /// The name to keep it under (a layout of that name, in any case, is replaced)
        name: String,
        /// The layout file (TOML), checked before it is kept
        file: PathBuf,
    },
    /// List the layouts kept in the database
    List,
    /// Print a kept layout
    Show {
        /// The layout's name, in any case
        name: String,
    },
    /// Forget a kept layout
    Delete {
        /// The layout's name, in any case
        name: String,
    },
}

pub fn run(cmd: &Cmd, ctx: &Context, out: &mut dyn Write) -> Result<()> {
    match cmd {
        Cmd::Guess {
            file,
            sheet,
            header_row,
            output,
            save,
            json: as_json,
        } => guess_cmd(
            ctx,
            out,
            file,
            sheet.as_deref(),
            *header_row,
            output,
            save,
            *as_json,
        ),
        Cmd::Save { name, file } => {
            let text = read_layout_file(file)?.1;
            let replaced = ctx.open()?.save_layout(name, &text, &today().to_string())?;
            let verb = if replaced { "replaced" } else { "saved" };
            writeln!(out, "layout {name} {verb}")?;
            Ok(())
        }
        Cmd::List => {
            let store = ctx.open_existing()?;
            let rows = store
                .layouts()?
                .into_iter()
                .map(|l| vec![l.name, l.saved_at])
                .collect::<Vec<_>>();
            if rows.is_empty() {
                writeln!(
                    out,
                    "no layouts kept: propose one with `ohmtrail layout guess FILE --save NAME`"
                )?;
                return Ok(());
            }
            table(out, &["NAME", "SAVED"], rows)
        }
        Cmd::Show { name } => {
            let store = ctx.open_existing()?;
            let Some(l) = store.layout(name)? else {
                bail!("no layout named {name:?}: `ohmtrail layout list` shows those kept");
            };
            write!(out, "{}", l.definition)?;
            if !l.definition.ends_with('\n') {
                writeln!(out)?;
            }
            Ok(())
        }
        Cmd::Delete { name } => {
            if !ctx.open_existing()?.delete_layout(name)? {
                bail!("no layout named {name:?}: `ohmtrail layout list` shows those kept");
            }
            writeln!(out, "layout {name} deleted")?;
            Ok(())
        }
    }
}

/// Read and check a layout file; the layout and its text.
pub fn read_layout_file(path: &Path) -> Result<(Layout, String)> {
    let text = std::fs::read_to_string(path)
        .with_context(|| format!("cannot read layout {}", path.display()))?;
    let layout = Layout::from_toml(&text).with_context(|| format!("layout {}", path.display()))?;
    Ok((layout, text))
}

/// The layout `arg` names: a file if one is there (or the name ends in .toml), else a layout
/// kept in the database.
pub fn resolve(ctx: &Context, arg: &str) -> Result<Layout> {
    let path = Path::new(arg);
    if path.is_file() || arg.ends_with(".toml") {
        return Ok(read_layout_file(path)?.0);
    }
    let store = ctx.open_existing()?;
    let Some(l) = store.layout(arg)? else {
        bail!(
            "no layout named {arg:?} and no such file: `ohmtrail layout list` shows those kept, `ohmtrail layout guess FILE` proposes one"
        );
    };
    Layout::from_toml(&l.definition).with_context(|| format!("layout {arg}"))
}

#[allow(clippy::too_many_arguments)]
fn guess_cmd(
    ctx: &Context,
    out: &mut dyn Write,
    file: &Path,
    sheet: Option<&str>,
    header_row: Option<u32>,
    output: &Option<PathBuf>,
    save: &Option<String>,
    as_json: bool,
) -> Result<()> {
    let headers = file_headers(file, sheet, header_row)?;
    let rows = guess::guess(&headers);
    let mut text = guess::layout_text(&rows);
    if let Some(r) = header_row {
        text = text.replacen(
            "date_order = \"day_first\"\n",
            &format!("date_order = \"day_first\"\nheader_row = {r}\n"),
            1,
        );
    }
    let sheet_file = is_spreadsheet(file);
    let place = |p: usize| {
        if sheet_file {
            column_letters(p as u32 - 1)
        } else {
            p.to_string()
        }
    };
    if as_json {
        let v: Vec<_> = rows
            .iter()
            .map(|r| {
                let (kind, column, score, basis) = match &r.outcome {
                    Outcome::Mapped {
                        column,
                        score,
                        basis,
                    } => ("mapped", Some(column.name()), Some(*score), basis.clone()),
                    Outcome::Question {
                        column,
                        score,
                        basis,
                        why,
                    } => (
                        "question",
                        Some(column.name()),
                        Some(*score),
                        format!("{why}; {basis}"),
                    ),
                    Outcome::Unmapped { reason } => ("unmapped", None, None, reason.clone()),
                };
                serde_json::json!({
                    "position": place(r.position), "source": r.source, "outcome": kind,
                    "column": column, "score": score, "basis": basis,
                })
            })
            .collect();
        json(out, &v)?;
    } else {
        let body = rows
            .iter()
            .map(|r| {
                let (to, score, basis) = match &r.outcome {
                    Outcome::Mapped {
                        column,
                        score,
                        basis,
                    } => (
                        column.name().to_string(),
                        format!("{score:.2}"),
                        basis.clone(),
                    ),
                    Outcome::Question {
                        column,
                        score,
                        basis,
                        why,
                    } => (
                        format!("{}?", column.name()),
                        format!("{score:.2}"),
                        format!("QUESTION: {why}; {basis}"),
                    ),
                    Outcome::Unmapped { reason } => {
                        ("(not mapped)".to_string(), String::new(), reason.clone())
                    }
                };
                vec![place(r.position), r.source.clone(), to, score, basis]
            })
            .collect();
        table(out, &["COL", "HEADER", "COLUMN", "SCORE", "BASIS"], body)?;
        let unmapped: Vec<String> = rows
            .iter()
            .filter(|r| matches!(r.outcome, Outcome::Unmapped { .. }))
            .map(|r| format!("{:?}", r.source))
            .collect();
        let questions = rows
            .iter()
            .filter(|r| matches!(r.outcome, Outcome::Question { .. }))
            .count();
        if !unmapped.is_empty() {
            writeln!(out, "not mapped (put in ignore): {}", unmapped.join(", "))?;
        }
        if questions > 0 {
            writeln!(
                out,
                "{questions} question{} to answer: each is commented out in the layout until you confirm it",
                if questions == 1 { "" } else { "s" }
            )?;
        }
    }
    if let Some(p) = output {
        std::fs::write(p, &text).with_context(|| format!("cannot write {}", p.display()))?;
        if !as_json {
            writeln!(out, "layout written to {}", p.display())?;
        }
    } else if save.is_none() && !as_json {
        writeln!(out)?;
        write!(out, "{text}")?;
    }
    if let Some(name) = save {
        let questions = rows
            .iter()
            .filter(|r| matches!(r.outcome, Outcome::Question { .. }))
            .count();
        if questions > 0 {
            bail!(
                "not saved: {questions} question(s) open; write the layout with -o FILE, answer them, then `ohmtrail layout save {name} FILE`"
            );
        }
        // What is saved must read back: the proposal is checked like any layout file.
        Layout::from_toml(&text).context("the proposed layout")?;
        let replaced = ctx.open()?.save_layout(name, &text, &today().to_string())?;
        if !as_json {
            writeln!(
                out,
                "layout {name} {}",
                if replaced { "replaced" } else { "saved" }
            )?;
        }
    }
    Ok(())
}
