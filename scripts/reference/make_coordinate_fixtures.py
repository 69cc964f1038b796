"""Write fixtures/pyproj_transforms.csv and fixtures/geodesic_geographiclib.csv.

pyproj_transforms.csv: coordinate transformations with pyproj (always_xy=True,
so geographic coordinates are (longitude, latitude) in degrees and projected
ones (easting, northing) in metres). Needs fixtures/jacksboro_utm.tif and
fixtures/jacksboro_stations.csv, so run make_jacksboro_fixture.py first.

geodesic_geographiclib.csv: WGS84 geodesic inverse problems solved with
geographiclib (Karney 2013 algorithms).

Run from the repository root:  python scripts/reference/make_coordinate_fixtures.py
"""

import csv
import math
import os

import geographiclib
import pyproj
import pyproj.network
import rasterio
from geographiclib.geodesic import Geodesic

ROOT = os.path.dirname(os.path.dirname(os.path.dirname(os.path.abspath(__file__))))
FIX = os.path.join(ROOT, "fixtures")
PROJ_CSV = os.path.join(FIX, "pyproj_transforms.csv")
GEOD_CSV = os.path.join(FIX, "geodesic_geographiclib.csv")
TMERC = "+proj=tmerc +lat_0=0 +lon_0=15 +k=0.9996 +x_0=500000 +y_0=0 +ellps=GRS80 +units=m"


def transform_rows():
    with rasterio.open(os.path.join(FIX, "jacksboro_utm.tif")) as src:
        utm = f"EPSG:{src.crs.to_epsg()}"
        b = src.bounds
    with open(os.path.join(FIX, "jacksboro_stations.csv")) as f:
        stations = [(float(r["x"]), float(r["y"])) for r in csv.DictReader(f)]

    groups = [
        # UTM grid corners and centre, then the stations (their geodetic latitude)
        (utm, "EPSG:4326",
         [(b.left, b.top), (b.right, b.top), (b.left, b.bottom), (b.right, b.bottom),
          ((b.left + b.right) / 2, (b.bottom + b.top) / 2)] + stations),
        ("EPSG:4326", utm,
         [(-84.41375, 36.73291666666667), (-84.07791666666667, 36.44625),
          (-84.25, 36.6), (-87.0, 36.6), (-83.0, 36.6)]),
        ("EPSG:32633", "EPSG:4326",
         [(500000.0, 5000000.0), (350000.5, 5800000.25), (650000.0, 4200000.0),
          (800123.45, 6543210.98)]),
        ("EPSG:4326", "EPSG:32633",
         [(15.0, 45.0), (12.1, 52.5), (17.75, 38.2), (14.3, 69.9)]),
        ("EPSG:3857", "EPSG:4326",
         [(0.0, 0.0), (1669792.3618991, 5621521.4861927), (-9378000.0, 4395000.0),
          (-20037508.342789244, -15000000.0)]),
        (TMERC, "EPSG:4326",
         [(500000.0, 0.0), (500000.0, 5000000.0), (321987.65, 5432109.87),
          (699999.99, 4100000.01)]),
    ]
    rows, descriptions = [], []
    for src_crs, dst_crs, pts in groups:
        tr = pyproj.Transformer.from_crs(src_crs, dst_crs, always_xy=True)
        descriptions.append((src_crs, dst_crs, tr.description))
        for x, y in pts:
            xo, yo = tr.transform(x, y)
            assert math.isfinite(xo) and math.isfinite(yo)
            rows.append((src_crs, dst_crs, float(x), float(y), float(xo), float(yo)))
    return rows, descriptions


def geodesic_rows():
    """60 inverse problems: 50 from 1 m to 200 km, 10 from 1000 to 10000 km."""
    geod = Geodesic.WGS84
    cases = []
    n_short = 50
    for i in range(n_short):
        s = 10 ** (math.log10(1.0) + (math.log10(200000.0) - math.log10(1.0)) * i / (n_short - 1))
        lat1 = -80.0 + 160.0 * ((i * 23) % n_short) / (n_short - 1)
        lon1 = -179.5 + 359.0 * ((i * 17) % n_short) / (n_short - 1)
        azi = -180.0 + 360.0 * ((i * 31) % n_short) / n_short + 7.25
        cases.append((lat1, lon1, azi, s))
    for j, s_km in enumerate((1000, 2000, 3000, 4000, 5000, 6000, 7000, 8000, 9000, 10000)):
        lat1 = -70.0 + 140.0 * ((j * 3) % 10) / 9
        lon1 = -150.0 + 30.0 * j
        azi = -170.0 + 37.0 * j
        cases.append((lat1, lon1, azi, s_km * 1000.0))
    # special geometries replace a few generated ones (same distance band)
    cases[5] = (36.6, -84.25, 0.0, cases[5][3])       # due north, on a meridian
    cases[12] = (0.0, 10.0, 90.0, cases[12][3])       # along the equator
    cases[20] = (-45.0, 179.999, 90.0, cases[20][3])  # across the antimeridian
    cases[33] = (80.0, -30.0, 180.0, cases[33][3])    # due south
    rows = []
    for lat1, lon1, azi, s in cases:
        d = geod.Direct(lat1, lon1, azi, s)
        lat1r, lon1r = round(lat1, 10), round(lon1, 10)
        lat2r, lon2r = round(d["lat2"], 10), round(d["lon2"], 10)
        inv = geod.Inverse(lat1r, lon1r, lat2r, lon2r)
        assert -80.0 <= lat1r <= 80.0 and -80.5 <= lat2r <= 80.5
        rows.append((lat1r, lon1r, lat2r, lon2r, inv["s12"], inv["azi1"], inv["azi2"]))
    return rows


def main():
    rows, descriptions = transform_rows()
    with open(PROJ_CSV, "w", newline="") as f:
        wr = csv.writer(f, lineterminator="\n")
        wr.writerow(["src_crs", "dst_crs", "x_in", "y_in", "x_out", "y_out"])
        for r in rows:
            wr.writerow([r[0], r[1]] + [repr(v) for v in r[2:]])
    grows = geodesic_rows()
    with open(GEOD_CSV, "w", newline="") as f:
        wr = csv.writer(f, lineterminator="\n")
        wr.writerow(["lat1", "lon1", "lat2", "lon2", "s12_m", "azi1_deg", "azi2_deg"])
        for r in grows:
            wr.writerow([repr(float(v)) for v in r])
    print(f"pyproj {pyproj.__version__}, PROJ {pyproj.proj_version_str}, "
          f"network enabled: {pyproj.network.is_network_enabled()}; "
          f"geographiclib {geographiclib.__version__}")
    for s, d, desc in descriptions:
        print(f"  {s} -> {d}: {desc}")
    print(f"wrote {len(rows)} rows to {PROJ_CSV}")
    s12 = [r[4] for r in grows]
    print(f"wrote {len(grows)} rows to {GEOD_CSV}; s12 from {min(s12):.6g} to {max(s12):.6g} m, "
          f"lat from {min(min(r[0], r[2]) for r in grows):.3f} to {max(max(r[0], r[2]) for r in grows):.3f}")


if __name__ == "__main__":
    main()
