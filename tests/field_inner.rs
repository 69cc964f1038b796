//! Field-estimated inner-zone corrections replace the DEM's part within their radius.

mod common;

use common::{correct_table, ringsum, Csv, TestDir};
use ringsum::synthetic::Terrain;

fn run(dir: &TestDir, dem: &std::path::Path, stations: &std::path::Path, extra: &[&str]) -> Csv {
    correct_table(dir, &[dem], stations, "3km", extra)
}

#[test]
fn field_values_replace_the_dem_inner_zone_exactly() {
    let dir = TestDir::new();
    let mut dem = Terrain::LonePeak.dem(240, 30.0);
    dem.x_left += 500_000.0;
    dem.y_top += 5_000_000.0;
    let dem_path = dir.write_dem("peak.tif", &dem);
    let (x1, y1) = (500_210.0, 5_000_013.0);
    let (x2, y2) = (499_650.0, 4_999_870.0);
    let (h1, h2) = (dem.bilinear(x1, y1).unwrap(), dem.bilinear(x2, y2).unwrap());
    let text = |v1: &str| {
        format!("station,x,y,elev,field_tc\nF1,{x1},{y1},{h1},{v1}\nF2,{x2},{y2},{h2},\n")
    };
    let st = dir.write_text("s.csv", &text("1.2345"));
    let plain = run(&dir, &dem_path, &st, &[]);
    let field = run(
        &dir,
        &dem_path,
        &st,
        &[
            "--field-inner-col",
            "field_tc",
            "--field-inner-radius",
            "53.3m",
        ],
    );
    // The field value is written as given and is the inner part; the DEM's value within
    // 53.3 m is beside it.
    assert_eq!(field.get(0, "tc_inner_field_mgal"), "1.2345");
    assert_eq!(field.get(0, "tc_inner_mgal"), "1.2345");
    let dem_inner = field.num(0, "tc_inner_dem_mgal");
    assert!(dem_inner > 0.0);
    // Putting the DEM's own value back as the field value gives the DEM-only correction
    // with that inner disc: exactly tc - field + dem, to the printed digits.
    let back = dir.write_text("s2.csv", &text(field.get(0, "tc_inner_dem_mgal")));
    let again = run(
        &dir,
        &dem_path,
        &back,
        &[
            "--field-inner-col",
            "field_tc",
            "--field-inner-radius",
            "53.3m",
        ],
    );
    let expected = field.num(0, "tc_mgal") - 1.2345 + dem_inner;
    assert!(
        (again.num(0, "tc_mgal") - expected).abs() < 1.5e-4,
        "{} vs {expected}",
        again.num(0, "tc_mgal")
    );
    // And that is close to the plain run, whose inner zone is the 3 x 3 cells instead.
    assert!(
        (again.num(0, "tc_mgal") - plain.num(0, "tc_mgal")).abs()
            < 0.01f64.max(0.005 * plain.num(0, "tc_mgal"))
    );
    // A station without a field value is computed as without the option.
    assert_eq!(field.get(1, "tc_inner_field_mgal"), "");
    assert_eq!(field.get(1, "tc_mgal"), plain.get(1, "tc_mgal"));
}

#[test]
fn bad_field_values_are_refused() {
    let dir = TestDir::new();
    let dem = Terrain::LonePeak.dem(100, 30.0);
    let dem_path = dir.write_dem("peak.tif", &dem);
    let st = dir.write_text(
        "s.csv",
        &format!(
            "station,x,y,elev,field_tc\nF1,10,20,{},-0.5\n",
            dem.bilinear(10.0, 20.0).unwrap()
        ),
    );
    let mut cmd = ringsum(&dir);
    cmd.args([
        "correct",
        "--quiet",
        "--out",
        "-",
        "--outer-radius",
        "1km",
        "--field-inner-col",
        "field_tc",
        "--field-inner-radius",
        "53.3m",
        "--dem",
    ])
    .arg(&dem_path)
    .arg("--stations")
    .arg(&st);
    let err = String::from_utf8_lossy(&cmd.assert().code(1).get_output().stderr).to_string();
    assert!(err.contains("line 2") && err.contains("negative"), "{err}");
    let mut cmd = ringsum(&dir);
    cmd.args([
        "correct",
        "--quiet",
        "--out",
        "-",
        "--outer-radius",
        "1km",
        "--field-inner-col",
        "field_tc",
        "--dem",
    ])
    .arg(&dem_path)
    .arg("--stations")
    .arg(&st);
    cmd.assert().code(2);
}
