//! Timing the cluster bootstrap, for the benchmark command and the example.

use std::time::Instant;

use super::{run, Output, ProbeOptions};

/// Wall time of one probing request with a bootstrap on a given number of threads.
#[derive(Clone, Debug, PartialEq)]
pub struct BootTiming {
    pub threads: usize,
    pub draws: u32,
    pub seconds: f64,
    pub output: Output,
}

/// Run `request` (which should carry `bootstrap N seed S`) in a rayon pool of
/// `threads` threads and time it.
pub fn time_bootstrap(
    request: &check::Request,
    model: &check::ResolvedModel,
    fit: &crate::ModelFit,
    frame: &frame::Frame,
    panel: Option<&check::PanelIndex>,
    threads: usize,
) -> Result<BootTiming, crate::FitError> {
    let pool = rayon::ThreadPoolBuilder::new()
        .num_threads(threads.max(1))
        .build()
        .map_err(|e| crate::FitError {
            model: model.name.clone(),
            message: format!("could not start {threads} threads: {e}"),
        })?;
    let options = ProbeOptions::default();
    let start = Instant::now();
    let output = pool.install(|| run(request, model, fit, frame, panel, &options))?;
    Ok(BootTiming {
        threads,
        draws: request.bootstrap.map_or(0, |b| b.0),
        seconds: start.elapsed().as_secs_f64(),
        output,
    })
}
