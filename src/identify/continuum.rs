//! A robust continuum that ignores lines: iteratively clipped running
//! quantiles in log-wavelength, at two scales.
//!
//! How [`fit`] works:
//! 1. The spectrum is cut into blocks of fixed velocity width
//!    ([`ContinuumSettings::block_kms`]) in `ln(lambda)`; each block gives
//!    one robust level (a quantile, the median by default, of its kept
//!    pixels). This decimation makes the whole fit O(n) per iteration.
//! 2. A running median of the block levels over
//!    [`ContinuumSettings::window_kms`] gives the *narrow* continuum, one over
//!    [`ContinuumSettings::broad_window_kms`] the *broad* one.
//! 3. Where the narrow continuum rises significantly above the broad one (a
//!    broad emission line being absorbed into the narrow window, e.g. quasar
//!    lines of 10,000 km/s) the broad continuum is used; elsewhere the narrow
//!    one, so stellar and quasar continuum shapes are followed.
//! 4. Block levels are interpolated linearly in `ln(lambda)` to every pixel.
//! 5. Pixels whose residual from that continuum, alone or averaged over a few
//!    neighbours, is above `+clip_high` or below `-clip_low` sigma are
//!    excluded (grown by a couple of pixels to take line wings), and the fit
//!    is repeated until the clip set stops changing or `iterations` is reached.
//!
//! Wavelength intervals in [`ContinuumSettings::exclude`] are never used
//! (for refits around a candidate's lines); the continuum there is
//! interpolated from the sides.

// Index loops over several parallel slices read more clearly than zipped
// iterators in this numerical code.
#![allow(clippy::needless_range_loop)]

use super::noise::{median_in_place, quantile_in_place};
use crate::physics::constants::C_KM_S;

/// Settings of the continuum fit.
#[derive(Debug, Clone, PartialEq)]
pub struct ContinuumSettings {
    /// Width of one block (the decimation step), km/s.
    pub block_kms: f64,
    /// Width of the narrow running window, km/s.
    pub window_kms: f64,
    /// Width of the broad running window, km/s (protects broad lines).
    pub broad_window_kms: f64,
    /// Quantile of each block's kept pixels (0.5 = median).
    pub quantile: f64,
    /// Clip pixels more than this many sigma above the continuum (emission).
    pub clip_high: f64,
    /// Clip pixels more than this many sigma below the continuum (absorption).
    pub clip_low: f64,
    /// Largest number of clip-and-refit iterations.
    pub iterations: usize,
    /// Half-width, pixels, of the residual average also used for clipping
    /// (catches low-contrast lines spread over many pixels). 0 disables.
    pub smooth_half_pixels: usize,
    /// Pixels added to each side of a clipped run.
    pub grow_pixels: usize,
    /// Use the broad continuum under significant broad excesses (step 3).
    pub adaptive: bool,
    /// Observed vacuum wavelength intervals `[lo, hi]` (Angstrom) never used.
    pub exclude: Vec<(f64, f64)>,
}

impl Default for ContinuumSettings {
    fn default() -> Self {
        ContinuumSettings {
            block_kms: 1500.0,
            window_kms: 7500.0,
            broad_window_kms: 36_000.0,
            quantile: 0.5,
            clip_high: 2.5,
            clip_low: 3.0,
            iterations: 5,
            smooth_half_pixels: 4,
            grow_pixels: 2,
            adaptive: true,
            exclude: Vec::new(),
        }
    }
}

/// One block of pixels.
#[derive(Debug, Clone, Copy)]
struct Block {
    start: usize,
    end: usize,
    /// Block centre in ln(lambda).
    u: f64,
}

/// Fit the continuum; returns one value per pixel (finite everywhere).
///
/// `wave` (vacuum Angstrom, strictly increasing), `flux`, `sigma` (1-sigma,
/// positive; see [`crate::identify::noise::estimate`]) and `mask` (true =
/// good) must have equal lengths; pixels beyond the shortest slice are
/// ignored and get the nearest continuum value. With no usable pixel at
/// all, the continuum is 0.
pub fn fit(
    wave: &[f64],
    flux: &[f64],
    sigma: &[f64],
    mask: &[bool],
    settings: &ContinuumSettings,
) -> Vec<f64> {
    let n_all = wave.len();
    let n = wave.len().min(flux.len()).min(sigma.len()).min(mask.len());
    let good: Vec<bool> = (0..n)
        .map(|i| {
            mask[i]
                && flux[i].is_finite()
                && wave[i].is_finite()
                && wave[i] > 0.0
                && sigma[i].is_finite()
                && sigma[i] > 0.0
        })
        .collect();
    let excluded: Vec<bool> = (0..n)
        .map(|i| {
            settings
                .exclude
                .iter()
                .any(|&(lo, hi)| wave[i] >= lo && wave[i] <= hi)
        })
        .collect();
    let mut out = vec![0.0; n_all];
    if !good.iter().any(|&g| g) {
        return out;
    }
    let blocks = make_blocks(wave, n, settings.block_kms.max(1.0));
    let nb = blocks.len();
    let block_dv = settings.block_kms.max(1.0);
    let h_narrow = ((settings.window_kms / block_dv - 1.0) / 2.0)
        .round()
        .max(0.0) as usize;
    let h_broad = ((settings.broad_window_kms / block_dv - 1.0) / 2.0)
        .round()
        .max(h_narrow as f64) as usize;

    let mut clipped = vec![false; n];
    let mut level: Vec<Option<f64>> = vec![None; nb];
    let mut level_err: Vec<f64> = vec![0.0; nb];
    let mut narrow: Vec<Option<f64>> = vec![None; nb];
    let mut broad: Vec<Option<f64>> = vec![None; nb];
    let mut scratch: Vec<f64> = Vec::with_capacity(64);
    let mut sscratch: Vec<f64> = Vec::with_capacity(64);
    let mut win: Vec<f64> = Vec::with_capacity(2 * h_broad + 1);
    let mut resid = vec![0.0; n];
    let mut var = vec![0.0; n];
    let iterations = settings.iterations.max(1);
    for it in 0..iterations {
        // 1. Block levels.
        for (b, blk) in blocks.iter().enumerate() {
            scratch.clear();
            sscratch.clear();
            for i in blk.start..blk.end {
                if good[i] && !excluded[i] && !clipped[i] {
                    scratch.push(flux[i]);
                    sscratch.push(sigma[i]);
                }
            }
            if scratch.len() >= 3 || (scratch.len() == blk.end - blk.start && !scratch.is_empty()) {
                let k = scratch.len() as f64;
                level[b] = Some(quantile_in_place(&mut scratch, settings.quantile));
                // Error of a median: 1.253 sigma / sqrt(n) (common practice, no source).
                level_err[b] = 1.253 * median_in_place(&mut sscratch) / k.sqrt();
            } else {
                level[b] = None;
            }
        }
        // 2. Running medians of the block levels.
        running_median(&level, h_narrow, &mut narrow, &mut win);
        running_median(&level, h_broad, &mut broad, &mut win);
        // 3. Combine.
        let mut node_u: Vec<f64> = Vec::with_capacity(nb);
        let mut node_v: Vec<f64> = Vec::with_capacity(nb);
        for b in 0..nb {
            let v = match (narrow[b], broad[b]) {
                (Some(cn), Some(cb)) if settings.adaptive => {
                    let e = level_err[b] / ((2 * h_narrow + 1) as f64).sqrt();
                    let thr = (4.0 * e).max(0.02 * cb.abs());
                    let d = cn - cb;
                    if d > thr && thr > 0.0 {
                        let w = ((d - thr) / thr).clamp(0.0, 1.0);
                        Some(cn - w * d)
                    } else {
                        Some(cn)
                    }
                }
                (Some(cn), _) => Some(cn),
                (None, Some(cb)) => Some(cb),
                (None, None) => None,
            };
            if let Some(v) = v {
                node_u.push(blocks[b].u);
                node_v.push(v);
            }
        }
        if node_u.is_empty() {
            // Everything clipped: fall back to the median of good pixels.
            let mut all: Vec<f64> = (0..n).filter(|&i| good[i]).map(|i| flux[i]).collect();
            let m = median_in_place(&mut all);
            out.iter_mut().for_each(|v| *v = m);
            return out;
        }
        // 4. Interpolate to pixels.
        interpolate(wave, n, &node_u, &node_v, &mut out);
        if it + 1 == iterations {
            break;
        }
        // 5. Clip.
        for i in 0..n {
            if good[i] {
                resid[i] = flux[i] - out[i];
                var[i] = sigma[i] * sigma[i];
            } else {
                resid[i] = 0.0;
                var[i] = 0.0;
            }
        }
        let changed = update_clips(&good, &resid, &var, settings, &mut clipped);
        if !changed {
            break;
        }
    }
    // Pixels beyond the shortest slice: nearest value.
    if n > 0 && n < n_all {
        let last = out[n - 1];
        out[n..].iter_mut().for_each(|v| *v = last);
    }
    out
}

/// Recompute the clip set from residuals; true when it changed.
fn update_clips(
    good: &[bool],
    resid: &[f64],
    var: &[f64],
    s: &ContinuumSettings,
    clipped: &mut [bool],
) -> bool {
    let n = good.len();
    // Prefix sums for the smoothed residual test.
    let h = s.smooth_half_pixels;
    let mut pr = Vec::with_capacity(n + 1);
    let mut pv = Vec::with_capacity(n + 1);
    pr.push(0.0);
    pv.push(0.0);
    for i in 0..n {
        pr.push(pr[i] + resid[i]);
        pv.push(pv[i] + var[i]);
    }
    let mut raw = vec![false; n];
    for i in 0..n {
        if !good[i] {
            continue;
        }
        let r = resid[i] / var[i].sqrt();
        let mut bad = r > s.clip_high || r < -s.clip_low;
        if !bad && h > 0 {
            let lo = i.saturating_sub(h);
            let hi = (i + h + 1).min(n);
            let sv = pv[hi] - pv[lo];
            if sv > 0.0 {
                let rs = (pr[hi] - pr[lo]) / sv.sqrt();
                bad = rs > s.clip_high || rs < -s.clip_low;
            }
        }
        raw[i] = bad;
    }
    let g = s.grow_pixels;
    let mut changed = false;
    let mut i = 0;
    let mut newc = vec![false; n];
    while i < n {
        if raw[i] {
            let lo = i.saturating_sub(g);
            let mut j = i;
            while j < n && raw[j] {
                j += 1;
            }
            let hi = (j + g).min(n);
            newc[lo..hi].iter_mut().for_each(|v| *v = true);
            i = j;
        } else {
            i += 1;
        }
    }
    for i in 0..n {
        if newc[i] != clipped[i] {
            changed = true;
        }
        clipped[i] = newc[i];
    }
    changed
}

/// Cut `wave[..n]` into contiguous blocks of `dv` km/s in ln(lambda), each
/// holding at least 5 pixels where possible.
fn make_blocks(wave: &[f64], n: usize, dv: f64) -> Vec<Block> {
    let du = dv / C_KM_S;
    let mut blocks = Vec::new();
    if n == 0 {
        return blocks;
    }
    let lnw = |i: usize| wave[i].max(f64::MIN_POSITIVE).ln();
    let mut start = 0usize;
    while start < n {
        let u0 = lnw(start);
        let mut end = start + 1;
        while end < n && (lnw(end) - u0 < du || end - start < 5) {
            end += 1;
        }
        // Avoid a runt last block: merge it into this one.
        if n - end < 3 {
            end = n;
        }
        let u = 0.5 * (lnw(start) + lnw(end - 1));
        blocks.push(Block { start, end, u });
        start = end;
    }
    blocks
}

/// Running median of the valid entries of `v` over `[b-h, b+h]`.
fn running_median(v: &[Option<f64>], h: usize, out: &mut [Option<f64>], win: &mut Vec<f64>) {
    let nb = v.len();
    for b in 0..nb {
        win.clear();
        let lo = b.saturating_sub(h);
        let hi = (b + h + 1).min(nb);
        win.extend(v[lo..hi].iter().flatten());
        out[b] = if win.is_empty() {
            None
        } else {
            Some(median_in_place(win))
        };
    }
}

/// Linear interpolation in ln(lambda) of nodes `(u, v)` to pixels; flat
/// beyond the end nodes.
fn interpolate(wave: &[f64], n: usize, u: &[f64], v: &[f64], out: &mut [f64]) {
    let mut k = 0usize;
    for i in 0..n {
        let x = wave[i].max(f64::MIN_POSITIVE).ln();
        while k + 1 < u.len() && u[k + 1] < x {
            k += 1;
        }
        out[i] = if x <= u[0] {
            v[0]
        } else if k + 1 >= u.len() {
            v[u.len() - 1]
        } else {
            let t = (x - u[k]) / (u[k + 1] - u[k]);
            v[k] + t.clamp(0.0, 1.0) * (v[k + 1] - v[k])
        };
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn constant_flux_gives_that_constant() {
        let w: Vec<f64> = (0..1000).map(|i| 4000.0 + 2.0 * i as f64).collect();
        let f = vec![3.5; 1000];
        let c = fit(
            &w,
            &f,
            &[0.1; 1000],
            &[true; 1000],
            &ContinuumSettings::default(),
        );
        assert!(c.iter().all(|&v| (v - 3.5).abs() < 1e-12));
    }

    #[test]
    fn all_masked_and_empty_inputs_do_not_panic() {
        let w: Vec<f64> = (0..10).map(|i| 4000.0 + i as f64).collect();
        let c = fit(
            &w,
            &[1.0; 10],
            &[1.0; 10],
            &[false; 10],
            &ContinuumSettings::default(),
        );
        assert_eq!(c, vec![0.0; 10]);
        assert!(fit(&[], &[], &[], &[], &ContinuumSettings::default()).is_empty());
    }
}
