//! A known element sequence as a plateau–ramp chain (for
//! [`super::fit_known`]).

use super::model::{Chain, Level};
use crate::geometry::ElementKind;

/// An element sequence in survey terms: the kinds in order, the survey
/// chainages (along the measured rail) of the joints between them, and each
/// element's centreline curvature at its start and end (1/m, positive
/// left). Straights have zero curvature, arcs a constant one, transitions
/// join their neighbours' curvatures.
#[derive(Debug, Clone, PartialEq)]
pub struct KnownSequence {
    /// Kind of every element.
    pub kinds: Vec<ElementKind>,
    /// Joint chainages, one fewer than elements, increasing (m).
    pub joints: Vec<f64>,
    /// (start, end) centreline curvature of every element (1/m).
    pub curvatures: Vec<(f64, f64)>,
}

/// The chain of `seq` for a measured rail `d_off` left of the centreline;
/// `None` when the lengths of the lists disagree or a transition is first
/// or last (its far end would be unknown).
pub(super) fn chain_of(seq: &KnownSequence, d_off: f64) -> Option<Chain> {
    let n = seq.kinds.len();
    if n == 0 || seq.joints.len() + 1 != n || seq.curvatures.len() != n {
        return None;
    }
    if seq.kinds[0] == ElementKind::Transition || seq.kinds[n - 1] == ElementKind::Transition {
        return None;
    }
    // Rail curvature from the centreline's: k_r = k_c/(1 − d k_c).
    let rail = |k: f64| k / (1.0 - d_off * k);
    let level = |kind: ElementKind, k: f64| match kind {
        ElementKind::Straight => Level::Zero,
        _ => Level::Free(rail(k)),
    };
    let (mut levels, mut mids, mut lens) = (Vec::new(), Vec::new(), Vec::new());
    let mut joined = Vec::new();
    let mut held = Vec::new();
    for i in 0..n {
        let kind = seq.kinds[i];
        if kind == ElementKind::Transition {
            let (b0, b1) = (seq.joints[i - 1], seq.joints[i]);
            if seq.kinds[i - 1] == ElementKind::Transition {
                // Two transitions meet: a plateau of zero length between.
                let k = rail(seq.curvatures[i].0);
                levels.push(if k == 0.0 {
                    Level::Zero
                } else {
                    Level::Free(k)
                });
                joined.push(true);
            }
            mids.push(0.5 * (b0 + b1));
            lens.push(b1 - b0);
            held.push(false);
        } else {
            if i > 0 && seq.kinds[i - 1] != ElementKind::Transition {
                // Two plateaus meet: a step.
                mids.push(seq.joints[i - 1]);
                lens.push(0.0);
                held.push(true);
            }
            levels.push(level(kind, seq.curvatures[i].0));
            joined.push(false);
        }
    }
    Some(Chain {
        levels,
        mids,
        lens,
        held,
        joined,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn steps_and_meeting_transitions_become_held_ramps_and_joined_plateaus() {
        let k = 1.0 / 500.0;
        let seq = KnownSequence {
            kinds: vec![
                ElementKind::Straight,
                ElementKind::Arc,
                ElementKind::Transition,
                ElementKind::Transition,
                ElementKind::Straight,
            ],
            joints: vec![100.0, 200.0, 260.0, 320.0],
            curvatures: vec![(0.0, 0.0), (k, k), (k, 0.0), (0.0, -k), (0.0, 0.0)],
        };
        let c = chain_of(&seq, 0.0).unwrap();
        assert_eq!(
            c.levels,
            vec![Level::Zero, Level::Free(k), Level::Zero, Level::Zero]
        );
        assert_eq!(c.held, vec![true, false, false]);
        assert_eq!(c.joined, vec![false, false, true, false]);
        assert_eq!((c.ramp_start(1), c.ramp_end(2)), (200.0, 320.0));
    }
}
