//! Time scales for the barycentric correction: civil dates from FITS headers,
//! UTC with leap seconds, TAI, TT, TDB and GPS time.
//!
//! The main types are [`TimeScale`] (which clock a date is on), [`CivilTime`]
//! (a parsed calendar date, possibly without a time of day) and [`Instant`]
//! (a moment on one clock, as a whole day number plus seconds). An
//! [`Instant`] converts to any other scale with [`Instant::to_scale`];
//! [`Instant::jd`] gives the two-part Julian date the ephemeris and Earth
//! rotation routines take.
//!
//! Relations used (all in SI seconds):
//! - TAI − UTC from the leap-second table [`LEAP_SECONDS`] (IERS Bulletin C,
//!   from 1972-01-01 to the latest, 2017-01-01). Before 1972 UTC ran with
//!   fractional steps and a rate offset; zsift does not model that era: it
//!   takes TAI − UTC = 10 s (the 1972 value) and [`tai_minus_utc`] reports the
//!   date as approximate. The true offset then was between about 1.4 s and
//!   10 s (from memory), which moves a barycentric correction by under 0.3 m/s.
//! - TT = TAI + 32.184 s (IAU 1991 Resolution A4; exact by definition).
//! - GPS = TAI − 19 s (GPS time was set equal to UTC at 1980-01-06, when
//!   TAI − UTC was 19 s).
//! - TDB − TT from the leading terms of the Fairhead & Bretagnon (1990, A&A
//!   229, 240) series as given by Kaplan (2005, USNO Circular 179, eq. 2.6);
//!   good to about 10 µs, far below anything a velocity can feel.
//!
//! UT1 (for the Earth's rotation angle) is taken equal to UTC: |UT1 − UTC| is
//! kept below 0.9 s by the leap seconds, which changes the site's rotational
//! velocity by under 0.04 m/s.

use std::fmt;

/// Seconds in a day.
pub const DAY_S: f64 = 86_400.0;
/// MJD zero point as a Julian date.
pub const MJD_ZERO_JD: f64 = 2_400_000.5;
/// TT − TAI in seconds (IAU 1991 Resolution A4).
pub const TT_MINUS_TAI_S: f64 = 32.184;
/// TAI − GPS in seconds (common practice, no source: fixed since 1980-01-06).
pub const TAI_MINUS_GPS_S: f64 = 19.0;

/// Leap-second table: (MJD of the UTC day from which the offset holds,
/// TAI − UTC in seconds). Source: IERS Bulletin C (the list of all leap seconds
/// since 1972, as tabulated by the IERS); the last entry is 2017-01-01.
pub const LEAP_SECONDS: [(i64, f64); 28] = [
    (41317, 10.0), // 1972-01-01
    (41499, 11.0), // 1972-07-01
    (41683, 12.0), // 1973-01-01
    (42048, 13.0), // 1974-01-01
    (42413, 14.0), // 1975-01-01
    (42778, 15.0), // 1976-01-01
    (43144, 16.0), // 1977-01-01
    (43509, 17.0), // 1978-01-01
    (43874, 18.0), // 1979-01-01
    (44239, 19.0), // 1980-01-01
    (44786, 20.0), // 1981-07-01
    (45151, 21.0), // 1982-07-01
    (45516, 22.0), // 1983-07-01
    (46247, 23.0), // 1985-07-01
    (47161, 24.0), // 1988-01-01
    (47892, 25.0), // 1990-01-01
    (48257, 26.0), // 1991-01-01
    (48804, 27.0), // 1992-07-01
    (49169, 28.0), // 1993-07-01
    (49534, 29.0), // 1994-07-01
    (50083, 30.0), // 1996-01-01
    (50630, 31.0), // 1997-07-01
    (51179, 32.0), // 1999-01-01
    (53736, 33.0), // 2006-01-01
    (54832, 34.0), // 2009-01-01
    (56109, 35.0), // 2012-07-01
    (57204, 36.0), // 2015-07-01
    (57754, 37.0), // 2017-01-01
];

/// A clock a date can be written on (the FITS `TIMESYS` values zsift accepts).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum TimeScale {
    /// Coordinated Universal Time (also accepted: `UT`, `GMT`, `UTC(...)`).
    Utc,
    /// International Atomic Time.
    Tai,
    /// Terrestrial Time (also accepted: `TDT`, `ET`).
    Tt,
    /// Barycentric Dynamical Time.
    Tdb,
    /// GPS time.
    Gps,
}

impl TimeScale {
    /// Parse a `TIMESYS` value (case-insensitive, surrounding blanks ignored).
    ///
    /// `UT` and `GMT` are read as UTC (common practice, no source: old headers
    /// mean UTC by them); `TDT` and `ET` as TT. `TCG`, `TCB`, `UT1`, `LOCAL`
    /// and anything else are refused, because guessing would be silently wrong.
    pub fn parse(s: &str) -> Result<TimeScale, TimeError> {
        let u = s.trim().to_ascii_uppercase();
        let base = u.split('(').next().unwrap_or("").trim();
        match base {
            "UTC" | "UT" | "GMT" | "Z" => Ok(TimeScale::Utc),
            "TAI" | "IAT" => Ok(TimeScale::Tai),
            "TT" | "TDT" | "ET" => Ok(TimeScale::Tt),
            "TDB" => Ok(TimeScale::Tdb),
            "GPS" => Ok(TimeScale::Gps),
            _ => Err(TimeError::UnknownScale(s.trim().to_string())),
        }
    }

    /// The scale's usual abbreviation.
    pub fn as_str(self) -> &'static str {
        match self {
            TimeScale::Utc => "UTC",
            TimeScale::Tai => "TAI",
            TimeScale::Tt => "TT",
            TimeScale::Tdb => "TDB",
            TimeScale::Gps => "GPS",
        }
    }
}

impl fmt::Display for TimeScale {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.as_str())
    }
}

/// Why a date or time could not be understood.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum TimeError {
    /// The text is not a date zsift reads.
    #[error("'{text}' is not a date: {reason} (expected YYYY-MM-DD[Thh:mm[:ss[.sss]]])")]
    BadDate {
        /// The text as given.
        text: String,
        /// What is wrong with it.
        reason: String,
    },
    /// The time scale is not one zsift handles.
    #[error("time scale '{0}' is not handled (use UTC, TAI, TT, TDB or GPS)")]
    UnknownScale(String),
    /// A numeric date (MJD) is not finite or out of any plausible range.
    #[error("MJD {0} is not a plausible observation date")]
    BadMjd(f64),
}

/// A calendar date as written in a header, possibly with a time of day.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct CivilTime {
    /// Modified Julian Day number of the calendar date (integer).
    pub mjd_day: i64,
    /// Seconds since the start of that day (may reach 60.999.. past 23:59
    /// on a UTC leap-second day); 0 when no time of day was given.
    pub seconds: f64,
    /// Whether the text gave a time of day.
    pub has_time: bool,
}

/// MJD day number of a Gregorian calendar date (valid for any year after
/// -4799; the integer algorithm of Fliegel & Van Flandern 1968, Comm. ACM 11,
/// 657, shifted to MJD).
pub fn mjd_from_calendar(year: i64, month: i64, day: i64) -> i64 {
    let a = (14 - month) / 12;
    let y = year + 4800 - a;
    let m = month + 12 * a - 3;
    let jdn = day + (153 * m + 2) / 5 + 365 * y + y / 4 - y / 100 + y / 400 - 32045;
    jdn - 2_400_001
}

fn days_in_month(year: i64, month: i64) -> i64 {
    match month {
        1 | 3 | 5 | 7 | 8 | 10 | 12 => 31,
        4 | 6 | 9 | 11 => 30,
        _ => {
            if (year % 4 == 0 && year % 100 != 0) || year % 400 == 0 {
                29
            } else {
                28
            }
        }
    }
}

fn bad(text: &str, reason: impl Into<String>) -> TimeError {
    TimeError::BadDate {
        text: text.to_string(),
        reason: reason.into(),
    }
}

fn parse_int(text: &str, field: &str, what: &str) -> Result<i64, TimeError> {
    if field.is_empty() || !field.bytes().all(|b| b.is_ascii_digit()) {
        return Err(bad(text, format!("{what} '{field}' is not a number")));
    }
    field
        .parse::<i64>()
        .map_err(|_| bad(text, format!("{what} '{field}' is not a number")))
}

/// Parse a header date: ISO 8601 `YYYY-MM-DD`, optionally followed by `T` (or
/// a blank) and `hh:mm`, `hh:mm:ss` or `hh:mm:ss.sss…`, optionally ending in
/// `Z`; also the old FITS form `DD/MM/YY` (years 19YY, FITS Standard 4.0,
/// Sect. 4.4.2.1, deprecated form).
///
/// A second of 60 is accepted only at 23:59 (a UTC leap second); whether that
/// day had one is not checked here.
pub fn parse_date(text: &str) -> Result<CivilTime, TimeError> {
    let t = text.trim();
    if t.is_empty() {
        return Err(bad(text, "it is empty"));
    }
    // Old form DD/MM/YY.
    if t.len() == 8 && t.as_bytes()[2] == b'/' && t.as_bytes()[5] == b'/' {
        let d = parse_int(text, &t[0..2], "day")?;
        let m = parse_int(text, &t[3..5], "month")?;
        let y = 1900 + parse_int(text, &t[6..8], "year")?;
        return civil(text, y, m, d, None);
    }
    let t = t.strip_suffix('Z').unwrap_or(t);
    let (date, time) = match t.find(['T', 't', ' ']) {
        Some(i) => (&t[..i], Some(t[i + 1..].trim())),
        None => (t, None),
    };
    let parts: Vec<&str> = date.split('-').collect();
    if parts.len() != 3 || parts[0].len() != 4 {
        return Err(bad(text, "the date part is not YYYY-MM-DD"));
    }
    let y = parse_int(text, parts[0], "year")?;
    let m = parse_int(text, parts[1], "month")?;
    let d = parse_int(text, parts[2], "day")?;
    let secs = match time {
        None => None,
        Some("") => return Err(bad(text, "nothing follows the date separator")),
        Some(tm) => Some(parse_time_of_day(text, tm)?),
    };
    civil(text, y, m, d, secs)
}

/// Parse `hh:mm`, `hh:mm:ss` or `hh:mm:ss.sss` into seconds of the day.
pub fn parse_time_of_day(text: &str, tm: &str) -> Result<f64, TimeError> {
    let f: Vec<&str> = tm.trim().split(':').collect();
    if f.len() < 2 || f.len() > 3 {
        return Err(bad(text, "the time part is not hh:mm[:ss]"));
    }
    let h = parse_int(text, f[0], "hour")?;
    let mi = parse_int(text, f[1], "minute")?;
    let s = if f.len() == 3 {
        let sf = f[2];
        let ok = !sf.is_empty()
            && sf.bytes().all(|b| b.is_ascii_digit() || b == b'.')
            && sf.bytes().filter(|&b| b == b'.').count() <= 1
            && sf.as_bytes()[0].is_ascii_digit();
        if !ok {
            return Err(bad(text, format!("seconds '{sf}' is not a number")));
        }
        sf.parse::<f64>()
            .map_err(|_| bad(text, format!("seconds '{sf}' is not a number")))?
    } else {
        0.0
    };
    if !(0..24).contains(&h) {
        return Err(bad(text, format!("hour {h} is outside 0-23")));
    }
    if !(0..60).contains(&mi) {
        return Err(bad(text, format!("minute {mi} is outside 0-59")));
    }
    let leap_ok = h == 23 && mi == 59;
    if !(s < 60.0 || (leap_ok && s < 61.0)) {
        return Err(bad(text, format!("second {s} is out of range")));
    }
    Ok(h as f64 * 3600.0 + mi as f64 * 60.0 + s)
}

fn civil(text: &str, y: i64, m: i64, d: i64, secs: Option<f64>) -> Result<CivilTime, TimeError> {
    if !(1..=12).contains(&m) {
        return Err(bad(text, format!("month {m} is outside 1-12")));
    }
    if d < 1 || d > days_in_month(y, m) {
        return Err(bad(text, format!("day {d} does not exist in {y}-{m:02}")));
    }
    Ok(CivilTime {
        mjd_day: mjd_from_calendar(y, m, d),
        seconds: secs.unwrap_or(0.0),
        has_time: secs.is_some(),
    })
}

/// TAI − UTC in seconds at the start of UTC day `mjd_day`, and whether the
/// value is exact (`false` before 1972-01-01, where 10 s is used; see the
/// module notes).
pub fn tai_minus_utc(mjd_day: i64) -> (f64, bool) {
    match LEAP_SECONDS
        .iter()
        .rev()
        .find(|(start, _)| mjd_day >= *start)
    {
        Some(&(_, dat)) => (dat, true),
        None => (LEAP_SECONDS[0].1, false),
    }
}

/// TDB − TT in seconds at the TT Julian date `jd1 + jd2` (geocentric).
///
/// Leading terms of Fairhead & Bretagnon (1990) as given by Kaplan (2005,
/// USNO Circular 179, eq. 2.6); accurate to about 10 µs over 1600-2200.
pub fn tdb_minus_tt(jd1: f64, jd2: f64) -> f64 {
    let t = ((jd1 - 2_451_545.0) + jd2) / 36_525.0;
    0.001_657 * (628.3076 * t + 6.2401).sin()
        + 0.000_022 * (575.3385 * t + 4.2970).sin()
        + 0.000_014 * (1256.6152 * t + 6.1969).sin()
        + 0.000_005 * (606.9777 * t + 4.0212).sin()
        + 0.000_005 * (52.9691 * t + 0.4444).sin()
        + 0.000_002 * (21.3299 * t + 5.5431).sin()
        + 0.000_010 * t * (628.3076 * t + 4.2490).sin()
}

/// A moment on one clock: whole MJD day number plus seconds into that day.
///
/// For UTC the day may hold 86 401 s (a leap second); the other scales are
/// uniform and their seconds stay in `[0, 86400)` after
/// [`Instant::normalised`].
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Instant {
    /// MJD day number.
    pub mjd_day: i64,
    /// Seconds into the day.
    pub seconds: f64,
    /// The clock.
    pub scale: TimeScale,
}

impl Instant {
    /// A moment from a parsed civil date on `scale`.
    pub fn from_civil(c: CivilTime, scale: TimeScale) -> Instant {
        Instant {
            mjd_day: c.mjd_day,
            seconds: c.seconds,
            scale,
        }
    }

    /// A moment from a (fractional) MJD on `scale`. For UTC a fractional day is
    /// taken as 86 400 s long (the leap second itself cannot be written as an
    /// MJD; common practice, no source).
    pub fn from_mjd(mjd: f64, scale: TimeScale) -> Result<Instant, TimeError> {
        // 0 = 1858-11-17; 200000 = AD 2406: anything outside is not an observation.
        if !mjd.is_finite() || !(0.0..200_000.0).contains(&mjd) {
            return Err(TimeError::BadMjd(mjd));
        }
        let day = mjd.floor();
        Ok(Instant {
            mjd_day: day as i64,
            seconds: (mjd - day) * DAY_S,
            scale,
        })
    }

    /// The same moment `dt` SI seconds later (on UTC, a day boundary is
    /// crossed as if days were 86 400 s; leap seconds inside `dt` are ignored,
    /// an error of at most 1 s).
    pub fn plus_seconds(self, dt: f64) -> Instant {
        Instant {
            seconds: self.seconds + dt,
            ..self
        }
        .normalised()
    }

    /// Carry whole days out of `seconds` (UTC keeps a second in [86400, 86401)
    /// on its own day, so a leap second is not moved).
    pub fn normalised(self) -> Instant {
        let mut day = self.mjd_day;
        let mut s = self.seconds;
        let len = if self.scale == TimeScale::Utc && (DAY_S..DAY_S + 1.0).contains(&s) {
            let (a, _) = tai_minus_utc(day);
            let (b, _) = tai_minus_utc(day + 1);
            DAY_S + (b - a)
        } else {
            DAY_S
        };
        if s >= len || s < 0.0 {
            let carry = (s / DAY_S).floor();
            day += carry as i64;
            s -= carry * DAY_S;
        }
        Instant {
            mjd_day: day,
            seconds: s,
            scale: self.scale,
        }
    }

    /// The two-part Julian date `(jd1, jd2)` with `jd1` = the day's start and
    /// `jd2` the fraction of a day. For a UTC leap second the fraction passes
    /// 1 by up to 1/86400 (routines that only need UT to ~1 s accept it).
    pub fn jd(self) -> (f64, f64) {
        (MJD_ZERO_JD + self.mjd_day as f64, self.seconds / DAY_S)
    }

    /// The moment as a plain MJD (loses ~1 µs of precision).
    pub fn mjd(self) -> f64 {
        self.mjd_day as f64 + self.seconds / DAY_S
    }

    fn to_tai(self) -> Instant {
        let shift = match self.scale {
            TimeScale::Tai => 0.0,
            TimeScale::Utc => tai_minus_utc(self.mjd_day).0,
            TimeScale::Gps => TAI_MINUS_GPS_S,
            TimeScale::Tt => -TT_MINUS_TAI_S,
            TimeScale::Tdb => {
                // TDB -> TT: the series changes by < 1e-9 s over its own size,
                // so evaluating it at TDB instead of TT is exact enough.
                let (a, b) = self.jd();
                -tdb_minus_tt(a, b) - TT_MINUS_TAI_S
            }
        };
        Instant {
            mjd_day: self.mjd_day,
            seconds: self.seconds + shift,
            scale: TimeScale::Tai,
        }
        .normalised()
    }

    /// The same moment on another clock.
    pub fn to_scale(self, target: TimeScale) -> Instant {
        if self.scale == target {
            return self;
        }
        let tai = self.to_tai();
        let shifted = |dt: f64| {
            Instant {
                mjd_day: tai.mjd_day,
                seconds: tai.seconds + dt,
                scale: target,
            }
            .normalised()
        };
        match target {
            TimeScale::Tai => tai,
            TimeScale::Gps => shifted(-TAI_MINUS_GPS_S),
            TimeScale::Tt => shifted(TT_MINUS_TAI_S),
            TimeScale::Tdb => {
                let (a, b) = tai.jd();
                let tt_b = b + TT_MINUS_TAI_S / DAY_S;
                shifted(TT_MINUS_TAI_S + tdb_minus_tt(a, tt_b))
            }
            TimeScale::Utc => {
                // TAI = UTC day start + UTC seconds + dAT(UTC day). Try the TAI
                // day first; a negative remainder means the previous UTC day,
                // which may be 86 401 s long (its last second is 23:59:60).
                let (dat, _) = tai_minus_utc(tai.mjd_day);
                let s = tai.seconds - dat;
                if s >= 0.0 {
                    Instant {
                        mjd_day: tai.mjd_day,
                        seconds: s,
                        scale: TimeScale::Utc,
                    }
                } else {
                    let (prev, _) = tai_minus_utc(tai.mjd_day - 1);
                    Instant {
                        mjd_day: tai.mjd_day - 1,
                        seconds: tai.seconds + DAY_S - prev,
                        scale: TimeScale::Utc,
                    }
                }
            }
        }
    }
}

/// The moments the correction needs: UT1 (taken = UTC), TT and TDB, each as a
/// two-part Julian date.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Epochs {
    /// UT1 ≈ UTC (see the module notes).
    pub ut1: (f64, f64),
    /// Terrestrial Time.
    pub tt: (f64, f64),
    /// Barycentric Dynamical Time.
    pub tdb: (f64, f64),
    /// False when the UTC offset had to be approximated (before 1972).
    pub leap_table_exact: bool,
}

impl Epochs {
    /// All three clocks for one moment.
    pub fn of(at: Instant) -> Epochs {
        let utc = at.to_scale(TimeScale::Utc);
        let tt = at.to_scale(TimeScale::Tt);
        let tdb = at.to_scale(TimeScale::Tdb);
        Epochs {
            ut1: utc.jd(),
            tt: tt.jd(),
            tdb: tdb.jd(),
            leap_table_exact: tai_minus_utc(utc.mjd_day).1,
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn mjd_zero_is_1858_november_17_and_j2000_day_is_51544() {
        // MJD = JD - 2400000.5 (IAU 1973 definition; MJD 0 = 1858-11-17).
        assert_eq!(mjd_from_calendar(1858, 11, 17), 0);
        // J2000.0 = JD 2451545.0 = 2000-01-01 12:00 TT (IAU 1976), so the day starts at MJD 51544.
        assert_eq!(mjd_from_calendar(2000, 1, 1), 51_544);
        // The first leap-table entry, 1972-01-01, is MJD 41317 (IERS Bulletin C).
        assert_eq!(mjd_from_calendar(1972, 1, 1), 41_317);
    }

    #[test]
    fn every_leap_table_entry_starts_on_a_first_of_january_or_july() {
        // Leap seconds have so far only been inserted at the end of June or December
        // (IERS Bulletin C), so each entry must be a 1 January or 1 July.
        for (mjd, _) in LEAP_SECONDS {
            let ok = (1972..=2017)
                .any(|y| mjd == mjd_from_calendar(y, 1, 1) || mjd == mjd_from_calendar(y, 7, 1));
            assert!(ok, "MJD {mjd}");
        }
        assert!(LEAP_SECONDS.windows(2).all(|w| w[1].1 == w[0].1 + 1.0));
    }

    #[test]
    fn iso_dates_with_and_without_time_and_fractional_seconds_parse() {
        let d = parse_date("2023-07-09").unwrap();
        assert!(!d.has_time);
        assert_eq!(d.mjd_day, mjd_from_calendar(2023, 7, 9));
        let t = parse_date("2023-07-09T22:52:07.125").unwrap();
        assert!(t.has_time);
        assert!((t.seconds - (22.0 * 3600.0 + 52.0 * 60.0 + 7.125)).abs() < 1e-9);
        assert_eq!(parse_date(" 2023-07-09 22:52 ").unwrap().seconds, 82_320.0);
        assert_eq!(
            parse_date("2023-07-09T22:52:07Z").unwrap().seconds,
            82_327.0
        );
        // Old FITS form DD/MM/YY is 19YY.
        assert_eq!(
            parse_date("31/12/98").unwrap().mjd_day,
            mjd_from_calendar(1998, 12, 31)
        );
    }

    #[test]
    fn malformed_dates_are_refused_with_the_reason() {
        for bad in [
            "",
            "2023-13-01",
            "2023-02-29",
            "2023-07-09T25:00:00",
            "2023-07-09T12:61",
            "2023-07-09T12:30:60",
            "23-07-09",
            "2023/07/09",
            "2023-07-09T",
            "2023-07-09Tnoon",
            "2023-07-09T12:00:1e3",
        ] {
            assert!(parse_date(bad).is_err(), "{bad:?} accepted");
        }
        let e = parse_date("2023-02-30").unwrap_err().to_string();
        assert!(e.contains("day 30"), "{e}");
        // A leap second is only possible at 23:59.
        assert!(parse_date("2016-12-31T23:59:60.5").is_ok());
    }

    #[test]
    fn timesys_values_map_to_scales_and_unknown_ones_are_refused() {
        assert_eq!(TimeScale::parse(" utc ").unwrap(), TimeScale::Utc);
        assert_eq!(TimeScale::parse("UT").unwrap(), TimeScale::Utc);
        assert_eq!(TimeScale::parse("TDT").unwrap(), TimeScale::Tt);
        assert_eq!(TimeScale::parse("tdb").unwrap(), TimeScale::Tdb);
        assert_eq!(TimeScale::parse("GPS").unwrap(), TimeScale::Gps);
        assert_eq!(TimeScale::parse("TAI").unwrap(), TimeScale::Tai);
        for s in ["TCB", "TCG", "LOCAL", "UT1", ""] {
            assert!(TimeScale::parse(s).is_err(), "{s}");
        }
    }

    #[test]
    fn tt_minus_utc_is_69_184_seconds_since_2017() {
        // TAI-UTC = 37 s since 2017-01-01 (IERS Bulletin C) plus TT-TAI = 32.184 s.
        let u = Instant::from_civil(parse_date("2024-05-05T10:00:00").unwrap(), TimeScale::Utc);
        let tt = u.to_scale(TimeScale::Tt);
        assert_eq!(tt.mjd_day, u.mjd_day);
        assert!((tt.seconds - u.seconds - 69.184).abs() < 1e-9);
        // GPS - UTC = 18 s since 2017 (TAI - 19 s).
        let g = u.to_scale(TimeScale::Gps);
        assert!((g.seconds - u.seconds - 18.0).abs() < 1e-9);
    }

    #[test]
    fn a_leap_second_survives_the_round_trip_through_tai() {
        let leap =
            Instant::from_civil(parse_date("2016-12-31T23:59:60.5").unwrap(), TimeScale::Utc);
        let tai = leap.to_scale(TimeScale::Tai);
        // 2016-12-31 23:59:60.5 UTC = 2017-01-01 00:00:36.5 TAI (TAI-UTC was 36 s that day).
        assert_eq!(tai.mjd_day, mjd_from_calendar(2017, 1, 1));
        assert!((tai.seconds - 36.5).abs() < 1e-9);
        let back = tai.to_scale(TimeScale::Utc);
        assert_eq!(back.mjd_day, mjd_from_calendar(2016, 12, 31));
        assert!((back.seconds - 86_400.5).abs() < 1e-9);
        // One second later is 00:00:00.5 UTC on the new day.
        let next = tai.plus_seconds(1.0).to_scale(TimeScale::Utc);
        assert_eq!(next.mjd_day, mjd_from_calendar(2017, 1, 1));
        assert!((next.seconds - 0.5).abs() < 1e-9);
    }

    #[test]
    fn every_scale_round_trips_through_every_other() {
        let scales = [
            TimeScale::Utc,
            TimeScale::Tai,
            TimeScale::Tt,
            TimeScale::Tdb,
            TimeScale::Gps,
        ];
        for mjd in [45_000.25, 51_544.999_9, 57_753.999_95, 61_000.7] {
            for a in scales {
                let x = Instant::from_mjd(mjd, a).unwrap();
                for b in scales {
                    let y = x.to_scale(b).to_scale(a);
                    let ds = (y.mjd_day - x.mjd_day) as f64 * DAY_S + (y.seconds - x.seconds);
                    assert!(ds.abs() < 1e-6, "{mjd} {a}->{b}: {ds} s");
                }
            }
        }
    }

    #[test]
    fn dates_before_1972_are_flagged_as_approximate() {
        assert_eq!(tai_minus_utc(mjd_from_calendar(1965, 3, 1)), (10.0, false));
        assert_eq!(tai_minus_utc(mjd_from_calendar(1972, 1, 1)), (10.0, true));
        assert_eq!(tai_minus_utc(mjd_from_calendar(2016, 12, 31)), (36.0, true));
        assert!(Instant::from_mjd(f64::NAN, TimeScale::Utc).is_err());
        assert!(Instant::from_mjd(-5.0, TimeScale::Utc).is_err());
    }
}
