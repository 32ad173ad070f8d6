//! The binary's command layer: one file per subcommand, each with its clap
//! `Args` and a `run` that returns the process exit code.
//!
//! Exit codes (a documented contract): 0 success; 2 usage error (clap's);
//! 3 some inputs were rejected (the rest processed); 1 any other failure.

pub mod bary_opts;
pub mod decide;
pub mod demo;
pub mod export;
pub mod lines;
pub mod review;
pub mod scan;
