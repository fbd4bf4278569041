//! The turn rules of the verdict (docs/method.md, Verdicts): every vertex of a leg's plan is
//! checked against the curvature the vehicle can drive there, at the speed planned there and the
//! grade where the turn is (docs/method.md, Plan curvature and Achievable curvature). The plan
//! facts are read once per leg ([`LegPlan`]), so the margins can check the same leg with its speed
//! profile scaled to many speeds cheaply.
//!
//! Units: metres, 1/m, radians; positions in the route's local frame.

use serde::Serialize;

use crate::effort::{Ground, Slope};
use crate::rollout::RouteDrive;
use crate::turn_limit::{kinematic_curvature_limit, traction_coefficient_needed, traction_curvature_limit_toward};
use crate::turn_limit::{Achievable, CurvatureLimit};

use super::slopes::SlopeFacts;

/// Vertices whose curvature reading is below this are left out of the turn checks, 1/m (a radius
/// of 1 km). The tightest vertex of a leg is always kept.
const TURN_FLOOR_PER_M: f64 = 1e-3;

/// One vertex of a leg's plan that turns.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct TurnPoint {
    /// Index of the vertex in the plan.
    pub index: usize,
    pub s_m: f64,
    pub point: [f64; 2],
    /// |curvature| read at the vertex, 1/m.
    pub curvature_per_m: f64,
    /// True for a left turn (the outer side is the right one).
    pub left: bool,
    /// Speed the leg plans at the vertex, m/s.
    pub speed_mps: f64,
    pub grade_rad: f64,
    /// Cross slope there (tangent, positive when the left side is higher; 0 without a raster).
    pub cross_slope: f64,
    /// Ground under the contact patch there (blended across a terrain boundary).
    pub ground: Ground,
    pub sharp: bool,
    pub turn_rad: f64,
}

/// The facts of one leg's plan that do not depend on speed.
#[derive(Debug, Clone, PartialEq)]
pub struct LegPlan {
    /// The leg's nominal speed (its profile's largest), m/s.
    pub speed_mps: f64,
    /// Vertices that turn (reading at least 1e-3 1/m), in order.
    pub turns: Vec<TurnPoint>,
    /// Largest |curvature| of the leg and where (the leg start for a straight leg).
    pub tightest_per_m: f64,
    pub tightest_at_m: f64,
    /// Steepest climb and steepest descent (both >= 0, rad) and where, sampled every metre.
    pub max_uphill_grade_rad: f64,
    pub uphill_at_m: f64,
    pub max_downhill_grade_rad: f64,
    pub downhill_at_m: f64,
    /// Smallest traction coefficient with which every turn, climb, descent and cross slope of
    /// the leg stays within traction, and where it is needed.
    pub traction_needed: f64,
    pub traction_needed_at_m: f64,
    /// The worst climb, descent and cross slope (the slope rules).
    pub slopes: SlopeFacts,
}

impl TurnPoint {
    /// The slope under the turn.
    pub fn slope(&self) -> Slope {
        Slope::new(self.grade_rad, self.cross_slope)
    }

    /// +1 for a left turn, -1 for a right one.
    pub fn sign(&self) -> f64 {
        if self.left {
            1.0
        } else {
            -1.0
        }
    }
}

impl LegPlan {
    /// Reads leg `leg` of the drive's plan at its curvature scale.
    pub fn new(drive: &RouteDrive, leg: usize) -> LegPlan {
        let plan = &drive.plan;
        let ground = &drive.legs[leg].ground;
        let veh = &drive.vehicle;
        let (start_m, end_m) = plan.leg_bounds_m(leg);
        let mut turns = Vec::new();
        let (mut tightest, mut tightest_at_m) = (0.0, start_m);
        let mut tightest_point: Option<TurnPoint> = None;
        plan.for_each_vertex_curvature(leg, drive.curvature_scale_m, |v| {
            let k = v.curvature_per_m.abs();
            let tp = TurnPoint {
                index: v.index,
                s_m: v.s_m,
                point: v.point,
                curvature_per_m: k,
                left: v.curvature_per_m >= 0.0,
                speed_mps: drive.speeds.speed_at_point(plan, leg, v.index),
                grade_rad: 0.0,
                cross_slope: 0.0,
                ground: *ground,
                sharp: v.sharp,
                turn_rad: v.turn_rad,
            };
            if k > tightest {
                (tightest, tightest_at_m) = (k, v.s_m);
                tightest_point = Some(tp);
            }
            if k >= TURN_FLOOR_PER_M {
                turns.push(tp);
            }
        });
        if let Some(tp) = tightest_point.filter(|tp| tp.curvature_per_m < TURN_FLOOR_PER_M) {
            turns.push(tp);
        }
        // The turns come in plan order: the slope and ground lookups walk along with them (the
        // same values as the plain lookups).
        let (mut cursor, mut span) = (crate::route::Cursor::default(), crate::route::LegSpan::default());
        for t in &mut turns {
            (t.grade_rad, t.cross_slope) = plan.slope_at_cursor(t.s_m, &mut cursor);
            t.ground = drive.ground_in(t.s_m, &mut span);
        }
        let mut p = LegPlan {
            speed_mps: drive.legs[leg].speed_mps,
            turns,
            tightest_per_m: tightest,
            tightest_at_m,
            max_uphill_grade_rad: 0.0,
            uphill_at_m: start_m,
            max_downhill_grade_rad: 0.0,
            downhill_at_m: start_m,
            traction_needed: 0.0,
            traction_needed_at_m: start_m,
            slopes: SlopeFacts::default(),
        };
        let need = |mu: f64, s: f64, p: &mut LegPlan| {
            if mu > p.traction_needed {
                (p.traction_needed, p.traction_needed_at_m) = (mu, s);
            }
        };
        if plan.has_altitude() {
            let n = (end_m - start_m).ceil().clamp(1.0, crate::route::plan::MAX_SAMPLES_PER_LEG) as usize;
            for k in 0..=n {
                let s = start_m + (end_m - start_m) * k as f64 / n as f64;
                let g = plan.grade_at(s);
                if g > p.max_uphill_grade_rad {
                    (p.max_uphill_grade_rad, p.uphill_at_m) = (g, s);
                }
                if -g > p.max_downhill_grade_rad {
                    (p.max_downhill_grade_rad, p.downhill_at_m) = (-g, s);
                }
                let slope = Slope::new(g, plan.cross_slope_at(s));
                p.slopes.sample_grade(veh, ground, slope, s);
                need(traction_coefficient_needed(veh, ground, 0.0, slope), s, &mut p);
            }
        } else {
            need(traction_coefficient_needed(veh, ground, 0.0, Slope::LEVEL), start_m, &mut p);
        }
        if plan.has_cross_slope() {
            // Cross slopes at the plan's own points (where the raster was sampled).
            let (first, last) = plan.leg_point_range(leg);
            let mut cursor = crate::route::Cursor::default();
            for i in first..=last {
                let s = plan.point_s_m(i);
                let (g, c) = plan.slope_at_cursor(s, &mut cursor);
                let slope = Slope::new(g, c);
                p.slopes.sample_cross(veh, ground, slope, s);
                need(traction_coefficient_needed(veh, ground, 0.0, slope), s, &mut p);
            }
        }
        let mut most = (p.traction_needed, p.traction_needed_at_m);
        for t in &p.turns {
            let mu = traction_coefficient_needed(veh, &t.ground, t.sign() * t.curvature_per_m, t.slope());
            if mu > most.0 {
                most = (mu, t.s_m);
            }
        }
        (p.traction_needed, p.traction_needed_at_m) = most;
        p
    }
}

/// A turn of the plan the vehicle cannot drive at the leg's speed (the JSON `failing_turns`).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct FailingTurn {
    /// Arc length along the route of its tightest point.
    pub at_m: f64,
    /// Its tightest point in the route's local frame.
    pub x_m: f64,
    pub y_m: f64,
    /// Longitude and latitude of that point (GeoJSON input only).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub lon_deg: Option<f64>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub lat_deg: Option<f64>,
    /// Radius the plan asks for there.
    pub radius_m: f64,
    /// Speed it is judged at: the speed planned there (scaled with the leg's profile in the
    /// margin search).
    pub speed_mps: f64,
    /// Tightest radius the vehicle can drive there at the leg's speed and the local grade.
    pub tightest_radius_m: f64,
    pub limited_by: CurvatureLimit,
    /// Grade where the turn is, percent (positive uphill).
    pub grade_pct: f64,
    /// Cross slope where the turn is, percent (positive when the left side is higher).
    pub cross_slope_pct: f64,
    /// True for a sharp corner of the polyline (read at the curvature scale): `relax` repairs it.
    pub sharp_corner: bool,
    /// Turning angle at the corner point, degrees (positive left).
    pub turn_deg: f64,
}

/// The turns of a leg checked at one speed.
#[derive(Debug, Clone, PartialEq)]
pub struct TurnCheck {
    /// Achievable curvature at the turn that comes closest to failing (or at the tightest
    /// point), and the required / achievable ratio there.
    pub achievable: Achievable,
    pub worst_ratio: f64,
    pub worst_at_m: f64,
    pub worst_per_m: f64,
    /// Speed the turn that comes closest to failing is judged at.
    pub worst_speed_mps: f64,
    /// Runs of consecutive vertices (each within 2 curvature scales, and at least 1.05 m, of the
    /// last) that need more than the vehicle can drive, each as its tightest point.
    pub failing: Vec<FailingTurn>,
}

/// Checks every turn of leg `leg` with the leg's speed profile scaled so its largest value is
/// `top_speed_mps` (the leg's own speed for the report, other speeds for the margins; each turn
/// is judged at the speed planned where it is, times that scale; docs/method.md, Verdicts). The
/// kinematic limit is the leg's own model's at that speed; the traction limit at each turn's
/// grade and on the ground under the contact patch there, so a turn at a terrain boundary is
/// judged alike for the legs on both sides.
pub fn check_turns(drive: &RouteDrive, leg: usize, plan: &LegPlan, top_speed_mps: f64) -> TurnCheck {
    let ld = &drive.legs[leg];
    let scale = if plan.speed_mps > 0.0 { top_speed_mps / plan.speed_mps } else { 1.0 };
    // Most legs plan one speed: the kinematic limit is then computed once.
    let mut kinematic_at = (f64::NAN, 0.0);
    // Consecutive vertices mostly share ground, speed, slope and direction (a dense plan has
    // thousands a leg): the traction limit is recomputed only when one of them changes, compared
    // bit for bit, so the result is the one computed afresh.
    let mut traction_at: Option<([u64; 7], f64)> = None;
    let mut at = |speed_mps: f64, t: Option<&TurnPoint>| {
        if kinematic_at.0 != speed_mps {
            kinematic_at = (speed_mps, kinematic_curvature_limit(&drive.limits, &ld.controller, &ld.actual, speed_mps));
        }
        let (ground, slope, sign) = t.map_or((&ld.ground, Slope::LEVEL, 1.0), |t| (&t.ground, t.slope(), t.sign()));
        let key = [
            ground.rolling_resistance,
            ground.traction_coefficient,
            ground.lateral_resistance_max,
            speed_mps,
            slope.grade_rad,
            slope.cross_slope,
            sign,
        ]
        .map(f64::to_bits);
        let traction_per_m = match traction_at {
            Some((k, v)) if k == key => v,
            _ => {
                let v = traction_curvature_limit_toward(&drive.vehicle, ground, speed_mps, slope, sign);
                traction_at = Some((key, v));
                v
            }
        };
        Achievable { kinematic_per_m: kinematic_at.1, traction_per_m: Some(traction_per_m) }
    };
    let tightest = plan.turns.iter().find(|t| t.s_m == plan.tightest_at_m);
    let mut check = TurnCheck {
        achievable: match tightest {
            Some(t) => at(t.speed_mps * scale, Some(t)),
            None => at(top_speed_mps, None),
        },
        worst_ratio: 0.0,
        worst_at_m: plan.tightest_at_m,
        worst_per_m: plan.tightest_per_m,
        worst_speed_mps: tightest.map_or(top_speed_mps, |t| t.speed_mps * scale),
        failing: Vec::new(),
    };
    // The failing run being built: (last vertex, its representative and ratio). Consecutive
    // failing vertices closer than this belong to one turn.
    let join_m = (2.0 * drive.curvature_scale_m).max(crate::route::plan::ARC_SAMPLE_MAX_SPACING_M);
    let mut run: Option<(TurnPoint, TurnPoint, f64, Achievable)> = None;
    let close = |run: &mut Option<(TurnPoint, TurnPoint, f64, Achievable)>, out: &mut Vec<FailingTurn>| {
        if let Some((_, t, _, a)) = run.take() {
            out.push(failing_turn(&t, &a, t.speed_mps * scale));
        }
    };
    for t in &plan.turns {
        let speed_mps = t.speed_mps * scale;
        let a = at(speed_mps, Some(t));
        let ach = a.curvature_per_m();
        let ratio = if ach > 0.0 { t.curvature_per_m / ach } else { f64::INFINITY };
        if ratio > check.worst_ratio {
            (check.worst_ratio, check.worst_at_m, check.worst_per_m, check.achievable, check.worst_speed_mps) =
                (ratio, t.s_m, t.curvature_per_m, a, speed_mps);
        }
        if ratio > 1.0 {
            match &mut run {
                Some((last, best, best_ratio, best_a)) if t.index == last.index + 1 && t.s_m - last.s_m <= join_m => {
                    *last = *t;
                    if ratio > *best_ratio {
                        (*best, *best_ratio, *best_a) = (*t, ratio, a);
                    }
                }
                _ => {
                    close(&mut run, &mut check.failing);
                    run = Some((*t, *t, ratio, a));
                }
            }
        } else {
            close(&mut run, &mut check.failing);
        }
    }
    close(&mut run, &mut check.failing);
    check
}

fn failing_turn(t: &TurnPoint, a: &Achievable, speed_mps: f64) -> FailingTurn {
    let ach = a.curvature_per_m();
    FailingTurn {
        at_m: t.s_m,
        x_m: t.point[0],
        y_m: t.point[1],
        lon_deg: None,
        lat_deg: None,
        radius_m: 1.0 / t.curvature_per_m,
        speed_mps,
        tightest_radius_m: if ach > 0.0 { 1.0 / ach } else { f64::INFINITY },
        limited_by: a.binding(),
        grade_pct: 100.0 * t.grade_rad.tan(),
        cross_slope_pct: 100.0 * t.cross_slope,
        sharp_corner: t.sharp,
        turn_deg: t.turn_rad.to_degrees(),
    }
}

impl FailingTurn {
    /// The reason line for this turn, in plain words (docs/method.md, Verdicts).
    pub fn reason(&self, terrain: &str, scale_m: f64) -> String {
        let speed_mps = self.speed_mps;
        let limiter = match self.limited_by {
            CurvatureLimit::Kinematic => "slip and the yaw-rate limit".to_string(),
            CurvatureLimit::Traction => format!("thrust against traction on {terrain}"),
        };
        let mut grade = if self.grade_pct.abs() >= 0.5 {
            format!(", {:.0} % {}", self.grade_pct.abs(), if self.grade_pct > 0.0 { "uphill" } else { "downhill" })
        } else {
            String::new()
        };
        if self.cross_slope_pct.abs() >= 0.5 {
            grade.push_str(&format!(", {:.0} % cross slope", self.cross_slope_pct.abs()));
        }
        let tightest = if self.tightest_radius_m.is_finite() {
            format!("the tightest is {:.1} m", self.tightest_radius_m)
        } else {
            "it cannot turn at all".to_string()
        };
        let fix = if self.sharp_corner {
            format!(
                "; it is a sharp corner (the plan turns {:.0} degrees at one point, read at the {scale_m} m curvature scale): \
                 `skidroute relax` replaces it with an arc the vehicle can drive",
                self.turn_deg.abs()
            )
        } else if self.tightest_radius_m.is_finite() {
            match self.limited_by {
                CurvatureLimit::Kinematic => {
                    format!("; widen it to at least {:.1} m or plan a lower speed", self.tightest_radius_m)
                }
                CurvatureLimit::Traction => format!("; widen it to at least {:.1} m", self.tightest_radius_m),
            }
        } else {
            String::new()
        };
        format!(
            "turn needs radius {:.1} m ({:.0} m along the route{grade}); at {speed_mps:.1} m/s on {terrain} {tightest} ({limiter}){fix}",
            self.radius_m, self.at_m
        )
    }
}
