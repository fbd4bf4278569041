//! Writes the example drive logs into a folder: eight minutes at 50 Hz on each of asphalt,
//! grass and packed-snow, driven by an invented vehicle whose behaviour no model family
//! captures exactly (see `common/truth.rs`), and in `defective/` a five-minute grass log with the
//! defects of real logs (4 Hz encoders in a 20 Hz log, pose dropouts, irregular time steps, a
//! minute of standing, CR LF line endings). Deterministic: the same output every run.
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
    // Five minutes on grass at 100 Hz with a minute of standing after the first two, then thinned
    // to about 20 Hz with the defects.
    let mut programme = truth::programme(240.0, 14);
    programme.insert(programme.len() / 2, (0.0, 0.0, 60.0));
    let rows = truth::drive_at(&truth::GRASS, &programme, Pose::new(0.0, 0.0, 0.0), 0.0, 14, 100.0);
    let dropouts = [(40.0, 2.0), (95.0, 1.5), (200.0, 0.8)];
    let defective = dir.join("defective");
    std::fs::create_dir_all(&defective)?;
    let path = defective.join("meadow-grass-20hz-defects.csv");
    std::fs::write(&path, truth::defective_csv(&rows, truth::GRASS.name, &dropouts, 14))?;
    println!("{}: defective grass log", path.display());
    Ok(())
}
