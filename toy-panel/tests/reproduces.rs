//! The committed demo files are exactly what the seeded generator produces.
use forkmap_toy_panel::{generate, SEED};

fn committed(name: &str) -> String {
    let path = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join(name);
    std::fs::read_to_string(&path).unwrap_or_else(|e| panic!("cannot read {}: {e}", path.display()))
}

#[test]
fn generator_reproduces_committed_files() {
    let p = generate(SEED);
    assert_eq!(
        p.panel_csv,
        committed("panel.csv"),
        "panel.csv differs: rerun `cargo run -p forkmap-toy-panel`"
    );
    assert_eq!(p.codebook_csv, committed("codebook.csv"));
    assert_eq!(p.truth_json, committed("truth.json"));
}

#[test]
fn another_seed_gives_another_panel() {
    assert_ne!(generate(SEED).panel_csv, generate(SEED + 1).panel_csv);
}

#[test]
fn panel_shape_is_as_documented() {
    let p = generate(SEED);
    let mut lines = p.panel_csv.lines();
    let header: Vec<&str> = lines.next().unwrap_or_default().split(',').collect();
    assert_eq!(header.len(), 4 + 90);
    let rows: Vec<Vec<&str>> = lines.map(|l| l.split(',').collect()).collect();
    assert!(
        rows.len() > 100 && rows.len() < 128,
        "rows = {}",
        rows.len()
    );
    assert!(rows.iter().all(|r| r.len() == header.len()));
    let cells = rows.len() * 90;
    let blank: usize = rows
        .iter()
        .map(|r| r[4..].iter().filter(|c| c.is_empty()).count())
        .sum();
    let frac = blank as f64 / cells as f64;
    assert!(frac > 0.04 && frac < 0.12, "missing fraction {frac}");
}

#[test]
fn other_sizes_keep_the_structure() {
    use forkmap_toy_panel::{generate_with, N_DISTRICTS};
    assert_eq!(
        generate_with(SEED, N_DISTRICTS).panel_csv,
        generate(SEED).panel_csv
    );
    for units in [30usize, 240] {
        let p = generate_with(SEED, units);
        let truth: serde_json::Value = serde_json::from_str(&p.truth_json).unwrap();
        assert_eq!(truth["units"], units);
        let mut names = std::collections::BTreeSet::new();
        let mut rows = 0;
        for line in p.panel_csv.lines().skip(1) {
            let cells: Vec<&str> = line.split(',').collect();
            assert_eq!(cells.len(), 4 + 90, "{line}");
            names.insert(cells[0].to_string());
            rows += 1;
        }
        assert_eq!(names.len(), units, "every district has at least one row");
        assert!(rows > units && rows <= 2 * units, "rows = {rows}");
        let high = truth["high_outcome_units"].as_array().unwrap().len();
        assert_eq!(high, (units / 16).max(2));
        assert_eq!(p.codebook_csv, generate(SEED).codebook_csv);
    }
}

/// Split a panel.csv into its header and rows of cells.
fn table(csv: &str) -> (Vec<String>, Vec<Vec<String>>) {
    let mut lines = csv.lines();
    let header = lines
        .next()
        .unwrap_or_default()
        .split(',')
        .map(String::from)
        .collect();
    let rows = lines
        .map(|l| l.split(',').map(String::from).collect())
        .collect();
    (header, rows)
}

#[test]
fn noise_indicators_leave_the_rest_of_the_panel_as_it_is() {
    use forkmap_toy_panel::{generate_with, generate_with_noise, N_DISTRICTS};
    // No noise: the committed files, byte for byte.
    let plain = generate(SEED);
    let zero = generate_with_noise(SEED, N_DISTRICTS, 0);
    assert_eq!(zero.panel_csv, plain.panel_csv);
    assert_eq!(zero.codebook_csv, plain.codebook_csv);
    assert_eq!(zero.truth_json, plain.truth_json);
    for units in [30usize, 64, 240] {
        let base = generate_with(SEED, units);
        let (bh, brows) = table(&base.panel_csv);
        let mut three: Option<Vec<Vec<String>>> = None;
        for n in [3usize, 10] {
            let p = generate_with_noise(SEED, units, n);
            let (h, rows) = table(&p.panel_csv);
            // Every other column, bit for bit (the text is the value to 3 decimals or 2 for
            // the outcome; a blank is a gap), then n noise columns.
            assert_eq!(h[..bh.len()], bh[..]);
            assert_eq!(h.len(), bh.len() + n);
            assert_eq!(rows.len(), brows.len());
            for (r, b) in rows.iter().zip(&brows) {
                assert_eq!(r[..b.len()], b[..]);
                assert_eq!(r.len(), b.len() + n);
            }
            // Noise indicator k is the same whatever n is (its own stream).
            let noise_cols: Vec<Vec<String>> =
                rows.iter().map(|r| r[bh.len()..].to_vec()).collect();
            match &three {
                None => three = Some(noise_cols),
                Some(t) => {
                    for (a, b) in t.iter().zip(&noise_cols) {
                        assert_eq!(a[..], b[..3]);
                    }
                }
            }
            // Codebook: the same rows, then n rows in the noise group.
            assert!(p.codebook_csv.starts_with(&base.codebook_csv));
            let extra: Vec<&str> = p.codebook_csv[base.codebook_csv.len()..].lines().collect();
            assert_eq!(extra.len(), n);
            for (k, line) in extra.iter().enumerate() {
                assert!(
                    line.starts_with(&format!("noi_{:02},noise,", k + 1)),
                    "{line}"
                );
            }
            // Truth: the same keys and values but for the noise ones and the group label.
            let t: serde_json::Value = serde_json::from_str(&p.truth_json).unwrap();
            let tb: serde_json::Value = serde_json::from_str(&base.truth_json).unwrap();
            for (key, v) in tb.as_object().unwrap() {
                if key != "group_labels" {
                    assert_eq!(&t[key], v, "{key}");
                }
            }
            let names: Vec<String> = (1..=n).map(|k| format!("noi_{k:02}")).collect();
            assert_eq!(t["noise_indicators"], serde_json::json!(names));
            assert_eq!(t["noise_group"], "noise");
            assert!(t["group_labels"]["noise"].is_string());
            for g in ["driver_groups", "non_driver_groups", "driver_indicators"] {
                assert!(!t[g].to_string().contains("noi"), "{g}");
            }
        }
    }
}

/// Pearson correlation over the pairs where both are present.
fn corr(a: &[Option<f64>], b: &[Option<f64>]) -> f64 {
    let pairs: Vec<(f64, f64)> = a
        .iter()
        .zip(b)
        .filter_map(|(x, y)| Some(((*x)?, (*y)?)))
        .collect();
    let n = pairs.len() as f64;
    let (mx, my) = pairs
        .iter()
        .fold((0.0, 0.0), |(sx, sy), (x, y)| (sx + x / n, sy + y / n));
    let (mut sxy, mut sxx, mut syy) = (0.0, 0.0, 0.0);
    for (x, y) in &pairs {
        sxy += (x - mx) * (y - my);
        sxx += (x - mx) * (x - mx);
        syy += (y - my) * (y - my);
    }
    sxy / (sxx * syy).sqrt()
}

#[test]
fn noise_indicators_are_unrelated_and_gappy_like_the_others() {
    // At 240 districts (about 450 rows) the correlation of two independent columns has a
    // standard error of about 1/sqrt(450) = 0.047; the seed is fixed, so these bounds are a
    // check of the construction (noise built from a factor, the outcome or another column
    // would break them: a driver's |r| with the outcome is well above 0.3), not a flaky draw.
    let p = forkmap_toy_panel::generate_with_noise(SEED, 240, 10);
    let (h, rows) = table(&p.panel_csv);
    let col =
        |j: usize| -> Vec<Option<f64>> { rows.iter().map(|r| r[j].parse::<f64>().ok()).collect() };
    let outcome = col(3);
    let income = col(h.iter().position(|c| c == "inc_median_income").unwrap());
    assert!(
        corr(&income, &outcome).abs() > 0.3,
        "the check can see a real association"
    );
    let first_noise = h.iter().position(|c| c == "noi_01").unwrap();
    let mut blank = 0usize;
    for j in first_noise..h.len() {
        let c = col(j);
        blank += c.iter().filter(|v| v.is_none()).count();
        for other in 3..first_noise {
            let r = corr(&c, &col(other));
            assert!(r.abs() < 0.25, "{} with {}: r = {r:.3}", h[j], h[other]);
        }
        for k in first_noise..j {
            let r = corr(&c, &col(k));
            assert!(r.abs() < 0.25, "{} with {}: r = {r:.3}", h[j], h[k]);
        }
    }
    // Gaps at about the others' rate (0.08 expected; 10 x ~450 cells).
    let frac = blank as f64 / (10 * rows.len()) as f64;
    assert!(frac > 0.06 && frac < 0.10, "noise gap fraction {frac}");
    let other_blank: usize = rows
        .iter()
        .map(|r| r[4..first_noise].iter().filter(|c| c.is_empty()).count())
        .sum();
    let other = other_blank as f64 / (rows.len() * (first_noise - 4)) as f64;
    assert!(
        (frac - other).abs() < 0.02,
        "noise {frac:.3} vs others {other:.3}"
    );
}
