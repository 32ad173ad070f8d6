//! Seeded synthetic spectra with known truth (stars, galaxies, quasars, junk;
//! sky residuals, telluric bands, cosmic rays) for tests, benchmarks and the demo.
