//! `zsift review`.

/// Options of `zsift review`.
#[derive(Debug, clap::Args)]
pub struct Args {}

/// Run `zsift review`; returns the exit code.
pub fn run(args: &Args) -> anyhow::Result<u8> {
    let _ = args;
    anyhow::bail!("`zsift review` is not built yet")
}
