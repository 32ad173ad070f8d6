//! `zsift decide`.

/// Options of `zsift decide`.
#[derive(Debug, clap::Args)]
pub struct Args {}

/// Run `zsift decide`; returns the exit code.
pub fn run(args: &Args) -> anyhow::Result<u8> {
    let _ = args;
    anyhow::bail!("`zsift decide` is not built yet")
}
