//! `zsift demo`.

/// Options of `zsift demo`.
#[derive(Debug, clap::Args)]
pub struct Args {}

/// Run `zsift demo`; returns the exit code.
pub fn run(args: &Args) -> anyhow::Result<u8> {
    let _ = args;
    anyhow::bail!("`zsift demo` is not built yet")
}
