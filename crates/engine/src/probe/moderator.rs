//! Moderator values from `at` specifications.
//!
//! Mean, SD (n − 1), minimum, maximum and percentiles (linear interpolation
//! between order statistics) are taken over the estimation sample rows, except
//! when the moderator is a group-level variable: constant within one of the
//! groupings that describe the data's levels (the model's first `fixed`
//! grouping, else its first cluster grouping, else its first `vary` grouping,
//! and every level of the file's `groups` statement). Then they are taken over
//! one value per group, so large groups do not weigh more, at the coarsest
//! such level (fewest groups): a department-level moderator is summarised over
//! departments, even in a model that clusters by team.

use check::{AtSpec, ResolvedModel};
use frame::{Frame, GroupIndex};

use super::contrast::percentile_sorted;
use super::StatsOver;

pub(crate) struct ModeratorStats {
    pub over: (StatsOver, Option<String>),
    /// Sorted values the statistics are over.
    sorted: Vec<f64>,
    pub mean: f64,
    pub sd: f64,
}

impl ModeratorStats {
    /// `w_rows` are the moderator's values on the sample rows `rows` (frame
    /// rows); `groups` are the columns of the file's `groups` levels.
    pub fn new(
        model: &ResolvedModel,
        frame: &Frame,
        rows: &[usize],
        w_rows: &[f64],
        groups: &[usize],
    ) -> Self {
        let mut candidates: Vec<(String, usize)> = model
            .fixed
            .first()
            .or(model.cluster.first())
            .or(model.random.first().map(|r| &r.group))
            .map(|g| (g.name.clone(), g.column))
            .into_iter()
            .collect();
        for &c in groups {
            if !candidates.iter().any(|(_, k)| *k == c) {
                candidates.push((frame.columns()[c].name.clone(), c));
            }
        }
        let mut over = (StatsOver::Rows, None);
        let mut values = w_rows.to_vec();
        for (name, column) in candidates {
            let index = frame.group_index(column);
            if let Some(per_group) = constant_within(&index, rows, w_rows) {
                if over.1.is_none() || per_group.len() < values.len() {
                    over = (StatsOver::Groups, Some(name));
                    values = per_group;
                }
            }
        }
        let (mean, sd) = check::mean_sd(&values);
        values.sort_by(f64::total_cmp);
        ModeratorStats {
            over,
            sorted: values,
            mean,
            sd,
        }
    }

    pub fn value(&self, spec: AtSpec) -> f64 {
        match spec {
            AtSpec::Number(v) => v,
            AtSpec::Sd(k) => self.mean + k * self.sd,
            AtSpec::Mean => self.mean,
            AtSpec::Min => self.sorted.first().copied().unwrap_or(f64::NAN),
            AtSpec::Max => self.sorted.last().copied().unwrap_or(f64::NAN),
            AtSpec::Percentile(p) => percentile_sorted(&self.sorted, p as f64),
        }
    }

    /// A sentence for the notes: over what the statistics of moderator `w` were taken.
    pub fn words(&self, w: &str) -> String {
        match &self.over {
            (StatsOver::Groups, Some(g)) => format!(
                "`{w}` is constant within `{g}`, so its mean, SD and percentiles are over the {} groups",
                check::count(self.sorted.len())
            ),
            _ => format!(
                "the mean, SD and percentiles of `{w}` are over the {} rows of the estimation sample",
                check::count(self.sorted.len())
            ),
        }
    }
}

/// One value per group (in order of first appearance) when the values do not
/// change within any group of the sample rows (exact equality: a group-level
/// variable is copied, not computed), else `None`.
fn constant_within(index: &GroupIndex, rows: &[usize], w: &[f64]) -> Option<Vec<f64>> {
    let mut first = vec![f64::NAN; index.n_groups()];
    let mut order = Vec::new();
    for (&r, &v) in rows.iter().zip(w) {
        let c = index.codes[r] as usize;
        let slot = first.get_mut(c)?;
        if slot.is_nan() {
            *slot = v;
            order.push(c);
        } else if *slot != v {
            return None;
        }
    }
    let per_group: Vec<f64> = order.iter().map(|&c| first[c]).collect();
    (per_group.len() < rows.len()).then_some(per_group)
}
