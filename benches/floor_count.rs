//! Instructions executed by the forest fit and by its floor (see `shared::floor_kernel`),
//! counted by valgrind's callgrind: `benches/forest-floor` runs this program twice, once
//! collecting only inside `forest_once` and once only inside `floor_once`, and prints the
//! ratio. Unlike a timing, a count does not move with the machine's load. The forest is
//! the Criterion bench's: 100 trees, tried 0.33, min_leaf 5, on fold 0 of the toy panel.
//! Usage (what the script does): floor_count forest|floor

#[path = "shared.rs"]
mod shared;

use forkmap::models::forest::{Ensemble, ForestParams};
use forkmap::models::FitInput;

#[inline(never)]
fn forest_once(params: &ForestParams, input: &FitInput) -> Ensemble {
    params.grow_forest(input).expect("the forest fits")
}

#[inline(never)]
fn floor_once(passes: u64, order: &[usize], w: &[f64], y: &[f64]) -> (f64, f64) {
    shared::floor_kernel(passes, order, w, y)
}

fn main() {
    let what = std::env::args().nth(1).unwrap_or_default();
    let case = shared::FloorCase::new();
    let n = case.x.nrows();
    match what.as_str() {
        "forest" => {
            let f = forest_once(&case.params, &case.input());
            let scanned: u64 = f.trees.iter().map(|t| t.scanned()).sum();
            println!("forest: {} trees, {scanned} row visits", f.trees.len());
        }
        "floor" => {
            // As many row visits as the forest's split search makes (counted by a fit
            // outside the collected function).
            let passes = case.passes();
            let (w, y) = (case.w.to_vec(), case.y.to_vec());
            let r = floor_once(passes, &case.order, &w, &y);
            println!("floor: {passes} passes over {n} rows ({:.3})", r.0);
        }
        _ => {
            eprintln!("usage: floor_count forest|floor");
            std::process::exit(2);
        }
    }
}
