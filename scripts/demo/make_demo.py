#!/usr/bin/env python3
"""Generate the bundled ringsum demo scenario in demo-dem/.

The scenario is invented: the Quillerun Valley, a glaciated mountain valley with
Lake Mirrowen on its floor, the lone Tessendrin Horn standing in a widening of the
valley, and the Brennith Wall, a cliff band on the southern side wall. Forty
stations V01..V40 of the (equally invented) Quillerun practice gravity survey are
placed on it.

Everything is computed from one terrain function, ``terrain_height(easting,
northing)``, built only from integer hashing and IEEE-754 operations that are
correctly rounded (+, -, *, /, sqrt, floor, comparisons). No random-number
distributions and no transcendental functions are used, so the pixel values are
bit-identical on every run (and should be on any machine with IEEE-754 doubles);
the GeoTIFF bytes are identical for the pinned package versions in requirements.txt.
The geographic grid is the exception to "no transcendental functions": its sample
points go through PROJ's transverse Mercator (pyproj), so its values are
bit-identical for the pinned pyproj wheel (and its bundled PROJ) on one kind of
machine, and may differ in the last bits of a sample position elsewhere.

Outputs (in --out, default <repo>/demo-dem):
  quillerun_30m.tif      30 m cells, 1200 x 1200 (36 km x 36 km), cell = mean of 3x3
                      point samples of the terrain function
  quillerun_500m.tif   500 m cells, 720 x 720 (360 km x 360 km), cell = mean of
                      10x10 point samples of the same function
  quillerun_3s_lonlat.tif
                      3 arc-second cells on longitude and latitude (EPSG:4326),
                      1560 x 1080 cells, about 100 km x 100 km around the valley;
                      cell = mean of 4x4 point samples on longitude and latitude,
                      each taken to EPSG:32633 with pyproj before the terrain
                      function is evaluated
  stations.csv        station,x,y,elev  (elev = bilinear height from the 30 m grid
                      plus a deterministic survey error within +-0.29 m)

Usage (from the repository root):  python scripts/demo/make_demo.py [--out DIR]
"""

import argparse
import csv
import hashlib
import io
import os
import sys
import tempfile

import numpy as np
import pyproj
import rasterio
from rasterio.transform import Affine

# ---------------------------------------------------------------------------
# Placement and grids
# ---------------------------------------------------------------------------
CRS = "EPSG:32633"  # WGS 84 / UTM zone 33N
E0 = 500000.0  # scenario centre, easting (m)
N0 = 5200000.0  # scenario centre, northing (m)
NODATA = -9999.0

FINE_CELL = 30.0
FINE_N = 1200  # 36 km x 36 km
FINE_SUB = 3  # 3x3 point samples per 30 m cell (10 m spacing)
COARSE_CELL = 500.0
COARSE_N = 720  # 360 km x 360 km
COARSE_SUB = 10  # 10x10 point samples per 500 m cell (50 m spacing)

# The 3 arc-second grid: longitude and latitude on WGS 84, in whole arc-seconds so that the
# edges and the cell size are exact. The valley's centre is at 15 E, 46.9535 N; the
# 30 m grid spans about 14.76-15.24 E and 46.79-47.12 N. The edges leave about
# 31-33 km of 3 arc-second grid around the 30 m grid on every side (about 44 km from the
# closest station), which keeps the file at about 4.3 MB.
MID_CRS = "EPSG:4326"
MID_STEP = 3  # arc-seconds
MID_WEST = 14 * 3600 + 21 * 60  # 14.35 E, in arc-seconds
MID_EAST = 15 * 3600 + 39 * 60  # 15.65 E
MID_SOUTH = 46 * 3600 + 30 * 60  # 46.5 N
MID_NORTH = 47 * 3600 + 24 * 60  # 47.4 N
MID_COLS = (MID_EAST - MID_WEST) // MID_STEP  # 1560
MID_ROWS = (MID_NORTH - MID_SOUTH) // MID_STEP  # 1080
MID_SUB = 4  # 4x4 point samples per cell (about 23 m apart north-south, 16 m east-west)

STATION_BOX = 6000.0  # stations lie within +-6 km of the centre in x and y
DEMO_RADIUS_FINE = 10000.0  # radius the demo uses with quillerun_30m.tif alone
DEMO_RADIUS_WIDE = 166700.0  # radius the demo uses with the 500 m DEM
DEMO_RADIUS_LONLAT = 40000.0  # a radius that the 3 arc-second grid holds for every station

# ---------------------------------------------------------------------------
# Deterministic primitives
# ---------------------------------------------------------------------------
_M1 = np.uint32(0x8DA6B343)
_M2 = np.uint32(0xD8163841)
_M3_INT = 0xCB1AB31F
_F1 = np.uint32(0x7FEB352D)
_F2 = np.uint32(0x846CA68B)
_LATTICE_OFFSET = 1 << 24  # keeps lattice indices non-negative before the uint32 cast


def _hash_u32(ix, iy, seed):
    """Integer hash of lattice points (int64 arrays) -> uint32 array."""
    ux = (ix + _LATTICE_OFFSET).astype(np.uint32)
    uy = (iy + _LATTICE_OFFSET).astype(np.uint32)
    h = (ux * _M1) ^ (uy * _M2) ^ np.uint32((seed * _M3_INT) & 0xFFFFFFFF)
    h ^= h >> np.uint32(16)
    h *= _F1
    h ^= h >> np.uint32(15)
    h *= _F2
    h ^= h >> np.uint32(16)
    return h


def _lattice_value(ix, iy, seed):
    """Value in [-1, 1) at integer lattice points, exact in float64."""
    h = _hash_u32(ix, iy, seed) >> np.uint32(8)
    return h.astype(np.float64) * (2.0 / 16777216.0) - 1.0


def _fade(t):
    return t * t * t * (t * (t * 6.0 - 15.0) + 10.0)


def noise2(x, y, seed):
    """2-D value noise on the unit lattice, quintic interpolation, range [-1, 1]."""
    fx0 = np.floor(x)
    fy0 = np.floor(y)
    tx = _fade(x - fx0)
    ty = _fade(y - fy0)
    ix = fx0.astype(np.int64)
    iy = fy0.astype(np.int64)
    v00 = _lattice_value(ix, iy, seed)
    v10 = _lattice_value(ix + 1, iy, seed)
    v01 = _lattice_value(ix, iy + 1, seed)
    v11 = _lattice_value(ix + 1, iy + 1, seed)
    a = v00 + (v10 - v00) * tx
    b = v01 + (v11 - v01) * tx
    return a + (b - a) * ty


def noise1(t, seed):
    """1-D value noise, range [-1, 1]."""
    t = np.asarray(t, dtype=np.float64)
    f0 = np.floor(t)
    s = _fade(t - f0)
    i = f0.astype(np.int64)
    zero = np.zeros_like(i)
    a = _lattice_value(i, zero, seed)
    b = _lattice_value(i + 1, zero, seed)
    return a + (b - a) * s


# Each octave is rotated by a 3-4-5 rotation (exact in binary up to rounding of
# 0.6/0.8, identical on every machine) and shifted, to hide the lattice axes.
_ROT_C = 0.8
_ROT_S = 0.6


def fbm(x, y, seed, octaves, gain=0.5):
    """Fractal sum of value noise; x, y in units of the largest wavelength."""
    total = np.zeros_like(x)
    amp = 1.0
    for k in range(octaves):
        total += amp * noise2(x + 17.31 * k, y - 11.77 * k, seed + 101 * k)
        x, y = 2.0 * (_ROT_C * x - _ROT_S * y), 2.0 * (_ROT_S * x + _ROT_C * y)
        amp *= gain
    return total


def ridged(x, y, seed, octaves, gain=0.5):
    """Ridged fractal sum in [0, 1]: sharp crests along the zero lines of the noise."""
    total = np.zeros_like(x)
    norm = 0.0
    amp = 1.0
    for k in range(octaves):
        n = 1.0 - np.abs(noise2(x + 23.13 * k, y + 7.91 * k, seed + 131 * k))
        total += amp * (n * n)
        norm += amp
        x, y = 2.0 * (_ROT_C * x - _ROT_S * y), 2.0 * (_ROT_S * x + _ROT_C * y)
        amp *= gain
    return total / norm


def sq(t):
    """t * t (an explicit product rather than a power, for exact reproducibility)."""
    return t * t


def clamp01(t):
    return np.clip(t, 0.0, 1.0)


def smoothstep(t):
    t = clamp01(t)
    return t * t * (3.0 - 2.0 * t)


def bump(t):
    """Smooth compact bump: 1 at t = 0, 0 for |t| >= 1."""
    q = clamp01(1.0 - t * t)
    return q * q


def smin(a, b, k):
    """Polynomial smooth minimum with blend width k (m)."""
    h = clamp01(0.5 + 0.5 * (b - a) / k)
    return b + (a - b) * h - k * h * (1.0 - h)


def smax(a, b, k):
    return -smin(-a, -b, k)


def soft_pos(e, w):
    """Smooth version of max(e, 0) with corner width w."""
    return 0.5 * (e + np.sqrt(e * e + w * w))


def trough_rise(e, k, bend):
    """Height of a U-trough wall at distance e >= 0 beyond the floor edge.

    Parabolic at the foot (k e^2), tending to a straight wall of slope k * bend.
    """
    return k * e * e / (1.0 + e / bend)


# ---------------------------------------------------------------------------
# Scenario geometry (x, y in metres from the centre E0, N0)
# ---------------------------------------------------------------------------
PEAK_X = -3200.0  # Tessendrin Horn, along-valley position
PEAK_OFF = 700.0  # ... and its offset north of the valley axis
PEAK_H = 1500.0
PEAK_R = 1150.0
BASIN_HALF_LEN = 2600.0  # widening of the valley floor around the horn
LAKE_X = 3600.0  # Lake Mirrowen, along-valley centre
LAKE_LEVEL = 966.0  # constant water-surface height (m), exact in float32
LAKE_MASK = (2300.0, 1400.0)  # ellipse (along, across) where water may stand
LAKE_DEPR = (2400.0, 1050.0, 40.0)  # basin (along, across, depth)
MORAINE_X = LAKE_X + 2200.0  # terminal moraine damming the lake
MORAINE_H = 20.0
CLIFF_X = 1400.0  # Brennith Wall, along-valley centre
CLIFF_HALF_LEN = 1300.0
CLIFF_OFF = 1000.0  # distance of the cliff foot line south of the valley axis
CLIFF_H = 320.0
CLIFF_W = 22.0  # half-width of the cliff face (m)
K_WALL = 1.2e-3  # U-trough wall curvature at the foot (1/m)
WALL_BEND = 900.0  # distance (m) beyond which the trough wall steepens no further

# Side valleys: (mouth x, mouth offset from axis, head x, head y, floor at mouth,
# floor at head, floor half-width, wall curvature)
SIDE_VALLEYS = (
    (-900.0, 0.0, -3500.0, 9500.0, 1450.0, 2150.0, 180.0, 1.6e-3),  # hanging, north
    (5000.0, 0.0, 7000.0, -9500.0, 1300.0, 2050.0, 200.0, 1.5e-3),  # hanging, south
    (8000.0, 0.0, 13500.0, 8000.0, 1000.0, 1900.0, 300.0, 1.3e-3),  # graded, north-east
    (-9500.0, 0.0, -14000.0, -9000.0, 1250.0, 2100.0, 200.0, 1.5e-3),  # south-west
)


def _axis_raw(x):
    return 2600.0 * noise1(x / 13000.0, 11) + 700.0 * noise1(x / 5000.0, 12)


_AXIS0 = float(_axis_raw(np.array([0.0]))[0])


def valley_axis(x):
    """Northing offset (m) of the main valley axis at along-valley position x."""
    return _axis_raw(x) - _AXIS0


def valley_axis_slope(x):
    return (valley_axis(x + 5.0) - valley_axis(x - 5.0)) / 10.0


def valley_floor(x):
    """Main valley floor height (m) at easting offset x."""
    z = 1000.0 - x * (200.0 / 36000.0)
    w = x + 24000.0
    z = z + np.where(w < 0.0, 0.8e-6 * w * w, 0.0)  # rises to the valley head in the west
    e = x - 26000.0
    z = z - 0.012 * soft_pos(e, 2000.0)  # drops out of the range in the east
    return smax(z, np.full_like(z, 380.0), 60.0)


def floor_half_width(x):
    return (700.0 * (1.0 + 0.18 * noise1(x / 3000.0, 13))
            + 1500.0 * bump((x - PEAK_X) / BASIN_HALF_LEN))


def river_offset(x):
    """Northing offset of the river line from the valley axis."""
    m = 320.0 * noise1(x / 900.0, 21) + 120.0 * noise1(x / 350.0, 22)
    return m - 700.0 * bump((x - PEAK_X) / BASIN_HALF_LEN)


def _blob(x, y, cx, cy, ax, ay, warp, seed):
    """Noise-warped elliptical distance: about 1 on the outline of a rounded region."""
    wx = x + warp * fbm(x / 60000.0, y / 60000.0, seed, 3)
    wy = y + warp * fbm(x / 60000.0, y / 60000.0, seed + 1, 3)
    return np.sqrt(sq((wx - cx) / ax) + sq((wy - cy) / ay))


def _add_range(r, x, y, weight, base, relief, scale, seed):
    """Add a ridged mountain range where weight > 0 (elementwise, on that subset only)."""
    s = weight > 0.0
    if s.any():
        xs, ys = x[s], y[s]
        hill = base + relief * ridged(xs / scale, ys / scale, seed, 5)
        r[s] = r[s] + weight[s] * hill
    return r


def _regional(x, y):
    """Broad relief outside the alpine massif: foreland, two other ranges, a basin."""
    r = 420.0 + 180.0 * fbm(x / 45000.0, y / 45000.0, 31, 5)
    # a second range about 120 km to the north, trending east-north-east
    dn = np.abs(y - (120000.0 + 0.25 * x + 9000.0 * noise1(x / 50000.0, 32)))
    half = 14000.0 * (1.0 + 0.4 * noise1(x / 40000.0, 35))
    env_n = (1.0 - smoothstep((dn - half) / 16000.0)) * (
        1.0 - smoothstep((np.abs(x + 10000.0 * noise1(y / 30000.0, 36)) - 110000.0) / 45000.0))
    r = _add_range(r, x, y, env_n, 450.0, 1300.0, 9000.0, 33)
    # low hills in the south-west, trending north-west
    u = (x + 115000.0) * 0.6 - (y + 105000.0) * 0.8
    v = (x + 115000.0) * 0.8 + (y + 105000.0) * 0.6
    env_h = 1.0 - smoothstep((_blob(u, v, 0.0, 0.0, 50000.0, 20000.0, 12000.0, 37) - 0.6) / 0.6)
    r = _add_range(r, x, y, env_h, 150.0, 650.0, 6000.0, 38)
    # a lowland basin to the south-east
    wb = 1.0 - smoothstep((_blob(x, y, 110000.0, -95000.0, 50000.0, 38000.0, 15000.0, 39)
                           - 0.75) / 0.6)
    s = wb > 0.0
    if s.any():
        xs, ys = x[s], y[s]
        low = 140.0 + 20.0 * fbm(xs / 15000.0, ys / 15000.0, 34, 3)
        r[s] = r[s] + wb[s] * (low - r[s])
    return r


def _massif_envelope(x, y):
    """1 over the alpine massif around the valley, falling to 0 in the foreland."""
    yb = 0.12 * x + 8000.0 * (noise1(x / 60000.0, 41) - _YB0)
    d = _blob(x, y - yb, -20000.0, 0.0, 80000.0, 55000.0, 8000.0, 42)
    return 1.0 - smoothstep((d - 0.75) / 0.5)


_YB0 = float(noise1(np.array([0.0]), 41)[0])


def _massif(x, y):
    """Ridge-and-cirque mountain relief, about 1300-3300 m."""
    wx = x + 1500.0 * fbm(x / 10000.0, y / 10000.0, 53, 2)
    wy = y + 1500.0 * fbm(x / 10000.0, y / 10000.0, 54, 2)
    return (1350.0 + 1850.0 * ridged(wx / 8000.0, wy / 8000.0, 51, 7)
            + 150.0 * fbm(x / 20000.0, y / 20000.0, 52, 2))


def _segment_distance(x, y, x0, y0, x1, y1):
    dx = x1 - x0
    dy = y1 - y0
    t = clamp01(((x - x0) * dx + (y - y0) * dy) / (dx * dx + dy * dy))
    px = x - (x0 + t * dx)
    py = y - (y0 + t * dy)
    return np.sqrt(px * px + py * py), t


def _terrain_parts(x, y):
    """All stages of the terrain at points x, y (metres from the centre)."""
    c = valley_axis(x)
    cs = valley_axis_slope(x)
    inv = 1.0 / np.sqrt(1.0 + cs * cs)
    across0 = (y - c) * inv  # signed distance from the valley axis, north positive
    # irregular valley sides: the trough, river and lake follow a wobbling axis
    across = across0 + 200.0 * fbm(x / 4000.0, y / 4000.0, 14, 3)
    zf = valley_floor(x)
    reg = _regional(x, y)
    env = _massif_envelope(x, y)
    # out in the foreland the trough fades into a shallow valley in the plain
    zf = zf + (1.0 - env) * (smax(reg - 25.0, zf, 20.0) - zf)

    # mountains: alpine massif over the regional relief
    h = reg.copy()
    s = env > 0.0
    if s.any():
        m = _massif(x[s], y[s])
        h[s] = reg[s] + env[s] * (smax(m, reg[s], 100.0) - reg[s])

    # U-shaped main trough
    kw = K_WALL * (1.0 + 0.3 * fbm(x / 5000.0, y / 5000.0, 15, 2))
    v = zf + trough_rise(soft_pos(np.abs(across) - floor_half_width(x), 150.0), kw, WALL_BEND)
    h = smin(h, v, 120.0)

    # side valleys
    wx = x + 600.0 * fbm(x / 6000.0, y / 6000.0, 16, 3)
    wy = y + 600.0 * fbm(x / 6000.0, y / 6000.0, 17, 3)
    for (mx, moff, hx, hy, z0, z1, w, k) in SIDE_VALLEYS:
        my = float(valley_axis(np.array([mx]))[0]) + moff
        d, t = _segment_distance(wx, wy, mx, my, hx, hy)
        zs = z0 + (z1 - z0) * t + 350.0 * smoothstep((t - 0.85) / 0.15)
        vs = zs + trough_rise(soft_pos(d - w, 100.0), k, 700.0)
        h = smin(h, vs, 100.0)

    # the lone horn
    py = float(valley_axis(np.array([PEAK_X]))[0]) + PEAK_OFF
    dx = x - PEAK_X
    dy = y - py
    r_round = np.sqrt(dx * dx + dy * dy + 40.0 * 40.0) - 40.0
    # four faces meeting in sharp aretes (face normals at 3-4-5 angles)
    r_faces = np.maximum(np.maximum(0.8 * dx + 0.6 * dy, -0.6 * dx + 0.8 * dy),
                         np.maximum(-0.8 * dx - 0.6 * dy, 0.6 * dx - 0.8 * dy))
    r = 0.7 * r_round + 0.3 * 1.2 * r_faces
    rr = PEAK_R * (1.0 + 0.15 * fbm(x / 700.0, y / 700.0, 61, 3))
    qq = 1.0 - r / rr
    q = clamp01(qq)
    base = float(valley_floor(np.array([PEAK_X]))[0]) - 30.0
    # beyond its foot the horn surface keeps falling, so it never lifts distant ground
    horn = np.where(qq > 0.0, base + PEAK_H * q * np.sqrt(q), base + qq * rr)
    h = smax(h, horn, 40.0)

    # the cliff band: a step up of CLIFF_H across the line, fading out behind it
    # distance beyond the (slightly ragged) cliff line, south (uphill) positive
    n = -across - CLIFF_OFF + 30.0 * fbm(x / 500.0, y / 500.0, 62, 3)
    taper = smoothstep((x - (CLIFF_X - CLIFF_HALF_LEN)) / 700.0) * smoothstep(
        ((CLIFF_X + CLIFF_HALF_LEN) - x) / 700.0)
    height = CLIFF_H * (0.9 + 0.15 * noise1(x / 600.0, 63))
    step = smoothstep((n + CLIFF_W) / (2.0 * CLIFF_W))
    behind = 1.0 - smoothstep((n - 150.0) / 1400.0)
    h = h + height * taper * step * behind

    # lake basin and terminal moraine
    la, lb, ld = LAKE_DEPR
    q = sq((x - LAKE_X) / la) + sq(across / lb)
    h = h - ld * smoothstep((1.0 - q) / 0.6)
    xm = x - MORAINE_X + 0.0004 * across * across
    h = h + MORAINE_H * bump(xm / 250.0) * bump(across / 1300.0)

    # fractal roughness: small on the valley floor, large on rock walls
    rel = h - zf
    amp = 1.5 + 30.0 * smoothstep((rel - 40.0) / 600.0)
    h = h + amp * fbm(x / 700.0, y / 700.0, 71, 7, gain=0.6)
    h = h + 1.2 * fbm(x / 140.0, y / 140.0, 72, 3, gain=0.5)  # floor-scale bumps

    # meandering river channel, 4 m deep
    dr = np.abs(across - river_offset(x) * inv)
    on_floor = 1.0 - smoothstep((rel - 60.0) / 60.0)
    h = h - 4.0 * bump(dr / 35.0) * on_floor
    dry = h

    # the lake: a constant water surface wherever the basin lies below it
    ma, mb = LAKE_MASK
    in_mask = sq((x - LAKE_X) / ma) + sq(across / mb) < 1.0
    h = np.where(in_mask & (h < LAKE_LEVEL), LAKE_LEVEL, h)
    return {"h": h, "dry": dry, "in_mask": in_mask, "across": across, "zf": zf,
            "rel": rel, "river_dist": dr}


def terrain_height(easting, northing):
    """Terrain height (m) of the scenario at points given in EPSG:32633 (m).

    Accepts scalars or arrays; returns a float64 array (or a float for scalars).
    This is the point value; the DEM cells are means of point values.
    """
    e = np.asarray(easting, dtype=np.float64)
    n = np.asarray(northing, dtype=np.float64)
    e, n = np.broadcast_arrays(e, n)
    shape = e.shape
    h = _terrain_parts(e.ravel() - E0, n.ravel() - N0)["h"].reshape(shape)
    return float(h) if shape == () else h


# ---------------------------------------------------------------------------
# Grids
# ---------------------------------------------------------------------------
def grid_origin(n, cell):
    """West and north edge of an n x n grid of cell size `cell` centred on E0, N0."""
    half = 0.5 * n * cell
    return E0 - half, N0 + half


def block_mean_grid(n, cell, sub):
    """n x n grid of cell means, each from sub x sub point samples, float64."""
    rows_per_chunk = max(1, 12000 // n)  # small arrays: several times faster
    west, north = grid_origin(n, cell)
    out = np.empty((n, n), dtype=np.float64)
    offs = [(k + 0.5) * cell / sub for k in range(sub)]
    col_x = west + cell * np.arange(n, dtype=np.float64) - E0
    for r0 in range(0, n, rows_per_chunk):
        r1 = min(n, r0 + rows_per_chunk)
        row_y = north - cell * np.arange(r0, r1, dtype=np.float64) - N0
        acc = np.zeros((r1 - r0, n), dtype=np.float64)
        for oy in offs:  # fixed summation order
            yy = np.repeat((row_y - oy)[:, None], n, axis=1)
            for ox in offs:
                xx = np.repeat((col_x + ox)[None, :], r1 - r0, axis=0)
                acc += _terrain_parts(xx.ravel(), yy.ravel())["h"].reshape(acc.shape)
        out[r0:r1] = acc / float(sub * sub)
    return out


def _publish(tmp, path):
    """Give a finished temporary file the usual permissions and move it into place."""
    mask = os.umask(0)
    os.umask(mask)
    os.chmod(tmp, 0o666 & ~mask)
    os.replace(tmp, path)


def mid_transform():
    """Geotransform of the 3 arc-second grid (degrees)."""
    step = MID_STEP / 3600.0
    return Affine(step, 0.0, MID_WEST / 3600.0, 0.0, -step, MID_NORTH / 3600.0)


def _to_utm():
    """Longitude, latitude (WGS 84) -> EPSG:32633 easting, northing, with pyproj."""
    return pyproj.Transformer.from_crs(MID_CRS, CRS, always_xy=True)


def geographic_mean_grid():
    """MID_ROWS x MID_COLS grid of cell means on longitude and latitude, float64.

    Each cell is the mean of MID_SUB x MID_SUB point samples on a regular sub-grid of
    longitude and latitude; every sample is taken to EPSG:32633 with pyproj, and the
    terrain function is evaluated there. Over a 3-arc-second cell the area per sample
    varies by less than 1e-6, so the plain mean is the area mean.
    """
    to_utm = _to_utm()
    rows_per_chunk = max(1, 12000 // MID_COLS)
    sub = MID_SUB
    out = np.empty((MID_ROWS, MID_COLS), dtype=np.float64)
    # sample positions in units of the sub-step, from the west and north edges
    col_k = np.arange(MID_COLS, dtype=np.float64) * sub
    for r0 in range(0, MID_ROWS, rows_per_chunk):
        r1 = min(MID_ROWS, r0 + rows_per_chunk)
        row_k = np.arange(r0, r1, dtype=np.float64) * sub
        acc = np.zeros((r1 - r0, MID_COLS), dtype=np.float64)
        for ky in range(sub):  # fixed summation order
            lat = (MID_NORTH - (row_k + (ky + 0.5)) * (MID_STEP / sub)) / 3600.0
            for kx in range(sub):
                lon = (MID_WEST + (col_k + (kx + 0.5)) * (MID_STEP / sub)) / 3600.0
                lo = np.repeat(lon[None, :], r1 - r0, axis=0).ravel()
                la = np.repeat(lat[:, None], MID_COLS, axis=1).ravel()
                e, n = to_utm.transform(lo, la)
                h = _terrain_parts(np.asarray(e) - E0, np.asarray(n) - N0)["h"]
                acc += h.reshape(acc.shape)
        out[r0:r1] = acc / float(sub * sub)
    return out


def write_geotiff(path, data, cell, description, crs=CRS, transform=None):
    """Write one grid; by default a square grid of `cell` m centred on E0, N0."""
    if transform is None:
        west, north = grid_origin(data.shape[0], cell)
        transform = Affine(cell, 0.0, west, 0.0, -cell, north)
    profile = {
        "driver": "GTiff", "height": data.shape[0], "width": data.shape[1], "count": 1,
        "dtype": "float32", "crs": crs, "transform": transform,
        "nodata": NODATA, "compress": "deflate", "predictor": 3, "zlevel": 9,
        "tiled": True, "blockxsize": 256, "blockysize": 256,
    }
    d = os.path.dirname(path)
    fd, tmp = tempfile.mkstemp(dir=d, prefix=".tmp-", suffix=".tif")
    os.close(fd)
    try:
        with rasterio.open(tmp, "w", **profile) as dst:
            dst.write(data.astype(np.float32), 1)
            dst.update_tags(SCENARIO="Quillerun Valley (invented, synthetic)",
                            CONTENT=description, UNITS="metre")
            dst.set_band_description(1, "height")
        _publish(tmp, path)
    finally:
        if os.path.exists(tmp):
            os.remove(tmp)


# ---------------------------------------------------------------------------
# Stations
# ---------------------------------------------------------------------------
def bilinear(grid, x, y):
    """Bilinear height from the 30 m grid; values sit at cell centres."""
    west, north = grid_origin(grid.shape[0], FINE_CELL)
    fc = (x + E0 - west) / FINE_CELL - 0.5
    fr = (north - (y + N0)) / FINE_CELL - 0.5
    c0 = int(np.floor(fc))
    r0 = int(np.floor(fr))
    tc = fc - c0
    tr = fr - r0
    g = grid.astype(np.float64)
    top = g[r0, c0] + (g[r0, c0 + 1] - g[r0, c0]) * tc
    bot = g[r0 + 1, c0] + (g[r0 + 1, c0 + 1] - g[r0 + 1, c0]) * tc
    return float(top + (bot - top) * tr)


def survey_error(index):
    """Deterministic survey error in [-0.29, 0.29] m for station number `index`."""
    v = _lattice_value(np.array([index], dtype=np.int64), np.array([7], dtype=np.int64), 991)
    return 0.29 * float(v[0])


def _pt(x, y):
    return float(x), float(y)


def _axis_point(x, across):
    """Point at along-valley position x and signed distance `across` from the axis."""
    x = np.array([float(x)])
    c = float(valley_axis(x)[0])
    s = float(valley_axis_slope(x)[0])
    inv = 1.0 / np.sqrt(1.0 + s * s)
    # step perpendicular to the axis: direction (-s, 1) normalised
    return _pt(x[0] - across * s * inv, c + across * inv)


def _h(x, y):
    return float(_terrain_parts(np.array([x]), np.array([y]))["h"][0])


def _beside_river(x, side, dist):
    """Point on the cross-valley line at x, `dist` metres from the river on one side."""
    a = np.arange(-1500.0, 1500.0, 2.0)
    pts = [_axis_point(x, aa) for aa in a]
    parts = _terrain_parts(np.array([p[0] for p in pts]), np.array([p[1] for p in pts]))
    k = int(np.argmin(parts["river_dist"]))
    while parts["river_dist"][k] < dist:
        k += side
    return pts[k]


def _walk_across(x, side, target_rel, start=0.0, step=10.0, limit=6000.0):
    """First point across the valley (side +1 north, -1 south) at height floor + target."""
    zf = float(valley_floor(np.array([float(x)]))[0])
    a = start
    while a < limit:
        px, py = _axis_point(x, side * a)
        if _h(px, py) >= zf + target_rel:
            return px, py
        a += step
    raise RuntimeError("no slope point found at x=%g" % x)


def _summit_in_window(fine, wx, wy, half=600.0):
    """Centre of the highest 30 m cell within a square window; must be a true top."""
    west, north = grid_origin(fine.shape[0], FINE_CELL)
    c0 = int((wx - half + E0 - west) / FINE_CELL)
    c1 = int((wx + half + E0 - west) / FINE_CELL)
    r0 = int((north - (wy + half + N0)) / FINE_CELL)
    r1 = int((north - (wy - half + N0)) / FINE_CELL)
    sub = fine[r0:r1, c0:c1]
    i, j = np.unravel_index(int(np.argmax(sub)), sub.shape)
    if min(i, j, sub.shape[0] - 1 - i, sub.shape[1] - 1 - j) < 3:
        raise RuntimeError("ridge window at %g, %g has its top on the edge" % (wx, wy))
    return (west + (c0 + j + 0.5) * FINE_CELL - E0, north - (r0 + i + 0.5) * FINE_CELL - N0)


def _cliff_face(x):
    """Signed across-valley distance of the steepest point of the cliff at x."""
    a = -np.arange(CLIFF_OFF - 250.0, CLIFF_OFF + 250.0, 5.0)
    pts = [_axis_point(x, aa) for aa in a]
    hh = _terrain_parts(np.array([p[0] for p in pts]), np.array([p[1] for p in pts]))["h"]
    k = int(np.argmax(np.diff(hh)))
    return 0.5 * (a[k] + a[k + 1])


def choose_stations(fine):
    """(category, x, y) for the 40 stations, chosen from the terrain function."""
    st = []
    # valley floor: 180 m beside the river (north side +1, south -1), away from the lake
    for x, side in ((-5600.0, 1), (-1600.0, -1), (-400.0, 1), (600.0, -1),
                    (-2400.0, 1), (5900.0, -1), (-5000.0, -1)):
        st.append(("valley_floor",) + _beside_river(x, side, 180.0))
    # lake shore: walk out from the lake centre to ground 1.5 m above the water
    lake_c = _axis_point(LAKE_X, 0.0)
    for ux, uy in ((0.0, 1.0), (0.0, -1.0), (-1.0, 0.0), (0.6, 0.8), (-0.6, -0.8)):
        a = 0.0
        while _h(lake_c[0] + a * ux, lake_c[1] + a * uy) < LAKE_LEVEL + 1.5:
            a += 5.0
            if a > 3000.0:
                raise RuntimeError("no lake shore found")
        st.append(("lake_shore", lake_c[0] + a * ux, lake_c[1] + a * uy))
    # lower slopes (300 m above the floor) and upper slopes (1000 m above)
    for x, side in ((-5200.0, 1), (-1000.0, -1), (2800.0, 1), (4800.0, -1), (-400.0, 1)):
        st.append(("lower_slope",) + _walk_across(x, side, 300.0))
    for x, side in ((-4600.0, -1), (-200.0, 1), (3000.0, -1), (5200.0, 1), (1000.0, 1)):
        st.append(("upper_slope",) + _walk_across(x, side, 1000.0))
    # ridge crests and tops: the highest cell in a window on each ridge
    for wx, wy in ((-5000.0, 4000.0), (-3000.0, -4000.0), (3000.0, -3500.0),
                   (5000.0, 4500.0), (-1000.0, -4000.0)):
        st.append(("ridge",) + _summit_in_window(fine, wx, wy))
    # cliff band: foot 80 m in front of the steepest point of the face, top 80 m behind
    for x in (CLIFF_X - 600.0, CLIFF_X, CLIFF_X + 600.0):
        face = _cliff_face(x)
        st.append(("cliff_foot",) + _axis_point(x, face + 80.0))
        st.append(("cliff_top",) + _axis_point(x, face - 80.0))
    # beside the lone horn: two at its foot, one on the flank, one near the summit
    py = float(valley_axis(np.array([PEAK_X]))[0]) + PEAK_OFF
    st.append(("horn", PEAK_X + 1300.0, py))
    st.append(("horn", PEAK_X - 1250.0, py + 200.0))
    st.append(("horn", PEAK_X + 420.0, py + 300.0))
    st.append(("horn", PEAK_X + 60.0, py - 40.0))
    # side valley floors
    for i, t in ((0, 0.30), (0, 0.50), (1, 0.35)):
        mx, moff, hx, hy = SIDE_VALLEYS[i][:4]
        my = float(valley_axis(np.array([mx]))[0]) + moff
        st.append(("side_valley", mx + t * (hx - mx), my + t * (hy - my)))
    return st


def make_stations(fine):
    rows = []
    for i, (cat, x, y) in enumerate(choose_stations(fine), start=1):
        xr = round(x, 2)
        yr = round(y, 2)
        if max(abs(xr), abs(yr)) > STATION_BOX:
            raise RuntimeError("station %d outside the station box" % i)
        z = bilinear(fine, xr, yr) + survey_error(i)
        rows.append(("V%02d" % i, cat, xr + E0, yr + N0, round(z, 2)))
    return rows


def write_stations(path, rows):
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(["station", "x", "y", "elev"])
    for sid, _cat, x, y, z in rows:
        w.writerow([sid, "%.2f" % x, "%.2f" % y, "%.2f" % z])
    d = os.path.dirname(path)
    fd, tmp = tempfile.mkstemp(dir=d, prefix=".tmp-", suffix=".csv")
    with os.fdopen(fd, "w", newline="") as f:
        f.write(buf.getvalue())
    _publish(tmp, path)


# ---------------------------------------------------------------------------
# Checks
# ---------------------------------------------------------------------------
def check_lake():
    """Lowest dry height above the water along the inner edge of the lake mask.

    A positive value means the water surface ends on rising ground everywhere and
    never against the edge of the mask.
    """
    ma, mb = LAKE_MASK
    gx = LAKE_X + np.arange(-ma - 300.0, ma + 300.0, 10.0)
    gy = np.arange(-mb - 600.0, mb + 600.0, 10.0)
    x = np.repeat(gx, gy.size)
    y = (valley_axis(gx)[:, None] + gy[None, :]).ravel()
    parts = _terrain_parts(x, y)
    q = sq((x - LAKE_X) / ma) + sq(parts["across"] / mb)
    ring = (q > 0.93) & (q < 1.0)
    if not ring.any():
        raise RuntimeError("lake check found no points on the mask edge")
    return float(np.min(parts["dry"][ring] - LAKE_LEVEL))


def lonlat_against_fine(lonlat, fine):
    """Lon/lat cells against the mean of the 30 m cells whose centres fall inside them.

    Only lonlat cells holding at least 5 such centres (of about 6.5) are compared.
    Returns (cells compared, mean, rms, largest absolute difference) in m.
    """
    west, north = grid_origin(FINE_N, FINE_CELL)
    xc = west + FINE_CELL * (np.arange(FINE_N) + 0.5)
    yc = north - FINE_CELL * (np.arange(FINE_N) + 0.5)
    x = np.repeat(xc[None, :], FINE_N, axis=0).ravel()
    y = np.repeat(yc[:, None], FINE_N, axis=1).ravel()
    lon, lat = pyproj.Transformer.from_crs(CRS, MID_CRS, always_xy=True).transform(x, y)
    ci = np.floor((np.asarray(lon) * 3600.0 - MID_WEST) / MID_STEP).astype(np.int64)
    ri = np.floor((MID_NORTH - np.asarray(lat) * 3600.0) / MID_STEP).astype(np.int64)
    if ci.min() < 0 or ri.min() < 0 or ci.max() >= MID_COLS or ri.max() >= MID_ROWS:
        raise RuntimeError("the 3 arc-second grid does not hold the whole 30 m grid")
    idx = ri * MID_COLS + ci
    count = np.bincount(idx, minlength=lonlat.size)
    total = np.bincount(idx, weights=fine.astype(np.float64).ravel(), minlength=lonlat.size)
    use = count >= 5
    diff = lonlat.astype(np.float64).ravel()[use] - total[use] / count[use]
    return int(use.sum()), diff.mean(), np.sqrt((diff ** 2).mean()), np.abs(diff).max()


def lonlat_margin(rows, radius):
    """Smallest geodesic distance (m) from a station to the 3 arc-second grid's edge, less `radius`.

    The edge is sampled every 3 arc-seconds; distances on the WGS 84 ellipsoid (pyproj.Geod).
    """
    to_geo = pyproj.Transformer.from_crs(CRS, MID_CRS, always_xy=True)
    geod = pyproj.Geod(ellps="WGS84")
    lon_edge = np.arange(MID_WEST, MID_EAST + 1, MID_STEP, dtype=np.float64) / 3600.0
    lat_edge = np.arange(MID_SOUTH, MID_NORTH + 1, MID_STEP, dtype=np.float64) / 3600.0
    blon = np.concatenate([lon_edge, lon_edge, np.full_like(lat_edge, MID_WEST / 3600.0),
                           np.full_like(lat_edge, MID_EAST / 3600.0)])
    blat = np.concatenate([np.full_like(lon_edge, MID_SOUTH / 3600.0),
                           np.full_like(lon_edge, MID_NORTH / 3600.0), lat_edge, lat_edge])
    worst = None
    for _sid, _cat, x, y, _z in rows:
        slon, slat = to_geo.transform(x, y)
        if not (MID_WEST < slon * 3600.0 < MID_EAST and MID_SOUTH < slat * 3600.0 < MID_NORTH):
            raise RuntimeError("station %s lies outside the 3 arc-second grid" % _sid)
        _f, _b, dist = geod.inv(np.full_like(blon, slon), np.full_like(blat, slat), blon, blat)
        d = float(np.min(dist))
        worst = d if worst is None else min(worst, d)
    return worst - radius


def summarize(fine, coarse, rows, lonlat=None):
    print("quillerun_30m.tif    %d x %d cells of %.0f m, heights %.2f .. %.2f m"
          % (fine.shape[1], fine.shape[0], FINE_CELL, fine.min(), fine.max()))
    print("quillerun_500m.tif %d x %d cells of %.0f m, heights %.2f .. %.2f m"
          % (coarse.shape[1], coarse.shape[0], COARSE_CELL, coarse.min(), coarse.max()))
    if lonlat is not None:
        print("quillerun_3s_lonlat.tif %d x %d cells of %d arc-seconds, heights %.2f .. %.2f m"
              % (lonlat.shape[1], lonlat.shape[0], MID_STEP, lonlat.min(), lonlat.max()))
        n, mean, rms, worst = lonlat_against_fine(lonlat, fine)
        print("lonlat vs means of the 30 m cells centred in them (%d cells): mean %+.3f m, "
              "rms %.3f m, max |%.3f| m" % (n, mean, rms, worst))
    lake_cells = int(np.count_nonzero(fine == np.float32(LAKE_LEVEL)))
    print("lake surface %.2f m over %d fine cells (%.2f km2)"
          % (LAKE_LEVEL, lake_cells, lake_cells * FINE_CELL ** 2 / 1e6))
    # consistency: coarse cells inside the fine grid against the fine-cell means
    k = int(round(FINE_N * FINE_CELL / COARSE_CELL))  # coarse cells across the fine grid
    c0 = (COARSE_N - k) // 2
    sub = coarse[c0:c0 + k, c0:c0 + k].astype(np.float64)
    ref = np.empty_like(sub)
    west, north = grid_origin(FINE_N, FINE_CELL)
    xc = west + FINE_CELL * (np.arange(FINE_N) + 0.5)
    yc = north - FINE_CELL * (np.arange(FINE_N) + 0.5)
    cw, cn = grid_origin(COARSE_N, COARSE_CELL)
    ci = np.floor((xc - cw) / COARSE_CELL).astype(int) - c0
    ri = np.floor((cn - yc) / COARSE_CELL).astype(int) - c0
    f64 = fine.astype(np.float64)
    for i in range(k):
        rsel = ri == i
        for j in range(k):
            ref[i, j] = f64[np.ix_(rsel, ci == j)].mean()
    diff = sub - ref
    print("coarse vs fine block means over the fine area: mean %+.3f m, rms %.3f m, max |%.3f| m"
          % (diff.mean(), np.sqrt((diff ** 2).mean()), np.abs(diff).max()))
    cats = {}
    for _sid, cat, _x, _y, _z in rows:
        cats[cat] = cats.get(cat, 0) + 1
    print("stations: %d  (%s)" % (len(rows), ", ".join("%s %d" % kv for kv in cats.items())))
    zs = [r[4] for r in rows]
    print("station heights %.2f .. %.2f m" % (min(zs), max(zs)))


def verify_geotiff(path, expected, cell, epsg=32633, transform=None):
    """Read a written grid back and check georeferencing, nodata and every value."""
    if transform is None:
        west, north = grid_origin(expected.shape[0], cell)
        transform = Affine(cell, 0.0, west, 0.0, -cell, north)
    with rasterio.open(path) as src:
        problems = []
        if src.crs is None or src.crs.to_epsg() != epsg:
            problems.append("CRS is %s, not EPSG:%d" % (src.crs, epsg))
        if tuple(src.transform)[:6] != tuple(transform)[:6]:
            problems.append("geotransform %s" % (tuple(src.transform)[:6],))
        if src.dtypes != ("float32",) or src.count != 1:
            problems.append("bands %s" % (src.dtypes,))
        if src.nodata != NODATA:
            problems.append("nodata %s" % src.nodata)
        structure = src.tags(ns="IMAGE_STRUCTURE")
        if structure.get("COMPRESSION") != "DEFLATE" or structure.get("PREDICTOR") != "3":
            problems.append("image structure %s" % structure)
        data = src.read(1)
        masked = src.read_masks(1)
    if (data == NODATA).any() or not np.isfinite(data).all() or (masked == 0).any():
        problems.append("nodata or non-finite values inside the grid")
    if data.tobytes() != expected.astype(np.float32).tobytes():
        problems.append("values read back differ from the values computed")
    if problems:
        raise RuntimeError("%s: %s" % (path, "; ".join(problems)))


def verify_stations(path, rows, fine):
    """Read stations.csv back; check the box, the DEM heights and the survey errors."""
    west, north = grid_origin(fine.shape[0], FINE_CELL)
    with open(path, newline="") as f:
        got = list(csv.reader(f))
    if got[0] != ["station", "x", "y", "elev"] or len(got) != 1 + len(rows):
        raise RuntimeError("%s: unexpected header or row count" % path)
    worst_margin = None
    for rec in got[1:]:
        x, y, z = float(rec[1]), float(rec[2]), float(rec[3])
        dem = bilinear(fine, x - E0, y - N0)
        if abs(z - dem) > 0.3:
            raise RuntimeError("%s: %s is %.3f m off the DEM" % (path, rec[0], z - dem))
        margin = min(x - west, west + FINE_N * FINE_CELL - x,
                     north - y, y - (north - FINE_N * FINE_CELL)) - DEMO_RADIUS_FINE
        worst_margin = margin if worst_margin is None else min(worst_margin, margin)
    if worst_margin < 0.0:
        raise RuntimeError("%s: a %g m radius leaves the 30 m grid" % (path, DEMO_RADIUS_FINE))
    return worst_margin


def sha256(path):
    h = hashlib.sha256()
    with open(path, "rb") as f:
        for chunk in iter(lambda: f.read(1 << 20), b""):
            h.update(chunk)
    return h.hexdigest()


def main(argv=None):
    here = os.path.dirname(os.path.abspath(__file__))
    default_out = os.path.normpath(os.path.join(here, "..", "..", "demo-dem"))
    ap = argparse.ArgumentParser(description="Generate the ringsum demo scenario.")
    ap.add_argument("--out", default=default_out, help="output folder (default: %(default)s)")
    ap.add_argument("--with-categories", action="store_true",
                    help="also print each station with its category")
    args = ap.parse_args(argv)
    os.makedirs(args.out, exist_ok=True)

    margin = check_lake()
    if margin <= 0.5:
        raise RuntimeError("lake would spill over its mask edge (margin %.2f m)" % margin)

    fine = block_mean_grid(FINE_N, FINE_CELL, FINE_SUB).astype(np.float32)
    coarse = block_mean_grid(COARSE_N, COARSE_CELL, COARSE_SUB).astype(np.float32)
    lonlat = geographic_mean_grid().astype(np.float32)
    if not (np.isfinite(fine).all() and np.isfinite(coarse).all()
            and np.isfinite(lonlat).all()):
        raise RuntimeError("terrain function produced a non-finite height")

    write_geotiff(os.path.join(args.out, "quillerun_30m.tif"), fine,
                  FINE_CELL, "30 m cell means of 3x3 point samples")
    write_geotiff(os.path.join(args.out, "quillerun_500m.tif"), coarse,
                  COARSE_CELL, "500 m cell means of 10x10 point samples")
    write_geotiff(os.path.join(args.out, "quillerun_3s_lonlat.tif"), lonlat, None,
                  "3 arc-second cell means of 4x4 point samples", crs=MID_CRS,
                  transform=mid_transform())
    rows = make_stations(fine)
    write_stations(os.path.join(args.out, "stations.csv"), rows)

    verify_geotiff(os.path.join(args.out, "quillerun_30m.tif"), fine, FINE_CELL)
    verify_geotiff(os.path.join(args.out, "quillerun_500m.tif"), coarse, COARSE_CELL)
    verify_geotiff(os.path.join(args.out, "quillerun_3s_lonlat.tif"), lonlat, None,
                   epsg=4326, transform=mid_transform())
    spare = verify_stations(os.path.join(args.out, "stations.csv"), rows, fine)
    cw, cn = grid_origin(COARSE_N, COARSE_CELL)
    spare_reg = min(min(r[2] - cw, cw + COARSE_N * COARSE_CELL - r[2],
                        cn - r[3], r[3] - (cn - COARSE_N * COARSE_CELL)) for r in rows)
    spare_reg -= DEMO_RADIUS_WIDE
    if spare_reg < 0.0:
        raise RuntimeError("a %g m radius leaves the 500 m grid" % DEMO_RADIUS_WIDE)
    spare_mid = lonlat_margin(rows, DEMO_RADIUS_LONLAT)
    if spare_mid < 0.0:
        raise RuntimeError("a %g m radius leaves the 3 arc-second grid" % DEMO_RADIUS_LONLAT)

    print("read back: CRS, geotransform, nodata, compression and all values check out")
    print("radius %.1f km fits quillerun_30m.tif with %.2f km to spare; %.1f km fits "
          "quillerun_500m.tif with %.2f km to spare"
          % (DEMO_RADIUS_FINE / 1000, spare / 1000, DEMO_RADIUS_WIDE / 1000,
             spare_reg / 1000))
    print("radius %.1f km fits quillerun_3s_lonlat.tif with %.2f km to spare (geodesic)"
          % (DEMO_RADIUS_LONLAT / 1000, spare_mid / 1000))
    print("lake edge margin above water: %.2f m" % margin)
    summarize(fine, coarse, rows, lonlat)
    if args.with_categories:
        for sid, cat, x, y, z in rows:
            print("  %s %-12s %.2f %.2f %.2f" % (sid, cat, x, y, z))
    for name in ("quillerun_30m.tif", "quillerun_3s_lonlat.tif", "quillerun_500m.tif",
                 "stations.csv"):
        p = os.path.join(args.out, name)
        print("%s  %8d bytes  %s" % (sha256(p), os.path.getsize(p), name))
    return 0


if __name__ == "__main__":
    sys.exit(main())
