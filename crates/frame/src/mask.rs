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
        let mut bits = Vec::with_capacity(values.len().div_ceil(64));
        let mut count = 0;
        for block in values.chunks(64) {
            let mut word = 0u64;
            for (j, v) in block.iter().enumerate() {
                word |= (v.is_nan() as u64) << j;
            }
            count += word.count_ones() as usize;
            bits.push(word);
        }
        Mask {
            bits,
            len: values.len(),
            count,
        }
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
}
