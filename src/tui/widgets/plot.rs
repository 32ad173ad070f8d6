//! The spectrum plot.
//!
//! Rows, top to bottom: emission markers with labels; the curve area (flux,
//! continuum, optional error band and sky, foreground regions shaded);
//! absorption markers with labels; the wavelength axis (sky regions `~`,
//! telluric bands `=`). Curves are drawn on a sub-cell grid: Braille (2x4
//! dots a cell) where the terminal speaks UTF-8, or three levels a cell
//! (`.` `-` `'`, `|` for steep parts) in plain ASCII.
//!
//! The raster is hand-written rather than ratatui's `Canvas` because the
//! plain-ASCII mode needs its own glyphs and because one fixed grid keeps
//! the bytes sent per step small and predictable.

use super::put;
use crate::identify::{FeatureFlag, FeatureKind};
use crate::lines::{ForegroundKind, LineKind};
use crate::tui::app::{App, SMOOTHING, Slot};
use crate::tui::theme::Role;
use ratatui::buffer::Buffer;
use ratatui::layout::Rect;
use ratatui::style::Style;

/// A sub-cell raster of one curve layer.
struct Grid {
    w: usize,
    h: usize,
    /// Sub-cells across / down one cell.
    sx: usize,
    sy: usize,
    /// One bit per sub-cell, per cell.
    bits: Vec<u8>,
}

impl Grid {
    fn new(w: usize, h: usize, ascii: bool) -> Grid {
        let (sx, sy) = if ascii { (1, 3) } else { (2, 4) };
        Grid {
            w,
            h,
            sx,
            sy,
            bits: vec![0; w * h],
        }
    }

    fn dots_w(&self) -> f64 {
        (self.w * self.sx) as f64
    }

    fn dots_h(&self) -> f64 {
        (self.h * self.sy) as f64
    }

    fn set(&mut self, dx: i64, dy: i64) {
        if dx < 0 || dy < 0 {
            return;
        }
        let (dx, dy) = (dx as usize, dy as usize);
        if dx >= self.w * self.sx || dy >= self.h * self.sy {
            return;
        }
        let (cx, cy) = (dx / self.sx, dy / self.sy);
        let (ux, uy) = (dx % self.sx, dy % self.sy);
        let bit = if self.sx == 1 {
            1u8 << uy
        } else {
            // Braille dot numbering: 1 2 3 7 down the left, 4 5 6 8 down the right.
            const LEFT: [u8; 4] = [0x01, 0x02, 0x04, 0x40];
            const RIGHT: [u8; 4] = [0x08, 0x10, 0x20, 0x80];
            if ux == 0 { LEFT[uy] } else { RIGHT[uy] }
        };
        self.bits[cy * self.w + cx] |= bit;
    }

    /// Draw the polyline through (x, y) points given in dot units; a vertical
    /// span fills each dot column the segment crosses, so dense data shows
    /// its full range and sparse data stays connected.
    fn polyline(&mut self, pts: &[(f64, f64)]) {
        let wmax = self.dots_w();
        for seg in pts.windows(2) {
            let ((x0, y0), (x1, y1)) = (seg[0], seg[1]);
            if !(x0.is_finite() && x1.is_finite() && y0.is_finite() && y1.is_finite()) {
                continue;
            }
            if (x0 < 0.0 && x1 < 0.0) || (x0 >= wmax && x1 >= wmax) {
                continue;
            }
            let (xa, xb) = (x0.min(x1), x0.max(x1));
            let c0 = xa.max(0.0).floor() as i64;
            let c1 = xb.min(wmax - 1e-9).floor() as i64;
            for c in c0..=c1 {
                let lo = (c as f64).max(xa);
                let hi = ((c + 1) as f64).min(xb);
                let y_at = |x: f64| {
                    if (x1 - x0).abs() < 1e-12 {
                        y0
                    } else {
                        y0 + (y1 - y0) * (x - x0) / (x1 - x0)
                    }
                };
                let (ya, yb) = (y_at(lo), y_at(hi));
                let (ymin, ymax) = (ya.min(yb), ya.max(yb));
                let r0 = ymin.round().max(-1.0) as i64;
                let r1 = ymax.round().min(self.dots_h()) as i64;
                for r in r0..=r1 {
                    self.set(c, r);
                }
            }
        }
    }

    fn glyph(&self, cx: usize, cy: usize, ascii: bool) -> Option<char> {
        let b = self.bits[cy * self.w + cx];
        if b == 0 {
            return None;
        }
        if !ascii {
            return char::from_u32(0x2800 + b as u32);
        }
        Some(match b {
            0b001 => '\'',
            0b010 => '-',
            0b100 => '.',
            _ => '|',
        })
    }
}

/// Box-car smoothing over good pixels (bad ones stay NaN).
fn smooth(flux: &[f64], mask: &[bool], width: usize) -> Vec<f64> {
    let n = flux.len();
    let good = |i: usize| mask.get(i).copied().unwrap_or(false) && flux[i].is_finite();
    if width <= 1 {
        return (0..n).map(|i| if good(i) { flux[i] } else { f64::NAN }).collect();
    }
    let half = width / 2;
    (0..n)
        .map(|i| {
            if !good(i) {
                return f64::NAN;
            }
            let (mut s, mut k) = (0.0, 0usize);
            for j in i.saturating_sub(half)..(i + half + 1).min(n) {
                if good(j) {
                    s += flux[j];
                    k += 1;
                }
            }
            s / k as f64
        })
        .collect()
}

fn percentile(v: &mut [f64], q: f64) -> Option<f64> {
    if v.is_empty() {
        return None;
    }
    v.sort_by(f64::total_cmp);
    let i = ((v.len() - 1) as f64 * q).round() as usize;
    Some(v[i])
}

/// A marker to place in a marker row.
struct Marker {
    col: u16,
    label: String,
    style: Style,
    glyph: char,
    /// Higher goes first when labels compete for room.
    priority: u8,
}

fn place_markers(buf: &mut Buffer, area: Rect, y: u16, mut ms: Vec<Marker>) {
    // Glyphs first (every marker keeps its glyph), then labels by priority.
    ms.sort_by_key(|m| (m.priority, m.col));
    for m in &ms {
        let x = area.x + m.col;
        if x < area.right()
            && let Some(cell) = buf.cell_mut((x, y))
        {
            cell.set_char(m.glyph).set_style(m.style);
        }
    }
    let mut taken: Vec<(u16, u16)> = ms.iter().map(|m| (m.col, m.col + 1)).collect();
    for m in ms.iter().rev() {
        if m.label.is_empty() {
            continue;
        }
        let len = m.label.chars().count() as u16;
        let start = m.col + 1;
        let end = start + len;
        if area.x + end > area.right() {
            continue;
        }
        let clash = taken
            .iter()
            .any(|(a, b)| start < *b + 1 && *a < end + 1 && !(*a == m.col && *b == m.col + 1));
        if clash {
            continue;
        }
        put(buf, area.x + start, y, &m.label, len, m.style);
        taken.push((start, end));
    }
}

fn nice_step(span: f64, max_ticks: usize) -> f64 {
    let raw = span / max_ticks.max(1) as f64;
    let p = 10f64.powf(raw.log10().floor());
    for m in [1.0, 2.0, 5.0, 10.0] {
        if m * p >= raw {
            return m * p;
        }
    }
    10.0 * p
}

/// Draw the plot into `area`.
pub fn render(app: &App, area: Rect, buf: &mut Buffer) {
    let t = &app.theme;
    if area.height < 4 || area.width < 10 {
        return;
    }
    let loaded = match app.slot() {
        Some(Slot::Ready(l)) => l,
        Some(Slot::Failed(e)) => {
            put(buf, area.x, area.y + 1, "This target could not be read or analysed:", area.width, t.style(Role::Warning));
            let w = area.width as usize;
            let chars: Vec<char> = e.chars().collect();
            for (i, chunk) in chars.chunks(w.max(1)).take(area.height as usize - 3).enumerate() {
                let s: String = chunk.iter().collect();
                put(buf, area.x, area.y + 2 + i as u16, &s, area.width, t.style(Role::Base));
            }
            return;
        }
        _ => {
            put(buf, area.x, area.y + area.height / 2, "reading and analysing...", area.width, t.style(Role::Dim));
            return;
        }
    };
    let s = &loaded.spectrum;
    let a = &loaded.analysis;
    let Some((lo, hi)) = app.shown_range() else {
        return;
    };
    if !(hi > lo) {
        return;
    }
    let top = area.y;
    let curve = Rect { x: area.x, y: area.y + 1, width: area.width, height: area.height - 3 };
    let abs_row = area.bottom() - 2;
    let axis_row = area.bottom() - 1;
    let cw = curve.width as usize;
    let ch = curve.height as usize;
    let ascii = app.ascii;

    // Pixels in view (one either side so lines reach the edges).
    let i0 = s.wave.partition_point(|w| *w < lo).saturating_sub(1);
    let i1 = (s.wave.partition_point(|w| *w <= hi) + 1).min(s.len());
    let width = SMOOTHING[app.view.smoothing.min(SMOOTHING.len() - 1)];
    let flux = smooth(&s.flux, &s.mask, width);
    let cont = &a.continuum;

    // Vertical range: robust percentiles of the flux, widened to include
    // every real feature's peak so emission lines are never clipped.
    let mut vals: Vec<f64> = flux[i0..i1].iter().copied().filter(|v| v.is_finite()).collect();
    let (mut ymin, mut ymax) = match (percentile(&mut vals, 0.005), percentile(&mut vals, 0.995)) {
        (Some(a), Some(b)) => (a, b),
        _ => (0.0, 1.0),
    };
    for (i, c) in cont.iter().enumerate().take(i1).skip(i0) {
        if c.is_finite() && s.mask.get(i).copied().unwrap_or(false) {
            ymin = ymin.min(*c);
            ymax = ymax.max(*c);
        }
    }
    for f in &a.features {
        if f.flag.is_none() && f.wavelength >= lo && f.wavelength <= hi {
            let i = s.wave.partition_point(|w| *w < f.wavelength).min(s.len().saturating_sub(1));
            if let Some(c) = cont.get(i).filter(|c| c.is_finite()) {
                let peak = c + f.amplitude;
                if peak.is_finite() {
                    ymin = ymin.min(peak);
                    ymax = ymax.max(peak);
                }
            }
        }
    }
    if !(ymax > ymin) {
        ymax = ymin + 1.0;
    }
    let pad = 0.06 * (ymax - ymin);
    let (ymin, ymax) = (ymin - pad, ymax + pad);

    let mk = || Grid::new(cw, ch, ascii);
    let (mut g_flux, mut g_cont, mut g_err, mut g_sky) = (mk(), mk(), mk(), mk());
    let xd = |w: f64, g: &Grid| (w - lo) / (hi - lo) * g.dots_w();
    let yd = |v: f64, g: &Grid| (ymax - v) / (ymax - ymin) * (g.dots_h() - 1.0);
    // Polylines broken at masked pixels.
    let series = |vals: &dyn Fn(usize) -> f64, g: &mut Grid| {
        let mut run: Vec<(f64, f64)> = Vec::new();
        for i in i0..i1 {
            let v = vals(i);
            if v.is_finite() && s.mask.get(i).copied().unwrap_or(false) {
                run.push((xd(s.wave[i], g), yd(v, g)));
            } else {
                if run.len() == 1 {
                    run.push(run[0]);
                }
                g.polyline(&run);
                run.clear();
            }
        }
        if run.len() == 1 {
            run.push(run[0]);
        }
        g.polyline(&run);
    };
    series(&|i| flux[i], &mut g_flux);
    if cont.len() == s.len() {
        series(&|i| cont[i], &mut g_cont);
    }
    let sigma = if a.sigma.len() == s.len() { Some(&a.sigma) } else { s.sigma.as_ref() };
    if app.view.errors
        && let Some(sig) = sigma
    {
        series(&|i| flux[i] + sig[i], &mut g_err);
        series(&|i| flux[i] - sig[i], &mut g_err);
    }
    if app.view.sky
        && let Some(sky) = &s.sky
    {
        // The sky gets its own scale, into the lower half of the panel.
        let sv: Vec<f64> = sky[i0..i1].iter().copied().filter(|v| v.is_finite()).collect();
        let smin = sv.iter().copied().fold(f64::INFINITY, f64::min);
        let smax = sv.iter().copied().fold(f64::NEG_INFINITY, f64::max);
        if smax > smin {
            let scale = |v: f64| ymin + (v - smin) / (smax - smin) * 0.5 * (ymax - ymin);
            series(&|i| scale(sky[i]), &mut g_sky);
        }
    }

    // Foreground regions (catalogue sky lines and telluric bands, and
    // features the core flagged as sky or telluric).
    let col_of = |w: f64| ((w - lo) / (hi - lo) * cw as f64).floor();
    let mut region: Vec<Option<ForegroundKind>> = vec![None; cw];
    let mut mark_region = |wlo: f64, whi: f64, kind: ForegroundKind| {
        let c0 = col_of(wlo).max(0.0) as usize;
        let c1 = col_of(whi).min(cw as f64 - 1.0);
        if c1 < 0.0 {
            return;
        }
        for r in region.iter_mut().take(c1 as usize + 1).skip(c0) {
            if r.is_none() || kind == ForegroundKind::Telluric {
                *r = Some(kind);
            }
        }
    };
    for f in app.catalogue.foreground_near(lo, hi, 0.0) {
        mark_region(f.lo, f.hi, f.kind);
    }
    for f in &a.features {
        let kind = match f.flag {
            Some(FeatureFlag::Sky) => ForegroundKind::Sky,
            Some(FeatureFlag::Telluric) => ForegroundKind::Telluric,
            _ => continue,
        };
        let half = 0.5 * f.fwhm_kms / crate::physics::constants::C_KM_S * f.wavelength;
        mark_region(f.wavelength - half, f.wavelength + half, kind);
    }

    // Compose the curve cells: the flux wins, then continuum, errors, sky.
    let shade = |kind: Option<ForegroundKind>| match kind {
        Some(ForegroundKind::Sky) => Some(t.style(Role::SkyRegion)),
        Some(ForegroundKind::Telluric) => Some(t.style(Role::TelluricRegion)),
        None => None,
    };
    for cy in 0..ch {
        for cx in 0..cw {
            let layers = [
                (&g_flux, Role::Flux, None),
                (&g_cont, Role::Continuum, Some('~')),
                (&g_err, Role::ErrorBand, Some(':')),
                (&g_sky, Role::Sky, Some('+')),
            ];
            let mut glyph = None;
            let mut style = t.style(Role::Base);
            if ascii {
                for (g, role, alt) in layers {
                    if let Some(c) = g.glyph(cx, cy, true) {
                        glyph = Some(alt.unwrap_or(c));
                        style = t.style(role);
                        break;
                    }
                }
            } else {
                let mut bits = 0u8;
                let mut first = None;
                for (g, role, _) in layers {
                    let b = g.bits[cy * cw + cx];
                    if b != 0 && first.is_none() {
                        first = Some(role);
                    }
                    bits |= b;
                }
                if let Some(role) = first {
                    glyph = char::from_u32(0x2800 + bits as u32);
                    style = t.style(role);
                }
            }
            let region_style = shade(region[cx]);
            if glyph.is_none() && region_style.is_none() {
                continue;
            }
            let mut st = style;
            if let Some(rs) = region_style {
                st = st.patch(rs);
            }
            if let Some(cell) = buf.cell_mut((curve.x + cx as u16, curve.y + cy as u16)) {
                cell.set_char(glyph.unwrap_or(' ')).set_style(st);
            }
        }
    }

    // Markers.
    let cand = app.shown_candidate();
    let (g_em, g_ab, g_exp, g_unm) = if ascii {
        ('v', '^', ':', '?')
    } else {
        ('▼', '▲', '┊', '?')
    };
    let mut top_markers = Vec::new();
    let mut bottom_markers = Vec::new();
    let mut used_features = std::collections::HashSet::new();
    let in_view = |w: f64| w >= lo && w <= hi;
    let col = |w: f64| col_of(w).clamp(0.0, cw as f64 - 1.0) as u16;
    let mut selected_col = None;
    if let Some(c) = &cand {
        for (i, m) in c.matched.iter().enumerate() {
            if let Some(f) = m.feature {
                used_features.insert(f);
            }
            if !in_view(m.observed_wavelength) {
                continue;
            }
            let selected = app.line_cursor == Some(i);
            let emission = m.kind != LineKind::Absorption;
            let marker = Marker {
                col: col(m.observed_wavelength),
                label: crate::text::clean(&m.line),
                style: t.marker(emission, selected),
                glyph: if emission { g_em } else { g_ab },
                priority: if selected { 3 } else { 2 },
            };
            if selected {
                selected_col = Some(marker.col);
            }
            if emission {
                top_markers.push(marker);
            } else {
                bottom_markers.push(marker);
            }
        }
        // Lines of this candidate's class expected in range but not matched.
        let matched: std::collections::HashSet<&str> =
            c.matched.iter().map(|m| m.line.as_str()).collect();
        for l in app.catalogue.in_range(c.z, lo, hi) {
            if matched.contains(l.name.as_str()) || !l.classes.contains(&c.class) {
                continue;
            }
            let marker = Marker {
                col: col(l.wavelength * (1.0 + c.z)),
                label: String::new(),
                style: t.style(Role::Expected),
                glyph: g_exp,
                priority: 0,
            };
            if l.kind == LineKind::Absorption {
                bottom_markers.push(marker);
            } else {
                top_markers.push(marker);
            }
        }
    }
    for (i, f) in a.features.iter().enumerate() {
        if f.flag.is_some() || used_features.contains(&i) || !in_view(f.wavelength) {
            continue;
        }
        let marker = Marker {
            col: col(f.wavelength),
            label: String::new(),
            style: t.style(Role::Unmatched),
            glyph: g_unm,
            priority: 1,
        };
        match f.kind {
            FeatureKind::Emission => top_markers.push(marker),
            FeatureKind::Absorption => bottom_markers.push(marker),
        }
    }
    // The selected line gets a guide down the curve area where it is empty.
    if let Some(cx) = selected_col {
        for cy in 0..ch as u16 {
            if let Some(cell) = buf.cell_mut((curve.x + cx, curve.y + cy))
                && cell.symbol() == " "
            {
                cell.set_char(if ascii { ':' } else { '┆' })
                    .set_style(t.style(Role::Dim));
            }
        }
    }
    place_markers(buf, area, top, top_markers);
    place_markers(buf, area, abs_row, bottom_markers);

    // Axis: region glyphs, then tick labels, then the view summary at the right.
    for (cx, r) in region.iter().enumerate() {
        let g = match r {
            Some(ForegroundKind::Sky) => '~',
            Some(ForegroundKind::Telluric) => '=',
            None => continue,
        };
        if let Some(cell) = buf.cell_mut((area.x + cx as u16, axis_row)) {
            cell.set_char(g).set_style(t.style(Role::Axis));
        }
    }
    let info = format!(
        "{}{}{}{}",
        if ascii { " A" } else { " Å" },
        if width > 1 { format!(" smooth {width}") } else { String::new() },
        if app.view.range.is_some() { " zoom" } else { "" },
        if app.view.errors { " err" } else { "" },
    );
    let info_w = info.chars().count() as u16;
    let ticks_right = area.right().saturating_sub(info_w + 1);
    let step = nice_step(hi - lo, (cw / 10).max(2));
    let mut w = (lo / step).ceil() * step;
    let mut last_end = area.x;
    while w <= hi {
        let x = area.x + col(w);
        let label = if step >= 1.0 { format!("{w:.0}") } else { format!("{w:.1}") };
        let end = x + label.chars().count() as u16;
        if x >= last_end && end <= ticks_right {
            put(buf, x, axis_row, &label, end - x, t.style(Role::Axis));
            last_end = end + 1;
        }
        w += step;
    }
    put(buf, ticks_right + 1, axis_row, &info, info_w, t.style(Role::Dim));
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn braille_dots_follow_the_unicode_numbering() {
        let mut g = Grid::new(1, 1, false);
        g.set(0, 0);
        g.set(1, 3);
        // Dot 1 (0x01) and dot 8 (0x80): U+2881.
        assert_eq!(g.glyph(0, 0, false), Some('\u{2881}'));
    }

    #[test]
    fn ascii_levels_pick_top_middle_bottom_or_a_bar() {
        let mut g = Grid::new(4, 1, true);
        g.set(0, 0);
        g.set(1, 1);
        g.set(2, 2);
        g.polyline(&[(3.0, 0.0), (3.5, 2.0)]);
        let s: String = (0..4).map(|x| g.glyph(x, 0, true).unwrap_or(' ')).collect();
        assert_eq!(s, "'-.|");
    }

    #[test]
    fn smoothing_skips_masked_pixels() {
        let f = [1.0, 100.0, 3.0];
        let m = [true, false, true];
        let s = smooth(&f, &m, 3);
        assert_eq!(s[0], 1.0);
        assert!(s[1].is_nan());
        assert_eq!(s[2], 3.0);
    }

    #[test]
    fn nice_steps_are_one_two_or_five_times_a_power_of_ten() {
        assert_eq!(nice_step(5000.0, 10), 500.0);
        assert_eq!(nice_step(1800.0, 10), 200.0);
        assert_eq!(nice_step(90.0, 10), 10.0);
    }
}
