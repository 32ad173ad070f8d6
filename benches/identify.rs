//! Speed of the full analysis (`Identifier::analyse`) of one optical spectrum:
//! ~4,000 pixels (R ~ 1,100 over 3,700-9,200 A) and ~15,000 pixels (R ~ 4,000).
//! Single-threaded. Run with `cargo bench --bench identify`.

use criterion::{Criterion, criterion_group, criterion_main};
use std::hint::black_box;

#[path = "../tests/identify_support/mod.rs"]
mod support;

use support::{Kind, Spec, generate};
use zsift::identify::{Identifier, Settings};

fn spec(kind: Kind, z: f64, resolution: f64) -> Spec {
    Spec {
        kind,
        z,
        snr: 10.0,
        resolution,
        lo: 3700.0,
        hi: 9200.0,
        nuisances: true,
        ripples: false,
    }
}

fn bench(c: &mut Criterion) {
    let id = Identifier::new(&support::catalogue(), Settings::default());
    for (label, resolution) in [("4k", 1090.0), ("15k", 4090.0)] {
        for (kind, z, name) in [
            (Kind::EmissionGalaxy, 0.12, "emission-galaxy"),
            (Kind::Quasar, 2.3, "quasar"),
            (Kind::StarLate, 0.0002, "star"),
        ] {
            let s = generate(spec(kind, z, resolution), 7).spectrum;
            let n = s.len();
            c.bench_function(&format!("analyse {name} {label} ({n} px)"), |b| {
                b.iter(|| black_box(id.analyse(black_box(&s))))
            });
        }
    }
}

criterion_group!(benches, bench);
criterion_main!(benches);
