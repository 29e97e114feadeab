use std::io::Write;
use std::path::PathBuf;

use anyhow::{Context as _, Result, bail};
use clap::Args as ClapArgs;

use ohmtrail::analysis::Settings;
use ohmtrail::store::Store;

use super::output::{status, write_atomic};
use super::today;

#[derive(ClapArgs, Debug)]
pub struct Args {
    /// Directory to write the demo database and reports into
    #[arg(long, default_value = "ohmtrail-demo")]
    pub dir: PathBuf,
}

pub fn run(args: &Args, ctx: &super::Context, out: &mut dyn Write) -> Result<()> {
    let dir = &args.dir;
    // The demo wipes and rebuilds its own database: it must never be pointed at a real one.
    if let Some(db) = &ctx.db {
        bail!(
            "demo builds its own database in its --dir ({}) and never uses the database named by --db or OHMTRAIL_DB ({}): run it without them",
            dir.join("demo.db").display(),
            db.display()
        );
    }
    std::fs::create_dir_all(dir)
        .with_context(|| format!("cannot create the demo directory {}", dir.display()))?;
    let db = dir.join("demo.db");
    // The demo always starts from nothing so that every run shows the same portfolio.
    for suffix in ["", "-wal", "-shm"] {
        let p = PathBuf::from(format!("{}{suffix}", db.display()));
        if p.exists() {
            std::fs::remove_file(&p).with_context(|| format!("cannot remove {}", p.display()))?;
        }
    }
    // Everything the demo says is a status line (what it built and wrote, what to try next):
    // gathered here and given on standard error at the end, as other commands that write
    // files do.
    let mut msg: Vec<u8> = Vec::new();
    let store = Store::open(&db)?;
    let summary = ohmtrail::demo::build(&store)?;
    if summary.properties.is_empty() {
        bail!("the demo built no properties");
    }
    writeln!(
        msg,
        "built demo database {} ({} properties, {} visits, {} test records)",
        db.display(),
        summary.properties.len(),
        summary.visits,
        summary.test_records
    )?;
    let settings = Settings::load(&store, today())?;
    let mut written = Vec::new();
    let index = ohmtrail::report::portfolio(&store, &settings, "html", |r| {
        let path = dir.join(ohmtrail::report::property_file_name(
            &r.header.property_ref,
            "html",
        ));
        write_atomic(&path, ohmtrail::report::property::render(r).as_bytes())
            .map_err(|e| ohmtrail::Error::invalid(format!("{e:#}")))?;
        written.push(path);
        Ok(())
    })?;
    for p in &written {
        writeln!(msg, "wrote trend report {}", p.display())?;
    }
    let index_path = dir.join("portfolio.html");
    write_atomic(
        &index_path,
        ohmtrail::report::portfolio::render(&index).as_bytes(),
    )?;
    writeln!(msg, "wrote portfolio index {}", index_path.display())?;
    writeln!(msg, "open first: {}", index_path.display())?;
    // The next commands, spelled out with the demo's database: a plain `flags` would read the
    // default database, which the demo does not touch.
    let first = summary
        .properties
        .first()
        .map(String::as_str)
        .unwrap_or("QL-001");
    writeln!(msg, "then try, on the demo's database:")?;
    for cmd in [
        "flags".to_string(),
        format!("trend {first}"),
        format!("brief {first} --temp 12"),
    ] {
        writeln!(msg, "  ohmtrail --db {} {cmd}", db.display())?;
    }
    status(
        out,
        format_args!("{}", String::from_utf8_lossy(&msg).trim_end()),
    )
}
