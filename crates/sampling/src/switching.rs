//! Switching between normal, tightened and reduced inspection (MIL-STD-105E §8.3).
//!
//! One [`SwitchingState`] is kept per part number (and class, when classes are
//! switched separately). The pipeline stores it between shifts and feeds it each
//! lot's outcome on original inspection, in order; the state never reads history
//! itself, so it is plain serde data.
//!
//! The normal → reduced switch (§8.3.3) compares the defectives of the last ten lots with
//! the limit number of MIL-STD-105E Table VIII, read from the scheme file as data
//! ([`LimitNumbers`]). Where the table has `*` (the last ten lots hold too few sample units
//! for that AQL), the table's note allows more lots: the most recent ones in sequence, all
//! on normal inspection and none rejected. The smallest such run (at most
//! [`MAX_LIMIT_LOTS`] lots) whose units reach a cell with a number is used.

use crate::scheme::{Severity, SwitchingRules};
use serde::{Deserialize, Serialize};

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

/// Most lots of an unbroken accepted run on normal inspection that are kept for the
/// Table VIII note (using more than ten lots where the table has `*`).
pub const MAX_LIMIT_LOTS: usize = 250;

/// One cell of Table VIII.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum LimitCell {
    /// The limit number: total defectives at most this allow reduced inspection.
    Limit(u64),
    /// `*` in the table: too few sample units for this AQL; more lots may be used.
    TooFewUnits,
    /// A blank in the table: no limit number is given, so no switch to reduced.
    NotGiven,
}

/// One row of Table VIII: a range of total sample units and a cell per AQL.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct LimitRow {
    /// Fewest sample units in the row.
    pub min_units: u64,
    /// Most sample units in the row; `None` for the last, open row.
    pub max_units: Option<u64>,
    /// One cell per AQL of the scheme's series.
    pub cells: Vec<LimitCell>,
}

/// MIL-STD-105E Table VIII, limit numbers for reduced inspection, as read from the scheme.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct LimitNumbers {
    /// The AQL series the columns follow, percent.
    pub aql_series_pct: Vec<f64>,
    /// Rows in ascending order of sample units.
    pub rows: Vec<LimitRow>,
}

impl LimitNumbers {
    /// Reads the table from rows written `"20-29": "* * 0 2 …"` (the last range `"50000-"`),
    /// one token per AQL: a number, `*` or `-`. Errors name the row and say what is wrong.
    pub fn from_rows(aql_series_pct: &[f64], rows: &[(String, String)]) -> Result<LimitNumbers, String> {
        if rows.is_empty() {
            return Err("give the rows of Table VIII".into());
        }
        let mut out: Vec<LimitRow> = Vec::new();
        for (index, (range, cells)) in rows.iter().enumerate() {
            let last = index + 1 == rows.len();
            let bad_range = || {
                format!(
                    "row `{range}`: write the range of sample units as `20-29` (the last row as `50000-`)"
                )
            };
            let (lo, hi) = range.split_once('-').ok_or_else(bad_range)?;
            let min_units: u64 = lo.trim().parse().map_err(|_| bad_range())?;
            let max_units: Option<u64> = match hi.trim() {
                "" if last => None,
                "" => return Err(format!("row `{range}`: only the last row may be open-ended")),
                text => Some(text.parse().map_err(|_| bad_range())?),
            };
            if last && max_units.is_some() {
                return Err(format!("row `{range}`: the last row must be open-ended (`{min_units}-`)"));
            }
            if max_units.is_some_and(|max| max < min_units) {
                return Err(format!("row `{range}`: the range runs backwards"));
            }
            if let Some(previous) = out.last() {
                if previous.max_units.map(|m| m + 1) != Some(min_units) {
                    return Err(format!("row `{range}`: must start right after the previous row's range"));
                }
            }
            let cells: Vec<LimitCell> = cells
                .split_whitespace()
                .map(|token| match token {
                    "*" => Ok(LimitCell::TooFewUnits),
                    "-" => Ok(LimitCell::NotGiven),
                    number => number.parse::<u64>().map(LimitCell::Limit).map_err(|_| {
                        format!("row `{range}`: `{number}` is not a limit number (write a count, `*` or `-`)")
                    }),
                })
                .collect::<Result<_, _>>()?;
            if cells.len() != aql_series_pct.len() {
                return Err(format!(
                    "row `{range}` has {} cells for {} AQLs",
                    cells.len(),
                    aql_series_pct.len()
                ));
            }
            // The printed table reads `*` … numbers … blanks along every row, and its
            // numbers grow with the AQL.
            let mut stage = 0;
            let mut last_limit = 0;
            for cell in &cells {
                let (next, limit) = match cell {
                    LimitCell::TooFewUnits => (0, None),
                    LimitCell::Limit(l) => (1, Some(*l)),
                    LimitCell::NotGiven => (2, None),
                };
                if next < stage {
                    return Err(format!("row `{range}`: cells must run `*` …, then numbers, then `-` …"));
                }
                if let Some(l) = limit {
                    if l < last_limit {
                        return Err(format!("row `{range}`: limit numbers must not fall as the AQL grows"));
                    }
                    last_limit = l;
                }
                stage = next;
            }
            out.push(LimitRow { min_units, max_units, cells });
        }
        for (column, aql) in aql_series_pct.iter().enumerate() {
            let mut last_limit = None;
            for row in &out {
                match row.cells[column] {
                    LimitCell::Limit(l) => {
                        if last_limit.is_some_and(|prev| l < prev) {
                            return Err(format!(
                                "AQL {aql}%: limit numbers must not fall as the sample units grow (row from {})",
                                row.min_units
                            ));
                        }
                        last_limit = Some(l);
                    }
                    LimitCell::TooFewUnits if last_limit.is_some() => {
                        return Err(format!(
                            "AQL {aql}%: `*` below a number (row from {}): more units cannot be too few",
                            row.min_units
                        ));
                    }
                    _ => {}
                }
            }
        }
        Ok(LimitNumbers { aql_series_pct: aql_series_pct.to_vec(), rows: out })
    }

    /// The cell for a total of `units` sample units at `aql_pct`; fewer units than the
    /// first row count as `*`. `None` when the AQL is not in the series.
    pub fn lookup(&self, units: u64, aql_pct: f64) -> Option<LimitCell> {
        let column =
            self.aql_series_pct.iter().position(|a| (a - aql_pct).abs() <= 1e-9 * a.max(aql_pct.abs()))?;
        match self.rows.iter().find(|r| units >= r.min_units && r.max_units.is_none_or(|m| units <= m)) {
            Some(row) => row.cells.get(column).copied(),
            None => Some(LimitCell::TooFewUnits),
        }
    }

    /// Whether the accepted lots `lots` (oldest first, all on normal inspection, none
    /// rejected) meet Table VIII for the switch to reduced: the last `min_lots`, or more where
    /// the table has `*`, hold at most the limit number of defectives.
    pub fn allows_reduced(&self, lots: &[LotOutcome], min_lots: usize, aql_pct: f64) -> bool {
        for count in min_lots..=lots.len() {
            let window = &lots[lots.len() - count..];
            let units: u64 = window.iter().map(|l| l.sample_size).sum();
            let defectives: u64 = window.iter().map(|l| l.defectives).sum();
            match self.lookup(units, aql_pct) {
                Some(LimitCell::Limit(limit)) => return defectives <= limit,
                Some(LimitCell::TooFewUnits) => continue,
                Some(LimitCell::NotGiven) | None => return false,
            }
        }
        false
    }
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
        let windows =
            rules.tightened_within_lots.max(rules.normal_after_accepted).max(rules.reduced_after_accepted)
                as usize;
        // On normal inspection an unbroken run of accepted lots is kept longer, for the
        // Table VIII note on using more than ten lots.
        let trailing = self.recent.iter().rev().take_while(|l| l.accepted).count();
        let keep = if self.severity == Severity::Normal {
            windows.max(trailing.min(MAX_LIMIT_LOTS))
        } else {
            windows
        };
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
                    let accepted_run = self.recent.iter().rev().take_while(|l| l.accepted).count();
                    let lots = &self.recent[self.recent.len() - accepted_run..];
                    if rules.limit_numbers.allows_reduced(lots, run, lot.aql_pct) {
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

        // Too many defectives in total: 10 lots × 125 = 1250 units at AQL 1.0 % have the
        // limit number 7, so 10 accepted lots with 1 each (10 in all) stay normal.
        // From memory: MIL-STD-105E Table VIII, 1250–1999 units, AQL 1.0: 7
        let mut s = SwitchingState::new();
        let dirty: Vec<_> = (0..10).map(|_| lot(true, 1)).collect();
        assert!(feed(&mut s, &dirty, &STEADY).iter().all(Option::is_none));
    }

    fn limits() -> LimitNumbers {
        rules().limit_numbers
    }

    #[test]
    fn table_eight_cells() {
        use LimitCell::*;
        let t = limits();
        // From memory: MIL-STD-105E Table VIII, 20–29 units, AQL 10: 0; AQL 1000: 181
        assert_eq!(t.lookup(25, 10.0), Some(Limit(0)));
        assert_eq!(t.lookup(20, 1000.0), Some(Limit(181)));
        // From memory: MIL-STD-105E Table VIII, 200–319 units, AQL 1.0: 0; AQL 10: 14
        assert_eq!(t.lookup(319, 1.0), Some(Limit(0)));
        assert_eq!(t.lookup(200, 10.0), Some(Limit(14)));
        // From memory: MIL-STD-105E Table VIII, 800–1249 units, AQL 1.0: 4; AQL 2.5: 14
        assert_eq!(t.lookup(800, 1.0), Some(Limit(4)));
        assert_eq!(t.lookup(1249, 2.5), Some(Limit(14)));
        // From memory: MIL-STD-105E Table VIII, 2000–3149 units, AQL 0.65: 8; AQL 0.10: 0
        assert_eq!(t.lookup(2500, 0.65), Some(Limit(8)));
        assert_eq!(t.lookup(2000, 0.10), Some(Limit(0)));
        // From memory: MIL-STD-105E Table VIII, 50,000 units and over, AQL 0.010: 2
        assert_eq!(t.lookup(1_000_000, 0.010), Some(Limit(2)));
        // From memory: MIL-STD-105E Table VIII, 130–199 units, AQL 0.65: * (too few units)
        assert_eq!(t.lookup(130, 0.65), Some(TooFewUnits));
        // Fewer units than the first row: too few as well; an AQL outside the series: none.
        assert_eq!(t.lookup(10, 65.0), Some(TooFewUnits));
        assert_eq!(t.lookup(500, 0.7), None);
        // Common practice, no published source: the table ends its rows on the right (shipped as `-`).
        assert_eq!(t.lookup(2000, 65.0), Some(NotGiven));
    }

    #[test]
    fn table_eight_is_stricter_than_a_poisson_rule_on_the_exact_total() {
        // Five lots of 125 and five of 200 at AQL 1.0 %: 1625 units.
        let mut lots: Vec<_> = (0..10)
            .map(|i| LotOutcome { sample_size: if i % 2 == 0 { 125 } else { 200 }, ..lot(true, 0) })
            .collect();
        // Source: statrs Poisson CDF: at mean 16.25 the largest L with P(X ≤ L) < 0.10 exceeds 8,
        // so the earlier rule on the exact total allowed 8 defectives.
        use statrs::distribution::{DiscreteCDF, Poisson};
        let poisson = Poisson::new(16.25).unwrap();
        assert!(poisson.cdf(8) < 0.10);
        // From memory: MIL-STD-105E Table VIII, 1250–1999 units, AQL 1.0: 7. With 8 defectives in
        // all the lots stay on normal inspection.
        for l in lots.iter_mut().take(8) {
            l.defectives = 1;
        }
        let mut s = SwitchingState::new();
        assert!(feed(&mut s, &lots, &STEADY).iter().all(Option::is_none));
        assert_eq!(s.severity, Severity::Normal);
        // With 7 the switch is made.
        lots[7].defectives = 0;
        let mut s = SwitchingState::new();
        assert_eq!(feed(&mut s, &lots, &STEADY)[9], Some(Transition::ToReduced));
    }

    #[test]
    fn too_few_units_use_more_than_ten_lots() {
        // Lots of 13 at AQL 1.0: ten make 130 units, a `*` cell; sixteen make 208, where the
        // limit number is 0.
        // From memory: MIL-STD-105E Table VIII, 130–199 units, AQL 1.0: *; 200–319 units: 0; and
        // its note: more than ten lots may be used, the most recent, all on normal, none rejected.
        let small = |defectives| LotOutcome {
            accepted: true,
            between_ac_and_re: false,
            sample_size: 13,
            defectives,
            aql_pct: 1.0,
        };
        let mut s = SwitchingState::new();
        let t = feed(&mut s, &vec![small(0); 16], &STEADY);
        assert!(t[..15].iter().all(Option::is_none), "{t:?}");
        assert_eq!(t[15], Some(Transition::ToReduced));
        // One defective among them: the limit 0 is exceeded, so no switch.
        let mut lots = vec![small(0); 16];
        lots[3].defectives = 1;
        let mut s = SwitchingState::new();
        assert!(feed(&mut s, &lots, &STEADY).iter().all(Option::is_none));
        // A rejection breaks the run: the lots before it do not count.
        let mut s = SwitchingState::new();
        let mut lots = vec![small(0); 5];
        lots.push(LotOutcome { accepted: false, ..small(1) });
        lots.extend(vec![small(0); 15]);
        assert!(feed(&mut s, &lots, &STEADY).iter().all(Option::is_none));
        assert_eq!(feed(&mut s, &[small(0)], &STEADY)[0], Some(Transition::ToReduced));
    }

    #[test]
    fn limit_table_is_validated() {
        let aqls = [1.0, 2.5, 4.0];
        let row = |range: &str, cells: &str| (range.to_string(), cells.to_string());
        let ok = LimitNumbers::from_rows(&aqls, &[row("20-49", "* 0 1"), row("50-", "0 2 3")]).unwrap();
        assert_eq!(ok.rows.len(), 2);
        for (rows, needle) in [
            (vec![row("20-49", "* 0"), row("50-", "0 2 3")], "2 cells for 3 AQLs"),
            (vec![row("20-49", "0 * 1"), row("50-", "0 2 3")], "cells must run"),
            (vec![row("20-49", "* 2 1"), row("50-", "0 2 3")], "must not fall as the AQL grows"),
            (vec![row("20-49", "* 0 5"), row("50-", "0 2 3")], "must not fall as the sample units grow"),
            (vec![row("20-49", "0 0 1"), row("50-", "* 2 3")], "`*` below a number"),
            (vec![row("20-49", "* 0 1"), row("60-", "0 2 3")], "right after the previous"),
            (vec![row("20-49", "* 0 1"), row("50-99", "0 2 3")], "open-ended"),
            (vec![row("20-49", "* x 1"), row("50-", "0 2 3")], "not a limit number"),
        ] {
            let err = LimitNumbers::from_rows(&aqls, &rows).unwrap_err();
            assert!(err.contains(needle), "{err}");
        }
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
