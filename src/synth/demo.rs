//! The bundled demo night: an invented night at an invented observatory.
//!
//! Cairn Vellan Observatory (fictional) has a 2.2 m telescope and the Tarnwell
//! spectrograph (fictional) with five set-ups. On the night of 2026-03-14 its
//! observers took 36 targets of every kind; [`write_night`] writes them in
//! every layout zsift reads (FITS 1-D image, 2-D image rows, binary tables
//! with pixel rows and with vector columns, CSV, TSV, whitespace text; air and
//! vacuum), plus the queue file, the answers, and a README.
//!
//! Everything here is invented: site, instrument, observers and target names.
//! The output is a pure function of this code (fixed seeds), so the committed
//! `demo/` folder can be checked byte for byte against a regeneration
//! (`tests/demo_data.rs`).

use super::write::{Format, write};
use super::{Instrument, Kind, Sampling, SynthSpec, generate};
use crate::spectrum::{Medium, Metadata, Site};
use std::fmt::Write as _;
use std::io;
use std::path::{Path, PathBuf};

/// Observatory name (invented).
pub const OBSERVATORY: &str = "Cairn Vellan Observatory";
/// Telescope name (invented).
pub const TELESCOPE: &str = "Cairn Vellan 2.2m";
/// Spectrograph name (invented).
pub const INSTRUMENT: &str = "Tarnwell";
/// Geodetic latitude of the (invented) site, degrees north.
pub const LATITUDE_DEG: f64 = 44.183;
/// Geodetic longitude of the (invented) site, degrees east.
pub const LONGITUDE_DEG: f64 = -113.240;
/// Height of the (invented) site above the WGS84 ellipsoid, metres.
pub const HEIGHT_M: f64 = 2780.0;
/// MJD of 2026-03-14T00:00:00 UTC (MJD 51544 is 2000-01-01; 9497 days to
/// 2026-01-01, 72 more to 14 March).
const NIGHT_MJD0: f64 = 61113.0;

/// Geocentric (ITRS) X, Y, Z in metres of a geodetic position on the WGS84
/// ellipsoid (a = 6378137 m, 1/f = 298.257223563; standard formulae).
pub fn geodetic_to_geocentric(lat_deg: f64, lon_deg: f64, h_m: f64) -> [f64; 3] {
    let a = 6_378_137.0;
    let f = 1.0 / 298.257_223_563;
    let e2 = f * (2.0 - f);
    let (phi, lam) = (lat_deg.to_radians(), lon_deg.to_radians());
    let n = a / (1.0 - e2 * phi.sin().powi(2)).sqrt();
    [
        (n + h_m) * phi.cos() * lam.cos(),
        (n + h_m) * phi.cos() * lam.sin(),
        (n * (1.0 - e2) + h_m) * phi.sin(),
    ]
}

/// The Tarnwell set-ups (the library presets under the demo's names).
fn setups() -> Vec<Instrument> {
    let names = [
        "Tarnwell wide",
        "Tarnwell low",
        "Tarnwell fine",
        "Tarnwell red",
        "Tarnwell survey",
    ];
    Instrument::presets()
        .into_iter()
        .zip(names)
        .map(|(mut i, n)| {
            i.name = n.to_string();
            i
        })
        .collect()
}

/// One planned demo target.
#[derive(Debug, Clone)]
struct Plan {
    kind: Kind,
    snr: f64,
    setup: usize,
    format: Format,
    medium: Medium,
    priority: u8,
    note: &'static str,
}

fn plans() -> Vec<Plan> {
    use Format::*;
    use Kind::*;
    use Medium::{Air, Vacuum};
    // (kind, S/N, set-up, format, medium for text/tables, priority, note)
    let p = |kind, snr, setup, format, medium, priority, note| Plan {
        kind,
        snr,
        setup,
        format,
        medium,
        priority,
        note,
    };
    vec![
        p(
            SolarStar,
            45.0,
            0,
            FitsImage,
            Vacuum,
            3,
            "velocity standard",
        ),
        p(Quasar, 18.0, 0, FitsImage, Vacuum, 1, "blue point source"),
        p(StarFormingGalaxy, 12.0, 1, FitsImage, Air, 2, ""),
        p(
            PassiveGalaxy,
            25.0,
            2,
            FitsImageRows,
            Air,
            2,
            "cluster member?",
        ),
        p(Quasar, 8.0, 3, FitsImageRows, Vacuum, 1, "X-ray source"),
        p(CoolStar, 30.0, 0, FitsImageRows, Vacuum, 3, ""),
        p(AgnGalaxy, 15.0, 0, FitsTable, Air, 1, "radio source"),
        p(EarlyStar, 50.0, 0, FitsTable, Vacuum, 3, "flux standard"),
        p(JunkNoise, 5.0, 4, FitsTable, Vacuum, 3, "offset pointing?"),
        p(StarFormingGalaxy, 6.0, 4, FitsTableVector, Vacuum, 2, ""),
        p(Quasar, 25.0, 3, FitsTableVector, Air, 1, "high-z candidate"),
        p(PassiveGalaxy, 10.0, 4, FitsTableVector, Vacuum, 2, ""),
        p(StarFormingGalaxy, 20.0, 1, Csv, Air, 2, "compact blue"),
        p(JunkSmooth, 15.0, 1, Csv, Vacuum, 3, "clouds"),
        p(SolarStar, 12.0, 1, Csv, Air, 3, ""),
        p(Quasar, 5.0, 1, Tsv, Air, 1, "faint"),
        p(CoolStar, 9.0, 1, Tsv, Vacuum, 3, "red object"),
        p(AgnGalaxy, 10.0, 3, Tsv, Vacuum, 1, ""),
        p(PassiveGalaxy, 8.0, 1, Whitespace, Air, 2, ""),
        p(EarlyStar, 20.0, 1, Whitespace, Vacuum, 3, ""),
        p(JunkWiggles, 30.0, 1, Whitespace, Air, 3, "bad flat?"),
        p(Quasar, 12.0, 4, FitsImage, Vacuum, 1, ""),
        p(
            StarFormingGalaxy,
            4.0,
            2,
            FitsImage,
            Air,
            2,
            "low surface brightness",
        ),
        p(SolarStar, 7.0, 3, FitsImage, Vacuum, 3, ""),
        p(
            PassiveGalaxy,
            40.0,
            0,
            FitsImageRows,
            Vacuum,
            2,
            "bright elliptical",
        ),
        p(
            JunkNoise,
            5.0,
            2,
            FitsImageRows,
            Air,
            3,
            "acquisition failed",
        ),
        p(
            StarFormingGalaxy,
            30.0,
            0,
            FitsTable,
            Vacuum,
            2,
            "H II region",
        ),
        p(Quasar, 3.5, 0, FitsTable, Air, 1, "very faint"),
        p(EarlyStar, 10.0, 3, FitsTableVector, Vacuum, 3, ""),
        p(CoolStar, 15.0, 4, FitsTableVector, Air, 3, ""),
        p(AgnGalaxy, 25.0, 1, Csv, Vacuum, 1, ""),
        p(StarFormingGalaxy, 9.0, 3, Csv, Air, 2, ""),
        p(Quasar, 40.0, 1, Tsv, Vacuum, 1, "bright"),
        p(PassiveGalaxy, 15.0, 1, Tsv, Air, 2, ""),
        p(JunkSmooth, 10.0, 1, Whitespace, Vacuum, 3, ""),
        p(JunkWiggles, 20.0, 3, Whitespace, Vacuum, 3, "twilight"),
    ]
}

/// Write the demo night into `dir` (created if missing): the spectra, the
/// queue file `queue.csv` (`path,target,priority,note`; priority 1 = look
/// first), the answers `truth.csv` and `README.md`. Returns every path written,
/// spectra first in queue order.
pub fn write_night(dir: &Path) -> io::Result<Vec<PathBuf>> {
    std::fs::create_dir_all(dir)?;
    let setups = setups();
    let geo = geodetic_to_geocentric(LATITUDE_DEG, LONGITUDE_DEG, HEIGHT_M);
    let mut written = Vec::new();
    let mut queue = String::from("path,target,priority,note\n");
    let mut truth =
        String::from("path,target,kind,class,subclass,z,velocity_kms,snr,setup,format,medium\n");
    let mut table = String::new();
    let mut names = Rng::new(0xCA12_7E11);
    // The night starts at 02:10 UTC (dusk at the site) and runs target after target.
    let mut t_min = 130.0;
    for (i, p) in plans().iter().enumerate() {
        let seed = 2026_0314_0000 + i as u64;
        let mut inst = setups[p.setup].clone();
        let medium = if p.format.is_image() {
            inst.medium
        } else {
            p.medium
        };
        if p.format.is_image() {
            inst.medium = medium;
        }
        let ra: f64 = names.range(0.0, 360.0);
        let dec: f64 = names.range(-25.0, 75.0);
        let target = coordinate_name(ra, dec);
        let exptime = [600.0, 900.0, 1200.0, 1800.0][names.below(4)];
        let mjd = NIGHT_MJD0 + t_min / 1440.0;
        let date_obs = iso_time(t_min);
        t_min += exptime / 60.0 + 4.0;

        let mut spec = SynthSpec::random(p.kind, p.snr, inst.clone(), seed);
        spec.meta = Metadata {
            target: target.clone(),
            ra_deg: Some(round6(ra)),
            dec_deg: Some(round6(dec)),
            equinox: Some(2000.0),
            date_obs: Some(date_obs.clone()),
            mjd_obs: Some(round6(mjd)),
            time_scale: Some("UTC".into()),
            exposure_s: Some(exptime),
            site: Site {
                geocentric_m: Some([round3(geo[0]), round3(geo[1]), round3(geo[2])]),
                name: Some(OBSERVATORY.into()),
                ..Site::default()
            },
            header: vec![
                ("TELESCOP".into(), TELESCOPE.into()),
                ("INSTRUME".into(), format!("{} ({})", INSTRUMENT, inst.name)),
                ("OBSERVER".into(), "night crew".into()),
            ],
            ..Metadata::default()
        };
        let syn = generate(&spec, seed);
        let stem = crate::text::safe_stem(&format!(
            "{:02}_{}_{}",
            i + 1,
            target.replace(' ', ""),
            p.format.label()
        ));
        let file = format!("{stem}.{}", p.format.extension());
        let path = dir.join(&file);
        write(&path, &syn, p.format, medium)?;
        written.push(path);

        let _ = writeln!(queue, "{file},{target},{},{}", p.priority, p.note);
        let t = &syn.truth;
        let _ = writeln!(
            truth,
            "{file},{target},{},{},{},{:.6},{:.2},{:.1},{},{},{}",
            t.kind.label(),
            t.class.as_str(),
            t.subclass,
            t.z,
            t.velocity_kms,
            t.snr,
            inst.name,
            p.format.label(),
            medium.as_str()
        );
        let _ = writeln!(
            table,
            "| {} | {} | {} | {} | {} | {:.0} |",
            i + 1,
            target,
            inst.name,
            p.format.label(),
            medium.as_str(),
            exptime
        );
    }
    let q = dir.join("queue.csv");
    std::fs::write(&q, queue)?;
    written.push(q);
    let t = dir.join("truth.csv");
    std::fs::write(&t, truth)?;
    written.push(t);
    let r = dir.join("README.md");
    std::fs::write(&r, readme(&table, geo))?;
    written.push(r);
    Ok(written)
}

use super::rng::Rng;

fn round6(x: f64) -> f64 {
    (x * 1e6).round() / 1e6
}

fn round3(x: f64) -> f64 {
    (x * 1e3).round() / 1e3
}

/// An invented catalogue name from the coordinates: `CVO hhmm+ddmm`.
fn coordinate_name(ra: f64, dec: f64) -> String {
    let h = ra / 15.0;
    let hh = h.floor() as u32;
    let mm = ((h - hh as f64) * 60.0).floor() as u32;
    let sign = if dec < 0.0 { '-' } else { '+' };
    let d = dec.abs();
    let dd = d.floor() as u32;
    let dm = ((d - dd as f64) * 60.0).floor() as u32;
    format!("CVO {hh:02}{mm:02}{sign}{dd:02}{dm:02}")
}

/// `2026-03-14Thh:mm:ss` (or the 15th after midnight) for minutes after 00:00 UTC on the 14th.
fn iso_time(minutes: f64) -> String {
    let total = (minutes * 60.0).round() as u64;
    let day = 14 + total / 86_400;
    let s = total % 86_400;
    format!(
        "2026-03-{day:02}T{:02}:{:02}:{:02}",
        s / 3600,
        (s / 60) % 60,
        s % 60
    )
}

fn readme(table: &str, geo: [f64; 3]) -> String {
    let mut setups_md = String::new();
    for s in setups() {
        let sampling = match s.sampling {
            Sampling::Linear { step } => format!("linear, {step} A per pixel"),
            Sampling::Log10 { dlog10 } => format!("log-lambda, {dlog10:e} dex per pixel"),
        };
        let _ = writeln!(
            setups_md,
            "| {} | {:.0}-{:.0} A | {:.0} | {} | {} |",
            s.name,
            s.lo,
            s.hi,
            s.resolution,
            sampling,
            s.medium.as_str()
        );
    }
    format!(
        "# The demo night: {OBSERVATORY}, 2026-03-14\n\
\n\
Everything in this folder is invented and was written by zsift's own generator\n\
(`zsift::synth::demo::write_night`); nothing comes from a real telescope, survey or person.\n\
Do not edit these files by hand: regenerate them (see DEVELOPERS.md, \"Synthetic truth, demo\n\
data and accuracy\").\n\
\n\
## The night\n\
\n\
{OBSERVATORY} is a fictional mountain-top site at latitude {LATITUDE_DEG} N, longitude\n\
{LONGITUDE_DEG} E, {HEIGHT_M} m above the ellipsoid (OBSGEO-X/Y/Z = {:.3}, {:.3}, {:.3} m).\n\
Its {TELESCOPE} telescope feeds the {INSTRUMENT} long-slit spectrograph. On the night of\n\
14 March 2026 the crew worked through a mixed queue from dusk (02:10 UTC): velocity and flux\n\
standards, quasar candidates from an X-ray and radio list, galaxies in a cluster field, and a few\n\
targets that came out empty (a failed acquisition, clouds, a bad flat field, twilight).\n\
Exposures were 600-1800 s. Sky residuals, telluric bands and cosmic rays were left in, as they\n\
come off a quick-look reduction.\n\
\n\
## Set-ups\n\
\n\
| set-up | coverage | R | sampling | grid medium |\n\
|---|---|---|---|---|\n\
{setups_md}\n\
## Files\n\
\n\
Every layout zsift reads: FITS 1-D image with spectral WCS (`image`, with `ERROR` and `SKY`\n\
extensions), FITS 2-D image whose rows are flux, error and sky (`image-rows`, rows named by\n\
`ROWn`), FITS binary table with one row per pixel (`table`) or one row of vector columns with\n\
inverse variance (`table-vector`), CSV, TSV, and whitespace text without a header row (`text`).\n\
Images use the set-up's own medium (CTYPE1 `WAVE`/`AWAV`, `-LOG` for log grids); tables\n\
(`AIRORVAC`) and text (`# medium:`) are in air or vacuum as listed. Flux is in units of\n\
1e-17 erg/s/cm2/A.\n\
\n\
| # | target | set-up | layout | medium | exposure (s) |\n\
|---|---|---|---|---|---|\n\
{table}\n\
- `queue.csv`: the review queue, columns `path,target,priority,note` (paths relative to this\n\
  folder; priority 1 = look first, 3 = last).\n\
- `truth.csv`: what the generator put in (kind, class, subclass, redshift, velocity, S/N), to\n\
  check the identifier against after a review. Stars carry their radial velocity as z.\n",
        geo[0], geo[1], geo[2]
    )
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn geocentric_position_of_the_equator_and_pole() {
        // WGS84: a point at (0, 0, 0) is at X = a; the pole at Z = b = a (1 - f)
        // = 6356752.314 m (NIMA TR8350.2, from memory).
        let e = geodetic_to_geocentric(0.0, 0.0, 0.0);
        assert!((e[0] - 6_378_137.0).abs() < 1e-6 && e[1].abs() < 1e-6 && e[2].abs() < 1e-6);
        let p = geodetic_to_geocentric(90.0, 0.0, 0.0);
        assert!((p[2] - 6_356_752.314).abs() < 1e-3, "{}", p[2]);
    }

    #[test]
    fn coordinate_names_and_times_are_formatted_as_the_trade_writes_them() {
        assert_eq!(coordinate_name(150.0, -2.5), "CVO 1000-0230");
        assert_eq!(iso_time(130.0), "2026-03-14T02:10:00");
        assert_eq!(iso_time(1440.0 + 61.5), "2026-03-15T01:01:30");
    }

    #[test]
    fn the_plan_covers_every_kind_and_every_layout_in_air_and_vacuum() {
        let plans = plans();
        assert_eq!(plans.len(), 36);
        for k in Kind::ALL {
            assert!(plans.iter().any(|p| p.kind == k), "{k:?}");
        }
        for f in Format::ALL {
            assert!(plans.iter().any(|p| p.format == f), "{f:?}");
        }
        let setups = setups();
        for m in [Medium::Air, Medium::Vacuum] {
            let used = |p: &Plan| {
                if p.format.is_image() {
                    setups[p.setup].medium
                } else {
                    p.medium
                }
            };
            assert!(plans.iter().any(|p| used(p) == m));
        }
    }
}
