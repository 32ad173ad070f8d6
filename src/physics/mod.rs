//! Physics the identifier relies on: constants, hydrogenic levels and
//! transitions, air/vacuum wavelengths, Doppler and redshift algebra.
//!
//! - [`constants`]: CODATA 2018 values.
//! - [`hydrogen`]: one-electron ions ([`hydrogen::Ion`]), levels, transitions,
//!   series and their names.
//! - [`airvac`]: IAU standard air (Morton 2000).
//! - [`doppler`]: redshift <-> velocity (relativistic), composition, offsets.

pub mod airvac;
pub mod bary;
pub mod constants;
pub mod doppler;
pub mod hydrogen;
pub mod time;
