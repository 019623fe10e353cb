//! Slews: how far the track must move sideways to lie on the smooth fitted
//! design, computed from versine differences by the chord relation.
//!
//! **Caution.** Slews are indicative, for planning only. Before any track is
//! moved they must be checked by a competent engineer against clearances,
//! structure gauges, fixed points (bridges, platforms, switches and
//! crossings), cant and local standards. A slew computed from versines
//! accumulates reading noise over the distance between held points: read the
//! standard deviation beside every slew.
//!
//! # Method
//! With readings every `d` along the rail and a half chord `a = m·d`, a
//! sideways move `s_i` of the track at reading `i` changes the chord-side
//! versine there by `−s_i + (s_{i−m} + s_{i+m})/2` (METHODS §5, CHECKS 1.10;
//! "Hallade realignment" is common practice; the generalisation to `m > 1`
//! follows because the chord ends sit `m` readings away). Moving the track
//! onto the design means, at every reading with a versine,
//!
//! `v_i + Δv_i(s) = D_i + δ_i`
//!
//! where `v` is the measured and `D` the design versine and `δ` the smallest
//! change to the design needed so that the slews can be exactly zero where the
//! track is held: the first and last chord length of the survey (two readings
//! of each interleaved chain, so the track joins the undisturbed track beyond
//! in position and direction) and the `m` readings nearest each fixed point
//! (one per chain, half a chord in all). The slews minimise `Σ δ²`, a banded
//! linear least-squares problem solved per chain by Givens rotations; `δ` is
//! its residual. For readings every half chord and held ends this is exactly
//! Hallade's closure `Σe = 0`, `Σ i·e = 0`; each fixed point adds one
//! condition per chain.
//!
//! The chord relation links only readings `m` apart, so with `m > 1` the
//! readings form `m` interleaved chains with independent noise. The reported
//! [`Slews::slew`] averages the chains over a half chord, which is the exact
//! solution for half-chord-averaged versine differences and cuts the noise by
//! about `√m`; [`Slews::chord_slew`] keeps the unaveraged solution, which
//! reproduces the adjusted design versines exactly.
//!
//! Standard deviations come from the reading noise alone, with the design
//! taken as exact. They grow like `L^1.5` with the distance `L` between held
//! points: a few hundred metres of versines fix slews only to centimetres.
//! Give fixed points (or compute over shorter sections) where it matters.
//! A design from the element fit is fitted to the versines, not to positions:
//! its own small parameter errors (a radius 0.05 % off on a 300 m arc moves
//! the middle of the arc by about 15 mm) show up as slews too, and are not in
//! the sd. In a study (`cargo run --example realign_study`) slews onto the
//! fitted design of an 820 m curve with 3 mm RMS irregularity reached
//! 60–110 mm, within the sd reported from the fit's reading noise estimate.
//!
//! # Sign convention
//! A slew is **positive to the left** facing increasing chainage. In a curve,
//! [`Slews::towards_centre`] gives the same move as positive towards the
//! curve centre (the convention of METHODS §5), negative away from it.
//!
//! ## Reference
//! Hallade's method as described in METHODS.md §5 (US Army correspondence
//! course on railway track maintenance, §§3.20–3.28; TM 5-628). Banded
//! Givens least squares: Lawson & Hanson, "Solving Least Squares Problems",
//! 1974, ch. 27 (from memory). Selected inverse of a banded R: Björck,
//! "Numerical Methods for Least Squares Problems", 1996, §6.7 (from memory).

use crate::diag::{Diagnostic, Location};
use crate::survey::{Rail, Reading, Setup, Survey};
use crate::units::{LengthUnit, VersineUnit};

/// What the realignment must respect.
#[derive(Debug, Clone, PartialEq)]
pub struct SlewOptions {
    /// Survey chainages (metres) where the track must not move: bridges,
    /// platforms, switches and crossings, level crossings. Each holds the
    /// nearest reading of every interleaved chain (the `m` readings nearest,
    /// half a chord in all; the nearest reading when readings are a half
    /// chord apart). The first and last chord length are always held.
    pub fixed: Vec<f64>,
    /// Largest acceptable slew (metres); larger ones are warned about, by
    /// chainage. `None`: no limit checked.
    pub max_slew: Option<f64>,
}

impl Default for SlewOptions {
    /// No interior fixed points and no slew limit; the survey ends are held
    /// (common practice: a realignment must join the undisturbed track).
    fn default() -> Self {
        SlewOptions {
            fixed: Vec::new(),
            max_slew: None,
        }
    }
}

/// Slews at every survey reading (gaps included), SI units.
#[derive(Debug, Clone, PartialEq)]
pub struct Slews {
    /// Survey chainage of each reading, metres.
    pub chainage: Vec<f64>,
    /// Slew (sideways move to bring the track onto the adjusted design),
    /// metres, positive to the left facing increasing chainage: `chord_slew`
    /// averaged over a half chord (one reading of each interleaved chain)
    /// when readings are closer than a half chord, `chord_slew` itself when
    /// they are a half chord apart. 0 where the track is held.
    pub slew: Vec<f64>,
    /// Standard deviation of each `slew` from the reading noise, metres
    /// (0 where the track is held).
    pub sd: Vec<f64>,
    /// The slews that make every realised versine equal to the adjusted
    /// design exactly (the chord relation solved reading by reading), metres,
    /// positive left. With `m` readings per half chord the relation links
    /// only readings `m` apart, so these carry `m` independent noise
    /// patterns; `slew` averages them.
    pub chord_slew: Vec<f64>,
    /// Whether the reading is held (survey end or fixed point).
    pub held: Vec<bool>,
    /// Design versine realised by `chord_slew` (field convention, like
    /// the readings), metres: the measured versine plus the change the slews
    /// make (track beyond the survey taken as unmoved). `None` in a gap.
    pub realised_versine: Vec<Option<f64>>,
    /// Change made to the design versine so that the held points can be held
    /// (realised − design), metres; 0 where there is no reading.
    pub design_change: Vec<f64>,
    /// Field sign of each reading's rail (+1 right, −1 left) times the
    /// chord-side sign of the design: +1 where the design curves left, −1
    /// right, 0 on a straight. Used by [`Slews::towards_centre`].
    curve_side: Vec<i8>,
    /// Readings per half chord.
    pub step: usize,
    /// The slew limit checked, metres.
    pub max_slew: Option<f64>,
    /// Standard deviation of one reading used for `sd`, metres.
    pub reading_sd: f64,
}

impl Slews {
    /// The slew at reading `i` as a move towards the curve centre (positive)
    /// or away from it (negative), metres; `None` on a straight (design radius
    /// over 1000 km) or out of range.
    pub fn towards_centre(&self, i: usize) -> Option<f64> {
        match self.curve_side.get(i)? {
            0 => None,
            &c => Some(f64::from(c) * self.slew[i]),
        }
    }

    /// Index and value of the largest slew in magnitude (`None` for no readings).
    pub fn max_abs(&self) -> Option<(usize, f64)> {
        self.slew
            .iter()
            .copied()
            .enumerate()
            .max_by(|a, b| a.1.abs().total_cmp(&b.1.abs()))
    }

    /// Largest change made to a design versine to hold the held points, metres.
    pub fn max_design_change(&self) -> f64 {
        self.design_change.iter().fold(0.0, |m, d| m.max(d.abs()))
    }

    /// The slew columns of `stations.csv` (`slew_mm`, `slew_sd_mm`; imperial
    /// `slew_in`, `slew_sd_in`), one per reading, for
    /// [`crate::export::stations::StationExtras::slews`].
    pub fn at_stations(&self) -> Vec<crate::export::stations::SlewAtStation> {
        self.slew
            .iter()
            .zip(&self.sd)
            .map(|(&slew, &sd)| crate::export::stations::SlewAtStation { slew, sd })
            .collect()
    }

    /// Indices of the readings whose slew exceeds the limit.
    pub fn exceeding(&self) -> Vec<usize> {
        match self.max_slew {
            Some(lim) => (0..self.slew.len())
                .filter(|&i| self.slew[i].abs() > lim)
                .collect(),
            None => Vec::new(),
        }
    }
}

/// Why slews could not be computed.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum SlewError {
    /// The design versines do not match the readings one for one.
    #[error(
        "{file}: {design} design versines for {readings} readings; pass the fit's design_versine for this survey"
    )]
    LengthMismatch {
        /// The survey.
        file: String,
        /// Number of design versines given.
        design: usize,
        /// Number of readings.
        readings: usize,
    },
    /// Readings are not evenly spaced.
    #[error(
        "{file}:{line}: readings are {found:.4} m apart here but {expected:.4} m at the start; slews need evenly spaced readings (split the survey at the change)"
    )]
    Uneven {
        /// The survey.
        file: String,
        /// Line of the reading where the spacing changes.
        line: usize,
        /// Spacing found there, metres.
        found: f64,
        /// Spacing at the start, metres.
        expected: f64,
    },
    /// The half chord is not a whole number of reading spacings.
    #[error(
        "{file}: the half chord {half_chord:.4} m is not a whole number of reading spacings ({spacing:.4} m); check --chord"
    )]
    Spacing {
        /// The survey.
        file: String,
        /// Half chord, metres.
        half_chord: f64,
        /// Reading spacing, metres.
        spacing: f64,
    },
    /// Too few readings to hold both ends and still move anything.
    #[error(
        "{file}: {readings} readings; slews need at least {needed} (two chord lengths held at the ends plus one)"
    )]
    TooShort {
        /// The survey.
        file: String,
        /// Readings in the survey.
        readings: usize,
        /// Readings needed.
        needed: usize,
    },
    /// A fixed point lies outside the survey.
    #[error(
        "{file}: fixed point at chainage {chainage:.3} m lies outside the survey ({first:.3} to {last:.3} m); give survey chainages"
    )]
    FixedOutside {
        /// The survey.
        file: String,
        /// The fixed chainage, metres.
        chainage: f64,
        /// First survey chainage, metres.
        first: f64,
        /// Last survey chainage, metres.
        last: f64,
    },
    /// A value is not a finite number.
    #[error("{file}: {what} at chainage {chainage:.3} m is not a finite number")]
    NotFinite {
        /// The survey.
        file: String,
        /// Which value.
        what: &'static str,
        /// Where, metres.
        chainage: f64,
    },
    /// The reading standard deviation is not positive and finite.
    #[error("reading standard deviation {0} m is not a positive finite number")]
    ReadingSd(f64),
    /// Too many readings are missing for the slews to be determined.
    #[error(
        "{file}: slews near chainage {chainage:.3} m are not determined by the readings (a gap longer than a chord); add a fixed point there or split the survey at the gap"
    )]
    Undetermined {
        /// The survey.
        file: String,
        /// Chainage of an undetermined slew, metres.
        chainage: f64,
    },
}

/// The change of field versines caused by slews `slew` (positive left,
/// metres, one per reading, track beyond the ends unmoved) with readings
/// `step` per half chord, all read on `rail`.
///
/// Chord-side change at reading i: `−s_i + (s_{i−m} + s_{i+m})/2`
/// (METHODS §5, CHECKS 1.10), converted to the field convention of `rail`.
///
/// # Examples
/// ```
/// use chordline::realign::versine_change;
/// use chordline::survey::Rail;
/// // CHECKS.md 1.10: a left-hand curve read on its outer (right) rail; a
/// // +10 mm slew outwards (to the right, −0.010 here) raises that versine by
/// // 10 mm and lowers each neighbour's by 5 mm.
/// let dv = versine_change(&[0.0, -0.010, 0.0], 1, Rail::Right);
/// assert!((dv[1] - 0.010).abs() < 1e-15 && (dv[0] + 0.005).abs() < 1e-15);
/// ```
pub fn versine_change(slew: &[f64], step: usize, rail: Rail) -> Vec<f64> {
    let n = slew.len();
    let at = |j: Option<usize>| j.filter(|&j| j < n).map_or(0.0, |j| slew[j]);
    (0..n)
        .map(|i| {
            let cs = -slew[i] + 0.5 * (at(i.checked_sub(step)) + at(Some(i + step)));
            rail.chord_side(cs)
        })
        .collect()
}

fn loc(survey: &Survey, r: &Reading) -> Location {
    Location {
        file: survey.source.clone(),
        line: r.line,
        column: None,
    }
}

/// Slews that bring the surveyed track onto the design, with their standard
/// deviations and the design versines actually realised.
///
/// `design_versine` is one design versine per reading (field convention,
/// metres: [`crate::fit::FitResult::design_versine`]); `reading_sd` the
/// standard deviation of one reading (metres, e.g. the fit's
/// `stats.reading_sd`). Readings must be evenly spaced with the half chord a
/// whole number of spacings. Gaps keep their station; their equation is
/// skipped. See the module documentation for the method, the sign convention
/// and the **caution**: slews are indicative and must be checked by a
/// competent engineer before any track is moved.
///
/// Diagnostics: a note with the largest slew and the design change needed to
/// hold the held points; a warning per run of readings beyond
/// `opts.max_slew`, naming the chainage; a warning where the slews are
/// uncertain by more than 10 mm (threshold chosen here).
///
/// # Errors
/// [`SlewError`] for mismatched inputs, uneven spacing, fixed points outside
/// the survey, a survey too short, or gaps that leave slews undetermined.
///
/// # Examples
/// ```
/// use chordline::realign::{slews, SlewOptions};
/// use chordline::survey::{Rail, Reading, Setup, Survey};
/// use chordline::units::{LengthUnit, VersineUnit};
/// // METHODS.md C5.1 (versines in mm, read every half chord on the outer rail).
/// let v_ex = [0.0, 2.0, 11.0, 19.0, 32.0, 18.0, 12.0, 1.0, 0.0];
/// let v_prop = [0.0, 2.0, 10.0, 20.0, 31.0, 21.0, 10.0, 1.0, 0.0];
/// let readings = v_ex.iter().enumerate().map(|(i, v)| Reading {
///     chainage: 10.0 * i as f64, versine: Some(v * 1e-3), rail: Rail::Right,
///     note: None, line: i + 2 }).collect();
/// let survey = Survey { source: "c51".into(), chainage_unit: LengthUnit::Metre,
///     versine_unit: VersineUnit::Millimetre, readings, has_side_column: false };
/// let design: Vec<f64> = v_prop.iter().map(|v| v * 1e-3).collect();
/// let (s, _) = slews(&survey, &Setup::new(20.0, Rail::Right), &design, 0.5e-3,
///     &SlewOptions::default()).unwrap();
/// let towards: Vec<f64> = (0..9).map(|i| s.towards_centre(i).unwrap_or(0.0) * 1e3).collect();
/// let expect = [0.0, 0.0, 0.0, -2.0, -2.0, -4.0, 0.0, 0.0, 0.0];
/// assert!(towards.iter().zip(expect).all(|(a, b)| (a - b).abs() < 1e-9));
/// ```
pub fn slews(
    survey: &Survey,
    setup: &Setup,
    design_versine: &[f64],
    reading_sd: f64,
    opts: &SlewOptions,
) -> Result<(Slews, Vec<Diagnostic>), SlewError> {
    let file = || survey.source.clone();
    let rd = &survey.readings;
    let n = rd.len();
    if design_versine.len() != n {
        return Err(SlewError::LengthMismatch {
            file: file(),
            design: design_versine.len(),
            readings: n,
        });
    }
    if !(reading_sd.is_finite() && reading_sd > 0.0) {
        return Err(SlewError::ReadingSd(reading_sd));
    }
    for (r, &d) in rd.iter().zip(design_versine) {
        let bad = if !r.chainage.is_finite() {
            Some("chainage")
        } else if !d.is_finite() {
            Some("design versine")
        } else if r.versine.is_some_and(|v| !v.is_finite()) {
            Some("versine")
        } else {
            None
        };
        if let Some(what) = bad {
            return Err(SlewError::NotFinite {
                file: file(),
                what,
                chainage: r.chainage,
            });
        }
    }
    if n < 2 {
        return Err(SlewError::TooShort {
            file: file(),
            readings: n,
            needed: 5,
        });
    }
    // Spacing and readings per half chord.
    let d = (rd[n - 1].chainage - rd[0].chainage) / (n - 1) as f64;
    let tol = (0.01 * d).max(0.002);
    for w in rd.windows(2) {
        let found = w[1].chainage - w[0].chainage;
        if d.is_nan() || d <= 0.0 || (found - d).abs() > tol {
            return Err(SlewError::Uneven {
                file: file(),
                line: w[1].line,
                found,
                expected: rd[1].chainage - rd[0].chainage,
            });
        }
    }
    let a = setup.half_chord();
    let mf = a / d;
    let m = mf.round();
    if m.is_nan() || m < 1.0 || (mf - m).abs() > 0.01 {
        return Err(SlewError::Spacing {
            file: file(),
            half_chord: a,
            spacing: d,
        });
    }
    let m = m as usize;
    let needed = 4 * m + 1;
    if n < needed {
        return Err(SlewError::TooShort {
            file: file(),
            readings: n,
            needed,
        });
    }
    // Held readings: two per chain at each end, one per chain at each fixed point.
    let mut held = vec![false; n];
    for h in held.iter_mut().take(2 * m) {
        *h = true;
    }
    for h in held.iter_mut().skip(n - 2 * m) {
        *h = true;
    }
    let (first, last) = (rd[0].chainage, rd[n - 1].chainage);
    for &f in &opts.fixed {
        if !f.is_finite() || f < first - 0.5 * d || f > last + 0.5 * d {
            return Err(SlewError::FixedOutside {
                file: file(),
                chainage: f,
                first,
                last,
            });
        }
        let j = (((f - first) / d).round() as usize).min(n - 1);
        let lo = j.saturating_sub(m / 2).min(n - m);
        for h in held.iter_mut().skip(lo).take(m) {
            *h = true;
        }
    }

    let sign = |r: Rail| r.chord_side(1.0);
    let mut slew = vec![0.0; n];
    let mut var = vec![0.0; n];
    let mut cov_next = vec![0.0; n];
    for r in 0..m {
        let idx: Vec<usize> = (r..n).step_by(m).collect();
        // Free columns of this chain.
        let mut col = vec![usize::MAX; idx.len()];
        let mut nfree = 0;
        for (k, &i) in idx.iter().enumerate() {
            if !held[i] {
                col[k] = nfree;
                nfree += 1;
            }
        }
        if nfree == 0 {
            continue;
        }
        // Rows: chain-interior readings with a versine.
        let mut qr = BandQr::new(nfree);
        let inner = idx.len().saturating_sub(2);
        for (k, &i) in idx.iter().enumerate().skip(1).take(inner) {
            let Some(v) = rd[i].versine else { continue };
            let sg = sign(rd[i].rail);
            let mut row = [(usize::MAX, 0.0); 3];
            for (t, (kk, c)) in [(k - 1, 0.5), (k, -1.0), (k + 1, 0.5)]
                .into_iter()
                .enumerate()
            {
                row[t] = (col[kk], sg * c);
            }
            let cols: Vec<(usize, f64)> = row.into_iter().filter(|p| p.0 != usize::MAX).collect();
            if let Some(&(c0, _)) = cols.first() {
                let mut buf = [0.0; 3];
                for &(c, val) in &cols {
                    buf[c - c0] = val;
                }
                qr.add_row(c0, buf, design_versine[i] - v);
            }
        }
        let x = match qr.solve() {
            Ok(x) => x,
            Err(c) => {
                let k = col.iter().position(|&q| q == c).unwrap_or(0);
                return Err(SlewError::Undetermined {
                    file: file(),
                    chainage: rd[idx[k]].chainage,
                });
            }
        };
        let band = qr.band_inverse();
        for (k, &i) in idx.iter().enumerate() {
            if col[k] != usize::MAX {
                slew[i] = x[col[k]];
                var[i] = band[col[k]][0];
                if k + 1 < idx.len() && col[k + 1] != usize::MAX {
                    cov_next[i] = band[col[k]][1];
                }
            }
        }
    }
    // Average over a half chord (one reading per chain): the chains carry
    // independent noise, so this cuts it by about √m; the average of the
    // chord-relation solution is the solution for half-chord-averaged data.
    let (avg, avg_var) = if m == 1 {
        (slew.clone(), var.clone())
    } else {
        let h = m / 2;
        let even = m.is_multiple_of(2);
        let wt = 1.0 / m as f64;
        let mut a = vec![0.0; n];
        let mut av = vec![0.0; n];
        for i in 0..n {
            if held[i] || i < h || i + h >= n {
                continue;
            }
            let (lo, hi) = (i - h, i + h);
            let (mut sum, mut vs) = (0.0, 0.0);
            for j in lo..=hi {
                let w = if even && (j == lo || j == hi) {
                    0.5 * wt
                } else {
                    wt
                };
                sum += w * slew[j];
                vs += w * w * var[j];
            }
            if even {
                // The two end readings lie on the same chain, next to each other.
                vs += 2.0 * (0.5 * wt) * (0.5 * wt) * cov_next[lo];
            }
            a[i] = sum;
            av[i] = vs;
        }
        (a, av)
    };
    let sd: Vec<f64> = avg_var
        .iter()
        .map(|v| reading_sd * v.max(0.0).sqrt())
        .collect();
    // Realised versines and design change, reading by reading (rails may differ).
    let mut realised = vec![None; n];
    let mut change = vec![0.0; n];
    let at = |j: Option<usize>| j.filter(|&j| j < n).map_or(0.0, |j| slew[j]);
    for i in 0..n {
        if let Some(v) = rd[i].versine {
            let cs = -slew[i] + 0.5 * (at(i.checked_sub(m)) + at(Some(i + m)));
            let rv = v + rd[i].rail.chord_side(cs);
            realised[i] = Some(rv);
            change[i] = rv - design_versine[i];
        }
    }
    // Which side the curve centre is on, from the design versine.
    let straight = 1e-6 * setup.chord * setup.chord / 8.0; // R > 1000 km
    let curve_side = rd
        .iter()
        .zip(design_versine)
        .map(|(r, &dv)| {
            let cs = r.rail.chord_side(dv);
            if cs.abs() <= straight {
                0
            } else if cs > 0.0 {
                1
            } else {
                -1
            }
        })
        .collect();
    let out = Slews {
        chainage: rd.iter().map(|r| r.chainage).collect(),
        slew: avg,
        chord_slew: slew,
        sd,
        held,
        realised_versine: realised,
        design_change: change,
        curve_side,
        step: m,
        max_slew: opts.max_slew,
        reading_sd,
    };
    let diags = diagnostics(survey, &out);
    Ok((out, diags))
}

fn diagnostics(survey: &Survey, s: &Slews) -> Vec<Diagnostic> {
    let mm = |v: f64| v * 1e3;
    let rd = &survey.readings;
    let mut out = Vec::new();
    if let Some((i, v)) = s.max_abs() {
        out.push(Diagnostic::note(format!(
            "largest slew {:.1} mm ({}) at chainage {:.3} m (sd {:.1} mm); the design versines were changed by at most {:.2} mm so that the ends and fixed points stay put. Slews are indicative: check clearances, structure gauges, fixed points and cant against local standards before moving track",
            mm(v.abs()),
            side_word(s, i),
            s.chainage[i],
            mm(s.sd[i]),
            mm(s.max_design_change())
        )));
    }
    if let Some(lim) = s.max_slew {
        let ex = s.exceeding();
        let mut k = 0;
        while k < ex.len() {
            let mut e = k;
            while e + 1 < ex.len() && ex[e + 1] == ex[e] + 1 {
                e += 1;
            }
            let run = &ex[k..=e];
            let worst = run
                .iter()
                .copied()
                .max_by(|a, b| s.slew[*a].abs().total_cmp(&s.slew[*b].abs()))
                .unwrap_or(ex[k]);
            out.push(
                Diagnostic::warning(format!(
                    "slew {:.1} mm at chainage {:.3} m exceeds the limit of {:.1} mm (readings from {:.3} to {:.3} m)",
                    mm(s.slew[worst].abs()),
                    s.chainage[worst],
                    mm(lim),
                    s.chainage[run[0]],
                    s.chainage[run[run.len() - 1]]
                ))
                .at(loc(survey, &rd[worst]))
                .hint("add a fixed point, relax the design there, or plan the move in stages; check with local standards"),
            );
            k = e + 1;
        }
    }
    let worst_sd = (0..s.sd.len()).max_by(|a, b| s.sd[*a].total_cmp(&s.sd[*b]));
    if let Some(i) = worst_sd
        && s.sd[i] > 0.010
    {
        out.push(
            Diagnostic::warning(format!(
                "slews are uncertain by up to {:.1} mm (sd, at chainage {:.3} m): reading noise accumulates between held points",
                mm(s.sd[i]),
                s.chainage[i]
            ))
            .hint("add fixed points or surveyed offsets, or compute slews over shorter sections"),
        );
    }
    out
}

fn side_word(s: &Slews, i: usize) -> &'static str {
    let left = s.slew[i] >= 0.0;
    match (s.towards_centre(i), left) {
        (Some(t), true) if t >= 0.0 => "left, towards the curve centre",
        (Some(_), true) => "left, away from the curve centre",
        (Some(t), false) if t >= 0.0 => "right, towards the curve centre",
        (Some(_), false) => "right, away from the curve centre",
        (None, true) => "left",
        (None, false) => "right",
    }
}

/// [`slews`] against an element fit: its design versines, and the reading
/// standard deviation stated in `setup` or else the fit's estimate (which
/// counts short-wave track irregularity as noise, so the sd is then on the
/// cautious side).
///
/// # Errors
/// As [`slews`].
pub fn slews_for_fit(
    survey: &Survey,
    setup: &Setup,
    fit: &crate::fit::FitResult,
    opts: &SlewOptions,
) -> Result<(Slews, Vec<Diagnostic>), SlewError> {
    let sd = setup.reading_sd.unwrap_or(fit.stats.reading_sd);
    slews(survey, setup, &fit.design_versine, sd, opts)
}

/// One terminal line: the largest slew and where, the limit if exceeded,
/// with the caution. Slews in mm (metric) or inches, chainage in `unit`.
///
/// # Examples
/// ```
/// # use chordline::realign::{slews, summary_line, SlewOptions};
/// # use chordline::survey::{Rail, Reading, Setup, Survey};
/// # use chordline::units::{LengthUnit, VersineUnit};
/// # let v = [0.0, 2.0, 11.0, 19.0, 32.0, 18.0, 12.0, 1.0, 0.0];
/// # let p = [0.0, 2.0, 10.0, 20.0, 31.0, 21.0, 10.0, 1.0, 0.0];
/// # let readings = v.iter().enumerate().map(|(i, v)| Reading { chainage: 10.0 * i as f64,
/// #     versine: Some(v * 1e-3), rail: Rail::Right, note: None, line: i + 2 }).collect();
/// # let survey = Survey { source: "c51".into(), chainage_unit: LengthUnit::Metre,
/// #     versine_unit: VersineUnit::Millimetre, readings, has_side_column: false };
/// # let d: Vec<f64> = p.iter().map(|v| v * 1e-3).collect();
/// let (s, _) = slews(&survey, &Setup::new(20.0, Rail::Right), &d, 0.5e-3,
///     &SlewOptions::default()).unwrap();
/// let line = summary_line(&s, LengthUnit::Metre);
/// assert!(line.starts_with("slews: largest 4.0 mm"), "{line}");
/// ```
pub fn summary_line(s: &Slews, unit: LengthUnit) -> String {
    let vu = unit.versine_unit();
    let (vs, dp) = match vu {
        VersineUnit::Inch => ("in", 3),
        _ => ("mm", 1),
    };
    let l = unit.suffix();
    let Some((i, v)) = s.max_abs() else {
        return "slews: none (no readings)".to_string();
    };
    let mut line = format!(
        "slews: largest {:.dp$} {vs} ({}) at {:.1} {l}, sd {:.dp$} {vs}",
        vu.from_m(v.abs()),
        side_word(s, i),
        unit.from_m(s.chainage[i]),
        vu.from_m(s.sd[i]),
    );
    if let Some(lim) = s.max_slew {
        let ex = s.exceeding();
        if ex.is_empty() {
            line.push_str(&format!(
                "; none beyond the {:.dp$} {vs} limit",
                vu.from_m(lim)
            ));
        } else {
            line.push_str(&format!(
                "; {} readings beyond the {:.dp$} {vs} limit, from {:.1} to {:.1} {l}",
                ex.len(),
                vu.from_m(lim),
                unit.from_m(s.chainage[ex[0]]),
                unit.from_m(s.chainage[ex[ex.len() - 1]]),
            ));
        }
    }
    line.push_str(
        " (indicative only: check clearances, fixed points and cant before moving track)",
    );
    line
}

/// Sequential banded Givens QR for rows with at most `W` nonzeros starting at
/// their first column (after DEPENDENCIES.md §5).
const W: usize = 3;

struct BandQr {
    r: Vec<[f64; W]>,
    d: Vec<f64>,
}

impl BandQr {
    fn new(n: usize) -> Self {
        BandQr {
            r: vec![[0.0; W]; n],
            d: vec![0.0; n],
        }
    }

    fn add_row(&mut self, first: usize, mut buf: [f64; W], mut y: f64) {
        let n = self.r.len();
        let mut c = first;
        while c < n {
            let a = buf[0];
            if a != 0.0 {
                let b = self.r[c][0];
                let h = a.hypot(b);
                let (cs, sn) = (b / h, a / h);
                let rk = &mut self.r[c];
                for t in 0..W {
                    let (rv, bv) = (rk[t], buf[t]);
                    rk[t] = cs * rv + sn * bv;
                    buf[t] = -sn * rv + cs * bv;
                }
                let dv = self.d[c];
                self.d[c] = cs * dv + sn * y;
                y = -sn * dv + cs * y;
            }
            buf.rotate_left(1);
            buf[W - 1] = 0.0;
            c += 1;
            if buf.iter().all(|v| *v == 0.0) {
                break;
            }
        }
    }

    /// Solve; `Err(column)` for the first column left undetermined.
    fn solve(&self) -> Result<Vec<f64>, usize> {
        let n = self.r.len();
        if let Some(c) = (0..n).find(|&i| self.r[i][0].abs() < 1e-9) {
            return Err(c);
        }
        let mut x = vec![0.0; n];
        for i in (0..n).rev() {
            let mut s = self.d[i];
            for t in 1..W {
                if i + t < n {
                    s -= self.r[i][t] * x[i + t];
                }
            }
            x[i] = s / self.r[i][0];
        }
        Ok(x)
    }

    /// Band of (RᵀR)⁻¹ (`out[i][t]` = Σ_{i,i+t}) by the selected-inverse
    /// recurrence `Σ_ij = (δ_ij / r_ii − Σ_k r_ik Σ_kj) / r_ii` for j ≥ i,
    /// from the last row up.
    fn band_inverse(&self) -> Vec<[f64; W]> {
        let n = self.r.len();
        // sig[i][t] = Σ_{i, i+t}
        let mut sig = vec![[0.0; W]; n];
        let get = |sig: &Vec<[f64; W]>, p: usize, q: usize| {
            let (lo, hi) = if p <= q { (p, q) } else { (q, p) };
            if hi - lo < W { sig[lo][hi - lo] } else { 0.0 }
        };
        for i in (0..n).rev() {
            let rii = self.r[i][0];
            for j in (i..(i + W).min(n)).rev() {
                let mut s = if j == i { 1.0 / rii } else { 0.0 };
                for k in (i + 1)..(i + W).min(n) {
                    s -= self.r[i][k - i] * get(&sig, k, j);
                }
                sig[i][j - i] = s / rii;
            }
        }
        sig
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    #[allow(clippy::needless_range_loop)] // dense matrix algebra reads best indexed
    fn selected_inverse_matches_dense() {
        // Random-ish banded R; compare with the dense inverse of RᵀR.
        let n = 7;
        let mut qr = BandQr::new(n);
        for k in 0..n + 3 {
            let c = k % n;
            let mut b = [
                1.0 + 0.1 * k as f64,
                -0.7 + 0.05 * k as f64,
                0.3 - 0.02 * (k * k) as f64,
            ];
            for (t, v) in b.iter_mut().enumerate() {
                if c + t >= n {
                    *v = 0.0;
                }
            }
            qr.add_row(c, b, 0.0);
        }
        // Dense RᵀR.
        let mut a = vec![vec![0.0; n]; n];
        for i in 0..n {
            for j in 0..n {
                for k in 0..n {
                    let rki = if i >= k && i - k < W {
                        qr.r[k][i - k]
                    } else {
                        0.0
                    };
                    let rkj = if j >= k && j - k < W {
                        qr.r[k][j - k]
                    } else {
                        0.0
                    };
                    a[i][j] += rki * rkj;
                }
            }
        }
        // Gauss–Jordan inverse.
        let mut inv = vec![vec![0.0; n]; n];
        for (i, row) in inv.iter_mut().enumerate() {
            row[i] = 1.0;
        }
        for p in 0..n {
            let piv = a[p][p];
            for j in 0..n {
                a[p][j] /= piv;
                inv[p][j] /= piv;
            }
            for i in 0..n {
                if i != p {
                    let f = a[i][p];
                    for j in 0..n {
                        a[i][j] -= f * a[p][j];
                        inv[i][j] -= f * inv[p][j];
                    }
                }
            }
        }
        let band = qr.band_inverse();
        for i in 0..n {
            for t in 0..W.min(n - i) {
                let want = inv[i][i + t];
                assert!(
                    (band[i][t] - want).abs() < 1e-9 * inv[i][i].abs().max(1.0),
                    "{i},{t}: {} vs {want}",
                    band[i][t]
                );
            }
        }
    }
}
