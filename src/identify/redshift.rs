//! Redshift candidates: seeds from the comb scan, the cross-correlation and
//! line-pattern voting, each refined by a joint fit of its lines.
//!
//! The joint fit models the native pixels as the continuum plus one Gaussian
//! per catalogue line at `lambda_rest * (1+z)`, all lines sharing z and, per
//! width group (narrow emission, narrow absorption, hydrogen absorption,
//! broad emission), one velocity width. Doublets and multiplets thus have
//! tied widths and the separation their rest wavelengths fix. Amplitudes are
//! linear and solved exactly for each trial (z, widths) by weighted least
//! squares with sign constraints (variable projection); z and the widths are
//! searched by parabolic interpolation. The z error comes from the curvature
//! of chi-square, scaled by the reduced chi-square when that exceeds 1.

// Index loops over several parallel slices read more clearly than zipped
// iterators in this numerical code.
#![allow(clippy::needless_range_loop)]

use super::xcorr::{Channel, Comb, Hypothesis};
use super::{Feature, FeatureKind};
use crate::lines::{Catalogue, LineKind};
use crate::physics::constants::C_KM_S;

/// Native-pixel data the fits work on.
#[derive(Debug, Clone)]
pub(crate) struct Native<'a> {
    /// ln(lambda) of each pixel.
    pub lnw: Vec<f64>,
    /// Flux.
    pub flux: &'a [f64],
    /// Inverse variance (0 for masked, spikes, sky lines).
    pub ivar: Vec<f64>,
    /// Continuum for narrow lines.
    pub cont_narrow: Vec<f64>,
    /// Continuum for broad lines.
    pub cont_broad: Vec<f64>,
    /// Continuum for stellar absorption (a window wide enough for hot
    /// stars' Balmer lines).
    pub cont_star: Vec<f64>,
    /// Telluric bands, ln(lambda): absorption lines there are not measured.
    pub telluric: Vec<(f64, f64)>,
}

/// Which continuum a joint fit is measured against.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) enum Base {
    /// Follows everything but narrow features.
    Narrow,
    /// Keeps broad quasar lines out.
    Broad,
    /// Keeps stellar absorption lines out.
    Star,
}

impl Native<'_> {
    /// The continuum of `base`.
    pub(crate) fn base(&self, base: Base) -> &[f64] {
        match base {
            Base::Narrow => &self.cont_narrow,
            Base::Broad => &self.cont_broad,
            Base::Star => &self.cont_star,
        }
    }
}

/// Width groups sharing one velocity width in a joint fit.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) enum Group {
    /// Narrow emission.
    EmNarrow = 0,
    /// Narrow absorption (metals, Ca II, Na I, molecular bands).
    AbNarrow = 1,
    /// Hydrogen absorption (broad wings in hot stars).
    AbHydrogen = 2,
    /// Broad emission.
    EmBroad = 3,
    /// Molecular bands of cool stars: a sharp head (as wide as the narrow
    /// absorption lines) and absorption fading exponentially to the red.
    /// Their "width" is the e-folding length of the fade.
    Band = 4,
}

/// Number of width groups.
pub(crate) const GROUPS: usize = 5;

/// Species whose features are molecular bands (head + fading absorption).
fn is_band_species(species: &str) -> bool {
    matches!(species, "TiO" | "CaH" | "VO")
}

/// The profile of a line of `group` at offset `u` (ln lambda) from its
/// centre or band head, peak 1.
pub(crate) fn profile(group: Group, u: f64, widths: &[f64; GROUPS]) -> f64 {
    match group {
        Group::Band => band_profile(
            u,
            widths[Group::AbNarrow as usize],
            widths[Group::Band as usize],
        ),
        g => {
            let t = u / widths[g as usize];
            exp_fast(-0.5 * t * t)
        }
    }
}

/// A band head blurred by the line-spread function: a sharp edge at
/// `u = 0` with absorption fading as exp(-u / `fade`) to the red, convolved
/// with a Gaussian of `sigma` (all in ln lambda). This is the exponentially
/// modified Gaussian (the convolution of a one-sided exponential with a
/// Gaussian, a standard closed form):
/// exp(sigma^2 / 2 fade^2 - u / fade) Phi(u / sigma - sigma / fade). Its
/// amplitude is the unblurred depth at the head and its area is `fade`, as
/// before blurring. Blurring moves the edge redward by about sigma^2 / fade;
/// a product of a blurred step and the unblurred fade would put that shift
/// into the velocity.
pub(crate) fn band_profile(u: f64, sigma: f64, fade: f64) -> f64 {
    let x = u / sigma - sigma / fade;
    // The Gaussian factor that the tail of Phi carries, written so that
    // exp(sigma^2 / 2 fade^2 - u / fade - x^2 / 2) = exp(-u^2 / 2 sigma^2)
    // never overflows.
    let tail = 0.5
        * erfc_scaled(x.abs() * std::f64::consts::FRAC_1_SQRT_2)
        * exp_fast(-0.5 * (u / sigma) * (u / sigma));
    if x < 0.0 {
        tail
    } else {
        (0.5 * (sigma / fade) * (sigma / fade) - u / fade).exp() - tail
    }
}

/// erfc(y) exp(y^2) for y >= 0, from the rational approximation of
/// Abramowitz & Stegun (1964), eq. 7.1.26 (absolute error of erf under
/// 1.5e-7; coefficients from memory, checked in the tests against Python's
/// `math.erfc`).
fn erfc_scaled(y: f64) -> f64 {
    let t = 1.0 / (1.0 + 0.327_591_1 * y);
    t * (0.254_829_592
        + t * (-0.284_496_736 + t * (1.421_413_741 + t * (-1.453_152_027 + t * 1.061_405_429))))
}

/// 2^(j/32) for j = 0..32, each the nearest double (written by Python's
/// `decimal` at 40 digits).
#[rustfmt::skip]
const EXP2_32THS: [f64; 32] = [
    1.0,
    1.0218971486541166,
    1.0442737824274138,
    1.0671404006768237,
    1.0905077326652577,
    1.1143867425958924,
    1.1387886347566916,
    1.1637248587775775,
    1.189207115002721,
    1.215247359980469,
    1.241857812073484,
    1.2690509571917332,
    1.2968395546510096,
    1.3252366431597413,
    1.3542555469368927,
    1.383909881963832,
    std::f64::consts::SQRT_2,
    1.4451808069770467,
    1.4768261459394993,
    1.5091644275934228,
    1.5422108254079407,
    1.5759808451078865,
    1.6104903319492543,
    1.645755478153965,
    1.681792830507429,
    1.718619298122478,
    1.7562521603732995,
    1.7947090750031072,
    1.8340080864093424,
    1.8741676341103,
    1.9152065613971474,
    1.9571441241754002
,
];

/// e^x for -700 < x <= 0, inlinable: x = (32 m + j) ln 2 / 32 + r with
/// |r| <= ln 2 / 64, e^x = 2^m 2^(j/32) e^r, e^r from its Taylor series to
/// r^5 (relative error below 1e-13), 2^(j/32) from a table and 2^m built
/// from the exponent bits. The profiles are evaluated millions of times per
/// spectrum; this is several times cheaper than a libm call.
#[inline]
pub(crate) fn exp_fast(x: f64) -> f64 {
    if x < -700.0 {
        return 0.0;
    }
    // Round to nearest by the 1.5 * 2^52 trick: two additions, where
    // `f64::round` is a library call on baseline x86-64 (no SSE4.1).
    const MAGIC: f64 = 6_755_399_441_055_744.0;
    const K: f64 = 32.0 / std::f64::consts::LN_2;
    const STEP: f64 = std::f64::consts::LN_2 / 32.0;
    let kf = (x * K + MAGIC) - MAGIC;
    let r = x - kf * STEP;
    let k = kf as i64;
    let j = (k & 31) as usize;
    let m = k >> 5;
    let p = 1.0 + r * (1.0 + r * (0.5 + r * (1.0 / 6.0 + r * (1.0 / 24.0 + r * (1.0 / 120.0)))));
    p * EXP2_32THS[j] * f64::from_bits(((m + 1023) as u64) << 52)
}

/// The ln-lambda extent (below, above the centre) over which a profile is
/// evaluated.
pub(crate) fn extent(group: Group, widths: &[f64; GROUPS]) -> (f64, f64) {
    match group {
        Group::Band => (
            3.5 * widths[Group::AbNarrow as usize],
            3.0 * widths[Group::Band as usize],
        ),
        g => (3.5 * widths[g as usize], 3.5 * widths[g as usize]),
    }
}

/// The integral of a peak-1 profile over ln lambda.
pub(crate) fn profile_area(group: Group, widths: &[f64; GROUPS]) -> f64 {
    match group {
        Group::Band => widths[Group::Band as usize],
        g => widths[g as usize] * (2.0 * std::f64::consts::PI).sqrt(),
    }
}

/// Sign constraint of an amplitude.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Sign {
    Positive,
    Negative,
}

/// One line in a joint fit.
#[derive(Debug, Clone)]
pub(crate) struct FitLine {
    /// Catalogue index.
    pub line: usize,
    /// ln(rest wavelength).
    pub ln_rest: f64,
    /// Width group.
    pub group: Group,
    sign: Sign,
}

/// Result of a joint fit.
#[derive(Debug, Clone)]
pub(crate) struct JointFit {
    /// ln(1+z).
    pub s: f64,
    /// 1-sigma error of ln(1+z).
    pub s_err: f64,
    /// Gaussian sigma per group, in ln(lambda).
    pub widths: [f64; GROUPS],
    /// The lines fitted (those dropped for the wrong sign keep amplitude 0).
    pub lines: Vec<FitLine>,
    /// Amplitudes (flux units; emission > 0).
    pub amp: Vec<f64>,
    /// Their 1-sigma errors (from the given noise, unscaled).
    pub amp_err: Vec<f64>,
    /// Per-line velocity offsets from the common z, km/s (0 when not measured).
    pub offset_kms: Vec<f64>,
    /// Number of good pixels under each line.
    pub npix: Vec<usize>,
    /// Total chi-square improvement over the continuum alone.
    pub gain: f64,
    /// Which continuum the fit used.
    pub base: Base,
}

/// Default Gaussian sigma per group, km/s.
const DEFAULT_SIGMA_KMS: [f64; GROUPS] = [110.0, 150.0, 500.0, 2000.0, 4500.0];
/// Width limits per group, km/s (sigma).
const SIGMA_LIMITS_KMS: [(f64, f64); GROUPS] = [
    (15.0, 700.0),
    (15.0, 900.0),
    (30.0, 2500.0),
    (700.0, 6000.0),
    // Band fade lengths of 25-200 A at 5,000-8,000 A.
    (1500.0, 12000.0),
];

/// Largest sigma (km/s) of a hot star's metal lines: rotation (v sin i up
/// to ~400 km/s, a rotational profile's FWHM ~1.7 v sin i) and the
/// instrument, far narrower than its Balmer lines (common practice, no
/// source). Without it the metal group widened to take the Balmer lines'
/// flux (Ca II H for H-epsilon, He I 3889 for H8) and moved the velocity.
const HOT_METAL_SIGMA_MAX_KMS: f64 = 400.0;

/// Choose the lines to fit for a hypothesis at ln(1+z) = `s`.
pub(crate) fn lines_for(
    cat: &Catalogue,
    comb: &Comb,
    native: &Native,
    s: f64,
    em_bias: &dyn Fn(f64) -> bool,
) -> Vec<FitLine> {
    let (lo, hi) = match (native.lnw.first(), native.lnw.last()) {
        (Some(a), Some(b)) => (*a, *b),
        _ => return Vec::new(),
    };
    let mut out: Vec<FitLine> = Vec::new();
    for t in &comb.teeth {
        let x = t.ln_rest + s;
        if x < lo + 0.001 || x > hi - 0.001 {
            continue;
        }
        let l = &cat.lines[t.line];
        if out.iter().any(|f| f.line == t.line) {
            continue;
        }
        let (group, sign) = match (comb.hypothesis, t.channel) {
            (Hypothesis::Qso, Channel::EmBroad) => (Group::EmBroad, Sign::Positive),
            (Hypothesis::Qso, _) => (Group::EmNarrow, Sign::Positive),
            (Hypothesis::Star, _) => {
                if is_band_species(&l.species) {
                    (Group::Band, Sign::Negative)
                } else if l.species == "H I" {
                    (Group::AbHydrogen, Sign::Negative)
                } else {
                    (Group::AbNarrow, Sign::Negative)
                }
            }
            (Hypothesis::Galaxy, _) => match l.kind {
                LineKind::Emission => (Group::EmNarrow, Sign::Positive),
                LineKind::Absorption => (Group::AbNarrow, Sign::Negative),
                LineKind::Both => {
                    if em_bias(x) {
                        (Group::EmNarrow, Sign::Positive)
                    } else {
                        (Group::AbNarrow, Sign::Negative)
                    }
                }
            },
        };
        if sign == Sign::Negative && native.telluric.iter().any(|&(a, b)| x > a && x < b) {
            continue;
        }
        out.push(FitLine {
            line: t.line,
            ln_rest: t.ln_rest,
            group,
            sign,
        });
    }
    out
}

/// Profile column of one line of `group` at `x`: (first pixel, values).
fn column(native: &Native, x: f64, group: Group, widths: &[f64; GROUPS]) -> (usize, Vec<f64>) {
    let mut vals = Vec::new();
    let a = column_into(native, x, group, widths, &mut vals);
    (a, vals)
}

/// [`column`] into a caller's buffer (cleared first); returns the first pixel.
fn column_into(
    native: &Native,
    x: f64,
    group: Group,
    widths: &[f64; GROUPS],
    vals: &mut Vec<f64>,
) -> usize {
    let (below, above) = extent(group, widths);
    let a = native.lnw.partition_point(|&v| v < x - below);
    let b = native.lnw.partition_point(|&v| v <= x + above).max(a);
    vals.clear();
    let span = &native.lnw[a..b];
    match group {
        Group::Band => vals.extend(span.iter().map(|&v| profile(group, v - x, widths))),
        g => {
            // The Gaussian of `profile`, with the group's width read once.
            let w = widths[g as usize];
            vals.extend(span.iter().map(|&v| {
                let t = (v - x) / w;
                exp_fast(-0.5 * t * t)
            }));
        }
    }
    a
}

/// Solve the symmetric positive system `m a = b` (Cholesky); `None` if
/// singular. With `want_var`, also the diagonal of the inverse (the
/// variances), else an empty vector.
#[cfg(test)]
fn solve(m: &[f64], b: &[f64], n: usize, want_var: bool) -> Option<(Vec<f64>, Vec<f64>)> {
    let mut sc = Solver::default();
    let mut a = vec![0.0; n];
    let mut var = vec![0.0; if want_var { n } else { 0 }];
    sc.solve(m, b, n, &mut a, want_var.then_some(&mut var[..]))
        .then_some((a, var))
}

/// Cholesky solver with its work buffers kept between calls (the joint fit
/// solves hundreds of thousands of small systems per spectrum).
#[derive(Debug, Default)]
struct Solver {
    l: Vec<f64>,
    y: Vec<f64>,
    e: Vec<f64>,
    x: Vec<f64>,
}

impl Solver {
    /// Solve the symmetric positive `n` x `n` system `m a = b` into `a`;
    /// false if singular. With `var`, also the diagonal of the inverse.
    fn solve(
        &mut self,
        m: &[f64],
        b: &[f64],
        n: usize,
        a: &mut [f64],
        var: Option<&mut [f64]>,
    ) -> bool {
        let l = &mut self.l;
        l.clear();
        l.resize(n * n, 0.0);
        for i in 0..n {
            for j in 0..=i {
                let mut s = m[i * n + j];
                for k in 0..j {
                    s -= l[i * n + k] * l[j * n + k];
                }
                if i == j {
                    if s <= 1e-300 {
                        return false;
                    }
                    l[i * n + i] = s.sqrt();
                } else {
                    l[i * n + j] = s / l[j * n + j];
                }
            }
        }
        let l = &self.l;
        let y = &mut self.y;
        y.clear();
        y.resize(n, 0.0);
        let fwd = |rhs: &[f64], y: &mut [f64], x: &mut [f64]| {
            for i in 0..n {
                let mut s = rhs[i];
                for k in 0..i {
                    s -= l[i * n + k] * y[k];
                }
                y[i] = s / l[i * n + i];
            }
            for i in (0..n).rev() {
                let mut s = y[i];
                for k in i + 1..n {
                    s -= l[k * n + i] * x[k];
                }
                x[i] = s / l[i * n + i];
            }
        };
        a[..n].fill(0.0);
        fwd(b, y, a);
        if let Some(var) = var {
            // Diagonal of the inverse (variances).
            self.x.clear();
            self.x.resize(n, 0.0);
            for i in 0..n {
                self.e.clear();
                self.e.resize(n, 0.0);
                self.e[i] = 1.0;
                self.x.fill(0.0);
                fwd(&self.e, y, &mut self.x);
                var[i] = self.x[i];
            }
        }
        true
    }
}

/// One evaluation of the linear part at fixed (s, widths).
struct Eval {
    gain: f64,
    amp: Vec<f64>,
    var: Vec<f64>,
    npix: Vec<usize>,
    chi2: f64,
    dof: f64,
}

/// Column key of a line: its centre, its width and (bands) its edge width.
type ColumnKey = (f64, f64, f64);

/// Profile columns of a fit's lines, kept between evaluations: a line's
/// column is recomputed only when its centre or a width it depends on
/// changed (the width search varies one group at a time). Also the last
/// solution of the cluster that starts at each line: a cluster whose lines
/// all have the same columns as before has the same solution, so a width
/// trial of one group solves again only the clusters that hold that
/// group's lines.
struct Columns {
    keys: Vec<Option<ColumnKey>>,
    cols: Vec<(usize, Vec<f64>)>,
    /// Good pixels (ivar > 0) under each column.
    npix: Vec<usize>,
    solved: Vec<Solved>,
    work: ClusterWork,
}

/// A solved cluster: what it was solved for (`want_var`, then each line's
/// index and column key as bits), its gain and its lines' amplitudes and
/// variances. An empty key is an empty slot.
#[derive(Debug, Clone, Default)]
struct Solved {
    key: Vec<u64>,
    gain: f64,
    amp: Vec<f64>,
    var: Vec<f64>,
}

/// Work buffers of [`solve_cluster`].
#[derive(Debug, Default)]
struct ClusterWork {
    full_b: Vec<f64>,
    full_m: Vec<f64>,
    active: Vec<bool>,
    pos: Vec<usize>,
    idx: Vec<usize>,
    m: Vec<f64>,
    b: Vec<f64>,
    a: Vec<f64>,
    v: Vec<f64>,
    solver: Solver,
}

impl Columns {
    fn new(n: usize) -> Columns {
        Columns {
            keys: vec![None; n],
            cols: vec![(0, Vec::new()); n],
            npix: vec![0; n],
            solved: vec![Solved::default(); n],
            work: ClusterWork::default(),
        }
    }

    fn update(&mut self, native: &Native, lines: &[FitLine], s: f64, widths: &[f64; GROUPS]) {
        for (i, l) in lines.iter().enumerate() {
            let x = l.ln_rest + s;
            let edge = if l.group == Group::Band {
                widths[Group::AbNarrow as usize]
            } else {
                0.0
            };
            let key = (x, widths[l.group as usize], edge);
            if self.keys[i] != Some(key) {
                // Refill the line's buffer in place (no allocation).
                let (a, v) = &mut self.cols[i];
                *a = column_into(native, x, l.group, widths, v);
                self.npix[i] = native.ivar[*a..*a + v.len()]
                    .iter()
                    .filter(|w| **w > 0.0)
                    .count();
                self.keys[i] = Some(key);
            }
        }
    }
}

fn evaluate(
    native: &Native,
    lines: &[FitLine],
    s: f64,
    widths: &[f64; GROUPS],
    base: Base,
    want_var: bool,
    cache: &std::cell::RefCell<Columns>,
) -> Eval {
    let n = lines.len();
    let mut cache = cache.borrow_mut();
    cache.update(native, lines, s, widths);
    let Columns {
        keys,
        cols,
        npix,
        solved,
        work,
    } = &mut *cache;
    let base = native.base(base);
    let mut amp = vec![0.0; n];
    let mut var = vec![0.0; n];
    let mut gain = 0.0;
    let mut chi2 = 0.0;
    let mut cnt = 0.0;
    // Lines whose windows do not overlap have independent amplitudes: the
    // normal matrix is block diagonal, so each cluster of overlapping
    // windows is solved on its own (the same answer as one big solve, at a
    // fraction of the cost).
    let mut order: Vec<usize> = (0..n).filter(|&i| !cols[i].1.is_empty()).collect();
    order.sort_by_key(|&i| (cols[i].0, i));
    let mut start = 0;
    let mut key: Vec<u64> = Vec::new();
    while start < order.len() {
        let mut end = start + 1;
        let mut reach = cols[order[start]].0 + cols[order[start]].1.len();
        while end < order.len() && cols[order[end]].0 < reach {
            reach = reach.max(cols[order[end]].0 + cols[order[end]].1.len());
            end += 1;
        }
        let first = cols[order[start]].0;
        let cluster = &order[start..end];
        key.clear();
        key.push(want_var as u64);
        for &i in cluster {
            let (x, w, e) = keys[i].unwrap_or_default();
            key.extend([i as u64, x.to_bits(), w.to_bits(), e.to_bits()]);
        }
        let slot = &mut solved[cluster[0]];
        if slot.key == key {
            for (p, &i) in cluster.iter().enumerate() {
                amp[i] = slot.amp[p];
                var[i] = slot.var[p];
            }
            gain += slot.gain;
        } else {
            let g = solve_cluster(
                native, lines, cols, base, npix, cluster, &mut amp, &mut var, want_var, work,
            );
            gain += g;
            slot.key.clone_from(&key);
            slot.gain = g;
            slot.amp.clear();
            slot.amp.extend(cluster.iter().map(|&i| amp[i]));
            slot.var.clear();
            slot.var.extend(cluster.iter().map(|&i| var[i]));
        }
        // Chi-square of the cluster's pixels under the fitted model (only
        // the final evaluation of a fit needs it, for the error scale).
        if !want_var {
            start = end;
            continue;
        }
        let mut model = vec![0.0; reach - first];
        for &i in cluster {
            let (a, v) = &cols[i];
            if amp[i] != 0.0 {
                for (t, g) in v.iter().enumerate() {
                    model[a + t - first] += amp[i] * g;
                }
            }
        }
        for (t, mv) in model.iter().enumerate() {
            let px = first + t;
            let w = native.ivar[px];
            if w > 0.0 {
                let r = native.flux[px] - base[px] - mv;
                chi2 += w * r * r;
                cnt += 1.0;
            }
        }
        start = end;
    }
    let nact = amp.iter().filter(|a| **a != 0.0).count() as f64;
    Eval {
        gain,
        amp,
        var,
        npix: npix.clone(),
        chi2,
        dof: (cnt - nact - 1.0).max(1.0),
    }
}

/// Weighted least squares for the amplitudes of one cluster of lines with
/// overlapping windows, with sign constraints: a line of the wrong sign is
/// dropped (the most significant first) and the rest refitted. Writes the
/// amplitudes and variances of the cluster's lines; returns its chi-square
/// gain.
#[allow(clippy::too_many_arguments)]
fn solve_cluster(
    native: &Native,
    lines: &[FitLine],
    cols: &[(usize, Vec<f64>)],
    base: &[f64],
    npix: &[usize],
    cluster: &[usize],
    amp: &mut [f64],
    var: &mut [f64],
    want_var: bool,
    work: &mut ClusterWork,
) -> f64 {
    let nc = cluster.len();
    let ClusterWork {
        full_b,
        full_m,
        active,
        pos,
        idx,
        m,
        b,
        a,
        v,
        solver,
    } = work;
    // Normal matrix and right-hand side of the whole cluster, built once;
    // each refit after a drop takes the rows of the lines still active.
    full_b.clear();
    full_b.resize(nc, 0.0);
    full_m.clear();
    full_m.resize(nc * nc, 0.0);
    for (p, &i) in cluster.iter().enumerate() {
        let (ai, vi) = &cols[i];
        let (ai, n) = (*ai, vi.len());
        let (w, f, c) = (
            &native.ivar[ai..ai + n],
            &native.flux[ai..ai + n],
            &base[ai..ai + n],
        );
        let mut bp = 0.0;
        for t in 0..n {
            if w[t] > 0.0 {
                bp += w[t] * (f[t] - c[t]) * vi[t];
            }
        }
        full_b[p] = bp;
        for (q, &j) in cluster.iter().enumerate().take(p + 1) {
            let (aj, vj) = &cols[j];
            let aj = *aj;
            let lo = ai.max(aj);
            let hi = (ai + n).min(aj + vj.len());
            let mut sum = 0.0;
            if hi > lo {
                let w = &native.ivar[lo..hi];
                let gi = &vi[lo - ai..hi - ai];
                let gj = &vj[lo - aj..hi - aj];
                for t in 0..hi - lo {
                    sum += w[t] * gi[t] * gj[t];
                }
            }
            full_m[p * nc + q] = sum;
            full_m[q * nc + p] = sum;
        }
    }
    active.clear();
    active.extend(cluster.iter().map(|&i| npix[i] >= 2));
    for _ in 0..=nc {
        pos.clear();
        pos.extend((0..nc).filter(|&p| active[p]));
        idx.clear();
        idx.extend(pos.iter().map(|&p| cluster[p]));
        let k = idx.len();
        if k == 0 {
            if want_var {
                dropped_variances(lines, cluster, npix, full_m, active, var);
            }
            return 0.0;
        }
        m.clear();
        m.resize(k * k, 0.0);
        b.clear();
        b.extend(pos.iter().map(|&p| full_b[p]));
        for (r, &p) in pos.iter().enumerate() {
            for (c, &q) in pos.iter().enumerate() {
                m[r * k + c] = full_m[p * nc + q];
            }
        }
        // A touch of ridge keeps near-coincident lines solvable.
        for p in 0..k {
            m[p * k + p] *= 1.0 + 1e-9;
            m[p * k + p] += 1e-300;
        }
        a.clear();
        a.resize(k, 0.0);
        if !solver.solve(m, b, k, a, None) {
            // Drop the weakest-determined line and retry.
            if let Some(pos) = cluster.iter().rposition(|i| Some(i) == idx.last()) {
                active[pos] = false;
                continue;
            }
            return 0.0;
        }
        let mut bad = None;
        let mut worst = 0.0;
        for (p, &i) in idx.iter().enumerate() {
            let wrong = match lines[i].sign {
                Sign::Positive => a[p] < 0.0,
                Sign::Negative => a[p] > 0.0,
            };
            if wrong {
                // Significance ignoring correlations (no inverse needed).
                let z = a[p] * a[p] * m[p * k + p];
                if z >= worst {
                    worst = z;
                    bad = Some(i);
                }
            }
        }
        if let Some(i) = bad {
            if let Some(pos) = cluster.iter().position(|&c| c == i) {
                active[pos] = false;
            }
            continue;
        }
        v.clear();
        if want_var {
            v.resize(k, 0.0);
            let mut again = vec![0.0; k];
            if !solver.solve(m, b, k, &mut again, Some(&mut v[..])) {
                v.clear();
            }
        }
        let mut gain = 0.0;
        for (p, &i) in idx.iter().enumerate() {
            amp[i] = a[p];
            var[i] = v.get(p).copied().unwrap_or(0.0);
            gain += a[p] * b[p];
        }
        if want_var {
            dropped_variances(lines, cluster, npix, full_m, active, var);
        }
        return gain;
    }
    0.0
}

/// A broad line dropped for the wrong sign is measured as zero, with the
/// variance it would have alone (the inverse of its normal-matrix
/// diagonal): an absent broad line with an error bar is evidence (broad
/// H-alpha missing beside a bright "broad H-beta"), where no error would
/// leave it unmeasured. Narrow lines keep no error when dropped: a galaxy's
/// Balmer emission often sits in deeper stellar absorption, and a net dip
/// there does not say the emission line is absent.
fn dropped_variances(
    lines: &[FitLine],
    cluster: &[usize],
    npix: &[usize],
    full_m: &[f64],
    active: &[bool],
    var: &mut [f64],
) {
    let nc = cluster.len();
    for (p, &i) in cluster.iter().enumerate() {
        let d = full_m[p * nc + p];
        if !active[p] && npix[i] >= 2 && d > 0.0 && lines[i].group == Group::EmBroad {
            var[i] = 1.0 / d;
        }
    }
}

/// Parabolic vertex of three equally spaced samples (offset in steps).
fn vertex(y0: f64, y1: f64, y2: f64) -> f64 {
    let den = y0 - 2.0 * y1 + y2;
    if den < 0.0 {
        (0.5 * (y0 - y2) / den).clamp(-1.0, 1.0)
    } else {
        0.0
    }
}

/// Starting widths in ln(lambda) from sigmas in km/s, clamped to the group
/// limits.
fn start_widths(sigma_kms: [f64; GROUPS]) -> [f64; GROUPS] {
    let mut widths = [0.0; GROUPS];
    for g in 0..GROUPS {
        let (lo, hi) = SIGMA_LIMITS_KMS[g];
        widths[g] = sigma_kms[g].clamp(lo, hi) / C_KM_S;
    }
    widths
}

/// The continuum a fit of `lines` is measured against: the broad one when
/// it has broad lines, which the narrow continuum would follow; with `hot`,
/// the stellar one for stellar hydrogen lines; else the narrow one.
fn base_for(lines: &[FitLine], hot: bool) -> Base {
    if lines.iter().any(|l| l.group == Group::EmBroad) {
        Base::Broad
    } else if hot && lines.iter().any(|l| l.group == Group::AbHydrogen) {
        Base::Star
    } else {
        Base::Narrow
    }
}

/// The fit of `lines` held at ln(1+z) = `s` with the best of the given
/// starting width sets (no search): amplitudes, their errors and the gain,
/// for scoring a seed before it is refined; with the best gain less 2 per
/// free amplitude (the best chi-square gain over the sets, less 2 per free amplitude).
pub(crate) fn fit_at(
    native: &Native,
    lines: &[FitLine],
    s: f64,
    sigma_sets: &[[f64; GROUPS]],
) -> Option<(JointFit, f64)> {
    if lines.is_empty() {
        return None;
    }
    let cache = std::cell::RefCell::new(Columns::new(lines.len()));
    let base = base_for(lines, false);
    let mut best: Option<([f64; GROUPS], f64)> = None;
    for sigma in sigma_sets {
        let w = start_widths(*sigma);
        let ev = evaluate(native, lines, s, &w, base, false, &cache);
        let g = ev.gain - 2.0 * ev.amp.iter().filter(|a| **a != 0.0).count() as f64;
        if best.is_none_or(|b| g > b.1) {
            best = Some((w, g));
        }
    }
    let (widths, look) = best?;
    let ev = evaluate(native, lines, s, &widths, base, true, &cache);
    let fit = JointFit {
        s,
        s_err: 0.0,
        widths,
        amp_err: ev.var.iter().map(|v| v.sqrt()).collect(),
        amp: ev.amp,
        offset_kms: vec![0.0; lines.len()],
        npix: ev.npix,
        gain: ev.gain,
        base,
        lines: lines.to_vec(),
    };
    Some((fit, look))
}

/// Joint fit of `lines` near ln(1+z) = `s0`, searching +- `reach` in s;
/// with `hot`, stellar hydrogen lines are measured against the stellar
/// continuum (see [`Base::Star`]).
pub(crate) fn joint_fit(
    native: &Native,
    lines: Vec<FitLine>,
    s0: f64,
    reach: f64,
    init_sigma_kms: [f64; GROUPS],
    hot: bool,
) -> Option<JointFit> {
    if lines.is_empty() {
        return None;
    }
    let base = base_for(&lines, hot);
    let mut widths = start_widths(init_sigma_kms);
    if hot {
        let g = Group::AbNarrow as usize;
        widths[g] = widths[g].min(HOT_METAL_SIGMA_MAX_KMS / C_KM_S);
    }
    let cache = std::cell::RefCell::new(Columns::new(lines.len()));
    let g_at = |s: f64, w: &[f64; GROUPS]| evaluate(native, &lines, s, w, base, false, &cache).gain;
    // Coarse search in s.
    let mut s;
    let steps = 3;
    let h = reach / steps as f64;
    let mut best = (f64::NEG_INFINITY, s0);
    for k in -(steps as isize)..=(steps as isize) {
        let t = s0 + k as f64 * h;
        let g = g_at(t, &widths);
        if g > best.0 {
            best = (g, t);
        }
    }
    s = best.1;
    // The gain at the current (s, widths), kept so no point is evaluated twice.
    let mut here = best.0;
    let mut h = h;
    for _round in 0..2 {
        // Widths of the groups in use, by factors.
        for g in 0..GROUPS {
            if !lines.iter().any(|l| l.group as usize == g) {
                continue;
            }
            let (lo, mut hi) = SIGMA_LIMITS_KMS[g];
            if hot && g == Group::AbNarrow as usize {
                hi = HOT_METAL_SIGMA_MAX_KMS;
            }
            let w0 = widths[g];
            let mut bw = (here, w0);
            for f in [0.55, 0.75, 1.35, 1.8] {
                let mut w = widths;
                w[g] = (w0 * f).clamp(lo / C_KM_S, hi / C_KM_S);
                let v = g_at(s, &w);
                if v > bw.0 {
                    bw = (v, w[g]);
                }
            }
            widths[g] = bw.1;
            here = bw.0;
        }
        // Parabolic refinement of s, shrinking the step.
        for _ in 0..3 {
            let y0 = g_at(s - h, &widths);
            let y1 = here;
            let y2 = g_at(s + h, &widths);
            if y0 > y1 && y0 >= y2 {
                s -= h;
                here = y0;
            } else if y2 > y1 {
                s += h;
                here = y2;
            } else {
                let d = vertex(y0, y1, y2);
                if d != 0.0 {
                    s += d * h;
                    here = g_at(s, &widths);
                }
                h *= 0.4;
            }
        }
    }
    let ev = evaluate(native, &lines, s, &widths, base, true, &cache);
    // Curvature for the error: chi2(s) = chi2_min + C (s - s*)^2 / 2 with
    // C = -d2 gain / ds2; sigma_s = sqrt(2 / C) (Delta chi2 = 1).
    let sig_min = widths
        .iter()
        .enumerate()
        .filter(|(g, _)| lines.iter().any(|l| l.group as usize == *g))
        .map(|(_, w)| *w)
        .fold(f64::INFINITY, f64::min);
    let d = (0.1 * sig_min).max(1e-6);
    let gm = g_at(s - d, &widths);
    let gp = g_at(s + d, &widths);
    let curv = -(gp - 2.0 * ev.gain + gm) / (d * d);
    let chi2_red = ev.chi2 / ev.dof;
    let scale = chi2_red.max(1.0);
    let s_err = if curv > 0.0 {
        (2.0 / curv * scale).sqrt()
    } else {
        sig_min
    };
    // Amplitude errors stay unscaled: candidates of one spectrum are compared
    // by their chi-square gains, which a per-fit scale would distort (a rich
    // fit with one imperfect line would lose to a one-line fit).
    let amp_err: Vec<f64> = ev.var.iter().map(|v| v.sqrt()).collect();
    let mut fit = JointFit {
        s,
        s_err,
        widths,
        amp: ev.amp,
        amp_err,
        offset_kms: vec![0.0; lines.len()],
        npix: ev.npix,
        gain: ev.gain,
        base,
        lines,
    };
    measure_offsets(native, &mut fit);
    Some(fit)
}

impl JointFit {
    /// FWHM (km/s) of the stellar hydrogen group.
    pub(crate) fn hydrogen_fwhm_kms(&self) -> f64 {
        2.354_820_045 * self.widths[Group::AbHydrogen as usize] * C_KM_S
    }

    /// The share of the lines' summed S/N^2 in the stellar hydrogen group.
    pub(crate) fn hydrogen_share(&self) -> f64 {
        self.group_share(Group::AbHydrogen)
    }

    /// The share of the lines' summed S/N^2 in `group`.
    fn group_share(&self, group: Group) -> f64 {
        let (mut h, mut all) = (0.0, 0.0);
        for (i, l) in self.lines.iter().enumerate() {
            if self.amp_err[i] > 0.0 {
                let p = (self.amp[i] / self.amp_err[i]).powi(2);
                all += p;
                if l.group == group {
                    h += p;
                }
            }
        }
        if all > 0.0 { h / all } else { 0.0 }
    }
}

/// Per-line velocity offsets: each significant line alone, the others held
/// at their fitted amplitudes, best shift by a parabola.
fn measure_offsets(native: &Native, fit: &mut JointFit) {
    let base = native.base(fit.base);
    // The residual under the whole fitted model, built once; each line's
    // own profile is added back when that line is measured, so the cost is
    // one pass per trial shift rather than one per line per pixel.
    let mut resid: Vec<f64> = native
        .flux
        .iter()
        .zip(base.iter())
        .map(|(f, b)| f - b)
        .collect();
    let mut own: Vec<(usize, Vec<f64>)> = Vec::with_capacity(fit.lines.len());
    for (j, l) in fit.lines.iter().enumerate() {
        let (a, v) = column(native, l.ln_rest + fit.s, l.group, &fit.widths);
        if fit.amp[j] != 0.0 {
            for (t, g) in v.iter().enumerate() {
                resid[a + t] -= fit.amp[j] * g;
            }
        }
        own.push((a, v));
    }
    let mut trial = Vec::new();
    for i in 0..fit.lines.len() {
        if fit.amp_err[i] <= 0.0 || (fit.amp[i] / fit.amp_err[i]).abs() < 3.0 {
            continue;
        }
        let group = fit.lines[i].group;
        let sig = if group == Group::Band {
            fit.widths[Group::AbNarrow as usize]
        } else {
            fit.widths[group as usize]
        };
        let x0 = fit.lines[i].ln_rest + fit.s;
        let (oa, ov) = &own[i];
        let amp_i = fit.amp[i];
        let mut gain_at = |dx: f64| -> f64 {
            let a = column_into(native, x0 + dx, group, &fit.widths, &mut trial);
            let mut num = 0.0;
            let mut den = 0.0;
            for (t, g) in trial.iter().enumerate() {
                let px = a + t;
                let w = native.ivar[px];
                if w <= 0.0 {
                    continue;
                }
                // Residual without the other lines near this one.
                let mut y = resid[px];
                if px >= *oa && px < oa + ov.len() {
                    y += amp_i * ov[px - oa];
                }
                num += w * y * g;
                den += w * g * g;
            }
            if den > 0.0 { num * num / den } else { 0.0 }
        };
        let h = 0.35 * sig;
        let mut c = 0.0;
        for _ in 0..4 {
            let (y0, y1, y2) = (gain_at(c - h), gain_at(c), gain_at(c + h));
            if y0 > y1 && y0 >= y2 {
                c -= h;
            } else if y2 > y1 {
                c += h;
            } else {
                c += vertex(y0, y1, y2) * h;
                break;
            }
            if c.abs() > 2.0 * sig {
                break;
            }
        }
        fit.offset_kms[i] = c * C_KM_S;
    }
}

/// Transmitted-flux scatter of the Lyman-alpha forest as a fraction of the
/// continuum (about 0.3 at z ~ 3; from memory, common practice).
const FOREST_SCATTER: f64 = 0.3;

/// A copy of `native` for a quasar at ln(1+z) = `s` with the forest's
/// scatter added to the noise of the pixels blueward of Lyman-alpha (less
/// the 1,500 km/s proximity zone), or `None` when no pixel is there.
pub(crate) fn forest_weighted<'a>(native: &Native<'a>, s: f64) -> Option<Native<'a>> {
    let edge = 1215.67f64.ln() + s - 1500.0 / C_KM_S;
    let k = native.lnw.partition_point(|&x| x < edge);
    if k == 0 {
        return None;
    }
    let mut out = native.clone();
    for i in 0..k {
        let w = out.ivar[i];
        if w > 0.0 {
            let f = FOREST_SCATTER * out.cont_broad[i];
            out.ivar[i] = 1.0 / (1.0 / w + f * f);
        }
    }
    Some(out)
}

/// Default initial widths (sigma, km/s), adjusted by the grid's best
/// narrow-kernel width at the strongest narrow line.
pub(crate) fn initial_sigma(narrow_fwhm_kms: Option<f64>) -> [f64; GROUPS] {
    let mut s = DEFAULT_SIGMA_KMS;
    if let Some(f) = narrow_fwhm_kms {
        s[0] = f / 2.3548;
        s[1] = f / 2.3548;
        s[2] = s[2].max(f / 2.3548);
    }
    s
}

/// Line-pattern voting: every usable detection paired with every catalogue
/// line of a compatible kind proposes ln(1+z) = ln(obs / rest); votes,
/// weighted by detection S/N and line strength, go into bins as wide as the
/// centroid errors allow. Returns the ln(1+z) of peaks with at least two
/// consistent pairs, best first.
pub(crate) fn vote(
    features: &[Feature],
    cat: &Catalogue,
    s_lo: f64,
    s_hi: f64,
    bin: f64,
) -> Vec<(f64, f64, usize)> {
    if bin.is_nan() || bin <= 0.0 || s_hi <= s_lo {
        return Vec::new();
    }
    let nb = ((s_hi - s_lo) / bin).ceil() as usize + 1;
    let mut w = vec![0.0; nb];
    let mut cnt = vec![0usize; nb];
    for f in features
        .iter()
        .filter(|f| f.flag.is_none() && f.wavelength > 0.0)
    {
        let lo = f.wavelength.ln();
        for l in &cat.lines {
            let ok = matches!(
                (f.kind, l.kind),
                (FeatureKind::Emission, LineKind::Emission | LineKind::Both)
                    | (
                        FeatureKind::Absorption,
                        LineKind::Absorption | LineKind::Both
                    )
            );
            if !ok || l.wavelength.is_nan() || l.wavelength <= 0.0 {
                continue;
            }
            let s = lo - l.wavelength.ln();
            if s < s_lo || s > s_hi {
                continue;
            }
            let k = ((s - s_lo) / bin).round() as usize;
            let weight = f.snr.clamp(0.0, 30.0) * (0.25 + 0.75 * l.strength.clamp(0.0, 1.0));
            w[k] += weight;
            cnt[k] += 1;
        }
    }
    // Merge neighbouring bins (a vote near a bin edge).
    let mut out = Vec::new();
    for k in 0..nb {
        let lo = k.saturating_sub(1);
        let hi = (k + 1).min(nb - 1);
        let tot: f64 = w[lo..=hi].iter().sum();
        let c: usize = cnt[lo..=hi].iter().sum();
        let is_max = (lo..=hi).all(|j| w[j] <= w[k]) && w[k] > 0.0;
        if is_max && c >= 2 {
            out.push((s_lo + k as f64 * bin, tot, c));
        }
    }
    out.sort_by(|a, b| b.1.total_cmp(&a.1));
    out.truncate(8);
    out
}

/// How many of the brightest emission detections seed single-line
/// galaxy solutions.
const SINGLE_LINE_FEATURES: usize = 3;

/// Seeds for a spectrum whose redshift rests on one bright line: each of the
/// brightest unflagged emission detections (S/N >= 8) taken as each strong
/// emission line (strength >= 0.3) of `class` and `width` in the catalogue
/// (narrow galaxy lines, broad quasar lines), as ln(1+z) within
/// `[s_lo, s_hi]`.
pub(crate) fn single_line_seeds(
    features: &[Feature],
    cat: &Catalogue,
    (class, width): (crate::lines::ObjectClass, crate::lines::Width),
    s_lo: f64,
    s_hi: f64,
) -> Vec<f64> {
    let mut bright: Vec<&Feature> = features
        .iter()
        .filter(|f| {
            f.flag.is_none()
                && f.kind == FeatureKind::Emission
                && f.snr >= 8.0
                && f.wavelength > 0.0
        })
        .collect();
    bright.sort_by(|a, b| b.snr.total_cmp(&a.snr));
    let mut out = Vec::new();
    for f in bright.into_iter().take(SINGLE_LINE_FEATURES) {
        for l in &cat.lines {
            if !matches!(l.kind, LineKind::Emission | LineKind::Both)
                || l.width != width
                || !l.classes.contains(&class)
                || l.strength < 0.3
                || l.wavelength.is_nan()
                || l.wavelength <= 0.0
            {
                continue;
            }
            let s = (f.wavelength / l.wavelength).ln();
            if (s_lo..=s_hi).contains(&s) {
                out.push(s);
            }
        }
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn cholesky_solves_a_small_system() {
        // [[4,2],[2,3]] x = [2,1] -> x = [0.5, 0] (by hand).
        let (x, var) = solve(&[4.0, 2.0, 2.0, 3.0], &[2.0, 1.0], 2, true).unwrap();
        assert!((x[0] - 0.5).abs() < 1e-12 && x[1].abs() < 1e-12);
        // Inverse diagonal: 3/8 and 4/8.
        assert!((var[0] - 0.375).abs() < 1e-12 && (var[1] - 0.5).abs() < 1e-12);
    }

    #[test]
    fn the_fast_exponential_agrees_with_libm() {
        let mut x = -700.0;
        while x <= 0.0 {
            let (a, b) = (exp_fast(x), x.exp());
            assert!((a - b).abs() <= 1e-12 * b, "{x}: {a} vs {b}");
            x += 0.0173;
        }
        assert_eq!(exp_fast(-800.0), 0.0);
    }

    #[test]
    fn the_scaled_erfc_agrees_with_python() {
        // math.erfc of Python 3.
        for (y, want) in [
            (0.0, 1.0),
            (0.1, 0.8875370839817152),
            (0.5, 0.4795001221869535),
            (1.0, 0.15729920705028513),
            (1.5, 0.033894853524689274),
            (2.0, 0.004677734981047265),
            (3.0, 2.2090496998585438e-05),
            (4.5, 1.9661604415428873e-10),
        ] {
            let got = erfc_scaled(y) * (-y * y).exp();
            // Abramowitz & Stegun quote 1.5e-7 for 7.1.26.
            assert!(
                (got - want).abs() < 1.5e-7,
                "erfc({y}) = {got}, want {want}"
            );
        }
    }

    #[test]
    fn the_band_profile_is_the_blurred_exponential_band() {
        // Against a direct numerical convolution of the unblurred band
        // (1 at the head, fading as exp(-u / fade) redward, 0 blueward)
        // with a unit-area Gaussian: synthetic truth, no approximation
        // beyond the quadrature and A&S 7.1.26.
        for (sigma, fade) in [(1.0, 3.0), (1.0, 0.8), (0.5, 4.0)] {
            let conv = |u: f64| {
                let h = sigma / 400.0;
                let mut sum = 0.0;
                let mut t = 0.5 * h;
                while t < fade * 40.0 {
                    let g = (-0.5 * ((u - t) / sigma).powi(2)).exp()
                        / (sigma * (2.0 * std::f64::consts::PI).sqrt());
                    sum += (-t / fade).exp() * g * h;
                    t += h;
                }
                sum
            };
            let mut u = -4.0 * sigma;
            while u < 6.0 * fade {
                let (a, b) = (band_profile(u, sigma, fade), conv(u));
                assert!(
                    (a - b).abs() < 1e-3,
                    "sigma {sigma} fade {fade} u {u}: {a} vs {b}"
                );
                u += 0.37 * sigma;
            }
            // Far redward it is the fade times exp(sigma^2 / 2 fade^2) (the
            // Gaussian's moment generating function); far blueward nothing.
            let far = 8.0 * sigma + fade;
            let ratio = band_profile(far, sigma, fade) / (-far / fade).exp();
            let want = (0.5 * (sigma / fade).powi(2)).exp();
            assert!((ratio / want - 1.0).abs() < 1e-6, "{ratio} vs {want}");
            assert!(band_profile(-8.0 * sigma, sigma, fade) < 1e-12);
        }
    }

    #[test]
    fn the_blurred_band_is_deepest_redward_of_the_head() {
        // Blurring moves the deepest point of the band off the head to the
        // red (where a product of a blurred edge and the unblurred fade
        // would put it nearer the head): the velocity bias this profile
        // removes.
        let (sigma, fade) = (1.0, 3.0);
        let mut best = (f64::NEG_INFINITY, 0.0);
        let mut u = -3.0;
        while u < 6.0 {
            let p = band_profile(u, sigma, fade);
            if p > best.0 {
                best = (p, u);
            }
            u += 0.001;
        }
        assert!(best.1 > 0.3 * sigma && best.1 < 2.0 * sigma, "{best:?}");
    }

    #[test]
    fn parabola_vertex_is_exact_for_a_parabola() {
        // y = -(x - 0.3)^2 at x = -1, 0, 1.
        let f = |x: f64| -(x - 0.3f64).powi(2);
        assert!((vertex(f(-1.0), f(0.0), f(1.0)) - 0.3).abs() < 1e-12);
    }

    #[test]
    fn a_reused_solver_solves_each_system_afresh() {
        // A 3x3 system after a 2x2 one: stale buffers would show. By hand:
        // diag(2, 4, 5) x = (2, 8, 5) -> x = (1, 2, 1), inverse diagonal
        // (1/2, 1/4, 1/5).
        let mut sv = Solver::default();
        let mut a = vec![0.0; 2];
        assert!(sv.solve(&[4.0, 2.0, 2.0, 3.0], &[2.0, 1.0], 2, &mut a, None));
        let mut a = vec![0.0; 3];
        let mut v = vec![0.0; 3];
        let m = [2.0, 0.0, 0.0, 0.0, 4.0, 0.0, 0.0, 0.0, 5.0];
        assert!(sv.solve(&m, &[2.0, 8.0, 5.0], 3, &mut a, Some(&mut v)));
        for (x, want) in a.iter().zip([1.0, 2.0, 1.0]) {
            assert!((x - want).abs() < 1e-12, "{a:?}");
        }
        for (x, want) in v.iter().zip([0.5, 0.25, 0.2]) {
            assert!((x - want).abs() < 1e-12, "{v:?}");
        }
        // Singular: refused.
        assert!(!sv.solve(&[1.0, 1.0, 1.0, 1.0], &[1.0, 1.0], 2, &mut a, None));
    }

    /// A flat spectrum (10) with two Gaussian emission lines 30 A apart at
    /// 5000 A, pixel 0.5 A: (wavelengths, flux).
    fn two_lines() -> (Vec<f64>, Vec<f64>) {
        let wave: Vec<f64> = (0..800).map(|i| 4800.0 + 0.5 * i as f64).collect();
        let flux = wave
            .iter()
            .map(|w| {
                10.0 + 8.0 * (-0.5 * ((w - 5000.0) / 2.0).powi(2)).exp()
                    + 5.0 * (-0.5 * ((w - 5030.0) / 2.0).powi(2)).exp()
            })
            .collect();
        (wave, flux)
    }

    /// Native pixels of `flux` at `wave`: unit noise, continuum 10.
    fn native_of<'a>(wave: &[f64], flux: &'a [f64]) -> Native<'a> {
        let n = wave.len();
        Native {
            lnw: wave.iter().map(|w| w.ln()).collect(),
            flux,
            ivar: vec![1.0; n],
            cont_narrow: vec![10.0; n],
            cont_broad: vec![10.0; n],
            cont_star: vec![10.0; n],
            telluric: Vec::new(),
        }
    }

    fn line(ln_rest: f64, group: Group) -> FitLine {
        FitLine {
            line: 0,
            ln_rest,
            group,
            sign: Sign::Positive,
        }
    }

    #[test]
    fn kept_cluster_solutions_equal_a_fresh_solve() {
        let (wave, flux) = two_lines();
        let native = native_of(&wave, &flux);
        // One narrow-emission line and one narrow-absorption-group line
        // (positive here), far apart: two clusters.
        let lines = vec![
            line(5000f64.ln(), Group::EmNarrow),
            line(5030f64.ln(), Group::AbNarrow),
        ];
        let mut w = start_widths(DEFAULT_SIGMA_KMS);
        w[Group::EmNarrow as usize] = 120.0 / C_KM_S;
        w[Group::AbNarrow as usize] = 120.0 / C_KM_S;
        let cache = std::cell::RefCell::new(Columns::new(lines.len()));
        let first = evaluate(&native, &lines, 0.0, &w, Base::Narrow, true, &cache);
        // Change one group's width: the other cluster comes from the cache.
        let mut w2 = w;
        w2[Group::AbNarrow as usize] *= 1.35;
        let cached = evaluate(&native, &lines, 0.0, &w2, Base::Narrow, true, &cache);
        let fresh_cache = std::cell::RefCell::new(Columns::new(lines.len()));
        let fresh = evaluate(&native, &lines, 0.0, &w2, Base::Narrow, true, &fresh_cache);
        assert_eq!(cached.amp, fresh.amp);
        assert_eq!(cached.var, fresh.var);
        assert_eq!(cached.gain, fresh.gain);
        // The unchanged line kept its amplitude; the changed one moved.
        assert_eq!(cached.amp[0], first.amp[0]);
        assert_ne!(cached.amp[1], first.amp[1]);
        // The amplitudes are the lines' peaks (8 and 5 above 10; the model
        // widths of 120 km/s are near the true 2 A = 120 km/s).
        assert!((first.amp[0] - 8.0).abs() < 0.2, "{:?}", first.amp);
        assert!((first.amp[1] - 5.0).abs() < 0.2, "{:?}", first.amp);
    }

    #[test]
    fn a_broad_line_of_the_wrong_sign_keeps_an_error() {
        let (wave, mut flux) = two_lines();
        // A broad emission line looked for where the flux dips (5150 A):
        // fitted negative, dropped, yet measured.
        for (f, w) in flux.iter_mut().zip(&wave) {
            *f -= 2.0 * (-0.5 * ((w - 5150.0) / 20.0).powi(2)).exp();
        }
        let dipped = native_of(&wave, &flux);
        let lines = vec![
            line(5150f64.ln(), Group::EmBroad),
            line(5000f64.ln(), Group::EmNarrow),
        ];
        let w = start_widths(DEFAULT_SIGMA_KMS);
        let cache = std::cell::RefCell::new(Columns::new(lines.len()));
        let ev = evaluate(&dipped, &lines, 0.0, &w, Base::Broad, true, &cache);
        assert_eq!(ev.amp[0], 0.0);
        assert!(ev.var[0] > 0.0, "{:?}", ev.var);
        // A narrow line dropped for its sign keeps none.
        let narrow = vec![line(5150f64.ln(), Group::EmNarrow)];
        let cache = std::cell::RefCell::new(Columns::new(1));
        let ev = evaluate(&dipped, &narrow, 0.0, &w, Base::Narrow, true, &cache);
        assert_eq!((ev.amp[0], ev.var[0]), (0.0, 0.0));
    }

    #[test]
    fn the_hydrogen_share_is_the_hydrogen_lines_part_of_the_s_n_squared() {
        let fit = JointFit {
            s: 0.0,
            s_err: 0.0,
            widths: [1e-3; GROUPS],
            lines: vec![
                line(4861f64.ln(), Group::AbHydrogen),
                line(5175f64.ln(), Group::AbNarrow),
                line(4340f64.ln(), Group::AbHydrogen),
            ],
            // S/N 3, 4 and 0 (unmeasured: no error).
            amp: vec![-3.0, -8.0, -1.0],
            amp_err: vec![1.0, 2.0, 0.0],
            offset_kms: vec![0.0; 3],
            npix: vec![10; 3],
            gain: 0.0,
            base: Base::Star,
        };
        // 9 / (9 + 16)
        assert!((fit.hydrogen_share() - 0.36).abs() < 1e-12);
        // FWHM of sigma 1e-3 in ln lambda: 2.3548 * 299.79 km/s.
        assert!((fit.hydrogen_fwhm_kms() - 2.354_820_045 * C_KM_S * 1e-3).abs() < 1e-9);
    }

    #[test]
    fn the_forest_adds_its_scatter_blueward_of_lyman_alpha_only() {
        let (wave, flux) = two_lines();
        let native = native_of(&wave, &flux);
        // Lyman-alpha at 4900 A: s = ln(4900 / 1215.67).
        let s = (4900.0f64 / 1215.67).ln();
        let w = forest_weighted(&native, s).expect("pixels blueward of 4900 A");
        let edge = 4900.0 * (-1500.0 / C_KM_S).exp();
        for (i, x) in native.lnw.iter().enumerate() {
            if x.exp() < edge - 0.01 {
                // 1 / (1 + (0.3 * 10)^2) = 0.1
                assert!((w.ivar[i] - 0.1).abs() < 1e-12, "{i}: {}", w.ivar[i]);
            } else if x.exp() > edge + 0.01 {
                assert_eq!(w.ivar[i], 1.0);
            }
        }
        // No forest in range: no copy.
        assert!(forest_weighted(&native, (4000.0f64 / 1215.67).ln()).is_none());
    }
}
