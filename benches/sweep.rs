//! Criterion benches: one spec (all folds) and a small sweep on the toy panel.
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
    let families = ["ridge", "tree", "forest"];
    for fam in families {
        let si = p
            .space
            .specs
            .iter()
            .position(|s| s.choice("model").option == fam && s.choice("compress").option == "none")
            .expect("a spec of the family");
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
