//! `toy-panel [OUT_DIR]`: write the invented demo panel (panel.csv, codebook.csv,
//! truth.json) into OUT_DIR (default: this crate's folder).
use std::path::PathBuf;

fn main() -> std::io::Result<()> {
    let out = std::env::args()
        .nth(1)
        .map(PathBuf::from)
        .unwrap_or_else(|| PathBuf::from(env!("CARGO_MANIFEST_DIR")));
    let panel = forkmap_toy_panel::generate(forkmap_toy_panel::SEED);
    std::fs::create_dir_all(&out)?;
    std::fs::write(out.join("panel.csv"), panel.panel_csv)?;
    std::fs::write(out.join("codebook.csv"), panel.codebook_csv)?;
    std::fs::write(out.join("truth.json"), panel.truth_json)?;
    eprintln!(
        "wrote panel.csv, codebook.csv, truth.json to {}",
        out.display()
    );
    Ok(())
}
