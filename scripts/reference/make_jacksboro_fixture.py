"""Write the real-DEM fixtures from matplotlib's sample DEM jacksboro_fault_dem.npz.

Outputs (in fixtures/):
  jacksboro_geographic.tif  the original 3 arc-second grid, EPSG:4326, float32
  jacksboro_utm.tif         bilinear resampling onto a north-up 90 m grid in
                            the matching WGS84 UTM zone, cropped to the fully
                            covered inner rectangle (no nodata cells)
  jacksboro_stations.csv    8 stations J01..J08 inside the UTM grid
  jacksboro_tc_choclo.csv   brute-force prism terrain corrections with choclo

Run from the repository root:  python scripts/reference/make_jacksboro_fixture.py
"""

import csv
import math
import os

import choclo
import matplotlib
import numba
import numpy as np
import pyproj
import rasterio
import scipy
from choclo.constants import GRAVITATIONAL_CONST
from choclo.prism import gravity_u
from matplotlib.cbook import get_sample_data
from rasterio.transform import Affine
from scipy import ndimage

ROOT = os.path.dirname(os.path.dirname(os.path.dirname(os.path.abspath(__file__))))
FIX = os.path.join(ROOT, "fixtures")
GEO_TIF = os.path.join(FIX, "jacksboro_geographic.tif")
UTM_TIF = os.path.join(FIX, "jacksboro_utm.tif")
STATIONS_CSV = os.path.join(FIX, "jacksboro_stations.csv")
TC_CSV = os.path.join(FIX, "jacksboro_tc_choclo.csv")

CELL = 90.0              # UTM cell size (m)
NODATA = -9999.0
RHO = 2670.0             # kg/m^3
EARTH_R = 6371000.0      # m, radius for the curvature drop d = s^2 / (2 R)
MGAL = 1e-5              # m/s^2 per mGal
INNER_R = 2000.0         # m
OUTER_R = 5000.0         # m, station discs of this radius lie inside the grid
MIN_SEPARATION = 3000.0  # m between stations
# sub-cell offsets of the stations from the chosen cell centres (m), so that the
# bilinear station height differs from the cell value
OFFSETS = [(12.34, -21.17), (-31.5, 8.25), (27.03, 33.33), (-7.77, -40.01),
           (40.4, 2.02), (-18.18, 19.91), (5.55, -5.55), (-36.12, -28.8)]

GTIFF_OPTS = dict(driver="GTiff", compress="DEFLATE", predictor=1, tiled=False)


def load_dem():
    dem = get_sample_data("jacksboro_fault_dem.npz")
    z = np.asarray(dem["elevation"])
    meta = {k: float(dem[k]) for k in ("xmin", "xmax", "ymin", "ymax", "dx", "dy")}
    return z, meta


def geographic_grid(z, meta):
    """Geotransform of the original grid, and a check of its orientation.

    xmin/xmax and the key pair ymin/ymax give the outer edges of the grid
    (ncols * dx and nrows * dy match the spans exactly). The key 'ymin' holds
    the larger latitude: the grid's first row is at 'ymin' (matplotlib's own
    examples build y = linspace(ymin, ymax, nrows)), so row 0 is the north
    edge. The terrain agrees (see fixtures/README.md): with row 0 north the
    straight fault valley strikes NNW and the long ridge NE.
    """
    nrows, ncols = z.shape
    dx, dy = meta["dx"], meta["dy"]
    west, east = meta["xmin"], meta["xmax"]
    north, south = max(meta["ymin"], meta["ymax"]), min(meta["ymin"], meta["ymax"])
    assert north == meta["ymin"], "expected the 'ymin' key to hold the north edge"
    assert abs((east - west) / dx - ncols) < 1e-9, "x extent is not ncols * dx"
    assert abs((north - south) / dy - nrows) < 1e-9, "y extent is not nrows * dy"
    assert abs(dx * 3600 - 3.0) < 1e-12 and abs(dy * 3600 - 3.0) < 1e-12
    transform = Affine(dx, 0.0, west, 0.0, -dy, north)
    return transform, (west, south, east, north)


def write_tif(path, data, crs, transform):
    with rasterio.open(path, "w", height=data.shape[0], width=data.shape[1], count=1,
                       dtype="float32", crs=crs, transform=transform, nodata=NODATA,
                       **GTIFF_OPTS) as dst:
        dst.write(data.astype(np.float32), 1)


def utm_epsg(lon, lat):
    zone = int(math.floor((lon + 180.0) / 6.0)) + 1
    return (32600 if lat >= 0 else 32700) + zone


def bilinear_geographic(z, transform, lon, lat):
    """Bilinear interpolation between source cell centres; NaN outside them."""
    nrows, ncols = z.shape
    col = (lon - transform.c) / transform.a - 0.5
    row = (lat - transform.f) / transform.e - 0.5
    inside = (col >= 0) & (col <= ncols - 1) & (row >= 0) & (row <= nrows - 1)
    c0 = np.clip(np.floor(col).astype(np.int64), 0, ncols - 2)
    r0 = np.clip(np.floor(row).astype(np.int64), 0, nrows - 2)
    fc = col - c0
    fr = row - r0
    zf = z.astype(np.float64)
    v = ((1 - fr) * (1 - fc) * zf[r0, c0] + (1 - fr) * fc * zf[r0, c0 + 1]
         + fr * (1 - fc) * zf[r0 + 1, c0] + fr * fc * zf[r0 + 1, c0 + 1])
    return np.where(inside, v, np.nan)


def largest_valid_rectangle(valid):
    """Shrink the bounding box of `valid` until it holds no invalid cell.

    Greedy: repeatedly drop the border row or column with the most invalid
    cells. Fine for the slightly rotated convex quadrilateral here.
    """
    rows = np.where(valid.any(axis=1))[0]
    cols = np.where(valid.any(axis=0))[0]
    r0, r1, c0, c1 = rows[0], rows[-1] + 1, cols[0], cols[-1] + 1
    while True:
        sub = valid[r0:r1, c0:c1]
        if sub.all():
            return r0, r1, c0, c1
        bad = {"top": (~sub[0]).sum(), "bottom": (~sub[-1]).sum(),
               "left": (~sub[:, 0]).sum(), "right": (~sub[:, -1]).sum()}
        side = max(bad, key=lambda k: (bad[k], k))
        if side == "top":
            r0 += 1
        elif side == "bottom":
            r1 -= 1
        elif side == "left":
            c0 += 1
        else:
            c1 -= 1


def make_utm_grid(z, geo_transform, bounds):
    west, south, east, north = bounds
    lon_c, lat_c = (west + east) / 2, (south + north) / 2
    epsg = utm_epsg(lon_c, lat_c)
    to_utm = pyproj.Transformer.from_crs("EPSG:4326", f"EPSG:{epsg}", always_xy=True)
    to_geo = pyproj.Transformer.from_crs(f"EPSG:{epsg}", "EPSG:4326", always_xy=True)
    # UTM bounding box of the source outline (densified edges)
    t = np.linspace(0, 1, 401)
    ex = np.concatenate([west + (east - west) * t, np.full_like(t, east),
                         east - (east - west) * t, np.full_like(t, west)])
    ey = np.concatenate([np.full_like(t, north), north - (north - south) * t,
                         np.full_like(t, south), south + (north - south) * t])
    ux, uy = to_utm.transform(ex, ey)
    x0 = math.floor(min(ux) / CELL) * CELL
    x1 = math.ceil(max(ux) / CELL) * CELL
    y0 = math.floor(min(uy) / CELL) * CELL
    y1 = math.ceil(max(uy) / CELL) * CELL
    ncols = int(round((x1 - x0) / CELL))
    nrows = int(round((y1 - y0) / CELL))
    xc = x0 + (np.arange(ncols) + 0.5) * CELL
    yc = y1 - (np.arange(nrows) + 0.5) * CELL
    X, Y = np.meshgrid(xc, yc)
    lon, lat = to_geo.transform(X.ravel(), Y.ravel())
    v = bilinear_geographic(z, geo_transform, np.asarray(lon), np.asarray(lat))
    v = v.reshape(X.shape)
    r0, r1, c0, c1 = largest_valid_rectangle(np.isfinite(v))
    out = v[r0:r1, c0:c1].astype(np.float32)
    transform = Affine(CELL, 0.0, x0 + c0 * CELL, 0.0, -CELL, y1 - r0 * CELL)
    assert np.isfinite(out).all()
    return out, transform, epsg


def grid_bilinear(h, transform, x, y):
    """Bilinear height of a north-up grid between its cell centres."""
    col = (x - transform.c) / transform.a - 0.5
    row = (y - transform.f) / transform.e - 0.5
    c0, r0 = int(math.floor(col)), int(math.floor(row))
    fc, fr = col - c0, row - r0
    hf = h.astype(np.float64)
    return ((1 - fr) * (1 - fc) * hf[r0, c0] + (1 - fr) * fc * hf[r0, c0 + 1]
            + fr * (1 - fc) * hf[r0 + 1, c0] + fr * fc * hf[r0 + 1, c0 + 1])


def choose_stations(h, transform):
    """8 stations: 3 valley bottoms, 3 ridges, 2 slopes, each >= OUTER_R + one
    cell from every grid edge and >= MIN_SEPARATION apart."""
    nrows, ncols = h.shape
    hf = h.astype(np.float64)
    tpi = hf - ndimage.uniform_filter(hf, size=23, mode="nearest")  # ~2 km box
    gy, gx = np.gradient(hf, CELL)
    slope = np.degrees(np.arctan(np.hypot(gx, gy)))
    xc = transform.c + (np.arange(ncols) + 0.5) * CELL
    yc = transform.f - (np.arange(nrows) + 0.5) * CELL
    X, Y = np.meshgrid(xc, yc)
    x_lo, x_hi = transform.c, transform.c + ncols * CELL
    y_hi, y_lo = transform.f, transform.f - nrows * CELL
    margin = OUTER_R + CELL
    ok = ((X - x_lo >= margin) & (x_hi - X >= margin)
          & (Y - y_lo >= margin) & (y_hi - Y >= margin))
    chosen = []

    def pick(score, mask, count, kind):
        order = np.argsort(np.where(mask & ok, -score, np.inf), axis=None, kind="stable")
        n = 0
        for idx in order:
            r, c = np.unravel_index(idx, h.shape)
            if not (mask[r, c] and ok[r, c]):
                break
            p = (X[r, c], Y[r, c])
            if all(math.hypot(p[0] - q[0], p[1] - q[1]) >= MIN_SEPARATION for q, _ in chosen):
                chosen.append((p, kind))
                n += 1
                if n == count:
                    return
        raise RuntimeError(f"could not place {count} {kind} stations")

    everywhere = np.ones_like(ok)
    pick(-tpi, everywhere, 3, "valley bottom")
    pick(tpi, everywhere, 3, "ridge")
    pick(slope, np.abs(tpi) < 15.0, 2, "slope")
    stations = []
    for i, ((x, y), kind) in enumerate(chosen):
        ox, oy = OFFSETS[i]
        sx, sy = round(x + ox, 2), round(y + oy, 2)
        elev = round(float(grid_bilinear(h, transform, sx, sy)), 2)
        r = int((transform.f - sy) // CELL)
        c = int((sx - transform.c) // CELL)
        clear = min(sx - x_lo, x_hi - sx, sy - y_lo, y_hi - sy)
        stations.append(dict(station=f"J{i + 1:02d}", x=sx, y=sy, elev=elev, kind=kind,
                             tpi=float(tpi[r, c]), slope=float(slope[r, c]),
                             clearance=clear))
    return stations


@numba.njit
def _tc_sum(xc, yc, hgrid, half, sx, sy, hs, radius, rho, spherical, earth_r):
    total = 0.0
    ncells = 0
    nrows, ncols = hgrid.shape
    for r in range(nrows):
        for c in range(ncols):
            dxs = xc[c] - sx
            dys = yc[r] - sy
            s = math.sqrt(dxs * dxs + dys * dys)
            if not s < radius:
                continue
            ncells += 1
            hcell = hgrid[r, c]
            if hcell == hs:
                continue
            lo = min(hcell, hs)
            hi = max(hcell, hs)
            if spherical:
                d = s * s / (2.0 * earth_r)
                lo -= d
                hi -= d
            g = gravity_u(sx, sy, hs, xc[c] - half, xc[c] + half,
                          yc[r] - half, yc[r] + half, lo, hi, rho)
            if hcell > hs:
                total += g
            else:
                total -= g
    return total, ncells


def terrain_corrections(h, transform, stations):
    nrows, ncols = h.shape
    xc = transform.c + (np.arange(ncols) + 0.5) * CELL
    yc = transform.f - (np.arange(nrows) + 0.5) * CELL
    hg = h.astype(np.float64)
    rows = []
    for st in stations:
        for radius in (INNER_R, OUTER_R):
            for conv in ("planar", "spherical"):
                g, n = _tc_sum(xc, yc, hg, CELL / 2, float(st["x"]), float(st["y"]),
                               float(st["elev"]), radius, RHO, conv == "spherical", EARTH_R)
                rows.append(dict(station=st["station"], outer_radius_m=radius,
                                 convention=conv, density=RHO, tc_mgal=g / MGAL, ncells=n))
    return rows


def main():
    z, meta = load_dem()
    geo_transform, bounds = geographic_grid(z, meta)
    write_tif(GEO_TIF, z.astype(np.float32), "EPSG:4326", geo_transform)

    h, utm_transform, epsg = make_utm_grid(z, geo_transform, bounds)
    write_tif(UTM_TIF, h, f"EPSG:{epsg}", utm_transform)

    # read both back: TC and stations use exactly what the files hold
    with rasterio.open(GEO_TIF) as src:
        g = src.read(1)
        assert src.transform == geo_transform and src.crs.to_epsg() == 4326
        assert np.array_equal(g, z.astype(np.float32))
        # a cell read through the file's georeferencing: the north-west corner
        # cell of the file is the first row/column of the npz array
        r, c = src.index(bounds[0] + 1e-6, bounds[3] - 1e-6)
        assert (r, c) == (0, 0) and g[r, c] == z[0, 0]
    with rasterio.open(UTM_TIF) as src:
        h = src.read(1)
        utm_transform = src.transform
        assert src.crs.to_epsg() == epsg and utm_transform.e < 0
        assert (h != NODATA).all()

    stations = choose_stations(h, utm_transform)
    with open(STATIONS_CSV, "w", newline="") as f:
        wr = csv.writer(f, lineterminator="\n")
        wr.writerow(["station", "x", "y", "elev"])
        for st in stations:
            wr.writerow([st["station"], f"{st['x']:.2f}", f"{st['y']:.2f}", f"{st['elev']:.2f}"])
    # re-read the stations as written (rounded) before computing
    with open(STATIONS_CSV) as f:
        written = list(csv.DictReader(f))
    for st, w in zip(stations, written):
        st["x"], st["y"], st["elev"] = float(w["x"]), float(w["y"]), float(w["elev"])

    tc = terrain_corrections(h, utm_transform, stations)
    with open(TC_CSV, "w", newline="") as f:
        wr = csv.writer(f, lineterminator="\n")
        wr.writerow(["station", "outer_radius_m", "convention", "density", "tc_mgal"])
        for r in tc:
            wr.writerow([r["station"], f"{r['outer_radius_m']:.0f}", r["convention"],
                         f"{r['density']:.0f}", f"{r['tc_mgal']:.9g}"])

    # --- summary for the README ---
    nrows, ncols = h.shape
    west, north = utm_transform.c, utm_transform.f
    print(f"versions: matplotlib {matplotlib.__version__}, numpy {np.__version__}, "
          f"scipy {scipy.__version__}, pyproj {pyproj.__version__} (PROJ {pyproj.proj_version_str}), "
          f"rasterio {rasterio.__version__} (GDAL {rasterio.__gdal_version__}), "
          f"choclo {choclo.__version__}, numba {numba.__version__}; G = {GRAVITATIONAL_CONST!r}")
    print(f"source: {z.shape[0]} rows x {z.shape[1]} cols, dtype {z.dtype}, "
          f"heights {z.min()}..{z.max()}, bounds W {bounds[0]!r} S {bounds[1]!r} "
          f"E {bounds[2]!r} N {bounds[3]!r}, geotransform {tuple(geo_transform)[:6]}")
    print(f"UTM: EPSG:{epsg}, {nrows} rows x {ncols} cols, cell {CELL} m, "
          f"W {west} E {west + ncols * CELL} S {north - nrows * CELL} N {north}, "
          f"heights {h.min():.3f}..{h.max():.3f}")
    for st in stations:
        print(f"  {st['station']} {st['kind']:14s} x {st['x']:.2f} y {st['y']:.2f} "
              f"elev {st['elev']:.2f} tpi {st['tpi']:+.1f} m slope {st['slope']:.1f} deg "
              f"edge clearance {st['clearance']:.0f} m")
    for r in tc:
        print(f"  {r['station']} R={r['outer_radius_m']:.0f} {r['convention']:9s} "
              f"{r['tc_mgal']:.9g} mGal ({r['ncells']} cells)")


if __name__ == "__main__":
    main()
