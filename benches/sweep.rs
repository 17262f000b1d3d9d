//! Criterion benches on the toy panel: each stage option of the demo config fitted and
//! applied on one training fold, one spec (all folds) per model family, and a small sweep
//! (importances off). The side-by-side script (benches/side-by-side) and the scaling table
//! (benches/scaling) time whole runs.
//! Run: `cargo bench -p forkmap --bench sweep`. Timings are claims only as measured here.

use criterion::{criterion_group, criterion_main, Criterion};
use forkmap::sweep::Sweep;
use std::sync::Mutex;

#[path = "shared.rs"]
mod shared;
use shared::{
    floor_kernel, floor_kernel_per_node, fold0, prepared, search_floor_per_node, FloorCase,
};

/// Every stage option of the demo config, fitted on fold 0's training rows (raw
/// indicators, so later stages see gaps a fill would have removed only where they cope
/// with them: fills first, then the rest on the median-filled rows) and applied to them.
fn stages(c: &mut Criterion) {
    use forkmap::space::Dim;
    use forkmap::stages::{build, StageInput};
    let p = prepared();
    let fold = &p.folds.folds[0];
    let (raw, y, filled) = fold0(&p);
    let names = p.panel.indicators.clone();
    let mut g = c.benchmark_group("stage fit + apply, one fold");
    for dim in Dim::STAGES {
        for choice in &p.space.options[dim.index()] {
            let stage = build(choice, &p.panel).expect("stage builds");
            let x = if dim == Dim::Fill { &raw } else { &filled };
            let input = StageInput {
                x: x.view(),
                y: y.view(),
                rows: &fold.train,
                names: &names,
            };
            g.bench_function(format!("{dim}: {}", choice.label()), |b| {
                b.iter(|| {
                    stage
                        .fit(&input)
                        .map(|f| f.apply_rows(x.view(), Some(&fold.train)).len())
                })
            });
        }
    }
    g.finish();
}

/// The forest against its floor. Floor (our definition, in benches/MEASUREMENTS.md): one pass
/// over a node's rows per indicator tried there, accumulating the weight and weighted
/// outcome of each row (less than a split search can do: it must also score candidates,
/// which the search floor adds); the forest's grower records its searches (`Tree::scans`),
/// and the floor kernel replays them node by node. The search floor replays them too, also
/// scoring every candidate threshold, as an exact search must. The fused floor makes as
/// many row visits in long passes over all the rows.
fn forest_floor(c: &mut Criterion) {
    let case = FloorCase::new();
    let input = case.input();
    let params = case.params;
    let n = case.x.nrows();
    let scans = case.scans();
    let passes = case.passes();
    let (order, wv, yv) = (&case.order, case.w.to_vec(), case.y.to_vec());
    let mut g = c.benchmark_group("forest against its floor");
    g.bench_function(
        format!(
            "forest fit: 100 trees, {} rows x {} indicators",
            n,
            case.x.ncols()
        ),
        |b| b.iter(|| params.grow_forest(&input).map(|f| f.trees().len())),
    );
    g.bench_function(
        format!(
            "floor: one pass per node searched per indicator tried ({} nodes)",
            scans.len()
        ),
        |b| b.iter(|| floor_kernel_per_node(&scans, order, &wv, &yv)),
    );
    g.bench_function(
        "search floor: the same passes, scoring every candidate threshold",
        |b| b.iter(|| search_floor_per_node(&scans, &case.search, params.min_leaf)),
    );
    g.bench_function(format!("fused floor: {passes} passes over {n} rows"), |b| {
        b.iter(|| floor_kernel(passes, order, &wv, &yv))
    });
    g.finish();
}

fn bench(c: &mut Criterion) {
    let p = prepared();
    // One spec per model family of the demo config (uncompressed when there is one).
    let mut families: Vec<String> = p
        .space
        .specs
        .iter()
        .map(|s| s.choice(forkmap::space::Dim::Model).option.clone())
        .collect();
    families.sort();
    families.dedup();
    for fam in families {
        let of_family =
            |s: &forkmap::space::Spec| s.choice(forkmap::space::Dim::Model).option == fam;
        let si = p
            .space
            .specs
            .iter()
            .position(|s| of_family(s) && s.choice(forkmap::space::Dim::Compress).option == "none")
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

criterion_group!(benches, forest_floor, stages, bench);
criterion_main!(benches);
