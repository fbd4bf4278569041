//! Values given per plan point (altitude, the planner's speed and corridor profiles, cross
//! slope) and the operations that keep them aligned with a leg's points: setting a profile with
//! its nominal value, reading the value at a point, and cutting or densifying a leg with every
//! per-point value interpolated linearly in arc length.
//!
//! Nominal values: a leg's `speed_mps` is its speed profile's largest value and its
//! `corridor_m` its corridor profile's smallest (README, "Route, CSV"), so code that reads one
//! value per leg errs on the cautious side. Units: metres, m/s; local frame.

use super::Leg;

/// A place on a leg: segment `segment` (from point `segment` to `segment + 1`) at fraction `t`
/// of its length, `0 <= t <= 1`.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Station {
    pub segment: usize,
    pub t: f64,
}

impl Station {
    /// The leg's point `i` (as the start of its segment, or the end of the last one).
    pub fn at_point(leg_points: usize, i: usize) -> Station {
        if i + 1 >= leg_points {
            Station { segment: leg_points.saturating_sub(2), t: 1.0 }
        } else {
            Station { segment: i, t: 0.0 }
        }
    }
}

/// Largest value of a profile (the nominal speed); `None` for an empty one.
pub fn nominal_speed_mps(speeds_mps: &[f64]) -> Option<f64> {
    speeds_mps.iter().copied().reduce(f64::max)
}

/// Smallest value of a profile (the nominal corridor); `None` for an empty one.
pub fn nominal_corridor_m(corridors_m: &[f64]) -> Option<f64> {
    corridors_m.iter().copied().reduce(f64::min)
}

/// A profile worth keeping per point: `None` when every value is the same (the leg's single
/// value then says it all, and outputs stay as they were before profiles existed).
fn varying(values: Vec<f64>) -> Option<Vec<f64>> {
    let first = *values.first()?;
    values.iter().any(|&v| v != first).then_some(values)
}

impl Leg {
    /// Sets the speed at every point (same length as `points`): `speeds_mps` keeps the profile
    /// when it varies, and `speed_mps` becomes its largest value.
    pub fn set_speed_profile(&mut self, speeds_mps: Vec<f64>) {
        self.speed_mps = nominal_speed_mps(&speeds_mps);
        self.speeds_mps = varying(speeds_mps);
    }

    /// Sets the corridor at every point: `corridors_m` keeps the profile when it varies, and
    /// `corridor_m` becomes its smallest value.
    pub fn set_corridor_profile(&mut self, corridors_m: Vec<f64>) {
        self.corridor_m = nominal_corridor_m(&corridors_m);
        self.corridors_m = varying(corridors_m);
    }

    /// The target speed at point `i`: the profile's value, else the leg's speed (`None`: the
    /// profile's cruise speed applies).
    pub fn speed_at_point(&self, i: usize) -> Option<f64> {
        self.speeds_mps.as_ref().and_then(|v| v.get(i).copied()).or(self.speed_mps)
    }

    /// The corridor at point `i`: the profile's value, else the leg's corridor.
    pub fn corridor_at_point(&self, i: usize) -> Option<f64> {
        self.corridors_m.as_ref().and_then(|v| v.get(i).copied()).or(self.corridor_m)
    }

    /// Arc length of every point from the leg's start, metres.
    pub fn arc_lengths_m(&self) -> Vec<f64> {
        let mut s = 0.0;
        let mut out = Vec::with_capacity(self.points.len());
        for (i, p) in self.points.iter().enumerate() {
            if let Some(q) = i.checked_sub(1).and_then(|j| self.points.get(j)) {
                s += super::plan::dist(*q, *p);
            }
            out.push(s);
        }
        out
    }

    /// A copy of this leg through `stations` (in order along the leg), every per-point value
    /// interpolated linearly along its segment; name, terrain, position and the nominal speed
    /// and corridor are recomputed from the profiles where there are some, kept otherwise.
    pub fn resampled(&self, stations: &[Station]) -> Leg {
        let point = |st: &Station| -> [f64; 2] {
            let (a, b) = self.segment(st.segment);
            lerp2(a, b, st.t)
        };
        let values = |v: &Option<Vec<f64>>| -> Option<Vec<f64>> {
            v.as_ref().map(|v| stations.iter().map(|st| value_at(v, st)).collect())
        };
        let mut out = Leg {
            points: stations.iter().map(point).collect(),
            added_points: self.added_at(stations),
            altitude_m: values(&self.altitude_m),
            cross_slope: values(&self.cross_slope),
            speeds_mps: None,
            corridors_m: None,
            ..self.clone()
        };
        if let Some(v) = values(&self.speeds_mps) {
            out.set_speed_profile(v);
        }
        if let Some(v) = values(&self.corridors_m) {
            out.set_corridor_profile(v);
        }
        out
    }

    /// Which of `stations` are not the planner's own points: a station inside a segment, or at a
    /// point that was itself added; `None` when every station is one of the planner's points.
    fn added_at(&self, stations: &[Station]) -> Option<Vec<bool>> {
        let n = self.points.len();
        let own_point =
            |i: usize| i < n && !self.added_points.as_ref().and_then(|a| a.get(i).copied()).unwrap_or(false);
        let added: Vec<bool> = stations
            .iter()
            .map(|st| {
                let i = st.segment.min(n.saturating_sub(2));
                if st.t <= 0.0 {
                    !own_point(i)
                } else if st.t >= 1.0 {
                    !own_point(i + 1)
                } else {
                    true
                }
            })
            .collect();
        added.iter().any(|&a| a).then_some(added)
    }

    /// The station at arc length `s_m` from the leg's start (clamped to the leg), given the
    /// leg's [`arc_lengths_m`](Self::arc_lengths_m).
    pub fn station_at_arc_m(&self, arc_m: &[f64], s_m: f64) -> Station {
        let n = self.points.len();
        let i = arc_m.partition_point(|&a| a <= s_m).clamp(1, n.saturating_sub(1).max(1)) - 1;
        let (a, b) = (arc_m.get(i).copied().unwrap_or(0.0), arc_m.get(i + 1).copied().unwrap_or(0.0));
        let t = if b > a { ((s_m - a) / (b - a)).clamp(0.0, 1.0) } else { 0.0 };
        Station { segment: i, t }
    }

    /// The end points of segment `i` (clamped to the leg).
    fn segment(&self, i: usize) -> ([f64; 2], [f64; 2]) {
        let n = self.points.len();
        let i = i.min(n.saturating_sub(2));
        let a = self.points.get(i).copied().unwrap_or([0.0, 0.0]);
        (a, self.points.get(i + 1).copied().unwrap_or(a))
    }

    /// Stations that keep every point and add evenly spaced ones so no two consecutive points
    /// are more than `spacing_m` apart (inserted points lie on the segments, so the path does
    /// not change).
    pub fn densify_stations(&self, spacing_m: f64) -> Vec<Station> {
        let n = self.points.len();
        let mut out = Vec::with_capacity(n);
        for i in 0..n.saturating_sub(1) {
            let (a, b) = self.segment(i);
            // A hair under a whole number of spacings is that number (rounding in the length).
            let k = (super::plan::dist(a, b) / spacing_m - 1e-9).ceil().clamp(1.0, 1e7) as usize;
            out.extend((0..k).map(|j| Station { segment: i, t: j as f64 / k as f64 }));
        }
        out.push(Station::at_point(n, n.saturating_sub(1)));
        out
    }
}

fn lerp(a: f64, b: f64, t: f64) -> f64 {
    a + t * (b - a)
}

fn lerp2(a: [f64; 2], b: [f64; 2], t: f64) -> [f64; 2] {
    if t <= 0.0 {
        a
    } else if t >= 1.0 {
        b
    } else {
        [lerp(a[0], b[0], t), lerp(a[1], b[1], t)]
    }
}

/// A per-point value at a station (the end value exactly at `t` = 0 or 1).
fn value_at(v: &[f64], st: &Station) -> f64 {
    let a = v.get(st.segment).or(v.last()).copied().unwrap_or(0.0);
    let b = v.get(st.segment + 1).copied().unwrap_or(a);
    match st.t {
        t if t <= 0.0 => a,
        t if t >= 1.0 => b,
        t => lerp(a, b, t),
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::route::SourcePosition;
    use approx::assert_relative_eq;

    fn leg() -> Leg {
        let mut leg = Leg::new("grass", vec![[0.0, 0.0], [10.0, 0.0], [10.0, 4.0]], SourcePosition::Line(2));
        leg.altitude_m = Some(vec![100.0, 110.0, 112.0]);
        leg.set_speed_profile(vec![1.0, 2.0, 1.5]);
        leg.set_corridor_profile(vec![0.5, 0.5, 0.5]);
        leg
    }

    #[test]
    fn nominal_speed_is_the_largest_and_corridor_the_smallest() {
        let l = leg();
        assert_eq!(l.speed_mps, Some(2.0));
        assert_eq!(l.speeds_mps, Some(vec![1.0, 2.0, 1.5]));
        // A constant profile is one value for the leg.
        assert_eq!((l.corridor_m, l.corridors_m.as_ref()), (Some(0.5), None));
        assert_eq!((l.speed_at_point(2), l.corridor_at_point(1)), (Some(1.5), Some(0.5)));
        let mut c = l.clone();
        c.set_corridor_profile(vec![0.8, 0.3, 0.6]);
        assert_eq!(c.corridor_m, Some(0.3));
    }

    #[test]
    fn resampling_interpolates_every_value_linearly() {
        let l = leg();
        let cut = l.resampled(&[Station { segment: 0, t: 0.25 }, Station { segment: 1, t: 0.5 }]);
        assert_eq!(cut.points, vec![[2.5, 0.0], [10.0, 2.0]]);
        let alt = cut.altitude_m.expect("altitude");
        // Closed form: 100 + 0.25 * 10 and 110 + 0.5 * 2.
        assert_relative_eq!(alt[0], 102.5, epsilon = 1e-12);
        assert_relative_eq!(alt[1], 111.0, epsilon = 1e-12);
        let v = cut.speeds_mps.expect("profile");
        assert_relative_eq!(v[0], 1.25, epsilon = 1e-12);
        assert_relative_eq!(v[1], 1.75, epsilon = 1e-12);
        assert_eq!(cut.speed_mps, Some(1.75));
        assert_eq!((cut.terrain.as_str(), cut.position), ("grass", SourcePosition::Line(2)));
    }

    #[test]
    fn densifying_keeps_points_and_bounds_the_spacing() {
        let l = leg();
        let d = l.resampled(&l.densify_stations(3.0));
        // 10 m -> 4 pieces of 2.5 m, 4 m -> 2 pieces of 2 m: 7 points.
        assert_eq!(d.points.len(), 7);
        assert_eq!(d.points[0], [0.0, 0.0]);
        assert_eq!(d.points[4], [10.0, 0.0]);
        assert_eq!(d.points[6], [10.0, 4.0]);
        assert!(d.points.windows(2).all(|w| crate::route::plan::dist(w[0], w[1]) <= 3.0 + 1e-12));
        let s = d.arc_lengths_m();
        assert_relative_eq!(s[6], 14.0, epsilon = 1e-12);
        let arc = l.arc_lengths_m();
        assert_eq!(l.station_at_arc_m(&arc, 12.0), Station { segment: 1, t: 0.5 });
        assert_eq!(l.station_at_arc_m(&arc, -1.0), Station { segment: 0, t: 0.0 });
        assert_eq!(l.station_at_arc_m(&arc, 99.0), Station { segment: 1, t: 1.0 });
        assert_eq!(d.altitude_m.as_ref().map(|a| a[4]), Some(110.0));
    }
}
