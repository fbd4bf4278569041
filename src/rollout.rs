//! Closed-loop simulation of a route: the follower commands side speeds from the pose, the
//! terrain model of the leg under the vehicle's progress point turns them into the actual body
//! twist, and the exact SE(2) step moves the vehicle (DESIGN 6.2, 6.3). The trace keeps what
//! the assessment and the effort estimate need: pose, leg, progress, deviation, side speeds and
//! the actual twist at every control step.
//!
//! Units: seconds, metres, radians, local frame. The step loop allocates nothing (the trace is
//! reserved up front from the time bound).

use crate::effort::{effort_step, EffortStep, EffortVehicle, Ground};
use crate::follow::{Follower, FollowerLimits};
use crate::kinematics::{Model, MotionModel, Pose, Twist};
use crate::route::{PlanPath, Route};
use crate::vehicle::Profile;

/// How one leg is driven: the terrain's actual model, the model the controller inverts, and
/// the target speed.
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
    pub speeds_mps: Vec<f64>,
    pub limits: FollowerLimits,
    /// Spacing at which the plan's curvature is measured (DESIGN 6.4).
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
        let speeds_mps = legs.iter().map(|l| l.speed_mps).collect();
        let limits = FollowerLimits {
            lookahead_m: profile.follower.lookahead_m,
            dt_s: 1.0 / profile.follower.control_rate_hz,
            max_yaw_rate_radps: v.max_yaw_rate_radps,
            max_side_speed_mps: v.max_side_speed_mps,
            max_side_accel_mps2: v.max_side_accel_mps2,
            track_width_m: v.track_width_m,
        };
        RouteDrive {
            plan,
            legs,
            speeds_mps,
            limits,
            curvature_scale_m: profile.follower.curvature_scale_m,
            vehicle: EffortVehicle::from_profile(profile),
        }
    }

    /// Time bound for a rollout: three times the planned driving time at the reachable leg
    /// speeds, plus a minute for ramps. A vehicle that stalls or circles is stopped there.
    pub fn time_limit_s(&self) -> f64 {
        let planned: f64 = (0..self.plan.leg_count())
            .map(|i| {
                let (a, b) = self.plan.leg_bounds_m(i);
                (b - a) / self.legs[i].speed_mps.min(self.limits.max_side_speed_mps).max(0.05)
            })
            .sum();
        3.0 * planned + 60.0
    }
}

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
}

/// The simulated drive of one route.
#[derive(Debug, Clone)]
pub struct Trace {
    pub steps: Vec<Step>,
    pub outcome: Outcome,
}

/// Simulates the route. The vehicle starts at rest on the first plan point, heading along the
/// first segment; each step the follower commands side speeds from the pose, the leg's terrain
/// model gives the twist, and the pose advances by the exact SE(2) step.
pub fn roll_out(drive: &RouteDrive) -> Trace {
    let plan = &drive.plan;
    let dt = drive.limits.dt_s;
    let limit_s = drive.time_limit_s();
    let mut steps = Vec::with_capacity(((limit_s / 3.0) / dt) as usize + 64);
    let start = plan.point_at(0.0);
    let dir = plan.direction_at(0.0);
    let mut pose = Pose::new(start[0], start[1], dir[1].atan2(dir[0]));
    let mut follower = Follower::new(plan, &drive.speeds_mps, drive.limits);
    let mut t = 0.0;
    let mut k: u64 = 0;
    let mut prev_vx = 0.0;
    let outcome = loop {
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
        if k > 0 && follower.finished(pose) {
            steps.push(step);
            break Outcome::Reached;
        }
        if t > limit_s {
            steps.push(step);
            break Outcome::TimedOut { limit_s, progress_m: follower.progress_m() };
        }
        let legd = &drive.legs[leg];
        let cmd = follower.command(pose, &legd.controller);
        let twist = legd.actual.twist(cmd.left_mps, cmd.right_mps);
        step.left_mps = cmd.left_mps;
        step.right_mps = cmd.right_mps;
        step.twist = twist;
        step.accel_mps2 = (twist.vx_mps - prev_vx) / dt;
        prev_vx = twist.vx_mps;
        let grade = if plan.has_altitude() { plan.grade_at(step.progress_m) } else { 0.0 };
        step.effort = effort_step(
            &drive.vehicle,
            &legd.ground,
            twist.vx_mps,
            twist.omega_radps,
            cmd.left_mps,
            cmd.right_mps,
            step.accel_mps2,
            grade,
        );
        steps.push(step);
        pose = pose.step(twist, dt);
        k += 1;
        t = k as f64 * dt;
    };
    Trace { steps, outcome }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::kinematics::{ExtendedSymmetric, Ideal};
    use approx::assert_relative_eq;

    fn drive_on(points: Vec<[f64; 2]>, actual: Model, speed_mps: f64, limits: FollowerLimits) -> RouteDrive {
        let plan = PlanPath::from_parts(points, &[0], None);
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
            speeds_mps: vec![speed_mps],
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
        // Check value derived from the geometry of pure pursuit (DESIGN 6.3; derived here, no
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
}
