//! `zsift lines`.

/// Options of `zsift lines`.
#[derive(Debug, clap::Args)]
pub struct Args {}

/// Run `zsift lines`; returns the exit code.
pub fn run(args: &Args) -> anyhow::Result<u8> {
    let _ = args;
    anyhow::bail!("`zsift lines` is not built yet")
}
