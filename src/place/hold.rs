//! Holding the placed design sideways at plan stations, and measuring the
//! placed design the way the survey measured the track: the sideways
//! distance from the measured centreline (the slew onto it) and its versines
//! on the surveyed rail with the survey's chord.

use super::locate::{Loc, Locator};
use super::{PlacedDesign, Target};
use crate::fit::{FitResult, StationDesign};
use crate::geometry::{Alignment, Pose};
use crate::integrate::Plan;
use crate::survey::{Arms, Marking, Rail, Setup};
use nalgebra::{DMatrix, DVector};

/// Standard deviation of a [`Hold`] (m): a hold is a requirement (a section
/// end, a fixed point, a slew limit), not a measurement. 0.1 mm weighs it
/// 4·10⁴ times a tie while the Gauss–Newton steps stay well conditioned
/// (with 0.01 mm the placement of a simulated survey went astray by 60 mm);
/// what a hold still misses is taken out by moving its target
/// (`realign::slews_onto_placed` meets every hold to 1 µm that way).
pub const HOLD_SD: f64 = 1e-4;

/// The design held sideways at one plan station: the design must lie
/// `offset` metres to the left of the measured centreline there (facing
/// increasing chainage; the slew onto the design), within `sd`. Only the
/// sideways distance is held: the design may slide along the track.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Hold {
    /// Index of the station in the plan.
    pub station: usize,
    /// Where the design must lie, metres left of the measured centreline.
    pub offset: f64,
    /// Standard deviation, metres.
    pub sd: f64,
}

/// The targets of `holds` (stations without a position left out).
pub(super) fn targets(
    fit: &FitResult,
    plan: &Plan,
    holds: &[Hold],
    locator: &Locator,
) -> Vec<Target> {
    holds
        .iter()
        .filter_map(|h| {
            let s = plan.stations.get(h.station)?;
            if !(s.x.is_finite() && s.y.is_finite() && h.sd > 0.0) {
                return None;
            }
            let n = (-s.heading.sin(), s.heading.cos());
            Some(Target {
                loc: locator.locate(fit.centre_distance(s.chainage)),
                x: s.x + h.offset * n.0,
                y: s.y + h.offset * n.1,
                sd: h.sd,
                normal: Some(n),
            })
        })
        .collect()
}

/// Rows of sideways-only targets reduced to the distance along their normal
/// (the second row of the pair zeroed): residual and Jacobian alike.
pub(super) fn sideways_only(targets: &[Target], jac: &mut DMatrix<f64>, r: &mut DVector<f64>) {
    for (k, t) in targets.iter().enumerate() {
        let Some((nx, ny)) = t.normal else { continue };
        let (a, b) = (2 * k, 2 * k + 1);
        r[a] = nx * r[a] + ny * r[b];
        r[b] = 0.0;
        for j in 0..jac.ncols() {
            jac[(a, j)] = nx * jac[(a, j)] + ny * jac[(b, j)];
            jac[(b, j)] = 0.0;
        }
    }
}

/// Centreline distance along `al` of a located point.
fn distance_of(al: &Alignment, loc: Loc) -> f64 {
    match al.elements().get(loc.element) {
        Some(e) => al.element_start(loc.element) + loc.t * e.length + loc.extra,
        None => loc.extra,
    }
}

/// Signed perpendicular distance from the point `(x, y)` to `al`, positive
/// when the design lies to the left of the point (facing along `al`),
/// starting the search for the foot at distance `u` (Newton's method on
/// `(p − P(u))·T(u) = 0`, to 1e-10 m).
fn distance_to(al: &Alignment, mut u: f64, x: f64, y: f64) -> f64 {
    let mut q = al.pose_at(u);
    for _ in 0..30 {
        let (c, s) = (q.heading.cos(), q.heading.sin());
        let (ex, ey) = (x - q.x, y - q.y);
        let along = ex * c + ey * s;
        let side = -ex * s + ey * c;
        let denom = (1.0 - al.curvature_at(u) * side).max(0.1);
        u += along / denom;
        q = al.pose_at(u);
        if along.abs() < 1e-10 {
            break;
        }
    }
    // The design's left normal at the foot: (−sin h, cos h).
    (q.x - x) * -q.heading.sin() + (q.y - y) * q.heading.cos()
}

/// The field versine of [`rail_versine`] in closed form where the whole chord
/// (with room for a wire's ends) lies on one straight or one arc of `al`: the
/// rail there is a line or a circle of curvature `k / (1 − k d)`, read by the
/// chord relations of [`crate::chord`]. `None` where the chord meets a
/// transition or a joint (most stations of a route are on one element, and
/// the numerical reading costs a hundred poses).
fn versine_within_one_element(
    al: &Alignment,
    u: f64,
    d: f64,
    arms: Arms,
    rail: Rail,
    marking: Marking,
) -> Option<f64> {
    let i = al.locate(u);
    let e = al.elements().get(i)?;
    if e.k_start != e.k_end {
        return None;
    }
    let k = e.k_start;
    let stretch = 1.0 / (1.0 - k * d);
    // A wire's ends lie within a few per cent of the chord of the marks'.
    let margin = 0.05 * arms.chord() + 0.01;
    let (s0, s1) = (al.element_start(i), al.element_start(i) + e.length);
    let (back, ahead) = (
        (arms.behind + margin) * stretch.abs(),
        (arms.ahead + margin) * stretch.abs(),
    );
    if !(stretch.is_finite() && u - back > s0 && u + ahead < s1) {
        return None;
    }
    let chord_side = crate::chord::versine_from_curvature_arms(k * stretch, arms, marking);
    Some(rail.chord_side(chord_side))
}

/// Field versine of the offset line `d` of `al` (the surveyed rail) at
/// centreline distance `u`, read on `rail` with a chord of arms `arms`:
/// between the marks `behind` and `ahead` of it along the rail (taped), or by
/// a rigid wire of the chord's length whose measuring point (its middle, or
/// `behind` from its rear end) is abreast of the mark (its ends found by
/// Newton's method: the wire's length and the mark's distance along it from
/// the measuring point to 1e-12 m).
fn rail_versine(al: &Alignment, u: f64, d: f64, arms: Arms, rail: Rail, wire: bool) -> f64 {
    let r = al.offset_length(u, d);
    let pt = |rr: f64| al.pose_at(al.centreline_distance(rr, d)).offset_left(d);
    let p = al.pose_at(u).offset_left(d);
    let (mut ra, mut rb) = (r - arms.behind, r + arms.ahead);
    let (mut pa, mut pb) = (pt(ra), pt(rb));
    let chord = arms.chord();
    let frac = arms.behind / chord;
    if wire {
        for _ in 0..30 {
            let (wx, wy) = (pb.0 - pa.0, pb.1 - pa.1);
            let len = wx.hypot(wy);
            let (mx, my) = if arms.is_symmetric() {
                (0.5 * (pa.0 + pb.0), 0.5 * (pa.1 + pb.1))
            } else {
                (pa.0 + frac * wx, pa.1 + frac * wy)
            };
            let f1 = len - chord;
            let f2 = ((p.0 - mx) * wx + (p.1 - my) * wy) / len;
            // Moving the rear end by x and the front end by y along the rail
            // changes the length by y − x and moves the measuring point by
            // x + frac·(y − x): solve for a shift f2 and a length change −f1.
            ra += f2 + frac * f1;
            rb += f2 - (1.0 - frac) * f1;
            pa = pt(ra);
            pb = pt(rb);
            if f1.abs() < 1e-12 && f2.abs() < 1e-12 {
                break;
            }
        }
    }
    let (wx, wy) = (pb.0 - pa.0, pb.1 - pa.1);
    let left = (wx * (p.1 - pa.1) - wy * (p.0 - pa.0)) / wx.hypot(wy);
    // On the left rail, bowing away from the wire is bowing to the left.
    match rail {
        Rail::Left => left,
        Rail::Right => -left,
    }
}

impl PlacedDesign {
    /// The slew onto the placed design at plan station `s`: the signed
    /// perpendicular distance (in the plan) from the measured centreline
    /// point to the design, positive when the design lies to the left.
    pub fn slew_at(&self, fit: &FitResult, s: &crate::integrate::Station) -> f64 {
        let loc = self.locator.locate(fit.centre_distance(s.chainage));
        distance_to(&self.alignment, distance_of(&self.alignment, loc), s.x, s.y)
    }

    /// The design versine (field convention, m) of the placed design at
    /// every plan station, measured as the survey measured the track: on the
    /// station's rail, with the survey's chord and marking (taped marks or a
    /// rigid wire), plus the reading bias when the fit subtracted one.
    pub fn design_versines(&self, fit: &FitResult, plan: &Plan, setup: &Setup) -> Vec<f64> {
        let arms = setup.arms();
        let wire = setup.marking == Marking::Wire;
        let shift = match fit.stats.bias {
            Some((b, _)) if fit.stats.bias_removed => b,
            _ => 0.0,
        };
        use rayon::prelude::*;
        plan.stations
            .par_iter()
            .with_min_len(4096)
            .map(|s| {
                let d = s.rail.offset_left(setup.gauge);
                let u0 = fit.centre_distance(s.chainage);
                let u = distance_of(&self.alignment, self.locator.locate(u0));
                let v =
                    versine_within_one_element(&self.alignment, u, d, arms, s.rail, setup.marking)
                        .unwrap_or_else(|| rail_versine(&self.alignment, u, d, arms, s.rail, wire));
                v + s.rail.chord_side(shift)
            })
            .collect()
    }

    /// The design columns of `stations.csv`, one per survey reading: the
    /// placed design's position, its versine ([`Self::design_versines`]) and
    /// the reading minus it.
    pub fn station_design(
        &self,
        fit: &FitResult,
        plan: &Plan,
        setup: &Setup,
    ) -> Vec<StationDesign> {
        let dv = self.design_versines(fit, plan, setup);
        fit.chainages
            .iter()
            .zip(dv.iter().zip(&fit.design_versine))
            .zip(&fit.residual)
            .map(|((&ch, (&d, &d0)), &r)| {
                let q: Pose = self.locator.point(
                    &self.alignment,
                    self.locator.locate(fit.centre_distance(ch)),
                );
                StationDesign {
                    chainage: ch,
                    design_versine: d,
                    residual: r.map(|r| r - (d - d0)),
                    x: q.x,
                    y: q.y,
                }
            })
            .collect()
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::geometry::Element;

    /// The closed form on one element agrees with the numerical reading of
    /// the rail (marks or a wire found by Newton's method) on straights and
    /// arcs of either hand, on either rail, for symmetric and asymmetric
    /// chords, and it declines where the chord meets a transition.
    #[test]
    fn closed_form_on_one_element_matches_the_rail_read_numerically() {
        let al = Alignment::new(
            Pose::default(),
            0.0,
            vec![
                Element::straight(100.0),
                Element::transition(40.0, 0.0, 1.0 / 300.0),
                Element::arc(120.0, 300.0),
                Element::transition(40.0, 1.0 / 300.0, -1.0 / 180.0),
                Element::arc(100.0, -180.0),
            ],
        );
        let chords = [
            Arms::symmetric(10.0),
            Arms {
                behind: 4.0,
                ahead: 6.5,
            },
        ];
        let (mut fast, mut slow) = (0, 0);
        for arms in chords {
            for rail in [Rail::Left, Rail::Right] {
                let d = rail.offset_left(1.435);
                for marking in [Marking::Taped, Marking::Wire] {
                    let wire = marking == Marking::Wire;
                    for step in 3..80 {
                        let u = 5.0 * step as f64;
                        let exact = rail_versine(&al, u, d, arms, rail, wire);
                        match versine_within_one_element(&al, u, d, arms, rail, marking) {
                            Some(v) => {
                                fast += 1;
                                assert!(
                                    (v - exact).abs() < 1e-9,
                                    "{arms:?} {rail:?} {marking:?} at {u}: {v} vs {exact}"
                                );
                            }
                            None => slow += 1,
                        }
                    }
                }
            }
        }
        // Both paths were taken: the transitions (100–140 m, 260–300 m) and
        // a chord's length around them go the numerical way.
        assert!(
            fast > 400 && slow > 50,
            "{fast} closed-form, {slow} numerical"
        );
    }
}
