//! What a chart is made of: the palette, line styles, marker shapes and the
//! layers (lines, bands, reference lines, point marks, vertical marks).
//!
//! Every colour comes from the Okabe–Ito colour-universal-design palette
//! (Okabe & Ito 2008, "Color Universal Design"); every layer also differs by
//! line style or marker shape, so that charts read in greyscale too.

/// Okabe–Ito blue.
pub const BLUE: &str = "#0072B2";
/// Okabe–Ito vermillion.
pub const VERMILLION: &str = "#D55E00";
/// Okabe–Ito reddish purple.
pub const PURPLE: &str = "#CC79A7";
/// Black (Okabe–Ito's eighth colour).
pub const BLACK: &str = "#000000";
/// A mid grey for bands and intervals.
pub const GREY: &str = "#777777";

/// How a line is stroked.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Pattern {
    /// Continuous.
    Solid,
    /// Long dashes.
    Dashed,
    /// Dot and dash.
    DotDash,
}

impl Pattern {
    pub(super) fn attr(self) -> &'static str {
        match self {
            Pattern::Solid => "",
            Pattern::Dashed => r#" stroke-dasharray="8 4""#,
            Pattern::DotDash => r#" stroke-dasharray="10 3 2 3""#,
        }
    }
}

/// Colour, dash and width of a line.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Style {
    /// CSS colour.
    pub colour: &'static str,
    /// Stroke pattern.
    pub dash: Pattern,
    /// Stroke width, user units.
    pub width: f64,
}

impl Style {
    /// A style.
    pub const fn new(colour: &'static str, dash: Pattern, width: f64) -> Self {
        Style {
            colour,
            dash,
            width,
        }
    }
}

/// Shape of a point mark.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Marker {
    /// Open circle.
    Circle,
    /// Filled square.
    Square,
    /// Filled triangle pointing down.
    Triangle,
}

/// One line on a chart.
#[derive(Debug, Clone)]
pub struct Series {
    /// Legend text.
    pub name: String,
    /// Points (x, y); non-finite points break the line.
    pub points: Vec<(f64, f64)>,
    /// How it is drawn.
    pub style: Style,
}

/// A shaded band between two curves sharing their x values.
#[derive(Debug, Clone)]
pub struct Band {
    /// Legend text.
    pub name: String,
    /// (x, low, high); non-finite values break the band.
    pub points: Vec<(f64, f64, f64)>,
    /// Fill colour (drawn translucent).
    pub colour: &'static str,
}

/// A horizontal line at a fixed value (a limit, a tolerance).
#[derive(Debug, Clone)]
pub struct RefLine {
    /// Legend text (lines with the same name share one legend entry).
    pub name: String,
    /// Value on the y axis.
    pub y: f64,
    /// How it is drawn.
    pub style: Style,
}

/// One point mark, optionally with a vector drawn from it.
#[derive(Debug, Clone)]
pub struct Mark {
    /// Position.
    pub x: f64,
    /// Position.
    pub y: f64,
    /// Text beside the mark (may be empty).
    pub label: String,
    /// Vector (dx, dy) in data units, drawn as an arrow from the mark.
    pub vector: Option<(f64, f64)>,
}

/// A set of point marks sharing a shape and a colour.
#[derive(Debug, Clone)]
pub struct MarkSet {
    /// Legend text.
    pub name: String,
    /// Shape.
    pub marker: Marker,
    /// Colour.
    pub colour: &'static str,
    /// The marks.
    pub marks: Vec<Mark>,
}

/// Vertical lines across the plot at given x values (fixed points, say),
/// each with a downward triangle at the top and a label.
#[derive(Debug, Clone)]
pub struct VMarks {
    /// Legend text.
    pub name: String,
    /// Colour.
    pub colour: &'static str,
    /// (x, label).
    pub at: Vec<(f64, String)>,
}
