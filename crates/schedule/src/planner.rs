//! The planner: eligibility, the reference checks, list dispatching, and turning rig
//! sequences into a timed plan.

use crate::atcs::{atcs_log_index, AtcsParams, AtcsTerms, InstanceFactors};
use crate::eligibility::{ceil_seconds, judge, pick_arbor, processing_s, time_refusal};
use crate::input::{Job, PlanError, ShiftWindow};
use crate::plan::{Assignment, Check, Metrics, Plan, Unscheduled};
use crate::refusal::{Refusal, RigRefusal, Unplanned};
use crate::search::{improve, Budget};
use serde::Serialize;
use std::cmp::Ordering;
use std::collections::{BTreeMap, BTreeSet};
use twistlot_model::Rig;

/// A lot on a rig it may use.
#[derive(Debug, Clone, Copy)]
pub(crate) struct OnRig {
    /// Time to test all samples, s (rounded up to the whole second).
    pub processing_s: i64,
    /// Largest arbor that fits, mm.
    pub arbor_mm: f64,
    /// Setup family: fixture and arbor; consecutive lots of one family need no setup.
    pub family: u32,
}

/// A rig as the planner sees it: times in seconds from the shift start.
#[derive(Debug, Clone)]
pub(crate) struct RigCtx {
    pub name: String,
    /// False when the rig cannot be used at all in this shift (data missing, no time).
    pub usable: bool,
    /// Start of its free hours (inside the shift).
    pub start_s: i64,
    /// End of the reference check: the first moment a lot may take the rig.
    pub check_end_s: i64,
    /// No slot may end after this: the end of its free hours, the shift's end, or its calibration.
    pub limit_s: i64,
    /// Setup per fixture or arbor change, s.
    pub setup_s: i64,
    /// Reference spring serial.
    pub reference: String,
}

/// A lot as the planner sees it.
#[derive(Debug, Clone)]
pub(crate) struct JobCtx {
    pub ready_s: i64,
    pub due_s: Option<i64>,
    /// Weight in thousandths, so sums are exact and plans compare without rounding.
    pub weight_milli: i64,
    /// Per rig: how the lot runs there, or `None` when the rig refuses it.
    pub on: Vec<Option<OnRig>>,
    /// Rigs that may test it.
    pub eligible: Vec<usize>,
}

/// Times of one lot's slot on a rig, s from the shift start.
#[derive(Debug, Clone, Copy)]
pub(crate) struct Slot {
    pub start_s: i64,
    pub test_start_s: i64,
    pub end_s: i64,
    pub setup_s: i64,
}

/// One rig's share of a plan's score.
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq)]
pub(crate) struct RigEval {
    /// Weight (thousandths) of the lots in its sequence that do not fit before its limit.
    pub out_w: i64,
    /// Σ weight (thousandths) × tardiness, s.
    pub wt: i128,
    /// End of its last lot (0 when it has none).
    pub last_end: i64,
    /// Σ ends of its lots.
    pub sum_end: i64,
}

/// What a plan is judged by, compared field by field in this order: weight of the lots
/// left out, then weighted tardiness, then makespan, then the sum of lot ends (which
/// keeps a plan compact when the first three tie).
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq, PartialOrd, Ord)]
pub struct Score {
    /// Σ weight of lots left out, in thousandths.
    pub unscheduled_weight_milli: i64,
    /// Σ weight × tardiness, in thousandths of weight·s.
    pub weighted_tardiness_milli: i128,
    /// End of the last lot, s from the shift start.
    pub makespan_s: i64,
    /// Σ of the lots' ends, s from the shift start.
    pub total_end_s: i64,
}

/// What a dispatch rule sees of a lot when a rig comes free.
#[derive(Debug, Clone, Serialize)]
pub struct JobView<'a> {
    /// Lot.
    pub lot: &'a str,
    /// Part number.
    pub part: &'a str,
    /// Parts to test.
    pub samples: u32,
    /// Weight.
    pub weight: f64,
    /// Coiler that made it.
    pub coiler: Option<&'a str>,
    /// The rig that is free.
    pub rig: &'a str,
    /// When the rig is free, s from the shift start.
    pub now_s: i64,
    /// When the lot is ready, s from the shift start.
    pub ready_s: i64,
    /// When it must ship, s from the shift start.
    pub due_s: Option<i64>,
    /// Time to test it on this rig, s.
    pub processing_s: i64,
    /// Setup it would need after the rig's last lot, s.
    pub setup_s: i64,
    /// due − processing − now, s (negative: it will be late).
    pub slack_s: Option<i64>,
    /// Largest test torque, N·mm.
    pub max_torque_nmm: f64,
    /// Largest test angle, degrees.
    pub max_angle_deg: f64,
    /// The ATCS index with the planner's parameters (0 for a lot with no due time).
    pub atcs: f64,
}

/// The priority that orders lots when a rig comes free (higher goes first).
#[derive(Clone, Copy)]
pub enum Rule<'a> {
    /// The ATCS index (Lee, Bhaskaran & Pinedo 1997).
    Atcs,
    /// Earliest due time first.
    Edd,
    /// A caller's priority over the lot's fields (a `dispatch-rule` plugin's
    /// expression). NaN ranks lowest: a caller whose expression fails on a lot can
    /// note the error and return NaN, and report it after planning.
    Custom(&'a dyn Fn(&JobView<'_>) -> f64),
}

impl Rule<'_> {
    /// The rule's name in [`Plan::method`].
    pub fn name(&self) -> &'static str {
        match self {
            Rule::Atcs => "atcs",
            Rule::Edd => "edd",
            Rule::Custom(_) => "custom",
        }
    }
}

impl std::fmt::Debug for Rule<'_> {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str(self.name())
    }
}

/// How to plan: the dispatch rule, and the local search's budget (none: plain dispatch).
#[derive(Debug, Clone, Copy)]
pub struct PlanOptions<'a> {
    /// Priority for the first plan.
    pub rule: Rule<'a>,
    /// Improve the first plan by local search within this budget.
    pub search: Option<Budget>,
}

impl Default for PlanOptions<'_> {
    fn default() -> Self {
        PlanOptions { rule: Rule::Atcs, search: Some(Budget::default()) }
    }
}

/// A prepared planning problem: the shift, the rigs and the lots, with every lot's
/// eligibility per rig worked out once. Plans are then made with [`Planner::plan`],
/// [`Planner::dispatch`] or [`Planner::fixed`].
///
/// Model: each rig first runs its reference-spring check, from the start of its free
/// hours in the shift; then its lots one after another. A lot's tests start no earlier
/// than its ready time, and the rig's first lot and every lot whose fixture or arbor
/// differs from the previous lot's is preceded by the rig's `setup_s` (the reference
/// spring's fixture comes off before the first lot). Testing a lot takes
/// samples × (handling_s + 2 × cycles × angle / speed): each part is loaded, driven out
/// to the largest angle and back (loading and unloading stroke) once per cycle, and
/// unloaded; rounded up to the whole second. No slot may end after the rig's free hours,
/// the shift's end or the rig's calibration due time.
#[derive(Debug, Clone)]
pub struct Planner {
    shift: ShiftWindow,
    source: Vec<Job>,
    pub(crate) rigs: Vec<RigCtx>,
    pub(crate) jobs: Vec<JobCtx>,
    refusals: Vec<RigRefusal>,
    factors: InstanceFactors,
    atcs: AtcsParams,
    mean_processing_s: f64,
    mean_setup_s: f64,
}

impl Planner {
    /// Prepares a problem. Refuses input it cannot plan with (an empty shift, a lot or
    /// rig given twice, a rig record that does not validate, a lot with no samples or
    /// with numbers that are not positive).
    pub fn new(shift: ShiftWindow, rigs: &[Rig], jobs: &[Job]) -> Result<Planner, PlanError> {
        if shift.end <= shift.start {
            return Err(PlanError::EmptyShift { start: shift.start, end: shift.end });
        }
        let mut names = BTreeSet::new();
        for rig in rigs {
            if !names.insert(rig.name.as_str()) {
                return Err(PlanError::DuplicateRig(rig.name.clone()));
            }
            rig.check().map_err(|e| PlanError::BadRig {
                rig: rig.name.clone(),
                field: e.field,
                message: e.message,
            })?;
        }
        let mut lots = BTreeSet::new();
        for job in jobs {
            if !lots.insert(job.lot.as_str()) {
                return Err(PlanError::DuplicateLot(job.lot.clone()));
            }
            job.check()?;
        }
        let origin = shift.start;
        let horizon_s = shift.end.seconds_since(origin);
        let at = |s: i64| origin.checked_add_seconds(s).unwrap_or(shift.end);

        // Each rig: its window, its check, or the refusal that applies to every lot.
        let mut contexts = Vec::with_capacity(rigs.len());
        let mut rig_refusals: Vec<Option<Refusal>> = Vec::with_capacity(rigs.len());
        for rig in rigs {
            let (from, to) = match &rig.available {
                Some(available) => available.window(origin),
                None => (shift.start, shift.end),
            };
            let start_s = from.seconds_since(origin).clamp(0, horizon_s);
            let free_end_s = to.seconds_since(origin).clamp(0, horizon_s);
            let calibration_s = rig.calibration_due.map_or(i64::MAX, |due| due.seconds_since(origin));
            let limit_s = free_end_s.min(calibration_s);
            let speed = rig.speed_deg_per_s.unwrap_or(f64::NAN);
            let check_s = rig.reference.as_ref().map_or(0, |reference| {
                ceil_seconds(rig.handling_s + 2.0 * reference.check_angle_deg / speed)
            });
            let check_end_s = start_s.saturating_add(check_s);
            let missing = rig.missing_for_planning();
            let refusal = if !missing.is_empty() {
                Some(Refusal::MissingRigData { fields: missing })
            } else {
                time_refusal(rig, check_end_s, calibration_s, free_end_s, &at)
            };
            contexts.push(RigCtx {
                name: rig.name.clone(),
                usable: refusal.is_none(),
                start_s,
                check_end_s,
                limit_s,
                setup_s: ceil_seconds(rig.setup_s),
                reference: rig.reference.as_ref().map(|r| r.serial.clone()).unwrap_or_default(),
            });
            rig_refusals.push(refusal);
        }

        let mut families: BTreeMap<(String, u64), u32> = BTreeMap::new();
        let mut refusals = Vec::new();
        let mut job_contexts = Vec::with_capacity(jobs.len());
        for job in jobs {
            let ready_s = job.ready.map_or(0, |ready| ready.seconds_since(origin).max(0));
            let mut on = Vec::with_capacity(rigs.len());
            for (r, rig) in rigs.iter().enumerate() {
                let reasons = match &rig_refusals[r] {
                    Some(refusal) => vec![refusal.clone()],
                    None => judge(job, rig, &contexts[r], ready_s, &at),
                };
                if reasons.is_empty() {
                    let arbor_mm = pick_arbor(rig, job.wound_down_inside_d_mm).unwrap_or(0.0);
                    let next = u32::try_from(families.len()).unwrap_or(u32::MAX);
                    let family = *families.entry((job.fixture.clone(), arbor_mm.to_bits())).or_insert(next);
                    on.push(Some(OnRig { processing_s: processing_s(job, rig), arbor_mm, family }));
                } else {
                    on.push(None);
                    refusals.extend(reasons.into_iter().map(|reason| RigRefusal {
                        lot: job.lot.clone(),
                        rig: rig.name.clone(),
                        reason,
                    }));
                }
            }
            let eligible = (0..rigs.len()).filter(|&r| on[r].is_some()).collect();
            job_contexts.push(JobCtx {
                ready_s,
                due_s: job.due.map(|due| due.seconds_since(origin)),
                weight_milli: (job.weight * 1000.0).round().clamp(1.0, 1e12) as i64,
                on,
                eligible,
            });
        }

        let mut planner = Planner {
            shift,
            source: jobs.to_vec(),
            rigs: contexts,
            jobs: job_contexts,
            refusals,
            factors: InstanceFactors {
                makespan_estimate_s: 0.0,
                tightness: 0.0,
                range: 0.0,
                setup_severity: 0.0,
            },
            atcs: AtcsParams { k1: 2.0, k2: 1.0 },
            mean_processing_s: 1.0,
            mean_setup_s: 0.0,
        };
        planner.fit_atcs();
        Ok(planner)
    }

    /// Works out p̄, s̄ and the paper's k1 and k2 for this instance.
    fn fit_atcs(&mut self) {
        let schedulable: Vec<&JobCtx> = self.jobs.iter().filter(|j| !j.eligible.is_empty()).collect();
        let usable: Vec<&RigCtx> = self.rigs.iter().filter(|r| r.usable).collect();
        if schedulable.is_empty() || usable.is_empty() {
            return;
        }
        let mean_of = |job: &JobCtx| {
            job.eligible.iter().filter_map(|&r| job.on[r]).map(|on| on.processing_s as f64).sum::<f64>()
                / job.eligible.len() as f64
        };
        let total_p: f64 = schedulable.iter().map(|j| mean_of(j)).sum();
        let n = schedulable.len() as f64;
        self.mean_processing_s = (total_p / n).max(1.0);
        self.mean_setup_s = usable.iter().map(|r| r.setup_s as f64).sum::<f64>() / usable.len() as f64;
        // The paper's single-machine estimate Σp + n·s̄, spread over the usable rigs.
        let makespan = ((total_p + n * self.mean_setup_s) / usable.len() as f64).max(1.0);
        let dues: Vec<f64> = schedulable.iter().filter_map(|j| j.due_s).map(|d| d as f64).collect();
        let (tightness, range) = if dues.is_empty() {
            (0.0, 0.0)
        } else {
            let mean = dues.iter().sum::<f64>() / dues.len() as f64;
            let max = dues.iter().copied().fold(f64::MIN, f64::max);
            let min = dues.iter().copied().fold(f64::MAX, f64::min);
            (1.0 - mean / makespan, (max - min) / makespan)
        };
        self.factors = InstanceFactors {
            makespan_estimate_s: makespan,
            tightness,
            range,
            setup_severity: self.mean_setup_s / self.mean_processing_s,
        };
        self.atcs = AtcsParams::from_factors(&self.factors);
    }

    /// Replaces the ATCS look-ahead parameters fitted from the instance.
    pub fn with_atcs(mut self, params: AtcsParams) -> Planner {
        self.atcs = params;
        self
    }

    /// The ATCS look-ahead parameters in use.
    pub fn atcs_params(&self) -> AtcsParams {
        self.atcs
    }

    /// The instance's due-date tightness, range and setup severity the parameters were fitted on.
    pub fn instance_factors(&self) -> InstanceFactors {
        self.factors
    }

    /// The lots, as given.
    pub fn jobs(&self) -> &[Job] {
        &self.source
    }

    /// Every rig's refusal of every lot it may not test.
    pub fn refusals(&self) -> &[RigRefusal] {
        &self.refusals
    }

    /// Indices (into the rigs as given) of the rigs that may test job `job`.
    pub fn eligible_rigs(&self, job: usize) -> &[usize] {
        self.jobs.get(job).map_or(&[], |j| j.eligible.as_slice())
    }

    /// Plans the shift: dispatches by `options.rule`, then improves by local search
    /// when `options.search` gives a budget.
    pub fn plan(&self, options: &PlanOptions<'_>) -> Plan {
        let (sequences, pool) = self.dispatch_sequences(&options.rule);
        match &options.search {
            None => self.build(&sequences, &pool, options.rule.name().to_string(), 0),
            Some(budget) => {
                let (sequences, pool, evaluations) = improve(self, sequences, pool, budget);
                self.build(&sequences, &pool, format!("{}+local-search", options.rule.name()), evaluations)
            }
        }
    }

    /// The plain list-scheduling plan of a rule, without improvement (for comparison).
    pub fn dispatch(&self, rule: &Rule<'_>) -> Plan {
        self.plan(&PlanOptions { rule: *rule, search: None })
    }

    /// The plan for given rig sequences: `sequences[r]` lists job indices (into the jobs
    /// as given) in the order rig `r` tests them. Lots in no sequence, and lots that do
    /// not fit before their rig's limit, are left out.
    pub fn fixed(&self, sequences: &[Vec<usize>]) -> Result<Plan, PlanError> {
        let pool = self.check_sequences(sequences)?;
        Ok(self.build(sequences, &pool, "fixed".to_string(), 0))
    }

    /// The score of given rig sequences (as [`Planner::fixed`] takes them).
    pub fn score(&self, sequences: &[Vec<usize>]) -> Result<Score, PlanError> {
        let pool = self.check_sequences(sequences)?;
        let pool_w = pool.iter().map(|&j| self.jobs[j].weight_milli).sum();
        let evals: Vec<RigEval> = sequences
            .iter()
            .enumerate()
            .map(|(r, seq)| self.run_rig(r, seq.iter().copied(), |_, _| {}))
            .collect();
        Ok(combine(&evals, pool_w))
    }

    /// Checks sequences and returns the schedulable lots in none of them.
    fn check_sequences(&self, sequences: &[Vec<usize>]) -> Result<Vec<usize>, PlanError> {
        let bad = PlanError::BadSequence;
        if sequences.len() != self.rigs.len() {
            return Err(bad(format!(
                "give one sequence per rig ({}), found {}",
                self.rigs.len(),
                sequences.len()
            )));
        }
        let mut placed = vec![false; self.jobs.len()];
        for (r, sequence) in sequences.iter().enumerate() {
            for &j in sequence {
                let Some(job) = self.jobs.get(j) else {
                    return Err(bad(format!("job index {j} is out of range")));
                };
                if placed[j] {
                    return Err(bad(format!("lot `{}` is in two places", self.source[j].lot)));
                }
                if job.on[r].is_none() {
                    return Err(bad(format!(
                        "rig `{}` may not test lot `{}`",
                        self.rigs[r].name, self.source[j].lot
                    )));
                }
                placed[j] = true;
            }
        }
        Ok((0..self.jobs.len()).filter(|&j| !placed[j] && !self.jobs[j].eligible.is_empty()).collect())
    }

    /// Runs rig `r` through `sequence`, calling `emit` with each lot and its slot (or
    /// `None` when it does not fit before the rig's limit and is skipped).
    pub(crate) fn run_rig(
        &self,
        r: usize,
        sequence: impl IntoIterator<Item = usize>,
        mut emit: impl FnMut(usize, Option<Slot>),
    ) -> RigEval {
        let rig = &self.rigs[r];
        let mut eval = RigEval::default();
        let mut free = rig.check_end_s;
        let mut last_family = None;
        for j in sequence {
            let job = &self.jobs[j];
            let Some(on) = job.on[r] else {
                eval.out_w += job.weight_milli;
                emit(j, None);
                continue;
            };
            let setup_s = if last_family == Some(on.family) { 0 } else { rig.setup_s };
            let test_start_s = (free + setup_s).max(job.ready_s);
            let end_s = test_start_s + on.processing_s;
            if end_s > rig.limit_s {
                eval.out_w += job.weight_milli;
                emit(j, None);
                continue;
            }
            free = end_s;
            last_family = Some(on.family);
            if let Some(due) = job.due_s {
                eval.wt += i128::from(job.weight_milli) * i128::from((end_s - due).max(0));
            }
            eval.last_end = end_s;
            eval.sum_end += end_s;
            emit(j, Some(Slot { start_s: test_start_s - setup_s, test_start_s, end_s, setup_s }));
        }
        eval
    }

    /// List scheduling: whenever a rig comes free, the lot of highest priority among
    /// those it may test and that are ready goes to the eligible rig that would finish
    /// it first.
    fn dispatch_sequences(&self, rule: &Rule<'_>) -> (Vec<Vec<usize>>, Vec<usize>) {
        let m = self.rigs.len();
        let mut free: Vec<i64> = self.rigs.iter().map(|r| r.check_end_s).collect();
        let mut last_family: Vec<Option<u32>> = vec![None; m];
        let mut sequences: Vec<Vec<usize>> = vec![Vec::new(); m];
        let mut waiting: Vec<usize> =
            (0..self.jobs.len()).filter(|&j| !self.jobs[j].eligible.is_empty()).collect();
        let mut pool = Vec::new();
        let setup_on = |r: usize, family: u32, last: &[Option<u32>]| {
            if last[r] == Some(family) {
                0
            } else {
                self.rigs[r].setup_s
            }
        };
        loop {
            // The rig that comes free first among those with a waiting lot they may test.
            let rig = (0..m)
                .filter(|&r| self.rigs[r].usable && free[r] < self.rigs[r].limit_s)
                .filter(|&r| waiting.iter().any(|&j| self.jobs[j].on[r].is_some()))
                .min_by_key(|&r| (free[r], r));
            let Some(r) = rig else { break };
            let first_ready = waiting
                .iter()
                .filter(|&&j| self.jobs[j].on[r].is_some())
                .map(|&j| self.jobs[j].ready_s)
                .min()
                .unwrap_or(free[r]);
            let now = free[r].max(first_ready);
            let mut best: Option<(usize, (f64, f64))> = None;
            for (position, &j) in waiting.iter().enumerate() {
                let job = &self.jobs[j];
                let Some(on) = job.on[r] else { continue };
                if job.ready_s > now {
                    continue;
                }
                let key = self.priority(rule, j, r, on, setup_on(r, on.family, &last_family), now);
                let better = match &best {
                    None => true,
                    Some((other, other_key)) => self.ranks_before(j, key, waiting[*other], *other_key),
                };
                if better {
                    best = Some((position, key));
                }
            }
            let Some((position, _)) = best else { break };
            let j = waiting.remove(position);
            // The eligible rig that would finish it first.
            let job = &self.jobs[j];
            let target = job
                .eligible
                .iter()
                .filter_map(|&r2| {
                    let on = job.on[r2]?;
                    let end =
                        (free[r2] + setup_on(r2, on.family, &last_family)).max(job.ready_s) + on.processing_s;
                    (end <= self.rigs[r2].limit_s).then_some((end, free[r2], r2))
                })
                .min();
            match target {
                Some((end, _, r2)) => {
                    sequences[r2].push(j);
                    free[r2] = end;
                    last_family[r2] = job.on[r2].map(|on| on.family);
                }
                None => pool.push(j),
            }
        }
        pool.extend(waiting);
        pool.sort_unstable();
        (sequences, pool)
    }

    /// The rule's priority of job `j` on rig `r` at `now` (primary, secondary); higher first.
    fn priority(&self, rule: &Rule<'_>, j: usize, r: usize, on: OnRig, setup_s: i64, now: i64) -> (f64, f64) {
        let job = &self.jobs[j];
        let source = &self.source[j];
        let wspt = (source.weight / on.processing_s.max(1) as f64).ln();
        let atcs_log = match job.due_s {
            Some(due) => atcs_log_index(&AtcsTerms {
                weight: source.weight,
                processing_s: on.processing_s.max(1) as f64,
                due_s: due as f64,
                now_s: now as f64,
                setup_s: setup_s as f64,
                k1: self.atcs.k1,
                k2: self.atcs.k2,
                mean_processing_s: self.mean_processing_s,
                mean_setup_s: self.mean_setup_s,
            }),
            None => f64::NEG_INFINITY,
        };
        let sane = |value: f64| if value.is_nan() { f64::NEG_INFINITY } else { value };
        match rule {
            Rule::Atcs => (sane(atcs_log), wspt),
            Rule::Edd => (job.due_s.map_or(f64::NEG_INFINITY, |d| -(d as f64)), 0.0),
            Rule::Custom(priority) => {
                let view = JobView {
                    lot: &source.lot,
                    part: &source.part,
                    samples: source.samples,
                    weight: source.weight,
                    coiler: source.coiler.as_deref(),
                    rig: &self.rigs[r].name,
                    now_s: now,
                    ready_s: job.ready_s,
                    due_s: job.due_s,
                    processing_s: on.processing_s,
                    setup_s,
                    slack_s: job.due_s.map(|d| d - on.processing_s - now),
                    max_torque_nmm: source.max_torque_nmm,
                    max_angle_deg: source.max_angle_deg,
                    atcs: atcs_log.exp(),
                };
                (sane(priority(&view)), 0.0)
            }
        }
    }

    /// True when job `a` with `key_a` goes before job `b` with `key_b`: higher priority,
    /// then earlier due time, then earlier in the lot list.
    fn ranks_before(&self, a: usize, key_a: (f64, f64), b: usize, key_b: (f64, f64)) -> bool {
        let by_key = key_a.0.total_cmp(&key_b.0).then(key_a.1.total_cmp(&key_b.1));
        match by_key {
            Ordering::Greater => true,
            Ordering::Less => false,
            Ordering::Equal => {
                let due = |j: usize| self.jobs[j].due_s.unwrap_or(i64::MAX);
                (due(a), a) < (due(b), b)
            }
        }
    }

    /// Turns rig sequences into the plan with its metrics and lower bounds.
    pub(crate) fn build(
        &self,
        sequences: &[Vec<usize>],
        pool: &[usize],
        method: String,
        evaluations: u64,
    ) -> Plan {
        let origin = self.shift.start;
        let at = |s: i64| origin.checked_add_seconds(s).unwrap_or(self.shift.end);
        let mut assignments = Vec::new();
        let mut placed = vec![false; self.jobs.len()];
        let mut evals = Vec::with_capacity(self.rigs.len());
        for (r, sequence) in sequences.iter().enumerate() {
            let eval = self.run_rig(r, sequence.iter().copied(), |j, slot| {
                let Some(slot) = slot else { return };
                let (job, source) = (&self.jobs[j], &self.source[j]);
                placed[j] = true;
                assignments.push(Assignment {
                    lot: source.lot.clone(),
                    part: source.part.clone(),
                    rig: self.rigs[r].name.clone(),
                    samples: source.samples,
                    start: at(slot.start_s),
                    test_start: at(slot.test_start_s),
                    end: at(slot.end_s),
                    setup_s: slot.setup_s,
                    start_s: slot.start_s,
                    end_s: slot.end_s,
                    arbor_mm: job.on[r].map_or(0.0, |on| on.arbor_mm),
                    fixture: source.fixture.clone(),
                    due: source.due,
                    tardiness_s: job.due_s.map_or(0, |due| (slot.end_s - due).max(0)),
                    weight: source.weight,
                });
            });
            evals.push(eval);
        }
        let pool_w: i64 = pool.iter().map(|&j| self.jobs[j].weight_milli).sum();
        let score = combine(&evals, pool_w);
        let checks = self
            .rigs
            .iter()
            .filter(|rig| rig.usable)
            .map(|rig| Check {
                rig: rig.name.clone(),
                reference: rig.reference.clone(),
                start: at(rig.start_s),
                end: at(rig.check_end_s),
                start_s: rig.start_s,
                end_s: rig.check_end_s,
            })
            .collect();
        let mut unscheduled = Vec::new();
        let mut unscheduled_weight = 0.0;
        for (j, job) in self.jobs.iter().enumerate() {
            if placed[j] {
                continue;
            }
            let source = &self.source[j];
            unscheduled_weight += source.weight;
            let reason = if job.eligible.is_empty() {
                Unplanned::NoEligibleRig {
                    refusals: self.refusals.iter().filter(|r| r.lot == source.lot).cloned().collect(),
                }
            } else {
                Unplanned::NoTimeLeft {
                    rigs: job.eligible.iter().map(|&r| self.rigs[r].name.clone()).collect(),
                }
            };
            unscheduled.push(Unscheduled {
                lot: source.lot.clone(),
                part: source.part.clone(),
                samples: source.samples,
                reason,
            });
        }
        let bounds = self.lower_bounds(&placed);
        let metrics = Metrics {
            weighted_tardiness_s: score.weighted_tardiness_milli as f64 / 1000.0,
            makespan_s: score.makespan_s,
            makespan_lower_bound_s: bounds.chain_s.max(bounds.work_s),
            chain_lower_bound_s: bounds.chain_s,
            work_lower_bound_s: bounds.work_s,
            weighted_tardiness_lower_bound_s: bounds.weighted_tardiness_milli as f64 / 1000.0,
            unscheduled_weight,
            lots_assigned: assignments.len(),
            lots_unscheduled: unscheduled.len(),
            total_setup_s: assignments.iter().map(|a| a.setup_s).sum(),
            evaluations,
        };
        Plan {
            method,
            shift_start: self.shift.start,
            shift_end: self.shift.end,
            assignments,
            checks,
            unscheduled,
            refusals: self.refusals.clone(),
            metrics,
        }
    }
}

/// A plan's score from its rigs' shares and the weight of the lots in no sequence.
pub(crate) fn combine(evals: &[RigEval], pool_w: i64) -> Score {
    let mut score = Score { unscheduled_weight_milli: pool_w, ..Score::default() };
    for eval in evals {
        score.unscheduled_weight_milli += eval.out_w;
        score.weighted_tardiness_milli += eval.wt;
        score.makespan_s = score.makespan_s.max(eval.last_end);
        score.total_end_s += eval.sum_end;
    }
    score
}
