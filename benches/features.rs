//! Speed of the identifier's lower stages (noise, continuum, detection with
//! fits) on seeded synthetic spectra of 4,000 and 15,000 pixels.
//!
//! Run: `cargo bench --bench features` (a plain bench binary: prints the
//! median and 90th percentile CPU time per spectrum of each stage, over
//! batches of 50 calls).

#[path = "../tests/features_common/mod.rs"]
mod features_common;

use features_common::{Rng, Synth};
use std::hint::black_box;
use std::time::Instant;
use zsift::identify::continuum::{self, ContinuumSettings};
use zsift::identify::detect::{self, DetectSettings};
use zsift::identify::noise;

fn spectrum(n: usize, seed: u64, quasar: bool) -> Synth {
    let mut rng = Rng::new(seed);
    let mut s = Synth::new(n, 3800.0, 9200.0, |w| 10.0 * (w / 6000.0).powf(-0.8));
    if quasar {
        s.add_line(5200.0, 6000.0, 6.0);
        s.add_line(6900.0, 5000.0, 4.0);
        s.add_line(7100.0, 400.0, 3.0);
    } else {
        for (c, a) in [
            (4500.0, 4.0),
            (5600.0, 6.0),
            (5650.0, 2.0),
            (7400.0, 8.0),
            (7420.0, 3.0),
        ] {
            s.add_line(c, 200.0, a);
        }
        s.add_line(6100.0, 250.0, -3.0);
    }
    s.add_noise(10.0, &mut rng);
    let i = s.index_of(8100.0);
    s.flux[i] += 15.0;
    s
}

/// CPU time of this thread, ns, from /proc/thread-self/schedstat (the
/// machine is shared, so wall-clock time would count other people's work);
/// falls back to wall-clock time where that file does not exist.
fn cpu_ns(start: Instant) -> f64 {
    std::fs::read_to_string("/proc/thread-self/schedstat")
        .ok()
        .and_then(|s| s.split_whitespace().next()?.parse::<f64>().ok())
        .unwrap_or_else(|| start.elapsed().as_secs_f64() * 1e9)
}

/// Median and 90th percentile over batches of the time per call, microseconds.
fn time<F: FnMut()>(mut f: F, batches: usize) -> (f64, f64) {
    const PER_BATCH: usize = 50;
    let origin = Instant::now();
    let mut t = Vec::with_capacity(batches);
    for _ in 0..batches {
        let t0 = cpu_ns(origin);
        for _ in 0..PER_BATCH {
            f();
        }
        t.push((cpu_ns(origin) - t0) / 1e3 / PER_BATCH as f64);
    }
    t.sort_by(f64::total_cmp);
    (t[batches / 2], t[batches * 9 / 10])
}

fn main() {
    let cs = ContinuumSettings::default();
    let ds = DetectSettings::default();
    println!("stage                        pixels  kind     median_us    p90_us");
    let only = std::env::var("ZSIFT_BENCH_N")
        .ok()
        .and_then(|v| v.parse::<usize>().ok());
    for &n in &[4000usize, 15000] {
        if only.is_some_and(|o| o != n) {
            continue;
        }
        for quasar in [false, true] {
            let s = spectrum(n, 11, quasar);
            let kind = if quasar { "quasar" } else { "galaxy" };
            let reps = std::env::var("ZSIFT_BENCH_BATCHES")
                .ok()
                .and_then(|v| v.parse::<usize>().ok())
                .unwrap_or(if n > 5000 { 10 } else { 30 });
            let (sig, _) = noise::estimate(&s.flux, None, &s.mask);
            let cont = continuum::fit(&s.wave, &s.flux, &sig, &s.mask, &cs);
            let r = time(
                || {
                    black_box(noise::estimate(black_box(&s.flux), None, &s.mask));
                },
                reps,
            );
            println!(
                "noise::estimate              {n:6}  {kind:7} {:10.1} {:9.1}",
                r.0, r.1
            );
            let r = time(
                || {
                    black_box(continuum::fit(
                        &s.wave,
                        black_box(&s.flux),
                        &sig,
                        &s.mask,
                        &cs,
                    ));
                },
                reps,
            );
            println!(
                "continuum::fit               {n:6}  {kind:7} {:10.1} {:9.1}",
                r.0, r.1
            );
            let r = time(
                || {
                    black_box(detect::find(
                        &s.wave,
                        black_box(&s.flux),
                        &sig,
                        &s.mask,
                        &cont,
                        &ds,
                    ));
                },
                reps,
            );
            let nf = detect::find(&s.wave, &s.flux, &sig, &s.mask, &cont, &ds).len();
            println!(
                "detect::find ({nf:2} features)   {n:6}  {kind:7} {:10.1} {:9.1}",
                r.0, r.1
            );
            let r = time(
                || {
                    let (sig, _) = noise::estimate(black_box(&s.flux), None, &s.mask);
                    let c = continuum::fit(&s.wave, &s.flux, &sig, &s.mask, &cs);
                    black_box(detect::find(&s.wave, &s.flux, &sig, &s.mask, &c, &ds));
                },
                reps,
            );
            println!(
                "all three                    {n:6}  {kind:7} {:10.1} {:9.1}",
                r.0, r.1
            );
        }
    }
}
