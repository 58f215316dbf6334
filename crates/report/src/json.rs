//! The JSON document of the design: the stable machine interface. Numbers are
//! JSON numbers; what does not apply is `null`.

use engine::ModelFit;
use serde_json::{json, Map, Value};

use crate::Results;

/// A finite number, or null (JSON has no NaN).
pub(crate) fn num(x: f64) -> Value {
    if x.is_finite() {
        json!(x)
    } else {
        Value::Null
    }
}

pub fn document(results: &Results<'_>) -> Value {
    let [probes, regions, turning, effects] = crate::json_probe::arrays(results.probing);
    json!({
        "models": results.fits.iter().map(model).collect::<Vec<_>>(),
        "probes": probes,
        "regions": regions,
        "turning": turning,
        "effects": effects,
        "figures": crate::json_probe::figures(results.probing),
        "comparisons": results.comparisons.iter().map(|c| json!({
            "models": c.models,
            "statistic": num(c.statistic),
            "df": [num(c.df.0), num(c.df.1)],
            "p": num(c.p),
            "method": c.method,
        })).collect::<Vec<_>>(),
        "diagnostics": results.diagnostics.iter().map(|d| json!({
            "severity": d.severity,
            "message": d.message,
            "line": d.line,
            "column": d.column,
        })).collect::<Vec<_>>(),
    })
}

fn model(fit: &ModelFit) -> Value {
    let mut groups = Map::new();
    for (g, n) in &fit.n_groups {
        groups.insert(g.clone(), json!(n));
    }
    let s = &fit.stats;
    json!({
        "name": fit.name,
        "kind": fit.kind.as_str(),
        "outcome": fit.outcome,
        "n_obs": fit.n_obs,
        "n_groups": groups,
        "dropped_rows": { "missing": fit.dropped.missing, "singletons": fit.dropped.singletons },
        "coefficients": fit.coefficients.iter().map(|c| json!({
            "term": c.term,
            "estimate": num(c.estimate),
            "std_error": num(c.std_error),
            "df": num(c.df),
            "t": num(c.t),
            "p": num(c.p),
            "ci_low": num(c.ci_low),
            "ci_high": num(c.ci_high),
        })).collect::<Vec<_>>(),
        "variance_components": [],
        "fit": {
            "loglik": num(s.loglik),
            "deviance": num(s.deviance),
            "aic": num(s.aic),
            "bic": num(s.bic),
            "r2": num(s.r2),
            "r2_within": s.r2_within.map_or(Value::Null, num),
            "converged": s.converged,
            "iterations": s.iterations,
        },
        "errors": fit.errors.as_str(),
        "df_method": match fit.df_method {
            check::DfMethod::Residual => "residual",
            check::DfMethod::Satterthwaite => "satterthwaite",
        },
    })
}
