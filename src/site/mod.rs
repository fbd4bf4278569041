//! Site inputs applied to routes after reading: a terrain map that cuts legs at its polygon
//! boundaries and tags the pieces, and an elevation raster that gives every point its altitude
//! and cross slope (README, "Terrain map" and "Elevation raster").
//!
//! Order: the map first (cutting legs), then the raster (densifying the pieces and sampling
//! them), then the limits on points and legs again. Warnings (a route terrain the map
//! disagrees with, route altitudes far from the raster's) go to `Route::warnings`.
//! Units: metres, local frame of each route; slopes as tangents.

pub mod elevation;
pub mod geotiff;
pub mod split;
pub mod terrain_map;
pub mod utm;

use std::path::PathBuf;

pub use elevation::RouteFrame;
pub use geotiff::{Raster, RasterCrs, SampleError};
pub use split::{LocalMap, Precedence};
pub use terrain_map::{MapFrame, TerrainMap};

use crate::limits::{clip, Limits};
use crate::route::{check_route_limits, Leg, Route, SourcePosition};

/// A problem with a terrain map, an elevation raster, or a route on them. Every message names
/// the file (and the feature, or the route's leg and place) and what to do.
#[derive(Debug, thiserror::Error)]
pub enum SiteError {
    #[error("{file}: cannot read: {source}")]
    Io { file: PathBuf, source: std::io::Error },
    /// A map or raster file as a whole.
    #[error("{file}: {what}")]
    File { file: PathBuf, what: String },
    #[error("{file}: feature {feature}: {what}")]
    MapFeature { file: PathBuf, feature: usize, what: String },
    /// A route on the map or raster: `file` is the route's.
    #[error("{file}: {position}: {what}")]
    RouteAt { file: PathBuf, position: SourcePosition, what: String },
    #[error("{file}: {what}")]
    Route { file: PathBuf, what: String },
}

/// The site inputs of a run.
#[derive(Debug, Clone, Default)]
pub struct Site {
    pub terrain_map: Option<std::sync::Arc<TerrainMap>>,
    pub elevation: Option<Raster>,
    /// Which terrain wins where a route's own and the map's differ (default: the map's).
    pub precedence: Option<Precedence>,
    /// The frame the map is in, and whether CSV routes' metres are the raster's coordinates.
    pub map_frame: MapFrame,
}

impl Site {
    /// True when there is nothing to apply.
    pub fn is_empty(&self) -> bool {
        self.terrain_map.is_none() && self.elevation.is_none()
    }
}

/// The largest cross slope of a leg in percent (100 x |tan|), `None` without cross slopes
/// (no elevation raster).
///
/// ```
/// use skidroute::route::{Leg, SourcePosition};
/// let mut leg = Leg::new("grass", vec![[0.0, 0.0], [10.0, 0.0]], SourcePosition::Line(2));
/// assert_eq!(skidroute::site::max_cross_slope_pct(&leg), None);
/// leg.cross_slope = Some(vec![0.05, -0.12]);
/// assert!((skidroute::site::max_cross_slope_pct(&leg).unwrap() - 12.0).abs() < 1e-9);
/// ```
pub fn max_cross_slope_pct(leg: &Leg) -> Option<f64> {
    leg.cross_slope.as_ref()?.iter().map(|s| 100.0 * s.abs()).reduce(f64::max)
}

/// Applies the site inputs to one route: cut and tag by the map, then altitude and cross slope
/// from the raster, then the limits on points per leg, legs per route and points per file.
pub fn apply_site(mut route: Route, site: &Site, limits: &Limits) -> Result<Route, SiteError> {
    if let Some(map) = &site.terrain_map {
        cut_by_map(&mut route, map, site.precedence.unwrap_or(Precedence::Map))?;
    }
    if let Some(raster) = &site.elevation {
        sample_raster(&mut route, raster, site.map_frame, limits)?;
    }
    if !site.is_empty() {
        check_route_limits(&route.source, std::slice::from_ref(&route), limits)
            .map_err(|e| SiteError::Route { file: route.source.clone(), what: strip_file(&e.to_string(), &route) })?;
        for leg in &route.legs {
            if leg.points.len() > limits.max_points_per_leg {
                return Err(SiteError::RouteAt {
                    file: route.source.clone(),
                    position: leg.position,
                    what: format!(
                        "with the site inputs the leg has {} points, more than the limit of {} per leg (raise it with \
                         --max-points-per-leg or SKIDROUTE_MAX_POINTS_PER_LEG)",
                        leg.points.len(),
                        limits.max_points_per_leg
                    ),
                });
            }
        }
    }
    Ok(route)
}

/// A route error's message without its leading file name (the site error adds it back).
fn strip_file(message: &str, route: &Route) -> String {
    let prefix = format!("{}: ", route.source.display());
    message.strip_prefix(&prefix).unwrap_or(message).to_string()
}

fn cut_by_map(route: &mut Route, map: &TerrainMap, precedence: Precedence) -> Result<(), SiteError> {
    let polygons = map
        .local_polygons(route.origin.as_ref())
        .map_err(|what| SiteError::Route { file: route.source.clone(), what })?;
    let local = LocalMap::new(polygons);
    match split::split_route(route, &local, precedence, &map.source) {
        Ok((legs, warnings)) => {
            route.legs = legs;
            route.warnings.extend(warnings);
            Ok(())
        }
        Err(u) => {
            let leg = route.legs.get(u.leg);
            Err(SiteError::RouteAt {
                file: route.source.clone(),
                position: leg.map_or(SourcePosition::Line(1), |l| l.position),
                what: format!(
                    "leg {}{} has no terrain of its own and from {} for {:.2} m lies outside every polygon of the \
                     terrain map {}: extend the map or give the leg a terrain",
                    u.leg + 1,
                    leg.and_then(|l| l.name.as_deref()).map(|n| format!(" '{}'", clip(n))).unwrap_or_default(),
                    split::place(route.origin.as_ref(), u.at),
                    u.length_m,
                    map.source.display()
                ),
            })
        }
    }
}

fn sample_raster(route: &mut Route, raster: &Raster, map_frame: MapFrame, limits: &Limits) -> Result<(), SiteError> {
    let route_error = |what: String| SiteError::Route { file: route.source.clone(), what };
    let frame_origin = route.origin;
    let frame = match (&frame_origin, raster.crs, map_frame) {
        (Some(o), _, _) => RouteFrame::Geographic(o),
        (None, RasterCrs::Utm(_), MapFrame::Local) => RouteFrame::Projected,
        (None, RasterCrs::Utm(_), MapFrame::Geographic) => {
            return Err(route_error(format!(
                "a CSV route has no geographic origin: if its x_m, y_m are the easting and northing of the elevation \
                 raster {} (EPSG:{}), pass --map-frame local",
                raster.source.display(),
                raster.crs.epsg()
            )))
        }
        (None, RasterCrs::Wgs84LonLat, _) => {
            return Err(route_error(format!(
                "the elevation raster {} is in lon/lat (EPSG:4326) and a CSV route has no geographic origin: use a \
                 raster in the UTM zone whose easting and northing are the route's x_m, y_m, with --map-frame local",
                raster.source.display()
            )))
        }
    };
    match elevation::apply_elevation(route, raster, &frame, limits.max_points_per_leg) {
        Ok(warnings) => {
            route.warnings.extend(warnings);
            Ok(())
        }
        Err(elevation::ElevationError::Unsampled(u)) => Err(unsampled_error(route, raster, u)),
        Err(elevation::ElevationError::TooManyPoints { leg, points, spacing_m }) => Err(SiteError::RouteAt {
            file: route.source.clone(),
            position: route.legs.get(leg).map_or(SourcePosition::Line(1), |l| l.position),
            what: format!(
                "leg {}: sampled every {spacing_m:.2} m along it for the elevation raster {} it would have {points:.0} \
                 points, more than the limit of {} per leg (raise it with --max-points-per-leg or \
                 SKIDROUTE_MAX_POINTS_PER_LEG, or use a coarser raster)",
                leg + 1,
                raster.source.display(),
                limits.max_points_per_leg
            ),
        }),
    }
}

fn unsampled_error(route: &Route, raster: &Raster, u: elevation::Unsampled) -> SiteError {
    let leg = route.legs.get(u.leg);
    let name = leg.and_then(|l| l.name.as_deref()).map(|n| format!(" '{}'", clip(n))).unwrap_or_default();
    let at = split::place(route.origin.as_ref(), u.at);
    let file = raster.source.display();
    let what = match u.why {
        SampleError::Uncovered => {
            let (x0, x1, y0, y1) = raster.extent();
            let cover = match raster.crs {
                RasterCrs::Wgs84LonLat => format!("lon {x0:.6} to {x1:.6}, lat {y0:.6} to {y1:.6}"),
                RasterCrs::Utm(_) => format!("easting {x0:.1} to {x1:.1} m, northing {y0:.1} to {y1:.1} m"),
            };
            format!(
                "leg {}{name} leaves the elevation raster {file} at {at}: the raster covers {cover} (EPSG:{}); use a \
                 raster that covers the whole route",
                u.leg + 1,
                raster.crs.epsg()
            )
        }
        SampleError::NoData => format!(
            "the elevation raster {file} has no data (nodata{}) under leg {}{name} at {at}: fill the gap or use \
             another raster",
            raster.nodata.map(|v| format!(" value {v}")).unwrap_or_default(),
            u.leg + 1
        ),
    };
    SiteError::RouteAt {
        file: route.source.clone(),
        position: leg.map_or(SourcePosition::Line(1), |l| l.position),
        what,
    }
}
