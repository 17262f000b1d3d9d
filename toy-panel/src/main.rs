//! `toy-panel [OUT_DIR] [--units N] [--seed S] [--noise N]`: write the invented demo panel
//! (panel.csv, codebook.csv, truth.json) into OUT_DIR (default: this crate's folder, which
//! holds the committed demo: 64 districts, seed 20261201, no noise indicators). `--units`
//! and `--seed` make a panel of the same structure at another size or draw (for recovery
//! against sample size); `--noise N` adds N indicators of pure noise (group `noise`, listed
//! in truth.json; every other cell stays as it is). They need an OUT_DIR, so the committed
//! files are never overwritten by them.
use std::path::PathBuf;
use std::process::ExitCode;

fn main() -> ExitCode {
    match run() {
        Ok(()) => ExitCode::SUCCESS,
        Err(e) => {
            eprintln!("toy-panel: error: {e}");
            ExitCode::from(2)
        }
    }
}

fn run() -> Result<(), String> {
    let mut out: Option<PathBuf> = None;
    let mut units = forkmap_toy_panel::N_DISTRICTS;
    let mut seed = forkmap_toy_panel::SEED;
    let mut noise = 0usize;
    let mut args = std::env::args().skip(1);
    while let Some(a) = args.next() {
        let mut value = |flag: &str| -> Result<u64, String> {
            let v = args.next().ok_or(format!("{flag} needs a value"))?;
            v.parse::<u64>()
                .map_err(|_| format!("{flag}: `{v}` is not a whole number"))
        };
        match a.as_str() {
            "--units" => {
                units = value("--units")? as usize;
                if !(8..=100_000).contains(&units) {
                    return Err(format!("--units: {units} is outside 8..=100000"));
                }
            }
            "--seed" => seed = value("--seed")?,
            "--noise" => {
                let n = value("--noise")?;
                if n > forkmap_toy_panel::MAX_NOISE as u64 {
                    return Err(format!(
                        "--noise: {n} is outside 0..={}",
                        forkmap_toy_panel::MAX_NOISE
                    ));
                }
                noise = n as usize;
            }
            s if s.starts_with("--") => return Err(format!("unknown flag `{s}`")),
            s if out.is_none() => out = Some(PathBuf::from(s)),
            s => return Err(format!("unexpected argument `{s}`")),
        }
    }
    let custom =
        units != forkmap_toy_panel::N_DISTRICTS || seed != forkmap_toy_panel::SEED || noise > 0;
    let out = match out {
        Some(o) => o,
        None if custom => return Err("--units, --seed and --noise need an OUT_DIR".into()),
        None => PathBuf::from(env!("CARGO_MANIFEST_DIR")),
    };
    let panel = forkmap_toy_panel::generate_with_noise(seed, units, noise);
    std::fs::create_dir_all(&out).map_err(|e| format!("{}: {e}", out.display()))?;
    for (name, text) in [
        ("panel.csv", &panel.panel_csv),
        ("codebook.csv", &panel.codebook_csv),
        ("truth.json", &panel.truth_json),
    ] {
        let path = out.join(name);
        std::fs::write(&path, text).map_err(|e| format!("{}: {e}", path.display()))?;
    }
    eprintln!(
        "wrote panel.csv, codebook.csv, truth.json ({units} districts, seed {seed}, {noise} noise indicators) to {}",
        out.display()
    );
    Ok(())
}
