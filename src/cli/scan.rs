//! `zsift scan`.

/// Options of `zsift scan`.
#[derive(Debug, clap::Args)]
pub struct Args {}

/// Run `zsift scan`; returns the exit code.
pub fn run(args: &Args) -> anyhow::Result<u8> {
    let _ = args;
    anyhow::bail!("`zsift scan` is not built yet")
}
