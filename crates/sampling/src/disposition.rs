//! Deciding a lot from its tests' verdicts under the part's sampling agreement.
//!
//! Rule, per class with a plan (n, Ac, Re), taking the valid tests (verdict not
//! `invalid`) in the order given and counting at most the first n of them:
//! 1. d defectives (a test is defective for class C when one of its findings of
//!    class C failed); d ≥ Re rejects, whatever the other tests show.
//! 2. Otherwise fewer than n valid tests holds the lot ("too few valid tests").
//! 3. Otherwise, when invalid tests are present and d + (number of invalid tests)
//!    would reach Re, the lot is held: those parts might be the defectives.
//! 4. Otherwise d ≤ Ac accepts; under reduced inspection Ac < d < Re accepts and
//!    reinstates normal inspection.
//!
//! A variables plan (k-method) holds when fewer measured values than its n are given,
//! and otherwise accepts or rejects on the statistic. The lot's outcome is reject if
//! any class rejects, else hold if any holds, else accept.

use crate::design::{design_variables, variables_verdict, LimitKind, VariablesVerdict};
use crate::scheme::{AttributePlan, InspectionLevel, Scheme, Severity};
use crate::SamplingError;
use serde::{Deserialize, Serialize};
use std::collections::BTreeMap;
use twistlot_model::spec::{ClassPlan, SamplingSpec};
use twistlot_model::{CharacteristicClass, Finding, Limits, Verdict};

/// One tested part of the lot.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct TestEvidence {
    /// Test identifier (file or serial), for grounds.
    pub test_id: String,
    /// Overall verdict of the test.
    pub verdict: Verdict,
    /// The characteristic findings of the test.
    #[serde(default)]
    pub findings: Vec<Finding>,
}

impl TestEvidence {
    /// True when a finding of `class` failed.
    pub fn defective_for(&self, class: CharacteristicClass) -> bool {
        self.findings.iter().any(|f| f.class == class && f.verdict == Verdict::Fail)
    }
}

/// Measured values for the variables plan.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct VariablesEvidence {
    /// The characteristic's limits.
    pub limits: Limits,
    /// Measured values from valid tests, in test order.
    pub values: Vec<f64>,
}

/// Everything needed to decide one lot.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct LotEvidence {
    /// Units in the lot.
    pub lot_size: u64,
    /// The part's sampling agreement.
    pub sampling: SamplingSpec,
    /// Current switching severity of the part.
    pub severity: Severity,
    /// The tests, in the order the parts were drawn.
    pub tests: Vec<TestEvidence>,
    /// Measured values for `sampling.variables`, when there is such a plan.
    #[serde(default)]
    pub variables: Option<VariablesEvidence>,
}

/// Lot decision.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Serialize, Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum Outcome {
    /// Accept the lot.
    Accept,
    /// Hold the lot for more tests or a person's decision.
    Hold,
    /// Reject the lot.
    Reject,
}

impl Outcome {
    /// The lower-case label.
    pub fn as_str(self) -> &'static str {
        match self {
            Outcome::Accept => "accept",
            Outcome::Hold => "hold",
            Outcome::Reject => "reject",
        }
    }
}

/// The result for one characteristic class.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct ClassResult {
    /// The class.
    pub class: CharacteristicClass,
    /// Valid tests counted (at most the sample size).
    pub tested: u64,
    /// Defectives among them.
    pub defectives: u64,
    /// Invalid tests in the lot.
    pub invalid: u64,
    /// This class's outcome.
    pub outcome: Outcome,
}

/// The result of the variables plan.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct VariablesResult {
    /// Characteristic judged.
    pub characteristic: String,
    /// Designed sample size.
    pub sample_size: u64,
    /// Acceptability constant (absent when the plan could not be designed for lack of limits).
    pub k: Option<f64>,
    /// The statistics, when enough values were given.
    pub verdict: Option<VariablesVerdict>,
    /// Outcome of the plan.
    pub outcome: Outcome,
}

/// The decision on a lot with its grounds.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Disposition {
    /// Overall outcome.
    pub outcome: Outcome,
    /// Why, in plain words, one line per class or rule.
    pub grounds: Vec<String>,
    /// The plan used per class.
    pub plans: BTreeMap<CharacteristicClass, AttributePlan>,
    /// Counts and outcome per class.
    pub classes: Vec<ClassResult>,
    /// The variables plan's result, if the part has one.
    pub variables: Option<VariablesResult>,
    /// True when a reduced-inspection lot was accepted between Ac and Re (switch back to normal).
    pub reinstate_normal: bool,
    /// Valid tests in the lot.
    pub valid_tests: u64,
    /// Invalid tests in the lot.
    pub invalid_tests: u64,
}

/// The c = 0 plan: the normal table's sample size for the letter at every severity (the tightened
/// table has the same sizes, and a critical characteristic is never sampled less under reduced
/// inspection, so under reduced it is labelled normal).
fn zero_acceptance_plan(
    scheme: &Scheme,
    lot_size: u64,
    level: InspectionLevel,
    severity: Severity,
) -> Result<AttributePlan, SamplingError> {
    let letter = scheme.code_letter(lot_size, level)?;
    let table_n = scheme
        .normal
        .rows
        .iter()
        .find(|(l, _)| *l == letter)
        .map(|(_, n)| *n)
        .ok_or_else(|| SamplingError::UnknownLetter(letter.clone()))?;
    Ok(AttributePlan {
        code_letter: letter,
        sample_size: table_n.min(lot_size),
        accept: 0,
        reject: 1,
        severity: if severity == Severity::Reduced { Severity::Normal } else { severity },
        hundred_percent: table_n >= lot_size,
    })
}

/// Decides a lot under `scheme` (see the module doc for the exact rule).
pub fn dispose(evidence: &LotEvidence, scheme: &Scheme) -> Result<Disposition, SamplingError> {
    let spec = &evidence.sampling;
    if spec.scheme != scheme.name {
        return Err(SamplingError::SchemeMismatch(spec.scheme.clone(), scheme.name.clone()));
    }
    let level: InspectionLevel = spec.level.parse()?;
    let valid: Vec<&TestEvidence> = evidence.tests.iter().filter(|t| t.verdict != Verdict::Invalid).collect();
    let invalid = (evidence.tests.len() - valid.len()) as u64;

    let mut grounds = Vec::new();
    let mut plans = BTreeMap::new();
    let mut classes = Vec::new();
    let mut reinstate_normal = false;

    for class in CharacteristicClass::ALL {
        let class_plan = match class {
            CharacteristicClass::Critical => &spec.critical,
            CharacteristicClass::Major => &spec.major,
            CharacteristicClass::Minor => &spec.minor,
        };
        let plan = match class_plan {
            ClassPlan::None => continue,
            ClassPlan::Attribute { aql_pct } => {
                scheme.plan(evidence.lot_size, level, *aql_pct, evidence.severity)?
            }
            ClassPlan::ZeroAcceptance => {
                zero_acceptance_plan(scheme, evidence.lot_size, level, evidence.severity)?
            }
        };
        let n = plan.sample_size;
        let counted: Vec<&&TestEvidence> = valid.iter().take(n as usize).collect();
        let tested = counted.len() as u64;
        let defectives = counted.iter().filter(|t| t.defective_for(class)).count() as u64;
        let extra_defectives = valid.iter().skip(n as usize).filter(|t| t.defective_for(class)).count();
        let head = format!(
            "{class}: {defectives} defective{} in {tested} tested, Ac {} Re {} (letter {}, n {}, {}{})",
            if defectives == 1 { "" } else { "s" },
            plan.accept,
            plan.reject,
            plan.code_letter,
            n,
            plan.severity,
            if plan.hundred_percent { ", 100% inspection" } else { "" },
        );
        let outcome = if defectives >= plan.reject {
            grounds.push(format!("{head}: reject"));
            Outcome::Reject
        } else if tested < n {
            grounds.push(format!("{head}: hold, too few valid tests: {tested} of {n} required"));
            Outcome::Hold
        } else if invalid > 0 && defectives + invalid >= plan.reject {
            grounds.push(format!(
                "{head}: hold, {invalid} invalid test{} could change the decision (retest or replace them)",
                if invalid == 1 { "" } else { "s" }
            ));
            Outcome::Hold
        } else if defectives > plan.accept {
            reinstate_normal = true;
            grounds.push(format!(
                "{head}: accept, but above Ac under reduced inspection: normal inspection is reinstated"
            ));
            Outcome::Accept
        } else {
            grounds.push(format!("{head}: accept"));
            Outcome::Accept
        };
        if extra_defectives > 0 {
            grounds.push(format!(
                "{class}: {extra_defectives} more defective{} among tests beyond the sample size (not counted by the plan)",
                if extra_defectives == 1 { "" } else { "s" }
            ));
        }
        classes.push(ClassResult { class, tested, defectives, invalid, outcome });
        plans.insert(class, plan);
    }

    let variables = match &spec.variables {
        None => None,
        Some(vp) => {
            let evidence_values = evidence.variables.as_ref();
            let limits = evidence_values.map(|e| e.limits).unwrap_or_default();
            let kind = LimitKind::of(&limits);
            match (evidence_values, kind) {
                (Some(values), Some(kind)) => {
                    let design = design_variables(
                        vp.aql_pct,
                        vp.alpha,
                        vp.ltpd_pct,
                        vp.beta,
                        vp.sigma.is_some(),
                        kind,
                    )?;
                    let n = design.sample_size.min(evidence.lot_size.max(1));
                    let given = values.values.len() as u64;
                    if given < n || (vp.sigma.is_none() && given < 2) {
                        grounds.push(format!(
                            "variables on {}: hold, too few measured values: {given} of {n} required",
                            vp.characteristic
                        ));
                        Some(VariablesResult {
                            characteristic: vp.characteristic.clone(),
                            sample_size: n,
                            k: Some(design.k),
                            verdict: None,
                            outcome: Outcome::Hold,
                        })
                    } else {
                        let used = &values.values[..n as usize];
                        let verdict = variables_verdict(used, &limits, design.k, vp.sigma)?;
                        let outcome = if verdict.accept { Outcome::Accept } else { Outcome::Reject };
                        let mut stats = Vec::new();
                        let spread = if vp.sigma.is_some() { "σ" } else { "s" };
                        if let Some(q) = verdict.q_upper {
                            stats.push(format!("(U − mean)/{spread} {q:.3}"));
                        }
                        if let Some(q) = verdict.q_lower {
                            stats.push(format!("(mean − L)/{spread} {q:.3}"));
                        }
                        grounds.push(format!(
                            "variables on {}: n {}, mean {:.4}, {} {:.4}, {}, k {:.3}: {}",
                            vp.characteristic,
                            n,
                            verdict.mean,
                            if vp.sigma.is_some() { "known σ" } else { "s" },
                            verdict.sigma,
                            stats.join(", "),
                            design.k,
                            outcome.as_str()
                        ));
                        Some(VariablesResult {
                            characteristic: vp.characteristic.clone(),
                            sample_size: n,
                            k: Some(design.k),
                            verdict: Some(verdict),
                            outcome,
                        })
                    }
                }
                _ => {
                    grounds.push(format!(
                        "variables on {}: hold, no measured values or limits were given",
                        vp.characteristic
                    ));
                    Some(VariablesResult {
                        characteristic: vp.characteristic.clone(),
                        sample_size: 0,
                        k: None,
                        verdict: None,
                        outcome: Outcome::Hold,
                    })
                }
            }
        }
    };

    let outcomes = classes.iter().map(|c| c.outcome).chain(variables.iter().map(|v| v.outcome));
    // Reject outranks hold: a rejection number already reached cannot be undone by more tests.
    let outcome = outcomes.max().unwrap_or(Outcome::Accept);
    if classes.is_empty() && variables.is_none() {
        grounds.push("no class of this part is sampled: accept".to_string());
    }
    Ok(Disposition {
        outcome,
        grounds,
        plans,
        classes,
        variables,
        reinstate_normal: reinstate_normal && outcome == Outcome::Accept,
        valid_tests: valid.len() as u64,
        invalid_tests: invalid,
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use twistlot_model::spec::VariablesPlanSpec;

    fn spec(critical: ClassPlan, major: ClassPlan, minor: ClassPlan) -> SamplingSpec {
        SamplingSpec {
            scheme: "mil-std-105e".into(),
            level: "II".into(),
            critical,
            major,
            minor,
            variables: None,
        }
    }

    fn finding(class: CharacteristicClass, verdict: Verdict) -> Finding {
        Finding {
            characteristic: "rate".into(),
            class,
            value: Some(4.0),
            lower: Some(3.68),
            upper: Some(4.32),
            verdict,
            message: String::new(),
        }
    }

    fn test(id: usize, verdict: Verdict, failing: &[CharacteristicClass]) -> TestEvidence {
        let mut findings: Vec<Finding> = failing.iter().map(|c| finding(*c, Verdict::Fail)).collect();
        findings.push(finding(CharacteristicClass::Minor, Verdict::Pass));
        TestEvidence { test_id: format!("t{id}"), verdict, findings }
    }

    /// Lot 1000 at level II is letter J; major at AQL 1.0 normal is n 80, Ac 2, Re 3.
    fn lot(tests: Vec<TestEvidence>) -> LotEvidence {
        LotEvidence {
            lot_size: 1000,
            sampling: spec(ClassPlan::None, ClassPlan::Attribute { aql_pct: 1.0 }, ClassPlan::None),
            severity: Severity::Normal,
            tests,
            variables: None,
        }
    }

    fn tests_with(n: usize, major_fails: usize) -> Vec<TestEvidence> {
        (0..n)
            .map(|i| {
                if i < major_fails {
                    test(i, Verdict::Fail, &[CharacteristicClass::Major])
                } else {
                    test(i, Verdict::Pass, &[])
                }
            })
            .collect()
    }

    fn scheme() -> Scheme {
        Scheme::shipped().unwrap()
    }

    #[test]
    fn accepts_within_ac() {
        // From memory: MIL-STD-105E Table II-A, letter J (n=80), AQL 1.0: Ac 2 Re 3
        let d = dispose(&lot(tests_with(80, 2)), &scheme()).unwrap();
        assert_eq!(d.outcome, Outcome::Accept);
        assert_eq!(
            d.grounds[0],
            "major: 2 defectives in 80 tested, Ac 2 Re 3 (letter J, n 80, normal): accept"
        );
        let json = serde_json::to_value(&d).unwrap();
        assert_eq!(json["outcome"], "accept");
        assert_eq!(json["plans"]["major"]["sample_size"], 80);
    }

    #[test]
    fn rejects_at_re() {
        let d = dispose(&lot(tests_with(80, 3)), &scheme()).unwrap();
        assert_eq!(d.outcome, Outcome::Reject);
        assert!(d.grounds[0].ends_with(": reject"), "{:?}", d.grounds);
        // Reaching Re with the sample incomplete still rejects.
        let d = dispose(&lot(tests_with(20, 3)), &scheme()).unwrap();
        assert_eq!(d.outcome, Outcome::Reject);
    }

    #[test]
    fn holds_with_too_few_valid_tests() {
        let d = dispose(&lot(tests_with(18, 0)), &scheme()).unwrap();
        assert_eq!(d.outcome, Outcome::Hold);
        assert!(d.grounds[0].contains("too few valid tests: 18 of 80 required"), "{:?}", d.grounds);
    }

    #[test]
    fn invalid_tests_hold_only_when_they_could_change_the_decision() {
        let mut tests = tests_with(80, 1);
        tests.push(test(99, Verdict::Invalid, &[]));
        let d = dispose(&lot(tests.clone()), &scheme()).unwrap();
        // 1 defective + 1 invalid = 2 ≤ Ac: the decision stands.
        assert_eq!(d.outcome, Outcome::Accept);
        assert_eq!(d.invalid_tests, 1);
        tests.push(test(100, Verdict::Invalid, &[]));
        let d = dispose(&lot(tests), &scheme()).unwrap();
        assert_eq!(d.outcome, Outcome::Hold);
        assert!(d.grounds[0].contains("2 invalid tests could change the decision"), "{:?}", d.grounds);
        // Invalid tests do not count toward the sample.
        let mut tests = tests_with(79, 0);
        tests.push(test(80, Verdict::Invalid, &[]));
        assert_eq!(dispose(&lot(tests), &scheme()).unwrap().outcome, Outcome::Hold);
    }

    #[test]
    fn zero_acceptance_for_critical() {
        let mut evidence = lot(tests_with(80, 0));
        evidence.sampling.critical = ClassPlan::ZeroAcceptance;
        let d = dispose(&evidence, &scheme()).unwrap();
        let plan = &d.plans[&CharacteristicClass::Critical];
        // From memory: MIL-STD-105E Table I lot 501–1200 level II: J, n = 80; Ac 0 Re 1 by the zero-acceptance rule.
        assert_eq!((plan.code_letter.as_str(), plan.sample_size, plan.accept, plan.reject), ("J", 80, 0, 1));
        assert_eq!(d.outcome, Outcome::Accept);
        evidence.tests[5] = test(5, Verdict::Fail, &[CharacteristicClass::Critical]);
        let d = dispose(&evidence, &scheme()).unwrap();
        assert_eq!(d.outcome, Outcome::Reject);
        assert!(d.grounds[0].starts_with("critical: 1 defective in 80 tested, Ac 0 Re 1"), "{:?}", d.grounds);
    }

    #[test]
    fn zero_acceptance_keeps_its_sample_size_at_every_severity() {
        let mut evidence = lot(tests_with(80, 0));
        evidence.sampling.critical = ClassPlan::ZeroAcceptance;
        for (severity, label) in
            [(Severity::Tightened, Severity::Tightened), (Severity::Reduced, Severity::Normal)]
        {
            evidence.severity = severity;
            let d = dispose(&evidence, &scheme()).unwrap();
            let plan = &d.plans[&CharacteristicClass::Critical];
            assert_eq!((plan.sample_size, plan.accept, plan.severity), (80, 0, label), "{severity}");
        }
    }

    #[test]
    fn reduced_between_ac_and_re_accepts_and_reinstates_normal() {
        let mut evidence = lot(tests_with(32, 2));
        evidence.severity = Severity::Reduced;
        // From memory: MIL-STD-105E Table II-C, letter J (n=32), AQL 1.0: Ac 1 Re 3
        let d = dispose(&evidence, &scheme()).unwrap();
        assert_eq!(d.outcome, Outcome::Accept);
        assert!(d.reinstate_normal);
        assert!(d.grounds[0].contains("normal inspection is reinstated"), "{:?}", d.grounds);
    }

    fn variables_lot(values: Vec<f64>) -> LotEvidence {
        let mut evidence = lot(tests_with(80, 0));
        evidence.sampling.major = ClassPlan::None;
        evidence.sampling.variables = Some(VariablesPlanSpec {
            characteristic: "rate".into(),
            aql_pct: 1.0,
            ltpd_pct: 6.0,
            alpha: 0.05,
            beta: 0.10,
            sigma: None,
        });
        evidence.variables =
            Some(VariablesEvidence { limits: Limits { lower: Some(3.68), upper: Some(4.32) }, values });
        evidence
    }

    fn spread(n: usize, mean: f64, half_width: f64) -> Vec<f64> {
        (0..n).map(|i| mean + half_width * (2.0 * i as f64 / (n - 1) as f64 - 1.0)).collect()
    }

    #[test]
    fn variables_plan_accepts_and_rejects() {
        // The plan is n 41, k ≈ 1.89 (see design tests); a tight spread accepts.
        let d = dispose(&variables_lot(spread(41, 4.0, 0.1)), &scheme()).unwrap();
        assert_eq!(d.outcome, Outcome::Accept, "{:?}", d.grounds);
        let v = d.variables.as_ref().unwrap();
        assert_eq!(v.sample_size, 41);
        // A mean close to the upper limit rejects although every value is inside it.
        let values = spread(41, 4.215, 0.1);
        assert!(values.iter().all(|v| *v < 4.32));
        let d = dispose(&variables_lot(values), &scheme()).unwrap();
        assert_eq!(d.outcome, Outcome::Reject, "{:?}", d.grounds);
        let d = dispose(&variables_lot(spread(20, 4.0, 0.1)), &scheme()).unwrap();
        assert_eq!(d.outcome, Outcome::Hold);
        assert!(d.grounds.iter().any(|g| g.contains("too few measured values: 20 of 41")), "{:?}", d.grounds);
    }

    #[test]
    fn wrong_scheme_or_level_is_an_error() {
        let mut evidence = lot(tests_with(80, 0));
        evidence.sampling.scheme = "other".into();
        assert!(matches!(dispose(&evidence, &scheme()), Err(SamplingError::SchemeMismatch(..))));
        let mut evidence = lot(tests_with(80, 0));
        evidence.sampling.level = "IV".into();
        assert!(matches!(dispose(&evidence, &scheme()), Err(SamplingError::UnknownLevel(..))));
    }
}
