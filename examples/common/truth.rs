//! The invented "truth" vehicle behind the example drive logs and the fit benchmark. It has
//! effects that none of the model families captures exactly:
//! - curvature-dependent slip: alpha falls and the effective track width grows smoothly with the
//!   commanded curvature (tanh saturation, so pivot turns are finite);
//! - a little side slip proportional to the centripetal acceleration, and slightly unequal tracks;
//! - side speeds that follow the commands through a first-order lag, integrated at 500 Hz, so the
//!   speeds are not constant between samples;
//! - a body that answers its tracks with lags of its own (forward 0.1 s, yaw 0.3 s: inertia),
//!   so short windows after a change of command turn less than steady driving does;
//! - encoder (side-speed) noise, reference pose noise, and a 40 ms latency of the pose stream.
//!
//! Every number is invented. Units: SI; local frame x east, y north, yaw anticlockwise.

use rand::rngs::ChaCha8Rng;
use rand::{RngExt, SeedableRng};
use rand_distr::{Distribution, Normal};
use skidroute::kinematics::{Pose, Twist};

/// Track width of the demo carrier (m).
pub const TRACK_WIDTH_M: f64 = 0.9;
/// Log rate.
pub const RATE_HZ: f64 = 50.0;
const SUBSTEPS: usize = 10;
/// Pose stream latency in samples (2 samples at 50 Hz = 40 ms).
const LATENCY_SAMPLES: usize = 2;
const SIDE_LAG_S: f64 = 0.15;
const FORWARD_LAG_S: f64 = 0.1;
const YAW_LAG_S: f64 = 0.3;
const MAX_SIDE_MPS: f64 = 2.0;
const MAX_YAW_RATE_RADPS: f64 = 1.2;

/// How one terrain really behaves (invented).
#[derive(Clone, Copy)]
pub struct TruthTerrain {
    pub name: &'static str,
    pub alpha_left: f64,
    pub alpha_right: f64,
    pub track_expansion: f64,
    /// Relative growth of the track expansion (and a fifth of it as loss of alpha) at tight turns.
    pub turn_growth: f64,
    /// Commanded curvature (1/m) at which the growth is tanh(1) = 76 % complete.
    pub turn_scale_per_m: f64,
    /// Side slip vy = -side_slip * vx * omega (s).
    pub side_slip_s: f64,
}

pub const ASPHALT: TruthTerrain = TruthTerrain {
    name: "asphalt",
    alpha_left: 0.985,
    alpha_right: 0.975,
    track_expansion: 1.12,
    turn_growth: 0.12,
    turn_scale_per_m: 1.0,
    side_slip_s: 0.01,
};
pub const GRASS: TruthTerrain = TruthTerrain {
    name: "grass",
    alpha_left: 0.95,
    alpha_right: 0.93,
    track_expansion: 1.3,
    turn_growth: 0.3,
    turn_scale_per_m: 0.8,
    side_slip_s: 0.03,
};
pub const PACKED_SNOW: TruthTerrain = TruthTerrain {
    name: "packed-snow",
    alpha_left: 0.9,
    alpha_right: 0.9,
    track_expansion: 1.5,
    turn_growth: 0.6,
    turn_scale_per_m: 0.6,
    side_slip_s: 0.05,
};

impl TruthTerrain {
    /// The true body twist for actual side speeds.
    pub fn twist(&self, left_mps: f64, right_mps: f64) -> Twist {
        let sum = left_mps + right_mps;
        let kappa =
            if sum.abs() < 1e-9 { f64::INFINITY } else { (2.0 * (right_mps - left_mps) / (TRACK_WIDTH_M * sum)).abs() };
        let g = (kappa / self.turn_scale_per_m).tanh();
        let chi = self.track_expansion * (1.0 + self.turn_growth * g);
        let loss = 1.0 - 0.2 * self.turn_growth * g;
        let (l, r) = (self.alpha_left * loss * left_mps, self.alpha_right * loss * right_mps);
        let vx = 0.5 * (l + r);
        let omega = (r - l) / (chi * TRACK_WIDTH_M);
        Twist { vx_mps: vx, vy_mps: -self.side_slip_s * vx * omega, omega_radps: omega }
    }
}

/// One logged row.
pub struct Row {
    pub t_s: f64,
    pub left_mps: f64,
    pub right_mps: f64,
    pub pose: Pose,
}

/// A driving programme of commanded (v, omega, duration) segments: straights, arcs of several
/// radii, pivot-ish turns and stops, drawn from `seed`.
pub fn programme(duration_s: f64, seed: u64) -> Vec<(f64, f64, f64)> {
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    let mut out = Vec::new();
    let mut total = 0.0;
    while total < duration_s {
        let sign = if rng.random_range(0..2) == 0 { 1.0 } else { -1.0 };
        let (v, w, dur): (f64, f64, f64) = match rng.random_range(0..10) {
            0..=2 => (rng.random_range(0.6..1.6), 0.0, rng.random_range(3.0..10.0)),
            3..=6 => {
                let radius_m: f64 = rng.random_range(1.0..12.0);
                let v: f64 = rng.random_range(0.5..1.3);
                (v, sign * v / radius_m, rng.random_range(3.0..9.0))
            }
            7 | 8 => (rng.random_range(0.05..0.2), sign * rng.random_range(0.5..1.0), rng.random_range(2.0..4.0)),
            _ => (0.0, 0.0, rng.random_range(1.0..2.0)),
        };
        out.push((v, w.clamp(-MAX_YAW_RATE_RADPS, MAX_YAW_RATE_RADPS), dur));
        total += dur;
    }
    out
}

/// Drives `programme` on `terrain` from `start` and returns the 50 Hz log rows, with a logging
/// dropout of `dropout_s` seconds in the middle (0 for none).
pub fn drive(
    terrain: &TruthTerrain,
    programme: &[(f64, f64, f64)],
    start: Pose,
    dropout_s: f64,
    seed: u64,
) -> Vec<Row> {
    drive_at(terrain, programme, start, dropout_s, seed, RATE_HZ)
}

/// [`drive`] logging at `rate_hz` (the pose latency stays two samples).
pub fn drive_at(
    terrain: &TruthTerrain,
    programme: &[(f64, f64, f64)],
    start: Pose,
    dropout_s: f64,
    seed: u64,
    rate_hz: f64,
) -> Vec<Row> {
    let mut rng = ChaCha8Rng::seed_from_u64(seed ^ 0x5eed);
    let encoder = Normal::new(0.0, 0.02).expect("valid sd");
    let position = Normal::new(0.0, 0.015).expect("valid sd");
    let heading = Normal::new(0.0, 0.3f64.to_radians()).expect("valid sd");
    let dt = 1.0 / rate_hz;
    let h = dt / SUBSTEPS as f64;
    let (mut left, mut right) = (0.0f64, 0.0f64);
    let mut pose = start;
    let mut body = Twist::default();
    let mut history: Vec<Pose> = vec![start; LATENCY_SAMPLES + 1];
    let total_s: f64 = programme.iter().map(|p| p.2).sum();
    let dropout = (0.5 * total_s, 0.5 * total_s + dropout_s);
    let mut rows = Vec::new();
    let mut k = 0usize;
    for &(v, w, dur) in programme {
        let (mut cl, mut cr) = (v - 0.5 * w * TRACK_WIDTH_M, v + 0.5 * w * TRACK_WIDTH_M);
        let over = cl.abs().max(cr.abs()) / MAX_SIDE_MPS;
        if over > 1.0 {
            cl /= over;
            cr /= over;
        }
        for _ in 0..(dur * rate_hz).round() as usize {
            let t_s = k as f64 * dt;
            if !(t_s >= dropout.0 && t_s < dropout.1) {
                let seen = history[0];
                rows.push(Row {
                    t_s,
                    left_mps: left + encoder.sample(&mut rng),
                    right_mps: right + encoder.sample(&mut rng),
                    pose: Pose::new(
                        seen.x_m + position.sample(&mut rng),
                        seen.y_m + position.sample(&mut rng),
                        seen.yaw_rad + heading.sample(&mut rng),
                    ),
                });
            }
            for _ in 0..SUBSTEPS {
                let a = h / SIDE_LAG_S;
                left += a * (cl - left);
                right += a * (cr - right);
                let steady = terrain.twist(left, right);
                body.vx_mps += h / FORWARD_LAG_S * (steady.vx_mps - body.vx_mps);
                body.omega_radps += h / YAW_LAG_S * (steady.omega_radps - body.omega_radps);
                body.vy_mps = steady.vy_mps;
                pose = pose.step(body, h);
            }
            history.remove(0);
            history.push(pose);
            k += 1;
        }
    }
    rows
}

/// Wraps an angle to (-pi, pi], as a localization system reports yaw.
pub fn wrap(a: f64) -> f64 {
    skidroute::kinematics::se2::wrap_angle(a)
}

/// CSV text of rows on one terrain (header included when `header`).
pub fn csv(rows: &[Row], terrain: &str, header: bool) -> String {
    let mut s = String::with_capacity(rows.len() * 64);
    if header {
        s.push_str("t_s,left_mps,right_mps,x_m,y_m,yaw_rad,terrain\n");
    }
    for r in rows {
        s.push_str(&format!(
            "{:.2},{:.4},{:.4},{:.4},{:.4},{:.5},{}\n",
            r.t_s,
            r.left_mps,
            r.right_mps,
            r.pose.x_m,
            r.pose.y_m,
            wrap(r.pose.yaw_rad),
            terrain
        ));
    }
    s
}

/// A log with the defects of real logs, from rows logged at 100 Hz: rows picked every 0.05 s
/// but 0.03 s or 0.07 s apart on two rows in five (irregular time steps around 20 Hz); side
/// speeds from encoders that difference their counts at 4 Hz and hold the value in between;
/// poses held at the last value through each of `pose_dropouts_s` (start s, duration s), as a
/// logger sampling a silent localization topic writes them; CR LF line endings.
pub fn defective_csv(rows: &[Row], terrain: &str, pose_dropouts_s: &[(f64, f64)], seed: u64) -> String {
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    let mut s = String::from("t_s,left_mps,right_mps,x_m,y_m,yaw_rad,terrain\r\n");
    let (mut k, mut last_update, mut held) = (0usize, 0usize, (0.0, 0.0));
    let mut pose = rows.first().map_or(Pose::default(), |r| r.pose);
    // 100 Hz rows: an encoder update every 25 rows (4 Hz).
    let update_every = 25;
    while k < rows.len() {
        let r = &rows[k];
        if k == 0 || k >= last_update + update_every {
            let span = if k == 0 { &rows[..1] } else { &rows[last_update..k] };
            let n = span.len() as f64;
            held =
                (span.iter().map(|x| x.left_mps).sum::<f64>() / n, span.iter().map(|x| x.right_mps).sum::<f64>() / n);
            last_update = k;
        }
        if !pose_dropouts_s.iter().any(|(a, d)| r.t_s >= *a && r.t_s < a + d) {
            pose = r.pose;
        }
        s.push_str(&format!(
            "{:.2},{:.4},{:.4},{:.4},{:.4},{:.5},{}\r\n",
            r.t_s,
            held.0,
            held.1,
            pose.x_m,
            pose.y_m,
            wrap(pose.yaw_rad),
            terrain
        ));
        k += match rng.random_range(0..5) {
            0 => 3,
            1 => 7,
            _ => 5,
        };
    }
    s
}
