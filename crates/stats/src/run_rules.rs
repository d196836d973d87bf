//! Western Electric and Nelson run rules on a series in σ units.
//!
//! The rules look for patterns that are unlikely when the process is stable even
//! though no point leaves the 3σ limits. They work on standardized values
//! z = (x − centre)/σ of each point (for lot means of varying size, σ/√n of each
//! lot: see [`crate::XbarSChart::mean_z`]).
//!
//! Conventions, stated because texts differ at the edges:
//! * "beyond kσ" is strictly |z| > k, "within 1σ" strictly |z| < 1, and a point
//!   exactly on the centre line is on neither side (it ends a one-side run);
//! * equal neighbours end a rising, falling or alternating run;
//! * a "k of m" rule signals when some m consecutive points hold k beyond the zone
//!   on one side; the signal is placed at the last of those k points, and one
//!   placement is reported once per rule;
//! * a run rule ("m in a row") signals once per run, at the point that makes the
//!   run long enough, and lists every point of the run up to where it ends;
//! * Nelson's test 8 needs points on both sides of the centre (Nelson's wording);
//!   eight beyond 1σ on one side are caught by tests 2 and 6 instead.

use serde::Serialize;

use crate::control::{check_finite, ControlError, Side};

/// One run rule.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize)]
pub enum Rule {
    /// Western Electric 1: one point beyond 3σ.
    #[serde(rename = "WE1")]
    We1,
    /// Western Electric 2: two of three consecutive points beyond 2σ on one side.
    #[serde(rename = "WE2")]
    We2,
    /// Western Electric 3: four of five consecutive points beyond 1σ on one side.
    #[serde(rename = "WE3")]
    We3,
    /// Western Electric 4: eight consecutive points on one side of the centre.
    #[serde(rename = "WE4")]
    We4,
    /// Nelson 1: one point beyond 3σ.
    #[serde(rename = "N1")]
    Nelson1,
    /// Nelson 2: nine points in a row on one side of the centre.
    #[serde(rename = "N2")]
    Nelson2,
    /// Nelson 3: six points in a row steadily rising or falling.
    #[serde(rename = "N3")]
    Nelson3,
    /// Nelson 4: fourteen points in a row alternating up and down.
    #[serde(rename = "N4")]
    Nelson4,
    /// Nelson 5: two of three consecutive points beyond 2σ on one side.
    #[serde(rename = "N5")]
    Nelson5,
    /// Nelson 6: four of five consecutive points beyond 1σ on one side.
    #[serde(rename = "N6")]
    Nelson6,
    /// Nelson 7: fifteen points in a row within 1σ of the centre.
    #[serde(rename = "N7")]
    Nelson7,
    /// Nelson 8: eight points in a row beyond 1σ, on both sides of the centre.
    #[serde(rename = "N8")]
    Nelson8,
}

/// The four Western Electric rules.
pub const WESTERN_ELECTRIC: [Rule; 4] = [Rule::We1, Rule::We2, Rule::We3, Rule::We4];

/// The eight Nelson rules.
pub const NELSON: [Rule; 8] = [
    Rule::Nelson1,
    Rule::Nelson2,
    Rule::Nelson3,
    Rule::Nelson4,
    Rule::Nelson5,
    Rule::Nelson6,
    Rule::Nelson7,
    Rule::Nelson8,
];

impl Rule {
    /// Short code for tables and JSON ("WE2", "N5"); JSON carries the same code.
    pub fn code(self) -> &'static str {
        match self {
            Rule::We1 => "WE1",
            Rule::We2 => "WE2",
            Rule::We3 => "WE3",
            Rule::We4 => "WE4",
            Rule::Nelson1 => "N1",
            Rule::Nelson2 => "N2",
            Rule::Nelson3 => "N3",
            Rule::Nelson4 => "N4",
            Rule::Nelson5 => "N5",
            Rule::Nelson6 => "N6",
            Rule::Nelson7 => "N7",
            Rule::Nelson8 => "N8",
        }
    }

    /// What the pattern is, in plain words.
    pub fn description(self) -> &'static str {
        match self {
            Rule::We1 | Rule::Nelson1 => "a lot beyond 3σ from the centre line",
            Rule::We2 | Rule::Nelson5 => "2 of 3 lots in a row beyond 2σ on the same side",
            Rule::We3 | Rule::Nelson6 => "4 of 5 lots in a row beyond 1σ on the same side",
            Rule::We4 => "8 lots in a row on the same side of the centre line",
            Rule::Nelson2 => "9 lots in a row on the same side of the centre line",
            Rule::Nelson3 => "6 lots in a row each higher (or each lower) than the one before",
            Rule::Nelson4 => "14 lots in a row alternating up and down",
            Rule::Nelson7 => "15 lots in a row within 1σ of the centre line (less spread than σ says)",
            Rule::Nelson8 => "8 lots in a row beyond 1σ, on both sides of the centre line",
        }
    }
}

/// One place where a rule's pattern occurs.
#[derive(Debug, Clone, PartialEq, Eq, Serialize)]
pub struct RuleSignal {
    /// The rule.
    pub rule: Rule,
    /// The point that completes the pattern, from 0.
    pub index: usize,
    /// Every point that makes up the pattern, ascending.
    pub points: Vec<usize>,
    /// The side for one-sided patterns; for the rising/falling rule, `Above` means
    /// rising. `None` for alternation and the within/beyond-1σ runs.
    pub side: Option<Side>,
}

/// Standardizes values against a centre line and σ: z = (x − centre)/σ.
pub fn standardize(values: &[f64], centre: f64, sigma: f64) -> Result<Vec<f64>, ControlError> {
    check_finite("value", values)?;
    crate::control::finite("centre", None, centre)?;
    if !(sigma.is_finite() && sigma > 0.0) {
        return Err(ControlError::Parameter {
            name: "sigma",
            value: sigma,
            expected: "a finite number greater than zero",
        });
    }
    Ok(values.iter().map(|x| (x - centre) / sigma).collect())
}

/// Applies `rules` to standardized values `z`; signals come rule by rule in the
/// order given, each rule's in series order.
pub fn run_rules(z: &[f64], rules: &[Rule]) -> Result<Vec<RuleSignal>, ControlError> {
    check_finite("standardized value", z)?;
    let mut out = Vec::new();
    for &rule in rules {
        match rule {
            Rule::We1 | Rule::Nelson1 => beyond_three(z, rule, &mut out),
            Rule::We2 | Rule::Nelson5 => k_of_m(z, rule, 2, 3, 2.0, &mut out),
            Rule::We3 | Rule::Nelson6 => k_of_m(z, rule, 4, 5, 1.0, &mut out),
            Rule::We4 => one_side_run(z, rule, 8, &mut out),
            Rule::Nelson2 => one_side_run(z, rule, 9, &mut out),
            Rule::Nelson3 => trend_run(z, rule, 6, &mut out),
            Rule::Nelson4 => alternating_run(z, rule, 14, &mut out),
            Rule::Nelson7 => hugging_run(z, rule, 15, &mut out),
            Rule::Nelson8 => mixture_run(z, rule, 8, &mut out),
        }
    }
    Ok(out)
}

fn side_of(z: f64) -> Option<Side> {
    if z > 0.0 {
        Some(Side::Above)
    } else if z < 0.0 {
        Some(Side::Below)
    } else {
        None
    }
}

fn beyond_three(z: &[f64], rule: Rule, out: &mut Vec<RuleSignal>) {
    for (i, &v) in z.iter().enumerate() {
        if v.abs() > 3.0 {
            out.push(RuleSignal { rule, index: i, points: vec![i], side: side_of(v) });
        }
    }
}

fn k_of_m(z: &[f64], rule: Rule, k: usize, m: usize, zone: f64, out: &mut Vec<RuleSignal>) {
    if z.len() < m {
        return;
    }
    let first_new = out.len();
    for start in 0..=z.len() - m {
        for side in [Side::Above, Side::Below] {
            let beyond: Vec<usize> = (start..start + m)
                .filter(|&i| match side {
                    Side::Above => z[i] > zone,
                    Side::Below => z[i] < -zone,
                })
                .collect();
            if beyond.len() < k {
                continue;
            }
            let index = beyond[beyond.len() - 1];
            let seen = out[first_new..].iter_mut().find(|s| s.index == index && s.side == Some(side));
            match seen {
                // A later window through the same completing point may add earlier points.
                Some(s) => {
                    for p in beyond {
                        if !s.points.contains(&p) {
                            s.points.push(p);
                        }
                    }
                    s.points.sort_unstable();
                }
                None => out.push(RuleSignal { rule, index, points: beyond, side: Some(side) }),
            }
        }
    }
    out[first_new..].sort_by_key(|s| s.index);
}

/// Emits one signal per maximal run once it holds `m` points and `accept(first,
/// last)` agrees. `member(i)`: point i can be in a run at all; `extends(i)`: point i
/// continues the run point i − 1 is in. The signal's side is left for the caller.
fn runs(
    len: usize,
    m: usize,
    rule: Rule,
    out: &mut Vec<RuleSignal>,
    mut member: impl FnMut(usize) -> bool,
    mut extends: impl FnMut(usize) -> bool,
    mut accept: impl FnMut(usize, usize) -> bool,
) {
    let mut start: Option<usize> = None;
    let mut open: Option<usize> = None; // index into `out` of this run's signal
    for i in 0..len {
        if !member(i) {
            start = None;
            open = None;
            continue;
        }
        let s = match start {
            Some(s) if extends(i) => s,
            _ => {
                open = None;
                i
            }
        };
        start = Some(s);
        match open {
            Some(o) => out[o].points.push(i),
            None if i + 1 - s >= m && accept(s, i) => {
                out.push(RuleSignal { rule, index: i, points: (s..=i).collect(), side: None });
                open = Some(out.len() - 1);
            }
            None => {}
        }
    }
}

fn one_side_run(z: &[f64], rule: Rule, m: usize, out: &mut Vec<RuleSignal>) {
    let before = out.len();
    runs(
        z.len(),
        m,
        rule,
        out,
        |i| side_of(z[i]).is_some(),
        |i| i > 0 && side_of(z[i]) == side_of(z[i - 1]),
        |_, _| true,
    );
    for s in &mut out[before..] {
        s.side = side_of(z[s.index]);
    }
}

fn trend_run(z: &[f64], rule: Rule, m: usize, out: &mut Vec<RuleSignal>) {
    // A run of rising points is a run of positive steps; the first point of the run
    // is the one before the first step, so runs are tracked on steps and widened.
    let steps: Vec<Option<Side>> =
        (0..z.len()).map(|i| if i == 0 { None } else { side_of(z[i] - z[i - 1]) }).collect();
    let before = out.len();
    runs(
        z.len(),
        m - 1,
        rule,
        out,
        |i| steps[i].is_some(),
        |i| i > 0 && steps[i] == steps[i - 1],
        |_, _| true,
    );
    for s in &mut out[before..] {
        s.side = steps[s.index];
        s.points.insert(0, s.points[0] - 1);
    }
}

fn alternating_run(z: &[f64], rule: Rule, m: usize, out: &mut Vec<RuleSignal>) {
    let steps: Vec<Option<Side>> =
        (0..z.len()).map(|i| if i == 0 { None } else { side_of(z[i] - z[i - 1]) }).collect();
    let before = out.len();
    runs(
        z.len(),
        m - 1,
        rule,
        out,
        |i| steps[i].is_some(),
        |i| i > 0 && steps[i - 1].is_some() && steps[i] != steps[i - 1],
        |_, _| true,
    );
    for s in &mut out[before..] {
        s.points.insert(0, s.points[0] - 1);
    }
}

fn hugging_run(z: &[f64], rule: Rule, m: usize, out: &mut Vec<RuleSignal>) {
    runs(z.len(), m, rule, out, |i| z[i].abs() < 1.0, |i| i > 0, |_, _| true);
}

fn mixture_run(z: &[f64], rule: Rule, m: usize, out: &mut Vec<RuleSignal>) {
    // The run is judged on its latest m points, so a long one-sided stretch that
    // later crosses over still signals when both sides appear within m points.
    runs(
        z.len(),
        m,
        rule,
        out,
        |i| z[i].abs() > 1.0,
        |i| i > 0,
        |_, i| {
            let w = &z[i + 1 - m..=i];
            w.iter().any(|&v| v > 0.0) && w.iter().any(|&v| v < 0.0)
        },
    );
}

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::*;

    fn hits(z: &[f64], rule: Rule) -> Vec<(usize, Vec<usize>)> {
        run_rules(z, &[rule]).unwrap().into_iter().map(|s| (s.index, s.points)).collect()
    }

    #[test]
    fn one_point_beyond_three_sigma() {
        for rule in [Rule::We1, Rule::Nelson1] {
            // From memory: Western Electric SQC Handbook (1956) rule 1 / Nelson (1984) test 1:
            // one point beyond 3σ.
            assert_eq!(hits(&[0.0, 3.1, 0.0, -3.2], rule), vec![(1, vec![1]), (3, vec![3])]);
            assert!(hits(&[3.0, -3.0, 2.9, 0.0], rule).is_empty());
        }
        let s = run_rules(&[-3.5], &[Rule::Nelson1]).unwrap();
        assert_eq!(s[0].side, Some(Side::Below));
    }

    #[test]
    fn two_of_three_beyond_two_sigma() {
        for rule in [Rule::We2, Rule::Nelson5] {
            // From memory: Western Electric rule 2 / Nelson test 5: two of three consecutive
            // points beyond 2σ on the same side.
            assert_eq!(hits(&[2.1, 0.5, 2.2], rule), vec![(2, vec![0, 2])]);
            assert_eq!(hits(&[0.0, -2.5, -2.1, 0.0], rule), vec![(2, vec![1, 2])]);
            assert!(hits(&[2.1, 0.5, 0.3, 2.2], rule).is_empty(), "four apart");
            assert!(hits(&[2.1, -2.2, 0.0], rule).is_empty(), "opposite sides");
            assert!(hits(&[2.0, 2.0, 2.0], rule).is_empty(), "on the line is not beyond");
        }
    }

    #[test]
    fn four_of_five_beyond_one_sigma() {
        for rule in [Rule::We3, Rule::Nelson6] {
            // From memory: Western Electric rule 3 / Nelson test 6: four of five consecutive
            // points beyond 1σ on the same side.
            assert_eq!(hits(&[1.1, 1.2, 0.0, 1.3, 1.4], rule), vec![(4, vec![0, 1, 3, 4])]);
            assert!(hits(&[1.1, 1.2, 0.0, 0.0, 1.3, 1.4], rule).is_empty());
            assert!(hits(&[1.1, 1.2, -1.3, 1.4, 0.0], rule).is_empty());
        }
    }

    #[test]
    fn runs_on_one_side() {
        let above8 = [0.1; 8];
        // From memory: Western Electric rule 4: eight successive points on one side.
        assert_eq!(hits(&above8, Rule::We4), vec![(7, (0..8).collect())]);
        // From memory: Nelson (1984) test 2: nine points in a row on one side.
        assert!(hits(&above8, Rule::Nelson2).is_empty());
        let mut nine = vec![-0.4; 9];
        assert_eq!(hits(&nine, Rule::Nelson2), vec![(8, (0..9).collect())]);
        assert_eq!(run_rules(&nine, &[Rule::Nelson2]).unwrap()[0].side, Some(Side::Below));
        // A point on the centre line breaks the run.
        nine[4] = 0.0;
        assert!(hits(&nine, Rule::Nelson2).is_empty());
        assert!(hits(&nine, Rule::We4).is_empty());
        // A long run gives one signal listing the whole run.
        assert_eq!(hits(&[0.2; 12], Rule::We4), vec![(7, (0..12).collect())]);
    }

    #[test]
    fn six_in_a_row_rising_or_falling() {
        // From memory: Nelson (1984) test 3: six points in a row steadily increasing or decreasing.
        assert_eq!(hits(&[0.0, 0.1, 0.3, 0.4, 0.9, 1.0], Rule::Nelson3), vec![(5, (0..6).collect())]);
        let down = run_rules(&[2.0, 1.0, 0.5, 0.0, -1.0, -1.1, 0.0], &[Rule::Nelson3]).unwrap();
        assert_eq!((down[0].index, down[0].side), (5, Some(Side::Below)));
        assert!(hits(&[0.0, 0.1, 0.3, 0.4, 0.9], Rule::Nelson3).is_empty(), "five points");
        assert!(hits(&[0.0, 0.1, 0.3, 0.3, 0.9, 1.0, 1.1], Rule::Nelson3).is_empty(), "a tie breaks it");
    }

    #[test]
    fn fourteen_alternating() {
        let zigzag: Vec<f64> = (0..14).map(|i| if i % 2 == 0 { -0.5 } else { 0.5 }).collect();
        // From memory: Nelson (1984) test 4: fourteen points in a row alternating up and down.
        assert_eq!(hits(&zigzag, Rule::Nelson4), vec![(13, (0..14).collect())]);
        assert!(hits(&zigzag[..13], Rule::Nelson4).is_empty());
        let mut broken = zigzag.clone();
        broken[7] = -0.7; // down, then down again: the alternation breaks
        assert!(hits(&broken, Rule::Nelson4).is_empty());
    }

    #[test]
    fn fifteen_hugging_the_centre() {
        let calm: Vec<f64> = (0..15).map(|i| 0.3 * ((i % 3) as f64 - 1.0)).collect();
        // From memory: Nelson (1984) test 7: fifteen points in a row within 1σ of the centre.
        assert_eq!(hits(&calm, Rule::Nelson7), vec![(14, (0..15).collect())]);
        assert!(hits(&calm[..14], Rule::Nelson7).is_empty());
        let mut edge = calm.clone();
        edge[7] = 1.0; // on the 1σ line is not within
        assert!(hits(&edge, Rule::Nelson7).is_empty());
    }

    #[test]
    fn eight_avoiding_the_centre_zone() {
        let jumpy: Vec<f64> = (0..8).map(|i| if i % 3 == 0 { -1.5 } else { 1.4 }).collect();
        // From memory: Nelson (1984) test 8: eight points in a row beyond 1σ, on both sides.
        assert_eq!(hits(&jumpy, Rule::Nelson8), vec![(7, (0..8).collect())]);
        assert!(hits(&jumpy[..7], Rule::Nelson8).is_empty());
        assert!(hits(&[1.5; 8], Rule::Nelson8).is_empty(), "one side only");
        let mut dip = jumpy.clone();
        dip[4] = 0.5;
        assert!(hits(&dip, Rule::Nelson8).is_empty());
    }

    #[test]
    fn rule_sets_and_inputs() {
        assert_eq!(WESTERN_ELECTRIC.len(), 4);
        assert_eq!(
            NELSON.iter().map(|r| r.code()).collect::<Vec<_>>(),
            ["N1", "N2", "N3", "N4", "N5", "N6", "N7", "N8"]
        );
        assert!(NELSON.iter().chain(&WESTERN_ELECTRIC).all(|r| !r.description().is_empty()));
        for r in NELSON.iter().chain(&WESTERN_ELECTRIC) {
            assert_eq!(serde_json::to_string(r).unwrap(), format!("\"{}\"", r.code()));
        }
        assert!(matches!(
            run_rules(&[0.0, f64::NAN], &NELSON),
            Err(ControlError::NotFinite { index: Some(1), .. })
        ));
        assert_eq!(standardize(&[12.0, 8.0], 10.0, 2.0).unwrap(), vec![1.0, -1.0]);
        assert!(standardize(&[1.0], 0.0, 0.0).is_err());
        assert!(run_rules(&[], &NELSON).unwrap().is_empty());
    }

    proptest! {
        // Common practice, no published source: the rules see only standardized values, so
        // shifting and scaling the raw values with their centre and σ changes nothing.
        #[test]
        fn signals_do_not_depend_on_units(z in prop::collection::vec(-4.0f64..4.0, 0..60),
                                          a in 0.01f64..100.0, c in -100.0f64..100.0) {
            let raw: Vec<f64> = z.iter().map(|v| a * v + c).collect();
            let back = standardize(&raw, c, a).unwrap();
            let all: Vec<Rule> = WESTERN_ELECTRIC.iter().chain(&NELSON).copied().collect();
            // Values within rounding of a zone line may land either side; keep away from them.
            prop_assume!(z.iter().all(|v| [0.0f64, 1.0, 2.0, 3.0].iter().all(|k| (v.abs() - k).abs() > 1e-6)));
            prop_assume!(z.windows(2).all(|w| (w[1] - w[0]).abs() > 1e-6));
            prop_assert_eq!(run_rules(&z, &all).unwrap(), run_rules(&back, &all).unwrap());
        }

        // Common practice, no published source: every listed point of a signal lies in the
        // series, the completing point is among them, and the list is ascending.
        #[test]
        fn signals_are_well_formed(z in prop::collection::vec(-4.0f64..4.0, 0..80)) {
            let all: Vec<Rule> = WESTERN_ELECTRIC.iter().chain(&NELSON).copied().collect();
            for s in run_rules(&z, &all).unwrap() {
                prop_assert!(s.points.contains(&s.index));
                prop_assert!(s.points.windows(2).all(|w| w[0] < w[1]));
                prop_assert!(*s.points.last().unwrap() < z.len());
            }
        }
    }
}
