//! `flumerate verify`: the built-in reference checks, printed. Exit 0 when all pass, 1 otherwise.

use std::process::ExitCode;

use clap::Args;
use flumerate::verify::checks;

use super::output::emit;

#[derive(Debug, Args)]
pub struct VerifyArgs {}

pub fn run(_: VerifyArgs) -> anyhow::Result<ExitCode> {
    let results = checks();
    let mut s = String::from("flumerate verify: this build against published and independently computed values\n\n");
    for c in &results {
        s.push_str(&format!(
            "[{}] {}\n       expected {}  got {}  (tolerance {:e} relative; {})\n",
            if c.passed() { " ok " } else { "FAIL" },
            c.what,
            c.expected,
            c.got,
            c.tolerance,
            c.source
        ));
    }
    let failed = results.iter().filter(|c| !c.passed()).count();
    s.push_str(&format!("\n{} passed, {failed} failed\n", results.len() - failed));
    emit(s.as_bytes(), None)?;
    Ok(if failed == 0 {
        ExitCode::SUCCESS
    } else {
        ExitCode::from(1)
    })
}
