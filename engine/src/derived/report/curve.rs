//! The specification curve: every ok spec ranked by its error (best first), with a
//! percentile interval from the unit bootstrap of its stored out-of-fold errors, the choice
//! it took in every varying dimension and its good-set memberships.

use super::errors::Errors;
use super::model::CurvePoint;
use super::stats::percentile_interval;

/// `choices[s][d]`: spec s's choice index in varying dimension d; `good[i][s]`: membership
/// under definition i.
pub fn curve(
    spec_ids: &[String],
    e: &Errors,
    level: f64,
    choices: &[Vec<usize>],
    good: &[Vec<bool>; 3],
) -> Vec<CurvePoint> {
    let mut order: Vec<usize> = (0..spec_ids.len()).collect();
    order.sort_by(|&a, &b| e.point[a].total_cmp(&e.point[b]).then(a.cmp(&b)));
    order
        .iter()
        .enumerate()
        .map(|(pos, &s)| {
            let (lower, upper) = percentile_interval(e.replicates(s), level);
            CurvePoint {
                spec_id: spec_ids[s].clone(),
                position: pos + 1,
                error: e.point[s],
                lower,
                upper,
                choices: choices[s].clone(),
                good: [good[0][s], good[1][s], good[2][s]],
            }
        })
        .collect()
}
