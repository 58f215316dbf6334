//! Time `read_csv` on an existing file: `cargo run --release --example load_time -- FILE`.
fn main() {
    let Some(path) = std::env::args().nth(1) else {
        eprintln!("usage: load_time FILE");
        std::process::exit(2);
    };
    match frame::bench_support::time_read_csv(std::path::Path::new(&path), 3) {
        Ok((secs, rows, cols)) => {
            let mb = std::fs::metadata(&path).map_or(0.0, |m| m.len() as f64 / 1e6);
            println!(
                "{rows} rows x {cols} columns: {secs:.3} s, {:.1} MB/s",
                mb / secs
            );
        }
        Err(e) => {
            eprintln!("{e}");
            std::process::exit(1);
        }
    }
}
