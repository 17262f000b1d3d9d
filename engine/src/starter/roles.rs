//! Which columns are the wave, the unit and the outcome: the flags' choices or the
//! guesses (each said in `guesses`), the checks that the three fit together, and what the
//! outcome's values say (its kind and spread).

use super::*;

/// The columns that carry the panel's keys and its outcome (indices into the columns).
pub(super) struct Roles {
    pub(super) unit: usize,
    pub(super) wave: Option<usize>,
    pub(super) outcome: usize,
}

/// Wave, then the outcome named by the flag (so that it is not taken for a unit), then the
/// unit, then the checks of the keys and of the outcome.
pub(super) fn choose_roles(
    cols: &[Col],
    n: usize,
    data: &Path,
    opts: &StarterOptions,
    guesses: &mut Vec<String>,
) -> Result<Roles> {
    let wave = choose_wave(cols, n, data, opts, guesses)?;
    let given_outcome = match &opts.outcome {
        Some(o) => Some(position(cols, find(cols, o, "outcome", data)?)),
        None => None,
    };
    let unit = choose_unit(cols, n, data, opts, wave, given_outcome, guesses)?;
    check_keys(cols, n, data, unit, wave)?;
    let outcome = check_outcome(cols, n, data, unit, wave, given_outcome)?;
    Ok(Roles {
        unit,
        wave,
        outcome,
    })
}

fn position(cols: &[Col], c: &Col) -> usize {
    cols.iter().position(|x| x.name == c.name).unwrap_or(0)
}

fn choose_wave(
    cols: &[Col],
    n: usize,
    data: &Path,
    opts: &StarterOptions,
    guesses: &mut Vec<String>,
) -> Result<Option<usize>> {
    if opts.no_wave {
        guesses.push("wave: none (--no-wave)".to_string());
        return Ok(None);
    }
    if let Some(w) = &opts.wave {
        let c = find(cols, w, "wave", data)?;
        guesses.push(format!("wave: `{w}` (given)"));
        return Ok(cols.iter().position(|x| x.name == c.name));
    }
    let g = guess_wave(cols, n);
    match g {
        Some(j) => guesses.push(format!(
            "wave: `{}` (guessed: named like a wave, present in every row, {} values each on two rows or more; --wave or --no-wave to change)",
            cols[j].name,
            cols[j].distinct()
        )),
        None => guesses.push(
            "wave: none (no column is named like wave/year/round/period/survey with repeated values; --wave COL to name one)"
                .to_string(),
        ),
    }
    Ok(g)
}

fn choose_unit(
    cols: &[Col],
    n: usize,
    data: &Path,
    opts: &StarterOptions,
    wave: Option<usize>,
    outcome: Option<usize>,
    guesses: &mut Vec<String>,
) -> Result<usize> {
    if let Some(u) = &opts.unit {
        let c = find(cols, u, "unit", data)?;
        guesses.push(format!("unit: `{u}` (given)"));
        return Ok(position(cols, c));
    }
    let skip: Vec<usize> = outcome.into_iter().collect();
    let Some(j) = guess_unit(cols, wave, &skip, n) else {
        return Err(data_err(
            data,
            match wave {
                Some(w) => format!(
                    "no column identifies the rows together with the wave `{}`: name the unit with --unit COL (or the wave with --wave, or --no-wave)",
                    cols[w].name
                ),
                None => "no column identifies the rows on its own: name the unit with --unit COL (and the wave with --wave COL if units repeat over waves)".to_string(),
            },
        ));
    };
    let c = &cols[j];
    let mut why = Vec::new();
    if named_like(&c.name, UNIT_HINTS) {
        why.push("named like a unit");
    }
    if !c.is_numeric() {
        why.push("text");
    }
    why.push(if wave.is_some() {
        "identifies every row together with the wave"
    } else {
        "identifies every row"
    });
    guesses.push(format!(
        "unit: `{}` (guessed: {}, {} distinct values; --unit COL to change)",
        c.name,
        why.join(", "),
        c.distinct()
    ));
    Ok(j)
}

/// The unit is not the wave, and (unit, wave) identifies every row once.
fn check_keys(cols: &[Col], n: usize, data: &Path, unit: usize, wave: Option<usize>) -> Result<()> {
    if Some(unit) == wave {
        return Err(data_err(
            data,
            format!(
                "the unit and the wave are the same column `{}`",
                cols[unit].name
            ),
        ));
    }
    if !identifies(&cols[unit], wave.map(|w| &cols[w]), n) {
        return Err(data_err(
            data,
            format!(
                "unit `{}`{} does not identify every row once (a gap or a repeated key): check the columns",
                cols[unit].name,
                wave.map(|w| format!(" with wave `{}`", cols[w].name)).unwrap_or_default()
            ),
        ));
    }
    Ok(())
}

/// The outcome, now that unit and wave are known: without `--outcome`, an error listing
/// the candidates; otherwise a numeric column apart from the keys, finite in every row.
fn check_outcome(
    cols: &[Col],
    n: usize,
    data: &Path,
    unit: usize,
    wave: Option<usize>,
    given: Option<usize>,
) -> Result<usize> {
    let taken: Vec<usize> = [Some(unit), wave].into_iter().flatten().collect();
    let Some(outcome) = given else {
        let cands = outcome_candidates(cols, &taken, n);
        let list = if cands.is_empty() {
            "no numeric column is present in every row".to_string()
        } else {
            format!(
                "candidates (numeric, present in every row): {}",
                cands.join(", ")
            )
        };
        return Err(data_err(
            data,
            format!("name the outcome with --outcome COL; {list}"),
        ));
    };
    if taken.contains(&outcome) {
        return Err(data_err(
            data,
            format!(
                "the outcome `{}` is also the unit or wave column",
                cols[outcome].name
            ),
        ));
    }
    let oc = &cols[outcome];
    if !oc.is_numeric() {
        let (i, s) = oc.stray.clone().unwrap_or((0, String::new()));
        return Err(data_err(
            data,
            format!(
                "outcome `{}` is not numeric (row {}: `{s}`)",
                oc.name,
                i + 1
            ),
        ));
    }
    if let Some(i) = oc.num.iter().position(|v| v.is_none_or(|x| !x.is_finite())) {
        return Err(data_err(
            data,
            format!(
                "outcome `{}` is missing or not finite in row {}: remove rows without an outcome first",
                oc.name,
                i + 1
            ),
        ));
    }
    Ok(outcome)
}

/// What the outcome's values say: its kind (`proportion`, `percent` or `any`, said in
/// `guesses` unless `any`) and its standard deviation (over rows, divisor n).
pub(super) struct OutcomeFacts {
    pub(super) kind: &'static str,
    pub(super) sd: f64,
}

pub(super) fn outcome_facts(oc: &Col, guesses: &mut Vec<String>) -> OutcomeFacts {
    let y: Vec<f64> = oc.num.iter().flatten().copied().collect();
    let (ymin, ymax) = y
        .iter()
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), &v| {
            (a.min(v), b.max(v))
        });
    let kind = if ymin >= 0.0 && ymax <= 1.0 {
        guesses.push(format!(
            "outcome kind: proportion (every value of `{}` lies in [0, 1])",
            oc.name
        ));
        "proportion"
    } else if ymin >= 0.0 && ymax <= 100.0 && named_like(&oc.name, PERCENT_HINTS) {
        guesses.push(format!(
            "outcome kind: percent (every value of `{}` lies in [0, 100] and its name says so)",
            oc.name
        ));
        "percent"
    } else {
        "any"
    };
    let mean = y.iter().sum::<f64>() / y.len() as f64;
    let sd = (y.iter().map(|v| (v - mean).powi(2)).sum::<f64>() / y.len() as f64).sqrt();
    OutcomeFacts { kind, sd }
}
