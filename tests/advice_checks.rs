//! Cant and speed advice against outside check values (CHECKS.md §2; only
//! rows marked published or computed are used as oracles) and the
//! conservative rules (tighter radius of the 95 % interval, speeds rounded
//! down, transitions flagged when short).

use chordline::advice::{
    AdviceOptions, AdviceUnits, CantRule, Limit, Profile, advise_elements, degree_of_curve,
    equilibrium_cant, max_speed, parse_gradient, parse_rate, parse_speed, required_transition,
    round_down_speed, speed_table,
};
use chordline::fit::{ElementStatus, Estimate, FittedElement};
use chordline::geometry::ElementKind;
use chordline::units::{FOOT, INCH};

const KMH: f64 = 1.0 / 3.6;
const MPH: f64 = 0.44704;

/// A metric profile with `E[mm] = c·V[km/h]²/R[m]`, the given limits (mm) and
/// no transition rules.
fn metric(c: f64, cant_mm: f64, def_mm: f64) -> Profile {
    let mut p = Profile::named("uk").unwrap();
    p.rule = CantRule::Constant {
        k: c * 1e-3 * 3.6 * 3.6,
    };
    p.max_cant = Limit::user(cant_mm * 1e-3);
    p.max_deficiency = Limit::user(def_mm * 1e-3);
    p.cant_rate = None;
    p.deficiency_rate = None;
    p.cant_gradient = None;
    p
}

fn mm(x: f64) -> f64 {
    x * 1e3
}

#[test]
fn metric_constant_from_rail_centres() {
    // CHECKS.md 2.2 (computed): G = 1500 mm, g = 9.81 gives 11.798 (km/h, m, mm).
    let mut p = metric(11.8, 150.0, 110.0);
    p.rule = CantRule::Constant { k: 1.5 / 9.81 };
    let c = mm(equilibrium_cant(&p, KMH, 1.0).unwrap());
    assert!((c - 11.798).abs() < 0.001, "{c}");
    // CHECKS.md 2.2 (computed): with g = 9.80665, 11.802.
    p.rule = CantRule::Constant { k: 1.5 / 9.80665 };
    let c = mm(equilibrium_cant(&p, KMH, 1.0).unwrap());
    assert!((c - 11.802).abs() < 0.001, "{c}");
}

#[test]
fn equilibrium_cant_worked_values() {
    // CHECKS.md 2.7 (computed): k = 11.8, then with 11.82 (the uk profile).
    let cases = [
        (120.0, 1000.0, 169.92, 170.21),
        (160.0, 2000.0, 151.04, 151.30),
        (100.0, 600.0, 196.67, 197.00),
        (200.0, 3000.0, 157.33, 157.60),
        (80.0, 400.0, 188.80, 189.12),
    ];
    let p118 = metric(11.8, 150.0, 110.0);
    let uk = Profile::named("uk").unwrap();
    for (v, r, e118, e1182) in cases {
        let a = mm(equilibrium_cant(&p118, v * KMH, r).unwrap());
        assert!(
            (a - e118).abs() < 0.01,
            "CHECKS 2.7 k=11.8 V {v} R {r}: {a}"
        );
        // Either sign of radius: the size is used.
        let b = mm(equilibrium_cant(&uk, v * KMH, -r).unwrap());
        assert!(
            (b - e1182).abs() < 0.01,
            "CHECKS 2.7 k=11.82 V {v} R {r}: {b}"
        );
    }
}

#[test]
fn deficiency_excess_and_equilibrium_speed() {
    // CHECKS.md 2.8 (computed): R = 1000 m, E = 110 mm, V = 120 km/h, k = 11.8.
    let p = metric(11.8, 150.0, 110.0);
    let eq = mm(equilibrium_cant(&p, 120.0 * KMH, 1000.0).unwrap());
    assert!(
        (eq - 110.0 - 59.92).abs() < 0.01,
        "deficiency {}",
        eq - 110.0
    );
    // Freight at 60 km/h: excess 110 − 42.48 = 67.52 mm.
    let eq60 = mm(equilibrium_cant(&p, 60.0 * KMH, 1000.0).unwrap());
    assert!(
        (110.0 - eq60 - 67.52).abs() < 0.01,
        "excess {}",
        110.0 - eq60
    );
    // Equilibrium speed √(E·R/11.8) = 96.55 km/h.
    let v = max_speed(&p, 0.110, 0.0, 1000.0).unwrap() / KMH;
    assert!((v - 96.55).abs() < 0.01, "{v}");
    // The same deficiency through the advice rows: arc of 1000 m with a
    // vanishing interval, applied cant 110 mm, line speed 120 km/h.
    let o = AdviceOptions {
        profile: p,
        speed: Some(120.0 * KMH),
        applied_cant: Some(0.110),
    };
    let a = advise_elements(&[arc(1000.0, 0.0)], &o);
    let d = mm(a.rows[0].deficiency.unwrap());
    assert!((d - 59.92).abs() < 0.01, "{d}");
}

#[test]
fn max_speed_from_cant_and_deficiency() {
    // CHECKS.md 2.9 (computed), k = 11.8: (R, E, I) → V km/h.
    let cases = [
        (1000.0, 150.0, 110.0, 148.44),
        (2000.0, 150.0, 110.0, 209.92),
        (600.0, 100.0, 90.0, 98.29),
        (3000.0, 180.0, 150.0, 289.65),
        (1500.0, 160.0, 130.0, 192.00),
    ];
    let p = metric(11.8, 150.0, 110.0);
    for (r, e, i, want) in cases {
        let v = max_speed(&p, e * 1e-3, i * 1e-3, r).unwrap() / KMH;
        assert!((v - want).abs() < 0.01, "CHECKS 2.9 R {r}: {v}");
        // Advice rounds down to 5 km/h steps.
        let d = round_down_speed(AdviceUnits::Metric, v * KMH) / KMH;
        assert!((d - 5.0 * (want / 5.0).floor()).abs() < 1e-9, "{d}");
    }
    // CHECKS.md 2.9 (computed): 148.31 km/h with the UK constant 11.82.
    let uk = Profile::named("uk").unwrap();
    let v = max_speed(&uk, 0.150, 0.110, 1000.0).unwrap() / KMH;
    assert!((v - 148.31).abs() < 0.01, "{v}");
}

#[test]
fn fra_table_speeds() {
    // CHECKS.md 2.11: 49 CFR Part 213 Appendix A, Table 1 (published, 3 in
    // unbalance; table value = formula rounded to the nearest mph); formula
    // values computed there. (D degrees, Ea inches, table mph, formula mph.)
    let cases = [
        (1.0, 3.0, 93.0, 92.58),
        (2.0, 6.0, 80.0, 80.18),
        (0.5, 0.0, 93.0, 92.58),
        (3.0, 3.0, 53.0, 53.45),
        (4.0, 4.0, 50.0, 50.00),
        (12.0, 0.0, 19.0, 18.90),
        (1.0, 6.0, 113.0, 113.39),
        (1.0, 4.0, 100.0, 100.00),
    ];
    let fra = Profile::named("us-fra").unwrap();
    // CHECKS.md 2.12 (published): 3 in unbalance for every vehicle.
    assert!((fra.max_deficiency.value - 3.0 * INCH).abs() < 1e-12);
    // CHECKS.md 2.13 (published): 7 in maximum elevation, Classes 3–5.
    assert!((fra.max_cant.value - 7.0 * INCH).abs() < 1e-12);
    for (d, ea, table, formula) in cases {
        // CHECKS.md 1.16 (computed): R = 50/sin(D/2) ft, chord definition.
        let r = 50.0 / (d / 2.0_f64).to_radians().sin() * FOOT;
        assert!((degree_of_curve(r).unwrap() - d).abs() < 1e-9);
        let v = max_speed(&fra, ea * INCH, fra.max_deficiency.value, r).unwrap() / MPH;
        assert!((v - formula).abs() < 0.01, "CHECKS 2.11 D {d} Ea {ea}: {v}");
        assert_eq!(v.round(), table, "CHECKS 2.11 table, D {d} Ea {ea}");
        let adv = round_down_speed(AdviceUnits::Imperial, v * MPH) / MPH;
        assert!(adv <= table && table - adv < 5.0, "{adv} vs {table}");
    }
    // CHECKS.md 2.5 (computed): E_eq = 0.0007001·D·V² in with G = 60 in; the
    // regulation's 0.0007 is what the profile uses: D 1°, 60 mph → 2.52 in.
    let r1 = 50.0 / 0.5_f64.to_radians().sin() * FOOT;
    let e = equilibrium_cant(&fra, 60.0 * MPH, r1).unwrap() / INCH;
    assert!((e - 0.0007 * 3600.0).abs() < 1e-9, "{e}");
}

#[test]
fn transition_lengths_from_rates_and_gradient() {
    // CHECKS.md 2.18 (computed): L = ΔE·V/(3.6·r).
    let mut p = metric(11.8, 150.0, 110.0);
    p.cant_rate = Some(Limit::user(0.035));
    let (l, rule) = required_transition(&p, 0.150, 0.0, 120.0 * KMH).unwrap();
    assert!((l - 142.857).abs() < 0.001, "{l}");
    assert_eq!(rule, "rate of change of cant");
    p.cant_rate = Some(Limit::user(0.055));
    let (l, _) = required_transition(&p, 0.150, 0.0, 120.0 * KMH).unwrap();
    assert!((l - 90.909).abs() < 0.001, "{l}");
    p.cant_rate = Some(Limit::user(0.050));
    let (l, _) = required_transition(&p, 0.110, 0.0, 160.0 * KMH).unwrap();
    assert!((l - 97.778).abs() < 0.001, "{l}");
    let (l, _) = required_transition(&p, 0.100, 0.0, 200.0 * KMH).unwrap();
    assert!((l - 111.111).abs() < 0.001, "{l}");
    p.cant_rate = None;
    p.deficiency_rate = Some(Limit::user(0.055));
    let (l, rule) = required_transition(&p, 0.0, 0.060, 120.0 * KMH).unwrap();
    assert!((l - 36.364).abs() < 0.001, "{l}");
    assert_eq!(rule, "rate of change of deficiency");
    // CHECKS.md 2.19 (computed): 150 mm at 1 in 400 → 60 m; at 2.25 mm/m → 66.667 m.
    p.deficiency_rate = None;
    p.cant_gradient = Some(Limit::user(parse_gradient("1:400").unwrap()));
    let (l, rule) = required_transition(&p, 0.150, 0.0, 120.0 * KMH).unwrap();
    assert!((l - 60.0).abs() < 0.001, "{l}");
    assert_eq!(rule, "cant gradient");
    p.cant_gradient = Some(Limit::user(parse_gradient("2.25mm/m").unwrap()));
    let (l, _) = required_transition(&p, 0.150, 0.0, 120.0 * KMH).unwrap();
    assert!((l - 66.667).abs() < 0.001, "{l}");
    // CHECKS.md 2.20 (common practice): the largest rule governs. 150 mm at
    // 120 km/h: 142.857 m by 35 mm/s beats 66.667 m by the gradient.
    p.cant_rate = Some(Limit::user(0.035));
    let (l, rule) = required_transition(&p, 0.150, 0.0, 120.0 * KMH).unwrap();
    assert!((l - 142.857).abs() < 0.001, "{l}");
    assert_eq!(rule, "rate of change of cant");
    // No rule, no answer.
    assert!(required_transition(&metric(11.8, 150.0, 110.0), 0.1, 0.1, 30.0).is_none());
}

fn est(value: f64, se: f64) -> Estimate {
    Estimate {
        value,
        se,
        lo95: value - 1.96 * se,
        hi95: value + 1.96 * se,
    }
}

fn element(
    kind: ElementKind,
    s0: f64,
    len: f64,
    r0: Option<Estimate>,
    r1: Option<Estimate>,
) -> FittedElement {
    FittedElement {
        kind,
        start_chainage: est(s0, 0.0),
        end_chainage: est(s0 + len, 0.0),
        starts_at_survey_end: false,
        ends_at_survey_end: false,
        length: est(len, 1.0),
        start_radius: r0,
        end_radius: r1,
        start_curvature: r0.map_or(0.0, |r| 1.0 / r.value),
        end_curvature: r1.map_or(0.0, |r| 1.0 / r.value),
        readings: 10,
        residual_rms: 0.001,
        residual_max: 0.002,
        status: ElementStatus::Determined,
        note: String::new(),
    }
}

fn arc(r: f64, se: f64) -> FittedElement {
    element(
        ElementKind::Arc,
        0.0,
        200.0,
        Some(est(r, se)),
        Some(est(r, se)),
    )
}

#[test]
fn advice_uses_the_tighter_radius_and_rounds_down() {
    let uk = Profile::named("uk").unwrap();
    let o = AdviceOptions {
        profile: uk.clone(),
        speed: Some(100.0 * KMH),
        applied_cant: Some(0.150),
    };
    // Right-hand arc, R = −1000 ± 1.96·10 m: the tighter end is 980.4 m.
    let a = advise_elements(&[arc(-1000.0, 10.0)], &o);
    let row = &a.rows[0];
    assert!((row.radius_used.unwrap() - 980.4).abs() < 1e-9);
    let exact = max_speed(&uk, 0.150, 0.110, 980.4).unwrap();
    let at_value = max_speed(&uk, 0.150, 0.110, 1000.0).unwrap();
    assert!(exact < at_value);
    let got = row.max_speed.unwrap();
    assert!(got <= exact && exact - got < 5.0 * KMH, "{got} vs {exact}");
    assert!((got / KMH / 5.0 - (got / KMH / 5.0).round()).abs() < 1e-9);
    // 100 km/h on 980.4 m: E_eq = 11.82·100²/980.4 = 120.56 mm, within limits.
    let eq = mm(row.equilibrium_cant.unwrap());
    assert!((eq - 11.82 * 1e4 / 980.4).abs() < 1e-9, "{eq}");
    assert!(row.flags.is_empty(), "{:?}", row.flags);
    // An interval reaching a straight gives no advice, only a flag.
    let a = advise_elements(&[arc(5000.0, 3000.0)], &o);
    assert!(a.rows[0].max_speed.is_none() && a.rows[0].equilibrium_cant.is_none());
    assert!(a.rows[0].flags[0].contains("not determined"));
    // An applied cant above the limit is capped and flagged.
    let o2 = AdviceOptions {
        applied_cant: Some(0.200),
        ..o.clone()
    };
    let a = advise_elements(&[arc(1000.0, 0.0)], &o2);
    assert_eq!(a.rows[0].applied_cant, Some(0.150));
    assert!(a.rows[0].flags.iter().any(|f| f.contains("capped")));
    // A line speed beyond the limits is flagged: 160 km/h on 600 m needs
    // 11.82·160²/600 − 110 = 394 mm of cant.
    let o3 = AdviceOptions {
        speed: Some(160.0 * KMH),
        ..o
    };
    let a = advise_elements(&[arc(600.0, 0.0)], &o3);
    assert!(
        a.rows[0]
            .flags
            .iter()
            .any(|f| f.contains("line speed above"))
    );
    assert!(
        a.rows[0]
            .flags
            .iter()
            .any(|f| f.contains("deficiency at line speed"))
    );
}

#[test]
fn short_transition_is_flagged() {
    // Straight – transition 40 m – arc 1000 m, uk profile (35 mm/s, from
    // memory, labelled so), applied cant 150 mm at 120 km/h:
    // ΔE = 150 mm → 150·(120/3.6)/35 = 142.857 m (CHECKS.md 2.18), ΔI =
    // 11.82·120²/1000 − 150 = 20.2 mm.
    let uk = Profile::named("uk").unwrap();
    assert!(uk.cant_rate.as_ref().unwrap().basis.contains("from memory"));
    let r = est(1000.0, 0.0);
    let els = [
        element(ElementKind::Straight, 0.0, 100.0, None, None),
        element(ElementKind::Transition, 100.0, 40.0, None, Some(r)),
        element(ElementKind::Arc, 140.0, 200.0, Some(r), Some(r)),
        element(ElementKind::Transition, 340.0, 150.0, Some(r), None),
    ];
    let o = AdviceOptions {
        profile: uk,
        speed: Some(120.0 * KMH),
        applied_cant: Some(0.150),
    };
    let a = advise_elements(&els, &o);
    assert_eq!(a.rows.len(), 3, "one row per arc and transition");
    let t = &a.rows[0];
    assert_eq!(t.element, 2);
    let (l, rule) = t.required_length.unwrap();
    assert!((l - 142.857).abs() < 0.001, "{l}");
    assert_eq!(rule, "rate of change of cant");
    assert!((mm(t.deficiency_change.unwrap()) - (11.82 * 14.4 - 150.0)).abs() < 1e-9);
    assert!(t.flags.iter().any(|f| f.contains("shorter than")));
    // 150 ± 1.96 m against 142.857 m: long enough.
    let t2 = &a.rows[2];
    assert!(
        t2.flags.iter().all(|f| !f.contains("shorter")),
        "{:?}",
        t2.flags
    );
    // A transition cut by the survey end is not judged on its length.
    let mut cut = els[3].clone();
    cut.ends_at_survey_end = true;
    cut.length = est(20.0, 0.0);
    let a = advise_elements(&[cut], &o);
    assert!(a.rows[0].flags.iter().all(|f| !f.contains("shorter")));
    assert!(
        a.rows[0]
            .flags
            .iter()
            .any(|f| f.contains("cut by the survey end"))
    );
    // Reverse curves: the cant changes side, so the change is the sum.
    let rr = est(-1000.0, 0.0);
    let rev = [element(
        ElementKind::Transition,
        0.0,
        300.0,
        Some(r),
        Some(rr),
    )];
    let a = advise_elements(&rev, &o);
    assert!((mm(a.rows[0].cant_change.unwrap()) - 300.0).abs() < 1e-9);
}

#[test]
fn parsers() {
    assert!((parse_speed("120km/h").unwrap() - 120.0 / 3.6).abs() < 1e-12);
    assert!((parse_speed("75 mph").unwrap() - 75.0 * MPH).abs() < 1e-12);
    assert!((parse_speed("30m/s").unwrap() - 30.0).abs() < 1e-12);
    assert!(parse_speed("120").is_err());
    assert!(parse_speed("-5km/h").is_err());
    assert!(parse_speed("fastkm/h").is_err());
    assert!((parse_rate("35mm/s").unwrap() - 0.035).abs() < 1e-12);
    assert!((parse_rate("1.5in/s").unwrap() - 1.5 * INCH).abs() < 1e-12);
    assert!(parse_rate("35").is_err());
    assert!((parse_gradient("1 in 400").unwrap() - 0.0025).abs() < 1e-12);
    assert!(parse_gradient("1:0").is_err());
    assert!(parse_gradient("steep").is_err());
}

#[test]
fn speed_table_by_applied_cant() {
    // CHECKS.md 2.11 (published table, computed formula values): D = 1°,
    // 3 in unbalance: Ea 3 in → 92.58, 4 in → 100.00, 6 in → 113.39 mph;
    // advised (rounded down to 5 mph): 90, 100, 110.
    let fra = Profile::named("us-fra").unwrap();
    let r = 50.0 / 0.5_f64.to_radians().sin() * FOOT;
    let t = speed_table(&fra, r);
    assert_eq!(t.len(), 8, "0 to 7 in by 1 in");
    let at = |inches: f64| {
        t.iter()
            .find(|(c, _)| (c / INCH - inches).abs() < 1e-9)
            .map(|(_, v)| v / MPH)
            .unwrap()
    };
    assert!((at(3.0) - 90.0).abs() < 1e-9, "{}", at(3.0));
    assert!((at(4.0) - 100.0).abs() < 1e-9, "{}", at(4.0));
    assert!((at(6.0) - 110.0).abs() < 1e-9, "{}", at(6.0));
    // Speeds never fall as cant rises; the last row is the profile's limit.
    assert!(t.windows(2).all(|w| w[1].1 >= w[0].1));
    assert!((t[7].0 - fra.max_cant.value).abs() < 1e-12);
    // A limit off the step grid is still the last row: 0, 25, .., 125, 140 mm.
    let p = metric(11.8, 140.0, 110.0);
    let t = speed_table(&p, 1000.0);
    let cants: Vec<f64> = t.iter().map(|(c, _)| (c * 1e3).round()).collect();
    assert_eq!(cants, vec![0.0, 25.0, 50.0, 75.0, 100.0, 125.0, 140.0]);
}
