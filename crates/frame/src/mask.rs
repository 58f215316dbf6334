//! Constructors and iteration for [`Mask`]; the type itself lives in the crate
//! root because it is part of the public contract.

use crate::Mask;

impl Mask {
    /// `len` rows, none set.
    pub fn new(len: usize) -> Mask {
        Mask {
            bits: vec![0; len.div_ceil(64)],
            len,
            count: 0,
        }
    }

    /// Set where `flags` is true.
    pub fn from_bools(flags: &[bool]) -> Mask {
        let mut m = Mask::new(flags.len());
        for (i, &f) in flags.iter().enumerate() {
            if f {
                m.set(i);
            }
        }
        m
    }

    /// Set where the value is NaN: the reader's numbers mark a missing value by
    /// NaN, and building the mask from them afterwards keeps the hot parsing
    /// loop free of bookkeeping.
    pub fn from_nan(values: &[f64]) -> Mask {
        Mask::from_predicate(values, f64::is_nan)
    }

    /// Set one row; rows past the end are ignored rather than panicking, so a
    /// caller's off-by-one cannot bring down the language server.
    pub fn set(&mut self, row: usize) {
        if row < self.len {
            let word = &mut self.bits[row / 64];
            let bit = 1u64 << (row % 64);
            if *word & bit == 0 {
                *word |= bit;
                self.count += 1;
            }
        }
    }

    /// `len` rows, all set.
    pub fn full(len: usize) -> Mask {
        let mut bits = vec![u64::MAX; len.div_ceil(64)];
        if let Some(last) = bits.last_mut() {
            if !len.is_multiple_of(64) {
                *last = (1u64 << (len % 64)) - 1;
            }
        }
        Mask {
            bits,
            len,
            count: len,
        }
    }

    /// Set where the code is [`crate::MISSING_CODE`].
    pub fn from_missing_codes(codes: &[u32]) -> Mask {
        Mask::from_predicate(codes, |c| c == crate::MISSING_CODE)
    }

    /// Set where `set` holds for the row's item, built 64 rows to a word with
    /// no branch per row.
    pub fn from_predicate<T: Copy>(items: &[T], set: impl Fn(T) -> bool) -> Mask {
        let mut bits = Vec::with_capacity(items.len().div_ceil(64));
        let mut count = 0;
        for block in items.chunks(64) {
            let mut word = 0u64;
            for (j, &x) in block.iter().enumerate() {
                word |= (set(x) as u64) << j;
            }
            count += word.count_ones() as usize;
            bits.push(word);
        }
        Mask {
            bits,
            len: items.len(),
            count,
        }
    }

    /// Keep only the rows also set in `other` (rows past `other`'s end are cleared).
    pub fn and_assign(&mut self, other: &Mask) {
        for (i, w) in self.bits.iter_mut().enumerate() {
            *w &= other.bits.get(i).copied().unwrap_or(0);
        }
        self.recount();
    }

    /// Clear the rows set in `other`.
    pub fn and_not_assign(&mut self, other: &Mask) {
        for (w, o) in self.bits.iter_mut().zip(&other.bits) {
            *w &= !o;
        }
        self.recount();
    }

    /// How many rows are set in both.
    pub fn count_and(&self, other: &Mask) -> usize {
        self.bits
            .iter()
            .zip(&other.bits)
            .map(|(a, b)| (a & b).count_ones() as usize)
            .sum()
    }

    /// One flag per row.
    pub fn to_bools(&self) -> Vec<bool> {
        let mut out = Vec::with_capacity(self.len);
        for &word in &self.bits {
            let take = (self.len - out.len()).min(64);
            out.extend((0..take).map(|j| (word >> j) & 1 == 1));
        }
        out
    }

    /// Replace the values of rows not set by NaN, 64 rows per word.
    pub fn blank_unset(&self, values: &mut [f64]) {
        self.blank_unset_at(0, values);
    }

    /// As [`Mask::blank_unset`] for the rows `start..start + values.len()`: a
    /// word at a time when `start` is on a word boundary, row by row otherwise.
    pub fn blank_unset_at(&self, start: usize, values: &mut [f64]) {
        if !start.is_multiple_of(64) {
            for (r, v) in values.iter_mut().enumerate() {
                if !self.is_set(start + r) {
                    *v = f64::NAN;
                }
            }
            return;
        }
        let words = self.bits.get(start / 64..).unwrap_or(&[]);
        for (block, &word) in values.chunks_mut(64).zip(words) {
            if word == u64::MAX {
                continue;
            }
            for (j, v) in block.iter_mut().enumerate() {
                if (word >> j) & 1 == 0 {
                    *v = f64::NAN;
                }
            }
        }
    }

    /// Bytes held, for caches that bound their size.
    pub fn heap_bytes(&self) -> usize {
        self.bits.len() * 8
    }

    fn recount(&mut self) {
        self.count = self.bits.iter().map(|w| w.count_ones() as usize).sum();
    }

    /// The set rows in increasing order.
    pub fn iter_set(&self) -> impl Iterator<Item = usize> + '_ {
        self.bits.iter().enumerate().flat_map(|(w, &word)| {
            let mut rest = word;
            std::iter::from_fn(move || {
                if rest == 0 {
                    None
                } else {
                    let b = rest.trailing_zeros() as usize;
                    rest &= rest - 1;
                    Some(w * 64 + b)
                }
            })
        })
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn from_nan_counts_and_iterates() {
        let mut v = vec![1.0; 130];
        v[0] = f64::NAN;
        v[64] = f64::NAN;
        v[129] = f64::NAN;
        let m = Mask::from_nan(&v);
        assert_eq!(m.count(), 3);
        assert_eq!(m.len(), 130);
        assert!(m.is_set(64) && !m.is_set(65) && !m.is_set(1000));
        assert_eq!(m.iter_set().collect::<Vec<_>>(), vec![0, 64, 129]);
        let mut b = Mask::from_bools(&[false, true, false]);
        assert_eq!(b.count(), 1);
        b.set(1);
        b.set(2);
        b.set(99);
        assert_eq!(b.count(), 2);
    }

    #[test]
    fn word_wise_operations_agree_with_row_by_row_flags() {
        let len = 200;
        let a_flags: Vec<bool> = (0..len).map(|r| r % 3 == 0).collect();
        let b_flags: Vec<bool> = (0..len).map(|r| r % 5 != 1).collect();
        let (a, b) = (Mask::from_bools(&a_flags), Mask::from_bools(&b_flags));
        let both = (0..len).filter(|&r| a_flags[r] && b_flags[r]).count();
        assert_eq!(a.count_and(&b), both);
        let mut and = a.clone();
        and.and_assign(&b);
        assert_eq!(and.count(), both);
        let mut and_not = a.clone();
        and_not.and_not_assign(&b);
        let only_a: Vec<bool> = (0..len).map(|r| a_flags[r] && !b_flags[r]).collect();
        assert_eq!(and_not.to_bools(), only_a);
        assert_eq!(and_not.count(), only_a.iter().filter(|f| **f).count());
        let full = Mask::full(130);
        assert_eq!(full.count(), 130);
        assert!(full.is_set(129) && !full.is_set(130));
        assert_eq!(full, Mask::from_bools(&[true; 130]));
        assert_eq!(Mask::full(128), Mask::from_bools(&[true; 128]));
        let codes = [0, crate::MISSING_CODE, 2];
        assert_eq!(
            Mask::from_missing_codes(&codes).to_bools(),
            [false, true, false]
        );
        let kept = Mask::from_predicate(&[1.0, 0.0, f64::NAN, -2.0], |v: f64| {
            !v.is_nan() && v != 0.0
        });
        assert_eq!(kept.to_bools(), [true, false, false, true]);
        let mut v = vec![1.0, 2.0, 3.0, 4.0];
        kept.blank_unset(&mut v);
        assert!(v[0] == 1.0 && v[1].is_nan() && v[2].is_nan() && v[3] == 4.0);
        // From a later word: rows 64..130 of a mask with rows 64 and 129 unset.
        let mut late = Mask::full(130);
        late.and_not_assign(&Mask::from_bools(
            &(0..130).map(|r| r == 64 || r == 129).collect::<Vec<_>>(),
        ));
        let mut tail = vec![1.0; 66];
        late.blank_unset_at(64, &mut tail);
        assert!(tail[0].is_nan() && tail[65].is_nan());
        assert_eq!(tail.iter().filter(|x| x.is_nan()).count(), 2);
        // Off a word boundary, row by row: rows 63..66 hold 64 unset.
        let mut off = vec![1.0; 3];
        late.blank_unset_at(63, &mut off);
        assert!(off[0] == 1.0 && off[1].is_nan() && off[2] == 1.0);
    }
}
