//! Lower bounds reported beside a plan's figures, so its quality can be judged.

use crate::planner::Planner;

/// Lower bounds of a plan.
#[derive(Debug, Clone, Copy, Default)]
pub(crate) struct Bounds {
    pub chain_s: i64,
    pub work_s: i64,
    pub weighted_tardiness_milli: i128,
}

impl Planner {
    /// Lower bounds for plans that place the lots marked in `placed`.
    pub(crate) fn lower_bounds(&self, placed: &[bool]) -> Bounds {
        let mut bounds = Bounds::default();
        let usable: Vec<usize> = (0..self.rigs.len()).filter(|&r| self.rigs[r].usable).collect();
        // Each placed lot as (the usable rigs that may test it, as bits; its shortest processing).
        let mut lots: Vec<(u64, i64)> = Vec::new();
        for (j, job) in self.jobs.iter().enumerate() {
            if !placed[j] {
                continue;
            }
            let earliest_end = job
                .eligible
                .iter()
                .filter_map(|&r| {
                    let on = job.on[r]?;
                    Some(job.ready_s.max(self.rigs[r].check_end_s + self.rigs[r].setup_s) + on.processing_s)
                })
                .min()
                .unwrap_or(0);
            bounds.chain_s = bounds.chain_s.max(earliest_end);
            if let Some(due) = job.due_s {
                bounds.weighted_tardiness_milli +=
                    i128::from(job.weight_milli) * i128::from((earliest_end - due).max(0));
            }
            let mask = usable
                .iter()
                .enumerate()
                .filter(|(_, &r)| job.on[r].is_some())
                .fold(0u64, |mask, (bit, _)| if bit < 64 { mask | (1u64 << bit) } else { mask });
            let shortest =
                job.eligible.iter().filter_map(|&r| job.on[r]).map(|on| on.processing_s).min().unwrap_or(0);
            lots.push((mask, shortest));
        }
        // Work bound: for a group of rigs, the lots only that group may test must fit on it,
        // each rig working from its first free moment. Every group when there are few rigs;
        // otherwise all rigs together and each lot's own group.
        let first_free: Vec<i64> =
            usable.iter().map(|&r| self.rigs[r].check_end_s + self.rigs[r].setup_s).collect();
        if usable.len() > 64 {
            // Too many rigs for a bit set: all rigs together only.
            let work = lots.iter().map(|(_, p)| p).sum();
            bounds.work_s = fill_time(&mut first_free.clone(), work);
            return bounds;
        }
        let all = if usable.len() == 64 { u64::MAX } else { (1u64 << usable.len()) - 1 };
        let groups: Vec<u64> = if usable.len() <= 12 {
            (1..=all).collect()
        } else {
            let mut groups: Vec<u64> = lots.iter().map(|(mask, _)| *mask).collect();
            groups.push(all);
            groups.sort_unstable();
            groups.dedup();
            groups
        };
        let first_free: Vec<i64> =
            usable.iter().map(|&r| self.rigs[r].check_end_s + self.rigs[r].setup_s).collect();
        let mut starts = Vec::with_capacity(usable.len());
        for group in groups {
            let work: i64 = lots.iter().filter(|(mask, _)| mask & !group == 0).map(|(_, p)| p).sum();
            if work == 0 {
                continue;
            }
            starts.clear();
            starts.extend(
                (0..usable.len()).filter(|&bit| group & (1u64 << bit) != 0).map(|bit| first_free[bit]),
            );
            bounds.work_s = bounds.work_s.max(fill_time(&mut starts, work));
        }
        bounds
    }
}

/// The least T with Σ max(0, T − start) ≥ work over the rigs' `starts` (rounded up).
fn fill_time(starts: &mut [i64], work: i64) -> i64 {
    starts.sort_unstable();
    let mut sum = 0i64;
    for (k, &start) in starts.iter().enumerate() {
        sum += start;
        let count = k as i64 + 1;
        // With the first `count` rigs working, T = (work + Σ starts) / count, rounded up;
        // it holds when the next rig would not have started yet.
        let t = (work + sum + count - 1) / count;
        let next = starts.get(k + 1).copied().unwrap_or(i64::MAX);
        if t <= next {
            return t.max(start);
        }
    }
    starts.first().map_or(0, |first| first + work)
}
