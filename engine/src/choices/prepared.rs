//! A config with everything it names read and checked: the panel, the choice space and the
//! fold plan (what every pass over the data starts from: the run, the curves, the null,
//! the nested estimate and the refit). `run` re-exports it as `forkmap::run::prepare`.

use crate::config::Config;
use crate::error::{Error, Result};
use crate::folds::FoldPlan;
use crate::panel::{self, Panel};
use crate::space::ChoiceSpace;
use sha2::{Digest, Sha256};
use std::io::Read;
use std::path::{Path, PathBuf};

/// A config with its panel, choice space and folds, all validated.
pub struct Prepared {
    pub cfg: Config,
    pub panel: Panel,
    pub space: ChoiceSpace,
    pub folds: FoldPlan,
    pub data_path: PathBuf,
    /// sha256 of the codebook file, when the config names one: part of the run's identity
    /// (a regrouped codebook changes every group importance), compared on resume, extend
    /// and gather like the data file's.
    pub codebook_sha256: Option<String>,
}

/// Read and check a config file and everything it names.
pub fn prepare(config: &Path) -> Result<Prepared> {
    let cfg = Config::from_file(config)?;
    prepare_config(cfg)
}

pub fn prepare_config(cfg: Config) -> Result<Prepared> {
    let panel = panel::load(&cfg)?;
    let space = ChoiceSpace::build(&cfg, &panel)?;
    let folds = FoldPlan::new(&panel, &cfg.folds, cfg.seed)?;
    let data_path = cfg.resolve(&cfg.data.file);
    let codebook_sha256 = match &cfg.data.codebook {
        Some(c) => Some(sha256_file(&cfg.resolve(c))?),
        None => None,
    };
    Ok(Prepared {
        cfg,
        panel,
        space,
        folds,
        data_path,
        codebook_sha256,
    })
}

/// sha256 of a file, hex.
pub fn sha256_file(path: &Path) -> Result<String> {
    let mut f = std::fs::File::open(path).map_err(|e| Error::io(path, e))?;
    let mut h = Sha256::new();
    let mut buf = vec![0u8; 1 << 16];
    loop {
        let n = f.read(&mut buf).map_err(|e| Error::io(path, e))?;
        if n == 0 {
            break;
        }
        h.update(&buf[..n]);
    }
    Ok(hex::encode(h.finalize()))
}
