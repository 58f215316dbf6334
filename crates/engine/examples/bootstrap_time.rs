//! Times the cluster bootstrap of the firm-year demo model: 2,000 draws of
//! model `shape` in demo-data/suppliers.slope (`turning shape: suppliers`), on 1
//! and 2 threads.
//!
//! Run: cargo run --release -p engine --example bootstrap_time [-- DRAWS]

use std::path::Path;

use check::{check, FileLoader};
use engine::probe::{time_bootstrap, Output};
use engine::{fit, FitOptions};

fn main() {
    let draws: u32 = std::env::args()
        .nth(1)
        .and_then(|a| a.parse().ok())
        .unwrap_or(2000);
    let dir = Path::new(env!("CARGO_MANIFEST_DIR")).join("../../demo-data");
    let file = dir.join("suppliers.slope");
    let mut text = std::fs::read_to_string(&file).expect("demo-data/suppliers.slope");
    text.push_str(&format!(
        "\nturning shape: suppliers bootstrap {draws} seed 7\n"
    ));
    let parsed = syntax::parse(&text);
    let c = check(&text, &parsed, &dir, &FileLoader);
    if c.has_errors() {
        eprintln!("{:?}", c.diagnostics);
        std::process::exit(1);
    }
    let request = c.requests.last().expect("the appended statement");
    let model = &c.models[request.model];
    let frame = &c.data.as_ref().expect("demo data").frame;
    let panel = c.panel_index.as_deref();
    let f = fit(model, frame, panel, &FitOptions::default()).expect("the demo model fits");
    println!(
        "model `{}`: {} rows, {} coefficients, {} draws",
        f.name,
        f.n_obs,
        f.coefficients.len(),
        draws
    );
    for threads in [1, 2] {
        match time_bootstrap(request, model, &f, frame, panel, threads) {
            Ok(t) => {
                let ci = match &t.output {
                    Output::Turning(r) => r.at[0].boot_ci,
                    _ => None,
                };
                println!(
                    "{} thread(s): {:.2} s ({:.2} ms per draw); bootstrap interval {:?}",
                    threads,
                    t.seconds,
                    1000.0 * t.seconds / draws as f64,
                    ci
                );
            }
            Err(e) => {
                eprintln!("{e}");
                std::process::exit(1);
            }
        }
    }
}
