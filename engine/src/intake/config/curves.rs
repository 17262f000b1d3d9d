//! The `[curves]` config section: whether `forkmap run` draws the shapes of associations
//! (ICE/PD curves, bands, breakpoints, subgroups) after the sweep, and with which settings.
//! Like `[map]` it is not part of a run's identity (a run resumes whatever it says): the
//! run stores it in the manifest under `curves`. Imports nothing from the crate (serde
//! only), so any module can read it.

use serde::{Deserialize, Serialize};

/// Keys of `[curves]`.
pub const CURVES_KEYS: &[&str] = &[
    "draw",
    "members",
    "top_k",
    "grid",
    "resamples",
    "level",
    "flat_share",
];

/// Values of `members`.
pub const MEMBERS: &[&str] = &["good", "best"];

/// The section as written in the config (every key optional).
#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
#[serde(deny_unknown_fields)]
pub struct CurvesSection {
    /// Draw the curves at the end of `forkmap run` (default true).
    #[serde(default = "default_draw")]
    pub draw: bool,
    /// `good` (the best spec and the report's good set) or `best` (the best spec only).
    #[serde(default = "default_members")]
    pub members: String,
    /// Indicators taken by mean importance.
    #[serde(default = "default_top_k")]
    pub top_k: usize,
    /// Grid points (observed quantiles) per indicator.
    #[serde(default = "default_grid")]
    pub grid: usize,
    /// Unit-bootstrap resamples of the breakpoint interval.
    #[serde(default = "default_resamples")]
    pub resamples: usize,
    /// Level of the breakpoint interval and of the band.
    #[serde(default = "default_level")]
    pub level: f64,
    /// Flatness tolerance as a share of the outcome's standard deviation.
    #[serde(default = "default_flat")]
    pub flat_share: f64,
}

/// Which specs get curves.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Members {
    /// The best spec and every member of the report's chosen good set.
    Good,
    /// The best spec only.
    Best,
}

/// `[curves]` after its checks: every value in range.
#[derive(Debug, Clone, PartialEq)]
pub struct CurvesChecked {
    pub draw: bool,
    pub members: Members,
    pub top_k: usize,
    pub grid: usize,
    pub resamples: usize,
    pub level: f64,
    pub flat_share: f64,
}

fn default_draw() -> bool {
    true
}
fn default_members() -> String {
    "good".into()
}
fn default_top_k() -> usize {
    5
}
fn default_grid() -> usize {
    20
}
fn default_resamples() -> usize {
    200
}
fn default_level() -> f64 {
    0.9
}
fn default_flat() -> f64 {
    0.05
}

impl Default for CurvesSection {
    fn default() -> Self {
        CurvesSection {
            draw: default_draw(),
            members: default_members(),
            top_k: default_top_k(),
            grid: default_grid(),
            resamples: default_resamples(),
            level: default_level(),
            flat_share: default_flat(),
        }
    }
}

impl CurvesSection {
    /// Check every value; the message names the key at fault.
    pub fn checked(&self) -> Result<CurvesChecked, String> {
        let members = match self.members.as_str() {
            "good" => Members::Good,
            "best" => Members::Best,
            m => {
                return Err(format!(
                    "curves.members = \"{m}\": one of {}",
                    MEMBERS.join(", ")
                ))
            }
        };
        if self.top_k == 0 {
            return Err("curves.top_k must be at least 1".into());
        }
        if !(4..=1000).contains(&self.grid) {
            return Err(format!(
                "curves.grid = {}: must be between 4 (the hinge needs four points) and 1000",
                self.grid
            ));
        }
        if !(10..=100_000).contains(&self.resamples) {
            return Err(format!(
                "curves.resamples = {}: must be between 10 and 100000",
                self.resamples
            ));
        }
        if !(self.level > 0.0 && self.level < 1.0) {
            return Err(format!(
                "curves.level = {}: must be between 0 and 1 (e.g. 0.9)",
                self.level
            ));
        }
        if !(self.flat_share.is_finite() && self.flat_share >= 0.0) {
            return Err(format!(
                "curves.flat_share = {}: must be a finite share >= 0",
                self.flat_share
            ));
        }
        Ok(CurvesChecked {
            draw: self.draw,
            members,
            top_k: self.top_k,
            grid: self.grid,
            resamples: self.resamples,
            level: self.level,
            flat_share: self.flat_share,
        })
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn defaults_check_and_bad_values_name_the_key() {
        let c = CurvesSection::default().checked().unwrap();
        assert!(c.draw);
        assert_eq!((c.members, c.top_k, c.grid), (Members::Good, 5, 20));
        let bad = |f: fn(&mut CurvesSection), key: &str| {
            let mut s = CurvesSection::default();
            f(&mut s);
            let e = s.checked().unwrap_err();
            assert!(e.contains(key), "{e}");
        };
        bad(|s| s.members = "all".into(), "curves.members");
        bad(|s| s.top_k = 0, "curves.top_k");
        bad(|s| s.grid = 3, "curves.grid");
        bad(|s| s.resamples = 5, "curves.resamples");
        bad(|s| s.level = 1.0, "curves.level");
        bad(|s| s.flat_share = f64::NAN, "curves.flat_share");
    }
}
