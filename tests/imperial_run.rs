//! An imperial survey in imperial throughout: a design in feet, simulated,
//! then run; the survey header, the terminal output (stdout and stderr), the
//! report and the stations file show feet and inches, never a metric figure
//! (issue "imperial surveys in imperial throughout").

mod common;
use std::path::Path;

/// Metric figures in `text`: a number followed by " mm", " m", " km" or
/// "1/km" as a word. Returns the offending snippets.
fn metric_figures(text: &str) -> Vec<String> {
    let b = text.as_bytes();
    let mut found = Vec::new();
    for unit in [" mm", " m", " km", " 1/km"] {
        let mut from = 0;
        while let Some(k) = text[from..].find(unit) {
            let at = from + k;
            from = at + unit.len();
            let before_is_digit = at > 0 && (b[at - 1].is_ascii_digit() || b[at - 1] == b')');
            let after_ok = text[at + unit.len()..]
                .chars()
                .next()
                .is_none_or(|c| !c.is_alphanumeric());
            if before_is_digit && after_ok {
                let s = at.saturating_sub(40);
                let e = (at + unit.len() + 10).min(text.len());
                found.push(String::from_utf8_lossy(&b[s..e]).into_owned());
            }
        }
    }
    found
}

/// `html` without its `<tag ...>...</tag>` blocks.
fn without_blocks(html: &str, tag: &str) -> String {
    let (open, close) = (format!("<{tag}"), format!("</{tag}>"));
    let mut out = String::new();
    let mut rest = html;
    while let Some(a) = rest.find(&open) {
        out.push_str(&rest[..a]);
        rest = rest[a..]
            .find(&close)
            .map_or("", |b| &rest[a + b + close.len()..]);
    }
    out.push_str(rest);
    out
}

/// The visible text of an HTML report (tags, styles and scripts removed).
fn visible_text(html: &str) -> String {
    let html = without_blocks(&without_blocks(html, "style"), "script");
    let mut text = String::new();
    let mut in_tag = false;
    for c in html.chars() {
        match c {
            '<' => in_tag = true,
            '>' => {
                in_tag = false;
                text.push(' ');
            }
            _ if !in_tag => text.push(c),
            _ => {}
        }
    }
    text.replace("&nbsp;", " ")
}

#[test]
fn the_scan_finds_metric_figures() {
    for t in [
        "gauge 1435 mm",
        "at chainage 12.5 m, then",
        "RMS (1.2, 3.4) mm",
        "0.42 1/km",
    ] {
        assert_eq!(metric_figures(t).len(), 1, "{t}");
    }
    for t in ["62 ft", "3 mmHg", "a m b", "0.5 in", "1/1000 ft"] {
        assert!(metric_figures(t).is_empty(), "{t}");
    }
    assert_eq!(
        visible_text("<style>p{}</style><p>9 m</p><script>1 m</script>").trim(),
        "9 m"
    );
}

#[test]
fn a_design_in_feet_runs_in_feet_and_inches_throughout() {
    let dir = tempfile::tempdir().unwrap();
    let design = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/designs/imperial_compound.json");
    let survey = dir.path().join("survey.csv");
    let truth = dir.path().join("truth.csv");
    let o = common::chordline(&[
        "simulate",
        design.to_str().unwrap(),
        "--out",
        survey.to_str().unwrap(),
        "--truth",
        truth.to_str().unwrap(),
        "--noise",
        "0.05in",
        "--resolution",
        "0.0625in",
        "--irregularity",
        "0.1in",
    ]);
    assert!(o.status.success(), "{}", common::stderr(&o));
    let text = std::fs::read_to_string(&survey).unwrap();
    let header: String = text
        .lines()
        .take_while(|l| l.starts_with('#'))
        .collect::<Vec<_>>()
        .join("\n");
    assert!(
        header.contains("chord 62 ft, marks every 31 ft"),
        "{header}"
    );
    assert!(header.contains("gauge 56.496063 in"), "{header}");
    assert!(header.contains("reading noise sd 0.05 in"), "{header}");
    assert!(metric_figures(&header).is_empty(), "{header}");
    assert!(
        text.contains("\nchainage_ft,versine_in\n31.000,"),
        "first mark 31 ft"
    );
    let t = std::fs::read_to_string(&truth).unwrap();
    assert!(t.starts_with("chainage_ft,centre_distance_ft,easting_ft,northing_ft,bearing_deg,curvature_1_per_km,irregularity_in,exact_versine_in,curvature_deg_per_100ft\n"));
    // The 1970 ft arc turns 100/1970 rad per 100 ft: 2.908°.
    assert!(t.contains(",-2.908"), "turn per 100 ft on the arc");

    // A gap (four lines deleted) and a stated noise below the rounding floor
    // bring the core's warnings, worded in SI, to the terminal.
    let mut lines: Vec<&str> = text.lines().collect();
    lines.drain(20..24);
    std::fs::write(&survey, lines.join("\n") + "\n").unwrap();
    let out = dir.path().join("out");
    let o = common::chordline(&[
        "run",
        survey.to_str().unwrap(),
        "--chord",
        "62ft",
        "--rail",
        "left",
        "--out",
        out.to_str().unwrap(),
        "--reading-sd",
        "0.01in",
        "--speed",
        "40mph",
    ]);
    assert!(o.status.success(), "{}", common::stderr(&o));
    let (so, se) = (common::stdout(&o), common::stderr(&o));
    assert!(so.contains("gauge 56.50 in"), "{so}");
    assert!(se.contains("readings rounded to 0.06250 in"), "{se}");
    assert!(se.contains("4 missing readings from chainage"), "{se}");
    for (what, t) in [("stdout", &so), ("stderr", &se)] {
        let bad = metric_figures(t);
        assert!(bad.is_empty(), "metric figures on {what}: {bad:?}");
    }
    let report = visible_text(&std::fs::read_to_string(out.join("report.html")).unwrap());
    let bad = metric_figures(&report);
    assert!(bad.is_empty(), "metric figures in report.html: {bad:?}");
    let st = std::fs::read_to_string(out.join("stations.csv")).unwrap();
    assert!(
        st.lines()
            .next()
            .unwrap()
            .ends_with(",curvature_deg_per_100ft")
    );
}

#[test]
fn stage_errors_of_a_survey_in_feet_are_worded_in_feet() {
    use chordline::integrate::IntegrateError;
    use chordline::pipeline::RunError;
    use chordline::units::LengthUnit;
    let e = || {
        RunError::Integrate(IntegrateError::VersineTooLarge {
            file: "s.csv".into(),
            line: 12,
            chainage: 304.8,
            versine_mm: 2540.0,
            chord: 18.8976,
        })
    };
    assert_eq!(
        e().in_survey_units(LengthUnit::Foot).to_string(),
        "s.csv:12: versine 100.00 in at chainage 1000 ft is too large for a 62.000 ft chord; check the versine unit (mm/in) and the chord length"
    );
    assert_eq!(
        e().in_survey_units(LengthUnit::Metre).to_string(),
        "s.csv:12: versine 2540.0 mm at chainage 304.8 m is too large for a 18.8976 m chord; check the versine unit (mm/in) and the chord length"
    );
}
