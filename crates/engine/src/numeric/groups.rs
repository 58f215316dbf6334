//! Group codes, nesting and the count of redundant absorbed levels.

use std::collections::HashMap;

use super::NumericError;

/// Dense group codes of one grouping over the rows being estimated.
#[derive(Clone, Debug, PartialEq)]
pub struct GroupCodes {
    /// One code per row in `0..n_groups`.
    pub codes: Vec<u32>,
    /// Rows per group.
    pub counts: Vec<u32>,
}

impl GroupCodes {
    /// Codes from arbitrary `u32` ids (re-densified; order of first appearance).
    ///
    /// Ids up to a few times the row count are looked up in a flat table, larger
    /// ones in a hash map; either way one pass over the rows.
    pub fn from_ids(ids: &[u32]) -> GroupCodes {
        let max_id = ids.iter().copied().max().unwrap_or(0) as usize;
        let mut codes = Vec::with_capacity(ids.len());
        let mut counts: Vec<u32> = Vec::new();
        if max_id <= (4 * ids.len()).max(1 << 16) {
            let mut table = vec![u32::MAX; max_id + 1];
            for &id in ids {
                let slot = &mut table[id as usize];
                if *slot == u32::MAX {
                    *slot = counts.len() as u32;
                    counts.push(0);
                }
                counts[*slot as usize] += 1;
                codes.push(*slot);
            }
        } else {
            let mut map: HashMap<u32, u32> = HashMap::new();
            for &id in ids {
                let next = counts.len() as u32;
                let code = *map.entry(id).or_insert(next);
                if code == next {
                    counts.push(0);
                }
                counts[code as usize] += 1;
                codes.push(code);
            }
        }
        GroupCodes { codes, counts }
    }

    /// Codes already dense in `0..n_groups`; counts are computed. Groups with no
    /// rows are allowed (count 0). Errors if a code is out of range.
    pub fn from_codes(codes: Vec<u32>, n_groups: usize) -> Result<GroupCodes, NumericError> {
        let mut counts = vec![0u32; n_groups];
        for (row, &c) in codes.iter().enumerate() {
            match counts.get_mut(c as usize) {
                Some(n) => *n += 1,
                None => {
                    return Err(NumericError::BadCode {
                        row,
                        code: c,
                        n_groups,
                    })
                }
            }
        }
        Ok(GroupCodes { codes, counts })
    }

    pub fn n_groups(&self) -> usize {
        self.counts.len()
    }

    /// The rows where `keep` is true, re-densified in order of first appearance
    /// (so groups left empty disappear). `keep` must have one entry per row;
    /// missing entries count as false.
    pub fn subset(&self, keep: &[bool]) -> GroupCodes {
        let mut map = vec![u32::MAX; self.n_groups()];
        let mut codes = Vec::with_capacity(keep.iter().filter(|&&k| k).count());
        let mut counts: Vec<u32> = Vec::new();
        for (&c, _) in self.codes.iter().zip(keep).filter(|(_, &k)| k) {
            let Some(slot) = map.get_mut(c as usize) else {
                continue;
            };
            if *slot == u32::MAX {
                *slot = counts.len() as u32;
                counts.push(0);
            }
            counts[*slot as usize] += 1;
            codes.push(*slot);
        }
        GroupCodes { codes, counts }
    }

    /// The intersection grouping: one group per distinct pair of codes (order of
    /// first appearance). Errors if the lengths differ.
    pub fn intersect(a: &GroupCodes, b: &GroupCodes) -> Result<GroupCodes, NumericError> {
        if a.codes.len() != b.codes.len() {
            return Err(NumericError::Dimension(format!(
                "groupings of {} and {} rows",
                a.codes.len(),
                b.codes.len()
            )));
        }
        let mut codes = Vec::with_capacity(a.codes.len());
        let mut counts: Vec<u32> = Vec::new();
        // A dense table of all pairs when it is not much larger than the data
        // (units × periods usually is not): one lookup per row, no hashing.
        let pairs = a.n_groups() as u64 * b.n_groups() as u64;
        if pairs <= (4 * a.codes.len() as u64).max(1 << 20) {
            let nb = b.n_groups();
            let mut table = vec![u32::MAX; pairs as usize];
            for (&x, &y) in a.codes.iter().zip(&b.codes) {
                let slot = &mut table[x as usize * nb + y as usize];
                if *slot == u32::MAX {
                    *slot = counts.len() as u32;
                    counts.push(0);
                }
                counts[*slot as usize] += 1;
                codes.push(*slot);
            }
            return Ok(GroupCodes { codes, counts });
        }
        let mut map: HashMap<u64, u32> = HashMap::with_capacity(a.codes.len().min(1 << 24));
        for (&x, &y) in a.codes.iter().zip(&b.codes) {
            let key = ((x as u64) << 32) | y as u64;
            let next = counts.len() as u32;
            let code = *map.entry(key).or_insert(next);
            if code == next {
                counts.push(0);
            }
            counts[code as usize] += 1;
            codes.push(code);
        }
        Ok(GroupCodes { codes, counts })
    }

    /// Checks that there are `n` codes, each below `n_groups()`.
    pub fn validate(&self, n: usize) -> Result<(), NumericError> {
        if self.codes.len() != n {
            return Err(NumericError::Dimension(format!(
                "a grouping has {} codes for {n} rows",
                self.codes.len()
            )));
        }
        let g = self.n_groups();
        match self.codes.iter().position(|&c| c as usize >= g) {
            Some(row) => Err(NumericError::BadCode {
                row,
                code: self.codes[row],
                n_groups: g,
            }),
            None => Ok(()),
        }
    }

    /// Number of groups with at least one row.
    pub fn n_nonempty(&self) -> usize {
        self.counts.iter().filter(|&&c| c > 0).count()
    }
}

/// Whether every group of `inner` lies inside one group of `outer`: one pass
/// recording, for each inner group, the outer group of its first row. False if
/// the lengths differ or a code is out of range.
pub fn nested_in(inner: &GroupCodes, outer: &GroupCodes) -> bool {
    if inner.codes.len() != outer.codes.len() {
        return false;
    }
    let mut seen = vec![u32::MAX; inner.n_groups()];
    for (&i, &o) in inner.codes.iter().zip(&outer.codes) {
        if o as usize >= outer.n_groups() {
            return false;
        }
        let Some(slot) = seen.get_mut(i as usize) else {
            return false;
        };
        if *slot == u32::MAX {
            *slot = o;
        } else if *slot != o {
            return false;
        }
    }
    true
}

/// Levels of the absorbed groupings that are redundant (not estimable
/// separately), counting only groups that have rows:
///
/// - no grouping: 0; one grouping: 1 (its indicators sum to the intercept);
/// - two: the number of connected components of the bipartite graph whose
///   nodes are the groups of both groupings and whose edges are the rows
///   (union–find, one pass). This is exact: the rank of `[D_A D_B]` is
///   `G_A + G_B − components`. Common practice.
/// - three or more: the components of the first two, plus for each further
///   grouping either all its levels, when an earlier grouping is nested in it
///   (its indicators are then sums of the earlier grouping's), or otherwise one
///   level (its indicators sum to the intercept, already absorbed).
///
/// For three or more groupings this is a lower bound on the true redundancy
/// (an exact count needs the rank of the full indicator matrix). Undercounting
/// redundancy overcounts absorbed levels, so the residual degrees of freedom
/// come out too small: standard errors err on the large (conservative) side.
/// For two or more groupings, the rank of all indicator columns together (the
/// intercept lies in their span) is `Σ levels − redundant_levels`; for one
/// grouping the 1 is the level the intercept takes (its rank is all G levels).
/// Groupings whose code lengths differ from the first are ignored.
pub fn redundant_levels(groupings: &[GroupCodes]) -> usize {
    let Some(first) = groupings.first() else {
        return 0;
    };
    let n = first.codes.len();
    if n == 0 {
        return 0;
    }
    if groupings.len() == 1 {
        return 1;
    }
    let a = &groupings[0];
    let b = &groupings[1];
    let mut redundant = if b.codes.len() == n {
        components(a, b)
    } else {
        1
    };
    for (k, g) in groupings.iter().enumerate().skip(2) {
        if g.codes.len() != n {
            continue;
        }
        let inner_earlier = groupings[..k]
            .iter()
            .any(|e| e.codes.len() == n && nested_in(e, g));
        redundant += if inner_earlier { g.n_nonempty() } else { 1 };
    }
    redundant
}

/// Connected components of the bipartite group graph of two groupings.
fn components(a: &GroupCodes, b: &GroupCodes) -> usize {
    let ga = a.n_groups();
    let total = ga + b.n_groups();
    let mut parent: Vec<u32> = (0..total as u32).collect();
    fn find(parent: &mut [u32], mut x: u32) -> u32 {
        while parent[x as usize] != x {
            let up = parent[parent[x as usize] as usize];
            parent[x as usize] = up;
            x = up;
        }
        x
    }
    let mut used = vec![false; total];
    for (&x, &y) in a.codes.iter().zip(&b.codes) {
        let (x, y) = (x as usize, ga + y as usize);
        if x >= ga || y >= total {
            continue;
        }
        used[x] = true;
        used[y] = true;
        let rx = find(&mut parent, x as u32);
        let ry = find(&mut parent, y as u32);
        if rx != ry {
            // Union by smaller index keeps the result independent of row order.
            let (lo, hi) = if rx < ry { (rx, ry) } else { (ry, rx) };
            parent[hi as usize] = lo;
        }
    }
    (0..total)
        .filter(|&v| used[v] && find(&mut parent, v as u32) == v as u32)
        .count()
}
