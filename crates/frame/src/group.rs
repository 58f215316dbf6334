//! Group indexes and the intraclass correlation.
//!
//! Everything here is one or two passes over the rows with per-group
//! accumulators in vectors indexed by the dense code: the within transform and
//! the checker's nesting tests run on every keystroke in the editor, so no
//! sorting and no hashing per row where a code can index a vector.

use crate::hash::FastMap;
use crate::{Column, ColumnData, GroupIndex, NestViolation, MISSING_CODE};

/// How many outer groups a nesting violation lists.
const MAX_OUTER_LISTED: usize = 4;

/// A number as an id label: integers without a fractional part, other values
/// in the shortest form that reads back to the same number.
pub(crate) fn number_label(v: f64) -> String {
    if v == 0.0 {
        // Also -0.0, which is the same id.
        "0".to_string()
    } else {
        format!("{v}")
    }
}

impl GroupIndex {
    /// Codes in order of first appearance, so group 0 is the first id in the
    /// file and labels line up with what the user sees.
    pub fn from_column(column: &Column) -> GroupIndex {
        match &column.data {
            ColumnData::Categorical(c) => {
                // The reader already numbers levels by first appearance; a
                // level that occurs nowhere (possible in hand-built columns)
                // must not become an empty group, so renumber through a table.
                let mut remap = vec![MISSING_CODE; c.levels.len()];
                let mut labels = Vec::new();
                let mut sizes: Vec<u32> = Vec::new();
                let codes = c
                    .codes
                    .iter()
                    .map(|&k| match remap.get_mut(k as usize) {
                        None => MISSING_CODE,
                        Some(slot) => {
                            if *slot == MISSING_CODE {
                                *slot = sizes.len() as u32;
                                sizes.push(0);
                                labels.push(c.levels[k as usize].clone());
                            }
                            sizes[*slot as usize] += 1;
                            *slot
                        }
                    })
                    .collect();
                GroupIndex {
                    codes,
                    sizes,
                    labels,
                }
            }
            ColumnData::Numeric(n) => from_numbers(&n.values),
        }
    }

    pub fn n_groups(&self) -> usize {
        self.sizes.len()
    }

    /// Mean of `values` in each group, skipping NaN; NaN for a group with no values.
    pub fn means(&self, values: &[f64]) -> Vec<f64> {
        let (sum, n) = self.sums(values);
        sum.iter()
            .zip(&n)
            .map(|(&s, &k)| if k == 0 { f64::NAN } else { s / k as f64 })
            .collect()
    }

    /// Per-group sum and count of the non-NaN values.
    fn sums(&self, values: &[f64]) -> (Vec<f64>, Vec<u64>) {
        let g = self.n_groups();
        let mut sum = vec![0.0; g];
        let mut n = vec![0u64; g];
        for (&k, &v) in self.codes.iter().zip(values) {
            if k != MISSING_CODE && !v.is_nan() {
                if let (Some(s), Some(c)) = (sum.get_mut(k as usize), n.get_mut(k as usize)) {
                    *s += v;
                    *c += 1;
                }
            }
        }
        (sum, n)
    }

    /// Whether any group holds two non-missing values that differ by more than a
    /// relative 1e-10 of the column's scale.
    ///
    /// The scale is the largest absolute non-missing value of the column, so a
    /// variable that is constant within groups still counts as constant after
    /// it went through floating-point arithmetic (a group mean computed twice,
    /// a unit conversion), while any real difference counts as variation.
    pub fn varies_within(&self, values: &[f64]) -> bool {
        let mut ranges = GroupRanges::new(self);
        ranges.add(0, values);
        ranges.varies()
    }

    /// Whether the codes of a categorical column (any `u32` codes, missing =
    /// [`MISSING_CODE`]) differ within some group: a text column's analogue of
    /// [`GroupIndex::varies_within`].
    pub fn codes_vary_within(&self, codes: &[u32]) -> bool {
        let mut first = vec![MISSING_CODE; self.n_groups()];
        for (&k, &c) in self.codes.iter().zip(codes) {
            if k == MISSING_CODE || c == MISSING_CODE {
                continue;
            }
            if let Some(f) = first.get_mut(k as usize) {
                if *f == MISSING_CODE {
                    *f = c;
                } else if *f != c {
                    return true;
                }
            }
        }
        false
    }

    /// Inner groups that appear in more than one outer group (empty = properly nested).
    ///
    /// Violations come in order of the inner group's first appearance; each
    /// lists at most four outer groups, the first being where the inner group
    /// first appeared, with the first row seen in each. Rows where either id is
    /// missing say nothing about nesting and are skipped.
    pub fn nesting_violations(&self, outer: &GroupIndex) -> Vec<NestViolation> {
        let g = self.n_groups();
        let mut home = vec![MISSING_CODE; g];
        let mut home_row = vec![0usize; g];
        // Index into `found` for inner groups already seen to break nesting.
        let mut slot = vec![u32::MAX; g];
        let mut found: Vec<(u32, Vec<u32>, Vec<usize>)> = Vec::new();
        for (row, (&i, &o)) in self.codes.iter().zip(&outer.codes).enumerate() {
            if i == MISSING_CODE || o == MISSING_CODE {
                continue;
            }
            let iu = i as usize;
            let Some(h) = home.get_mut(iu) else { continue };
            if *h == MISSING_CODE {
                *h = o;
                home_row[iu] = row;
                continue;
            }
            if *h == o {
                continue;
            }
            if slot[iu] == u32::MAX {
                slot[iu] = found.len() as u32;
                found.push((i, vec![*h], vec![home_row[iu]]));
            }
            let entry = &mut found[slot[iu] as usize];
            if entry.1.len() < MAX_OUTER_LISTED && !entry.1.contains(&o) {
                entry.1.push(o);
                entry.2.push(row);
            }
        }
        found.sort_by_key(|e| e.0);
        let label =
            |ix: &GroupIndex, k: u32| ix.labels.get(k as usize).cloned().unwrap_or_default();
        found
            .into_iter()
            .map(|(i, outs, rows)| NestViolation {
                inner: label(self, i),
                outer: outs.into_iter().map(|o| label(outer, o)).collect(),
                rows,
            })
            .collect()
    }
}

/// The lowest and highest value of each group, fed a block of rows at a
/// time: a caller can test variation within groups of values it computes in
/// blocks and never holds whole (a product of columns over a million rows).
pub struct GroupRanges<'g> {
    index: &'g GroupIndex,
    lo: Vec<f64>,
    hi: Vec<f64>,
}

impl<'g> GroupRanges<'g> {
    pub fn new(index: &'g GroupIndex) -> Self {
        let g = index.n_groups();
        GroupRanges {
            index,
            lo: vec![f64::INFINITY; g],
            hi: vec![f64::NEG_INFINITY; g],
        }
    }

    /// Take in the values of rows `start..start + values.len()`; NaN is missing.
    pub fn add(&mut self, start: usize, values: &[f64]) {
        let codes = self.index.codes.get(start..).unwrap_or(&[]);
        // A missing id (`MISSING_CODE`) has no slot, and NaN compares false:
        // both are skipped without a branch of their own.
        for (&k, &v) in codes.iter().zip(values) {
            if let (Some(l), Some(h)) = (self.lo.get_mut(k as usize), self.hi.get_mut(k as usize)) {
                if v < *l {
                    *l = v;
                }
                if v > *h {
                    *h = v;
                }
            }
        }
    }

    /// As [`GroupIndex::varies_within`] over every row taken in so far. The
    /// scale, the largest absolute value, is the largest of the groups' ends.
    pub fn varies(&self) -> bool {
        let scale = self
            .lo
            .iter()
            .zip(&self.hi)
            .filter(|(l, h)| l <= h)
            .fold(0.0f64, |s, (l, h)| s.max(l.abs()).max(h.abs()));
        let tol = 1e-10 * scale;
        self.lo.iter().zip(&self.hi).any(|(&l, &h)| h - l > tol)
    }
}

/// Numeric ids. Small non-negative integers (the usual case: team 1..300,
/// year 1990..2024) are looked up in a vector; anything else goes through a
/// hash map keyed by the value's bits.
fn from_numbers(values: &[f64]) -> GroupIndex {
    let mut max: f64 = -1.0;
    let dense = values.iter().all(|&v| {
        if v.is_nan() {
            return true;
        }
        max = max.max(v);
        v >= 0.0 && v.fract() == 0.0 && v <= 16.0 * (values.len() as f64) + 4096.0
    });
    let mut sizes: Vec<u32> = Vec::new();
    let mut labels = Vec::new();
    let mut new_group = |v: f64, sizes: &mut Vec<u32>| {
        sizes.push(0);
        labels.push(number_label(v));
        (sizes.len() - 1) as u32
    };
    let codes: Vec<u32> = if dense {
        let mut table = vec![MISSING_CODE; (max + 1.0).max(0.0) as usize];
        values
            .iter()
            .map(|&v| {
                if v.is_nan() {
                    return MISSING_CODE;
                }
                let Some(slot) = table.get_mut(v as usize) else {
                    return MISSING_CODE;
                };
                if *slot == MISSING_CODE {
                    *slot = new_group(v, &mut sizes);
                }
                sizes[*slot as usize] += 1;
                *slot
            })
            .collect()
    } else {
        let mut index: FastMap<u64, u32> = FastMap::default();
        values
            .iter()
            .map(|&v| {
                if v.is_nan() {
                    return MISSING_CODE;
                }
                // -0.0 and 0.0 are one id.
                let key = if v == 0.0 { 0 } else { v.to_bits() };
                let k = *index.entry(key).or_insert_with(|| new_group(v, &mut sizes));
                sizes[k as usize] += 1;
                k
            })
            .collect()
    };
    GroupIndex {
        codes,
        sizes,
        labels,
    }
}

/// ICC(1) of `values` by `groups`, one-way ANOVA estimator (Bliese 2000):
/// (MSB − MSW) / (MSB + (k − 1)·MSW) with k the mean group size; rows with a
/// missing value or id are skipped. `None` with fewer than two groups or no
/// within-group degrees of freedom.
///
/// With N usable rows in G non-empty groups of sizes n_g and means m_g around
/// the grand mean m: MSB = Σ n_g (m_g − m)² / (G − 1), MSW = Σ (x − m_g)² /
/// (N − G), and k = N / G. For unbalanced groups the ANOVA literature also
/// uses k0 = (N − Σ n_g² / N) / (G − 1), which weights large groups less;
/// slopewise uses N / G, simple to recompute by hand from a group-size table,
/// and equal to k0 when groups are balanced. Groups left empty by missing
/// values do not count. `None` too when every usable value is equal (0 / 0).
pub fn icc1(values: &[f64], groups: &GroupIndex) -> Option<f64> {
    let (sum, n) = groups.sums(values);
    let big_n: u64 = n.iter().sum();
    let g = n.iter().filter(|&&k| k > 0).count() as u64;
    if g < 2 || big_n <= g {
        return None;
    }
    let means: Vec<f64> = sum
        .iter()
        .zip(&n)
        .map(|(&s, &k)| if k == 0 { 0.0 } else { s / k as f64 })
        .collect();
    let grand = sum.iter().sum::<f64>() / big_n as f64;
    // Second pass around the group means, for accuracy when the values sit far
    // from zero (years, incomes).
    let mut ssw = 0.0;
    for (&k, &v) in groups.codes.iter().zip(values) {
        if k != MISSING_CODE && !v.is_nan() {
            if let Some(m) = means.get(k as usize) {
                ssw += (v - m) * (v - m);
            }
        }
    }
    let ssb: f64 = means
        .iter()
        .zip(&n)
        .map(|(&m, &k)| k as f64 * (m - grand) * (m - grand))
        .sum();
    let msb = ssb / (g - 1) as f64;
    let msw = ssw / (big_n - g) as f64;
    let k = big_n as f64 / g as f64;
    let denom = msb + (k - 1.0) * msw;
    if denom == 0.0 || !denom.is_finite() {
        return None;
    }
    Some((msb - msw) / denom)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn numeric_ids_dense_and_sparse_agree() {
        let dense = Column::numeric("g", vec![3.0, 1.0, 3.0, f64::NAN, 2.0]);
        let sparse = Column::numeric("g", vec![3e9, 1.5, 3e9, f64::NAN, -2.0]);
        let a = GroupIndex::from_column(&dense);
        let b = GroupIndex::from_column(&sparse);
        assert_eq!(a.codes, vec![0, 1, 0, MISSING_CODE, 2]);
        assert_eq!(a.codes, b.codes);
        assert_eq!(a.sizes, vec![2, 1, 1]);
        assert_eq!(a.labels, vec!["3", "1", "2"]);
        assert_eq!(b.labels, vec!["3000000000", "1.5", "-2"]);
    }

    #[test]
    fn means_and_variation() {
        let g = GroupIndex::from_column(&Column::categorical(
            "g",
            &[Some("a"), Some("b"), Some("a"), None, Some("b")],
        ));
        let m = g.means(&[1.0, 5.0, 3.0, 100.0, f64::NAN]);
        assert_eq!(m, vec![2.0, 5.0]);
        assert!(g.varies_within(&[1.0, 5.0, 3.0, 100.0, 5.0]));
        assert!(!g.varies_within(&[1.0, 5.0, 1.0 + 1e-14, 100.0, 5.0]));
        assert!(!g.codes_vary_within(&[0, 1, 0, 2, 1]));
        assert!(g.codes_vary_within(&[0, 1, 1, 2, 1]));
    }

    #[test]
    fn ranges_fed_in_blocks_agree_with_one_pass() {
        // Group a varies only across the block boundary (rows 1 and 4).
        let g = GroupIndex::from_column(&Column::categorical(
            "g",
            &[Some("b"), Some("a"), Some("b"), None, Some("a"), Some("b")],
        ));
        let v = [2.0, 1.0, 2.0, 9.0, 1.5, 2.0];
        assert!(g.varies_within(&v));
        let mut r = GroupRanges::new(&g);
        r.add(0, &v[..3]);
        assert!(!r.varies(), "a single value per group so far");
        r.add(3, &v[3..]);
        assert!(r.varies());
        let constant = [2.0, 1.0, 2.0, 9.0, 1.0, 2.0];
        let mut r = GroupRanges::new(&g);
        r.add(0, &constant[..4]);
        r.add(4, &constant[4..]);
        assert_eq!(r.varies(), g.varies_within(&constant));
        assert!(!r.varies());
    }

    #[test]
    fn nesting() {
        let inner =
            GroupIndex::from_column(&Column::numeric("team", vec![1.0, 1.0, 2.0, 2.0, 1.0, 3.0]));
        let outer = GroupIndex::from_column(&Column::categorical(
            "dept",
            &[Some("x"), Some("x"), Some("y"), Some("y"), Some("z"), None],
        ));
        let v = inner.nesting_violations(&outer);
        assert_eq!(
            v,
            vec![NestViolation {
                inner: "1".into(),
                outer: vec!["x".into(), "z".into()],
                rows: vec![0, 4],
            }]
        );
        assert!(outer.nesting_violations(&outer).is_empty());
    }

    #[test]
    fn icc_balanced_by_hand() {
        // Values 0.5, 1.5 | 2.5, 3.5: group means 1 and 3, grand mean 2.
        // SSB = 2·1 + 2·1 = 4, MSB = 4 / 1; SSW = 4 · 0.25 = 1, MSW = 1 / 2.
        // k = 2: ICC = (4 − 0.5) / (4 + 0.5) = 7/9.
        let g = GroupIndex::from_column(&Column::numeric("g", vec![1.0, 1.0, 2.0, 2.0]));
        let icc = icc1(&[0.5, 1.5, 2.5, 3.5], &g).unwrap();
        assert!((icc - 7.0 / 9.0).abs() < 1e-15);
        assert_eq!(icc1(&[1.0, 1.0, 1.0, 1.0], &g), None);
        assert_eq!(icc1(&[1.0, f64::NAN, 2.0, f64::NAN], &g), None);
    }
}
