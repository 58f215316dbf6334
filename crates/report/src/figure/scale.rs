//! Linear axis scales with ticks at round numbers.

/// Maps data values on `[d0, d1]` linearly onto `[r0, r1]` (figure units).
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Scale {
    pub d0: f64,
    pub d1: f64,
    pub r0: f64,
    pub r1: f64,
}

impl Scale {
    /// A scale over the values' range padded by `pad` of the range on each side;
    /// a zero or non-finite range is widened to ±0.5 (or ±5% of the value) so it can be drawn.
    pub fn over(values: impl IntoIterator<Item = f64>, pad: f64, r0: f64, r1: f64) -> Scale {
        let (mut lo, mut hi) = (f64::INFINITY, f64::NEG_INFINITY);
        for v in values.into_iter().filter(|v| v.is_finite()) {
            lo = lo.min(v);
            hi = hi.max(v);
        }
        if !lo.is_finite() {
            (lo, hi) = (0.0, 1.0);
        }
        let span = hi - lo;
        if span <= 0.0 {
            let w = if lo == 0.0 { 0.5 } else { lo.abs() * 0.05 };
            (lo, hi) = (lo - w, hi + w);
        } else {
            (lo, hi) = (lo - pad * span, hi + pad * span);
        }
        Scale {
            d0: lo,
            d1: hi,
            r0,
            r1,
        }
    }

    pub fn map(&self, v: f64) -> f64 {
        self.r0 + (v - self.d0) / (self.d1 - self.d0) * (self.r1 - self.r0)
    }

    /// Clamp a data value to the domain.
    pub fn clamp(&self, v: f64) -> f64 {
        v.clamp(self.d0.min(self.d1), self.d0.max(self.d1))
    }

    /// Ticks at multiples of 1, 2 or 5 × 10^k inside the domain, about `target` of
    /// them, with the decimals their labels need.
    pub fn ticks(&self, target: usize) -> (Vec<f64>, usize) {
        let span = (self.d1 - self.d0).abs();
        let raw = span / target.max(1) as f64;
        let mag = 10f64.powf(raw.log10().floor());
        // The round step whose tick count comes nearest the target.
        let step = [1.0, 2.0, 5.0, 10.0]
            .iter()
            .map(|m| m * mag)
            .min_by(|a, b| {
                let off = |s: f64| (span / s - target as f64).abs();
                off(*a).total_cmp(&off(*b))
            })
            .unwrap_or(mag);
        let lo = self.d0.min(self.d1);
        let hi = self.d0.max(self.d1);
        let first = (lo / step).ceil() as i64;
        let last = (hi / step).floor() as i64;
        let ticks = (first..=last).map(|k| k as f64 * step).collect();
        let decimals = (-step.log10().floor()).max(0.0) as usize;
        (ticks, decimals)
    }
}

/// A tick label: fixed decimals, a true minus sign, no "-0".
pub fn tick_label(v: f64, decimals: usize) -> String {
    let s = format!("{v:.decimals$}");
    let zero = s
        .trim_start_matches('-')
        .chars()
        .all(|c| c == '0' || c == '.');
    if zero {
        return s.trim_start_matches('-').to_string();
    }
    s.replacen('-', "\u{2212}", 1)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn ticks_are_round_and_inside() {
        let s = Scale {
            d0: 0.13,
            d1: 9.7,
            r0: 0.0,
            r1: 100.0,
        };
        let (t, d) = s.ticks(5);
        assert_eq!(t, vec![2.0, 4.0, 6.0, 8.0]);
        assert_eq!(d, 0);
        let s = Scale {
            d0: -0.031,
            d1: 0.048,
            r0: 0.0,
            r1: 1.0,
        };
        let (t, d) = s.ticks(5);
        assert_eq!(d, 2);
        assert_eq!(
            t.iter().map(|v| tick_label(*v, d)).collect::<Vec<_>>(),
            ["\u{2212}0.02", "0.00", "0.02", "0.04"]
        );
        assert_eq!(s.map(-0.031), 0.0);
        assert!((s.map(0.048) - 1.0).abs() < 1e-12);
    }
}
