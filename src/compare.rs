//! Choosing among alternative routes (`skidroute compare`): every alternative is checked with
//! the same profile, then ranked by verdict first (pass, caution, fail) and then by one
//! criterion (`time`, `energy`, `deviation` or `drift`), lower is better. Ties keep the input
//! order, so the ranking is deterministic.
//!
//! Also gives the alternatives' plans and predicted paths in one common frame for an overlay
//! plot: GeoJSON files are each projected about their own first point, so every route is taken
//! back to lon/lat through its own origin and projected about the first route's origin.
//! Units: metres, seconds, watt-hours.

use serde::Serialize;

use crate::assess::{RouteReport, Verdict};
use crate::check::{CheckRun, CheckedRoute};

/// What alternatives with the same verdict are ranked by (lower is better).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "lowercase")]
pub enum RankBy {
    /// Predicted driving time.
    Time,
    /// Predicted energy drawn from the battery.
    Energy,
    /// Largest predicted deviation from the plan.
    Deviation,
    /// Drift if localization is lost (CEP95 at the route end, seeded Monte Carlo).
    Drift,
}

impl RankBy {
    /// The name used on the command line and in reports.
    pub fn name(self) -> &'static str {
        match self {
            RankBy::Time => "time",
            RankBy::Energy => "energy",
            RankBy::Deviation => "deviation",
            RankBy::Drift => "drift",
        }
    }
}

/// A comparison could not be made.
#[derive(Debug, thiserror::Error)]
pub enum CompareError {
    #[error("nothing to compare: the inputs hold no route")]
    NoRoutes,
    #[error("ranking by drift needs the profile and a seed: use compare::rank_by_drift")]
    DriftNeedsProfile,
    #[error(
        "cannot overlay route '{csv_route}' (CSV, local map frame) with route '{geo_route}' (GeoJSON, lon/lat) \
         in one plot: their frames are unrelated"
    )]
    MixedFrames { csv_route: String, geo_route: String },
}

/// The energy of a route in Wh from the effort model; the one place the energy ranking reads.
/// `None` (ranking falls back to time, and the report says so) only if it is not finite.
pub fn route_energy_wh(report: &RouteReport) -> Option<f64> {
    report.energy_wh.is_finite().then_some(report.energy_wh)
}

/// One alternative in the ranking (the JSON `ranking` entries).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Ranked {
    /// 1-based rank.
    pub rank: usize,
    pub route: String,
    pub source: String,
    pub verdict: Verdict,
    pub length_m: f64,
    pub time_s: f64,
    /// Predicted energy drawn, Wh.
    pub energy_wh: Option<f64>,
    pub max_deviation_m: f64,
    /// 1-based indices of the legs that fail.
    pub failing_legs: Vec<usize>,
    /// CEP95 at the route's end if localization is lost at its start (only with `--by drift`).
    pub drift_cep95_m: Option<f64>,
    /// The value ranked on within the verdict class; `None` where it is not available.
    pub ranked_value: Option<f64>,
    /// Index of this alternative in the check run (input order).
    #[serde(skip)]
    pub run_index: usize,
}

/// A ranked comparison of alternatives.
#[derive(Debug, Clone)]
pub struct Comparison {
    pub run: CheckRun,
    pub by: RankBy,
    /// True when `by` was not available for every route and time was used instead.
    pub fell_back_to_time: bool,
    /// Seed of the drift Monte Carlo, when ranked by drift.
    pub seed: Option<u64>,
    /// The drift's odometry and heading source in words, when ranked by drift.
    pub drift_sources: Option<String>,
    /// What the drift figures leave out, when ranked by drift (one line per terrain, deduplicated).
    pub warnings: Vec<String>,
    pub ranking: Vec<Ranked>,
}

impl Comparison {
    /// True when at least one alternative passes (cautions allowed unless `strict`).
    pub fn any_acceptable(&self, strict: bool) -> bool {
        self.ranking.iter().any(|r| match r.verdict {
            Verdict::Pass => true,
            Verdict::Caution => !strict,
            Verdict::Fail => false,
        })
    }
}

fn criterion(r: &RouteReport, by: RankBy, drift_cep95_m: Option<f64>) -> Option<f64> {
    match by {
        RankBy::Time => Some(r.time_s),
        RankBy::Energy => route_energy_wh(r),
        RankBy::Deviation => Some(r.max_deviation_m),
        RankBy::Drift => drift_cep95_m,
    }
}

/// Monte Carlo samples per alternative when ranking by drift.
pub const DRIFT_RANKING_SAMPLES: usize = 500;

/// Ranks by drift: for every alternative, the CEP95 at its last leg end when localization is
/// lost at its start (docs/method.md, Drift, [`DRIFT_RANKING_SAMPLES`] samples with the given
/// `seed`, so the ranking is reproducible), with the profile's default odometry and heading
/// source, the same as `drift` and `check --drift` ([`crate::drift::DriftSettings::for_profile`]).
pub fn rank_by_drift(run: CheckRun, profile: &crate::vehicle::Profile, seed: u64) -> Result<Comparison, crate::Error> {
    let defaults = crate::drift::DriftSettings::for_profile(profile);
    rank_by_drift_with(run, profile, seed, defaults.odometry, defaults.heading)
}

/// [`rank_by_drift`] with the odometry and heading source given.
pub fn rank_by_drift_with(
    run: CheckRun,
    profile: &crate::vehicle::Profile,
    seed: u64,
    odometry: crate::drift::Odometry,
    heading: crate::drift::HeadingSource,
) -> Result<Comparison, crate::Error> {
    let settings = crate::drift::DriftSettings {
        samples: DRIFT_RANKING_SAMPLES,
        seed,
        paths_kept: 0,
        odometry,
        heading,
        ..crate::drift::DriftSettings::default()
    };
    let mut warnings: Vec<String> = Vec::new();
    let drift = run
        .routes
        .iter()
        .map(|cr| {
            let report = crate::drift::run_drift(&cr.route, profile, &settings, &crate::progress::NoProgress)?;
            for w in &report.warnings {
                if !warnings.contains(w) {
                    warnings.push(w.clone());
                }
            }
            Ok(report.legs.last().and_then(|l| l.cep95_m()))
        })
        .collect::<Result<Vec<_>, crate::drift::DriftError>>()?;
    let mut cmp = rank_on(run, RankBy::Drift, &drift)?;
    cmp.seed = Some(seed);
    cmp.drift_sources = Some(crate::drift::sources_text(odometry, heading, profile.imu.as_ref()));
    cmp.warnings = warnings;
    Ok(cmp)
}

/// Ranks checked alternatives: verdict first (pass, caution, fail), then `by` (lower first),
/// then time, then input order. Ranking by drift needs the drift estimate and is refused
/// without it. When energy is not available for every route, time is used (and flagged).
///
/// ```
/// use skidroute::compare::{rank, RankBy};
/// use skidroute::check::CheckRun;
/// let run = CheckRun { vehicle_name: "demo".into(), demo_profile: true, routes: vec![], terrain_map: None };
/// assert!(rank(run, RankBy::Time).is_err()); // nothing to compare
/// ```
pub fn rank(run: CheckRun, by: RankBy) -> Result<Comparison, CompareError> {
    if by == RankBy::Drift {
        return Err(CompareError::DriftNeedsProfile);
    }
    rank_on(run, by, &[])
}

fn rank_on(run: CheckRun, by: RankBy, drift: &[Option<f64>]) -> Result<Comparison, CompareError> {
    if run.routes.is_empty() {
        return Err(CompareError::NoRoutes);
    }
    let reports: Vec<&RouteReport> = run.routes.iter().map(|c| &c.report).collect();
    let d = |i: usize| drift.get(i).copied().flatten();
    // A route whose drift samples never reached its end has no CEP95 and ranks last in its
    // verdict class; a missing energy makes the whole ranking fall back to time.
    let fell_back_to_time =
        by != RankBy::Drift && (0..reports.len()).any(|i| criterion(reports[i], by, d(i)).is_none());
    let effective = if fell_back_to_time { RankBy::Time } else { by };
    let mut order: Vec<usize> = (0..reports.len()).collect();
    let key = |i: usize| criterion(reports[i], effective, d(i)).unwrap_or(f64::INFINITY);
    order.sort_by(|&a, &b| {
        reports[a]
            .verdict
            .cmp(&reports[b].verdict)
            .then(key(a).total_cmp(&key(b)))
            .then(reports[a].time_s.total_cmp(&reports[b].time_s))
            .then(a.cmp(&b))
    });
    let ranking = order
        .iter()
        .enumerate()
        .map(|(k, &i)| {
            let r = reports[i];
            Ranked {
                rank: k + 1,
                route: r.route.clone(),
                source: r.source.clone(),
                verdict: r.verdict,
                length_m: r.length_m,
                time_s: r.time_s,
                energy_wh: route_energy_wh(r),
                max_deviation_m: r.max_deviation_m,
                failing_legs: r.legs.iter().filter(|l| l.verdict == Verdict::Fail).map(|l| l.index).collect(),
                drift_cep95_m: d(i),
                ranked_value: criterion(r, effective, d(i)),
                run_index: i,
            }
        })
        .collect();
    Ok(Comparison { run, by, fell_back_to_time, seed: None, drift_sources: None, warnings: Vec::new(), ranking })
}

/// Plan and predicted path of one route in the common frame of a comparison, metres.
#[derive(Debug, Clone, PartialEq)]
pub struct FramedRoute {
    /// Each leg's plan, sampled along its arc length.
    pub plan_legs: Vec<Vec<[f64; 2]>>,
    pub predicted: Vec<[f64; 2]>,
}

/// All routes' plans and predicted paths in one frame: the first route's frame. GeoJSON routes
/// with another origin are taken to lon/lat through their own origin (exact inverse) and
/// projected about the first route's origin; CSV routes share their map frame as they are. A mix
/// of CSV and GeoJSON routes has no common frame and is an error.
pub fn common_frame(routes: &[CheckedRoute]) -> Result<Vec<FramedRoute>, CompareError> {
    let Some(first) = routes.first() else {
        return Err(CompareError::NoRoutes);
    };
    let base = first.route.origin;
    routes
        .iter()
        .map(|cr| {
            let map = |p: [f64; 2]| -> [f64; 2] {
                match (base, cr.route.origin) {
                    (Some(b), Some(o)) if b != o => {
                        let (lon, lat, alt) = o.to_geodetic(p[0], p[1], 0.0);
                        let q = b.to_local(lon, lat, alt);
                        [q[0], q[1]]
                    }
                    _ => p,
                }
            };
            match (base, cr.route.origin) {
                (Some(_), None) => {
                    return Err(CompareError::MixedFrames {
                        csv_route: cr.route.name.clone(),
                        geo_route: first.route.name.clone(),
                    })
                }
                (None, Some(_)) => {
                    return Err(CompareError::MixedFrames {
                        csv_route: first.route.name.clone(),
                        geo_route: cr.route.name.clone(),
                    })
                }
                _ => {}
            }
            let plan = &cr.drive.plan;
            let step_m = (plan.length_m() / 2000.0).max(0.05);
            let plan_legs = (0..plan.leg_count())
                .map(|leg| {
                    let (a, b) = plan.leg_bounds_m(leg);
                    let n = (((b - a) / step_m).ceil() as usize).clamp(1, 20_000);
                    (0..=n).map(|k| map(plan.point_at(a + (b - a) * k as f64 / n as f64))).collect()
                })
                .collect();
            Ok(FramedRoute {
                plan_legs,
                predicted: cr.trace.steps.iter().map(|s| map([s.pose.x_m, s.pose.y_m])).collect(),
            })
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::check::check_routes;
    use crate::route::{Leg, Route, SourcePosition};
    use crate::vehicle::Profile;
    use std::path::PathBuf;

    fn leg(points: Vec<[f64; 2]>, terrain: &str) -> Leg {
        Leg { speed_mps: Some(1.2), corridor_m: Some(1.0), ..Leg::new(terrain, points, SourcePosition::Feature(0)) }
    }

    fn route(name: &str, points: Vec<[f64; 2]>) -> Route {
        Route {
            name: name.into(),
            source: PathBuf::from("alts.geojson"),
            origin: None,
            legs: vec![leg(points, "deep-snow")],
            warnings: Vec::new(),
        }
    }

    /// The shorter alternative turns back sharply (a hairpin corner) on deep snow; the longer one
    /// goes round on a wide arc. The longer one must rank first.
    #[test]
    fn longer_route_ranks_first_when_the_shorter_fails_a_tight_turn() {
        let short = route("short", vec![[0.0, 0.0], [20.0, 0.0], [5.0, 8.0]]);
        let arc: Vec<[f64; 2]> = (0..=60)
            .map(|k| {
                let a = std::f64::consts::PI * f64::from(k) / 60.0;
                [20.0 + 12.0 * a.sin(), 12.0 - 12.0 * a.cos()]
            })
            .collect();
        let mut long_pts = vec![[0.0, 0.0]];
        long_pts.extend(arc);
        long_pts.push([5.0, 24.0]);
        let long = route("long", long_pts);
        let profile = Profile::demo();
        let run = check_routes(vec![short, long], &profile, true);
        assert_eq!(run.routes[0].report.verdict, Verdict::Fail, "the hairpin must fail");
        assert!(run.routes[0].report.length_m < run.routes[1].report.length_m);
        for by in [RankBy::Time, RankBy::Energy, RankBy::Deviation] {
            let c = rank(run.clone(), by).expect("rank");
            assert_eq!(c.ranking[0].route, "long", "by {}", by.name());
            assert_eq!(c.ranking[1].route, "short");
            assert!(!c.ranking[1].failing_legs.is_empty());
            assert!(c.any_acceptable(false) || c.ranking[0].verdict == Verdict::Fail);
        }
        assert!(matches!(rank(run.clone(), RankBy::Drift), Err(CompareError::DriftNeedsProfile)));
        let by_drift = rank_by_drift(run, &profile, 7).expect("drift ranking");
        assert_eq!(by_drift.ranking[0].route, "long", "verdict still comes first");
        assert!(!by_drift.fell_back_to_time);
        assert!(by_drift.ranking[0].drift_cep95_m.is_some_and(|c| c > 0.0));
    }

    #[test]
    fn common_frame_reprojects_other_origins() {
        use crate::route::GeoOrigin;
        let o1 = GeoOrigin::new(47.0, 8.0, 0.0);
        let p = o1.to_local(8.001, 47.0005, 0.0);
        let o2 = GeoOrigin::new(47.0005, 8.001, 0.0);
        let mut a = route("a", vec![[0.0, 0.0], [10.0, 0.0]]);
        a.origin = Some(o1);
        let mut b = route("b", vec![[0.0, 0.0], [10.0, 0.0]]);
        b.origin = Some(o2);
        let run = check_routes(vec![a, b], &Profile::demo(), true);
        let framed = common_frame(&run.routes).expect("frame");
        // b's first point is o2, which lies at p in a's frame.
        approx::assert_abs_diff_eq!(framed[1].plan_legs[0][0][0], p[0], epsilon = 1e-6);
        approx::assert_abs_diff_eq!(framed[1].plan_legs[0][0][1], p[1], epsilon = 1e-6);
        approx::assert_abs_diff_eq!(framed[0].plan_legs[0].last().expect("point")[0], 10.0, epsilon = 1e-9);
    }
}
