//! Seeded, deterministic generator of forkmap's demo panel.
//!
//! Everything here is **invented**: the districts, their names, the indicators and the
//! outcome are made up to exercise forkmap, and describe no real place. The scenario: 64
//! fictional districts surveyed in up to two waves; the outcome is the percent of
//! households in energy hardship; about 90 indicators in 6 groups are built from a few
//! latent factors, so indicators within a group are collinear. Planted structure (written
//! to `truth.json`): a few true driver indicators, a threshold on one indicator, an
//! interaction, a subgroup of districts whose threshold differs, a handful of very
//! high-outcome districts, and missing cells that are more common in poorer districts.
//! On request ([`generate_with_noise`]) it adds indicators of pure noise, listed in
//! `truth.json`, so that "no pure-noise indicator is claimed" can be checked; the committed
//! demo has none.
//!
//! The random stream is a hand-written xoshiro256** seeded by SplitMix64, so the output
//! depends on nothing but this file and the seed.

use std::fmt::Write as _;

/// The seed of the committed demo files.
pub const SEED: u64 = 20_261_201;
/// Districts in the committed demo panel.
pub const N_DISTRICTS: usize = 64;
const WAVES: [i64; 2] = [2021, 2024];

/// xoshiro256** (Blackman & Vigna, 2018) seeded through SplitMix64.
struct Rng {
    s: [u64; 4],
}

impl Rng {
    fn new(seed: u64) -> Self {
        let mut z = seed;
        let mut s = [0u64; 4];
        for slot in &mut s {
            z = z.wrapping_add(0x9E37_79B9_7F4A_7C15);
            let mut x = z;
            x = (x ^ (x >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
            x = (x ^ (x >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
            *slot = x ^ (x >> 31);
        }
        Rng { s }
    }
    fn next_u64(&mut self) -> u64 {
        let result = self.s[1].wrapping_mul(5).rotate_left(7).wrapping_mul(9);
        let t = self.s[1] << 17;
        self.s[2] ^= self.s[0];
        self.s[3] ^= self.s[1];
        self.s[1] ^= self.s[2];
        self.s[0] ^= self.s[3];
        self.s[2] ^= t;
        self.s[3] = self.s[3].rotate_left(45);
        result
    }
    /// Uniform in [0, 1).
    fn uniform(&mut self) -> f64 {
        (self.next_u64() >> 11) as f64 * (1.0 / (1u64 << 53) as f64)
    }
    /// Standard normal by Box-Muller (one value per call; simple and reproducible).
    fn normal(&mut self) -> f64 {
        let u1 = 1.0 - self.uniform();
        let u2 = self.uniform();
        (-2.0 * u1.ln()).sqrt() * (std::f64::consts::TAU * u2).cos()
    }
    fn below(&mut self, n: usize) -> usize {
        (self.uniform() * n as f64) as usize % n
    }
}

/// Latent factors of a district (standard-normal scale).
#[derive(Clone, Copy)]
struct Factors {
    /// Prosperity: high = richer.
    prosperity: f64,
    /// Old, poorly insulated housing stock.
    housing_age: f64,
    /// Cold climate / heating demand.
    cold: f64,
    /// Energy price level.
    price: f64,
    /// Remoteness from services.
    remote: f64,
    /// Demographic age structure (not a driver).
    ageing: f64,
}

mod groups;
use groups::{direction, GROUPS};

/// The planted threshold: hardship jumps when heating degree days exceed it.
const THRESHOLD_INDICATOR: &str = "cli_heating_degree_days";
const THRESHOLD_MAIN: f64 = 2600.0;
/// The subgroup (upland districts with district heating) whose threshold is higher.
const THRESHOLD_SUBGROUP: f64 = 3100.0;
const THRESHOLD_JUMP: f64 = 9.0;

/// The generated files, as text.
pub struct ToyPanel {
    pub panel_csv: String,
    pub codebook_csv: String,
    pub truth_json: String,
}

fn district_names(rng: &mut Rng, units: usize) -> Vec<String> {
    const HEAD: [&str; 16] = [
        "Ash", "Brack", "Cor", "Dun", "Elm", "Fen", "Gal", "Hol", "Ir", "Kel", "Lor", "Mar", "Nor",
        "Oak", "Pel", "Quen",
    ];
    const TAIL: [&str; 8] = ["by", "mere", "ford", "wick", "ton", "holt", "dale", "stead"];
    let mut names: Vec<String> = Vec::new();
    // Two-part names while they are easy to find (128 exist); past 96, numbered ones.
    while names.len() < units.min(96) {
        let n = format!(
            "{}{}",
            HEAD[rng.below(HEAD.len())],
            TAIL[rng.below(TAIL.len())]
        );
        if !names.contains(&n) {
            names.push(n);
        }
    }
    while names.len() < units {
        let k = names.len();
        names.push(format!(
            "{}{} {k}",
            HEAD[k % HEAD.len()],
            TAIL[(k / HEAD.len()) % TAIL.len()]
        ));
    }
    names
}

fn clamp(x: f64, lo: f64, hi: f64) -> f64 {
    x.max(lo).min(hi)
}

/// Value of one indicator from the factors: each group is driven by one or two factors, each
/// indicator with its own loading, offset, scale and noise, so group-mates are collinear.
fn indicator_value(
    group: usize,
    j: usize,
    f: &Factors,
    noise: f64,
    params: &[f64; 4],
    dir: f64,
) -> f64 {
    let [load, mix, centre, spread] = *params;
    let base = match group {
        0 => -f.prosperity * load + mix * f.remote,
        1 => f.housing_age * load + mix * (-f.prosperity),
        2 => f.cold * load + mix * f.remote,
        3 => f.price * load + mix * f.remote,
        4 => f.remote * load + mix * (-f.prosperity),
        _ => f.ageing * load + mix * f.remote,
    };
    let _ = j;
    let z = dir * base + noise;
    centre + spread * z
}

/// Generate the demo panel from `seed` (64 districts: the committed files).
pub fn generate(seed: u64) -> ToyPanel {
    generate_with(seed, N_DISTRICTS)
}

/// Generate a panel of `units` districts (at least 8) with the same structure: the same
/// indicators, drivers, threshold and subgroup rule; one high-outcome district in 16 (at
/// least 2). With 64 it is [`generate`].
pub fn generate_with(seed: u64, units: usize) -> ToyPanel {
    generate_with_noise(seed, units, 0)
}

/// Most pure-noise indicators [`generate_with_noise`] adds.
pub const MAX_NOISE: usize = 500;
/// The codebook group of the pure-noise indicators.
pub const NOISE_GROUP: &str = "noise";
/// Probability that a pure-noise cell is blank: the mean of the other indicators' rate
/// (0.04 + 0.08 x the mean of 1/(1+exp(2 x prosperity)), which is 1/2 for a symmetric
/// prosperity), but constant, so the gaps are independent of everything.
const NOISE_GAP: f64 = 0.08;

/// Name of pure-noise indicator `k` (0-based) of `n`.
fn noise_name(k: usize, n: usize) -> String {
    let width = n.to_string().len().max(2);
    format!("noi_{:0width$}", k + 1)
}

/// The columns of `n` pure-noise indicators over `rows` rows: `cols[k][r]` is row r's cell
/// (None = blank). Indicator k has its own random stream (seeded from `seed` and k, never
/// from the panel's stream), so the rest of the panel is the same whatever `n` is, and
/// indicator k is the same whatever `n` is. Each value is an iid normal draw (a centre and
/// spread drawn once per indicator, scaled as the other indicators are), and each cell is
/// blank with probability [`NOISE_GAP`] by a draw of the same stream: independent of the
/// districts, their factors, the outcome and the other gaps.
fn noise_columns(seed: u64, n: usize, rows: usize) -> Vec<Vec<Option<f64>>> {
    (0..n)
        .map(|k| {
            let salt = 0x6E6F_6973_6500_0000_u64 ^ (k as u64).wrapping_mul(0xD134_2543_DE82_EF95);
            let mut rng = Rng::new(seed.rotate_left(17) ^ salt);
            // Centre at least 3.75 spreads above 0, so the clamp at 0 the other
            // indicators get (a count cannot be negative) practically never bites.
            let centre = 30.0 + 70.0 * rng.uniform();
            let spread = 2.0 + 6.0 * rng.uniform();
            (0..rows)
                .map(|_| {
                    let v = centre + spread * rng.normal();
                    let blank = rng.uniform() < NOISE_GAP;
                    (!blank).then_some(v.max(0.0))
                })
                .collect()
        })
        .collect()
}

/// [`generate_with`] plus `noise` pure-noise indicators (at most [`MAX_NOISE`]; more are
/// cut to it): columns `noi_01`.. after the 90 others, in their own codebook group
/// [`NOISE_GROUP`], listed in truth.json as `noise_indicators`. With `noise` = 0 it is
/// [`generate_with`], byte for byte; any `noise` leaves every other cell as it is.
pub fn generate_with_noise(seed: u64, units: usize, noise: usize) -> ToyPanel {
    let units = units.max(8);
    let noise = noise.min(MAX_NOISE);
    let mut rng = Rng::new(seed);
    let names = district_names(&mut rng, units);

    // Latent factors per district, correlated: poorer districts have older housing and are
    // more remote; cold districts tend to be remote.
    let mut base: Vec<Factors> = Vec::with_capacity(units);
    for _ in 0..units {
        let prosperity = rng.normal();
        let remote = 0.4 * (-prosperity) + 0.9 * rng.normal();
        let housing_age = 0.5 * (-prosperity) + 0.85 * rng.normal();
        let cold = 0.5 * remote + 0.85 * rng.normal();
        let price = 0.3 * remote + 0.95 * rng.normal();
        let ageing = 0.3 * remote + 0.95 * rng.normal();
        base.push(Factors {
            prosperity,
            housing_age,
            cold,
            price,
            remote,
            ageing,
        });
    }

    // Subgroup: upland districts with district heating networks. Their threshold is higher.
    let mut subgroup: Vec<usize> = (0..units).filter(|&i| base[i].cold > 0.3).collect();
    subgroup.retain(|_| rng.uniform() < 0.5);
    // Very high-outcome districts: a separate cause not captured by the indicators.
    let mut extreme: Vec<usize> = Vec::new();
    while extreme.len() < (units / 16).max(2) {
        let i = rng.below(units);
        if !extreme.contains(&i) {
            extreme.push(i);
        }
    }
    extreme.sort_unstable();

    // Which waves each district has: most both, some only one.
    let mut waves_of: Vec<Vec<usize>> = Vec::with_capacity(units);
    for _ in 0..units {
        let u = rng.uniform();
        waves_of.push(if u < 0.08 {
            vec![0]
        } else if u < 0.16 {
            vec![1]
        } else {
            vec![0, 1]
        });
    }

    // Indicator parameters.
    let mut params: Vec<Vec<[f64; 4]>> = Vec::new();
    for g in GROUPS.iter() {
        let mut gp = Vec::new();
        for (j, (key, _, unit)) in g.stems.iter().enumerate() {
            let load = 0.6 + 0.4 * rng.uniform();
            let mix = 0.3 * (rng.uniform() - 0.5);
            let (centre, spread) = match (*key, *unit) {
                ("inc_median_income", _) => (32.0, 6.0),
                ("cli_heating_degree_days", _) => (2500.0, 420.0),
                ("prc_tariff_index", _) => (100.0, 12.0),
                (_, "percent") => (15.0 + 30.0 * rng.uniform(), 3.0 + 4.0 * rng.uniform()),
                _ => (20.0 + 80.0 * rng.uniform(), 4.0 + 10.0 * rng.uniform()),
            };
            let _ = j;
            gp.push([load, mix, centre, spread]);
        }
        params.push(gp);
    }
    // The driver indicators load strongly on their factor.
    params[0][0][0] = 0.95; // inc_median_income
    params[0][1][0] = 0.9; // inc_low_income_share
    params[1][0][0] = 0.95; // hou_pre1950_share
    params[2][0][0] = 0.97; // cli_heating_degree_days
    params[3][0][0] = 0.95; // prc_tariff_index

    let n_ind: usize = GROUPS.iter().map(|g| g.stems.len()).sum();
    let mut header = String::from("district,region,wave");
    header.push_str(",hardship_pct");
    for g in GROUPS.iter() {
        for (key, _, _) in g.stems.iter() {
            header.push(',');
            header.push_str(key);
        }
    }
    let noise_names: Vec<String> = (0..noise).map(|k| noise_name(k, noise)).collect();
    for name in &noise_names {
        header.push(',');
        header.push_str(name);
    }
    header.push('\n');
    let mut csv = header;
    let n_rows: usize = waves_of.iter().map(Vec::len).sum();
    let noise_cols = noise_columns(seed, noise, n_rows);
    let mut row = 0usize;
    let regions = ["North Vale", "East Shore", "South Plain", "West Ridge"];

    for (i, name) in names.iter().enumerate() {
        let region = regions[rng.below(regions.len())];
        for &w in &waves_of[i] {
            // Second wave: factors drift a little.
            let mut f = base[i];
            if w == 1 {
                f.prosperity += 0.15 + 0.25 * rng.normal();
                f.price += 0.6 + 0.2 * rng.normal();
                f.housing_age -= 0.1;
            }
            let mut values = Vec::with_capacity(n_ind);
            for (gi, g) in GROUPS.iter().enumerate() {
                for (j, stem) in g.stems.iter().enumerate() {
                    let noise = 0.35 * rng.normal();
                    values.push(indicator_value(
                        gi,
                        j,
                        &f,
                        noise,
                        &params[gi][j],
                        direction(stem.0),
                    ));
                }
            }
            let ix = |key: &str| -> usize {
                let mut k = 0;
                for g in GROUPS.iter() {
                    for (s, _, _) in g.stems.iter() {
                        if *s == key {
                            return k;
                        }
                        k += 1;
                    }
                }
                unreachable!("driver indicator {key} is in the stem list")
            };
            let income = values[ix("inc_median_income")];
            let low_income = values[ix("inc_low_income_share")];
            let pre1950 = values[ix("hou_pre1950_share")];
            let hdd = values[ix("cli_heating_degree_days")];
            let tariff = values[ix("prc_tariff_index")];

            // True outcome (percent of households in energy hardship).
            let threshold = if subgroup.contains(&i) {
                THRESHOLD_SUBGROUP
            } else {
                THRESHOLD_MAIN
            };
            let mut y = 12.0;
            y += -0.8 * (income - 32.0);
            y += 0.18 * (pre1950 - params[1][0][2]);
            y += if hdd > threshold { THRESHOLD_JUMP } else { 0.0 };
            // Interaction: prices hurt more where low-income households are many.
            y += 0.012 * (tariff - 100.0) * (low_income - params[0][1][2]);
            y += 0.12 * (tariff - 100.0);
            if extreme.contains(&i) {
                y += 8.0;
            }
            y += 1.2 * rng.normal();
            let y = clamp(y, 0.5, 95.0);

            // Missing cells: more often in poorer districts; never the outcome.
            let p_miss = 0.04 + 0.08 / (1.0 + (2.0 * f.prosperity).exp());
            let mut line = format!("{name},{region},{}", WAVES[w]);
            let _ = write!(line, ",{y:.2}");
            for (k, v) in values.iter().enumerate() {
                let driver = k == ix("cli_heating_degree_days") || k == ix("inc_median_income");
                let p = if driver { p_miss * 0.5 } else { p_miss };
                if rng.uniform() < p {
                    line.push(',');
                } else {
                    let v = if *v < 0.0 { 0.0 } else { *v };
                    let _ = write!(line, ",{v:.3}");
                }
            }
            for col in &noise_cols {
                match col[row] {
                    Some(v) => {
                        let _ = write!(line, ",{v:.3}");
                    }
                    None => line.push(','),
                }
            }
            row += 1;
            line.push('\n');
            csv.push_str(&line);
        }
    }

    let mut codebook = String::from("indicator,group,label,unit\n");
    for g in GROUPS.iter() {
        for (key, label, unit) in g.stems.iter() {
            let _ = writeln!(codebook, "{key},{},\"{label}\",\"{unit}\"", g.key);
        }
    }

    for name in &noise_names {
        let _ = writeln!(
            codebook,
            "{name},{NOISE_GROUP},\"Invented pure-noise indicator (independent draws)\",\"index\""
        );
    }

    let mut truth = serde_json::json!({
        "invented": true,
        "description": "Known truth of forkmap's invented demo panel. The outcome hardship_pct is generated from the indicator values below plus noise; every name and number is made up.",
        "seed": seed,
        "units": units,
        "waves": WAVES,
        "outcome": "hardship_pct",
        "driver_indicators": [
            "inc_median_income", "hou_pre1950_share", "cli_heating_degree_days",
            "prc_tariff_index", "inc_low_income_share"
        ],
        "driver_groups": ["income", "housing", "climate", "prices"],
        "non_driver_groups": ["access", "people"],
        "group_labels": GROUPS.iter().map(|g| (g.key, g.label)).collect::<std::collections::BTreeMap<_,_>>(),
        "formula": format!("12 - 0.8*(inc_median_income-32) + 0.18*(hou_pre1950_share-{:.3}) + 9*[cli_heating_degree_days > t] + 0.012*(prc_tariff_index-100)*(inc_low_income_share-{:.3}) + 0.12*(prc_tariff_index-100) + 8*[high-outcome unit] + N(0, 1.2^2), clamped to [0.5, 95]; t = threshold.value, or subgroup.threshold_value for subgroup units; computed from indicator values before cells were blanked", params[1][0][2], params[0][1][2]),
        "threshold": {
            "indicator": THRESHOLD_INDICATOR,
            "value": THRESHOLD_MAIN,
            "jump": THRESHOLD_JUMP
        },
        "interaction": ["prc_tariff_index", "inc_low_income_share"],
        "subgroup": {
            "description": "upland districts with district heating: the same jump at a higher threshold",
            "threshold_value": THRESHOLD_SUBGROUP,
            "units": subgroup.iter().map(|&i| names[i].clone()).collect::<Vec<_>>()
        },
        "high_outcome_units": extreme.iter().map(|&i| names[i].clone()).collect::<Vec<_>>(),
        "missingness": "cells blank with probability 0.04 + 0.08/(1+exp(2*prosperity)): more often in poorer districts; half as often for the two strongest drivers"
    });
    if noise > 0 {
        if let Some(t) = truth.as_object_mut() {
            if let Some(labels) = t.get_mut("group_labels").and_then(|v| v.as_object_mut()) {
                labels.insert(
                    NOISE_GROUP.into(),
                    "Pure noise (independent of everything)".into(),
                );
            }
            t.insert("noise_group".into(), NOISE_GROUP.into());
            t.insert("noise_indicators".into(), noise_names.clone().into());
            t.insert(
                "noise_description".into(),
                format!("pure noise: each value an independent normal draw (own random stream, independent of the districts, their factors, the outcome and the other indicators); each cell blank with probability {NOISE_GAP}, independently of everything").into(),
            );
        }
    }
    let truth_json = serde_json::to_string_pretty(&truth).unwrap_or_default() + "\n";
    ToyPanel {
        panel_csv: csv,
        codebook_csv: codebook,
        truth_json,
    }
}
