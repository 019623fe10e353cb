//! Where a survey chainage falls on the design chain, kept as a fraction of
//! its element so that it follows the element when the placement changes the
//! element's length.

use crate::fit::FitResult;
use crate::geometry::{Alignment, Element, Pose};

/// A point of the design chain: element, fraction of its length, and metres
/// beyond the chain's ends along the end tangent (negative before the start).
#[derive(Debug, Clone, Copy, PartialEq)]
pub(super) struct Loc {
    pub element: usize,
    pub t: f64,
    pub extra: f64,
}

/// The fitted chain's element starts and lengths (centreline distances).
#[derive(Debug, Clone)]
pub(super) struct Locator {
    starts: Vec<f64>,
    lengths: Vec<f64>,
}

impl Locator {
    pub fn new(fit: &FitResult) -> Self {
        Self::of_alignment(&fit.design)
    }

    /// The locator of the chain `d`.
    pub fn of_alignment(d: &Alignment) -> Self {
        let n = d.elements().len();
        Locator {
            starts: (0..n).map(|i| d.element_start(i)).collect(),
            lengths: d.elements().iter().map(|e| e.length).collect(),
        }
    }

    /// The point at centreline distance `d0` along the fitted chain.
    pub fn locate(&self, d0: f64) -> Loc {
        let n = self.starts.len();
        if n == 0 || d0 < 0.0 {
            return Loc {
                element: 0,
                t: 0.0,
                extra: d0.min(0.0),
            };
        }
        let total = self.starts[n - 1] + self.lengths[n - 1];
        if d0 > total {
            return Loc {
                element: n - 1,
                t: 1.0,
                extra: d0 - total,
            };
        }
        let i = self.starts.partition_point(|&s| s <= d0).saturating_sub(1);
        let l = self.lengths[i];
        let t = if l > 0.0 {
            ((d0 - self.starts[i]) / l).clamp(0.0, 1.0)
        } else {
            0.0
        };
        Loc {
            element: i,
            t,
            extra: 0.0,
        }
    }

    /// The pose at `loc` on `al` (a chain with the same elements, possibly
    /// of other lengths and curvatures).
    pub fn point(&self, al: &Alignment, loc: Loc) -> Pose {
        match al.elements().get(loc.element) {
            Some(e) => self.point_on(e, al.element_pose(loc.element), loc),
            None => Element::straight(0.0).advance(al.start(), loc.extra),
        }
    }

    /// The pose at `loc` on element `e` starting at `start`.
    pub fn point_on(&self, e: &Element, start: Pose, loc: Loc) -> Pose {
        let p = e.advance(start, loc.t * e.length);
        if loc.extra == 0.0 {
            p
        } else {
            Element::straight(0.0).advance(p, loc.extra)
        }
    }
}
