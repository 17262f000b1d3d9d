//! Model costs are a method of each family's checked parameters (`Regressor::cost`). This
//! pins them, bit for bit, to the per-family formulas they replaced (which read the raw
//! choice), for every spec of the shipped configs, so shard splits and `plan` estimates
//! do not move. Set `FORKMAP_COST_DUMP=FILE` to also write every spec's cost, nested cost
//! and shard owners (a before/after dump).

use crate::common::root;
use forkmap::decl::{Choice, Dim};

/// The cost closures as they were registered per family before the move (oracle).
fn old_cost(c: &Choice, n: f64, p: f64) -> f64 {
    let (n, p) = (n.max(1.0), p.max(1.0));
    let v = |k: &str| {
        c.param(k)
            .unwrap_or_else(|| panic!("{} lacks {k}", c.option))
    };
    match c.option.as_str() {
        "ols" | "ridge" => n * p * p + p * p * p,
        "lasso" | "elastic" => 100.0 * n * p,
        "plsr" => v("k") * 4.0 * n * p,
        "tree" => p * n * v("depth").min(n.log2().max(1.0)),
        "forest" => v("trees") * (14.0 + p * (0.5 + v("tried"))) * n * n.log2().max(1.0) / 3.3,
        "extra" => v("trees") * (v("tried") * p).max(1.0) * n * n.log2().max(1.0) * 0.5,
        "boost" => v("trees") * v("subsample") * n * (6.0 + p) * v("depth"),
        "nearest" => n * n * p,
        "probe" => n,
        o => panic!("no old cost for {o}"),
    }
}

#[test]
fn costs_match_the_formulas_they_replaced() {
    let mut dump = String::new();
    for cfg in [
        "configs/toy-quick.toml",
        "configs/toy-full.toml",
        "benches/side-by-side.toml",
    ] {
        let p = forkmap::run::prepare(&root().join(cfg)).unwrap();
        let nested = forkmap::sweep::nested_costs(&p.space, &p.panel, None);
        for (s, nc) in p.space.specs.iter().zip(&nested) {
            let m = s.choice(Dim::Model);
            for (n, w) in [
                (1.0, 1.0),
                (37.0, 5.0),
                (400.0, 90.0),
                (p.panel.n_rows() as f64, 300.0),
            ] {
                assert_eq!(
                    forkmap::models::cost(m, n, w).to_bits(),
                    old_cost(m, n, w).to_bits(),
                    "{cfg}: {} at n={n}, p={w}",
                    s.label()
                );
            }
            let c = forkmap::shard::spec_cost(s, &p.panel);
            dump.push_str(&format!(
                "{cfg} {} {:016x} {:016x}\n",
                s.label(),
                c.to_bits(),
                nc.to_bits()
            ));
        }
        for k in 2..=8 {
            let owners = forkmap::shard::owners(&p.space, &p.panel, k);
            dump.push_str(&format!("{cfg} owners/{k} {owners:?}\n"));
        }
    }
    if let Some(f) = std::env::var_os("FORKMAP_COST_DUMP") {
        std::fs::write(f, dump).unwrap();
    }
}
