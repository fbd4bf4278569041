//! What the reasons of a check are about, marked where they apply: every reason of a leg with a
//! position (a failing or tight turn, the deviation peak, the steepest climb or descent, a speed
//! change beyond traction, the power rating, a turn widened by traction, lateral acceleration,
//! cross slope, where the simulation stopped) becomes a [`Spot`] with its own glyph, coloured by
//! the reason's level; stretches where traction or a rating bound the motion are runs of the
//! trace.

use plotters::style::RGBColor;

use super::legend::{Glyph, Shape};
use super::palette::{CAUTION_AMBER, FAIL_RED};
use crate::assess::{leg_steps, LegReport, ReasonAbout, Verdict};
use crate::check::CheckedRoute;

/// Colour of the band under traction-limited stretches of the predicted path.
pub(crate) const LIMITED_COLOR: RGBColor = RGBColor(120, 20, 200);

/// One reason marked at its place.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct Spot {
    /// Leg, from 1.
    pub leg: usize,
    pub verdict: Verdict,
    pub about: ReasonAbout,
    pub at_m: f64,
    /// Where the glyph goes, local metres (on the plan; the deviation peak on the predicted path).
    pub pos: [f64; 2],
    /// A short label: what and how much.
    pub label: String,
}

/// Colour of a verdict on plots.
pub(crate) fn verdict_color(v: Verdict) -> RGBColor {
    match v {
        Verdict::Fail => FAIL_RED,
        Verdict::Caution => CAUTION_AMBER,
        Verdict::Pass => RGBColor(0, 140, 0),
    }
}

/// Colour of verdict text (amber darkened to read on white).
pub(crate) fn verdict_text_color(v: Verdict) -> RGBColor {
    match v {
        Verdict::Caution => RGBColor(170, 105, 0),
        other => verdict_color(other),
    }
}

/// The glyph shape and legend words of what a reason is about; `None` for reasons about a whole
/// leg.
pub(crate) fn shape_of(about: ReasonAbout) -> Option<(Shape, &'static str)> {
    Some(match about {
        ReasonAbout::Turn => (Shape::Cross, "turn too tight (or near the limit)"),
        ReasonAbout::Deviation => (Shape::Ring, "deviation peak"),
        ReasonAbout::Stop => (Shape::Square, "simulation stopped here"),
        ReasonAbout::Climb => (Shape::TriangleUp, "steepest climb"),
        ReasonAbout::Descent => (Shape::TriangleDown, "steepest descent"),
        ReasonAbout::SpeedChange => (Shape::Diamond, "speed change beyond traction"),
        ReasonAbout::Power => (Shape::Star, "power rating binds"),
        ReasonAbout::TurnTraction => (Shape::Plus, "turn widened by traction"),
        ReasonAbout::Lateral => (Shape::Dot, "sideways acceleration peak"),
        ReasonAbout::CrossSlope => (Shape::Slant, "cross slope"),
        ReasonAbout::Speed | ReasonAbout::Other => return None,
    })
}

fn short_label(l: &LegReport, about: ReasonAbout, v: Verdict) -> String {
    match about {
        ReasonAbout::Turn if v == Verdict::Fail => "turn too tight".into(),
        ReasonAbout::Turn => "tight turn".into(),
        ReasonAbout::Deviation => format!("deviation {:.2} m", l.max_deviation_m),
        ReasonAbout::Stop => "stops".into(),
        ReasonAbout::Climb => format!("climb {:.0} %", l.max_uphill_grade_pct),
        ReasonAbout::Descent => format!("descent {:.0} %", l.max_downhill_grade_pct),
        ReasonAbout::SpeedChange => "speed change".into(),
        ReasonAbout::Power => "power".into(),
        ReasonAbout::TurnTraction => "turn widened".into(),
        ReasonAbout::Lateral => "sideways accel.".into(),
        ReasonAbout::CrossSlope => "cross slope".into(),
        ReasonAbout::Speed | ReasonAbout::Other => String::new(),
    }
}

/// Every reason of a route with a position, as spots; the deviation peak sits on the predicted
/// path where the leg's deviation is largest.
pub(crate) fn spots(cr: &CheckedRoute) -> Vec<Spot> {
    let plan = &cr.drive.plan;
    let mut out = Vec::new();
    for l in &cr.report.legs {
        for (k, spot) in l.reason_spots.iter().enumerate() {
            let (Some(at_m), Some(_)) = (spot.at_m, shape_of(spot.about)) else { continue };
            let verdict = l.reason_verdicts.get(k).copied().unwrap_or(l.verdict);
            let pos = match spot.about {
                ReasonAbout::Deviation => peak_pose(cr, l.index - 1).unwrap_or_else(|| plan.point_at(at_m)),
                _ => plan.point_at(at_m),
            };
            let label = short_label(l, spot.about, verdict);
            let s = Spot { leg: l.index, verdict, about: spot.about, at_m, pos, label };
            // One glyph per kind and place: a corner at a leg boundary is judged for both legs,
            // and reads as one turn (the worse level kept).
            match out.iter_mut().find(|o: &&mut Spot| o.about == s.about && (o.at_m - s.at_m).abs() < 0.5) {
                Some(o) if s.verdict > o.verdict => *o = s,
                Some(_) => {}
                None => out.push(s),
            }
        }
    }
    out
}

/// Position of the largest deviation on leg `leg` (0-based) of the trace.
fn peak_pose(cr: &CheckedRoute, leg: usize) -> Option<[f64; 2]> {
    let steps = leg_steps(&cr.trace, leg);
    let mut best: Option<&crate::rollout::Step> = None;
    for s in steps {
        if best.is_none_or(|b| s.deviation_m > b.deviation_m) {
            best = Some(s);
        }
    }
    best.map(|s| [s.pose.x_m, s.pose.y_m])
}

/// Index of the step with the largest deviation on every leg (kept when the path is simplified).
pub(crate) fn peak_steps(cr: &CheckedRoute) -> Vec<usize> {
    let mut out = Vec::new();
    let steps = &cr.trace.steps;
    let mut i = 0;
    while i < steps.len() {
        let leg = steps[i].leg;
        let mut best = i;
        let mut j = i;
        while j < steps.len() && steps[j].leg == leg {
            if steps[j].deviation_m > steps[best].deviation_m {
                best = j;
            }
            j += 1;
        }
        out.push(best);
        i = j;
    }
    out
}

/// Runs of the trace (index ranges) where traction or a rating bound the motion.
pub(crate) fn limited_runs(cr: &CheckedRoute) -> Vec<std::ops::Range<usize>> {
    let mut runs = Vec::new();
    let mut start = None;
    for (i, s) in cr.trace.steps.iter().enumerate() {
        match (s.traction_limited(), start) {
            (true, None) => start = Some(i),
            (false, Some(a)) => {
                runs.push(a..i + 1);
                start = None;
            }
            _ => {}
        }
    }
    if let Some(a) = start {
        runs.push(a..cr.trace.steps.len());
    }
    runs
}

/// Legend lines for the kinds of spots present, in a fixed order.
pub(crate) fn spot_entries(spots: &[Spot]) -> Vec<(Glyph, String)> {
    let mut kinds: Vec<ReasonAbout> = spots.iter().map(|s| s.about).collect();
    kinds.sort();
    kinds.dedup();
    kinds
        .into_iter()
        .filter_map(|k| {
            let (shape, words) = shape_of(k)?;
            let worst = spots.iter().filter(|s| s.about == k).map(|s| s.verdict).max().unwrap_or(Verdict::Caution);
            Some((Glyph::Mark(shape, verdict_color(worst)), words.to_string()))
        })
        .collect()
}
