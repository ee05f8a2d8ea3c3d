//! `flumerate structures [NAME]`: the structure families and standard sizes with their sources,
//! or one of them in detail. Exit 2 for an unknown name.

use std::process::ExitCode;

use clap::Args;
use flumerate::report::structures::{details, overview, FAMILY_NAMES};

use super::{output::emit, OutputArgs};

#[derive(Debug, Args)]
pub struct StructuresArgs {
    /// A family (critical-flow, thin-plate-weir, square-edged-weir, triangular-profile-weir,
    /// parshall) or a Parshall size (parshall-1in … parshall-50ft)
    pub name: Option<String>,
    #[command(flatten)]
    pub out: OutputArgs,
}

pub fn run(a: StructuresArgs) -> anyhow::Result<ExitCode> {
    super::output::check(&[], &[("-o", a.out.output.as_deref())])?;
    let text = match &a.name {
        None => overview(),
        Some(n) => match details(n) {
            Some(t) => t,
            None => {
                let sizes: Vec<String> = flumerate::rating::ParshallSize::all()
                    .map(|s| format!("parshall-{}", s.spec().name))
                    .collect();
                anyhow::bail!(
                    "no structure named \"{n}\": use one of {} or a Parshall size ({})",
                    FAMILY_NAMES.join(", "),
                    sizes.join(", ")
                );
            }
        },
    };
    emit(text.as_bytes(), a.out.output.as_deref())?;
    Ok(ExitCode::SUCCESS)
}
