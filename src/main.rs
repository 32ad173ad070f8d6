//! The `zsift` command: thin shells over the library.
#![forbid(unsafe_code)]

mod cli;

use clap::{Parser, Subcommand};
use std::process::ExitCode;

/// Classify and redshift many 1-D spectra fast, and record a person's decisions.
#[derive(Debug, Parser)]
#[command(name = "zsift", version, about, long_about = None)]
struct Cli {
    #[command(subcommand)]
    command: Command,
}

#[derive(Debug, Subcommand)]
enum Command {
    /// Open the review on the bundled demo night (logs go to your data folder).
    Demo(cli::demo::Args),
    /// Review a queue of spectra in the terminal and record decisions.
    Review(cli::review::Args),
    /// Run the identifier headless over many spectra (JSON Lines or CSV).
    Scan(cli::scan::Args),
    /// Print the line catalogue and computed hydrogen series.
    Lines(cli::lines::Args),
    /// Record decisions from a script, or accept batch answers in bulk.
    Decide(cli::decide::Args),
    /// Export the current state of every target in a decision log.
    Export(cli::export::Args),
}

fn main() -> ExitCode {
    let cli = Cli::parse();
    let result = match &cli.command {
        Command::Demo(a) => cli::demo::run(a),
        Command::Review(a) => cli::review::run(a),
        Command::Scan(a) => cli::scan::run(a),
        Command::Lines(a) => cli::lines::run(a),
        Command::Decide(a) => cli::decide::run(a),
        Command::Export(a) => cli::export::run(a),
    };
    match result {
        Ok(code) => ExitCode::from(code),
        Err(e) => {
            // Print the whole cause chain once, cleaned of control characters.
            eprintln!("zsift: {}", zsift::text::clean(&format!("{e:#}")));
            ExitCode::from(1)
        }
    }
}
