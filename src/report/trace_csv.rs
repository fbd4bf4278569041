//! The simulated trace as CSV, local frame (DESIGN 5): the designed columns
//! `t_s,x_m,y_m,yaw_rad,leg,deviation_m,left_mps,right_mps`, then extra columns, then `route`.
//! Legs are numbered from 1.

use std::fmt::Write;

use crate::check::CheckRun;

/// Header line of the trace CSV.
pub const TRACE_HEADER: &str =
    "t_s,x_m,y_m,yaw_rad,leg,deviation_m,left_mps,right_mps,progress_m,offset_m,vx_mps,vy_mps,yaw_rate_radps,route";

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
                "{:.3},{:.4},{:.4},{:.5},{},{:.4},{:.4},{:.4},{:.3},{:.4},{:.4},{:.4},{:.5},{}",
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
                name
            );
        }
    }
    out
}
