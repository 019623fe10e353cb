//! The element fit never panics on odd input: random readings, spacings,
//! gaps, chords and rails.

use chordline::fit::{FitOptions, fit};
use chordline::integrate::{IntegrateOptions, integrate};
use chordline::survey::{Marking, Rail, Reading, Setup, Survey};
use chordline::units::{LengthUnit, VersineUnit};
use proptest::prelude::*;

fn survey(chainages: &[f64], versines: &[Option<f64>], rails: &[bool]) -> Survey {
    let readings = chainages
        .iter()
        .zip(versines)
        .zip(rails)
        .enumerate()
        .map(|(i, ((&c, &v), &left))| Reading {
            chainage: c,
            versine: v,
            rail: if left { Rail::Left } else { Rail::Right },
            note: None,
            line: i + 2,
        })
        .collect();
    Survey {
        source: "proptest".into(),
        chainage_unit: LengthUnit::Metre,
        versine_unit: VersineUnit::Millimetre,
        readings,
        has_side_column: true,
    }
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 48, ..ProptestConfig::default() })]
    #[test]
    fn fit_never_panics(
        steps in prop::collection::vec(0.05f64..40.0, 0..120),
        vs in prop::collection::vec(prop::option::weighted(0.9, -0.5f64..0.5), 120),
        rails in prop::collection::vec(any::<bool>(), 120),
        chord in 0.5f64..40.0,
        wire in any::<bool>(),
        sd in prop::option::of(1e-5f64..0.01),
    ) {
        let mut c = Vec::with_capacity(steps.len());
        let mut x = 1000.0;
        for s in &steps {
            x += s;
            c.push(x);
        }
        let n = c.len();
        let sv = survey(&c, &vs[..n], &rails[..n]);
        let mut setup = Setup::new(chord, Rail::Left);
        setup.marking = if wire { Marking::Wire } else { Marking::Taped };
        setup.reading_sd = sd;
        // Whatever the plan refuses never reaches the fit.
        let Ok((plan, _)) = integrate(&sv, &setup, &IntegrateOptions::default()) else {
            return Ok(());
        };
        let r = fit(&plan, &FitOptions::default());
        if let Ok((res, _)) = r {
            for e in &res.elements {
                prop_assert!(e.start_chainage.value.is_finite() && e.length.value.is_finite());
                prop_assert!(e.end_chainage.value >= e.start_chainage.value - 1e-9);
            }
            let mut out = Vec::new();
            chordline::export::elements::write_elements_csv(&res, LengthUnit::Metre, &mut out)
                .expect("csv");
            let text = String::from_utf8(out).expect("utf8");
            prop_assert!(!text.contains("NaN") && !text.contains("inf"));
            let _ = chordline::report::summary_table(&res, LengthUnit::Foot);
        }
    }
}
