//! Throughput of `zsift scan` over 10,000 spectra in the page cache.
//!
//!     cargo bench --bench scan            # 10,000 spectra, all cores
//!     cargo bench --bench scan -- 2000 1  # 2,000 spectra, 1 thread
//!
//! Half the spectra are CSV files and half FITS 1-D images, 4,000 pixels
//! each (invented data: a sloped continuum with two emission lines and
//! deterministic pseudo-noise). Prints spectra per second for the reading
//! stage alone (readers + records, a trivial analyser) and for the whole scan
//! with the real identifier.

use std::io::Write;
use std::path::{Path, PathBuf};
use std::time::Instant;
use zsift::identify::{Analysis, Identifier, Settings};
use zsift::scan::{self, Format, Writer};
use zsift::spectrum::Spectrum;

const PIXELS: usize = 4000;

fn flux_at(i: usize, seed: usize) -> f64 {
    let x = i as f64 / PIXELS as f64;
    let noise = (((i * 7919 + seed * 104_729) % 1000) as f64 / 1000.0 - 0.5) * 0.2;
    let c = (seed % 50) as f64 / 50.0;
    10.0 + 2.0 * x
        + 30.0 * (-0.5 * ((x - 0.3 - 0.2 * c) / 0.0015).powi(2)).exp()
        + 12.0 * (-0.5 * ((x - 0.6 - 0.2 * c) / 0.0015).powi(2)).exp()
        + noise
}

fn write_csv(path: &Path, seed: usize) {
    let mut s = String::with_capacity(PIXELS * 24);
    s.push_str(&format!(
        "# object: bench-{seed}\n# medium: air\nwavelength,flux,error\n"
    ));
    for i in 0..PIXELS {
        s.push_str(&format!(
            "{:.3},{:.5},0.1\n",
            3600.0 + 1.5 * i as f64,
            flux_at(i, seed)
        ));
    }
    std::fs::write(path, s).expect("write csv");
}

fn card(k: &str, v: &str) -> String {
    format!("{:<80}", format!("{k:<8}= {v:>20}"))
}

fn write_fits(path: &Path, seed: usize) {
    let mut h = String::new();
    for (k, v) in [
        ("SIMPLE", "T".to_string()),
        ("BITPIX", "-32".into()),
        ("NAXIS", "1".into()),
        ("NAXIS1", PIXELS.to_string()),
        ("CTYPE1", "'AWAV    '".into()),
        ("CUNIT1", "'Angstrom'".into()),
        ("CRVAL1", "3600.0".into()),
        ("CRPIX1", "1.0".into()),
        ("CDELT1", "1.5".into()),
        ("OBJECT", format!("'bench-{seed}'")),
    ] {
        h.push_str(&card(k, &v));
    }
    h.push_str(&format!("{:<80}", "END"));
    while h.len() % 2880 != 0 {
        h.push(' ');
    }
    let mut b = h.into_bytes();
    for i in 0..PIXELS {
        b.extend((flux_at(i, seed) as f32).to_be_bytes());
    }
    while b.len() % 2880 != 0 {
        b.push(0);
    }
    std::fs::write(path, b).expect("write fits");
}

fn trivial(s: &Spectrum) -> Analysis {
    Analysis {
        noise: Default::default(),
        sigma: Vec::new(),
        continuum: Vec::new(),
        features: Vec::new(),
        candidates: Vec::new(),
        warnings: vec![format!("{} pixels", s.len())],
    }
}

fn time(inputs: &[PathBuf], a: &dyn scan::Analyse, jobs: usize) -> (f64, usize) {
    let mut w = Writer::new(Format::Jsonl, Box::new(std::io::sink())).expect("writer");
    let t = Instant::now();
    let s = scan::run(
        inputs,
        a,
        &scan::Options::default(),
        jobs,
        |r| w.write(r),
        &|_| {},
    )
    .expect("scan");
    (inputs.len() as f64 / t.elapsed().as_secs_f64(), s.rejected)
}

fn main() {
    let args: Vec<String> = std::env::args()
        .skip(1)
        .filter(|a| !a.starts_with('-'))
        .collect();
    let n: usize = args.first().and_then(|a| a.parse().ok()).unwrap_or(10_000);
    let jobs: usize = args.get(1).and_then(|a| a.parse().ok()).unwrap_or_else(|| {
        std::thread::available_parallelism()
            .map(|n| n.get())
            .unwrap_or(1)
    });
    let dir = std::env::temp_dir().join(format!("zsift-scan-bench-{}", std::process::id()));
    std::fs::create_dir_all(&dir).expect("mkdir");
    for i in 0..n {
        let sub = dir.join(format!("d{}", i % 20));
        std::fs::create_dir_all(&sub).expect("mkdir");
        if i % 2 == 0 {
            write_csv(&sub.join(format!("s{i:05}.csv")), i);
        } else {
            write_fits(&sub.join(format!("s{i:05}.fits")), i);
        }
    }
    let inputs = scan::find_inputs(std::slice::from_ref(&dir));
    // Warm the page cache.
    let _ = time(&inputs, &trivial, jobs);
    let (rate, rejected) = time(&inputs, &trivial, jobs);
    println!(
        "scan bench: {n} spectra x {PIXELS} px, {jobs} threads: read + record: {rate:.0} spectra/s ({rejected} rejected)"
    );
    let id = Identifier::new(&zsift::lines::builtin(), Settings::default());
    let (rate, _) = time(&inputs, &id, jobs);
    println!("scan bench: full scan with the identifier: {rate:.0} spectra/s");
    let _ = std::io::stdout().flush();
    let _ = std::fs::remove_dir_all(&dir);
}
