//! Grids: an option expanded by its `[grid.NAME]` (parameter values parsed and checked
//! against the declaration), the checks of every grid, and warnings for unused ones.

use super::*;

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
pub(super) fn expand(cfg: &Config, dim: Dim, decl: &OptionDecl) -> Result<Vec<Choice>> {
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

/// Every `[grid.NAME]` must name a known option and known parameters.
pub(super) fn check_grids(cfg: &Config) -> Result<()> {
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

/// A warning for each grid whose option is not chosen.
pub(super) fn unused_grids(cfg: &Config, options: &[Vec<Choice>], warnings: &mut Vec<String>) {
    for opt in cfg.grid.keys() {
        let used = options.iter().flatten().any(|c| &c.option == opt);
        if !used {
            warnings.push(format!(
                "grid.{opt} is set but `{opt}` is not among the chosen options"
            ));
        }
    }
}
