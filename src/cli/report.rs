//! `ohmtrail report`: one property's trend report, or the portfolio index with every
//! property's report beside it.
//!
//! File names: a property's report is `report-REF.html` (`.pdf` with `--format pdf`, `.json`
//! with `--format json`), REF
//! made safe for file names (anything but letters, digits, `-`, `_` and `.` becomes `_`, and
//! a short hash of the reference is then appended so that names never collide). Without `-o`
//! a property's report goes to that name in the current directory and the index to
//! `portfolio.html`. With `--portfolio` the property reports are written beside the index.
//! Every file is written to a temporary file in the same directory and renamed into place,
//! so a failed run leaves no half-written report.

use std::io::Write;
use std::path::PathBuf;

use anyhow::{Result, anyhow, bail};
use clap::{ArgGroup, Args as ClapArgs, ValueEnum};

use ohmtrail::analysis::Settings;
use ohmtrail::report::{self, portfolio, property};

use super::output::{is_special, output_dir, status, write_atomic};
use super::{CAUTION, Context, today};

#[derive(ValueEnum, Clone, Copy, Debug, PartialEq, Eq)]
pub enum Format {
    /// A self-contained HTML page (inline CSS and SVG, no script)
    Html,
    /// The same content as an A4 PDF (fonts embedded, charts as vectors)
    Pdf,
    /// The same content as JSON
    Json,
}

impl Format {
    fn ext(self) -> &'static str {
        match self {
            Format::Html => "html",
            Format::Pdf => "pdf",
            Format::Json => "json",
        }
    }
}

#[derive(ClapArgs, Debug)]
#[command(group(ArgGroup::new("what").required(true).args(["property", "portfolio"])))]
pub struct Args {
    /// Property reference to report on
    pub property: Option<String>,
    /// Write the index of every property, most urgent first, with each property's report beside it
    #[arg(long)]
    pub portfolio: bool,
    /// File to write, or - for standard output [default: a property's JSON to standard output; its HTML to report-REF.html, the portfolio to portfolio.html or .json, in the current directory]
    #[arg(short = 'o', long = "output", value_name = "FILE")]
    pub output: Option<PathBuf>,
    /// html, pdf for an A4 document to send or print, or json for the same content as data
    #[arg(long, value_enum, default_value_t = Format::Html)]
    pub format: Format,
    /// With --portfolio: write only the index, not the property reports it links to
    #[arg(long, requires = "portfolio", conflicts_with = "property")]
    pub index_only: bool,
    /// With --portfolio: only this client's properties (landlord or agent, any case), so the index and reports hold no other client's
    #[arg(
        long,
        value_name = "NAME",
        requires = "portfolio",
        conflicts_with = "property"
    )]
    pub client: Option<String>,
}

/// `-o -`: standard output, as for `export`.
pub fn is_stdout(path: &std::path::Path) -> bool {
    path.as_os_str() == "-"
}

pub fn run(args: &Args, ctx: &Context, out: &mut dyn Write) -> Result<()> {
    // JSON is data, and goes to standard output unless -o names a file, as `export` does; a
    // page goes to a file.
    let to_stdout = match &args.output {
        Some(p) => is_stdout(p),
        None => !args.portfolio && args.format == Format::Json,
    };
    if to_stdout {
        return to_standard_output(args, ctx, out);
    }
    let ext = args.format.ext();
    let target = match (&args.output, &args.property) {
        (Some(p), _) => p.clone(),
        (None, Some(r)) if !args.portfolio => PathBuf::from(report::property_file_name(r, ext)),
        (None, _) => PathBuf::from(format!("portfolio.{ext}")),
    };
    // Check where the output goes before any work, so a wrong -o fails at once.
    let dir = output_dir(&target)?;
    if args.portfolio && !args.index_only && is_special(&target) {
        bail!(
            "cannot write the portfolio to {}: it is not a regular file, and the property reports go beside the index: give -o a file in a directory, or pass --index-only",
            target.display()
        );
    }
    let store = ctx.open_existing()?;
    let settings = Settings::load(&store, today())?;

    if args.portfolio && !args.index_only {
        refuse_shared_file_names(&store, args.client.as_deref(), ext, &target)?;
    }
    if args.portfolio {
        let mut written = 0usize;
        let index = report::portfolio_of(&store, &settings, ext, args.client.as_deref(), |r| {
            if args.index_only {
                return Ok(());
            }
            let path = dir.join(report::property_file_name(&r.header.property_ref, ext));
            let body = match args.format {
                Format::Html => property::render(r).into_bytes(),
                Format::Pdf => report::pdf::property(r)?,
                Format::Json => {
                    json_bytes(r).map_err(|e| ohmtrail::Error::invalid(e.to_string()))?
                }
            };
            write_atomic(&path, &body).map_err(|e| ohmtrail::Error::invalid(format!("{e:#}")))?;
            written += 1;
            Ok(())
        })?;
        let body = match args.format {
            Format::Html => portfolio::render(&index).into_bytes(),
            Format::Pdf => report::pdf::portfolio(&index)?,
            Format::Json => json_bytes(&index)?,
        };
        write_atomic(&target, &body)?;
        if written > 0 {
            status(
                out,
                format_args!(
                    "wrote {written} property report{} in {}",
                    if written == 1 { "" } else { "s" },
                    dir.display()
                ),
            )?;
        }
        status(
            out,
            format_args!("wrote portfolio index {}", target.display()),
        )?;
        status(out, format_args!("open first: {}", target.display()))?;
    } else {
        let reference = args
            .property
            .as_deref()
            .ok_or_else(|| anyhow!("name a property, or pass --portfolio"))?;
        let r = report::property_report(&store, reference, &settings)?;
        let body = match args.format {
            Format::Html => property::render(&r).into_bytes(),
            Format::Pdf => report::pdf::property(&r)?,
            Format::Json => json_bytes(&r)?,
        };
        write_atomic(&target, &body)?;
        status(out, format_args!("wrote report {}", target.display()))?;
    }
    status(out, format_args!("Caution: {CAUTION}"))?;
    Ok(())
}

/// The report, or the portfolio's index alone, as the command's output: nothing else is
/// printed beside it (the document carries its own cautions).
fn to_standard_output(args: &Args, ctx: &Context, out: &mut dyn Write) -> Result<()> {
    if args.portfolio && !args.index_only {
        bail!(
            "cannot write the portfolio to standard output: the property reports go beside the index: give -o a file in a directory, or pass --index-only"
        );
    }
    let store = ctx.open_existing()?;
    let settings = Settings::load(&store, today())?;
    let body = if args.portfolio {
        let index = report::portfolio_of(
            &store,
            &settings,
            args.format.ext(),
            args.client.as_deref(),
            |_| Ok(()),
        )?;
        match args.format {
            Format::Html => portfolio::render(&index).into_bytes(),
            Format::Pdf => report::pdf::portfolio(&index)?,
            Format::Json => json_bytes(&index)?,
        }
    } else {
        let reference = args
            .property
            .as_deref()
            .ok_or_else(|| anyhow!("name a property, or pass --portfolio"))?;
        let r = report::property_report(&store, reference, &settings)?;
        match args.format {
            Format::Html => property::render(&r).into_bytes(),
            Format::Pdf => report::pdf::property(&r)?,
            Format::Json => json_bytes(&r)?,
        }
    };
    out.write_all(&body)?;
    Ok(())
}

/// Refuse, before anything is written, a portfolio in which two properties' reports (or a
/// report and the index) would be written to one file name: the second would replace the
/// first while the index linked both.
fn refuse_shared_file_names(
    store: &ohmtrail::store::Store,
    client: Option<&str>,
    ext: &str,
    index: &std::path::Path,
) -> Result<()> {
    let mut seen: std::collections::HashMap<String, String> = std::collections::HashMap::new();
    let index_name = index
        .file_name()
        .map(|n| n.to_string_lossy().into_owned())
        .unwrap_or_default();
    let only = client.map(|c| store.client_properties(c)).transpose()?;
    let mut properties = store.list_properties()?;
    if let Some((name, _)) = &only {
        properties.retain(|p| p.client.as_deref() == Some(name.as_str()));
    }
    for p in properties {
        let name = report::property_file_name(&p.property_ref, ext);
        if name == index_name {
            bail!(
                "the report of property {:?} would be written to {name}, the index's own file name: give -o another name",
                p.property_ref
            );
        }
        if let Some(other) = seen.insert(name.clone(), p.property_ref.clone()) {
            bail!(
                "properties {other:?} and {:?} would both be written to {name}; nothing written: pass --index-only, or write each of them with `ohmtrail report REF -o FILE`",
                p.property_ref
            );
        }
    }
    Ok(())
}

fn json_bytes<T: serde::Serialize>(v: &T) -> Result<Vec<u8>> {
    let mut b = serde_json::to_vec_pretty(v)?;
    b.push(b'\n');
    Ok(b)
}
