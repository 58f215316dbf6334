//! Iterated removal of singleton groups (Correia 2015, "Singletons,
//! cluster-robust standard errors and fixed effects").

use super::GroupCodes;

/// Rows to keep after removing, repeatedly, every row that is alone in its group
/// in any grouping (removing one can create another). Returns the mask and the
/// number of rows removed.
///
/// Algorithm: live counts per group; repeated linear passes over the live rows,
/// removing a row as soon as any of its groups has a live count of one and
/// decrementing its groups' counts at once; stop after a pass removes nothing.
/// The kept set is the largest set of rows in which every group has zero or at
/// least two rows, which does not depend on the order of removal. Groupings
/// whose length differs from the first, or with a code out of range, are
/// ignored for removal (the caller validates them).
pub fn singleton_rows(groupings: &[GroupCodes]) -> (Vec<bool>, usize) {
    let Some(first) = groupings.first() else {
        return (Vec::new(), 0);
    };
    let n = first.codes.len();
    let used: Vec<&GroupCodes> = groupings
        .iter()
        .filter(|g| g.codes.len() == n && g.validate(n).is_ok())
        .collect();
    let mut keep = vec![true; n];
    let mut counts: Vec<Vec<u32>> = used
        .iter()
        .map(|g| {
            let mut c = vec![0u32; g.n_groups()];
            for &code in &g.codes {
                c[code as usize] += 1;
            }
            c
        })
        .collect();
    let mut removed = 0usize;
    loop {
        let mut removed_now = 0usize;
        for (i, kept) in keep.iter_mut().enumerate() {
            if !*kept {
                continue;
            }
            let alone = used
                .iter()
                .zip(&counts)
                .any(|(g, c)| c[g.codes[i] as usize] == 1);
            if alone {
                *kept = false;
                removed_now += 1;
                for (g, c) in used.iter().zip(counts.iter_mut()) {
                    c[g.codes[i] as usize] -= 1;
                }
            }
        }
        removed += removed_now;
        if removed_now == 0 {
            break;
        }
    }
    (keep, removed)
}
