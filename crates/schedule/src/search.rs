//! Local search over rig sequences: moves and swaps of lots within and between rigs,
//! restarted from small random perturbations (iterated local search) until the budget
//! is spent.
//!
//! A candidate is judged by [`crate::Score`]. Each rig's share of the score is kept, so a
//! move re-runs only the one or two rigs it touches. With a budget in evaluations only,
//! the search is deterministic: the same input and budget give the same plan.

use crate::planner::{combine, Planner, RigEval, Score};
use std::time::{Duration, Instant};

/// How much effort the local search may spend.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Budget {
    /// Candidate rig sequences to evaluate at most; the same budget gives the same plan.
    pub evaluations: u64,
    /// Stop earlier once this much time has passed (the plan then depends on the
    /// machine's speed and load).
    pub time_limit: Option<Duration>,
    /// Seed of the pseudo-random perturbations.
    pub seed: u64,
}

impl Default for Budget {
    /// 2,000,000 evaluations (about a quarter of a second for 200 lots on 12 rigs on
    /// the development machine), no time limit.
    fn default() -> Self {
        Budget { evaluations: 2_000_000, time_limit: None, seed: 0x7157_10f5 }
    }
}

impl Budget {
    /// A budget of `evaluations` only (deterministic).
    pub fn evaluations(evaluations: u64) -> Budget {
        Budget { evaluations, ..Budget::default() }
    }
}

#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Loc {
    Rig(usize),
    Pool,
    Never,
}

#[derive(Debug, Clone)]
struct State {
    seqs: Vec<Vec<usize>>,
    evals: Vec<RigEval>,
    pool_w: i64,
    loc: Vec<Loc>,
}

/// The state's sums, and its three latest rig ends, so a candidate that replaces one
/// or two rigs' shares is scored without going over all rigs.
struct Totals {
    out: i64,
    wt: i128,
    sum_end: i64,
    top: [(i64, usize); 3],
}

impl State {
    fn score(&self) -> Score {
        combine(&self.evals, self.pool_w)
    }

    fn totals(&self) -> Totals {
        let mut totals = Totals { out: 0, wt: 0, sum_end: 0, top: [(0, usize::MAX); 3] };
        for (r, eval) in self.evals.iter().enumerate() {
            totals.out += eval.out_w;
            totals.wt += eval.wt;
            totals.sum_end += eval.sum_end;
            let entry = (eval.last_end, r);
            if entry.0 > totals.top[2].0 {
                totals.top[2] = entry;
                totals.top.sort_by_key(|entry| std::cmp::Reverse(entry.0));
            }
        }
        totals
    }

    fn position(&self, r: usize, j: usize) -> usize {
        self.seqs[r].iter().position(|&x| x == j).unwrap_or(0)
    }

    /// The score with some rigs' shares replaced and the pool's weight changed.
    fn replaced(&self, totals: &Totals, with: &[(usize, RigEval)], pool_w: i64) -> Score {
        let mut score = Score {
            unscheduled_weight_milli: totals.out + pool_w,
            weighted_tardiness_milli: totals.wt,
            makespan_s: 0,
            total_end_s: totals.sum_end,
        };
        for (r, eval) in with {
            let old = &self.evals[*r];
            score.unscheduled_weight_milli += eval.out_w - old.out_w;
            score.weighted_tardiness_milli += eval.wt - old.wt;
            score.total_end_s += eval.sum_end - old.sum_end;
            score.makespan_s = score.makespan_s.max(eval.last_end);
        }
        if let Some((end, _)) = totals.top.iter().find(|(_, r)| !with.iter().any(|(w, _)| w == r)) {
            score.makespan_s = score.makespan_s.max(*end);
        }
        score
    }
}

struct Search<'p> {
    planner: &'p Planner,
    used: u64,
    limit: u64,
    deadline: Option<Instant>,
    stopped: bool,
    scratch: Vec<usize>,
    rng: u64,
    schedulable: Vec<usize>,
}

enum Move {
    ToPool,
    Insert { rig: usize, position: usize, eval: RigEval },
}

impl Search<'_> {
    /// Runs rig `r` on the scratch sequence, counting the evaluation against the budget.
    fn eval(&mut self, r: usize) -> RigEval {
        let eval = self.planner.run_rig(r, self.scratch.iter().copied(), |_, _| {});
        self.used += 1;
        if self.used >= self.limit {
            self.stopped = true;
        }
        if self.used.is_multiple_of(1024) && self.deadline.is_some_and(|deadline| Instant::now() >= deadline)
        {
            self.stopped = true;
        }
        eval
    }

    /// SplitMix64: small, fast and the same on every platform.
    fn next(&mut self) -> u64 {
        self.rng = self.rng.wrapping_add(0x9E37_79B9_7F4A_7C15);
        let mut z = self.rng;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        z ^ (z >> 31)
    }

    fn below(&mut self, n: usize) -> usize {
        if n == 0 {
            0
        } else {
            (self.next() % n as u64) as usize
        }
    }

    /// The best place for job `j` (any position on any rig that may test it, or out of
    /// the plan); applied when it beats where it is. True when it moved.
    fn relocate(&mut self, state: &mut State, j: usize) -> bool {
        let planner = self.planner;
        let weight = planner.jobs[j].weight_milli;
        let totals = state.totals();
        let mut best_score = state.replaced(&totals, &[], state.pool_w);
        let mut best: Option<Move> = None;
        let (from, from_position) = match state.loc[j] {
            Loc::Rig(a) => (Some(a), state.position(a, j)),
            Loc::Pool => (None, 0),
            Loc::Never => return false,
        };
        let mut without: Vec<usize> = Vec::new();
        let mut removed = RigEval::default();
        if let Some(a) = from {
            without = state.seqs[a].clone();
            without.remove(from_position);
            self.scratch.clone_from(&without);
            removed = self.eval(a);
            let score = state.replaced(&totals, &[(a, removed)], state.pool_w + weight);
            if score < best_score {
                best_score = score;
                best = Some(Move::ToPool);
            }
        }
        for &b in &planner.jobs[j].eligible {
            let base: &[usize] = if Some(b) == from { &without } else { &state.seqs[b] };
            for position in 0..=base.len() {
                if self.stopped {
                    break;
                }
                if Some(b) == from && position == from_position {
                    continue;
                }
                self.scratch.clear();
                self.scratch.extend_from_slice(&base[..position]);
                self.scratch.push(j);
                self.scratch.extend_from_slice(&base[position..]);
                let eval = self.eval(b);
                let score = match from {
                    Some(a) if a == b => state.replaced(&totals, &[(b, eval)], state.pool_w),
                    Some(a) => state.replaced(&totals, &[(a, removed), (b, eval)], state.pool_w),
                    None => state.replaced(&totals, &[(b, eval)], state.pool_w - weight),
                };
                if score < best_score {
                    best_score = score;
                    best = Some(Move::Insert { rig: b, position, eval });
                }
            }
        }
        let Some(chosen) = best else { return false };
        if let Some(a) = from {
            state.seqs[a] = without;
            state.evals[a] = removed;
        } else {
            state.pool_w -= weight;
        }
        match chosen {
            Move::ToPool => {
                state.pool_w += weight;
                state.loc[j] = Loc::Pool;
            }
            Move::Insert { rig, position, eval } => {
                state.seqs[rig].insert(position, j);
                state.evals[rig] = eval;
                state.loc[j] = Loc::Rig(rig);
            }
        }
        true
    }

    /// Exchanges jobs `j` and `k` (between rigs, within one, or with a lot out of the
    /// plan) when that beats the current plan. True when it did.
    fn swap(&mut self, state: &mut State, j: usize, k: usize) -> bool {
        let planner = self.planner;
        let totals = state.totals();
        let current = state.replaced(&totals, &[], state.pool_w);
        match (state.loc[j], state.loc[k]) {
            (Loc::Rig(a), Loc::Rig(b)) if a == b => {
                let (i, q) = (state.position(a, j), state.position(a, k));
                self.scratch.clone_from(&state.seqs[a]);
                self.scratch.swap(i, q);
                let eval = self.eval(a);
                if state.replaced(&totals, &[(a, eval)], state.pool_w) < current {
                    state.seqs[a].swap(i, q);
                    state.evals[a] = eval;
                    return true;
                }
            }
            (Loc::Rig(a), Loc::Rig(b)) => {
                if planner.jobs[j].on[b].is_none() || planner.jobs[k].on[a].is_none() {
                    return false;
                }
                let (i, q) = (state.position(a, j), state.position(b, k));
                self.scratch.clone_from(&state.seqs[a]);
                self.scratch[i] = k;
                let eval_a = self.eval(a);
                self.scratch.clone_from(&state.seqs[b]);
                self.scratch[q] = j;
                let eval_b = self.eval(b);
                if state.replaced(&totals, &[(a, eval_a), (b, eval_b)], state.pool_w) < current {
                    state.seqs[a][i] = k;
                    state.seqs[b][q] = j;
                    state.evals[a] = eval_a;
                    state.evals[b] = eval_b;
                    state.loc[j] = Loc::Rig(b);
                    state.loc[k] = Loc::Rig(a);
                    return true;
                }
            }
            (Loc::Pool, Loc::Rig(_)) => return self.replace(state, j, k, &totals, current),
            (Loc::Rig(_), Loc::Pool) => return self.replace(state, k, j, &totals, current),
            _ => {}
        }
        false
    }

    /// Puts `incoming` (out of the plan) in the place of `outgoing` (on a rig).
    fn replace(
        &mut self,
        state: &mut State,
        incoming: usize,
        outgoing: usize,
        totals: &Totals,
        current: Score,
    ) -> bool {
        let Loc::Rig(b) = state.loc[outgoing] else { return false };
        let planner = self.planner;
        let jobs = &planner.jobs;
        if jobs[incoming].on[b].is_none() {
            return false;
        }
        let q = state.position(b, outgoing);
        self.scratch.clone_from(&state.seqs[b]);
        self.scratch[q] = incoming;
        let eval = self.eval(b);
        let pool_w = state.pool_w - jobs[incoming].weight_milli + jobs[outgoing].weight_milli;
        if state.replaced(totals, &[(b, eval)], pool_w) < current {
            state.seqs[b][q] = incoming;
            state.evals[b] = eval;
            state.pool_w = pool_w;
            state.loc[incoming] = Loc::Rig(b);
            state.loc[outgoing] = Loc::Pool;
            return true;
        }
        false
    }

    /// Moves and then swaps until neither improves the plan (or the budget runs out).
    fn descend(&mut self, state: &mut State) {
        let jobs = self.schedulable.clone();
        loop {
            let mut improved = false;
            for &j in &jobs {
                if self.stopped {
                    return;
                }
                improved |= self.relocate(state, j);
            }
            if !improved {
                for (index, &j) in jobs.iter().enumerate() {
                    for &k in &jobs[index + 1..] {
                        if self.stopped {
                            return;
                        }
                        improved |= self.swap(state, j, k);
                    }
                }
            }
            if !improved {
                return;
            }
        }
    }

    /// A few random moves, to leave a local optimum.
    fn perturb(&mut self, state: &mut State) {
        let planner = self.planner;
        let count = 2 + self.below(1 + self.schedulable.len() / 20);
        for _ in 0..count {
            let pick = self.below(self.schedulable.len());
            let j = self.schedulable[pick];
            let eligible = &planner.jobs[j].eligible;
            let from = match state.loc[j] {
                Loc::Rig(a) => Some(a),
                _ => None,
            };
            let to_pool = from.is_some() && self.below(8) == 0;
            let target = eligible[self.below(eligible.len())];
            if let Some(a) = from {
                let position = state.position(a, j);
                state.seqs[a].remove(position);
                self.scratch.clone_from(&state.seqs[a]);
                state.evals[a] = self.eval(a);
            } else {
                state.pool_w -= planner.jobs[j].weight_milli;
            }
            if to_pool {
                state.pool_w += planner.jobs[j].weight_milli;
                state.loc[j] = Loc::Pool;
            } else {
                let position = self.below(state.seqs[target].len() + 1);
                state.seqs[target].insert(position, j);
                self.scratch.clone_from(&state.seqs[target]);
                state.evals[target] = self.eval(target);
                state.loc[j] = Loc::Rig(target);
            }
        }
    }
}

/// Improves rig sequences (and the lots left out, `pool`) within `budget`; returns the
/// best sequences found, the lots then left out, and the evaluations spent.
pub(crate) fn improve(
    planner: &Planner,
    sequences: Vec<Vec<usize>>,
    pool: Vec<usize>,
    budget: &Budget,
) -> (Vec<Vec<usize>>, Vec<usize>, u64) {
    let n = planner.jobs.len();
    let mut loc: Vec<Loc> =
        planner.jobs.iter().map(|job| if job.eligible.is_empty() { Loc::Never } else { Loc::Pool }).collect();
    for (r, sequence) in sequences.iter().enumerate() {
        for &j in sequence {
            loc[j] = Loc::Rig(r);
        }
    }
    let pool_w = pool.iter().map(|&j| planner.jobs[j].weight_milli).sum();
    let evals = sequences
        .iter()
        .enumerate()
        .map(|(r, seq)| planner.run_rig(r, seq.iter().copied(), |_, _| {}))
        .collect();
    let mut state = State { seqs: sequences, evals, pool_w, loc };
    let schedulable: Vec<usize> = (0..n).filter(|&j| state.loc[j] != Loc::Never).collect();
    if schedulable.is_empty() || budget.evaluations == 0 {
        return (state.seqs, pool, 0);
    }
    let mut search = Search {
        planner,
        used: 0,
        limit: budget.evaluations,
        deadline: budget.time_limit.map(|limit| Instant::now() + limit),
        stopped: false,
        scratch: Vec::with_capacity(n),
        rng: budget.seed,
        schedulable,
    };
    search.descend(&mut state);
    let mut best = state.clone();
    let mut best_score = best.score();
    while !search.stopped {
        search.perturb(&mut state);
        search.descend(&mut state);
        let score = state.score();
        if score <= best_score {
            best_score = score;
            best.clone_from(&state);
        } else {
            state.clone_from(&best);
        }
    }
    let pool = (0..n).filter(|&j| best.loc[j] == Loc::Pool).collect();
    (best.seqs, pool, search.used)
}
