//! The figures and worked examples of the README and of docs/ come from the binary: each
//! block between `<!-- generated: NAME -->` and `<!-- end generated -->` is made here by
//! running `ringsum`, and the test fails when the file differs. A command shown in a block
//! is rendered from the very argument list that is run, in a scratch folder laid out like
//! the repository root, and its output is pasted as printed; paragraphs that quote figures
//! are formatted here from the run's tables. The invented legacy survey of
//! docs/sensitivity.md, docs/examples/stations_legacy.csv, is made here as well and
//! compared the same way. `RINGSUM_WRITE_DOCS=1 cargo test --test docs` writes the blocks
//! (and that file) instead.

mod common;

use common::{ringsum, Csv, TestDir};
use gdal::Metadata;
use ringsum::reduce::{bouguer_slab_mgal, bullard_b_mgal};
use std::path::PathBuf;
use std::sync::OnceLock;

/// The repository's root.
fn root() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
}

/// The demo's three DEMs, finest first, as the examples name them.
const DEM_30M: &str = "demo-dem/quillerun_30m.tif";
const DEM_3S: &str = "demo-dem/quillerun_3s_lonlat.tif";
const DEM_500M: &str = "demo-dem/quillerun_500m.tif";
const STATIONS: &str = "demo-dem/stations.csv";

/// Widest line of a command shown in the docs (continuation backslash included).
const WIDTH: usize = 92;

/// A documentation file whose generated blocks are replaced in memory, then compared with
/// the file (or written).
struct DocFile {
    path: PathBuf,
    text: String,
    original: String,
}

impl DocFile {
    fn open(relative: &str) -> DocFile {
        let path = root().join(relative);
        let text = std::fs::read_to_string(&path)
            .unwrap_or_else(|e| panic!("{}: cannot read it ({e})", path.display()));
        DocFile {
            path,
            original: text.clone(),
            text,
        }
    }

    /// A file that is generated whole (it need not exist yet when it is being written).
    fn whole(relative: &str, content: &str) -> DocFile {
        let path = root().join(relative);
        let original = match std::fs::read_to_string(&path) {
            Ok(text) => text,
            Err(_) if writing() => String::new(),
            Err(e) => panic!(
                "{}: cannot read it ({e}); run RINGSUM_WRITE_DOCS=1 cargo test --test docs to make it",
                path.display()
            ),
        };
        DocFile {
            path,
            original,
            text: content.to_string(),
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
        if writing() {
            if let Some(parent) = self.path.parent() {
                std::fs::create_dir_all(parent).expect("create the documentation folder");
            }
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

/// Whether the blocks are to be written rather than compared.
fn writing() -> bool {
    std::env::var_os("RINGSUM_WRITE_DOCS").is_some()
}

/// A scratch folder laid out like the repository root: `demo-dem` is a link to the
/// committed demo data, and the examples read and write relative paths inside it.
struct Scratch {
    dir: TestDir,
}

impl Scratch {
    fn new() -> Scratch {
        let dir = TestDir::new();
        std::os::unix::fs::symlink(root().join("demo-dem"), dir.join("demo-dem"))
            .expect("link the demo data into the scratch folder");
        Scratch { dir }
    }

    fn path(&self, relative: &str) -> PathBuf {
        self.dir.join(relative)
    }

    /// Writes a file, creating its folder.
    fn write(&self, relative: &str, text: &str) {
        let path = self.path(relative);
        std::fs::create_dir_all(path.parent().expect("a folder")).expect("create the folder");
        std::fs::write(&path, text).expect("write a scratch file");
    }

    fn mkdir(&self, relative: &str) {
        std::fs::create_dir_all(self.path(relative)).expect("create a scratch folder");
    }

    fn csv(&self, relative: &str) -> Csv {
        Csv::read(&self.path(relative))
    }

    /// Runs `ringsum args`, expecting success; returns what it printed as a person sees it:
    /// standard error (warnings, printed before the work) then standard output.
    fn ringsum(&self, args: &[String]) -> String {
        let out = ringsum(&self.dir).args(args).assert().success();
        let out = out.get_output();
        format!(
            "{}{}",
            String::from_utf8_lossy(&out.stderr),
            String::from_utf8_lossy(&out.stdout)
        )
    }

    /// Runs `ringsum args`, expecting it to refuse the input (exit status 1); returns the
    /// sentence it printed.
    fn ringsum_fails(&self, args: &[String]) -> String {
        let out = ringsum(&self.dir).args(args).assert().code(1);
        String::from_utf8_lossy(&out.get_output().stderr).into_owned()
    }

    /// Runs a shell line (shown in the docs as it is), expecting success.
    fn shell(&self, line: &str) {
        let status = std::process::Command::new("sh")
            .arg("-c")
            .arg(line)
            .current_dir(self.dir.path())
            .status()
            .expect("run sh");
        assert!(status.success(), "`{line}` failed");
    }
}

/// An argument list from words.
fn args(words: &[&str]) -> Vec<String> {
    words.iter().map(|s| s.to_string()).collect()
}

/// The command line `ringsum ARGS` as shown in the docs: an option and its value stay
/// together, lines are wrapped before `WIDTH` with `\` continuations indented by four
/// spaces. Arguments that a shell would need quoted are refused, so that what is shown is
/// exactly what runs.
fn shown(args: &[String]) -> String {
    for a in args {
        assert!(
            !a.is_empty()
                && a.chars()
                    .all(|c| c.is_ascii_alphanumeric() || "-_./,:=+".contains(c)),
            "argument '{a}' would need quoting in the shell"
        );
    }
    let mut groups = vec![format!("ringsum {}", args[0])];
    let mut i = 1;
    while i < args.len() {
        let paired =
            args[i].starts_with("--") && i + 1 < args.len() && !args[i + 1].starts_with("--");
        if paired {
            groups.push(format!("{} {}", args[i], args[i + 1]));
            i += 2;
        } else {
            groups.push(args[i].clone());
            i += 1;
        }
    }
    let mut lines: Vec<String> = Vec::new();
    for g in groups {
        match lines.last_mut() {
            Some(line) if line.len() + 1 + g.len() + 2 <= WIDTH => {
                line.push(' ');
                line.push_str(&g);
            }
            Some(_) => lines.push(format!("    {g}")),
            None => lines.push(g),
        }
    }
    lines.join(" \\\n")
}

/// A shell block of `commands` and, when there is any, a text block of `output`.
fn example_block(commands: &[String], output: &str) -> String {
    let mut md = format!("```sh\n{}\n```\n", commands.join("\n"));
    if !output.is_empty() {
        md.push_str(&format!("\n```text\n{}", output));
        if !output.ends_with('\n') {
            md.push('\n');
        }
        md.push_str("```\n");
    }
    md
}

/// Runs `ringsum args` in `scratch` and returns its example block.
fn run_example(scratch: &Scratch, args: &[String]) -> String {
    let output = scratch.ringsum(args);
    example_block(&[shown(args)], &output)
}

/// The `--dem` options of the given DEMs.
fn dems(paths: &[&str]) -> Vec<String> {
    paths
        .iter()
        .flat_map(|p| ["--dem".to_string(), p.to_string()])
        .collect()
}

/// The median of `values` (the mean of the middle two for an even count).
fn median(values: &[f64]) -> f64 {
    let mut v = values.to_vec();
    v.sort_by(f64::total_cmp);
    let n = v.len();
    if n % 2 == 1 {
        v[n / 2]
    } else {
        0.5 * (v[n / 2 - 1] + v[n / 2])
    }
}

/// The entry of `items` with the smallest key, and the one with the largest.
fn extremes<T>(items: &[(T, f64)]) -> (&(T, f64), &(T, f64)) {
    let lo = items
        .iter()
        .min_by(|a, b| a.1.total_cmp(&b.1))
        .expect("at least one");
    let hi = items
        .iter()
        .max_by(|a, b| a.1.total_cmp(&b.1))
        .expect("at least one");
    (lo, hi)
}

// ---------------------------------------------------------------------------------------
// The worked station (README and docs/reduction.md)
// ---------------------------------------------------------------------------------------

/// The worked station: the station file, the command as shown, and the table of its
/// columns with the arithmetic by hand.
struct Worked {
    stations: String,
    command: String,
    table: String,
}

/// V01 with an invented observed gravity and undulation, on the demo's three DEMs (made
/// once for both documents).
fn worked_station() -> &'static Worked {
    static WORKED: OnceLock<Worked> = OnceLock::new();
    WORKED.get_or_init(|| {
        let s = Scratch::new();
        let v01 = "station,x,y,elev,gravity,N\nV01,494324.08,5200457.72,1032.10,980474.318,47.30\n";
        s.write("v01.csv", v01);
        let mut main = args(&["correct"]);
        main.extend(dems(&[DEM_30M, DEM_3S, DEM_500M]));
        main.extend(args(&[
            "--stations",
            "v01.csv",
            "--undulation-col",
            "N",
            "--out",
            "v01_out.csv",
        ]));
        s.ringsum(&main);
        let t = s.csv("v01_out.csv");
        // The same run by the exact method and in the planar convention.
        let variant = |extra: &[&str]| {
            let mut a = main.clone();
            let k = a.len() - 2;
            a.truncate(k);
            a.extend(args(&["--quiet", "--out", "-"]));
            a.extend(args(extra));
            let out = ringsum(&s.dir).args(&a).assert().success();
            Csv::parse(&String::from_utf8_lossy(&out.get_output().stdout))
        };
        let exact = variant(&["--method", "exact"]);
        let planar = variant(&["--convention", "planar"]);
        let g = |c: &str| t.get(0, c).to_string();
        let h: f64 = t.num(0, "ellipsoidal_height_m");
        let lat = t.num(0, "latitude_deg");
        let lon_lat =
            ringsum::dem::crs::geodetic_lon_lat("EPSG:32633", &[(494324.08, 5200457.72)])
                .unwrap()[0];
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
        Worked {
            stations: v01.to_string(),
            command: shown(&main),
            table: md,
        }
    })
}

// ---------------------------------------------------------------------------------------
// README.md
// ---------------------------------------------------------------------------------------

/// The README: the demo's table and the worked station.
#[test]
fn readme_examples_come_from_the_binary() {
    let s = Scratch::new();
    let mut readme = DocFile::open("README.md");

    // The first rows of the demo's table.
    s.ringsum(&args(&["demo", "--quiet", "--out", "demo.csv"]));
    let table = std::fs::read_to_string(s.path("demo.csv")).unwrap();
    let head: Vec<&str> = table.lines().take(3).collect();
    readme.set("demo-table", &format!("```\n{}\n```\n", head.join("\n")));

    readme.set("worked-station", &worked_station().table);
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

// ---------------------------------------------------------------------------------------
// docs/reduction.md
// ---------------------------------------------------------------------------------------

/// docs/reduction.md: the worked station with its command, and the water level over the
/// demo's DEMs.
#[test]
fn reduction_examples_come_from_the_binary() {
    let mut doc = DocFile::open("docs/reduction.md");
    let w = worked_station();
    doc.set(
        "worked-station-run",
        &format!("```text\n{}```\n\n```sh\n{}\n```\n", w.stations, w.command),
    );
    doc.set("worked-station", &w.table);

    // The lake: a constant water level over the 30 m DEM alone, then over all three.
    let s = Scratch::new();
    let select = "grep -E '^(station|V08|V09|V10|V11|V12),' demo-dem/stations.csv > shore.csv";
    s.shell(select);
    let water = args(&["--water-density", "1000", "--water-surface", "966"]);
    let mut alone = args(&["correct"]);
    alone.extend(dems(&[DEM_30M]));
    alone.extend(args(&["--stations", "shore.csv", "--outer-radius", "10km"]));
    alone.extend(water.clone());
    alone.extend(args(&["--quiet", "--out", "-"]));
    let alone_out = s.ringsum(&alone);
    let mut all = args(&["correct"]);
    all.extend(dems(&[DEM_30M, DEM_3S, DEM_500M]));
    all.extend(args(&["--stations", "shore.csv"]));
    all.extend(water);
    all.extend(args(&["--quiet", "--out", "-"]));
    let all_out = s.ringsum(&all);
    doc.set(
        "water-alone",
        &example_block(&[select.to_string(), shown(&alone)], &alone_out),
    );
    doc.set("water-all", &example_block(&[shown(&all)], &all_out));
    let water_of = |text: &str| -> Vec<(String, f64)> {
        let t = Csv::parse(text);
        (0..t.rows.len())
            .map(|i| (t.get(i, "station").to_string(), t.num(i, "tc_water_mgal")))
            .collect()
    };
    let (a, b) = (water_of(&alone_out), water_of(&all_out));
    let largest_alone = a.iter().map(|(_, v)| v.abs()).fold(0.0, f64::max);
    let ((lo_id, lo), (hi_id, hi)) = {
        let (lo, hi) = extremes(&b);
        (lo.clone(), hi.clone())
    };
    doc.set(
        "water-reading",
        &format!(
            "With the 30 m grid alone the water's part is at most {largest_alone:.4} mGal in size at the\n\
             five shore stations. With all three DEMs it is {lo:.4} mGal ({lo_id}) to {hi:.4} mGal ({hi_id}).\n"
        ),
    );
    doc.finish();
}

// ---------------------------------------------------------------------------------------
// docs/sensitivity.md
// ---------------------------------------------------------------------------------------

/// Zones of the invented legacy survey: A (the station zone) and Hammer's B ... M.
const LEGACY_ZONES: &str = "ABCDEFGHIJKLM";

/// The invented legacy survey from a `correct --zones hammer` table: every zone 0.9 times
/// the new value with a deterministic scatter of up to 4 %, and V21's zone G read 1.0 mGal
/// high; `legacy_tc` is the sum of the rounded zones.
fn legacy_survey(stations: &Csv, hammer: &Csv) -> String {
    let mut out = String::from("station,x,y,elev,legacy_tc");
    for z in LEGACY_ZONES.chars() {
        out.push_str(&format!(",legacy_tc_{z}"));
    }
    out.push('\n');
    for i in 0..stations.rows.len() {
        let id = stations.get(i, "station");
        let row = hammer.station_row(id);
        let mut parts = Vec::new();
        for (k, z) in LEGACY_ZONES.chars().enumerate() {
            let column = if z == 'A' {
                "tc_inner_mgal".to_string()
            } else {
                format!("tc_zone_{z}_mgal")
            };
            let tc = hammer.num(row, &column);
            let u = ((37 * (i + 1) + 101 * k) % 41) as f64 / 20.0 - 1.0;
            let mut v = 0.9 * tc * (1.0 + 0.04 * u);
            if id == "V21" && z == 'G' {
                v += 1.0;
            }
            parts.push((v * 1e4).round() as i64);
        }
        let total: i64 = parts.iter().sum();
        let mgal = |units: i64| format!("{:.4}", units as f64 / 1e4);
        out.push_str(&format!(
            "{id},{},{},{},{}",
            stations.get(i, "x"),
            stations.get(i, "y"),
            stations.get(i, "elev"),
            mgal(total)
        ));
        for p in parts {
            out.push_str(&format!(",{}", mgal(p)));
        }
        out.push('\n');
    }
    out
}

/// Rank (1 = largest) of station `id` by the size of column `col` in `t`.
fn rank_by_size(t: &Csv, col: &str, id: &str) -> usize {
    let mine = t.num(t.station_row(id), col).abs();
    1 + (0..t.rows.len())
        .filter(|&i| t.num(i, col).abs() > mine)
        .count()
}

/// "the largest", "the 2nd largest", ... (`what` being "largest" or "lowest").
fn nth(n: usize, what: &str) -> String {
    if n == 1 {
        format!("the {what}")
    } else {
        format!("the {} {what}", ordinal(n))
    }
}

/// "2nd", "3rd", "11th", ...
fn ordinal(n: usize) -> String {
    let suffix = match (n % 10, n % 100) {
        (1, 11) | (2, 12) | (3, 13) => "th",
        (1, _) => "st",
        (2, _) => "nd",
        (3, _) => "rd",
        _ => "th",
    };
    format!("{n}{suffix}")
}

/// Least-squares ratio through the origin of column `new` against `old`.
fn ratio(t: &Csv, new: &str, old: &str) -> f64 {
    let (mut num, mut den) = (0.0, 0.0);
    for i in 0..t.rows.len() {
        let (n, o) = (t.num(i, new), t.num(i, old));
        num += n * o;
        den += o * o;
    }
    num / den
}

/// docs/sensitivity.md: sweep, audit and map on the demo, and the legacy survey.
#[test]
fn sensitivity_examples_come_from_the_binary() {
    let mut doc = DocFile::open("docs/sensitivity.md");
    let s = Scratch::new();
    s.mkdir("sens");

    // The main sweep: the three DEMs to 166.7 km, with the 500 m grid in place of the 30 m.
    let mut sweep = args(&["sweep"]);
    sweep.extend(dems(&[DEM_30M, DEM_3S, DEM_500M]));
    sweep.extend(args(&[
        "--stations",
        STATIONS,
        "--densities",
        "2000,2300,2670",
        "--compare-dem",
        DEM_500M,
        "--out",
        "sens/sweep.csv",
        "--station-summary",
        "sens/sweep_stations.csv",
        "--plot",
        "sens/sweep.png",
    ]));
    doc.set("sweep-main", &run_example(&s, &sweep));
    doc.set("sweep-main-reading", &sweep_reading(&s));

    // Six stations to 10 km on the 30 m grid, against the 500 m grid alone.
    let select =
        "grep -E '^(station|V01|V09|V14|V22|V32|V37),' demo-dem/stations.csv > sens/six.csv";
    s.shell(select);
    let mut six = args(&["sweep"]);
    six.extend(dems(&[DEM_30M]));
    six.extend(args(&[
        "--stations",
        "sens/six.csv",
        "--outer-radius",
        "10km",
        "--compare-dem",
        DEM_500M,
        "--out",
        "sens/sweep_six.csv",
        "--plot",
        "sens/sweep_six.png",
    ]));
    let six_out = s.ringsum(&six);
    doc.set(
        "sweep-six",
        &example_block(&[select.to_string(), shown(&six)], &six_out),
    );
    doc.set("sweep-six-reading", &six_reading(&s));

    // The invented legacy survey, from Hammer zones of the 30 m and 3" grids to zone M.
    let legacy_dems = dems(&[DEM_30M, DEM_3S]);
    let like_the_old_survey = args(&[
        "--outer-radius",
        "21.94km",
        "--convention",
        "planar",
        "--zones",
        "hammer",
    ]);
    let mut hammer = args(&["correct"]);
    hammer.extend(legacy_dems.clone());
    hammer.extend(args(&["--stations", STATIONS]));
    hammer.extend(like_the_old_survey.clone());
    hammer.extend(args(&["--out", "sens/hammer.csv"]));
    s.ringsum(&hammer);
    doc.set("legacy-correct", &example_block(&[shown(&hammer)], ""));
    let legacy_path = "docs/examples/stations_legacy.csv";
    let legacy = legacy_survey(
        &Csv::read(&root().join(STATIONS)),
        &s.csv("sens/hammer.csv"),
    );
    s.write(legacy_path, &legacy);
    let head: Vec<&str> = legacy.lines().take(3).collect();
    doc.set(
        "legacy-head",
        &format!("```text\n{}\n```\n", head.join("\n")),
    );

    // The audits: at the default density, then at the one the legacy values are for.
    let audit = |density: Option<&str>, out: &str, plots: &str| {
        let mut a = args(&["audit"]);
        a.extend(legacy_dems.clone());
        a.extend(args(&["--stations", legacy_path]));
        a.extend(like_the_old_survey.clone());
        if let Some(d) = density {
            a.extend(args(&["--density", d]));
        }
        a.extend(args(&["--worst", "5", "--out", out, "--plots", plots]));
        a
    };
    let first = audit(None, "sens/audit.csv", "sens/plots");
    let first_out = s.ringsum(&first);
    doc.set("audit", &example_block(&[shown(&first)], &first_out));
    let second = audit(Some("2403"), "sens/audit_2403.csv", "sens/plots_2403");
    doc.set("audit-2403", &run_example(&s, &second));
    let (one, two) = audit_readings(&s, first_out.contains("ringsum: warning:"));
    doc.set("audit-reading", &one);
    doc.set("audit-2403-reading", &two);

    // The map: the 30 m grid to 10 km at 200 m spacing.
    let mut map = args(&["map"]);
    map.extend(dems(&[DEM_30M]));
    map.extend(args(&[
        "--stations",
        STATIONS,
        "--outer-radius",
        "10km",
        "--spacing",
        "200m",
        "--out",
        "sens/tc_map.tif",
        "--preview",
        "sens/tc_map.png",
    ]));
    s.ringsum(&map);
    doc.set("map", &example_block(&[shown(&map)], ""));
    let (reading, metadata) = map_readings(&s);
    doc.set("map-reading", &reading);
    doc.set("map-metadata", &metadata);
    let mut too_fine = args(&["map"]);
    too_fine.extend(dems(&[DEM_30M]));
    too_fine.extend(args(&[
        "--outer-radius",
        "10km",
        "--spacing",
        "1m",
        "--out",
        "sens/too_fine.tif",
    ]));
    let refused = s.ringsum_fails(&too_fine);
    doc.set("map-refused", &example_block(&[shown(&too_fine)], &refused));

    DocFile::whole(legacy_path, &legacy).finish();
    doc.finish();
}

/// What the main sweep's tables say: the share of the TC within 10 km, and the DEMs.
fn sweep_reading(s: &Scratch) -> String {
    let table = s.csv("sens/sweep.csv");
    let summary = s.csv("sens/sweep_stations.csv");
    let diff = "diff_dem_quillerun_500m_mgal";
    let at = |id: &str, radius: f64, col: &str| -> f64 {
        let i = (0..table.rows.len())
            .find(|&i| table.get(i, "station") == id && table.num(i, "radius_m") == radius)
            .unwrap_or_else(|| panic!("no row of {id} at {radius} m"));
        table.num(i, col)
    };
    let n = summary.rows.len();
    let mut share = Vec::new();
    let mut beyond = Vec::new();
    let mut diffs = Vec::new();
    for i in 0..n {
        let id = summary.get(i, "station").to_string();
        let last = summary.num(i, "tc_mgal");
        share.push((id.clone(), 100.0 * at(&id, 10_000.0, "tc_mgal") / last));
        beyond.push((id.clone(), at(&id, 10_000.0, "remaining_mgal")));
        diffs.push((id, summary.num(i, diff)));
    }
    let values = |v: &[(String, f64)]| v.iter().map(|x| x.1).collect::<Vec<f64>>();
    let (least, most) = extremes(&share);
    let (_, far) = extremes(&beyond);
    let small = diffs.iter().filter(|d| d.1.abs() <= 0.1).count();
    let (worst_id, worst) = diffs
        .iter()
        .max_by(|a, b| a.1.abs().total_cmp(&b.1.abs()))
        .expect("stations")
        .clone();
    let at_1km = at(&worst_id, 1000.0, diff);
    format!(
        "Read from the two tables: within 10 km lies {:.0}% of the 166.7 km TC at the median station,\n\
         from {:.0}% at {} to {:.0}% at {}. What lies beyond 10 km (`remaining_mgal` at 10 km) is\n\
         {:.2} mGal at the median station and {:.2} mGal at {}. Without the 30 m grid, {small} of the\n\
         {n} stations change by at most 0.1 mGal; the largest change, {worst:+.4} mGal at {worst_id},\n\
         is {at_1km:+.4} mGal already at 1 km (`{diff}`).\n",
        median(&values(&share)),
        least.1,
        least.0,
        most.1,
        most.0,
        median(&values(&beyond)),
        far.1,
        far.0,
    )
}

/// The six stations at 1 km and 10 km: the 30 m grid and the 500 m grid alone.
fn six_reading(s: &Scratch) -> String {
    let t = s.csv("sens/sweep_six.csv");
    let kinds = [
        ("V01", "valley floor"),
        ("V09", "lake shore"),
        ("V14", "lower slope"),
        ("V22", "upper slope"),
        ("V32", "foot of the Brennith Wall"),
        ("V37", "near the summit of the Tessendrin Horn"),
    ];
    let mut md = String::from(
        "| station | where | TC to 1 km, 30 m | 500 m minus 30 m at 1 km | TC to 10 km, 30 m | 500 m minus 30 m at 10 km |\n|---|---|---|---|---|---|\n",
    );
    for (id, kind) in kinds {
        let get = |radius: f64, col: &str| -> String {
            let i = (0..t.rows.len())
                .find(|&i| t.get(i, "station") == id && t.num(i, "radius_m") == radius)
                .unwrap_or_else(|| panic!("no row of {id} at {radius} m"));
            t.get(i, col).to_string()
        };
        md.push_str(&format!(
            "| {id} | {kind} | {} | {} | {} | {} |\n",
            get(1000.0, "tc_mgal"),
            get(1000.0, "diff_dem_quillerun_500m_mgal"),
            get(10_000.0, "tc_mgal"),
            get(10_000.0, "diff_dem_quillerun_500m_mgal"),
        ));
    }
    md
}

/// What the two audit reports say.
fn audit_readings(s: &Scratch, warned: bool) -> (String, String) {
    let one = s.csv("sens/audit.csv");
    let two = s.csv("sens/audit_2403.csv");
    let n = one.rows.len();
    let col = |t: &Csv, c: &str| (0..t.rows.len()).map(|i| t.num(i, c)).collect::<Vec<_>>();
    assert!(
        (0..n).all(|i| one.get(i, "problems").is_empty()),
        "the demo's inputs are clean"
    );
    let mismatch = col(&one, "elev_minus_dem_m")
        .iter()
        .fold(0.0f64, |m, v| m.max(v.abs()));
    let r1 = ratio(&one, "tc_mgal", "legacy_tc_mgal");
    let diffs = col(&one, "new_minus_legacy_mgal");
    let positive = diffs.iter().filter(|&&d| d > 0.0).count();
    let legacy = col(&one, "legacy_tc_mgal");
    let correlation = {
        let (ma, mb) = (
            legacy.iter().sum::<f64>() / n as f64,
            diffs.iter().sum::<f64>() / n as f64,
        );
        let (mut sab, mut saa, mut sbb) = (0.0, 0.0, 0.0);
        for (a, b) in legacy.iter().zip(&diffs) {
            sab += (a - ma) * (b - mb);
            saa += (a - ma) * (a - ma);
            sbb += (b - mb) * (b - mb);
        }
        sab / (saa * sbb).sqrt()
    };
    let v21 = one.station_row("V21");
    let zone_g = "diff_zone_G_mgal";
    let g_rank_from_lowest = 1
        + (0..n)
            .filter(|&i| one.num(i, zone_g) < one.num(v21, zone_g))
            .count();
    let mut first = String::new();
    if warned {
        first.push_str(
            "The warnings come first: `correct`, `sweep` and `audit` measure a plan's sector rings\n\
             against blocks on the first stations, and here Hammer's zones miss the blocks' accuracy.\n\
             The comparison is like with like all the same: the legacy values were made from the same\n\
             zones.\n\n",
        );
    }
    first.push_str(&format!(
        "No station is flagged: the station heights lie within {mismatch:.2} m of the DEM (the demo's\n\
         invented survey error is within 0.29 m) and no two stations are within 1 m of each other.\n\
         The legacy comparison is dominated by its ratio, new = {r1:.4} x legacy, near the 1/0.9 =\n\
         1.1111 of the recipe: {} differences are positive, and they grow with the TC\n\
         (correlation {correlation:.2} between the difference and the legacy TC), as a wrong density makes\n\
         them. V21's blunder is lost among them: its difference, {:+.4} mGal, is {} of {n},\n\
         and only its zone G shows it ({:+.4} mGal, {} zone-G difference). The ratio points to a\n\
         density of 2670 / {r1:.4} = {:.0} kg/m3.\n",
        if positive == n {
            format!("all {n}")
        } else {
            format!("{positive} of the {n}")
        },
        one.num(v21, "new_minus_legacy_mgal"),
        nth(rank_by_size(&one, "new_minus_legacy_mgal", "V21"), "largest"),
        one.num(v21, zone_g),
        nth(g_rank_from_lowest, "lowest"),
        2670.0 / r1,
    ));
    let r2 = ratio(&two, "tc_mgal", "legacy_tc_mgal");
    let d2 = col(&two, "new_minus_legacy_mgal");
    let w21 = two.station_row("V21");
    let second = format!(
        "At 2403 kg/m3 the ratio is {r2:.4}, {} of the {n} differences are positive, and V21's is\n\
         {} of {n}: {:+.4} mGal, of which zone G holds {:+.4}.\n",
        d2.iter().filter(|&&d| d > 0.0).count(),
        nth(rank_by_size(&two, "new_minus_legacy_mgal", "V21"), "largest"),
        two.num(w21, "new_minus_legacy_mgal"),
        two.num(w21, zone_g),
    );
    (first, second)
}

/// What the map's GeoTIFF holds: its nodes and values, and its metadata.
fn map_readings(s: &Scratch) -> (String, String) {
    let ds = gdal::Dataset::open(s.path("sens/tc_map.tif")).expect("GDAL opens the map");
    let gt = ds.geo_transform().expect("a geotransform");
    let (cols, rows) = ds.raster_size();
    let band = ds.rasterband(1).expect("band 1");
    let nodata = band.no_data_value().expect("a nodata value");
    let values = band
        .read_as::<f32>((0, 0), (cols, rows), (cols, rows), None)
        .expect("read the map")
        .into_shape_and_vec()
        .1;
    let spacing = gt[1];
    let node = |k: usize| {
        (
            gt[0] + (k % cols) as f64 * spacing + 0.5 * spacing,
            gt[3] - (k / cols) as f64 * spacing - 0.5 * spacing,
        )
    };
    let data: Vec<(usize, f64)> = values
        .iter()
        .enumerate()
        .filter(|(_, &v)| v as f64 != nodata)
        .map(|(k, &v)| (k, v as f64))
        .collect();
    let (lo, hi) = extremes(&data);
    let stations = Csv::read(&root().join(STATIONS));
    let nearest = |(x, y): (f64, f64)| -> (String, f64) {
        (0..stations.rows.len())
            .map(|i| {
                let d = (stations.num(i, "x") - x).hypot(stations.num(i, "y") - y);
                (stations.get(i, "station").to_string(), d)
            })
            .min_by(|a, b| a.1.total_cmp(&b.1))
            .expect("stations")
    };
    let (first, last) = (node(0), node(cols * rows - 1));
    let (lo_at, hi_at) = (node(lo.0), node(hi.0));
    let (hi_station, hi_distance) = nearest(hi_at);
    let (lo_station, lo_distance) = nearest(lo_at);
    let reading = format!(
        "The grid has {cols} x {rows} nodes, {} of them with a value, from E {:.0} to {:.0} and N {:.0}\n\
         to {:.0} (the 30 m grid inset by the 10 km radius). The TC runs from {:.4} mGal at E {:.0},\n\
         N {:.0} ({:.1} km from {lo_station}) to {:.4} mGal at E {:.0}, N {:.0} ({:.0} m from {hi_station});\n\
         the median node has {:.4} mGal.\n",
        data.len(),
        first.0,
        last.0,
        last.1,
        first.1,
        lo.1,
        lo_at.0,
        lo_at.1,
        lo_distance / 1000.0,
        hi.1,
        hi_at.0,
        hi_at.1,
        hi_distance,
        median(&data.iter().map(|d| d.1).collect::<Vec<_>>()),
    );
    let mut md = String::from("| item | value in this map |\n|---|---|\n");
    md.push_str(&format!(
        "| band description | {} |\n",
        band.description().expect("a band description")
    ));
    md.push_str(&format!(
        "| band `UNITS` | {} |\n",
        band.metadata_item("UNITS", "").expect("a unit")
    ));
    md.push_str(&format!("| nodata | {nodata} |\n"));
    for item in ds.metadata_domain("").unwrap_or_default() {
        if let Some((key, value)) = item.split_once('=') {
            if key.starts_with("RINGSUM_") {
                md.push_str(&format!("| `{key}` | {value} |\n"));
            }
        }
    }
    (reading, md)
}
