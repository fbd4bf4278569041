//! The slope rules of the verdict (docs/method.md, Verdicts): a leg's climbs, descents and cross
//! slopes against traction, the drive's rating and the tipping limit. They do not depend on
//! speed, so they are read once per leg with its other plan facts ([`super::LegPlan`]).
//!
//! Climbs and descents are sampled every metre (the grade over the metre around each sample);
//! cross slopes at the plan's own points (an elevation raster places them at its pixel size).
//! Every place is judged with each side's own normal load (on a cross slope the downhill side
//! carries more; `EffortVehicle::side_loads_n`), and the worst place of each kind is kept: the
//! one whose need is the largest share of its limit. Units: newtons, radians, tangents for cross
//! slopes, metres along the route.

use crate::effort::{EffortVehicle, Ground, Slope};
use crate::rollout::RouteDrive;
use crate::turn_limit::{cross_slope_limit, SideLimit, CROSS_SLOPE_CAUTION_SHARE};

use super::{add_at, LegPlan, LegReport, ReasonAbout, Verdict};

/// What one side needs to hold the vehicle's way on a slope (steady, driving straight), against
/// its limit.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SideNeed {
    /// Arc length along the route.
    pub at_m: f64,
    pub slope: Slope,
    /// Thrust (on a climb) or braking (on a descent) the binding side needs, N.
    pub need_n: f64,
    /// That side's limit, min(mu N_side, rating), N.
    pub limit_n: f64,
    /// The traction part of that limit, mu N_side, N.
    pub traction_n: f64,
    /// True when the binding side carries less than half the load (the uphill side of a cross
    /// slope, with a centre-of-gravity height in the profile).
    pub lighter_side: bool,
}

impl SideNeed {
    /// Need over limit.
    pub fn share(&self) -> f64 {
        if self.limit_n > 0.0 {
            self.need_n / self.limit_n
        } else if self.need_n > 0.0 {
            f64::INFINITY
        } else {
            0.0
        }
    }
}

/// A cross slope of the plan against the steepest the vehicle can stand on.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct CrossNeed {
    pub at_m: f64,
    /// Cross slope there (tangent, positive when the left side is higher) and the grade.
    pub slope: Slope,
    /// The largest c cos(grade) the vehicle stands on ([`cross_slope_limit`]) and what sets it.
    pub limit: f64,
    pub limited_by: SideLimit,
}

impl CrossNeed {
    /// |c| cos(grade) over the limit.
    pub fn share(&self) -> f64 {
        self.slope.side_ratio().abs() / self.limit.max(1e-12)
    }

    /// The cross slope (tangent) at which the limit is reached at this grade.
    pub fn limit_cross_slope(&self) -> f64 {
        self.limit / self.slope.grade_rad.cos().max(1e-12)
    }
}

/// The worst climb, descent and cross slope of a leg.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct SlopeFacts {
    pub climb: Option<SideNeed>,
    pub hold: Option<SideNeed>,
    pub cross: Option<CrossNeed>,
}

impl SlopeFacts {
    /// Keeps the climb or descent at `at_m` on `slope` if it is the worst so far (level ground
    /// is neither).
    pub fn sample_grade(&mut self, veh: &EffortVehicle, ground: &Ground, slope: Slope, at_m: f64) {
        let worse = |old: &Option<SideNeed>, new: &SideNeed| old.is_none_or(|o| clearly_worse(new.share(), o.share()));
        if slope.grade_rad > 0.0 {
            let n = side_need(veh, ground, slope, at_m, true);
            if worse(&self.climb, &n) {
                self.climb = Some(n);
            }
        } else if slope.grade_rad < 0.0 {
            let n = side_need(veh, ground, slope, at_m, false);
            if worse(&self.hold, &n) {
                self.hold = Some(n);
            }
        }
    }

    /// Keeps the cross slope at `at_m` on `slope` if it is the worst so far.
    pub fn sample_cross(&mut self, veh: &EffortVehicle, ground: &Ground, slope: Slope, at_m: f64) {
        let (limit, limited_by) = cross_slope_limit(veh, ground);
        let n = CrossNeed { at_m, slope, limit, limited_by };
        if self.cross.is_none_or(|o| clearly_worse(n.share(), o.share())) {
            self.cross = Some(n);
        }
    }

    /// True when no climb, descent or cross slope of the leg fails (the slope rules do not
    /// depend on speed).
    pub fn pass(&self) -> bool {
        self.climb.is_none_or(|n| n.share() <= 1.0)
            && self.hold.is_none_or(|n| n.share() <= 1.0)
            && self.cross.is_none_or(|n| n.share() <= 1.0)
    }
}

/// True when `new` is worse than `old` by more than rounding, so of equal places the first is
/// named.
fn clearly_worse(new: f64, old: f64) -> bool {
    new > old * (1.0 + 1e-9) + 1e-12
}

/// The binding side's need on a climb (`climb`: thrust f_r N_side + W sin(grade) / 2) or a
/// descent (braking W sin|grade| / 2 - f_r N_side) against min(mu N_side, rating): the side with
/// the larger share (statics on an incline; Wong 2008, grade resistance).
fn side_need(veh: &EffortVehicle, ground: &Ground, slope: Slope, at_m: f64, climb: bool) -> SideNeed {
    let w = veh.weight_n();
    let grade_n = slope.grade_force_per_side_n(w);
    let (n_left, n_right) = veh.side_loads_n(slope);
    let one = |n_side: f64| {
        let rolling_n = ground.rolling_resistance * n_side;
        let need_n = if climb { rolling_n + grade_n } else { -grade_n - rolling_n };
        let traction_n = ground.traction_coefficient * n_side;
        let lighter_side = n_side < 0.5 * (n_left + n_right) - 1e-9;
        SideNeed { at_m, slope, need_n, limit_n: traction_n.min(veh.max_side_thrust_n), traction_n, lighter_side }
    };
    let (l, r) = (one(n_left), one(n_right));
    if r.share() > l.share() {
        r
    } else {
        l
    }
}

/// True when leg `plan`'s climbs, descents and cross slopes stay within traction, the rating and
/// the tipping limit (the slope rules of the verdict; they do not depend on speed).
pub fn slopes_pass(plan: &LegPlan) -> bool {
    plan.slopes.pass()
}

/// The slope rules (docs/method.md, Verdicts): the worst climb must not need more thrust on a
/// side than traction on that side's load or the rating gives, holding on the worst descent not
/// more braking than that, and the worst cross slope must stay within the lateral grip (the
/// traction coefficient) and the tipping limit B / (2 h); a cross slope above 80 % of its limit
/// earns a caution.
pub(super) fn judge_slopes(leg: &mut LegReport, plan: &LegPlan, drive: &RouteDrive) {
    let veh = &drive.vehicle;
    let terrain = leg.terrain.clone();
    let gives = |n: &SideNeed| {
        if n.traction_n <= veh.max_side_thrust_n {
            format!("traction on {terrain} gives {:.0} N there", n.traction_n)
        } else {
            format!("the drive is rated {:.0} N", veh.max_side_thrust_n)
        }
    };
    let per_side = |n: &SideNeed| {
        if n.lighter_side {
            format!(
                "on its uphill side, which carries less of the load on the {:.0} % cross slope",
                100.0 * n.slope.cross_slope.abs()
            )
        } else {
            "per side".to_string()
        }
    };
    if let Some(n) = plan.slopes.climb.filter(|n| n.share() > 1.0) {
        let why = format!(
            "cannot climb: the {:.0} % grade ({:.0} m along the route) with rolling resistance needs {:.0} N {}; {}",
            100.0 * n.slope.grade_rad.tan(),
            n.at_m,
            n.need_n,
            per_side(&n),
            gives(&n)
        );
        add_at(leg, Verdict::Fail, why, ReasonAbout::Climb, Some(n.at_m));
    }
    if let Some(n) = plan.slopes.hold.filter(|n| n.share() > 1.0) {
        let why = format!(
            "cannot hold on the descent: the {:.0} % downhill grade ({:.0} m along the route) needs {:.0} N of braking {}; {}; the vehicle slides",
            100.0 * n.slope.grade_rad.tan().abs(),
            n.at_m,
            n.need_n,
            per_side(&n),
            gives(&n)
        );
        add_at(leg, Verdict::Fail, why, ReasonAbout::Descent, Some(n.at_m));
    }
    if let Some(c) = plan.slopes.cross {
        judge_cross_slope(leg, &c, veh, &terrain);
    }
}

/// The cross-slope rule: fail beyond the limit, caution above [`CROSS_SLOPE_CAUTION_SHARE`] of
/// it, each with the slope, the place and the limit in percent.
fn judge_cross_slope(leg: &mut LegReport, c: &CrossNeed, veh: &EffortVehicle, terrain: &str) {
    let share = c.share();
    let (pct, at, limit_pct) = (100.0 * c.slope.cross_slope.abs(), c.at_m, 100.0 * c.limit_cross_slope());
    let tipping = || {
        match veh.cog_height_m {
        Some(h) => format!(
            "with its centre of gravity {h:.2} m up and {:.2} m between its tracks (B / 2h) it stands up to {limit_pct:.0} %",
            veh.track_width_m
        ),
        None => format!("it stands up to {limit_pct:.0} %"),
    }
    };
    if share > 1.0 {
        let why = match c.limited_by {
            SideLimit::Grip => format!(
                "cross slope {pct:.0} % at {at:.0} m along the route: the vehicle slides sideways; {terrain} holds up to {limit_pct:.0} % (its traction coefficient {:.2} is the lateral grip)",
                c.limit
            ),
            SideLimit::Tipping => {
                format!("cross slope {pct:.0} % at {at:.0} m along the route: the vehicle tips over; {}", tipping())
            }
        };
        add_at(leg, Verdict::Fail, why, ReasonAbout::CrossSlope, Some(c.at_m));
    } else if share > CROSS_SLOPE_CAUTION_SHARE {
        let what = match c.limited_by {
            SideLimit::Grip => format!("the {limit_pct:.0} % {terrain} holds before the vehicle slides sideways"),
            SideLimit::Tipping => format!("the {limit_pct:.0} % at which the vehicle tips over (B / 2h)"),
        };
        let why = format!("cross slope {pct:.0} % at {at:.0} m along the route uses {:.0} % of {what}", 100.0 * share);
        add_at(leg, Verdict::Caution, why, ReasonAbout::CrossSlope, Some(c.at_m));
    }
}
