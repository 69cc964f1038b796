//! The figures and worked examples of the README come from the binary: each block between
//! `<!-- generated: NAME -->` and `<!-- end generated -->` is made here by running
//! `ringsum`, and the test fails when the file differs. `RINGSUM_WRITE_DOCS=1 cargo test
//! --test docs` writes the blocks into the files instead.

mod common;

use common::{ringsum, Csv, TestDir};
use ringsum::reduce::{bouguer_slab_mgal, bullard_b_mgal};
use std::path::{Path, PathBuf};

/// The repository's root.
fn root() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
}

/// A demo file.
fn demo(name: &str) -> PathBuf {
    root().join("demo-dem").join(name)
}

/// The demo's three DEMs, finest first.
const DEMO_DEMS: [&str; 3] = [
    "quillerun_30m.tif",
    "quillerun_3s_lonlat.tif",
    "quillerun_500m.tif",
];

/// The blocks of one file: replaced in memory, then compared with the file (or written).
struct DocFile {
    path: PathBuf,
    text: String,
    original: String,
}

impl DocFile {
    fn open(relative: &str) -> DocFile {
        let path = root().join(relative);
        let text = std::fs::read_to_string(&path).expect("read the documentation file");
        DocFile {
            path,
            original: text.clone(),
            text,
        }
    }

    /// Puts `content` between the markers of block `name`.
    fn set(&mut self, name: &str, content: &str) {
        let begin = format!("<!-- generated: {name} -->\n");
        let end = "<!-- end generated -->";
        let start = self
            .text
            .find(&begin)
            .unwrap_or_else(|| panic!("{}: no block {name}", self.path.display()))
            + begin.len();
        let stop = start
            + self.text[start..]
                .find(end)
                .unwrap_or_else(|| panic!("{}: block {name} has no end", self.path.display()));
        self.text.replace_range(start..stop, content);
    }

    /// Fails on a difference (naming the first differing line), or writes the file.
    fn finish(self) {
        if self.text == self.original {
            return;
        }
        if std::env::var_os("RINGSUM_WRITE_DOCS").is_some() {
            std::fs::write(&self.path, &self.text).expect("write the documentation file");
            return;
        }
        let (a, b): (Vec<&str>, Vec<&str>) =
            (self.original.lines().collect(), self.text.lines().collect());
        let k = a
            .iter()
            .zip(&b)
            .position(|(x, y)| x != y)
            .unwrap_or(a.len().min(b.len()));
        panic!(
            "{} is out of date at line {}:\n  written:   {}\n  generated: {}\nrun RINGSUM_WRITE_DOCS=1 cargo test --test docs to bring it up to date",
            self.path.display(),
            k + 1,
            a.get(k).unwrap_or(&""),
            b.get(k).unwrap_or(&"")
        );
    }
}

/// Runs `ringsum` with `args` in `dir`, expecting success; returns stdout.
fn run(dir: &TestDir, args: &[&str]) -> String {
    let out = ringsum(dir).args(args).assert().success();
    String::from_utf8_lossy(&out.get_output().stdout).into_owned()
}

/// `correct` on the demo's three DEMs with `stations` and `extra` options; the table.
fn correct_demo(dir: &TestDir, stations: &Path, extra: &[&str]) -> Csv {
    let mut args: Vec<String> = vec![
        "correct".into(),
        "--quiet".into(),
        "--out".into(),
        "-".into(),
    ];
    for d in DEMO_DEMS {
        args.push("--dem".into());
        args.push(demo(d).display().to_string());
    }
    args.push("--stations".into());
    args.push(stations.display().to_string());
    args.extend(extra.iter().map(|s| s.to_string()));
    let args: Vec<&str> = args.iter().map(String::as_str).collect();
    Csv::parse(&run(dir, &args))
}

/// The README: the demo's table and the worked station.
#[test]
fn readme_examples_come_from_the_binary() {
    let dir = TestDir::new();
    let mut readme = DocFile::open("README.md");

    // The first rows of the demo's table.
    let out = dir.join("demo.csv");
    run(&dir, &["demo", "--quiet", "--out", out.to_str().unwrap()]);
    let table = std::fs::read_to_string(&out).unwrap();
    let head: Vec<&str> = table.lines().take(3).collect();
    readme.set("demo-table", &format!("```\n{}\n```\n", head.join("\n")));

    // The worked station: V01 with an invented observed gravity and undulation.
    let v01 = "station,x,y,elev,gravity,N\nV01,494324.08,5200457.72,1032.10,980474.318,47.30\n";
    let stations = dir.write_text("v01.csv", v01);
    let t = correct_demo(&dir, &stations, &["--undulation-col", "N"]);
    let exact = correct_demo(
        &dir,
        &stations,
        &["--undulation-col", "N", "--method", "exact"],
    );
    let planar = correct_demo(
        &dir,
        &stations,
        &["--undulation-col", "N", "--convention", "planar"],
    );
    let g = |c: &str| t.get(0, c).to_string();
    let h: f64 = t.num(0, "ellipsoidal_height_m");
    let lat = t.num(0, "latitude_deg");
    let lon_lat =
        ringsum::dem::crs::geodetic_lon_lat("EPSG:32633", &[(494324.08, 5200457.72)]).unwrap()[0];
    let s2 = lat.to_radians().sin().powi(2);
    let slab = bouguer_slab_mgal(2670.0, h);
    let bb = bullard_b_mgal(2670.0, h);
    let cubic = 1.465189e-3 * h - 3.536060e-7 * h * h + 1.28445e-13 * h * h * h;
    let hs = format!("{h:.1}");
    let mut md = String::new();
    md.push_str("| column | value | by hand |\n|---|---|---|\n");
    let mut row = |c: &str, by_hand: String| {
        md.push_str(&format!("| `{c}` | {} | {by_hand} |\n", g(c)));
    };
    row("elev_m", "H, orthometric, on the DEMs' datum".into());
    row(
        "dem_elev_m",
        "bilinear height of the 30 m DEM at the station".into(),
    );
    row(
        "tc_mgal",
        format!(
            "= inner {} + near {} + mid {} + far {} (`--method exact` gives {})",
            g("tc_inner_mgal"),
            g("tc_near_mgal"),
            g("tc_mid_mgal"),
            g("tc_far_mgal"),
            exact.get(0, "tc_mgal")
        ),
    );
    row(
        "latitude_deg",
        format!(
            "UTM 33N (EPSG:32633) to EPSG:4326: lon {:.8}, lat {:.8}; sin^2 phi = {s2:.8}",
            lon_lat.0, lon_lat.1
        ),
    );
    row("ellipsoidal_height_m", "h = 1032.10 + 47.30".into());
    row("observed_gravity_mgal", "as read".into());
    row(
        "normal_gravity_mgal",
        format!(
            "978032.67715 (1 + 0.001931851353 x {s2:.8}) / sqrt(1 - 0.00669438002290 x {s2:.8})"
        ),
    );
    row(
        "free_air_corr_mgal",
        format!("(0.3087691 - 0.0004398 x {s2:.8}) x {hs} - 7.2125e-8 x {hs}^2"),
    );
    row(
        "atmos_corr_mgal",
        format!("0.874 - 9.9e-5 x {hs} + 3.56e-9 x {hs}^2"),
    );
    row(
        "bouguer_corr_mgal",
        format!("slab 0.1119688 x {hs} = {slab:.4}, plus Bullard B {bb:.4}"),
    );
    row(
        "free_air_anomaly_mgal",
        format!(
            "{} - {} + {} + {}",
            g("observed_gravity_mgal"),
            g("normal_gravity_mgal"),
            g("free_air_corr_mgal"),
            g("atmos_corr_mgal")
        ),
    );
    row(
        "simple_bouguer_anomaly_mgal",
        format!(
            "{} - {}",
            g("free_air_anomaly_mgal"),
            g("bouguer_corr_mgal")
        ),
    );
    row(
        "complete_bouguer_anomaly_mgal",
        format!("{} + {}", g("simple_bouguer_anomaly_mgal"), g("tc_mgal")),
    );
    md.push_str(&format!(
        "\nBullard B at h = {hs} m can be checked with the cubic fit 1.465189e-3 h - 3.536060e-7 h^2 +\n\
         1.28445e-13 h^3, which agrees with LaFehr's closed form to 0.1 microGal on 0-5 km: it gives\n\
         {cubic:.5}. With `--convention planar` the Bouguer correction is the slab alone, {}, the\n\
         TC (flat Earth) is {}, and the CBA is {}.\n",
        planar.get(0, "bouguer_corr_mgal"),
        planar.get(0, "tc_mgal"),
        planar.get(0, "complete_bouguer_anomaly_mgal")
    ));
    readme.set("worked-station", &md);

    readme.set("bad-input", &bad_input_table());

    readme.finish();
}

/// The README's table of refused input: each case of tests/common/bad_input.rs, run and
/// checked, with the sentence ringsum printed.
fn bad_input_table() -> String {
    let mut md = String::from("| refused | ringsum says | exit |\n|---|---|---|\n");
    for case in common::bad_input::CASES {
        let said = common::bad_input::refuse(case)
            .replace('\\', "\\\\")
            .replace('|', "\\|")
            .replace('<', "&lt;");
        md.push_str(&format!("| {} | {said} | {} |\n", case.what, case.status));
    }
    md
}
