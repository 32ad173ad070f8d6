#!/usr/bin/env python3
"""A competent numpy/scipy pipeline doing zsift's job, for comparison.

Reads every file listed in DIR/manifest.csv (written by
`cargo bench --bench accuracy -- --write DIR`), and for each spectrum:

1. reads it (astropy.io.fits for FITS images with spectral WCS, 2-D rows,
   binary tables; numpy for CSV/TSV/whitespace text), converts air
   wavelengths to vacuum (Morton 2000, the IAU standard);
2. resamples onto a log-lambda grid (np.interp), takes the file's errors or a
   robust MAD-of-differences estimate;
3. continuum: iterative sigma-clipped running median (scipy.ndimage
   median_filter) in log-lambda, a narrow and a wide window;
4. detection: matched filter of (flux - continuum) / sigma^2 with Gaussian
   kernels of several widths, peaks from scipy.signal.find_peaks, each fitted
   with scipy.optimize.curve_fit (Gaussian + constant);
5. redshift: line-pattern voting of every (detection, catalogue line) pair in
   log(1 + z) bins, refined by the weighted mean of the agreeing pairs; plus
   FFT cross-correlation (scipy.signal.fftconvolve) of the continuum-divided
   spectrum against absorption-line templates for stars (|v| < 1000 km/s) and
   old galaxies (0 < z < 1.2);
6. classification: broad matched emission -> qso, narrow emission -> galaxy,
   significant stellar correlation at |v| < 1000 km/s -> star, galaxy
   absorption correlation -> galaxy, else unknown.

Writes one JSON line per spectrum to --out, with read and analysis times.
Rest wavelengths are vacuum Angstrom (NIST, from memory).
"""

import argparse
import csv
import json
import math
import os
import sys
import time

import numpy as np
from astropy.io import fits
from scipy import ndimage, optimize, signal

C = 299792.458

# (name, vacuum rest wavelength, weight, kind: e = emission, a = absorption, b = broad emission)
EMISSION = [
    ("Ly-alpha", 1215.67, 1.0, "b"),
    ("N V", 1240.14, 0.3, "b"),
    ("Si IV+O IV]", 1399.8, 0.4, "b"),
    ("C IV", 1549.06, 0.9, "b"),
    ("He II 1640", 1640.42, 0.2, "b"),
    ("C III]", 1908.73, 0.7, "b"),
    ("Mg II", 2798.75, 0.8, "b"),
    ("[Ne V] 3426", 3426.85, 0.3, "e"),
    ("[O II] 3726", 3727.09, 0.8, "e"),
    ("[O II] 3729", 3729.88, 0.8, "e"),
    ("[Ne III] 3869", 3869.86, 0.4, "e"),
    ("H-delta", 4102.89, 0.3, "e"),
    ("H-gamma", 4341.69, 0.5, "e"),
    ("He II 4686", 4687.02, 0.2, "e"),
    ("H-beta", 4862.68, 0.9, "e"),
    ("[O III] 4959", 4960.30, 0.6, "e"),
    ("[O III] 5007", 5008.24, 1.0, "e"),
    ("He I 5876", 5877.25, 0.2, "e"),
    ("[O I] 6300", 6302.05, 0.3, "e"),
    ("[N II] 6548", 6549.86, 0.4, "e"),
    ("H-alpha", 6564.61, 1.0, "e"),
    ("[N II] 6584", 6585.27, 0.7, "e"),
    ("[S II] 6716", 6718.29, 0.5, "e"),
    ("[S II] 6731", 6732.67, 0.5, "e"),
]
BROAD = {"H-beta", "H-alpha", "H-gamma", "Mg II", "C IV", "C III]", "Ly-alpha"}
# Absorption lines (rest vacuum, EW-like weight) for templates and voting.
STELLAR = [
    (3934.78, 8.0), (3969.59, 7.0), (4102.89, 3.0), (4227.92, 1.5), (4305.61, 5.0),
    (4341.69, 3.0), (4384.78, 0.8), (4862.68, 3.0), (5168.76, 1.5), (5174.13, 1.5),
    (5185.05, 1.5), (5271.0, 1.5), (5329.5, 1.2), (5891.58, 1.5), (5897.56, 1.3),
    (6564.61, 3.0), (7667.01, 1.5), (7701.08, 1.3), (8500.36, 1.5), (8544.44, 3.0),
    (8664.52, 2.5), (3890.15, 2.0), (3971.20, 3.0), (3836.47, 2.0), (3798.98, 1.5),
]
# Molecular band heads of cool stars (rest vacuum, depth).
BANDS = [(4955.4, 0.3), (5168.1, 0.3), (5449.5, 0.2), (5848.6, 0.2), (6159.7, 0.3),
         (6652.8, 0.2), (7055.9, 0.5), (7591.1, 0.4), (8434.3, 0.2)]
# Night-sky lines and telluric bands, observed vacuum (common practice, from memory).
SKY = [5578.89, 5891.58, 5897.56, 6302.05, 6365.54, 7318.3, 7342.9, 7752.8, 7796.3,
       7915.9, 7995.5, 8346.9, 8401.5, 8432.5, 8829.5, 8888.3, 8945.9, 9378.6, 9442.3]
TELLURIC = [(6276.0, 6333.0), (6868.0, 6960.0), (7160.0, 7345.0), (7595.0, 7705.0),
            (8130.0, 8355.0), (8950.0, 9805.0)]


def air_to_vacuum(air):
    """Morton (2000) IAU standard, iterated to invert the vacuum->air formula."""
    air = np.asarray(air, dtype=float)
    vac = air.copy()
    for _ in range(4):
        s2 = (1e4 / vac) ** 2
        n = 1 + 8.34254e-5 + 2.406147e-2 / (130 - s2) + 1.5998e-4 / (38.9 - s2)
        vac = np.where(air >= 2000.0, air * n, air)
    return vac


# ------------------------------------------------------------------ reading
def read_fits(path):
    with fits.open(path, memmap=False) as hd:
        for hdu in hd:
            h = hdu.header
            if isinstance(hdu, fits.BinTableHDU):
                d = hdu.data
                names = [n.upper() for n in d.columns.names]
                def col(*cands):
                    for c in cands:
                        if c in names:
                            return np.asarray(d[d.columns.names[names.index(c)]], dtype=float)
                    return None
                w, f = col("WAVELENGTH", "WAVE", "LAMBDA"), col("FLUX")
                if w is None or f is None:
                    continue
                w, f = w.ravel(), f.ravel()
                e = col("ERROR", "ERR", "SIGMA")
                if e is None:
                    iv = col("IVAR")
                    e = None if iv is None else np.where(iv.ravel() > 0, 1 / np.sqrt(np.abs(iv.ravel()) + 1e-300), np.inf)
                else:
                    e = e.ravel()
                air = str(h.get("AIRORVAC", hd[0].header.get("AIRORVAC", "vac"))).lower().startswith("air")
                return w, f, e, air
            if hdu.data is None or h.get("NAXIS", 0) < 1:
                continue
            data = np.asarray(hdu.data, dtype=float)
            n = h["NAXIS1"]
            p = np.arange(n) + 1.0
            crval, cdelt = h["CRVAL1"], h.get("CDELT1", h.get("CD1_1"))
            crpix = h.get("CRPIX1", 1.0)
            ctype = str(h.get("CTYPE1", "WAVE")).upper()
            if ctype.endswith("-LOG"):
                w = crval * np.exp(cdelt * (p - crpix) / crval)
            else:
                w = crval + cdelt * (p - crpix)
            air = ctype.startswith("AWAV")
            if data.ndim == 1:
                e = None
                for ext in hd[1:]:
                    if ext.header.get("EXTNAME", "").upper() in ("ERROR", "ERR", "SIGMA"):
                        e = np.asarray(ext.data, dtype=float)
                return w, data, e, air
            rows = {str(h.get(f"ROW{i + 1}", "")).upper(): i for i in range(data.shape[0])}
            f = data[rows.get("FLUX", 0)]
            e = data[rows["ERROR"]] if "ERROR" in rows else (data[1] if data.shape[0] > 1 else None)
            return w, f, e, air
    raise ValueError(f"{path}: no spectrum found")


def read_text(path):
    meta, rows, header = {}, [], None
    with open(path) as fh:
        for line in fh:
            s = line.strip()
            if not s:
                continue
            if s.startswith("#"):
                if ":" in s:
                    k, v = s[1:].split(":", 1)
                    meta[k.strip().lower()] = v.strip()
                continue
            parts = [x for x in (s.split(",") if "," in s else s.split())]
            try:
                rows.append([float(x) for x in parts])
            except ValueError:
                header = [x.lower() for x in parts]
    a = np.array(rows, dtype=float)
    names = header or ["wavelength", "flux", "error"][: a.shape[1]]
    idx = {n: i for i, n in enumerate(names)}
    w, f = a[:, idx["wavelength"]], a[:, idx["flux"]]
    e = a[:, idx["error"]] if "error" in idx else None
    air = meta.get("medium", "vacuum").startswith("air")
    return w, f, e, air


def read_any(path):
    with open(path, "rb") as fh:
        head = fh.read(6)
    w, f, e, air = read_fits(path) if head == b"SIMPLE" else read_text(path)
    if air:
        w = air_to_vacuum(w)
    return w, f, e


# ------------------------------------------------------------------ analysis
def gaussian(x, a, mu, sig, c):
    return a * np.exp(-0.5 * ((x - mu) / sig) ** 2) + c


def continuum(ln_w, f, ok, win_px):
    """Iterative sigma-clipped running median (3 passes)."""
    work = np.where(ok, f, np.nan)
    fill = np.interp(np.arange(len(f)), np.flatnonzero(ok), f[ok])
    cont = ndimage.median_filter(fill, size=win_px, mode="nearest")
    for _ in range(2):
        r = fill - cont
        mad = 1.4826 * np.median(np.abs(r[ok])) + 1e-30
        keep = ok & (np.abs(r) < 2.5 * mad)
        fill = np.where(keep, fill, cont)
        cont = ndimage.median_filter(fill, size=win_px, mode="nearest")
    cont = ndimage.uniform_filter1d(cont, max(3, win_px // 4), mode="nearest")
    del work
    return cont


def matched_filter(resid, ivar, sig_px):
    half = int(4 * sig_px) + 1
    x = np.arange(-half, half + 1)
    k = np.exp(-0.5 * (x / sig_px) ** 2)
    num = signal.fftconvolve(resid * ivar, k, mode="same")
    den = np.sqrt(signal.fftconvolve(ivar, k * k, mode="same")) + 1e-30
    return num / den


def template_xcorr(ln_w, flat, ok, lines, bands, lag_min, lag_max, dln, line_sig_px):
    """FFT cross-correlation of the continuum-divided spectrum with a line
    template; returns (lag in ln(1+z), Tonry-Davis-like r)."""
    n = len(ln_w)
    y = np.where(ok, flat - 1.0, 0.0)
    taper = signal.windows.tukey(n, 0.1)
    y = (y - y.mean()) * taper
    # Template on a grid that starts at rest ln(w0) - lag_max.
    start = ln_w[0] - lag_max
    m = n + int((lag_max - lag_min) / dln) + 2
    t_ln = start + np.arange(m) * dln
    t = np.zeros(m)
    for lam, wgt in lines:
        mu = math.log(lam)
        if t_ln[0] - 0.01 < mu < t_ln[-1] + 0.01:
            t -= wgt * np.exp(-0.5 * ((t_ln - mu) / (line_sig_px * dln)) ** 2)
    for lam, depth in bands:
        x = t_ln - math.log(lam)
        t -= np.where(x >= 0, depth * np.exp(-x / 0.015), 0.0)
    t = t - t.mean()
    if not np.any(t):
        return 0.0, 0.0
    cc = signal.fftconvolve(y, t[::-1], mode="full")
    # cc index k corresponds to template offset: lag = ln_w[0] - t_ln[0] - (k - (m - 1)) * dln
    ks = np.arange(len(cc))
    lags = (ln_w[0] - t_ln[0]) + (ks - (m - 1)) * dln
    sel = (lags >= lag_min) & (lags <= lag_max)
    if not np.any(sel):
        return 0.0, 0.0
    cs, ls = cc[sel], lags[sel]
    i = int(np.argmax(cs))
    # Antisymmetric noise estimate (Tonry & Davis 1979) by the spread away from the peak.
    far = np.abs(ls - ls[i]) > 0.004
    sigma_a = np.std(cs[far]) if np.count_nonzero(far) > 10 else np.std(cs)
    r = cs[i] / (sigma_a + 1e-30)
    if 0 < i < len(cs) - 1:
        a, b, c = cs[i - 1], cs[i], cs[i + 1]
        den = a - 2 * b + c
        off = 0.5 * (a - c) / den if den != 0 else 0.0
    else:
        off = 0.0
    return ls[i] + off * dln, r


def analyse(w, f, e):
    ok = np.isfinite(w) & np.isfinite(f)
    if e is not None:
        ok &= np.isfinite(e) & (e > 0)
    w, f = w[ok], f[ok]
    e = e[ok] if e is not None else None
    ln = np.log(w)
    dln = float(np.median(np.diff(ln)))
    grid = np.arange(ln[0], ln[-1], dln)
    fg = np.interp(grid, ln, f)
    if e is not None:
        eg = np.interp(grid, ln, e)
    else:
        d = np.diff(fg)
        eg = np.full_like(fg, 1.4826 * np.median(np.abs(d - np.median(d))) / math.sqrt(2) + 1e-30)
    okg = np.isfinite(eg) & (eg > 0) & np.isfinite(fg)
    # Mask sky lines and telluric bands for detection.
    wg = np.exp(grid)
    fore = np.zeros_like(okg)
    for s in SKY:
        fore |= np.abs(wg - s) < 4.0
    for lo, hi in TELLURIC:
        fore |= (wg > lo) & (wg < hi)
    ivar = np.where(okg, 1.0 / eg**2, 0.0)
    # Continuum: ~3000 km/s window (narrow lines), ~20000 km/s (broad lines).
    px_kms = dln * C
    narrow_win = max(15, int(3000 / px_kms) | 1)
    wide_win = max(31, int(20000 / px_kms) | 1)
    cont_n = continuum(grid, fg, okg, narrow_win)
    cont_w = continuum(grid, fg, okg, wide_win)
    snr_med = float(np.median(np.abs(cont_n[okg]) / eg[okg]))

    # Detection at several widths.
    feats = []
    ivar_det = np.where(fore, 0.0, ivar)
    for sig_px, cont, broad in [(1.5, cont_n, False), (3.0, cont_n, False),
                                (max(4.0, 1500 / px_kms), cont_w, True),
                                (max(8.0, 3500 / px_kms), cont_w, True)]:
        mf = matched_filter(fg - cont, ivar_det, sig_px)
        for sgn in (1, -1):
            peaks, props = signal.find_peaks(sgn * mf, height=5.0, distance=max(2, int(2 * sig_px)))
            for p in peaks[np.argsort(-props["peak_heights"])][:25]:
                feats.append((p, sgn, float(sgn * mf[p]), sig_px, broad))
    # Fit each detection (Gaussian + constant), keep resolved ones.
    lines = []
    lsf_px = 1.2
    for p, sgn, snr, sig_px, broad in sorted(feats, key=lambda t: -t[2])[:40]:
        h = int(max(5, 4 * sig_px))
        a, b = max(0, p - h), min(len(fg), p + h + 1)
        x, y = np.arange(a, b), (fg - (cont_w if broad else cont_n))[a:b]
        try:
            popt, _ = optimize.curve_fit(gaussian, x, y, p0=[y[p - a], p, sig_px, 0.0],
                                         sigma=eg[a:b], maxfev=400)
        except (RuntimeError, ValueError, optimize.OptimizeWarning):
            continue
        amp, mu, sig = popt[0], popt[1], abs(popt[2])
        if not (a <= mu < b) or sig < 0.7 * lsf_px or np.sign(amp) != sgn:
            continue
        lam = float(np.exp(np.interp(mu, np.arange(len(grid)), grid)))
        fwhm = 2.3548 * sig * px_kms
        if any(abs(lam - l[0]) < 2 * dln * lam for l in lines):
            continue
        lines.append((lam, sgn, snr, fwhm))

    # Line-pattern voting for emission redshifts.
    best = None
    em = [l for l in lines if l[1] > 0]
    if em:
        bin_w = 0.0006
        votes = {}
        for lam, _, snr, fwhm in em:
            for name, rest, wgt, kind in EMISSION:
                z = lam / rest - 1
                if not (0.0 <= z <= 7.0):
                    continue
                if kind == "b" and fwhm < 1000:
                    continue
                k = int(math.log1p(z) / bin_w)
                for kk in (k - 1, k, k + 1):
                    votes.setdefault(kk, {})
                    prev = votes[kk].get(name)
                    val = wgt * min(snr, 30)
                    if prev is None or prev[0] < val:
                        votes[kk][name] = (val, z, fwhm)
        scored = []
        for k, d in votes.items():
            if len(d) < 1:
                continue
            s = sum(v[0] for v in d.values()) * (1 + 0.5 * (len(d) - 1))
            scored.append((s, k, d))
        scored.sort(key=lambda t: -t[0])
        if scored:
            s, k, d = scored[0]
            zs = np.array([v[1] for v in d.values()])
            ws = np.array([v[0] for v in d.values()])
            z = float(np.sum(zs * ws) / np.sum(ws))
            broad_n = sum(1 for n, v in d.items() if n in BROAD and v[2] > 1500)
            nlines = len(d)
            # One strong isolated line is ambiguous; require two lines, or a
            # resolved [O II] doublet, before trusting the vote.
            if nlines >= 2 or s > 40:
                best = ("qso" if broad_n >= 1 and max(v[2] for v in d.values()) > 1500 else "galaxy", z, s)

    # Cross-correlation for absorption spectra.
    flat = np.where(cont_w > 0, fg / np.where(cont_w > 0, cont_w, 1), 1.0)
    okx = okg & ~fore & (cont_w > 0)
    lag_star, r_star = template_xcorr(grid, flat, okx, STELLAR, BANDS,
                                      -1000 / C, 1000 / C, dln, max(1.5, 150 / px_kms))
    lag_gal, r_gal = template_xcorr(grid, flat, okx, STELLAR, [],
                                    math.log1p(0.01), math.log1p(1.2), dln, max(2.0, 400 / px_kms))
    # Emission wins when it is several lines or clearly stronger than the
    # stellar absorption correlation (absorption spectra leave positive bumps
    # between their lines that can vote for a spurious emission solution).
    if best is not None:
        cls, z, s_em = best
        n_em = len([l for l in em if l[2] > 6])
        if cls == "qso" or n_em >= 3 or r_star < 6.0 or s_em > 3 * r_star:
            return cls, z, snr_med
    if r_star > 6.0 and r_star >= 0.8 * r_gal:
        return "star", math.expm1(lag_star), snr_med
    if r_gal > 7.0:
        return "galaxy", math.expm1(lag_gal), snr_med
    return "unknown", 0.0, snr_med


def main():
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("dir")
    ap.add_argument("--out", required=True)
    a = ap.parse_args()
    with open(os.path.join(a.dir, "manifest.csv")) as fh:
        rows = list(csv.DictReader(fh))
    with open(a.out, "w") as out:
        for row in rows:
            path = os.path.join(a.dir, row["path"])
            t0 = time.perf_counter()
            try:
                w, f, e = read_any(path)
            except Exception as exc:  # report and go on, like a batch tool
                print(f"{path}: {exc}", file=sys.stderr)
                out.write(json.dumps({"path": row["path"], "class": "unknown", "z": None,
                                      "read_ms": 0.0, "analyse_ms": 0.0}) + "\n")
                continue
            t1 = time.perf_counter()
            try:
                cls, z, _ = analyse(np.asarray(w, float), np.asarray(f, float),
                                    None if e is None else np.asarray(e, float))
            except Exception as exc:
                print(f"{path}: analysis failed: {exc}", file=sys.stderr)
                cls, z = "unknown", None
            t2 = time.perf_counter()
            out.write(json.dumps({"path": row["path"], "class": cls, "z": z,
                                  "read_ms": (t1 - t0) * 1e3, "analyse_ms": (t2 - t1) * 1e3}) + "\n")


if __name__ == "__main__":
    main()
