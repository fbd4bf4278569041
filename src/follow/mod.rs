//! The path follower being predicted (docs/method.md, Following): pure pursuit on a forward-only progress
//! point, the planner's speed profile ramped at the side-acceleration limit that slows in time for
//! slower stretches ahead and stops at the end (`speed_plan`), a yaw-rate clamp, side speeds from
//! the controller's inverse model, curvature-keeping side-speed saturation and a per-side
//! acceleration limit.
//!
//! Pure pursuit: Coulter 1992, "Implementation of the pure pursuit path tracking algorithm",
//! CMU-RI-TR-92-01. Units: metres, seconds, radians; poses in the local frame.

mod speed_plan;

use crate::kinematics::{Model, MotionModel, Pose};
use crate::route::plan::Nearest;
use crate::route::{Cursor, GoalCursors, PlanPath};

pub use speed_plan::{driven_speed_mps, segment_time_s, ScaledLeg, SegmentPlan, SpeedPlan, SpeedView, CREEP_SPEED_MPS};

/// Controller limits and rates, taken from the profile.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct FollowerLimits {
    pub lookahead_m: f64,
    pub dt_s: f64,
    pub max_yaw_rate_radps: f64,
    pub max_side_speed_mps: f64,
    pub max_side_accel_mps2: f64,
    pub track_width_m: f64,
    /// Optional slow-down in turns: the largest lateral acceleration of the pursuit arc, m/s^2;
    /// infinite when the follower does not slow for turns (the default).
    pub max_lateral_accel_mps2: f64,
}

impl FollowerLimits {
    /// True when the follower slows down in turns.
    pub fn slows_in_turns(&self) -> bool {
        self.max_lateral_accel_mps2.is_finite()
    }
}

/// How far ahead, in lookaheads, a lost vehicle's progress point may move to the plan point
/// nearest to it (see [`Follower::update_progress`]).
pub const LOST_SEARCH_LOOKAHEADS: f64 = 3.0;

/// Pure-pursuit curvature to a goal at body-frame `(x_m, y_m)`: kappa = 2 y / L^2 with L the
/// distance to the goal (Coulter 1992, the arc through the goal point). A goal behind the
/// vehicle (x < 0) would give a nearly straight arc that drives away from it; there the
/// curvature is held at its value for a goal abeam, 2 / L towards the goal's side, so the
/// vehicle turns back as tightly as the yaw-rate clamp lets it.
#[inline]
pub fn pursuit_curvature(goal_x_m: f64, goal_y_m: f64) -> f64 {
    let l2 = goal_x_m * goal_x_m + goal_y_m * goal_y_m;
    if l2 <= 1e-18 {
        return 0.0;
    }
    if goal_x_m < 0.0 {
        let side = if goal_y_m < 0.0 { -1.0 } else { 1.0 };
        return side * 2.0 / l2.sqrt();
    }
    2.0 * goal_y_m / l2
}

/// Saturates side speeds at `max_mps` by scaling both together, which keeps the curvature.
#[inline]
pub fn saturate_sides(left_mps: f64, right_mps: f64, max_mps: f64) -> (f64, f64) {
    let peak = left_mps.abs().max(right_mps.abs());
    if peak > max_mps && peak > 0.0 {
        let k = max_mps / peak;
        (left_mps * k, right_mps * k)
    } else {
        (left_mps, right_mps)
    }
}

/// The side speeds one control step commands, and what they were derived from.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct Command {
    pub left_mps: f64,
    pub right_mps: f64,
    /// Forward speed after the speed profile and ramp.
    pub speed_mps: f64,
    /// Pure-pursuit curvature before the yaw-rate clamp.
    pub curvature_per_m: f64,
}

/// Follower state along one route. Create one per rollout (or per Monte Carlo sample).
#[derive(Debug, Clone)]
pub struct Follower<'a> {
    plan: &'a PlanPath,
    /// The planner's speed profile with its braking envelope.
    speeds: SpeedView<'a>,
    limits: FollowerLimits,
    state: FollowerState,
}

/// The state a follower carries from one control step to the next, to resume it later (with the
/// same plan and limits, possibly another speed plan).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct FollowerState {
    progress_m: f64,
    speed_mps: f64,
    left_mps: f64,
    right_mps: f64,
    /// Segment of the progress point, for fast plan queries.
    cursor: Cursor,
    /// Leg of the progress point.
    leg: usize,
    /// Segments of the far ends of the lookahead windows (one lookahead behind and ahead of the
    /// progress point, and where the goal search starts and ends), each walked along with the
    /// progress point so no window query searches for its ends. Results never depend on them.
    behind: Cursor,
    ahead: Cursor,
    goal: GoalCursors,
}

impl FollowerState {
    /// Arc length of the progress point.
    pub fn progress_m(&self) -> f64 {
        self.progress_m
    }
}

impl<'a> Follower<'a> {
    /// The follower's state now.
    pub fn state(&self) -> FollowerState {
        self.state
    }

    /// A follower resumed from `state`, driving the speed plan `speeds`.
    pub fn resume(plan: &'a PlanPath, speeds: SpeedView<'a>, limits: FollowerLimits, state: FollowerState) -> Self {
        Follower { plan, speeds, limits, state }
    }

    /// A follower at rest at the start of `plan`, driving the speed plan `speeds` (built for
    /// this plan and the same acceleration limit as `limits`).
    pub fn new(plan: &'a PlanPath, speeds: SpeedView<'a>, limits: FollowerLimits) -> Self {
        let state = FollowerState {
            progress_m: 0.0,
            speed_mps: 0.0,
            left_mps: 0.0,
            right_mps: 0.0,
            cursor: Cursor::default(),
            leg: 0,
            behind: Cursor::default(),
            ahead: Cursor::default(),
            goal: GoalCursors::default(),
        };
        Follower { plan, speeds, limits, state }
    }

    /// Nearest plan point to `pose` within a lookahead either side of the progress point: the
    /// deviation from the plan (a loop's far side never counts).
    #[inline]
    pub fn deviation(&mut self, pose: Pose) -> Nearest {
        let st = &mut self.state;
        let (s, w) = (st.progress_m, self.limits.lookahead_m);
        let seed = st.cursor.segment();
        self.plan.nearest_in_window([pose.x_m, pose.y_m], s - w, s + w, seed, &mut st.behind, &mut st.ahead)
    }

    /// Arc length of the progress point.
    pub fn progress_m(&self) -> f64 {
        self.state.progress_m
    }

    /// Leg of the progress point.
    pub fn leg(&self) -> usize {
        self.state.leg
    }

    /// Moves the progress point forward to the nearest plan point within one lookahead ahead;
    /// it never moves back, so loops and self-crossings are followed in order. While the
    /// vehicle is farther than a lookahead from the plan it is lost: the progress point then
    /// moves only to a plan point within [`LOST_SEARCH_LOOKAHEADS`] lookaheads ahead that is
    /// nearer than where it stands and is a true nearest point (not the end of the searched
    /// stretch, which would drag it along the plan). So a vehicle that overshoots a corner it
    /// cannot turn rejoins the next side where it is nearest, instead of circling back to a goal
    /// inside its turning circle; one far off a straight steers back to the point abeam.
    #[inline]
    pub fn update_progress(&mut self, pose: Pose) {
        let st = &mut self.state;
        let (p, l) = (st.progress_m, self.limits.lookahead_m);
        let xy = [pose.x_m, pose.y_m];
        let seed = st.cursor.segment();
        let near = self.plan.nearest_in_window(xy, p, p + l, seed, &mut st.cursor, &mut st.ahead);
        if near.s_m > p && near.distance_m <= l {
            st.progress_m = near.s_m;
        } else if near.distance_m > l {
            let to_m = (p + LOST_SEARCH_LOOKAHEADS * l).min(self.plan.length_m());
            let mut cursor = st.cursor;
            let far = self.plan.nearest_within_at(xy, p, to_m, &mut cursor);
            let interior = far.s_m < to_m - 1e-9 || to_m >= self.plan.length_m();
            let here = self.plan.nearest_within_at(xy, p, p, &mut cursor);
            if far.s_m > p && interior && far.distance_m < here.distance_m - 1e-9 {
                st.progress_m = far.s_m;
            }
        }
        st.leg = self.plan.leg_at_cursor(st.progress_m, &mut st.cursor);
    }

    /// Target speed at the progress point: the planner's speed there (linear in arc length
    /// between its points), limited so the vehicle, braking at the acceleration limit a, keeps
    /// every slower target ahead, sqrt(v(s')^2 + 2 a (s' - s)) for all s' >= s (the braking
    /// envelope of [`SpeedPlan`], O(1) here), and stops at the end, sqrt(2 a d). Never below the
    /// creep speed, so the vehicle always reaches the end.
    #[inline]
    fn target_speed_mps(&self) -> f64 {
        let a = self.limits.max_side_accel_mps2;
        let mut cursor = self.state.cursor;
        let i = self.plan.segment_at_cursor(self.state.progress_m, &mut cursor);
        let (s0, s1) = self.plan.segment_bounds_m(i);
        let v = self.speeds.target_mps(i, self.state.progress_m - s0, s1 - s0).max(CREEP_SPEED_MPS);
        let remaining = (self.plan.length_m() - self.state.progress_m).max(0.0);
        v.min((2.0 * a * remaining).sqrt().max(CREEP_SPEED_MPS))
    }

    /// The planner's speed (without the envelope) at the progress point.
    pub fn planned_speed_mps(&self) -> f64 {
        let mut cursor = self.state.cursor;
        let i = self.plan.segment_at_cursor(self.state.progress_m, &mut cursor);
        let (s0, s1) = self.plan.segment_bounds_m(i);
        self.speeds.planned_mps(i, self.state.progress_m - s0, s1 - s0)
    }

    /// One control step: pure pursuit on `pose` (the pose the controller believes), then the
    /// speed ramp, yaw-rate clamp, inverse model, saturation and per-side acceleration limit.
    #[inline]
    pub fn command(&mut self, pose: Pose, controller: &Model) -> Command {
        self.command_capped(pose, controller, |_| f64::INFINITY)
    }

    /// [`Follower::command`] with a speed cap that depends on the pursuit curvature (the
    /// simulation passes the traction part of the slow-down in turns through it).
    ///
    /// Slow-down in turns (optional, `max_lateral_accel_mps2`; common practice in path
    /// followers, no source): the target speed is limited to sqrt(a_max / |kappa|) for the
    /// pursuit arc's curvature kappa, which looks one lookahead ahead, and to `cap(kappa)`; the
    /// speed then ramps to it at the side-acceleration limit like any other target.
    #[inline]
    pub fn command_capped(&mut self, pose: Pose, controller: &Model, cap: impl Fn(f64) -> f64) -> Command {
        self.command_capped_with(pose, pose.yaw_rad.sin_cos(), controller, cap)
    }

    /// [`Follower::command_capped`] given `(sin, cos)` of the pose's yaw (the simulation computes
    /// them once a step for this and for the pose's step; same result to the bit).
    #[inline]
    pub fn command_capped_with(
        &mut self,
        pose: Pose,
        sin_cos_yaw: (f64, f64),
        controller: &Model,
        cap: impl Fn(f64) -> f64,
    ) -> Command {
        let lim = self.limits;
        let st = &mut self.state;
        let goal = self.plan.pursuit_goal_within(
            [pose.x_m, pose.y_m],
            st.progress_m,
            lim.lookahead_m,
            3.0 * lim.lookahead_m,
            st.cursor,
            &mut st.goal,
        );
        let (gx, gy) = pose.to_body_with(goal[0], goal[1], sin_cos_yaw);
        let kappa = pursuit_curvature(gx, gy);
        let dv = lim.max_side_accel_mps2 * lim.dt_s;
        let mut target = self.target_speed_mps();
        if lim.slows_in_turns() && kappa.abs() > 1e-9 {
            let lateral = (lim.max_lateral_accel_mps2 / kappa.abs()).sqrt();
            target = target.min(lateral.min(cap(kappa)).max(CREEP_SPEED_MPS));
        }
        self.state.speed_mps += (target - self.state.speed_mps).clamp(-dv, dv);
        let omega = (kappa * self.state.speed_mps).clamp(-lim.max_yaw_rate_radps, lim.max_yaw_rate_radps);
        let half = 0.5 * omega * lim.track_width_m;
        let (l, r) = controller
            .inverse(self.state.speed_mps, omega)
            .unwrap_or((self.state.speed_mps - half, self.state.speed_mps + half));
        let (l, r) = saturate_sides(l, r, lim.max_side_speed_mps);
        self.state.left_mps += (l - self.state.left_mps).clamp(-dv, dv);
        self.state.right_mps += (r - self.state.right_mps).clamp(-dv, dv);
        Command {
            left_mps: self.state.left_mps,
            right_mps: self.state.right_mps,
            speed_mps: self.state.speed_mps,
            curvature_per_m: kappa,
        }
    }

    /// True once the vehicle has passed the normal through the last plan point (with its
    /// progress point within a lookahead of the end), or has stopped within 0.2 m of it.
    #[inline]
    pub fn finished(&self, pose: Pose) -> bool {
        let total = self.plan.length_m();
        if self.state.progress_m < total - self.limits.lookahead_m {
            return false;
        }
        let end = self.plan.point_at(total);
        let dir = self.plan.direction_at(total);
        let (ex, ey) = (pose.x_m - end[0], pose.y_m - end[1]);
        let passed = ex * dir[0] + ey * dir[1] >= 0.0;
        let stopped_near =
            self.state.left_mps.abs().max(self.state.right_mps.abs()) < 1e-3 && (ex * ex + ey * ey).sqrt() < 0.2;
        passed || stopped_near
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    #[test]
    fn pure_pursuit_reference_curvature() {
        // Coulter 1992 (CMU-RI-TR-92-01): curvature 2 y / L^2; goal (3, 1) in the body frame
        // gives 2 * 1 / 10 = 0.2 1/m.
        assert_relative_eq!(pursuit_curvature(3.0, 1.0), 0.2, epsilon = 1e-12);
        assert_relative_eq!(pursuit_curvature(3.0, -1.0), -0.2, epsilon = 1e-12);
        assert_eq!(pursuit_curvature(0.0, 0.0), 0.0);
    }

    #[test]
    fn goal_behind_turns_towards_it_at_the_abeam_curvature() {
        // Continuous at the abeam goal: 2 y / L^2 = 2 / L for x = 0.
        assert_relative_eq!(pursuit_curvature(0.0, 2.0), 1.0, epsilon = 1e-12);
        assert_relative_eq!(pursuit_curvature(-1e-9, 2.0), 1.0, epsilon = 1e-6);
        assert_relative_eq!(pursuit_curvature(-3.0, -0.1), -2.0 / (9.01_f64).sqrt(), epsilon = 1e-12);
    }

    #[test]
    fn saturation_keeps_curvature() {
        let (l, r) = saturate_sides(1.5, 3.0, 2.0);
        assert_relative_eq!(r, 2.0);
        assert_relative_eq!(l, 1.0);
        assert_relative_eq!(r / l, 3.0 / 1.5);
        assert_eq!(saturate_sides(0.5, -0.7, 2.0), (0.5, -0.7));
    }

    fn limits() -> FollowerLimits {
        FollowerLimits {
            lookahead_m: 1.5,
            dt_s: 0.05,
            max_yaw_rate_radps: 1.2,
            max_side_speed_mps: 2.0,
            max_side_accel_mps2: 1.0,
            track_width_m: 0.9,
            max_lateral_accel_mps2: f64::INFINITY,
        }
    }

    #[test]
    fn speed_ramps_at_the_acceleration_limit_and_sides_respect_limits() {
        let plan = PlanPath::from_parts(vec![[0.0, 0.0], [50.0, 0.0]], &[0], None);
        let speeds = SpeedPlan::per_leg(&plan, &[1.5], &[0.5], &limits());
        let mut f = Follower::new(&plan, speeds.view(), limits());
        let model = Model::ideal(0.9);
        let mut prev = Command::default();
        for k in 1..=10 {
            let c = f.command(Pose::default(), &model);
            assert_relative_eq!(c.speed_mps, 0.05 * k as f64, epsilon = 1e-12);
            assert!((c.left_mps - prev.left_mps).abs() <= 0.05 + 1e-12);
            assert!((c.right_mps - prev.right_mps).abs() <= 0.05 + 1e-12);
            prev = c;
        }
    }

    #[test]
    fn yaw_rate_is_clamped() {
        // A goal far to the left asks for a tight turn; the side-speed difference is bounded by
        // the yaw-rate clamp once the speed has ramped up.
        let plan = PlanPath::from_parts(vec![[0.0, 0.0], [0.1, 0.0], [0.1, 30.0]], &[0], None);
        let mut lim = limits();
        lim.max_side_accel_mps2 = 100.0;
        let speeds = SpeedPlan::per_leg(&plan, &[2.0], &[0.5], &lim);
        let mut f = Follower::new(&plan, speeds.view(), lim);
        let model = Model::ideal(0.9);
        let c = f.command(Pose::default(), &model);
        let omega = (c.right_mps - c.left_mps) / 0.9;
        assert!(omega <= 1.2 + 1e-9, "omega {omega}");
    }

    #[test]
    fn progress_never_moves_back() {
        let plan = PlanPath::from_parts(vec![[0.0, 0.0], [10.0, 0.0]], &[0], None);
        let speeds = SpeedPlan::per_leg(&plan, &[1.0], &[0.5], &limits());
        let mut f = Follower::new(&plan, speeds.view(), limits());
        f.update_progress(Pose::new(1.0, 0.2, 0.0));
        let s = f.progress_m();
        assert_relative_eq!(s, 1.0);
        f.update_progress(Pose::new(0.5, 0.0, 0.0));
        assert_eq!(f.progress_m(), s);
    }
}
