#!/usr/bin/env python3
"""Check the demo's FITS files with astropy and record what astropy reads.

    python3 tests/scripts/check_fits_with_astropy.py            # from the repository root

Installs astropy and numpy into a private virtual environment (under
/tmp/zsift-astropy-env) if they are not importable, verifies every demo/*.fits
file with astropy.io.fits (`verify("exception")`), computes the wavelength of
the first, middle and last pixel of every image HDU with astropy.wcs, reads the
first, middle and last wavelength of every binary table, and converts
OBSGEO-X/Y/Z to geodetic latitude/longitude/height with
astropy.coordinates.EarthLocation. Writes tests/fixtures/demo_fits_astropy.json
(with the astropy version), which tests/synth_astropy.rs compares with the
generator's own grids. CI never runs this script; its output is committed.
"""

import glob
import json
import os
import subprocess
import sys

ROOT = os.path.dirname(os.path.dirname(os.path.dirname(os.path.abspath(__file__))))


def ensure():
    try:
        import astropy  # noqa: F401
        import numpy  # noqa: F401
        return
    except ImportError:
        pass
    env = "/tmp/zsift-astropy-env"
    py = os.path.join(env, "bin", "python")
    if not os.path.exists(py):
        import venv
        venv.create(env, with_pip=True)
    subprocess.run([py, "-m", "pip", "install", "-q", "astropy", "numpy"], check=True)
    os.execv(py, [py] + sys.argv)


def main():
    ensure()
    import warnings

    import astropy
    import numpy as np
    from astropy import units as u
    from astropy.coordinates import EarthLocation
    from astropy.io import fits
    from astropy.wcs import WCS

    out = {"astropy": astropy.__version__, "numpy": np.__version__, "files": {}}
    for path in sorted(glob.glob(os.path.join(ROOT, "demo", "*.fits"))):
        name = os.path.basename(path)
        rec = {"hdus": []}
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            with fits.open(path, memmap=False) as hd:
                hd.verify("exception")
                h0 = hd[0].header
                if "OBSGEO-X" in h0:
                    loc = EarthLocation.from_geocentric(h0["OBSGEO-X"], h0["OBSGEO-Y"], h0["OBSGEO-Z"], unit=u.m)
                    rec["site"] = {
                        "lat_deg": float(loc.lat.deg),
                        "lon_deg": float(loc.lon.deg),
                        "height_m": float(loc.height.to(u.m).value),
                    }
                for i, hdu in enumerate(hd):
                    if isinstance(hdu, fits.BinTableHDU):
                        d = hdu.data
                        wname = d.columns.names[0]
                        w = np.asarray(d[wname], dtype=float).ravel()
                        idx = [0, len(w) // 2, len(w) - 1]
                        rec["hdus"].append({"hdu": i, "kind": "table", "column": wname,
                                            "medium": hdu.header.get("AIRORVAC"),
                                            "pixels": [int(k) for k in idx],
                                            "wavelength": [float(w[k]) for k in idx]})
                    elif hdu.header.get("NAXIS", 0) >= 1 and hdu.data is not None:
                        wcs = WCS(hdu.header, naxis=1)
                        n = hdu.header["NAXIS1"]
                        idx = [0, n // 2, n - 1]
                        wl = wcs.all_pix2world(np.array(idx, dtype=float), 0)[0]
                        unit = wcs.wcs.cunit[0]
                        wl = (np.asarray(wl) * u.Unit(unit)).to(u.AA).value
                        rec["hdus"].append({"hdu": i, "kind": "image", "ctype": hdu.header["CTYPE1"],
                                            "pixels": [int(k) for k in idx],
                                            "wavelength": [float(x) for x in wl]})
        out["files"][name] = rec
    dest = os.path.join(ROOT, "tests", "fixtures", "demo_fits_astropy.json")
    with open(dest, "w") as fh:
        json.dump(out, fh, indent=1, sort_keys=True)
        fh.write("\n")
    print(f"checked {len(out['files'])} files with astropy {astropy.__version__}; wrote {dest}")


if __name__ == "__main__":
    main()
