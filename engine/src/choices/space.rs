//! The choice space: every dimension's options (expanded by their parameter grids), their
//! product, minus the exclusions. Each resulting [`Spec`] has a stable id: the first 16 hex
//! digits of the sha256 of its canonical form, which lists the dimensions in registry
//! order and each option's parameters in name order, so reordering options or grids in a
//! config never changes an id.

use crate::config::Config;
use crate::error::{suggest, Error, Result};
use crate::panel::Panel;
use sha2::{Digest, Sha256};
use std::collections::{BTreeMap, BTreeSet};
use std::sync::Arc;

mod exclude;
mod grid;
mod pools;
use exclude::*;
use grid::*;
use pools::*;

pub use crate::decl::{
    Choice, Dim, OptionDecl, ParamDecl, ParamKind, DIMENSIONS, QUIET_AT_DEFAULT,
};

/// Declared options of a dimension (pools are built from the config and codebook).
pub fn options_of(dim: Dim) -> Vec<OptionDecl> {
    match dim {
        Dim::Transform => crate::decl::decls(crate::transform::OPTIONS),
        Dim::Fill => crate::decl::decls(crate::stages::fill::OPTIONS),
        Dim::Scale => crate::decl::decls(crate::stages::scale::OPTIONS),
        Dim::Compress => crate::decl::decls(crate::stages::compress::OPTIONS),
        Dim::Model => crate::models::registry().iter().map(|f| f.decl).collect(),
        Dim::Weighting => crate::decl::decls(crate::weights::OPTIONS),
        Dim::Pool => crate::decl::decls(crate::stages::pool::OPTIONS),
    }
}

/// A fully specified analysis path.
#[derive(Debug, Clone)]
pub struct Spec {
    pub id: String,
    /// One choice per entry of [`DIMENSIONS`], in that order.
    pub choices: Vec<Choice>,
}

impl Spec {
    pub fn from_choices(choices: Vec<Choice>) -> Spec {
        let canonical: Vec<String> = choices
            .iter()
            .map(|c| format!("{}={}", c.dim, c.canonical()))
            .collect();
        let digest = Sha256::digest(canonical.join(";").as_bytes());
        Spec {
            id: hex::encode(digest)[..16].to_string(),
            choices,
        }
    }
    pub fn choice(&self, dim: Dim) -> &Choice {
        &self.choices[dim.index()]
    }
    /// `fill=mean; pool=all; ...`
    pub fn label(&self) -> String {
        self.choices
            .iter()
            .map(|c| format!("{}={}", c.dim, c.label()))
            .collect::<Vec<_>>()
            .join("; ")
    }
    /// Random-stream key of this spec: its id read as a number.
    pub fn stream(&self) -> u64 {
        u64::from_str_radix(&self.id, 16).unwrap_or(0)
    }
}

/// The expanded choice space.
#[derive(Debug, Clone)]
pub struct ChoiceSpace {
    /// Options per dimension, in [`DIMENSIONS`] order.
    pub options: Vec<Vec<Choice>>,
    pub specs: Vec<Spec>,
    /// Number of combinations removed by exclusions.
    pub excluded: usize,
    /// Exclusion rules as text, for plan and manifest.
    pub exclusion_rules: Vec<String>,
    pub warnings: Vec<String>,
    /// When the specs are a seeded random sample: the size of the space sampled from.
    pub sampled_from: Option<usize>,
}

fn space_err(cfg: &Config, msg: String) -> Error {
    Error::Config {
        file: cfg.source.clone(),
        msg,
    }
}

/// The options of every dimension (in [`DIMENSIONS`] order), expanded by their grids and
/// checked against the data (transform domains, `invvar` needs standard errors).
fn dimension_options(cfg: &Config, panel: &Panel) -> Result<Vec<Vec<Choice>>> {
    let mut options: Vec<Vec<Choice>> = Vec::new();
    for dim in Dim::ALL {
        let listed: Vec<String> = match cfg.choices.get(dim.name()) {
            Some(v) => v.clone(),
            None => vec![dim.default_option().to_string()],
        };
        if listed.is_empty() {
            return Err(space_err(
                cfg,
                format!("choices.{dim} is empty: list at least one option"),
            ));
        }
        let mut seen = BTreeSet::new();
        for o in &listed {
            if !seen.insert(o) {
                return Err(space_err(cfg, format!("choices.{dim} lists `{o}` twice")));
            }
        }
        let expanded = if dim == Dim::Pool {
            pool_options(cfg, panel, &listed)?
        } else {
            let decls = options_of(dim);
            let mut out = Vec::new();
            for o in &listed {
                let decl = decls.iter().find(|d| d.name == o).ok_or_else(|| {
                    space_err(
                        cfg,
                        format!(
                            "choices.{dim}: unknown option `{o}`{}; options: {}",
                            suggest(o, decls.iter().map(|d| d.name)),
                            decls.iter().map(|d| d.name).collect::<Vec<_>>().join(", ")
                        ),
                    )
                })?;
                out.extend(expand(cfg, dim, decl)?);
            }
            out
        };
        if dim == Dim::Transform {
            for c in &expanded {
                crate::transform::check_domain(
                    &c.option,
                    panel.y.as_slice().unwrap_or(&[]),
                    panel.outcome_scale,
                )
                .map_err(|m| space_err(cfg, format!("choices.transform: {m}")))?;
            }
        }
        if dim == Dim::Weighting
            && panel.se.is_none()
            && expanded.iter().any(|c| c.option == "invvar")
        {
            return Err(space_err(cfg, "choices.weighting `invvar` needs data.standard_error (a column of standard errors)".into()));
        }
        options.push(expanded);
    }
    Ok(options)
}

/// NMF without scaling needs non-negative indicators in its pool; a spec id is unique.
fn check_specs(cfg: &Config, panel: &Panel, specs: &[Spec]) -> Result<()> {
    let mut checked: BTreeSet<String> = BTreeSet::new();
    for s in specs {
        if s.choice(crate::decl::Dim::Compress).option == "nmf"
            && s.choice(crate::decl::Dim::Scale).option == "none"
            && checked.insert(s.choice(crate::decl::Dim::Pool).canonical())
        {
            let pool = s.choice(crate::decl::Dim::Pool);
            for &j in pool.members.as_deref().map(|m| m.as_slice()).unwrap_or(&[]) {
                if let Some(i) = panel.x.column(j).iter().position(|v| *v < 0.0) {
                    return Err(space_err(cfg, format!(
                        "compress `nmf` with scale `none` needs non-negative indicators, but `{}` is {} in row {} (pool `{}`): use scale `minmax` or exclude nmf with scale none",
                        panel.indicators[j], panel.x[[i, j]], i + 1, pool.option
                    )));
                }
            }
        }
    }
    let mut ids = BTreeSet::new();
    for s in specs {
        if !ids.insert(&s.id) {
            return Err(Error::Space(format!(
                "two specs share the id {} ({})",
                s.id,
                s.label()
            )));
        }
    }
    Ok(())
}

/// The seeded sample of `[sample]` (its own random stream); the space's size before it.
fn sample(
    cfg: &Config,
    specs: &mut Vec<Spec>,
    warnings: &mut Vec<String>,
) -> Result<Option<usize>> {
    let mut sampled_from = None;
    if let Some(sample) = &cfg.sample {
        if sample.specs == 0 {
            return Err(space_err(cfg, "sample.specs must be at least 1".into()));
        }
        if sample.specs < specs.len() {
            use rand::SeedableRng;
            let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(crate::streams::mix(
                cfg.seed,
                crate::streams::SPEC_SAMPLE,
            ));
            let mut keep = rand::seq::index::sample(&mut rng, specs.len(), sample.specs).into_vec();
            keep.sort_unstable();
            sampled_from = Some(specs.len());
            *specs = keep.into_iter().map(|i| specs[i].clone()).collect();
        } else {
            warnings.push(format!(
                "sample.specs = {} is not below the {} specs of the space: all are run",
                sample.specs,
                specs.len()
            ));
        }
    }
    Ok(sampled_from)
}

impl ChoiceSpace {
    /// Expand the config's choice space against a panel (pools need its indicators).
    pub fn build(cfg: &Config, panel: &Panel) -> Result<ChoiceSpace> {
        let mut warnings = Vec::new();
        check_grids(cfg)?;
        let options = dimension_options(cfg, panel)?;
        unused_grids(cfg, &options, &mut warnings);
        let ex = Exclusions::new(cfg, &options)?;
        let (mut specs, excluded) = product(&options, &ex)?;
        check_specs(cfg, panel, &specs)?;
        let sampled_from = sample(cfg, &mut specs, &mut warnings)?;
        Ok(ChoiceSpace {
            options,
            specs,
            excluded,
            exclusion_rules: ex.rules,
            warnings,
            sampled_from,
        })
    }

    /// Spec index by spec id.
    pub fn index_by_id(&self) -> std::collections::HashMap<&str, usize> {
        self.specs
            .iter()
            .enumerate()
            .map(|(i, s)| (s.id.as_str(), i))
            .collect()
    }

    /// The `specs` table's parameter columns: every declared parameter of every registered
    /// option (dimensions in id order, options and parameters in declaration order), used
    /// or not. The table's columns so depend only on the forkmap version, never on the
    /// config: runs of different configs, and the parts an extension adds, share one
    /// schema, and a reader that takes the first part's schema misses nothing. A column of
    /// an option a spec does not take is null.
    pub fn param_columns(&self) -> Vec<(String, &'static str)> {
        let mut out: Vec<(String, &'static str)> = Vec::new();
        for dim in Dim::ALL {
            for o in options_of(dim) {
                for p in o.params {
                    let key = (o.name.to_string(), p.name);
                    if !out.contains(&key) {
                        out.push(key);
                    }
                }
            }
        }
        out
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// `[grid.NAME]` tables are keyed by option name alone, so an option that takes
    /// parameters must not share its name with an option of another dimension.
    #[test]
    fn parameterised_option_names_are_unique_across_dimensions() {
        let mut seen: BTreeMap<&str, Dim> = BTreeMap::new();
        for dim in Dim::ALL {
            for o in options_of(dim) {
                if o.params.is_empty() {
                    continue;
                }
                if let Some(other) = seen.insert(o.name, dim) {
                    panic!("option `{}` of {dim} clashes with {other}", o.name);
                }
            }
        }
        for dim in Dim::ALL {
            for o in options_of(dim) {
                if let Some(other) = seen.get(o.name) {
                    assert!(*other == dim || o.params.is_empty(), "{}", o.name);
                }
            }
        }
        assert!(seen.len() >= 10);
    }

    /// Every dimension name parses back to its dimension; `DIMENSIONS` lists them in
    /// `Dim::ALL` order; an unknown name is `None`, never a fallback dimension.
    #[test]
    fn dimension_names_round_trip() {
        for (i, d) in Dim::ALL.into_iter().enumerate() {
            assert_eq!(Dim::parse(d.name()), Some(d));
            assert_eq!(d.index(), i);
            assert_eq!(DIMENSIONS[i], d.name());
        }
        assert_eq!(Dim::parse("weightings"), None);
        assert_eq!(Dim::parse(""), None);
    }

    #[test]
    fn labels_sort_parameters_by_name() {
        let c = Choice {
            dim: crate::decl::Dim::Model,
            option: "tree".into(),
            params: vec![("min_leaf", 5.0), ("depth", 3.0)],
            members: None,
            digest: None,
        };
        assert_eq!(c.label(), "tree(depth=3,min_leaf=5)");
    }

    /// `smear` stays out of the label at its default (ids of existing specs unchanged)
    /// and is in it otherwise (ids unique); the quiet defaults match the declarations.
    #[test]
    fn quiet_parameters_leave_the_label_only_at_their_default() {
        let logit = |smear: f64| Choice {
            dim: crate::decl::Dim::Transform,
            option: "logit".into(),
            params: vec![("clamp", 0.001), ("smear", smear)],
            members: None,
            digest: None,
        };
        assert_eq!(logit(0.0).label(), "logit(clamp=0.001)");
        assert_eq!(logit(1.0).label(), "logit(clamp=0.001,smear=1)");
        let log1p = Choice {
            dim: crate::decl::Dim::Transform,
            option: "log1p".into(),
            params: vec![("smear", 0.0)],
            members: None,
            digest: None,
        };
        assert_eq!(log1p.label(), "log1p");
        for (o, p, d) in QUIET_AT_DEFAULT {
            let decl = Dim::ALL
                .into_iter()
                .flat_map(options_of)
                .find(|x| x.name == *o)
                .unwrap();
            let param = decl.params.iter().find(|x| x.name == *p).unwrap();
            assert_eq!(param.default, *d, "{o}.{p}");
        }
    }
}
