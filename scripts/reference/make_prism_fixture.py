"""Write fixtures/prism_choclo.csv and fixtures/prism_mpmath.csv.

prism_choclo.csv: the upward gravity of single right rectangular prisms,
computed with choclo.prism.gravity_u, for a fixed list of geometries chosen to
exercise the closed-form prism kernel (generic points, corners, edges, faces,
coplanar points, far field, slabs, terrain blocks with one face at station
height, tiny and large prisms).

prism_mpmath.csv: the same kernel (Nagy, Papp & Benedek 2000) evaluated in
50-digit arithmetic with mpmath, as an independent check of choclo's digits.

Run from the repository root:  python scripts/reference/make_prism_fixture.py
"""

import csv
import math
import os
import sys

import choclo
import mpmath
import numpy as np
from choclo.constants import GRAVITATIONAL_CONST
from choclo.prism import gravity_u

ROOT = os.path.dirname(os.path.dirname(os.path.dirname(os.path.abspath(__file__))))
OUT = os.path.join(ROOT, "fixtures", "prism_choclo.csv")
OUT_MP = os.path.join(ROOT, "fixtures", "prism_mpmath.csv")
MGAL = 1e-5  # m/s^2 per mGal

HEADER = [
    "case", "west", "east", "south", "north", "bottom", "top",
    "easting", "northing", "upward", "density", "gravity_u",
]


def build_cases():
    """Return a list of (case, (w, e, s, n, b, t), (x, y, z), density)."""
    cases = []

    def add(name, prism, point, density):
        cases.append((name, tuple(float(v) for v in prism),
                      tuple(float(v) for v in point), float(density)))

    # --- Check values P1, P2, P3: our own 7-digit values of the closed form --
    add("p1_science", (-500, 500, 500, 1500, -1500, -500), (0, 0, 0), 1000)
    add("p2_cube_top_centre", (-0.5, 0.5, -0.5, 0.5, -1, 0), (0, 0, 0), 2670)
    # P3: terrain block 100 m x 100 m from station level to +500 m,
    # centre at horizontal distance r east of the station.
    for r in (100, 200, 500, 1000, 2000, 5000, 10000, 20000, 50000):
        add(f"p3_terrain_r{r}", (r - 50, r + 50, -50, 50, 0, 500), (0, 0, 0), 2670)

    # --- A generic, deliberately asymmetric prism ------------------------
    W, E, S, N, B, T = 10.0, 110.0, -30.0, 50.0, -60.0, -5.0
    pr = (W, E, S, N, B, T)
    xm, ym, zm = (W + E) / 2, (S + N) / 2, (B + T) / 2
    rho = 2670

    # generic points outside
    add("generic_above_centre", pr, (xm, ym, 200), rho)
    add("generic_below_centre", pr, (xm, ym, -400), rho)
    add("generic_above_offset", pr, (-73.5, 121.25, 37.0), rho)
    add("generic_below_offset", pr, (251.0, -180.5, -333.3), rho)
    add("generic_diag_up", pr, (-200, -200, 150), rho)
    add("generic_diag_down", pr, (300, 260, -250), rho)
    add("generic_origin", pr, (0, 0, 0), rho)

    # corners (observation point exactly on a vertex)
    for zn, z in (("top", T), ("bot", B)):
        for yn, y in (("n", N), ("s", S)):
            for xn, x in (("e", E), ("w", W)):
                add(f"corner_{zn}_{yn}{xn}", pr, (x, y, z), rho)

    # edges (midpoints of all 12 edges, plus one off-midpoint)
    for zn, z in (("top", T), ("bot", B)):
        add(f"edge_{zn}_n", pr, (xm, N, z), rho)
        add(f"edge_{zn}_s", pr, (xm, S, z), rho)
        add(f"edge_{zn}_e", pr, (E, ym, z), rho)
        add(f"edge_{zn}_w", pr, (W, ym, z), rho)
    for yn, y in (("n", N), ("s", S)):
        for xn, x in (("e", E), ("w", W)):
            add(f"edge_vert_{yn}{xn}", pr, (x, y, zm), rho)
    add("edge_top_n_offmid", pr, (W + 17.25, N, T), rho)

    # faces
    add("face_top_centre", pr, (xm, ym, T), rho)
    add("face_top_offset", pr, (W + 3.0, S + 71.0, T), rho)
    add("face_bot_centre", pr, (xm, ym, B), rho)
    add("face_bot_offset", pr, (E - 12.5, N - 6.25, B), rho)
    add("face_side_e", pr, (E, ym, zm), rho)
    add("face_side_w", pr, (W, S + 20.0, B + 5.0), rho)
    add("face_side_n", pr, (xm + 30.0, N, T - 1.0), rho)
    add("face_side_s", pr, (xm, S, zm), rho)

    # beside the prism, at a height inside [bottom, top]
    add("beside_e_midheight", pr, (E + 40, ym, zm), rho)
    add("beside_w_midheight", pr, (W - 40, ym, zm), rho)
    add("beside_n_near_top", pr, (xm, N + 5, T - 0.5), rho)
    add("beside_s_near_bot", pr, (xm, S - 200, B + 0.5), rho)
    add("beside_ne_midheight", pr, (E + 25, N + 25, zm), rho)
    # in the plane of a horizontal face but outside the prism (z = 0 case)
    add("coplanar_top_e", pr, (E + 40, ym, T), rho)
    add("coplanar_bot_sw", pr, (W - 30, S - 30, B), rho)
    # on the line through an edge, outside the prism (x < 0, y = z = 0 case)
    add("edgeline_top_n_west", pr, (W - 50, N, T), rho)
    add("edgeline_top_s_east", pr, (E + 50, S, T), rho)
    add("edgeline_bot_e_north", pr, (E, N + 70, B), rho)
    add("edgeline_vert_sw_above", pr, (W, S, T + 100), rho)
    add("edgeline_vert_ne_below", pr, (E, N, B - 100), rho)

    # far away (about 100 km horizontally)
    blk = (-500, 500, -500, 500, -1000, 0)  # 1 km x 1 km x 1 km below z = 0
    add("far_100km_e", blk, (100000, 0, 0), rho)
    add("far_100km_n", blk, (0, 100000, 0), rho)
    add("far_100km_w_up", blk, (-100000, 0, 250), rho)
    add("far_100km_s_mid", blk, (0, -100000, -500), rho)
    add("far_100km_ne", blk, (70710.678, 70710.678, 0), rho)
    add("far_100km_e_100m_block", (-50, 50, -50, 50, 0, 100), (100000, 0, 0), rho)
    add("far_10km_above", blk, (0, 0, 10000), rho)

    # thin wide prisms (slab-like), point above the centre
    slab = (-100000, 100000, -100000, 100000, -1, 0)
    add("slab_200km_1m_top", slab, (0, 0, 0), rho)
    add("slab_200km_1m_10m_above", slab, (0, 0, 10), rho)
    add("slab_200km_1m_1km_above", slab, (0, 0, 1000), rho)
    add("slab_200km_1m_below", slab, (0, 0, -100), rho)
    add("slab_200km_1m_offcentre", slab, (37000, -52000, 0), rho)
    add("slab_20km_100m_top", (-10000, 10000, -10000, 10000, -100, 0), (0, 0, 0), rho)

    # terrain-like prisms, one face at the point's height (z = 0 face).
    # above: bottom = 0, top = h; below: top = 0, bottom = -h.
    for d in (0, 1000, 50000):
        for h in (1, 2000):
            add(f"terrain_above_d{d}_h{h}", (d - 50, d + 50, -50, 50, 0, h), (0, 0, 0), rho)
            add(f"terrain_below_d{d}_h{h}", (d - 50, d + 50, -50, 50, -h, 0), (0, 0, 0), rho)
    for d in (100, 10000):
        add(f"terrain_below_d{d}_h500", (d - 50, d + 50, -50, 50, -500, 0), (0, 0, 0), rho)
    # 90 m DEM-like cells next to the station, diagonal and at a non-zero height
    add("terrain_cell90_diag_above", (45, 135, 45, 135, 312.5, 377.25), (0, 0, 312.5), rho)
    add("terrain_cell90_diag_below", (45, 135, 45, 135, 250.0, 312.5), (0, 0, 312.5), rho)
    add("terrain_cell90_own_above", (-45, 45, -45, 45, 400.0, 412.34), (12.5, -7.25, 400.0), rho)
    add("terrain_cell90_own_below", (-45, 45, -45, 45, 388.0, 400.0), (-30.0, 22.0, 400.0), rho)
    add("terrain_cell90_d20km_below", (19955, 20045, -45, 45, -700, 0), (0, 0, 0), rho)

    # tiny prisms (1 m cube) and large ones
    cube = (-0.5, 0.5, -0.5, 0.5, -1, 0)
    add("tiny_cube_10m_e", cube, (10, 0, -0.5), rho)
    add("tiny_cube_1km_above", cube, (0, 0, 1000), rho)
    add("tiny_cube_corner", cube, (0.5, 0.5, 0), rho)
    add("tiny_cube_bottom_centre", cube, (0, 0, -1), rho)
    big = (-50000, 50000, -50000, 50000, -10000, 0)
    add("large_100km_10km_top_centre", big, (0, 0, 0), rho)
    add("large_100km_10km_above", big, (12000, -8000, 3000), rho)
    add("large_100km_10km_side_e", big, (50000, 0, -5000), rho)
    add("large_100km_10km_outside", big, (80000, 60000, -2500), rho)

    # densities other than 2670 (the kernel is linear in density)
    add("density_negative", pr, (xm, ym, 200), -400)
    add("density_water", (0, 200, 0, 300, -20, 0), (100, 150, 0), 1000)

    names = [c[0] for c in cases]
    assert len(names) == len(set(names)), "duplicate case names"
    return cases


# --- independent 50-digit evaluation of the same closed form --------------

def mp_gravity_u(prism, point, density):
    """Upward gravity of a prism, Nagy et al. (2000) closed form, mpmath.

    With z up, g_down = G rho |||F||| and g_up = -G rho |||F|||, where
    F = x ln(y + r) + y ln(x + r) - z atan(x y / (z r)). Terms whose
    multiplier is exactly zero are skipped (their limit is zero).
    """
    mpmath.mp.dps = 50
    w, e, s, n, b, t = (mpmath.mpf(v) for v in prism)
    px, py, pz = (mpmath.mpf(v) for v in point)
    total = mpmath.mpf(0)
    for i, xi in enumerate((w - px, e - px)):
        for j, yj in enumerate((s - py, n - py)):
            for k, zk in enumerate((b - pz, t - pz)):
                r = mpmath.sqrt(xi * xi + yj * yj + zk * zk)
                f = mpmath.mpf(0)
                if xi != 0:
                    f += xi * mpmath.log(yj + r)
                if yj != 0:
                    f += yj * mpmath.log(xi + r)
                if zk != 0:
                    f -= zk * mpmath.atan(xi * yj / (zk * r))
                sign = 1 if (i + j + k) % 2 == 1 else -1  # + at corner (2,2,2)
                total += sign * f
    g = mpmath.mpf(GRAVITATIONAL_CONST) * mpmath.mpf(density)
    return -g * total


def main():
    cases = build_cases()
    rows, mp_rows, skipped = [], [], []
    for name, prism, point, density in cases:
        w, e, s, n, b, t = prism
        x, y, z = point
        g = float(gravity_u(x, y, z, w, e, s, n, b, t, density))
        if not math.isfinite(g):
            print(f"WARNING: choclo returned {g!r} for case {name}; row skipped",
                  file=sys.stderr)
            skipped.append(name)
            continue
        rows.append([name, w, e, s, n, b, t, x, y, z, density, g])
        gmp = mp_gravity_u(prism, point, density)
        rel = abs((mpmath.mpf(g) - gmp) / gmp) if gmp != 0 else abs(mpmath.mpf(g))
        mp_rows.append([name, mpmath.nstr(gmp, 20, strip_zeros=False), float(rel)])

    by_name = {r[0]: r for r in rows}
    mp_by_name = {r[0]: float(r[1]) for r in mp_rows}

    # Checks against the check values P1, P2, P3 (our own, 7 significant digits).
    # The 50-digit evaluation must match; choclo's own deviation is printed
    # (it loses digits in the far field, see prism_mpmath.csv).
    def check(name, expected_mgal, sign):
        got_mp = sign * mp_by_name[name] / MGAL
        got = sign * by_name[name][-1] / MGAL
        rel_mp = abs(got_mp - expected_mgal) / abs(expected_mgal)
        rel = abs(got - expected_mgal) / abs(expected_mgal)
        status = "ok" if rel_mp < 5e-7 else "MISMATCH"
        print(f"check {name}: 50-digit {got_mp:.10g}, choclo {got:.10g} mGal, "
              f"check value {expected_mgal} ({status}; rel 50-digit {rel_mp:.1e}, "
              f"choclo {rel:.1e})")
        return rel_mp < 5e-7

    ok = True
    ok &= check("p1_science", 2.366349, -1.0)           # g_down = -g_up
    ok &= check("p2_cube_top_centre", 0.04627769, -1.0)
    p3 = [1.501407, 0.5699290, 0.1050871, 1.886650e-2, 2.662663e-3,
          1.769045e-4, 2.223463e-5, 2.783156e-6, 1.781907e-7]
    for r, v in zip((100, 200, 500, 1000, 2000, 5000, 10000, 20000, 50000), p3):
        ok &= check(f"p3_terrain_r{r}", v, +1.0)        # block above: TC = +g_up

    with open(OUT, "w", newline="") as f:
        wr = csv.writer(f, lineterminator="\n")
        wr.writerow(HEADER)
        for r in rows:
            wr.writerow([r[0]] + [repr(v) for v in r[1:]])
    with open(OUT_MP, "w", newline="") as f:
        wr = csv.writer(f, lineterminator="\n")
        wr.writerow(["case", "gravity_u_mp", "rel_diff_choclo"])
        for r in mp_rows:
            wr.writerow([r[0], r[1], f"{r[2]:.3e}"])

    worst = [r for r in sorted(mp_rows, key=lambda r: -r[2]) if r[2] > 1e-10]
    print(f"choclo {choclo.__version__}, G = {GRAVITATIONAL_CONST!r}, numpy {np.__version__}, "
          f"mpmath {mpmath.__version__}")
    print(f"wrote {len(rows)} rows to {OUT} ({len(skipped)} skipped: {skipped})")
    print(f"choclo vs 50-digit relative differences above 1e-10 ({len(worst)} rows):")
    for r in worst:
        print(f"  {r[0]}: {r[2]:.3e}")
    if not ok:
        sys.exit("a P1/P2/P3 check value did not match")


if __name__ == "__main__":
    main()
