#!/usr/bin/env python3
"""Run zsift and the reference numpy/scipy pipeline on the same synthetic set
and print per-spectrum time and accuracy for both.

    python3 benches/compare.py [--n 300] [--seed 2026] [--dir /tmp/zsift-compare]

Steps: pip-installs numpy, scipy and astropy into a private virtual
environment (once, under the work folder), writes the set with
`cargo bench --bench accuracy -- --write DIR`, runs zsift over it with
`cargo bench --bench accuracy -- --read DIR --out DIR/zsift.jsonl`, runs
`benches/reference_pipeline.py` over it, and compares the answers with the
truth in DIR/manifest.csv using the same rules (|dz| <= 0.001 (1 + z) for
galaxies, 0.003 (1 + z) for quasars, |dv| <= 50 km/s for stars, junk must be
called unknown). CI never runs this.
"""

import argparse
import csv
import json
import math
import os
import subprocess
import sys
import venv

HERE = os.path.dirname(os.path.abspath(__file__))
ROOT = os.path.dirname(HERE)
C = 299792.458


def ensure_env(work):
    env_dir = os.path.join(work, "pyenv")
    py = os.path.join(env_dir, "bin", "python")
    if not os.path.exists(py):
        venv.create(env_dir, with_pip=True)
    subprocess.run([py, "-m", "pip", "install", "-q", "numpy", "scipy", "astropy"], check=True)
    return py


def velocity(z):
    s = (1 + z) ** 2
    return C * (s - 1) / (s + 1)


def judge(cls, z, t_cls, t_z):
    if cls is None:
        cls = "unknown"
    class_ok = cls == t_cls
    if t_cls == "unknown":
        return class_ok, class_ok
    if z is None:
        return False, class_ok
    if t_cls == "star":
        z_ok = abs(velocity(z) - velocity(t_z)) <= 50.0
    elif t_cls == "galaxy":
        z_ok = abs(z - t_z) <= 0.001 * (1 + t_z)
    else:
        z_ok = abs(z - t_z) <= 0.003 * (1 + t_z)
    return z_ok, class_ok


def load(path):
    with open(path) as fh:
        return {r["path"]: r for r in (json.loads(l) for l in fh if l.strip())}


def pct(xs, p):
    xs = sorted(xs)
    return xs[int(round((len(xs) - 1) * p))] if xs else float("nan")


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--n", type=int, default=300)
    ap.add_argument("--seed", type=int, default=2026)
    ap.add_argument("--dir", default="/tmp/zsift-compare")
    ap.add_argument("--per-spectrum", action="store_true", help="print every spectrum")
    a = ap.parse_args()
    os.makedirs(a.dir, exist_ok=True)
    py = ensure_env(a.dir)
    versions = subprocess.run(
        [py, "-c", "import numpy, scipy, astropy; print(numpy.__version__, scipy.__version__, astropy.__version__)"],
        capture_output=True, text=True, check=True).stdout.split()
    data = os.path.join(a.dir, "set")
    cargo = ["cargo", "bench", "-q", "--bench", "accuracy", "--"]
    subprocess.run(cargo + ["--write", data, "--n", str(a.n), "--seed", str(a.seed)], cwd=ROOT, check=True)
    zs_out = os.path.join(a.dir, "zsift.jsonl")
    py_out = os.path.join(a.dir, "reference.jsonl")
    subprocess.run(cargo + ["--read", data, "--out", zs_out], cwd=ROOT, check=True,
                   stdout=subprocess.DEVNULL)
    subprocess.run([py, os.path.join(HERE, "reference_pipeline.py"), data, "--out", py_out], check=True)

    with open(os.path.join(data, "manifest.csv")) as fh:
        truth = list(csv.DictReader(fh))
    zs, ref = load(zs_out), load(py_out)
    tally = {}
    times = {"zsift": [], "numpy/scipy": []}
    read_times = {"zsift": [], "numpy/scipy": []}
    if a.per_spectrum:
        print(f"{'file':44} {'truth':>16} | {'zsift':>18} {'ms':>7} | {'numpy/scipy':>18} {'ms':>8}")
    for t in truth:
        t_cls, t_z = t["class"], float(t["z"])
        row = []
        for name, res in (("zsift", zs), ("numpy/scipy", ref)):
            r = res.get(t["path"], {})
            z = r.get("z")
            zok, cok = judge(r.get("class"), z, t_cls, t_z)
            key = (name, t_cls)
            n, nz, nc = tally.get(key, (0, 0, 0))
            tally[key] = (n + 1, nz + zok, nc + cok)
            times[name].append(r.get("analyse_ms", float("nan")))
            read_times[name].append(r.get("read_ms", float("nan")))
            row.append((r.get("class", "-"), z, r.get("analyse_ms", float("nan")), zok and cok))
        if a.per_spectrum:
            def fmt(c):
                cls, z, ms, ok = c
                zz = "-" if z is None else f"{z:.5f}"
                return f"{cls:>7} {zz:>8} {'ok' if ok else 'NO':>2} {ms:7.2f}"
            print(f"{t['path'][:44]:44} {t_cls:>7} {t_z:8.5f} | {fmt(row[0])} | {fmt(row[1])}")

    print(f"\n{len(truth)} spectra (seed {a.seed}); numpy {versions[0]}, scipy {versions[1]}, astropy {versions[2]}\n")
    print("| class | n | zsift z right | zsift class right | numpy/scipy z right | numpy/scipy class right |")
    print("|---|---|---|---|---|---|")
    for cls in ("star", "galaxy", "qso", "unknown", "all"):
        cells = []
        for name in ("zsift", "numpy/scipy"):
            if cls == "all":
                vals = [v for (nm, _), v in tally.items() if nm == name]
                n = sum(v[0] for v in vals); nz = sum(v[1] for v in vals); nc = sum(v[2] for v in vals)
            else:
                n, nz, nc = tally.get((name, cls), (0, 0, 0))
            cells.append((n, nz, nc))
        n = cells[0][0]
        if n == 0:
            continue
        print(f"| {cls} | {n} | {100 * cells[0][1] / n:.1f}% | {100 * cells[0][2] / n:.1f}% | "
              f"{100 * cells[1][1] / n:.1f}% | {100 * cells[1][2] / n:.1f}% |")
    print("\nPer-spectrum time, one thread (ms):\n")
    print("| pipeline | analyse median | analyse p90 | read median | analyse total (s) |")
    print("|---|---|---|---|---|")
    for name in ("zsift", "numpy/scipy"):
        ts = [x for x in times[name] if not math.isnan(x)]
        rs = [x for x in read_times[name] if not math.isnan(x)]
        print(f"| {name} | {pct(ts, 0.5):.3f} | {pct(ts, 0.9):.3f} | {pct(rs, 0.5):.3f} | {sum(ts) / 1e3:.2f} |")
    zm, pm = pct(times["zsift"], 0.5), pct(times["numpy/scipy"], 0.5)
    if zm > 0:
        print(f"\nmedian analysis speed-up of zsift over numpy/scipy: {pm / zm:.0f}x")


if __name__ == "__main__":
    sys.exit(main())
