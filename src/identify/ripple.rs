//! Flux-calibration ripples: a sinusoid in wavelength across the whole
//! spectrum (an imperfect response correction, fringing residuals), found
//! and divided out before anything else looks at the flux.
//!
//! A ripple of a few per cent with a period of 100-500 A makes broad bumps
//! and dips that line up with broad quasar lines, broad Balmer absorption or
//! a galaxy's lines at some redshift. What tells it from real features is
//! that it repeats: the same period, amplitude and phase in every part of
//! the spectrum, where real lines and bands sit at a few places.
//!
//! Method: the flux is averaged in bins of equal width in wavelength,
//! divided by a smooth continuum (a low-order Legendre polynomial fitted by
//! weighted least squares with clipping), and the relative residual is
//! searched for the one sinusoid that lowers chi-square most (a
//! Lomb-Scargle-type periodogram, the sine and cosine fitted at each trial
//! frequency). It is accepted only when it is significant overall and in
//! each third of the spectrum alone, with consistent amplitude and phase
//! there. A second sinusoid is sought in what the first leaves, and the two
//! are tested together (one at a time, each leaks into the other's fit in a
//! third of the spectrum).

use std::f64::consts::TAU;

/// A ripple found in a spectrum: `1 + a cos(2 pi lambda / period) + b sin(...)`.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Ripple {
    /// Period, Angstrom.
    pub period: f64,
    /// Cosine amplitude (relative).
    pub a: f64,
    /// Sine amplitude (relative).
    pub b: f64,
}

impl Ripple {
    /// Relative amplitude sqrt(a^2 + b^2).
    pub fn amplitude(&self) -> f64 {
        self.a.hypot(self.b)
    }

    /// The factor `1 + a cos + b sin` at wavelength `lambda`.
    pub fn factor(&self, lambda: f64) -> f64 {
        let t = TAU * lambda / self.period;
        1.0 + self.a * t.cos() + self.b * t.sin()
    }
}

// The thresholds below are judgements (no published source), chosen on
// the synthetic bench sets so that real lines and bands are not taken for
// ripples.

/// Shortest period searched, Angstrom.
const PERIOD_MIN_A: f64 = 60.0;
/// The longest period searched is the span divided by this (at least this
/// many cycles; fewer would be confused with the continuum).
const CYCLES_MIN: f64 = 6.0;
/// Bins per shortest period.
const BINS_PER_PERIOD: f64 = 6.0;
/// Legendre degree of the smooth continuum.
const CONTINUUM_DEGREE: usize = 5;
/// Smallest relative amplitude worth dividing out.
const AMPLITUDE_MIN: f64 = 0.015;
/// Chi-square gain the ripple must bring over the whole spectrum.
const GAIN_MIN: f64 = 60.0;
/// Chi-square gain it must bring in each third on its own.
const GAIN_THIRD_MIN: f64 = 12.0;
/// Each third's amplitude within this factor of the whole's.
const AMPLITUDE_SPREAD: f64 = 1.6;
/// Each third's phase within this of the whole's, radians.
const PHASE_SPREAD: f64 = 0.6;

/// The ripples of a spectrum (at most two), strongest first; empty when
/// there is none. `wave` ascending Angstrom; `sigma` per pixel; `mask`
/// true = good. Pure computation.
pub fn find(wave: &[f64], flux: &[f64], sigma: &[f64], mask: &[bool]) -> Vec<Ripple> {
    Bins::new(wave, flux, sigma, mask).map_or_else(Vec::new, |b| b.strongest())
}

/// Binned relative residuals.
struct Bins {
    /// Bin centres, Angstrom.
    x: Vec<f64>,
    /// Mean flux.
    f: Vec<f64>,
    /// Its inverse variance.
    w: Vec<f64>,
    /// Bin width, Angstrom.
    width: f64,
}

impl Bins {
    fn new(wave: &[f64], flux: &[f64], sigma: &[f64], mask: &[bool]) -> Option<Bins> {
        let n = wave.len();
        if n < 64 || flux.len() != n || sigma.len() != n || mask.len() != n {
            return None;
        }
        let (lo, hi) = (wave[0], wave[n - 1]);
        let span = hi - lo;
        if span.is_nan() || span <= 0.0 || span / CYCLES_MIN < 1.5 * PERIOD_MIN_A {
            return None;
        }
        let px = span / (n - 1) as f64;
        let width = (PERIOD_MIN_A / BINS_PER_PERIOD).max(2.0 * px);
        let nb = (span / width).floor() as usize;
        if nb < 48 {
            return None;
        }
        let mut sw = vec![0.0; nb];
        let mut swf = vec![0.0; nb];
        for i in 0..n {
            let s = sigma[i];
            if !mask[i] || s.is_nan() || s <= 0.0 || !s.is_finite() || !flux[i].is_finite() {
                continue;
            }
            let k = (((wave[i] - lo) / width) as usize).min(nb - 1);
            let w = 1.0 / (s * s);
            sw[k] += w;
            swf[k] += w * flux[i];
        }
        let x: Vec<f64> = (0..nb).map(|k| lo + (k as f64 + 0.5) * width).collect();
        let f: Vec<f64> = (0..nb)
            .map(|k| if sw[k] > 0.0 { swf[k] / sw[k] } else { 0.0 })
            .collect();
        if sw.iter().filter(|w| **w > 0.0).count() < 48 {
            return None;
        }
        Some(Bins { x, f, w: sw, width })
    }

    /// Relative residuals from a smooth continuum and their inverse
    /// variances (zero where unusable).
    fn residuals(&self) -> Option<(Vec<f64>, Vec<f64>)> {
        let c = smooth(&self.x, &self.f, &self.w)?;
        let mut r = vec![0.0; self.x.len()];
        let mut w = vec![0.0; self.x.len()];
        let median_c = {
            let mut v: Vec<f64> = c.iter().copied().filter(|v| *v > 0.0).collect();
            if v.is_empty() {
                return None;
            }
            let m = v.len() / 2;
            *v.select_nth_unstable_by(m, f64::total_cmp).1
        };
        for k in 0..r.len() {
            // Bins where the continuum is faint (a blue cut-off, a deep
            // band) carry no reliable relative ripple.
            if self.w[k] > 0.0 && c[k] > 0.2 * median_c {
                r[k] = self.f[k] / c[k] - 1.0;
                w[k] = self.w[k] * c[k] * c[k];
            }
        }
        // Single bins far off (a strong line, a residual sky line) would
        // dominate a sinusoid fit: clip at 4 robust sigma.
        let mut dev: Vec<f64> = (0..r.len())
            .filter(|&k| w[k] > 0.0)
            .map(|k| r[k].abs())
            .collect();
        if dev.len() < 48 {
            return None;
        }
        let m = dev.len() / 2;
        let mad = *dev.select_nth_unstable_by(m, f64::total_cmp).1;
        let cut = 4.0 * 1.4826 * mad.max(1e-6);
        for k in 0..r.len() {
            if r[k].abs() > cut {
                w[k] = 0.0;
            }
        }
        Some((r, w))
    }

    /// The acceptable ripples of the residuals (at most two), strongest
    /// first. Two are tested together: fitted one at a time, each leaks
    /// into the other's fit in a third of the spectrum.
    fn strongest(&self) -> Vec<Ripple> {
        let Some((r, w)) = self.residuals() else {
            return Vec::new();
        };
        let x = &self.x;
        let span = x[x.len() - 1] - x[0] + self.width;
        let p_min = PERIOD_MIN_A.max(BINS_PER_PERIOD * self.width);
        let p_max = span / CYCLES_MIN;
        if p_max <= p_min {
            return Vec::new();
        }
        let df = 0.25 / span;
        let Some((f1, a1, b1, g1)) = peak(x, &r, &w, 1.0 / p_max, 1.0 / p_min, df) else {
            return Vec::new();
        };
        if g1 < GAIN_MIN || a1.hypot(b1) < AMPLITUDE_MIN {
            return Vec::new();
        }
        // A second one in what the first leaves.
        let r2: Vec<f64> = (0..x.len())
            .map(|k| {
                let t = TAU * f1 * x[k];
                r[k] - a1 * t.cos() - b1 * t.sin()
            })
            .collect();
        let second = peak(x, &r2, &w, 1.0 / p_max, 1.0 / p_min, df)
            .filter(|&(f2, a2, b2, g2)| {
                g2 >= GAIN_MIN && a2.hypot(b2) >= AMPLITUDE_MIN && (f2 - f1).abs() > 2.0 * df
            })
            .map(|p| p.0);
        let mut tries: Vec<Vec<f64>> = Vec::new();
        if let Some(f2) = second {
            tries.push(vec![f1, f2]);
        }
        tries.push(vec![f1]);
        if let Some(f2) = second {
            tries.push(vec![f2]);
        }
        for freqs in tries {
            if let Some(found) = consistent(x, &r, &w, &freqs) {
                return found;
            }
        }
        Vec::new()
    }
}

/// The periodogram peak of `r` between frequencies `f_lo` and `f_hi`
/// (cycles per Angstrom) on a grid of step `df`, refined eight times finer:
/// (f, a, b, gain).
fn peak(
    x: &[f64],
    r: &[f64],
    w: &[f64],
    f_lo: f64,
    f_hi: f64,
    df: f64,
) -> Option<(f64, f64, f64, f64)> {
    let mut best: Option<(f64, f64)> = None;
    let mut f = f_lo;
    while f <= f_hi {
        if let Some((_, _, gain)) = fit_sinusoid(x, r, w, f, 0, x.len())
            && best.is_none_or(|b| gain > b.1)
        {
            best = Some((f, gain));
        }
        f += df;
    }
    let (f0, _) = best?;
    let mut top: Option<(f64, f64, f64, f64)> = None;
    for k in -8..=8 {
        let f = f0 + k as f64 * df / 8.0;
        if let Some((a, b, gain)) = fit_sinusoid(x, r, w, f, 0, x.len())
            && top.is_none_or(|t| gain > t.3)
        {
            top = Some((f, a, b, gain));
        }
    }
    top
}

/// The sinusoids at `freqs` fitted together, if each is at least
/// [`AMPLITUDE_MIN`] and looks the same (amplitude within
/// [`AMPLITUDE_SPREAD`], phase within [`PHASE_SPREAD`]) in each third of
/// the spectrum, where together they gain [`GAIN_THIRD_MIN`] each.
fn consistent(x: &[f64], r: &[f64], w: &[f64], freqs: &[f64]) -> Option<Vec<Ripple>> {
    let n = x.len();
    let (all, _) = fit_sinusoids(x, r, w, freqs, 0, n)?;
    if all.iter().any(|(a, b)| a.hypot(*b) < AMPLITUDE_MIN) {
        return None;
    }
    for t in 0..3 {
        let (i, j) = (t * n / 3, (t + 1) * n / 3);
        let (part, gain) = fit_sinusoids(x, r, w, freqs, i, j)?;
        if gain < GAIN_THIRD_MIN * freqs.len() as f64 {
            return None;
        }
        for (&(a, b), &(at, bt)) in all.iter().zip(&part) {
            let (amp, amp_t) = (a.hypot(b), at.hypot(bt));
            let dphi = (bt.atan2(at) - b.atan2(a) + TAU / 2.0).rem_euclid(TAU) - TAU / 2.0;
            if amp_t > AMPLITUDE_SPREAD * amp
                || amp_t * AMPLITUDE_SPREAD < amp
                || dphi.abs() > PHASE_SPREAD
            {
                return None;
            }
        }
    }
    Some(
        freqs
            .iter()
            .zip(&all)
            .map(|(&f, &(a, b))| Ripple {
                period: 1.0 / f,
                a,
                b,
            })
            .collect(),
    )
}

/// Weighted least squares of a sum of sinusoids at `freqs` on `r[i..j]`:
/// each one's (cosine, sine) amplitudes and the chi-square gain.
fn fit_sinusoids(
    x: &[f64],
    r: &[f64],
    w: &[f64],
    freqs: &[f64],
    i: usize,
    j: usize,
) -> Option<(Vec<(f64, f64)>, f64)> {
    let m = 2 * freqs.len();
    if j <= i + m + 1 {
        return None;
    }
    let mut a = vec![0.0; m * m];
    let mut rhs = vec![0.0; m];
    let mut basis = vec![0.0; m];
    for k in i..j {
        if w[k] <= 0.0 {
            continue;
        }
        for (q, &f) in freqs.iter().enumerate() {
            let t = TAU * f * x[k];
            basis[2 * q] = t.cos();
            basis[2 * q + 1] = t.sin();
        }
        for p in 0..m {
            rhs[p] += w[k] * r[k] * basis[p];
            for q in 0..m {
                a[p * m + q] += w[k] * basis[p] * basis[q];
            }
        }
    }
    let keep = rhs.clone();
    let coef = solve(&mut a, &mut rhs, m)?;
    let gain = coef.iter().zip(&keep).map(|(c, b)| c * b).sum();
    Some((coef.chunks(2).map(|c| (c[0], c[1])).collect(), gain))
}

/// Weighted least-squares fit of `a cos(2 pi f x) + b sin(2 pi f x)` to
/// `r[i..j]`: (a, b, chi-square gain). The sine and cosine are stepped by
/// rotation (the bins are equally spaced).
fn fit_sinusoid(
    x: &[f64],
    r: &[f64],
    w: &[f64],
    f: f64,
    i: usize,
    j: usize,
) -> Option<(f64, f64, f64)> {
    if j <= i + 3 {
        return None;
    }
    let (mut cc, mut ss, mut cs, mut rc, mut rs) = (0.0, 0.0, 0.0, 0.0, 0.0);
    let step = TAU * f * (x[i + 1] - x[i]);
    let (dc, ds) = (step.cos(), step.sin());
    let t0 = TAU * f * x[i];
    let (mut c, mut s) = (t0.cos(), t0.sin());
    for k in i..j {
        let wk = w[k];
        if wk > 0.0 {
            cc += wk * c * c;
            ss += wk * s * s;
            cs += wk * c * s;
            rc += wk * r[k] * c;
            rs += wk * r[k] * s;
        }
        let c2 = c * dc - s * ds;
        s = s * dc + c * ds;
        c = c2;
    }
    let det = cc * ss - cs * cs;
    if det.is_nan() || det <= 1e-12 * cc * ss || det <= 0.0 {
        return None;
    }
    let a = (rc * ss - rs * cs) / det;
    let b = (rs * cc - rc * cs) / det;
    Some((a, b, a * rc + b * rs))
}

/// A smooth continuum: Legendre polynomial of degree
/// [`CONTINUUM_DEGREE`] in the scaled wavelength, weighted least squares,
/// three rounds of 3-sigma clipping.
fn smooth(x: &[f64], f: &[f64], w: &[f64]) -> Option<Vec<f64>> {
    let n = x.len();
    let (lo, hi) = (x[0], x[n - 1]);
    let m = CONTINUUM_DEGREE + 1;
    let basis = |v: f64, out: &mut [f64]| {
        let t = 2.0 * (v - lo) / (hi - lo) - 1.0;
        out[0] = 1.0;
        if m > 1 {
            out[1] = t;
        }
        for k in 2..m {
            let kf = k as f64;
            out[k] = ((2.0 * kf - 1.0) * t * out[k - 1] - (kf - 1.0) * out[k - 2]) / kf;
        }
    };
    let mut use_w = w.to_vec();
    let mut p = vec![0.0; m];
    let mut model = vec![0.0; n];
    for _round in 0..3 {
        let mut a = vec![0.0; m * m];
        let mut b = vec![0.0; m];
        for k in 0..n {
            if use_w[k] <= 0.0 {
                continue;
            }
            basis(x[k], &mut p);
            for i in 0..m {
                b[i] += use_w[k] * p[i] * f[k];
                for j in 0..m {
                    a[i * m + j] += use_w[k] * p[i] * p[j];
                }
            }
        }
        let coef = solve(&mut a, &mut b, m)?;
        for k in 0..n {
            basis(x[k], &mut p);
            model[k] = p.iter().zip(&coef).map(|(u, c)| u * c).sum();
        }
        // Clip at 3 sigma of the normalised residuals.
        let mut z: Vec<f64> = (0..n)
            .filter(|&k| use_w[k] > 0.0)
            .map(|k| ((f[k] - model[k]) * use_w[k].sqrt()).abs())
            .collect();
        if z.len() < 2 * m {
            return None;
        }
        let h = z.len() / 2;
        let mad = *z.select_nth_unstable_by(h, f64::total_cmp).1;
        let cut = 3.0 * 1.4826 * mad.max(1e-12);
        for k in 0..n {
            if w[k] > 0.0 {
                let zk = ((f[k] - model[k]) * w[k].sqrt()).abs();
                use_w[k] = if zk > cut { 0.0 } else { w[k] };
            }
        }
    }
    Some(model)
}

/// Solve the symmetric positive definite normal equations `a x = b` (both
/// overwritten) with the project's Cholesky solver; `None` when singular.
fn solve(a: &mut [f64], b: &mut [f64], m: usize) -> Option<Vec<f64>> {
    super::fit::cholesky_solve(a, b, m).then(|| b.to_vec())
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A smooth continuum with noise from a fixed linear congruential
    /// sequence (synthetic truth, no source needed).
    fn spectrum(
        ripples: &[(f64, f64, f64)],
        snr: f64,
    ) -> (Vec<f64>, Vec<f64>, Vec<f64>, Vec<bool>) {
        let n = 3000;
        let wave: Vec<f64> = (0..n).map(|i| 4000.0 + 1.5 * i as f64).collect();
        let mut state = 12345u64;
        let mut gauss = || {
            // Sum of 12 uniforms less 6: near-normal, deterministic.
            let mut s = 0.0;
            for _ in 0..12 {
                state = state
                    .wrapping_mul(6364136223846793005)
                    .wrapping_add(1442695040888963407);
                s += (state >> 11) as f64 / (1u64 << 53) as f64;
            }
            s - 6.0
        };
        let mut flux = Vec::with_capacity(n);
        let mut sigma = Vec::with_capacity(n);
        for &l in &wave {
            let cont = 1.0 + 0.3 * ((l - 4000.0) / 4500.0) - 0.2 * ((l - 6000.0) / 3000.0).powi(2);
            let mut g = 1.0;
            for &(period, amp, phase) in ripples {
                g += amp * (TAU * l / period + phase).sin();
            }
            let s = cont / snr;
            flux.push(cont * g + s * gauss());
            sigma.push(s);
        }
        (wave, flux, sigma, vec![true; n])
    }

    #[test]
    fn a_clean_spectrum_has_no_ripple() {
        let (w, f, s, m) = spectrum(&[], 30.0);
        assert!(find(&w, &f, &s, &m).is_empty());
    }

    #[test]
    fn a_ripple_is_found_with_its_period_and_amplitude() {
        let (w, f, s, m) = spectrum(&[(230.0, 0.06, 1.0)], 20.0);
        let r = find(&w, &f, &s, &m);
        assert!(!r.is_empty(), "no ripple found");
        assert!((r[0].period - 230.0).abs() < 3.0, "period {}", r[0].period);
        assert!(
            (r[0].amplitude() - 0.06).abs() < 0.01,
            "amplitude {}",
            r[0].amplitude()
        );
    }

    #[test]
    fn two_ripples_are_both_found() {
        let (w, f, s, m) = spectrum(&[(310.0, 0.05, 0.3), (140.0, 0.04, 2.0)], 40.0);
        let r = find(&w, &f, &s, &m);
        assert_eq!(r.len(), 2, "{r:?}");
        let mut p: Vec<f64> = r.iter().map(|r| r.period).collect();
        p.sort_by(f64::total_cmp);
        assert!(
            (p[0] - 140.0).abs() < 3.0 && (p[1] - 310.0).abs() < 6.0,
            "{p:?}"
        );
    }

    #[test]
    fn two_ripples_of_close_periods_are_found_together() {
        // Periods 10% apart beat across the spectrum: fitted one at a time,
        // neither looked the same in each third.
        let (w, f, s, m) = spectrum(&[(237.0, 0.05, 0.4), (263.0, 0.035, 2.5)], 30.0);
        let r = find(&w, &f, &s, &m);
        assert_eq!(r.len(), 2, "{r:?}");
        let mut p: Vec<f64> = r.iter().map(|r| r.period).collect();
        p.sort_by(f64::total_cmp);
        assert!(
            (p[0] - 237.0).abs() < 3.0 && (p[1] - 263.0).abs() < 3.0,
            "{p:?}"
        );
    }

    #[test]
    fn a_few_broad_lines_are_not_a_ripple() {
        // Three broad emission bumps at irregular places, 20% high.
        let (w, mut f, s, m) = spectrum(&[], 30.0);
        for (i, &l) in w.iter().enumerate() {
            for (c, fwhm) in [(4800.0, 90.0), (6100.0, 110.0), (7900.0, 140.0)] {
                let sg: f64 = fwhm / 2.3548;
                f[i] += 0.2 * (-0.5 * ((l - c) / sg).powi(2)).exp();
            }
        }
        assert!(find(&w, &f, &s, &m).is_empty());
    }
}
