//! The cluster bootstrap: resample whole clusters with replacement, refit, and
//! recompute a quantity from each draw's coefficients.
//!
//! Clusters are the model's cluster grouping, else its first `fixed` grouping,
//! else the panel unit, else the outermost level of the file's `groups`. The
//! raw design (terms evaluated on the estimation sample, before the within
//! transform) is built once; each draw concatenates the rows of its drawn
//! clusters. A fixed grouping nested in the clusters (firm
//! effects under firm clusters) gets distinct codes for every copy of a
//! duplicated cluster, so each copy has its own effect; a crossed grouping
//! (year effects) keeps its codes, as the copies share those years. Draws are
//! refitted with classical errors (only coefficients are used), in parallel
//! with rayon; each draw's generator is seeded from (seed, draw index), so
//! results do not depend on the number of threads.
//!
//! Intervals are percentile intervals at the requested level (linear
//! interpolation between order statistics). A draw that fails to fit (a
//! collinear resample, a term absorbed in it) is counted and reported; more
//! than 5% failures is an error, as the intervals would then describe a
//! selected subset of resamples.

use check::{ErrorsKind, PanelIndex, ResolvedModel};
use frame::Frame;
use rayon::prelude::*;

use super::contrast::percentile_sorted;
use super::rng::SplitMix64;
use super::ProbeOptions;
use crate::design::{build, Design};
use crate::numeric::{nested_in, GroupCodes};
use crate::{estimate, ModelFit};

pub(crate) struct Resampler<'a> {
    model: ResolvedModel,
    design: Design,
    /// Positions (in `design`) of each cluster's rows.
    clusters: Vec<Vec<usize>>,
    /// Per fixed grouping: whether it is nested in the clusters (relabelled per copy).
    relabel: Vec<bool>,
    labels: Vec<String>,
    pub draws: u32,
    pub seed: u64,
    pub grouping: String,
    options: &'a ProbeOptions<'a>,
}

/// The percentile interval of each quantity, and what happened.
pub(crate) struct BootOut {
    pub intervals: Vec<(f64, f64)>,
    pub notes: Vec<String>,
}

impl<'a> Resampler<'a> {
    pub fn new(
        model: &ResolvedModel,
        fit: &ModelFit,
        frame: &Frame,
        panel: Option<&PanelIndex>,
        (draws, seed): (u32, u64),
        options: &'a ProbeOptions<'a>,
    ) -> Result<Resampler<'a>, String> {
        if draws == 0 {
            return Err(
                "`bootstrap 0` asks for no draws; give at least 1 (2000 is common practice)".into(),
            );
        }
        let design = build(model, frame, panel).map_err(|e| e.message)?;
        let (grouping, codes) = if let Some((g, c)) = design.clusters.first() {
            (format!("`{g}`"), c.clone())
        } else if let Some((g, c)) = design.fixed.first() {
            (format!("`{g}`"), c.clone())
        } else if let Some(p) = panel {
            let ids: Vec<u32> = design.rows.iter().map(|&r| p.unit.codes[r]).collect();
            ("the panel unit".to_string(), GroupCodes::from_ids(&ids))
        } else if let Some(&top) = options.groups.last() {
            // Rows of one group at any level are dependent; resampling the
            // outermost level keeps every such group whole.
            let name = &frame.columns()[top].name;
            let index = frame.group_index(top);
            let ids: Vec<u32> = design.rows.iter().map(|&r| index.codes[r]).collect();
            let missing = ids.iter().filter(|&&c| c == frame::MISSING_CODE).count();
            if missing > 0 {
                return Err(format!(
                    "the bootstrap would resample `{name}`, the outermost level of `groups`, but it is missing in {} rows of model `{}`'s sample; name the grouping with `errors cluster G`",
                    check::count(missing),
                    model.name
                ));
            }
            (
                format!("`{name}` (the outermost level of `groups`)"),
                GroupCodes::from_ids(&ids),
            )
        } else {
            return Err(format!(
                "a cluster bootstrap resamples groups, and model `{}` has none: add `errors cluster G` (or `fixed G`) naming the grouping to resample",
                model.name
            ));
        };
        if codes.n_groups() < 2 {
            return Err(format!(
                "a cluster bootstrap needs at least two groups of {grouping} to resample"
            ));
        }
        let mut clusters = vec![Vec::new(); codes.n_groups()];
        for (pos, &c) in codes.codes.iter().enumerate() {
            clusters[c as usize].push(pos);
        }
        let relabel = design
            .fixed
            .iter()
            .map(|(_, f)| nested_in(f, &codes))
            .collect();
        let mut m = model.clone();
        m.errors = ErrorsKind::Classical;
        m.cluster.clear();
        Ok(Resampler {
            model: m,
            design,
            clusters,
            relabel,
            labels: fit.design.labels.clone(),
            draws,
            seed,
            grouping,
            options,
        })
    }

    /// The design of draw `index`.
    fn draw_design(&self, index: u64) -> Design {
        let mut rng = SplitMix64::for_draw(self.seed, index);
        let g = self.clusters.len();
        let picks: Vec<usize> = (0..g).map(|_| rng.below(g)).collect();
        let n: usize = picks.iter().map(|&c| self.clusters[c].len()).sum();
        let mut pos = Vec::with_capacity(n);
        let mut copy = Vec::with_capacity(n);
        for (k, &c) in picks.iter().enumerate() {
            pos.extend_from_slice(&self.clusters[c]);
            copy.extend(std::iter::repeat_n(k as u32, self.clusters[c].len()));
        }
        let d = &self.design;
        let gather = |v: &[f64]| -> Vec<f64> { pos.iter().map(|&p| v[p]).collect() };
        let fixed = d
            .fixed
            .iter()
            .zip(&self.relabel)
            .map(|((name, codes), &relabel)| {
                let ids: Vec<u32> = if relabel {
                    let ng = codes.n_groups() as u32;
                    pos.iter()
                        .zip(&copy)
                        .map(|(&p, &k)| k * ng + codes.codes[p])
                        .collect()
                } else {
                    pos.iter().map(|&p| codes.codes[p]).collect()
                };
                (name.clone(), GroupCodes::from_ids(&ids))
            })
            .collect();
        Design {
            rows: pos.iter().map(|&p| d.rows[p]).collect(),
            y: gather(&d.y),
            columns: d.columns.iter().map(|c| gather(c)).collect(),
            labels: d.labels.clone(),
            term_of: d.term_of.clone(),
            intercept: d.intercept,
            fixed,
            clusters: Vec::new(),
            singletons: 0,
        }
    }

    /// The coefficients of one draw in the order of the original fit, or `None`
    /// when the draw cannot be fitted or lacks one of the fit's coefficients.
    fn draw(&self, index: u64) -> Option<Vec<f64>> {
        let design = self.draw_design(index);
        let f = estimate(&self.model, design, &self.options.fit).ok()?;
        if f.design.labels == self.labels {
            return Some(f.coefficients.iter().map(|c| c.estimate).collect());
        }
        self.labels
            .iter()
            .map(|l| {
                f.design
                    .labels
                    .iter()
                    .position(|m| m == l)
                    .map(|j| f.coefficients[j].estimate)
            })
            .collect()
    }

    /// Percentile intervals of the quantities `q(b)` over the draws.
    pub fn run<F>(&self, q: F, level: f64) -> Result<BootOut, String>
    where
        F: Fn(&[f64]) -> Vec<f64> + Sync,
    {
        let results: Vec<Option<Vec<f64>>> = (0..self.draws as u64)
            .into_par_iter()
            .map(|i| {
                let r = self.draw(i).map(|b| q(&b));
                if let Some(cb) = self.options.on_draw {
                    cb();
                }
                r
            })
            .collect();
        let failed = results.iter().filter(|r| r.is_none()).count();
        let ok: Vec<&Vec<f64>> = results.iter().flatten().collect();
        if ok.is_empty() || failed as f64 > 0.05 * self.draws as f64 {
            return Err(format!(
                "{failed} of {} bootstrap draws could not be fitted (resamples that are collinear or lose a term); above 5% the percentile interval would describe a selected subset, so none is given",
                self.draws
            ));
        }
        let k = ok[0].len();
        let (lo, hi) = ((1.0 - level) / 2.0 * 100.0, (1.0 + level) / 2.0 * 100.0);
        let intervals = (0..k)
            .map(|j| {
                let mut v: Vec<f64> = ok.iter().map(|d| d[j]).filter(|x| !x.is_nan()).collect();
                v.sort_by(f64::total_cmp);
                (percentile_sorted(&v, lo), percentile_sorted(&v, hi))
            })
            .collect();
        let mut notes = vec![format!(
            "cluster bootstrap: {} draws of the {} groups of {} (seed {}), percentile intervals",
            self.draws,
            self.clusters.len(),
            self.grouping,
            self.seed
        )];
        if failed > 0 {
            notes.push(format!(
                "{failed} of {} bootstrap draws could not be fitted and were left out",
                self.draws
            ));
        }
        Ok(BootOut { intervals, notes })
    }
}
