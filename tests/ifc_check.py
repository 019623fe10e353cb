#!/usr/bin/env python3
"""Reads a chordline output folder's alignment.ifc with IfcOpenShell and checks it.

Run by tests/ifc_export.rs (written against IfcOpenShell 0.9.0.post1 on Python 3.11;
`pip install ifcopenshell==0.9.0.post1 pytest`, pytest being what its EXPRESS rule
runner imports).

    python3 tests/ifc_check.py OUTPUT_FOLDER [--grid] [--skip-points]

(--skip-points where stations.csv is not in the frame of the IFC file: a run with --crs
writes local design coordinates there.)

Checks, each against what IfcOpenShell itself reads or computes:
1. the file opens as IFC4X3_ADD2;
2. ifcopenshell.validate with EXPRESS rules reports nothing;
3. the layout: one IfcAlignment nesting one IfcAlignmentHorizontal whose segments are
   the rows of elements.csv (kind, placed length) plus a final zero-length LINE; the
   IfcCompositeCurve has one IfcCurveSegment per layout segment and only its last is
   DISCONTINUOUS (the validator cannot decide that rule: ClosedCurve is derived);
4. the geometry kernel (ifcopenshell.geom: map_shape + function_item_evaluator on the
   alignment's IfcCompositeCurve) evaluated at the end of every segment lands on the next
   segment's StartPoint and on the element's <End> in alignment.xml within 0.1 mm;
   and the kernel's tangent there is the next StartDirection (a kink of at most 1e-9 rad
   in the local frame, 2e-5 rad in a grid, whose arc-to-chord angle it measures);
5. every design point of stations.csv lies on the evaluated curve within 1 mm (foot of the perpendicular found by Newton steps on the kernel's tangent);
6. the referent: Pset_Stationing.Station equals alignment.xml's staStart; with --grid,
   IfcMapConversion/IfcProjectedCRS name the EPSG code of alignment.xml, and
   ifcopenshell.util.geolocation maps the first joint onto alignment.xml's grid metres.

Prints one JSON line with the measured maxima and exits 1 if a check fails.
"""

import csv
import json
import math
import sys
import xml.etree.ElementTree as ET
from pathlib import Path

import numpy as np
import ifcopenshell
import ifcopenshell.geom
import ifcopenshell.ifcopenshell_wrapper as wrapper
import ifcopenshell.util.element
import ifcopenshell.util.geolocation
import ifcopenshell.util.unit
import ifcopenshell.validate

JOINT_TOL = 1e-4  # m: element ends (issue 12)
POINT_TOL = 1e-3  # m: design points of stations.csv (issue 12)

failures = []


def check(ok, message):
    if not ok:
        failures.append(message)


def validation_issues(model):
    logger = ifcopenshell.validate.json_logger()
    ifcopenshell.validate.validate(model, logger, express_rules=True)
    return logger.statements


def layout_segments(model):
    aligns = model.by_type("IfcAlignment")
    check(len(aligns) == 1, f"{len(aligns)} IfcAlignment")
    layouts = [o for rel in aligns[0].IsNestedBy for o in rel.RelatedObjects if o.is_a("IfcAlignmentHorizontal")]
    check(len(layouts) == 1, f"{len(layouts)} IfcAlignmentHorizontal")
    segs = [o for rel in layouts[0].IsNestedBy for o in rel.RelatedObjects]
    return aligns[0], [s.DesignParameters for s in segs]


def basis_curve(alignment):
    reps = alignment.Representation.Representations
    axis = [r for r in reps if r.RepresentationIdentifier == "Axis" and r.RepresentationType == "Curve2D"]
    check(len(axis) == 1, "no Axis/Curve2D representation")
    curve = axis[0].Items[0]
    check(curve.is_a("IfcCompositeCurve"), f"basis curve is {curve.is_a()}")
    return curve


class Curve:
    """The kernel's evaluation of a curve: position and tangent at distance u."""

    def __init__(self, curve):
        settings = ifcopenshell.geom.settings()
        self.fn = wrapper.map_shape(settings, curve)
        self.ev = wrapper.function_item_evaluator(settings, self.fn)
        self.length = self.fn.end() - self.fn.start()

    def at(self, u):
        m = np.array(self.ev.evaluate(u))
        return m[:2, 3], m[:2, 0]


def unit_scale(model):
    return ifcopenshell.util.unit.calculate_unit_scale(model)


def landxml(folder):
    ns = {"l": "http://www.landxml.org/schema/LandXML-1.2"}
    root = ET.parse(folder / "alignment.xml").getroot()
    al = root.find(".//l:Alignment", ns)
    geom = al.find("l:CoordGeom", ns)
    # A clothoid through an inflection is two LandXML spirals ("4a", "4b"): keep each
    # element's last end.
    ends = {}
    for el in geom:
        name = el.get("name").rstrip("ab")
        n, e = (float(v) for v in el.find("l:End", ns).text.split())
        ends[name] = (e, n)
    cs = root.find("l:CoordinateSystem", ns)
    return float(al.get("staStart")), [ends[k] for k in sorted(ends, key=int)], cs


def check_layout(model, folder, params, curve):
    rows = list(csv.DictReader(open(folder / "elements.csv")))
    unit = "ft" if "length_ft" in rows[0] else "m"
    check(len(params) == len(rows) + 1, f"{len(params)} layout segments for {len(rows)} elements")
    last = params[-1]
    check(last.SegmentLength == 0.0 and last.PredefinedType == "LINE", "last layout segment is not a zero-length LINE")
    kinds = {"straight": {"LINE"}, "arc": {"CIRCULARARC"}, "transition": {"CLOTHOID", "LINE", "CIRCULARARC"}}
    grid_mode = "--grid" in sys.argv
    # The placed length (adjusted to the controls and the measured centreline) where given.
    lcol = f"placed_length_{unit}" if f"placed_length_{unit}" in rows[0] else f"length_{unit}"
    worst_length = 0.0
    for row, p in zip(rows, params):
        check(p.PredefinedType in kinds[row["kind"]], f"element {row['element']}: {p.PredefinedType} for {row['kind']}")
        if not grid_mode:  # grid lengths are scaled
            worst_length = max(worst_length, abs(p.SegmentLength - float(row[lcol])))
    check(worst_length <= 0.0005 + 1e-9, f"lengths differ from elements.csv by {worst_length}")
    segs = curve.Segments
    check(len(segs) == len(params), f"{len(segs)} curve segments for {len(params)} layout segments")
    disc = [i for i, s in enumerate(segs) if s.Transition == "DISCONTINUOUS"]
    check(disc == [len(segs) - 1], f"DISCONTINUOUS segments at {disc}")


def joint_errors(model, params, curve_eval, xml_ends):
    """Largest distance between the kernel's segment ends and the next StartPoint / LandXML
    <End>, and largest angle between the kernel's tangent there and the next StartDirection."""
    scale = unit_scale(model)  # kernel metres per file unit
    u, worst_ifc, worst_xml, worst_kink = 0.0, 0.0, 0.0, 0.0
    for i, p in enumerate(params[:-1]):
        u += p.SegmentLength * scale
        pos, tangent = curve_eval.at(u)
        nxt = params[i + 1]
        worst_ifc = max(worst_ifc, float(np.linalg.norm(pos - np.array(nxt.StartPoint.Coordinates) * scale)))
        worst_xml = max(worst_xml, float(np.linalg.norm(pos - np.array(xml_ends[i]) * scale)))
        d = nxt.StartDirection  # radians (the file's plane angle unit)
        kink = math.atan2(tangent[0] * math.sin(d) - tangent[1] * math.cos(d), tangent[0] * math.cos(d) + tangent[1] * math.sin(d))
        worst_kink = max(worst_kink, abs(kink))
    return worst_ifc, worst_xml, worst_kink


def design_point_errors(folder, model, curve_eval):
    """Distance from each design point of stations.csv to the evaluated curve (metres)."""
    rows = list(csv.DictReader(open(folder / "stations.csv")))
    unit = "ft" if "design_easting_ft" in rows[0] else "m"
    scale = unit_scale(model)
    pts = [np.array((float(r[f"design_easting_{unit}"]), float(r[f"design_northing_{unit}"]))) * scale for r in rows]
    worst, beyond, u = 0.0, 0, 0.0
    start, _ = curve_eval.at(0.0)
    u = 0.0
    prev = start
    for p in pts:
        u += float(np.linalg.norm(p - prev))
        prev = p
        for _ in range(6):
            c, t = curve_eval.at(min(max(u, 0.0), curve_eval.length))
            u = u + float(np.dot(p - c, t))
        if u < -POINT_TOL or u > curve_eval.length + POINT_TOL:
            beyond += 1  # a station past the ends of the fitted alignment
            continue
        c, t = curve_eval.at(min(max(u, 0.0), curve_eval.length))
        worst = max(worst, float(np.linalg.norm(p - c)))
    return worst, len(pts) - beyond, beyond


def station(model, alignment):
    refs = [o for rel in alignment.IsNestedBy for o in rel.RelatedObjects if o.is_a("IfcReferent")]
    check(len(refs) == 1, f"{len(refs)} referents")
    pset = ifcopenshell.util.element.get_pset(refs[0], "Pset_Stationing")
    place = refs[0].ObjectPlacement.RelativePlacement.Location
    check(place.DistanceAlong.wrappedValue == 0.0, "referent not at distance 0")
    return pset["Station"]


def main():
    folder = Path(sys.argv[1])
    result = {"ifcopenshell": ifcopenshell.version, "python": sys.version.split()[0]}
    model = ifcopenshell.open(str(folder / "alignment.ifc"))
    check(model.schema_identifier == "IFC4X3_ADD2", f"schema {model.schema_identifier}")
    issues = validation_issues(model)
    result["validation_issues"] = len(issues)
    check(not issues, f"validation: {issues[:3]}")
    alignment, params = layout_segments(model)
    curve = basis_curve(alignment)
    check_layout(model, folder, params, curve)
    ev = Curve(curve)
    sta0, xml_ends, cs = landxml(folder)
    result["segments"] = len(params)
    result["curve_length_m"] = ev.length
    worst_ifc, worst_xml, worst_kink = joint_errors(model, params, ev, xml_ends)
    result["max_end_to_next_start_m"] = worst_ifc
    result["max_end_to_landxml_m"] = worst_xml
    result["max_kink_rad"] = worst_kink
    # Local frame: the kernel's tangent and chordline's direction agree to rounding. Grid:
    # the arc-to-chord angle of the projection (2e-5 rad is about 4 seconds of arc).
    check(worst_kink <= (2e-5 if "--grid" in sys.argv else 1e-9), f"kink of {worst_kink} rad at a joint")
    check(worst_ifc <= JOINT_TOL, f"segment end {worst_ifc} m from the next StartPoint")
    # alignment.xml has 5 decimals: its rounding adds up to 0.007 mm.
    check(worst_xml <= JOINT_TOL, f"segment end {worst_xml} m from alignment.xml")
    result["station"] = station(model, alignment)
    check(abs(result["station"] - sta0) <= 5e-6, f"station {result['station']} vs staStart {sta0}")
    if "--grid" in sys.argv:
        conv = model.by_type("IfcMapConversion")
        check(len(conv) == 1, "no IfcMapConversion")
        crs_name = conv[0].TargetCRS.Name
        result["crs"] = crs_name
        check(crs_name == cs.get("name"), f"CRS {crs_name} vs {cs.get('name')}")
        scale = unit_scale(model)
        x, y = params[1].StartPoint.Coordinates
        # Project units in, map units (metres) out.
        e, n, _ = ifcopenshell.util.geolocation.auto_xyz2enh(model, x, y, 0.0)
        want = np.array(xml_ends[0]) * scale
        result["map_conversion_error_m"] = float(np.linalg.norm(np.array((e, n)) - want))
        check(result["map_conversion_error_m"] <= JOINT_TOL, "IfcMapConversion does not give the grid metres")
    if "--skip-points" not in sys.argv:
        worst, n, beyond = design_point_errors(folder, model, ev)
        result["design_points"] = n
        result["design_points_beyond_ends"] = beyond
        result["max_design_point_offset_m"] = worst
        check(worst <= POINT_TOL, f"design point {worst} m off the curve")
        check(n > 0, "no design point checked")
    result["failures"] = failures
    print(json.dumps(result))
    sys.exit(1 if failures else 0)


if __name__ == "__main__":
    main()
