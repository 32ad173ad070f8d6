//! zsift: find, fit and identify the lines of many 1-D spectra, propose ranked
//! redshift / velocity solutions, and record a person's decisions safely.
//!
//! Layers (each depends only on those above it):
//! - [`text`]: small helpers for anything shown to a person (control-character
//!   stripping, safe file names).
//! - [`spectrum`]: the [`spectrum::Spectrum`] model and the readers that build it.
//! - [`physics`]: constants, hydrogenic levels, air/vacuum, Doppler algebra.
//! - [`lines`]: the line catalogue.
//! - [`identify`]: the identifier core (pure computation, no I/O).
//! - [`queue`] and [`decisions`]: what to review and the append-only decision log.
//! - [`scan`]: the batch shell; [`tui`]: the interactive review shell.
#![forbid(unsafe_code)]
#![cfg_attr(not(test), warn(clippy::unwrap_used))]

pub mod decisions;
pub mod identify;
pub mod lines;
pub mod physics;
pub mod queue;
pub mod scan;
pub mod spectrum;
pub mod synth;
pub mod text;
pub mod tui;

/// The tool's version, as recorded in decision logs and batch output.
pub const VERSION: &str = env!("CARGO_PKG_VERSION");
