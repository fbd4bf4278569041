//! One Monte Carlo sample of a drive with lost localization (docs/method.md, Drift).
//!
//! The follower (docs/method.md, Following) steers on the pose the vehicle *believes*; the measured side speeds
//! it commands move the *true* pose through the sample's drawn terrain model plus random-walk
//! noise, and move the believed pose through the odometry model (dead reckoning). While the
//! follower's progress point lies before the start of the leg where localization is lost, the
//! localization corrects the belief each step (believed = true).
//!
//! Noise: per step, with ds the distance the true vehicle travels in the step, a heading
//! increment N(0, q_h ds), an along-track increment N(0, q_a ds) and a cross-track increment
//! N(0, q_c ds) (q = intensity^2, intensities in rad/sqrt(m) and m/sqrt(m)), entered as a constant
//! twist increment over the step. This is the random-walk model of Kelly 2004, "Linearized
//! error propagation in odometry", IJRR 23(2), whose heading walk of intensity q on a straight
//! line gives a cross-track variance q d^3 / 3 at distance d.
//!
//! Units: seconds, metres, radians, local frame. The step loop allocates nothing.

use rand::rngs::ChaCha8Rng;
use rand::SeedableRng;
use rand_distr::{Distribution, StandardNormal};

use super::draw::ParamSampler;
use super::gyro::Gyro;
use super::pose::CarriedPose;
use crate::follow::Follower;
use crate::kinematics::{Model, MotionModel, Pose, Twist};
use crate::rollout::{ground_twist, RouteDrive};
use crate::route::LegSpan;

/// Random-walk noise intensities of a terrain.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct Noise {
    pub heading_rad_per_sqrt_m: f64,
    pub along_m_per_sqrt_m: f64,
    pub cross_m_per_sqrt_m: f64,
}

impl Noise {
    fn is_zero(&self) -> bool {
        self.heading_rad_per_sqrt_m == 0.0 && self.along_m_per_sqrt_m == 0.0 && self.cross_m_per_sqrt_m == 0.0
    }
}

/// Everything a sample needs, resolved once per run.
#[derive(Debug, Clone)]
pub struct SampleSetup {
    pub drive: RouteDrive,
    /// The gyro the believed heading follows, when the heading source is the gyro.
    pub gyro: Option<Gyro>,
    /// One sampler per distinct terrain of the route, in order of first appearance.
    pub samplers: Vec<ParamSampler>,
    /// Index into `samplers` of each leg's terrain.
    pub leg_terrain: Vec<usize>,
    /// Dead-reckoning model of each leg (used on the leg the vehicle believes it is on).
    pub odometry: Vec<Model>,
    /// Noise of each leg's terrain.
    pub noise: Vec<Noise>,
    /// 1 / length^2 of each plan segment (see [`inverse_lengths2`]).
    pub segment_inv_len2: Vec<f64>,
    /// Arc length where localization is lost.
    pub loss_start_m: f64,
    pub time_limit_s: f64,
    /// Spacing of the points kept of a true path (for plots), metres.
    pub path_spacing_m: f64,
}

/// Squared distance from `p` to the segment a-b, m^2, given `inv_len2` = 1 / |b - a|^2 (0 for
/// a zero-length segment).
#[inline]
fn segment_distance2(p: [f64; 2], a: [f64; 2], b: [f64; 2], inv_len2: f64) -> f64 {
    let (dx, dy) = (b[0] - a[0], b[1] - a[1]);
    let t = (((p[0] - a[0]) * dx + (p[1] - a[1]) * dy) * inv_len2).clamp(0.0, 1.0);
    let (ex, ey) = (p[0] - a[0] - t * dx, p[1] - a[1] - t * dy);
    ex * ex + ey * ey
}

/// 1 / |b - a|^2 of every segment of `points` (0 for a zero-length one), for [`SegmentCursor`].
pub fn inverse_lengths2(points: &[[f64; 2]]) -> Vec<f64> {
    points
        .windows(2)
        .map(|w| {
            let (dx, dy) = (w[1][0] - w[0][0], w[1][1] - w[0][1]);
            let len2 = dx * dx + dy * dy;
            if len2 > 0.0 {
                1.0 / len2
            } else {
                0.0
            }
        })
        .collect()
}

/// Where the true vehicle is along the plan, for the terrain under it: the plan segment it is
/// nearest to, tracked forward only from one segment to the next (so loops are taken in
/// order). Constant time per step; no search over the plan.
#[derive(Debug, Clone, Copy, Default)]
struct SegmentCursor {
    segment: usize,
}

impl SegmentCursor {
    #[inline]
    fn advance(&mut self, points: &[[f64; 2]], inv_len2: &[f64], p: [f64; 2]) {
        while self.segment + 2 < points.len() && self.segment + 1 < inv_len2.len() {
            let i = self.segment;
            let here = segment_distance2(p, points[i], points[i + 1], inv_len2[i]);
            let next = segment_distance2(p, points[i + 1], points[i + 2], inv_len2[i + 1]);
            if next < here {
                self.segment += 1;
            } else {
                break;
            }
        }
    }
}

/// Error at one leg end: true minus believed, east and north (m), and yaw (rad).
pub type EndError = [f64; 3];

/// What one sample produced.
#[derive(Debug, Clone)]
pub struct SampleOutcome {
    /// Error at each leg end, `None` for leg ends the sample did not reach.
    pub ends: Vec<Option<EndError>>,
    pub timed_out: bool,
    /// Steps simulated.
    pub steps: u64,
    /// The true path, when asked for.
    pub path: Option<Vec<[f64; 2]>>,
}

fn end_error(truth: Pose, believed: Pose) -> EndError {
    [
        truth.x_m - believed.x_m,
        truth.y_m - believed.y_m,
        crate::kinematics::se2::wrap_angle(truth.yaw_rad - believed.yaw_rad),
    ]
}

/// Runs sample `index` of the run seeded `seed`: its RNG is ChaCha8 seeded with `seed` on
/// stream `index`, so the result does not depend on which thread runs it or when.
pub fn run_sample(setup: &SampleSetup, seed: u64, index: u64, keep_path: bool) -> SampleOutcome {
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    rng.set_stream(index);
    let drawn: Vec<Model> = setup.samplers.iter().map(|s| s.draw(&mut rng)).collect();
    let gyro_bias_radps = setup.gyro.map_or(0.0, |g| g.draw_bias(&mut rng));
    let actual: Vec<&Model> = setup.leg_terrain.iter().map(|&t| &drawn[t]).collect();
    let single_terrain = setup.samplers.len() <= 1;

    let drive = &setup.drive;
    let plan = &drive.plan;
    let n_legs = plan.leg_count();
    let dt = drive.limits.dt_s;
    let inv_dt = 1.0 / dt;
    let leg_end_m: Vec<f64> = (0..n_legs).map(|i| plan.leg_bounds_m(i).1).collect();

    let start = plan.point_at(0.0);
    let dir = plan.direction_at(0.0);
    let mut truth = CarriedPose::new(Pose::new(start[0], start[1], dir[1].atan2(dir[0])));
    let mut believed = truth;
    let mut follower = Follower::new(plan, drive.speeds.view(), drive.limits);
    let mut ends: Vec<Option<EndError>> = vec![None; n_legs];
    let mut path = keep_path.then(|| {
        let cap = (3.0 * plan.length_m() / setup.path_spacing_m) as usize + 64;
        let mut v = Vec::with_capacity(cap);
        v.push([truth.pose.x_m, truth.pose.y_m]);
        v
    });
    let mut since_point_m = 0.0;
    let mut cursor = SegmentCursor::default();
    let mut span = LegSpan::default();
    let points = plan.points();
    let mut next_end = 0;
    let mut k: u64 = 0;
    let timed_out = loop {
        follower.update_progress(believed.pose);
        let s = follower.progress_m();
        while next_end + 1 < n_legs && s >= leg_end_m[next_end] {
            ends[next_end] = Some(end_error(truth.pose, believed.pose));
            next_end += 1;
        }
        if k > 0 && follower.finished(believed.pose) {
            if let Some(last) = ends.last_mut() {
                *last = Some(end_error(truth.pose, believed.pose));
            }
            break false;
        }
        if k as f64 * dt > setup.time_limit_s {
            break true;
        }
        let localized = s < setup.loss_start_m;
        let leg = follower.leg();
        let cmd = follower
            .command_capped_with(believed.pose, believed.sin_cos, &drive.legs[leg].controller, |_| f64::INFINITY);
        // The terrain under the true vehicle, at the plan point it is nearest to, blended over the
        // contact length (the rule of the check: rollout::ground_twist).
        let (true_leg, mut twist) = if single_terrain {
            (leg, actual[leg].twist(cmd.left_mps, cmd.right_mps))
        } else {
            let p = [truth.pose.x_m, truth.pose.y_m];
            cursor.advance(points, &setup.segment_inv_len2, p);
            let s_true = plan.arc_length_on_segment(cursor.segment, p);
            let under = span.terrain_share(plan, s_true, drive.vehicle.contact_length_m);
            let (rear, front) = (actual[under.rear], actual[under.front]);
            (under.dominant(), ground_twist(rear, front, under.front_share, cmd.left_mps, cmd.right_mps))
        };
        // sqrt of the sum of squares rather than hypot: no overflow is possible at vehicle speeds.
        let speed_mps = (twist.vx_mps * twist.vx_mps + twist.vy_mps * twist.vy_mps).sqrt();
        let ds_m = speed_mps * dt;
        add_noise(&mut twist, &setup.noise[true_leg], speed_mps, inv_dt, &mut rng);
        truth.step(twist, dt);
        if localized {
            believed = truth;
        } else {
            let mut odo = setup.odometry[leg].twist(cmd.left_mps, cmd.right_mps);
            if let Some(g) = &setup.gyro {
                odo.omega_radps = g.measure(twist.omega_radps, gyro_bias_radps, dt, &mut rng);
            }
            believed.step(odo, dt);
        }
        if let Some(p) = path.as_mut() {
            since_point_m += ds_m;
            if since_point_m >= setup.path_spacing_m && p.len() < p.capacity() {
                p.push([truth.pose.x_m, truth.pose.y_m]);
                since_point_m = 0.0;
            }
        }
        k += 1;
    };
    if let Some(p) = path.as_mut() {
        if p.len() < p.capacity() {
            p.push([truth.pose.x_m, truth.pose.y_m]);
        }
    }
    SampleOutcome { ends, timed_out, steps: k, path }
}

/// Adds the random-walk increments of a step of dt seconds at `speed_mps` (length ds = v dt) as
/// a constant twist increment over the step (variance proportional to the distance travelled;
/// Kelly 2004): increments of standard deviation q sqrt(ds) entered as rates, q sqrt(ds) / dt =
/// q sqrt(v / dt). `inv_dt` is 1 / dt.
#[inline]
fn add_noise(twist: &mut Twist, noise: &Noise, speed_mps: f64, inv_dt: f64, rng: &mut ChaCha8Rng) {
    if speed_mps <= 0.0 || noise.is_zero() {
        return;
    }
    let scale = (speed_mps * inv_dt).sqrt();
    let zh: f64 = StandardNormal.sample(rng);
    let za: f64 = StandardNormal.sample(rng);
    let zc: f64 = StandardNormal.sample(rng);
    twist.omega_radps += noise.heading_rad_per_sqrt_m * scale * zh;
    twist.vx_mps += noise.along_m_per_sqrt_m * scale * za;
    twist.vy_mps += noise.cross_m_per_sqrt_m * scale * zc;
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn cursor_follows_corners_and_hairpins_forward_only() {
        // An L (east then north) followed by a hairpin back south one metre further east.
        let pts = [[0.0, 0.0], [10.0, 0.0], [10.0, 10.0], [11.0, 10.0], [11.0, 0.0]];
        let inv = inverse_lengths2(&pts);
        let mut c = SegmentCursor::default();
        // Cutting the corner inside, as pure pursuit does: x < 10 while turning north.
        for p in [[5.0, 0.1], [9.0, 0.5], [9.6, 2.0], [9.8, 5.0]] {
            c.advance(&pts, &inv, p);
        }
        assert_eq!(c.segment, 1);
        // Near the hairpin's return leg, the forward-only cursor does not jump to it early.
        c.advance(&pts, &inv, [10.4, 5.0]);
        assert_eq!(c.segment, 1);
        for p in [[10.2, 9.8], [10.8, 9.9], [11.0, 8.0]] {
            c.advance(&pts, &inv, p);
        }
        assert_eq!(c.segment, 3);
        // Far off the plan it still moves on only one segment at a time and never back.
        c.advance(&pts, &inv, [-50.0, -50.0]);
        assert_eq!(c.segment, 3);
    }
}
