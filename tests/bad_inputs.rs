//! The catalogue of bad and awkward survey files: every file under
//! `tests/fixtures/bad/` must be refused with exactly the message listed here,
//! and every file under `tests/fixtures/ok/` must be read with exactly the
//! warnings listed. `tests/fixtures/README.md` lists the same cases.

use std::path::{Path, PathBuf};

use chordline::survey::Rail;
use chordline::survey::read::{ReadOptions, read_survey_file};
use chordline::units::Length;

#[path = "bad_inputs/cli_cases.rs"]
mod cli_cases;

fn fixture(name: &str) -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("tests/fixtures")
        .join(name)
}

/// Read `path` with `--chord chord` and `--rail rail`, and return what the
/// user would see: the error, or the warnings one per line ("" for none).
fn outcome(path: &Path, chord: &str, rail: Option<Rail>) -> Result<String, String> {
    let chord: Length = chord
        .parse()
        .map_err(|e| format!("bad chord in test: {e}"))?;
    let opts = ReadOptions {
        rail,
        ..ReadOptions::new(chord.metres())
    };
    // Messages name the file relative to the fixtures folder, as a user
    // running from there would see it.
    match read_survey_file(path, &opts) {
        Ok((_, diags)) => Ok(diags
            .iter()
            .map(|d| d.to_string())
            .collect::<Vec<_>>()
            .join("\n")),
        Err(e) => Err(e.to_string()),
    }
}

/// The one data-driven check: `fixture` (relative to tests/fixtures, or an
/// absolute path to a generated file) read with the chord and rail given must
/// give exactly `expected`: the error message when `want_err`, else the
/// warnings joined by newlines. File names in messages are shown relative to
/// tests/fixtures (generated files: relative to their temporary folder).
fn check(
    fixture_name: &str,
    want_err: bool,
    chord: &str,
    rail: Option<Rail>,
    expected: &str,
) -> Result<(), String> {
    let path = fixture(fixture_name);
    let (is_err, text) = match outcome(&path, chord, rail) {
        Ok(t) => (false, relative(t)),
        Err(t) => (true, relative(t)),
    };
    let text = match path.parent() {
        Some(dir) if path.is_absolute() && !path.starts_with(fixture("")) => {
            text.replace(&format!("{}/", dir.display()), "")
        }
        _ => text,
    };
    if is_err != want_err || text != expected {
        return Err(format!(
            "{fixture_name}: expected {} {expected:?}\n{:>width$} got {} {text:?}",
            if want_err { "error" } else { "warnings" },
            "",
            if is_err { "error" } else { "warnings" },
            width = fixture_name.len()
        ));
    }
    Ok(())
}

/// Messages with the fixtures folder taken out of file names.
fn relative(s: String) -> String {
    let dir = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/fixtures");
    s.replace(&format!("{}/", dir.display()), "")
}

const L: Option<Rail> = Some(Rail::Left);

/// (fixture, chord, rail, expected)
const CASES: &[(&str, &str, Option<Rail>, &str)] = &[
    (
        "bad/all_missing.csv",
        "20m",
        L,
        "bad/all_missing.csv, column versine_mm (field 2): every versine cell is empty (4 lines), so there is nothing to compute; fill in the versine column (an empty cell means a missing reading)",
    ),
    (
        "bad/bad_side.csv",
        "20m",
        L,
        "bad/bad_side.csv:4, column side (field 3): side 'X' is neither L nor R; write L or R (or left/right) for the rail the reading was taken on, facing increasing chainage",
    ),
    (
        "bad/chainage_backwards.csv",
        "20m",
        L,
        "bad/chainage_backwards.csv:7, column chainage_m (field 1): chainage 1035 goes back from 1040 on line 6; readings must be in increasing chainage; sort the lines by chainage, or correct a typing error",
    ),
    (
        "bad/chainage_km.csv",
        "20m",
        L,
        "bad/chainage_km.csv:1, column chainage_km (field 1): column 'chainage_km' has the unit 'km', which is not read; rename it chainage_m or chainage_ft (converting the values if needed)",
    ),
    (
        "bad/chainage_no_unit.csv",
        "20m",
        L,
        "bad/chainage_no_unit.csv:1, column chainage (field 1): column 'chainage' has no unit; rename it chainage_m or chainage_ft",
    ),
    (
        "bad/chainage_repeated.csv",
        "20m",
        L,
        "bad/chainage_repeated.csv:5, column chainage_m (field 1): chainage 1020 repeats line 4; keep one reading per chainage (delete the duplicate line, or correct the chainage if it is a typing error)",
    ),
    (
        "bad/chainage_typing_error.csv",
        "20m",
        L,
        "bad/chainage_typing_error.csv:5, column chainage_m (field 1): chainage 1030 goes back from 10200 on line 4; readings must be in increasing chainage; the chainage on line 4 (10200) looks like the typing error",
    ),
    (
        "bad/comments_only.csv",
        "20m",
        L,
        "bad/comments_only.csv: the file has only comments and blank lines; add a header line such as chainage_m,versine_mm and then one line per reading",
    ),
    (
        "bad/decimal_comma_in_comma_file.csv",
        "20m",
        L,
        "bad/decimal_comma_in_comma_file.csv:4: the line has 3 fields but the header has 2; if you wrote decimal commas (12,5), write decimal points (12.5) or separate the fields with semicolons; put a note that contains commas in quotes (\"near bridge, left\")",
    ),
    (
        "bad/duplicate_column.csv",
        "20m",
        L,
        "bad/duplicate_column.csv:1, column versine_in (field 3): a second versine column (the first is field 2); keep only one",
    ),
    (
        "bad/empty.csv",
        "20m",
        L,
        "bad/empty.csv: the file is empty; a survey file needs a header line such as chainage_m,versine_mm and then one line per reading",
    ),
    (
        "bad/empty_chainage.csv",
        "20m",
        L,
        "bad/empty_chainage.csv:3, column chainage_m (field 1): the chainage is empty; every line needs a chainage (delete the line if it holds no reading)",
    ),
    (
        "bad/empty_side.csv",
        "20m",
        L,
        "bad/empty_side.csv:3, column side (field 3): the side is empty; write L or R for the rail this reading was taken on (facing increasing chainage)",
    ),
    (
        "bad/feet_spacing_metre_chord.csv",
        "20m",
        L,
        "bad/feet_spacing_metre_chord.csv: the readings are 31 ft apart, and half the chord of 20 m (65.617 ft), that is 32.808 ft, is not a whole number of such spacings (1.06 of them); readings must be every half chord or a whole fraction of it (32.808 ft, 16.404 ft, 8.202 ft, ...); check --chord (a chord of 62 ft fits this spacing)",
    ),
    (
        "bad/header_only.csv",
        "20m",
        L,
        "bad/header_only.csv:2: the file has a header but no readings; add one line per reading under the header, e.g. 0,12.5",
    ),
    (
        "bad/infinity_chainage.csv",
        "20m",
        L,
        "bad/infinity_chainage.csv:4, column chainage_m (field 1): 'inf' is not a finite number; write the chainage in metres, e.g. 1234.5",
    ),
    (
        "bad/latin1_note.csv",
        "20m",
        L,
        "bad/latin1_note.csv:5: byte 0xE9 is not UTF-8 text (the file looks like Latin-1 or Windows-1252 text); re-save the file as UTF-8 (in a spreadsheet: Save As, CSV UTF-8; in a text editor: encoding UTF-8)",
    ),
    (
        "bad/missing_versine_column.csv",
        "20m",
        L,
        "bad/missing_versine_column.csv:1: no versine column (the header has: chainage_m, offset_mm, side); name one column versine_mm, versine_m, versine_in or versine_ft",
    ),
    (
        "bad/mixed_delimiters.csv",
        "20m",
        L,
        "bad/mixed_delimiters.csv:3: the line has 1 field(s) but the header has 2, so the versine is missing; this line seems to separate fields with commas while the header uses semicolons; use one delimiter throughout",
    ),
    (
        "bad/nan.csv",
        "20m",
        L,
        "bad/nan.csv:4, column versine_mm (field 2): 'NaN' is not a finite number; write the versine in millimetres, e.g. 12.5, or leave the cell empty for a missing reading",
    ),
    (
        "bad/no_header.csv",
        "20m",
        L,
        "bad/no_header.csv:1: the first line '1000,0' looks like data, not a header; add a header line naming the columns, such as chainage_m,versine_mm",
    ),
    (
        "bad/no_rail.csv",
        "20m",
        None,
        "bad/no_rail.csv: the file has no side column, so the rail measured is unknown; say which rail the versines were read on with --rail left or --rail right (facing increasing chainage), or add a side column with L or R",
    ),
    (
        "bad/not_a_number.csv",
        "20m",
        L,
        "bad/not_a_number.csv:14, column versine_mm (field 2): 'l2.5' is not a number; write the versine in millimetres, e.g. 12.5, or leave the cell empty for a missing reading",
    ),
    (
        "bad/nul_bytes.csv",
        "20m",
        L,
        "bad/nul_bytes.csv:3: the line holds a NUL byte, so this is not a text file; export the survey as CSV text",
    ),
    (
        "bad/quoted_decimal_comma.csv",
        "20m",
        L,
        "bad/quoted_decimal_comma.csv:3, column versine_mm (field 2): '12,5' is not a number; this file separates fields with commas, so write a decimal point (12.5)",
    ),
    (
        "bad/rail_contradicts_side.csv",
        "20m",
        L,
        "bad/rail_contradicts_side.csv:2, column side (field 3): --rail left contradicts the side column, which says 'R' here; the side column names the rail of each reading, so leave out --rail, or correct the side column",
    ),
    (
        "bad/short_line.csv",
        "20m",
        L,
        "bad/short_line.csv:3: the line has 1 field(s) but the header has 3, so the versine is missing; if the reading is missing, keep its field and leave it empty (e.g. '1010,')",
    ),
    (
        "bad/side_outer.csv",
        "20m",
        L,
        "bad/side_outer.csv:2, column side (field 3): side 'outer' is neither L nor R; write L or R (or left/right) for the rail the reading was taken on, facing increasing chainage (inner and outer, high and low depend on the curve, so they do not name a rail)",
    ),
    (
        "bad/single_reading.csv",
        "20m",
        L,
        "bad/single_reading.csv:2: the survey has only 1 reading(s); at least 3 are needed to work out an alignment (a reading every half chord or closer)",
    ),
    (
        "bad/space_thousands.csv",
        "20m",
        L,
        "bad/space_thousands.csv:2, column chainage_m (field 1): '12 300' is not a number; write numbers without thousands separators and with one decimal separator, e.g. 1234,5",
    ),
    (
        "bad/spacing_break.csv",
        "20m",
        L,
        "bad/spacing_break.csv:5, column chainage_m (field 1): chainage jumps from 1020 (line 4) to 1046, 2.6 spacings of 10 m: the readings after it are off the chord pattern; check the chainages around it (a typing error or a mis-taped mark?); if the survey restarts on a new pattern, split the file there",
    ),
    (
        "bad/spacing_misfit.csv",
        "20m",
        L,
        "bad/spacing_misfit.csv: the readings are 3 m apart, and half the chord of 20 m is not a whole number of such spacings (3.33 of them); readings must be every half chord or a whole fraction of it (10 m, 5 m, 2.5 m, ...); check --chord (a chord of 6 m fits this spacing)",
    ),
    (
        "bad/spacing_too_wide.csv",
        "20m",
        L,
        "bad/spacing_too_wide.csv: the readings are 20 m apart, more than half the chord of 20 m; readings must be every half chord or a whole fraction of it (10 m, 5 m, 2.5 m, ...); check --chord (a chord of 40 m fits this spacing)",
    ),
    (
        "bad/spreadsheet_error_chainage.csv",
        "20m",
        L,
        "bad/spreadsheet_error_chainage.csv:4: the line starts with '#N/A', a spreadsheet error value in the chainage cell (lines starting with # are otherwise comments, so this reading would be lost); fix the cell in the spreadsheet and export again, or delete the line",
    ),
    (
        "bad/spreadsheet_error_versine.csv",
        "20m",
        L,
        "bad/spreadsheet_error_versine.csv:3, column versine_mm (field 2): '#DIV/0!' is not a number; this is a spreadsheet error value; fix the formula in the spreadsheet and export again, or leave the cell empty for a missing reading",
    ),
    (
        "bad/station_plus_chainage.csv",
        "20m",
        L,
        "bad/station_plus_chainage.csv:2, column chainage_m (field 1): '1+000' is not a number; write the chainage as one number of metres (1+000 is 1000)",
    ),
    (
        "bad/survey_reversed.csv",
        "20m",
        L,
        "bad/survey_reversed.csv:3, column chainage_m (field 1): chainage 1040 goes back from 1050 on line 2; readings must be in increasing chainage; if the survey ran the other way, sort the lines into increasing chainage (and check the side column, which names rails facing increasing chainage)",
    ),
    (
        "bad/thousands_separator.csv",
        "20m",
        L,
        "bad/thousands_separator.csv:4, column chainage_m (field 1): '1.020,5' is not a number; write numbers without thousands separators and with one decimal separator, e.g. 1234,5",
    ),
    (
        "bad/unclosed_quote.csv",
        "20m",
        L,
        "bad/unclosed_quote.csv:2: a quote (\") opens a cell but is not closed on this line; close it, or remove the quote mark (cells may not run over several lines)",
    ),
    (
        "bad/unit_in_cell.csv",
        "20m",
        L,
        "bad/unit_in_cell.csv:3, column versine_mm (field 2): '5mm' is not a number; write the number alone, e.g. 12.5: the unit (millimetres) comes from the column name, not 'mm'",
    ),
    (
        "bad/utf16.csv",
        "20m",
        L,
        "bad/utf16.csv: the file is UTF-16 text; re-save it as UTF-8 (in a spreadsheet: Save As, CSV UTF-8; in a text editor: encoding UTF-8)",
    ),
    (
        "bad/versine_impossible.csv",
        "20m",
        L,
        "bad/versine_impossible.csv:6, column versine_mm (field 2): the versine 4000 mm would mean a curve of radius 12.5 m on a chord of 20 m, which no railway has; check the value for a typing error, or leave the cell empty for a missing reading",
    ),
    (
        "bad/versine_in_holding_mm.csv",
        "62ft",
        L,
        "bad/versine_in_holding_mm.csv, column versine_in (field 2): a tenth of the versines are 240 in or more, which on a chord of 62 ft would mean curves of radius 24 ft or less; no railway has such curves; the values look like millimetres (radius about 610 ft): rename the column versine_mm",
    ),
    (
        "bad/versine_m_holding_mm.csv",
        "20m",
        L,
        "bad/versine_m_holding_mm.csv, column versine_m (field 2): a tenth of the versines are 40 m or more, which on a chord of 20 m would mean curves of radius 1 m or less; no railway has such curves; the values look like millimetres (radius about 1250 m): rename the column versine_mm",
    ),
    (
        "bad/versine_no_unit.csv",
        "20m",
        L,
        "bad/versine_no_unit.csv:1, column versine (field 2): column 'versine' has no unit; rename it versine_mm, versine_m, versine_in or versine_ft",
    ),
    (
        "bad/versine_unknown_unit.csv",
        "20m",
        L,
        "bad/versine_unknown_unit.csv:1, column versine_cm (field 2): column 'versine_cm' has the unit 'cm', which is not read; rename it versine_mm, versine_m, versine_in or versine_ft (converting the values if needed)",
    ),
    (
        "bad/workbook.csv",
        "20m",
        L,
        "bad/workbook.csv: this is a spreadsheet workbook (.xlsx or .ods), not CSV text; open it in the spreadsheet and use Save As, CSV UTF-8",
    ),
    ("ok/bom.csv", "20m", L, ""),
    ("ok/comments_and_blank_lines.csv", "20m", L, ""),
    ("ok/cr_line_ends.csv", "20m", L, ""),
    ("ok/crlf.csv", "20m", L, ""),
    ("ok/excel_sep_line.csv", "20m", L, ""),
    ("ok/dense_readings.csv", "20m", L, ""),
    (
        "ok/extra_columns.csv",
        "20m",
        L,
        "ok/extra_columns.csv:1, column temperature_c: warning: column 'temperature_c' (field 3) is not used (the columns read are chainage_m|chainage_ft, versine_mm|versine_m|versine_in|versine_ft, side and note)\nok/extra_columns.csv:1, column observer: warning: column 'observer' (field 4) is not used (the columns read are chainage_m|chainage_ft, versine_mm|versine_m|versine_in|versine_ft, side and note)",
    ),
    ("ok/feet_and_inches.csv", "62ft", None, ""),
    (
        "ok/gaps.csv",
        "20m",
        L,
        "ok/gaps.csv:6, column versine_mm: note: 2 of 14 versine cells are empty (missing readings, first on line 6); the alignment is bridged across them, less certainly\nok/gaps.csv:8, column chainage_m: warning: gap: no readings between chainage 1050 (line 7) and 1080, 2 station(s) missing (the alignment is bridged across the gap, less certainly; check that no lines were lost)",
    ),
    ("ok/header_variants.csv", "20m", None, ""),
    (
        "ok/inch_column_maybe_mm.csv",
        "62ft",
        L,
        "ok/inch_column_maybe_mm.csv:2, column versine_in: warning: a tenth of the versines are 40 in or more, which on a chord of 62 ft means curves of radius 144 ft or less, sharper than almost any railway; as millimetres they would mean radius about 3661 ft (if the values are millimetres, rename the column versine_mm; check --chord too)",
    ),
    (
        "ok/irregular_spacing.csv",
        "20m",
        L,
        "ok/irregular_spacing.csv:8, column chainage_m: warning: the spacing is irregular at 2 place(s), by up to 8% of the 10 m spacing (10.8 m from line 7 to line 8) (within the 25% tolerance, so the readings are used as if on the regular pattern; check the chainages)",
    ),
    (
        "ok/mm_column_holding_metres.csv",
        "20m",
        L,
        "ok/mm_column_holding_metres.csv:2, column versine_mm: warning: every versine in versine_mm is under 1 mm and most are written to 3 or more decimals, finer than a tape or gauge reads: these look like metres (as metres the largest, 0.04 m, means a radius of 1250 m on the chord of 20 m) (if the values are metres, rename the column versine_m; if they are millimetres on straight track, ignore this)",
    ),
    ("ok/no_final_newline.csv", "20m", L, ""),
    (
        "ok/odometer_scale.csv",
        "20m",
        L,
        "warning: the readings are on average 10.05 m apart rather than 10 m (the chord of 20 m over 2): the chainages run 0.5% long (check the chord length and how the chainages were measured: tape or odometer scale)",
    ),
    (
        "ok/outlier.csv",
        "20m",
        L,
        "ok/outlier.csv:10, column versine_mm: warning: the versine 75 mm is far from what its neighbours imply (about 40 mm): an outlier of 9 robust sigmas (check it for a reading or typing error; if it is wrong, correct it or leave the cell empty)",
    ),
    ("ok/plain.csv", "20m", None, ""),
    ("ok/quoted_notes.csv", "20m", L, ""),
    ("ok/semicolon_decimal_comma.csv", "20m", L, ""),
    (
        "ok/side_switch.csv",
        "20m",
        None,
        "ok/side_switch.csv:10, column side: note: the readings change from the left rail to the right rail here",
    ),
    ("ok/spreadsheet_padding.csv", "20m", L, ""),
    ("ok/tab_separated.csv", "20m", None, ""),
    (
        "bad/thousands_like_chainage.csv",
        "20m",
        L,
        "bad/thousands_like_chainage.csv: the readings are 0.01 m apart, closer than any chord survey reads (every 0.1 m at the closest); the chainages are written like 1.010, where '.' separates thousands in this file: write them without it (1010)",
    ),
    (
        "bad/chainage_in_km.csv",
        "20m",
        L,
        "bad/chainage_in_km.csv: the readings are 0.01 m apart, closer than any chord survey reads (every 0.1 m at the closest); if the chainages are kilometres (like 12.01 for 12010 m), write them in metres in the column chainage_m",
    ),
    (
        "ok/deleted_rows.csv",
        "20m",
        L,
        "ok/deleted_rows.csv:20, column chainage_m: warning: gap: no readings between chainage 1170 (line 19) and 1220, 4 station(s) missing (the alignment is bridged across the gap, less certainly; check that no lines were lost)",
    ),
    (
        "ok/sharp_versine.csv",
        "20m",
        L,
        "ok/sharp_versine.csv:8, column versine_mm: warning: the versine 3000 mm means a curve of radius 16.7 m on a chord of 20 m, sharper than almost any railway (only tramways and some sidings go below 60 m) (check the value for a typing error, the unit in the column name and --chord)\nok/sharp_versine.csv:8, column versine_mm: warning: the versine 3000 mm is far from what its neighbours imply (about 40 mm): an outlier of 59200 robust sigmas (check it for a reading or typing error; if it is wrong, correct it or leave the cell empty)",
    ),
    (
        "bad/gap_too_long.csv",
        "20m",
        L,
        "bad/gap_too_long.csv:6, column chainage_m (field 1): chainage jumps from 1030 (line 5) to 101030, a gap of 100000 m with no readings, more than 50 chords; nothing measured bridges a gap that long: if it is a typing error, correct the chainage; otherwise split the file there and run each part",
    ),
    (
        "bad/chainage_huge.csv",
        "20m",
        L,
        "bad/chainage_huge.csv:4, column chainage_m (field 1): chainage '1020000000000000' is too large to be a chainage (at most 1000000000 in this column): numbers this large lose the digits that tell readings apart; check the value, or subtract a constant from every chainage",
    ),
    (
        "bad/quoted_thousands.csv",
        "20m",
        L,
        "bad/quoted_thousands.csv:3, column chainage_m (field 1): '1,010' is not a number; this file separates fields with commas: if the comma is a decimal comma, write a decimal point (1.010); if it separates thousands, leave it out (1010)",
    ),
    (
        "bad/unicode_minus.csv",
        "20m",
        L,
        "bad/unicode_minus.csv:3, column versine_mm (field 2): '−5' is not a number; it has a typographic minus sign (−, U+2212), which word processors write; type the minus as a hyphen (-5)",
    ),
    (
        "bad/utf16_no_bom.csv",
        "20m",
        L,
        "bad/utf16_no_bom.csv: the file is UTF-16 text; re-save it as UTF-8 (in a spreadsheet: Save As, CSV UTF-8; in a text editor: encoding UTF-8)",
    ),
    ("ok/all_zero.csv", "20m", L, ""),
    (
        "ok/plain.csv",
        "200m",
        None,
        "warning: the readings are 10 m apart, 10 to the half chord of 200 m: a hand survey with taped marks reads every half chord or a few times more often (check --chord (a chord of 20 m reads every half chord at this spacing); for a trolley or vehicle give --marking wire)",
    ),
];

#[test]
fn catalogue() {
    let print = std::env::var_os("CHORDLINE_PRINT_CATALOGUE").is_some();
    let mut failures = Vec::new();
    let mut listed = std::collections::BTreeSet::new();
    for (f, chord, rail, expected) in CASES {
        listed.insert(f.to_string());
        if print {
            let got = outcome(&fixture(f), chord, *rail);
            let t = match got {
                Ok(t) | Err(t) => t,
            };
            let t = relative(t);
            println!(
                "    (\"{f}\", \"{chord}\", {}, {t:?}),",
                match rail {
                    None => "None",
                    Some(_) => "L",
                }
            );
        }
        if let Err(e) = check(f, f.starts_with("bad/"), chord, *rail, expected) {
            failures.push(e);
        }
    }
    // Every fixture file is in the table.
    for dir in ["bad", "ok"] {
        let mut names: Vec<_> = std::fs::read_dir(fixture(dir))
            .unwrap()
            .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
            .collect();
        names.sort();
        for n in names {
            let f = format!("{dir}/{n}");
            if !listed.contains(&f) {
                failures.push(format!("{f}: not in the catalogue"));
            }
        }
    }
    assert!(failures.is_empty(), "{}", failures.join("\n"));
}

/// Write `bytes` to `name` in a fresh temporary folder and check it.
fn check_generated(
    name: &str,
    bytes: &[u8],
    want_err: bool,
    chord: &str,
    rail: Option<Rail>,
    expected: &str,
) {
    let dir = tempfile::tempdir().expect("temporary folder");
    let path = dir.path().join(name);
    std::fs::write(&path, bytes).expect("write generated file");
    if let Err(e) = check(&path.display().to_string(), want_err, chord, rail, expected) {
        panic!("{e}");
    }
}

fn plain() -> Vec<u8> {
    std::fs::read(fixture("ok/plain.csv")).expect("ok/plain.csv")
}

#[test]
fn truncated_mid_line_is_refused() {
    // Cut the last line "1150,0,L," just after the chainage.
    let mut b = plain();
    let cut = b.len() - "0,L,\n".len();
    b.truncate(cut);
    assert!(
        b.ends_with(b"1150,"),
        "{:?}",
        String::from_utf8_lossy(&b[b.len() - 10..])
    );
    b.truncate(b.len() - 1);
    check_generated(
        "cut.csv",
        &b,
        true,
        "20m",
        None,
        "cut.csv:18: the last line has 1 of 4 fields and the file ends in the middle of it: the file may have been cut off; restore the whole file from its source, or delete the incomplete last line",
    );
}

#[test]
fn truncated_in_optional_fields_is_a_warning() {
    // Cut the last line "1150,0,L," before its note.
    let mut b = plain();
    b.truncate(b.len() - 2);
    check_generated(
        "cut.csv",
        &b,
        false,
        "20m",
        None,
        "cut.csv:18: warning: the last line has 3 of 4 fields and the file ends in the middle of it: the file may have been cut off (compare the end of the file with its source)",
    );
}

#[test]
fn truncated_inside_a_quoted_note_is_refused() {
    let mut b = plain();
    b.extend_from_slice(b"1160,0,L,\"bridge, pi");
    check_generated(
        "cut.csv",
        &b,
        true,
        "20m",
        None,
        "cut.csv:19: the last line has 4 of 4 fields and the file ends in the middle of it: the file may have been cut off; restore the whole file from its source, or delete the incomplete last line",
    );
}

#[test]
fn chord_zero_negative_or_nan_is_refused() {
    for chord in [0.0, -20.0, f64::NAN, f64::INFINITY] {
        let opts = ReadOptions {
            rail: L,
            ..ReadOptions::new(chord)
        };
        let e = read_survey_file(&fixture("ok/plain.csv"), &opts).unwrap_err();
        let want = format!(
            "the chord length {chord} m is not a positive length; give the chord the readings were taken with, e.g. --chord 20m or --chord 62ft"
        );
        assert!(e.to_string().ends_with(&want), "{e}");
    }
}

#[test]
fn missing_file_is_refused() {
    let e =
        read_survey_file(&fixture("bad/no_such_file.csv"), &ReadOptions::new(20.0)).unwrap_err();
    let msg = relative(e.to_string());
    assert!(
        msg.starts_with("bad/no_such_file.csv: cannot read the file: "),
        "{msg}"
    );
    assert!(
        msg.ends_with("; check the path and that you may read it"),
        "{msg}"
    );
}

#[test]
fn unnamed_column_with_values_is_a_warning() {
    let b = b"chainage_m,versine_mm,\n0,0,\n10,5,\n20,10,x\n30,15,\n";
    check_generated(
        "u.csv",
        b,
        false,
        "20m",
        L,
        "u.csv:4: warning: field 3 has values but no name in the header; they are not used (name the column in the header if it matters, e.g. side or note, or delete it)",
    );
}

#[test]
fn a_million_lines_are_read() {
    // Speed is measured by `cargo run --release --example survey_read_speed`;
    // here only that a large file reads completely and quietly.
    let n = 1_000_000usize;
    let mut s = String::with_capacity(n * 20);
    s.push_str("chainage_m,versine_mm\n");
    for i in 0..n {
        let v = 40.0 * (i as f64 * 0.001).sin();
        s.push_str(&format!("{:.2},{v:.1}\n", i as f64 * 0.25));
    }
    let dir = tempfile::tempdir().expect("temporary folder");
    let path = dir.path().join("big.csv");
    std::fs::write(&path, s).expect("write");
    // Readings every 0.25 m are a recording vehicle's (a taped hand survey
    // this dense gets a warning about --chord).
    let opts = ReadOptions {
        rail: L,
        marking: chordline::survey::Marking::Wire,
        ..ReadOptions::new(20.0)
    };
    let (survey, diags) = read_survey_file(&path, &opts).expect("reads");
    assert_eq!(survey.readings.len(), n);
    assert_eq!(survey.readings[n - 1].line, n + 1);
    assert!(diags.is_empty(), "{:?}", &diags[..diags.len().min(3)]);
}

#[test]
fn chord_longer_than_any_survey_is_refused() {
    let e = outcome(&fixture("ok/plain.csv"), "1000000000m", None).unwrap_err();
    assert_eq!(
        relative(e),
        "ok/plain.csv: the chord length 1000000000 m is longer than any chord a survey uses (at most 1000 m); give the chord the readings were taken with, e.g. --chord 20m or --chord 62ft"
    );
}

#[test]
fn a_huge_cell_is_quoted_short() {
    let mut s = String::from("chainage_m,versine_mm\n1000,0\n1010,");
    s.push_str(&"9x".repeat(5_000_000));
    s.push_str("\n1020,1\n");
    let text = "'9x9x9x9x9x9x9x9x9x9x9x9x9x9x9x9x9x9x9x9x… (10000000 characters)' is not a number";
    check_generated(
        "big_cell.csv",
        s.as_bytes(),
        true,
        "20m",
        L,
        &format!(
            "big_cell.csv:3, column versine_mm (field 2): {text}; write the versine in millimetres, e.g. 12.5, or leave the cell empty for a missing reading"
        ),
    );
}

#[test]
fn thousands_of_unused_columns_give_a_capped_list() {
    let n = 100_000;
    let mut s = String::from("chainage_m,versine_mm");
    for i in 0..n {
        s.push_str(&format!(",x{i}"));
    }
    s.push_str("\n1000,0\n1010,1\n1020,2\n");
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("wide.csv");
    std::fs::write(&path, s).unwrap();
    let (_, diags) = read_survey_file(
        &path,
        &ReadOptions {
            rail: L,
            ..ReadOptions::new(20.0)
        },
    )
    .unwrap();
    assert_eq!(diags.len(), 21, "{diags:?}");
    assert_eq!(
        diags[20].message,
        format!("{} more columns are not used (not listed)", n - 20)
    );
}

#[test]
fn a_dangling_link_or_a_folder_is_named_as_such() {
    let dir = tempfile::tempdir().unwrap();
    let link = dir.path().join("survey.csv");
    #[cfg(unix)]
    {
        std::os::unix::fs::symlink(dir.path().join("moved.csv"), &link).unwrap();
        let e = read_survey_file(&link, &ReadOptions::new(20.0)).unwrap_err();
        assert_eq!(
            e.to_string(),
            format!(
                "{}: this is a symbolic link to '{}', which does not exist; point the link at the survey file, or give the survey file's own path",
                link.display(),
                dir.path().join("moved.csv").display()
            )
        );
    }
    let e = read_survey_file(dir.path(), &ReadOptions::new(20.0)).unwrap_err();
    assert!(
        e.to_string()
            .contains("this is a folder, not a survey file"),
        "{e}"
    );
}

/// Lines deleted inside a curve take the path of empty versine cells: the
/// same stations, the same bridged geometry and the same (grown)
/// uncertainty, never a silent join of the neighbours.
#[test]
fn deleted_lines_are_bridged_like_empty_cells() {
    use chordline::pipeline::{Options, process};
    use chordline::survey::read::read_survey_bytes;
    let mut deleted = String::from("chainage_m,versine_mm\n");
    let mut empty = deleted.clone();
    for i in 0..40 {
        let c = 1000 + 10 * i;
        let v = if (8..32).contains(&i) { 62.5 } else { 0.0 };
        if (18..=21).contains(&i) {
            empty.push_str(&format!("{c},\n"));
        } else {
            deleted.push_str(&format!("{c},{v}\n"));
            empty.push_str(&format!("{c},{v}\n"));
        }
    }
    let ropts = ReadOptions {
        rail: L,
        ..ReadOptions::new(20.0)
    };
    let mut opts = Options::new(20.0, Rail::Left);
    opts.fit = None;
    let plan = |text: &str| {
        let (s, _) = read_survey_bytes("s.csv", text.as_bytes(), &ropts).unwrap();
        process(s, &opts).unwrap().plan
    };
    let (a, b) = (plan(&deleted), plan(&empty));
    assert_eq!(a.stations.len(), b.stations.len());
    let (ea, eb) = (a.stations.last().unwrap(), b.stations.last().unwrap());
    assert_eq!((ea.x, ea.y, ea.position_sd), (eb.x, eb.y, eb.position_sd));
    // The gap makes the end uncertain: far more than the 4 readings' worth
    // of noise a silent join would report.
    assert!(ea.position_sd > 1.0, "{}", ea.position_sd);
}

/// The command-line catalogue: each case prints exactly its message, exits
/// with its code, and leaves the scratch folder as it was (nothing written,
/// nothing lost).
#[test]
fn cli_catalogue() {
    let print = std::env::var_os("CHORDLINE_PRINT_CATALOGUE").is_some();
    let mut failures = Vec::new();
    for (what, args, code, expected) in cli_cases::CLI_CASES {
        let dir = cli_cases::scratch();
        let before = cli_cases::listing(dir.path());
        let (got_code, _, err) = cli_cases::run_in(dir.path(), args);
        let err = err.trim_end().to_string();
        if print {
            println!("{what}\t{err:?}");
        }
        if got_code != Some(*code) || err != *expected {
            failures.push(format!(
                "{what}: expected exit {code} and\n  {expected:?}\ngot exit {got_code:?} and\n  {err:?}"
            ));
        }
        if cli_cases::listing(dir.path()) != before {
            failures.push(format!("{what}: the refused run changed the folder"));
        }
    }
    assert!(failures.is_empty(), "{}", failures.join("\n"));
}

/// A process id that is surely not running: that of a child that has ended.
fn dead_pid() -> u32 {
    let mut c = std::process::Command::new("true")
        .spawn()
        .expect("run true");
    let pid = c.id();
    c.wait().expect("wait");
    pid
}

/// Leftovers of runs killed outright (`kill -9`): the next run into the
/// same folder removes a half-written folder, puts moved-aside results
/// back, and says so in a note.
#[test]
fn leftovers_of_killed_runs_are_tidied_and_named() {
    let dir = cli_cases::scratch();
    let run = [
        "run",
        "survey.csv",
        "--chord",
        "20m",
        "--rail",
        "left",
        "--out",
        "o",
    ];
    let pid = dead_pid();
    let partial = format!(".o.chordline-partial-{pid}-0");
    std::fs::create_dir(dir.path().join(&partial)).unwrap();
    std::fs::write(dir.path().join(&partial).join("stations.csv"), "half").unwrap();
    let (code, _, err) = cli_cases::run_in(dir.path(), &run);
    assert_eq!(code, Some(0), "{err}");
    let note = format!(
        "note: removed './{partial}', a half-written folder left by an earlier run that was stopped"
    );
    assert!(err.lines().any(|l| l == note), "{err}");
    // Killed between the two renames of a forced commit: results moved aside.
    let old = format!(".o.chordline-old-{pid}-1");
    std::fs::rename(dir.path().join("o"), dir.path().join(&old)).unwrap();
    let mut forced = run.to_vec();
    forced.push("--force");
    let (code, _, err) = cli_cases::run_in(dir.path(), &forced);
    assert_eq!(code, Some(0), "{err}");
    let note = "note: an earlier run was stopped while replacing 'o'; the results it had moved aside were put back";
    assert!(err.lines().any(|l| l == note), "{err}");
    let hidden: Vec<String> = std::fs::read_dir(dir.path())
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .filter(|n| n.starts_with(".o."))
        .collect();
    assert!(hidden.is_empty(), "left behind: {hidden:?}");
}

/// Three forced runs into one folder at the same time: each succeeds, the
/// folder is whole, and no hidden folder is left.
#[test]
fn concurrent_forced_runs_each_succeed_and_leave_nothing_hidden() {
    let dir = cli_cases::scratch();
    let args = [
        "run",
        "survey.csv",
        "--chord",
        "20m",
        "--rail",
        "left",
        "--out",
        "o",
        "--force",
    ];
    let (code, _, err) = cli_cases::run_in(dir.path(), &args);
    assert_eq!(code, Some(0), "{err}");
    let children: Vec<_> = (0..3)
        .map(|_| {
            std::process::Command::new(env!("CARGO_BIN_EXE_chordline"))
                .args(args)
                .current_dir(dir.path())
                .stdout(std::process::Stdio::null())
                .stderr(std::process::Stdio::piped())
                .spawn()
                .unwrap()
        })
        .collect();
    for c in children {
        let o = c.wait_with_output().unwrap();
        assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    }
    let names: Vec<String> = std::fs::read_dir(dir.path())
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .filter(|n| n.starts_with(".o."))
        .collect();
    assert!(names.is_empty(), "left behind: {names:?}");
    for f in [
        "stations.csv",
        "elements.csv",
        "report.html",
        ".chordline-output",
    ] {
        assert!(dir.path().join("o").join(f).exists(), "{f}");
    }
}

/// `--out` through a symbolic link with `--force`: the link stays a link and
/// the folder it points to holds the new results only.
#[cfg(unix)]
#[test]
fn a_forced_run_through_a_symlink_keeps_the_link() {
    let dir = cli_cases::scratch();
    let run = |out: &str, force: bool| {
        let mut a = vec![
            "run",
            "survey.csv",
            "--chord",
            "20m",
            "--rail",
            "left",
            "--out",
            out,
        ];
        if force {
            a.push("--force");
        }
        cli_cases::run_in(dir.path(), &a)
    };
    assert_eq!(run("real", false).0, Some(0));
    std::fs::write(dir.path().join("real/stale.txt"), "from before").unwrap();
    std::os::unix::fs::symlink("real", dir.path().join("link")).unwrap();
    let (code, _, err) = run("link", true);
    assert_eq!(code, Some(0), "{err}");
    let meta = std::fs::symlink_metadata(dir.path().join("link")).unwrap();
    assert!(meta.file_type().is_symlink(), "the link was replaced");
    assert!(dir.path().join("real/stations.csv").exists());
    assert!(
        !dir.path().join("real/stale.txt").exists(),
        "stale results left"
    );
}

/// A chord ten times what the spacing implies gives a warning that names
/// the chord that fits.
#[test]
fn a_chord_that_contradicts_the_spacing_is_warned() {
    let dir = cli_cases::scratch();
    let (code, _, err) = cli_cases::run_in(
        dir.path(),
        &[
            "run",
            "survey.csv",
            "--chord",
            "200m",
            "--rail",
            "left",
            "--out",
            "o",
        ],
    );
    assert_eq!(code, Some(0), "{err}");
    let w = "warning: the readings are 10 m apart, 10 to the half chord of 200 m: a hand survey with taped marks reads every half chord or a few times more often (check --chord (a chord of 20 m reads every half chord at this spacing); for a trolley or vehicle give --marking wire)";
    assert!(err.lines().any(|l| l == w), "{err}");
}

/// A track placed across the 180th meridian: refused by name (not "check the
/// free disk space"), nothing written.
#[test]
fn a_track_across_the_180th_meridian_is_named() {
    let dir = cli_cases::scratch();
    let before = cli_cases::listing(dir.path());
    let (code, _, err) = cli_cases::run_in(
        dir.path(),
        &[
            "run",
            "survey.csv",
            "--chord",
            "20m",
            "--rail",
            "left",
            "--out",
            "o",
            "--start-lonlat",
            "179.9995,10",
            "--start-bearing",
            "90",
        ],
    );
    assert_eq!(code, Some(1), "{err}");
    assert_eq!(
        err.lines().last().unwrap(),
        "error: cannot write the GeoJSON layers: the track crosses the 180th meridian, which this writer does not split (nothing was written); no output folder was written (earlier results were left as they were)"
    );
    assert_eq!(cli_cases::listing(dir.path()), before);
}

/// An all-zero survey (straight track read to the millimetre): the noise
/// floor of a 1 mm reading step applies, with a warning, so the position
/// after 800 m is not claimed to a tenth of a millimetre.
#[test]
fn an_all_zero_survey_takes_the_rounding_floor() {
    use chordline::pipeline::{Options, process};
    let (survey, _) = read_survey_file(
        &fixture("ok/all_zero.csv"),
        &ReadOptions {
            rail: L,
            ..ReadOptions::new(20.0)
        },
    )
    .unwrap();
    let mut opts = Options::new(20.0, Rail::Left);
    opts.fit = None;
    let r = process(survey, &opts).unwrap();
    let w = "warning: every versine is zero, so neither the rounding of the readings nor their noise shows; the reading standard deviation is taken as a reading step of 1.000 mm over √12 (state the reading standard deviation with --reading-sd (e.g. 1mm for a hand survey))";
    assert!(
        r.diagnostics.iter().any(|d| d.to_string() == w),
        "{:?}",
        r.diagnostics
    );
    assert!((r.plan.reading_sd - 1e-3 / 12f64.sqrt()).abs() < 1e-9);
    let first = r.plan.stations.first().unwrap();
    let last = r.plan.stations.last().unwrap();
    // The sd grows like the 1.5th power of the length; a 0.29 mm reading sd
    // over the survey gives millimetres at least, never a tenth of one.
    assert!(
        last.position_sd > 1e-3,
        "{} m over {} m",
        last.position_sd,
        last.chainage - first.chainage
    );
}
