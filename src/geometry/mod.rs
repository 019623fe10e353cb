//! Plan geometry of a railway alignment: straights, clothoid transitions and
//! circular arcs joined end to end, and exact evaluation of position, heading
//! and curvature along them (and along lines offset from them, such as a rail).
//!
//! # Conventions
//! Lengths in metres, angles in radians. Curvature is **positive for a
//! left-hand curve** (centre on the left facing increasing chainage). The plan
//! frame is (x = easting, y = northing); `heading` is the mathematical angle
//! counter-clockwise from +x. Survey bearings (clockwise from north) are
//! `bearing = π/2 − heading`, see [`heading_to_bearing`].

mod quadrature;

pub use quadrature::{fresnel, integrate_heading};

use std::f64::consts::{FRAC_PI_2, TAU};

/// What an element is.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, serde::Serialize, serde::Deserialize)]
pub enum ElementKind {
    /// Zero curvature.
    Straight,
    /// Clothoid: curvature linear in length between its end curvatures.
    Transition,
    /// Circular arc: constant non-zero curvature.
    Arc,
}

impl ElementKind {
    /// The word used in output files: `straight`, `transition`, `arc`.
    pub fn name(self) -> &'static str {
        match self {
            ElementKind::Straight => "straight",
            ElementKind::Transition => "transition",
            ElementKind::Arc => "arc",
        }
    }
}

/// One element: its length and the curvature at its two ends (1/m, positive left).
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct Element {
    /// Kind of element.
    pub kind: ElementKind,
    /// Length along the element, metres.
    pub length: f64,
    /// Curvature at the start, 1/m.
    pub k_start: f64,
    /// Curvature at the end, 1/m.
    pub k_end: f64,
}

impl Element {
    /// A straight of length `length` m.
    pub fn straight(length: f64) -> Self {
        Element {
            kind: ElementKind::Straight,
            length,
            k_start: 0.0,
            k_end: 0.0,
        }
    }
    /// A circular arc of signed radius `radius` m (positive curves left).
    pub fn arc(length: f64, radius: f64) -> Self {
        Element {
            kind: ElementKind::Arc,
            length,
            k_start: 1.0 / radius,
            k_end: 1.0 / radius,
        }
    }
    /// A clothoid from curvature `k_start` to `k_end` (1/m).
    pub fn transition(length: f64, k_start: f64, k_end: f64) -> Self {
        Element {
            kind: ElementKind::Transition,
            length,
            k_start,
            k_end,
        }
    }
    /// Curvature at distance `u` from the element start (clamped to the element).
    pub fn curvature_at(&self, u: f64) -> f64 {
        if self.length <= 0.0 {
            return self.k_end;
        }
        let t = (u / self.length).clamp(0.0, 1.0);
        self.k_start + (self.k_end - self.k_start) * t
    }
    /// Rate of change of curvature, 1/m².
    pub fn curvature_rate(&self) -> f64 {
        if self.length > 0.0 {
            (self.k_end - self.k_start) / self.length
        } else {
            0.0
        }
    }
    /// Heading change over the whole element, radians.
    pub fn turn(&self) -> f64 {
        0.5 * (self.k_start + self.k_end) * self.length
    }
    /// Pose reached after `u` metres along the element from `start`.
    pub fn advance(&self, start: Pose, u: f64) -> Pose {
        let k0 = self.k_start;
        let c = self.curvature_rate();
        let heading = start.heading + k0 * u + 0.5 * c * u * u;
        let (dx, dy) = if c == 0.0 && k0 == 0.0 {
            (u * start.heading.cos(), u * start.heading.sin())
        } else if c == 0.0 {
            (
                (heading.sin() - start.heading.sin()) / k0,
                (start.heading.cos() - heading.cos()) / k0,
            )
        } else {
            integrate_heading(start.heading, k0, c, u)
        };
        Pose {
            x: start.x + dx,
            y: start.y + dy,
            heading,
        }
    }
}

/// A point with a direction of travel in the plan.
#[derive(Debug, Clone, Copy, PartialEq, Default, serde::Serialize, serde::Deserialize)]
pub struct Pose {
    /// Easting (x), metres.
    pub x: f64,
    /// Northing (y), metres.
    pub y: f64,
    /// Heading, radians counter-clockwise from +x (east).
    pub heading: f64,
}

impl Pose {
    /// The point `d` metres to the left of this pose (negative `d`: to the right).
    pub fn offset_left(&self, d: f64) -> (f64, f64) {
        (
            self.x - d * self.heading.sin(),
            self.y + d * self.heading.cos(),
        )
    }
}

/// Convert a mathematical heading (radians CCW from east) to a bearing in
/// degrees clockwise from north, in [0, 360).
///
/// # Examples
/// ```
/// use chordline::geometry::heading_to_bearing;
/// assert!((heading_to_bearing(0.0) - 90.0).abs() < 1e-12);
/// assert!((heading_to_bearing(std::f64::consts::FRAC_PI_2) - 0.0).abs() < 1e-12);
/// ```
pub fn heading_to_bearing(heading: f64) -> f64 {
    let b = (FRAC_PI_2 - heading).rem_euclid(TAU).to_degrees();
    if b >= 360.0 { b - 360.0 } else { b }
}

/// Convert a bearing in degrees clockwise from north to a mathematical heading
/// in radians counter-clockwise from east.
pub fn bearing_to_heading(bearing_deg: f64) -> f64 {
    FRAC_PI_2 - bearing_deg.to_radians()
}

/// A chain of elements placed in the plan from a start pose.
#[derive(Debug, Clone, PartialEq)]
pub struct Alignment {
    start: Pose,
    start_chainage: f64,
    elements: Vec<Element>,
    /// Distance from the start to the start of each element.
    starts: Vec<f64>,
    /// Pose at the start of each element.
    poses: Vec<Pose>,
    /// Heading change from the start to the start of each element.
    turns: Vec<f64>,
    /// Total length (kept so that a query costs a binary search, not a sum).
    total: f64,
}

impl Alignment {
    /// Place `elements` end to end from `start`, with the first element
    /// starting at centreline chainage `start_chainage`.
    pub fn new(start: Pose, start_chainage: f64, elements: Vec<Element>) -> Self {
        let mut starts = Vec::with_capacity(elements.len());
        let mut poses = Vec::with_capacity(elements.len());
        let mut turns = Vec::with_capacity(elements.len());
        let (mut s, mut p, mut t) = (0.0, start, 0.0);
        for e in &elements {
            starts.push(s);
            poses.push(p);
            turns.push(t);
            p = e.advance(p, e.length);
            s += e.length;
            t += e.turn();
        }
        Alignment {
            start,
            start_chainage,
            elements,
            starts,
            poses,
            turns,
            total: s,
        }
    }
    /// The elements in order.
    pub fn elements(&self) -> &[Element] {
        &self.elements
    }
    /// Start pose.
    pub fn start(&self) -> Pose {
        self.start
    }
    /// Chainage of the start.
    pub fn start_chainage(&self) -> f64 {
        self.start_chainage
    }
    /// Total length, metres.
    pub fn length(&self) -> f64 {
        self.total
    }
    /// Distance from the alignment start to the start of element `i`.
    pub fn element_start(&self, i: usize) -> f64 {
        self.starts[i]
    }
    /// Pose at the start of element `i`.
    pub fn element_pose(&self, i: usize) -> Pose {
        self.poses[i]
    }
    /// Index of the element containing distance `s` from the start (clamped).
    pub fn locate(&self, s: f64) -> usize {
        if self.elements.is_empty() {
            return 0;
        }
        let i = self.starts.partition_point(|&x| x <= s);
        i.saturating_sub(1).min(self.elements.len() - 1)
    }
    /// Curvature at distance `s` from the start (1/m).
    pub fn curvature_at(&self, s: f64) -> f64 {
        if self.elements.is_empty() {
            return 0.0;
        }
        let i = self.locate(s);
        self.elements[i].curvature_at(s - self.starts[i])
    }
    /// Pose of the centreline at distance `s` from the start. Beyond either end
    /// the alignment is extended along its end tangent.
    pub fn pose_at(&self, s: f64) -> Pose {
        if self.elements.is_empty() {
            return Element::straight(0.0).advance(self.start, s);
        }
        if s < 0.0 {
            return Element::straight(0.0).advance(self.start, s);
        }
        let total = self.length();
        if s > total {
            let end = self.pose_at(total);
            return Element::straight(0.0).advance(end, s - total);
        }
        let i = self.locate(s);
        self.elements[i].advance(self.poses[i], s - self.starts[i])
    }
    /// Length along a line offset `d` metres to the left of the centreline,
    /// from the start to centreline distance `s` (`∫(1 − k d) ds`, exact).
    pub fn offset_length(&self, s: f64, d: f64) -> f64 {
        // ∫(1 − k d) ds = s − d·(heading change from the start to s).
        if s <= 0.0 || self.elements.is_empty() {
            return s;
        }
        let i = self.locate(s);
        let e = &self.elements[i];
        let u = (s - self.starts[i]).min(e.length);
        let turn = self.turns[i] + e.k_start * u + 0.5 * e.curvature_rate() * u * u;
        s - d * turn
    }
    /// Centreline distance `s` at which the line offset `d` to the left has
    /// run `r` metres from the start (inverse of [`Alignment::offset_length`],
    /// by Newton's method to 1e-12 m).
    pub fn centreline_distance(&self, r: f64, d: f64) -> f64 {
        let mut s = r;
        for _ in 0..50 {
            let f = self.offset_length(s, d) - r;
            let dfds = 1.0 - self.curvature_at(s) * d;
            let step = f / dfds;
            s -= step;
            if step.abs() < 1e-12 {
                break;
            }
        }
        s
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    #[test]
    fn arc_closes_a_full_circle() {
        let r = 300.0;
        let a = Alignment::new(Pose::default(), 0.0, vec![Element::arc(TAU * r, r)]);
        let p = a.pose_at(TAU * r);
        assert!(p.x.abs() < 1e-9 && p.y.abs() < 1e-9, "{p:?}");
        let q = a.pose_at(0.5 * TAU * r);
        assert_relative_eq!(q.y, 2.0 * r, epsilon = 1e-9);
    }

    #[test]
    fn clothoid_end_point_matches_fresnel_reference() {
        // CHECKS.md 4.9 (computed with scipy.special.fresnel 1.17.1 and mpmath):
        // L = 60 m, R = 450 m: x = 59.973338820 m, y = 1.332910113 m.
        let e = Element::transition(60.0, 0.0, 1.0 / 450.0);
        let p = e.advance(Pose::default(), 60.0);
        assert_relative_eq!(p.x, 59.973338820, epsilon = 1e-8);
        assert_relative_eq!(p.y, 1.332910113, epsilon = 1e-8);
        assert_relative_eq!(p.heading, 60.0 / 900.0, epsilon = 1e-15);
    }

    #[test]
    fn offset_length_inverts() {
        let a = Alignment::new(
            Pose::default(),
            0.0,
            vec![
                Element::straight(100.0),
                Element::transition(60.0, 0.0, -1.0 / 450.0),
                Element::arc(200.0, -450.0),
            ],
        );
        for &s in &[10.0, 120.0, 300.0] {
            let r = a.offset_length(s, 0.7175);
            assert_relative_eq!(a.centreline_distance(r, 0.7175), s, epsilon = 1e-9);
        }
        // On the right-hand arc, the left rail is the outer, longer one.
        assert!(a.offset_length(360.0, 0.7175) > 360.0);
    }
}
