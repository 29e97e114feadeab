use std::io::Write;

use anyhow::Result;

use super::Context;

pub fn run(ctx: &Context, out: &mut dyn Write) -> Result<()> {
    let store = ctx.open()?;
    writeln!(
        out,
        "database {} ready (schema version {})",
        store.path().display(),
        store.schema_version()?
    )?;
    Ok(())
}
