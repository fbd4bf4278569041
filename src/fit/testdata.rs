//! Synthetic drive logs for the unit tests: side-speed profiles driven through a known model
//! with the same zero-order hold and exact SE(2) steps the fit assumes, plus optional noise
//! (measurement noise, and a heading random walk of the vehicle itself), and logs with the
//! defects of real logs ([`Defects`]: encoders updating slower than the log, pose dropouts,
//! irregular time steps, standing time, dead encoders, CRLF line endings).

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
        Manoeuvres::mixed_at(duration_s, 0.02)
    }

    /// [`Manoeuvres::mixed`] at another sample period.
    pub fn mixed_at(duration_s: f64, period_s: f64) -> Manoeuvres {
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
        Manoeuvres { segments, period_s }
    }
}

/// Measurement noise standard deviations, and the intensity of a heading random walk of the
/// vehicle (rad/sqrt(m): the true yaw gains N(0, q^2 ds) over every ds metres driven, the
/// random-walk model of Kelly 2004, "Linearized error propagation in odometry", IJRR).
#[derive(Clone, Copy, Default)]
pub struct Noise {
    pub position_m: f64,
    pub yaw_rad: f64,
    pub speed_mps: f64,
    pub heading_walk_rad_per_sqrt_m: f64,
}

/// A drive log on terrain "test" of `m` driven by the model `par(truth)`. `noise_scale` scales a
/// fixed noise mix (pose noise 1 cm / 0.2 degree, side-speed noise 0.02 m/s); 0 is noise-free.
pub fn synthetic_log(par: &Parametrisation, truth: &[f64], m: &Manoeuvres, noise_scale: f64, seed: u64) -> DriveLog {
    let noise = Noise {
        position_m: 0.01 * noise_scale,
        yaw_rad: 0.0035 * noise_scale,
        speed_mps: 0.02 * noise_scale,
        heading_walk_rad_per_sqrt_m: 0.0,
    };
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
                pose_missing: false,
            });
            // Noise-free logs integrate the logged speeds exactly as the fit does.
            let (tl, tr) = if noise.speed_mps == 0.0 { (ml, mr) } else { (l, r) };
            let mut twist = par.twist(truth, tl, tr);
            if noise.heading_walk_rad_per_sqrt_m > 0.0 {
                let ds = twist.vx_mps.hypot(twist.vy_mps) * m.period_s;
                let z: f64 = unit.sample(&mut rng);
                twist.omega_radps += noise.heading_walk_rad_per_sqrt_m * ds.sqrt() * z / m.period_s;
            }
            pose = pose.step(twist, m.period_s);
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
            pose_missing: false,
        })
        .collect();
    let log = DriveLog { source: "c.csv".into(), terrains: vec!["c".into()], samples, origin: None, period_s: dt_s };
    build_series(&[log], &[]).remove(0)
}

/// Defects of real drive logs, for [`defective_text`].
#[derive(Clone, Debug, Default)]
pub struct Defects {
    /// Encoders that difference their counts at this rate (Hz) and hold the value in between.
    pub encoder_hz: Option<f64>,
    /// Pose dropouts (start s, duration s): the log repeats the last pose, as a logger that
    /// samples a silent localization topic does.
    pub pose_dropouts_s: Vec<(f64, f64)>,
    /// Time steps of 0.03 s or 0.07 s at random on two rows in five instead of 0.05 s.
    pub jitter: bool,
    /// Seconds of standing still inserted after the first third of the drive.
    pub standing_s: f64,
    /// The left side speed column reads 0 throughout (a dead or unmapped encoder).
    pub dead_left: bool,
    /// CR LF line endings.
    pub crlf: bool,
}

impl Defects {
    pub fn none() -> Defects {
        Defects::default()
    }
}

/// Truth of [`defective_text`]: `extended-symmetric` alpha 0.92, track expansion 1.5, B = 0.9 m.
pub const DEFECTIVE_TRUTH: [f64; 2] = [0.92, 1.5];

/// CSV text of about `duration_s` seconds of driving on terrain "grass" at 20 Hz through the
/// `extended-symmetric` model [`DEFECTIVE_TRUTH`], simulated at 100 Hz (exact SE(2) steps), with
/// encoder noise 0.01 m/s, pose noise 5 mm and 0.1 degree, and the `defects`.
pub fn defective_text(defects: &Defects, duration_s: f64, seed: u64) -> String {
    use std::fmt::Write;
    let par = Parametrisation::new(crate::kinematics::Family::ExtendedSymmetric, 0.9, &[]);
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    let unit = Normal::new(0.0, 1.0).expect("unit normal");
    let fine_s = 0.01;
    let m = Manoeuvres::mixed_at(duration_s, fine_s);
    // Side speeds at every fine step, with a standing stretch inserted.
    let mut speeds: Vec<(f64, f64)> = Vec::new();
    for (i, &(l, r, dur)) in m.segments.iter().enumerate() {
        if defects.standing_s > 0.0 && i == m.segments.len() / 3 {
            speeds.extend(std::iter::repeat_n((0.0, 0.0), (defects.standing_s / fine_s).round() as usize));
        }
        speeds.extend(std::iter::repeat_n((l, r), (dur / fine_s).round() as usize));
    }
    let mut pose = Pose::new(2.0, 1.0, 0.2);
    let mut poses = Vec::with_capacity(speeds.len());
    for &(l, r) in &speeds {
        poses.push(pose);
        pose = pose.step(par.twist(&DEFECTIVE_TRUTH, l, r), fine_s);
    }
    let mut text = String::from("t_s,left_mps,right_mps,x_m,y_m,yaw_rad,terrain\n");
    let (mut k, mut last_update, mut held) = (0usize, 0usize, (0.0, 0.0));
    let mut last_pose = poses[0];
    let update_every = defects.encoder_hz.map(|hz| ((1.0 / hz) / fine_s).round() as usize);
    while k < speeds.len() {
        let t = k as f64 * fine_s;
        let (l, r) = match update_every {
            // The count difference since the last update, divided by the time: the mean speed
            // over the fine steps since then (each holds its speed for one fine step).
            Some(n) if k >= last_update + n || k == 0 => {
                let span = if k == 0 { &speeds[..1] } else { &speeds[last_update..k] };
                let mean = |f: fn(&(f64, f64)) -> f64| span.iter().map(f).sum::<f64>() / span.len() as f64;
                held = (mean(|s| s.0) + 0.01 * unit.sample(&mut rng), mean(|s| s.1) + 0.01 * unit.sample(&mut rng));
                last_update = k;
                held
            }
            Some(_) => held,
            None => (speeds[k].0 + 0.01 * unit.sample(&mut rng), speeds[k].1 + 0.01 * unit.sample(&mut rng)),
        };
        let dropped = defects.pose_dropouts_s.iter().any(|(a, d)| t >= *a - 1e-9 && t < a + d - 1e-9);
        if !dropped {
            let p = poses[k];
            last_pose = Pose::new(
                p.x_m + 0.005 * unit.sample(&mut rng),
                p.y_m + 0.005 * unit.sample(&mut rng),
                p.yaw_rad + 0.1f64.to_radians() * unit.sample(&mut rng),
            );
        }
        let left = if defects.dead_left { 0.0 } else { l };
        let yaw = crate::kinematics::se2::wrap_angle(last_pose.yaw_rad);
        let _ = writeln!(text, "{t:.2},{left:.4},{r:.4},{:.4},{:.4},{yaw:.5},grass", last_pose.x_m, last_pose.y_m);
        // Irregular steps: 0.03 s or 0.07 s instead of 0.05 s on two rows in five.
        k += match (defects.jitter, rng.random_range(0..5)) {
            (true, 0) => 3,
            (true, 1) => 7,
            _ => 5,
        };
    }
    if defects.crlf {
        text = text.replace('\n', "\r\n");
    }
    text
}
