//! Line detection by matched filtering, Gaussian fits of what is found, and
//! flags for features that are not the target's (cosmic-ray spikes, night-sky
//! residuals, telluric bands).
//!
//! [`find`] works in four steps:
//! 1. **Spikes.** Pixels (or pairs of pixels) far above or below the
//!    continuum whose neighbours are much smaller than a line of the
//!    instrument's resolution would make them are cosmic rays or bad pixels.
//!    They are reported as [`FeatureFlag::Spike`] features and given zero
//!    weight in what follows.
//! 2. **Matched filter.** For widths from the instrumental FWHM up to
//!    [`DetectSettings::max_fwhm_kms`] (a factor [`DetectSettings::width_step`]
//!    apart), `(flux - continuum) / sigma^2` is correlated with a unit Gaussian
//!    of that velocity width and divided by the kernel's weighted norm
//!    `sqrt(sum g^2 / sigma^2)`: the output is the S/N of a Gaussian line of
//!    that width centred at each pixel (and `num / den` its amplitude).
//!    Broad kernels run on the spectrum binned by an integer factor (sums of
//!    `r / sigma^2` and `1 / sigma^2`), keeping at least two bins per kernel
//!    sigma and a half and truncating kernels at [`KERNEL_HALF_SIGMAS`], so
//!    every width costs about the same.
//! 3. **Peaks and merging.** Peaks above [`DetectSettings::snr_threshold`] in
//!    emission (positive) and absorption (negative) at every width are pooled
//!    and taken strongest first. For each, the S/N that the features already
//!    accepted (same sign) put into its filter is subtracted, from the overlap
//!    of two Gaussians; it is kept only when the excess still reaches the
//!    threshold. So one line seen at several widths, and the wings of a broad
//!    line seen by narrow filters, count once, while a weaker line beside a
//!    strong one survives.
//! 4. **Fits.** Features whose profiles overlap are fitted together
//!    ([`crate::identify::fit::fit_gaussians`], one Gaussian each plus a local
//!    linear offset). A fitted width narrower than half the resolution marks a
//!    spike.
//!
//! [`flag_foreground`] and [`flag_sky_spectrum`] then mark features at
//! night-sky lines, inside telluric bands, or where the file's sky spectrum
//! peaks.

// Index loops over several parallel slices read more clearly than zipped
// iterators in this numerical code.
#![allow(clippy::needless_range_loop)]

use super::fit::{Component, FWHM_PER_SIGMA, FitOptions, Pixels, fit_gaussians};
use super::noise::median_in_place;
use super::{Feature, FeatureFlag, FeatureKind};
use crate::lines::{Catalogue, ForegroundKind};
use crate::physics::constants::C_KM_S;

/// Settings of the detector.
#[derive(Debug, Clone, PartialEq)]
pub struct DetectSettings {
    /// Matched-filter S/N a peak must reach.
    pub snr_threshold: f64,
    /// Instrumental FWHM, km/s; `None`: [`pixel_resolution_kms`] of the grid.
    pub resolution_kms: Option<f64>,
    /// Broadest line width searched (FWHM, km/s).
    pub max_fwhm_kms: f64,
    /// Ratio of successive filter widths (> 1).
    pub width_step: f64,
    /// Most features returned (strongest kept), spikes not counted.
    pub max_features: usize,
    /// Per-pixel S/N above which an isolated pixel (or pair) may be a spike.
    pub spike_snr: f64,
    /// Fitted S/N (flux / flux error) a feature must keep after its fit,
    /// as a fraction of `snr_threshold` (a free width and centre lower the
    /// S/N of the matched filter by a factor of about 1.2 to 1.5).
    pub fit_snr_fraction: f64,
    /// Look for emission features.
    pub emission: bool,
    /// Look for absorption features.
    pub absorption: bool,
}

impl Default for DetectSettings {
    fn default() -> Self {
        DetectSettings {
            snr_threshold: 5.0,
            resolution_kms: None,
            max_fwhm_kms: 10_000.0,
            width_step: 2.0,
            max_features: 60,
            spike_snr: 6.0,
            fit_snr_fraction: 0.5,
            emission: true,
            absorption: true,
        }
    }
}

/// Half-width of the matched-filter kernels, in kernel sigmas (the Gaussian
/// beyond holds 0.3 % of its weight).
pub const KERNEL_HALF_SIGMAS: f64 = 3.0;

/// Pixels per resolution element assumed when the resolution is not known
/// (spectra are usually sampled at 2 to 3 pixels per FWHM: common practice,
/// no source).
pub const PIXELS_PER_RESOLUTION: f64 = 2.5;

/// Median pixel width in km/s (`c * d lambda / lambda`), 0 for fewer than 2 pixels.
pub fn pixel_kms(wave: &[f64]) -> f64 {
    let mut dv: Vec<f64> = wave
        .windows(2)
        .filter(|w| w[0] > 0.0 && w[1] > w[0])
        .map(|w| C_KM_S * (w[1] - w[0]) / (0.5 * (w[0] + w[1])))
        .collect();
    if dv.is_empty() {
        0.0
    } else {
        median_in_place(&mut dv)
    }
}

/// Instrumental FWHM (km/s) assumed from the pixel grid alone:
/// [`PIXELS_PER_RESOLUTION`] x the median pixel width.
pub fn pixel_resolution_kms(wave: &[f64]) -> f64 {
    PIXELS_PER_RESOLUTION * pixel_kms(wave)
}

/// Instrumental FWHM (km/s) from the narrowest real lines: the lower
/// quartile of the FWHM of unflagged features with S/N >= 10, when there are
/// at least 3 of them and that is at least `0.6 x fallback` (narrower fits
/// are noise or spikes); otherwise `fallback` (e.g. [`pixel_resolution_kms`]).
pub fn resolution_from_lines(features: &[Feature], fallback: f64) -> f64 {
    let mut w: Vec<f64> = features
        .iter()
        .filter(|f| f.flag.is_none() && f.snr >= 10.0 && f.fwhm_kms.is_finite())
        .map(|f| f.fwhm_kms)
        .collect();
    if w.len() < 3 {
        return fallback;
    }
    w.sort_by(f64::total_cmp);
    let q = w[(w.len() - 1) / 4];
    if q >= 0.6 * fallback { q } else { fallback }
}

/// Peak finding on a sampled array, with the semantics of the usual
/// reference implementation (`find_peaks(y, height=h, distance=d)` of
/// scipy.signal): local maxima (a flat top counts once, at its middle,
/// rounding down), at least `height` high, then thinned so that no two are
/// closer than `distance` samples, the higher kept (ties: the later index
/// loses... as in the reference, by stable priority on height). Returns
/// indices in increasing order. Non-finite values never form peaks.
pub fn peaks(y: &[f64], height: f64, distance: usize) -> Vec<usize> {
    let n = y.len();
    let mut cand: Vec<usize> = Vec::new();
    if n < 3 {
        return cand;
    }
    let mut i = 1;
    while i < n - 1 {
        // A flat top's middle has the same value as its start, so testing
        // the height first selects the same peaks, faster.
        if y[i] >= height && y[i - 1] < y[i] && y[i].is_finite() {
            // Look ahead over a plateau.
            let mut ahead = i + 1;
            while ahead < n - 1 && y[ahead] == y[i] {
                ahead += 1;
            }
            if y[ahead] < y[i] {
                cand.push((i + ahead - 1) / 2);
                i = ahead;
                continue;
            }
        }
        i += 1;
    }
    if distance <= 1 || cand.len() < 2 {
        return cand;
    }
    // Thin by distance: highest first (stable sort on height), as the reference.
    let mut order: Vec<usize> = (0..cand.len()).collect();
    order.sort_by(|&a, &b| y[cand[a]].total_cmp(&y[cand[b]]));
    let mut keep = vec![true; cand.len()];
    for &k in order.iter().rev() {
        if !keep[k] {
            continue;
        }
        let p = cand[k];
        let mut j = k;
        while j > 0 && p - cand[j - 1] < distance {
            j -= 1;
            keep[j] = false;
        }
        let mut j = k + 1;
        while j < cand.len() && cand[j] - p < distance {
            keep[j] = false;
            j += 1;
        }
    }
    cand.into_iter()
        .zip(keep)
        .filter_map(|(c, k)| k.then_some(c))
        .collect()
}

/// The matched-filter S/N at every pixel for lines of one FWHM (km/s),
/// computed at full resolution (no binning). Used for display and checks;
/// [`find`] uses a binned equivalent. Pixels with `mask` false or
/// non-positive sigma have zero weight; where no weight falls under the
/// kernel the S/N is 0.
pub fn matched_filter(
    wave: &[f64],
    flux: &[f64],
    sigma: &[f64],
    mask: &[bool],
    continuum: &[f64],
    fwhm_kms: f64,
) -> Vec<f64> {
    let n = len_of(wave, flux, sigma, mask, continuum);
    let (num, den, _) = weighted_residuals(flux, sigma, mask, continuum, n, &[]);
    let dv = pixel_velocities(&wave[..n]);
    let grid = Grid::unbinned(&num, &den, &dv);
    let mut snr = vec![0.0; n];
    let mut amp = vec![0.0; n];
    grid.filter(fwhm_kms / FWHM_PER_SIGMA, &mut snr, &mut amp);
    snr
}

/// Detect and fit emission and absorption features. Returns features sorted
/// by wavelength; spikes are included with [`FeatureFlag::Spike`].
///
/// `wave` (vacuum Angstrom, increasing), `flux`, `sigma` (positive; see
/// [`crate::identify::noise::estimate`]), `mask` and `continuum` (see
/// [`crate::identify::continuum::fit`]) are per pixel; extra elements of
/// longer slices are ignored.
pub fn find(
    wave: &[f64],
    flux: &[f64],
    sigma: &[f64],
    mask: &[bool],
    continuum: &[f64],
    settings: &DetectSettings,
) -> Vec<Feature> {
    let n = len_of(wave, flux, sigma, mask, continuum);
    if n < 5 {
        return Vec::new();
    }
    let (wave, flux, sigma, mask, continuum) = (
        &wave[..n],
        &flux[..n],
        &sigma[..n],
        &mask[..n],
        &continuum[..n],
    );
    let dv = pixel_velocities(wave);
    let pix_kms = {
        let mut d = dv.clone();
        median_in_place(&mut d)
    };
    if pix_kms.is_nan() || pix_kms <= 0.0 {
        return Vec::new();
    }
    let res_kms = settings
        .resolution_kms
        .filter(|r| r.is_finite() && *r > 0.0)
        .unwrap_or(PIXELS_PER_RESOLUTION * pix_kms);

    // 1. Spikes.
    let mut out: Vec<Feature> = Vec::new();
    let spike_px = find_spikes(
        wave, flux, sigma, mask, continuum, &dv, res_kms, settings, &mut out,
    );

    // 2. Matched filter at each width.
    let (num, den, good) = weighted_residuals(flux, sigma, mask, continuum, n, &spike_px);
    let mut cands: Vec<Cand> = Vec::new();
    let step = if settings.width_step > 1.05 {
        settings.width_step
    } else {
        2.0
    };
    let mut fwhm = res_kms;
    let max_fwhm = settings.max_fwhm_kms.max(res_kms);
    let mut snr = Vec::with_capacity(n);
    let mut amp = Vec::with_capacity(n);
    let mut neg = Vec::with_capacity(n);
    let mut widths = 0;
    let base = Grid::unbinned(&num, &den, &dv);
    while fwhm <= max_fwhm * 1.0001 && widths < 24 {
        widths += 1;
        let sig_v = fwhm / FWHM_PER_SIGMA;
        let sig_pix = sig_v / pix_kms;
        let f = ((sig_pix / 1.5).floor() as usize).max(1);
        let binned;
        let grid = if f == 1 {
            &base
        } else {
            binned = Grid::binned(&num, &den, &dv, f);
            &binned
        };
        let nb = grid.len();
        snr.clear();
        snr.resize(nb, 0.0);
        amp.clear();
        amp.resize(nb, 0.0);
        grid.filter(sig_v, &mut snr, &mut amp);
        let dist = ((sig_pix / f as f64).round() as usize).max(1);
        for sign in [1.0f64, -1.0] {
            if (sign > 0.0 && !settings.emission) || (sign < 0.0 && !settings.absorption) {
                continue;
            }
            neg.clear();
            neg.extend(snr.iter().map(|v| sign * v));
            for b in peaks(&neg, settings.snr_threshold, dist) {
                // Parabolic refinement of the peak position.
                let (y0, y1, y2) = (neg[b - 1], neg[b], neg[b + 1]);
                let d = y0 - 2.0 * y1 + y2;
                let delta = if d < 0.0 {
                    (0.5 * (y0 - y2) / d).clamp(-0.5, 0.5)
                } else {
                    0.0
                };
                let x = grid.pos[b] + delta * f as f64;
                let lam = wave_at(wave, x);
                cands.push(Cand {
                    x,
                    lambda: lam,
                    sigma_a: sig_v / C_KM_S * lam,
                    fwhm_kms: fwhm,
                    snr: y1,
                    amp: amp[b],
                    sign,
                });
            }
        }
        fwhm *= step;
    }

    // 3. Merge across widths: strongest first.
    cands.sort_by(|a, b| b.snr.total_cmp(&a.snr));
    let all = cands.clone();
    let mut acc: Vec<Cand> = Vec::new();
    for c in cands {
        // What the accepted features of the same sign already put into this
        // candidate's filter (see `explained_snr`): only the excess counts.
        let mut explained = 0.0;
        let mut dup = false;
        for a in acc.iter().filter(|a| a.sign == c.sign) {
            if (a.lambda - c.lambda).abs() < 0.5 * a.sigma_a.max(c.sigma_a) {
                dup = true;
                break;
            }
            explained += explained_snr(a, &c);
        }
        let excess = c.snr - explained;
        if !dup && excess >= settings.snr_threshold && c.snr >= 1.3 * explained {
            // A broad peak that narrower filters see as separate lines is a
            // blend: keep the lines instead.
            if let Some(parts) = blend_parts(&c, &all, settings.snr_threshold, res_kms) {
                for p in parts {
                    let taken = acc.iter().any(|a| {
                        a.sign == p.sign
                            && (a.lambda - p.lambda).abs() < 0.5 * a.sigma_a.max(p.sigma_a)
                    });
                    if !taken {
                        acc.push(p);
                    }
                }
                continue;
            }
            acc.push(c);
            if acc.len() >= settings.max_features {
                break;
            }
        }
    }
    acc.sort_by(|a, b| a.lambda.total_cmp(&b.lambda));

    // 4. Fit groups of overlapping features.
    let mut fitted: Vec<Feature> = Vec::new();
    let mut i = 0;
    while i < acc.len() {
        let mut j = i + 1;
        while j < acc.len()
            && j - i < 4
            && acc[j].lambda - acc[j - 1].lambda < 3.0 * (acc[j].sigma_a + acc[j - 1].sigma_a)
        {
            j += 1;
        }
        fit_group(
            wave,
            flux,
            sigma,
            &good,
            continuum,
            &dv,
            &acc[i..j],
            res_kms,
            settings,
            &mut fitted,
        );
        i = j;
    }
    // Two fits may converge on one line: keep the stronger.
    fitted.sort_by(|a, b| b.snr.total_cmp(&a.snr));
    let mut kept: Vec<Feature> = Vec::with_capacity(fitted.len());
    for f in fitted {
        let sig_a = f.fwhm_kms / FWHM_PER_SIGMA / C_KM_S * f.wavelength;
        let dup = kept.iter().any(|k| {
            let sk = k.fwhm_kms / FWHM_PER_SIGMA / C_KM_S * k.wavelength;
            k.kind == f.kind && (k.wavelength - f.wavelength).abs() < 0.5 * sk.min(sig_a)
        });
        if !dup {
            kept.push(f);
        }
    }
    out.extend(kept);
    out.sort_by(|a, b| a.wavelength.total_cmp(&b.wavelength));
    out
}

/// Flag features at night-sky lines ([`FeatureFlag::Sky`]) and absorption
/// features inside telluric bands ([`FeatureFlag::Telluric`]), from
/// `catalogue.foreground` (observed frame, vacuum Angstrom).
///
/// `resolution_kms` is the instrumental FWHM in km/s. A sky line matches a
/// feature no broader than 3 resolution elements whose centre lies within
/// `max(0.75 FWHM_res, 3 x centre error)` of the line (or of a sky interval
/// `[lo, hi]`); a telluric band at least [`super::grid::TELLURIC_ABSORB_MIN`]
/// strong matches an absorption feature whose centre
/// lies inside `[lo, hi]` widened by half a resolution element. Features
/// already flagged (e.g. spikes) are left alone.
pub fn flag_foreground(features: &mut [Feature], catalogue: &Catalogue, resolution_kms: f64) {
    let res = if resolution_kms.is_finite() && resolution_kms > 0.0 {
        resolution_kms
    } else {
        0.0
    };
    for f in features.iter_mut() {
        if f.flag.is_some() {
            continue;
        }
        let res_a = res / C_KM_S * f.wavelength;
        let err = if f.wavelength_err.is_finite() {
            f.wavelength_err
        } else {
            0.0
        };
        let tol = (0.75 * res_a).max(3.0 * err);
        let narrow = res <= 0.0 || f.fwhm_kms <= 3.0 * res;
        let pad = tol.max(0.5 * res_a);
        for fg in catalogue.foreground_near(f.wavelength, f.wavelength, pad) {
            match fg.kind {
                ForegroundKind::Sky => {
                    if narrow && f.wavelength >= fg.lo - tol && f.wavelength <= fg.hi + tol {
                        f.flag = Some(FeatureFlag::Sky);
                        break;
                    }
                }
                ForegroundKind::Telluric => {
                    let half = 0.5 * res_a;
                    if f.kind == FeatureKind::Absorption
                        && super::grid::is_absorbing_band(fg)
                        && f.wavelength >= fg.lo - half
                        && f.wavelength <= fg.hi + half
                    {
                        f.flag = Some(FeatureFlag::Telluric);
                        break;
                    }
                }
            }
        }
    }
}

/// Flag ([`FeatureFlag::Sky`]) narrow features (FWHM up to 3 resolution
/// elements) that sit where the file's own sky spectrum is strongly peaked:
/// within `max(FWHM_res, 3 x centre error)` of the centre, the sky rises
/// above its local median (over +-25 pixels) by more than 5 robust sigma of
/// its local scatter and by more than 30 % of that median. Such features are
/// probably sky-subtraction residuals. Features already flagged are left
/// alone; `wave`, `sky` and `mask` are per pixel.
pub fn flag_sky_spectrum(
    features: &mut [Feature],
    wave: &[f64],
    sky: &[f64],
    mask: &[bool],
    resolution_kms: f64,
) {
    let n = wave.len().min(sky.len()).min(mask.len());
    if n < 5 {
        return;
    }
    let mut local: Vec<f64> = Vec::with_capacity(64);
    for f in features.iter_mut() {
        if f.flag.is_some() {
            continue;
        }
        let res_a = resolution_kms.max(0.0) / C_KM_S * f.wavelength;
        if resolution_kms > 0.0 && f.fwhm_kms > 3.0 * resolution_kms {
            continue;
        }
        let tol = res_a.max(3.0 * f.wavelength_err.max(0.0));
        let c = wave[..n].partition_point(|&w| w < f.wavelength).min(n - 1);
        let lo = c.saturating_sub(25);
        let hi = (c + 26).min(n);
        local.clear();
        local.extend(
            (lo..hi)
                .filter(|&i| mask[i] && sky[i].is_finite())
                .map(|i| sky[i]),
        );
        if local.len() < 10 {
            continue;
        }
        let med = median_in_place(&mut local);
        for v in local.iter_mut() {
            *v = (*v - med).abs();
        }
        let scatter = median_in_place(&mut local) / 0.6745;
        let peaked = (lo..hi).any(|i| {
            mask[i]
                && sky[i].is_finite()
                && (wave[i] - f.wavelength).abs() <= tol
                && sky[i] - med > 5.0 * scatter
                && sky[i] - med > 0.3 * med.abs()
        });
        if peaked {
            f.flag = Some(FeatureFlag::Sky);
        }
    }
}

/// A peak of the matched filter at one width.
#[derive(Debug, Clone, Copy)]
struct Cand {
    /// Fractional pixel index.
    x: f64,
    lambda: f64,
    /// Gaussian sigma of the filter width, Angstrom at `lambda`.
    sigma_a: f64,
    fwhm_kms: f64,
    snr: f64,
    amp: f64,
    sign: f64,
}

/// The narrower-filter peaks that split candidate `c` into a blend: at one
/// narrower width, at least two peaks of the same sign within `1.5` sigmas
/// of `c`, each of S/N at least `max(threshold, 0.3 c.snr)`, pairwise at
/// least `2.5` filter sigmas apart. A single Gaussian line gives one peak
/// at every narrower width, so two such peaks are two lines. The width with
/// most peaks (then the highest summed S/N) wins; `None` when no width
/// qualifies or `c` is broader than 4.5 resolution elements.
fn blend_parts(c: &Cand, all: &[Cand], threshold: f64, res_kms: f64) -> Option<Vec<Cand>> {
    // Only narrow blends: a broad line (a quasar's) is one line even where
    // noise dents it.
    if c.fwhm_kms > 4.5 * res_kms {
        return None;
    }
    let floor = threshold.max(0.3 * c.snr);
    let mut best: Option<Vec<Cand>> = None;
    let mut widths: Vec<f64> = all
        .iter()
        .filter(|p| p.fwhm_kms < 0.99 * c.fwhm_kms)
        .map(|p| p.fwhm_kms)
        .collect();
    widths.sort_by(f64::total_cmp);
    widths.dedup();
    for w in widths {
        let mut parts: Vec<Cand> = all
            .iter()
            .filter(|p| {
                p.fwhm_kms == w
                    && p.sign == c.sign
                    && p.snr >= floor
                    && (p.lambda - c.lambda).abs() < 1.5 * c.sigma_a
            })
            .copied()
            .collect();
        if parts.len() < 2 {
            continue;
        }
        parts.sort_by(|a, b| a.lambda.total_cmp(&b.lambda));
        let apart = parts
            .windows(2)
            .all(|q| q[1].lambda - q[0].lambda >= 2.5 * q[0].sigma_a);
        if !apart {
            continue;
        }
        parts.truncate(4);
        let better = match &best {
            None => true,
            Some(b) => {
                parts.len() > b.len()
                    || (parts.len() == b.len()
                        && parts.iter().map(|p| p.snr).sum::<f64>()
                            > b.iter().map(|p| p.snr).sum::<f64>())
            }
        };
        if better {
            best = Some(parts);
        }
    }
    best
}

/// The matched-filter S/N that an accepted Gaussian feature `a` produces in
/// the filter of candidate `c` (its width and position), for locally
/// uniform noise: `snr_a * sqrt(2 sa sc / (sa^2 + sc^2)) * exp(-d^2 / (2 (sa^2 + sc^2)))`,
/// from the overlap integral of two Gaussians (common practice, no source).
fn explained_snr(a: &Cand, c: &Cand) -> f64 {
    let (sa, sc) = (a.sigma_a, c.sigma_a);
    let q = sa * sa + sc * sc;
    if q <= 0.0 {
        return 0.0;
    }
    let d = a.lambda - c.lambda;
    a.snr * (2.0 * sa * sc / q).sqrt() * (-0.5 * d * d / q).exp()
}

/// Shortest of the per-pixel slices.
fn len_of(wave: &[f64], flux: &[f64], sigma: &[f64], mask: &[bool], cont: &[f64]) -> usize {
    wave.len()
        .min(flux.len())
        .min(sigma.len())
        .min(mask.len())
        .min(cont.len())
}

/// Per-pixel `r / sigma^2`, `1 / sigma^2` (0 for unusable pixels and
/// `exclude`d ones) and the usable-pixel mask.
fn weighted_residuals(
    flux: &[f64],
    sigma: &[f64],
    mask: &[bool],
    cont: &[f64],
    n: usize,
    exclude: &[usize],
) -> (Vec<f64>, Vec<f64>, Vec<bool>) {
    let mut num = vec![0.0; n];
    let mut den = vec![0.0; n];
    let mut good = vec![false; n];
    for i in 0..n {
        let s = sigma[i];
        if mask[i] && flux[i].is_finite() && cont[i].is_finite() && s.is_finite() && s > 0.0 {
            let w = 1.0 / (s * s);
            num[i] = (flux[i] - cont[i]) * w;
            den[i] = w;
            good[i] = true;
        }
    }
    for &i in exclude {
        if i < n {
            num[i] = 0.0;
            den[i] = 0.0;
            good[i] = false;
        }
    }
    (num, den, good)
}

/// Velocity width of each pixel, km/s (centred differences; one-sided at the ends).
fn pixel_velocities(wave: &[f64]) -> Vec<f64> {
    let n = wave.len();
    let mut dv = vec![0.0; n];
    if n < 2 {
        return dv;
    }
    for i in 0..n {
        let (a, b) = if i == 0 {
            (0, 1)
        } else if i == n - 1 {
            (n - 2, n - 1)
        } else {
            (i - 1, i + 1)
        };
        let span = (b - a) as f64;
        let w = wave[i].abs().max(f64::MIN_POSITIVE);
        dv[i] = (C_KM_S * (wave[b] - wave[a]) / (span * w)).abs();
    }
    dv
}

/// Wavelength at a fractional pixel index.
fn wave_at(wave: &[f64], x: f64) -> f64 {
    let n = wave.len();
    if x <= 0.0 {
        return wave[0];
    }
    let i = x.floor() as usize;
    if i + 1 >= n {
        return wave[n - 1];
    }
    let t = x - i as f64;
    wave[i] + t * (wave[i + 1] - wave[i])
}

/// The (possibly binned) grid the matched filter runs on.
struct Grid {
    num: Vec<f64>,
    den: Vec<f64>,
    /// Velocity width of one bin, km/s.
    dv: Vec<f64>,
    /// Fractional pixel index of each bin's centre.
    pos: Vec<f64>,
}

impl Grid {
    fn unbinned(num: &[f64], den: &[f64], dv: &[f64]) -> Grid {
        Grid {
            num: num.to_vec(),
            den: den.to_vec(),
            dv: dv.to_vec(),
            pos: (0..num.len()).map(|i| i as f64).collect(),
        }
    }

    fn binned(num: &[f64], den: &[f64], dv: &[f64], f: usize) -> Grid {
        let n = num.len();
        let nb = n.div_ceil(f);
        let mut g = Grid {
            num: Vec::with_capacity(nb),
            den: Vec::with_capacity(nb),
            dv: Vec::with_capacity(nb),
            pos: Vec::with_capacity(nb),
        };
        for b in 0..nb {
            let lo = b * f;
            let hi = (lo + f).min(n);
            let (mut sn, mut sd, mut sv) = (0.0, 0.0, 0.0);
            for i in lo..hi {
                sn += num[i];
                sd += den[i];
                sv += dv[i];
            }
            g.num.push(sn);
            g.den.push(sd);
            // A bin of k pixels spans k pixel widths (a partial last bin too).
            g.dv.push(sv);
            g.pos.push(0.5 * (lo + hi - 1) as f64);
        }
        g
    }

    fn len(&self) -> usize {
        self.num.len()
    }

    /// Matched-filter S/N and amplitude for Gaussian sigma `sig_v` km/s.
    fn filter(&self, sig_v: f64, snr: &mut [f64], amp: &mut [f64]) {
        let nb = self.len();
        const CHUNK: usize = 32;
        let mut kern: Vec<f64> = Vec::new();
        let mut kern2: Vec<f64> = Vec::new();
        let mut start = 0;
        while start < nb {
            let end = (start + CHUNK).min(nb);
            let mid = (start + end) / 2;
            // Bin width in km/s near the chunk centre (median of three).
            let mut w3 = [self.dv[start], self.dv[mid.min(nb - 1)], self.dv[end - 1]];
            w3.sort_by(f64::total_cmp);
            let bin_kms = w3[1].max(f64::MIN_POSITIVE);
            let sb = (sig_v / bin_kms).max(0.3);
            let half = ((KERNEL_HALF_SIGMAS * sb).ceil() as usize).max(1);
            kern.clear();
            kern2.clear();
            for j in 0..=2 * half {
                let z = (j as f64 - half as f64) / sb;
                let g = (-0.5 * z * z).exp();
                kern.push(g);
                kern2.push(g * g);
            }
            for b in start..end {
                let lo = b.saturating_sub(half);
                let hi = (b + half + 1).min(nb);
                let k0 = lo + half - b;
                let len = hi - lo;
                let (s1, s2) = dot2(
                    &kern[k0..k0 + len],
                    &kern2[k0..k0 + len],
                    &self.num[lo..hi],
                    &self.den[lo..hi],
                );
                if s2 > 0.0 {
                    snr[b] = s1 / s2.sqrt();
                    amp[b] = s1 / s2;
                } else {
                    snr[b] = 0.0;
                    amp[b] = 0.0;
                }
            }
            start = end;
        }
    }
}

/// `(sum k * x, sum k2 * y)` over equal-length slices, in four lanes so the
/// compiler can use vector instructions.
fn dot2(k: &[f64], k2: &[f64], x: &[f64], y: &[f64]) -> (f64, f64) {
    let n = k.len().min(k2.len()).min(x.len()).min(y.len());
    let (k, k2, x, y) = (&k[..n], &k2[..n], &x[..n], &y[..n]);
    let (mut a, mut b) = ([0.0f64; 4], [0.0f64; 4]);
    let kc = k.chunks_exact(4);
    let k2c = k2.chunks_exact(4);
    let xc = x.chunks_exact(4);
    let yc = y.chunks_exact(4);
    let (kr, k2r, xr, yr) = (
        kc.remainder(),
        k2c.remainder(),
        xc.remainder(),
        yc.remainder(),
    );
    for (((kk, kk2), xx), yy) in kc.zip(k2c).zip(xc).zip(yc) {
        for l in 0..4 {
            a[l] += kk[l] * xx[l];
            b[l] += kk2[l] * yy[l];
        }
    }
    let (mut s1, mut s2) = ((a[0] + a[1]) + (a[2] + a[3]), (b[0] + b[1]) + (b[2] + b[3]));
    for j in 0..kr.len() {
        s1 += kr[j] * xr[j];
        s2 += k2r[j] * yr[j];
    }
    (s1, s2)
}

/// Find and report isolated one- and two-pixel spikes; returns their pixels.
#[allow(clippy::too_many_arguments)]
fn find_spikes(
    wave: &[f64],
    flux: &[f64],
    sigma: &[f64],
    mask: &[bool],
    cont: &[f64],
    dv: &[f64],
    res_kms: f64,
    settings: &DetectSettings,
    out: &mut Vec<Feature>,
) -> Vec<usize> {
    let n = wave.len();
    let ok = |i: usize| {
        mask[i]
            && flux[i].is_finite()
            && cont[i].is_finite()
            && sigma[i].is_finite()
            && sigma[i] > 0.0
    };
    let r = |i: usize| flux[i] - cont[i];
    let mut pix = Vec::new();
    let mut i = 1;
    while i + 1 < n {
        if !(ok(i - 1) && ok(i) && ok(i + 1)) {
            i += 1;
            continue;
        }
        let s = r(i) / sigma[i];
        if s.abs() < settings.spike_snr {
            i += 1;
            continue;
        }
        let sign = s.signum();
        // Resolution in pixels here and what a line would put next door.
        let fwhm_pix = (res_kms / dv[i].max(f64::MIN_POSITIVE)).max(1.0);
        let k = 4.0 * std::f64::consts::LN_2 / (fwhm_pix * fwhm_pix);
        let next_frac = (-k).exp();
        let lim1 = (0.5 * next_frac).min(0.3);
        let a = sign * r(i);
        let left = sign * r(i - 1);
        let right = sign * r(i + 1);
        // One pixel: both neighbours far below what a resolved line gives.
        if left < lim1 * a && right < lim1 * a {
            out.push(spike_feature(wave, flux, sigma, cont, dv, &[i]));
            pix.push(i);
            i += 2;
            continue;
        }
        // Two pixels: i and i+1 both high, outer neighbours low.
        if i + 2 < n && ok(i + 2) && right >= lim1 * a {
            let lim2 = (0.5 * (-k * 2.25).exp() / (-k * 0.25).exp()).min(0.2);
            let b = right;
            let inner = a.min(b);
            let outer_l = left;
            let outer_r = sign * r(i + 2);
            let s2 = (a + b) / (sigma[i] * sigma[i] + sigma[i + 1] * sigma[i + 1]).sqrt();
            if inner > 0.0
                && outer_l < lim2 * inner
                && outer_r < lim2 * inner
                && s2 >= settings.spike_snr
            {
                out.push(spike_feature(wave, flux, sigma, cont, dv, &[i, i + 1]));
                pix.push(i);
                pix.push(i + 1);
                i += 3;
                continue;
            }
        }
        i += 1;
    }
    pix
}

/// A [`FeatureFlag::Spike`] feature made of the given pixels (no fit).
fn spike_feature(
    wave: &[f64],
    flux: &[f64],
    sigma: &[f64],
    cont: &[f64],
    dv: &[f64],
    px: &[usize],
) -> Feature {
    let (mut fl, mut var, mut wsum, mut xw, mut peak) = (0.0, 0.0, 0.0, 0.0, 0.0f64);
    let mut kms = 0.0;
    for &i in px {
        let dl = dv[i] / C_KM_S * wave[i];
        let r = flux[i] - cont[i];
        fl += r * dl;
        var += (sigma[i] * dl).powi(2);
        wsum += r.abs();
        xw += r.abs() * wave[i];
        if r.abs() > peak.abs() {
            peak = r;
        }
        kms += dv[i];
    }
    let centre = if wsum > 0.0 { xw / wsum } else { wave[px[0]] };
    let c = cont[px[0]];
    let flux_err = var.sqrt();
    let dl0 = dv[px[0]] / C_KM_S * wave[px[0]];
    Feature {
        wavelength: centre,
        wavelength_err: dl0 / 12f64.sqrt(),
        kind: if peak >= 0.0 {
            FeatureKind::Emission
        } else {
            FeatureKind::Absorption
        },
        snr: if flux_err > 0.0 {
            fl.abs() / flux_err
        } else {
            0.0
        },
        fwhm_kms: kms,
        amplitude: peak,
        flux: fl,
        flux_err,
        ew: if c > 0.0 { -fl / c } else { f64::NAN },
        flag: Some(FeatureFlag::Spike),
    }
}

/// Fit one group of overlapping candidates and append the kept features.
#[allow(clippy::too_many_arguments)]
fn fit_group(
    wave: &[f64],
    flux: &[f64],
    sigma: &[f64],
    good: &[bool],
    cont: &[f64],
    dv: &[f64],
    group: &[Cand],
    res_kms: f64,
    settings: &DetectSettings,
    out: &mut Vec<Feature>,
) {
    let n = wave.len();
    let lo_l = group
        .iter()
        .map(|c| c.lambda - 5.0 * c.sigma_a)
        .fold(f64::INFINITY, f64::min);
    let hi_l = group
        .iter()
        .map(|c| c.lambda + 5.0 * c.sigma_a)
        .fold(f64::NEG_INFINITY, f64::max);
    let mut lo = wave.partition_point(|&w| w < lo_l);
    let mut hi = wave.partition_point(|&w| w <= hi_l);
    // Five filter sigmas, at least 10 pixels, either side of each centre, and
    // enough pixels for the parameters.
    let xmin = group.iter().map(|c| c.x).fold(f64::INFINITY, f64::min);
    let xmax = group.iter().map(|c| c.x).fold(f64::NEG_INFINITY, f64::max);
    lo = lo.min((xmin.floor() as usize).saturating_sub(10));
    hi = hi.max(((xmax.ceil() as usize) + 11).min(n));
    let need = 3 * group.len() + 8;
    while hi - lo < need && (lo > 0 || hi < n) {
        lo = lo.saturating_sub(1);
        hi = (hi + 1).min(n);
    }
    let comps: Vec<Component> = group
        .iter()
        .map(|c| {
            Component::free(
                c.lambda,
                c.sigma_a,
                if c.amp != 0.0 { c.amp } else { c.sign },
            )
        })
        .collect();
    let npx = (lo..hi).filter(|&i| good[i]).count();
    let mid = ((lo + hi) / 2).min(n - 1);
    let pix_a = dv[mid].max(0.0) / C_KM_S * wave[mid];
    let opts = FitOptions {
        fit_slope: npx > 3 * group.len() + 24,
        min_sigma: Some(0.25 * pix_a),
        ..FitOptions::default()
    };
    let data = Pixels {
        wave,
        flux,
        sigma,
        mask: good,
        continuum: cont,
    };
    let mut res = fit_gaussians(&data, lo..hi, &comps, &opts);
    // A single feature broader than the resolution may be two narrow lines
    // blended: try two Gaussians, keep them when chi-square drops by more
    // than 25 (three more parameters: far beyond chance) and both survive.
    let mut split: Option<[Cand; 2]> = None;
    if let (Ok(r), [c]) = (&res, group) {
        let cf = r.components[0];
        let broad = cf.fwhm_kms > 1.4 * res_kms && cf.fwhm_kms < 5.0 * res_kms;
        if broad && cf.snr >= 2.0 * settings.snr_threshold {
            let two = [
                Component::free(
                    cf.centre - 0.8 * cf.sigma,
                    0.6 * cf.sigma,
                    0.7 * cf.amplitude,
                ),
                Component::free(
                    cf.centre + 0.8 * cf.sigma,
                    0.6 * cf.sigma,
                    0.7 * cf.amplitude,
                ),
            ];
            if let Ok(r2) = fit_gaussians(&data, lo..hi, &two, &opts) {
                let (a, b) = (r2.components[0], r2.components[1]);
                let min_sig = 0.4 * res_kms / FWHM_PER_SIGMA / C_KM_S * cf.centre;
                let ok = |x: &super::fit::ComponentFit| {
                    x.amplitude * c.sign > 0.0
                        && x.snr >= settings.fit_snr_fraction * settings.snr_threshold
                        && x.sigma >= min_sig
                        && x.centre_err.is_finite()
                };
                if r.chi2 - r2.chi2 > 25.0
                    && ok(&a)
                    && ok(&b)
                    && (a.centre - b.centre).abs() > a.sigma.max(b.sigma)
                {
                    let mk = |x: &super::fit::ComponentFit| Cand {
                        lambda: x.centre,
                        sigma_a: x.sigma,
                        ..*c
                    };
                    split = Some([mk(&a), mk(&b)]);
                    res = Ok(r2);
                }
            }
        }
    }
    let group: &[Cand] = match &split {
        Some(two) => two,
        None => group,
    };
    let min_snr = settings.fit_snr_fraction * settings.snr_threshold;
    match res {
        Ok(r) => {
            for (c, cf) in group.iter().zip(&r.components) {
                let same_sign = cf.amplitude * c.sign > 0.0;
                let near = (cf.centre - c.lambda).abs() < 2.0 * c.sigma_a + 2.0 * pix_a;
                let sane = cf.centre_err.is_finite() && cf.flux_err.is_finite() && cf.sigma > 0.0;
                if !(same_sign && near && sane) || cf.snr < min_snr {
                    continue;
                }
                let spike = cf.fwhm_kms < 0.5 * res_kms;
                out.push(Feature {
                    wavelength: cf.centre,
                    wavelength_err: cf.centre_err,
                    kind: if c.sign > 0.0 {
                        FeatureKind::Emission
                    } else {
                        FeatureKind::Absorption
                    },
                    snr: cf.snr,
                    fwhm_kms: cf.fwhm_kms,
                    amplitude: cf.amplitude,
                    flux: cf.flux,
                    flux_err: cf.flux_err,
                    ew: cf.ew,
                    flag: spike.then_some(FeatureFlag::Spike),
                });
            }
        }
        Err(_) => {
            // Degenerate fit: report the detection's own estimates.
            for c in group {
                let root2pi = (2.0 * std::f64::consts::PI).sqrt();
                let flux_v = c.amp * c.sigma_a * root2pi;
                let flux_err = if c.snr > 0.0 {
                    flux_v.abs() / c.snr
                } else {
                    f64::NAN
                };
                let ci = (c.x.round() as usize).min(n - 1);
                out.push(Feature {
                    wavelength: c.lambda,
                    wavelength_err: c.sigma_a * std::f64::consts::SQRT_2 / c.snr.max(1.0),
                    kind: if c.sign > 0.0 {
                        FeatureKind::Emission
                    } else {
                        FeatureKind::Absorption
                    },
                    snr: c.snr,
                    fwhm_kms: c.fwhm_kms,
                    amplitude: c.amp,
                    flux: flux_v,
                    flux_err,
                    ew: if cont[ci] > 0.0 {
                        -flux_v / cont[ci]
                    } else {
                        f64::NAN
                    },
                    flag: None,
                });
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn peaks_handles_plateaus_heights_and_distance() {
        let y = [0.0, 1.0, 3.0, 3.0, 1.0, 0.0, 2.0, 0.0, 5.0, 0.0];
        assert_eq!(peaks(&y, 0.0, 1), vec![2, 6, 8]);
        assert_eq!(peaks(&y, 2.5, 1), vec![2, 8]);
        assert_eq!(peaks(&y, 0.0, 3), vec![2, 8]);
    }

    #[test]
    fn tiny_and_empty_inputs_find_nothing() {
        let s = DetectSettings::default();
        assert!(find(&[], &[], &[], &[], &[], &s).is_empty());
        assert!(
            find(
                &[1.0, 2.0],
                &[1.0, 1.0],
                &[1.0; 2],
                &[true; 2],
                &[1.0; 2],
                &s
            )
            .is_empty()
        );
    }
}
