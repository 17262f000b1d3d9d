//! The layout of a run directory, in one place: the names of every file and folder forkmap
//! writes there, which is the contract a meta-analyst's query reads (the README's output
//! section lists the columns of each table). At the bottom of the module graph: it imports
//! nothing, and every writer and reader takes its names from here.
//!
//! ```text
//! RUN_DIR/manifest.json            identity, space, counts, lineage      (MANIFEST)
//! RUN_DIR/{specs,predictions,loadings,importance}/part-*.parquet       (TABLES)
//! RUN_DIR/null/    manifest.json, draws/, tops/                         (NULL_DIR)
//! RUN_DIR/nested/  settings.json, fold-*.parquet                        (NESTED_DIR)
//! RUN_DIR/curves/  curves.json and the curve tables                     (CURVES_DIR)
//! RUN_DIR/report/  report.json, index.html, tables and plots            (REPORT_DIR)
//! ```

/// The run's manifest (written last, atomically: its presence marks a finished run).
pub const MANIFEST: &str = "manifest.json";
/// The sweep's tables, one folder of Parquet parts each.
pub const TABLES: &[&str] = &["specs", "predictions", "loadings", "importance"];

/// The permutation null's folder (its own manifest and tables).
pub const NULL_DIR: &str = "null";
/// The nested estimate's folder.
pub const NESTED_DIR: &str = "nested";
/// The curves' folder.
pub const CURVES_DIR: &str = "curves";
/// The report's folder.
pub const REPORT_DIR: &str = "report";
/// Everything derived from the sweep's tables, in the order a run makes them. A restart
/// or a changed identity discards them all; add a new derived folder here and nowhere
/// else.
pub const DERIVED_DIRS: &[&str] = &[NULL_DIR, NESTED_DIR, CURVES_DIR, REPORT_DIR];

/// The null's tables inside [`NULL_DIR`] (one part per draw).
pub const NULL_DRAWS: &str = "draws";
pub const NULL_TOPS: &str = "tops";
/// The nested estimate's settings inside [`NESTED_DIR`].
pub const NESTED_SETTINGS: &str = "settings.json";
/// The curves' settings and summary inside [`CURVES_DIR`].
pub const CURVES_META: &str = "curves.json";
/// The report's marker inside [`REPORT_DIR`] (what it read and with which settings).
pub const REPORT_MARKER: &str = "report.json";

#[cfg(test)]
mod tests {
    use super::*;

    /// No two names of the run directory's top level collide.
    #[test]
    fn top_level_names_are_distinct() {
        let mut all: Vec<&str> = TABLES.iter().chain(DERIVED_DIRS).copied().collect();
        all.push(MANIFEST);
        let n = all.len();
        all.sort_unstable();
        all.dedup();
        assert_eq!(all.len(), n);
    }
}
