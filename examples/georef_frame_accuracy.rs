//! How far does the local plane frame (azimuthal equidistant about the start)
//! put a long track from where the same track lies on the WGS 84 ellipsoid?
//!
//! The "true" track is marched on the ellipsoid in 0.5 m geodesic steps whose
//! azimuth turns by the track's curvature (geodesic curvature = plan
//! curvature); the plane track is the exact `Alignment` mapped through
//! `Placement::to_lonlat`. Printed: the largest distance between the two.
//!
//! Run: `cargo run --release --example georef_frame_accuracy`

use chordline::geometry::{Alignment, Element, Pose, bearing_to_heading};
use chordline::georef::{LonLat, Placement};
use geographiclib_rs::{DirectGeodesic, Geodesic, InverseGeodesic};

fn march(al: &Alignment, origin: LonLat, bearing: f64, step: f64) -> Vec<(f64, f64, f64)> {
    let g = Geodesic::wgs84();
    let (mut lat, mut lon, mut azi) = (origin.lat, origin.lon, bearing);
    let mut out = vec![(0.0, lon, lat)];
    let n = (al.length() / step).round() as usize;
    for i in 0..n {
        let s = i as f64 * step;
        // Midpoint rule: turn by half the curvature before and after the step.
        azi -= (0.5 * al.curvature_at(s + 0.25 * step) * step).to_degrees();
        let (la, lo, az): (f64, f64, f64) = g.direct(lat, lon, azi, step);
        (lat, lon, azi) = (la, lo, az);
        azi -= (0.5 * al.curvature_at(s + 0.75 * step) * step).to_degrees();
        out.push((s + step, lon, lat));
    }
    out
}

fn main() {
    let origin = LonLat::new(9.0, 48.0).expect("valid origin");
    let pl = Placement::new(origin, 0.0).expect("valid placement");
    let g = Geodesic::wgs84();
    let bearing = 60.0;
    let start = Pose {
        x: 0.0,
        y: 0.0,
        heading: bearing_to_heading(bearing),
    };
    println!("route                          length_km  max_plane_vs_ellipsoid_mm");
    for &km in &[1.0, 10.0, 50.0, 100.0] {
        let l = km * 1000.0;
        let routes: Vec<(&str, Vec<Element>)> = vec![
            ("straight", vec![Element::straight(l)]),
            ("arc R = 20 km", vec![Element::arc(l, 20_000.0)]),
            (
                "S-curves R = 1200 m every 2 km",
                (0..(l / 1000.0) as usize)
                    .map(|i| Element::arc(1000.0, if i % 2 == 0 { 1200.0 } else { -1200.0 }))
                    .collect(),
            ),
        ];
        for (name, els) in routes {
            let al = Alignment::new(start, 0.0, els);
            let truth = march(&al, origin, bearing, 0.5);
            let mut worst: f64 = 0.0;
            for (s, lon, lat) in truth.iter().step_by(200) {
                let p = al.pose_at(*s);
                let (plon, plat) = pl.to_lonlat(p.x, p.y);
                let d: f64 = g.inverse(*lat, *lon, plat, plon);
                worst = worst.max(d);
            }
            println!("{name:<30} {km:>9.0} {:>26.3}", worst * 1000.0);
        }
    }
}
