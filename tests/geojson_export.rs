//! The GeoJSON layers: structure, RFC 7946 rules, values against CHECKS.md
//! 5.6, and conversion by GDAL's ogr2ogr to GeoPackage and Shapefile when it
//! is installed.

#[path = "support/skip.rs"]
mod skip;
use std::process::Command;

use chordline::export::geojson::{
    ElementProps, GeoJsonError, GeoJsonInput, Layer, build_layers, write_layer,
};
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
            extra: vec![("len_se_m".into(), Some(0.4)), ("r_end_se".into(), None)],
            integers: vec![("readings".into(), 18)],
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
                line: 0,
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

fn input(c: &Case) -> GeoJsonInput<'_> {
    GeoJsonInput {
        placement: &c.placement,
        stations: &c.stations,
        design: Some((&c.alignment, &c.props)),
        controls: Some((&c.controls, &c.checks)),
    }
}

fn layer<'a>(layers: &'a [Layer], file: &str) -> &'a Value {
    &layers.iter().find(|l| l.file == file).unwrap().doc
}

fn features(doc: &Value) -> &Vec<Value> {
    doc["features"].as_array().unwrap()
}

#[test]
fn layers_follow_rfc_7946_and_the_checks() {
    let c = case();
    let layers = build_layers(&input(&c)).unwrap();
    let files: Vec<&str> = layers.iter().map(|l| l.file).collect();
    assert_eq!(
        files,
        [
            "alignment.geojson",
            "elements.geojson",
            "joints.geojson",
            "controls.geojson"
        ]
    );
    let mut n = 0;
    for (l, geom, count) in [
        (&layers[0], "LineString", 1),
        (&layers[1], "LineString", 4),
        (&layers[2], "Point", 3),
        (&layers[3], "Point", 2),
    ] {
        let doc = &l.doc;
        assert_eq!(doc["type"], "FeatureCollection");
        assert!(doc.get("crs").is_none(), "RFC 7946 §4: no crs member");
        let bbox = doc["bbox"].as_array().unwrap();
        assert!(bbox[0].as_f64() <= bbox[2].as_f64() && bbox[1].as_f64() <= bbox[3].as_f64());
        let fs = features(doc);
        assert_eq!(fs.len(), count, "{}", l.file);
        let keys: Vec<&String> = fs[0]["properties"].as_object().unwrap().keys().collect();
        for f in fs {
            // One geometry type per layer, the same properties on every feature.
            assert_eq!(f["geometry"]["type"], geom, "{}", l.file);
            let k: Vec<&String> = f["properties"].as_object().unwrap().keys().collect();
            assert_eq!(k, keys, "{}", l.file);
            // dBase field names: at most 10 characters (ESRI Shapefile Technical Description, 1998).
            assert!(k.iter().all(|k| k.len() <= 10), "{k:?}");
            let g = &f["geometry"];
            let pts: Vec<&Value> = match geom {
                "Point" => vec![&g["coordinates"]],
                _ => g["coordinates"].as_array().unwrap().iter().collect(),
            };
            for p in pts {
                let p = p.as_array().unwrap();
                assert_eq!(p.len(), 2);
                for v in p {
                    // 9 decimals: 1e-9° ≤ 0.11 mm (CHECKS.md 5.1).
                    let v = v.as_f64().unwrap();
                    assert!(((v * 1e9).round() - v * 1e9).abs() < 1e-3, "{v}");
                    n += 1;
                }
                let (lon, lat) = (p[0].as_f64().unwrap(), p[1].as_f64().unwrap());
                assert!(
                    (8.9..9.1).contains(&lon) && (47.9..48.2).contains(&lat),
                    "lon, lat"
                );
            }
        }
    }
    assert!(n > 20_000);

    // CHECKS.md 5.6 (geographiclib 2.1): the first joint, 10 km due north of
    // (9°, 48°), is at latitude 48.089935176969° → 48.089935177 at 9 decimals.
    let j = &features(layer(&layers, "joints.geojson"))[0];
    assert_eq!(j["properties"]["joint"], "straight-transition");
    assert_eq!(j["properties"]["element"], 2);
    assert_eq!(j["geometry"]["coordinates"][0].as_f64().unwrap(), 9.0);
    assert_eq!(
        j["geometry"]["coordinates"][1].as_f64().unwrap(),
        48.089935177
    );
    assert_eq!(j["properties"]["chainage_m"].as_f64().unwrap(), 10_000.0);
    assert_eq!(j["properties"]["ch_ci95_m"].as_f64().unwrap(), 0.8);

    // Element properties: signed radii (null for a straight end), an unsigned
    // radius and a side for labels, integers as integers.
    let els = features(layer(&layers, "elements.geojson"));
    let e2 = &els[1]["properties"];
    assert_eq!(e2["kind"], "transition");
    assert!(e2["r_start_m"].is_null());
    assert_eq!(e2["r_end_m"].as_f64().unwrap(), -450.0);
    assert_eq!(e2["radius_m"].as_f64().unwrap(), 450.0);
    assert_eq!(e2["turn"], "right");
    // A = √(R L) = √(450 · 60) = 164.3168 m (clothoid definition).
    assert_eq!(e2["clothoid_a"].as_f64().unwrap(), 164.3168);
    assert!(e2["readings"].is_u64(), "{}", e2["readings"]);
    assert_eq!(e2["len_se_m"].as_f64().unwrap(), 0.4);
    assert!(e2["r_end_se"].is_null());
    assert_eq!(e2["status"], "determined");
    assert!(els[0]["properties"]["radius_m"].is_null() && els[0]["properties"]["turn"].is_null());
    // The element starts heading due north.
    let b = e2["brg_start"].as_f64().unwrap();
    assert!(b.abs() < 1e-6 || (b - 360.0).abs() < 1e-6, "{b}");
    // Sampling: at most 1 m apart, ends included: 60 m → 61 points.
    assert_eq!(
        els[1]["geometry"]["coordinates"].as_array().unwrap().len(),
        61
    );
    assert!(features(layer(&layers, "alignment.geojson"))[0]["properties"]["stations"].is_u64());

    // Control points come back where the file put them (9 decimals in and out).
    let cb = &features(layer(&layers, "controls.geojson"))[1];
    let (lon1, lat1) = c.placement.to_lonlat(0.0, 5000.0);
    let g = cb["geometry"]["coordinates"].as_array().unwrap();
    assert!((g[0].as_f64().unwrap() - lon1).abs() < 2e-9);
    assert!((g[1].as_f64().unwrap() - lat1).abs() < 2e-9);
    assert_eq!(cb["properties"]["flagged"], false);
    assert_eq!(cb["properties"]["line"], 3);
    assert_eq!(cb["properties"]["res_n_m"].as_f64().unwrap(), 0.002);
}

#[test]
fn nothing_is_built_for_nan_mismatched_input_or_long_names() {
    let mut c = case();
    c.stations[7].x = f64::NAN;
    let e = build_layers(&GeoJsonInput {
        design: None,
        controls: None,
        ..input(&c)
    })
    .unwrap_err();
    assert!(
        matches!(e, GeoJsonError::NotFinite(ref w) if w.contains("175")),
        "{e}"
    );

    let c = case();
    let e = build_layers(&GeoJsonInput {
        design: Some((&c.alignment, &c.props[..2])),
        ..input(&c)
    })
    .unwrap_err();
    assert!(matches!(
        e,
        GeoJsonError::Mismatch {
            props: 2,
            elements: 4
        }
    ));
    let mut bad = c.props.clone();
    bad[1].extra.push(("r_se_m".into(), Some(f64::INFINITY)));
    let e = build_layers(&GeoJsonInput {
        design: Some((&c.alignment, &bad)),
        ..input(&c)
    })
    .unwrap_err();
    assert!(e.to_string().contains("r_se_m"), "{e}");
    let mut long = c.props.clone();
    long[0]
        .extra
        .push(("start_chainage_se_m".into(), Some(1.0)));
    let e = build_layers(&GeoJsonInput {
        design: Some((&c.alignment, &long)),
        ..input(&c)
    })
    .unwrap_err();
    assert!(
        matches!(e, GeoJsonError::LongName(ref n) if n.contains("start_chainage_se_m")),
        "{e}"
    );
}

fn gdal(tool: &str) -> bool {
    let ok = Command::new(tool)
        .arg("--version")
        .output()
        .is_ok_and(|o| o.status.success());
    if !ok {
        skip::skipped(
            "GDAL checks",
            &format!("GDAL's {tool} is not installed (apt-get install gdal-bin)"),
        );
    }
    ok
}

fn run(cmd: &mut Command) -> String {
    let out = cmd.output().unwrap();
    let text = format!(
        "{}{}",
        String::from_utf8_lossy(&out.stdout),
        String::from_utf8_lossy(&out.stderr)
    );
    assert!(out.status.success(), "{text}");
    text
}

#[test]
fn gdal_converts_every_layer_to_geopackage_and_shapefile() {
    if !(gdal("ogrinfo") && gdal("ogr2ogr")) {
        return;
    }
    let c = case();
    let dir = tempfile::tempdir().unwrap();
    for l in build_layers(&input(&c)).unwrap() {
        let src = dir.path().join(l.file);
        let mut f = std::fs::File::create(&src).unwrap();
        write_layer(&mut f, &l).unwrap();
        let stem = l.file.trim_end_matches(".geojson");
        let gpkg = dir.path().join(format!("{stem}.gpkg"));
        let shp = dir.path().join(format!("{stem}_shp"));
        // GDAL warns when it has to launder or truncate a field name, or
        // when a geometry does not fit the layer type: no warning allowed.
        for (driver, dst) in [("GPKG", &gpkg), ("ESRI Shapefile", &shp)] {
            let text = run(Command::new("ogr2ogr")
                .args(["-f", driver])
                .arg(dst)
                .arg(&src));
            assert!(
                !text.contains("Warning") && !text.contains("ERROR"),
                "{driver} {}: {text}",
                l.file
            );
        }
        let info = run(Command::new("ogrinfo")
            .args(["-ro", "-al", "-so"])
            .arg(&shp));
        let want = if stem == "joints" || stem == "controls" {
            "Point"
        } else {
            "Line String"
        };
        assert!(info.contains(&format!("Geometry: {want}")), "{info}");
        assert!(info.contains("WGS 84"), "{info}");
        if stem == "elements" {
            // Whole names and integer types survive the Shapefile.
            for field in [
                "readings: Integer",
                "clothoid_a: Real",
                "radius_m: Real",
                "start_ch_m: Real",
                "len_se_m: Real",
            ] {
                assert!(info.contains(field), "{field}: {info}");
            }
        }
        let info = run(Command::new("ogrinfo")
            .args(["-ro", "-al", "-so"])
            .arg(&gpkg));
        assert!(
            info.contains(&format!("Feature Count: {}", features(&l.doc).len())),
            "{info}"
        );
    }
    // The joint as GDAL reads it: CHECKS.md 5.6 (geographiclib 2.1), 9 decimals.
    let text = run(Command::new("ogrinfo")
        .args(["-ro", "-al"])
        .arg(dir.path().join("joints.geojson")));
    assert!(
        text.contains("POINT (9 48.089935177)") || text.contains("POINT (9.0 48.089935177)"),
        "{text}"
    );
    assert!(text.contains("straight-transition"), "{text}");
}
