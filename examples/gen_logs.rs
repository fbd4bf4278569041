//! Writes the example drive logs into a folder: eight minutes at 50 Hz on each of asphalt,
//! grass and packed-snow, driven by an invented vehicle whose behaviour no model family
//! captures exactly (see `common/truth.rs`). Deterministic: the same output every run.
//!
//! `cargo run --release --example gen_logs -- example-logs/`

#[path = "common/truth.rs"]
mod truth;

use std::path::PathBuf;

use skidroute::kinematics::Pose;

fn main() -> std::io::Result<()> {
    let dir = PathBuf::from(std::env::args().nth(1).unwrap_or_else(|| "example-logs".to_string()));
    std::fs::create_dir_all(&dir)?;
    let plan = [
        (truth::ASPHALT, "yard-asphalt.csv", 11u64),
        (truth::GRASS, "meadow-grass.csv", 12),
        (truth::PACKED_SNOW, "snowfield-packed-snow.csv", 13),
    ];
    for (terrain, file, seed) in plan {
        let programme = truth::programme(480.0, seed);
        let rows = truth::drive(&terrain, &programme, Pose::new(0.0, 0.0, 0.0), 3.0, seed);
        let path = dir.join(file);
        std::fs::write(&path, truth::csv(&rows, terrain.name, true))?;
        println!("{}: {} rows on {}", path.display(), rows.len(), terrain.name);
    }
    Ok(())
}
