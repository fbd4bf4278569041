//! Cuts a route's legs where they cross the boundaries of a terrain map's polygons and tags
//! each piece with its terrain (README, "Terrain map"). Local frame, metres.
//!
//! Every leg segment is intersected exactly with every polygon edge near it (the geo crate's
//! `line_intersection`; an R-tree of edges from the rstar crate once a map has more than
//! [`INDEX_EDGES`] edges). A crossing within [`SNAP_M`] of a vertex or of another crossing
//! snaps to it, so no segment is ever shorter than the readers' duplicate-point threshold. Each
//! stretch between cuts takes the terrain of the last polygon (in file order) holding its
//! midpoint; a polygon is closed, so a stretch running along a shared edge takes the later
//! polygon. Outside every polygon a stretch keeps the leg's own terrain. Consecutive stretches
//! on one terrain form one piece; a piece shorter than [`MIN_PIECE_M`] joins the piece before
//! it (or after it, at a leg's start). A leg cut into several pieces keeps its identity: each
//! piece keeps the leg's source position, speed, corridor and profiles (interpolated at the
//! cuts), and is named "NAME (part k)", NAME being the leg's name or "leg N" (N: the leg's
//! number in its route before cutting).

use std::path::Path;

use geo::coordinate_position::{CoordPos, CoordinatePosition};
use geo::line_intersection::{line_intersection, LineIntersection};
use geo::{BoundingRect, Coord, Line, Rect};
use rstar::primitives::{GeomWithData, Rectangle};
use rstar::{RTree, AABB};

use super::terrain_map::MapPolygon;
use crate::route::plan::dist;
use crate::route::profile::Station;
use crate::route::{GeoOrigin, Leg, Route, DUPLICATE_POINT_M};

/// Crossings closer than this to a vertex or to each other are one cut, metres.
pub const SNAP_M: f64 = DUPLICATE_POINT_M;
/// A terrain piece shorter than this joins its neighbour, metres.
pub const MIN_PIECE_M: f64 = 0.01;
/// Above this many polygon edges, edges and polygons are looked up through R-trees.
pub const INDEX_EDGES: usize = 256;

type IndexedEdge = GeomWithData<Line<f64>, usize>;
type IndexedBox = GeomWithData<Rectangle<[f64; 2]>, usize>;

/// A terrain map in one route's local frame, ready for cutting.
pub struct LocalMap {
    polygons: Vec<MapPolygon>,
    boxes: Vec<Option<Rect<f64>>>,
    edges: Vec<IndexedEdge>,
    edge_tree: Option<RTree<IndexedEdge>>,
    box_tree: Option<RTree<IndexedBox>>,
}

impl LocalMap {
    /// Indexes polygons already placed in the route's frame (file order kept).
    pub fn new(polygons: Vec<MapPolygon>) -> LocalMap {
        let boxes: Vec<Option<Rect<f64>>> = polygons.iter().map(|p| p.polygon.bounding_rect()).collect();
        let mut edges = Vec::new();
        for (k, p) in polygons.iter().enumerate() {
            for ring in std::iter::once(p.polygon.exterior()).chain(p.polygon.interiors()) {
                edges.extend(ring.lines().filter(|l| l.start != l.end).map(|l| GeomWithData::new(l, k)));
            }
        }
        let indexed = edges.len() > INDEX_EDGES;
        let edge_tree = indexed.then(|| RTree::bulk_load(edges.clone()));
        let box_tree = indexed.then(|| {
            let items = boxes.iter().enumerate().filter_map(|(k, b)| {
                b.map(|b| GeomWithData::new(Rectangle::from_corners([b.min().x, b.min().y], [b.max().x, b.max().y]), k))
            });
            RTree::bulk_load(items.collect())
        });
        LocalMap { polygons, boxes, edges, edge_tree, box_tree }
    }

    pub fn polygons(&self) -> &[MapPolygon] {
        &self.polygons
    }

    /// Parameters t in (0, 1) along a -> b where it meets a polygon edge, and the parameter
    /// ranges where it runs along an edge (with the polygon's index).
    fn crossings(&self, a: [f64; 2], b: [f64; 2]) -> (Vec<f64>, Vec<(f64, f64, usize)>) {
        let seg = Line::new(Coord { x: a[0], y: a[1] }, Coord { x: b[0], y: b[1] });
        let (dx, dy) = (b[0] - a[0], b[1] - a[1]);
        let len2 = dx * dx + dy * dy;
        let param = |c: Coord<f64>| (((c.x - a[0]) * dx + (c.y - a[1]) * dy) / len2).clamp(0.0, 1.0);
        let (mut ts, mut overlaps) = (Vec::new(), Vec::new());
        let mut visit = |edge: &IndexedEdge| match line_intersection(seg, *edge.geom()) {
            Some(LineIntersection::SinglePoint { intersection, .. }) => ts.push(param(intersection)),
            Some(LineIntersection::Collinear { intersection }) => {
                let (u, v) = (param(intersection.start), param(intersection.end));
                ts.extend([u, v]);
                overlaps.push((u.min(v), u.max(v), edge.data));
            }
            None => {}
        };
        match &self.edge_tree {
            Some(tree) => {
                let envelope = AABB::from_corners(
                    geo::Point::new(a[0].min(b[0]), a[1].min(b[1])),
                    geo::Point::new(a[0].max(b[0]), a[1].max(b[1])),
                );
                tree.locate_in_envelope_intersecting(&envelope).for_each(&mut visit);
            }
            None => self.edges.iter().for_each(&mut visit),
        }
        (ts, overlaps)
    }

    /// The last polygon (highest index) holding point `p`, which lies at parameter `tm` of a
    /// segment with boundary `overlaps`.
    fn polygon_at(&self, p: [f64; 2], tm: f64, overlaps: &[(f64, f64, usize)]) -> Option<usize> {
        let c = Coord { x: p[0], y: p[1] };
        let holds = |k: usize| {
            overlaps.iter().any(|&(u, v, j)| j == k && u <= tm && tm <= v)
                || self.polygons.get(k).is_some_and(|poly| poly.polygon.coordinate_position(&c) != CoordPos::Outside)
        };
        match &self.box_tree {
            Some(tree) => tree.locate_all_at_point(&p).map(|item| item.data).filter(|&k| holds(k)).max(),
            None => (0..self.polygons.len())
                .rev()
                .filter(|&k| self.boxes[k].is_some_and(|b| in_box(&b, c)))
                .find(|&k| holds(k)),
        }
    }
}

fn in_box(b: &Rect<f64>, c: Coord<f64>) -> bool {
    b.min().x <= c.x && c.x <= b.max().x && b.min().y <= c.y && c.y <= b.max().y
}

/// A stretch of a leg between two cuts (or a merged run of them).
#[derive(Debug, Clone)]
struct Piece {
    from: Station,
    to: Station,
    start_m: f64,
    end_m: f64,
    /// Polygon holding the stretch (raw stretches only).
    polygon: Option<usize>,
    /// Terrain after resolving map against route.
    terrain: Option<String>,
}

/// Whether the route's own terrain or the map's wins where both give one.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Precedence {
    Map,
    Route,
}

/// A problem cutting one leg: a stretch outside every polygon on a leg without terrain.
#[derive(Debug, Clone, PartialEq)]
pub struct Untagged {
    pub leg: usize,
    pub at: [f64; 2],
    pub length_m: f64,
}

/// Cuts every leg of `route` against `map`. Returns the new legs and the warnings (one per
/// leg and map terrain that disagrees with the leg's own), or the first untagged stretch.
pub fn split_route(
    route: &Route,
    map: &LocalMap,
    precedence: Precedence,
    map_file: &Path,
) -> Result<(Vec<Leg>, Vec<String>), Untagged> {
    let mut legs = Vec::with_capacity(route.legs.len());
    let mut warnings = Vec::new();
    for (index, leg) in route.legs.iter().enumerate() {
        let raw = raw_pieces(leg, map);
        warnings.extend(disagreements(route, index, &raw, map, precedence, map_file));
        let pieces = merge_pieces(leg, raw, map, precedence);
        if let Some(p) = pieces.iter().find(|p| p.terrain.is_none()) {
            let at = leg.resampled(&[p.from]).points.first().copied().unwrap_or([0.0, 0.0]);
            return Err(Untagged { leg: index, at, length_m: p.end_m - p.start_m });
        }
        legs.extend(piece_legs(leg, index, &pieces));
    }
    Ok((legs, warnings))
}

/// The leg cut at every crossing, each stretch with the polygon holding it.
fn raw_pieces(leg: &Leg, map: &LocalMap) -> Vec<Piece> {
    let arc_m = leg.arc_lengths_m();
    let mut out = Vec::new();
    for (i, w) in leg.points.windows(2).enumerate() {
        let (a, b) = (w[0], w[1]);
        let len_m = dist(a, b);
        let (mut ts, overlaps) = map.crossings(a, b);
        ts.sort_by(f64::total_cmp);
        let mut cuts = vec![0.0];
        for t in ts {
            let last = cuts.last().copied().unwrap_or(0.0);
            if t * len_m >= SNAP_M && (1.0 - t) * len_m >= SNAP_M && (t - last) * len_m >= SNAP_M {
                cuts.push(t);
            }
        }
        cuts.push(1.0);
        let s0 = arc_m.get(i).copied().unwrap_or(0.0);
        for c in cuts.windows(2) {
            let tm = 0.5 * (c[0] + c[1]);
            let mid = [a[0] + tm * (b[0] - a[0]), a[1] + tm * (b[1] - a[1])];
            out.push(Piece {
                from: Station { segment: i, t: c[0] },
                to: Station { segment: i, t: c[1] },
                start_m: s0 + c[0] * len_m,
                end_m: s0 + c[1] * len_m,
                polygon: map.polygon_at(mid, tm, &overlaps),
                terrain: None,
            });
        }
    }
    out
}

/// The terrain of a stretch: map or route first, by `precedence`.
fn resolve(leg: &Leg, polygon: Option<usize>, map: &LocalMap, precedence: Precedence) -> Option<String> {
    let from_map = polygon.and_then(|k| map.polygons.get(k)).map(|p| p.terrain.clone());
    let own = leg.has_terrain().then(|| leg.terrain.clone());
    match precedence {
        Precedence::Map => from_map.or(own),
        Precedence::Route => own.or(from_map),
    }
}

/// Runs of one terrain merged, short pieces joined to a neighbour (the one before, or at the
/// leg's start the one after), in one pass.
fn merge_pieces(leg: &Leg, raw: Vec<Piece>, map: &LocalMap, precedence: Precedence) -> Vec<Piece> {
    let resolved = raw.into_iter().map(|p| Piece { terrain: resolve(leg, p.polygon, map, precedence), ..p });
    let runs = merge_runs(resolved);
    if runs.iter().all(|p| p.end_m - p.start_m < MIN_PIECE_M) {
        // A leg too short for any piece to count: one piece, on its longest piece's terrain.
        let longest = runs.iter().max_by(|a, b| (a.end_m - a.start_m).total_cmp(&(b.end_m - b.start_m))).cloned();
        return match (runs.first(), runs.last(), longest) {
            (Some(first), Some(last), Some(l)) => {
                vec![Piece { from: first.from, start_m: first.start_m, to: last.to, end_m: last.end_m, ..l }]
            }
            _ => runs,
        };
    }
    let mut out: Vec<Piece> = Vec::with_capacity(runs.len());
    let mut pending: Option<(Station, f64)> = None;
    for mut p in runs {
        let short = p.end_m - p.start_m < MIN_PIECE_M;
        match (short, out.last_mut()) {
            (true, Some(prev)) => {
                prev.to = p.to;
                prev.end_m = p.end_m;
            }
            (true, None) => pending = pending.or(Some((p.from, p.start_m))),
            (false, _) => {
                if let Some((from, start_m)) = pending.take() {
                    (p.from, p.start_m) = (from, start_m);
                }
                out.push(p);
            }
        }
    }
    merge_runs(out.into_iter())
}

fn merge_runs(pieces: impl Iterator<Item = Piece>) -> Vec<Piece> {
    let mut out: Vec<Piece> = Vec::new();
    for p in pieces {
        match out.last_mut() {
            Some(last) if last.terrain == p.terrain => {
                last.to = p.to;
                last.end_m = p.end_m;
            }
            _ => out.push(p),
        }
    }
    out
}

/// The legs of the pieces: each through its cut points and the leg's vertices between them.
fn piece_legs(leg: &Leg, index: usize, pieces: &[Piece]) -> Vec<Leg> {
    let n = leg.points.len();
    let base = leg.name.clone().unwrap_or_else(|| format!("leg {}", index + 1));
    pieces
        .iter()
        .enumerate()
        .map(|(k, p)| {
            let mut stations = vec![p.from];
            stations.extend((p.from.segment + 1..=p.to.segment).map(|j| Station::at_point(n, j)));
            stations.push(p.to);
            let mut piece = leg.resampled(&stations);
            piece.terrain = p.terrain.clone().unwrap_or_default();
            if pieces.len() > 1 {
                piece.name = Some(format!("{base} (part {})", k + 1));
            }
            piece
        })
        .collect()
}

/// One warning per map terrain that disagrees with the leg's own terrain, with the length and
/// the first place where it does.
fn disagreements(
    route: &Route,
    index: usize,
    raw: &[Piece],
    map: &LocalMap,
    precedence: Precedence,
    map_file: &Path,
) -> Vec<String> {
    let Some(leg) = route.legs.get(index).filter(|l| l.has_terrain()) else { return Vec::new() };
    let mut seen: Vec<(String, f64, Station)> = Vec::new();
    for p in raw {
        let Some(terrain) = p.polygon.and_then(|k| map.polygons.get(k)).map(|m| &m.terrain) else { continue };
        if *terrain == leg.terrain {
            continue;
        }
        match seen.iter_mut().find(|(t, _, _)| t == terrain) {
            Some(entry) => entry.1 += p.end_m - p.start_m,
            None => seen.push((terrain.clone(), p.end_m - p.start_m, p.from)),
        }
    }
    let outcome = match precedence {
        Precedence::Map => "the map's terrain is used (--prefer-route-terrain keeps the route's)",
        Precedence::Route => "the route's terrain is kept (--prefer-route-terrain)",
    };
    seen.into_iter()
        .filter(|(_, length_m, _)| *length_m >= MIN_PIECE_M)
        .map(|(terrain, length_m, from)| {
            let at = leg.resampled(&[from]).points.first().copied().unwrap_or([0.0, 0.0]);
            format!(
                "leg {} ({}): the route says {} but the terrain map {} says {} over {length_m:.1} m, from {}; {outcome}",
                index + 1,
                leg.position,
                crate::limits::clip(&leg.terrain),
                map_file.display(),
                crate::limits::clip(&terrain),
                place(route.origin.as_ref(), at)
            )
        })
        .collect()
}

/// The legs of a route as read, rebuilt from the pieces of `route` (cut by a map, densified by
/// a raster, possibly relaxed): the consecutive legs that share a source position are joined
/// again, with the name and terrain the file gave. The points added at cuts and raster
/// spacing stay (they lie on the path); per-point speeds and corridors are joined, altitude is
/// kept only where the file gave one, and cross slope is dropped. Used to write a route back in
/// its input's format.
pub fn rejoin_pieces(route: &Route, as_read: &Route) -> Route {
    let mut legs = Vec::with_capacity(as_read.legs.len());
    let mut k = 0;
    for original in &as_read.legs {
        let mut pieces: Vec<&Leg> = Vec::new();
        while let Some(leg) = route.legs.get(k).filter(|l| l.position == original.position) {
            pieces.push(leg);
            k += 1;
        }
        legs.push(join(&pieces, original));
    }
    Route { legs, ..route.clone() }
}

fn join(pieces: &[&Leg], original: &Leg) -> Leg {
    let mut leg = Leg {
        name: original.name.clone(),
        speed_mps: pieces.iter().filter_map(|p| p.speed_mps).reduce(f64::max).or(original.speed_mps),
        corridor_m: pieces.iter().filter_map(|p| p.corridor_m).reduce(f64::min).or(original.corridor_m),
        ..Leg::new(original.terrain.clone(), Vec::new(), original.position)
    };
    let (mut speeds, mut corridors, mut altitude) = (Vec::new(), Vec::new(), Vec::new());
    for (j, piece) in pieces.iter().enumerate() {
        let skip = usize::from(j > 0);
        leg.points.extend(piece.points.iter().skip(skip));
        speeds.extend((skip..piece.points.len()).map(|i| piece.speed_at_point(i)));
        corridors.extend((skip..piece.points.len()).map(|i| piece.corridor_at_point(i)));
        altitude.extend(piece.altitude_m.iter().flat_map(|a| a.iter().skip(skip).copied()));
    }
    if leg.points.is_empty() {
        return original.clone();
    }
    let varies = |v: &[Option<f64>]| v.windows(2).any(|w| w[0] != w[1]);
    if varies(&speeds) {
        if let Some(v) = speeds.into_iter().collect::<Option<Vec<f64>>>() {
            leg.set_speed_profile(v);
        }
    }
    if varies(&corridors) {
        if let Some(v) = corridors.into_iter().collect::<Option<Vec<f64>>>() {
            leg.set_corridor_profile(v);
        }
    }
    if original.altitude_m.is_some() && altitude.len() == leg.points.len() {
        leg.altitude_m = Some(altitude);
    }
    leg
}

/// A local point for messages: x/y metres, and lon/lat when the route has a geographic origin.
pub fn place(origin: Option<&GeoOrigin>, p: [f64; 2]) -> String {
    match origin {
        Some(o) => {
            let (lon, lat) = o.to_lon_lat_at_height(p[0], p[1], o.alt_m);
            format!("lon {lon:.7}, lat {lat:.7} (x {:.2} m, y {:.2} m from the route start)", p[0], p[1])
        }
        None => format!("x {:.2} m, y {:.2} m", p[0], p[1]),
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::route::SourcePosition;
    use approx::assert_relative_eq;
    use geo::{LineString, Polygon};

    fn square(x0: f64, y0: f64, side: f64, terrain: &str, feature: usize) -> MapPolygon {
        let ring = LineString::from(vec![(x0, y0), (x0 + side, y0), (x0 + side, y0 + side), (x0, y0 + side), (x0, y0)]);
        MapPolygon { feature, terrain: terrain.into(), polygon: Polygon::new(ring, vec![]) }
    }

    fn route(points: Vec<[f64; 2]>, terrain: &str) -> Route {
        let leg = Leg::new(terrain, points, SourcePosition::Line(2));
        Route { name: "r".into(), source: "r.csv".into(), origin: None, legs: vec![leg], warnings: Vec::new() }
    }

    fn split(r: &Route, map: &LocalMap) -> Vec<Leg> {
        split_route(r, map, Precedence::Map, Path::new("m.geojson")).expect("tagged").0
    }

    #[test]
    fn a_straight_leg_through_a_square_is_cut_at_its_edges() {
        let map = LocalMap::new(vec![square(10.0, -5.0, 10.0, "gravel", 0)]);
        let legs = split(&route(vec![[0.0, 0.0], [30.0, 0.0]], "grass"), &map);
        let xs: Vec<Vec<f64>> = legs.iter().map(|l| l.points.iter().map(|p| p[0]).collect()).collect();
        // Closed form: the square spans x 10..20.
        assert_eq!(xs, [vec![0.0, 10.0], vec![10.0, 20.0], vec![20.0, 30.0]]);
        let terrains: Vec<_> = legs.iter().map(|l| l.terrain.as_str()).collect();
        assert_eq!(terrains, ["grass", "gravel", "grass"]);
        let names: Vec<_> = legs.iter().map(|l| l.name.as_deref().unwrap_or("")).collect();
        assert_eq!(names, ["leg 1 (part 1)", "leg 1 (part 2)", "leg 1 (part 3)"]);
        assert!(legs.iter().all(|l| l.position == SourcePosition::Line(2)));
    }

    #[test]
    fn the_later_of_overlapping_polygons_wins_and_a_shared_edge_goes_to_it() {
        let map = LocalMap::new(vec![square(0.0, -5.0, 20.0, "grass", 0), square(10.0, -5.0, 20.0, "mud", 1)]);
        let legs = split(&route(vec![[-5.0, 0.0], [35.0, 0.0]], "asphalt"), &map);
        let spans: Vec<(f64, f64, &str)> =
            legs.iter().map(|l| (l.points[0][0], l.points[l.points.len() - 1][0], l.terrain.as_str())).collect();
        assert_eq!(spans, [(-5.0, 0.0, "asphalt"), (0.0, 10.0, "grass"), (10.0, 30.0, "mud"), (30.0, 35.0, "asphalt")]);
        // Along the bottom edge y = -5 shared by both squares: the later one.
        let legs = split(&route(vec![[12.0, -5.0], [18.0, -5.0]], "asphalt"), &map);
        assert_eq!((legs.len(), legs[0].terrain.as_str()), (1, "mud"));
    }

    #[test]
    fn crossings_near_a_vertex_snap_and_short_pieces_join_a_neighbour() {
        let map = LocalMap::new(vec![square(10.0, -5.0, 10.0, "gravel", 0)]);
        // The vertex at x = 10.0004 is within a millimetre of the edge: no 0.4 mm segment.
        let legs = split(&route(vec![[0.0, 0.0], [10.0004, 0.0], [30.0, 0.0]], "grass"), &map);
        assert!(legs.iter().all(|l| l.points.windows(2).all(|w| dist(w[0], w[1]) >= SNAP_M)));
        assert_eq!(legs.len(), 3);
        // A leg that dips 5 mm into the square keeps one piece.
        let legs = split(&route(vec![[0.0, 0.0], [10.005, 0.0]], "grass"), &map);
        assert_eq!((legs.len(), legs[0].terrain.as_str(), legs[0].name.as_ref()), (1, "grass", None));
    }

    #[test]
    fn a_leg_without_terrain_outside_the_map_is_untagged_at_its_first_point_outside() {
        let map = LocalMap::new(vec![square(10.0, -5.0, 10.0, "gravel", 0)]);
        let e = split_route(&route(vec![[12.0, 0.0], [30.0, 0.0]], ""), &map, Precedence::Map, Path::new("m"))
            .expect_err("untagged");
        assert_eq!(e.leg, 0);
        assert_relative_eq!(e.at[0], 20.0, epsilon = 1e-12);
        assert_relative_eq!(e.length_m, 10.0, epsilon = 1e-12);
    }

    #[test]
    fn profiles_are_interpolated_at_the_cuts_and_disagreements_are_warned() {
        let map = LocalMap::new(vec![square(10.0, -5.0, 10.0, "gravel", 0)]);
        let mut r = route(vec![[0.0, 0.0], [40.0, 0.0]], "grass");
        r.legs[0].set_speed_profile(vec![1.0, 3.0]);
        let (legs, warnings) = split_route(&r, &map, Precedence::Map, Path::new("m.geojson")).expect("tagged");
        // Closed form: speed 1 + 2 x / 40 at x = 10 and 20.
        assert_eq!(legs[1].speeds_mps.as_deref(), Some(&[1.5, 2.0][..]));
        assert_eq!((legs[0].speed_mps, legs[2].speed_mps), (Some(1.5), Some(3.0)));
        assert_eq!(warnings.len(), 1);
        assert!(warnings[0].starts_with("leg 1 (line 2): the route says grass but the terrain map m.geojson says gravel over 10.0 m, from x 10.00 m, y 0.00 m; the map's terrain is used"), "{}", warnings[0]);
        let (legs, warnings) = split_route(&r, &map, Precedence::Route, Path::new("m")).expect("tagged");
        assert_eq!((legs.len(), legs[0].name.as_ref()), (1, None));
        assert!(warnings[0].ends_with("the route's terrain is kept (--prefer-route-terrain)"), "{}", warnings[0]);
    }

    #[test]
    fn rejoining_gives_back_the_legs_as_read() {
        let map = LocalMap::new(vec![square(10.0, -5.0, 10.0, "gravel", 0)]);
        let mut r = route(vec![[0.0, 0.0], [15.0, 0.0], [40.0, 0.0]], "grass");
        r.legs[0].name = Some("out".into());
        r.legs[0].set_speed_profile(vec![1.0, 1.0, 3.0]);
        let (legs, _) = split_route(&r, &map, Precedence::Map, Path::new("m")).expect("tagged");
        let cut = Route { legs, ..r.clone() };
        assert_eq!(cut.legs.len(), 3);
        let back = rejoin_pieces(&cut, &r);
        assert_eq!(back.legs.len(), 1);
        let leg = &back.legs[0];
        assert_eq!((leg.name.as_deref(), leg.terrain.as_str()), (Some("out"), "grass"));
        // The cut points at x = 10 and 20 stay; the profile is joined.
        let xs: Vec<f64> = leg.points.iter().map(|p| p[0]).collect();
        assert_eq!(xs, [0.0, 10.0, 15.0, 20.0, 40.0]);
        let v = leg.speeds_mps.as_ref().expect("profile");
        // Closed form: 1 + 2 (20 - 15) / 25 at x = 20.
        assert_relative_eq!(v[3], 1.4, epsilon = 1e-12);
        assert_eq!(leg.speed_mps, Some(3.0));
    }

    #[test]
    fn the_index_gives_the_same_cuts_as_the_plain_search() {
        // A 400-gon (above INDEX_EDGES) circle of radius 10 about the origin, and a chord.
        let ring: LineString<f64> = (0..=400)
            .map(|k| {
                let a = std::f64::consts::TAU * k as f64 / 400.0;
                (10.0 * a.cos(), 10.0 * a.sin())
            })
            .collect();
        let circle = MapPolygon { feature: 0, terrain: "mud".into(), polygon: Polygon::new(ring, vec![]) };
        let map = LocalMap::new(vec![circle]);
        assert!(map.edge_tree.is_some());
        let legs = split(&route(vec![[-20.0, 3.0], [20.0, 3.0]], "grass"), &map);
        assert_eq!(legs.len(), 3);
        // Closed form for the circle: x = +-sqrt(100 - 9); the 400-gon lies within 10 (1 - cos(pi/400)) of it.
        let x = legs[1].points[0][0];
        assert_relative_eq!(x, -(91.0_f64).sqrt(), epsilon = 10.0 * (1.0 - (std::f64::consts::PI / 400.0).cos()) / 0.3);
    }
}
