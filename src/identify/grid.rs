//! The spectrum on a uniform log-wavelength grid, where a redshift is a shift:
//! resampling with inverse-variance bookkeeping, a two-scale robust continuum
//! (one window for narrow lines, a wide one that keeps broad quasar lines), and
//! matched-filter S/N maps for emission and absorption at several widths.
//!
//! Everything here is private to the identifier; the public per-pixel
//! products (sigma, continuum, features) come from the lower layers.

// Index loops over several parallel slices read more clearly than zipped
// iterators in this numerical code.
#![allow(clippy::needless_range_loop)]

use crate::lines::{Catalogue, ForegroundKind};
use crate::physics::constants::C_KM_S;

/// Narrow-line kernel FWHMs, km/s: from instrument-limited lines at R ~ 5000
/// up to unresolved lines at R ~ 200 and stellar Balmer cores.
pub(crate) const NARROW_FWHM_KMS: [f64; 4] = [100.0, 250.0, 600.0, 1400.0];
/// Broad-line kernel FWHMs, km/s (quasar broad-line region).
pub(crate) const BROAD_FWHM_KMS: [f64; 3] = [2500.0, 5000.0, 9000.0];
/// Continuum window for narrow lines, km/s.
const NARROW_WINDOW_KMS: f64 = 6000.0;
/// Continuum window for broad lines, km/s (broad lines need 10,000+ km/s).
const BROAD_WINDOW_KMS: f64 = 45_000.0;
/// Continuum window for stellar absorption, km/s: hot stars' Balmer lines
/// (FWHM up to a few thousand km/s, wider wings) would be followed by the
/// narrow window.
const STAR_WINDOW_KMS: f64 = 15_000.0;
/// Smallest and largest grid steps in ln(lambda).
const STEP_MIN: f64 = 0.7e-4;
const STEP_MAX: f64 = 3.5e-4;
/// Largest number of grid pixels.
const MAX_GRID: usize = 20_000;

/// Matched-filter maps on the log grid.
#[derive(Debug, Clone, Default)]
pub(crate) struct Maps {
    /// Best emission S/N over the narrow kernels (clamped at 0 below).
    pub em_narrow: Vec<f64>,
    /// Best absorption S/N (positive number) over the narrow kernels.
    pub ab_narrow: Vec<f64>,
    /// Best emission S/N over the broad kernels, narrow features removed.
    pub em_broad: Vec<f64>,
    /// Best absorption S/N over the broad kernels.
    pub ab_broad: Vec<f64>,
    /// Index into [`NARROW_FWHM_KMS`] of the best emission kernel.
    pub em_narrow_width: Vec<u8>,
    /// Index into [`NARROW_FWHM_KMS`] of the best absorption kernel.
    pub ab_narrow_width: Vec<u8>,
}

/// A spectrum resampled on a uniform ln(lambda) grid.
#[derive(Debug, Clone)]
pub(crate) struct LogGrid {
    /// ln(lambda) of pixel 0.
    pub x0: f64,
    /// Step in ln(lambda) (= velocity step / c).
    pub step: f64,
    /// Flux.
    pub flux: Vec<f64>,
    /// Inverse variance (0 = no information).
    pub ivar: Vec<f64>,
    /// Continuum following everything but narrow features.
    pub cont_narrow: Vec<f64>,
    /// Continuum that keeps broad lines out.
    pub cont_broad: Vec<f64>,
    /// Continuum for stellar absorption lines.
    pub cont_star: Vec<f64>,
    /// Matched-filter maps.
    pub maps: Maps,
}

impl LogGrid {
    /// Number of pixels.
    pub fn len(&self) -> usize {
        self.flux.len()
    }

    /// Fractional grid index of ln(lambda) `x`.
    pub fn index_of(&self, x: f64) -> f64 {
        (x - self.x0) / self.step
    }

    /// Linear interpolation of `a` at fractional index `t` (0 outside).
    pub fn sample(a: &[f64], t: f64) -> f64 {
        if t.is_nan() || t < 0.0 || t > (a.len() - 1) as f64 {
            return 0.0;
        }
        let i = t.floor() as usize;
        if i + 1 >= a.len() {
            return a[a.len() - 1];
        }
        let f = t - i as f64;
        a[i] * (1.0 - f) + a[i + 1] * f
    }

    /// ln(lambda) range covered by usable pixels.
    pub fn good_range(&self) -> Option<(f64, f64)> {
        let first = self.ivar.iter().position(|&w| w > 0.0)?;
        let last = self.ivar.iter().rposition(|&w| w > 0.0)?;
        Some((
            self.x0 + first as f64 * self.step,
            self.x0 + last as f64 * self.step,
        ))
    }
}

/// Median of the positive native ln-steps.
fn native_step(wave: &[f64]) -> f64 {
    let mut d: Vec<f64> = wave
        .windows(2)
        .map(|w| (w[1] / w[0]).ln())
        .filter(|v| *v > 0.0 && v.is_finite())
        .collect();
    if d.is_empty() {
        return STEP_MIN;
    }
    let m = d.len() / 2;
    d.select_nth_unstable_by(m, f64::total_cmp);
    d[m]
}

/// Pixels to ignore: masked, non-positive sigma, single-pixel spikes, and
/// the neighbourhood of night-sky lines, telluric bands. Returns the native
/// inverse variance.
pub(crate) fn native_ivar(
    wave: &[f64],
    flux: &[f64],
    sigma: &[f64],
    mask: &[bool],
    catalogue: &Catalogue,
) -> Vec<f64> {
    let n = wave.len();
    let mut ivar: Vec<f64> = (0..n)
        .map(|i| {
            let s = sigma[i];
            if mask[i] && s.is_finite() && s > 0.0 && flux[i].is_finite() {
                1.0 / (s * s)
            } else {
                0.0
            }
        })
        .collect();
    // Cosmic rays: one pixel far above both neighbours, which are not raised
    // with it. A real line is at least ~2 pixels wide, so its neighbours
    // carry at least a third of its peak.
    for i in 1..n.saturating_sub(1) {
        if ivar[i] == 0.0 {
            continue;
        }
        let base = 0.5 * (flux[i - 1] + flux[i + 1]);
        let up = flux[i] - base;
        let s = sigma[i];
        if up > 6.0 * s {
            let l = flux[i - 1] - flux[i.saturating_sub(2)].min(flux[i - 1]);
            let r = flux[i + 1] - flux[(i + 2).min(n - 1)].min(flux[i + 1]);
            if l < 0.25 * up && r < 0.25 * up {
                ivar[i] = 0.0;
            }
        }
    }
    // Night-sky lines: residuals of sky subtraction sit at fixed observed
    // wavelengths and must never vote; give those pixels no weight.
    if n >= 2 {
        let pad_of = |lam: f64| -> f64 {
            let j = wave.partition_point(|&w| w < lam).clamp(1, n - 1);
            2.5 * (wave[j] - wave[j - 1])
        };
        // Telluric bands at least `TELLURIC_ABSORB_MIN` strong too:
        // absorption there is the atmosphere's, and a band pulls any local
        // continuum down so that its edges look like emission. (Keeping the
        // weight of the bands, or of the broad water bands only, for
        // galaxies' narrow emission lines was tried: band edges and the
        // weaker night-sky lines there then made false lines in smooth and
        // noise-only spectra, and the bench lost more than it gained.)
        for f in catalogue.foreground.iter().filter(|f| {
            (f.kind == ForegroundKind::Sky && f.strength >= 0.2) || is_absorbing_band(f)
        }) {
            let pad = if f.kind == ForegroundKind::Sky {
                pad_of(f.lo).max(1.5)
            } else {
                pad_of(f.lo)
            };
            let lo = f.lo - pad;
            let hi = f.hi + pad;
            if hi < wave[0] || lo > wave[n - 1] {
                continue;
            }
            let a = wave.partition_point(|&w| w < lo);
            let b = wave.partition_point(|&w| w <= hi);
            for v in &mut ivar[a..b] {
                *v = 0.0;
            }
        }
    }
    ivar
}

/// Resample native pixels onto a log grid (overlap-weighted; the information
/// of each native pixel is shared among the grid bins it overlaps).
pub(crate) fn resample(wave: &[f64], flux: &[f64], ivar: &[f64]) -> Option<LogGrid> {
    let n = wave.len();
    if n < 16 || wave[0] <= 0.0 {
        return None;
    }
    let span = (wave[n - 1] / wave[0]).ln();
    let mut step = native_step(wave).clamp(STEP_MIN, STEP_MAX);
    if span / step > MAX_GRID as f64 {
        step = span / MAX_GRID as f64;
    }
    // Native pixel edges in ln(lambda).
    let lw: Vec<f64> = wave.iter().map(|w| w.ln()).collect();
    let mut edges = Vec::with_capacity(n + 1);
    edges.push(lw[0] - 0.5 * (lw[1] - lw[0]));
    for i in 0..n - 1 {
        edges.push(0.5 * (lw[i] + lw[i + 1]));
    }
    edges.push(lw[n - 1] + 0.5 * (lw[n - 1] - lw[n - 2]));
    let x0 = edges[0] + 0.5 * step;
    let m = (((edges[n] - edges[0]) / step).floor() as usize).max(1);
    let mut num = vec![0.0; m];
    let mut wsum = vec![0.0; m];
    let mut info = vec![0.0; m];
    for i in 0..n {
        let (a, b) = (edges[i], edges[i + 1]);
        let width = b - a;
        if width <= 0.0 || ivar[i] <= 0.0 {
            continue;
        }
        let ja = (((a - edges[0]) / step).floor().max(0.0)) as usize;
        let jb = ((((b - edges[0]) / step).floor()) as usize).min(m - 1);
        for j in ja..=jb {
            let lo = edges[0] + j as f64 * step;
            let hi = lo + step;
            let o = (b.min(hi) - a.max(lo)).max(0.0);
            if o <= 0.0 {
                continue;
            }
            let frac = o / width;
            num[j] += frac * ivar[i] * flux[i];
            wsum[j] += frac * ivar[i];
            info[j] += frac * ivar[i];
        }
    }
    let gflux: Vec<f64> = (0..m)
        .map(|j| if wsum[j] > 0.0 { num[j] / wsum[j] } else { 0.0 })
        .collect();
    Some(LogGrid {
        x0,
        step,
        flux: gflux,
        ivar: info,
        cont_narrow: Vec::new(),
        cont_broad: Vec::new(),
        cont_star: Vec::new(),
        maps: Maps::default(),
    })
}

// The step thresholds below are judgements (no published source), chosen
// on the synthetic bench sets so that broad quasar lines are never cut.

/// Width (km/s) of each of the four windows a continuum step is judged
/// over: two on each side.
const STEP_WINDOW_KMS: f64 = 8000.0;
/// Smallest step, as a share of the higher level.
const STEP_MIN_SHARE: f64 = 0.12;
/// Smallest step in errors of the window medians.
const STEP_MIN_SIGMA: f64 = 8.0;
/// Each side must be flat to this share of the step.
const STEP_FLATNESS: f64 = 0.35;
/// At most this many steps are cut.
const STEPS_MAX: usize = 3;

/// Sharp, sustained jumps of the continuum (a 4000 A break, a Balmer jump,
/// a join between two spectrograph arms): indices where the flux level
/// changes by at least [`STEP_MIN_SHARE`] and stays changed, flat on each
/// side over two windows of [`STEP_WINDOW_KMS`]. A line rises and falls
/// within its width, so its sides are not both flat. `vstep` is the grid's
/// step in km/s. A running continuum would smear a step over its window and
/// make a broad "line" of it; the continua are estimated on each side apart.
pub(crate) fn steps(flux: &[f64], ivar: &[f64], vstep: f64) -> Vec<usize> {
    let n = flux.len();
    let w = (STEP_WINDOW_KMS / vstep).round() as usize;
    if w < 8 || n < 4 * w + 2 {
        return Vec::new();
    }
    let mut scratch = Vec::with_capacity(w);
    let mut med = |a: usize, b: usize| -> Option<(f64, f64)> {
        scratch.clear();
        let mut sig = 0.0;
        for i in a..b {
            if ivar[i] > 0.0 {
                scratch.push(flux[i]);
                sig += 1.0 / ivar[i].sqrt();
            }
        }
        let m = scratch.len();
        if m < (b - a) / 2 || m < 4 {
            return None;
        }
        let k = m / 2;
        scratch.select_nth_unstable_by(k, f64::total_cmp);
        // Noise of a median: 1.25 sigma / sqrt(N).
        Some((scratch[k], 1.25 * sig / m as f64 / (m as f64).sqrt()))
    };
    let stride = (w / 4).max(1);
    // (index, |jump| / level) of accepted positions.
    let mut hits: Vec<(usize, f64)> = Vec::new();
    let mut i = 2 * w;
    while i + 2 * w <= n {
        let (Some((l2, _)), Some((l1, e1)), Some((r1, e2)), Some((r2, _))) = (
            med(i - 2 * w, i - w),
            med(i - w, i),
            med(i, i + w),
            med(i + w, i + 2 * w),
        ) else {
            i += stride;
            continue;
        };
        let jump = r1 - l1;
        let level = l1.max(r1);
        let flat = |a: f64, b: f64| (a - b).abs() <= STEP_FLATNESS * jump.abs();
        // Farther out (where the spectrum reaches): a broad line as wide
        // as two windows would look flat over those, but not over three.
        let far_l = (i >= 3 * w)
            .then(|| med(i - 3 * w, i - 2 * w))
            .flatten()
            .is_none_or(|(l3, _)| flat(l3, l1));
        let far_r = (i + 3 * w <= n)
            .then(|| med(i + 2 * w, i + 3 * w))
            .flatten()
            .is_none_or(|(r3, _)| flat(r3, r1));
        if level > 0.0
            && jump.abs() >= STEP_MIN_SHARE * level
            && jump.abs() >= STEP_MIN_SIGMA * e1.hypot(e2)
            && flat(l1, l2)
            && flat(r1, r2)
            && far_l
            && far_r
        {
            hits.push((i, jump.abs() / level));
        }
        i += stride;
    }
    // One step per run of neighbouring hits (the strongest), placed where
    // short windows either side differ most.
    let mut out: Vec<usize> = Vec::new();
    let mut k = 0;
    while k < hits.len() {
        let mut e = k;
        while e + 1 < hits.len() && hits[e + 1].0 <= hits[e].0 + w {
            e += 1;
        }
        let centre = hits[k..=e]
            .iter()
            .max_by(|a, b| a.1.total_cmp(&b.1))
            .map(|h| h.0)
            .unwrap_or(hits[k].0);
        let sw = (w / 8).max(3);
        let js: Vec<(usize, f64)> = (centre.saturating_sub(w / 2).max(sw)
            ..(centre + w / 2).min(n - sw))
            .filter_map(|j| match (med(j - sw, j), med(j, j + sw)) {
                (Some((a, _)), Some((b, _))) => Some((j, (b - a).abs())),
                _ => None,
            })
            .collect();
        // The middle of the positions that differ most (a clean step
        // differs equally over a few positions around it).
        let top = js.iter().map(|p| p.1).fold(f64::NEG_INFINITY, f64::max);
        let near: Vec<usize> = js
            .iter()
            .filter(|p| p.1 >= top - 1e-9 * top.abs())
            .map(|p| p.0)
            .collect();
        let at = near.get(near.len() / 2).copied().unwrap_or(centre);
        if out.last().is_none_or(|&l| at >= l + w) && at >= w && at + w <= n {
            out.push(at);
        }
        k = e + 1;
    }
    if out.len() > STEPS_MAX {
        return Vec::new();
    }
    out
}

/// [`running_continuum`] on each stretch between the `cuts` apart.
pub(crate) fn running_continuum_cut(
    flux: &[f64],
    ivar: &[f64],
    win: usize,
    cuts: &[usize],
) -> Vec<f64> {
    if cuts.is_empty() {
        return running_continuum(flux, ivar, win);
    }
    let mut out = Vec::with_capacity(flux.len());
    let mut a = 0;
    for &c in cuts.iter().chain(std::iter::once(&flux.len())) {
        let c = c.clamp(a, flux.len());
        if c > a {
            out.extend(running_continuum(&flux[a..c], &ivar[a..c], win));
        }
        a = c;
    }
    out
}

/// Robust running continuum: medians of good pixels in windows of `win`
/// pixels on nodes half a window apart, each placed at the mean position of
/// its pixels, linearly interpolated (and extrapolated at the ends); then
/// once more without pixels more than 3 sigma off the first pass.
pub(crate) fn running_continuum(flux: &[f64], ivar: &[f64], win: usize) -> Vec<f64> {
    let n = flux.len();
    let win = win.max(5).min(n.max(5));
    let half = win / 2;
    let stride = (win / 2).max(1);
    let mut keep: Vec<bool> = ivar.iter().map(|&w| w > 0.0).collect();
    let mut cont = vec![0.0; n];
    let mut scratch = Vec::with_capacity(win + 1);
    for pass in 0..2 {
        let mut nodes: Vec<(f64, f64)> = Vec::new();
        let mut c = 0usize;
        loop {
            let lo = c.saturating_sub(half);
            let hi = (c + half + 1).min(n);
            scratch.clear();
            let mut xs = 0.0;
            for i in (lo..hi).filter(|&i| keep[i]) {
                scratch.push(flux[i]);
                xs += i as f64;
            }
            if scratch.len() >= 3.max(win / 8) {
                // The node sits at the mean position of the pixels used, so
                // a truncated window at an end or a gap follows a slope.
                let xm = xs / scratch.len() as f64;
                let k = scratch.len() / 2;
                scratch.select_nth_unstable_by(k, f64::total_cmp);
                if nodes.last().is_none_or(|l: &(f64, f64)| xm > l.0 + 0.5) {
                    nodes.push((xm, scratch[k]));
                }
            }
            if c + 1 >= n {
                break;
            }
            c = (c + stride).min(n - 1);
        }
        if nodes.is_empty() {
            return vec![0.0; n];
        }
        let mut k = 0;
        for (i, out) in cont.iter_mut().enumerate() {
            let x = i as f64;
            while k + 1 < nodes.len() && nodes[k + 1].0 <= x {
                k += 1;
            }
            let m = nodes.len();
            *out = if m == 1 {
                nodes[0].1
            } else if x <= nodes[0].0 {
                let (xa, ya) = nodes[0];
                let (xb, yb) = nodes[1];
                ya + (yb - ya) * (x - xa) / (xb - xa)
            } else if k + 1 >= m {
                let (xa, ya) = nodes[m - 2];
                let (xb, yb) = nodes[m - 1];
                yb + (yb - ya) * (x - xb) / (xb - xa)
            } else {
                let (xa, ya) = nodes[k];
                let (xb, yb) = nodes[k + 1];
                ya + (yb - ya) * (x - xa) / (xb - xa)
            };
        }
        if pass == 0 {
            for i in 0..n {
                keep[i] = ivar[i] > 0.0 && (flux[i] - cont[i]).abs() * ivar[i].sqrt() < 3.0;
            }
        }
    }
    cont
}

/// Matched filter: for each pixel the S/N of a Gaussian of `sigma_px` pixels
/// centred there, `sum(w r g) / sqrt(sum(w g^2))`. Wide kernels run on a
/// binned grid and are interpolated back.
fn matched_filter(wr: &[f64], w: &[f64], sigma_px: f64, out: &mut [f64]) {
    let n = wr.len();
    let bin = if sigma_px > 4.0 {
        (sigma_px / 2.5).floor() as usize
    } else {
        1
    };
    if bin > 1 {
        let nb = n.div_ceil(bin);
        let mut bwr = vec![0.0; nb];
        let mut bw = vec![0.0; nb];
        for i in 0..n {
            bwr[i / bin] += wr[i];
            bw[i / bin] += w[i];
        }
        let mut bout = vec![0.0; nb];
        matched_filter_direct(&bwr, &bw, sigma_px / bin as f64, &mut bout);
        // Bin b is centred at b*bin + (bin-1)/2.
        let off = (bin as f64 - 1.0) / 2.0;
        for (i, o) in out.iter_mut().enumerate() {
            let t = ((i as f64 - off) / bin as f64).clamp(0.0, (nb - 1) as f64);
            *o = LogGrid::sample(&bout, t);
        }
    } else {
        matched_filter_direct(wr, w, sigma_px, out);
    }
}

fn matched_filter_direct(wr: &[f64], w: &[f64], sigma_px: f64, out: &mut [f64]) {
    let n = wr.len();
    let h = (3.0 * sigma_px).ceil() as isize;
    let g: Vec<f64> = (-h..=h)
        .map(|j| (-0.5 * (j as f64 / sigma_px).powi(2)).exp())
        .collect();
    let g2: Vec<f64> = g.iter().map(|v| v * v).collect();
    for (i, o) in out.iter_mut().enumerate() {
        let lo = (i as isize - h).max(0) as usize;
        let hi = ((i as isize + h) as usize).min(n - 1);
        let k0 = (lo as isize - (i as isize - h)) as usize;
        let mut num = 0.0;
        let mut den = 0.0;
        for (k, j) in (lo..=hi).enumerate() {
            num += wr[j] * g[k0 + k];
            den += w[j] * g2[k0 + k];
        }
        *o = if den > 0.0 { num / den.sqrt() } else { 0.0 };
    }
}

/// The stellar continuum's window in pixels for a grid step of `vstep` km/s.
pub(crate) fn star_window(vstep: f64) -> usize {
    (STAR_WINDOW_KMS / vstep).round() as usize
}

/// Telluric bands at least this strong (typical depth, 0..1) are kept out
/// of absorption evidence; weaker ones (the 6500 A water band, a few per
/// cent) would otherwise hide a star's H-alpha at a modest blueshift. A
/// judgement, not a published figure.
pub(crate) const TELLURIC_ABSORB_MIN: f64 = 0.15;

/// Whether `f` is a telluric band strong enough that absorption inside it
/// is the atmosphere's.
pub(crate) fn is_absorbing_band(f: &crate::lines::Foreground) -> bool {
    f.kind == ForegroundKind::Telluric && f.strength >= TELLURIC_ABSORB_MIN
}

/// Telluric bands of the catalogue as ln(lambda) ranges, widened by `pad`
/// (fraction of lambda).
pub(crate) fn telluric_bands(catalogue: &Catalogue, pad: f64) -> Vec<(f64, f64)> {
    catalogue
        .foreground
        .iter()
        .filter(|f| is_absorbing_band(f) && f.lo > 0.0 && f.hi >= f.lo)
        .map(|f| (f.lo.ln() - pad, f.hi.ln() + pad))
        .collect()
}

/// Fill continua and matched-filter maps. Absorption inside the telluric
/// `bands` (ln lambda) is the atmosphere's, not the target's: those pixels
/// carry no absorption evidence.
pub(crate) fn build_maps(grid: &mut LogGrid, bands: &[(f64, f64)]) {
    let n = grid.len();
    let vstep = grid.step * C_KM_S;
    let win_n = (NARROW_WINDOW_KMS / vstep).round() as usize;
    let win_b = (BROAD_WINDOW_KMS / vstep).round() as usize;
    let cuts = steps(&grid.flux, &grid.ivar, vstep);
    grid.cont_narrow = running_continuum_cut(&grid.flux, &grid.ivar, win_n, &cuts);
    // Broad continuum from flux with narrow features replaced by the narrow
    // continuum, so broad lines are measured without narrow ones on top.
    let clean: Vec<f64> = (0..n)
        .map(|i| {
            let r = (grid.flux[i] - grid.cont_narrow[i]) * grid.ivar[i].sqrt();
            if r.abs() > 3.0 {
                grid.cont_narrow[i]
            } else {
                grid.flux[i]
            }
        })
        .collect();
    grid.cont_broad = running_continuum_cut(&clean, &grid.ivar, win_b, &cuts);
    grid.cont_star = running_continuum_cut(&grid.flux, &grid.ivar, star_window(vstep), &cuts);

    let w = &grid.ivar;
    let wr_n: Vec<f64> = (0..n)
        .map(|i| w[i] * (grid.flux[i] - grid.cont_narrow[i]))
        .collect();
    let wr_b: Vec<f64> = (0..n)
        .map(|i| w[i] * (clean[i] - grid.cont_broad[i]))
        .collect();
    let mut maps = Maps {
        em_narrow: vec![0.0; n],
        ab_narrow: vec![0.0; n],
        em_broad: vec![0.0; n],
        ab_broad: vec![0.0; n],
        em_narrow_width: vec![0; n],
        ab_narrow_width: vec![0; n],
    };
    let mut tmp = vec![0.0; n];
    let min_sigma = 1.0;
    // Pixels per sigma of a kernel of FWHM `f` km/s.
    let spx = |f: f64| (f / 2.354_820_045 / vstep).max(min_sigma);
    let mut last = 0.0;
    for (k, &f) in NARROW_FWHM_KMS.iter().enumerate() {
        let s = spx(f);
        if k > 0 && s <= last * 1.2 {
            continue;
        }
        last = s;
        matched_filter(&wr_n, w, s, &mut tmp);
        for i in 0..n {
            let v = tmp[i];
            if v > maps.em_narrow[i] {
                maps.em_narrow[i] = v;
                maps.em_narrow_width[i] = k as u8;
            }
            if -v > maps.ab_narrow[i] {
                maps.ab_narrow[i] = -v;
                maps.ab_narrow_width[i] = k as u8;
            }
        }
    }
    // The broad maps see the flux with narrow features replaced, minus the
    // wide continuum.
    for &f in BROAD_FWHM_KMS.iter() {
        let s = spx(f);
        matched_filter(&wr_b, w, s, &mut tmp);
        for i in 0..n {
            let v = tmp[i];
            if v > maps.em_broad[i] {
                maps.em_broad[i] = v;
            }
            if -v > maps.ab_broad[i] {
                maps.ab_broad[i] = -v;
            }
        }
    }
    for &(a, b) in bands {
        let ia = grid.index_of(a).floor().max(0.0) as usize;
        let ib = (grid.index_of(b).ceil().max(0.0) as usize).min(n);
        for i in ia.min(n)..ib {
            maps.ab_narrow[i] = 0.0;
            maps.ab_broad[i] = 0.0;
        }
    }
    grid.maps = maps;
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_sharp_step_is_cut_where_it_is_and_a_broad_line_is_not() {
        // 3000 pixels of 50 km/s; unit continuum, sigma 0.02 (synthetic).
        let n = 3000;
        let ivar = vec![2500.0; n];
        let step: Vec<f64> = (0..n).map(|i| if i < 1700 { 0.6 } else { 1.0 }).collect();
        let cuts = steps(&step, &ivar, 50.0);
        assert_eq!(cuts.len(), 1, "{cuts:?}");
        assert!((cuts[0] as i64 - 1700).abs() <= 2, "{cuts:?}");
        // A broad emission line, FWHM 10,000 km/s (200 px), twice the
        // continuum at its peak.
        let line: Vec<f64> = (0..n)
            .map(|i| 1.0 + (-0.5 * ((i as f64 - 1500.0) / 85.0).powi(2)).exp())
            .collect();
        assert!(steps(&line, &ivar, 50.0).is_empty());
        // The continuum cut there follows both levels.
        let c = running_continuum_cut(&step, &ivar, 120, &cuts);
        assert!((c[1690] - 0.6).abs() < 0.01 && (c[1710] - 1.0).abs() < 0.01);
    }

    #[test]
    fn resampling_keeps_a_flat_spectrum_flat_and_its_information() {
        let wave: Vec<f64> = (0..2000).map(|i| 4000.0 + i as f64).collect();
        let flux = vec![2.0; 2000];
        let ivar = vec![4.0; 2000];
        let g = resample(&wave, &flux, &ivar).unwrap();
        let inner = &g.flux[5..g.len() - 5];
        assert!(inner.iter().all(|v| (v - 2.0).abs() < 1e-12));
        let total: f64 = g.ivar.iter().sum();
        assert!((total - 8000.0).abs() / 8000.0 < 1e-3, "{total}");
    }

    #[test]
    fn matched_filter_recovers_the_snr_of_a_gaussian_line() {
        // Unit noise, a Gaussian of amplitude 1 and sigma 3 px: the S/N of its
        // amplitude is sqrt(sum g^2) = (sqrt(pi) * 3)^0.5 (analytic).
        let n = 401;
        let w = vec![1.0; n];
        let wr: Vec<f64> = (0..n)
            .map(|i| (-0.5 * ((i as f64 - 200.0) / 3.0).powi(2)).exp())
            .collect();
        let mut out = vec![0.0; n];
        matched_filter(&wr, &w, 3.0, &mut out);
        let expect = (std::f64::consts::PI.sqrt() * 3.0).sqrt();
        assert!((out[200] - expect).abs() < 0.01 * expect, "{}", out[200]);
    }

    #[test]
    fn a_single_hot_pixel_gets_no_weight_but_a_two_pixel_line_keeps_it() {
        let wave: Vec<f64> = (0..100).map(|i| 5000.0 + i as f64).collect();
        let mut flux = vec![1.0; 100];
        flux[30] = 50.0;
        flux[60] = 20.0;
        flux[61] = 20.0;
        let sigma = vec![0.1; 100];
        let mask = vec![true; 100];
        let iv = native_ivar(&wave, &flux, &sigma, &mask, &Catalogue::default());
        assert_eq!(iv[30], 0.0);
        assert!(iv[60] > 0.0 && iv[61] > 0.0);
    }
}
