//! The null's lines in `forkmap plan`: draws x specs x fits, and a time estimate scaled
//! from the sweep's.

use crate::config::null::NullSettings;
use std::fmt::Write;

/// Plan lines for a null of `settings` over a space of `space_specs` specs with
/// `fits_per_spec` fits each; `sweep_seconds` is the sweep's estimate (NaN: unknown);
/// `sweep_importance` says whether that estimate includes permutation importances.
pub fn lines(
    settings: &NullSettings,
    space_specs: usize,
    fits_per_spec: usize,
    sweep_seconds: f64,
    sweep_importance: bool,
) -> String {
    let s = settings
        .specs
        .map_or(space_specs, |k| (k as usize).min(space_specs));
    let d = settings.draws as usize;
    let mut t = String::new();
    let _ = writeln!(
        t,
        "\nnull    {d} permutation draws x {s} specs{} x {fits_per_spec} fits = {} model fits ({}; ranked by {}, top {})",
        if s < space_specs {
            format!(" (a seeded sample of {space_specs})")
        } else {
            String::new()
        },
        d * s * fits_per_spec,
        if settings.permutation || settings.group {
            format!(
                "importances: {} (null.importance)",
                settings.kinds().join(", ")
            )
        } else {
            "native importances only".to_string()
        },
        settings.metric.name(),
        settings.top_k
    );
    let est = sweep_seconds * d as f64 * s as f64 / space_specs.max(1) as f64;
    let _ = writeln!(
        t,
        "        estimated null time: {} (the sweep's estimate x {d} draws x {s}/{space_specs} specs; an upper bound: \
         stages that do not read the outcome are fitted once per fold and shared by every draw{})",
        human(est),
        match (sweep_importance, settings.permutation || settings.group) {
            (true, false) => "; and the sweep's estimate includes permutation importances, which the null does not compute",
            (false, true) => "; but the null computes permutation importances, which the sweep's estimate does not include: expect more",
            _ => "",
        }
    );
    let _ = writeln!(
        t,
        "        keeps the importance ranks of each draw's specs within {} of its best error (null/goodranks: the report's claims under the null)",
        settings.ranks_within
    );
    let _ = writeln!(
        t,
        "        runs after the sweep (with --shard I/N, each shard runs the draws dealt to it after its specs; `forkmap gather` joins them)"
    );
    t
}

use crate::progress::human;
