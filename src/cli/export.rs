//! `zsift export`.

/// Options of `zsift export`.
#[derive(Debug, clap::Args)]
pub struct Args {}

/// Run `zsift export`; returns the exit code.
pub fn run(args: &Args) -> anyhow::Result<u8> {
    let _ = args;
    anyhow::bail!("`zsift export` is not built yet")
}
