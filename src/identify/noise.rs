//! Per-pixel noise: the file's own uncertainties checked against a robust
//! estimate, or the robust estimate alone when the file has none.
//!
//! The robust estimate is the median absolute deviation (MAD) of first
//! differences of the flux divided by `sqrt(2) * 0.6745`: for independent
//! Gaussian noise the difference of two pixels has standard deviation
//! `sqrt(2) sigma` and the MAD of a Gaussian is `0.6745` of its standard
//! deviation (common practice, no source). The signal of smooth continua and
//! of lines resolved over several pixels barely changes first differences,
//! so the estimate follows the noise, not the spectrum. It is computed in
//! windows of [`WINDOW`] pixels and interpolated, so noise that varies along
//! the spectrum (blue CCD response, sky lines) is followed.
//!
//! The main entry point is [`estimate`]; [`median_snr`] gives the median
//! continuum S/N once a continuum is known (see
//! [`crate::identify::continuum::fit`]).

// Index loops over several parallel slices read more clearly than zipped
// iterators in this numerical code.
#![allow(clippy::needless_range_loop)]

use super::Noise;

/// Pixels per window of the local robust estimate.
pub const WINDOW: usize = 200;

/// Below this ratio of robust to file errors, the file's errors look too
/// large (a warning is worth showing). Common practice, no source.
pub const RATIO_WARN_LOW: f64 = 0.67;

/// Above this ratio of robust to file errors, the file's errors look too
/// small. Common practice, no source.
pub const RATIO_WARN_HIGH: f64 = 1.5;

/// `0.6745`: the MAD of a unit Gaussian (its 75th percentile), rounded as in
/// common practice, no source.
const MAD_GAUSS: f64 = 0.674_489_750_196_081_7;

/// Per-pixel sigma and a noise summary.
///
/// * With `sigma = Some(errors)`: the file's errors are used where they are
///   finite and positive; elsewhere (on unmasked pixels) the robust local
///   estimate fills in. [`Noise::error_ratio`] is the robust / file ratio
///   (see [`error_ratio`]); `estimated` is false.
/// * With `sigma = None`: the robust local estimate; `estimated` is true.
///
/// [`Noise::median_snr`] is left at 0: it needs the continuum, so the caller
/// fills it with [`median_snr`] after fitting one.
///
/// The returned sigma is finite and positive everywhere (masked pixels get
/// the local estimate too), so callers may divide by it. Mismatched slice
/// lengths are treated as if the shorter one were padded with masked pixels.
pub fn estimate(flux: &[f64], sigma: Option<&[f64]>, mask: &[bool]) -> (Vec<f64>, Noise) {
    let n = flux.len();
    let robust = robust_sigma(flux, mask, WINDOW);
    match sigma {
        Some(file) => {
            let mut out = Vec::with_capacity(n);
            for i in 0..n {
                let s = file.get(i).copied().unwrap_or(f64::NAN);
                out.push(if s.is_finite() && s > 0.0 {
                    s
                } else {
                    robust[i]
                });
            }
            let ratio = error_ratio(flux, file, mask);
            (
                out,
                Noise {
                    median_snr: 0.0,
                    error_ratio: ratio,
                    estimated: false,
                },
            )
        }
        None => (
            robust,
            Noise {
                median_snr: 0.0,
                error_ratio: None,
                estimated: true,
            },
        ),
    }
}

/// True when an error ratio is far enough from 1 to warn about.
pub fn ratio_is_suspect(ratio: f64) -> bool {
    !(RATIO_WARN_LOW..=RATIO_WARN_HIGH).contains(&ratio)
}

/// The robust per-pixel sigma: MAD of first differences / (sqrt 2 x 0.6745)
/// in consecutive windows of `window` pixels (at least 20), linearly
/// interpolated between window centres. Differences are
/// taken between consecutive good pixels. Windows with too few good pixels
/// take the whole-spectrum value; the result is finite and positive
/// everywhere (floored at `1e-6` of the mean |flux|, or `1e-30`).
pub fn robust_sigma(flux: &[f64], mask: &[bool], window: usize) -> Vec<f64> {
    let n = flux.len();
    let window = window.max(20);
    // Differences between consecutive good pixels, placed at the later pixel.
    let mut pos: Vec<usize> = Vec::with_capacity(n);
    let mut diff: Vec<f64> = Vec::with_capacity(n);
    let mut last: Option<usize> = None;
    let (mut abs_sum, mut n_good) = (0.0, 0usize);
    for i in 0..n {
        if mask.get(i).copied().unwrap_or(false) && flux[i].is_finite() {
            abs_sum += flux[i].abs();
            n_good += 1;
            if let Some(j) = last {
                pos.push(i);
                diff.push(flux[i] - flux[j]);
            }
            last = Some(i);
        }
    }
    let floor = (1e-6 * abs_sum / n_good.max(1) as f64).max(1e-30);
    let mut scratch: Vec<f64> = Vec::with_capacity(window + 1);
    let global = {
        scratch.clear();
        scratch.extend_from_slice(&diff);
        mad_sigma(&mut scratch)
    }
    .unwrap_or(floor)
    .max(floor);
    if n == 0 {
        return Vec::new();
    }
    if diff.len() < 2 * window {
        return vec![global; n];
    }
    // Node estimates.
    let step = window;
    let mut nodes: Vec<(f64, f64)> = Vec::new();
    let mut start = 0usize;
    loop {
        let end = (start + window).min(n);
        let lo = pos.partition_point(|&p| p < start);
        let hi = pos.partition_point(|&p| p < end);
        scratch.clear();
        scratch.extend_from_slice(&diff[lo..hi]);
        let v = if hi - lo >= 20 {
            mad_sigma(&mut scratch).unwrap_or(global).max(floor)
        } else {
            global
        };
        nodes.push((0.5 * (start + end) as f64 - 0.5, v));
        if end == n {
            break;
        }
        start += step;
    }
    let mut out = Vec::with_capacity(n);
    let mut k = 0usize;
    for i in 0..n {
        let x = i as f64;
        while k + 1 < nodes.len() && nodes[k + 1].0 < x {
            k += 1;
        }
        let (x1, v1) = nodes[k];
        let v = if k + 1 < nodes.len() && x > x1 {
            let (x2, v2) = nodes[k + 1];
            v1 + (v2 - v1) * ((x - x1) / (x2 - x1)).clamp(0.0, 1.0)
        } else {
            v1
        };
        out.push(v);
    }
    out
}

/// Ratio of the robust noise to the file's errors: the MAD of the
/// normalised differences `(f[i+1] - f[i]) / sqrt(s[i]^2 + s[i+1]^2)` over
/// consecutive good pixels with valid errors, divided by 0.6745. It is 1 when
/// the errors are right, above 1 when they are too small. `None` with fewer
/// than 10 usable pairs.
pub fn error_ratio(flux: &[f64], sigma: &[f64], mask: &[bool]) -> Option<f64> {
    let n = flux.len().min(sigma.len()).min(mask.len());
    let mut d: Vec<f64> = Vec::with_capacity(n);
    let mut last: Option<usize> = None;
    for i in 0..n {
        let ok = mask[i] && flux[i].is_finite() && sigma[i].is_finite() && sigma[i] > 0.0;
        if !ok {
            continue;
        }
        if let Some(j) = last {
            let s = (sigma[i] * sigma[i] + sigma[j] * sigma[j]).sqrt();
            d.push((flux[i] - flux[j]) / s);
        }
        last = Some(i);
    }
    if d.len() < 10 {
        return None;
    }
    let med = median_in_place(&mut d);
    for v in d.iter_mut() {
        *v = (*v - med).abs();
    }
    Some(median_in_place(&mut d) / MAD_GAUSS)
}

/// Median continuum S/N per pixel: the median of `continuum / sigma` over
/// good pixels (unmasked, finite, positive sigma). 0 when there are none.
pub fn median_snr(continuum: &[f64], sigma: &[f64], mask: &[bool]) -> f64 {
    let n = continuum.len().min(sigma.len()).min(mask.len());
    let mut v: Vec<f64> = (0..n)
        .filter(|&i| mask[i] && continuum[i].is_finite() && sigma[i].is_finite() && sigma[i] > 0.0)
        .map(|i| continuum[i] / sigma[i])
        .collect();
    if v.is_empty() {
        0.0
    } else {
        median_in_place(&mut v)
    }
}

/// Sigma from the MAD of differences (reorders `d`). `None` when empty or 0.
fn mad_sigma(d: &mut [f64]) -> Option<f64> {
    if d.len() < 2 {
        return None;
    }
    let med = median_in_place(d);
    for v in d.iter_mut() {
        *v = (*v - med).abs();
    }
    let mad = median_in_place(d);
    let s = mad / (std::f64::consts::SQRT_2 * MAD_GAUSS);
    (s > 0.0 && s.is_finite()).then_some(s)
}

/// Half-width (pixels) of the window of the local flux level that the
/// systematic floor of [`with_floor`] is a share of.
const FLOOR_HALF_WINDOW: usize = 15;

/// `sigma` with a systematic floor added in quadrature: `share` of the local
/// flux level (the median of |flux| over good pixels within
/// [`FLOOR_HALF_WINDOW`]). Continuum models, flux calibration and line
/// profiles are good to a per cent or so, not to the photon noise of a
/// bright source; without a floor every such mismatch in a spectrum at S/N
/// in the hundreds is "significant" and votes as a line. Masked or
/// non-finite pixels keep their sigma.
pub fn with_floor(flux: &[f64], sigma: &[f64], mask: &[bool], share: f64) -> Vec<f64> {
    let n = flux.len();
    let mut out = sigma.to_vec();
    if share <= 0.0 {
        return out;
    }
    let mut win = Vec::with_capacity(2 * FLOOR_HALF_WINDOW + 1);
    for i in 0..n {
        if !mask[i] || !flux[i].is_finite() || !sigma[i].is_finite() {
            continue;
        }
        win.clear();
        let (a, b) = (
            i.saturating_sub(FLOOR_HALF_WINDOW),
            (i + FLOOR_HALF_WINDOW + 1).min(n),
        );
        win.extend(
            (a..b)
                .filter(|&k| mask[k] && flux[k].is_finite())
                .map(|k| flux[k].abs()),
        );
        let level = median_in_place(&mut win);
        out[i] = sigma[i].hypot(share * level);
    }
    out
}

/// Median of a slice (reorders it; NaN-free input expected; 0 when empty).
/// The mean of the two middle values for even lengths.
pub(crate) fn median_in_place(v: &mut [f64]) -> f64 {
    let n = v.len();
    if n == 0 {
        return 0.0;
    }
    let mid = n / 2;
    let (lower, m, _) = v.select_nth_unstable_by(mid, f64::total_cmp);
    let m = *m;
    if n % 2 == 1 {
        m
    } else {
        let lo = lower.iter().copied().fold(f64::NEG_INFINITY, f64::max);
        0.5 * (lo + m)
    }
}

/// The `q`-quantile (0..=1) of a slice by selection (reorders it; 0 when
/// empty); nearest rank.
pub(crate) fn quantile_in_place(v: &mut [f64], q: f64) -> f64 {
    let n = v.len();
    if n == 0 {
        return 0.0;
    }
    let k = ((q.clamp(0.0, 1.0) * (n - 1) as f64).round() as usize).min(n - 1);
    let (_, m, _) = v.select_nth_unstable_by(k, f64::total_cmp);
    *m
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn median_of_even_and_odd_lengths() {
        assert_eq!(median_in_place(&mut [3.0, 1.0, 2.0]), 2.0);
        assert_eq!(median_in_place(&mut [4.0, 1.0, 3.0, 2.0]), 2.5);
        assert_eq!(median_in_place(&mut []), 0.0);
    }

    #[test]
    fn flat_noiseless_flux_gets_a_small_positive_sigma() {
        let (s, n) = estimate(&[2.0; 50], None, &[true; 50]);
        assert!(n.estimated);
        assert!(s.iter().all(|&v| v > 0.0 && v < 1e-5));
    }

    #[test]
    fn all_masked_input_still_gives_finite_positive_sigma() {
        let (s, _) = estimate(&[f64::NAN; 10], None, &[false; 10]);
        assert!(s.iter().all(|&v| v.is_finite() && v > 0.0));
        let (s, _) = estimate(&[], None, &[]);
        assert!(s.is_empty());
    }

    #[test]
    fn the_floor_adds_a_share_of_the_local_level_in_quadrature() {
        // Flux 100 with sigma 0.1 (S/N 1000): a 2% floor makes sigma
        // hypot(0.1, 2) = 2.0025; a faint pixel keeps nearly its own.
        let mut flux = vec![100.0; 80];
        flux[70..].fill(1.0);
        let sigma = vec![0.1; 80];
        let mask = vec![true; 80];
        let out = with_floor(&flux, &sigma, &mask, 0.02);
        assert!((out[10] - 0.1f64.hypot(2.0)).abs() < 1e-12, "{}", out[10]);
        assert!((out[79] - 0.1f64.hypot(0.02)).abs() < 1e-12, "{}", out[79]);
        // A lone spike does not raise its own floor (the level is a median).
        flux[30] = 1e4;
        let out = with_floor(&flux, &sigma, &mask, 0.02);
        assert!((out[30] - 0.1f64.hypot(2.0)).abs() < 1e-12);
        // No floor, masked pixels: sigma unchanged.
        assert_eq!(with_floor(&flux, &sigma, &mask, 0.0), sigma);
        let mut masked = mask.clone();
        masked[5] = false;
        assert_eq!(with_floor(&flux, &sigma, &masked, 0.02)[5], 0.1);
    }
}
