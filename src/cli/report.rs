//! `ohmtrail report`: one property's trend report, or the portfolio index with every
//! property's report beside it.
//!
//! File names: a property's report is `report-REF.html` (`.json` with `--format json`), REF
//! made safe for file names (anything but letters, digits, `-`, `_` and `.` becomes `_`, and
//! a short hash of the reference is then appended so that names never collide). Without `-o`
//! a property's report goes to that name in the current directory and the index to
//! `portfolio.html`. With `--portfolio` the property reports are written beside the index.
//! Every file is written to a temporary file in the same directory and renamed into place,
//! so a failed run leaves no half-written report.

use std::io::Write;
use std::path::{Path, PathBuf};

use anyhow::{Context as _, Result, anyhow, bail};
use clap::{ArgGroup, Args as ClapArgs, ValueEnum};

use ohmtrail::analysis::Settings;
use ohmtrail::report::{self, portfolio, property};

use super::{CAUTION, Context, today};

#[derive(ValueEnum, Clone, Copy, Debug, PartialEq, Eq)]
pub enum Format {
    /// A self-contained HTML page (inline CSS and SVG, no script)
    Html,
    /// The same content as JSON
    Json,
}

impl Format {
    fn ext(self) -> &'static str {
        match self {
            Format::Html => "html",
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
    /// File to write [default: report-REF.html, or portfolio.html, in the current directory]
    #[arg(short = 'o', long = "output", value_name = "FILE")]
    pub output: Option<PathBuf>,
    /// html, or json for the same content as data
    #[arg(long, value_enum, default_value_t = Format::Html)]
    pub format: Format,
    /// With --portfolio: write only the index, not the property reports it links to
    #[arg(long, requires = "portfolio")]
    pub index_only: bool,
}

pub fn run(args: &Args, ctx: &Context, out: &mut dyn Write) -> Result<()> {
    let ext = args.format.ext();
    let target = match (&args.output, &args.property) {
        (Some(p), _) => p.clone(),
        (None, Some(r)) if !args.portfolio => PathBuf::from(report::property_file_name(r, ext)),
        (None, _) => PathBuf::from(format!("portfolio.{ext}")),
    };
    // Check where the output goes before any work, so a wrong -o fails at once.
    let dir = output_dir(&target)?;
    let store = ctx.open()?;
    let settings = Settings::load(&store, today())?;

    if args.portfolio {
        let mut written = 0usize;
        let index = report::portfolio(&store, &settings, ext, |r| {
            if args.index_only {
                return Ok(());
            }
            let path = dir.join(report::property_file_name(&r.header.property_ref, ext));
            let body = match args.format {
                Format::Html => property::render(r).into_bytes(),
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
            Format::Json => json_bytes(&index)?,
        };
        write_atomic(&target, &body)?;
        if written > 0 {
            writeln!(
                out,
                "wrote {written} property report{} in {}",
                if written == 1 { "" } else { "s" },
                dir.display()
            )?;
        }
        writeln!(out, "wrote portfolio index {}", target.display())?;
        writeln!(out, "open first: {}", target.display())?;
    } else {
        let reference = args
            .property
            .as_deref()
            .ok_or_else(|| anyhow!("name a property, or pass --portfolio"))?;
        let r = report::property_report(&store, reference, &settings)?;
        let body = match args.format {
            Format::Html => property::render(&r).into_bytes(),
            Format::Json => json_bytes(&r)?,
        };
        write_atomic(&target, &body)?;
        writeln!(out, "wrote report {}", target.display())?;
    }
    writeln!(out, "{CAUTION}")?;
    Ok(())
}

fn json_bytes<T: serde::Serialize>(v: &T) -> Result<Vec<u8>> {
    let mut b = serde_json::to_vec_pretty(v)?;
    b.push(b'\n');
    Ok(b)
}

/// The directory a file is to be written in; it must exist, and the file must not be a
/// directory.
pub fn output_dir(target: &Path) -> Result<PathBuf> {
    if target.as_os_str().is_empty() {
        bail!("the output path is empty: expected a file name such as report.html");
    }
    if target.is_dir() {
        bail!(
            "{} is a directory: expected a file name such as {}/report.html",
            target.display(),
            target.display()
        );
    }
    let dir = match target.parent() {
        Some(p) if !p.as_os_str().is_empty() => p.to_path_buf(),
        _ => PathBuf::from("."),
    };
    if !dir.is_dir() {
        bail!(
            "output directory {} does not exist: create it first, or give -o a file in an existing directory",
            dir.display()
        );
    }
    Ok(dir)
}

/// Write `body` to `path` by way of a temporary file in the same directory and a rename, so a
/// reader never sees a half-written file and a failure leaves nothing behind.
pub fn write_atomic(path: &Path, body: &[u8]) -> Result<()> {
    let dir = output_dir(path)?;
    let mut tmp = tempfile::Builder::new()
        .prefix(".ohmtrail-")
        .suffix(".tmp")
        .tempfile_in(&dir)
        .with_context(|| {
            format!(
                "cannot write in the output directory {}: check it is writable",
                dir.display()
            )
        })?;
    tmp.write_all(body)
        .and_then(|()| tmp.as_file().sync_all())
        .with_context(|| format!("cannot write {}", path.display()))?;
    // Reports are meant to be shared: readable by others, as a newly created file would be.
    #[cfg(unix)]
    {
        use std::os::unix::fs::PermissionsExt;
        let _ = tmp
            .as_file()
            .set_permissions(std::fs::Permissions::from_mode(0o644));
    }
    tmp.persist(path)
        .map_err(|e| anyhow!("cannot write {}: {}", path.display(), e.error))?;
    Ok(())
}
