"""The hillside example (invented): a snowfield on the north flank of a small hill near the
Ptarmigan Hollow field station, crossed by a straight traverse.

Writes, deterministically:
- hillside-dem.tif: the hill as a GeoTIFF elevation raster (float32, geographic WGS 84,
  EPSG:4326, PixelIsArea, about 2 m pixels, 160 x 95), written with tifffile. The ground is
  z = 430 + 25 exp(-r^2 / (2 x 55^2)) m, r the distance in metres from the hilltop; its
  steepest slope, 27.6 %, is 55 m from the top.
- hillside-map.geojson: the terrain map (grass around, packed snow on the north flank, a
  deep-snow bank in the middle of it).
- hillside-traverse.geojson: the route, a traverse from west to east along the 60 m circle
  around the hilltop (a contour: level along the way, 27.3 % across it, higher on the right),
  a vertex every metre, with the planner's speed at every vertex (1.0 m/s on the grass, 0.6 m/s
  across the snowfield); its legs take their terrain from the map.

Local metres (x east, y north from the hilltop) become lon/lat with the WGS 84 radii of
curvature at the hilltop, which is close enough for an invented site.

Library: tifffile 2026.3.3, numpy 2.4.6, Python 3.11. Run from this folder: python gen_hillside.py
"""
import json
import math

import numpy as np
import tifffile

LON0, LAT0 = 22.845, 68.418
A, E2 = 6378137.0, 6.69437999014e-3
PHI = math.radians(LAT0)
M_PER_DEG_LAT = A * (1 - E2) / (1 - E2 * math.sin(PHI) ** 2) ** 1.5 * math.pi / 180
M_PER_DEG_LON = A / math.sqrt(1 - E2 * math.sin(PHI) ** 2) * math.cos(PHI) * math.pi / 180


def lon_lat(x, y):
    return [round(LON0 + x / M_PER_DEG_LON, 10), round(LAT0 + y / M_PER_DEG_LAT, 10)]


def height(x, y):
    return 430.0 + 25.0 * np.exp(-(x * x + y * y) / (2 * 55.0**2))


def raster():
    dlon, dlat = 2.0 / M_PER_DEG_LON, 2.0 / M_PER_DEG_LAT
    west, north = LON0 - 160.0 / M_PER_DEG_LON, LAT0 + 150.0 / M_PER_DEG_LAT
    cols, rows = np.meshgrid(np.arange(160), np.arange(95))
    x = (west + (cols + 0.5) * dlon - LON0) * M_PER_DEG_LON
    y = (north - (rows + 0.5) * dlat - LAT0) * M_PER_DEG_LAT
    keys = [1, 1, 0, 4, 1024, 0, 1, 2, 1025, 0, 1, 1, 2048, 0, 1, 4326, 2054, 0, 1, 9102]
    tags = [
        (33550, "d", 3, (dlon, dlat, 0.0), False),
        (33922, "d", 6, (0.0, 0.0, 0.0, west, north, 0.0), False),
        (34735, "H", len(keys), keys, False),
    ]
    tifffile.imwrite("hillside-dem.tif", height(x, y).astype(np.float32), extratags=tags)


def polygon(terrain, x0, y0, x1, y1):
    ring = [lon_lat(x, y) for x, y in [(x0, y0), (x1, y0), (x1, y1), (x0, y1), (x0, y0)]]
    return {"type": "Feature", "properties": {"terrain": terrain},
            "geometry": {"type": "Polygon", "coordinates": [ring]}}


def main():
    raster()
    terrain_map = {"type": "FeatureCollection", "features": [
        polygon("grass", -155, -35, 155, 145),
        polygon("packed-snow", -40, 20, 40, 100),
        polygon("deep-snow", -12, 40, 12, 80),
    ]}
    with open("hillside-map.geojson", "w") as f:
        json.dump(terrain_map, f, indent=1)
        f.write("\n")
    # 60 m circle from 170 to 10 degrees (anticlockwise from east), clockwise: 168 segments of
    # 60 x (160 degrees in radians) / 168 = 0.997 m (the plan's curvature is read as a curve on
    # points at most 1.05 m apart; README, How a route is assessed).
    angles = [math.radians(170.0 - 160.0 * k / 168) for k in range(169)]
    points = [(60.0 * math.cos(a), 60.0 * math.sin(a)) for a in angles]
    speeds = [0.6 if -45 <= x <= 45 else 1.0 for x, _ in points]
    route = {"type": "FeatureCollection", "features": [{
        "type": "Feature",
        "properties": {"name": "north flank traverse", "route": "hillside", "speeds_mps": speeds, "corridor_m": 0.8},
        "geometry": {"type": "LineString", "coordinates": [lon_lat(x, y) for x, y in points]},
    }]}
    with open("hillside-traverse.geojson", "w") as f:
        json.dump(route, f, indent=1)
        f.write("\n")


if __name__ == "__main__":
    main()
