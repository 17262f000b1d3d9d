//! Instructions executed by the forest fit and by its floors (see
//! `shared::floor_kernel_per_node`, `shared::search_floor_per_node` and
//! `shared::floor_kernel`), counted by valgrind's callgrind: `benches/forest-floor` runs
//! this program four times, collecting only inside `forest_once`, `node_floor_once`,
//! `search_floor_once` or `floor_once`, and prints the ratios. Unlike a timing, a count
//! does not move with the machine's load. The forest is the Criterion bench's: 100 trees,
//! tried 0.33, min_leaf 5, on fold 0 of the toy panel.
//! Usage: floor_count forest|node_floor|search_floor|floor [REPEATS]; repeats (default 1)
//! give a sampling profiler something to sample (`perf record -g floor_count forest 500`).
//! `cargo bench -p forkmap --bench floor_count -- wide ROWS INDICATORS [REPEATS]` (or
//! `floor_count wide ...`) times the same forest on a synthetic panel
//! of that shape (values on a 0.001 grid, so some tie) and prints microseconds per forest:
//! how the grower fares past the toy panel's size, where its tables leave the
//! first-level cache.

#[path = "shared.rs"]
mod shared;

use forkmap::models::forest::{Ensemble, ForestParams};
use forkmap::models::FitInput;

/// The program's arguments, less the `--bench` that `cargo bench` adds.
fn args() -> impl Iterator<Item = String> {
    std::env::args().filter(|a| a != "--bench")
}

#[inline(never)]
fn forest_once(params: &ForestParams, input: &FitInput) -> Ensemble {
    params.grow_forest(input).expect("the forest fits")
}

#[inline(never)]
fn node_floor_once(scans: &[[u32; 2]], order: &[usize], w: &[f64], y: &[f64]) -> (f64, f64) {
    shared::floor_kernel_per_node(scans, order, w, y)
}

#[inline(never)]
fn search_floor_once(scans: &[[u32; 2]], s: &shared::SearchCase, min_leaf: usize) -> f64 {
    shared::search_floor_per_node(scans, s, min_leaf)
}

#[inline(never)]
fn floor_once(passes: u64, order: &[usize], w: &[f64], y: &[f64]) -> (f64, f64) {
    shared::floor_kernel(passes, order, w, y)
}

fn main() {
    let what = args().nth(1).unwrap_or_default();
    if what == "wide" {
        return wide();
    }
    let repeats: usize = args()
        .nth(2)
        .map_or(Ok(1), |r| r.parse())
        .unwrap_or_else(|_| {
            eprintln!("usage: floor_count forest|node_floor|search_floor|floor [REPEATS]");
            std::process::exit(2);
        });
    let case = shared::FloorCase::new();
    let n = case.x.nrows();
    match what.as_str() {
        "forest" => {
            let input = case.input();
            let mut f = forest_once(&case.params, &input);
            for _ in 1..repeats {
                f = forest_once(&case.params, &input);
            }
            let scanned: u64 = f.trees().iter().map(|t| t.scanned()).sum();
            println!("forest: {} trees, {scanned} row visits", f.trees().len());
        }
        "node_floor" => {
            // The forest's split searches (made by a fit outside the collected function).
            let scans = case.scans();
            let (w, y) = (case.w.to_vec(), case.y.to_vec());
            let mut r = node_floor_once(&scans, &case.order, &w, &y);
            for _ in 1..repeats {
                r = node_floor_once(&scans, &case.order, &w, &y);
            }
            let visits: u64 = scans
                .iter()
                .map(|&[n, t]| u64::from(n) * u64::from(t))
                .sum();
            println!(
                "node_floor: {} node passes, {visits} row visits ({:.3})",
                scans.iter().map(|&[_, t]| u64::from(t)).sum::<u64>(),
                r.0
            );
        }
        "search_floor" => {
            // The forest's split searches again, each pass also scoring every candidate.
            let scans = case.scans();
            let ml = case.params.min_leaf;
            let mut r = search_floor_once(&scans, &case.search, ml);
            for _ in 1..repeats {
                r = search_floor_once(&scans, &case.search, ml);
            }
            println!(
                "search_floor: {} node passes, scoring every candidate ({r:.3})",
                scans.iter().map(|&[_, t]| u64::from(t)).sum::<u64>()
            );
        }
        "floor" => {
            // As many row visits as the forest's split search makes (counted by a fit
            // outside the collected function).
            let passes = case.passes();
            let (w, y) = (case.w.to_vec(), case.y.to_vec());
            let mut r = floor_once(passes, &case.order, &w, &y);
            for _ in 1..repeats {
                r = floor_once(passes, &case.order, &w, &y);
            }
            println!("floor: {passes} passes over {n} rows ({:.3})", r.0);
        }
        _ => {
            eprintln!("usage: floor_count forest|node_floor|search_floor|floor [REPEATS]");
            std::process::exit(2);
        }
    }
}

/// `floor_count wide ROWS INDICATORS [REPEATS] [TRIED] [MIN_LEAF]`: the floor case's forest
/// (or one trying TRIED of the indicators with MIN_LEAF) on a synthetic panel (uniform
/// values on a 0.001 grid, outcome from two indicators plus noise, unit weights), timed
/// over REPEATS fits (default 10); also prints the microseconds per tree.
fn wide() {
    const USAGE: &str = "usage: floor_count wide ROWS INDICATORS [REPEATS] [TRIED] [MIN_LEAF]";
    let arg = |k: usize| args().nth(k).map(|a| a.parse::<usize>());
    let (Some(Ok(n)), Some(Ok(p))) = (arg(2), arg(3)) else {
        eprintln!("{USAGE}");
        std::process::exit(2);
    };
    let repeats = match arg(4) {
        None => 10,
        Some(Ok(r)) if r > 0 => r,
        _ => {
            eprintln!("{USAGE}");
            std::process::exit(2);
        }
    };
    let mut params = shared::FloorCase::params();
    if let Some(t) = args().nth(5) {
        match t.parse::<f64>() {
            Ok(t) if t > 0.0 && t <= 1.0 => params.tried = t,
            _ => {
                eprintln!("{USAGE}");
                std::process::exit(2);
            }
        }
    }
    match arg(6) {
        None => {}
        Some(Ok(m)) if m > 0 => params.min_leaf = m,
        _ => {
            eprintln!("{USAGE}");
            std::process::exit(2);
        }
    }
    let (x, y) = shared::synthetic(n, p);
    let w = ndarray::Array1::ones(n);
    let hist = std::env::var_os("FLOOR_NODE_SIZES").is_some();
    let t = std::time::Instant::now();
    for r in 0..repeats {
        let input = FitInput {
            x: x.view(),
            y: y.view(),
            w: w.view(),
            seed: r as u64,
        };
        let f = forest_once(&params, &input);
        if hist && r == 0 {
            print_node_sizes(&f);
        }
    }
    let us = t.elapsed().as_secs_f64() * 1e6 / repeats as f64;
    println!(
        "wide: {n} rows x {p} indicators, tried {} min_leaf {}: {us:.0} us per forest, {:.1} us per tree ({repeats} fits)",
        params.tried,
        params.min_leaf,
        us / params.trees as f64
    );
}

/// With FLOOR_NODE_SIZES set, `wide` also prints the first forest's searched nodes and
/// split-search row visits by node size (rows at the node), as shares of the total.
fn print_node_sizes(f: &Ensemble) {
    let edges = [2u32, 3, 4, 8, 16, 32, 64, u32::MAX];
    let (mut nodes, mut visits) = ([0u64; 8], [0u64; 8]);
    for &[n, t] in f.trees().iter().flat_map(|t| t.scans()) {
        let b = edges.iter().position(|&e| n <= e).unwrap_or(7);
        nodes[b] += 1;
        visits[b] += u64::from(n) * u64::from(t);
    }
    let (tn, tv) = (nodes.iter().sum::<u64>(), visits.iter().sum::<u64>());
    println!("node sizes: {tn} nodes searched, {tv} row visits");
    let mut lo = 1;
    for b in 0..8 {
        let hi = if edges[b] == u32::MAX {
            "".to_string()
        } else {
            edges[b].to_string()
        };
        println!(
            "  {lo}-{hi} rows: {:.1}% of nodes, {:.1}% of row visits",
            100.0 * nodes[b] as f64 / tn.max(1) as f64,
            100.0 * visits[b] as f64 / tv.max(1) as f64
        );
        lo = edges[b].saturating_add(1);
    }
}
