//! Accuracy of the element fit on simulated surveys of known geometry.
//!
//! Run: `cargo run --release --example fit_accuracy` (about a minute once
//! built; the two 20 km cases run 3 seeds, the others 20, the design classes
//! 50 designs each, eight classes). Add `-- --speed` for the 20 km, 0.25 m-spacing timing
//! only, `-- --irregular N` for the fit times on N random-curvature surveys
//! like the whole-pipeline fuzzer's, `-- --seeds N` to change the number of noise seeds per fixed case,
//! `-- --class-seeds N` the number of designs per class, `-- --only TEXT` to
//! run only the fixed cases whose name contains TEXT, `-- --textbook` or
//! `-- --classes` for one of the two tables. With `CLASS_DEBUG=TEXT` in the
//! environment the class table also prints, for classes whose name contains
//! TEXT, every design's boundary errors over 0.5 m (with `CLASS_SEED=N`, the
//! element lists of design N, search and reference).
//!
//! The second table ([`fit_classes`]) draws invented designs of the kinds
//! real track has (yard ladders, flat arcs, compound and reverse arcs without
//! transitions, several joints within one chord) and compares the search
//! with the known-topology reference, clean and with typing slips.
//!
//! For every case it simulates noisy surveys with `chordline::simulate`
//! (exact chord geometry on the offset rail), fits them and reports the RMS
//! and worst error of the element boundaries (survey chainage), the radius
//! error, spurious and missing boundaries, and the ratio of the observed
//! scatter to the reported standard errors (1 = honest), with the 95 %
//! interval coverage. Single curves are also measured by the simplest
//! practitioner's method (radius from the mean arc versine; boundaries where
//! the versines leave zero and reach the arc value) for comparison.
//! The geometry is invented for the benchmark.

#[path = "support/fit_classes.rs"]
mod fit_classes;
use fit_classes::plan_of;

use chordline::fit::{FitOptions, fit};
use chordline::geometry::{Alignment, Element, ElementKind, Pose};
use chordline::simulate::{SimSetup, simulate};
use chordline::survey::{Marking, Rail, Reading, Setup, Survey};
use chordline::units::{FOOT, INCH, LengthUnit, VersineUnit};
use std::time::Instant;

struct Case {
    name: &'static str,
    elements: Vec<Element>,
    sim: SimSetup,
    single_curve: bool,
    /// Cap on the number of seeds (long cases).
    max_seeds: Option<u64>,
}

/// 20 km: 15 curves of R 350–5000 m (transitions 40–120 m, arcs 150–400 m)
/// separated by 900 m straights.
fn long_line() -> Vec<Element> {
    let mut els = vec![Element::straight(300.0)];
    let radii = [
        350.0, -600.0, 900.0, -1200.0, 2000.0, -5000.0, 450.0, -800.0, 1500.0, -3000.0, 700.0,
        -400.0, 1000.0, -2500.0, 600.0,
    ];
    for (i, &r) in radii.iter().enumerate() {
        let lt = [60.0, 80.0, 100.0, 40.0, 120.0][i % 5];
        let la = [250.0, 150.0, 400.0, 300.0, 200.0][i % 5];
        els.push(t(lt, 0.0, r));
        els.push(Element::arc(la, r));
        els.push(t(lt, r, 0.0));
        els.push(Element::straight(900.0));
    }
    els
}

fn sc(chord: f64, spacing: f64, rail: Rail) -> SimSetup {
    let mut s = SimSetup::classic(chord, rail);
    s.spacing = spacing;
    s.noise_sd = 0.001;
    s.resolution = 0.001;
    s
}

fn t(l: f64, r0: f64, r1: f64) -> Element {
    let k = |r: f64| if r == 0.0 { 0.0 } else { 1.0 / r };
    Element::transition(l, k(r0), k(r1))
}

fn cases() -> Vec<Case> {
    let simple = vec![
        Element::straight(200.0),
        t(60.0, 0.0, 450.0),
        Element::arc(300.0, 450.0),
        t(60.0, 450.0, 0.0),
        Element::straight(200.0),
    ];
    let mut irr = sc(20.0, 10.0, Rail::Right);
    irr.irregularity_rms = 0.0015;
    let mut imp = sc(62.0 * FOOT, 31.0 * FOOT, Rail::Left);
    imp.chainage_unit = LengthUnit::Foot;
    imp.versine_unit = VersineUnit::Inch;
    imp.resolution = INCH / 8.0;
    let mut wire = sc(20.0, 2.5, Rail::Right);
    wire.marking = Marking::Wire;
    let mut irr2 = sc(20.0, 2.5, Rail::Left);
    irr2.irregularity_rms = 0.002;
    let mut long = sc(20.0, 0.25, Rail::Right);
    long.noise_sd = 0.0005;
    long.resolution = 0.0001;
    let mut long_irr = long.clone();
    long_irr.irregularity_rms = 0.0015;
    vec![
        Case {
            name: "20 km line, 15 curves R 350–5000 m, 0.25 m spacing, 0.5 mm noise",
            elements: long_line(),
            sim: long,
            single_curve: false,
            max_seeds: Some(3),
        },
        Case {
            name: "same 20 km line with 1.5 mm RMS irregularity",
            elements: long_line(),
            sim: long_irr,
            single_curve: false,
            max_seeds: Some(3),
        },
        Case {
            name: "simple curve, 2 mm RMS irregularity, read every 2.5 m",
            elements: vec![
                Element::straight(200.0),
                t(60.0, 0.0, -450.0),
                Element::arc(300.0, -450.0),
                t(60.0, -450.0, 0.0),
                Element::straight(200.0),
            ],
            sim: irr2,
            single_curve: true,
            max_seeds: None,
        },
        Case {
            name: "simple curve (R 450, L 60), 20 m chord / 10 m",
            elements: simple.clone(),
            sim: sc(20.0, 10.0, Rail::Right),
            single_curve: true,
            max_seeds: None,
        },
        Case {
            name: "same, lateral irregularity 1.5 mm RMS (3–70 m)",
            elements: simple.clone(),
            sim: irr,
            single_curve: true,
            max_seeds: None,
        },
        Case {
            name: "reverse curve, 30 m straight between",
            elements: vec![
                Element::straight(150.0),
                t(60.0, 0.0, 600.0),
                Element::arc(200.0, 600.0),
                t(60.0, 600.0, 0.0),
                Element::straight(30.0),
                t(60.0, 0.0, -500.0),
                Element::arc(200.0, -500.0),
                t(60.0, -500.0, 0.0),
                Element::straight(150.0),
            ],
            sim: sc(20.0, 10.0, Rail::Right),
            single_curve: false,
            max_seeds: None,
        },
        Case {
            name: "reverse curve, no straight between",
            elements: vec![
                Element::straight(150.0),
                t(60.0, 0.0, 600.0),
                Element::arc(200.0, 600.0),
                t(60.0, 600.0, 0.0),
                t(60.0, 0.0, -500.0),
                Element::arc(200.0, -500.0),
                t(60.0, -500.0, 0.0),
                Element::straight(150.0),
            ],
            sim: sc(20.0, 10.0, Rail::Left),
            single_curve: false,
            max_seeds: None,
        },
        Case {
            name: "compound curve (R 800 → 400 via 40 m transition)",
            elements: vec![
                Element::straight(150.0),
                t(50.0, 0.0, 800.0),
                Element::arc(150.0, 800.0),
                t(40.0, 800.0, 400.0),
                Element::arc(200.0, 400.0),
                t(60.0, 400.0, 0.0),
                Element::straight(150.0),
            ],
            sim: sc(20.0, 10.0, Rail::Right),
            single_curve: false,
            max_seeds: None,
        },
        Case {
            name: "curve without transitions (R 600)",
            elements: vec![
                Element::straight(200.0),
                Element::arc(250.0, -600.0),
                Element::straight(200.0),
            ],
            sim: sc(20.0, 10.0, Rail::Left),
            single_curve: true,
            max_seeds: None,
        },
        Case {
            name: "tight curve (R 180, L 40), outer rail",
            elements: vec![
                Element::straight(150.0),
                t(40.0, 0.0, -180.0),
                Element::arc(150.0, -180.0),
                t(40.0, -180.0, 0.0),
                Element::straight(150.0),
            ],
            sim: sc(20.0, 10.0, Rail::Left),
            single_curve: true,
            max_seeds: None,
        },
        Case {
            name: "imperial 62 ft chord / 31 ft, readings to 1/8 in",
            elements: vec![
                Element::straight(180.0),
                t(60.0, 0.0, -350.0),
                Element::arc(250.0, -350.0),
                t(60.0, -350.0, 0.0),
                Element::straight(180.0),
            ],
            sim: imp,
            single_curve: true,
            max_seeds: None,
        },
        Case {
            name: "fixed wire read every 2.5 m (R 450, L 60)",
            elements: simple,
            sim: wire,
            single_curve: true,
            max_seeds: None,
        },
    ]
}

/// True joints (survey chainage) and the radius at each arc mid (chainage, R).
fn truth(al: &Alignment, sim: &SimSetup) -> (Vec<f64>, Vec<(f64, f64)>) {
    let d = sim.rail.offset_left(sim.gauge);
    let mut joints = Vec::new();
    let mut arcs = Vec::new();
    let mut s = 0.0;
    let els = al.elements();
    for (i, e) in els.iter().enumerate() {
        if e.kind == ElementKind::Arc {
            let mid = s + 0.5 * e.length;
            arcs.push((
                sim.start_chainage + al.offset_length(mid, d),
                1.0 / e.k_start,
            ));
        }
        s += e.length;
        if i + 1 < els.len() {
            joints.push(sim.start_chainage + al.offset_length(s, d));
        }
    }
    (joints, arcs)
}

#[derive(Default)]
struct Acc {
    runs: usize,
    berr: Vec<f64>,
    bse: Vec<f64>,
    bcover: usize,
    rerr: Vec<f64>,
    rse: Vec<f64>,
    rcover: usize,
    extra: usize,
    missing: usize,
    exact_count: usize,
    indeterminate: usize,
    secs: f64,
    base_berr: Vec<f64>,
    base_rerr: Vec<f64>,
}

fn rms(v: &[f64]) -> f64 {
    if v.is_empty() {
        return f64::NAN;
    }
    (v.iter().map(|x| x * x).sum::<f64>() / v.len() as f64).sqrt()
}

fn worst(v: &[f64]) -> f64 {
    v.iter().fold(0.0f64, |m, x| m.max(x.abs()))
}

/// The practitioner's reading of a single curve: boundaries where versines
/// leave zero (first/last |v| > 3σ) and reach/leave the arc value (within
/// 5 %), radius c²/8v̄ from the mean arc versine, minus the half gauge for the
/// outer rail.
fn baseline(ch: &[f64], v: &[f64], chord: f64, d_abs: f64) -> Option<(Vec<f64>, f64)> {
    let vmax = v.iter().fold(0.0f64, |m, x| m.max(x.abs()));
    let mut top: Vec<f64> = v
        .iter()
        .map(|x| x.abs())
        .filter(|x| *x >= 0.8 * vmax)
        .collect();
    if top.is_empty() || v.len() < 12 {
        return None;
    }
    top.sort_by(|a, b| a.total_cmp(b));
    let vbar = top[top.len() / 2];
    let arc: Vec<f64> = v
        .iter()
        .map(|x| x.abs())
        .filter(|x| (x - vbar).abs() <= 0.05 * vbar)
        .collect();
    let vmean = arc.iter().sum::<f64>() / arc.len() as f64;
    // "Zero" is what the first straight reads: three times its RMS, at least 2 mm.
    let noise = (v[..10].iter().map(|x| x * x).sum::<f64>() / 10.0).sqrt();
    let thr = (3.0 * noise).max(0.002);
    // Leaving zero: two readings in a row above the threshold (a lone spike
    // does not count).
    let big: Vec<bool> = v.iter().map(|x| x.abs() > thr).collect();
    let first_nz = (0..v.len() - 1).find(|&i| big[i] && big[i + 1])?;
    let last_nz = (1..v.len()).rev().find(|&i| big[i] && big[i - 1])?;
    let first_arc = v.iter().position(|x| x.abs() >= 0.95 * vmean)?;
    let last_arc = v.iter().rposition(|x| x.abs() >= 0.95 * vmean)?;
    let b = vec![
        ch[first_nz.saturating_sub(1)],
        ch[first_arc],
        ch[last_arc],
        ch[(last_nz + 1).min(ch.len() - 1)],
    ];
    let r_rail = chord * chord / (8.0 * vmean);
    Some((b, r_rail - d_abs))
}

fn run_case(case: &Case, seeds: u64) -> Acc {
    let al = Alignment::new(Pose::default(), 0.0, case.elements.clone());
    let (joints, arcs) = truth(&al, &case.sim);
    let mut acc = Acc::default();
    let seeds = case.max_seeds.map_or(seeds, |m| m.min(seeds));
    for seed in 1..=seeds {
        let mut sim = case.sim.clone();
        sim.seed = seed;
        let Ok(simd) = simulate(&al, &sim) else {
            continue;
        };
        let mut setup = Setup::new(sim.chord, sim.rail);
        setup.marking = sim.marking;
        setup.gauge = sim.gauge;
        let t0 = Instant::now();
        let Ok((res, _)) = fit(&plan_of(&simd.survey, &setup), &FitOptions::default()) else {
            acc.missing += joints.len();
            acc.runs += 1;
            continue;
        };
        acc.secs += t0.elapsed().as_secs_f64();
        acc.runs += 1;
        // Fitted internal boundaries with SEs.
        let mut fb: Vec<(f64, f64, f64, f64)> = Vec::new();
        for e in res.elements.iter().skip(1) {
            let c = e.start_chainage;
            fb.push((c.value, c.se, c.lo95, c.hi95));
        }
        acc.indeterminate += res
            .elements
            .iter()
            .filter(|e| e.status == chordline::fit::ElementStatus::Indeterminate)
            .count();
        // Steps (zero-length transitions) are joints too: elements meet there.
        let mut used = vec![false; fb.len()];
        let mut matched = 0;
        for &tj in &joints {
            let best = fb
                .iter()
                .enumerate()
                .filter(|(i, _)| !used[*i])
                .min_by(|a, b| (a.1.0 - tj).abs().total_cmp(&(b.1.0 - tj).abs()));
            if let Some((i, &(c, se, lo, hi))) = best
                && (c - tj).abs() < 30.0
            {
                used[i] = true;
                matched += 1;
                acc.berr.push(c - tj);
                acc.bse.push(se);
                if lo <= tj && tj <= hi {
                    acc.bcover += 1;
                }
            }
        }
        acc.missing += joints.len() - matched;
        acc.extra += used.iter().filter(|u| !**u).count();
        if res.elements.len() == case.elements.len() {
            acc.exact_count += 1;
        }
        for &(mid, r) in &arcs {
            if let Some(e) = res.elements.iter().find(|e| {
                e.kind == ElementKind::Arc
                    && e.start_chainage.value <= mid
                    && mid <= e.end_chainage.value
            }) && let Some(fr) = e.start_radius
            {
                acc.rerr.push((fr.value - r) / r);
                acc.rse.push(fr.se / r.abs());
                if fr.lo95 <= r && r <= fr.hi95 {
                    acc.rcover += 1;
                }
            }
        }
        if case.single_curve {
            let mut ch = Vec::new();
            let mut v = Vec::new();
            for rd in &simd.survey.readings {
                if let Some(x) = rd.versine {
                    ch.push(rd.chainage);
                    v.push(x);
                }
            }
            let d_abs = 0.5 * sim.gauge;
            if let Some((b, r)) = baseline(&ch, &v, sim.chord, d_abs) {
                let nb = if joints.len() == 2 {
                    vec![b[0], b[3]]
                } else {
                    b.clone()
                };
                if std::env::var("BASE_DEBUG").is_ok() {
                    println!("{nb:?} {joints:?}");
                }
                for (x, tj) in nb.iter().zip(&joints) {
                    acc.base_berr.push(x - tj);
                }
                let rt = arcs[0].1.abs();
                acc.base_rerr.push((r - rt) / rt);
            }
        }
    }
    acc
}

fn speed() {
    // The 20 km line read every 0.25 m with a 20 m chord.
    let els = long_line();
    let al = Alignment::new(Pose::default(), 0.0, els.clone());
    let mut sim = sc(20.0, 0.25, Rail::Right);
    sim.noise_sd = 0.0005;
    sim.resolution = 0.0001;
    let t0 = Instant::now();
    let simd = simulate(&al, &sim).expect("simulate");
    let tsim = t0.elapsed().as_secs_f64();
    let setup = Setup::new(20.0, Rail::Right);
    let t1 = Instant::now();
    let (res, _) = fit(&plan_of(&simd.survey, &setup), &FitOptions::default()).expect("fit");
    let tfit = t1.elapsed().as_secs_f64();
    println!(
        "speed: {:.1} km, {} readings at 0.25 m: simulate {:.2} s, fit {:.2} s (release, one thread); {} elements fitted for {} true",
        al.length() / 1000.0,
        simd.survey.readings.len(),
        tsim,
        tfit,
        res.elements.len(),
        els.len()
    );
}

/// Fit times on random-curvature surveys like those of the whole-pipeline
/// fuzzer (`tests/fuzz_support`): a smooth curvature of eight sine terms
/// (|k| ≤ 1/150 m), 300 readings of a 20 m chord every 10, 5, 3.3 or 2.5 m,
/// uniform noise of ±0.5 mm, readings to 0.1 mm. Track of no design: the fit
/// has to approximate it with many elements, which is what made it slow.
fn irregular(n_surveys: u64) {
    use rand::{Rng, SeedableRng};
    use rand_chacha::ChaCha8Rng;
    let chord = 20.0;
    let mut times = Vec::new();
    for seed in 0..n_surveys {
        let mut rng = ChaCha8Rng::seed_from_u64(seed);
        let per_half = 1 + (seed % 4) as usize;
        let spacing = chord / 2.0 / per_half as f64;
        let n = 300usize;
        let coef: Vec<f64> = (0..8).map(|_| rng.random_range(-1.0..1.0)).collect();
        let total = n as f64 * spacing;
        let readings: Vec<Reading> = (0..n)
            .map(|i| {
                let x = i as f64 * spacing / total;
                let k: f64 = coef
                    .iter()
                    .enumerate()
                    .map(|(j, c)| c * (std::f64::consts::PI * (j + 1) as f64 * x).sin())
                    .sum::<f64>()
                    / coef.len() as f64
                    / 150.0;
                let noise = rng.random_range(-5e-4..5e-4);
                let v = ((chord * chord * k / 8.0 + noise) * 1e4).round() / 1e4;
                Reading {
                    chainage: i as f64 * spacing,
                    versine: Some(v),
                    rail: Rail::Left,
                    note: None,
                    line: i + 2,
                }
            })
            .collect();
        let survey = Survey {
            source: format!("irregular {seed}"),
            chainage_unit: LengthUnit::Metre,
            versine_unit: VersineUnit::Millimetre,
            readings,
            has_side_column: false,
        };
        let plan = plan_of(&survey, &Setup::new(chord, Rail::Left));
        let t0 = Instant::now();
        let (res, _) = fit(&plan, &FitOptions::default()).expect("fit");
        let secs = t0.elapsed().as_secs_f64();
        println!(
            "irregular seed {seed}: {n} readings every {spacing:.2} m, fit {:.3} s, {} elements",
            secs,
            res.elements.len()
        );
        times.push(secs);
    }
    let sum: f64 = times.iter().sum();
    let max = times.iter().copied().fold(0.0, f64::max);
    println!(
        "irregular: {} surveys, fit time total {:.2} s, mean {:.3} s, worst {:.3} s",
        times.len(),
        sum,
        sum / times.len().max(1) as f64,
        max
    );
}

fn main() {
    let args: Vec<String> = std::env::args().collect();
    if args.iter().any(|a| a == "--speed") {
        speed();
        return;
    }
    if let Some(i) = args.iter().position(|a| a == "--irregular") {
        let n = args.get(i + 1).and_then(|s| s.parse().ok()).unwrap_or(12);
        irregular(n);
        return;
    }
    let seeds = args
        .iter()
        .position(|a| a == "--seeds")
        .and_then(|i| args.get(i + 1))
        .and_then(|s| s.parse().ok())
        .unwrap_or(20u64);
    let class_seeds = args
        .iter()
        .position(|a| a == "--class-seeds")
        .and_then(|i| args.get(i + 1))
        .and_then(|s| s.parse().ok())
        .unwrap_or(50u64);
    if !args.iter().any(|a| a == "--classes") {
        textbook_table(&args, seeds);
    }
    if !args.iter().any(|a| a == "--textbook") {
        classes_table(class_seeds);
    }
}

/// The design classes against the known-topology reference, clean and with
/// two typing slips per hundred readings.
fn classes_table(seeds: u64) {
    println!();
    println!(
        "| design class ({seeds} designs each) | boundary RMS (m): search / known topology / ratio | radius RMS (%): search / known / ratio | extra / missing joints | designs where the true sequence scores better (search missed it) | chi² p: median, share < 0.05, share > 0.95 | with 2 % blunders: boundary RMS (m), ratio to known on clean | radius RMS (%), ratio | extra / missing | blunders found | false alarms per 1000 clean readings |"
    );
    println!("|---|---|---|---|---|---|---|---|---|---|---|");
    for c in fit_classes::classes() {
        let a = fit_classes::run_class(&c, seeds);
        let mut p = a.p.clone();
        p.sort_by(f64::total_cmp);
        let med = p.get(p.len() / 2).copied().unwrap_or(f64::NAN);
        let share = |f: &dyn Fn(f64) -> bool| {
            100.0 * p.iter().filter(|x| f(**x)).count() as f64 / p.len().max(1) as f64
        };
        let (bk, rk) = (rms(&a.berr_known), rms(&a.rerr_known));
        println!(
            "| {} | {:.2} / {:.2} / {:.2} | {:.3} / {:.3} / {:.2} | {} / {} | {}/{} | {:.2}, {:.0} %, {:.0} % | {:.2}, {:.2} | {:.3}, {:.2} | {} / {} | {}/{} | {:.2} |",
            c.name,
            rms(&a.berr),
            bk,
            rms(&a.berr) / bk,
            100.0 * rms(&a.rerr),
            100.0 * rk,
            rms(&a.rerr) / rk,
            a.extra,
            a.missing,
            a.truth_better,
            a.runs,
            med,
            share(&|x| x < 0.05),
            share(&|x| x > 0.95),
            rms(&a.bl_berr),
            rms(&a.bl_berr) / bk,
            100.0 * rms(&a.bl_rerr),
            rms(&a.bl_rerr) / rk,
            a.bl_extra,
            a.bl_missing,
            a.bl_found,
            a.bl_injected,
            1000.0 * a.bl_false as f64 / a.bl_clean_readings.max(1) as f64
        );
    }
}

/// The original table of fixed cases.
fn textbook_table(args: &[String], seeds: u64) {
    println!(
        "| case | runs | boundary RMS / worst (m) | SE ratio, 95 % cover (boundaries) | radius error RMS / worst (%) | SE ratio, cover (radii) | extra / missing joints | element count right | indeterminate | practitioner: boundary RMS (m), radius RMS (%) | ms per fit |"
    );
    println!("|---|---|---|---|---|---|---|---|---|---|---|");
    let only = args
        .iter()
        .position(|a| a == "--only")
        .and_then(|i| args.get(i + 1))
        .cloned();
    for case in cases() {
        if only
            .as_ref()
            .is_some_and(|o| !case.name.contains(o.as_str()))
        {
            continue;
        }
        let a = run_case(&case, seeds);
        let base = if case.single_curve && !a.base_berr.is_empty() {
            format!("{:.2}, {:.2}", rms(&a.base_berr), 100.0 * rms(&a.base_rerr))
        } else {
            "n/a".into()
        };
        println!(
            "| {} | {} | {:.2} / {:.2} | {:.2}, {:.0} % | {:.3} / {:.3} | {:.2}, {:.0} % | {} / {} | {}/{} | {} | {} | {:.1} |",
            case.name,
            a.runs,
            rms(&a.berr),
            worst(&a.berr),
            rms(&a.berr) / rms(&a.bse),
            100.0 * a.bcover as f64 / a.berr.len().max(1) as f64,
            100.0 * rms(&a.rerr),
            100.0 * worst(&a.rerr),
            rms(&a.rerr) / rms(&a.rse),
            100.0 * a.rcover as f64 / a.rerr.len().max(1) as f64,
            a.extra,
            a.missing,
            a.exact_count,
            a.runs,
            a.indeterminate,
            base,
            1e3 * a.secs / a.runs.max(1) as f64
        );
    }
}
