//! The simulated trace as CSV, local frame (docs/method.md, Outputs): the designed columns
//! `t_s,x_m,y_m,yaw_rad,leg,deviation_m,left_mps,right_mps`, then extra columns (effort, and
//! `traction_limited`: 1 where traction or a rating bound the motion of the step), then `route`.
//! Legs are numbered from 1.
//!
//! `every` thins the trace (README, Outputs): every `every`-th step of a route is written, and
//! so is the first and the last step of every leg and every step where `traction_limited`
//! changes from the step before, so no leg and no limited stretch goes missing.

use std::fmt::Write;

use crate::check::CheckRun;
use crate::rollout::Step;

/// Header line of the trace CSV.
pub const TRACE_HEADER: &str =
    "t_s,x_m,y_m,yaw_rad,leg,deviation_m,left_mps,right_mps,progress_m,offset_m,vx_mps,vy_mps,\
yaw_rate_radps,accel_mps2,grade_rad,left_thrust_n,right_thrust_n,outer_thrust_n,inner_thrust_n,mechanical_power_w,\
drawn_power_w,traction_limited,route";

/// Quotes a CSV field when it needs it.
pub(crate) fn csv_field(s: &str) -> String {
    if s.contains([',', '"', '\n', '\r']) {
        format!("\"{}\"", s.replace('"', "\"\""))
    } else {
        s.to_string()
    }
}

/// True when step `i` of `steps` is written with `every` (see the module comment): a multiple
/// of `every`, the first or last step of a leg, or a change of `traction_limited`.
pub fn keeps_step(steps: &[Step], i: usize, every: usize) -> bool {
    let Some(s) = steps.get(i) else { return false };
    if every <= 1 || i.is_multiple_of(every) {
        return true;
    }
    let (prev, next) = (i.checked_sub(1).and_then(|j| steps.get(j)), steps.get(i + 1));
    let leg_edge = prev.is_none_or(|p| p.leg != s.leg) || next.is_none_or(|n| n.leg != s.leg);
    leg_edge || prev.is_some_and(|p| p.traction_limited() != s.traction_limited())
}

/// Renders the traces of every route of the run, every step.
pub fn trace_csv(run: &CheckRun) -> String {
    trace_csv_every(run, 1)
}

/// Renders the traces of every route of the run, thinned to every `every`-th step (see the
/// module comment; 0 and 1 write every step).
pub fn trace_csv_every(run: &CheckRun, every: usize) -> String {
    let every = every.max(1);
    let rows: usize = run.routes.iter().map(|r| r.trace.steps.len() / every + 2 * r.report.legs.len() + 2).sum();
    let mut out = String::with_capacity(rows * 150 + 200);
    out.push_str(TRACE_HEADER);
    out.push('\n');
    for cr in &run.routes {
        let name = csv_field(&cr.route.name);
        let steps = &cr.trace.steps;
        for (_, s) in steps.iter().enumerate().filter(|&(i, _)| keeps_step(steps, i, every)) {
            let _ = writeln!(
                out,
                "{:.3},{:.4},{:.4},{:.5},{},{:.4},{:.4},{:.4},{:.3},{:.4},{:.4},{:.4},{:.5},{:.4},{:.5},{:.1},{:.1},{:.1},{:.1},{:.1},{:.1},{},{}",
                s.t_s,
                s.pose.x_m,
                s.pose.y_m,
                s.pose.yaw_rad,
                s.leg + 1,
                s.deviation_m,
                s.left_mps,
                s.right_mps,
                s.progress_m,
                s.offset_m,
                s.twist.vx_mps,
                s.twist.vy_mps,
                s.twist.omega_radps,
                s.accel_mps2,
                s.effort.grade_rad,
                s.effort.left_thrust_n,
                s.effort.right_thrust_n,
                s.effort.outer_thrust_n,
                s.effort.inner_thrust_n,
                s.effort.mechanical_power_w,
                s.effort.drawn_power_w,
                u8::from(s.traction_limited()),
                name
            );
        }
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::turn_limit::StepLimit;

    /// 95 steps: leg 0 for steps 0..=40, leg 1 for 41..=94; traction limited on 57..=62.
    fn steps() -> Vec<Step> {
        (0..95)
            .map(|i| Step {
                t_s: 0.05 * i as f64,
                leg: usize::from(i > 40),
                limit: if (57..=62).contains(&i) { StepLimit::Turn } else { StepLimit::Free },
                ..Step::default()
            })
            .collect()
    }

    #[test]
    fn every_tenth_step_with_leg_ends_and_limit_changes() {
        let steps = steps();
        let kept: Vec<usize> = (0..steps.len()).filter(|&i| keeps_step(&steps, i, 10)).collect();
        // Multiples of 10 (0..=90), leg 0's last (40, a multiple) and leg 1's first (41) and last
        // (94), and where the limit starts (57) and ends (63 is the first free step again).
        let want = vec![0, 10, 20, 30, 40, 41, 50, 57, 60, 63, 70, 80, 90, 94];
        assert_eq!(kept, want);
        // 1 and 0 keep every step; past the end keeps nothing.
        assert!((0..steps.len()).all(|i| keeps_step(&steps, i, 1) && keeps_step(&steps, i, 0)));
        assert!(!keeps_step(&steps, steps.len(), 10));
    }
}
