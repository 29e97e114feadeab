use std::io::Write;

use anyhow::Result;
use clap::Subcommand;

use ohmtrail::analysis::Settings;
use ohmtrail::analysis::settings::KEYS;

use super::output::{json, table};
use super::{Context, today};

#[derive(Subcommand, Debug)]
pub enum Cmd {
    /// Show every setting with its value in this database and its default
    Show {
        /// Print as JSON instead of a table
        #[arg(long)]
        json: bool,
    },
    /// Store a setting in this database (the measured-value rule, a noise floor)
    Set {
        /// The setting's name, as `settings show` lists it
        key: String,
        /// The new value, in the form `settings show` gives for the setting
        #[arg(allow_negative_numbers = true)]
        value: String,
    },
    /// Go back to the built-in default for a setting
    Reset {
        /// The setting's name, as `settings show` lists it
        key: String,
    },
}

pub fn run(cmd: &Cmd, ctx: &Context, out: &mut dyn Write) -> Result<()> {
    let store = ctx.open()?;
    match cmd {
        Cmd::Show { json: as_json } => {
            let s = Settings::load(&store, today())?;
            let rows: Vec<(String, String, String, String)> = KEYS
                .iter()
                .map(|k| {
                    (
                        k.key.to_string(),
                        s.value(k.key).unwrap_or_default(),
                        k.default_value(),
                        k.help.to_string(),
                    )
                })
                .collect();
            if *as_json {
                let v: Vec<_> = rows
                    .iter()
                    .map(|(k, v, d, h)| {
                        serde_json::json!({"key": k, "value": v, "default": d, "help": h})
                    })
                    .collect();
                return json(out, &v);
            }
            table(
                out,
                &["KEY", "VALUE", "DEFAULT", "MEANING"],
                rows.into_iter()
                    .map(|(k, v, d, h)| vec![k, v, d, h])
                    .collect(),
            )?;
        }
        Cmd::Set { key, value } => {
            // Check the value against the rules before storing it.
            let mut s = Settings::load(&store, today())?;
            s.apply(key, value)?;
            // The logo is kept by its full path, so reports made from any directory find it,
            // and checked now as it will be when a report is made.
            let value = if key == "contractor.logo" {
                let path = std::fs::canonicalize(value.trim()).map_err(|e| {
                    anyhow::anyhow!("cannot find the logo file {} ({e})", value.trim())
                })?;
                ohmtrail::report::load_logo(&path)?;
                path.to_string_lossy().into_owned()
            } else {
                value.trim().to_string()
            };
            store.set_setting(key, &value)?;
            writeln!(out, "{key} = {value}")?;
        }
        Cmd::Reset { key } => {
            ohmtrail::analysis::settings::key(key)?;
            store.delete_setting(key)?;
            writeln!(out, "{key} reset to its default")?;
        }
    }
    Ok(())
}
