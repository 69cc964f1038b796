#!/usr/bin/env python3
"""Write fixtures/normal_gravity_boule.csv: reference normal gravity from boule.

The Rust tests in src/reduce.rs read this file and compare:

* at height 0, ringsum's Somigliana closed form against boule's normal gravity
  (both are exact on the ellipsoid, so they must agree to 1e-5 mGal);
* at 1000 m and 3000 m, boule's exact normal gravity above the ellipsoid against
  ringsum's gamma0 - FAC with the second-order free-air correction, whose own
  error (about 0.01 mGal per km) the test bounds.

boule's ``Ellipsoid.normal_gravity`` evaluates the closed-form normal gravity of
the level ellipsoid at any point on or above it (Lakshmanan 1991, corrected by
Li & Gotze 2001, in ellipsoidal-harmonic coordinates), so the values at height
are not a free-air approximation.

Environment (pinned in scripts/reference/requirements-boule.txt):

    python3.11 -m venv /work/venv-reduce
    /work/venv-reduce/bin/pip install -r scripts/reference/requirements-boule.txt
    /work/venv-reduce/bin/python scripts/reference/make_normal_gravity_fixture.py

Columns: latitude_deg (geodetic), height_m (above the ellipsoid), ellipsoid
(GRS80 or WGS84), gamma_mgal (normal gravity magnitude, mGal). Numbers are
written with Python's repr, the shortest text that reads back to the same
double, so no digits are lost.
"""

import csv
import pathlib
import sys

import boule
import numpy as np

BOULE_VERSION = "0.6.0"

# 50 latitudes from pole to pole, on the ellipsoid.
SURFACE_LATITUDES = np.linspace(-90.0, 90.0, 50)
# 11 latitudes every 18 degrees, at the heights below.
HEIGHT_LATITUDES = np.linspace(-90.0, 90.0, 11)
HEIGHTS_M = (1000.0, 3000.0)

ELLIPSOIDS = (("GRS80", boule.GRS80), ("WGS84", boule.WGS84))


def main() -> int:
    found = boule.__version__.lstrip("v")
    if found != BOULE_VERSION:
        print(
            f"boule {found} is installed but this fixture is pinned to boule "
            f"{BOULE_VERSION}; install scripts/reference/requirements-boule.txt",
            file=sys.stderr,
        )
        return 1

    rows = []
    for name, ellipsoid in ELLIPSOIDS:
        points = [(float(lat), 0.0) for lat in SURFACE_LATITUDES]
        points += [
            (float(lat), height) for height in HEIGHTS_M for lat in HEIGHT_LATITUDES
        ]
        for lat, height in points:
            gamma = float(ellipsoid.normal_gravity((None, lat, height)))
            rows.append((repr(lat), repr(height), name, repr(gamma)))

    out = pathlib.Path(__file__).resolve().parents[2] / "fixtures" / "normal_gravity_boule.csv"
    out.parent.mkdir(parents=True, exist_ok=True)
    with out.open("w", newline="") as handle:
        writer = csv.writer(handle, lineterminator="\n")
        writer.writerow(("latitude_deg", "height_m", "ellipsoid", "gamma_mgal"))
        writer.writerows(rows)
    print(f"wrote {len(rows)} rows to {out}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
