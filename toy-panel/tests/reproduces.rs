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
