//! Small public helpers against outside check values (CHECKS.md §1).

use chordline::integrate::{
    degree_of_curve, radius_from_degree_of_curve, radius_from_versine, radius_from_versine_approx,
    versine_from_radius,
};
use chordline::survey::Marking;
use chordline::units::{FOOT, INCH};

#[test]
fn working_formula_on_20_10_and_30_m_chords() {
    // CHECKS.md 1.2: c = 20 m: R[m] = 50 000 / v[mm].
    for v_mm in [10.0, 25.0, 50.0, 100.0, 333.0] {
        assert!((radius_from_versine_approx(20.0, v_mm * 1e-3) - 50_000.0 / v_mm).abs() < 1e-9);
    }
    // CHECKS.md 1.3: c = 10 m: 12 500 / v; c = 30 m: 112 500 / v.
    assert!((radius_from_versine_approx(10.0, 0.025) - 500.0).abs() < 1e-9);
    assert!((radius_from_versine_approx(30.0, 0.1125) - 1000.0).abs() < 1e-9);
}

#[test]
fn worked_versines_on_a_20_m_chord() {
    // CHECKS.md 1.4 (computed: c²/8R; exact string R−√(R²−a²); marks on the arc R(1−cos(a/R))), ±0.0001 mm.
    let rows = [
        (5000.0, 10.0000, 10.0000, 10.0000),
        (2000.0, 25.0000, 25.0002, 24.9999),
        (1000.0, 50.0000, 50.0013, 49.9996),
        (500.0, 100.0000, 100.0100, 99.9967),
        (300.0, 166.6667, 166.7130, 166.6512),
        (200.0, 250.0000, 250.1564, 249.9479),
        (150.0, 333.3333, 333.7045, 333.2099),
    ];
    for (r, approx, wire, taped) in rows {
        assert!(
            (radius_from_versine_approx(20.0, approx * 1e-3) - r).abs() < 1e-6 * r,
            "{r}"
        );
        let w = versine_from_radius(20.0, r, Marking::Wire) * 1e3;
        let t = versine_from_radius(20.0, r, Marking::Taped) * 1e3;
        assert!((w - wire).abs() < 1e-4, "{r}: wire {w}");
        assert!((t - taped).abs() < 1e-4, "{r}: taped {t}");
        // And back: the exact inverse recovers R.
        assert!((radius_from_versine(20.0, w * 1e-3, Marking::Wire).unwrap() - r).abs() < 1e-6 * r);
        assert!(
            (radius_from_versine(20.0, t * 1e-3, Marking::Taped).unwrap() - r).abs() < 1e-6 * r
        );
    }
    // Signs carry through: a right-hand curve has a negative chord-side versine.
    assert!(versine_from_radius(20.0, -500.0, Marking::Taped) < 0.0);
    assert!(radius_from_versine(20.0, 0.0, Marking::Taped).is_none());
}

#[test]
fn worked_versines_on_a_10_m_chord_and_the_exact_inverse() {
    // CHECKS.md 1.5: c = 10 m, R = 1000, 500, 200: 12.5000/25.0000/62.5000 mm (exact string 12.5001, 25.0006, 62.5098).
    for (r, approx, wire) in [
        (1000.0, 12.5, 12.5001),
        (500.0, 25.0, 25.0006),
        (200.0, 62.5, 62.5098),
    ] {
        assert!((radius_from_versine_approx(10.0, approx * 1e-3) - r).abs() < 1e-6 * r);
        assert!((versine_from_radius(10.0, r, Marking::Wire) * 1e3 - wire).abs() < 1e-4);
    }
    // CHECKS.md 1.6: v = 50 mm, c = 20 m: 1000.000 approx vs 1000.025 m exact, ±0.001 m.
    assert!((radius_from_versine_approx(20.0, 0.05) - 1000.0).abs() < 1e-3);
    assert!((radius_from_versine(20.0, 0.05, Marking::Wire).unwrap() - 1000.025).abs() < 1e-3);
}

#[test]
fn degree_of_curve_chord_definition_and_the_62_ft_rule() {
    // CHECKS.md 1.16: R = 50/sin(D/2) ft: 1° → 5729.651; 2° → 2864.934; 5° → 1146.279; 10° → 573.686 ft (±0.001 ft).
    for (d, r_ft) in [
        (1.0, 5729.651),
        (2.0, 2864.934),
        (5.0, 1146.279),
        (10.0, 573.686),
    ] {
        assert!(
            (radius_from_degree_of_curve(d) / FOOT - r_ft).abs() < 1e-3,
            "{d}"
        );
        assert!((degree_of_curve(r_ft * FOOT).unwrap() - d).abs() < 1e-4); // R given to 0.001 ft
    }
    assert!(degree_of_curve(10.0).is_none()); // shorter than 50 ft
    // CHECKS.md 1.17: 62 ft mid-ordinate (exact sagitta of a 62 ft string), chord definition:
    // D = 1°: 1.0064 in; 2°: 2.0127; 5°: 5.0311; 10°: 10.0581 in (±0.0001 in).
    for (d, m_in) in [(1.0, 1.0064), (2.0, 2.0127), (5.0, 5.0311), (10.0, 10.0581)] {
        let r = radius_from_degree_of_curve(d);
        let m = versine_from_radius(62.0 * FOOT, r, Marking::Wire) / INCH;
        assert!((m - m_in).abs() < 1e-4, "{d}: {m}");
    }
    // CHECKS.md 1.18: 31 ft chord: D = 1°: 0.2516 in; 5°: 1.2576 in.
    for (d, m_in) in [(1.0, 0.2516), (5.0, 1.2576)] {
        let m =
            versine_from_radius(31.0 * FOOT, radius_from_degree_of_curve(d), Marking::Wire) / INCH;
        assert!((m - m_in).abs() < 1e-4, "{d}: {m}");
    }
}
