//! The load benchmark's data and timing, kept beside the reader so that the
//! CLI's `bench load` and the crate's own example measure the same thing.

use crate::{read_csv, ReadOptions};
use std::io::Write;
use std::path::Path;
use std::time::Instant;

/// Column names of the benchmark file: two ids, five measures, one text column.
pub const BENCH_HEADER: &str = "firm,year,sales,margin,growth,leverage,score,sector";

/// Sector names; one holds a comma and so is quoted in the file, to keep the
/// quote-aware path in the measurement.
const SECTORS: [&str; 12] = [
    "manufacturing",
    "retail",
    "logistics",
    "software",
    "health",
    "energy",
    "finance",
    "\"food, drink\"",
    "construction",
    "media",
    "mining",
    "education",
];

/// A small deterministic generator (xorshift64*), so that every run and every
/// machine measures the same bytes; shared by the benchmarks' data generators.
pub struct Rng(pub u64);

impl Rng {
    pub fn next_u64(&mut self) -> u64 {
        self.0 ^= self.0 >> 12;
        self.0 ^= self.0 << 25;
        self.0 ^= self.0 >> 27;
        self.0.wrapping_mul(0x2545_f491_4f6c_dd1d)
    }
    pub fn below(&mut self, n: u64) -> u64 {
        self.next_u64() % n.max(1)
    }
    /// Uniform on [0, 1) from the top 53 bits.
    pub fn uniform(&mut self) -> f64 {
        (self.next_u64() >> 11) as f64 / (1u64 << 53) as f64
    }
    /// Standard normal by Box–Muller.
    pub fn normal(&mut self) -> f64 {
        let u = self.uniform().max(1e-300);
        let v = self.uniform();
        (-2.0 * u.ln()).sqrt() * (std::f64::consts::TAU * v).cos()
    }
}

/// Write `v / 10^4` with four decimals; far quicker than formatting floats,
/// and the file's digits are what matter, not how they were made.
fn push_fixed4(out: &mut Vec<u8>, v: i64) {
    if v < 0 {
        out.push(b'-');
    }
    let a = v.unsigned_abs();
    push_uint(out, a / 10_000);
    out.push(b'.');
    let f = a % 10_000;
    out.extend_from_slice(&[
        b'0' + (f / 1000) as u8,
        b'0' + (f / 100 % 10) as u8,
        b'0' + (f / 10 % 10) as u8,
        b'0' + (f % 10) as u8,
    ]);
}

fn push_uint(out: &mut Vec<u8>, mut a: u64) {
    let mut tmp = [0u8; 20];
    let mut i = tmp.len();
    loop {
        i -= 1;
        tmp[i] = b'0' + (a % 10) as u8;
        a /= 10;
        if a == 0 {
            break;
        }
    }
    out.extend_from_slice(&tmp[i..]);
}

/// Write the benchmark CSV with `rows` data rows to `path`; returns its size
/// in bytes. Firms come in runs of 25 years; about one measure in 200 is
/// missing (an empty field).
pub fn generate_bench_csv(path: &Path, rows: usize) -> std::io::Result<u64> {
    let file = std::fs::File::create(path)?;
    let mut w = std::io::BufWriter::with_capacity(1 << 20, file);
    w.write_all(BENCH_HEADER.as_bytes())?;
    w.write_all(b"\n")?;
    let mut rng = Rng(0x9e37_79b9_7f4a_7c15);
    let mut line = Vec::with_capacity(128);
    let mut size = BENCH_HEADER.len() as u64 + 1;
    for r in 0..rows {
        line.clear();
        push_uint(&mut line, (r / 25) as u64 + 1);
        line.push(b',');
        push_uint(&mut line, 2000 + (r % 25) as u64);
        let ranges: [(i64, i64); 5] = [
            (0, 500_000_000),
            (-5000, 30_000),
            (-20_000, 20_000),
            (0, 30_000),
            (-1_000_000, 1_000_000),
        ];
        for (lo, hi) in ranges {
            line.push(b',');
            if rng.below(200) != 0 {
                let v = lo + rng.below((hi - lo) as u64) as i64;
                push_fixed4(&mut line, v);
            }
        }
        line.push(b',');
        line.extend_from_slice(SECTORS[rng.below(SECTORS.len() as u64) as usize].as_bytes());
        line.push(b'\n');
        size += line.len() as u64;
        w.write_all(&line)?;
    }
    w.flush()?;
    Ok(size)
}

/// Best wall-clock seconds of `repeats` loads of `path`, with the frame's row
/// and column counts as a check that the load did its work.
pub fn time_read_csv(path: &Path, repeats: usize) -> Result<(f64, usize, usize), String> {
    let mut best = f64::INFINITY;
    let mut shape = (0, 0);
    for _ in 0..repeats.max(1) {
        let t = Instant::now();
        let frame = read_csv(path, &ReadOptions::default()).map_err(|e| e.to_string())?;
        let secs = t.elapsed().as_secs_f64();
        best = best.min(secs);
        shape = (frame.n_rows(), frame.columns().len());
        drop(frame);
    }
    Ok((best, shape.0, shape.1))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn generated_file_reads_back_with_expected_shape() {
        let dir = std::env::temp_dir().join(format!("slopewise-bench-test-{}", std::process::id()));
        std::fs::create_dir_all(&dir).unwrap();
        let path = dir.join("b.csv");
        let size = generate_bench_csv(&path, 2000).unwrap();
        assert_eq!(size, std::fs::metadata(&path).unwrap().len());
        let f = read_csv(&path, &ReadOptions::default()).unwrap();
        assert_eq!(f.n_rows(), 2000);
        assert_eq!(f.columns().len(), 8);
        assert!(f.columns()[..7].iter().all(|c| c.is_numeric()));
        let sector = f.column("sector").unwrap().as_categorical().unwrap();
        assert!(sector.levels.iter().any(|l| l == "food, drink"));
        assert!(f.column("sales").unwrap().n_missing() > 0);
        std::fs::remove_dir_all(&dir).unwrap();
    }
}
