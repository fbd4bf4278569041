//! Closed-loop simulation of a route: the follower commands side speeds from the pose, the
//! terrain model of the leg under the vehicle's progress point turns them into a body twist,
//! traction bounds that motion (docs/method.md, Following: a turn tighter than the tracks can
//! push is widened, a climb the ground cannot hold stalls the vehicle, a descent it cannot hold
//! makes it slide), and the exact SE(2) step moves the vehicle (docs/method.md, Integration).
//! The trace keeps what the assessment and the effort estimate need: pose, leg, progress,
//! deviation, side speeds, the actual twist, the effort and whether traction bound the step, at
//! every control step.
//!
//! Units: seconds, metres, radians, local frame. The step loop allocates nothing (the trace is
//! reserved up front from the time bound).

use crate::effort::{effort_from_forces, effort_step, EffortStep, EffortVehicle, Ground, Slope};
use crate::follow::{driven_speed_mps, segment_time_s, Follower, FollowerLimits, FollowerState, SpeedPlan, SpeedView};
use crate::kinematics::{Model, MotionModel, Pose, Twist};
use crate::route::{Cursor, Leg, LegSpan, PlanPath, Route, TerrainShare};
use crate::turn_limit::{limit_step_keeping_forces, turn_speed_limit_mps, StepLimit};
use crate::vehicle::Profile;

/// How one leg is driven: the terrain's actual model, the model the controller inverts, and
/// the leg's nominal speed and corridor (its profile's largest speed and smallest corridor; the
/// profiles themselves are in [`RouteDrive::speeds`]).
#[derive(Debug, Clone, PartialEq)]
pub struct LegDrive {
    pub terrain: String,
    pub actual: Model,
    pub controller: Model,
    pub speed_mps: f64,
    pub corridor_m: f64,
    /// Ground coefficients for the effort model.
    pub ground: Ground,
}

/// Everything a rollout of one route needs.
#[derive(Debug, Clone)]
pub struct RouteDrive {
    pub plan: PlanPath,
    pub legs: Vec<LegDrive>,
    /// The planner's speed and corridor at every plan point, with the follower's braking
    /// envelope (built for `limits`' acceleration limit and top side speed).
    pub speeds: SpeedPlan,
    pub limits: FollowerLimits,
    /// Spacing at which the plan's curvature is measured (docs/method.md, Plan curvature).
    pub curvature_scale_m: f64,
    /// Vehicle constants for the effort model.
    pub vehicle: EffortVehicle,
}

impl RouteDrive {
    /// Resolves the route's legs against the profile. The caller has checked the terrains
    /// (`route::check_terrains`); a leg on an unknown terrain is driven with the ideal model.
    pub fn new(route: &Route, profile: &Profile) -> RouteDrive {
        let plan = PlanPath::new(route);
        let v = &profile.vehicle;
        let legs: Vec<LegDrive> = route
            .legs
            .iter()
            .map(|leg| {
                let terrain = profile.terrain.get(&leg.terrain);
                let ground = terrain.map(Ground::from_terrain).unwrap_or(Ground {
                    rolling_resistance: 0.0,
                    traction_coefficient: f64::INFINITY,
                    lateral_resistance_max: 0.0,
                });
                let actual = terrain.map(|t| t.model.clone()).unwrap_or_else(|| Model::ideal(v.track_width_m));
                let controller =
                    terrain.map(|t| profile.controller_model(t)).unwrap_or_else(|| Model::ideal(v.track_width_m));
                LegDrive {
                    terrain: leg.terrain.clone(),
                    actual,
                    controller,
                    speed_mps: leg.speed_mps.unwrap_or(v.cruise_speed_mps),
                    corridor_m: leg.corridor_m.unwrap_or(profile.follower.corridor_m),
                    ground,
                }
            })
            .collect();
        let limits = FollowerLimits {
            lookahead_m: profile.follower.lookahead_m,
            dt_s: 1.0 / profile.follower.control_rate_hz,
            max_yaw_rate_radps: v.max_yaw_rate_radps,
            max_side_speed_mps: v.max_side_speed_mps,
            max_side_accel_mps2: v.max_side_accel_mps2,
            track_width_m: v.track_width_m,
            max_lateral_accel_mps2: profile.follower.max_lateral_accel_mps2.unwrap_or(f64::INFINITY),
        };
        let speeds = SpeedPlan::from_route(route, &plan, v.cruise_speed_mps, profile.follower.corridor_m, &limits);
        RouteDrive {
            plan,
            legs,
            speeds,
            limits,
            curvature_scale_m: profile.follower.curvature_scale_m,
            vehicle: EffortVehicle::from_profile(profile),
        }
    }

    /// Time bound for a rollout: three times the planned driving time at the reachable planned
    /// speeds (the profile's speed at every point, between the creep speed and the top side
    /// speed), plus a minute for ramps. A vehicle that stalls or circles is stopped there.
    pub fn time_limit_s(&self) -> f64 {
        self.time_limit_with(self.speeds.view())
    }

    /// [`RouteDrive::time_limit_s`] for the speed plan `speeds`.
    pub fn time_limit_with(&self, speeds: SpeedView) -> f64 {
        time_bound_s(speeds.total_time_s())
    }

    /// The drives of the legs under the rear and front of the contact patch; the rear one twice
    /// when both are on the same terrain, so nothing is blended.
    #[inline]
    pub fn terrain_pair(&self, under: TerrainShare) -> (&LegDrive, &LegDrive) {
        let rear = &self.legs[under.rear];
        let front = &self.legs[under.front];
        if under.front_share <= 0.0 || rear.terrain == front.terrain {
            (rear, rear)
        } else {
            (rear, front)
        }
    }

    /// The ground coefficients under a contact patch centred at arc length `s_m` (blended across
    /// a terrain boundary, as the simulation blends them).
    pub fn ground_at(&self, s_m: f64) -> Ground {
        self.ground_in(s_m, &mut LegSpan::default())
    }

    /// [`RouteDrive::ground_at`] remembering the leg stretch in `span`: O(1) for arc lengths
    /// that move little between calls. Same values.
    #[inline]
    pub fn ground_in(&self, s_m: f64, span: &mut LegSpan) -> Ground {
        let under = span.terrain_share(&self.plan, s_m, self.vehicle.contact_length_m);
        let (rear, front) = self.terrain_pair(under);
        rear.ground.blend(&front.ground, under.front_share)
    }

    /// Most control steps the rollout can take: the time bound times the control rate.
    pub fn step_bound(&self) -> f64 {
        (self.time_limit_s() / self.limits.dt_s).ceil() + 1.0
    }
}

/// The twist side speeds `(left_mps, right_mps)` produce on the ground under the contact patch
/// (docs/method.md, Following: terrain changes): where the patch straddles a boundary, the two
/// terrains' twists blended linearly with the share of the patch on the front one, so a change
/// of terrain takes hold over the contact length (the wheelbase for wheels) instead of in one
/// control step. One rule for the check and the drift simulation.
#[inline]
pub fn ground_twist(rear: &Model, front: &Model, front_share: f64, left_mps: f64, right_mps: f64) -> Twist {
    let a = rear.twist(left_mps, right_mps);
    if front_share <= 0.0 || std::ptr::eq(rear, front) {
        return a;
    }
    let b = front.twist(left_mps, right_mps);
    if front_share >= 1.0 {
        return b;
    }
    let w = front_share;
    Twist {
        vx_mps: a.vx_mps + w * (b.vx_mps - a.vx_mps),
        vy_mps: a.vy_mps + w * (b.vy_mps - a.vy_mps),
        omega_radps: a.omega_radps + w * (b.omega_radps - a.omega_radps),
    }
}

/// The time bound of [`RouteDrive::time_limit_s`] from the planned driving time.
fn time_bound_s(planned_s: f64) -> f64 {
    3.0 * planned_s + 60.0
}

/// Planned driving time of `leg` with its speeds times `factor` (the cruise speed where it
/// gives none), each between the creep speed and the top side speed and linear in arc length
/// between points: the time [`SpeedPlan`] gives the same leg.
fn leg_time_s(leg: &Leg, profile: &Profile, factor: f64) -> f64 {
    let top = profile.vehicle.max_side_speed_mps;
    let v =
        |i: usize| driven_speed_mps(leg.speed_at_point(i).unwrap_or(profile.vehicle.cruise_speed_mps) * factor, top);
    leg.points
        .windows(2)
        .enumerate()
        .map(|(k, w)| segment_time_s(crate::route::plan::dist(w[0], w[1]), v(k), v(k + 1)))
        .sum()
}

/// The step bound of a route's rollout under `profile` ([`RouteDrive::step_bound`]), from the
/// route alone, so a route can be refused before anything is simulated.
pub fn step_bound(route: &Route, profile: &Profile) -> f64 {
    let planned_s: f64 = route.legs.iter().map(|leg| leg_time_s(leg, profile, 1.0)).sum();
    (time_bound_s(planned_s) * profile.follower.control_rate_hz).ceil() + 1.0
}

/// For every leg in turn, the step bound of the route's rollout with that leg's speed profile
/// scaled so its largest value is `speed_mps` and the others at their planned speeds (the
/// simulations of the margin search, `crate::margin`, are bounded by these), from the route
/// alone.
pub fn step_bounds_with_each_leg_at(route: &Route, profile: &Profile, speed_mps: f64) -> Vec<f64> {
    let own: Vec<f64> = route.legs.iter().map(|leg| leg_time_s(leg, profile, 1.0)).collect();
    route
        .legs
        .iter()
        .enumerate()
        .map(|(i, leg)| {
            let nominal = leg.speed_mps.unwrap_or(profile.vehicle.cruise_speed_mps);
            let scaled = leg_time_s(leg, profile, speed_mps / nominal);
            let planned_s: f64 = own.iter().enumerate().map(|(j, &t)| if j == i { scaled } else { t }).sum();
            (time_bound_s(planned_s) * profile.follower.control_rate_hz).ceil() + 1.0
        })
        .collect()
}

/// Steps reserved for the trace up front (about 190 MB of address space, touched only as the
/// trace fills); longer rollouts grow it (a few reallocations in all, never one per step), so a
/// pathological time bound cannot reserve gigabytes.
const MAX_RESERVED_STEPS: usize = 1 << 20;

/// One control step of the trace.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct Step {
    pub t_s: f64,
    pub pose: Pose,
    /// Leg under the progress point (0-based).
    pub leg: usize,
    pub progress_m: f64,
    /// Distance to the nearest plan point near the progress point.
    pub deviation_m: f64,
    /// Signed lateral offset, positive left of the plan.
    pub offset_m: f64,
    pub left_mps: f64,
    pub right_mps: f64,
    /// Actual body twist over the step that starts here.
    pub twist: Twist,
    /// Forward acceleration over the step that ends here, m/s^2.
    pub accel_mps2: f64,
    /// Thrust, power and grade over the step that starts here.
    pub effort: EffortStep,
    /// How traction, the thrust rating or the power rating bound the motion of this step.
    pub limit: StepLimit,
}

impl Step {
    /// True when traction, the thrust rating or the power rating changed the motion of this step
    /// (the trace's `traction_limited` column).
    pub fn traction_limited(&self) -> bool {
        self.limit.is_limited()
    }
}

/// How a rollout ended.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Outcome {
    Reached,
    /// The time bound ran out (the vehicle stalled or circled) at this progress.
    TimedOut {
        limit_s: f64,
        progress_m: f64,
    },
    /// The step budget ([`roll_out_within`]) ran out before the time bound, at this progress.
    StepBudget {
        max_steps: u64,
        progress_m: f64,
    },
    /// Uphill, even holding still needed more thrust than traction (or the rating) gives: the
    /// vehicle stalled here and the simulation ends (docs/method.md, Following).
    Stalled {
        progress_m: f64,
        grade_rad: f64,
    },
}

/// The simulated drive of one route.
#[derive(Debug, Clone)]
pub struct Trace {
    pub steps: Vec<Step>,
    pub outcome: Outcome,
}

/// The state of a simulation at the top of a control step, from which it can be resumed (with
/// another speed plan: the margins resume just before a leg; docs/method.md, Verdicts).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Resume {
    follower: FollowerState,
    pose: Pose,
    k: u64,
    prev_vx_mps: f64,
}

impl Resume {
    /// At rest on the first plan point, heading along the first segment.
    pub fn start(drive: &RouteDrive) -> Resume {
        let plan = &drive.plan;
        let (start, dir) = (plan.point_at(0.0), plan.direction_at(0.0));
        let follower = Follower::new(plan, drive.speeds.view(), drive.limits).state();
        Resume { follower, pose: Pose::new(start[0], start[1], dir[1].atan2(dir[0])), k: 0, prev_vx_mps: 0.0 }
    }

    /// Control steps simulated before this point.
    pub fn steps_before(&self) -> u64 {
        self.k
    }

    /// Arc length of the progress point here.
    pub fn progress_m(&self) -> f64 {
        self.follower.progress_m()
    }
}

/// What the step observer tells the simulation.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Flow {
    Continue,
    Stop,
}

/// The simulation loop (see [`roll_out`]) from `start` with the speed plan `speeds`, for at most
/// `max_steps` steps in all. `at_top` sees the state at the top of every step (before the
/// progress update); `on_step` sees every finished step and may stop the simulation, which then
/// returns `None`. Nothing is allocated here.
fn simulate(
    drive: &RouteDrive,
    speeds: SpeedView,
    start: Resume,
    max_steps: u64,
    mut at_top: impl FnMut(&Resume),
    mut on_step: impl FnMut(&Step) -> Flow,
) -> Option<Outcome> {
    let plan = &drive.plan;
    let dt = drive.limits.dt_s;
    let limit_s = drive.time_limit_with(speeds);
    let mut follower = Follower::resume(plan, speeds, drive.limits, start.follower);
    let (mut pose, mut k, mut prev_vx) = (start.pose, start.k, start.prev_vx_mps);
    // Walks with the progress point: the slope lookups are O(1) per step.
    let mut slope_cursor = Cursor::default();
    // The leg under the contact patch, searched only near a terrain boundary.
    let mut span = LegSpan::default();
    let mut t = k as f64 * dt;
    let outcome = loop {
        at_top(&Resume { follower: follower.state(), pose, k, prev_vx_mps: prev_vx });
        follower.update_progress(pose);
        let leg = follower.leg();
        let near = follower.deviation(pose);
        let mut step = Step {
            t_s: t,
            pose,
            leg,
            progress_m: follower.progress_m(),
            deviation_m: near.distance_m,
            offset_m: near.signed_offset_m,
            ..Step::default()
        };
        let end = if k > 0 && follower.finished(pose) {
            Some(Outcome::Reached)
        } else if t > limit_s {
            Some(Outcome::TimedOut { limit_s, progress_m: follower.progress_m() })
        } else if k >= max_steps {
            Some(Outcome::StepBudget { max_steps, progress_m: follower.progress_m() })
        } else {
            None
        };
        if let Some(outcome) = end {
            if on_step(&step) == Flow::Stop {
                return None;
            }
            break outcome;
        }
        let legd = &drive.legs[leg];
        let under = span.terrain_share(plan, step.progress_m, drive.vehicle.contact_length_m);
        let (rear, front) = drive.terrain_pair(under);
        let ground = rear.ground.blend(&front.ground, under.front_share);
        let (grade, cross) = plan.slope_at_cursor(step.progress_m, &mut slope_cursor);
        let slope = Slope::new(grade, cross);
        // sin and cos of the heading, once a step for the pursuit goal and the pose's step.
        let sin_cos_yaw = pose.yaw_rad.sin_cos();
        let cmd = if drive.limits.slows_in_turns() {
            follower.command_capped_with(pose, sin_cos_yaw, &legd.controller, |k| {
                turn_speed_limit_mps(&drive.vehicle, &ground, k, slope)
            })
        } else {
            follower.command_capped_with(pose, sin_cos_yaw, &legd.controller, |_| f64::INFINITY)
        };
        let mut twist = ground_twist(&rear.actual, &front.actual, under.front_share, cmd.left_mps, cmd.right_mps);
        let (mut left, mut right) = (cmd.left_mps, cmd.right_mps);
        let forces;
        (step.limit, forces) =
            limit_step_keeping_forces(&drive.vehicle, &ground, slope, &mut twist, &mut left, &mut right);
        if step.limit == StepLimit::Stall {
            (step.effort.grade_rad, step.effort.cross_slope) = (grade, cross);
            if on_step(&step) == Flow::Stop {
                return None;
            }
            break Outcome::Stalled { progress_m: follower.progress_m(), grade_rad: grade };
        }
        step.left_mps = left;
        step.right_mps = right;
        step.twist = twist;
        step.accel_mps2 = (twist.vx_mps - prev_vx) / dt;
        prev_vx = twist.vx_mps;
        let veh = &drive.vehicle;
        step.effort = match forces {
            // The traction check's forces at this twist, with this step's acceleration: what
            // effort_step would work out again.
            Some(f) => effort_from_forces(
                veh,
                &f.with_acceleration(veh, step.accel_mps2),
                twist.omega_radps,
                left,
                right,
                slope,
            ),
            None => effort_step(veh, &ground, twist.vx_mps, twist.omega_radps, left, right, step.accel_mps2, slope),
        };
        if on_step(&step) == Flow::Stop {
            return None;
        }
        pose = pose.step_with(twist, dt, sin_cos_yaw);
        k += 1;
        t = k as f64 * dt;
    };
    Some(outcome)
}

/// Simulates the route. The vehicle starts at rest on the first plan point, heading along the
/// first segment; each step the follower commands side speeds from the pose, the terrain model
/// under the vehicle gives the twist, traction bounds it, and the pose advances by the exact
/// SE(2) step. At most [`crate::limits::DEFAULT_MAX_ROLLOUT_STEPS`] steps are simulated.
pub fn roll_out(drive: &RouteDrive) -> Trace {
    roll_out_within(drive, crate::limits::DEFAULT_MAX_ROLLOUT_STEPS)
}

/// [`roll_out`] with a budget of `max_steps` control steps: a rollout that needs more ends with
/// [`Outcome::StepBudget`] (and the assessment fails the unfinished legs). The check refuses such
/// routes up front ([`step_bound`]); the budget also guards direct callers.
pub fn roll_out_within(drive: &RouteDrive, max_steps: u64) -> Trace {
    roll_out_with_resumes(drive, max_steps).0
}

/// Distance before a leg's start from which that leg's speed can change the simulation (the
/// follower slows ahead of a slower leg within v^2 / 2a of its start, v the fastest it can be
/// going: the top side speed or the fastest planned speed), plus a metre.
pub fn leg_influence_m(drive: &RouteDrive) -> f64 {
    let v = drive.limits.max_side_speed_mps.max(drive.speeds.max_speed_mps());
    v * v / (2.0 * drive.limits.max_side_accel_mps2.max(1e-9)) + 1.0
}

/// [`roll_out_within`], also returning for every leg the state from which the simulation can be
/// resumed with another speed for that leg (the first step whose progress point is within
/// [`leg_influence_m`] of the leg's start; the start for the first leg). Legs the simulation
/// never came near get `None`.
pub fn roll_out_with_resumes(drive: &RouteDrive, max_steps: u64) -> (Trace, Vec<Option<Resume>>) {
    let mut steps = reserved_trace(drive);
    let (outcome, resumes) = roll_out_observing(drive, max_steps, |s| steps.push(*s));
    (Trace { steps, outcome }, resumes)
}

/// An empty trace with room for a normal rollout of `drive`: the planned time plus 20 s, as
/// steps, and a tenth more for the slower driving in turns, so it is never reallocated (at most
/// [`MAX_RESERVED_STEPS`]; `as` saturates a huge or NaN estimate).
pub fn reserved_trace(drive: &RouteDrive) -> Vec<Step> {
    let expected_steps = (1.1 * (drive.time_limit_s() / 3.0) / drive.limits.dt_s) as usize;
    Vec::with_capacity(expected_steps.min(MAX_RESERVED_STEPS) + 64)
}

/// [`roll_out_with_resumes`] handing every step to `on_step` as it is simulated instead of
/// keeping the trace (the check assesses a rollout this way when no output draws on its trace;
/// `crate::assess::TraceSummary`). Returns how it ended and the states to resume each leg from.
pub fn roll_out_observing(
    drive: &RouteDrive,
    max_steps: u64,
    mut on_step: impl FnMut(&Step),
) -> (Outcome, Vec<Option<Resume>>) {
    let n_legs = drive.legs.len();
    let mut resumes: Vec<Option<Resume>> = vec![None; n_legs];
    let influence_m = leg_influence_m(drive);
    let mut next_leg = 0;
    let mut progress_m = 0.0;
    let outcome = simulate(
        drive,
        drive.speeds.view(),
        Resume::start(drive),
        max_steps,
        |r| {
            let progress_m = r.follower.progress_m();
            while next_leg < n_legs && progress_m >= drive.plan.leg_bounds_m(next_leg).0 - influence_m {
                resumes[next_leg] = Some(*r);
                next_leg += 1;
            }
        },
        |s| {
            progress_m = s.progress_m;
            on_step(s);
            Flow::Continue
        },
    );
    // The observer never stops the simulation, so it always has an outcome.
    (outcome.unwrap_or(Outcome::StepBudget { max_steps, progress_m }), resumes)
}

/// Whether leg `leg` passes the simulation rules of the verdict when driven with the speed plan
/// `speeds`, resumed from `from` (docs/method.md, Verdicts: margins): the vehicle gets past the
/// leg's end without its deviation ever leaving the corridor where it is, without stalling, and
/// within the time bound and `max_steps`. Stops at the first step that decides it. Returns the
/// answer and the steps simulated.
pub fn leg_passes(drive: &RouteDrive, speeds: SpeedView, from: &Resume, leg: usize, max_steps: u64) -> (bool, u64) {
    let mut passed = false;
    let mut simulated = 0u64;
    let mut cursor = Cursor::default();
    let outcome = simulate(
        drive,
        speeds,
        *from,
        max_steps,
        |_| {},
        |s| {
            simulated += 1;
            if s.leg > leg {
                passed = true;
                return Flow::Stop;
            }
            if s.leg == leg
                && (s.deviation_m > speeds.corridor_at(&drive.plan, s.progress_m, &mut cursor)
                    || s.limit == StepLimit::Stall)
            {
                return Flow::Stop;
            }
            Flow::Continue
        },
    );
    // Reaching the end of the route completes the last leg.
    let passed = passed || (outcome == Some(Outcome::Reached));
    (passed, simulated)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::kinematics::{ExtendedSymmetric, Ideal};
    use approx::assert_relative_eq;

    fn drive_on(points: Vec<[f64; 2]>, actual: Model, speed_mps: f64, limits: FollowerLimits) -> RouteDrive {
        let plan = PlanPath::from_parts(points, &[0], None);
        let speeds = SpeedPlan::per_leg(&plan, &[speed_mps], &[0.5], &limits);
        RouteDrive {
            plan,
            legs: vec![LegDrive {
                terrain: "test".into(),
                actual,
                controller: Model::ideal(limits.track_width_m),
                speed_mps,
                corridor_m: 0.5,
                ground: Ground { rolling_resistance: 0.05, traction_coefficient: 0.6, lateral_resistance_max: 0.5 },
            }],
            speeds,
            limits,
            curvature_scale_m: 0.5,
            vehicle: EffortVehicle::from_profile(&crate::vehicle::Profile::demo()),
        }
    }

    fn limits(lookahead_m: f64) -> FollowerLimits {
        FollowerLimits {
            lookahead_m,
            dt_s: 0.02,
            max_yaw_rate_radps: 5.0,
            max_side_speed_mps: 3.0,
            max_side_accel_mps2: 2.0,
            track_width_m: 0.9,
            max_lateral_accel_mps2: f64::INFINITY,
        }
    }

    #[test]
    fn straight_plan_on_ideal_terrain_is_followed_exactly() {
        let d = drive_on(vec![[0.0, 0.0], [30.0, 0.0]], Model::Ideal(Ideal { track_width_m: 0.9 }), 1.0, limits(1.5));
        let tr = roll_out(&d);
        assert_eq!(tr.outcome, Outcome::Reached);
        let max_dev = tr.steps.iter().map(|s| s.deviation_m).fold(0.0, f64::max);
        assert!(max_dev < 1e-9, "{max_dev}");
        let last = tr.steps.last().expect("steps");
        assert!((last.pose.x_m - 30.0).abs() < 0.2, "{:?}", last.pose);
    }

    #[test]
    fn steady_circle_radius_with_track_expansion() {
        // Check value derived from the geometry of pure pursuit (docs/method.md, Following; derived here, no
        // outside source). Vehicle on a concentric circle of radius r, goal G on the plan circle
        // (radius R, centre C) at distance L. With u the unit vector from the vehicle P to C:
        // R^2 = |G - P - r u|^2 = L^2 + r^2 - 2 r y_g, so y_g = (L^2 + r^2 - R^2) / (2 r).
        // Commanded curvature 2 y_g / L^2; the terrain turns 1/chi of it, and steady state needs
        // that to be 1/r: r^2 = R^2 + (chi - 1) L^2.
        let (radius_m, lookahead_m, chi) = (6.0, 2.0, 1.6);
        let actual =
            Model::ExtendedSymmetric(ExtendedSymmetric { track_width_m: 0.9, alpha: 1.0, track_expansion: chi });
        let d = drive_on(crate::route::plan::circle_points(radius_m, 4000, 2.0), actual, 0.8, limits(lookahead_m));
        let tr = roll_out(&d);
        let expected = (radius_m * radius_m + (chi - 1.0) * lookahead_m * lookahead_m).sqrt();
        // Second half of the second turn: settled.
        let n = tr.steps.len();
        for s in &tr.steps[n / 2..n * 7 / 8] {
            let r = (s.pose.x_m.powi(2) + (s.pose.y_m - radius_m).powi(2)).sqrt();
            assert_relative_eq!(r, expected, max_relative = 2e-3);
        }
    }

    #[test]
    fn a_vehicle_that_cannot_move_times_out() {
        let actual =
            Model::ExtendedSymmetric(ExtendedSymmetric { track_width_m: 0.9, alpha: 0.0, track_expansion: 1.0 });
        let d = drive_on(vec![[0.0, 0.0], [5.0, 0.0]], actual, 1.0, limits(1.5));
        let tr = roll_out(&d);
        assert!(matches!(tr.outcome, Outcome::TimedOut { .. }));
        assert!(tr.steps.last().expect("steps").t_s <= d.time_limit_s() + 0.1);
    }

    /// The route must end within its time bound (plus one step) and fail with a reason.
    fn assert_ends_within_bound(d: &RouteDrive, tr: &Trace) {
        let last = tr.steps.last().expect("steps");
        assert!(last.t_s <= d.time_limit_s() + d.limits.dt_s + 1e-9, "{} > {}", last.t_s, d.time_limit_s());
    }

    #[test]
    fn a_circling_vehicle_times_out() {
        // Omega follows the sum of the side speeds, not their difference: driving forward always
        // turns left on a 0.5 m circle, and no command can straighten it.
        let actual = Model::Linear(crate::kinematics::Linear { j: [[0.5, 0.5], [0.0, 0.0], [1.0, 1.0]] });
        let d = drive_on(vec![[0.0, 0.0], [20.0, 0.0]], actual, 1.0, limits(1.5));
        let tr = roll_out(&d);
        assert!(matches!(tr.outcome, Outcome::TimedOut { progress_m, .. } if progress_m < 20.0), "{:?}", tr.outcome);
        assert_ends_within_bound(&d, &tr);
    }

    #[test]
    fn a_pathological_speed_reserves_little_and_the_budget_stops_it() {
        // 1e-6 m/s on a 10 km leg: the time bound is 3 x 10 km / 0.05 m/s + 60 s = 600 060 s,
        // 30 million steps at 50 Hz; reserving from it would take gigabytes.
        let d = drive_on(vec![[0.0, 0.0], [10_000.0, 0.0]], Model::ideal(0.9), 1e-6, limits(1.5));
        assert_relative_eq!(d.time_limit_s(), 600_060.0, max_relative = 1e-12);
        assert!(d.step_bound() > 3e7);
        let tr = roll_out_within(&d, 2_000);
        assert!(matches!(tr.outcome, Outcome::StepBudget { max_steps: 2_000, .. }), "{:?}", tr.outcome);
        assert_eq!(tr.steps.len(), 2_001);
        assert!(tr.steps.capacity() <= MAX_RESERVED_STEPS + 64, "{}", tr.steps.capacity());
    }

    #[test]
    fn the_route_step_bound_matches_the_drive() {
        let profile = crate::vehicle::Profile::demo();
        let route = Route {
            name: "r".into(),
            source: "r.csv".into(),
            origin: None,
            legs: vec![crate::route::Leg {
                speed_mps: Some(1e-6),
                ..crate::route::Leg::new(
                    "gravel",
                    vec![[0.0, 0.0], [6_000.0, 0.0], [10_000.0, 0.0]],
                    crate::route::SourcePosition::Line(2),
                )
            }],
            warnings: Vec::new(),
        };
        let d = RouteDrive::new(&route, &profile);
        assert_relative_eq!(step_bound(&route, &profile), d.step_bound(), max_relative = 1e-9);
    }

    /// A plan of `points` on `ground`, ideal kinematics, no yaw-rate clamp to speak of and no
    /// power limit, so only traction can bound the turn.
    fn traction_drive(
        points: Vec<[f64; 2]>,
        altitude_m: Option<Vec<f64>>,
        ground: Ground,
        speed_mps: f64,
    ) -> RouteDrive {
        let mut d = drive_on(points, Model::ideal(0.9), speed_mps, limits(1.0));
        d.plan = PlanPath::from_parts(d.plan.points().to_vec(), &[0], altitude_m);
        d.legs[0].ground = ground;
        d.vehicle.max_power_w = 1e12;
        d.vehicle.max_side_thrust_n = 1e9;
        d
    }

    #[test]
    fn a_corner_tighter_than_traction_allows_is_overshot_by_at_least_the_fillet() {
        // Deep snow (f_r 0.15, mu 0.25, mu_max 0.3) on the demo vehicle: traction radius 5.45 m on
        // the level (Wong 2008; derived in turn_limit's tests). A right-angle corner between long
        // straights cannot be driven tighter. Circle geometry: the curvature-bounded path tangent
        // to both sides that stays closest to them is the fillet of radius R, whose midpoint lies
        // R (1 - cos(theta/2)) from each side; any path that turns no tighter than 1/R leaves the
        // plan by at least that much.
        let ground = Ground { rolling_resistance: 0.15, traction_coefficient: 0.25, lateral_resistance_max: 0.3 };
        let pts = vec![[0.0, 0.0], [30.0, 0.0], [30.0, 30.0]];
        let d = traction_drive(pts, None, ground, 0.8);
        let k_lim = crate::turn_limit::traction_curvature_limit(&d.vehicle, &ground, 0.8, Slope::LEVEL);
        assert_relative_eq!(1.0 / k_lim, 5.45, epsilon = 0.01);
        let tr = roll_out(&d);
        assert_eq!(tr.outcome, Outcome::Reached);
        let mut limited = 0;
        for s in &tr.steps {
            if s.twist.vx_mps > 1e-6 {
                assert!((s.twist.omega_radps / s.twist.vx_mps).abs() <= k_lim * (1.0 + 1e-9), "{s:?}");
            }
            limited += usize::from(s.traction_limited());
        }
        assert!(limited > 10, "the corner must be traction-limited ({limited} steps)");
        let fillet_gap_m = (1.0 / k_lim) * (1.0 - std::f64::consts::FRAC_PI_4.cos());
        let max_dev = tr.steps.iter().map(|s| s.deviation_m).fold(0.0, f64::max);
        assert!(max_dev >= fillet_gap_m, "{max_dev} < {fillet_gap_m}");
        // The traction-free vehicle would have cut the corner far closer.
        let mut free = d.clone();
        free.legs[0].ground.traction_coefficient = 10.0;
        let free_dev = roll_out(&free).steps.iter().map(|s| s.deviation_m).fold(0.0, f64::max);
        assert!(free_dev < fillet_gap_m, "{free_dev}");
    }

    #[test]
    fn a_turn_across_a_side_slope_is_held_to_the_traction_of_each_side() {
        // Deep snow on a 20 % cross slope (left side higher), centre of gravity 0.55 m up: the
        // downhill side carries more load. A right-angle right turn puts the light, uphill side
        // outside, so traction allows a wider radius than for a left turn (the closed form is
        // derived in turn_limit's tests); the simulation must turn no tighter than that.
        let ground = Ground { rolling_resistance: 0.15, traction_coefficient: 0.25, lateral_resistance_max: 0.3 };
        let pts = vec![[0.0, 0.0], [30.0, 0.0], [30.0, -30.0]];
        let mut d = traction_drive(pts, Some(vec![0.0; 3]), ground, 0.8);
        d.plan = d.plan.clone().with_cross_slope(Some(vec![0.2; 3]));
        d.vehicle.cog_height_m = Some(0.55);
        let slope = Slope::new(0.0, 0.2);
        let k_right = crate::turn_limit::traction_curvature_limit_toward(&d.vehicle, &ground, 0.8, slope, -1.0);
        let k_left = crate::turn_limit::traction_curvature_limit_toward(&d.vehicle, &ground, 0.8, slope, 1.0);
        assert!(k_right < 0.5 * k_left, "{k_right} vs {k_left}");
        let tr = roll_out(&d);
        assert_eq!(tr.outcome, Outcome::Reached);
        let mut tightest = 0.0_f64;
        for s in &tr.steps {
            if s.twist.vx_mps > 1e-6 && s.twist.omega_radps < 0.0 {
                let k = -s.twist.omega_radps / s.twist.vx_mps;
                assert!(k <= k_right * (1.0 + 1e-9), "{k} > {k_right} at {} m", s.progress_m);
                tightest = tightest.max(k);
            }
        }
        assert_relative_eq!(tightest, k_right, max_relative = 1e-6);
        // Each side's rolling resistance on its own load: the right (downhill) side pushes more
        // on the straight lead-in.
        let lead = tr.steps.iter().find(|s| s.progress_m > 10.0).expect("lead-in");
        assert!(lead.effort.right_thrust_n > lead.effort.left_thrust_n, "{:?}", lead.effort);
        assert_eq!(lead.effort.cross_slope, 0.2);
    }

    #[test]
    fn a_climb_the_ground_cannot_hold_stalls_the_vehicle() {
        // 30 % climb on deep snow: f_r + tan g = 0.45 > mu = 0.25 (Wong 2008, grade resistance).
        let ground = Ground { rolling_resistance: 0.15, traction_coefficient: 0.25, lateral_resistance_max: 0.3 };
        let pts: Vec<[f64; 2]> = (0..=40).map(|i| [i as f64, 0.0]).collect();
        let alt: Vec<f64> = (0..=40).map(|i| if i < 20 { 0.0 } else { 0.3 * (i - 20) as f64 }).collect();
        let d = traction_drive(pts, Some(alt), ground, 0.8);
        let tr = roll_out(&d);
        match tr.outcome {
            Outcome::Stalled { progress_m, grade_rad } => {
                assert!(progress_m > 18.0 && progress_m < 21.0, "{progress_m}");
                assert!(grade_rad > 0.1, "{grade_rad}");
            }
            other => panic!("{other:?}"),
        }
        assert_eq!(tr.steps.last().map(|s| s.limit), Some(StepLimit::Stall));
    }

    #[test]
    fn a_descent_the_ground_cannot_hold_slides_straight_on() {
        // 60 % descent on deep snow: tan g - f_r = 0.45 > mu = 0.25; the vehicle loses its
        // steering there and runs straight on, so a bend on the slope is not followed.
        let ground = Ground { rolling_resistance: 0.15, traction_coefficient: 0.25, lateral_resistance_max: 0.3 };
        let pts: Vec<[f64; 2]> =
            (0..=40).map(|i| [i as f64, if i > 25 { 0.3 * (i - 25) as f64 } else { 0.0 }]).collect();
        let alt: Vec<f64> = (0..=40).map(|i| if i < 20 { 0.0 } else { -0.6 * (i - 20) as f64 }).collect();
        let d = traction_drive(pts, Some(alt), ground, 0.8);
        let tr = roll_out(&d);
        let sliding: Vec<&Step> = tr.steps.iter().filter(|s| s.limit == StepLimit::Slide).collect();
        assert!(sliding.len() > 10);
        assert!(sliding.iter().all(|s| s.twist.omega_radps == 0.0));
    }

    #[test]
    fn a_terrain_change_takes_hold_over_the_contact_length() {
        // Gravel (alpha 0.95) then slush (alpha 0.75) at 1.2 m/s, ideal controller: the forward
        // speed falls from 0.95 x 1.2 to 0.75 x 1.2 m/s. Switched in one 0.05 s step that is
        // -4.8 m/s^2; spread over the 1.1 m contact length driven at about 1 m/s it is about
        // 0.24 x 1.0 / 1.1 = 0.22 m/s^2 (kinematics, common practice, no source).
        let es = |alpha: f64| {
            Model::ExtendedSymmetric(ExtendedSymmetric { track_width_m: 0.9, alpha, track_expansion: 1.0 })
        };
        let mut lim = limits(1.5);
        lim.dt_s = 0.05;
        let mut d = drive_on(vec![[0.0, 0.0], [30.0, 0.0], [60.0, 0.0]], es(0.95), 1.2, lim);
        d.plan = PlanPath::from_parts(d.plan.points().to_vec(), &[0, 1], None);
        let mut slush = d.legs[0].clone();
        slush.terrain = "slush".into();
        slush.actual = es(0.75);
        d.legs.push(slush);
        d.speeds = SpeedPlan::per_leg(&d.plan, &[1.2, 1.2], &[0.5, 0.5], &d.limits);
        let tr = roll_out(&d);
        let near: Vec<&Step> = tr.steps.iter().filter(|s| (s.progress_m - 30.0).abs() < 3.0).collect();
        let worst = near.iter().map(|s| s.accel_mps2).fold(0.0, f64::min);
        assert!(worst < -0.1 && worst > -0.35, "{worst}");
        let mid = tr.steps.iter().find(|s| s.progress_m >= 30.0).expect("reaches the boundary");
        assert!(mid.twist.vx_mps < 0.95 * 1.2 - 0.05 && mid.twist.vx_mps > 0.75 * 1.2 + 0.05, "{mid:?}");
    }

    #[test]
    fn the_optional_slow_down_holds_lateral_acceleration_on_a_circle() {
        // Circular motion (common practice, no source): lateral acceleration v^2 / R, so a cap
        // a_max gives v = sqrt(a_max R). On a 4 m circle with a_max = 0.25 m/s^2 and ideal
        // kinematics the follower settles on the circle (r^2 = R^2 + (chi - 1) L^2 with chi = 1)
        // at sqrt(0.25 x 4) = 1.0 m/s although the leg asks for 1.5 m/s. Off by default.
        let mut lim = limits(1.5);
        lim.max_lateral_accel_mps2 = 0.25;
        let d = drive_on(crate::route::plan::circle_points(4.0, 2000, 2.0), Model::ideal(0.9), 1.5, lim);
        let tr = roll_out(&d);
        let n = tr.steps.len();
        for s in &tr.steps[n / 2..n * 3 / 4] {
            assert_relative_eq!(s.twist.vx_mps, 1.0, max_relative = 0.01);
            assert!(s.twist.vx_mps * s.twist.omega_radps.abs() <= 0.25 * 1.01, "{s:?}");
        }
        let mut off = d.clone();
        off.limits.max_lateral_accel_mps2 = f64::INFINITY;
        let free = roll_out(&off);
        let m = free.steps.len();
        assert_relative_eq!(free.steps[m / 2].twist.vx_mps, 1.5, max_relative = 0.01);
    }

    #[test]
    fn a_planner_speed_profile_is_driven_and_a_slow_stretch_reached_at_its_speed() {
        // A planner CSV with a speed on every row (every 0.5 m): a ramp from 0.3 to 1.5 m/s over
        // 60 m, 1.5 m/s to 99.5 m, 0.4 m/s from 100 m to 129.5 m, then 1.0 m/s. Between rows the
        // plan is linear in distance. Ideal kinematics, so the forward speed is the commanded one.
        let row_speed = |x: f64| match x {
            x if x <= 60.0 => 0.3 + 1.2 * x / 60.0,
            x if x < 100.0 => 1.5,
            x if x < 130.0 => 0.4,
            _ => 1.0,
        };
        let mut text = String::from("x_m,y_m,terrain,speed_mps\n");
        for i in 0..=300 {
            let x = 0.5 * i as f64;
            text.push_str(&format!("{x},0,asphalt,{}\n", row_speed(x)));
        }
        let path = std::path::Path::new("ramp.csv");
        let routes = crate::route::parse_route_text(
            path,
            &text,
            crate::route::RouteFormat::Csv,
            &crate::limits::Limits::default(),
        )
        .expect("reads");
        assert_eq!(routes[0].legs.len(), 1);
        let mut profile = crate::vehicle::Profile::demo();
        profile.terrain.get_mut("asphalt").expect("asphalt").model = Model::ideal(0.9);
        let d = RouteDrive::new(&routes[0], &profile);
        let a = profile.vehicle.max_side_accel_mps2;
        let dv = a * d.limits.dt_s;
        // The profile as planned: linear between the rows around s.
        let planned = |s: f64| {
            let x0 = (s / 0.5).floor() * 0.5;
            row_speed(x0) + (row_speed(x0 + 0.5) - row_speed(x0)) * (s - x0) / 0.5
        };
        // Braking from 1.5 to 0.4 m/s at a takes (1.5^2 - 0.4^2) / (2 a) = 1.045 m (constant
        // deceleration); the drop itself is planned over the last 0.5 m before 100 m.
        let braking_m = (1.5_f64 * 1.5 - 0.4 * 0.4) / (2.0 * a);
        assert_relative_eq!(braking_m, 1.045, epsilon = 1e-12);
        let tr = roll_out(&d);
        assert_eq!(tr.outcome, Outcome::Reached);
        let mut on_ramp = 0;
        for s in &tr.steps {
            let v = s.twist.vx_mps;
            if (2.0..=100.0 - 0.5 - braking_m - 0.1).contains(&s.progress_m) {
                // On the ramp and the fast stretch the speed is the profile's, within one
                // control step's change at the acceleration limit.
                assert!((v - planned(s.progress_m)).abs() <= dv + 1e-9, "{v} at {} m", s.progress_m);
                on_ramp += 1;
            }
            if (100.0..=129.0).contains(&s.progress_m) {
                // The slow stretch is reached at its speed (not later, not slower).
                assert!((v - 0.4).abs() <= dv + 1e-9, "{v} at {} m", s.progress_m);
            }
        }
        assert!(on_ramp > 500, "{on_ramp} steps checked");
        // The speed rises with the ramp: 0.3 m/s near the start, 0.9 m/s at 30 m.
        let at = |x: f64| tr.steps.iter().find(|s| s.progress_m >= x).map_or(0.0, |s| s.twist.vx_mps);
        assert_relative_eq!(at(30.0), 0.9, epsilon = dv);
    }

    #[test]
    fn a_u_turn_tighter_than_the_vehicle_can_turn_ends_and_leaves_the_corridor() {
        // A 0.5 m radius hairpin for a vehicle whose yaw-rate clamp allows 2 m at 1 m/s.
        let mut hairpin: Vec<[f64; 2]> = vec![[0.0, 0.0], [10.0, 0.0]];
        hairpin.extend((1..20).map(|i| {
            let a = std::f64::consts::PI * i as f64 / 20.0 - std::f64::consts::FRAC_PI_2;
            [10.0 + 0.5 * a.cos(), 0.5 + 0.5 * a.sin()]
        }));
        hairpin.extend([[10.0, 1.0], [0.0, 1.0]]);
        let lim = FollowerLimits { max_yaw_rate_radps: 0.5, ..limits(1.0) };
        let d = drive_on(hairpin, Model::ideal(0.9), 1.0, lim);
        let tr = roll_out(&d);
        assert_ends_within_bound(&d, &tr);
        let max_dev = tr.steps.iter().map(|s| s.deviation_m).fold(0.0, f64::max);
        assert!(max_dev > d.legs[0].corridor_m, "{max_dev}");
        assert!(tr.steps.iter().all(|s| s.pose.x_m.is_finite() && s.pose.y_m.is_finite()));
    }
}
