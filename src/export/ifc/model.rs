//! The entity instances of `alignment.ifc`, in a fixed order (see the
//! parent module for what they mean). Attribute lists follow the
//! `IFC4X3_ADD2` EXPRESS schema, in declaration order.

use super::step::{Data, Header, Id, V, fnv1a_128, guid_text};
use super::{EndPose, IfcError, IfcOptions, Seg, SegKind};
use crate::export::landxml::LandXmlFrame;
use crate::units::LengthUnit;

/// What the model is built from (already in the file's frame and unit).
pub(super) struct ModelInput<'a> {
    pub segs: &'a [Seg],
    /// End point and direction of the last element.
    pub end: EndPose,
    /// Survey chainage of each element's start and end (file unit).
    pub chainages: &'a [(f64, f64)],
    pub frame: LandXmlFrame<'a>,
    pub opts: &'a IfcOptions,
}

/// Builds instances and hands out `GlobalId`s.
struct Model {
    d: Data,
    seed: u128,
    guids: u32,
}

impl Model {
    fn add(&mut self, entity: &str, args: &[V]) -> Id {
        self.d.add(entity, args)
    }

    /// A new `GlobalId`: a hash of the content seed and a running number.
    fn guid(&mut self) -> V {
        self.guids += 1;
        // The running number first, so that every byte of the seed mixes it in.
        let mut bytes = self.guids.to_le_bytes().to_vec();
        bytes.extend_from_slice(&self.seed.to_le_bytes());
        V::Str(guid_text(fnv1a_128(&bytes)))
    }

    fn point2(&mut self, x: f64, y: f64) -> Id {
        self.add("IFCCARTESIANPOINT", &[V::reals(&[x, y])])
    }

    fn dir2(&mut self, angle: f64) -> Id {
        self.add("IFCDIRECTION", &[V::reals(&[angle.cos(), angle.sin()])])
    }

    /// A relationship between one object and several (`IfcRelAggregates`,
    /// `IfcRelNests`: GlobalId, OwnerHistory, Name, Description, relating, related).
    fn rel(&mut self, entity: &str, relating: Id, related: &[Id]) -> Id {
        let g = self.guid();
        self.add(
            entity,
            &[
                g,
                V::Null,
                V::Null,
                V::Null,
                V::Ref(relating),
                V::refs(related),
            ],
        )
    }
}

/// Entities shared by the rest of the model.
struct Common {
    /// The 3D model context (the map conversion's source).
    context: Id,
    /// Its `Axis` sub-context.
    axis_context: Id,
    /// The metre (the map unit of a grid).
    metre: Id,
    /// Absolute placement at the origin (site and alignment).
    origin_placement: Id,
    /// 2D origin and x direction for parent curves.
    origin2: Id,
    x_dir2: Id,
}

fn units_and_contexts(m: &mut Model, unit: LengthUnit) -> (Common, Id) {
    let metre = m.add(
        "IFCSIUNIT",
        &[V::Derived, V::Enum("LENGTHUNIT"), V::Null, V::Enum("METRE")],
    );
    let length = match unit {
        LengthUnit::Metre => metre,
        LengthUnit::Foot => {
            let dims = m.add(
                "IFCDIMENSIONALEXPONENTS",
                &[1, 0, 0, 0, 0, 0, 0].map(V::Int),
            );
            let factor = m.add(
                "IFCMEASUREWITHUNIT",
                &[V::typed("IFCLENGTHMEASURE", unit.metres()), V::Ref(metre)],
            );
            m.add(
                "IFCCONVERSIONBASEDUNIT",
                &[
                    V::Ref(dims),
                    V::Enum("LENGTHUNIT"),
                    V::s("FOOT"),
                    V::Ref(factor),
                ],
            )
        }
    };
    let radian = m.add(
        "IFCSIUNIT",
        &[
            V::Derived,
            V::Enum("PLANEANGLEUNIT"),
            V::Null,
            V::Enum("RADIAN"),
        ],
    );
    let units = m.add("IFCUNITASSIGNMENT", &[V::refs(&[length, radian])]);
    let origin3 = m.add("IFCCARTESIANPOINT", &[V::reals(&[0.0, 0.0, 0.0])]);
    let world = m.add("IFCAXIS2PLACEMENT3D", &[V::Ref(origin3), V::Null, V::Null]);
    // Precision 1e-5 of the length unit: far below the fit's own uncertainty.
    let context = m.add(
        "IFCGEOMETRICREPRESENTATIONCONTEXT",
        &[
            V::Null,
            V::s("Model"),
            V::Int(3),
            V::Real(1e-5),
            V::Ref(world),
            V::Null,
        ],
    );
    let axis_context = m.add(
        "IFCGEOMETRICREPRESENTATIONSUBCONTEXT",
        &[
            V::s("Axis"),
            V::s("Model"),
            V::Derived,
            V::Derived,
            V::Derived,
            V::Derived,
            V::Ref(context),
            V::Null,
            V::Enum("MODEL_VIEW"),
            V::Null,
        ],
    );
    let origin_placement = m.add("IFCLOCALPLACEMENT", &[V::Null, V::Ref(world)]);
    let origin2 = m.point2(0.0, 0.0);
    let x_dir2 = m.dir2(0.0);
    let common = Common {
        context,
        axis_context,
        metre,
        origin_placement,
        origin2,
        x_dir2,
    };
    (common, units)
}

/// Degrees as `IfcCompoundPlaneAngleMeasure` (degrees, minutes, seconds,
/// millionths of a second, all with the sign of the angle).
fn compound_angle(deg: f64) -> V {
    let micro = (deg.abs() * 3_600e6).round() as i64;
    let sign = if deg < 0.0 { -1 } else { 1 };
    let parts = [
        micro / 3_600_000_000,
        (micro / 60_000_000) % 60,
        (micro / 1_000_000) % 60,
        micro % 1_000_000,
    ];
    V::List(parts.iter().map(|&p| V::Int(sign * p)).collect())
}

/// The text of the alignment's `Description`: the frame of the coordinates.
fn frame_description(frame: LandXmlFrame) -> String {
    let tail = "; survey chainage runs along the measured rail, distance along this curve along the centreline";
    match frame {
        LandXmlFrame::Grid { crs, placement } => format!(
            "fitted as-built centreline; grid coordinates of EPSG:{}, directions from the grid x axis; lengths and radii scaled by each element's combined scale factor at its middle (grid scale x ellipsoid/ground, track height {} m above the ellipsoid){tail}",
            crs.code(),
            placement.height()
        ),
        LandXmlFrame::Local { placement: Some(p) } => format!(
            "fitted as-built centreline; local ground frame: x east, y north (true north at the origin), azimuthal equidistant about WGS 84 longitude,latitude {}{tail}",
            p.origin()
        ),
        LandXmlFrame::Local { placement: None } => format!(
            "fitted as-built centreline; local ground frame of the survey (not placed on the Earth): x east, y north of an arbitrary origin{tail}"
        ),
    }
}

/// The horizontal layout: one `IfcAlignmentSegment` per segment and the
/// final zero-length one. Returns the segments.
fn layout(m: &mut Model, inp: &ModelInput, starts: &[Id]) -> Vec<Id> {
    let mut out = Vec::with_capacity(inp.segs.len() + 1);
    let radius = |k: f64| if k == 0.0 { 0.0 } else { 1.0 / k };
    for (i, s) in inp.segs.iter().enumerate() {
        let params = m.add(
            "IFCALIGNMENTHORIZONTALSEGMENT",
            &[
                V::Null,
                V::Null,
                V::Ref(starts[i]),
                V::Real(s.dir),
                V::Real(radius(s.k0)),
                V::Real(radius(s.k1)),
                V::Real(s.len),
                V::Null,
                V::Enum(s.kind.ifc_name()),
            ],
        );
        let (a, b) = inp.chainages[i];
        let g = m.guid();
        out.push(m.add(
            "IFCALIGNMENTSEGMENT",
            &[
                g,
                V::Null,
                V::s(format!("{}", i + 1)),
                V::s(format!(
                    "fitted element {}: survey chainage {a:.5} to {b:.5} {}",
                    i + 1,
                    inp.opts.unit.suffix()
                )),
                V::Null,
                V::Null,
                V::Null,
                V::Ref(params),
            ],
        ));
    }
    let (_, _, dir) = inp.end;
    let end_point = starts[inp.segs.len()];
    let params = m.add(
        "IFCALIGNMENTHORIZONTALSEGMENT",
        &[
            V::Null,
            V::Null,
            V::Ref(end_point),
            V::Real(dir),
            V::Real(0.0),
            V::Real(0.0),
            V::Real(0.0),
            V::Null,
            V::Enum("LINE"),
        ],
    );
    let g = m.guid();
    out.push(m.add(
        "IFCALIGNMENTSEGMENT",
        &[
            g,
            V::Null,
            V::s("end"),
            V::s("zero-length segment closing the layout"),
            V::Null,
            V::Null,
            V::Null,
            V::Ref(params),
        ],
    ));
    out
}

/// The transition code at the end of segment `s` (the next one starts
/// where it ends, tangent to it).
fn transition(s: &Seg) -> &'static str {
    if s.same_curvature_next {
        "CONTSAMEGRADIENTSAMECURVATURE"
    } else {
        "CONTSAMEGRADIENT"
    }
}

/// (parent curve, segment start, segment length) of one segment.
fn parent_curve(m: &mut Model, c: &Common, line: Id, s: &Seg) -> (Id, f64, f64) {
    let parent_place = |m: &mut Model| {
        m.add(
            "IFCAXIS2PLACEMENT2D",
            &[V::Ref(c.origin2), V::Ref(c.x_dir2)],
        )
    };
    match s.kind {
        SegKind::Line => (line, 0.0, s.len),
        SegKind::Arc => {
            // A circle runs counter-clockwise; a right-hand arc runs it backwards.
            let pos = parent_place(m);
            let circle = m.add("IFCCIRCLE", &[V::Ref(pos), V::Real(1.0 / s.k0.abs())]);
            (circle, 0.0, s.len.copysign(s.k0))
        }
        SegKind::Clothoid => {
            // Curvature c·t at distance t from the inflection point, with
            // c = 1/(A·|A|); the element starts at t = k0/c.
            let rate = (s.k1 - s.k0) / s.len;
            let a = rate.signum() / rate.abs().sqrt();
            let pos = parent_place(m);
            let clothoid = m.add("IFCCLOTHOID", &[V::Ref(pos), V::Real(a)]);
            (clothoid, s.k0 / rate, s.len)
        }
    }
}

/// The `IfcCompositeCurve` of the alignment and its shape.
fn geometry(m: &mut Model, c: &Common, inp: &ModelInput, starts: &[Id]) -> (Id, Id) {
    let unit_vector = m.add("IFCVECTOR", &[V::Ref(c.x_dir2), V::Real(1.0)]);
    let line = m.add("IFCLINE", &[V::Ref(c.origin2), V::Ref(unit_vector)]);
    let mut curve_segs = Vec::with_capacity(inp.segs.len() + 1);
    let place = |m: &mut Model, at: Id, dir: f64| {
        let d = m.dir2(dir);
        m.add("IFCAXIS2PLACEMENT2D", &[V::Ref(at), V::Ref(d)])
    };
    for (i, s) in inp.segs.iter().enumerate() {
        let (parent, start, length) = parent_curve(m, c, line, s);
        let p = place(m, starts[i], s.dir);
        curve_segs.push(m.add(
            "IFCCURVESEGMENT",
            &[
                V::Enum(transition(s)),
                V::Ref(p),
                V::typed("IFCLENGTHMEASURE", start),
                V::typed("IFCLENGTHMEASURE", length),
                V::Ref(parent),
            ],
        ));
    }
    let p = place(m, starts[inp.segs.len()], inp.end.2);
    curve_segs.push(m.add(
        "IFCCURVESEGMENT",
        &[
            V::Enum("DISCONTINUOUS"),
            V::Ref(p),
            V::typed("IFCLENGTHMEASURE", 0.0),
            V::typed("IFCLENGTHMEASURE", 0.0),
            V::Ref(line),
        ],
    ));
    let curve = m.add("IFCCOMPOSITECURVE", &[V::refs(&curve_segs), V::Bool(false)]);
    let rep = m.add(
        "IFCSHAPEREPRESENTATION",
        &[
            V::Ref(c.axis_context),
            V::s("Axis"),
            V::s("Curve2D"),
            V::refs(&[curve]),
        ],
    );
    let shape = m.add(
        "IFCPRODUCTDEFINITIONSHAPE",
        &[V::Null, V::Null, V::refs(&[rep])],
    );
    (curve, shape)
}

/// The `IfcReferent` at distance 0 with the start station.
fn referent(m: &mut Model, inp: &ModelInput, curve: Id) -> Id {
    let distance = m.add(
        "IFCPOINTBYDISTANCEEXPRESSION",
        &[
            V::typed("IFCLENGTHMEASURE", 0.0),
            V::Null,
            V::Null,
            V::Null,
            V::Ref(curve),
        ],
    );
    let linear = m.add(
        "IFCAXIS2PLACEMENTLINEAR",
        &[V::Ref(distance), V::Null, V::Null],
    );
    // The same position as a plain placement, for readers without linear referencing.
    let s = inp.segs[0];
    let at = m.add("IFCCARTESIANPOINT", &[V::reals(&[s.x, s.y, 0.0])]);
    let z = m.add("IFCDIRECTION", &[V::reals(&[0.0, 0.0, 1.0])]);
    let x = m.add(
        "IFCDIRECTION",
        &[V::reals(&[s.dir.cos(), s.dir.sin(), 0.0])],
    );
    let fallback = m.add("IFCAXIS2PLACEMENT3D", &[V::Ref(at), V::Ref(z), V::Ref(x)]);
    let placement = m.add(
        "IFCLINEARPLACEMENT",
        &[V::Null, V::Ref(linear), V::Ref(fallback)],
    );
    let station = inp.chainages[0].0;
    let g = m.guid();
    let referent = m.add(
        "IFCREFERENT",
        &[
            g,
            V::Null,
            V::s(format!("{station:.5}")),
            V::s("start of the fitted alignment: survey chainage along the measured rail"),
            V::Null,
            V::Ref(placement),
            V::Null,
            V::Enum("STATION"),
        ],
    );
    let p_station = m.add(
        "IFCPROPERTYSINGLEVALUE",
        &[
            V::s("Station"),
            V::Null,
            V::typed("IFCLENGTHMEASURE", station),
            V::Null,
        ],
    );
    let p_increasing = m.add(
        "IFCPROPERTYSINGLEVALUE",
        &[
            V::s("HasIncreasingStation"),
            V::Null,
            V::Typed("IFCBOOLEAN", Box::new(V::Bool(true))),
            V::Null,
        ],
    );
    let g = m.guid();
    let pset = m.add(
        "IFCPROPERTYSET",
        &[
            g,
            V::Null,
            V::s("Pset_Stationing"),
            V::Null,
            V::refs(&[p_station, p_increasing]),
        ],
    );
    let g = m.guid();
    m.add(
        "IFCRELDEFINESBYPROPERTIES",
        &[
            g,
            V::Null,
            V::Null,
            V::Null,
            V::refs(&[referent]),
            V::Ref(pset),
        ],
    );
    referent
}

/// `IfcProjectedCRS` and `IfcMapConversion` for a grid: the model's
/// coordinates are grid coordinates, in feet when the file is.
fn map_conversion(m: &mut Model, c: &Common, inp: &ModelInput) {
    let LandXmlFrame::Grid { crs, .. } = inp.frame else {
        return;
    };
    let target = m.add(
        "IFCPROJECTEDCRS",
        &[
            V::s(format!("EPSG:{}", crs.code())),
            V::s(crs.definition()),
            V::Null,
            V::Null,
            V::Null,
            V::Null,
            V::Ref(c.metre),
        ],
    );
    let scale = match inp.opts.unit {
        LengthUnit::Metre => V::Null,
        LengthUnit::Foot => V::Real(inp.opts.unit.metres()),
    };
    m.add(
        "IFCMAPCONVERSION",
        &[
            V::Ref(c.context),
            V::Ref(target),
            V::Real(0.0),
            V::Real(0.0),
            V::Real(0.0),
            V::Real(1.0),
            V::Real(0.0),
            scale,
        ],
    );
}

fn header(opts: &IfcOptions) -> Header {
    let (date, time) = crate::export::landxml::date_time(opts.created);
    let me = format!("chordline {}", env!("CARGO_PKG_VERSION"));
    Header {
        view: "ViewDefinition [Alignment-basedView]".into(),
        name: "alignment.ifc".into(),
        time_stamp: format!("{date}T{time}"),
        preprocessor: me.clone(),
        originating_system: me,
        schema: "IFC4X3_ADD2".into(),
    }
}

/// The project, site and alignment with everything they hold.
fn products(m: &mut Model, c: &Common, units: Id, inp: &ModelInput) -> Id {
    let name = inp.opts.name.as_str();
    let g = m.guid();
    let project = m.add(
        "IFCPROJECT",
        &[
            g,
            V::Null,
            V::s(name),
            V::s("as-built alignment fitted to versine survey readings"),
            V::Null,
            V::Null,
            V::Null,
            V::refs(&[c.context]),
            V::Ref(units),
        ],
    );
    let (lat, lon, about) = match inp.frame {
        LandXmlFrame::Local { placement: None } => (V::Null, V::Null, V::Null),
        LandXmlFrame::Local { placement: Some(p) } | LandXmlFrame::Grid { placement: p, .. } => (
            compound_angle(p.origin().lat),
            compound_angle(p.origin().lon),
            V::s("reference latitude and longitude (WGS 84): the origin of the local ground frame"),
        ),
    };
    let g = m.guid();
    let site = m.add(
        "IFCSITE",
        &[
            g,
            V::Null,
            V::s("site"),
            about,
            V::Null,
            V::Ref(c.origin_placement),
            V::Null,
            V::Null,
            V::Enum("ELEMENT"),
            lat,
            lon,
            V::Null,
            V::Null,
            V::Null,
        ],
    );
    let mut starts: Vec<Id> = inp.segs.iter().map(|s| m.point2(s.x, s.y)).collect();
    starts.push(m.point2(inp.end.0, inp.end.1));
    let (curve, shape) = geometry(m, c, inp, &starts);
    let g = m.guid();
    let alignment = m.add(
        "IFCALIGNMENT",
        &[
            g,
            V::Null,
            V::s(name),
            V::s(frame_description(inp.frame)),
            V::Null,
            V::Ref(c.origin_placement),
            V::Ref(shape),
            V::Enum("NOTDEFINED"),
        ],
    );
    let g = m.guid();
    let horizontal = m.add(
        "IFCALIGNMENTHORIZONTAL",
        &[
            g,
            V::Null,
            V::s("horizontal"),
            V::Null,
            V::Null,
            V::Null,
            V::Null,
        ],
    );
    let segments = layout(m, inp, &starts);
    let referent = referent(m, inp, curve);
    m.rel("IFCRELAGGREGATES", project, &[site, alignment]);
    m.rel("IFCRELNESTS", alignment, &[horizontal]);
    m.rel("IFCRELNESTS", alignment, &[referent]);
    m.rel("IFCRELNESTS", horizontal, &segments);
    let g = m.guid();
    m.add(
        "IFCRELREFERENCEDINSPATIALSTRUCTURE",
        &[
            g,
            V::Null,
            V::Null,
            V::Null,
            V::refs(&[alignment]),
            V::Ref(site),
        ],
    );
    alignment
}

/// The whole file as text.
pub(super) fn build(inp: &ModelInput) -> Result<String, IfcError> {
    // Seed of the GlobalIds: everything the file says.
    let seed_text = format!(
        "{}|{:?}|{:?}|{:?}|{}|{:?}",
        inp.opts.name,
        inp.segs,
        inp.end,
        inp.chainages,
        frame_description(inp.frame),
        inp.opts.created
    );
    let mut m = Model {
        d: Data::default(),
        seed: fnv1a_128(seed_text.as_bytes()),
        guids: 0,
    };
    let (common, units) = units_and_contexts(&mut m, inp.opts.unit);
    products(&mut m, &common, units, inp);
    map_conversion(&mut m, &common, inp);
    if let Some(entity) = m.d.not_finite() {
        return Err(IfcError::NotFinite(format!("a number of {entity}")));
    }
    Ok(m.d.file_text(&header(inp.opts)))
}
