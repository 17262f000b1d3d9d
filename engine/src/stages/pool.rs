//! Indicator pools: which indicators a spec may use. Members are fixed by the config
//! (all, a codebook group, a named list), so fitting learns nothing from data.

use super::{Fitted, Stage, StageInput};
use crate::error::FitError;
use crate::space::Choice;
use ndarray::{Array2, ArrayView2, Axis};
use std::sync::Arc;

struct Pool {
    members: Arc<Vec<usize>>,
}

struct Select {
    members: Arc<Vec<usize>>,
    names: Vec<String>,
}

pub fn build(c: &Choice) -> Result<Arc<dyn Stage>, String> {
    let members = c
        .members
        .clone()
        .ok_or_else(|| format!("pool `{}` has no members", c.option))?;
    Ok(Arc::new(Pool { members }))
}

impl Stage for Pool {
    fn fit(&self, input: &StageInput) -> Result<Arc<dyn Fitted>, FitError> {
        if let Some(&j) = self.members.iter().find(|&&j| j >= input.x.ncols()) {
            return Err(FitError::Invalid(format!(
                "pool member {j} is not a column"
            )));
        }
        let names = self
            .members
            .iter()
            .map(|&j| input.names[j].clone())
            .collect();
        Ok(Arc::new(Select {
            members: self.members.clone(),
            names,
        }))
    }
}

impl Fitted for Select {
    fn apply(&self, x: ArrayView2<f64>) -> Array2<f64> {
        x.select(Axis(1), &self.members)
    }
    fn names(&self) -> &[String] {
        &self.names
    }
}
