//! The `flumerate` command. Exit codes (design.md): 0 success; 1 the work ran but something needs
//! attention (a limit broken, a check failed); 2 bad input or usage. A closed pipe on standard
//! output counts as success.

mod cli;

use std::process::ExitCode;

use clap::Parser;

/// mimalloc keeps freed memory for reuse instead of handing it back and faulting it in again,
/// which the chunked conversion of long logger files does all the time.
#[global_allocator]
static ALLOCATOR: mimalloc::MiMalloc = mimalloc::MiMalloc;

fn main() -> ExitCode {
    // Ctrl-C, SIGTERM, SIGHUP: remove this run's temporary files (after a commit under way has
    // finished or rolled back) and stop; no output is left half-written under its name
    let _ = ctrlc::set_handler(|| {
        flumerate::files::remove_temporaries();
        eprintln!("flumerate: interrupted; this run's temporary files are removed (outputs already renamed into place stay as written)");
        std::process::exit(130);
    });
    let args = cli::Cli::parse();
    match cli::run(args) {
        Ok(code) => code,
        Err(err) => {
            eprintln!("flumerate: error: {err:#}");
            ExitCode::from(2)
        }
    }
}
