//! alignment.xml: LandXML 1.2 schema validation (xmllint), round trip with a
//! small reader, LandXML conventions (CHECKS.md 6.1), grid output (CHECKS.md 5.9).

#[path = "support/skip.rs"]
mod skip;
use std::path::Path;
use std::process::Command;

use chordline::export::geojson::ElementProps;
use chordline::export::landxml::{LandXmlFrame, LandXmlOptions, build_landxml};
use chordline::geometry::{Alignment, Element, Pose};
use chordline::georef::{Crs, LonLat, Placement};
use chordline::units::{FOOT, LengthUnit};

fn alignment(start: Pose) -> Alignment {
    Alignment::new(
        start,
        0.0,
        vec![
            Element::straight(100.0),
            Element::transition(60.0, 0.0, 1.0 / 450.0),
            Element::arc(150.0, 450.0),
            // Reverse curve through one clothoid: written as two spirals.
            Element::transition(80.0, 1.0 / 450.0, -1.0 / 600.0),
            Element::arc(100.0, -600.0),
            Element::transition(50.0, -1.0 / 600.0, 0.0),
            Element::straight(40.0),
        ],
    )
}

fn props(al: &Alignment, offset: f64) -> Vec<ElementProps> {
    (0..al.elements().len())
        .map(|i| {
            let s0 = al.element_start(i) + offset;
            ElementProps {
                start_chainage: s0,
                end_chainage: s0 + al.elements()[i].length,
                ..Default::default()
            }
        })
        .collect()
}

/// One element as read back from the file.
#[derive(Debug)]
struct Read {
    tag: String,
    length: f64,
    radius: Option<f64>,
    radius_start: Option<f64>,
    radius_end: Option<f64>,
    rot: Option<String>,
    dir_start: f64,
    sta: f64,
    start: (f64, f64), // (east, north)
    end: (f64, f64),
    center: Option<(f64, f64)>,
    pi: Option<(f64, f64)>,
}

fn ne(node: roxmltree::Node, tag: &str) -> Option<(f64, f64)> {
    let t = node.children().find(|c| c.has_tag_name(tag))?.text()?;
    let v: Vec<f64> = t.split_whitespace().map(|x| x.parse().unwrap()).collect();
    assert_eq!(v.len(), 2, "{t}");
    Some((v[1], v[0])) // file order is "north east"
}

fn radius_attr(n: roxmltree::Node, a: &str) -> Option<f64> {
    n.attribute(a).map(|v| {
        if v == "INF" {
            f64::INFINITY
        } else {
            v.parse().unwrap()
        }
    })
}

fn read_back(xml: &str) -> (Vec<Read>, roxmltree::Document<'_>) {
    let doc = roxmltree::Document::parse(xml).unwrap();
    let cg = doc
        .descendants()
        .find(|n| n.has_tag_name("CoordGeom"))
        .unwrap();
    let mut out = Vec::new();
    for n in cg.children().filter(|n| n.is_element()) {
        let f = |a: &str| n.attribute(a).map(|v| v.parse::<f64>().unwrap());
        out.push(Read {
            tag: n.tag_name().name().to_string(),
            length: f("length").unwrap(),
            radius: f("radius"),
            radius_start: radius_attr(n, "radiusStart"),
            radius_end: radius_attr(n, "radiusEnd"),
            rot: n.attribute("rot").map(str::to_string),
            dir_start: f("dir").or(f("dirStart")).unwrap(),
            sta: f("staStart").unwrap(),
            start: ne(n, "Start").unwrap(),
            end: ne(n, "End").unwrap(),
            center: ne(n, "Center"),
            pi: ne(n, "PI"),
        });
    }
    (out, doc)
}

fn schema() -> Option<std::path::PathBuf> {
    let s = Path::new(env!("CARGO_MANIFEST_DIR")).join("../shared/standards/LandXML-1.2.xsd");
    if !s.exists() {
        skip::skipped(
            "LandXML schema validation",
            &format!("{} is absent", s.display()),
        );
        return None;
    }
    let ok = Command::new("xmllint")
        .arg("--version")
        .output()
        .is_ok_and(|o| o.status.success());
    if !ok {
        skip::skipped(
            "LandXML schema validation",
            "xmllint is not installed (apt-get install libxml2-utils)",
        );
        return None;
    }
    Some(s)
}

fn validate(xml: &str) {
    let Some(xsd) = schema() else { return };
    let dir = tempfile::tempdir().unwrap();
    let p = dir.path().join("alignment.xml");
    std::fs::write(&p, xml).unwrap();
    let out = Command::new("xmllint")
        .arg("--noout")
        .arg("--schema")
        .arg(&xsd)
        .arg(&p)
        .output()
        .unwrap();
    assert!(
        out.status.success(),
        "xmllint: {}",
        String::from_utf8_lossy(&out.stderr)
    );
    // xmllint says "<file> validates" on success.
    assert!(String::from_utf8_lossy(&out.stderr).contains("validates"));
    if std::env::var_os("CHORDLINE_KEEP_XML").is_some() {
        std::fs::write("/tmp/chordline_landxml_test.xml", xml).unwrap();
    }
}

#[test]
fn local_frame_validates_and_round_trips() {
    let start = Pose {
        x: 1000.0,
        y: 2000.0,
        heading: 30f64.to_radians(),
    };
    let al = alignment(start);
    let xml = build_landxml(
        &al,
        &props(&al, 1234.5),
        LandXmlFrame::Local { placement: None },
        &LandXmlOptions {
            name: "Test & <line>".into(),
            ..Default::default()
        },
    )
    .unwrap();
    validate(&xml);
    let (els, doc) = read_back(&xml);

    // Units stated explicitly (CHECKS.md 6.1: default would be radians).
    let m = doc
        .descendants()
        .find(|n| n.has_tag_name("Metric"))
        .unwrap();
    assert_eq!(m.attribute("directionUnit"), Some("decimal degrees"));
    assert_eq!(m.attribute("angularUnit"), Some("decimal degrees"));
    assert_eq!(m.attribute("linearUnit"), Some("meter"));
    let a = doc
        .descendants()
        .find(|n| n.has_tag_name("Alignment"))
        .unwrap();
    assert_eq!(a.attribute("name"), Some("Test & <line>"));
    assert_eq!(a.attribute("staStart"), Some("1234.50000"));

    let tags: Vec<&str> = els.iter().map(|e| e.tag.as_str()).collect();
    assert_eq!(
        tags,
        [
            "Line", "Spiral", "Curve", "Spiral", "Spiral", "Curve", "Spiral", "Line"
        ]
    );
    let tol = 2e-5; // 5 decimals written

    // Start points are the alignment's exact poses, northing first in the file.
    let mut expect_starts = Vec::new();
    for i in 0..al.elements().len() {
        expect_starts.push(al.element_pose(i));
        if i == 3 {
            // Inflection of the reversing clothoid: κ = 0 at u = (1/450)/rate.
            let e = al.elements()[3];
            let u0 = -e.k_start / e.curvature_rate();
            expect_starts.push(e.advance(al.element_pose(3), u0));
        }
    }
    for (r, p) in els.iter().zip(&expect_starts) {
        assert!(
            (r.start.0 - p.x).abs() < tol && (r.start.1 - p.y).abs() < tol,
            "{r:?} {p:?}"
        );
        // Directions from north, clockwise (CHECKS.md 6.1, 6.4).
        let b = chordline::geometry::heading_to_bearing(p.heading);
        let d = (r.dir_start - b + 540.0).rem_euclid(360.0) - 180.0;
        assert!(d.abs() < 1e-8, "{} vs {b}", r.dir_start);
    }
    // Continuity: each element ends where the next starts.
    for w in els.windows(2) {
        assert!((w[0].end.0 - w[1].start.0).abs() < tol && (w[0].end.1 - w[1].start.1).abs() < tol);
    }
    let end = al.pose_at(al.length());
    let last = els.last().unwrap();
    assert!((last.end.0 - end.x).abs() < tol && (last.end.1 - end.y).abs() < tol);

    // Lengths, radii and senses of rotation (ccw = curving left, CHECKS.md 6.4).
    let u0 = (1.0 / 450.0) / ((1.0 / 450.0 + 1.0 / 600.0) / 80.0);
    let lengths = [100.0, 60.0, 150.0, u0, 80.0 - u0, 100.0, 50.0, 40.0];
    for (r, l) in els.iter().zip(lengths) {
        assert!((r.length - l).abs() < tol, "{r:?}");
    }
    let s1 = &els[1];
    assert_eq!(
        (s1.radius_start, s1.radius_end),
        (Some(f64::INFINITY), Some(450.0))
    );
    assert_eq!(s1.rot.as_deref(), Some("ccw"));
    assert_eq!(els[2].radius, Some(450.0));
    assert_eq!(els[2].rot.as_deref(), Some("ccw"));
    assert_eq!(
        (els[3].radius_start, els[3].radius_end),
        (Some(450.0), Some(f64::INFINITY))
    );
    assert_eq!(els[3].rot.as_deref(), Some("ccw"));
    assert_eq!(
        (els[4].radius_start, els[4].radius_end),
        (Some(f64::INFINITY), Some(600.0))
    );
    assert_eq!(els[4].rot.as_deref(), Some("cw"));
    assert_eq!(els[5].rot.as_deref(), Some("cw"));
    assert_eq!(els[6].radius_end, Some(f64::INFINITY));
    // Stations: survey chainage of each start.
    assert!((els[2].sta - (1234.5 + 160.0)).abs() < tol);
    assert!((els[4].sta - (1234.5 + 310.0 + u0)).abs() < tol);

    // A reader rebuilding geometry from the file gets the same points:
    // line end from start + length along dir; arc centre at radius.
    let l = &els[0];
    let d = l.dir_start.to_radians();
    assert!((l.start.0 + l.length * d.sin() - l.end.0).abs() < tol);
    assert!((l.start.1 + l.length * d.cos() - l.end.1).abs() < tol);
    for c in [&els[2], &els[5]] {
        let cc = c.center.unwrap();
        let r = c.radius.unwrap();
        assert!(((c.start.0 - cc.0).hypot(c.start.1 - cc.1) - r).abs() < tol);
        assert!(((c.end.0 - cc.0).hypot(c.end.1 - cc.1) - r).abs() < tol);
    }
    // Spiral PI: on the start tangent.
    let s = &els[1];
    let pi = s.pi.unwrap();
    let d = s.dir_start.to_radians();
    let cross = (pi.0 - s.start.0) * d.cos() - (pi.1 - s.start.1) * d.sin();
    assert!(cross.abs() < 1e-4, "{cross}");
    // Short tangent of a 60 m clothoid to R 450 m: CHECKS.md 4.13 gives the
    // long tangent 40.009316 m (computed), the distance Start–PI here.
    assert!(((pi.0 - s.start.0).hypot(pi.1 - s.start.1) - 40.009316).abs() < 1e-4);
}

#[test]
fn grid_frame_uses_the_crs_and_validates() {
    // Origin at (9°, 48°) → UTM 32N E 500 000.0000, N 5 316 300.2245
    // (CHECKS.md 5.9, pyproj 3.7.2), ±1 mm.
    let pl = Placement::new(LonLat::new(9.0, 48.0).unwrap(), 0.0).unwrap();
    let crs: Crs = "EPSG:32632".parse().unwrap();
    let al = alignment(Pose {
        x: 0.0,
        y: 0.0,
        heading: 1.0,
    });
    let xml = build_landxml(
        &al,
        &props(&al, 0.0),
        LandXmlFrame::Grid {
            placement: &pl,
            crs: &crs,
        },
        &LandXmlOptions::default(),
    )
    .unwrap();
    validate(&xml);
    let (els, doc) = read_back(&xml);
    let cs = doc
        .descendants()
        .find(|n| n.has_tag_name("CoordinateSystem"))
        .unwrap();
    assert_eq!(cs.attribute("epsgCode"), Some("32632"));
    let s = els[0].start;
    assert!(
        (s.0 - 500_000.0).abs() < 1e-3 && (s.1 - 5316300.2245).abs() < 1e-3,
        "{s:?}"
    );
    // Every written point is the grid image of the exact local point.
    let p = al.element_pose(2);
    let (lon, lat) = pl.to_lonlat(p.x, p.y);
    let (e, n) = crs.from_lonlat(lon, lat).unwrap();
    assert!((els[2].start.0 - e).abs() < 2e-5 && (els[2].start.1 - n).abs() < 2e-5);
    // Grid lengths: scaled by the grid scale factor (≈ 0.9996 near the
    // central meridian, UTM definition), and a reader rebuilding the line
    // from start, grid bearing and grid length lands on the written end.
    let l = &els[0];
    assert!((l.length / 100.0 - 0.9996).abs() < 2e-6, "{}", l.length);
    let d = l.dir_start.to_radians();
    assert!((l.start.0 + l.length * d.sin() - l.end.0).abs() < 1e-4);
    assert!((l.start.1 + l.length * d.cos() - l.end.1).abs() < 1e-4);
    // Arc radius scaled alike; the centre is at that radius from both ends.
    let c = &els[2];
    let cc = c.center.unwrap();
    let r = c.radius.unwrap();
    assert!((r / 450.0 - 0.9996).abs() < 2e-6);
    assert!(((c.start.0 - cc.0).hypot(c.start.1 - cc.1) - r).abs() < 1e-4);
}

#[test]
fn imperial_units_and_bad_input() {
    let al = alignment(Pose::default());
    let xml = build_landxml(
        &al,
        &props(&al, 0.0),
        LandXmlFrame::Local { placement: None },
        &LandXmlOptions {
            unit: LengthUnit::Foot,
            ..Default::default()
        },
    )
    .unwrap();
    validate(&xml);
    let (els, doc) = read_back(&xml);
    let im = doc
        .descendants()
        .find(|n| n.has_tag_name("Imperial"))
        .unwrap();
    assert_eq!(im.attribute("linearUnit"), Some("foot"));
    assert!((els[0].length - 100.0 / FOOT).abs() < 2e-5);
    assert!((els[2].radius.unwrap() - 450.0 / FOOT).abs() < 2e-5);

    let e = build_landxml(
        &al,
        &props(&al, 0.0)[..3],
        LandXmlFrame::Local { placement: None },
        &LandXmlOptions::default(),
    )
    .unwrap_err();
    assert!(
        e.to_string()
            .contains("3 element property records for 7 elements"),
        "{e}"
    );
    let mut p = props(&al, 0.0);
    p[4].start_chainage = f64::NAN;
    let mut sink = Vec::new();
    let e = chordline::export::landxml::write_landxml(
        &mut sink,
        &al,
        &p,
        LandXmlFrame::Local { placement: None },
        &LandXmlOptions::default(),
    )
    .unwrap_err();
    assert!(e.to_string().contains("not a finite number"), "{e}");
    assert!(sink.is_empty());
}

/// Survey chainages that do not follow the centreline: the rail is 0.3 %
/// longer (outer rail of curves, common practice) and the survey starts at
/// 12 480.116.
fn rail_props(al: &Alignment) -> Vec<ElementProps> {
    (0..al.elements().len())
        .map(|i| {
            let s0 = 12_480.116 + 1.003 * al.element_start(i);
            ElementProps {
                start_chainage: s0,
                end_chainage: 12_480.116 + 1.003 * (al.element_start(i) + al.elements()[i].length),
                ..Default::default()
            }
        })
        .collect()
}

/// Stations chain along the elements: each staStart is the previous one plus
/// its length (to the 5-decimal rounding), and the alignment's length is the
/// sum of the element lengths. Returns (staStart, length) per element.
fn assert_stations_chain(xml: &str) -> Vec<(f64, f64)> {
    let (els, doc) = read_back(xml);
    let a = doc
        .descendants()
        .find(|n| n.has_tag_name("Alignment"))
        .unwrap();
    let f = |k: &str| a.attribute(k).unwrap().parse::<f64>().unwrap();
    assert!((els[0].sta - f("staStart")).abs() < 1e-9);
    for w in els.windows(2) {
        let gap = w[1].sta - (w[0].sta + w[0].length);
        assert!(gap.abs() < 1.5e-5, "{gap}: {:?} {:?}", w[0], w[1]);
    }
    let sum: f64 = els.iter().map(|e| e.length).sum();
    assert!(
        (f("length") - sum).abs() < 1e-5 * els.len() as f64,
        "{} {sum}",
        f("length")
    );
    els.iter().map(|e| (e.sta, e.length)).collect()
}

#[test]
fn stations_chain_and_equations_carry_the_survey_chainage() {
    let pl = Placement::new(LonLat::new(9.0, 48.0).unwrap(), 350.0).unwrap();
    let al = alignment(Pose {
        x: 0.0,
        y: 0.0,
        heading: 1.0,
    });
    let props = rail_props(&al);
    let xml = build_landxml(
        &al,
        &props,
        LandXmlFrame::Local {
            placement: Some(&pl),
        },
        &LandXmlOptions::default(),
    )
    .unwrap();
    validate(&xml);
    let st = assert_stations_chain(&xml);
    // Local frame: element lengths are the centreline lengths themselves.
    assert!((st[0].1 - 100.0).abs() < 1e-5 && (st[0].0 - 12_480.116).abs() < 1e-9);
    // Station equations: applying them to the centreline stations gives the
    // survey chainage at every element start (LandXML 1.2 StaEquation:
    // staInternal = staStart + distance, staAhead = the new station value).
    let doc = roxmltree::Document::parse(&xml).unwrap();
    let eqs: Vec<(f64, f64, f64)> = doc
        .descendants()
        .filter(|n| n.has_tag_name("StaEquation"))
        .map(|n| {
            let g = |k: &str| n.attribute(k).unwrap().parse::<f64>().unwrap();
            (g("staInternal"), g("staBack"), g("staAhead"))
        })
        .collect();
    assert_eq!(eqs.len(), al.elements().len() - 1);
    for (i, p) in props.iter().enumerate().skip(1) {
        let (internal, back, ahead) = eqs[i - 1];
        // The equation sits at the element's start (the split spiral "4a/4b"
        // adds one element in the file, so find it by its station).
        assert!(
            st.iter().any(|s| (s.0 - internal).abs() < 1e-9),
            "element {i}"
        );
        assert!((ahead - p.start_chainage).abs() < 1e-5);
        // The running station just before it: the previous survey chainage
        // plus the centreline distance since.
        let prev = props[i - 1].start_chainage;
        let dist = al.elements()[i - 1].length;
        assert!((back - (prev + dist)).abs() < 2e-5, "{back} {prev} {dist}");
    }
    // Machine-readable origin: a Start point with latitude and longitude and
    // a WKT of the frame (azimuthal equidistant about the origin).
    let cs = doc
        .descendants()
        .find(|n| n.has_tag_name("CoordinateSystem"))
        .unwrap();
    let o = cs.children().find(|n| n.has_tag_name("Start")).unwrap();
    assert_eq!(o.attribute("latitude"), Some("48.0000000000"));
    assert_eq!(o.attribute("longitude"), Some("9.0000000000"));
    assert_eq!(o.text(), Some("0 0"));
    let wkt = cs.attribute("ogcWktCode").unwrap();
    assert!(
        wkt.contains("Azimuthal_Equidistant")
            && wkt.contains("\"latitude_of_center\",48.0000000000")
    );
    // Its unit is the ground scale R/(R+h) of the placement (checked against
    // PROJ reading this WKT in georef_checks.rs, pyproj_aeqd.csv): 350 m up
    // at 48°, 0.99994515 (computed).
    let unit = format!("UNIT[\"ground metre\",{:.15}]", pl.ellipsoid_per_ground());
    assert!(wkt.contains(&unit) && unit.contains("0.99994514"), "{wkt}");
}

#[test]
fn grid_lengths_chain_and_feet_grids_are_written_in_feet() {
    let pl = Placement::new(LonLat::new(9.0, 48.0).unwrap(), 0.0).unwrap();
    let al = alignment(Pose {
        x: 0.0,
        y: 0.0,
        heading: 1.0,
    });
    let crs: Crs = "EPSG:32632".parse().unwrap();
    let xml = build_landxml(
        &al,
        &rail_props(&al),
        LandXmlFrame::Grid {
            placement: &pl,
            crs: &crs,
        },
        &LandXmlOptions::default(),
    )
    .unwrap();
    validate(&xml);
    let st = assert_stations_chain(&xml);
    // The alignment length is in the grid: the ground length times the UTM
    // scale ≈ 0.9996 on the central meridian (UTM definition).
    let ground = al.length();
    let grid: f64 = st.iter().map(|s| s.1).sum();
    assert!((grid / ground - 0.9996).abs() < 3e-6, "{}", grid / ground);

    // NAD83 / California zone 5 (ftUS): coordinates, lengths and stations in
    // US survey feet (1200/3937 m).
    let pl = Placement::new(LonLat::new(-118.43, 34.04).unwrap(), 0.0).unwrap();
    let crs: Crs = "EPSG:2229".parse().unwrap();
    let xml = build_landxml(
        &al,
        &rail_props(&al),
        LandXmlFrame::Grid {
            placement: &pl,
            crs: &crs,
        },
        &LandXmlOptions::default(),
    )
    .unwrap();
    validate(&xml);
    let (els, doc) = read_back(&xml);
    let im = doc
        .descendants()
        .find(|n| n.has_tag_name("Imperial"))
        .unwrap();
    assert_eq!(im.attribute("linearUnit"), Some("USSurveyFoot"));
    let (e, n) = crs.from_lonlat(-118.43, 34.04).unwrap();
    assert!((els[0].start.0 - e).abs() < 2e-5 && (els[0].start.1 - n).abs() < 2e-5);
    let usft = 1200.0 / 3937.0;
    assert!((els[0].sta - 12_480.116 / usft).abs() < 1e-5);
    // Lambert conformal scale within 1e-4 of 1 here.
    assert!(
        (els[0].length * usft / 100.0 - 1.0).abs() < 1e-4,
        "{}",
        els[0].length
    );
    assert_stations_chain(&xml);
}
