//! Declarations of the choice space, at the bottom of the module graph: the dimension
//! names, an option's declared parameters, and a [`Choice`] (one option with concrete
//! values). Every option registry (transform, stages, models, weights) declares its
//! options with these types; the choice space (`space`) builds specs from them. This
//! module imports nothing from the crate, so a registry never needs the space above it.

use std::sync::Arc;

/// A choice dimension. The order of [`Dim::ALL`] is the order a spec's id lists them (it
/// is part of every spec id, so it never changes); the stage tree's order is
/// [`Dim::STAGES`]. The registry of each lives in its own module (see `space::options_of`).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub enum Dim {
    Transform,
    Fill,
    Pool,
    Scale,
    Compress,
    Model,
    Weighting,
}

impl Dim {
    /// Every dimension, in spec-id order.
    pub const ALL: [Dim; 7] = [
        Dim::Transform,
        Dim::Fill,
        Dim::Pool,
        Dim::Scale,
        Dim::Compress,
        Dim::Model,
        Dim::Weighting,
    ];
    /// Dimensions fitted as shared stages, in tree order: the pool first, so that no step
    /// that reads indicator values (the fill included) sees an indicator outside the pool.
    pub const STAGES: [Dim; 4] = [Dim::Pool, Dim::Fill, Dim::Scale, Dim::Compress];

    /// The dimension's name in configs, tables and spec labels.
    pub const fn name(self) -> &'static str {
        match self {
            Dim::Transform => "transform",
            Dim::Fill => "fill",
            Dim::Pool => "pool",
            Dim::Scale => "scale",
            Dim::Compress => "compress",
            Dim::Model => "model",
            Dim::Weighting => "weighting",
        }
    }
    /// The dimension named `name`, if any (config keys, table columns).
    pub fn parse(name: &str) -> Option<Dim> {
        Dim::ALL.into_iter().find(|d| d.name() == name)
    }
    /// Position in [`Dim::ALL`] (and in a spec's `choices`).
    pub const fn index(self) -> usize {
        self as usize
    }
    /// Default option when the config leaves the dimension out.
    pub const fn default_option(self) -> &'static str {
        match self {
            Dim::Transform => "identity",
            Dim::Fill => "median",
            Dim::Pool => "all",
            Dim::Scale => "standardise",
            Dim::Compress => "none",
            Dim::Model => "ridge",
            Dim::Weighting => "rows",
        }
    }
}

impl std::fmt::Display for Dim {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str(self.name())
    }
}

/// The dimension names in spec-id order (config keys and table columns).
pub const DIMENSIONS: &[&str] = &[
    Dim::Transform.name(),
    Dim::Fill.name(),
    Dim::Pool.name(),
    Dim::Scale.name(),
    Dim::Compress.name(),
    Dim::Model.name(),
    Dim::Weighting.name(),
];

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
    pub dim: Dim,
    pub options: &'static [&'static str],
    /// Why, in a few words (shown in the rule: "automatic: WHY").
    pub why: &'static str,
}

/// An option as its dimension registers it: the declaration and what builds it, in one
/// entry of the dimension's `OPTIONS` table. `B` is the dimension's builder: a stage
/// builder for pool, fill, scale and compress, a [`crate::transform`] pair for the
/// transform, a weight function for the weighting (the model dimension's entry is
/// `models::Family`, whose builder returns a `models::Regressor` with its own cost). Adding an option is one entry in its
/// dimension's table plus the code it builds; nothing else dispatches on its name.
#[derive(Debug, Clone, Copy)]
pub struct Registered<B: 'static> {
    pub decl: OptionDecl,
    pub build: B,
}

/// The builder of `option` in a dimension's table; the error names the dimension.
pub fn lookup<'a, B>(table: &'a [Registered<B>], dim: Dim, option: &str) -> Result<&'a B, String> {
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
    pub dim: Dim,
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
