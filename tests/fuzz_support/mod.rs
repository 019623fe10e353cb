//! Generators of survey files for property tests: arbitrary bytes,
//! near-valid files (a valid header with random rows, garbage, blank cells,
//! stray separators) and valid files (which must read without error).
//!
//! Reusable from any test crate with `#[path = "fuzz_support/mod.rs"] mod
//! fuzz_support;` (e.g. a whole-pipeline fuzz feeding [`valid_survey`]'s files
//! through integration and fitting).

#![allow(dead_code, reason = "each test crate uses a different part")]

use proptest::prelude::*;

/// How many cases each property runs: `CHORDLINE_FUZZ_CASES` (default
/// `default`), so that `cargo test` stays fast and CI can run a longer pass.
pub fn cases(default: u32) -> u32 {
    std::env::var("CHORDLINE_FUZZ_CASES")
        .ok()
        .and_then(|s| s.trim().parse().ok())
        .unwrap_or(default)
}

/// A generated survey file and the set-up to read it with.
#[derive(Debug, Clone)]
pub struct GenSurvey {
    /// The file's bytes.
    pub bytes: Vec<u8>,
    /// Chord, metres.
    pub chord: f64,
    /// Whether the file has a side column (if not, read it with a `--rail`).
    pub has_side: bool,
    /// Number of reading lines written.
    pub rows: usize,
    /// The versines written, in metres (`None` for an empty cell), for valid files.
    pub versines: Vec<Option<f64>>,
}

/// Any bytes at all, biased towards text-like content.
pub fn arbitrary_bytes() -> impl Strategy<Value = Vec<u8>> {
    prop_oneof![
        proptest::collection::vec(any::<u8>(), 0..400),
        proptest::collection::vec(
            prop_oneof![
                Just(b','),
                Just(b';'),
                Just(b'\t'),
                Just(b'\n'),
                Just(b'\r'),
                Just(b'"'),
                Just(b'#'),
                Just(b'.'),
                Just(b'-'),
                Just(b'e'),
                b'0'..=b'9',
                any::<u8>(),
            ],
            0..600
        ),
    ]
}

fn cell_garbage() -> impl Strategy<Value = String> {
    prop_oneof![
        Just(String::new()),
        Just("NaN".to_string()),
        Just("-inf".to_string()),
        Just("1e999".to_string()),
        Just("#N/A".to_string()),
        Just("#DIV/0!".to_string()),
        Just("12,5".to_string()),
        Just("1.234,5".to_string()),
        Just("\"".to_string()),
        Just("\"a,b\"".to_string()),
        Just("\"open".to_string()),
        Just("12.5mm".to_string()),
        Just("1+000".to_string()),
        Just("-0".to_string()),
        Just("é".to_string()),
        "[ -~]{0,12}",
        any::<f64>().prop_map(|v| v.to_string()),
        (-1e6f64..1e6).prop_map(|v| format!("{v:e}")),
    ]
}

/// A valid header and rows that are mostly plausible, with garbage, blank
/// cells, repeated or backwards chainages, extra or missing separators and
/// occasional truncation mixed in.
pub fn near_valid_survey() -> impl Strategy<Value = GenSurvey> {
    let header = (
        prop_oneof![
            8 => Just("chainage_m"),
            4 => Just("chainage_ft"),
            2 => Just("Chainage (m)"),
            1 => Just("chainage"),
        ],
        prop_oneof![
            8 => Just("versine_mm"),
            2 => Just("versine_m"),
            2 => Just("versine_in"),
            1 => Just("versine_ft"),
            1 => Just("versine_cm"),
        ],
        any::<bool>(),
        any::<bool>(),
        any::<bool>(),
        prop::sample::select(vec![',', ';', '\t']),
    );
    let rows = proptest::collection::vec(
        (
            0.0f64..1.0,
            -200.0f64..200.0,
            0u8..200,
            cell_garbage(),
            prop_oneof![
                30 => Just("R"),
                10 => Just("right"),
                5 => Just("L"),
                1 => Just(""),
                1 => Just("X"),
                1 => Just("outer"),
            ],
            "[ -~]{0,10}",
        ),
        0..60,
    );
    (
        header,
        rows,
        prop_oneof![
            10 => Just(20.0),
            5 => Just(10.0),
            5 => Just(18.8976),
            1 => Just(0.0),
            1 => Just(-5.0),
        ],
        1u32..5,
        any::<bool>(),
        any::<bool>(),
        0usize..10_000,
    )
        .prop_map(
            |((ch, vs, side, note, extra, d), rows, chord, m, crlf, bom, cut)| {
                let mut s = String::new();
                if bom {
                    s.push('\u{feff}');
                }
                s.push_str("# generated\n");
                let mut cols = vec![ch.to_string(), vs.to_string()];
                if side {
                    cols.push("side".into());
                }
                if note {
                    cols.push("note".into());
                }
                if extra {
                    cols.push("temp_c".into());
                }
                s.push_str(&cols.join(&d.to_string()));
                s.push('\n');
                let spacing = if chord > 0.0 {
                    chord / 2.0 / m as f64
                } else {
                    1.0
                };
                let mut written = 0;
                for (i, (jitter, v, what, garbage, sd, nt)) in rows.iter().enumerate() {
                    let mut chainage = 1000.0 + i as f64 * spacing;
                    let mut cells = Vec::new();
                    match what {
                        0 => chainage -= 3.0 * spacing,
                        1 => chainage += jitter * spacing,
                        _ => {}
                    }
                    cells.push(if *what == 2 {
                        garbage.clone()
                    } else {
                        format!("{chainage}")
                    });
                    cells.push(match what {
                        3 => garbage.clone(),
                        4 => String::new(),
                        _ if d != ',' && *what == 5 => format!("{v:.1}").replace('.', ","),
                        _ => format!("{v:.1}"),
                    });
                    if side {
                        cells.push(sd.to_string());
                    }
                    if note {
                        cells.push(nt.clone());
                    }
                    if extra {
                        cells.push("14".into());
                    }
                    match what {
                        6 => {
                            cells.pop();
                        }
                        7 => cells.push("x".into()),
                        _ => {}
                    }
                    let sep = if *what == 8 { ',' } else { d };
                    s.push_str(&cells.join(&sep.to_string()));
                    s.push_str(if *what == 9 { "\n# comment\n\n" } else { "\n" });
                    written += 1;
                }
                if crlf {
                    s = s.replace('\n', "\r\n");
                }
                let mut bytes = s.into_bytes();
                if cut < bytes.len() && cut % 3 == 0 {
                    bytes.truncate(cut);
                }
                GenSurvey {
                    bytes,
                    chord,
                    has_side: side,
                    rows: written,
                    versines: Vec::new(),
                }
            },
        )
}

/// A valid survey file: chord 20 m, 10 m or 62 ft, readings every half
/// chord over m (m = 1..4), versines of a random smooth curvature (radii of
/// 150 m and more) plus noise, some empty cells, any of the accepted
/// layouts (delimiters, decimal commas, BOM, CRLF, comments, side and note
/// columns, units). Reading it must succeed.
pub fn valid_survey() -> impl Strategy<Value = GenSurvey> {
    (
        prop::sample::select(vec![(20.0, false), (10.0, false), (62.0 * 0.3048, true)]),
        1u32..5,
        3usize..300,
        proptest::collection::vec(-1.0f64..1.0, 8),
        prop::sample::select(vec!["mm", "m", "in", "ft"]),
        prop::sample::select(vec![',', ';', '\t']),
        (any::<bool>(), any::<bool>(), any::<bool>(), any::<bool>()),
        proptest::collection::vec(0u8..100, 300),
        -5000.0f64..5000.0,
    )
        .prop_map(
            |((chord, feet), m, n, coef, vunit, d, (side, note, crlf, bom), dice, start)| {
                let spacing = chord / 2.0 / m as f64;
                let len_unit = if feet { 0.3048 } else { 1.0 };
                let v_unit = match vunit {
                    "mm" => 1e-3,
                    "m" => 1.0,
                    "in" => 0.0254,
                    _ => 0.3048,
                };
                let decimals = match vunit {
                    "mm" => 1,
                    "m" => 4,
                    "in" => 3,
                    _ => 5,
                };
                let mut s = String::new();
                if bom {
                    s.push('\u{feff}');
                }
                s.push_str("# generated valid survey\n\n");
                let mut cols = vec![
                    format!("chainage_{}", if feet { "ft" } else { "m" }),
                    format!("versine_{vunit}"),
                ];
                if side {
                    cols.push("side".into());
                }
                if note {
                    cols.push("note".into());
                }
                s.push_str(&cols.join(&d.to_string()));
                s.push('\n');
                let total = n as f64 * spacing;
                let mut versines = Vec::new();
                // Whole-unit start in the file's unit so that the written
                // chainages are exact multiples of the spacing's decimals.
                let start_file = start.round();
                for i in 0..n {
                    let x = i as f64 * spacing / total.max(1.0);
                    // Smooth curvature from a few sine terms, |k| <= 1/150 m.
                    let k: f64 = coef
                        .iter()
                        .enumerate()
                        .map(|(j, c)| c * (std::f64::consts::PI * (j + 1) as f64 * x).sin())
                        .sum::<f64>()
                        / coef.len() as f64
                        / 150.0;
                    let noise = (dice[i % dice.len()] as f64 - 50.0) / 50.0 * 5e-4;
                    let v_m = chord * chord * k / 8.0 + noise;
                    let empty = dice[(i * 7 + 3) % dice.len()] < 5 && i != 0;
                    let v_file = v_m / v_unit;
                    let mut vtext = format!("{v_file:.decimals$}");
                    let written = vtext.parse::<f64>().ok().map(|v| v * v_unit);
                    if d == ';' {
                        vtext = vtext.replace('.', ",");
                    }
                    versines.push(if empty { None } else { written });
                    let ch_file = start_file + i as f64 * spacing / len_unit;
                    let mut chtext = format!("{ch_file:.6}");
                    if d == ';' {
                        chtext = chtext.replace('.', ",");
                    }
                    let mut cells = vec![chtext, if empty { String::new() } else { vtext }];
                    if side {
                        cells.push(
                            if dice[i % dice.len()] % 2 == 0 {
                                "L"
                            } else {
                                "r"
                            }
                            .into(),
                        );
                    }
                    if note {
                        cells.push(if i % 5 == 0 {
                            "\"bridge, pier 3\"".into()
                        } else {
                            String::new()
                        });
                    }
                    s.push_str(&cells.join(&d.to_string()));
                    s.push('\n');
                    if dice[(i * 3 + 1) % dice.len()] < 3 {
                        s.push_str("# remark\n");
                    }
                }
                if crlf {
                    s = s.replace('\n', "\r\n");
                }
                GenSurvey {
                    bytes: s.into_bytes(),
                    chord,
                    has_side: side,
                    rows: n,
                    versines,
                }
            },
        )
}
