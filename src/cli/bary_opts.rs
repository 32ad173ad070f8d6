//! Command-line options that supply what the barycentric correction needs
//! when a file lacks it (shared by the commands that report velocities).

use zsift::physics::bary::{self, BaryOverrides, NamedSite, TimeRef};
use zsift::physics::time::TimeScale;
use zsift::spectrum::Site;

/// Options for the barycentric correction. By default they fill in only what
/// a file does not say; `--bary-replace` makes them win over the file.
#[derive(Debug, Clone, clap::Args)]
pub struct BaryOpts {
    /// Observatory as east longitude, geodetic latitude (degrees) and height
    /// above the WGS84 ellipsoid (metres, default 0).
    #[arg(long, value_name = "LON,LAT[,HEIGHT]", value_parser = bary::parse_lonlat,
          conflicts_with_all = ["site_xyz", "site"], allow_hyphen_values = true,
          help_heading = "Barycentric correction")]
    pub site_lonlat: Option<Site>,
    /// Observatory as geocentric ITRS X,Y,Z in metres.
    #[arg(long, value_name = "X,Y,Z", value_parser = bary::parse_xyz,
          conflicts_with = "site", allow_hyphen_values = true,
          help_heading = "Barycentric correction")]
    pub site_xyz: Option<Site>,
    /// Observatory by a name from the `[[sites]]` list of the config file.
    #[arg(long, value_name = "NAME", help_heading = "Barycentric correction")]
    pub site: Option<String>,
    /// Observation time: ISO 8601 (2025-01-02T03:04:05.6) or MJD (MJD60678.128).
    #[arg(long, value_name = "WHEN", help_heading = "Barycentric correction")]
    pub obs_time: Option<String>,
    /// Time scale of --obs-time: UTC, TAI, TT, TDB or GPS.
    #[arg(long, value_name = "SCALE", default_value = "UTC",
          value_parser = |s: &str| TimeScale::parse(s).map_err(|e| e.to_string()),
          help_heading = "Barycentric correction")]
    pub obs_timesys: TimeScale,
    /// --obs-time is the middle of the exposure (default: its start).
    #[arg(long, help_heading = "Barycentric correction")]
    pub obs_time_mid: bool,
    /// Exposure time in seconds (half of it is added to a start time).
    #[arg(long, value_name = "SECONDS", help_heading = "Barycentric correction")]
    pub exptime: Option<f64>,
    /// Target coordinates: degrees (187.5,-45.5) or hh:mm:ss,dd:mm:ss.
    #[arg(long, value_name = "RA,DEC", value_parser = bary::parse_radec,
          allow_hyphen_values = true, help_heading = "Barycentric correction")]
    pub radec: Option<(f64, f64)>,
    /// Equinox of --radec in years (default: ICRS / J2000).
    #[arg(
        long,
        value_name = "YEAR",
        requires = "radec",
        help_heading = "Barycentric correction"
    )]
    pub equinox: Option<f64>,
    /// Let the options above replace what the files say (default: fill gaps only).
    #[arg(long, help_heading = "Barycentric correction")]
    pub bary_replace: bool,
}

impl BaryOpts {
    /// The overrides these options describe, with the configured named sites.
    pub fn overrides(&self, sites: Vec<NamedSite>) -> anyhow::Result<BaryOverrides> {
        let time = match &self.obs_time {
            Some(t) => Some((
                bary::parse_time(t, self.obs_timesys)
                    .map_err(|e| anyhow::anyhow!("--obs-time: {e}"))?,
                if self.obs_time_mid {
                    TimeRef::Mid
                } else {
                    TimeRef::Start
                },
            )),
            None => None,
        };
        if let Some(e) = self.exptime
            && (!e.is_finite() || e < 0.0)
        {
            anyhow::bail!("--exptime: {e} is not a usable exposure time");
        }
        let site = self
            .site_lonlat
            .clone()
            .or_else(|| self.site_xyz.clone())
            .or_else(|| {
                self.site.as_ref().map(|n| Site {
                    name: Some(zsift::text::clean(n)),
                    ..Site::default()
                })
            });
        if let Some(name) = &self.site
            && bary::find_site(&sites, name).is_none()
        {
            anyhow::bail!(
                "--site: no site named '{}' in the [[sites]] list of the config file {}",
                zsift::text::clean(name),
                zsift::tui::config::default_path()
                    .map(|p| p.display().to_string())
                    .unwrap_or_else(|| "(none: set ZSIFT_CONFIG)".into())
            );
        }
        Ok(BaryOverrides {
            time,
            exposure_s: self.exptime,
            ra_deg: self.radec.map(|r| r.0),
            dec_deg: self.radec.map(|r| r.1),
            equinox: self.equinox,
            site,
            sites,
            replace: self.bary_replace,
        })
    }
}

/// The named sites of the user's config file (`[[sites]]`; none when there is
/// no config file), for commands that do not otherwise read the config.
pub fn configured_sites() -> anyhow::Result<Vec<NamedSite>> {
    let Some(path) = zsift::tui::config::default_path() else {
        return Ok(Vec::new());
    };
    let cfg = zsift::tui::config::Config::load(&path)?;
    Ok(cfg.named_sites()?)
}
