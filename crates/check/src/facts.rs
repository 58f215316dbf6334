//! Facts about resolved values over one frame, kept as long as the frame.
//!
//! The checker asks the same questions of the same values again and again:
//! every model that uses `x_w` needs the rows where it is missing and whether
//! it varies within `team`, and the language server checks a model again on
//! every keystroke. Each answer costs a pass over every row of the data; kept
//! here, it costs a lookup, and checking an unchanged model against a million
//! rows becomes a few word-wise operations on row masks.
//!
//! An answer depends only on the frame, the resolved value (with `let` names
//! already inlined) and, for `lag`, `lead` and `diff`, the panel columns. The
//! cache travels with the frame in [`crate::DataView`], so it is never stale:
//! a changed file is read into a new frame, which comes with a new cache.
//!
//! The cache is bounded: when what it holds passes its budget (row masks,
//! panel orderings and the entries themselves; at least 8 MB and 16 bytes per
//! data row), it is emptied and refilled by the next checks.

use std::collections::HashMap;
use std::sync::atomic::{AtomicU64, Ordering};
use std::sync::{Arc, Mutex};

use frame::{ColumnData, GroupIndex, GroupRanges, Mask, NestViolation, MISSING_CODE};

use crate::eval::{Evaluated, Evaluator, PanelIndex};
use crate::value::Value;

/// The panel columns (unit, time) that `lag`, `lead` and `diff` follow.
pub(crate) type PanelKey = Option<(usize, usize)>;

/// A value's identity in the cache: its debug text, which is exact (floats
/// print so that they read back to the same bits, strings are quoted), plus
/// the panel columns when the value shifts along them.
#[derive(Clone, Debug, PartialEq, Eq, Hash)]
struct Key(String);

fn key(v: &Value, panel: PanelKey) -> Key {
    if v.uses_shift() {
        Key(format!("{v:?}@{panel:?}"))
    } else {
        Key(format!("{v:?}"))
    }
}

/// A model's estimation sample, interned: models with the same rows share
/// one mask, and facts on the sample are keyed by its number.
#[derive(Clone, Debug)]
pub(crate) struct Sample {
    id: u64,
    pub rows: Arc<Mask>,
}

/// Whether a product of factors varies over a sample, overall and within
/// each of the groupings asked for (in the order asked).
#[derive(Clone, Debug, PartialEq)]
pub(crate) struct Variation {
    pub varies: bool,
    pub within: Vec<bool>,
}

#[derive(Clone, Debug, PartialEq, Eq, Hash)]
struct ProductKey {
    factors: Vec<(Key, u32)>,
    sample: u64,
}

#[derive(Clone, Debug, Default)]
struct Known {
    varies: bool,
    /// Grouping column and whether the product varies within it.
    within: Vec<(usize, bool)>,
}

#[derive(Default)]
struct Inner {
    /// Rows where the value is missing; `None` when none is.
    missing: HashMap<Key, Option<Arc<Mask>>>,
    /// Rows a condition keeps (defined and non-zero); `None` when it keeps all.
    kept: HashMap<Key, Option<Arc<Mask>>>,
    samples: HashMap<Arc<Mask>, u64>,
    products: HashMap<ProductKey, Known>,
    /// `log` (true) or `sqrt` of a value: rows where it is undefined, and the first.
    domains: HashMap<(Key, bool), (usize, Option<usize>)>,
    levels: HashMap<Key, Option<Arc<Vec<String>>>>,
    clusters: HashMap<(usize, u64), usize>,
    nesting: HashMap<(usize, usize), Arc<Vec<NestViolation>>>,
    panels: HashMap<(usize, usize), Arc<PanelIndex>>,
    bytes: usize,
}

/// The cache of facts for one frame; shared by every check of it.
pub struct Facts {
    inner: Mutex<Inner>,
    budget: usize,
}

/// Sample numbers are never reused, even after the cache is emptied, so a
/// number held by a caller cannot come to mean other rows.
static NEXT_SAMPLE: AtomicU64 = AtomicU64::new(1);

impl std::fmt::Debug for Facts {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        let inner = self.lock();
        f.debug_struct("Facts")
            .field("values", &inner.missing.len())
            .field("products", &inner.products.len())
            .field("bytes", &inner.bytes)
            .finish()
    }
}

impl Facts {
    pub fn new(n_rows: usize) -> Facts {
        Facts {
            inner: Mutex::default(),
            budget: (8 << 20).max(16 * n_rows),
        }
    }

    fn lock(&self) -> std::sync::MutexGuard<'_, Inner> {
        // A panic elsewhere while holding the lock leaves plain maps behind.
        self.inner.lock().unwrap_or_else(|e| e.into_inner())
    }

    /// Account for `bytes` more held; empty the cache first when they would
    /// pass the budget.
    fn reserve(&self, inner: &mut Inner, bytes: usize) {
        if inner.bytes + bytes > self.budget {
            *inner = Inner::default();
        }
        inner.bytes += bytes;
    }

    /// Rows where the value is missing; `None` when no row is.
    pub(crate) fn missing(
        &self,
        ev: &Evaluator<'_>,
        panel: PanelKey,
        v: &Value,
    ) -> Option<Arc<Mask>> {
        self.mask_fact(
            |i| &mut i.missing,
            key(v, panel),
            || {
                let mask = match v {
                    Value::Column(c) => match &ev.frame.columns()[*c].data {
                        ColumnData::Numeric(col) => col.missing.clone(),
                        ColumnData::Categorical(col) => Mask::from_missing_codes(&col.codes),
                    },
                    _ => match ev.eval(v) {
                        Evaluated::Numbers(x) => Mask::from_nan(&x),
                        Evaluated::Codes { codes, .. } => Mask::from_missing_codes(&codes),
                        Evaluated::Scalar(x) if x.is_nan() => Mask::full(ev.n()),
                        Evaluated::Scalar(_) | Evaluated::Text(_) => Mask::new(ev.n()),
                    },
                };
                (mask.count() > 0).then_some(mask)
            },
        )
    }

    /// Rows a `where` condition keeps: defined and non-zero. `None` keeps all.
    pub(crate) fn kept(
        &self,
        ev: &Evaluator<'_>,
        panel: PanelKey,
        cond: &Value,
    ) -> Option<Arc<Mask>> {
        self.mask_fact(
            |i| &mut i.kept,
            key(cond, panel),
            || {
                let x = ev.numbers_cow(cond);
                let mask = Mask::from_predicate(&x, |v: f64| !v.is_nan() && v != 0.0);
                (mask.count() < ev.n()).then_some(mask)
            },
        )
    }

    /// A row mask from one of the maps, computed outside the lock when absent.
    fn mask_fact(
        &self,
        map: fn(&mut Inner) -> &mut HashMap<Key, Option<Arc<Mask>>>,
        k: Key,
        compute: impl FnOnce() -> Option<Mask>,
    ) -> Option<Arc<Mask>> {
        if let Some(m) = map(&mut self.lock()).get(&k) {
            return m.clone();
        }
        let mask = compute().map(Arc::new);
        let mut inner = self.lock();
        self.reserve(&mut inner, mask.as_ref().map_or(0, |m| m.heap_bytes()));
        map(&mut inner).insert(k, mask.clone());
        mask
    }

    /// The interned sample with these rows.
    pub(crate) fn sample(&self, rows: Mask) -> Sample {
        let mut inner = self.lock();
        if let Some((rows, &id)) = inner.samples.get_key_value(&rows) {
            return Sample {
                id,
                rows: rows.clone(),
            };
        }
        let id = NEXT_SAMPLE.fetch_add(1, Ordering::Relaxed);
        self.reserve(&mut inner, rows.heap_bytes());
        let rows = Arc::new(rows);
        inner.samples.insert(rows.clone(), id);
        Sample { id, rows }
    }

    /// Whether the product of `factors` (each to its power; categories as
    /// 1-based codes) varies over the sample, and within each grouping column.
    pub(crate) fn variation(
        &self,
        ev: &Evaluator<'_>,
        panel: PanelKey,
        factors: &[(&Value, u32)],
        sample: &Sample,
        groupings: &[usize],
    ) -> Variation {
        let k = ProductKey {
            factors: factors.iter().map(|(v, p)| (key(v, panel), *p)).collect(),
            sample: sample.id,
        };
        let known = self.lock().products.get(&k).cloned();
        let lookup = |known: &Known, g: usize| {
            known
                .within
                .iter()
                .find(|(c, _)| *c == g)
                .map(|(_, varies)| *varies)
        };
        if let Some(known) = &known {
            if let Some(within) = groupings.iter().map(|&g| lookup(known, g)).collect() {
                return Variation {
                    varies: known.varies,
                    within,
                };
            }
        }
        let mut known = known.unwrap_or_default();
        let needed: Vec<usize> = groupings
            .iter()
            .copied()
            .filter(|&g| lookup(&known, g).is_none())
            .collect();
        let (varies, within) = measure(ev, factors, &sample.rows, &needed);
        known.varies = varies;
        known.within.extend(needed.into_iter().zip(within));
        let within = groupings
            .iter()
            .map(|&g| lookup(&known, g).unwrap_or(false))
            .collect();
        let varies = known.varies;
        // Entries are small, but a long editing session makes many: count them.
        let bytes = 64 + k.factors.iter().map(|(f, _)| f.0.len() + 8).sum::<usize>();
        let mut inner = self.lock();
        self.reserve(&mut inner, bytes);
        inner.products.insert(k, known);
        Variation { varies, within }
    }

    /// Rows where `log` (or `sqrt`) of the value is undefined, and the first of them.
    pub(crate) fn domain(
        &self,
        ev: &Evaluator<'_>,
        panel: PanelKey,
        x: &Value,
        log: bool,
    ) -> (usize, Option<usize>) {
        let k = (key(x, panel), log);
        if let Some(d) = self.lock().domains.get(&k) {
            return *d;
        }
        let values = ev.numbers_cow(x);
        let bad = |v: f64| if log { v <= 0.0 } else { v < 0.0 };
        let mut n_bad = 0;
        let mut first = None;
        for (row, &v) in values.iter().enumerate() {
            if bad(v) {
                n_bad += 1;
                first.get_or_insert(row);
            }
        }
        let mut inner = self.lock();
        self.reserve(&mut inner, 64 + k.0 .0.len());
        inner.domains.insert(k, (n_bad, first));
        (n_bad, first)
    }

    /// The levels the value has as categories.
    pub(crate) fn levels(
        &self,
        ev: &Evaluator<'_>,
        panel: PanelKey,
        v: &Value,
    ) -> Option<Arc<Vec<String>>> {
        let k = key(v, panel);
        if let Some(l) = self.lock().levels.get(&k) {
            return l.clone();
        }
        let levels = match ev.eval(&Value::Categorical {
            x: Box::new(v.clone()),
            reference: None,
        }) {
            Evaluated::Codes { levels, .. } => Some(Arc::new(levels)),
            _ => None,
        };
        let bytes = 64
            + k.0.len()
            + levels
                .as_ref()
                .map_or(0, |l| l.iter().map(|s| s.len() + 24).sum());
        let mut inner = self.lock();
        self.reserve(&mut inner, bytes);
        inner.levels.insert(k, levels.clone());
        levels
    }

    /// How many groups of the column have a row in the sample.
    pub(crate) fn clusters(&self, ev: &Evaluator<'_>, column: usize, sample: &Sample) -> usize {
        let k = (column, sample.id);
        if let Some(&n) = self.lock().clusters.get(&k) {
            return n;
        }
        let g = ev.group(column);
        let n = groups_in(&g, &sample.rows);
        self.lock().clusters.insert(k, n);
        n
    }

    /// Inner groups found in more than one outer group.
    pub(crate) fn nesting(
        &self,
        ev: &Evaluator<'_>,
        inner: usize,
        outer: usize,
    ) -> Arc<Vec<NestViolation>> {
        if let Some(v) = self.lock().nesting.get(&(inner, outer)) {
            return v.clone();
        }
        let v = Arc::new(ev.group(inner).nesting_violations(&ev.group(outer)));
        self.lock().nesting.insert((inner, outer), v.clone());
        v
    }

    /// The rows ordered by unit and time, built once per pair of columns.
    pub(crate) fn panel_index(
        &self,
        ev: &Evaluator<'_>,
        unit: usize,
        time: usize,
        times: impl FnOnce() -> Vec<f64>,
    ) -> Arc<PanelIndex> {
        if let Some(p) = self.lock().panels.get(&(unit, time)) {
            return p.clone();
        }
        let index = Arc::new(PanelIndex::new(ev.group(unit), times()));
        let mut inner = self.lock();
        // The times and the row order: twelve bytes per row.
        self.reserve(&mut inner, 12 * ev.n());
        inner.panels.insert((unit, time), index.clone());
        index
    }
}

/// Rows per block of [`measure`]: a multiple of 64, so that blocks start on
/// a word of the sample mask, and small enough to stay in cache.
const BLOCK: usize = 4096;

/// Whether the product of the factors varies over the sample (relative
/// tolerance 1e-10), and within each grouping, in one pass over blocks of
/// rows: the product is never held whole, so a new term over a million rows
/// costs no allocation beyond the factors that are not plain columns.
fn measure(
    ev: &Evaluator<'_>,
    factors: &[(&Value, u32)],
    sample: &Mask,
    groupings: &[usize],
) -> (bool, Vec<bool>) {
    let columns: Vec<(std::borrow::Cow<'_, [f64]>, u32)> = factors
        .iter()
        .map(|(v, p)| (ev.numbers_cow(v), *p))
        .collect();
    let indexes: Vec<Arc<GroupIndex>> = groupings.iter().map(|&g| ev.group(g)).collect();
    let mut ranges: Vec<GroupRanges<'_>> = indexes.iter().map(|i| GroupRanges::new(i)).collect();
    let (mut lo, mut hi) = ([f64::INFINITY; 4], [f64::NEG_INFINITY; 4]);
    let n = ev.n();
    let mut block = vec![0.0; BLOCK.min(n)];
    for start in (0..n).step_by(BLOCK) {
        let b = &mut block[..BLOCK.min(n - start)];
        b.fill(1.0);
        for (column, p) in &columns {
            let x = column.get(start..start + b.len()).unwrap_or(&[]);
            // Squares and cubes by multiplication: the same numbers as
            // `powi`, which is a library call per value.
            match *p {
                1 => b.iter_mut().zip(x).for_each(|(a, v)| *a *= v),
                2 => b.iter_mut().zip(x).for_each(|(a, v)| *a *= v * v),
                3 => b.iter_mut().zip(x).for_each(|(a, v)| *a *= v * (v * v)),
                p => b
                    .iter_mut()
                    .zip(x)
                    .for_each(|(a, v)| *a *= v.powi(p as i32)),
            }
        }
        sample.blank_unset_at(start, b);
        // Four running ends, so the comparisons do not wait on each other;
        // NaN compares false and is skipped.
        for quad in b.chunks(4) {
            for (j, &v) in quad.iter().enumerate() {
                if v < lo[j] {
                    lo[j] = v;
                }
                if v > hi[j] {
                    hi[j] = v;
                }
            }
        }
        for r in &mut ranges {
            r.add(start, b);
        }
    }
    let lo = lo.iter().copied().fold(f64::INFINITY, f64::min);
    let hi = hi.iter().copied().fold(f64::NEG_INFINITY, f64::max);
    let varies = hi > lo && (hi - lo) > 1e-10 * hi.abs().max(lo.abs());
    let within = ranges.iter().map(|r| varies && r.varies()).collect();
    (varies, within)
}

fn groups_in(g: &GroupIndex, rows: &Mask) -> usize {
    let mut seen = vec![false; g.n_groups()];
    for r in rows.iter_set() {
        let code = g.codes[r];
        if code != MISSING_CODE {
            seen[code as usize] = true;
        }
    }
    seen.iter().filter(|s| **s).count()
}

#[cfg(test)]
mod tests {
    use super::*;
    use frame::{Column, Frame};
    use syntax::ast::BinaryOp;

    fn frame() -> Frame {
        let nan = f64::NAN;
        Frame::from_columns(vec![
            Column::categorical("team", &[Some("a"), Some("a"), Some("b"), Some("b"), None]),
            Column::numeric("x", vec![1.0, 2.0, 3.0, 3.0, 5.0]),
            Column::numeric("m", vec![1.0, nan, 2.0, 2.0, 4.0]),
        ])
    }

    #[test]
    fn answers_match_a_direct_pass_and_are_kept() {
        let f = frame();
        let ev = Evaluator::new(&f, None);
        let facts = Facts::new(f.n_rows());
        let m = Value::Column(2);
        let missing = facts.missing(&ev, None, &m).expect("m has a missing row");
        assert_eq!(missing.to_bools(), [false, true, false, false, false]);
        assert!(facts.missing(&ev, None, &Value::Column(1)).is_none());
        // x * m is missing wherever m is.
        let xm = Value::Binary(
            BinaryOp::Mul,
            Box::new(Value::Column(1)),
            Box::new(Value::Column(2)),
        );
        assert_eq!(facts.missing(&ev, None, &xm), Some(missing.clone()));

        let all = facts.sample(Mask::full(5));
        let again = facts.sample(Mask::full(5));
        assert_eq!(all.id, again.id);
        assert!(Arc::ptr_eq(&all.rows, &again.rows));
        // x varies within team a (1, 2), not within b (3, 3): varies within team.
        let v = facts.variation(&ev, None, &[(&Value::Column(1), 1)], &all, &[0]);
        assert_eq!(
            v,
            Variation {
                varies: true,
                within: vec![true]
            }
        );
        // Without row 2 (x = 2), x is constant within both teams.
        let mut rows = Mask::full(5);
        rows.and_not_assign(&Mask::from_bools(&[false, true, false, false, false]));
        let without = facts.sample(rows);
        assert_ne!(without.id, all.id);
        let v = facts.variation(&ev, None, &[(&Value::Column(1), 1)], &without, &[0]);
        assert_eq!(
            v,
            Variation {
                varies: true,
                within: vec![false]
            }
        );
        // m^2 on the rows where m is present: 1, 4, 4, 16; constant within b.
        let v = facts.variation(&ev, None, &[(&m, 2)], &without, &[0]);
        assert_eq!(
            v,
            Variation {
                varies: true,
                within: vec![false]
            }
        );
        assert_eq!(facts.clusters(&ev, 0, &without), 2);
        let (n_bad, first) = facts.domain(&ev, None, &Value::Column(1), true);
        assert_eq!((n_bad, first), (0, None));
        let levels = facts.levels(&ev, None, &Value::Column(0)).unwrap();
        assert_eq!(levels.as_slice(), ["a", "b"]);
    }

    #[test]
    fn blockwise_variation_agrees_with_a_product_held_whole() {
        // 10,000 rows (three blocks), 7 groups; x*z^2 on a sample that leaves
        // out every third row. Each group's rows fall in every block.
        let n = 10_000;
        let g: Vec<f64> = (0..n).map(|r| (r % 7) as f64).collect();
        let x: Vec<f64> = (0..n).map(|r| ((r * 13) % 5) as f64 - 2.0).collect();
        let z: Vec<f64> = (0..n)
            .map(|r| if r % 11 == 0 { f64::NAN } else { 1.5 })
            .collect();
        let f = Frame::from_columns(vec![
            Column::numeric("g", g),
            Column::numeric("x", x.clone()),
            Column::numeric("z", z.clone()),
            Column::numeric("c", vec![4.0; n]),
        ]);
        let ev = Evaluator::new(&f, None);
        let facts = Facts::new(n);
        let keep: Vec<bool> = (0..n).map(|r| r % 3 != 0).collect();
        let sample = facts.sample(Mask::from_bools(&keep));
        let (xv, zv, cv) = (Value::Column(1), Value::Column(2), Value::Column(3));
        let whole: Vec<f64> = (0..n)
            .map(|r| {
                if keep[r] {
                    x[r] * z[r].powi(2)
                } else {
                    f64::NAN
                }
            })
            .collect();
        let index = f.group_index(0);
        let got = facts.variation(&ev, None, &[(&xv, 1), (&zv, 2)], &sample, &[0]);
        assert_eq!(
            got,
            Variation {
                varies: true,
                within: vec![index.varies_within(&whole)]
            }
        );
        assert!(got.within[0]);
        // A constant column varies nowhere; within is then false as well.
        let constant = facts.variation(&ev, None, &[(&cv, 1)], &sample, &[0]);
        assert_eq!(
            constant,
            Variation {
                varies: false,
                within: vec![false]
            }
        );
    }

    #[test]
    fn a_cache_over_its_budget_empties_and_still_answers() {
        let n = 600_000;
        let f = Frame::from_columns(vec![Column::numeric(
            "x",
            (0..n)
                .map(|r| if r % 7 == 0 { f64::NAN } else { r as f64 })
                .collect(),
        )]);
        let ev = Evaluator::new(&f, None);
        let facts = Facts::new(n);
        // Each shifted copy of x misses the same rows; each mask is 75 kB,
        // so 200 of them pass the 9.6 MB budget.
        for k in 0..200 {
            let v = Value::Binary(
                BinaryOp::Add,
                Box::new(Value::Column(0)),
                Box::new(Value::Number(k as f64)),
            );
            let m = facts.missing(&ev, None, &v).unwrap();
            assert_eq!(m.count(), n.div_ceil(7));
            assert!(facts.lock().bytes <= facts.budget);
        }
    }
}
