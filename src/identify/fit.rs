//! Least-squares Gaussian line fits (Levenberg-Marquardt).
//!
//! [`fit_gaussians`] fits one or several Gaussians plus a local linear
//! offset from the given continuum to a pixel range of a spectrum, with
//! optional ties between components (fixed velocity separation, the same
//! velocity width, a fixed flux ratio) for doublets and blends. The result
//! ([`FitResult`], one [`ComponentFit`] per component) carries centres,
//! widths, amplitudes, integrated fluxes and equivalent widths with 1-sigma
//! errors from the covariance matrix scaled by the reduced chi-square (the
//! convention of general-purpose least-squares libraries when the data
//! errors are taken as relative weights).
//!
//! The model at pixel `i` (wavelength `x_i`) is
//!
//! ```text
//! m_i = continuum_i + offset + slope * (x_i - x0) + sum_k A_k exp(-(x_i - c_k)^2 / (2 s_k^2))
//! ```
//!
//! with `x0` the middle of the fitted range. Gaussians are evaluated at pixel
//! centres. The fit never panics and never loops forever: iterations are
//! bounded, degenerate inputs (too few good pixels, zero or non-finite
//! errors, singular normal equations) return a [`FitError`].
//!
//! Equivalent width convention: `EW = integral of (1 - F / Fc) d lambda`
//! in the observed frame, so emission lines have **negative** EW and
//! absorption lines positive EW.

// Index loops over several parallel slices read more clearly than zipped
// iterators in this numerical code.
#![allow(clippy::needless_range_loop)]

use super::redshift::exp_fast;
use crate::physics::constants::C_KM_S;
use std::ops::Range;

/// FWHM / sigma of a Gaussian, `2 sqrt(2 ln 2)`.
pub const FWHM_PER_SIGMA: f64 = 2.354_820_045_030_949_3;

/// Beyond `z^2 = 80` (about 9 sigma) a Gaussian is below `1e-17` of its
/// peak and is not evaluated.
const CUTOFF_Z2: f64 = 80.0;

/// Largest number of Gaussian components in one fit.
pub const MAX_COMPONENTS: usize = 8;

/// Creep stop of the Levenberg-Marquardt loop: after `CREEP_AFTER`
/// iterations, `CREEP_STEPS` accepted steps in a row that each gain under
/// `CREEP_GAIN` in chi-square end the fit (reported unconverged).
const CREEP_AFTER: usize = 15;
const CREEP_STEPS: usize = 5;
const CREEP_GAIN: f64 = 0.05;

/// A tie of one component to an earlier, untied ("root") component.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Tie {
    /// Index of the root component (must be earlier and itself untied).
    pub to: usize,
    /// When set, the centre is fixed at `ratio * centre(to)`: a fixed
    /// velocity separation (for a doublet, the ratio of rest wavelengths).
    pub wavelength_ratio: Option<f64>,
    /// When true, the width is the same in velocity as the root's:
    /// `sigma = sigma(to) * centre / centre(to)`.
    pub same_velocity_width: bool,
    /// When set, the integrated flux is fixed at `ratio * flux(to)`.
    pub flux_ratio: Option<f64>,
}

/// One Gaussian component: the starting guess, and its tie if any.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Component {
    /// Initial centre, Angstrom.
    pub centre: f64,
    /// Initial Gaussian sigma, Angstrom (> 0).
    pub sigma: f64,
    /// Initial peak amplitude, flux units (negative for absorption).
    pub amplitude: f64,
    /// Tie to an earlier component, if any.
    pub tie: Option<Tie>,
}

impl Component {
    /// An untied component.
    pub fn free(centre: f64, sigma: f64, amplitude: f64) -> Component {
        Component {
            centre,
            sigma,
            amplitude,
            tie: None,
        }
    }
}

/// Options of a fit.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct FitOptions {
    /// Largest number of Levenberg-Marquardt iterations.
    pub max_iterations: usize,
    /// Fit a constant offset from the given continuum.
    pub fit_offset: bool,
    /// Fit a linear slope of that offset (needs `fit_offset`).
    pub fit_slope: bool,
    /// Smallest allowed Gaussian sigma, Angstrom. `None`: a tenth of the
    /// smallest pixel spacing in the range.
    pub min_sigma: Option<f64>,
    /// Largest allowed Gaussian sigma, Angstrom. `None`: the width of the range.
    pub max_sigma: Option<f64>,
}

impl Default for FitOptions {
    fn default() -> Self {
        FitOptions {
            max_iterations: 60,
            fit_offset: true,
            fit_slope: true,
            min_sigma: None,
            max_sigma: None,
        }
    }
}

/// Why a fit could not be made.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum FitError {
    /// No components, or more than [`MAX_COMPONENTS`].
    #[error("a fit needs 1 to {MAX_COMPONENTS} components, got {0}")]
    Components(usize),
    /// A tie points at itself, a later component or a tied component, or
    /// has a non-positive / non-finite ratio.
    #[error("component {0} has an invalid tie")]
    BadTie(usize),
    /// An initial guess is not finite, or its sigma is not positive.
    #[error("component {0} has a non-finite or invalid starting guess")]
    BadGuess(usize),
    /// Slices of different lengths, or a range outside them.
    #[error("input slices differ in length or the range is out of bounds")]
    Shape,
    /// Fewer usable pixels (unmasked, finite, positive sigma) than parameters + 1.
    #[error("{good} usable pixels for {params} parameters")]
    TooFewPixels {
        /// Usable pixels in the range.
        good: usize,
        /// Free parameters.
        params: usize,
    },
    /// The normal equations are singular at the solution (a parameter is
    /// not constrained by the data).
    #[error("the fit is degenerate (singular normal equations)")]
    Singular,
}

/// The fitted values of one component, with 1-sigma errors.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ComponentFit {
    /// Centre, Angstrom.
    pub centre: f64,
    /// 1-sigma error of the centre, Angstrom.
    pub centre_err: f64,
    /// Gaussian sigma, Angstrom.
    pub sigma: f64,
    /// 1-sigma error of sigma, Angstrom.
    pub sigma_err: f64,
    /// FWHM in km/s (`2.3548 sigma / centre * c`).
    pub fwhm_kms: f64,
    /// 1-sigma error of the FWHM, km/s.
    pub fwhm_kms_err: f64,
    /// Peak amplitude, flux units (negative for absorption).
    pub amplitude: f64,
    /// 1-sigma error of the amplitude.
    pub amplitude_err: f64,
    /// Integrated flux `A sigma sqrt(2 pi)`, flux units x Angstrom.
    pub flux: f64,
    /// 1-sigma error of the integrated flux.
    pub flux_err: f64,
    /// Continuum (given continuum + fitted offset) at the centre.
    pub continuum: f64,
    /// Observed-frame equivalent width, Angstrom, `-flux / continuum`
    /// (negative for emission). NaN when the continuum is not positive.
    pub ew: f64,
    /// 1-sigma error of the EW (from the flux error only). NaN when `ew` is.
    pub ew_err: f64,
    /// `|flux| / flux_err` (0 when the error is not finite or zero).
    pub snr: f64,
}

/// The result of a fit.
#[derive(Debug, Clone, PartialEq)]
pub struct FitResult {
    /// One entry per input component, in input order.
    pub components: Vec<ComponentFit>,
    /// Fitted constant offset from the continuum (0 when not fitted).
    pub offset: f64,
    /// Fitted slope of the offset per Angstrom (0 when not fitted).
    pub slope: f64,
    /// Reference wavelength `x0` of the slope.
    pub x0: f64,
    /// Chi-square at the solution.
    pub chi2: f64,
    /// Degrees of freedom (usable pixels - free parameters).
    pub dof: usize,
    /// Number of free parameters.
    pub n_params: usize,
    /// Iterations used.
    pub iterations: usize,
    /// True when the fit met its convergence test before the iteration limit.
    pub converged: bool,
}

impl FitResult {
    /// Reduced chi-square `chi2 / dof`.
    pub fn reduced_chi2(&self) -> f64 {
        if self.dof == 0 {
            f64::NAN
        } else {
            self.chi2 / self.dof as f64
        }
    }
}

/// Where each component's centre, sigma and amplitude come from.
#[derive(Debug, Clone, Copy)]
struct Slots {
    c: Option<usize>,
    s: Option<usize>,
    a: Option<usize>,
}

/// The parameter layout of a fit.
struct Layout {
    comps: Vec<(Slots, Option<Tie>)>,
    offset: Option<usize>,
    slope: Option<usize>,
    n: usize,
    x0: f64,
}

/// Derived quantities of component `k`: centre, sigma, amplitude.
#[derive(Debug, Clone, Copy, Default)]
struct Derived {
    c: f64,
    s: f64,
    a: f64,
}

impl Layout {
    fn derive(&self, p: &[f64], out: &mut [Derived]) {
        for (k, (slots, tie)) in self.comps.iter().enumerate() {
            let root = tie.map(|t| out[t.to]);
            let c = match (slots.c, tie, root) {
                (Some(i), _, _) => self.x0 + p[i],
                (None, Some(t), Some(r)) => r.c * t.wavelength_ratio.unwrap_or(1.0),
                _ => self.x0,
            };
            let s = match (slots.s, root) {
                (Some(i), _) => p[i],
                (None, Some(r)) => r.s * c / r.c,
                _ => 1.0,
            };
            let a = match (slots.a, tie, root) {
                (Some(i), _, _) => p[i],
                (None, Some(t), Some(r)) => t.flux_ratio.unwrap_or(1.0) * r.a * r.s / s,
                _ => 0.0,
            };
            out[k] = Derived { c, s, a };
        }
    }
}

/// Per-pixel data of the fit range, packed.
struct Pixel {
    x: f64,
    y: f64,
    w: f64,
}

/// The per-pixel data a fit reads (equal-length slices).
#[derive(Debug, Clone, Copy)]
pub struct Pixels<'a> {
    /// Vacuum wavelengths, Angstrom, increasing.
    pub wave: &'a [f64],
    /// Flux.
    pub flux: &'a [f64],
    /// 1-sigma flux errors (pixels with non-positive or non-finite values are skipped).
    pub sigma: &'a [f64],
    /// Good-pixel mask (true = use).
    pub mask: &'a [bool],
    /// Continuum the Gaussians sit on (zeros for none).
    pub continuum: &'a [f64],
}

/// Fit Gaussians to `flux - continuum` over the pixel index `range`.
///
/// * `data`: the spectrum's pixels (see [`Pixels`]). Pixels that are masked
///   or have non-finite values or non-positive sigma are skipped.
/// * `range`: the pixel index range fitted.
/// * `components`: starting guesses and ties (see [`Tie`]).
///
/// Errors are scaled by the reduced chi-square. Returns an error, never
/// panics, on degenerate input.
pub fn fit_gaussians(
    data: &Pixels<'_>,
    range: Range<usize>,
    components: &[Component],
    opts: &FitOptions,
) -> Result<FitResult, FitError> {
    let Pixels {
        wave,
        flux,
        sigma,
        mask,
        continuum,
    } = *data;
    let n = wave.len();
    if flux.len() != n
        || sigma.len() != n
        || mask.len() != n
        || continuum.len() != n
        || range.start > range.end
        || range.end > n
    {
        return Err(FitError::Shape);
    }
    let nc = components.len();
    if nc == 0 || nc > MAX_COMPONENTS {
        return Err(FitError::Components(nc));
    }
    // Validate guesses and ties.
    for (k, c) in components.iter().enumerate() {
        if !(c.centre.is_finite() && c.sigma.is_finite() && c.amplitude.is_finite())
            || c.sigma <= 0.0
        {
            return Err(FitError::BadGuess(k));
        }
        if let Some(t) = c.tie {
            let ok_to = t.to < k && components[t.to].tie.is_none();
            let ok_w = t.wavelength_ratio.is_none_or(|r| r.is_finite() && r > 0.0);
            let ok_f = t.flux_ratio.is_none_or(|r| r.is_finite() && r >= 0.0);
            if !(ok_to && ok_w && ok_f) {
                return Err(FitError::BadTie(k));
            }
        }
    }
    // Pack usable pixels.
    let mut px: Vec<Pixel> = Vec::with_capacity(range.len());
    for i in range.clone() {
        let (x, s, c, f) = (wave[i], sigma[i], continuum[i], flux[i]);
        if mask[i] && x.is_finite() && f.is_finite() && c.is_finite() && s.is_finite() && s > 0.0 {
            px.push(Pixel {
                x,
                y: f - c,
                w: 1.0 / (s * s),
            });
        }
    }
    let (xmin, xmax) = match (px.first(), px.last()) {
        (Some(a), Some(b)) => (a.x, b.x),
        _ => {
            return Err(FitError::TooFewPixels {
                good: 0,
                params: 3 * nc,
            });
        }
    };
    let x0 = 0.5 * (xmin + xmax);
    let span = (xmax - xmin).max(f64::MIN_POSITIVE);
    let mut min_dx = f64::INFINITY;
    for w in px.windows(2) {
        let d = w[1].x - w[0].x;
        if d > 0.0 && d < min_dx {
            min_dx = d;
        }
    }
    if !min_dx.is_finite() {
        min_dx = span.max(1e-6);
    }
    let smin = opts.min_sigma.unwrap_or(0.1 * min_dx).max(1e-12);
    let smax = opts.max_sigma.unwrap_or(span).max(smin * 2.0);

    // Parameter layout and starting vector.
    let mut p0: Vec<f64> = Vec::with_capacity(3 * nc + 2);
    let mut comps = Vec::with_capacity(nc);
    for c in components {
        let tie = c.tie;
        let mut slot = |cond: bool, v: f64| {
            if cond {
                p0.push(v);
                Some(p0.len() - 1)
            } else {
                None
            }
        };
        let free_c = tie.is_none_or(|t| t.wavelength_ratio.is_none());
        let free_s = tie.is_none_or(|t| !t.same_velocity_width);
        let free_a = tie.is_none_or(|t| t.flux_ratio.is_none());
        let slots = Slots {
            c: slot(free_c, c.centre - x0),
            s: slot(free_s, c.sigma.clamp(smin, smax)),
            a: slot(free_a, c.amplitude),
        };
        comps.push((slots, tie));
    }
    let offset = if opts.fit_offset {
        p0.push(0.0);
        Some(p0.len() - 1)
    } else {
        None
    };
    let slope = if opts.fit_offset && opts.fit_slope {
        p0.push(0.0);
        Some(p0.len() - 1)
    } else {
        None
    };
    let m = p0.len();
    if px.len() < m + 1 {
        return Err(FitError::TooFewPixels {
            good: px.len(),
            params: m,
        });
    }
    let layout = Layout {
        comps,
        offset,
        slope,
        n: m,
        x0,
    };
    // Which parameters are sigmas (bounded) and which are centres (kept in range).
    let mut is_sigma = vec![false; m];
    let mut is_centre = vec![false; m];
    for (slots, _) in &layout.comps {
        if let Some(i) = slots.s {
            is_sigma[i] = true;
        }
        if let Some(i) = slots.c {
            is_centre[i] = true;
        }
    }
    let limits = |i: usize| -> Option<(f64, f64)> {
        if is_sigma[i] {
            Some((smin, smax))
        } else if is_centre[i] {
            Some((xmin - x0 - 0.5 * span, xmax - x0 + 0.5 * span))
        } else {
            None
        }
    };
    let bound = |p: &mut [f64]| {
        for i in 0..p.len() {
            if let Some((lo, hi)) = limits(i) {
                p[i] = p[i].clamp(lo, hi);
            }
        }
    };
    // A parameter at a bound that the descent direction (the gradient
    // J^T W r) pushes further out is held there for the step: the clamped
    // full step would otherwise point the rest off course, and the fit
    // would creep along the bound for dozens of iterations.
    let pinned = |p: &[f64], g: &[f64], i: usize| -> bool {
        limits(i).is_some_and(|(lo, hi)| (p[i] <= lo && g[i] < 0.0) || (p[i] >= hi && g[i] > 0.0))
    };
    // Typical parameter scales for finite differences of the tie mapping.
    let mut scale = vec![1.0; m];
    for (k, (slots, _)) in layout.comps.iter().enumerate() {
        let g = &components[k];
        if let Some(i) = slots.c {
            scale[i] = g.sigma.max(min_dx);
        }
        if let Some(i) = slots.s {
            scale[i] = g.sigma.max(min_dx);
        }
        if let Some(i) = slots.a {
            scale[i] = g.amplitude.abs().max(1e-30);
        }
    }

    let mut ws = Work::new(nc, m);
    let mut p = p0;
    bound(&mut p);
    let mut chi2 = ws.normal(&layout, &px, &p, &scale);
    if !chi2.is_finite() {
        return Err(FitError::Singular);
    }
    let mut lambda = 1e-3;
    let mut converged = false;
    let mut creeping = 0usize;
    let mut iterations = 0;
    let mut trial = vec![0.0; m];
    let mut a_damped = vec![0.0; m * m];
    let mut step = vec![0.0; m];
    'outer: while iterations < opts.max_iterations {
        iterations += 1;
        let mut improved = false;
        for _ in 0..12 {
            for r in 0..m {
                for c in 0..m {
                    a_damped[r * m + c] = ws.a[r * m + c];
                }
                let d = ws.a[r * m + r];
                a_damped[r * m + r] = d * (1.0 + lambda) + 1e-300;
            }
            step.copy_from_slice(&ws.g);
            for i in 0..m {
                if pinned(&p, &ws.g, i) {
                    for c in 0..m {
                        a_damped[i * m + c] = 0.0;
                        a_damped[c * m + i] = 0.0;
                    }
                    a_damped[i * m + i] = 1.0;
                    step[i] = 0.0;
                }
            }
            if !cholesky_solve(&mut a_damped, &mut step, m) {
                lambda *= 10.0;
                continue;
            }
            for i in 0..m {
                trial[i] = p[i] + step[i];
            }
            bound(&mut trial);
            let c2 = ws.chi2(&layout, &px, &trial);
            if c2.is_finite() && c2 <= chi2 {
                let small_step = (0..m).all(|i| (trial[i] - p[i]).abs() <= 1e-9 * scale[i]);
                // Converged when a step gains under 1e-3 in chi-square: a
                // Gauss-Newton step from d errors away gains about d^2, so
                // the fit is within a few hundredths of an error of its
                // minimum (tighter stops change nothing a person could see
                // and cost a third of the detection time).
                let gain_of_step = chi2 - c2;
                let small_gain = gain_of_step <= (1e-10 * chi2).max(1e-3);
                p.copy_from_slice(&trial);
                chi2 = ws.normal(&layout, &px, &p, &scale);
                lambda = (lambda * 0.1).max(1e-12);
                improved = true;
                if small_step || small_gain {
                    converged = true;
                    break 'outer;
                }
                // Creeping: steps that each gain under 0.05 for a run of
                // CREEP_STEPS after many iterations are a degenerate
                // component sliding along a valley (one drifting off into
                // the continuum); the fit stops there, unconverged.
                creeping = if gain_of_step < CREEP_GAIN {
                    creeping + 1
                } else {
                    0
                };
                if iterations >= CREEP_AFTER && creeping >= CREEP_STEPS {
                    break 'outer;
                }
                break;
            }
            lambda *= 10.0;
            if lambda > 1e12 {
                break;
            }
        }
        if !improved {
            // No downhill step at any damping: at a minimum (to precision).
            converged = true;
            break;
        }
    }
    // Covariance at the solution (undamped normal matrix).
    chi2 = ws.normal(&layout, &px, &p, &scale);
    let mut cov = ws.a.clone();
    if !invert_spd(&mut cov, m) {
        return Err(FitError::Singular);
    }
    let dof = px.len() - m;
    let red = if dof > 0 { chi2 / dof as f64 } else { 1.0 };
    for v in cov.iter_mut() {
        *v *= red;
    }
    // Derived values and propagated errors.
    layout.derive(&p, &mut ws.der);
    ws.mapping_jacobian(&layout, &p, &scale);
    let off = offset.map_or(0.0, |i| p[i]);
    let slo = slope.map_or(0.0, |i| p[i]);
    let var = |g: &[f64]| -> f64 {
        let mut v = 0.0;
        for r in 0..m {
            for c in 0..m {
                v += g[r] * cov[r * m + c] * g[c];
            }
        }
        v.max(0.0)
    };
    let root2pi = (2.0 * std::f64::consts::PI).sqrt();
    let mut out = Vec::with_capacity(nc);
    let mut gf = vec![0.0; m];
    let mut gw = vec![0.0; m];
    for k in 0..nc {
        let d = ws.der[k];
        let jc = &ws.jac[(3 * k) * m..(3 * k + 1) * m];
        let js = &ws.jac[(3 * k + 1) * m..(3 * k + 2) * m];
        let ja = &ws.jac[(3 * k + 2) * m..(3 * k + 3) * m];
        let flux_k = d.a * d.s * root2pi;
        for i in 0..m {
            gf[i] = root2pi * (d.s * ja[i] + d.a * js[i]);
            // FWHM in km/s: F * c / centre * s.
            gw[i] = FWHM_PER_SIGMA * C_KM_S * (js[i] / d.c - d.s * jc[i] / (d.c * d.c));
        }
        let centre_err = var(jc).sqrt();
        let sigma_err = var(js).sqrt();
        let amplitude_err = var(ja).sqrt();
        let flux_err = var(&gf).sqrt();
        let cont = continuum_at(wave, continuum, range.clone(), d.c) + off + slo * (d.c - x0);
        let (ew, ew_err) = if cont > 0.0 && cont.is_finite() {
            (-flux_k / cont, flux_err / cont)
        } else {
            (f64::NAN, f64::NAN)
        };
        let snr = if flux_err > 0.0 && flux_err.is_finite() {
            flux_k.abs() / flux_err
        } else {
            0.0
        };
        out.push(ComponentFit {
            centre: d.c,
            centre_err,
            sigma: d.s,
            sigma_err,
            fwhm_kms: FWHM_PER_SIGMA * d.s / d.c * C_KM_S,
            fwhm_kms_err: var(&gw).sqrt(),
            amplitude: d.a,
            amplitude_err,
            flux: flux_k,
            flux_err,
            continuum: cont,
            ew,
            ew_err,
            snr,
        });
    }
    Ok(FitResult {
        components: out,
        offset: off,
        slope: slo,
        x0,
        chi2,
        dof,
        n_params: m,
        iterations,
        converged,
    })
}

/// The given continuum at wavelength `x`, linearly interpolated over `range`.
fn continuum_at(wave: &[f64], continuum: &[f64], range: Range<usize>, x: f64) -> f64 {
    let w = &wave[range.clone()];
    let c = &continuum[range.clone()];
    if w.is_empty() {
        return f64::NAN;
    }
    let j = w.partition_point(|&v| v < x);
    if j == 0 {
        return c[0];
    }
    if j >= w.len() {
        return c[w.len() - 1];
    }
    let (x1, x2) = (w[j - 1], w[j]);
    let t = if x2 > x1 { (x - x1) / (x2 - x1) } else { 0.0 };
    c[j - 1] + t * (c[j] - c[j - 1])
}

/// Scratch space of a fit, allocated once.
struct Work {
    der: Vec<Derived>,
    der2: Vec<Derived>,
    /// d(c_k, s_k, a_k) / dp: rows 3k, 3k+1, 3k+2, each of length m.
    jac: Vec<f64>,
    a: Vec<f64>,
    g: Vec<f64>,
    row: Vec<f64>,
    pp: Vec<f64>,
    /// Number of free parameters.
    m: usize,
}

impl Work {
    fn new(nc: usize, m: usize) -> Work {
        Work {
            der: vec![Derived::default(); nc],
            der2: vec![Derived::default(); nc],
            jac: vec![0.0; 3 * nc * m],
            a: vec![0.0; m * m],
            g: vec![0.0; m],
            row: vec![0.0; m],
            pp: vec![0.0; m],
            m,
        }
    }

    /// Jacobian of the derived component quantities with respect to the
    /// parameters. Exact (0/1) for free quantities; central differences for
    /// tied ones (the mapping is cheap and smooth).
    fn mapping_jacobian(&mut self, layout: &Layout, p: &[f64], scale: &[f64]) {
        let m = self.m;
        self.jac.iter_mut().for_each(|v| *v = 0.0);
        let nc = layout.comps.len();
        let any_tie = layout.comps.iter().any(|(_, t)| t.is_some());
        if !any_tie {
            for (k, (slots, _)) in layout.comps.iter().enumerate() {
                for (q, s) in [slots.c, slots.s, slots.a].into_iter().enumerate() {
                    if let Some(i) = s {
                        self.jac[(3 * k + q) * m + i] = 1.0;
                    }
                }
            }
            return;
        }
        self.pp.copy_from_slice(p);
        for i in 0..m {
            let h = 1e-6 * scale[i].max(p[i].abs() * 1e-3);
            self.pp[i] = p[i] + h;
            layout.derive(&self.pp, &mut self.der);
            self.pp[i] = p[i] - h;
            layout.derive(&self.pp, &mut self.der2);
            self.pp[i] = p[i];
            for k in 0..nc {
                let (u, v) = (self.der[k], self.der2[k]);
                self.jac[(3 * k) * m + i] = (u.c - v.c) / (2.0 * h);
                self.jac[(3 * k + 1) * m + i] = (u.s - v.s) / (2.0 * h);
                self.jac[(3 * k + 2) * m + i] = (u.a - v.a) / (2.0 * h);
            }
        }
        layout.derive(p, &mut self.der);
    }

    /// Chi-square at `p`.
    fn chi2(&mut self, layout: &Layout, px: &[Pixel], p: &[f64]) -> f64 {
        layout.derive(p, &mut self.der);
        let off = layout.offset.map_or(0.0, |i| p[i]);
        let slo = layout.slope.map_or(0.0, |i| p[i]);
        let mut chi2 = 0.0;
        for q in px {
            let mut model = off + slo * (q.x - layout.x0);
            for d in &self.der {
                let z = (q.x - d.c) / d.s;
                if z * z <= CUTOFF_Z2 {
                    model += d.a * exp_fast(-0.5 * z * z);
                }
            }
            let r = q.y - model;
            chi2 += q.w * r * r;
        }
        chi2
    }

    /// Fill the normal matrix `J^T W J` and gradient `J^T W r` at `p`;
    /// return chi-square.
    fn normal(&mut self, layout: &Layout, px: &[Pixel], p: &[f64], scale: &[f64]) -> f64 {
        let m = layout.n;
        self.mapping_jacobian(layout, p, scale);
        layout.derive(p, &mut self.der);
        self.a.iter_mut().for_each(|v| *v = 0.0);
        self.g.iter_mut().for_each(|v| *v = 0.0);
        let off = layout.offset.map_or(0.0, |i| p[i]);
        let slo = layout.slope.map_or(0.0, |i| p[i]);
        let mut chi2 = 0.0;
        let nc = self.der.len();
        let identity = layout.comps.iter().all(|(_, t)| t.is_none());
        // Without ties a pixel touches only the parameters of the
        // components within reach: the normal matrix is accumulated over
        // those (listed in `nz`, ascending) instead of all m x m pairs.
        let mut nz: Vec<usize> = Vec::with_capacity(m);
        self.row.iter_mut().for_each(|v| *v = 0.0);
        for q in px {
            if identity {
                for &i in &nz {
                    self.row[i] = 0.0;
                }
                nz.clear();
            } else {
                self.row.iter_mut().for_each(|v| *v = 0.0);
            }
            let mut model = off + slo * (q.x - layout.x0);
            for k in 0..nc {
                let d = self.der[k];
                let z = (q.x - d.c) / d.s;
                if z * z > CUTOFF_Z2 {
                    continue;
                }
                let e = exp_fast(-0.5 * z * z);
                model += d.a * e;
                let dc = d.a * e * z / d.s;
                let ds = dc * z;
                let da = e;
                if identity {
                    // No ties: each quantity is one parameter.
                    let (slots, _) = &layout.comps[k];
                    for (slot, v) in [(slots.c, dc), (slots.s, ds), (slots.a, da)] {
                        if let Some(i) = slot {
                            self.row[i] += v;
                            nz.push(i);
                        }
                    }
                    continue;
                }
                let base = 3 * k * m;
                for i in 0..m {
                    self.row[i] += dc * self.jac[base + i]
                        + ds * self.jac[base + m + i]
                        + da * self.jac[base + 2 * m + i];
                }
            }
            if let Some(i) = layout.offset {
                self.row[i] += 1.0;
                nz.push(i);
            }
            if let Some(i) = layout.slope {
                self.row[i] += q.x - layout.x0;
                nz.push(i);
            }
            let r = q.y - model;
            chi2 += q.w * r * r;
            if identity {
                nz.sort_unstable();
                nz.dedup();
                for (p, &i) in nz.iter().enumerate() {
                    let wi = q.w * self.row[i];
                    self.g[i] += wi * r;
                    for &j in &nz[..=p] {
                        self.a[i * m + j] += wi * self.row[j];
                    }
                }
                continue;
            }
            for i in 0..m {
                let wi = q.w * self.row[i];
                self.g[i] += wi * r;
                for j in 0..=i {
                    self.a[i * m + j] += wi * self.row[j];
                }
            }
        }
        for i in 0..m {
            for j in 0..i {
                self.a[j * m + i] = self.a[i * m + j];
            }
        }
        chi2
    }
}

/// Solve `A x = b` in place for symmetric positive definite `A` (row-major,
/// `m x m`, overwritten by its Cholesky factor). Returns false when `A` is
/// not positive definite (to working precision).
pub(crate) fn cholesky_solve(a: &mut [f64], b: &mut [f64], m: usize) -> bool {
    if !cholesky(a, m) {
        return false;
    }
    // Forward: L y = b.
    for i in 0..m {
        let mut s = b[i];
        for k in 0..i {
            s -= a[i * m + k] * b[k];
        }
        b[i] = s / a[i * m + i];
    }
    // Back: L^T x = y.
    for i in (0..m).rev() {
        let mut s = b[i];
        for k in i + 1..m {
            s -= a[k * m + i] * b[k];
        }
        b[i] = s / a[i * m + i];
    }
    b.iter().all(|v| v.is_finite())
}

/// In-place Cholesky factorisation (lower triangle). False when not SPD.
fn cholesky(a: &mut [f64], m: usize) -> bool {
    for j in 0..m {
        let mut d = a[j * m + j];
        for k in 0..j {
            d -= a[j * m + k] * a[j * m + k];
        }
        if d.is_nan() || d <= 0.0 || !d.is_finite() {
            return false;
        }
        let d = d.sqrt();
        a[j * m + j] = d;
        for i in j + 1..m {
            let mut s = a[i * m + j];
            for k in 0..j {
                s -= a[i * m + k] * a[j * m + k];
            }
            a[i * m + j] = s / d;
        }
    }
    true
}

/// Invert a symmetric positive definite matrix in place (with Jacobi
/// pre-scaling for conditioning). False when singular.
fn invert_spd(a: &mut [f64], m: usize) -> bool {
    let mut dscale = vec![0.0; m];
    for i in 0..m {
        let d = a[i * m + i];
        if d.is_nan() || d <= 0.0 || !d.is_finite() {
            return false;
        }
        dscale[i] = 1.0 / d.sqrt();
    }
    let mut s = vec![0.0; m * m];
    for i in 0..m {
        for j in 0..m {
            s[i * m + j] = a[i * m + j] * dscale[i] * dscale[j];
        }
    }
    let mut f = s.clone();
    if !cholesky(&mut f, m) {
        return false;
    }
    // Condition check: the smallest pivot relative to 1 (the scaled diagonal).
    let min_pivot = (0..m).map(|i| f[i * m + i]).fold(f64::INFINITY, f64::min);
    if min_pivot < 1e-7 {
        return false;
    }
    let mut col = vec![0.0; m];
    for j in 0..m {
        col.iter_mut().for_each(|v| *v = 0.0);
        col[j] = 1.0;
        // Solve with the factor (already factored: reuse the substitutions).
        for i in 0..m {
            let mut t = col[i];
            for k in 0..i {
                t -= f[i * m + k] * col[k];
            }
            col[i] = t / f[i * m + i];
        }
        for i in (0..m).rev() {
            let mut t = col[i];
            for k in i + 1..m {
                t -= f[k * m + i] * col[k];
            }
            col[i] = t / f[i * m + i];
        }
        for i in 0..m {
            a[i * m + j] = col[i] * dscale[i] * dscale[j];
        }
    }
    true
}

#[cfg(test)]
mod tests {
    use super::*;

    fn px<'a>(
        wave: &'a [f64],
        flux: &'a [f64],
        sigma: &'a [f64],
        mask: &'a [bool],
        continuum: &'a [f64],
    ) -> Pixels<'a> {
        Pixels {
            wave,
            flux,
            sigma,
            mask,
            continuum,
        }
    }

    fn gauss_data(n: usize, c: f64, s: f64, a: f64, noise: &[f64]) -> (Vec<f64>, Vec<f64>) {
        let wave: Vec<f64> = (0..n).map(|i| 5000.0 + i as f64).collect();
        let flux: Vec<f64> = wave
            .iter()
            .zip(noise)
            .map(|(&x, &e)| 10.0 + a * (-0.5 * ((x - c) / s).powi(2)).exp() + e)
            .collect();
        (wave, flux)
    }

    #[test]
    fn noiseless_gaussian_is_recovered_exactly() {
        let n = 60;
        let zero = vec![0.0; n];
        let (w, f) = gauss_data(n, 5030.3, 2.5, 7.0, &zero);
        // Noiseless data with small nominal errors: the fit stops within a
        // hundredth of its statistical errors (~1e-8 here), so the
        // recovery is checked to 1e-6.
        let sig = vec![1e-4; n];
        let mask = vec![true; n];
        let cont = vec![10.0; n];
        let data = Pixels {
            wave: &w,
            flux: &f,
            sigma: &sig,
            mask: &mask,
            continuum: &cont,
        };
        let r = fit_gaussians(
            &data,
            0..n,
            &[Component::free(5029.0, 3.5, 5.0)],
            &FitOptions::default(),
        )
        .unwrap();
        let c = r.components[0];
        assert!((c.centre - 5030.3).abs() < 1e-6, "{c:?}");
        assert!((c.sigma - 2.5).abs() < 1e-6);
        assert!((c.amplitude - 7.0).abs() < 1e-6);
        // EW = -flux / continuum, negative for emission.
        let flux = 7.0 * 2.5 * (2.0 * std::f64::consts::PI).sqrt();
        assert!((c.flux - flux).abs() < 1e-5);
        assert!((c.ew + flux / 10.0).abs() < 1e-5);
    }

    #[test]
    fn all_masked_flat_and_zero_sigma_inputs_return_errors_not_panics() {
        let n = 30;
        let w: Vec<f64> = (0..n).map(|i| 4000.0 + i as f64).collect();
        let f = vec![1.0; n];
        let c = vec![1.0; n];
        let comp = [Component::free(4015.0, 2.0, 1.0)];
        let o = FitOptions::default();
        let ones = vec![1.0; n];
        let good = vec![true; n];
        let masked = vec![false; n];
        assert!(matches!(
            fit_gaussians(&px(&w, &f, &ones, &masked, &c), 0..n, &comp, &o),
            Err(FitError::TooFewPixels { .. })
        ));
        let zero_sigma = vec![0.0; n];
        assert!(fit_gaussians(&px(&w, &f, &zero_sigma, &good, &c), 0..n, &comp, &o).is_err());
        // Flat data: amplitude 0, then width and centre are unconstrained.
        let flat = fit_gaussians(&px(&w, &f, &ones, &good, &c), 0..n, &comp, &o);
        if let Ok(r) = flat {
            assert!(r.components[0].amplitude.abs() < 1e-6 || r.components[0].snr < 1.0);
        }
        // NaN guess.
        let bad = [Component::free(f64::NAN, 2.0, 1.0)];
        assert!(matches!(
            fit_gaussians(&px(&w, &f, &ones, &good, &c), 0..n, &bad, &o),
            Err(FitError::BadGuess(0))
        ));
    }

    #[test]
    fn doublet_with_tied_velocity_width_and_ratio_keeps_the_ties() {
        let n = 120;
        let w: Vec<f64> = (0..n).map(|i| 6000.0 + 0.5 * i as f64).collect();
        let r = 6030.0 / 6010.0;
        let s1 = 1.2;
        let s2 = s1 * r;
        let a1 = 4.0;
        // Flux ratio 0.5: a2 s2 = 0.5 a1 s1.
        let a2 = 0.5 * a1 * s1 / s2;
        let f: Vec<f64> = w
            .iter()
            .map(|&x| {
                a1 * (-0.5 * ((x - 6010.0) / s1).powi(2)).exp()
                    + a2 * (-0.5 * ((x - 6010.0 * r) / s2).powi(2)).exp()
            })
            .collect();
        let comps = [
            Component::free(6010.5, 1.5, 3.0),
            Component {
                centre: 6030.0,
                sigma: 1.5,
                amplitude: 1.0,
                tie: Some(Tie {
                    to: 0,
                    wavelength_ratio: Some(r),
                    same_velocity_width: true,
                    flux_ratio: Some(0.5),
                }),
            },
        ];
        let (s, g, z) = (vec![0.1; n], vec![true; n], vec![0.0; n]);
        let res = fit_gaussians(
            &px(&w, &f, &s, &g, &z),
            0..n,
            &comps,
            &FitOptions::default(),
        )
        .unwrap();
        let (c0, c1) = (res.components[0], res.components[1]);
        assert!((c0.centre - 6010.0).abs() < 1e-6);
        assert!((c1.centre / c0.centre - r).abs() < 1e-12);
        assert!((c1.fwhm_kms - c0.fwhm_kms).abs() < 1e-6);
        assert!((c1.flux / c0.flux - 0.5).abs() < 1e-9);
        assert!(c1.centre_err > 0.0 || res.chi2 < 1e-12);
    }
}
