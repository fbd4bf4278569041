//! Flags for the site inputs (terrain map, elevation raster), shared by the subcommands that
//! read routes: `check`, `compare`, `relax`, `drift`.

use std::path::PathBuf;
use std::sync::Arc;

use anyhow::Result;
use clap::{Args, ValueEnum};
use skidroute::limits::Limits;
use skidroute::site::{MapFrame, Precedence, Raster, Site, TerrainMap};

/// The frame of a terrain map (and of CSV routes on an elevation raster).
#[derive(Clone, Copy, Debug, Default, ValueEnum)]
pub enum MapFrameArg {
    /// [lon, lat] degrees on WGS 84, as RFC 7946 says (for GeoJSON routes).
    #[default]
    Geographic,
    /// Metres in the CSV routes' own frame; their x_m, y_m are a UTM raster's easting, northing.
    Local,
}

#[derive(Args, Debug, Clone, Default)]
pub struct SiteArgs {
    /// Terrain map (GeoJSON polygons with a `terrain` property): legs are cut at its boundaries
    /// and each piece takes the terrain of the last polygon holding it.
    #[arg(long, value_name = "MAP.geojson")]
    pub terrain_map: Option<PathBuf>,
    /// Frame of the terrain map: `geographic` (lon/lat) or `local` (a CSV route's own metres,
    /// which are then also a UTM elevation raster's easting and northing).
    #[arg(long, value_enum, default_value = "geographic")]
    pub map_frame: MapFrameArg,
    /// Where a leg's own terrain and the map's differ, keep the leg's (default: the map's, with a
    /// warning either way).
    #[arg(long, requires = "terrain_map")]
    pub prefer_route_terrain: bool,
    /// Elevation raster (single-band GeoTIFF in EPSG:4326 or a WGS 84 UTM zone): the altitude and
    /// cross slope at every point.
    #[arg(long, value_name = "DEM.tif")]
    pub elevation: Option<PathBuf>,
}

impl SiteArgs {
    /// The map and raster files given, for the overwrite check.
    pub fn inputs(&self) -> impl Iterator<Item = &PathBuf> {
        self.terrain_map.iter().chain(self.elevation.iter())
    }

    /// Reads the map and the raster once for the whole run.
    pub fn load(&self, limits: &Limits) -> Result<Site> {
        let map_frame = match self.map_frame {
            MapFrameArg::Geographic => MapFrame::Geographic,
            MapFrameArg::Local => MapFrame::Local,
        };
        let terrain_map = match &self.terrain_map {
            Some(p) => Some(Arc::new(TerrainMap::read(p, map_frame, limits)?)),
            None => None,
        };
        let elevation = match &self.elevation {
            Some(p) => Some(Raster::read(p, limits)?),
            None => None,
        };
        let precedence = Some(if self.prefer_route_terrain { Precedence::Route } else { Precedence::Map });
        Ok(Site { terrain_map, elevation, precedence, map_frame })
    }
}

/// Prints the routes' warnings to standard error (for commands whose reports have no place
/// for them), unless quiet.
pub fn print_warnings<'a>(routes: impl IntoIterator<Item = &'a skidroute::route::Route>, quiet: bool) {
    if quiet {
        return;
    }
    for r in routes {
        for w in &r.warnings {
            super::warn(&format!("{}: route '{}': {w}", r.source.display(), skidroute::limits::clip(&r.name)));
        }
    }
}
