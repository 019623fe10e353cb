//! The command-line part of the catalogue: options, control files, design
//! files and output folders, each run through the binary in a scratch copy
//! of `tests/fixtures/cli/`, with the exact message it must print to stderr
//! and the exit code. `tests/fixtures/README.md` lists the same cases.

use std::path::{Path, PathBuf};
use std::process::Command;

/// (what, arguments, exit code, exact stderr)
pub const CLI_CASES: &[(&str, &[&str], i32, &str)] = &[
    (
        "negative chord",
        &[
            "run",
            "survey.csv",
            "--chord",
            "-20m",
            "--rail",
            "left",
            "--out",
            "o",
        ],
        1,
        "error: invalid value '-20m' for '--chord <CHORD>': '-20m' must be a positive, finite length\n\nFor more information, try '--help'.",
    ),
    (
        "gauge 0mm",
        &[
            "run",
            "survey.csv",
            "--chord",
            "20m",
            "--rail",
            "left",
            "--out",
            "o",
            "--gauge",
            "0mm",
        ],
        1,
        "error: invalid value '0mm' for '--gauge <GAUGE>': '0mm' is not a track gauge: gauges run from about 381 mm (15 in) to 1676 mm (5 ft 6 in); give the distance between the running edges of the rails, e.g. 1435mm (standard gauge) or 1000mm\n\nFor more information, try '--help'.",
    ),
    (
        "gauge 3000mm",
        &[
            "run",
            "survey.csv",
            "--chord",
            "20m",
            "--rail",
            "left",
            "--out",
            "o",
            "--gauge",
            "3000mm",
        ],
        1,
        "error: invalid value '3000mm' for '--gauge <GAUGE>': '3000mm' is not a track gauge: gauges run from about 381 mm (15 in) to 1676 mm (5 ft 6 in); give the distance between the running edges of the rails, e.g. 1435mm (standard gauge) or 1000mm\n\nFor more information, try '--help'.",
    ),
    (
        "gauge 10m",
        &[
            "run",
            "survey.csv",
            "--chord",
            "20m",
            "--rail",
            "left",
            "--out",
            "o",
            "--gauge",
            "10m",
        ],
        1,
        "error: invalid value '10m' for '--gauge <GAUGE>': '10m' is not a track gauge: gauges run from about 381 mm (15 in) to 1676 mm (5 ft 6 in); give the distance between the running edges of the rails, e.g. 1435mm (standard gauge) or 1000mm\n\nFor more information, try '--help'.",
    ),
    (
        "negative reading sd",
        &[
            "run",
            "survey.csv",
            "--chord",
            "20m",
            "--rail",
            "left",
            "--out",
            "o",
            "--reading-sd",
            "-1mm",
        ],
        1,
        "error: invalid value '-1mm' for '--reading-sd <READING_SD>': '-1mm' is below zero; give a length of zero or more, e.g. 1mm\n\nFor more information, try '--help'.",
    ),
    (
        "fixed NaN",
        &[
            "run",
            "survey.csv",
            "--chord",
            "20m",
            "--rail",
            "left",
            "--out",
            "o",
            "--fixed",
            "NaN",
        ],
        1,
        "error: invalid value 'NaN' for '--fixed <CH,CH,..>': 'NaN' is not a finite chainage: write a number, e.g. 4200 (with a unit where one is asked for)\n\nFor more information, try '--help'.",
    ),
    (
        "fixed before the survey",
        &[
            "run",
            "survey.csv",
            "--chord",
            "20m",
            "--rail",
            "left",
            "--out",
            "o",
            "--fixed",
            "-100",
        ],
        1,
        "error: --fixed -100: the chainage is outside the survey, which runs from 12310 to 13470 m; give fixed points within the survey (in its chainage unit, or with m or ft)",
    ),
    (
        "fixed after the survey",
        &[
            "run",
            "survey.csv",
            "--chord",
            "20m",
            "--rail",
            "left",
            "--out",
            "o",
            "--fixed",
            "12500,99999",
        ],
        1,
        "error: --fixed 99999: the chainage is outside the survey, which runs from 12310 to 13470 m; give fixed points within the survey (in its chainage unit, or with m or ft)",
    ),
    (
        "fixed in a unit not read",
        &[
            "run",
            "survey.csv",
            "--chord",
            "20m",
            "--rail",
            "left",
            "--out",
            "o",
            "--fixed",
            "4200yd",
        ],
        1,
        "error: invalid value '4200yd' for '--fixed <CH,CH,..>': '4200yd' has an unknown unit: write the chainage as a number, in the survey's unit or with m or ft (e.g. 4200 or 4200m)\n\nFor more information, try '--help'.",
    ),
    (
        "chord with a typographic minus",
        &[
            "run",
            "survey.csv",
            "--chord",
            "\u{2212}20m",
            "--rail",
            "left",
            "--out",
            "o",
        ],
        1,
        "error: invalid value '−20m' for '--chord <CHORD>': '−20m' has a typographic minus sign (U+2212); type the minus as '-' (a hyphen)\n\nFor more information, try '--help'.",
    ),
    (
        "out to standard output",
        &[
            "run",
            "survey.csv",
            "--chord",
            "20m",
            "--rail",
            "left",
            "--out",
            "-",
        ],
        1,
        "error: --out names a folder, and a folder of several files cannot go to standard output (-); give a folder name, e.g. --out results (the summary is printed to standard output anyway)",
    ),
    (
        "force onto a folder holding the control file",
        &[
            "run",
            "survey.csv",
            "--chord",
            "20m",
            "--rail",
            "left",
            "--control",
            "held/control.csv",
            "--crs",
            "EPSG:25832",
            "--out",
            "held",
            "--force",
        ],
        1,
        "error: the output folder 'held' holds the input file 'held/control.csv', which replacing the folder would delete; choose another folder with --out",
    ),
    (
        "force onto a folder chordline did not write",
        &[
            "run",
            "survey.csv",
            "--chord",
            "20m",
            "--rail",
            "left",
            "--out",
            "mine",
            "--force",
        ],
        1,
        "error: the folder 'mine' was not written by chordline (it has no .chordline-output file), so --force does not replace it: it may hold your own files; choose a new folder with --out, or empty the folder yourself",
    ),
    (
        "force onto the working folder",
        &[
            "run",
            "survey.csv",
            "--chord",
            "20m",
            "--rail",
            "left",
            "--out",
            ".",
            "--force",
        ],
        1,
        "error: the output folder '.' holds the input file 'survey.csv', which replacing the folder would delete; choose another folder with --out",
    ),
    (
        "control: duplicate id",
        &[
            "run",
            "survey.csv",
            "--chord",
            "20m",
            "--rail",
            "left",
            "--control",
            "control_duplicate_id.csv",
            "--crs",
            "EPSG:25832",
            "--out",
            "o",
        ],
        1,
        "error: control_duplicate_id.csv:6: control point id 'CP2' is used twice (lines 5 and 6): give each point its own id, or delete the repeated line",
    ),
    (
        "control: semicolons",
        &[
            "run",
            "survey.csv",
            "--chord",
            "20m",
            "--rail",
            "left",
            "--control",
            "control_semicolon.csv",
            "--crs",
            "EPSG:25832",
            "--out",
            "o",
        ],
        1,
        "error: control_semicolon.csv:3: the header 'id;chainage_m;easting_m;northing_m;sd_m;note' is one field: this file separates its fields with semicolons, and a control-point file is comma-separated; save it with commas between fields and decimal points (e.g. chainage_m,lon_deg,lat_deg)",
    ),
    (
        "control: two points at one spot",
        &[
            "run",
            "survey.csv",
            "--chord",
            "20m",
            "--rail",
            "left",
            "--control",
            "control_coincident.csv",
            "--crs",
            "EPSG:25832",
            "--out",
            "o",
        ],
        1,
        "error: control_coincident.csv:7: control points 'CP3' (line 6) and 'CP4' (line 7) are at the same place but 410.000 m apart in chainage: one of them has the wrong coordinates or the wrong chainage; correct it or remove the line",
    ),
    (
        "simulate onto its design",
        &["simulate", "design.json", "--out", "design.json", "--force"],
        1,
        "error: --out design.json is the design file itself, which writing would overwrite; name another file (e.g. survey.csv)",
    ),
    (
        "simulate truth onto its design",
        &[
            "simulate",
            "design.json",
            "--out",
            "s.csv",
            "--truth",
            "design.json",
            "--force",
        ],
        1,
        "error: --truth design.json is the design file itself, which writing would overwrite; name another file (e.g. survey.csv)",
    ),
    (
        "simulate truth onto the survey",
        &[
            "simulate",
            "design.json",
            "--out",
            "s.csv",
            "--truth",
            "s.csv",
        ],
        1,
        "error: --truth s.csv is the survey file too; give the truth its own file (e.g. truth.csv)",
    ),
    (
        "simulate both to standard output",
        &["simulate", "design.json", "-", "--truth", "-"],
        1,
        "error: the survey and --truth cannot both go to standard output (-); write one of them to a file",
    ),
    (
        "simulate truth exists",
        &[
            "simulate",
            "design.json",
            "--out",
            "s.csv",
            "--truth",
            "survey.csv",
        ],
        1,
        "error: survey.csv already exists; pass --force to replace it, or choose another name",
    ),
    (
        "design: misspelt key in an element",
        &["simulate", "design_misspelt.json", "--out", "s.csv"],
        1,
        "error: design_misspelt.json: element 3: unknown field \"radus\", expected one of \"kind\", \"length\", \"radius\", \"r_start\", \"r_end\"; check the spelling, or remove the key (the keys are listed in the README, section Design files)",
    ),
    (
        "design: unknown top-level key",
        &["simulate", "design_unknown_key.json", "--out", "s.csv"],
        1,
        "error: design_unknown_key.json: line 51, column 8: unknown field \"chord\", expected one of \"elements\", \"chord_m\", \"spacing_m\", \"rail\", \"gauge_m\", \"noise_mm\", \"bias_mm\", \"resolution_mm\", \"irregularity_mm\", \"seed\", \"units\", \"marking\", \"start_chainage_m\", \"chord_ft\", \"spacing_ft\", \"gauge_in\", \"noise_in\", \"bias_in\", \"resolution_in\", \"irregularity_in\", \"start_chainage_ft\", \"chord_behind_m\", \"chord_behind_ft\", \"description\"; check the spelling, or remove the key (the keys are listed in the README, section Design files)",
    ),
    (
        "design: 10^9 m straight",
        &["simulate", "design_huge_straight.json", "--out", "s.csv"],
        1,
        "error: the design is 1000000000 m long along the rail with a mark every 10 m, 100000001 marks: more than the 10000000 that simulate writes; shorten the design or widen --spacing",
    ),
    (
        "tiny spacing",
        &[
            "simulate",
            "design.json",
            "--out",
            "s.csv",
            "--spacing",
            "0.000001m",
            "--chord",
            "0.00002m",
        ],
        1,
        "error: the design is 1180 m long along the rail with a mark every 0.000001 m, 1180000001 marks: more than the 10000000 that simulate writes; shorten the design or widen --spacing",
    ),
    (
        "design: 0.5 m radius",
        &["simulate", "design_tiny_radius.json", "--out", "s.csv"],
        1,
        "error: element 2 has a radius of 0.5 m, too sharp for a chord of 20 m read 0.7175 m from the centreline: the chord would not fit on the rail; give radii of at least 10.7175 m",
    ),
    (
        "design: huge start chainage",
        &["simulate", "design_huge_chainage.json", "--out", "s.csv"],
        1,
        "error: start_chainage_m 1000000000000000 is too large: at that size marks 10 m apart cannot be told apart in a chainage; give a start chainage of at most 1000000000 m",
    ),
    (
        "design: metres in an imperial file",
        &[
            "simulate",
            "design_imperial_with_metres.json",
            "--out",
            "s.csv",
        ],
        1,
        "error: design_imperial_with_metres.json: chord_m: \"chord_m\" is in metres, but the file says \"units\": \"imperial\": every length of a design is in the units it states (element lengths and radii in feet); write \"chord_ft\", or set \"units\": \"metric\" and give every length in metres; a design in metres can still give a survey in feet: leave out \"units\" and pass --chord in feet (e.g. --chord 62ft)",
    ),
    (
        "design: feet in a metric file",
        &["simulate", "design_metric_with_feet.json", "--out", "s.csv"],
        1,
        "error: design_metric_with_feet.json: chord_ft: \"chord_ft\" is in feet, but the file gives no \"units\", so it is metric: every length of a design is in the units it states (element lengths and radii in metres); write \"chord_m\", or set \"units\": \"imperial\" and give every length in feet",
    ),
    (
        "design: unknown units",
        &["simulate", "design_unknown_units.json", "--out", "s.csv"],
        1,
        "error: design_unknown_units.json: units: 'feet' is not a unit system; use \"metric\" (metres and millimetres) or \"imperial\" (feet and inches)",
    ),
    (
        "design: imperial radius too sharp (in feet)",
        &["simulate", "design_imperial_tight.json", "--out", "s.csv"],
        1,
        "error: element 2 has a radius of 25 ft, too sharp for a chord of 62 ft read 2.354 ft from the centreline: the chord would not fit on the rail; give radii of at least 33.354 ft",
    ),
    (
        "design: imperial spacing that does not divide the half chord",
        &["simulate", "design_imperial_spacing.json", "--out", "s.csv"],
        1,
        "error: the mark spacing 20 ft does not divide the half chord 31 ft; use e.g. 31 ft, 15.5 ft or 3.1 ft",
    ),
    (
        "refused run into new folders",
        &[
            "run",
            "design.json",
            "--chord",
            "20m",
            "--rail",
            "left",
            "--out",
            "new1/new2/R",
        ],
        1,
        "error: design.json:1: no chainage column (the header has: {); name one column chainage_m or chainage_ft",
    ),
    (
        "chord arm of zero",
        &[
            "run",
            "survey.csv",
            "--chord",
            "4m+0m",
            "--rail",
            "left",
            "--out",
            "o",
        ],
        1,
        "error: invalid value '4m+0m' for '--chord <CHORD>': '4m+0m': the arm ahead of the measuring point: '0m' must be a positive, finite length; give the chord as one length read at its middle (e.g. 20m) or as its two arms BEHIND+AHEAD of the measuring point (e.g. 4m+6.5m)\n\nFor more information, try '--help'.",
    ),
    (
        "chord arms 1 to 25",
        &[
            "run",
            "survey.csv",
            "--chord",
            "0.4m+10m",
            "--rail",
            "left",
            "--out",
            "o",
        ],
        1,
        "error: invalid value '0.4m+10m' for '--chord <CHORD>': '0.4m+10m': one arm is more than 20 times the other, so the chord would read almost nothing of a curve; check the arms; give the chord as one length read at its middle (e.g. 20m) or as its two arms BEHIND+AHEAD of the measuring point (e.g. 4m+6.5m)\n\nFor more information, try '--help'.",
    ),
    (
        "chord arms the spacing does not divide",
        &[
            "run",
            "survey.csv",
            "--chord",
            "4m+6.5m",
            "--rail",
            "left",
            "--out",
            "o",
        ],
        1,
        "error: survey.csv: the readings are 10 m apart, and the arms of the chord of 4 m + 6.5 m (0.4 and 0.65 such spacings) are not both whole numbers of them, so the readings do not fall on the chord's ends; readings every 0.5 m or a whole fraction of it (0.25 m, 0.125 m, ...) fall on both ends; check --chord and the spacing",
    ),
    (
        "slews on an asymmetric chord",
        &[
            "run",
            "survey.csv",
            "--chord",
            "10m+30m",
            "--rail",
            "left",
            "--out",
            "o",
            "--slews",
        ],
        1,
        "error: survey.csv: slews are worked out for a chord read at its middle, and this chord is read 10.000 m from its rear end and 30.000 m from its front end; leave out --slews, --fixed, --max-slew, --limit and --design for this survey, or give a survey taken with a symmetric chord",
    ),
    (
        "simulate: spacing that does not divide the arms",
        &[
            "simulate",
            "design.json",
            "--chord",
            "4m+6.5m",
            "--spacing",
            "1m",
            "--out",
            "s.csv",
        ],
        1,
        "error: the mark spacing 1 m does not divide both arms of the chord (4 m behind the measuring point, 6.5 m ahead): the marks must fall on the chord's ends; use a spacing of 0.5 m or a whole fraction of it",
    ),
    (
        "design: arm behind outside the chord",
        &["simulate", "design_behind_outside.json", "--out", "s.csv"],
        1,
        "error: design_behind_outside.json: chord_behind_m: the arm behind the measuring point must be longer than zero and shorter than the chord (10 m); e.g. 4 with a chord of 10.5 reads 4 behind and 6.5 ahead",
    ),
];

/// A scratch copy of tests/fixtures/cli.
pub fn scratch() -> tempfile::TempDir {
    let src = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/fixtures/cli");
    let dir = tempfile::tempdir().expect("temporary folder");
    copy_tree(&src, dir.path());
    dir
}

fn copy_tree(from: &Path, to: &Path) {
    for e in std::fs::read_dir(from).expect("fixtures/cli") {
        let e = e.expect("entry");
        let target = to.join(e.file_name());
        if e.path().is_dir() {
            std::fs::create_dir_all(&target).expect("mkdir");
            copy_tree(&e.path(), &target);
        } else {
            std::fs::copy(e.path(), &target).expect("copy");
        }
    }
}

/// Run the binary in `dir` with `args`.
pub fn run_in(dir: &Path, args: &[&str]) -> (Option<i32>, String, String) {
    let o = Command::new(env!("CARGO_BIN_EXE_chordline"))
        .args(args)
        .current_dir(dir)
        .output()
        .expect("run chordline");
    (
        o.status.code(),
        String::from_utf8_lossy(&o.stdout).into_owned(),
        String::from_utf8_lossy(&o.stderr).into_owned(),
    )
}

/// Every file under `dir`, relative to it, sorted.
pub fn listing(dir: &Path) -> Vec<(PathBuf, Vec<u8>)> {
    let mut out = Vec::new();
    walk(dir, dir, &mut out);
    out.sort();
    out
}

fn walk(root: &Path, dir: &Path, out: &mut Vec<(PathBuf, Vec<u8>)>) {
    for e in std::fs::read_dir(dir).expect("read_dir") {
        let p = e.expect("entry").path();
        if p.is_dir() {
            // Folders count too: a refused run must not leave new ones.
            out.push((p.strip_prefix(root).unwrap_or(&p).to_path_buf(), Vec::new()));
            walk(root, &p, out);
        } else {
            let bytes = std::fs::read(&p).unwrap_or_default();
            out.push((p.strip_prefix(root).unwrap_or(&p).to_path_buf(), bytes));
        }
    }
}
