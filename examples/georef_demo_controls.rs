//! Write an **invented** control-point file for the Eastvale demo: four
//! centreline points taken from `demo-data/eastvale-truth.csv`, placed on the
//! Earth at an invented spot (the demo line does not exist), given in
//! ETRS89 / UTM 32N with small made-up "GNSS" errors of a few millimetres.
//!
//! Run: `cargo run --example georef_demo_controls > demo-data/eastvale-control.csv`
//! then `chordline run demo-data/eastvale-survey.csv --chord 20m --rail left
//! --control demo-data/eastvale-control.csv --crs EPSG:25832 --out result`.

use chordline::georef::{Crs, LonLat, Placement};

fn main() -> Result<(), Box<dyn std::error::Error>> {
    let path =
        std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("demo-data/eastvale-truth.csv");
    let text = std::fs::read_to_string(&path)?;
    let mut rows: Vec<(f64, f64, f64)> = Vec::new();
    for line in text.lines().skip(1) {
        let f: Vec<&str> = line.split(',').collect();
        if f.len() >= 4 {
            rows.push((f[0].parse()?, f[2].parse()?, f[3].parse()?));
        }
    }
    // Invented placement: the demo's design frame (north up) starts here (track taken
    // on the ellipsoid, so no --height is needed with this file).
    let pl = Placement::new(LonLat::new(9.1234, 48.5678)?, 0.0)?;
    let crs = Crs::from_epsg(25832)?;
    // Invented picks and "GNSS errors" (east, north) in metres.
    let picks = [
        (12310.0, 0.004, -0.003),
        (12700.0, -0.006, 0.002),
        (13050.0, 0.002, 0.005),
        (13460.0, -0.003, -0.004),
    ];
    println!(
        "# INVENTED control points for the chordline demo (the Eastvale Branch does not exist)."
    );
    println!("# Track centreline positions in ETRS89 / UTM zone 32N: use with --crs EPSG:25832.");
    println!("id,chainage_m,easting_m,northing_m,sd_m,note");
    for (k, (ch, de, dn)) in picks.iter().enumerate() {
        let Some(&(_, x, y)) = rows.iter().find(|r| (r.0 - ch).abs() < 1e-6) else {
            return Err(format!("chainage {ch} not in the truth file").into());
        };
        let (lon, lat) = pl.to_lonlat(x, y);
        let (e, n) = crs.from_lonlat(lon, lat)?;
        println!(
            "CP{},{ch:.1},{:.3},{:.3},0.01,invented",
            k + 1,
            e + de,
            n + dn
        );
    }
    Ok(())
}
