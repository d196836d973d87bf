//! Deciding a lot: its tests against the part's sampling agreement, in one call.
//!
//! [`decide_lot`] takes everything known about a lot (the part's spec, the severity its
//! switching history earned, the tests) and returns a [`LotDecision`]: the disposition,
//! structured grounds with the one that decided, every class's plan and count, the plan
//! shown for the lot and the count its switching history is fed. No caller parses text.
//!
//! The rule, per class with a plan (n, Ac, Re), over the valid tests (verdict not
//! `invalid`) taken in [`test_order`] (start time, serial, file):
//! 1. d defectives (a test is defective for class C when one of its findings of class C
//!    failed) among the counted tests; d ≥ Re rejects, whatever the other tests show.
//!    Which tests count is the plant's [`BeyondSample`] policy: the first n, or all.
//! 2. Otherwise fewer than n valid tests holds the lot ("too few valid tests").
//! 3. Otherwise, when invalid tests are present and d + (invalid tests) would reach Re,
//!    the lot is held: those parts might be the defectives.
//! 4. Otherwise d ≤ Ac accepts; under reduced inspection Ac < d < Re accepts and
//!    reinstates normal inspection.
//! 5. A critical defective among tests beyond the sample never lets the lot be
//!    accepted: MIL-STD-105E §6.3–6.4 keep the right to reject any lot in which a
//!    critical defective is found, so the class rejects and says why.
//!
//! A variables plan (k-method) holds when fewer measured values than its n are given,
//! and otherwise accepts or rejects on the statistic. Tests that name another part than
//! the lot's hold an otherwise accepted lot. The lot's disposition is the worst of its
//! parts' (reject over hold over accept).
//!
//! Tests from a rig whose reference-spring verification failed or is missing
//! ([`UnverifiedRig`]) do not stand at all: the lot is held whatever the plans show,
//! because a rig that reads wrong can fake a rejection as easily as an acceptance. The
//! plans' counts stay in the decision for the report; a held lot never counts toward the
//! part's switching state.

use crate::design::{design_variables, variables_verdict, LimitKind};
use crate::scheme::{InspectionLevel, Scheme, Severity};
use crate::SamplingError;
use serde::{Deserialize, Serialize};
use twistlot_model::record::{angle_key, test_order};
use twistlot_model::spec::{torque_label, ClassPlan, SamplingSpec};
use twistlot_model::{
    AttributePlan, CharacteristicClass, ClassDecision, Disposition, Ground, GroundTopic, Limits, LotDecision,
    PartSpec, SwitchingCount, TestRecord, VariablesDecision, Verdict,
};

/// What a plan does with valid tests beyond its sample size n (plant config
/// `beyond_sample`). Either way a critical defective found anywhere blocks acceptance.
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum BeyondSample {
    /// Count the first n valid tests in start-time order (then serial, then file); later
    /// ones are reported, not counted. This is the plan as the tables define it.
    #[default]
    FirstN,
    /// Count every valid test against the plan's Ac and Re; stricter than the plan when
    /// more than n parts were tested.
    CountAll,
}

/// What a variables (k-method) plan does when the lot's values fail the normality test
/// its acceptance constant rests on (plant config `variables_non_normal`).
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum NonNormalRule {
    /// Hold the lot for a person's decision.
    #[default]
    Hold,
    /// Leave the variables plan out and let the attribute plans decide (held when there are none).
    Attributes,
}

/// Below this Anderson–Darling p-value the k-method's normal model is taken as rejected.
pub const NORMALITY_REJECT_P: f64 = 0.05;

/// Where the lot's part stands under the switching rules when the lot comes up.
#[derive(Debug, Clone, PartialEq)]
pub struct LotStanding {
    /// Severity in force.
    pub severity: Severity,
    /// Acceptance discontinued until corrective action is recorded.
    pub discontinued: bool,
    /// How the part came to that severity, in words (the first ground of the decision).
    pub explanation: String,
}

/// A rig that tested some of the lot's parts without a passing reference-spring check.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct UnverifiedRig {
    /// The rig.
    pub rig: String,
    /// The lot's counted tests that ran on it.
    pub tests: u64,
    /// Why the rig is not verified (failed check, no check), in words.
    pub reason: String,
}

/// Everything needed to decide one lot.
#[derive(Debug, Clone)]
pub struct LotInput<'a> {
    /// Lot identifier.
    pub lot: &'a str,
    /// Units in the lot.
    pub lot_size: u64,
    /// The part's spec (its sampling agreement and limits).
    pub spec: &'a PartSpec,
    /// The part's switching standing; normal inspection when `None`.
    pub standing: Option<&'a LotStanding>,
    /// The lot's counted tests (duplicates and superseded retests already left out).
    pub tests: &'a [&'a TestRecord],
    /// What to do with tests beyond the sample size.
    pub beyond_sample: BeyondSample,
    /// Anderson–Darling p-value of the values the variables plan judges (from `stats`),
    /// when the part has a variables plan and the test could be run.
    pub variables_normality_p: Option<f64>,
    /// What the variables plan does on values that fail normality.
    pub non_normal: NonNormalRule,
    /// Rigs that tested some of the lot's parts but are not verified by their reference
    /// spring in this shift (empty when all are, or when the plant checks none).
    pub unverified_rigs: &'a [UnverifiedRig],
}

/// The c = 0 plan: the normal table's sample size for the letter at every severity (the
/// tightened table has the same sizes, and a critical characteristic is never sampled
/// less under reduced inspection, so under reduced it is labelled normal).
pub fn zero_acceptance_plan(
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
        lot_size_letter: Some(letter.clone()),
        code_letter: letter,
        sample_size: table_n.min(lot_size),
        accept: 0,
        reject: 1,
        severity: if severity == Severity::Reduced { Severity::Normal } else { severity },
        hundred_percent: table_n >= lot_size,
    })
}

/// The attribute plan of every sampled class at `severity`, most serious class first.
pub fn class_plans(
    sampling: &SamplingSpec,
    scheme: &Scheme,
    lot_size: u64,
    severity: Severity,
) -> Result<Vec<(CharacteristicClass, AttributePlan, Option<f64>)>, SamplingError> {
    if sampling.scheme != scheme.name {
        return Err(SamplingError::SchemeMismatch(sampling.scheme.clone(), scheme.name.clone()));
    }
    let level: InspectionLevel = sampling.level.parse()?;
    let mut plans = Vec::new();
    for class in CharacteristicClass::ALL {
        match class_plan(sampling, class) {
            ClassPlan::None => {}
            ClassPlan::Attribute { aql_pct } => {
                plans.push((class, scheme.plan(lot_size, level, *aql_pct, severity)?, Some(*aql_pct)))
            }
            ClassPlan::ZeroAcceptance => {
                plans.push((class, zero_acceptance_plan(scheme, lot_size, level, severity)?, None))
            }
        }
    }
    Ok(plans)
}

/// How many parts of a lot the part's sampling agreement asks to test at a severity.
#[derive(Debug, Clone, PartialEq)]
pub struct RequiredSample {
    /// The largest n among the plans: testing this many serves every plan.
    pub sample_size: u64,
    /// Each plan's n, in words (`major AQL 1 % (letter G, reduced): 13`), most serious first.
    pub plans: Vec<(String, u64)>,
    /// The plan that asks for the most (the first of equals).
    pub set_by: String,
}

/// The parts to test from a lot of `lot_size` at `severity`: the largest n over the
/// attribute plan of every class the spec samples ([`class_plans`]) and its variables plan
/// (designed as [`decide_lot`] designs it, at most the lot size). Refused, with the reason,
/// when the spec names no sampling agreement or a plan cannot be looked up or designed.
pub fn required_sample(
    spec: &PartSpec,
    scheme: &Scheme,
    lot_size: u64,
    severity: Severity,
) -> Result<RequiredSample, SamplingError> {
    let sampling = spec.sampling.as_ref().ok_or_else(|| {
        SamplingError::NoPlan(format!("the spec for `{}` names no sampling agreement", spec.part))
    })?;
    let mut plans = Vec::new();
    for (class, plan, aql_pct) in class_plans(sampling, scheme, lot_size, severity)? {
        let rule = match aql_pct {
            Some(aql) => format!("AQL {aql} %"),
            None => "zero acceptance".to_string(),
        };
        plans.push((
            format!("{class} {rule} (letter {}, {})", plan.code_letter, plan.severity),
            plan.sample_size,
        ));
    }
    if let Some(vp) = &sampling.variables {
        let kind = characteristic_limits(spec, &vp.characteristic)
            .as_ref()
            .and_then(LimitKind::of)
            .ok_or_else(|| {
                SamplingError::NoPlan(format!(
                    "the variables plan on `{}` has no limits in the spec to design against",
                    vp.characteristic
                ))
            })?;
        let design = design_variables(vp.aql_pct, vp.alpha, vp.ltpd_pct, vp.beta, vp.sigma.is_some(), kind)?;
        plans.push((
            format!("variables on {} (AQL {} %, LTPD {} %)", vp.characteristic, vp.aql_pct, vp.ltpd_pct),
            design.sample_size.min(lot_size.max(1)),
        ));
    }
    let Some((set_by, sample_size)) =
        plans.iter().fold(None, |best: Option<(&String, u64)>, (label, n)| match best {
            Some((_, m)) if m >= *n => best,
            _ => Some((label, *n)),
        })
    else {
        return Err(SamplingError::NoPlan(format!("the spec for `{}` samples no class", spec.part)));
    };
    let set_by = set_by.clone();
    Ok(RequiredSample { sample_size, plans, set_by })
}

fn class_plan(sampling: &SamplingSpec, class: CharacteristicClass) -> &ClassPlan {
    match class {
        CharacteristicClass::Critical => &sampling.critical,
        CharacteristicClass::Major => &sampling.major,
        CharacteristicClass::Minor => &sampling.minor,
    }
}

fn defective_for(test: &TestRecord, class: CharacteristicClass) -> bool {
    test.findings.iter().any(|f| f.class == class && f.verdict == Verdict::Fail)
}

fn plural(count: u64, word: &str) -> String {
    if count == 1 {
        format!("{count} {word}")
    } else {
        format!("{count} {word}s")
    }
}

/// The limits a spec gives a characteristic named in a variables plan.
pub fn characteristic_limits(spec: &PartSpec, characteristic: &str) -> Option<Limits> {
    let c = &spec.characteristics;
    match characteristic {
        "rate" | "rate_nmm_per_deg" => c.rate_nmm_per_deg.as_ref().map(|r| r.limits()),
        "free_angle" | "free_angle_deg" => c.free_angle_deg.as_ref().map(|f| f.limits()),
        "dynamic_rate" => c.dynamic.as_ref()?.rate_nmm_per_deg.as_ref().map(|r| r.limits()),
        "frequency" => c.dynamic.as_ref()?.frequency_hz.as_ref().map(|f| f.limits()),
        other => c.torque_at.iter().find(|t| torque_label(t.angle_deg) == other).map(|t| t.limits()),
    }
}

/// A test's measured value of a characteristic named in a variables plan.
pub fn characteristic_value(test: &TestRecord, characteristic: &str) -> Option<f64> {
    let m = &test.metrics;
    match characteristic {
        "rate" | "rate_nmm_per_deg" => m.rate_nmm_per_deg,
        "free_angle" | "free_angle_deg" => m.free_angle_deg,
        "dynamic_rate" => test.swing.as_ref()?.rate_nmm_per_deg,
        "frequency" => test.swing.as_ref().map(|s| s.natural_frequency_hz),
        other => other
            .strip_prefix("torque@")
            .and_then(|angle| angle.parse::<f64>().ok())
            .and_then(|angle| m.torque_nmm_at.get(&angle_key(angle)).copied()),
    }
}

/// Decides a lot under the scheme its spec names, looked up with `scheme` (see the module
/// doc for the rule). A spec without a sampling agreement, or naming a scheme that is not
/// there, holds the lot with that reason; so does a test from an unverified rig.
pub fn decide_lot<'s>(input: &LotInput<'_>, scheme: impl FnOnce(&str) -> Option<&'s Scheme>) -> LotDecision {
    let mut decision = decide_on_plans(input, scheme);
    if !input.unverified_rigs.is_empty() {
        hold_for_unverified_rigs(&mut decision, input.unverified_rigs);
    }
    decision
}

/// Holds a decided lot because some of its tests ran on rigs that are not verified: the
/// first such ground decides, whatever the plans concluded.
fn hold_for_unverified_rigs(decision: &mut LotDecision, rigs: &[UnverifiedRig]) {
    let first = decision.grounds.len();
    for rig in rigs {
        decision.grounds.push(Ground::leading(
            GroundTopic::Evidence,
            Disposition::Hold,
            format!(
                "rig {}: {}; {} of this lot do not stand: hold until the parts are retested on a rig that \
                 is calibrated and has passed its reference-spring check",
                rig.rig,
                rig.reason,
                plural(rig.tests, "test")
            ),
        ));
    }
    if decision.disposition != Disposition::Hold {
        let was = decision.disposition;
        decision.grounds.push(Ground::note(
            GroundTopic::Evidence,
            format!(
                "the sampling plans alone would {}; that result is set aside with the rig's readings",
                verb(was)
            ),
        ));
    }
    decision.disposition = Disposition::Hold;
    decision.deciding = Some(first);
    // The count stays for the record; a held lot is never replayed into the switching state.
    if let Some(count) = decision.switching.as_mut() {
        count.between_ac_and_re = false;
    }
}

fn verb(disposition: Disposition) -> &'static str {
    match disposition {
        Disposition::Accept => "accept",
        Disposition::Reject => "reject",
        Disposition::Hold => "hold",
    }
}

fn decide_on_plans<'s>(input: &LotInput<'_>, scheme: impl FnOnce(&str) -> Option<&'s Scheme>) -> LotDecision {
    let spec = input.spec;
    let severity = input.standing.map_or(Severity::Normal, |s| s.severity);
    let Some(sampling) = &spec.sampling else {
        return LotDecision::hold(
            GroundTopic::Evidence,
            format!("the spec for `{}` names no sampling agreement", spec.part),
            None,
        );
    };
    let Some(scheme) = scheme(&sampling.scheme) else {
        return LotDecision::hold(
            GroundTopic::Evidence,
            format!("there is no sampling-scheme plugin named `{}`", sampling.scheme),
            None,
        );
    };
    let mut grounds = Vec::new();
    if let Some(standing) = input.standing {
        grounds.push(Ground::note(GroundTopic::Switching, standing.explanation.clone()));
        if standing.discontinued {
            grounds.push(Ground::leading(
                GroundTopic::Switching,
                Disposition::Hold,
                format!(
                    "acceptance under `{}` is discontinued for part {}: no lot is accepted until the \
                     supplier's corrective action is recorded with `twistlot switching resume {}`",
                    scheme.name, spec.part, spec.part
                ),
            ));
            return finish(grounds, Vec::new(), None, Some(severity), None);
        }
    }
    if input.tests.is_empty() {
        grounds.push(Ground::leading(
            GroundTopic::Evidence,
            Disposition::Hold,
            format!("no accepted export carries lot `{}`", input.lot),
        ));
        return finish(grounds, Vec::new(), None, Some(severity), None);
    }
    let wrong_part: Vec<&str> = input
        .tests
        .iter()
        .filter(|t| t.part.as_deref() != Some(spec.part.as_str()))
        .map(|t| t.file.as_str())
        .collect();
    if !wrong_part.is_empty() {
        // Decides only when the plans would accept; see the end of this function.
        grounds.push(Ground::leading(
            GroundTopic::Evidence,
            Disposition::Hold,
            format!(
                "{} test(s) carry another part number than the lot's `{}`: {}",
                wrong_part.len(),
                spec.part,
                wrong_part.join(", ")
            ),
        ));
    }
    let plans = match class_plans(sampling, scheme, input.lot_size, severity) {
        Ok(plans) => plans,
        Err(err) => {
            grounds.push(Ground::leading(
                GroundTopic::Evidence,
                Disposition::Hold,
                format!("the lot could not be decided: {err}"),
            ));
            return finish(grounds, Vec::new(), None, Some(severity), None);
        }
    };

    let mut ordered: Vec<&TestRecord> = input.tests.to_vec();
    ordered.sort_by(|a, b| test_order(a, b));
    let valid: Vec<&TestRecord> =
        ordered.iter().copied().filter(|t| t.verdict_or_invalid() != Verdict::Invalid).collect();
    let invalid = (ordered.len() - valid.len()) as u64;

    let mut classes = Vec::new();
    for (class, plan, aql_pct) in plans {
        let n = plan.sample_size as usize;
        let counted_len = match input.beyond_sample {
            BeyondSample::FirstN => n.min(valid.len()),
            BeyondSample::CountAll => valid.len(),
        };
        let (counted, beyond) = valid.split_at(counted_len);
        let tested = counted.len() as u64;
        let defectives = counted.iter().filter(|t| defective_for(t, class)).count() as u64;
        let beyond_defectives = beyond.iter().filter(|t| defective_for(t, class)).count() as u64;
        let topic = GroundTopic::Class(class);
        let head = format!(
            "{class}: {} in {tested} tested, Ac {} Re {} (letter {}, n {}, {}{})",
            plural(defectives, "defective"),
            plan.accept,
            plan.reject,
            plan.code_letter,
            n,
            plan.severity,
            if plan.hundred_percent { ", 100% inspection" } else { "" },
        );
        let (outcome, text) = if defectives >= plan.reject {
            (Disposition::Reject, format!("{head}: reject"))
        } else if tested < plan.sample_size {
            (
                Disposition::Hold,
                format!("{head}: hold, too few valid tests: {tested} of {} required", plan.sample_size),
            )
        } else if invalid > 0 && defectives + invalid >= plan.reject {
            (
                Disposition::Hold,
                format!(
                    "{head}: hold, {} could change the decision (retest or replace them)",
                    plural(invalid, "invalid test")
                ),
            )
        } else if defectives > plan.accept {
            (
                Disposition::Accept,
                format!(
                    "{head}: accept, but above Ac under reduced inspection: normal inspection is reinstated"
                ),
            )
        } else {
            (Disposition::Accept, format!("{head}: accept"))
        };
        grounds.push(Ground::leading(topic, outcome, text));
        let mut outcome = outcome;
        if beyond_defectives > 0 {
            let count = plural(beyond_defectives, "more defective");
            if class == CharacteristicClass::Critical && outcome != Disposition::Reject {
                outcome = Disposition::Reject;
                grounds.push(Ground::leading(
                    topic,
                    Disposition::Reject,
                    format!(
                        "{class}: {count} among tests beyond the sample size: a lot in which a critical \
                         defective is found is not accepted (MIL-STD-105E §6.3–6.4): reject"
                    ),
                ));
            } else {
                grounds.push(Ground::note(
                    topic,
                    format!("{class}: {count} among tests beyond the sample size (not counted by the plan)"),
                ));
            }
        }
        classes.push(ClassDecision {
            class,
            plan,
            aql_pct,
            tested,
            defectives,
            defectives_beyond_sample: beyond_defectives,
            invalid,
            outcome,
        });
    }

    let variables = sampling.variables.as_ref().and_then(|vp| {
        let (outcome, text, decision) = decide_variables(vp, spec, &valid, input.lot_size);
        let rejected_p = input.variables_normality_p.filter(|p| *p < NORMALITY_REJECT_P);
        let Some(p) = rejected_p.filter(|_| outcome != Disposition::Hold) else {
            grounds.push(Ground::leading(GroundTopic::Variables, outcome, text));
            return Some(decision);
        };
        let caution = format!(
            "caution: the k-method assumes normally distributed values, but the {} values fail the \
             Anderson–Darling test (p {p:.3} < {NORMALITY_REJECT_P})",
            vp.characteristic
        );
        match input.non_normal {
            NonNormalRule::Hold => {
                grounds.push(Ground::note(GroundTopic::Variables, text));
                grounds.push(Ground::leading(
                    GroundTopic::Variables,
                    Disposition::Hold,
                    format!("variables on {}: hold, {caution}; the plant's rule holds such lots for a person's decision", vp.characteristic),
                ));
                Some(VariablesDecision { outcome: Disposition::Hold, ..decision })
            }
            NonNormalRule::Attributes => {
                grounds.push(Ground::note(
                    GroundTopic::Variables,
                    format!("variables on {}: not used, {caution}; the plant's rule lets the attribute plans decide", vp.characteristic),
                ));
                None
            }
        }
    });
    if sampling.variables.is_some() && variables.is_none() && classes.is_empty() {
        grounds.push(Ground::leading(
            GroundTopic::Evidence,
            Disposition::Hold,
            "no attribute plan is left to decide the lot once its variables plan is set aside",
        ));
    }
    if classes.is_empty() && variables.is_none() {
        grounds.push(Ground::leading(
            GroundTopic::Evidence,
            Disposition::Accept,
            "no class of this part is sampled: accept",
        ));
    }
    let switching = switching_count(&classes);
    finish(grounds, classes, variables, Some(severity), switching)
}

/// Puts the decision together: the worst outcome among class, variables and evidence
/// grounds decides, and the first ground with that outcome is the deciding one.
fn finish(
    mut grounds: Vec<Ground>,
    classes: Vec<ClassDecision>,
    variables: Option<VariablesDecision>,
    severity: Option<Severity>,
    switching: Option<SwitchingCount>,
) -> LotDecision {
    let plans_outcome = classes
        .iter()
        .map(|c| c.outcome)
        .chain(variables.iter().map(|v| v.outcome))
        .chain(grounds.iter().filter(|g| g.topic != GroundTopic::Evidence).filter_map(|g| g.outcome))
        .max();
    let evidence_hold =
        grounds.iter().any(|g| g.topic == GroundTopic::Evidence && g.outcome == Some(Disposition::Hold));
    // Evidence grounds (wrong part numbers, no tests) hold a lot the plans would accept;
    // a rejection the plans reached stands, because more tests cannot undo it.
    let disposition = match (plans_outcome, evidence_hold) {
        (Some(Disposition::Reject), _) => Disposition::Reject,
        (_, true) => Disposition::Hold,
        (Some(outcome), false) => outcome,
        (None, false) => grounds.iter().filter_map(|g| g.outcome).max().unwrap_or(Disposition::Hold),
    };
    let shown_class =
        classes.iter().max_by_key(|c| (c.plan.sample_size, std::cmp::Reverse(c.class))).map(|c| c.class);
    let mut deciding = deciding_index(&grounds, disposition, shown_class);
    if deciding.is_none() {
        // Unreachable with the grounds above, but a decision never goes out without its reason.
        grounds.push(Ground::leading(GroundTopic::Evidence, disposition, "no ground recorded a reason"));
        deciding = Some(grounds.len() - 1);
    }
    LotDecision {
        disposition,
        severity,
        deciding,
        classes,
        variables,
        shown_class,
        switching: switching.map(|mut count| {
            count.between_ac_and_re &= disposition == Disposition::Accept;
            count
        }),
        grounds,
    }
}

fn deciding_index(
    grounds: &[Ground],
    disposition: Disposition,
    shown: Option<CharacteristicClass>,
) -> Option<usize> {
    let leading = |i: &usize| grounds[*i].outcome == Some(disposition);
    let mut candidates = (0..grounds.len()).filter(leading);
    if disposition == Disposition::Accept {
        // Every plan accepted; the one shown for the lot stands for them.
        let shown_ground = (0..grounds.len())
            .filter(leading)
            .find(|i| Some(grounds[*i].topic) == shown.map(GroundTopic::Class));
        return shown_ground.or_else(|| candidates.next());
    }
    candidates.next()
}

/// The count the part's switching history is fed. The reduced-inspection limit number
/// is set by an AQL, so it is the count of the class with the strictest AQL plan; with
/// no AQL plan, that of the class with the largest sample.
fn switching_count(classes: &[ClassDecision]) -> Option<SwitchingCount> {
    let strictest = classes
        .iter()
        .filter_map(|c| c.aql_pct.map(|aql| (aql, c)))
        .min_by(|a, b| a.0.total_cmp(&b.0).then(b.1.plan.sample_size.cmp(&a.1.plan.sample_size)))
        .map(|(_, c)| c);
    let largest = classes.iter().max_by_key(|c| (c.plan.sample_size, std::cmp::Reverse(c.class)));
    let class = strictest.or(largest)?;
    let reinstate = classes.iter().any(|c| c.outcome == Disposition::Accept && c.defectives > c.plan.accept);
    Some(SwitchingCount {
        severity: class.plan.severity,
        sample_size: class.plan.sample_size,
        defectives: class.defectives,
        aql_pct: class.aql_pct.unwrap_or(0.0),
        between_ac_and_re: reinstate,
    })
}

fn decide_variables(
    vp: &twistlot_model::spec::VariablesPlanSpec,
    spec: &PartSpec,
    valid: &[&TestRecord],
    lot_size: u64,
) -> (Disposition, String, VariablesDecision) {
    let mut decision = VariablesDecision {
        characteristic: vp.characteristic.clone(),
        sample_size: 0,
        values: 0,
        k: None,
        mean: None,
        spread: None,
        sigma_known: vp.sigma.is_some(),
        q_upper: None,
        q_lower: None,
        outcome: Disposition::Hold,
    };
    let limits = characteristic_limits(spec, &vp.characteristic);
    let values: Vec<f64> = valid.iter().filter_map(|t| characteristic_value(t, &vp.characteristic)).collect();
    let kind = limits.as_ref().and_then(LimitKind::of);
    let (Some(limits), Some(kind), false) = (limits, kind, values.is_empty()) else {
        let text =
            format!("variables on {}: hold, no measured values or limits were given", vp.characteristic);
        return (Disposition::Hold, text, decision);
    };
    let design = match design_variables(vp.aql_pct, vp.alpha, vp.ltpd_pct, vp.beta, vp.sigma.is_some(), kind)
    {
        Ok(design) => design,
        Err(err) => {
            let text =
                format!("variables on {}: hold, the plan cannot be designed: {err}", vp.characteristic);
            return (Disposition::Hold, text, decision);
        }
    };
    let n = design.sample_size.min(lot_size.max(1));
    decision.sample_size = n;
    decision.k = Some(design.k);
    let given = values.len() as u64;
    decision.values = given;
    if given < n || (vp.sigma.is_none() && given < 2) {
        let text = format!(
            "variables on {}: hold, too few measured values: {given} of {n} required",
            vp.characteristic
        );
        return (Disposition::Hold, text, decision);
    }
    let used = &values[..n as usize];
    let verdict = match variables_verdict(used, &limits, design.k, vp.sigma) {
        Ok(verdict) => verdict,
        Err(err) => {
            let text = format!("variables on {}: hold, {err}", vp.characteristic);
            return (Disposition::Hold, text, decision);
        }
    };
    let outcome = if verdict.accept { Disposition::Accept } else { Disposition::Reject };
    let spread = if vp.sigma.is_some() { "σ" } else { "s" };
    let mut stats = Vec::new();
    if let Some(q) = verdict.q_upper {
        stats.push(format!("(U − mean)/{spread} {q:.3}"));
    }
    if let Some(q) = verdict.q_lower {
        stats.push(format!("(mean − L)/{spread} {q:.3}"));
    }
    let text = format!(
        "variables on {}: n {}, mean {:.4}, {} {:.4}, {}, k {:.3}: {}",
        vp.characteristic,
        n,
        verdict.mean,
        if vp.sigma.is_some() { "known σ" } else { "s" },
        verdict.sigma,
        stats.join(", "),
        design.k,
        outcome
    );
    decision.mean = Some(verdict.mean);
    decision.spread = Some(verdict.sigma);
    decision.q_upper = verdict.q_upper;
    decision.q_lower = verdict.q_lower;
    decision.outcome = outcome;
    (outcome, text, decision)
}

#[cfg(test)]
mod tests {
    use super::*;
    use twistlot_model::spec::VariablesPlanSpec;
    use twistlot_model::{CurveMetrics, Finding, TestStatus};

    /// Lot 1000 at level II is letter J; major at AQL 1.0 normal is n 80, Ac 2, Re 3.
    fn spec() -> PartSpec {
        let text = "part: P-1\nrevision: A\ncustomer: invented\nmaterial: { name: wire, modulus_n_per_mm2: 206000 }\n\
                    geometry: { wire_diameter_mm: 1.0, mean_diameter_mm: 8.0, body_coils: 5, leg_lengths_mm: [10, 10], wind: left }\n\
                    test: { max_angle_deg: 90 }\n\
                    characteristics:\n  rate_nmm_per_deg: { nominal: 4.0, tolerance: \"±8%\", class: major }\n\
                    sampling:\n  level: II\n  critical: { plan: none }\n  major: { plan: attribute, aql_pct: 1.0 }\n  minor: { plan: none }\n";
        PartSpec::from_yaml("test.yaml", text).unwrap()
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

    fn test(id: usize, verdict: Verdict, failing: &[CharacteristicClass]) -> TestRecord {
        let mut findings: Vec<Finding> = failing.iter().map(|c| finding(*c, Verdict::Fail)).collect();
        findings.push(finding(CharacteristicClass::Minor, Verdict::Pass));
        TestRecord {
            test_id: format!("t{id}"),
            file: format!("f{id:03}.csv"),
            content_hash: format!("{id:016x}"),
            serial: Some(format!("S{id:03}")),
            part: Some("P-1".into()),
            lot: Some("L1".into()),
            rig: None,
            operator: None,
            started: Some(format!("2026-12-01T10:{:02}:{:02}", id / 60, id % 60)),
            rig_format: "native".into(),
            spec_file: None,
            spec_revision: None,
            metrics: CurveMetrics { rate_nmm_per_deg: Some(4.0), ..CurveMetrics::default() },
            swing: None,
            theory: None,
            verdict: Some(verdict),
            findings,
            status: TestStatus::Counted,
        }
    }

    #[test]
    fn a_variables_plan_can_name_the_dynamic_rate_or_frequency_of_a_swing() {
        let text = "part: P-2\nrevision: A\ncustomer: invented\nmaterial: { name: wire, modulus_n_per_mm2: 206000 }\n\
                    geometry: { wire_diameter_mm: 0.5, mean_diameter_mm: 6.0, body_coils: 8, leg_lengths_mm: [10, 10], wind: left }\n\
                    test: { max_angle_deg: 20 }\n\
                    characteristics:\n  dynamic:\n    rate_nmm_per_deg: { nominal: 0.07, tolerance: \"±10%\", class: major }\n    frequency_hz: { nominal: 2.0, tolerance: 0.1, class: minor }\n";
        let spec = PartSpec::from_yaml("p2.yaml", text).unwrap();
        // Common practice, no published source: ±10 % of 0.07 and ±0.1 around 2.0.
        let rate = characteristic_limits(&spec, "dynamic_rate").unwrap();
        assert!((rate.lower.unwrap() - 0.063).abs() < 1e-12 && (rate.upper.unwrap() - 0.077).abs() < 1e-12);
        assert_eq!(
            characteristic_limits(&spec, "frequency"),
            Some(Limits { lower: Some(1.9), upper: Some(2.1) })
        );
        let mut swung = test(1, Verdict::Pass, &[]);
        assert_eq!(characteristic_value(&swung, "dynamic_rate"), None, "a torque curve has no dynamic rate");
        swung.swing = Some(twistlot_model::SwingMetrics {
            inertia_kgm2: Some(2.5e-5),
            inertia_from: Some("export".into()),
            period_s: 0.5,
            frequency_hz: 2.0,
            natural_frequency_hz: 2.001,
            log_decrement: 0.06,
            damping_ratio: 0.01,
            kappa_nmm_per_rad: Some(4.0),
            rate_nmm_per_deg: Some(0.0698),
            amplitude_dependence_pct: 0.1,
            amplitude_dependence_flagged: false,
            decay: twistlot_model::DecayShape::Exponential,
            friction_torque_nmm: None,
            swings: 10,
            initial_amplitude_deg: 15.0,
            equilibrium_deg: 0.0,
            notes: Vec::new(),
        });
        assert_eq!(characteristic_value(&swung, "dynamic_rate"), Some(0.0698));
        assert_eq!(characteristic_value(&swung, "frequency"), Some(2.001));
    }

    fn tests_with(n: usize, major_fails: usize) -> Vec<TestRecord> {
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

    fn decide(spec: &PartSpec, tests: &[TestRecord], standing: Option<&LotStanding>) -> LotDecision {
        decide_with(spec, tests, standing, BeyondSample::FirstN)
    }

    fn decide_with(
        spec: &PartSpec,
        tests: &[TestRecord],
        standing: Option<&LotStanding>,
        beyond_sample: BeyondSample,
    ) -> LotDecision {
        let refs: Vec<&TestRecord> = tests.iter().collect();
        let input = LotInput {
            lot: "L1",
            lot_size: 1000,
            spec,
            standing,
            tests: &refs,
            beyond_sample,
            variables_normality_p: None,
            non_normal: NonNormalRule::Hold,
            unverified_rigs: &[],
        };
        let scheme = scheme();
        decide_lot(&input, |name| (name == scheme.name).then_some(&scheme))
    }

    fn texts(d: &LotDecision) -> Vec<&str> {
        d.grounds.iter().map(|g| g.text.as_str()).collect()
    }

    #[test]
    fn accepts_within_ac_and_names_the_deciding_plan() {
        // From memory: MIL-STD-105E Table II-A, letter J (n=80), AQL 1.0: Ac 2 Re 3
        let d = decide(&spec(), &tests_with(80, 2), None);
        assert_eq!(d.disposition, Disposition::Accept);
        assert_eq!(
            d.deciding_ground().map(|g| g.text.as_str()),
            Some("major: 2 defectives in 80 tested, Ac 2 Re 3 (letter J, n 80, normal): accept")
        );
        assert_eq!(
            d.deciding_ground().map(|g| g.topic),
            Some(GroundTopic::Class(CharacteristicClass::Major))
        );
        let shown = d.shown_plan().unwrap();
        assert_eq!((shown.plan.sample_size, shown.plan.accept, shown.plan.reject), (80, 2, 3));
        let count = d.switching.as_ref().unwrap();
        assert_eq!((count.sample_size, count.defectives, count.aql_pct), (80, 2, 1.0));
    }

    #[test]
    fn rejects_at_re_even_with_the_sample_incomplete() {
        let d = decide(&spec(), &tests_with(80, 3), None);
        assert_eq!(d.disposition, Disposition::Reject);
        assert!(d.deciding_ground().unwrap().text.ends_with(": reject"), "{:?}", texts(&d));
        let d = decide(&spec(), &tests_with(20, 3), None);
        assert_eq!(d.disposition, Disposition::Reject);
    }

    #[test]
    fn holds_with_too_few_valid_tests() {
        let d = decide(&spec(), &tests_with(18, 0), None);
        assert_eq!(d.disposition, Disposition::Hold);
        assert!(d.deciding_ground().unwrap().text.contains("too few valid tests: 18 of 80 required"));
    }

    #[test]
    fn invalid_tests_hold_only_when_they_could_change_the_decision() {
        let mut tests = tests_with(80, 1);
        tests.push(test(99, Verdict::Invalid, &[]));
        assert_eq!(decide(&spec(), &tests, None).disposition, Disposition::Accept);
        tests.push(test(100, Verdict::Invalid, &[]));
        let d = decide(&spec(), &tests, None);
        assert_eq!(d.disposition, Disposition::Hold);
        assert!(d.deciding_ground().unwrap().text.contains("2 invalid tests could change the decision"));
        let mut tests = tests_with(79, 0);
        tests.push(test(80, Verdict::Invalid, &[]));
        assert_eq!(decide(&spec(), &tests, None).disposition, Disposition::Hold);
    }

    #[test]
    fn the_first_n_tests_by_start_time_count_whatever_order_they_come_in() {
        // 80 passing tests started first, then a failing one: only the 80 count.
        let mut tests = tests_with(80, 0);
        let mut late = test(200, Verdict::Fail, &[CharacteristicClass::Major]);
        late.started = Some("2026-12-01T23:00".into());
        tests.insert(0, late);
        tests.reverse();
        let d = decide(&spec(), &tests, None);
        assert_eq!(d.disposition, Disposition::Accept, "{:?}", texts(&d));
        let major = &d.classes[0];
        assert_eq!((major.tested, major.defectives, major.defectives_beyond_sample), (80, 0, 1));
        assert!(texts(&d).iter().any(|t| t.contains("1 more defective among tests beyond the sample size")));
        // Counting all of them instead sees the defective.
        let d = decide_with(&spec(), &tests, None, BeyondSample::CountAll);
        assert_eq!((d.classes[0].tested, d.classes[0].defectives), (81, 1));
    }

    #[test]
    fn a_critical_defective_beyond_the_sample_never_accepts() {
        let mut spec = spec();
        spec.sampling.as_mut().unwrap().critical = ClassPlan::ZeroAcceptance;
        let mut tests = tests_with(80, 0);
        let mut late = test(300, Verdict::Fail, &[CharacteristicClass::Critical]);
        late.started = Some("2026-12-02T01:00".into());
        tests.push(late);
        let d = decide(&spec, &tests, None);
        assert_eq!(d.disposition, Disposition::Reject, "{:?}", texts(&d));
        let deciding = d.deciding_ground().unwrap();
        assert_eq!(deciding.topic, GroundTopic::Class(CharacteristicClass::Critical));
        assert!(deciding.text.contains("beyond the sample size"), "{}", deciding.text);
    }

    #[test]
    fn zero_acceptance_keeps_its_sample_size_at_every_severity() {
        let mut spec = spec();
        spec.sampling.as_mut().unwrap().critical = ClassPlan::ZeroAcceptance;
        for (severity, label) in [
            (Severity::Normal, Severity::Normal),
            (Severity::Tightened, Severity::Tightened),
            (Severity::Reduced, Severity::Normal),
        ] {
            let standing = LotStanding { severity, discontinued: false, explanation: "test".into() };
            let d = decide(&spec, &tests_with(80, 0), Some(&standing));
            let critical = d.classes.iter().find(|c| c.class == CharacteristicClass::Critical).unwrap();
            // From memory: MIL-STD-105E Table I lot 501–1200 level II: J, n = 80; Ac 0 Re 1 by the zero-acceptance rule.
            assert_eq!(
                (critical.plan.code_letter.as_str(), critical.plan.sample_size, critical.plan.accept),
                ("J", 80, 0)
            );
            assert_eq!(critical.plan.severity, label, "{severity}");
        }
    }

    #[test]
    fn reduced_between_ac_and_re_accepts_and_reinstates_normal() {
        let standing =
            LotStanding { severity: Severity::Reduced, discontinued: false, explanation: "reduced".into() };
        // From memory: MIL-STD-105E Table II-C, letter J (n=32), AQL 1.0: Ac 1 Re 3
        let d = decide(&spec(), &tests_with(32, 2), Some(&standing));
        assert_eq!(d.disposition, Disposition::Accept);
        assert!(d.switching.as_ref().unwrap().between_ac_and_re);
        assert!(d.deciding_ground().unwrap().text.contains("normal inspection is reinstated"));
        assert_eq!(d.grounds[0].text, "reduced", "the standing's explanation comes first");
    }

    #[test]
    fn discontinued_parts_and_wrong_part_numbers_hold() {
        let standing =
            LotStanding { severity: Severity::Tightened, discontinued: true, explanation: "stopped".into() };
        let d = decide(&spec(), &tests_with(80, 0), Some(&standing));
        assert_eq!(d.disposition, Disposition::Hold);
        assert!(d.deciding_ground().unwrap().text.contains("discontinued"));
        assert!(d.switching.is_none());

        let mut tests = tests_with(80, 0);
        tests[3].part = Some("P-2".into());
        let d = decide(&spec(), &tests, None);
        assert_eq!(d.disposition, Disposition::Hold);
        assert_eq!(d.deciding_ground().unwrap().topic, GroundTopic::Evidence);
        assert!(d.deciding_ground().unwrap().text.contains("another part number"));
        // A rejection stands even with a stray part number among the tests.
        let mut tests = tests_with(80, 3);
        tests[70].part = None;
        assert_eq!(decide(&spec(), &tests, None).disposition, Disposition::Reject);
    }

    #[test]
    fn no_tests_or_no_agreement_hold_with_the_reason() {
        let d = decide(&spec(), &[], None);
        assert_eq!(d.disposition, Disposition::Hold);
        assert!(d.deciding_ground().unwrap().text.contains("no accepted export carries lot `L1`"));
        let mut spec = spec();
        spec.sampling = None;
        let d = decide(&spec, &tests_with(80, 0), None);
        assert_eq!(d.disposition, Disposition::Hold);
        assert!(d.deciding_ground().unwrap().text.contains("names no sampling agreement"));
    }

    fn variables_spec() -> PartSpec {
        let mut spec = spec();
        let sampling = spec.sampling.as_mut().unwrap();
        sampling.major = ClassPlan::None;
        sampling.variables = Some(VariablesPlanSpec {
            characteristic: "rate".into(),
            aql_pct: 1.0,
            ltpd_pct: 6.0,
            alpha: 0.05,
            beta: 0.10,
            sigma: None,
        });
        spec
    }

    fn with_rates(values: &[f64]) -> Vec<TestRecord> {
        values
            .iter()
            .enumerate()
            .map(|(i, v)| {
                let mut t = test(i, Verdict::Pass, &[]);
                t.metrics.rate_nmm_per_deg = Some(*v);
                t
            })
            .collect()
    }

    fn spread(n: usize, mean: f64, half_width: f64) -> Vec<f64> {
        (0..n).map(|i| mean + half_width * (2.0 * i as f64 / (n - 1) as f64 - 1.0)).collect()
    }

    #[test]
    fn variables_plan_accepts_rejects_and_holds() {
        // The plan is n 41, k ≈ 1.89 (see the design tests); a tight spread accepts.
        // The exact double-limit design (see the design tests) asks for more parts than
        // Wallis's 41; the lot here gives 100, judged on the first n by start time.
        let d = decide(&variables_spec(), &with_rates(&spread(100, 4.0, 0.1)), None);
        assert_eq!(d.disposition, Disposition::Accept, "{:?}", texts(&d));
        let n = d.variables.as_ref().unwrap().sample_size;
        assert!(n > 41 && n <= 100, "{n}");
        assert_eq!(d.deciding_ground().unwrap().topic, GroundTopic::Variables);
        // A mean close to the upper limit rejects although every value is inside it.
        // The first 84 by start time sit evenly just under the upper limit, so their mean is
        // within k·s of it; the later 16 are not counted.
        let mut values = spread(84, 4.269, 0.05);
        values.extend([4.0; 16]);
        assert!(values.iter().all(|v| *v < 4.32));
        let d = decide(&variables_spec(), &with_rates(&values), None);
        assert_eq!(d.disposition, Disposition::Reject, "{:?}", texts(&d));
        let d = decide(&variables_spec(), &with_rates(&spread(20, 4.0, 0.1)), None);
        assert_eq!(d.disposition, Disposition::Hold);
        assert!(d.deciding_ground().unwrap().text.contains(&format!("too few measured values: 20 of {n}")));
    }

    #[test]
    fn non_normal_values_hold_or_hand_over_to_the_attribute_plans() {
        let tests = with_rates(&spread(100, 4.0, 0.1));
        let refs: Vec<&TestRecord> = tests.iter().collect();
        let scheme = scheme();
        let spec = variables_spec();
        let decide_with_rule = |non_normal, p| {
            let input = LotInput {
                lot: "L1",
                lot_size: 1000,
                spec: &spec,
                standing: None,
                tests: &refs,
                beyond_sample: BeyondSample::FirstN,
                variables_normality_p: p,
                non_normal,
                unverified_rigs: &[],
            };
            decide_lot(&input, |name| (name == scheme.name).then_some(&scheme))
        };
        // Normality not rejected: the plan decides as usual.
        assert_eq!(decide_with_rule(NonNormalRule::Hold, Some(0.4)).disposition, Disposition::Accept);
        let held = decide_with_rule(NonNormalRule::Hold, Some(0.01));
        assert_eq!(held.disposition, Disposition::Hold);
        assert!(held.deciding_ground().unwrap().text.contains("caution: the k-method assumes"));
        // Handed over, with no attribute plan left: held, saying so.
        let handed = decide_with_rule(NonNormalRule::Attributes, Some(0.01));
        assert_eq!(handed.disposition, Disposition::Hold, "{:?}", texts(&handed));
        assert!(handed.variables.is_none());
        assert!(texts(&handed).iter().any(|t| t.contains("no attribute plan is left")));
    }

    #[test]
    fn the_required_sample_is_the_largest_plan_at_the_severity() {
        let scheme = scheme();
        // From memory: MIL-STD-105E Table I, lot 1000 level II → J; Table II-A J AQL 1.0: n 80.
        let need = required_sample(&spec(), &scheme, 1000, Severity::Normal).unwrap();
        assert_eq!(need.sample_size, 80);
        assert_eq!(need.plans.len(), 1);
        // From memory: MIL-STD-105E Table II-C (reduced) letter J: n 32.
        let reduced = required_sample(&spec(), &scheme, 1000, Severity::Reduced).unwrap();
        assert_eq!(reduced.sample_size, 32);
        // A zero-acceptance critical class keeps the normal n 80 under reduced inspection.
        let mut with_critical = spec();
        with_critical.sampling.as_mut().unwrap().critical = ClassPlan::ZeroAcceptance;
        let need = required_sample(&with_critical, &scheme, 1000, Severity::Reduced).unwrap();
        assert_eq!(need.sample_size, 80);
        assert!(need.set_by.starts_with("critical zero acceptance"), "{}", need.set_by);
        // The variables plan's n is the one decide_lot designs (checked there to exceed 41).
        let variables = required_sample(&variables_spec(), &scheme, 1000, Severity::Normal).unwrap();
        let d = decide(&variables_spec(), &with_rates(&spread(100, 4.0, 0.1)), None);
        assert_eq!(variables.sample_size, d.variables.as_ref().unwrap().sample_size);
        assert!(variables.set_by.starts_with("variables on rate"), "{}", variables.set_by);
        // No agreement: refused with the reason.
        let mut none = spec();
        none.sampling = None;
        let err = required_sample(&none, &scheme, 1000, Severity::Normal).unwrap_err();
        assert!(err.to_string().contains("names no sampling agreement"), "{err}");
    }

    #[test]
    fn tests_from_an_unverified_rig_hold_the_lot_whatever_the_plans_say() {
        let rigs = [UnverifiedRig {
            rig: "RIG-D".into(),
            tests: 80,
            reason: "its reference-spring check failed (deviation 2.5 %, allowed 1 %)".into(),
        }];
        for (tests, plans_say) in
            [(tests_with(80, 0), Disposition::Accept), (tests_with(80, 3), Disposition::Reject)]
        {
            let refs: Vec<&TestRecord> = tests.iter().collect();
            let spec = spec();
            let scheme = scheme();
            let mut input = LotInput {
                lot: "L1",
                lot_size: 1000,
                spec: &spec,
                standing: None,
                tests: &refs,
                beyond_sample: BeyondSample::FirstN,
                variables_normality_p: None,
                non_normal: NonNormalRule::Hold,
                unverified_rigs: &[],
            };
            let plain = decide_lot(&input, |name| (name == scheme.name).then_some(&scheme));
            assert_eq!(plain.disposition, plans_say);
            input.unverified_rigs = &rigs;
            let d = decide_lot(&input, |name| (name == scheme.name).then_some(&scheme));
            assert_eq!(d.disposition, Disposition::Hold, "{:?}", texts(&d));
            let deciding = d.deciding_ground().unwrap();
            assert_eq!(deciding.topic, GroundTopic::Evidence);
            assert!(
                deciding.text.starts_with("rig RIG-D: its reference-spring check failed"),
                "{}",
                deciding.text
            );
            assert!(deciding.text.contains("; 80 tests of this lot do not stand: hold"), "{}", deciding.text);
            assert!(texts(&d).iter().any(|t| t.contains(&format!("alone would {}", verb(plans_say)))));
            // The plans' counts and severity stay for the report and the record.
            assert_eq!(d.classes.len(), plain.classes.len());
            assert_eq!(d.severity, plain.severity);
        }
    }

    #[test]
    fn a_wrong_scheme_or_level_holds_with_the_reason() {
        let mut spec = spec();
        spec.sampling.as_mut().unwrap().scheme = "plant-own".into();
        let d = decide(&spec, &tests_with(80, 0), None);
        assert_eq!(d.disposition, Disposition::Hold);
        assert!(d.deciding_ground().unwrap().text.contains("no sampling-scheme plugin named `plant-own`"));
        let mut spec = self::spec();
        spec.sampling.as_mut().unwrap().level = "IV".into();
        let d = decide(&spec, &tests_with(80, 0), None);
        assert_eq!(d.disposition, Disposition::Hold);
        assert!(
            d.deciding_ground().unwrap().text.contains("`IV` is not an inspection level"),
            "{:?}",
            texts(&d)
        );
    }
}
