//! Barycentric radial-velocity correction: what to add to a velocity measured
//! at a telescope to refer it to the solar-system barycentre.
//!
//! Main entry points:
//! - [`correction_kms`]: the correction in km/s from a spectrum's
//!   [`Metadata`] plus anything the user supplied in [`BaryOverrides`];
//!   [`compute`] returns the same with the details ([`Correction`]).
//! - [`apply`]: turn an observed redshift into a barycentric one.
//! - [`correction_at`]: the pure computation from an [`Epochs`], a site
//!   position and a sky direction (no header reading).
//! - [`find_site`]: look up a named site in the user's configured list.
//!
//! # Definition
//! Following Wright & Eastman (2014, PASP 126, 838, eq. 28) without the
//! Shapiro delay and the target's own motion, the correction is
//! `v_corr = c (z_B − 1)` with
//!
//! ```text
//! z_B = γ (1 + β·n̂) / (1 + Φ/c²),   β = (v_⊕ + v_site)/c,   γ = 1/√(1 − β²)
//! ```
//!
//! where `v_⊕` is the Earth's barycentric velocity, `v_site` the site's
//! velocity about the geocentre (both in the ICRS/BCRS axes), `n̂` the unit
//! vector towards the target and `Φ` the (negative) Newtonian potential at the
//! observer from the Sun, the Earth, Jupiter and the Moon. This is the
//! quantity astropy returns from
//! `SkyCoord.radial_velocity_correction(kind="barycentric")`; zsift agrees with
//! it to better than 1 m/s (see the tests and the contributor guide).
//!
//! A positive correction means the observer was moving towards the target, so
//! the measured velocity is too small: the barycentric redshift follows from
//! the observed one exactly by composing Doppler factors,
//! `1 + z_bary = (1 + z_obs)(1 + v_corr/c)` ([`apply`]); for a velocity this
//! is `v_bary ≈ v_obs + v_corr + v_obs v_corr / c`.
//!
//! # Ingredients
//! - Earth: ERFA `epv00` (Bretagnon's simplified VSOP2000 solution fitted to
//!   JPL DE405; barycentric velocity error 1.4 mm/s rms over 1900-2100) from
//!   the `erfa` crate; it is in BCRS (ICRS-aligned) axes, so no ecliptic or
//!   obliquity rotation is needed.
//! - Site: ITRS position from OBSGEO-X/Y/Z or from WGS84 geodetic coordinates
//!   (ERFA `gd2gce`); rotated to GCRS with Greenwich apparent sidereal time
//!   and the IAU 2006/2000A bias-precession-nutation matrix (ERFA `gst06a`,
//!   `pnm06a`) using UT1 ≈ UTC and no polar motion (both below 0.05 m/s);
//!   velocity = ω ẑ_CIP × r with ω = 7.292115855306589e-5 rad/s (the
//!   conventional rotation rate used by astropy).
//! - Target: RA/Dec taken as ICRS when the equinox is absent or 2000; other
//!   equinoxes are precessed to J2000 with the IAU 2006 precession (Besselian
//!   epochs for equinoxes before 1984, Julian after, the FITS convention). FK4
//!   E-terms are ignored (< 0.1 m/s).

use crate::physics::constants::C_M_S;
use crate::physics::time::{self, Epochs, Instant, TimeError, TimeScale};
use crate::spectrum::{Metadata, Site};
use std::fmt;

/// Astronomical unit in metres (IAU 2012 Resolution B2, exact).
pub const AU_M: f64 = 149_597_870_700.0;
/// Earth rotation rate in rad/s used for the site velocity (IERS Conventions
/// 2010, Sect. 1.2: 7.292115e-5 nominal; this value, 2π·1.002737909350795 per
/// day, is the one astropy uses).
pub const OMEGA_EARTH: f64 = 7.292_115_855_306_589e-5;
/// Heliocentric gravitational constant, m³/s² (IAU 2015 Resolution B3 nominal).
pub const GM_SUN: f64 = 1.327_124_4e20;
/// Geocentric gravitational constant, m³/s² (IAU 2015 Resolution B3 nominal).
pub const GM_EARTH: f64 = 3.986_004e14;
/// Jovian gravitational constant, m³/s² (IAU 2015 Resolution B3 nominal).
pub const GM_JUPITER: f64 = 1.266_865_3e17;
/// Lunar gravitational constant, m³/s²: G (CODATA 2018, 6.674 30e-11) times
/// the Moon's mass 7.347 673 09e22 kg (the mass astropy uses).
pub const GM_MOON: f64 = 6.674_30e-11 * 7.347_673_09e22;
/// Mean Earth-Jupiter distance used in the potential, m (5.2 au; common
/// practice, no source: its ±1 au swing changes the correction by < 0.2 mm/s).
pub const JUPITER_MEAN_DISTANCE_M: f64 = 5.2 * AU_M;
/// Mean Earth-Moon distance used in the potential, m (384 400 km; common
/// practice, no source: the Moon's whole term is 0.04 mm/s).
pub const MOON_MEAN_DISTANCE_M: f64 = 3.844e8;

/// One thing the correction needs that neither the file nor the user gave.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum Missing {
    /// No observation date at all (DATE-OBS, MJD-OBS, DATE-AVG, MJD-AVG).
    Time,
    /// A date without a time of day (DATE-OBS `YYYY-MM-DD` and no TIME-OBS/UT).
    TimeOfDay,
    /// No target right ascension / declination.
    Coordinates,
    /// No observatory position (OBSGEO-X/Y/Z, geodetic lon/lat, or site name).
    Site,
    /// Only a site name (OBSERVAT/TELESCOP or the user's), and no configured
    /// site has that name.
    UnconfiguredSite(String),
}

impl fmt::Display for Missing {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(match self {
            Missing::Time => "observation time (DATE-OBS or MJD-OBS)",
            Missing::TimeOfDay => {
                "time of day (DATE-OBS gives only a date and there is no TIME-OBS or UT)"
            }
            Missing::Coordinates => "target coordinates (RA and DEC)",
            Missing::Site => {
                "observatory site (OBSGEO-X/Y/Z, geodetic longitude/latitude, or a configured site name)"
            }
            Missing::UnconfiguredSite(name) => {
                return write!(
                    f,
                    "observatory site ('{name}' is named but is not among the configured sites)"
                );
            }
        })
    }
}

/// Why the correction could not be computed.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum BaryError {
    /// Inputs are missing; every missing one is listed.
    #[error("barycentric correction not computed: missing {}", list(.0))]
    Missing(Vec<Missing>),
    /// A value is present but unusable; `keyword` names it (a header keyword
    /// or the user option it came from).
    #[error("barycentric correction not computed: {keyword}: {message}")]
    Invalid {
        /// The keyword or option, e.g. `DATE-OBS`, `OBSGEO-X/Y/Z`, `--site`.
        keyword: String,
        /// What is wrong with it.
        message: String,
    },
}

impl BaryError {
    /// The missing inputs (empty for the other variants).
    pub fn missing(&self) -> &[Missing] {
        match self {
            BaryError::Missing(m) => m,
            _ => &[],
        }
    }
}

fn list(m: &[Missing]) -> String {
    m.iter()
        .map(|x| x.to_string())
        .collect::<Vec<_>>()
        .join("; ")
}

fn invalid(keyword: &str, message: impl Into<String>) -> BaryError {
    BaryError::Invalid {
        keyword: keyword.to_string(),
        message: message.into(),
    }
}

/// A site the user named in their configuration.
#[derive(Debug, Clone, PartialEq)]
pub struct NamedSite {
    /// The name as configured (matched case-insensitively, blanks trimmed).
    pub name: String,
    /// Geodetic east longitude, degrees.
    pub longitude_deg: f64,
    /// Geodetic latitude, degrees.
    pub latitude_deg: f64,
    /// Height above the WGS84 ellipsoid, metres.
    pub height_m: f64,
}

impl From<(String, f64, f64, f64)> for NamedSite {
    fn from((name, longitude_deg, latitude_deg, height_m): (String, f64, f64, f64)) -> Self {
        NamedSite {
            name,
            longitude_deg,
            latitude_deg,
            height_m,
        }
    }
}

impl NamedSite {
    /// A named site from geodetic east longitude, latitude (degrees) and
    /// height above WGS84 (metres); errors say what is not a place on Earth.
    pub fn geodetic(
        name: &str,
        longitude_deg: f64,
        latitude_deg: f64,
        height_m: f64,
    ) -> Result<NamedSite, String> {
        let site = Site {
            longitude_deg: Some(longitude_deg),
            latitude_deg: Some(latitude_deg),
            height_m: Some(height_m),
            ..Site::default()
        };
        check_site(&site)?;
        Ok(NamedSite {
            name: name.trim().to_string(),
            longitude_deg,
            latitude_deg,
            height_m,
        })
    }

    /// A named site from geocentric ITRS X, Y, Z (metres), kept as its WGS84
    /// geodetic equivalent (ERFA `gc2gd`, Fukushima 2006: the round trip back
    /// to X, Y, Z is exact to well below a micrometre).
    pub fn geocentric(name: &str, xyz_m: [f64; 3]) -> Result<NamedSite, String> {
        check_site(&Site {
            geocentric_m: Some(xyz_m),
            ..Site::default()
        })?;
        let [lon, lat, h] = erfa::transform::geocentric_to_geodetic(erfa::Ellipsoid::WGS84, xyz_m);
        Ok(NamedSite {
            name: name.trim().to_string(),
            longitude_deg: lon.to_degrees(),
            latitude_deg: lat.to_degrees(),
            height_m: h,
        })
    }
}

fn check_site(site: &Site) -> Result<(), String> {
    site_itrs(site, "site").map(|_| ()).map_err(|e| match e {
        BaryError::Invalid { message, .. } => message,
        other => other.to_string(),
    })
}

/// Look a site name up in the configured list (case-insensitive, blanks
/// trimmed); the first match wins. Returns it as a [`Site`] with its
/// geodetic coordinates and name filled.
pub fn find_site(sites: &[NamedSite], name: &str) -> Option<Site> {
    let want = name.trim();
    sites
        .iter()
        .find(|s| s.name.trim().eq_ignore_ascii_case(want))
        .map(|s| Site {
            geocentric_m: None,
            longitude_deg: Some(s.longitude_deg),
            latitude_deg: Some(s.latitude_deg),
            height_m: Some(s.height_m),
            name: Some(s.name.trim().to_string()),
        })
}

/// Whether a supplied time is the start or the middle of the exposure.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum TimeRef {
    /// Start of the exposure: half the exposure time is added when known.
    #[default]
    Start,
    /// Middle of the exposure: used as is.
    Mid,
}

/// What the user supplies to fill in (or replace) the file's metadata, from
/// queue-file columns, command-line options or the configuration. Whether a
/// supplied value wins over the file's is [`BaryOverrides::replace`]; the
/// exposure time follows the same rule.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct BaryOverrides {
    /// Observation time, and whether it is the start or the middle.
    pub time: Option<(Instant, TimeRef)>,
    /// Exposure time in seconds (replaces EXPTIME).
    pub exposure_s: Option<f64>,
    /// Right ascension, degrees.
    pub ra_deg: Option<f64>,
    /// Declination, degrees.
    pub dec_deg: Option<f64>,
    /// Equinox of the supplied coordinates in years (None: ICRS/J2000).
    pub equinox: Option<f64>,
    /// Observatory: geocentric, geodetic, or a name to look up in `sites`.
    pub site: Option<Site>,
    /// The user's configured named sites.
    pub sites: Vec<NamedSite>,
    /// When true, the supplied time / coordinates / site replace the file's;
    /// when false (the default) they are used only where the file has no
    /// usable value of its own.
    pub replace: bool,
}

/// The correction and how it was obtained.
#[derive(Debug, Clone, PartialEq)]
pub struct Correction {
    /// The barycentric correction, km/s (add to an observed velocity; see
    /// [`apply`] for redshifts).
    pub kms: f64,
    /// The moment used (mid-exposure when it could be found), UTC.
    pub mid_utc: Instant,
    /// The parts of the correction.
    pub parts: Breakdown,
    /// Approximations made on the way (human-readable; empty when none).
    pub notes: Vec<String>,
}

/// The correction split into its parts (all km/s along the line of sight).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Breakdown {
    /// Total correction, `c (z_B − 1)`.
    pub total_kms: f64,
    /// Earth's orbital (barycentric) velocity projected on the target.
    pub orbital_kms: f64,
    /// Site rotational velocity projected on the target.
    pub rotation_kms: f64,
}

/// The barycentric correction in km/s for a spectrum's metadata, with the
/// user's overrides. See the module docs for the definition.
pub fn correction_kms(meta: &Metadata, ov: &BaryOverrides) -> Result<f64, BaryError> {
    compute(meta, ov).map(|c| c.kms)
}

/// Barycentric redshift from an observed one: `(1 + z_obs)(1 + v_corr/c) − 1`.
pub fn apply(z_obs: f64, corr_kms: f64) -> f64 {
    (1.0 + z_obs) * (1.0 + corr_kms * 1000.0 / C_M_S) - 1.0
}

/// Barycentric redshift and velocity (km/s, relativistic, as
/// [`crate::physics::doppler::velocity_from_z`]) for an observed redshift,
/// or `None` for both when the correction is unknown. This is what every
/// output (scan, decision log, export, review screen) reports beside the
/// observed values.
pub fn corrected(z_obs: f64, corr_kms: Option<f64>) -> (Option<f64>, Option<f64>) {
    match corr_kms {
        Some(c) if c.is_finite() && z_obs.is_finite() => {
            let zb = apply(z_obs, c);
            (Some(zb), Some(crate::physics::doppler::velocity_from_z(zb)))
        }
        _ => (None, None),
    }
}

/// The correction with its details; every missing input is reported at once.
pub fn compute(meta: &Metadata, ov: &BaryOverrides) -> Result<Correction, BaryError> {
    compute_layered(meta, &[ov])
}

/// [`compute`] with several layers of user-supplied values, most specific
/// first (e.g. a queue-file row, then command-line options). For each input
/// (time, coordinates, site, exposure): the first layer that has it and says
/// `replace` wins; else the file's own value; else the first layer that has
/// it. Named sites of all layers are searched.
pub fn compute_layered(
    meta: &Metadata,
    layers: &[&BaryOverrides],
) -> Result<Correction, BaryError> {
    let mut notes = Vec::new();
    let mut missing = Vec::new();
    let time = match observation_time(meta, layers, &mut notes) {
        Ok(t) => Some(t),
        Err(BaryError::Missing(m)) => {
            missing.extend(m);
            None
        }
        Err(e) => return Err(e),
    };
    let dir = match target_direction(meta, layers, &mut notes) {
        Ok(d) => Some(d),
        Err(BaryError::Missing(m)) => {
            missing.extend(m);
            None
        }
        Err(e) => return Err(e),
    };
    let site = match site_position(meta, layers, &mut notes) {
        Ok(s) => Some(s),
        Err(BaryError::Missing(m)) => {
            missing.extend(m);
            None
        }
        Err(e) => return Err(e),
    };
    let (Some(at), Some(n), Some(r)) = (time, dir, site) else {
        return Err(BaryError::Missing(missing));
    };
    let epochs = Epochs::of(at);
    if !epochs.leap_table_exact {
        notes.push(
            "observation before 1972: TAI-UTC taken as 10 s (UTC of that era not modelled)".into(),
        );
    }
    let parts = correction_at(&epochs, r, n);
    Ok(Correction {
        kms: parts.total_kms,
        mid_utc: at.to_scale(TimeScale::Utc),
        parts,
        notes,
    })
}

/// The correction for one moment, site (ITRS metres) and ICRS unit vector.
pub fn correction_at(epochs: &Epochs, site_itrs_m: [f64; 3], n: [f64; 3]) -> Breakdown {
    let (tdb1, tdb2) = epochs.tdb;
    let (tt1, tt2) = epochs.tt;
    let (ut1, ut2) = epochs.ut1;
    let (_, pvh, pvb) = erfa::earth::position_velocity_00(tdb1, tdb2);
    let per_day = AU_M / time::DAY_S;
    let v_earth = [
        pvb[1][0] * per_day,
        pvb[1][1] * per_day,
        pvb[1][2] * per_day,
    ];

    // Site: ITRS -> true equator and equinox of date (GAST) -> GCRS.
    let rbpn = erfa::prenut::pn_matrix_06a(tt1, tt2);
    let gast = erfa::time::gst06(ut1, ut2, tt1, tt2, rbpn);
    let (s, c) = gast.sin_cos();
    let [x, y, z] = site_itrs_m;
    let r_tod = [c * x - s * y, s * x + c * y, z];
    let r_gcrs = mul_transpose(&rbpn, r_tod);
    // The CIP in GCRS is the bottom row of the GCRS -> true-of-date matrix.
    let pole = rbpn[2];
    let w = [
        pole[0] * OMEGA_EARTH,
        pole[1] * OMEGA_EARTH,
        pole[2] * OMEGA_EARTH,
    ];
    let v_site = cross(w, r_gcrs);

    let beta = [
        (v_earth[0] + v_site[0]) / C_M_S,
        (v_earth[1] + v_site[1]) / C_M_S,
        (v_earth[2] + v_site[2]) / C_M_S,
    ];
    let gamma = 1.0 / (1.0 - dot(beta, beta)).sqrt();

    // Potential at the observer (astropy's gravitational_redshift): Sun, Jupiter
    // and Moon at their distance from the geocentre, the Earth at the site's.
    let sun_dist = norm(pvh[0]) * AU_M;
    let phi_over_c = -(GM_EARTH / norm(site_itrs_m)
        + GM_MOON / MOON_MEAN_DISTANCE_M
        + GM_JUPITER / JUPITER_MEAN_DISTANCE_M
        + GM_SUN / sun_dist)
        / C_M_S;
    let zb = gamma * (1.0 + dot(beta, n)) / (1.0 + phi_over_c / C_M_S);
    Breakdown {
        total_kms: C_M_S * (zb - 1.0) / 1000.0,
        orbital_kms: dot(v_earth, n) / 1000.0,
        rotation_kms: dot(v_site, n) / 1000.0,
    }
}

/// ICRS unit vector from RA/Dec (degrees) given at `equinox` (years; None or
/// 2000 = ICRS/J2000). Equinoxes before 1984 are Besselian, later Julian.
pub fn icrs_direction(ra_deg: f64, dec_deg: f64, equinox: Option<f64>) -> [f64; 3] {
    let (sa, ca) = ra_deg.to_radians().sin_cos();
    let (sd, cd) = dec_deg.to_radians().sin_cos();
    let v = [cd * ca, cd * sa, sd];
    match equinox {
        Some(e) if (e - 2000.0).abs() > 1e-9 => {
            let (jd1, jd2) = if e < 1984.0 {
                // Besselian epoch (ERFA epb2jd).
                (
                    time::MJD_ZERO_JD,
                    15_019.813_52 + (e - 1900.0) * 365.242_198_781,
                )
            } else {
                (2_451_545.0, (e - 2000.0) * 365.25)
            };
            // V(mean of date) = P V(GCRS), so V(GCRS) = Pᵀ V(mean).
            let p = erfa::prenut::precession_matrix_06(jd1, jd2);
            mul_transpose(&p, v)
        }
        _ => v,
    }
}

fn dot(a: [f64; 3], b: [f64; 3]) -> f64 {
    a[0] * b[0] + a[1] * b[1] + a[2] * b[2]
}

fn norm(a: [f64; 3]) -> f64 {
    dot(a, a).sqrt()
}

fn cross(a: [f64; 3], b: [f64; 3]) -> [f64; 3] {
    [
        a[1] * b[2] - a[2] * b[1],
        a[2] * b[0] - a[0] * b[2],
        a[0] * b[1] - a[1] * b[0],
    ]
}

fn mul_transpose(m: &[[f64; 3]; 3], v: [f64; 3]) -> [f64; 3] {
    [
        m[0][0] * v[0] + m[1][0] * v[1] + m[2][0] * v[2],
        m[0][1] * v[0] + m[1][1] * v[1] + m[2][1] * v[2],
        m[0][2] * v[0] + m[1][2] * v[1] + m[2][2] * v[2],
    ]
}

/// A header value by keyword (case-insensitive), quotes and blanks removed.
fn header<'a>(meta: &'a Metadata, key: &str) -> Option<&'a str> {
    meta.header
        .iter()
        .find(|(k, _)| k.trim().eq_ignore_ascii_case(key))
        .map(|(_, v)| v.trim().trim_matches('\'').trim())
        .filter(|v| !v.is_empty())
}

fn time_err(keyword: &str, e: TimeError) -> BaryError {
    invalid(keyword, e.to_string())
}

fn parse_mjd(keyword: &str, text: &str, scale: TimeScale) -> Result<Instant, BaryError> {
    let v: f64 = text
        .parse()
        .map_err(|_| invalid(keyword, format!("'{text}' is not a number")))?;
    Instant::from_mjd(v, scale).map_err(|e| time_err(keyword, e))
}

/// The moment of mid-exposure (see the contributor guide for the rule):
/// 1. a user-supplied time (start or mid as the user says);
/// 2. DATE-AVG / MJD-AVG (mid-exposure by definition);
/// 3. DATE-OBS with a time of day, else MJD-OBS, else DATE-BEG / MJD-BEG, else
///    a date-only DATE-OBS combined with TIME-OBS / UT / UTSTART: all taken as
///    the start, plus half of EXPTIME; when EXPTIME is absent but DATE-END /
///    MJD-END is present, the midpoint of start and end; otherwise the start
///    itself, with a note.
fn observation_time(
    meta: &Metadata,
    layers: &[&BaryOverrides],
    notes: &mut Vec<String>,
) -> Result<Instant, BaryError> {
    let forced = layers.iter().find(|l| l.replace && l.exposure_s.is_some());
    let filling = layers.iter().find(|l| l.exposure_s.is_some());
    let exposure = forced
        .and_then(|l| l.exposure_s)
        .or(meta.exposure_s)
        .or(filling.and_then(|l| l.exposure_s));
    let exposure = match exposure {
        Some(e) if !e.is_finite() || e < 0.0 => {
            return Err(invalid(
                "EXPTIME",
                format!("{e} is not a usable exposure time"),
            ));
        }
        e => e,
    };
    let user = layers
        .iter()
        .map(|l| {
            let mut n = Vec::new();
            let v = l.time.map(|(at, r)| match (r, exposure) {
                (TimeRef::Mid, _) => at,
                (TimeRef::Start, Some(e)) => at.to_scale(TimeScale::Tai).plus_seconds(e / 2.0),
                (TimeRef::Start, None) => {
                    n.push("no exposure time: the supplied start time was used".into());
                    at
                }
            });
            (l.replace, v, n)
        })
        .collect();
    pick(user, notes, |n| file_time(meta, exposure, n))
}

/// Choose between user-supplied values (one per layer: replace flag, value,
/// notes) and the file's (see [`compute_layered`]); notes of the values not
/// chosen are dropped.
fn pick<T>(
    user: Vec<(bool, Option<T>, Vec<String>)>,
    notes: &mut Vec<String>,
    file: impl FnOnce(&mut Vec<String>) -> Result<T, BaryError>,
) -> Result<T, BaryError> {
    let mut fill = None;
    for (replace, v, n) in user {
        let Some(v) = v else { continue };
        if replace {
            notes.extend(n);
            return Ok(v);
        }
        if fill.is_none() {
            fill = Some((v, n));
        }
    }
    let mut file_notes = Vec::new();
    match (file(&mut file_notes), fill) {
        (Ok(f), _) => {
            notes.extend(file_notes);
            Ok(f)
        }
        (Err(_), Some((v, n))) => {
            notes.extend(n);
            Ok(v)
        }
        (Err(e), None) => {
            notes.extend(file_notes);
            Err(e)
        }
    }
}

/// The file's own mid-exposure time (see [`observation_time`]'s rules).
fn file_time(
    meta: &Metadata,
    exposure: Option<f64>,
    notes: &mut Vec<String>,
) -> Result<Instant, BaryError> {
    let scale = match &meta.time_scale {
        Some(s) if !s.trim().is_empty() => {
            TimeScale::parse(s).map_err(|e| time_err("TIMESYS", e))?
        }
        _ => TimeScale::Utc,
    };
    if let Some(v) = header(meta, "DATE-AVG") {
        let c = time::parse_date(v).map_err(|e| time_err("DATE-AVG", e))?;
        if c.has_time {
            return Ok(Instant::from_civil(c, scale));
        }
    }
    if let Some(v) = header(meta, "MJD-AVG") {
        return parse_mjd("MJD-AVG", v, scale);
    }
    // Start of exposure.
    let mut start: Option<Instant> = None;
    let mut date_only = false;
    if let Some(d) = meta.date_obs.as_deref().filter(|d| !d.trim().is_empty()) {
        let c = time::parse_date(d).map_err(|e| time_err("DATE-OBS", e))?;
        if c.has_time {
            start = Some(Instant::from_civil(c, scale));
        } else {
            date_only = true;
        }
    }
    if let (Some(a), Some(m)) = (start, meta.mjd_obs)
        && let Ok(b) = Instant::from_mjd(m, scale)
    {
        let ds = (b.mjd_day - a.mjd_day) as f64 * time::DAY_S + (b.seconds - a.seconds);
        if ds.abs() > 1.0 {
            notes.push(format!(
                "DATE-OBS and MJD-OBS differ by {ds:.0} s; DATE-OBS was used"
            ));
        }
    }
    if start.is_none()
        && let Some(m) = meta.mjd_obs
    {
        start = Some(Instant::from_mjd(m, scale).map_err(|e| time_err("MJD-OBS", e))?);
    }
    if start.is_none()
        && let Some(v) = header(meta, "DATE-BEG")
    {
        let c = time::parse_date(v).map_err(|e| time_err("DATE-BEG", e))?;
        if c.has_time {
            start = Some(Instant::from_civil(c, scale));
        }
    }
    if start.is_none()
        && let Some(v) = header(meta, "MJD-BEG")
    {
        start = Some(parse_mjd("MJD-BEG", v, scale)?);
    }
    if start.is_none() && date_only {
        let d = meta.date_obs.as_deref().unwrap_or_default();
        let c = time::parse_date(d).map_err(|e| time_err("DATE-OBS", e))?;
        for key in ["TIME-OBS", "UT", "UTSTART", "UT-START"] {
            let Some(v) = header(meta, key) else { continue };
            match time::parse_time_of_day(v, v) {
                Ok(secs) => {
                    start = Some(Instant {
                        mjd_day: c.mjd_day,
                        seconds: secs,
                        scale,
                    });
                    break;
                }
                Err(_) => notes.push(format!("{key} = {v} is not hh:mm:ss; not used")),
            }
        }
        if start.is_none() {
            return Err(BaryError::Missing(vec![Missing::TimeOfDay]));
        }
    }
    let Some(start) = start else {
        return Err(BaryError::Missing(vec![Missing::Time]));
    };
    if let Some(e) = exposure {
        return Ok(start.to_scale(TimeScale::Tai).plus_seconds(e / 2.0));
    }
    let end = if let Some(v) = header(meta, "DATE-END") {
        let c = time::parse_date(v).map_err(|e| time_err("DATE-END", e))?;
        c.has_time.then(|| Instant::from_civil(c, scale))
    } else if let Some(v) = header(meta, "MJD-END") {
        Some(parse_mjd("MJD-END", v, scale)?)
    } else {
        None
    };
    if let Some(end) = end {
        let a = start.to_scale(TimeScale::Tai);
        let b = end.to_scale(TimeScale::Tai);
        let span = (b.mjd_day - a.mjd_day) as f64 * time::DAY_S + (b.seconds - a.seconds);
        if span < 0.0 {
            return Err(invalid("DATE-END", "the exposure ends before it starts"));
        }
        return Ok(a.plus_seconds(span / 2.0));
    }
    notes.push(
        "no exposure time (EXPTIME): the start of the exposure was used instead of its middle"
            .into(),
    );
    Ok(start)
}

fn target_direction(
    meta: &Metadata,
    layers: &[&BaryOverrides],
    notes: &mut Vec<String>,
) -> Result<[f64; 3], BaryError> {
    let mut user = Vec::new();
    for l in layers {
        let v = match (l.ra_deg, l.dec_deg) {
            (Some(ra), Some(dec)) => Some(direction(ra, dec, l.equinox, &mut Vec::new())?),
            _ => None,
        };
        user.push((l.replace, v, Vec::new()));
    }
    pick(user, notes, |n| match (meta.ra_deg, meta.dec_deg) {
        (Some(ra), Some(dec)) => direction(ra, dec, meta.equinox, n),
        _ => Err(BaryError::Missing(vec![Missing::Coordinates])),
    })
}

fn direction(
    ra: f64,
    dec: f64,
    equinox: Option<f64>,
    notes: &mut Vec<String>,
) -> Result<[f64; 3], BaryError> {
    if !ra.is_finite() || !(-360.0..=720.0).contains(&ra) {
        return Err(invalid(
            "RA",
            format!("{ra} is not a right ascension in degrees"),
        ));
    }
    if !dec.is_finite() || !(-90.0..=90.0).contains(&dec) {
        return Err(invalid("DEC", format!("{dec} is outside -90..90 degrees")));
    }
    if let Some(e) = equinox
        && (!e.is_finite() || !(1800.0..=2200.0).contains(&e))
    {
        return Err(invalid(
            "EQUINOX",
            format!("{e} is not a plausible equinox"),
        ));
    }
    if equinox.is_some_and(|e| e < 1984.0) {
        notes.push("coordinates precessed from a Besselian equinox (FK4 E-terms ignored)".into());
    }
    Ok(icrs_direction(ra, dec, equinox))
}

/// Geocentric ITRS position (metres) of a site, if it says enough.
pub fn site_itrs(site: &Site, keyword: &str) -> Result<Option<[f64; 3]>, BaryError> {
    if let Some(xyz) = site.geocentric_m {
        let r = norm(xyz);
        if !xyz.iter().all(|v| v.is_finite()) || !(6.2e6..=6.5e6).contains(&r) {
            return Err(invalid(
                keyword,
                format!(
                    "geocentric position {:.0} m from the Earth's centre is not on the Earth's surface (expected metres)",
                    r
                ),
            ));
        }
        return Ok(Some(xyz));
    }
    if let (Some(lon), Some(lat)) = (site.longitude_deg, site.latitude_deg) {
        let h = site.height_m.unwrap_or(0.0);
        if !lon.is_finite() || !lat.is_finite() || !(-90.0..=90.0).contains(&lat) {
            return Err(invalid(
                keyword,
                format!("longitude {lon}, latitude {lat} is not a place on Earth"),
            ));
        }
        if !h.is_finite() || !(-1000.0..=10_000.0).contains(&h) {
            return Err(invalid(
                keyword,
                format!("height {h} m is not a ground site"),
            ));
        }
        let xyz = erfa::transform::geodetic_to_geocentric(
            erfa::Ellipsoid::WGS84,
            lon.to_radians(),
            lat.to_radians(),
            h,
        )
        .map_err(|e| invalid(keyword, e.to_string()))?;
        return Ok(Some(xyz));
    }
    Ok(None)
}

fn site_position(
    meta: &Metadata,
    layers: &[&BaryOverrides],
    notes: &mut Vec<String>,
) -> Result<[f64; 3], BaryError> {
    let sites: Vec<NamedSite> = layers
        .iter()
        .flat_map(|l| l.sites.iter().cloned())
        .collect();
    let mut user = Vec::new();
    for l in layers {
        let mut n = Vec::new();
        let v = match &l.site {
            Some(site) => Some(resolve_site(site, "site option", &sites, &mut n)?),
            None => None,
        };
        user.push((l.replace, v, n));
    }
    pick(user, notes, |n| {
        let first = resolve_site(
            &meta.site,
            "OBSGEO-X/Y/Z or site longitude/latitude",
            &sites,
            n,
        );
        // A file that names its observatory in OBSERVAT and its telescope in
        // TELESCOP: the reader keeps the first as the site name; either may
        // be the one the user configured.
        if let Err(BaryError::Missing(m)) = &first
            && matches!(m.as_slice(), [Missing::UnconfiguredSite(_)])
        {
            for key in ["OBSERVAT", "TELESCOP"] {
                if let Some(found) = header(meta, key).and_then(|v| find_site(&sites, v))
                    && let Some(xyz) = site_itrs(&found, "configured site")?
                {
                    return Ok(xyz);
                }
            }
        }
        first
    })
}

fn resolve_site(
    site: &Site,
    keyword: &str,
    sites: &[NamedSite],
    notes: &mut Vec<String>,
) -> Result<[f64; 3], BaryError> {
    if let Some(xyz) = site_itrs(site, keyword)? {
        if site.geocentric_m.is_none() && site.height_m.is_none() {
            notes.push("site height unknown: 0 m above the ellipsoid assumed".into());
        }
        return Ok(xyz);
    }
    match site
        .name
        .as_deref()
        .map(str::trim)
        .filter(|n| !n.is_empty())
    {
        Some(name) => match find_site(sites, name) {
            Some(found) => site_itrs(&found, "configured site")?
                .ok_or_else(|| invalid("configured site", "no coordinates")),
            None => Err(BaryError::Missing(vec![Missing::UnconfiguredSite(
                name.to_string(),
            )])),
        },
        None => Err(BaryError::Missing(vec![Missing::Site])),
    }
}

/// Column names a queue file (or any table of targets) may use to supply what
/// the correction needs, in the order they are documented.
pub const COLUMNS: [&str; 14] = [
    "ra",
    "dec",
    "equinox",
    "obs_time",
    "timesys",
    "time_ref",
    "exptime",
    "site",
    "site_lon",
    "site_lat",
    "site_height",
    "obsgeo_x",
    "obsgeo_y",
    "obsgeo_z",
];

/// Overrides from one row of a table: `get(column)` returns the cell (None or
/// empty when absent). Columns ([`COLUMNS`]): `ra`, `dec` (degrees, or
/// `hh:mm:ss` / `dd:mm:ss`), `equinox` (years), `obs_time` (ISO 8601 or
/// `MJD…`), `timesys` (default UTC), `time_ref` (`start`, the default, or
/// `mid`), `exptime` (s), `site` (a configured name), `site_lon`, `site_lat`,
/// `site_height` (degrees, metres), `obsgeo_x/y/z` (metres). A row's values
/// are specific to its target, so they replace the file's
/// ([`BaryOverrides::replace`] is true). Errors name the column.
pub fn overrides_from_columns<'a>(
    get: impl Fn(&str) -> Option<&'a str>,
) -> Result<BaryOverrides, BaryError> {
    let cell = |k: &str| get(k).map(str::trim).filter(|v| !v.is_empty());
    let num = |k: &str| -> Result<Option<f64>, BaryError> {
        cell(k)
            .map(|v| {
                v.parse::<f64>()
                    .ok()
                    .filter(|x| x.is_finite())
                    .ok_or_else(|| invalid(k, format!("'{v}' is not a number")))
            })
            .transpose()
    };
    let mut ov = BaryOverrides {
        replace: true,
        ..BaryOverrides::default()
    };
    match (cell("ra"), cell("dec")) {
        (Some(ra), Some(dec)) => {
            let (r, d) = parse_radec(&format!("{ra},{dec}")).map_err(|m| invalid("ra/dec", m))?;
            ov.ra_deg = Some(r);
            ov.dec_deg = Some(d);
            ov.equinox = num("equinox")?;
        }
        (None, None) => {}
        _ => return Err(invalid("ra/dec", "give both ra and dec, or neither")),
    }
    if let Some(t) = cell("obs_time") {
        let scale = match cell("timesys") {
            Some(s) => TimeScale::parse(s).map_err(|e| invalid("timesys", e.to_string()))?,
            None => TimeScale::Utc,
        };
        let at = parse_time(t, scale).map_err(|m| invalid("obs_time", m))?;
        let r = match cell("time_ref").map(str::to_ascii_lowercase).as_deref() {
            None | Some("start") => TimeRef::Start,
            Some("mid") | Some("middle") => TimeRef::Mid,
            Some(other) => {
                return Err(invalid(
                    "time_ref",
                    format!("'{other}' is not start or mid"),
                ));
            }
        };
        ov.time = Some((at, r));
    }
    if let Some(e) = num("exptime")? {
        if e < 0.0 {
            return Err(invalid("exptime", format!("{e} is negative")));
        }
        ov.exposure_s = Some(e);
    }
    let (x, y, z) = (num("obsgeo_x")?, num("obsgeo_y")?, num("obsgeo_z")?);
    let (lon, lat, h) = (num("site_lon")?, num("site_lat")?, num("site_height")?);
    ov.site = if let (Some(x), Some(y), Some(z)) = (x, y, z) {
        Some(parse_xyz(&format!("{x},{y},{z}")).map_err(|m| invalid("obsgeo_x/y/z", m))?)
    } else if let (Some(lon), Some(lat)) = (lon, lat) {
        let text = format!("{lon},{lat},{}", h.unwrap_or(0.0));
        Some(parse_lonlat(&text).map_err(|m| invalid("site_lon/site_lat", m))?)
    } else if x.is_some() || y.is_some() || z.is_some() {
        return Err(invalid(
            "obsgeo_x/y/z",
            "give all three of obsgeo_x, obsgeo_y, obsgeo_z",
        ));
    } else if lon.is_some() || lat.is_some() {
        return Err(invalid(
            "site_lon/site_lat",
            "give both site_lon and site_lat",
        ));
    } else {
        cell("site").map(|n| Site {
            name: Some(crate::text::clean(n)),
            ..Site::default()
        })
    };
    Ok(ov)
}

/// Parse a user-supplied site `LON,LAT[,HEIGHT]` (east longitude and
/// geodetic latitude in degrees, height in metres above WGS84, default 0).
pub fn parse_lonlat(text: &str) -> Result<Site, String> {
    let v = numbers(text, 2, 3)?;
    if !(-90.0..=90.0).contains(&v[1]) {
        return Err(format!("latitude {} is outside -90..90", v[1]));
    }
    Ok(Site {
        longitude_deg: Some(v[0]),
        latitude_deg: Some(v[1]),
        height_m: Some(v.get(2).copied().unwrap_or(0.0)),
        ..Site::default()
    })
}

/// Parse a user-supplied geocentric site `X,Y,Z` in metres (ITRS).
pub fn parse_xyz(text: &str) -> Result<Site, String> {
    let v = numbers(text, 3, 3)?;
    let site = Site {
        geocentric_m: Some([v[0], v[1], v[2]]),
        ..Site::default()
    };
    site_itrs(&site, "site").map_err(|e| match e {
        BaryError::Invalid { message, .. } => message,
        other => other.to_string(),
    })?;
    Ok(site)
}

/// Parse user-supplied coordinates `RA,DEC`: decimal degrees, or sexagesimal
/// `hh:mm:ss.s,±dd:mm:ss` (RA in hours when written with colons).
pub fn parse_radec(text: &str) -> Result<(f64, f64), String> {
    let parts: Vec<&str> = text.split(',').map(str::trim).collect();
    if parts.len() != 2 {
        return Err(format!("'{text}' is not RA,DEC"));
    }
    let ra = sexagesimal(parts[0])
        .map(|(v, colons)| if colons { v * 15.0 } else { v })
        .ok_or_else(|| format!("RA '{}' is not a number or hh:mm:ss", parts[0]))?;
    let dec = sexagesimal(parts[1])
        .map(|(v, _)| v)
        .ok_or_else(|| format!("DEC '{}' is not a number or dd:mm:ss", parts[1]))?;
    if !(0.0..360.0).contains(&ra) {
        return Err(format!("RA {ra} degrees is outside 0..360"));
    }
    if !(-90.0..=90.0).contains(&dec) {
        return Err(format!("DEC {dec} degrees is outside -90..90"));
    }
    Ok((ra, dec))
}

/// Parse a user-supplied observation time: an ISO 8601 date and time, or
/// `MJD` followed by a number (e.g. `MJD60512.25`); `scale` is the clock.
pub fn parse_time(text: &str, scale: TimeScale) -> Result<Instant, String> {
    let t = text.trim();
    if let Some(num) = t
        .strip_prefix("MJD")
        .or_else(|| t.strip_prefix("mjd"))
        .map(|s| s.trim_start_matches([':', '=', ' ']))
    {
        let v: f64 = num
            .parse()
            .map_err(|_| format!("'{num}' after MJD is not a number"))?;
        return Instant::from_mjd(v, scale).map_err(|e| e.to_string());
    }
    let c = time::parse_date(t).map_err(|e| e.to_string())?;
    if !c.has_time {
        return Err(format!("'{t}' has no time of day"));
    }
    Ok(Instant::from_civil(c, scale))
}

fn numbers(text: &str, min: usize, max: usize) -> Result<Vec<f64>, String> {
    let v: Vec<f64> = text
        .split(',')
        .map(|p| {
            p.trim()
                .parse::<f64>()
                .ok()
                .filter(|x| x.is_finite())
                .ok_or_else(|| format!("'{}' is not a number", p.trim()))
        })
        .collect::<Result<_, _>>()?;
    if v.len() < min || v.len() > max {
        return Err(format!(
            "'{text}' should have {min}{} comma-separated numbers",
            if max > min {
                format!(" to {max}")
            } else {
                String::new()
            }
        ));
    }
    Ok(v)
}

/// A decimal or colon-separated number, and whether colons were used.
fn sexagesimal(s: &str) -> Option<(f64, bool)> {
    let parts: Vec<&str> = s.split(':').collect();
    if parts.len() > 3 || parts.iter().any(|p| p.trim().is_empty()) {
        return None;
    }
    let negative = s.trim_start().starts_with('-');
    let mut total = 0.0;
    for (k, p) in parts.iter().enumerate() {
        let p = p.trim();
        let p = if k == 0 {
            p.trim_start_matches(['-', '+'])
        } else {
            p
        };
        let x: f64 = p
            .parse()
            .ok()
            .filter(|x: &f64| x.is_finite() && *x >= 0.0)?;
        if k > 0 && x >= 60.0 {
            return None;
        }
        total += x / 60f64.powi(k as i32);
    }
    Some((if negative { -total } else { total }, parts.len() > 1))
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::physics::time::parse_date;

    /// A site at the geographic north pole: no rotational velocity.
    const POLE_SITE: [f64; 3] = [0.0, 0.0, 6_356_752.3];

    fn yearly(n: [f64; 3]) -> (f64, f64) {
        let (mut lo, mut hi) = (f64::INFINITY, f64::NEG_INFINITY);
        for day in 0..366 {
            let at = Instant::from_mjd(60_310.0 + day as f64, TimeScale::Utc).unwrap();
            let v = correction_at(&Epochs::of(at), POLE_SITE, n).total_kms;
            lo = lo.min(v);
            hi = hi.max(v);
        }
        (lo, hi)
    }

    #[test]
    fn towards_the_ecliptic_pole_the_correction_stays_near_zero_all_year() {
        // Ecliptic north pole in ICRS: RA 270 deg, Dec 90 - 23.44 deg (obliquity
        // 23.44 deg; common practice, no source). Earth's orbit lies in the ecliptic,
        // so only the metre-per-second wobble from the Moon and planets remains.
        let n = icrs_direction(270.0, 66.56, None);
        let (lo, hi) = yearly(n);
        assert!(lo > -0.05 && hi < 0.05, "{lo} .. {hi}");
    }

    #[test]
    fn towards_the_ecliptic_the_annual_amplitude_is_near_thirty_kilometres_per_second() {
        // Ecliptic point at longitude 90 deg: RA 90, Dec +23.44. Orbital speed
        // ~29.8 km/s (common practice, no source).
        let n = icrs_direction(90.0, 23.44, None);
        let (lo, hi) = yearly(n);
        let amp = (hi - lo) / 2.0;
        assert!((29.0..30.6).contains(&amp), "amplitude {amp}");
        assert!((hi + lo).abs() < 1.5, "{lo} .. {hi}");
    }

    #[test]
    fn the_rotational_part_peaks_near_0_46_km_s_at_the_equator_and_vanishes_at_the_pole() {
        // Equatorial rotation speed 2 pi R / sidereal day = 0.465 km/s (common practice, no source).
        let at = Instant::from_mjd(60_500.3, TimeScale::Utc).unwrap();
        let e = Epochs::of(at);
        let equator = site_itrs(
            &Site {
                longitude_deg: Some(0.0),
                latitude_deg: Some(0.0),
                height_m: Some(0.0),
                ..Site::default()
            },
            "test",
        )
        .unwrap()
        .unwrap();
        let mut max_rot: f64 = 0.0;
        for k in 0..72 {
            let n = icrs_direction(k as f64 * 5.0, 0.0, None);
            max_rot = max_rot.max(correction_at(&e, equator, n).rotation_kms.abs());
            let pole = correction_at(&e, POLE_SITE, n).rotation_kms;
            assert!(pole.abs() < 1e-6);
        }
        assert!((max_rot - 0.465).abs() < 0.003, "{max_rot}");
    }

    #[test]
    fn apply_matches_the_velocity_rule_in_astropy_documentation_for_cz_velocities() {
        // astropy docs (radial_velocity_correction): rv_bary = rv + corr + rv*corr/c,
        // exact when rv = c z (the form the rule is written for).
        let c = C_M_S / 1000.0;
        for (v_obs, corr) in [(-42.0_f64, 27.3_f64), (15_000.0, -29.9), (0.0, 0.4)] {
            let z_b = apply(v_obs / c, corr);
            let rule = v_obs + corr + v_obs * corr / c;
            assert!((c * z_b - rule).abs() < 1e-8, "{} vs {rule}", c * z_b);
        }
        assert_eq!(apply(0.5, 0.0), 0.5);
    }

    #[test]
    fn corrected_values_are_absent_without_a_correction_and_relativistic_with_one() {
        assert_eq!(corrected(0.1, None), (None, None));
        let (zb, vb) = corrected(0.0, Some(10.0));
        // z = v/c for the correction alone; the relativistic velocity of that z is
        // ~10 km/s less (10^2/2c) ~ 0.17 m/s.
        assert!((zb.unwrap() - 10.0 / 299_792.458).abs() < 1e-15);
        assert!((vb.unwrap() - 10.0).abs() < 1e-3);
    }

    fn meta_with(date: &str, exptime: Option<f64>) -> Metadata {
        Metadata {
            ra_deg: Some(10.0),
            dec_deg: Some(-20.0),
            date_obs: Some(date.into()),
            exposure_s: exptime,
            site: Site {
                longitude_deg: Some(-40.0),
                latitude_deg: Some(30.0),
                height_m: Some(1500.0),
                ..Site::default()
            },
            ..Metadata::default()
        }
    }

    fn mid(meta: &Metadata) -> Instant {
        compute(meta, &BaryOverrides::default()).unwrap().mid_utc
    }

    fn secs(i: Instant) -> f64 {
        i.mjd_day as f64 * 86_400.0 + i.seconds
    }

    #[test]
    fn date_obs_is_the_start_and_half_the_exposure_is_added() {
        let m = mid(&meta_with("2024-03-01T02:00:00", Some(1800.0)));
        let want = Instant::from_civil(parse_date("2024-03-01T02:15:00").unwrap(), TimeScale::Utc);
        assert!((secs(m) - secs(want)).abs() < 1e-6);
        // Without EXPTIME: the start, with a note.
        let c = compute(
            &meta_with("2024-03-01T02:00:00", None),
            &BaryOverrides::default(),
        )
        .unwrap();
        assert!(c.notes.iter().any(|n| n.contains("EXPTIME")));
        // A disagreeing MJD-OBS is noted, DATE-OBS wins.
        let mut m = meta_with("2024-03-01T02:00:00", Some(0.0));
        m.mjd_obs = Some(60_370.5);
        let c = compute(&m, &BaryOverrides::default()).unwrap();
        assert!(
            c.notes.iter().any(|n| n.contains("MJD-OBS")),
            "{:?}",
            c.notes
        );
        assert_eq!(c.mid_utc.seconds, 7200.0);
    }

    #[test]
    fn date_avg_wins_and_date_end_gives_the_midpoint_when_exptime_is_absent() {
        let mut m = meta_with("2024-03-01T02:00:00", Some(1800.0));
        m.header
            .push(("DATE-AVG".into(), "'2024-03-01T02:20:00'".into()));
        let want = Instant::from_civil(parse_date("2024-03-01T02:20:00").unwrap(), TimeScale::Utc);
        assert!((secs(mid(&m)) - secs(want)).abs() < 1e-6);
        let mut m = meta_with("2024-03-01T02:00:00", None);
        m.header
            .push(("DATE-END".into(), "2024-03-01T03:00:00".into()));
        let want = Instant::from_civil(parse_date("2024-03-01T02:30:00").unwrap(), TimeScale::Utc);
        assert!((secs(mid(&m)) - secs(want)).abs() < 1e-6);
    }

    #[test]
    fn a_date_without_time_of_day_uses_time_obs_or_says_the_time_of_day_is_missing() {
        let mut m = meta_with("2024-03-01", Some(0.0));
        let err = compute(&m, &BaryOverrides::default()).unwrap_err();
        assert_eq!(err, BaryError::Missing(vec![Missing::TimeOfDay]));
        m.header.push(("TIME-OBS".into(), "04:05:06.5".into()));
        let want =
            Instant::from_civil(parse_date("2024-03-01T04:05:06.5").unwrap(), TimeScale::Utc);
        assert!((secs(mid(&m)) - secs(want)).abs() < 1e-6);
        // MJD-OBS is used when DATE-OBS has no time.
        let mut m = meta_with("2024-03-01", Some(0.0));
        m.mjd_obs = Some(60_370.25);
        let got = mid(&m);
        assert_eq!(got.mjd_day, 60_370);
        assert!((got.seconds - 21_600.0).abs() < 1e-6);
    }

    #[test]
    fn a_tt_timestamp_means_the_same_moment_as_the_utc_one_69_seconds_earlier() {
        let utc = meta_with("2024-03-01T02:00:00", Some(0.0));
        let mut tt = meta_with("2024-03-01T02:01:09.184", Some(0.0));
        tt.time_scale = Some("TT".into());
        let a = correction_kms(&utc, &BaryOverrides::default()).unwrap();
        let b = correction_kms(&tt, &BaryOverrides::default()).unwrap();
        assert!((a - b).abs() < 1e-9, "{a} {b}");
    }

    #[test]
    fn bad_values_name_their_keyword() {
        let m = meta_with("2024-03-32T00:00:00", Some(0.0));
        match compute(&m, &BaryOverrides::default()).unwrap_err() {
            BaryError::Invalid { keyword, .. } => assert_eq!(keyword, "DATE-OBS"),
            e => panic!("{e}"),
        }
        let mut m = meta_with("2024-03-01T00:00:00", Some(0.0));
        m.time_scale = Some("TCB".into());
        assert!(
            compute(&m, &BaryOverrides::default())
                .unwrap_err()
                .to_string()
                .contains("TIMESYS")
        );
        let mut m = meta_with("2024-03-01T00:00:00", Some(0.0));
        m.dec_deg = Some(95.0);
        assert!(
            compute(&m, &BaryOverrides::default())
                .unwrap_err()
                .to_string()
                .contains("DEC")
        );
        let mut m = meta_with("2024-03-01T00:00:00", Some(0.0));
        m.site = Site {
            geocentric_m: Some([1000.0, 2000.0, 3000.0]),
            ..Site::default()
        };
        assert!(
            compute(&m, &BaryOverrides::default())
                .unwrap_err()
                .to_string()
                .contains("OBSGEO")
        );
        let mut m = meta_with("2024-03-01T00:00:00", Some(-5.0));
        m.exposure_s = Some(-5.0);
        assert!(
            compute(&m, &BaryOverrides::default())
                .unwrap_err()
                .to_string()
                .contains("EXPTIME")
        );
    }

    #[test]
    fn a_site_name_is_looked_up_in_the_configured_list_or_reported_unknown() {
        let mut m = meta_with("2024-03-01T00:00:00", Some(0.0));
        m.site = Site {
            name: Some("Kestrel Hill".into()),
            ..Site::default()
        };
        m.date_obs = None;
        let err = compute(&m, &BaryOverrides::default()).unwrap_err();
        assert_eq!(
            err,
            BaryError::Missing(vec![
                Missing::Time,
                Missing::UnconfiguredSite("Kestrel Hill".into())
            ])
        );
        assert!(err.to_string().contains("'Kestrel Hill'"), "{err}");
        m.date_obs = Some("2024-03-01T00:00:00".into());
        let ov = BaryOverrides {
            sites: vec![("KESTREL HILL".to_string(), -40.0, 30.0, 1500.0).into()],
            ..BaryOverrides::default()
        };
        let named = correction_kms(&m, &ov).unwrap();
        let direct = correction_kms(&meta_with("2024-03-01T00:00:00", Some(0.0)), &ov).unwrap();
        assert_eq!(named, direct);
        assert!(find_site(&ov.sites, "nowhere").is_none());
    }
    #[test]
    fn user_site_coordinate_and_time_options_parse_or_say_why_not() {
        let s = parse_lonlat("-40.5, 30.25, 1500").unwrap();
        assert_eq!(
            (s.longitude_deg, s.latitude_deg, s.height_m),
            (Some(-40.5), Some(30.25), Some(1500.0))
        );
        assert_eq!(parse_lonlat("10,20").unwrap().height_m, Some(0.0));
        assert!(parse_lonlat("10").is_err());
        assert!(parse_lonlat("10,95").is_err());
        assert!(parse_xyz("1000,2000,3000").is_err());
        assert!(parse_xyz("3000000,3000000,4600000").is_ok());
        let (ra, dec) = parse_radec("12:30:00, -45:30:00").unwrap();
        assert!((ra - 187.5).abs() < 1e-9 && (dec + 45.5).abs() < 1e-9);
        assert_eq!(parse_radec("187.5,-45.5").unwrap(), (187.5, -45.5));
        assert!(parse_radec("400,0").is_err());
        assert!(parse_radec("1,2,3").is_err());
        let t = parse_time("MJD60512.25", TimeScale::Utc).unwrap();
        assert_eq!((t.mjd_day, t.seconds), (60_512, 21_600.0));
        assert!(parse_time("2024-07-01", TimeScale::Utc).is_err());
        assert!(parse_time("2024-07-01T03:00:00", TimeScale::Utc).is_ok());
    }

    #[test]
    fn supplied_values_fill_gaps_by_default_and_replace_the_file_only_when_asked() {
        let file = meta_with("2024-03-01T02:00:00", Some(0.0));
        let other = Instant::from_civil(parse_date("2024-09-01T14:00:00").unwrap(), TimeScale::Utc);
        let mut ov = BaryOverrides {
            time: Some((other, TimeRef::Mid)),
            ra_deg: Some(200.0),
            dec_deg: Some(10.0),
            site: Some(parse_lonlat("100,-20,0").unwrap()),
            ..BaryOverrides::default()
        };
        let own = correction_kms(&file, &BaryOverrides::default()).unwrap();
        assert_eq!(correction_kms(&file, &ov).unwrap(), own);
        ov.replace = true;
        let replaced = correction_kms(&file, &ov).unwrap();
        assert_eq!(replaced, correction_kms(&Metadata::default(), &ov).unwrap());
        assert!((replaced - own).abs() > 1.0);
        // An unusable header value gives way to the supplied one even when filling.
        ov.replace = false;
        let mut broken = file.clone();
        broken.date_obs = Some("2024-02-30T00:00:00".into());
        broken.ra_deg = None;
        broken.site = Site::default();
        assert_eq!(correction_kms(&broken, &ov).unwrap(), replaced);
    }

    #[test]
    fn table_columns_become_overrides_and_bad_cells_name_their_column() {
        let row = |pairs: &'static [(&'static str, &'static str)]| {
            move |k: &str| pairs.iter().find(|(c, _)| *c == k).map(|(_, v)| *v)
        };
        let ov = overrides_from_columns(row(&[
            ("ra", "10:00:00"),
            ("dec", "-05:30:00"),
            ("obs_time", "2025-01-02T03:04:05"),
            ("timesys", "TT"),
            ("time_ref", "mid"),
            ("site_lon", "12.5"),
            ("site_lat", "-30"),
        ]))
        .unwrap();
        assert!(ov.replace);
        assert_eq!((ov.ra_deg, ov.dec_deg), (Some(150.0), Some(-5.5)));
        let (at, r) = ov.time.unwrap();
        assert_eq!((at.scale, r), (TimeScale::Tt, TimeRef::Mid));
        assert_eq!(ov.site.as_ref().unwrap().height_m, Some(0.0));
        let named = overrides_from_columns(row(&[("site", "Kestrel Hill")])).unwrap();
        assert_eq!(named.site.unwrap().name.as_deref(), Some("Kestrel Hill"));
        assert!(overrides_from_columns(row(&[])).unwrap().site.is_none());
        for (bad, col) in [
            (&[("ra", "10")][..], "ra/dec"),
            (&[("obs_time", "yesterday")][..], "obs_time"),
            (&[("exptime", "long")][..], "exptime"),
            (&[("obsgeo_x", "1"), ("obsgeo_y", "2")][..], "obsgeo_x/y/z"),
            (
                &[("obs_time", "2025-01-02T03:04:05"), ("time_ref", "end")][..],
                "time_ref",
            ),
        ] {
            let owned: Vec<(String, String)> = bad
                .iter()
                .map(|(a, b)| (a.to_string(), b.to_string()))
                .collect();
            let get = |k: &str| owned.iter().find(|(c, _)| c == k).map(|(_, v)| v.as_str());
            match overrides_from_columns(get) {
                Err(BaryError::Invalid { keyword, .. }) => assert_eq!(keyword, col),
                other => panic!("{bad:?}: {other:?}"),
            }
        }
    }

    #[test]
    fn layers_apply_replace_then_file_then_fill_in_order() {
        let file = meta_with("2024-03-01T02:00:00", Some(0.0));
        let own = correction_kms(&file, &BaryOverrides::default()).unwrap();
        let t = |s: &str| Instant::from_civil(parse_date(s).unwrap(), TimeScale::Utc);
        let row = BaryOverrides {
            time: Some((t("2024-09-01T14:00:00"), TimeRef::Mid)),
            replace: true,
            ..BaryOverrides::default()
        };
        let global = BaryOverrides {
            time: Some((t("2024-06-01T00:00:00"), TimeRef::Mid)),
            ..BaryOverrides::default()
        };
        let both = compute_layered(&file, &[&row, &global]).unwrap();
        let row_only = compute_layered(&file, &[&row]).unwrap();
        assert_eq!(both.kms, row_only.kms);
        assert!((both.kms - own).abs() > 1.0);
        // A filling layer does not displace the file's time.
        assert_eq!(compute_layered(&file, &[&global]).unwrap().kms, own);
        // ... but supplies it when the file has none.
        let mut bare = file.clone();
        bare.date_obs = None;
        let filled = compute_layered(&bare, &[&BaryOverrides::default(), &global]).unwrap();
        assert_eq!(filled.mid_utc, t("2024-06-01T00:00:00"));
    }
}
