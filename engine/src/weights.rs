//! Row weighting, derived from training rows only and normalised to mean 1 over them (so
//! a ridge penalty means the same under every weighting).

use crate::space::OptionDecl;
use ndarray::Array1;
use std::collections::HashMap;

pub const OPTIONS: &[OptionDecl] = &[
    OptionDecl {
        name: "rows",
        params: &[],
        help: "every row weighs the same",
        weighted: true,
    },
    OptionDecl {
        name: "units",
        params: &[],
        help: "every unit weighs the same: its rows share one unit of weight",
        weighted: true,
    },
];

/// Training-row context a weighting may use.
pub struct WeightInput<'a> {
    /// Unit index of each training row.
    pub units: &'a [usize],
    /// Training outcome (for outcome-based weightings).
    pub y: &'a [f64],
}

/// Weights of the training rows under option `name`.
pub fn weights(name: &str, input: &WeightInput) -> Result<Array1<f64>, String> {
    let n = input.units.len();
    let raw: Array1<f64> = match name {
        "rows" => Array1::ones(n),
        "units" => {
            let mut count: HashMap<usize, usize> = HashMap::new();
            for u in input.units {
                *count.entry(*u).or_default() += 1;
            }
            input.units.iter().map(|u| 1.0 / count[u] as f64).collect()
        }
        other => return Err(format!("unknown weighting `{other}`")),
    };
    let mean = raw.sum() / n.max(1) as f64;
    Ok(raw / mean)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn unit_weights_share_one_per_unit() {
        // Unit 0 has two rows, unit 1 one: raw weights 1/2, 1/2, 1, mean 2/3.
        let w = weights(
            "units",
            &WeightInput {
                units: &[0, 0, 1],
                y: &[0.0; 3],
            },
        )
        .unwrap();
        assert!((w[0] - 0.75).abs() < 1e-12 && (w[2] - 1.5).abs() < 1e-12);
        assert!((w.sum() - 3.0).abs() < 1e-12);
    }
}
