//! End-to-end checks of the reduction chain and of water bodies through the `ringsum`
//! binary: every step against an independent computation written out here from its
//! published source, the anomalies to 0.001 mGal, water against the marine slab and a
//! lake annulus (Hammer's ring formula), and the refused inputs.

#[macro_use]
mod common;

use common::{entries, fixture, ringsum, Csv, TestDir};
use ringsum::dem::Dem;
use std::collections::HashMap;
use std::f64::consts::PI;
use std::path::Path;

/// Newtonian constant, CODATA 2018 (Tiesinga et al. 2021), typed here again.
const G: f64 = 6.674_30e-11;

fn text(bytes: &[u8]) -> String {
    String::from_utf8(bytes.to_vec()).expect("UTF-8 output")
}

/// Runs a prepared command, which must succeed, and reads its table from stdout.
fn table_of(mut cmd: assert_cmd::Command) -> Csv {
    let out = cmd.assert().success().get_output().stdout.clone();
    Csv::parse(&text(&out))
}

// ---------------------------------------------------------------------------------------
// Independent formulas, from their sources
// ---------------------------------------------------------------------------------------

/// Published constants of the Somigliana formula, mGal and dimensionless.
struct Somigliana {
    gamma_e_mgal: f64,
    k: f64,
    e2: f64,
}

/// GRS80: Moritz (1980), Bull. Geod. 54:395-405 (gamma_e = 9.7803267715 m/s2,
/// k = 0.001931851353, e^2 = 0.00669438002290), reprinted in Moritz (2000), J. Geodesy
/// 74(1):128-133.
const GRS80: Somigliana = Somigliana {
    gamma_e_mgal: 978_032.677_15,
    k: 0.001_931_851_353,
    e2: 0.006_694_380_022_90,
};

/// WGS84: NIMA TR8350.2 (gamma_e = 9.7803253359 m/s2, k = 0.00193185265241,
/// e^2 = 0.00669437999013 as printed in boule 0.6.0's documentation; TR8350.2 and the
/// defining constants give 0.00669437999014, checked in src/reduce.rs).
const WGS84: Somigliana = Somigliana {
    gamma_e_mgal: 978_032.533_59,
    k: 0.001_931_852_652_41,
    e2: 0.006_694_379_990_13,
};

fn sin2(lat_deg: f64) -> f64 {
    lat_deg.to_radians().sin().powi(2)
}

fn normal_gravity(c: &Somigliana, lat_deg: f64) -> f64 {
    let s2 = sin2(lat_deg);
    c.gamma_e_mgal * (1.0 + c.k * s2) / (1.0 - c.e2 * s2).sqrt()
}

/// Second-order free-air correction, Hinze et al. (2005), Geophysics 70(4):J25.
fn free_air_second_order(lat_deg: f64, h: f64) -> f64 {
    (0.308_769_1 - 0.000_439_8 * sin2(lat_deg)) * h - 7.212_5e-8 * h * h
}

/// Atmospheric correction, Wenzel (1985) as adopted by Hinze et al. (2005).
fn atmospheric(h: f64) -> f64 {
    0.874 - 9.9e-5 * h + 3.56e-9 * h * h
}

/// Bouguer slab 2 pi G rho h, mGal.
fn slab(rho: f64, h: f64) -> f64 {
    2.0 * PI * G * rho * h * 1e5
}

/// Bullard B from our own least-squares cubic fit to LaFehr's (1991a) closed form at
/// 2670 kg/m3 with CODATA 2018 G (residual < 0.1 microGal on 0-5 km, checked again with
/// mpmath), scaled linearly in density.
fn bullard_b(rho: f64, h: f64) -> f64 {
    rho / 2670.0 * (1.465_189e-3 * h - 3.536_060e-7 * h * h + 1.284_45e-13 * h * h * h)
}

/// The Jacksboro stations (fixtures/jacksboro_stations.csv) with their WGS84 latitude
/// from pyproj 3.7.2 (fixtures/pyproj_transforms.csv, EPSG:32616 -> EPSG:4326).
fn jacksboro_latitudes() -> HashMap<String, f64> {
    let transforms = Csv::read(&fixture("pyproj_transforms.csv"));
    let utm = Csv::read(&fixture("jacksboro_stations.csv"));
    let mut out = HashMap::new();
    for i in 0..utm.rows.len() {
        let (x, y) = (utm.num(i, "x"), utm.num(i, "y"));
        let row = (0..transforms.rows.len())
            .find(|&j| {
                transforms.get(j, "src_crs") == "EPSG:32616"
                    && transforms.get(j, "dst_crs") == "EPSG:4326"
                    && transforms.num(j, "x_in") == x
                    && transforms.num(j, "y_in") == y
            })
            .expect("the station's row in pyproj_transforms.csv");
        out.insert(
            utm.get(i, "station").to_string(),
            transforms.num(row, "y_out"),
        );
    }
    out
}

/// TC of the Jacksboro stations from choclo 0.3.2 (fixtures/jacksboro_tc_choclo.csv),
/// keyed by (station, radius, convention), at 2670 kg/m3.
fn jacksboro_tc() -> HashMap<(String, u32, String), f64> {
    let t = Csv::read(&fixture("jacksboro_tc_choclo.csv"));
    (0..t.rows.len())
        .map(|i| {
            (
                (
                    t.get(i, "station").to_string(),
                    t.num(i, "outer_radius_m") as u32,
                    t.get(i, "convention").to_string(),
                ),
                t.num(i, "tc_mgal"),
            )
        })
        .collect()
}

#[test]
fn latitudes_through_proj_match_pyproj() {
    // Every row of fixtures/pyproj_transforms.csv that goes to EPSG:4326 (pyproj 3.7.2,
    // PROJ 9.5.1, always_xy): UTM 16N and 33N, Web Mercator and a PROJ-string transverse
    // Mercator on GRS80.
    let t = Csv::read(&fixture("pyproj_transforms.csv"));
    let mut worst: f64 = 0.0;
    let mut rows = 0;
    for i in 0..t.rows.len() {
        if t.get(i, "dst_crs") != "EPSG:4326" {
            continue;
        }
        let from = t.get(i, "src_crs");
        let got =
            ringsum::dem::crs::geodetic_lon_lat(from, &[(t.num(i, "x_in"), t.num(i, "y_in"))])
                .unwrap_or_else(|e| panic!("{from}: {e:?}"));
        let (lon, lat) = got[0];
        assert_close!(lat, t.num(i, "y_out"), 1e-9, "{from} row {i} latitude");
        assert_close!(lon, t.num(i, "x_out"), 1e-9, "{from} row {i} longitude");
        worst = worst.max((lat - t.num(i, "y_out")).abs());
        rows += 1;
    }
    assert_eq!(rows, 25);
    eprintln!("latitude vs pyproj: {rows} points, max |diff| {worst:.2e} deg");
    assert!(matches!(
        ringsum::dem::crs::geodetic_lon_lat("", &[(0.0, 0.0)]),
        Err(ringsum::dem::crs::CrsError::Unknown { .. })
    ));
    // A point the inverse transverse Mercator cannot take back.
    assert!(matches!(
        ringsum::dem::crs::geodetic_lon_lat("EPSG:32633", &[(5e5, 5e6), (1e9, 1e12)]),
        Err(ringsum::dem::crs::CrsError::Point { x, .. }) if x == 1e9
    ));
}

// ---------------------------------------------------------------------------------------
// The full chain on the Jacksboro stations
// ---------------------------------------------------------------------------------------

/// Invented observed gravity (mGal, absolute) for the Jacksboro stations, J03 left empty;
/// invented geoid undulations (m) and densities (kg/m3, J02 and J07 empty).
const SURVEY: [(&str, &str, f64, &str); 8] = [
    ("J01", "979721.038", -31.42, "2670"),
    ("J02", "979728.099", -31.57, ""),
    ("J03", "", -31.18, "2600"),
    ("J04", "979664.444", -31.93, "2750.5"),
    ("J05", "979616.693", -31.86, "2810"),
    ("J06", "979714.313", -31.09, "2550"),
    ("J07", "979770.265", -31.27, ""),
    ("J08", "979738.658", -30.84, "2700"),
];

/// Jacksboro stations with the survey columns, in a file of the test folder.
fn survey_file(dir: &TestDir) -> std::path::PathBuf {
    let utm = Csv::read(&fixture("jacksboro_stations.csv"));
    let mut out = String::from("station,x,y,elev,Gobs,N,rho\n");
    for (i, (id, g, n, rho)) in SURVEY.iter().enumerate() {
        assert_eq!(utm.get(i, "station"), *id);
        out.push_str(&format!(
            "{id},{},{},{},{g},{n},{rho}\n",
            utm.get(i, "x"),
            utm.get(i, "y"),
            utm.get(i, "elev")
        ));
    }
    dir.write_text("survey.csv", &out)
}

fn jacksboro_run(
    dir: &TestDir,
    stations: &Path,
    radius: &str,
    convention: &str,
) -> assert_cmd::Command {
    let mut cmd = ringsum(dir);
    cmd.args(["correct", "--method", "exact", "--inner-model", "prisms"])
        .arg("--dem")
        .arg(fixture("jacksboro_utm.tif"))
        .arg("--stations")
        .arg(stations)
        .args(["--outer-radius", radius, "--convention", convention])
        .args(["--quiet", "--out", "-"]);
    cmd
}

/// The models of one run, for the independent computation.
struct Models<'a> {
    convention: &'a str,
    ellipsoid: &'a Somigliana,
    second_order: bool,
    undulation: bool,
    density_column: bool,
}

/// Checks every reduction column of `table` against the independent computation; returns
/// the largest |CBA - independent CBA|.
fn check_chain(table: &Csv, m: &Models) -> f64 {
    let lat_ref = jacksboro_latitudes();
    let tc_ref = jacksboro_tc();
    let mut worst_cba: f64 = 0.0;
    let units = |v: f64| (v * 1e4).round() as i64;
    for (i, (id, g, n, rho_text)) in SURVEY.iter().enumerate() {
        let id = id.to_string();
        assert_eq!(table.get(i, "station"), id);
        let lat = lat_ref[&id];
        // latitude_deg has 8 decimals: PROJ vs pyproj plus half a unit of the last one.
        assert_close!(
            table.num(i, "latitude_deg"),
            lat,
            5e-9 + 1e-9,
            "{id} latitude"
        );
        let elev = table.num(i, "elev_m");
        let h = if m.undulation { elev + n } else { elev };
        if m.undulation {
            assert_close!(table.num(i, "ellipsoidal_height_m"), h, 5e-4, "{id} h");
        }
        let rho = if m.density_column && !rho_text.is_empty() {
            rho_text.parse().unwrap()
        } else {
            2670.0
        };
        if m.density_column {
            assert_eq!(table.num(i, "density_kg_m3"), rho, "{id}");
        }
        // TC: choclo's brute-force prism sum at 2670, scaled to the station's density (the
        // TC of a constant density is linear in it).
        let tc = tc_ref[&(id.clone(), 5000, m.convention.to_string())] * rho / 2670.0;
        assert_close!(table.num(i, "tc_mgal"), tc, 5e-5 + 1e-7 * tc, "{id} tc");
        let normal = normal_gravity(m.ellipsoid, lat);
        let fac = if m.second_order {
            free_air_second_order(lat, h)
        } else {
            0.3086 * h
        };
        let atm = atmospheric(h);
        let bc = if m.convention == "spherical" {
            slab(rho, h) + bullard_b(rho, h)
        } else {
            slab(rho, h)
        };
        // Each printed step is the independent value rounded to 4 decimals; the published
        // constants carry 11-12 digits, so allow the rounding plus 2e-5 mGal.
        for (col, expected) in [
            ("normal_gravity_mgal", normal),
            ("free_air_corr_mgal", fac),
            ("atmos_corr_mgal", atm),
            ("bouguer_corr_mgal", bc),
        ] {
            assert_close!(table.num(i, col), expected, 5e-5 + 2e-5, "{id} {col}");
        }
        if g.is_empty() {
            for col in [
                "observed_gravity_mgal",
                "free_air_anomaly_mgal",
                "simple_bouguer_anomaly_mgal",
                "complete_bouguer_anomaly_mgal",
            ] {
                assert_eq!(table.get(i, col), "", "{id} {col} must be empty");
            }
            continue;
        }
        let g_obs: f64 = g.parse().unwrap();
        assert_eq!(table.num(i, "observed_gravity_mgal"), g_obs);
        let faa = g_obs - normal + fac + atm;
        let sba = faa - bc;
        let cba = sba + tc;
        assert_close!(table.num(i, "free_air_anomaly_mgal"), faa, 1e-3, "{id} FAA");
        assert_close!(
            table.num(i, "simple_bouguer_anomaly_mgal"),
            sba,
            1e-3,
            "{id} SBA"
        );
        assert_close!(
            table.num(i, "complete_bouguer_anomaly_mgal"),
            cba,
            1e-3,
            "{id} CBA"
        );
        worst_cba = worst_cba.max((table.num(i, "complete_bouguer_anomaly_mgal") - cba).abs());
        // The printed table adds up exactly.
        let col = |c: &str| units(table.num(i, c));
        assert_eq!(
            col("free_air_anomaly_mgal"),
            col("observed_gravity_mgal") - col("normal_gravity_mgal")
                + col("free_air_corr_mgal")
                + col("atmos_corr_mgal"),
            "{id}"
        );
        assert_eq!(
            col("simple_bouguer_anomaly_mgal"),
            col("free_air_anomaly_mgal") - col("bouguer_corr_mgal"),
            "{id}"
        );
        assert_eq!(
            col("complete_bouguer_anomaly_mgal"),
            col("simple_bouguer_anomaly_mgal") + col("tc_mgal"),
            "{id}"
        );
    }
    worst_cba
}

/// Columns of the `correct` table without gravity (tests/cli.rs).
const TC_COLUMNS: [&str; 14] = [
    "station",
    "x",
    "y",
    "lon",
    "lat",
    "elev_m",
    "dem_elev_m",
    "elev_minus_dem_m",
    "tc_mgal",
    "tc_inner_mgal",
    "tc_near_mgal",
    "tc_mid_mgal",
    "tc_far_mgal",
    "coverage",
];

/// The reduction columns, in order.
const CHAIN_COLUMNS: [&str; 8] = [
    "observed_gravity_mgal",
    "normal_gravity_mgal",
    "free_air_corr_mgal",
    "atmos_corr_mgal",
    "bouguer_corr_mgal",
    "free_air_anomaly_mgal",
    "simple_bouguer_anomaly_mgal",
    "complete_bouguer_anomaly_mgal",
];

#[test]
fn full_chain_spherical_grs80_second_order() {
    let dir = TestDir::new();
    let survey = survey_file(&dir);
    let table = table_of(jacksboro_run(&dir, &survey, "5000m", "spherical"));
    let mut expected: Vec<&str> = TC_COLUMNS.to_vec();
    expected.push("latitude_deg");
    expected.extend(CHAIN_COLUMNS);
    // The file's columns this run does not read come last, as they are; the gravity
    // column it reads (Gobs) is not repeated.
    expected.extend(["N", "rho"]);
    assert_eq!(table.headers, expected);
    for (i, (id, _, n, rho)) in SURVEY.iter().enumerate() {
        assert_eq!(table.get(i, "N"), n.to_string(), "{id}");
        assert_eq!(table.get(i, "rho"), rho.to_string(), "{id}");
    }
    let worst = check_chain(
        &table,
        &Models {
            convention: "spherical",
            ellipsoid: &GRS80,
            second_order: true,
            undulation: false,
            density_column: false,
        },
    );
    eprintln!("full chain, spherical, GRS80, 2nd-order: max |CBA - independent| {worst:.2e} mGal");
    // The TC columns are those of the run without gravity, to the byte.
    let plain = table_of(jacksboro_run(
        &dir,
        &fixture("jacksboro_stations.csv"),
        "5000m",
        "spherical",
    ));
    assert_eq!(plain.headers, TC_COLUMNS);
    for i in 0..8 {
        for col in TC_COLUMNS {
            assert_eq!(table.get(i, col), plain.get(i, col), "{col}");
        }
    }
}

#[test]
fn full_chain_planar_wgs84_first_order_undulation_and_density_column() {
    let dir = TestDir::new();
    let survey = survey_file(&dir);
    let mut cmd = jacksboro_run(&dir, &survey, "5000m", "planar");
    cmd.args(["--ellipsoid", "wgs84", "--free-air", "first-order"])
        .args([
            "--undulation-col",
            "N",
            "--density-col",
            "rho",
            "--gravity-col",
            "gobs",
        ]);
    let table = table_of(cmd);
    let mut expected: Vec<&str> = TC_COLUMNS.to_vec();
    expected.extend(["density_kg_m3", "latitude_deg", "ellipsoidal_height_m"]);
    expected.extend(CHAIN_COLUMNS);
    // Every column of the file is read (gravity, undulation, density): none is carried.
    assert_eq!(table.headers, expected);
    let worst = check_chain(
        &table,
        &Models {
            convention: "planar",
            ellipsoid: &WGS84,
            second_order: false,
            undulation: true,
            density_column: true,
        },
    );
    eprintln!("full chain, planar, WGS84, 1st-order, N and rho columns: max |CBA - independent| {worst:.2e} mGal");
}

#[test]
fn density_column_scales_the_tc_exactly() {
    // With a density column and no gravity, only density_kg_m3 is added, and each TC is
    // the 2670 TC times rho/2670 (the kernel sum is computed once at unit density).
    let dir = TestDir::new();
    let utm = Csv::read(&fixture("jacksboro_stations.csv"));
    let mut file = String::from("station,x,y,elev,rho\n");
    let densities = [
        2670.0, 1335.0, 5340.0, 2000.0, 2400.0, 2900.0, 3300.0, 2670.0,
    ];
    for (i, rho) in densities.iter().enumerate() {
        file.push_str(&format!(
            "{},{},{},{},{rho}\n",
            utm.get(i, "station"),
            utm.get(i, "x"),
            utm.get(i, "y"),
            utm.get(i, "elev")
        ));
    }
    let stations = dir.write_text("rho.csv", &file);
    let mut cmd = jacksboro_run(&dir, &stations, "2000m", "spherical");
    cmd.args(["--density-col", "rho"]);
    let table = table_of(cmd);
    let mut expected: Vec<&str> = TC_COLUMNS.to_vec();
    expected.push("density_kg_m3");
    assert_eq!(table.headers, expected);
    let tc_ref = jacksboro_tc();
    for (i, rho) in densities.iter().enumerate() {
        let id = table.get(i, "station").to_string();
        let tc = tc_ref[&(id.clone(), 2000, "spherical".to_string())] * rho / 2670.0;
        assert_close!(table.num(i, "tc_mgal"), tc, 5e-5 + 1e-7 * tc, "{id}");
    }
}

// ---------------------------------------------------------------------------------------
// Water
// ---------------------------------------------------------------------------------------

/// Centre of the water test DEMs (UTM 33N, m): the station stands here, on a grid node.
const XC: f64 = 500_000.0;
const YC: f64 = 5_000_000.0;

/// A square DEM of `half` m half-width around (XC, YC) with cells of `cell` m.
fn centred_dem(half: f64, cell: f64, height: impl Fn(f64) -> f64) -> Dem {
    let n = (2.0 * half / cell).round() as usize;
    Dem::from_fn("water test", n, n, XC - half, YC + half, cell, |x, y| {
        height(((x - XC).powi(2) + (y - YC).powi(2)).sqrt())
    })
}

fn one_station(dir: &TestDir, elev: f64) -> std::path::PathBuf {
    dir.write_stations("station.csv", &[("W1", XC, YC, elev)])
}

/// `correct` on `dem` with one station, planar or spherical, exact prisms.
fn water_run(
    dir: &TestDir,
    dem: &Path,
    stations: &Path,
    radius: &str,
    convention: &str,
    extra: &[&str],
) -> Csv {
    let mut cmd = ringsum(dir);
    cmd.args(["correct", "--method", "exact", "--inner-model", "prisms"])
        .arg("--dem")
        .arg(dem)
        .arg("--stations")
        .arg(stations)
        .args(["--outer-radius", radius, "--convention", convention])
        .args(["--quiet", "--out", "-"])
        .args(extra);
    table_of(cmd)
}

#[test]
fn sea_over_a_flat_floor_gives_the_marine_slab() {
    // A station at sea level over a flat ocean floor at -D (D = 1000 m), 500 m cells.
    // Planar: the missing mass is a cylinder of radius R and height D below the station,
    // 2 pi G rho [D + R - sqrt(R^2 + D^2)], which tends to the slab 2 pi G rho D
    // (with CODATA 2018 G, contrast 1643 = 2670 - 1027 gives 68.9006 mGal for D = 1000 m;
    // 2670 gives 111.9688).
    let d = 1000.0;
    let radius = 100_000.0;
    let dir = TestDir::new();
    let dem = dir.write_dem("ocean.tif", &centred_dem(radius + 1000.0, 500.0, |_| -d));
    let stations = one_station(&dir, 0.0);
    let cylinder =
        |rho: f64| 2.0 * PI * G * rho * (d + radius - (radius * radius + d * d).sqrt()) * 1e5;
    let dry = water_run(&dir, &dem, &stations, "100km", "planar", &[]);
    let wet = water_run(
        &dir,
        &dem,
        &stations,
        "100km",
        "planar",
        &["--water-density", "1027"],
    );
    let (tc_dry, tc_wet) = (dry.num(0, "tc_mgal"), wet.num(0, "tc_mgal"));
    let water = wet.num(0, "tc_water_mgal");
    eprintln!(
        "ocean D = 1000 m, R = 100 km, planar: dry {tc_dry} (cylinder {:.4}, slab 111.9688), water {tc_wet} (cylinder {:.4}, slab 68.9006), tc_water {water}",
        cylinder(2670.0),
        cylinder(1643.0)
    );
    // The rasterised disc's edge: measured 2e-5 relative.
    assert_close!(tc_dry, cylinder(2670.0), 1e-4 * cylinder(2670.0), "dry");
    assert_close!(tc_wet, cylinder(1643.0), 1e-4 * cylinder(1643.0), "wet");
    // The water's part is exactly -rho_w / rho_r of the dry TC here (the water surface is
    // the station's level, so K(W) = 0).
    assert_close!(water, -tc_dry * 1027.0 / 2670.0, 2e-4, "tc_water");
    // Three printed numbers: up to 1.5e-4 of rounding.
    assert_close!(tc_wet - water, tc_dry, 1.5e-4, "rock part");
    // Tending to the slab: the cylinder falls short of it by D / 2R to first order.
    assert_close!(
        tc_wet / (1.0 - d / (2.0 * radius)),
        68.9006,
        0.01,
        "marine slab"
    );
    assert_close!(
        tc_dry / (1.0 - d / (2.0 * radius)),
        111.9688,
        0.02,
        "rock slab"
    );
}

/// Downward attraction at the top of a spherical layer of density `rho` between radii
/// R0 - D and R0 with the station at R0, limited to the cap of angle S / R0, mGal, by
/// Simpson integration of the radial integral for the cap of LaFehr (1991a), derived again
/// at `cap_by_simpson` in src/reduce.rs:
/// g = (pi G rho / R^2) Int r [L + 2r - (R^2 - r^2)/L] dr, L = sqrt(R^2 + r^2 - 2 R r cos a).
fn spherical_layer(rho: f64, depth: f64, arc: f64) -> f64 {
    let big_r = 6_371_000.0_f64;
    let cos_a = (arc / big_r).cos();
    let f = |r: f64| {
        let l = (big_r * big_r + r * r - 2.0 * big_r * r * cos_a).sqrt();
        r * (l + 2.0 * r - (big_r * big_r - r * r) / l)
    };
    let (lo, hi, n) = (big_r - depth, big_r, 2000);
    let step = (hi - lo) / n as f64;
    let mut sum = f(lo) + f(hi);
    for i in 1..n {
        sum += if i % 2 == 1 { 4.0 } else { 2.0 } * f(lo + step * i as f64);
    }
    PI * G * rho / (big_r * big_r) * sum * step / 3.0 * 1e5
}

#[test]
fn sea_in_the_spherical_convention_is_lowered_by_curvature() {
    // The same ocean in the spherical convention to 166.735 km (1 km cells): the floor and
    // the water layer are both lowered by the curvature drop, so the TC follows the
    // spherical layer, well above the flat cylinder.
    let d = 1000.0;
    let radius = 166_735.0;
    let dir = TestDir::new();
    let dem = dir.write_dem("ocean.tif", &centred_dem(168_000.0, 1000.0, |_| -d));
    let stations = one_station(&dir, 0.0);
    let wet = water_run(
        &dir,
        &dem,
        &stations,
        "166.735km",
        "spherical",
        &["--water-density", "1027"],
    );
    let dry = water_run(&dir, &dem, &stations, "166.735km", "spherical", &[]);
    let layer = |rho: f64| spherical_layer(rho, d, radius);
    let flat = 2.0 * PI * G * 1643.0 * (d + radius - (radius * radius + d * d).sqrt()) * 1e5;
    eprintln!(
        "ocean D = 1000 m to 166.735 km, spherical: water {} (spherical layer {:.4}, flat cylinder {flat:.4}), dry {} (layer {:.4})",
        wet.num(0, "tc_mgal"),
        layer(1643.0),
        dry.num(0, "tc_mgal"),
        layer(2670.0)
    );
    // Measured: 0.0018 (water) and 0.0028 mGal (dry) below the layer, the error of
    // lowering flat prisms by s^2/2R in place of a true sphere.
    assert_close!(
        wet.num(0, "tc_mgal"),
        layer(1643.0),
        0.004,
        "water, spherical layer"
    );
    assert_close!(
        dry.num(0, "tc_mgal"),
        layer(2670.0),
        0.004,
        "dry, spherical layer"
    );
    assert!(wet.num(0, "tc_mgal") > flat + 0.5);
}

/// A lake: land at 500 m, an annulus lake from 100 to 1000 m around the
/// station, 20 m deep, the station at lake level. Cells whose centre lies in the annulus
/// are lake.
fn lake_dem(cell: f64) -> Dem {
    centred_dem(1200.0, cell, |r| {
        if (100.0..1000.0).contains(&r) {
            480.0
        } else {
            500.0
        }
    })
}

/// The lake's surface as a raster: 500 m over the lake, nodata elsewhere.
fn lake_surface(cell: f64) -> Dem {
    centred_dem(1200.0, cell, |r| {
        if (100.0..1000.0).contains(&r) {
            500.0
        } else {
            f64::NAN
        }
    })
}

#[test]
fn lake_annulus_converges_to_the_water_contrast() {
    // Derived again here: Hammer's (1939) full-ring formula 2 pi G rho [(r2 - r1) +
    // sqrt(r1^2 + h^2) - sqrt(r2^2 + h^2)] with r1 = 100 m, r2 = 1000 m, h = 20 m and
    // CODATA 2018 G gives TC = 0.124687 mGal with fresh water (contrast 1670), 0.199350 if
    // the lake were 20 m of air (rho 2670).
    let with_water = 0.124_687;
    let as_air = 0.199_350;
    let dir = TestDir::new();
    let stations = one_station(&dir, 500.0);
    let mut errors = Vec::new();
    for cell in [40.0, 20.0, 10.0, 5.0, 2.5] {
        let dem = dir.write_dem(&format!("lake_{cell}.tif"), &lake_dem(cell));
        let surface = dir.write_dem(&format!("surface_{cell}.tif"), &lake_surface(cell));
        let surface = surface.to_str().unwrap().to_string();
        let air = water_run(&dir, &dem, &stations, "1100m", "planar", &[]);
        let raster = water_run(
            &dir,
            &dem,
            &stations,
            "1100m",
            "planar",
            &["--water-density", "1000", "--water-surface", &surface],
        );
        let level = water_run(
            &dir,
            &dem,
            &stations,
            "1100m",
            "planar",
            &["--water-density", "1000", "--water-surface", "500"],
        );
        let zero = water_run(
            &dir,
            &dem,
            &stations,
            "1100m",
            "planar",
            &["--water-density", "0", "--water-surface", "500"],
        );
        let (tc_air, tc_water) = (air.num(0, "tc_mgal"), raster.num(0, "tc_mgal"));
        eprintln!(
            "lake, {cell} m cells: with water {tc_water} (error {:+.6}), as air {tc_air} (error {:+.6})",
            tc_water - with_water,
            tc_air - as_air
        );
        // A constant level and a raster of the same surface give the same table; water
        // density 0 gives the dry result.
        assert_eq!(raster.rows, level.rows, "{cell} m");
        assert_eq!(zero.get(0, "tc_mgal"), air.get(0, "tc_mgal"), "{cell} m");
        assert_eq!(zero.get(0, "tc_water_mgal"), "0.0000");
        // The water replaces 1000 of the 2670 kg/m3 of missing rock.
        assert_close!(tc_water, tc_air * 1670.0 / 2670.0, 1e-4, "{cell} m ratio");
        // The default zoned engine (surface inner model for the rock) agrees with the
        // exact prism sum once the inner zone's cells no longer reach the lake (with
        // coarse cells its bilinear surface slopes into the lake, which the prisms do not).
        if cell > 10.0 {
            errors.push(((tc_water - with_water).abs(), (tc_air - as_air).abs()));
            continue;
        }
        let mut zoned = ringsum(&dir);
        zoned
            .arg("correct")
            .arg("--dem")
            .arg(&dem)
            .arg("--stations")
            .arg(&stations)
            .args(["--outer-radius", "1100m", "--convention", "planar"])
            .args(["--water-density", "1000", "--water-surface", &surface])
            .args(["--quiet", "--out", "-"]);
        let zoned = table_of(zoned);
        eprintln!(
            "lake, {cell} m cells, zoned: {} (exact {tc_water})",
            zoned.num(0, "tc_mgal")
        );
        assert_close!(zoned.num(0, "tc_mgal"), tc_water, 2e-4, "{cell} m zoned");
        errors.push(((tc_water - with_water).abs(), (tc_air - as_air).abs()));
    }
    // Converging (the cells whose centres fall in the annulus approach it; the printed
    // TC has 4 decimals). Measured errors with water: +0.0170 at 40 m, -0.0007 at 20 m,
    // -0.0003 at 10 m, -0.0004 at 5 m, +0.00001 at 2.5 m.
    let (finest_water, finest_air) = *errors.last().unwrap();
    assert!(finest_water < 1e-4 && finest_air < 1.5e-4, "{errors:?}");
    for &(w, a) in &errors[1..] {
        assert!(w < 0.01 * with_water && a < 0.01 * as_air, "{errors:?}");
    }
    assert!(errors[0].0 > 0.1 * with_water, "{errors:?}");
}

#[test]
fn water_density_zero_gives_the_dry_result_on_rough_ground() {
    // Rough land with a basin whose floor dips below a lake level of 300 m; stations on
    // land 2 m above the ground; the zoned engine with the surface inner model, spherical.
    let dir = TestDir::new();
    let ground = |x: f64, y: f64| {
        let (u, v) = ((x - XC) / 400.0, (y - YC + 300.0) / 300.0);
        let basin = 320.0 - 60.0 * (-(u * u + v * v)).exp();
        basin + 0.02 * (x - XC) + 15.0 * ((x - XC) / 170.0).sin() * ((y - YC) / 230.0).cos()
    };
    let dem = Dem::from_fn("basin", 120, 120, XC - 1500.0, YC + 1500.0, 25.0, ground);
    let dem_path = dir.write_dem("basin.tif", &dem);
    let sites = [
        ("L1", 500.0, 0.0),
        ("L2", -650.0, -100.0),
        ("L3", 20.0, 300.0),
    ];
    let list: Vec<(&str, f64, f64, f64)> = sites
        .iter()
        .map(|&(id, e, n)| {
            let (x, y) = (XC + e, YC + n);
            let h = dem.bilinear(x, y).unwrap() + 2.0;
            assert!(h > 302.0, "{id} must stand on land");
            (id, x, y, h)
        })
        .collect();
    let stations = dir.write_stations("stations.csv", &list);
    let run = |extra: &[&str]| {
        let mut cmd = ringsum(&dir);
        cmd.arg("correct")
            .arg("--dem")
            .arg(&dem_path)
            .arg("--stations")
            .arg(&stations)
            .args(["--outer-radius", "700m", "--quiet", "--out", "-"])
            .args(extra);
        table_of(cmd)
    };
    let dry = run(&[]);
    let zero = run(&["--water-density", "0", "--water-surface", "300"]);
    let fresh = run(&["--water-density", "1000", "--water-surface", "300"]);
    assert_eq!(zero.headers.len(), dry.headers.len() + 1);
    assert_eq!(zero.headers[zero.col("coverage") + 1], "tc_water_mgal");
    for i in 0..3 {
        for col in TC_COLUMNS {
            assert_eq!(zero.get(i, col), dry.get(i, col), "{col}");
        }
        assert_eq!(zero.get(i, "tc_water_mgal"), "0.0000");
        // Water fills valleys below the stations: less missing mass, a smaller TC, and the
        // parts still add up to tc_mgal.
        let w = fresh.num(i, "tc_water_mgal");
        assert!(w < 0.0, "{w}");
        let parts: f64 = [
            "tc_inner_mgal",
            "tc_near_mgal",
            "tc_mid_mgal",
            "tc_far_mgal",
            "tc_water_mgal",
        ]
        .iter()
        .map(|c| fresh.num(i, c))
        .sum();
        assert_close!(parts, fresh.num(i, "tc_mgal"), 1e-9);
        assert_close!(fresh.num(i, "tc_mgal") - w, dry.num(i, "tc_mgal"), 2e-4);
    }
}

// ---------------------------------------------------------------------------------------
// Refused inputs
// ---------------------------------------------------------------------------------------

/// Runs `cmd` (output into `dir/out/tc.csv`) and checks it is refused: exit status 1, one
/// line on stderr holding every key word, nothing written. Returns the message.
fn refused(dir: &TestDir, mut cmd: assert_cmd::Command, key_words: &[&str]) -> String {
    let out_dir = dir.make_dir("out");
    cmd.arg("--out").arg(out_dir.join("tc.csv"));
    let before = entries(dir.path());
    let output = cmd.assert().code(1).get_output().clone();
    let stderr = text(&output.stderr);
    assert_eq!(stderr.lines().count(), 1, "{stderr:?}");
    assert!(stderr.starts_with("ringsum: "), "{stderr:?}");
    for word in key_words {
        assert!(stderr.contains(word), "'{word}' not in {stderr:?}");
    }
    assert!(entries(&out_dir).is_empty(), "{:?}", entries(&out_dir));
    assert_eq!(entries(dir.path()), before);
    stderr.trim_end().to_string()
}

/// A flat DEM and a station file with the given extra header and rows.
fn bad_survey(dir: &TestDir, header: &str, rows: &[&str]) -> assert_cmd::Command {
    let dem = dir.write_dem("flat.tif", &centred_dem(600.0, 20.0, |_| 100.0));
    let mut text = format!("station,x,y,elev,{header}\n");
    for (i, r) in rows.iter().enumerate() {
        text.push_str(&format!("S{i},{},{},100,{r}\n", XC + 10.0 * i as f64, YC));
    }
    let stations = dir.write_text("survey.csv", &text);
    let mut cmd = ringsum(dir);
    cmd.arg("correct")
        .arg("--dem")
        .arg(dem)
        .arg("--stations")
        .arg(stations)
        .args(["--outer-radius", "400m", "--quiet"]);
    cmd
}

#[test]
fn gravity_that_is_not_a_number_names_the_line() {
    let dir = TestDir::new();
    let cmd = bad_survey(&dir, "gravity", &["980100.5", "9801x0.2"]);
    refused(
        &dir,
        cmd,
        &[
            "survey.csv line 3",
            "station S1",
            "'9801x0.2'",
            "not a number",
        ],
    );
}

#[test]
fn implausible_gravity_is_refused_with_the_likely_cause() {
    for (value, cause) in [
        ("1523.417", "relative meter readings"),
        ("9.80123", "m/s2"),
        ("980.123", "Gal"),
    ] {
        let dir = TestDir::new();
        let cmd = bad_survey(&dir, "g_obs", &["980100.5", "980100.6", value]);
        refused(
            &dir,
            cmd,
            &[
                "survey.csv line 4",
                "station S2",
                "far from any value on the Earth",
                cause,
            ],
        );
    }
}

#[test]
fn bad_densities_in_the_column_are_refused() {
    for (value, words) in [
        ("-2670", &["positive"][..]),
        ("2.67", &["g/cm3"][..]),
        ("dense", &["'dense'", "not a number"][..]),
    ] {
        let dir = TestDir::new();
        let mut cmd = bad_survey(&dir, "rho", &["2670", value]);
        cmd.args(["--density-col", "rho"]);
        let mut keys = vec!["survey.csv line 3", "station S1"];
        keys.extend(words);
        refused(&dir, cmd, &keys);
    }
    let dir = TestDir::new();
    let mut cmd = bad_survey(&dir, "rho", &["2670"]);
    cmd.args(["--density-col", "density"]);
    refused(
        &dir,
        cmd,
        &["'density'", "--density-col", "not in the header"],
    );
}

#[test]
fn undulation_problems_are_refused() {
    let dir = TestDir::new();
    let mut cmd = bad_survey(&dir, "N", &["-30"]);
    cmd.args(["--undulation-col", "N"]);
    refused(
        &dir,
        cmd,
        &[
            "--undulation-col",
            "no observed gravity column",
            "--gravity-col",
        ],
    );
    let dir = TestDir::new();
    let mut cmd = bad_survey(&dir, "gravity,N", &["980100.5,-30", "980100.5,-3000"]);
    cmd.args(["--undulation-col", "N"]);
    refused(
        &dir,
        cmd,
        &["line 3", "station S1", "geoid undulation -3000"],
    );
    let dir = TestDir::new();
    let mut cmd = bad_survey(&dir, "gravity,N", &["980100.5,"]);
    cmd.args(["--undulation-col", "N"]);
    refused(&dir, cmd, &["line 2", "station S0", "'N' is empty"]);
}

#[test]
fn bad_water_options_are_refused() {
    for (density, words) in [
        ("-1027", &["--water-density -1027", "zero or positive"][..]),
        ("1.027", &["g/cm3"][..]),
    ] {
        let dir = TestDir::new();
        let mut cmd = bad_survey(&dir, "gravity", &["980100.5"]);
        cmd.args(["--water-density", density]);
        refused(&dir, cmd, words);
    }
    let dir = TestDir::new();
    let mut cmd = bad_survey(&dir, "gravity", &["980100.5"]);
    cmd.args(["--water-density", "1000", "--water-surface", "lake.tif"]);
    refused(&dir, cmd, &["--water-surface lake.tif", "neither a level"]);
    // --water-surface alone is a command-line error (exit status 2).
    let dir = TestDir::new();
    let mut cmd = bad_survey(&dir, "gravity", &["980100.5"]);
    cmd.args(["--water-surface", "0", "--out", "-"]);
    cmd.assert().code(2);
}

#[test]
fn stations_under_or_over_water_are_refused() {
    // A station 5 m below a lake surface of 105 m over a flat bottom at 100 m.
    let dir = TestDir::new();
    let mut cmd = bad_survey(&dir, "gravity", &["980100.5"]);
    cmd.args(["--water-density", "1000", "--water-surface", "105"]);
    refused(
        &dir,
        cmd,
        &[
            "survey.csv line 2",
            "station S0",
            "below the water surface",
            "not supported",
        ],
    );
    // A station at the surface of that lake, with the surface inner model.
    let dir = TestDir::new();
    let dem = dir.write_dem("flat.tif", &centred_dem(600.0, 20.0, |_| 100.0));
    let stations = dir.write_stations("boat.csv", &[("B1", XC, YC, 105.0)]);
    let mut cmd = ringsum(&dir);
    cmd.arg("correct")
        .arg("--dem")
        .arg(&dem)
        .arg("--stations")
        .arg(&stations)
        .args(["--outer-radius", "400m", "--quiet"])
        .args(["--water-density", "1000", "--water-surface", "105"]);
    refused(
        &dir,
        cmd,
        &["station B1", "over water", "--inner-model prisms"],
    );
}

#[test]
fn a_water_surface_raster_in_another_crs_gives_the_same_water() {
    // The same level surface as a raster in UTM 33N (the DEM's CRS) and in lon/lat: each
    // DEM cell centre is moved into the raster's CRS, so both give the level's result.
    let dir = TestDir::new();
    let dem = centred_dem(600.0, 20.0, |r| if r < 200.0 { 100.0 } else { 106.0 });
    let dem_path = dir.write_dem("lake.tif", &dem);
    let stations = one_station(&dir, 106.0);
    let level = |surface: &str| {
        water_run(
            &dir,
            &dem_path,
            &stations,
            "500m",
            "planar",
            &["--water-density", "1000", "--water-surface", surface],
        )
    };
    let flat = level("105");
    let utm = dir.write_dem("surface_utm.tif", &centred_dem(700.0, 20.0, |_| 105.0));
    let from_utm = level(utm.to_str().unwrap());
    // The same surface in lon/lat, 0.0005 degree cells around the DEM (which spans
    // 14.991-15.009 E, 45.147-45.160 N).
    let geo = Dem::from_fn("surface", 60, 60, 14.985, 45.168, 0.0005, |_, _| 105.0);
    let lonlat = dir.write_dem_crs("surface_lonlat.tif", &geo, "EPSG:4326");
    let from_lonlat = level(lonlat.to_str().unwrap());
    let w = flat.num(0, "tc_water_mgal");
    assert!(w < -0.01, "{w}");
    assert_eq!(
        from_utm.get(0, "tc_water_mgal"),
        flat.get(0, "tc_water_mgal")
    );
    assert_eq!(
        from_lonlat.get(0, "tc_water_mgal"),
        flat.get(0, "tc_water_mgal")
    );
}
