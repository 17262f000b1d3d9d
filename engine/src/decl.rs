//! Declarations of the choice space, at the bottom of the module graph: the dimension
//! names, an option's declared parameters, and a [`Choice`] (one option with concrete
//! values). Every option registry (transform, stages, models, weights) declares its
//! options with these types; the choice space (`space`) builds specs from them. This
//! module imports nothing from the crate, so a registry never needs the space above it.

use std::sync::Arc;

/// The choice dimensions, in the order a spec's id lists them (this order is part of every
/// spec id, so it never changes; the stage tree's order is [`STAGE_DIMENSIONS`]). The
/// registry of each lives in its own module (see `space::options_of`).
pub const DIMENSIONS: &[&str] = &[
    "transform",
    "fill",
    "pool",
    "scale",
    "compress",
    "model",
    "weighting",
];
/// Dimensions fitted as shared stages, in tree order: the pool first, so that no step
/// that reads indicator values (the fill included) sees an indicator outside the pool.
pub const STAGE_DIMENSIONS: &[&str] = &["pool", "fill", "scale", "compress"];
/// Default option of a dimension the config leaves out.
pub fn default_option(dim: &str) -> &'static str {
    match dim {
        "transform" => "identity",
        "fill" => "median",
        "pool" => "all",
        "scale" => "standardise",
        "compress" => "none",
        "model" => "ridge",
        _ => "rows",
    }
}

/// The kind and range of an option's parameter.
#[derive(Debug, Clone, Copy)]
pub enum ParamKind {
    /// A whole number in `[min, max]`.
    Int { min: i64, max: i64 },
    /// A real number in `(min, max]` when `open_min`, else `[min, max]`.
    Real { min: f64, max: f64, open_min: bool },
}

/// A declared parameter of an option.
#[derive(Debug, Clone, Copy)]
pub struct ParamDecl {
    pub name: &'static str,
    pub kind: ParamKind,
    pub default: f64,
    pub help: &'static str,
}

/// A declared option of a dimension.
#[derive(Debug, Clone, Copy)]
pub struct OptionDecl {
    pub name: &'static str,
    pub params: &'static [ParamDecl],
    pub help: &'static str,
    /// False when the option ignores row weights: it then never runs with a weighting
    /// other than `rows` (an automatic exclusion) and plan says so.
    pub weighted: bool,
    /// Options of other dimensions this option never runs with (automatic exclusions,
    /// listed by `plan` and in the manifest with their reason).
    pub excludes: &'static [Excludes],
}

/// An automatic exclusion declared by an option: it never runs with `options` of `dim`.
#[derive(Debug, Clone, Copy)]
pub struct Excludes {
    pub dim: &'static str,
    pub options: &'static [&'static str],
    /// Why, in a few words (shown in the rule: "automatic: WHY").
    pub why: &'static str,
}

/// An option as its dimension registers it: the declaration and what builds it, in one
/// entry of the dimension's `OPTIONS` table. `B` is the dimension's builder: a stage
/// builder for pool, fill, scale and compress, a [`crate::transform`] pair for the
/// transform, a weight function for the weighting (the model dimension's entry is
/// `models::Family`, which adds a cost function). Adding an option is one entry in its
/// dimension's table plus the code it builds; nothing else dispatches on its name.
#[derive(Debug, Clone, Copy)]
pub struct Registered<B: 'static> {
    pub decl: OptionDecl,
    pub build: B,
}

/// The builder of `option` in a dimension's table; the error names the dimension.
pub fn lookup<'a, B>(table: &'a [Registered<B>], dim: &str, option: &str) -> Result<&'a B, String> {
    table
        .iter()
        .find(|r| r.decl.name == option)
        .map(|r| &r.build)
        .ok_or_else(|| format!("unknown {dim} `{option}`"))
}

/// The declarations of a dimension's table.
pub fn decls<B>(table: &[Registered<B>]) -> Vec<OptionDecl> {
    table.iter().map(|r| r.decl).collect()
}

/// One option of one dimension with concrete parameter values.
#[derive(Debug, Clone, PartialEq)]
pub struct Choice {
    pub dim: &'static str,
    pub option: String,
    /// Parameter values in declaration order.
    pub params: Vec<(&'static str, f64)>,
    /// Pools only: the member indicator indices (sorted) and their digest.
    pub members: Option<Arc<Vec<usize>>>,
    pub digest: Option<String>,
}

/// Parameters left out of a choice's label, and so of its spec id, while they hold their
/// default: (option, parameter, default). They were added after spec ids were in use, and
/// leaving them out at the default keeps the ids of the specs that existed before; any
/// other value is in the label, so ids stay unique. Every other parameter is always in
/// the label.
pub const QUIET_AT_DEFAULT: &[(&str, &str, f64)] =
    &[("log1p", "smear", 0.0), ("logit", "smear", 0.0)];

impl Choice {
    /// Human label: `pca(k=3)`, `ridge(alpha=0.1)`, `mean` (parameters in name order; a
    /// [`QUIET_AT_DEFAULT`] parameter only when it is not at its default).
    pub fn label(&self) -> String {
        let mut ps: Vec<_> = self
            .params
            .iter()
            .filter(|(n, v)| {
                !QUIET_AT_DEFAULT
                    .iter()
                    .any(|(o, q, d)| *o == self.option && q == n && v == d)
            })
            .collect();
        if ps.is_empty() {
            return self.option.clone();
        }
        ps.sort_by_key(|(n, _)| *n);
        let inner: Vec<String> = ps.iter().map(|(n, v)| format!("{n}={v}")).collect();
        format!("{}({})", self.option, inner.join(","))
    }
    /// Canonical form used for the id (adds the pool's member digest).
    pub fn canonical(&self) -> String {
        match &self.digest {
            Some(d) => format!("{}[{d}]", self.label()),
            None => self.label(),
        }
    }
    pub fn param(&self, name: &str) -> Option<f64> {
        self.params
            .iter()
            .find(|(n, _)| *n == name)
            .map(|(_, v)| *v)
    }
}
