//! Seeded random numbers for the numerical tests (splitmix64), so every test
//! sees the same data on every machine without a dependency.

pub struct Rng(pub u64);

#[allow(dead_code)] // not every test file draws every kind of number
impl Rng {
    pub fn next(&mut self) -> u64 {
        self.0 = self.0.wrapping_add(0x9E37_79B9_7F4A_7C15);
        let mut z = self.0;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        z ^ (z >> 31)
    }
    pub fn unif(&mut self) -> f64 {
        (self.next() >> 11) as f64 / (1u64 << 53) as f64
    }
    pub fn normal(&mut self) -> f64 {
        let u = self.unif().max(1e-300);
        let v = self.unif();
        (-2.0 * u.ln()).sqrt() * (2.0 * std::f64::consts::PI * v).cos()
    }
    pub fn below(&mut self, m: u32) -> u32 {
        (self.next() % m as u64) as u32
    }
}
