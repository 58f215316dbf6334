//! Probing fitted models: effects of a focal variable at moderator values,
//! Johnson–Neyman regions, turning points with the U test, average marginal
//! effects and the cluster bootstrap.
//!
//! Everything here reads a model only through [`Inference`]: a coefficient
//! vector, its covariance matrix and a df rule per contrast. Least squares and
//! within models supply a constant df; mixed models will supply a
//! Satterthwaite df per contrast without changes here.
//!
//! Module map: `point` (the model seen from the focal variable: term values and
//! their derivatives by forward-mode dual numbers), `moderator` (moderator
//! values: mean, SD, percentiles, over rows or groups), `contrast` (a linear
//! contrast with its inference; the quadratic of interval inversion), `simple`
//! (`probe`), `regions`, `turning`, `average` (`effect`), `figure` (`plot`),
//! `bootstrap` and `rng` (the cluster bootstrap), `timing` (its benchmark).

mod average;
mod bootstrap;
mod contrast;
mod figure;
mod moderator;
mod point;
mod regions;
mod rng;
mod simple;
mod timing;
mod turning;

use std::borrow::Cow;

pub use timing::{time_bootstrap, BootTiming};

/// What probing needs from a fitted model.
pub trait Inference {
    /// Coefficient labels, in the order of `coefficients` and the covariance.
    fn labels(&self) -> &[String];
    /// Borrowed where the model stores them as a vector, built where it does not.
    fn coefficients(&self) -> Cow<'_, [f64]>;
    /// Covariance of the coefficients (classical, robust or clustered as the model asked).
    fn covariance(&self, i: usize, j: usize) -> f64;
    /// Denominator df for the linear contrast `gradient · b`.
    fn df_for(&self, gradient: &[f64]) -> f64;
    /// Words for the df rule, for notes: "residual", "clusters − 1", "Satterthwaite".
    fn df_words(&self) -> String;
}

/// Which statistic a moderator value was computed over.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum StatsOver {
    /// Rows of the estimation sample.
    Rows,
    /// One value per group of the named grouping (the moderator is constant within it).
    Groups,
}

/// One estimated quantity with its inference.
#[derive(Clone, Debug, PartialEq)]
pub struct Estimate {
    pub estimate: f64,
    pub std_error: f64,
    pub df: f64,
    pub t: f64,
    pub p: f64,
    pub ci_low: f64,
    pub ci_high: f64,
    /// Percentile interval of the cluster bootstrap, when asked for.
    pub boot_ci: Option<(f64, f64)>,
}

/// The effect of the focal variable at one moderator value.
#[derive(Clone, Debug, PartialEq)]
pub struct ProbeAt {
    /// As written: `-1sd`, `mean`, `p90`, `2.5`.
    pub label: String,
    /// The moderator value used.
    pub value: f64,
    pub effect: Estimate,
}

#[derive(Clone, Debug, PartialEq)]
pub struct ProbeResult {
    pub model: String,
    pub focal: String,
    pub moderator: String,
    pub at: Vec<ProbeAt>,
    /// Over what the moderator's mean, SD and percentiles were taken, and the grouping when `Groups`.
    pub stats_over: (StatsOver, Option<String>),
    /// Values the other variables of the focal's terms were held at: (name, value).
    pub held_at: Vec<(String, f64)>,
    pub level: f64,
    /// Bootstrap draws and seed, when asked for; draws that failed to fit are in `notes`.
    pub bootstrap: Option<(u32, u64)>,
    pub notes: Vec<String>,
}

/// Where the effect of the focal variable is significant, by moderator value.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Significant {
    Inside,
    Outside,
    Everywhere,
    Nowhere,
    /// Degenerate quadratic (one bound): significant above the bound.
    Above,
    /// Degenerate quadratic (one bound): significant below the bound.
    Below,
}

#[derive(Clone, Debug, PartialEq)]
pub struct RegionsResult {
    pub model: String,
    pub focal: String,
    pub moderator: String,
    pub alpha: f64,
    pub critical: f64,
    pub df: f64,
    /// Real roots of the Johnson–Neyman quadratic, ascending (0 or 2; 1 for a degenerate linear case).
    pub bounds: Vec<f64>,
    pub significant: Significant,
    pub data_min: f64,
    pub data_max: f64,
    /// With `bootstrap`: the stretches of the observed range of the moderator where
    /// the percentile interval of the effect excludes zero (on a grid of 201 points).
    pub boot_significant: Option<Vec<(f64, f64)>>,
    /// Bootstrap draws and seed, when asked for.
    pub bootstrap: Option<(u32, u64)>,
    pub notes: Vec<String>,
}

/// Slope of the outcome in the focal variable at one end of its observed range.
#[derive(Clone, Debug, PartialEq)]
pub struct EndSlope {
    pub x: f64,
    pub slope: f64,
    pub std_error: f64,
    pub t: f64,
}

#[derive(Clone, Debug, PartialEq)]
pub struct TurningAt {
    /// Moderator label (`p10`) or empty without a moderator.
    pub label: String,
    /// Moderator value, `None` without a moderator.
    pub value: Option<f64>,
    pub point: f64,
    pub std_error: f64,
    pub ci_delta: (f64, f64),
    /// `None` when the Fieller set is not a bounded interval; see `fieller_shape`.
    pub ci_fieller: Option<(f64, f64)>,
    pub fieller_shape: FiellerShape,
    /// Real roots of the Fieller quadratic, ascending: the ends of the interval
    /// (`Bounded`) or of the two rays (`TwoRays`); empty when `Unbounded`.
    pub fieller_roots: Vec<f64>,
    pub slope_low: EndSlope,
    pub slope_high: EndSlope,
    /// Lind–Mehlum test of a U (or inverted U) against monotone or the opposite shape.
    pub u_test: UTest,
    /// The turning point lies within [min, max] of the focal variable in the sample.
    pub inside_data: bool,
    /// Its delta-method interval lies within the data too.
    pub ci_inside_data: bool,
    pub boot_ci: Option<(f64, f64)>,
}

#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum FiellerShape {
    /// A bounded interval.
    Bounded,
    /// The complement of an interval: everything outside two points.
    TwoRays,
    /// Every value (the curvature is not significant at this level).
    Unbounded,
}

#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Shape {
    U,
    InvertedU,
}

#[derive(Clone, Debug, PartialEq)]
pub struct UTest {
    pub shape: Shape,
    /// The smaller of the two end-slope t values in the direction the shape requires.
    pub t: f64,
    /// One-sided p value of `t`.
    pub p: f64,
    pub df: f64,
}

#[derive(Clone, Debug, PartialEq)]
pub struct TurningResult {
    pub model: String,
    pub variable: String,
    pub moderator: Option<String>,
    pub at: Vec<TurningAt>,
    pub data_min: f64,
    pub data_max: f64,
    pub level: f64,
    pub bootstrap: Option<(u32, u64)>,
    pub notes: Vec<String>,
}

#[derive(Clone, Debug, PartialEq)]
pub struct EffectResult {
    pub model: String,
    pub variable: String,
    pub effect: Estimate,
    /// Confidence level of the interval.
    pub level: f64,
    pub notes: Vec<String>,
}

/// A point of a curve with its pointwise confidence band.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct BandPoint {
    pub x: f64,
    pub y: f64,
    pub low: f64,
    pub high: f64,
}

/// One line of a figure: a label (`digital = p90 (0.71)`) and its points.
#[derive(Clone, Debug, PartialEq)]
pub struct Series {
    pub label: String,
    pub points: Vec<BandPoint>,
}

/// What a `plot` statement draws; the report turns it into SVG.
#[derive(Clone, Debug, PartialEq)]
pub enum PlotKind {
    /// `plot M: X across W at ...`: the fitted outcome against X, one line per moderator value.
    Lines { series: Vec<Series> },
    /// `plot M: X across W`: the effect of X across the observed range of W, with the
    /// region of significance shaded (`regions` holds its bounds).
    EffectBand {
        series: Series,
        regions: RegionsResult,
    },
    /// `plot M: X` on a curvilinear X: the fitted outcome against X with the turning point.
    Curve {
        series: Series,
        turning: Option<TurningAt>,
    },
}

#[derive(Clone, Debug, PartialEq)]
pub struct PlotResult {
    pub model: String,
    pub focal: String,
    pub moderator: Option<String>,
    /// Axis titles, from the term labels.
    pub x_title: String,
    pub y_title: String,
    pub kind: PlotKind,
    /// Observed values for the rug under the x axis (the moderator for `EffectBand`, X otherwise).
    pub rug: Vec<f64>,
    pub level: f64,
    /// Where the SVG goes (already resolved against the model file's folder).
    pub path: std::path::PathBuf,
    pub notes: Vec<String>,
}

/// What one probing statement produced.
// One value per statement, matched once by the report: boxing the figure data
// would save a few hundred bytes per statement at the cost of every match.
#[allow(clippy::large_enum_variant)]
#[derive(Clone, Debug, PartialEq)]
pub enum Output {
    Probe(ProbeResult),
    Regions(RegionsResult),
    Turning(TurningResult),
    Effect(EffectResult),
    Plot(PlotResult),
}

/// Settings of a probing run.
#[derive(Clone)]
pub struct ProbeOptions<'a> {
    /// Confidence level of intervals (0.95).
    pub level: f64,
    /// Called once per finished bootstrap draw (for a progress bar); must be cheap.
    pub on_draw: Option<&'a (dyn Fn() + Sync)>,
    /// Refit options for bootstrap draws.
    pub fit: crate::FitOptions,
    /// Column indexes of the file's `groups` levels, innermost first: further
    /// levels at which a moderator may be a group-level variable, and what a
    /// model with no cluster, fixed or panel grouping resamples.
    pub groups: &'a [usize],
}

impl Default for ProbeOptions<'_> {
    fn default() -> Self {
        ProbeOptions {
            level: 0.95,
            on_draw: None,
            fit: crate::FitOptions::default(),
            groups: &[],
        }
    }
}

/// Answer one checked probing statement from a fitted model.
///
/// `model` and `frame` are the ones `fit` was estimated from; they are needed to
/// evaluate the focal variable's terms at chosen points and, for the bootstrap,
/// to rebuild the design.
pub fn run(
    request: &check::Request,
    model: &check::ResolvedModel,
    fit: &crate::ModelFit,
    frame: &frame::Frame,
    panel: Option<&check::PanelIndex>,
    options: &ProbeOptions,
) -> Result<Output, crate::FitError> {
    let err = |message: String| crate::FitError {
        model: model.name.clone(),
        message,
    };
    if fit.name != model.name {
        return Err(err(format!(
            "the estimates given are those of model `{}`, not of `{}`; probe a model with its own fit",
            fit.name, model.name
        )));
    }
    if !(options.level > 0.0 && options.level < 1.0) {
        return Err(err(format!(
            "the confidence level {} is not between 0 and 1",
            options.level
        )));
    }
    if let Some((0, _)) = request.bootstrap {
        return Err(err(
            "`bootstrap 0` asks for no draws; give at least 1 (2000 is common practice)".into(),
        ));
    }
    let ctx = point::Focal::new(
        model,
        fit,
        frame,
        panel,
        &request.focal,
        request.moderator.as_deref(),
    )
    .map_err(err)?;
    let boot =
        |n_seed: (u32, u64)| bootstrap::Resampler::new(model, fit, frame, panel, n_seed, options);
    let out = match request.kind {
        check::RequestKind::Probe => {
            simple::probe(request, &ctx, fit, model, frame, options, &boot).map(Output::Probe)
        }
        check::RequestKind::Regions => {
            regions::regions(request, &ctx, fit, &boot).map(Output::Regions)
        }
        check::RequestKind::Turning => {
            turning::turning(request, &ctx, fit, model, frame, options, &boot).map(Output::Turning)
        }
        check::RequestKind::Effect => {
            average::effect(request, &ctx, fit, options).map(Output::Effect)
        }
        check::RequestKind::Plot => {
            figure::plot(request, &ctx, fit, model, frame, options).map(Output::Plot)
        }
    };
    out.map_err(err)
}

impl Inference for crate::ModelFit {
    fn labels(&self) -> &[String] {
        &self.design.labels
    }

    fn coefficients(&self) -> Cow<'_, [f64]> {
        Cow::Owned(self.coefficients.iter().map(|c| c.estimate).collect())
    }

    fn covariance(&self, i: usize, j: usize) -> f64 {
        self.vcov[(i, j)]
    }

    /// Least squares and within models test every contrast on the same df.
    fn df_for(&self, _gradient: &[f64]) -> f64 {
        self.df_inference
    }

    fn df_words(&self) -> String {
        match self.errors {
            check::ErrorsKind::Cluster => "clusters − 1".into(),
            _ => "residual".into(),
        }
    }
}
