//! The run folder at the start of a run: fresh, resumed or extended (`open_out` checks
//! what the folder holds against the config), and the state a run begins from.

use super::*;

/// How a run starts in its folder.
pub(super) enum Start {
    /// A new run; `created` when forkmap made the folder.
    Fresh { created: bool },
    /// The folder holds an unfinished (or finished) run of the same config and data.
    Resume {
        done: crate::resume::Done,
        manifest: Box<Manifest>,
        /// Set when the folder's run is extended with a larger config (`--extend`).
        extension: Option<Box<extend::Extension>>,
    },
}

pub(super) fn out_err(out: &Path, msg: impl Into<String>) -> Error {
    Error::Output {
        path: out.into(),
        msg: msg.into(),
    }
}

/// Check what the folder `out` holds against this config and data (`sha`): a fresh start,
/// a resume, an extension (`extend`), or a refusal naming what differs.
pub(super) fn open_out(
    p: &Prepared,
    out: &Path,
    sha: &str,
    restart: bool,
    shard: Option<crate::shard::Shard>,
    extend: bool,
) -> Result<Start> {
    if extend && !out.join(crate::schema::MANIFEST).is_file() {
        return Err(out_err(
            out,
            "holds no forkmap run to extend (--extend adds specs to a finished run)",
        ));
    }
    if !out.exists() {
        std::fs::create_dir_all(out).map_err(|e| out_err(out, format!("cannot create: {e}")))?;
        return Ok(Start::Fresh { created: true });
    }
    if !out.is_dir() {
        return Err(out_err(out, "exists and is not a directory"));
    }
    let manifest_path = out.join(crate::schema::MANIFEST);
    if manifest_path.exists() {
        let text = std::fs::read_to_string(&manifest_path)
            .map_err(|e| out_err(out, format!("cannot read manifest.json: {e}")))?;
        let m: serde_json::Value = serde_json::from_str(&text).map_err(|e| {
            out_err(
                out,
                format!("manifest.json is unreadable ({e}): use --restart to discard this run"),
            )
        })?;
        if m["tool"] != "forkmap" {
            return Err(out_err(
                out,
                "holds a manifest.json that is not forkmap's: choose a new --out (forkmap never mixes its results with other files)",
            ));
        }
        // A manifest of another forkmap version may not read as this one's: its version
        // differs, which resume refuses and --restart discards.
        let typed: std::result::Result<Manifest, String> = serde_json::from_value(m.clone())
            .map_err(|e| {
                format!(
                    "forkmap version ({}, this is {}; its manifest reads differently: {e})",
                    m["version"],
                    env!("CARGO_PKG_VERSION")
                )
            });
        let same = typed.as_ref().map_err(Clone::clone).and_then(|m| {
            crate::resume::same_run(
                m,
                &p.cfg.canonical_json(),
                sha,
                p.codebook_sha256.as_deref(),
            )
            .and_then(|()| {
                let want = shard.map(|s| s.to_string());
                if want == m.shard {
                    Ok(())
                } else {
                    Err(format!(
                        "shard ({}, this is {})",
                        m.shard.as_deref().unwrap_or("none"),
                        want.as_deref().unwrap_or("none")
                    ))
                }
            })
        });
        match (same, typed) {
            (Ok(()), Ok(m)) if !restart => {
                return Ok(Start::Resume {
                    done: crate::resume::scan(out)?,
                    manifest: Box::new(m),
                    extension: None,
                });
            }
            (Err(_), Ok(m)) if extend => {
                let ext = extend::check(&m, out, p, sha).map_err(|what| {
                    out_err(
                        out,
                        format!("cannot be extended with this config: its {what}"),
                    )
                })?;
                return Ok(Start::Resume {
                    done: crate::resume::scan(out)?,
                    manifest: Box::new(m),
                    extension: Some(Box::new(ext)),
                });
            }
            (Err(what), typed) if !restart => {
                let keeps = typed
                    .as_ref()
                    .is_ok_and(|m| extend::check(m, out, p, sha).is_ok());
                let hint = if shard.is_none() && keeps {
                    " (this config keeps every spec of that run: add --extend to run only its new specs)"
                } else {
                    ""
                };
                return Err(out_err(
                    out,
                    format!("holds a run whose {what} differs from this one: resume refused (use --restart to discard that run, or choose another --out){hint}"),
                ));
            }
            _ => {
                for t in TABLES.iter().chain(crate::schema::DERIVED_DIRS) {
                    let d = out.join(t);
                    if d.exists() {
                        std::fs::remove_dir_all(&d).map_err(|e| Error::io(&d, e))?;
                    }
                }
                std::fs::remove_file(&manifest_path).map_err(|e| Error::io(&manifest_path, e))?;
            }
        }
    }
    // A run killed before its manifest was written leaves only forkmap's own leftovers
    // (the manifest's temporary file, table folders without parts): start afresh.
    let entries: Vec<std::path::PathBuf> = std::fs::read_dir(out)
        .map_err(|e| out_err(out, format!("cannot read: {e}")))?
        .filter_map(|e| e.ok().map(|e| e.path()))
        .collect();
    let leftover = |p: &std::path::PathBuf| {
        let name = p.file_name().and_then(|n| n.to_str()).unwrap_or("");
        if name == ".manifest.json.tmp" {
            return true;
        }
        TABLES.contains(&name)
            && p.is_dir()
            && std::fs::read_dir(p)
                .map(|r| {
                    r.filter_map(|e| e.ok())
                        .all(|e| e.file_name().to_string_lossy().starts_with('.'))
                })
                .unwrap_or(false)
    };
    if !entries.is_empty() && entries.iter().all(leftover) {
        for p in &entries {
            let r = if p.is_dir() {
                std::fs::remove_dir_all(p)
            } else {
                std::fs::remove_file(p)
            };
            r.map_err(|e| Error::io(p, e))?;
        }
        return Ok(Start::Fresh { created: false });
    }
    if !entries.is_empty() {
        return Err(out_err(
            out,
            "already exists, is not empty and holds no forkmap run: choose a new --out (forkmap never mixes its results with other files)",
        ));
    }
    Ok(Start::Fresh { created: false })
}

/// Where a run starts: whether this invocation created the folder, the specs already done,
/// when the run first started, how often it was resumed, its lineage and, for an
/// extension, what the extension adds.
pub(super) struct Begun {
    pub(super) created: bool,
    pub(super) done: crate::resume::Done,
    pub(super) started: String,
    pub(super) resumes: u64,
    pub(super) lineage: Option<Vec<crate::manifest::Lineage>>,
    pub(super) extension: Option<Box<extend::Extension>>,
}

/// Turn the output folder's state into a [`Begun`]; an extension first removes the
/// smaller run's report and curves.
pub(super) fn begin(start: Start, out: &Path) -> Result<Begun> {
    Ok(match start {
        Start::Fresh { created } => Begun {
            created,
            done: crate::resume::Done::default(),
            started: chrono::Utc::now().to_rfc3339(),
            resumes: 0,
            lineage: None,
            extension: None,
        },
        Start::Resume {
            done,
            manifest,
            extension: Some(ext),
        } => {
            // The old report and curves describe a smaller run (its best spec and good
            // set): both go now; the report is rewritten at the end, the curves too
            // unless `--no-curves` (then there are none rather than stale ones).
            for dir in [crate::schema::REPORT_DIR, crate::schema::CURVES_DIR] {
                let d = out.join(dir);
                if d.is_dir() {
                    std::fs::remove_dir_all(&d).map_err(|e| Error::io(&d, e))?;
                }
            }
            Begun {
                created: false,
                done,
                started: manifest.started.clone(),
                resumes: 0,
                lineage: Some(ext.lineage.clone()),
                extension: Some(ext),
            }
        }
        Start::Resume {
            done,
            manifest,
            extension: None,
        } => Begun {
            created: false,
            done,
            started: manifest.started.clone(),
            resumes: manifest.resumes + 1,
            lineage: manifest.lineage.clone(),
            extension: None,
        },
    })
}
