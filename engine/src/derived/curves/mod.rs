//! Curves through the whole pipeline: individual conditional expectation (ICE) curves of a
//! spec fitted on all rows, their mean (partial dependence, PD), centred ICE, the band of
//! PD over a set of specs, the curve's shape (flat, line, continuous hinge or jump, chosen
//! by BIC: a breakpoint only when the data say so) with a unit-composition interval for its
//! breakpoint, and subgroups of units from k-means on the centred curves (their number by
//! the gap statistic).
//!
//! Everything here is a pure function of its inputs (and a stated seed): the results do
//! not depend on the thread count. [`ice`] predicts through the fitted chain (pool, fill,
//! scale, compression, model, back-transform) with the raw indicator set to each grid
//! value, so a compressed spec's curve is on the raw indicator. A row whose indicator is
//! missing gets the grid value like every other row: the curve sets the value, so the row
//! is complete for that indicator (its other gaps are filled by the spec's own fill).

pub mod bend;
pub mod cluster;
pub mod compute;
pub mod gap;
pub mod hinge;
pub mod ice;
pub mod pass;
pub mod select;
pub mod table;

pub use crate::config::curves::{CurvesChecked, CurvesSection, Members};
pub use bend::{choose, Kind, Shape};
pub use cluster::{kmeans, silhouette, subgroups, Subgroups};
pub use gap::{choose_k, choose_k_given, gap_points, reference_sets, GapChoice, GapPoint};
pub use hinge::{bootstrap_breakpoint, fit_hinge, Composition, Hinge};
pub use ice::{band, centred, direction, ice, pd, quantile_grid, Band, Direction};
