//! The simulated trace as CSV, local frame (docs/method.md, Outputs): the designed columns
//! `t_s,x_m,y_m,yaw_rad,leg,deviation_m,left_mps,right_mps`, then extra columns (effort, and
//! `traction_limited`: 1 where traction or a rating bound the motion of the step), then `route`.
//! Legs are numbered from 1.

use std::fmt::Write;

use crate::check::CheckRun;

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

/// Renders the traces of every route of the run.
pub fn trace_csv(run: &CheckRun) -> String {
    let mut out = String::with_capacity(run.routes.iter().map(|r| r.trace.steps.len() * 120).sum::<usize>() + 200);
    out.push_str(TRACE_HEADER);
    out.push('\n');
    for cr in &run.routes {
        let name = csv_field(&cr.route.name);
        for s in &cr.trace.steps {
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
