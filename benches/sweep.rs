//! Criterion benches: one spec (all folds) per model family and a small sweep on the toy
//! panel (importances off: they are measured by the sweep bench of issue 6 later).
//! Run: `cargo bench -p forkmap --bench sweep`. Timings are claims only as measured here.

use criterion::{criterion_group, criterion_main, Criterion};
use forkmap::sweep::Sweep;
use std::path::Path;
use std::sync::Mutex;

fn prepared() -> forkmap::run::Prepared {
    let root = Path::new(env!("CARGO_MANIFEST_DIR")).join("..");
    forkmap::run::prepare(&root.join("configs/toy-quick.toml")).expect("toy-quick prepares")
}

fn bench(c: &mut Criterion) {
    let p = prepared();
    // One spec per model family of the demo config (uncompressed when there is one).
    let mut families: Vec<String> = p
        .space
        .specs
        .iter()
        .map(|s| s.choice("model").option.clone())
        .collect();
    families.sort();
    families.dedup();
    for fam in families {
        let of_family = |s: &forkmap::space::Spec| s.choice("model").option == fam;
        let si = p
            .space
            .specs
            .iter()
            .position(|s| of_family(s) && s.choice("compress").option == "none")
            .or_else(|| p.space.specs.iter().position(of_family))
            .expect("a spec of a family listed in the space");
        let sweep =
            Sweep::new(&p.panel, &p.space, &p.folds, p.cfg.seed, Some(&[si])).expect("sweep");
        c.bench_function(&format!("one spec, all folds: {fam}"), |b| {
            b.iter(|| {
                let n = Mutex::new(0usize);
                sweep.run(&|_r| *n.lock().unwrap() += 1);
            })
        });
    }
    let subset: Vec<usize> = (0..p.space.specs.len()).step_by(8).collect();
    let sweep = Sweep::new(&p.panel, &p.space, &p.folds, p.cfg.seed, Some(&subset)).expect("sweep");
    let mut g = c.benchmark_group("small sweep");
    g.sample_size(10);
    g.bench_function(format!("{} specs of toy-quick", subset.len()), |b| {
        b.iter(|| {
            let n = Mutex::new(0usize);
            sweep.run(&|_r| *n.lock().unwrap() += 1);
        })
    });
    g.finish();
}

criterion_group!(benches, bench);
criterion_main!(benches);
