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

fn parse_param(cfg: &Config, key: &str, decl: &ParamDecl, v: &toml::Value) -> Result<f64> {
    let x = match v {
        toml::Value::Integer(i) => *i as f64,
        toml::Value::Float(f) => *f,
        other => {
            return Err(space_err(cfg, format!("{key}: `{other}` is not a number")));
        }
    };
    let ok = match decl.kind {
        ParamKind::Int { min, max } => x.fract() == 0.0 && x >= min as f64 && x <= max as f64,
        ParamKind::Real { min, max, open_min } => {
            x.is_finite() && (if open_min { x > min } else { x >= min }) && x <= max
        }
    };
    if !ok {
        let range = match decl.kind {
            ParamKind::Int { min, max } => format!("a whole number from {min} to {max}"),
            ParamKind::Real { min, max, open_min } => {
                format!(
                    "a number {} {min} and at most {max}",
                    if open_min { "above" } else { "from" }
                )
            }
        };
        return Err(space_err(
            cfg,
            format!("{key} = {x} is out of range: {} must be {range}", decl.name),
        ));
    }
    Ok(x)
}

/// Expand one option by its grid (product of its parameter lists, defaults elsewhere).
fn expand(cfg: &Config, dim: Dim, decl: &OptionDecl) -> Result<Vec<Choice>> {
    let grid = cfg.grid.get(decl.name);
    let mut lists: Vec<(&'static str, Vec<f64>)> = Vec::new();
    for p in decl.params {
        let values = match grid.and_then(|g| g.get(p.name)) {
            None => vec![p.default],
            Some(vs) => {
                if vs.is_empty() {
                    return Err(space_err(
                        cfg,
                        format!("grid.{}.{} is an empty list", decl.name, p.name),
                    ));
                }
                let mut out: Vec<f64> = Vec::new();
                for v in vs {
                    let x = parse_param(cfg, &format!("grid.{}.{}", decl.name, p.name), p, v)?;
                    if out.contains(&x) {
                        return Err(space_err(
                            cfg,
                            format!("grid.{}.{} lists {x} twice", decl.name, p.name),
                        ));
                    }
                    out.push(x);
                }
                out
            }
        };
        lists.push((p.name, values));
    }
    let mut combos: Vec<Vec<(&'static str, f64)>> = vec![Vec::new()];
    for (name, values) in &lists {
        let mut next = Vec::new();
        for c in &combos {
            for v in values {
                let mut c2 = c.clone();
                c2.push((*name, *v));
                next.push(c2);
            }
        }
        combos = next;
    }
    Ok(combos
        .into_iter()
        .map(|params| Choice {
            dim,
            option: decl.name.to_string(),
            params,
            members: None,
            digest: None,
        })
        .collect())
}

fn pool_choice(name: &str, members: Vec<usize>, panel: &Panel) -> Choice {
    let mut m = members;
    m.sort_unstable();
    m.dedup();
    let mut names: Vec<&str> = m.iter().map(|&j| panel.indicators[j].as_str()).collect();
    names.sort_unstable();
    let digest = hex::encode(Sha256::digest(names.join("\n").as_bytes()))[..8].to_string();
    Choice {
        dim: crate::decl::Dim::Pool,
        option: name.to_string(),
        params: Vec::new(),
        members: Some(Arc::new(m)),
        digest: Some(digest),
    }
}

fn pool_options(cfg: &Config, panel: &Panel, listed: &[String]) -> Result<Vec<Choice>> {
    let groups = panel.groups();
    let mut out = Vec::new();
    for name in &cfg.pools.keys().cloned().collect::<Vec<_>>() {
        if name == "all" || name.starts_with("group:") {
            return Err(space_err(
                cfg,
                format!("pools.{name}: `all` and names starting with `group:` are reserved"),
            ));
        }
    }
    for opt in listed {
        if let Some(r) = crate::stages::pool::OPTIONS
            .iter()
            .find(|r| r.decl.name == opt)
        {
            out.extend(expand(cfg, Dim::Pool, &r.decl)?);
        } else if opt == "all" {
            out.push(pool_choice(
                "all",
                (0..panel.indicators.len()).collect(),
                panel,
            ));
        } else if let Some(g) = opt.strip_prefix("group:") {
            if panel.codebook.is_empty() {
                return Err(space_err(
                    cfg,
                    format!("choices.pool `{opt}` needs a codebook (data.codebook)"),
                ));
            }
            let members = groups.get(g).ok_or_else(|| {
                space_err(
                    cfg,
                    format!(
                        "choices.pool `{opt}`: no codebook group `{g}`{}; groups: {}",
                        suggest(g, groups.keys().map(String::as_str)),
                        groups.keys().cloned().collect::<Vec<_>>().join(", ")
                    ),
                )
            })?;
            out.push(pool_choice(opt, members.clone(), panel));
        } else if let Some(list) = cfg.pools.get(opt) {
            if list.is_empty() {
                return Err(space_err(cfg, format!("pools.{opt} is an empty list")));
            }
            let mut members = Vec::new();
            for ind in list {
                let j = panel.indicator_index(ind).ok_or_else(|| {
                    space_err(
                        cfg,
                        format!(
                            "pools.{opt}: unknown indicator `{ind}`{}",
                            suggest(ind, panel.indicators.iter().map(String::as_str))
                        ),
                    )
                })?;
                members.push(j);
            }
            out.push(pool_choice(opt, members, panel));
        } else {
            let mut known: Vec<String> = vec!["all".into()];
            known.extend(groups.keys().map(|g| format!("group:{g}")));
            known.extend(cfg.pools.keys().cloned());
            return Err(space_err(
                cfg,
                format!(
                "choices.pool: unknown pool `{opt}`{}; define it under [pools] or use one of: {}",
                suggest(opt, known.iter().map(String::as_str)),
                known.join(", ")
            ),
            ));
        }
    }
    Ok(out)
}

/// Every `[grid.NAME]` must name a known option and known parameters.
fn check_grids(cfg: &Config) -> Result<()> {
    let mut all_decls: BTreeMap<&str, OptionDecl> = BTreeMap::new();
    for d in Dim::ALL {
        for o in options_of(d) {
            all_decls.insert(o.name, o);
        }
    }
    for (opt, params) in &cfg.grid {
        let decl = all_decls.get(opt.as_str()).ok_or_else(|| {
            space_err(
                cfg,
                format!(
                    "grid.{opt}: no option `{opt}` takes parameters{}",
                    suggest(opt, all_decls.keys().copied())
                ),
            )
        })?;
        for p in params.keys() {
            if !decl.params.iter().any(|d| d.name == p) {
                let names: Vec<&str> = decl.params.iter().map(|d| d.name).collect();
                return Err(space_err(
                    cfg,
                    format!(
                        "unknown key `grid.{opt}.{p}`{}; `{opt}` takes: {}",
                        suggest(p, names.iter().copied()),
                        if names.is_empty() {
                            "no parameters".to_string()
                        } else {
                            names.join(", ")
                        }
                    ),
                ));
            }
        }
    }

    Ok(())
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

/// A warning for each grid whose option is not chosen.
fn unused_grids(cfg: &Config, options: &[Vec<Choice>], warnings: &mut Vec<String>) {
    for opt in cfg.grid.keys() {
        let used = options.iter().flatten().any(|c| &c.option == opt);
        if !used {
            warnings.push(format!(
                "grid.{opt} is set but `{opt}` is not among the chosen options"
            ));
        }
    }
}

/// The exclusions of a space: the config's rules (validated against the chosen options)
/// and the automatic ones the chosen options declare, with their plain-text rules.
struct Exclusions<'a> {
    rules: Vec<String>,
    /// Declared by an option: (its dimension, its name, the other dimension, the options
    /// of that dimension it never runs with).
    declared: Vec<(usize, &'static str, usize, &'static [&'static str])>,
    /// Model families that take no row weights (they run only with `rows`).
    unweighted: Vec<&'static str>,
    model: usize,
    weighting: usize,
    user: &'a [BTreeMap<String, crate::config::OneOrMany>],
}

impl<'a> Exclusions<'a> {
    fn new(cfg: &'a Config, options: &[Vec<Choice>]) -> Result<Exclusions<'a>> {
        let mut rules = Vec::new();
        for (i, rule) in cfg.exclude.iter().enumerate() {
            if rule.is_empty() {
                return Err(space_err(
                    cfg,
                    format!("exclude[{i}] is empty: it would exclude everything"),
                ));
            }
            let mut parts = Vec::new();
            for (dim, names) in rule {
                let di = DIMENSIONS.iter().position(|d| d == dim).unwrap_or(0);
                for n in names.items() {
                    if !options[di].iter().any(|c| c.option == n) {
                        return Err(space_err(
                            cfg,
                            format!(
                                "exclude[{i}].{dim}: `{n}` is not a chosen {dim} option{}",
                                suggest(n, options[di].iter().map(|c| c.option.as_str()))
                            ),
                        ));
                    }
                }
                parts.push(format!("{dim} in [{}]", names.items().join(", ")));
            }
            rules.push(parts.join(" and "));
        }
        // Automatic exclusions declared by the chosen options (e.g. NMF never runs after
        // standardising, which gives negative input).
        let mut declared: Vec<(usize, &'static str, usize, &'static [&'static str])> = Vec::new();
        for (di, dim) in Dim::ALL.into_iter().enumerate() {
            for decl in options_of(dim) {
                if !options[di].iter().any(|c| c.option == decl.name) {
                    continue;
                }
                for e in decl.excludes {
                    let ti = e.dim.index();
                    let mut hit: Vec<&str> = Vec::new();
                    for c in &options[ti] {
                        if e.options.contains(&c.option.as_str())
                            && !hit.contains(&c.option.as_str())
                        {
                            hit.push(&c.option);
                        }
                    }
                    if !hit.is_empty() {
                        rules.push(format!(
                            "{dim} in [{}] and {} in [{}] (automatic: {})",
                            decl.name,
                            e.dim,
                            hit.join(", "),
                            e.why
                        ));
                        declared.push((di, decl.name, ti, e.options));
                    }
                }
            }
        }
        // Automatic: families that take no row weights run only with `rows` weighting.
        let mi = Dim::Model.index();
        let wi = Dim::Weighting.index();
        let unweighted: Vec<&'static str> = options_of(Dim::Model)
            .iter()
            .filter(|d| !d.weighted)
            .map(|d| d.name)
            .collect();
        let used_unweighted: Vec<&str> = unweighted
            .iter()
            .copied()
            .filter(|n| options[mi].iter().any(|c| c.option == *n))
            .collect();
        if !used_unweighted.is_empty() && options[wi].iter().any(|c| c.option != "rows") {
            rules.push(format!(
                "model in [{}] and weighting not rows (automatic: these families take no row weights)",
                used_unweighted.join(", ")
            ));
        }
        Ok(Exclusions {
            rules,
            declared,
            unweighted,
            model: mi,
            weighting: wi,
            user: &cfg.exclude,
        })
    }

    /// True when a combination is excluded.
    fn excludes(&self, choices: &[Choice]) -> bool {
        (self
            .unweighted
            .contains(&choices[self.model].option.as_str())
            && choices[self.weighting].option != "rows")
            || self.declared.iter().any(|(di, name, ti, opts)| {
                choices[*di].option == *name && opts.contains(&choices[*ti].option.as_str())
            })
            || self.user.iter().any(|rule| {
                rule.iter().all(|(dim, names)| {
                    let di = DIMENSIONS.iter().position(|d| d == dim).unwrap_or(0);
                    names.items().contains(&choices[di].option.as_str())
                })
            })
    }
}

/// The product of the options minus the exclusions, in odometer order (the last
/// dimension fastest), and the number excluded.
fn product(options: &[Vec<Choice>], ex: &Exclusions) -> Result<(Vec<Spec>, usize)> {
    let mut specs = Vec::new();
    let mut excluded = 0usize;
    let total: usize = options.iter().map(Vec::len).product();
    let mut idx = vec![0usize; options.len()];
    for _ in 0..total {
        let choices: Vec<Choice> = idx
            .iter()
            .enumerate()
            .map(|(d, &k)| options[d][k].clone())
            .collect();
        if ex.excludes(&choices) {
            excluded += 1;
        } else {
            specs.push(Spec::from_choices(choices));
        }
        for d in (0..idx.len()).rev() {
            idx[d] += 1;
            if idx[d] < options[d].len() {
                break;
            }
            idx[d] = 0;
        }
    }
    if specs.is_empty() {
        return Err(Error::Space(format!(
            "the exclusions remove all {total} combinations: nothing is left to run"
        )));
    }
    Ok((specs, excluded))
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
