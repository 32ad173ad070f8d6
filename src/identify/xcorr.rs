//! Redshift scans on the log-wavelength grid.
//!
//! Two complementary scans, both over ln(1+z), where a redshift is a shift:
//!
//! - **Line-comb scan.** For each hypothesis (galaxy, quasar, star) a comb of
//!   catalogue lines, each on the matched-filter channel where it should show
//!   (narrow or broad, emission or absorption). The score at a trial z is the
//!   sum over lines of `w * max(m^2 - 2, 0)`, with `m` the matched-filter S/N
//!   at the shifted line position: the log-likelihood gain of adding each line
//!   with a free, correctly-signed amplitude, less a charge for the extra
//!   parameter. Each line's contribution is a shifted slice of its channel,
//!   so the whole scan is a few vector additions.
//! - **Cross-correlation** (Tonry & Davis 1979, AJ 84, 1511) of the
//!   continuum-subtracted, noise-whitened, end-apodised spectrum with
//!   templates built from the catalogue (Gaussians at the catalogue lines,
//!   signed by kind, scaled by strength), by real FFTs whose plans and
//!   template transforms are made once per [`Correlator`]. The peak height
//!   over the antisymmetric noise (their r value) is a significance.

use super::grid::LogGrid;
use crate::lines::{Catalogue, LineKind, ObjectClass, Width};
use crate::physics::constants::C_KM_S;
use realfft::num_complex::Complex;
use realfft::{ComplexToReal, RealFftPlanner, RealToComplex};
use std::sync::Arc;

/// Which matched-filter map a comb line is read from.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) enum Channel {
    /// Narrow emission.
    EmNarrow,
    /// Narrow absorption.
    AbNarrow,
    /// Broad emission.
    EmBroad,
    /// Broad absorption.
    AbBroad,
}

/// A family of solutions a comb stands for.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) enum Hypothesis {
    /// Galaxy: narrow emission and/or stellar-population absorption.
    Galaxy,
    /// Quasar: broad emission lines (plus narrow ones).
    Qso,
    /// Star: absorption lines near zero velocity.
    Star,
}

impl Hypothesis {
    /// The object class this hypothesis stands for.
    pub fn class(self) -> ObjectClass {
        match self {
            Hypothesis::Galaxy => ObjectClass::Galaxy,
            Hypothesis::Qso => ObjectClass::Qso,
            Hypothesis::Star => ObjectClass::Star,
        }
    }
}

/// One tooth of a comb.
#[derive(Debug, Clone)]
pub(crate) struct Tooth {
    /// ln(rest wavelength).
    pub ln_rest: f64,
    /// Weight (from the catalogue strength).
    pub weight: f64,
    /// Channel it reads.
    pub channel: Channel,
    /// Index into the catalogue's lines.
    pub line: usize,
}

/// A comb of catalogue lines for one hypothesis.
#[derive(Debug, Clone)]
pub(crate) struct Comb {
    /// The hypothesis.
    pub hypothesis: Hypothesis,
    /// Its teeth.
    pub teeth: Vec<Tooth>,
}

fn has(classes: &[ObjectClass], c: ObjectClass) -> bool {
    classes.contains(&c)
}

/// Weight of a line in a comb: strong lines count most, weak ones a little.
fn tooth_weight(strength: f64) -> f64 {
    0.25 + 0.75 * strength.clamp(0.0, 1.0)
}

/// Build the galaxy, quasar and star combs from the catalogue.
pub(crate) fn build_combs(cat: &Catalogue) -> Vec<Comb> {
    let mut gal = Vec::new();
    let mut qso = Vec::new();
    let mut star = Vec::new();
    for (i, l) in cat.lines.iter().enumerate() {
        if !(l.wavelength > 0.0) {
            continue;
        }
        let ln_rest = l.wavelength.ln();
        let weight = tooth_weight(l.strength);
        let emis = matches!(l.kind, LineKind::Emission | LineKind::Both);
        let absn = matches!(l.kind, LineKind::Absorption | LineKind::Both);
        let tooth = |channel| Tooth {
            ln_rest,
            weight,
            channel,
            line: i,
        };
        if has(&l.classes, ObjectClass::Galaxy) {
            if emis && l.width == Width::Narrow {
                gal.push(tooth(Channel::EmNarrow));
            }
            if absn {
                gal.push(tooth(Channel::AbNarrow));
            }
        }
        if has(&l.classes, ObjectClass::Qso) && emis {
            match l.width {
                Width::Broad => qso.push(tooth(Channel::EmBroad)),
                Width::Narrow => qso.push(Tooth {
                    weight: 0.5 * weight,
                    ..tooth(Channel::EmNarrow)
                }),
            }
        }
        if has(&l.classes, ObjectClass::Star) && absn {
            star.push(tooth(Channel::AbNarrow));
            if l.width == Width::Broad || l.species == "H I" {
                star.push(Tooth {
                    weight: 0.5 * weight,
                    ..tooth(Channel::AbBroad)
                });
            }
        }
    }
    vec![
        Comb {
            hypothesis: Hypothesis::Galaxy,
            teeth: gal,
        },
        Comb {
            hypothesis: Hypothesis::Qso,
            teeth: qso,
        },
        Comb {
            hypothesis: Hypothesis::Star,
            teeth: star,
        },
    ]
}

/// The per-channel evidence arrays `max(m^2 - 2, 0)`.
#[derive(Debug, Clone)]
pub(crate) struct Evidence {
    /// Indexed by [`Channel`] order.
    pub channels: [Vec<f64>; 4],
}

fn gain(m: f64) -> f64 {
    if m > 0.0 { (m * m - 2.0).max(0.0) } else { 0.0 }
}

impl Evidence {
    /// From the grid's maps.
    pub fn new(grid: &LogGrid) -> Evidence {
        let f = |a: &[f64]| a.iter().map(|&m| gain(m)).collect::<Vec<f64>>();
        let m = &grid.maps;
        Evidence {
            channels: [
                f(&m.em_narrow),
                f(&m.ab_narrow),
                f(&m.em_broad),
                f(&m.ab_broad),
            ],
        }
    }

    /// The array of a channel.
    pub fn of(&self, c: Channel) -> &[f64] {
        &self.channels[c as usize]
    }
}

/// Comb scan over ln(1+z) in `[s_lo, s_hi]` with the grid's step. Returns
/// `(s_lo_used, scores)`; score `k` is at `s_lo_used + k * grid.step`.
pub(crate) fn comb_scan(
    grid: &LogGrid,
    ev: &Evidence,
    comb: &Comb,
    s_lo: f64,
    s_hi: f64,
) -> (f64, Vec<f64>) {
    let step = grid.step;
    let nk = (((s_hi - s_lo) / step).ceil() as usize).max(1) + 1;
    let mut out = vec![0.0; nk];
    let n = grid.len();
    if n < 2 {
        return (s_lo, out);
    }
    for t in &comb.teeth {
        let p = ev.of(t.channel);
        // Fractional data index at lag k: base + k.
        let base = grid.index_of(t.ln_rest + s_lo);
        let f = base - base.floor();
        let b = base.floor() as isize;
        // Valid k: 0 <= b + k and b + k + 1 <= n - 1.
        let k_lo = (-b).max(0) as usize;
        let k_hi_i = (n as isize - 2 - b).min(nk as isize - 1);
        if k_hi_i < k_lo as isize {
            continue;
        }
        let k_hi = k_hi_i as usize;
        let i0 = (b + k_lo as isize) as usize;
        let len = k_hi - k_lo + 1;
        let (wa, wb) = (t.weight * (1.0 - f), t.weight * f);
        let dst = &mut out[k_lo..=k_hi];
        let pa = &p[i0..i0 + len];
        let pb = &p[i0 + 1..i0 + 1 + len];
        for ((d, a), bb) in dst.iter_mut().zip(pa).zip(pb) {
            *d += wa * a + wb * bb;
        }
    }
    (s_lo, out)
}

/// Local maxima of `score`, best first, at least `sep` samples apart, at
/// most `max` of them, each above `floor`.
pub(crate) fn peaks(score: &[f64], sep: usize, max: usize, floor: f64) -> Vec<usize> {
    let mut idx: Vec<usize> = (0..score.len())
        .filter(|&i| {
            let v = score[i];
            v > floor
                && (i == 0 || score[i - 1] <= v)
                && (i + 1 == score.len() || score[i + 1] < v)
        })
        .collect();
    idx.sort_by(|&a, &b| score[b].total_cmp(&score[a]));
    let mut out: Vec<usize> = Vec::new();
    for i in idx {
        if out.iter().all(|&j| i.abs_diff(j) >= sep) {
            out.push(i);
            if out.len() >= max {
                break;
            }
        }
    }
    out
}

/// Grid step of the cross-correlation, ln(lambda) (75 km/s).
const TD_STEP: f64 = 2.5e-4;
/// Shortest rest wavelength in the templates, Angstrom.
const TD_REST_MIN: f64 = 850.0;
/// FFT lengths planned.
const TD_SIZES: [usize; 2] = [16_384, 32_768];

/// A cross-correlation template: its transform for each planned length.
struct Template {
    hypothesis: Hypothesis,
    spectra: Vec<Vec<Complex<f64>>>,
}

/// FFT plans and template transforms, built once and shared read-only.
#[derive(Clone)]
pub(crate) struct Correlator {
    forward: Vec<Arc<dyn RealToComplex<f64>>>,
    inverse: Vec<Arc<dyn ComplexToReal<f64>>>,
    templates: Arc<Vec<Template>>,
}

impl std::fmt::Debug for Correlator {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.debug_struct("Correlator")
            .field("sizes", &TD_SIZES)
            .field("templates", &self.templates.len())
            .finish()
    }
}

/// One cross-correlation peak.
#[derive(Debug, Clone, Copy)]
pub(crate) struct XcorrPeak {
    /// Template hypothesis.
    pub hypothesis: Hypothesis,
    /// ln(1+z) at the (interpolated) peak.
    pub s: f64,
    /// Tonry & Davis r value.
    pub r: f64,
}

impl Correlator {
    /// Plan the FFTs and transform the catalogue templates.
    pub fn new(cat: &Catalogue) -> Correlator {
        let mut planner = RealFftPlanner::<f64>::new();
        let forward: Vec<_> = TD_SIZES.iter().map(|&n| planner.plan_fft_forward(n)).collect();
        let inverse: Vec<_> = TD_SIZES.iter().map(|&n| planner.plan_fft_inverse(n)).collect();
        let t0 = TD_REST_MIN.ln();
        let mut templates = Vec::new();
        for hyp in [Hypothesis::Galaxy, Hypothesis::Qso, Hypothesis::Star] {
            let mut spectra = Vec::new();
            for (si, &size) in TD_SIZES.iter().enumerate() {
                let mut t = vec![0.0; size];
                // Templates stay within the first ~10,000 pixels so that the
                // data can take the rest without wrap-around.
                let max_len = size / 2;
                for l in &cat.lines {
                    if !(l.wavelength > TD_REST_MIN) {
                        continue;
                    }
                    let emis = matches!(l.kind, LineKind::Emission | LineKind::Both);
                    let absn = matches!(l.kind, LineKind::Absorption | LineKind::Both);
                    let (sign, fwhm) = match hyp {
                        Hypothesis::Galaxy if has(&l.classes, ObjectClass::Galaxy) => {
                            if absn && !emis {
                                (-1.0, 400.0)
                            } else if emis && l.width == Width::Narrow {
                                (1.0, 300.0)
                            } else {
                                continue;
                            }
                        }
                        Hypothesis::Qso if has(&l.classes, ObjectClass::Qso) && emis => {
                            if l.width == Width::Broad {
                                (1.0, 4000.0)
                            } else {
                                (0.3, 400.0)
                            }
                        }
                        Hypothesis::Star if has(&l.classes, ObjectClass::Star) && absn => {
                            (-1.0, 200.0)
                        }
                        _ => continue,
                    };
                    let c = (l.wavelength.ln() - t0) / TD_STEP;
                    let sig = (fwhm / 2.3548 / C_KM_S / TD_STEP).max(0.8);
                    let h = (3.0 * sig).ceil() as isize;
                    let amp = sign * tooth_weight(l.strength);
                    for j in (c as isize - h)..=(c as isize + h) {
                        if j >= 0 && (j as usize) < max_len {
                            t[j as usize] += amp * (-0.5 * ((j as f64 - c) / sig).powi(2)).exp();
                        }
                    }
                }
                let mean = t[..max_len].iter().sum::<f64>() / max_len as f64;
                for v in &mut t[..max_len] {
                    *v -= mean;
                }
                let mut spec = forward[si].make_output_vec();
                // Length checked by construction; an error here is a bug.
                if forward[si].process(&mut t, &mut spec).is_err() {
                    spec.iter_mut().for_each(|c| *c = Complex::new(0.0, 0.0));
                }
                spectra.push(spec);
            }
            templates.push(Template {
                hypothesis: hyp,
                spectra,
            });
        }
        Correlator {
            forward,
            inverse,
            templates: Arc::new(templates),
        }
    }

    /// Cross-correlate the grid's whitened residual with every template;
    /// return the best peak of each within `[s_lo, s_hi]` (stars: within
    /// `star_s` of zero).
    pub fn correlate(&self, grid: &LogGrid, s_lo: f64, s_hi: f64, star_s: f64) -> Vec<XcorrPeak> {
        let Some((xa, xb)) = grid.good_range() else {
            return Vec::new();
        };
        let t0 = TD_REST_MIN.ln();
        // Align the data grid to the template grid.
        let off = ((xa - t0) / TD_STEP).floor();
        let x0 = t0 + off * TD_STEP;
        let nd = ((xb - x0) / TD_STEP).ceil() as usize + 1;
        let Some(si) = TD_SIZES.iter().position(|&s| nd <= s / 2) else {
            return Vec::new();
        };
        let size = TD_SIZES[si];
        let mut d = vec![0.0; size];
        for (i, v) in d.iter_mut().enumerate().take(nd) {
            let x = x0 + i as f64 * TD_STEP;
            let t = grid.index_of(x);
            let w = LogGrid::sample(&grid.ivar, t);
            if w > 0.0 {
                let r = LogGrid::sample(&grid.flux, t) - LogGrid::sample(&grid.cont_narrow, t);
                // Whitened and clipped so one bad pixel cannot dominate.
                *v = (r * w.sqrt()).clamp(-10.0, 10.0);
            }
        }
        // Cosine bell over 5% at each end (apodisation).
        let taper = (nd / 20).max(1);
        for i in 0..taper.min(nd) {
            let a = 0.5 * (1.0 - (std::f64::consts::PI * i as f64 / taper as f64).cos());
            d[i] *= a;
            d[nd - 1 - i] *= a;
        }
        let mean = d[..nd].iter().sum::<f64>() / nd as f64;
        for v in &mut d[..nd] {
            *v -= mean;
        }
        let mut dspec = self.forward[si].make_output_vec();
        if self.forward[si].process(&mut d, &mut dspec).is_err() {
            return Vec::new();
        }
        let mut out = Vec::new();
        let mut prod = dspec.clone();
        let mut corr = self.inverse[si].make_output_vec();
        for tpl in self.templates.iter() {
            for ((p, a), b) in prod.iter_mut().zip(&dspec).zip(&tpl.spectra[si]) {
                *p = a * b.conj();
            }
            // The inverse needs a real DC and Nyquist term.
            prod[0].im = 0.0;
            if let Some(last) = prod.last_mut() {
                last.im = 0.0;
            }
            if self.inverse[si].process(&mut prod, &mut corr).is_err() {
                continue;
            }
            // corr[m] = sum_j T[j] D[j+m]; s = (off + m) * step.
            let (lo, hi) = if tpl.hypothesis == Hypothesis::Star {
                (-star_s, star_s)
            } else {
                (s_lo, s_hi)
            };
            let m_lo = (lo / TD_STEP - off).ceil() as isize;
            let m_hi = (hi / TD_STEP - off).floor() as isize;
            let at = |m: isize| corr[m.rem_euclid(size as isize) as usize];
            let mut best = None;
            let mut best_v = f64::NEG_INFINITY;
            for m in m_lo..=m_hi {
                let v = at(m);
                if v > best_v {
                    best_v = v;
                    best = Some(m);
                }
            }
            let Some(m) = best else { continue };
            // Antisymmetric part about the peak (Tonry & Davis 1979, eq. 18-20).
            let half = (size / 4) as isize;
            let mut sa = 0.0;
            let mut cnt = 0.0f64;
            for k in 1..half {
                let a = 0.5 * (at(m + k) - at(m - k));
                sa += a * a;
                cnt += 1.0;
            }
            let sigma_a = (sa / cnt.max(1.0)).sqrt();
            let r = if sigma_a > 0.0 {
                best_v / (std::f64::consts::SQRT_2 * sigma_a)
            } else {
                0.0
            };
            // Sub-pixel peak by a parabola through three samples.
            let (y0, y1, y2) = (at(m - 1), at(m), at(m + 1));
            let den = y0 - 2.0 * y1 + y2;
            let dm = if den < 0.0 {
                (0.5 * (y0 - y2) / den).clamp(-0.5, 0.5)
            } else {
                0.0
            };
            out.push(XcorrPeak {
                hypothesis: tpl.hypothesis,
                s: (off + m as f64 + dm) * TD_STEP,
                r,
            });
        }
        out
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn peaks_are_local_maxima_best_first_and_kept_apart() {
        let s = [0.0, 1.0, 0.0, 3.0, 2.9, 0.0, 2.0, 0.0];
        assert_eq!(peaks(&s, 2, 5, 0.5), vec![3, 6, 1]);
        assert_eq!(peaks(&s, 4, 5, 0.5), vec![3]);
    }

    #[test]
    fn gain_charges_two_units_per_free_amplitude() {
        assert_eq!(gain(-3.0), 0.0);
        assert_eq!(gain(1.0), 0.0);
        assert!((gain(3.0) - 7.0).abs() < 1e-12);
    }
}
