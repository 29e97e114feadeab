use std::io::Write;
use std::path::PathBuf;

use anyhow::{Context as _, Result, bail};
use clap::Args as ClapArgs;

use ohmtrail::store::Store;

#[derive(ClapArgs, Debug)]
pub struct Args {
    /// Directory to write the demo database and reports into
    #[arg(long, default_value = "ohmtrail-demo")]
    pub dir: PathBuf,
}

pub fn run(args: &Args, out: &mut dyn Write) -> Result<()> {
    let dir = &args.dir;
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
    let store = Store::open(&db)?;
    let summary = ohmtrail::demo::build(&store)?;
    if summary.properties.is_empty() {
        bail!("the demo built no properties");
    }
    writeln!(
        out,
        "built demo database {} ({} properties, {} visits, {} test records)",
        db.display(),
        summary.properties.len(),
        summary.visits,
        summary.test_records
    )?;
    let mut first = None;
    for reference in &summary.properties {
        let html = ohmtrail::report::property_html(&store, reference)?;
        let path = dir.join(format!("report-{reference}.html"));
        std::fs::write(&path, html).with_context(|| format!("cannot write {}", path.display()))?;
        writeln!(out, "wrote trend report {}", path.display())?;
        first.get_or_insert(path);
    }
    if let Some(p) = first {
        writeln!(out, "open first: {}", p.display())?;
    }
    Ok(())
}
