//! Physics the identifier relies on: constants, hydrogenic levels and
//! transitions, air/vacuum wavelengths, Doppler and redshift algebra.

pub mod airvac;
pub mod bary;
pub mod constants;
pub mod time;
