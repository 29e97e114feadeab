use std::io::Write;
use std::path::{Path, PathBuf};

use super::output::count;
use anyhow::Result;
use clap::{Args as ClapArgs, ValueEnum};

use ohmtrail::archive::write_archive;
use ohmtrail::export::{export_csv, export_json, observation_count};

use super::Context;
use super::output::{is_special, status, write_atomic, write_atomic_with};

#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum Format {
    /// The visit-file format import reads (observations in a file of their own)
    Csv,
    /// Test records and observations as one JSON document
    Json,
}

/// Export test records (and observations) in the visit-file format import reads
#[derive(ClapArgs, Debug)]
pub struct Args {
    /// Only this property
    #[arg(long, value_name = "REF")]
    pub property: Option<String>,
    /// File to write, or - for standard output [default: standard output]; with CSV, observations go to FILE's stem + .observations.csv
    #[arg(short = 'o', long = "output", value_name = "FILE")]
    pub output: Option<PathBuf>,
    /// csv, the visit-file format, or json
    #[arg(long, value_enum, default_value = "csv")]
    pub format: Format,
    /// Write the whole history, losslessly, as an archive FILE for `ohmtrail merge` on another
    /// machine (register, events, lineage, visits, every reading, observations, settings)
    #[arg(long, value_name = "FILE", conflicts_with_all = ["property", "output"])]
    pub archive: Option<PathBuf>,
}

/// `visits.csv` → `visits.observations.csv`, beside it.
fn observations_path(p: &Path) -> PathBuf {
    let stem = p
        .file_stem()
        .map(|s| s.to_string_lossy().into_owned())
        .unwrap_or_else(|| "export".into());
    p.with_file_name(format!("{stem}.observations.csv"))
}

pub fn run(args: &Args, ctx: &Context, out: &mut dyn Write) -> Result<()> {
    let store = ctx.open_existing()?;
    if let Some(p) = &args.archive {
        let n = write_atomic_with(p, |w| Ok(write_archive(&store, w)?))?;
        eprintln!(
            "wrote {}: {}, {}, {}, {}",
            p.display(),
            count(n.rows("property"), "property", "properties"),
            count(n.rows("circuit"), "circuit", "circuits"),
            count(n.rows("visit"), "visit", "visits"),
            count(n.rows("test_record"), "test record", "test records"),
        );
        return Ok(());
    }
    let property = args.property.as_deref();
    // `-o -` is standard output, as for `report`.
    let output = args
        .output
        .as_ref()
        .filter(|p| !super::report::is_stdout(p));
    match (args.format, output) {
        (Format::Json, None) => {
            export_json(&store, property, out)?;
        }
        (Format::Json, Some(p)) => {
            let n = write_atomic_with(p, |w| Ok(export_json(&store, property, w)?))?;
            status(
                out,
                format_args!(
                    "wrote {} and {} to {}",
                    count(n.test_records, "test record", "test records"),
                    count(n.observations, "observation", "observations"),
                    p.display()
                ),
            )?;
        }
        (Format::Csv, Some(p)) if is_special(p) => {
            // A device or a pipe has no directory of its own to hold a second file beside it.
            let n = write_atomic_with(p, |w| Ok(export_csv(&store, property, w, None)?))?;
            status(
                out,
                format_args!(
                    "wrote {} to {}",
                    count(n.test_records, "test record", "test records"),
                    p.display()
                ),
            )?;
            let obs = observation_count(&store, property)?;
            if obs > 0 {
                status(
                    out,
                    format_args!(
                        "{} not written: {} is not a regular file, so there is no place beside it for {}; pass -o with a regular file to write {}",
                        count(obs, "observation", "observations"),
                        p.display(),
                        if obs == 1 { "it" } else { "them" },
                        if obs == 1 { "it" } else { "them" }
                    ),
                )?;
            }
        }
        (Format::Csv, None) => {
            let n = export_csv(&store, property, out, None)?;
            let obs = observation_count(&store, property)?;
            if obs > 0 {
                status(
                    out,
                    format_args!(
                        "{} written; {} not written: pass -o FILE to write {} beside the visit file",
                        count(n.test_records, "test record", "test records"),
                        count(obs, "observation", "observations"),
                        if obs == 1 { "it" } else { "them" }
                    ),
                )?;
            }
        }
        (Format::Csv, Some(p)) => {
            let obs_path = observations_path(p);
            let has_obs = observation_count(&store, property)? > 0;
            // Both files appear whole or not at all: the observations (a few lines a visit)
            // are held in memory until the visit file is safely in place.
            let mut obs = Vec::new();
            let n = write_atomic_with(p, |w| {
                Ok(export_csv(
                    &store,
                    property,
                    w,
                    has_obs.then_some(&mut obs as &mut dyn Write),
                )?)
            })?;
            if has_obs {
                write_atomic(&obs_path, &obs)?;
            }
            status(
                out,
                format_args!(
                    "wrote {} to {}",
                    count(n.test_records, "test record", "test records"),
                    p.display()
                ),
            )?;
            if has_obs {
                status(
                    out,
                    format_args!(
                        "wrote {} to {}",
                        count(n.observations, "observation", "observations"),
                        obs_path.display()
                    ),
                )?;
            }
        }
    }
    Ok(())
}
