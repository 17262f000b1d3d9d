//! Exclusions: the config's `[[exclude]]` rules (checked against the chosen options), the
//! automatic ones the options declare, and the product of the options minus them.

use super::*;

/// The exclusions of a space: the config's rules (validated against the chosen options)
/// and the automatic ones the chosen options declare, with their plain-text rules.
pub(super) struct Exclusions<'a> {
    pub(super) rules: Vec<String>,
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
    pub(super) fn new(cfg: &'a Config, options: &[Vec<Choice>]) -> Result<Exclusions<'a>> {
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
    pub(super) fn excludes(&self, choices: &[Choice]) -> bool {
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
pub(super) fn product(options: &[Vec<Choice>], ex: &Exclusions) -> Result<(Vec<Spec>, usize)> {
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
