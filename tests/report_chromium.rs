//! The demo report as a user sees it: rendered by headless Chromium (Debian's
//! `chromium` package at /usr/bin/chromium; `.ci/run` installs it). Checks
//! that the diagrams are in the rendered DOM and that the screenshot shows
//! them (non-white pixels, and the two line colours of the diagrams), and that
//! it prints to a few pages.
//! Skips with "SKIPPED: ..." when Chromium is absent.
//!
//! `CHORDLINE_UPDATE_SCREENSHOT=1 cargo test --release --test report_chromium`
//! also copies the screenshot to `docs/report-demo.png` (shown in the README).

mod common;

use std::path::{Path, PathBuf};
use std::process::{Command, Stdio};
use std::time::{Duration, Instant};

const CHROMIUM: &str = "/usr/bin/chromium";

/// Headless Chromium with a fresh profile and nothing that reaches the network.
fn browser(profile: &Path) -> Command {
    let mut c = Command::new(CHROMIUM);
    c.args([
        "--headless",
        "--no-sandbox",
        "--disable-gpu",
        "--disable-quic",
        "--no-first-run",
        "--disable-background-networking",
        "--disable-component-update",
        "--disable-sync",
        "--hide-scrollbars",
    ])
    .arg(format!("--user-data-dir={}", profile.display()));
    c
}

/// Run `c` for at most two minutes; its standard output.
fn run_bounded(mut c: Command, what: &str) -> Vec<u8> {
    let out_file = tempfile::NamedTempFile::new().unwrap();
    let mut child = c
        .stdout(Stdio::from(out_file.reopen().unwrap()))
        .stderr(Stdio::null())
        .spawn()
        .unwrap_or_else(|e| panic!("start chromium for {what}: {e}"));
    let t0 = Instant::now();
    loop {
        if let Some(status) = child.try_wait().unwrap() {
            assert!(status.success(), "chromium {what} failed: {status}");
            break;
        }
        if t0.elapsed() > Duration::from_secs(120) {
            let _ = child.kill();
            panic!("chromium {what} did not finish in 120 s");
        }
        std::thread::sleep(Duration::from_millis(100));
    }
    std::fs::read(out_file.path()).unwrap()
}

/// Whether pixel `p` (RGB) is within `tol` of colour `c` in every channel.
fn near(p: &[u8], c: [u8; 3], tol: u8) -> bool {
    p.iter().zip(c).all(|(&a, b)| a.abs_diff(b) <= tol)
}

#[test]
fn the_demo_report_renders_in_headless_chromium() {
    if !Path::new(CHROMIUM).exists() {
        common::skip::skipped(
            "report rendering in Chromium",
            &format!("{CHROMIUM} is absent (apt-get install chromium)"),
        );
        return;
    }
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("out");
    // As the README tour runs it: from the crate root, the path as typed.
    let o = common::chordline(&[
        "run",
        "demo-data/eastvale-survey.csv",
        "--chord",
        "20m",
        "--rail",
        "left",
        "--out",
        out.to_str().unwrap(),
    ]);
    assert!(o.status.success(), "{}", common::stderr(&o));
    let report = out.join("report.html");
    let url = format!("file://{}", report.display());

    let mut dump = browser(&dir.path().join("profile-dom"));
    dump.arg("--dump-dom").arg(&url);
    let dom = String::from_utf8_lossy(&run_bounded(dump, "--dump-dom")).into_owned();
    // Versines, curvature, residuals, plan, uncertainty.
    assert_eq!(dom.matches("<svg").count(), 5, "diagrams in the DOM");
    for svg in dom.split("<svg").skip(1) {
        let svg = &svg[..svg.find("</svg>").expect("closed svg")];
        assert!(svg.contains("<path d=\"M"), "a diagram without a line");
    }
    for text in [
        "Versines",
        "Curvature of the centreline",
        "3 arc R 618.9 m right",
        "12480.1±1.9",
    ] {
        assert!(dom.contains(text), "rendered report lacks {text:?}");
    }

    let shot = dir.path().join("report.png");
    let mut s = browser(&dir.path().join("profile-shot"));
    s.arg(format!("--screenshot={}", shot.display()))
        .arg("--window-size=1280,2000")
        .arg(&url);
    run_bounded(s, "--screenshot");
    let decoder = png::Decoder::new(std::io::BufReader::new(
        std::fs::File::open(&shot).expect("screenshot written"),
    ));
    let mut reader = decoder.read_info().unwrap();
    let mut buf = vec![0; reader.output_buffer_size().unwrap()];
    let info = reader.next_frame(&mut buf).unwrap();
    assert_eq!((info.width, info.height), (1280, 2000));
    let step = info.color_type.samples();
    assert!(
        step >= 3,
        "colour screenshot expected, got {:?}",
        info.color_type
    );
    let pixels: Vec<&[u8]> = buf[..info.buffer_size()]
        .chunks(step)
        .map(|p| &p[..3])
        .collect();
    let non_white = pixels.iter().filter(|p| p.iter().any(|&c| c < 245)).count();
    let blue = pixels
        .iter()
        .filter(|p| near(p, [0x00, 0x72, 0xB2], 40))
        .count();
    let vermillion = pixels
        .iter()
        .filter(|p| near(p, [0xD5, 0x5E, 0x00], 40))
        .count();
    let share = non_white as f64 / pixels.len() as f64;
    eprintln!(
        "screenshot: {:.1} % non-white, {blue} measured-line pixels, {vermillion} design-line pixels",
        100.0 * share
    );
    assert!(
        share > 0.05,
        "screenshot nearly blank: {:.2} % non-white",
        100.0 * share
    );
    // The measured (blue) and fitted (vermillion) lines of the first two
    // diagrams are in the first 2000 px: about 980 and 2400 pixels with Chromium
    // 156 (the design line lies over the measured one). The legend swatches
    // alone make about 100 of each.
    assert!(blue > 300, "measured lines not drawn: {blue} pixels");
    assert!(
        vermillion > 300,
        "design lines not drawn: {vermillion} pixels"
    );

    // Printed (Chromium's default paper here is Letter): a few pages, each of
    // the page size. 6 pages with Chromium 156.
    let pdf = dir.path().join("report.pdf");
    let mut p = browser(&dir.path().join("profile-pdf"));
    p.arg("--no-pdf-header-footer")
        .arg(format!("--print-to-pdf={}", pdf.display()))
        .arg(&url);
    run_bounded(p, "--print-to-pdf");
    let pdf = std::fs::read(&pdf).expect("pdf written");
    assert!(pdf.starts_with(b"%PDF-"));
    let text = String::from_utf8_lossy(&pdf);
    let pages: usize = text
        .split("/Count ")
        .nth(1)
        .and_then(|t| t.split(|c: char| !c.is_ascii_digit()).next())
        .and_then(|n| n.parse().ok())
        .expect("page count in the PDF");
    eprintln!("printed: {pages} pages");
    assert!((3..=10).contains(&pages), "{pages} pages");

    if std::env::var_os("CHORDLINE_UPDATE_SCREENSHOT").is_some() {
        let docs = PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("docs");
        std::fs::create_dir_all(&docs).unwrap();
        std::fs::copy(&shot, docs.join("report-demo.png")).unwrap();
        eprintln!("wrote docs/report-demo.png");
    }
}
