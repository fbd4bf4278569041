//! Synthetic drive logs for the unit tests: side-speed profiles driven through a known model
//! with the same zero-order hold and exact SE(2) steps the fit assumes, plus optional noise.

use rand::rngs::ChaCha8Rng;
use rand::{RngExt, SeedableRng};
use rand_distr::{Distribution, Normal};

use super::log::{DriveLog, LogSample};
use super::params::Parametrisation;
use super::windows::{build_series, Series};
use crate::kinematics::Pose;

/// Side-speed segments (left m/s, right m/s, duration s) at a sample period.
pub struct Manoeuvres {
    pub segments: Vec<(f64, f64, f64)>,
    pub period_s: f64,
}

impl Manoeuvres {
    /// About `duration_s` seconds of straights, arcs of several curvatures and pivot turns at 50 Hz.
    pub fn mixed(duration_s: f64) -> Manoeuvres {
        let mut rng = ChaCha8Rng::seed_from_u64(99);
        let mut segments = Vec::new();
        let mut total = 0.0;
        while total < duration_s {
            let v: f64 = rng.random_range(0.4..1.5);
            let d: f64 = match rng.random_range(0..5) {
                0 => 0.0,
                1 => rng.random_range(-0.3..0.3),
                2 => rng.random_range(-1.0..1.0),
                3 => rng.random_range(-1.6..1.6),
                _ => 0.0,
            };
            let (l, r) = if rng.random_range(0..8) == 0 {
                let w: f64 = rng.random_range(0.3..0.8);
                if rng.random_range(0..2) == 0 {
                    (-w, w)
                } else {
                    (w, -w)
                }
            } else {
                (v - 0.5 * d * v, v + 0.5 * d * v)
            };
            let dur = rng.random_range(1.5..5.0);
            segments.push((l, r, dur));
            total += dur;
        }
        Manoeuvres { segments, period_s: 0.02 }
    }
}

/// Measurement noise standard deviations.
#[derive(Clone, Copy)]
pub struct Noise {
    pub position_m: f64,
    pub yaw_rad: f64,
    pub speed_mps: f64,
}

/// A drive log on terrain "test" of `m` driven by the model `par(truth)`. `noise_scale` scales a
/// fixed noise mix (pose noise 1 cm / 0.2 degree, side-speed noise 0.02 m/s); 0 is noise-free.
pub fn synthetic_log(par: &Parametrisation, truth: &[f64], m: &Manoeuvres, noise_scale: f64, seed: u64) -> DriveLog {
    let noise = Noise { position_m: 0.01 * noise_scale, yaw_rad: 0.0035 * noise_scale, speed_mps: 0.02 * noise_scale };
    noisy_log(par, truth, m, noise, seed)
}

pub fn noisy_log(par: &Parametrisation, truth: &[f64], m: &Manoeuvres, noise: Noise, seed: u64) -> DriveLog {
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    let unit = Normal::new(0.0, 1.0).expect("unit normal");
    let mut pose = Pose::new(3.0, -2.0, 0.3);
    let mut samples = Vec::new();
    let mut t = 0.0;
    for &(l, r, dur) in &m.segments {
        let steps = (dur / m.period_s).round() as usize;
        for _ in 0..steps {
            // The encoders read the true speed with noise; the vehicle moves with the true speed.
            let (ml, mr) = (l + noise.speed_mps * unit.sample(&mut rng), r + noise.speed_mps * unit.sample(&mut rng));
            samples.push(LogSample {
                line: samples.len() + 2,
                t_s: t,
                left_mps: ml,
                right_mps: mr,
                x_m: pose.x_m + noise.position_m * unit.sample(&mut rng),
                y_m: pose.y_m + noise.position_m * unit.sample(&mut rng),
                yaw_rad: pose.yaw_rad + noise.yaw_rad * unit.sample(&mut rng),
                terrain: 0,
            });
            // Noise-free logs integrate the logged speeds exactly as the fit does.
            let (tl, tr) = if noise.speed_mps == 0.0 { (ml, mr) } else { (l, r) };
            pose = pose.step(par.twist(truth, tl, tr), m.period_s);
            t += m.period_s;
        }
    }
    DriveLog {
        source: "synthetic.csv".into(),
        terrains: vec!["test".into()],
        samples,
        origin: None,
        period_s: m.period_s,
    }
}

/// The series of [`synthetic_log`].
pub fn synthetic_series(par: &Parametrisation, truth: &[f64], m: &Manoeuvres, noise_scale: f64, seed: u64) -> Series {
    let log = synthetic_log(par, truth, m, noise_scale, seed);
    build_series(&[log], &[]).remove(0)
}

/// `n` samples of constant side speeds at period `dt_s`, starting at the origin heading east
/// (the poses are not used by the sensitivity tests).
pub fn constant_series(left_mps: f64, right_mps: f64, dt_s: f64, n: usize) -> Series {
    let samples = (0..n)
        .map(|k| LogSample {
            line: k + 2,
            t_s: k as f64 * dt_s,
            left_mps,
            right_mps,
            x_m: 0.0,
            y_m: 0.0,
            yaw_rad: 0.0,
            terrain: 0,
        })
        .collect();
    let log = DriveLog { source: "c.csv".into(), terrains: vec!["c".into()], samples, origin: None, period_s: dt_s };
    build_series(&[log], &[]).remove(0)
}
