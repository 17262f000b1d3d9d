//! Pools: `all`, one per codebook group, and the config's `[pools]` (members by name or
//! `group:NAME`, or a screening rule), each a `Choice` with its member digest.

use super::*;

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

pub(super) fn pool_options(cfg: &Config, panel: &Panel, listed: &[String]) -> Result<Vec<Choice>> {
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
