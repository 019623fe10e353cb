use super::*;

/// A chain with every kind of joint: straight, transitions, arcs both ways,
/// a reverse transition.
fn chain() -> Vec<Element> {
    vec![
        Element::straight(120.0),
        Element::transition(60.0, 0.0, 1.0 / 500.0),
        Element::arc(200.0, 500.0),
        Element::transition(80.0, 1.0 / 500.0, -1.0 / 700.0),
        Element::arc(150.0, -700.0),
        Element::transition(50.0, -1.0 / 700.0, 0.0),
        Element::straight(90.0),
        // A chain may end (where the survey ends) inside a transition.
        Element::transition(40.0, 0.0, 1.0 / 900.0),
    ]
}

fn targets_along(al: &Alignment, loc: &Locator) -> Vec<Target> {
    (0..80)
        .map(|k| f64::from(k) * 10.0 - 5.0)
        .map(|d| Target {
            loc: loc.locate(d),
            x: 0.0,
            y: 0.0,
            sd: 0.5,
            normal: None,
        })
        .filter(|t| t.loc.element < al.elements().len())
        .collect()
}

#[test]
fn the_located_point_is_the_pose_at_that_distance() {
    let al = Alignment::new(Pose::default(), 0.0, chain());
    let loc = Locator::of_alignment(&al);
    for d in [-3.0, 0.0, 55.0, 120.0, 333.3, 510.0, 749.0, 760.0] {
        let p = loc.point(&al, loc.locate(d));
        let q = al.pose_at(d);
        assert!((p.x - q.x).hypot(p.y - q.y) < 1e-9, "{d}: {p:?} {q:?}");
    }
}

/// The Jacobian built column by column from the elements a parameter reaches
/// (the rest moved rigidly) against differences of the whole chain rebuilt.
#[test]
fn the_jacobian_agrees_with_the_rebuilt_chain() {
    let els = chain();
    let start = Pose {
        x: 10.0,
        y: -4.0,
        heading: 0.3,
    };
    let al = Alignment::new(start, 0.0, els.clone());
    let loc = Locator::of_alignment(&al);
    let params = Params::new(&els, 0);
    let p = params.initial(start);
    let ts = targets_along(&al, &loc);
    let pts: Vec<Pose> = ts.iter().map(|t| loc.point(&al, t.loc)).collect();
    let jac = jacobian(&params, &p, &al, &ts, &pts, &loc);
    for j in 0..params.len() {
        let h = if j < 3 + els.len() { 1e-3 } else { 1e-8 };
        let (mut a, mut b) = (p.clone(), p.clone());
        a[j] += h;
        b[j] -= h;
        let (la, lb) = (params.alignment(&a, 0.0), params.alignment(&b, 0.0));
        for (k, t) in ts.iter().enumerate() {
            let (u, v) = (loc.point(&la, t.loc), loc.point(&lb, t.loc));
            let dx = (u.x - v.x) / (2.0 * h * t.sd);
            let dy = (u.y - v.y) / (2.0 * h * t.sd);
            let scale = 1.0 + dx.abs().max(dy.abs());
            assert!(
                (jac[(2 * k, j)] - dx).abs() < 1e-4 * scale,
                "param {j} row {k}: {} {dx}",
                jac[(2 * k, j)]
            );
            assert!(
                (jac[(2 * k + 1, j)] - dy).abs() < 1e-4 * scale,
                "param {j} row {k}: {} {dy}",
                jac[(2 * k + 1, j)]
            );
        }
    }
}
