//! The proposed space (sized to the panel) and the commented config text written from it.

use super::sort::Shape;
use super::*;

/// The proposed choice space and folds.
pub(super) struct Proposal {
    /// PCA component counts (empty: no PCA).
    ks: Vec<usize>,
    compress: Vec<String>,
    fills: Vec<String>,
    weighting: Vec<String>,
    /// Lasso penalties: 1% and 10% of the outcome's sd, two significant digits.
    lasso: Vec<String>,
    fold_note: String,
    fold_lines: String,
}

/// A modest space: PCA at 2, 3 or 5 components (fewer than the indicators, at most about
/// one per ten units), the knn fill when there are gaps, unit weighting when units have
/// different numbers of rows, lasso penalties on the outcome's scale.
pub(super) fn propose(shape: &Shape, p: usize, gappy: bool, sd: f64) -> Proposal {
    let ks: Vec<usize> = [2usize, 3, 5]
        .into_iter()
        .filter(|&k| k < p && (k as f64) <= (shape.units as f64 / 10.0).max(2.0))
        .collect();
    let mut compress = vec!["none".to_string()];
    if !ks.is_empty() {
        compress.push("pca".into());
    }
    let fills: Vec<String> = if gappy {
        vec!["median".into(), "knn".into()]
    } else {
        vec!["median".into()]
    };
    let weighting: Vec<String> = if shape.rmin != shape.rmax {
        vec!["rows".into(), "units".into()]
    } else {
        vec!["rows".into()]
    };
    let lasso: Vec<String> = [0.01, 0.1]
        .iter()
        .map(|f| float(round2(f * sd.max(f64::MIN_POSITIVE))))
        .collect();
    let (fold_note, fold_lines) = folds_for(shape.units);
    Proposal {
        ks,
        compress,
        fills,
        weighting,
        lasso,
        fold_note,
        fold_lines,
    }
}

/// Everything the config text is written from.
pub(super) struct Draft<'a> {
    pub(super) data: &'a Path,
    pub(super) config_path: &'a Path,
    pub(super) cols: &'a [Col],
    pub(super) n: usize,
    pub(super) roles: &'a Roles,
    pub(super) outcome: &'a OutcomeFacts,
    pub(super) indicators: &'a [usize],
    pub(super) ignored: &'a [Ignored],
    pub(super) guesses: &'a [String],
    pub(super) warnings: &'a [String],
    pub(super) shape: &'a Shape,
    pub(super) gappy: bool,
    pub(super) codebook: &'a Path,
    pub(super) groups: Option<&'a BTreeSet<String>>,
    pub(super) proposal: &'a Proposal,
}

impl Draft<'_> {
    /// The config text, with `header` (one comment line per line) near its top.
    pub(super) fn text(&self, header: &str) -> String {
        let mut t = String::new();
        self.preamble(&mut t, header);
        self.data_section(&mut t);
        self.folds_and_choices(&mut t);
        self.grids(&mut t);
        t
    }

    /// What wrote it, the header, the panel's shape, the guesses and the warnings.
    fn preamble(&self, t: &mut String, header: &str) {
        let _ = writeln!(
            t,
            "# forkmap starter config, written by `forkmap sketch` from {}.",
            self.data.display()
        );
        let _ = writeln!(
            t,
            "# Read it, change what does not fit your question, then `forkmap plan` it."
        );
        let _ = writeln!(t, "# Paths are relative to this file.");
        let _ = writeln!(t, "#");
        for line in header.lines() {
            let _ = writeln!(t, "# {line}");
        }
        let _ = writeln!(t, "#");
        let Shape {
            units,
            rmin,
            rmax,
            rmed,
        } = self.shape;
        let _ = writeln!(
            t,
            "# Panel: {} rows, {units} units, rows per unit {rmin} to {rmax} (median {rmed}); {} indicators, {} ignored.",
            self.n,
            self.indicators.len(),
            plural(self.ignored.len(), "column")
        );
        for g in self.guesses {
            let _ = writeln!(t, "# {g}");
        }
        for w in self.warnings {
            let _ = writeln!(t, "# warning: {w}");
        }
    }

    /// `seed` and `[data]`: file, keys, outcome, indicators, ignored columns, codebook.
    fn data_section(&self, t: &mut String) {
        let cols = self.cols;
        let _ = writeln!(t, "\nseed = 1\n\n[data]");
        let _ = writeln!(
            t,
            "file = {}",
            toml_str(&data_ref(self.data, self.config_path))
        );
        let _ = writeln!(t, "unit = {}", toml_str(&cols[self.roles.unit].name));
        match self.roles.wave {
            Some(w) => {
                let _ = writeln!(t, "wave = {}", toml_str(&cols[w].name));
            }
            None => {
                let _ = writeln!(
                    t,
                    "# wave = \"year\"   # no wave column: each unit appears once"
                );
            }
        }
        let _ = writeln!(t, "outcome = {}", toml_str(&cols[self.roles.outcome].name));
        let _ = writeln!(t, "outcome_kind = {}", toml_str(self.outcome.kind));
        let _ = writeln!(
            t,
            "indicators = \"auto\"   # every numeric column not named here or ignored ({})",
            self.indicators.len()
        );
        for ig in self.ignored {
            let _ = writeln!(t, "# ignored `{}`: {}", ig.column, ig.reason);
        }
        let ignore_names: Vec<String> = self.ignored.iter().map(|i| i.column.clone()).collect();
        let _ = writeln!(t, "ignore = {}", toml_list(&ignore_names));
        match self.groups {
            Some(g) => {
                let _ = writeln!(
                    t,
                    "codebook = {}   # enables pools group:NAME and group importances",
                    toml_str(&data_ref(self.codebook, self.config_path))
                );
                let _ = writeln!(
                    t,
                    "# groups: {}",
                    g.iter().cloned().collect::<Vec<_>>().join(", ")
                );
            }
            None => {
                let _ = writeln!(t, "# codebook = \"codebook.csv\"   # columns indicator, group: enables pools group:NAME");
            }
        }
    }

    /// `[folds]` and `[choices]`.
    fn folds_and_choices(&self, t: &mut String) {
        let pr = self.proposal;
        let _ = writeln!(t, "\n# {}.\n[folds]\n{}", pr.fold_note, pr.fold_lines);
        let _ = writeln!(
            t,
            "# A modest first space; widen it once the plan's time suits you."
        );
        let _ = writeln!(t, "[choices]");
        let _ = writeln!(t, "transform = [\"identity\"]");
        let _ = writeln!(
            t,
            "fill = {}{}",
            toml_list(&pr.fills),
            if self.gappy {
                ""
            } else {
                "   # no gaps in the indicators"
            }
        );
        let _ = writeln!(t, "pool = [\"all\"]");
        let _ = writeln!(t, "scale = [\"standardise\"]");
        let _ = writeln!(t, "compress = {}", toml_list(&pr.compress));
        let _ = writeln!(t, "model = [\"ridge\", \"lasso\", \"forest\", \"boost\"]");
        let _ = writeln!(
            t,
            "weighting = {}{}",
            toml_list(&pr.weighting),
            if self.shape.rmin != self.shape.rmax {
                "   # units: a unit's rows share one weight (units have different numbers of rows)"
            } else {
                ""
            }
        );
    }

    /// The `[grid.*]` tables.
    fn grids(&self, t: &mut String) {
        let pr = self.proposal;
        let _ = writeln!(t, "\n[grid.ridge]\nalpha = [0.1, 1.0, 10.0]");
        let _ = writeln!(
            t,
            "\n# lasso's penalty is in outcome units: 1% and 10% of the outcome's sd ({}).",
            float(round2(self.outcome.sd))
        );
        let _ = writeln!(t, "[grid.lasso]\nalpha = [{}]", pr.lasso.join(", "));
        if !pr.ks.is_empty() {
            let ks: Vec<String> = pr.ks.iter().map(|k| k.to_string()).collect();
            let _ = writeln!(t, "\n[grid.pca]\nk = [{}]   # at most about one component per ten units (rule of thumb)", ks.join(", "));
        }
        let _ = writeln!(t, "\n[grid.forest]\ntrees = [200]");
    }
}

fn plural(k: usize, word: &str) -> String {
    if k == 1 {
        format!("{k} {word}")
    } else {
        format!("{k} {word}s")
    }
}

fn toml_str(s: &str) -> String {
    toml::Value::String(s.to_string()).to_string()
}

fn toml_list(items: &[String]) -> String {
    let inner: Vec<String> = items.iter().map(|s| toml_str(s)).collect();
    format!("[{}]", inner.join(", "))
}

/// Two significant digits (the shortest decimal that reads back as the rounded value).
fn round2(x: f64) -> f64 {
    format!("{x:.1e}").parse().unwrap_or(x)
}

fn float(x: f64) -> String {
    let s = format!("{x}");
    if s.contains('.') || s.contains('e') {
        s
    } else {
        format!("{s}.0")
    }
}

/// Folds sized to the panel: (comment, TOML lines).
fn folds_for(units: usize) -> (String, String) {
    if units < 12 {
        (
            format!("{units} units (fewer than 12): leave-one-unit-out, so every fit trains on all units but one"),
            "scheme = \"leave-one-unit-out\"\n".into(),
        )
    } else if units < 30 {
        (
            format!(
                "{units} units (12 to 29): 3 grouped folds, repeated 3 times with fresh shuffles"
            ),
            "scheme = \"grouped-kfold\"\nk = 3\nrepeats = 3\n".into(),
        )
    } else if units < 100 {
        (
            format!("{units} units (30 to 99): 5 grouped folds, repeated twice"),
            "scheme = \"grouped-kfold\"\nk = 5\nrepeats = 2\n".into(),
        )
    } else {
        (
            format!("{units} units (100 or more): 5 grouped folds"),
            "scheme = \"grouped-kfold\"\nk = 5\nrepeats = 1\n".into(),
        )
    }
}

/// The path to write into `data.file`: relative to the config's folder when the data
/// sits in it, else absolute.
fn data_ref(data: &Path, config: &Path) -> String {
    let dir = config.parent().unwrap_or(Path::new(""));
    let data_dir = data.parent().unwrap_or(Path::new(""));
    let same = match (dir.canonicalize(), data_dir.canonicalize()) {
        (Ok(a), Ok(b)) => a == b,
        _ => dir == data_dir,
    };
    match (same, data.file_name()) {
        (true, Some(f)) => f.to_string_lossy().into_owned(),
        _ => data
            .canonicalize()
            .unwrap_or_else(|_| data.to_path_buf())
            .display()
            .to_string(),
    }
}
