//! The `ohmtrail` command: parses arguments, calls the library, prints.
//!
//! Exit status: 0 success, 1 any error (one line on stderr), 2 a usage error.

mod cli;

use std::io::{self, Write};
use std::process::ExitCode;

use clap::Parser;

// Analysis and import allocate many small values; mimalloc handles that faster than the
// system allocator.
#[global_allocator]
static GLOBAL: mimalloc::MiMalloc = mimalloc::MiMalloc;

fn main() -> ExitCode {
    // Usage errors exit with status 2; --help and --version exit 0.
    let args = cli::Cli::parse();
    let stdout = io::stdout();
    let mut out = io::BufWriter::new(stdout.lock());
    let result = cli::run(args, &mut out).and_then(|()| Ok(out.flush()?));
    match result {
        Ok(()) => ExitCode::SUCCESS,
        Err(e) if is_broken_pipe(&e) => ExitCode::SUCCESS,
        Err(e) => {
            // Print the whole chain once, on one line.
            let mut msg = e.to_string();
            for cause in e.chain().skip(1) {
                let c = cause.to_string();
                if !msg.contains(&c) {
                    msg.push_str(": ");
                    msg.push_str(&c);
                }
            }
            let _ = writeln!(io::stderr(), "ohmtrail: error: {}", msg.replace('\n', " "));
            ExitCode::from(1)
        }
    }
}

/// A broken pipe (`ohmtrail flags | head`) means the reader has what it wanted.
fn is_broken_pipe(e: &anyhow::Error) -> bool {
    e.chain().any(|c| {
        c.downcast_ref::<io::Error>()
            .is_some_and(|io| io.kind() == io::ErrorKind::BrokenPipe)
            // serde_json keeps the I/O error inside, not as its source.
            || c.downcast_ref::<serde_json::Error>()
                .and_then(|j| j.io_error_kind())
                == Some(io::ErrorKind::BrokenPipe)
    })
}
