//! alignment.geojson: structure, RFC 7946 rules, values against CHECKS.md 5.6,
//! and a read by GDAL's ogrinfo when it is installed.

#[path = "support/skip.rs"]
mod skip;
use std::process::Command;

use chordline::export::geojson::{ElementProps, GeoJsonError, GeoJsonInput, write_geojson};
use chordline::geometry::{Alignment, Element, Pose};
use chordline::georef::{LonLat, Placement, read_controls};
use chordline::integrate::{PositionResidual, Station};
use chordline::survey::Rail;
use serde_json::Value;

struct Case {
    placement: Placement,
    alignment: Alignment,
    props: Vec<ElementProps>,
    stations: Vec<Station>,
    controls: chordline::georef::ControlSet,
    checks: Vec<chordline::georef::ControlCheck>,
}

fn case() -> Case {
    // Origin (9°, 48°), heading north: 10 km of straight, so the first joint
    // is at the CHECKS.md 5.6 point (geographiclib Direct(48, 9, 0°, 10 000 m)
    // → latitude 48.089935176969°, longitude 9°).
    let placement = Placement::new(LonLat::new(9.0, 48.0).unwrap(), 0.0).unwrap();
    let alignment = Alignment::new(
        Pose {
            x: 0.0,
            y: 0.0,
            heading: std::f64::consts::FRAC_PI_2,
        },
        0.0,
        vec![
            Element::straight(10_000.0),
            Element::transition(60.0, 0.0, -1.0 / 450.0),
            Element::arc(200.0, -450.0),
            Element::straight(100.0),
        ],
    );
    let mut props = Vec::new();
    for i in 0..alignment.elements().len() {
        let s0 = alignment.element_start(i);
        props.push(ElementProps {
            start_chainage: s0,
            end_chainage: s0 + alignment.elements()[i].length,
            start_chainage_ci95: (i > 0).then_some(0.8),
            extra: vec![("length_se_m".into(), 0.4)],
            labels: vec![("status".into(), "determined".into())],
        });
    }
    let stations: Vec<Station> = (0..=((alignment.length() / 25.0) as usize))
        .map(|i| {
            let s = i as f64 * 25.0;
            let p = alignment.pose_at(s);
            Station {
                chainage: s,
                versine: Some(0.0),
                rail: Rail::Left,
                curvature: alignment.curvature_at(s),
                heading: p.heading,
                x: p.x,
                y: p.y,
                rail_x: p.x,
                rail_y: p.y,
                position_sd: 0.01,
                heading_sd: 1e-5,
            }
        })
        .collect();
    let (lon1, lat1) = placement.to_lonlat(0.0, 5000.0);
    let text = format!("id,chainage_m,lon_deg,lat_deg\nA,0,9.0,48.0\nB,5000,{lon1:.9},{lat1:.9}\n");
    let (controls, _) = read_controls(text.as_bytes(), "cp.csv", None).unwrap();
    let res = vec![
        PositionResidual {
            id: "A".into(),
            dx: 0.001,
            dy: -0.002,
            normalised: 0.2,
        },
        PositionResidual {
            id: "B".into(),
            dx: -0.001,
            dy: 0.002,
            normalised: 0.2,
        },
    ];
    let (checks, _) = controls.assess(&res, &[]);
    Case {
        placement,
        alignment,
        props,
        stations,
        controls,
        checks,
    }
}

fn write(c: &Case) -> Vec<u8> {
    let mut out = Vec::new();
    write_geojson(
        &mut out,
        &GeoJsonInput {
            placement: &c.placement,
            stations: &c.stations,
            design: Some((&c.alignment, &c.props)),
            controls: Some((&c.controls, &c.checks)),
        },
    )
    .unwrap();
    out
}

fn features<'a>(doc: &'a Value, kind: &str) -> Vec<&'a Value> {
    doc["features"]
        .as_array()
        .unwrap()
        .iter()
        .filter(|f| f["properties"]["feature"] == kind)
        .collect()
}

#[test]
fn document_follows_rfc_7946_and_the_checks() {
    let c = case();
    let doc: Value = serde_json::from_slice(&write(&c)).unwrap();
    assert_eq!(doc["type"], "FeatureCollection");
    assert!(doc.get("crs").is_none(), "RFC 7946 §4: no crs member");
    let bbox = doc["bbox"].as_array().unwrap();
    assert_eq!(bbox.len(), 4);
    assert!(bbox[0].as_f64() <= bbox[2].as_f64() && bbox[1].as_f64() <= bbox[3].as_f64());
    assert_eq!(features(&doc, "measured_centreline").len(), 1);
    assert_eq!(features(&doc, "element").len(), 4);
    assert_eq!(features(&doc, "joint").len(), 3);
    assert_eq!(features(&doc, "control").len(), 2);

    // Every coordinate: [lon, lat], at most 7 decimals.
    let mut n = 0;
    for f in doc["features"].as_array().unwrap() {
        let g = &f["geometry"];
        let pts: Vec<&Value> = match g["type"].as_str().unwrap() {
            "Point" => vec![&g["coordinates"]],
            "LineString" => g["coordinates"].as_array().unwrap().iter().collect(),
            t => panic!("unexpected geometry {t}"),
        };
        for p in pts {
            let p = p.as_array().unwrap();
            assert_eq!(p.len(), 2);
            for v in p {
                let v = v.as_f64().unwrap();
                assert!(((v * 1e7).round() - v * 1e7).abs() < 1e-4, "{v}");
                n += 1;
            }
            let (lon, lat) = (p[0].as_f64().unwrap(), p[1].as_f64().unwrap());
            assert!(
                (8.9..9.1).contains(&lon) && (47.9..48.2).contains(&lat),
                "order lon, lat"
            );
        }
    }
    assert!(n > 20_000);

    // CHECKS.md 5.6 (geographiclib 2.1): the first joint, 10 km due north of
    // (9°, 48°), is at latitude 48.089935176969° → 48.0899352 at 7 decimals.
    let j = features(&doc, "joint")[0];
    assert_eq!(j["properties"]["joint"], "straight-transition");
    assert_eq!(j["geometry"]["coordinates"][0].as_f64().unwrap(), 9.0);
    assert_eq!(
        j["geometry"]["coordinates"][1].as_f64().unwrap(),
        48.0899352
    );
    assert_eq!(j["properties"]["chainage_m"].as_f64().unwrap(), 10_000.0);
    assert_eq!(j["properties"]["chainage_ci95_m"].as_f64().unwrap(), 0.8);

    // Element properties: signed radii, null for a straight end.
    let e2 = features(&doc, "element")[1];
    assert_eq!(e2["properties"]["kind"], "transition");
    assert!(e2["properties"]["start_radius_m"].is_null());
    assert_eq!(e2["properties"]["end_radius_m"].as_f64().unwrap(), -450.0);
    assert_eq!(e2["properties"]["length_se_m"].as_f64().unwrap(), 0.4);
    assert_eq!(e2["properties"]["status"], "determined");
    // The element starts heading due north.
    let b = e2["properties"]["start_bearing_deg"].as_f64().unwrap();
    assert!(b.abs() < 1e-6 || (b - 360.0).abs() < 1e-6, "{b}");
    // Sampling: at most 1 m apart, ends included: 60 m → 61 points.
    assert_eq!(e2["geometry"]["coordinates"].as_array().unwrap().len(), 61);

    // Control points come back where the file put them (9 decimals in, 7 out).
    let cb = features(&doc, "control")[1];
    let (lon1, lat1) = c.placement.to_lonlat(0.0, 5000.0);
    let g = cb["geometry"]["coordinates"].as_array().unwrap();
    assert!((g[0].as_f64().unwrap() - lon1).abs() < 6e-8);
    assert!((g[1].as_f64().unwrap() - lat1).abs() < 6e-8);
    assert_eq!(cb["properties"]["flagged"], false);
    assert_eq!(cb["properties"]["line"], 3);
    assert_eq!(
        cb["properties"]["residual_north_m"].as_f64().unwrap(),
        0.002
    );
}

#[test]
fn nothing_is_written_for_nan_or_mismatched_input() {
    let mut c = case();
    c.stations[7].x = f64::NAN;
    let mut out = Vec::new();
    let e = write_geojson(
        &mut out,
        &GeoJsonInput {
            placement: &c.placement,
            stations: &c.stations,
            design: None,
            controls: None,
        },
    )
    .unwrap_err();
    assert!(
        matches!(e, GeoJsonError::NotFinite(ref w) if w.contains("175")),
        "{e}"
    );
    assert!(out.is_empty());

    let c = case();
    let mut out = Vec::new();
    let e = write_geojson(
        &mut out,
        &GeoJsonInput {
            placement: &c.placement,
            stations: &c.stations,
            design: Some((&c.alignment, &c.props[..2])),
            controls: None,
        },
    )
    .unwrap_err();
    assert!(matches!(
        e,
        GeoJsonError::Mismatch {
            props: 2,
            elements: 4
        }
    ));
    assert!(out.is_empty());
    let mut bad = c.props.clone();
    bad[1].extra.push(("radius_se_m".into(), f64::INFINITY));
    let e = write_geojson(
        &mut out,
        &GeoJsonInput {
            placement: &c.placement,
            stations: &c.stations,
            design: Some((&c.alignment, &bad)),
            controls: None,
        },
    )
    .unwrap_err();
    assert!(e.to_string().contains("radius_se_m"), "{e}");
    assert!(out.is_empty());
}

#[test]
fn gdal_reads_the_file() {
    let ogrinfo = std::path::Path::new("/usr/bin/ogrinfo");
    let found = ogrinfo.exists()
        || Command::new("ogrinfo")
            .arg("--version")
            .output()
            .is_ok_and(|o| o.status.success());
    if !found {
        skip::skipped(
            "gdal_reads_the_file",
            "GDAL's ogrinfo is not installed (apt-get install gdal-bin)",
        );
        return;
    }
    let c = case();
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("alignment.geojson");
    std::fs::write(&path, write(&c)).unwrap();
    let out = Command::new("ogrinfo")
        .args(["-ro", "-al", "-so"])
        .arg(&path)
        .output()
        .unwrap();
    let text = String::from_utf8_lossy(&out.stdout);
    assert!(
        out.status.success(),
        "{text}{}",
        String::from_utf8_lossy(&out.stderr)
    );
    assert!(text.contains("Feature Count: 10"), "{text}");
    assert!(text.contains("WGS 84"), "{text}");
    // The joint as GDAL reads it: CHECKS.md 5.6 (geographiclib 2.1), 7 decimals.
    let out = Command::new("ogrinfo")
        .args(["-ro", "-al", "-where", "feature = 'joint'"])
        .arg(&path)
        .output()
        .unwrap();
    let text = String::from_utf8_lossy(&out.stdout);
    assert!(text.contains("POINT (9.0 48.0899352)"), "{text}");
    assert!(text.contains("straight-transition"), "{text}");
}
