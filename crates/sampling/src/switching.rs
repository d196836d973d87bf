//! Switching between normal, tightened and reduced inspection (MIL-STD-105E §8.3).
//!
//! One [`SwitchingState`] is kept per part number (and class, when classes are
//! switched separately). The pipeline stores it between shifts and feeds it each
//! lot's outcome on original inspection, in order; the state never reads history
//! itself, so it is plain serde data.

use crate::scheme::{Severity, SwitchingRules};
use serde::{Deserialize, Serialize};
use statrs::distribution::{DiscreteCDF, Poisson};

/// What one lot's original inspection gave.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct LotOutcome {
    /// The lot was accepted.
    pub accepted: bool,
    /// Accepted under reduced inspection with defectives between Ac and Re.
    #[serde(default)]
    pub between_ac_and_re: bool,
    /// Units in the sample.
    pub sample_size: u64,
    /// Defectives found in the sample.
    pub defectives: u64,
    /// AQL of the plan, percent (for the reduced-inspection limit number).
    pub aql_pct: f64,
}

/// Conditions outside the counts that §8.3 asks for.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
pub struct Conditions {
    /// Production is at a steady rate (needed to go to, and to stay on, reduced).
    pub production_steady: bool,
    /// The responsible authority approves reduced inspection.
    pub reduced_approved: bool,
}

/// A change of severity, or the stop of inspection.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum Transition {
    /// Normal → tightened.
    ToTightened,
    /// Tightened → normal.
    TightenedToNormal,
    /// Normal → reduced.
    ToReduced,
    /// Reduced → normal.
    ReducedToNormal,
    /// Too many lots stayed on tightened: stop accepting under the scheme.
    Discontinue,
}

/// Switching state of one part.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct SwitchingState {
    /// Current severity.
    pub severity: Severity,
    /// Lots on the current severity, most recent last (only as many as the rules need).
    pub recent: Vec<LotOutcome>,
    /// Lots inspected since the current severity began.
    pub lots_on_severity: u32,
    /// Lots not accepted since the current severity began.
    #[serde(default)]
    pub rejected_on_severity: u32,
    /// Inspection under the scheme is stopped until [`SwitchingState::resume`].
    pub discontinued: bool,
}

impl Default for SwitchingState {
    fn default() -> Self {
        SwitchingState::new()
    }
}

/// The limit number for reduced inspection: the largest L with Poisson P(X ≤ L) below
/// `probability` at mean total_sample × AQL/100; None when even L = 0 is not.
pub fn reduced_limit_number(total_sample: u64, aql_pct: f64, probability: f64) -> Option<u64> {
    let mean = total_sample as f64 * aql_pct / 100.0;
    let poisson = Poisson::new(mean).ok()?;
    let mut limit = None;
    for l in 0..=total_sample {
        if poisson.cdf(l) < probability {
            limit = Some(l);
        } else {
            break;
        }
    }
    limit
}

impl SwitchingState {
    /// A part starts on normal inspection.
    pub fn new() -> Self {
        SwitchingState {
            severity: Severity::Normal,
            recent: Vec::new(),
            lots_on_severity: 0,
            rejected_on_severity: 0,
            discontinued: false,
        }
    }

    fn switch(&mut self, severity: Severity) {
        self.severity = severity;
        self.recent.clear();
        self.lots_on_severity = 0;
        self.rejected_on_severity = 0;
    }

    /// After corrective action: inspection restarts on tightened (§8.3).
    pub fn resume(&mut self) {
        self.discontinued = false;
        self.switch(Severity::Tightened);
    }

    /// Feeds one lot's original-inspection outcome; returns the transition it caused.
    /// A discontinued state ignores lots until resumed.
    pub fn record(
        &mut self,
        rules: &SwitchingRules,
        lot: &LotOutcome,
        conditions: &Conditions,
    ) -> Option<Transition> {
        if self.discontinued {
            return None;
        }
        self.lots_on_severity = self.lots_on_severity.saturating_add(1);
        if !lot.accepted {
            self.rejected_on_severity = self.rejected_on_severity.saturating_add(1);
        }
        self.recent.push(lot.clone());
        let keep =
            rules.tightened_within_lots.max(rules.normal_after_accepted).max(rules.reduced_after_accepted)
                as usize;
        if self.recent.len() > keep {
            let excess = self.recent.len() - keep;
            self.recent.drain(..excess);
        }
        let last = |count: u32| -> &[LotOutcome] {
            let count = (count as usize).min(self.recent.len());
            &self.recent[self.recent.len() - count..]
        };
        match self.severity {
            Severity::Normal => {
                let window = last(rules.tightened_within_lots);
                let rejected = window.iter().filter(|l| !l.accepted).count() as u32;
                if rejected >= rules.tightened_after_rejected {
                    self.switch(Severity::Tightened);
                    return Some(Transition::ToTightened);
                }
                let run = rules.reduced_after_accepted as usize;
                let window = last(rules.reduced_after_accepted);
                if window.len() == run
                    && window.iter().all(|l| l.accepted)
                    && conditions.production_steady
                    && conditions.reduced_approved
                {
                    let total_sample: u64 = window.iter().map(|l| l.sample_size).sum();
                    let total_defectives: u64 = window.iter().map(|l| l.defectives).sum();
                    let within =
                        reduced_limit_number(total_sample, lot.aql_pct, rules.reduced_limit_probability)
                            .is_some_and(|limit| total_defectives <= limit);
                    if within {
                        self.switch(Severity::Reduced);
                        return Some(Transition::ToReduced);
                    }
                }
                None
            }
            Severity::Tightened => {
                let run = rules.normal_after_accepted as usize;
                let window = last(rules.normal_after_accepted);
                if window.len() == run && window.iter().all(|l| l.accepted) {
                    self.switch(Severity::Normal);
                    return Some(Transition::TightenedToNormal);
                }
                if self.rejected_on_severity >= rules.discontinue_after_rejected_on_tightened {
                    self.discontinued = true;
                    return Some(Transition::Discontinue);
                }
                None
            }
            Severity::Reduced => {
                if !lot.accepted || lot.between_ac_and_re || !conditions.production_steady {
                    self.switch(Severity::Normal);
                    return Some(Transition::ReducedToNormal);
                }
                None
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::scheme::Scheme;

    fn rules() -> SwitchingRules {
        Scheme::shipped().unwrap().switching
    }

    fn lot(accepted: bool, defectives: u64) -> LotOutcome {
        LotOutcome { accepted, between_ac_and_re: false, sample_size: 125, defectives, aql_pct: 1.0 }
    }

    const STEADY: Conditions = Conditions { production_steady: true, reduced_approved: true };

    fn feed(
        state: &mut SwitchingState,
        lots: &[LotOutcome],
        conditions: &Conditions,
    ) -> Vec<Option<Transition>> {
        let rules = rules();
        lots.iter().map(|l| state.record(&rules, l, conditions)).collect()
    }

    #[test]
    fn two_rejections_in_five_lots_tighten() {
        // From memory: MIL-STD-105E §8.3.1: normal to tightened when 2 of 5 or fewer consecutive lots are rejected
        let mut s = SwitchingState::new();
        let t = feed(&mut s, &[lot(false, 3), lot(true, 0), lot(true, 1), lot(true, 0)], &STEADY);
        assert!(t.iter().all(Option::is_none));
        let t = feed(&mut s, &[lot(false, 4)], &STEADY);
        assert_eq!(t[0], Some(Transition::ToTightened));
        assert_eq!(s.severity, Severity::Tightened);

        // Rejections six lots apart do not tighten.
        let mut s = SwitchingState::new();
        let lots = [lot(false, 3), lot(true, 0), lot(true, 0), lot(true, 0), lot(true, 0), lot(false, 3)];
        assert!(feed(&mut s, &lots, &STEADY).iter().all(Option::is_none));
        assert_eq!(s.severity, Severity::Normal);
    }

    #[test]
    fn five_accepted_on_tightened_restore_normal() {
        // From memory: MIL-STD-105E §8.3.2: tightened to normal after 5 consecutive lots accepted
        let mut s = SwitchingState { severity: Severity::Tightened, ..SwitchingState::new() };
        let t = feed(
            &mut s,
            &[lot(true, 0), lot(false, 3), lot(true, 0), lot(true, 0), lot(true, 0), lot(true, 0)],
            &STEADY,
        );
        assert!(t.iter().all(Option::is_none));
        assert_eq!(feed(&mut s, &[lot(true, 0)], &STEADY)[0], Some(Transition::TightenedToNormal));
        assert_eq!(s.severity, Severity::Normal);
    }

    #[test]
    fn ten_clean_lots_reduce_when_steady_and_approved() {
        // From memory: MIL-STD-105E §8.3.3: normal to reduced after 10 consecutive accepted
        // lots with total defectives within the limit number, steady production, approval.
        let ten: Vec<_> = (0..10).map(|_| lot(true, 0)).collect();
        let mut s = SwitchingState::new();
        let not_approved = Conditions { production_steady: true, reduced_approved: false };
        assert!(feed(&mut s, &ten, &not_approved).iter().all(Option::is_none));
        let mut s = SwitchingState::new();
        let t = feed(&mut s, &ten, &STEADY);
        assert_eq!(t[9], Some(Transition::ToReduced));
        assert!(t[..9].iter().all(Option::is_none));

        // Too many defectives in total: 10 lots × 125 at AQL 1% is a Poisson mean of
        // 12.5, whose 10% point sits near 8, so 10 accepted lots with 1 each stay normal.
        let mut s = SwitchingState::new();
        let dirty: Vec<_> = (0..10).map(|_| lot(true, 1)).collect();
        assert!(feed(&mut s, &dirty, &STEADY).iter().all(Option::is_none));
    }

    #[test]
    fn limit_number_follows_poisson() {
        // Source: statrs Poisson CDF: largest L with P(X ≤ L) < 0.10 at mean 12.5
        use statrs::distribution::{DiscreteCDF, Poisson};
        let poisson = Poisson::new(12.5).unwrap();
        let limit = reduced_limit_number(1250, 1.0, 0.10).unwrap();
        assert!(poisson.cdf(limit) < 0.10 && poisson.cdf(limit + 1) >= 0.10);
        // Too small a total sample at a small AQL: not even zero qualifies.
        assert_eq!(reduced_limit_number(50, 0.1, 0.10), None);
    }

    #[test]
    fn reduced_returns_to_normal() {
        // From memory: MIL-STD-105E §8.3.4: reduced to normal on a rejected lot, on a lot
        // accepted between Ac and Re, or on irregular production.
        let on_reduced = || SwitchingState { severity: Severity::Reduced, ..SwitchingState::new() };
        let mut s = on_reduced();
        assert_eq!(
            feed(&mut s, &[lot(true, 0), lot(false, 4)], &STEADY)[1],
            Some(Transition::ReducedToNormal)
        );
        let mut s = on_reduced();
        let between = LotOutcome { between_ac_and_re: true, ..lot(true, 2) };
        assert_eq!(feed(&mut s, &[between], &STEADY)[0], Some(Transition::ReducedToNormal));
        let mut s = on_reduced();
        let irregular = Conditions { production_steady: false, reduced_approved: true };
        assert_eq!(feed(&mut s, &[lot(true, 0)], &irregular)[0], Some(Transition::ReducedToNormal));
        assert_eq!(s.severity, Severity::Normal);
    }

    #[test]
    fn rejections_on_tightened_discontinue() {
        // From memory: MIL-STD-105E §8.3.4: when the cumulative number of lots not accepted in a
        // sequence of consecutive lots on original tightened inspection reaches 5, stop (count from the scheme file)
        let mut s = SwitchingState { severity: Severity::Tightened, ..SwitchingState::new() };
        // Rejected, accepted, accepted, rejected … never five accepted in a row, five rejections by lot 9.
        let lots: Vec<_> = (0..9).map(|i| lot(i % 2 != 0, 2)).collect();
        let t = feed(&mut s, &lots, &STEADY);
        assert_eq!(t[..8].iter().filter(|x| x.is_some()).count(), 0);
        assert_eq!(t[8], Some(Transition::Discontinue));
        assert!(s.discontinued);
        assert_eq!(feed(&mut s, &[lot(true, 0)], &STEADY)[0], None);
        s.resume();
        assert!(!s.discontinued && s.severity == Severity::Tightened && s.lots_on_severity == 0);
    }

    #[test]
    fn state_round_trips_through_json() {
        let mut s = SwitchingState::new();
        feed(&mut s, &[lot(false, 3), lot(true, 0)], &STEADY);
        let json = serde_json::to_string(&s).unwrap();
        assert!(json.contains("\"severity\":\"normal\""), "{json}");
        let back: SwitchingState = serde_json::from_str(&json).unwrap();
        assert_eq!(back, s);
    }
}
