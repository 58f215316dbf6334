//! The `probes`, `regions`, `turning` and `effects` arrays of the JSON
//! document. The keys of the design come first and never change; extra keys
//! (`df`, `boot_ci`, `stats_over`, `fieller_shape`, …) only add.

use engine::probe::{
    EffectResult, EndSlope, Estimate, FiellerShape, ProbeResult, RegionsResult, Shape, Significant,
    StatsOver, TurningResult,
};
use serde_json::{json, Value};

use crate::json::num;
use crate::Output;

fn pair(p: Option<(f64, f64)>) -> Value {
    match p {
        Some((a, b)) => json!([num(a), num(b)]),
        None => Value::Null,
    }
}

fn bootstrap(b: Option<(u32, u64)>) -> Value {
    match b {
        Some((draws, seed)) => json!({"draws": draws, "seed": seed}),
        None => Value::Null,
    }
}

/// The arrays in file order: (probes, regions, turning, effects).
pub fn arrays(outputs: &[Output]) -> [Vec<Value>; 4] {
    let mut a: [Vec<Value>; 4] = Default::default();
    for o in outputs {
        match o {
            Output::Probe(p) => a[0].push(probe(p)),
            Output::Regions(r) => a[1].push(regions(r)),
            Output::Turning(t) => a[2].push(turning(t)),
            Output::Effect(e) => a[3].push(effect(e)),
            Output::Plot(_) => {}
        }
    }
    a
}

/// The figures written, for scripts that want to pick them up.
pub fn figures(outputs: &[Output]) -> Vec<Value> {
    outputs
        .iter()
        .filter_map(|o| match o {
            Output::Plot(p) => Some(json!({
                "model": p.model,
                "focal": p.focal,
                "moderator": p.moderator,
                "path": p.path.display().to_string(),
            })),
            _ => None,
        })
        .collect()
}

fn estimate_fields(e: &Estimate) -> [(&'static str, Value); 8] {
    [
        ("std_error", num(e.std_error)),
        ("df", num(e.df)),
        ("t", num(e.t)),
        ("p", num(e.p)),
        ("ci_low", num(e.ci_low)),
        ("ci_high", num(e.ci_high)),
        ("boot_ci", pair(e.boot_ci)),
        ("estimate", num(e.estimate)),
    ]
}

fn probe(p: &ProbeResult) -> Value {
    let at: Vec<Value> =
        p.at.iter()
            .map(|a| {
                let mut m = serde_json::Map::new();
                m.insert("label".into(), json!(a.label));
                m.insert("value".into(), num(a.value));
                m.insert("effect".into(), num(a.effect.estimate));
                for (k, v) in estimate_fields(&a.effect) {
                    if k != "estimate" {
                        m.insert(k.into(), v);
                    }
                }
                Value::Object(m)
            })
            .collect();
    let held: serde_json::Map<String, Value> = p
        .held_at
        .iter()
        .map(|(n, v)| (n.clone(), num(*v)))
        .collect();
    json!({
        "model": p.model,
        "focal": p.focal,
        "moderator": p.moderator,
        "at": at,
        "level": num(p.level),
        "stats_over": match p.stats_over.0 { StatsOver::Rows => "rows", StatsOver::Groups => "groups" },
        "stats_group": p.stats_over.1,
        "held_at": held,
        "bootstrap": bootstrap(p.bootstrap),
        "notes": p.notes,
    })
}

fn regions(r: &RegionsResult) -> Value {
    json!({
        "model": r.model,
        "focal": r.focal,
        "moderator": r.moderator,
        "alpha": num(r.alpha),
        "critical": num(r.critical),
        "bounds": r.bounds.iter().map(|b| num(*b)).collect::<Vec<_>>(),
        "significant": match r.significant {
            Significant::Inside => "inside",
            Significant::Outside => "outside",
            Significant::Everywhere => "everywhere",
            Significant::Nowhere => "nowhere",
            Significant::Above => "above",
            Significant::Below => "below",
        },
        "data_min": num(r.data_min),
        "data_max": num(r.data_max),
        "df": num(r.df),
        "boot_significant": r.boot_significant.as_ref().map(|v| v.iter().map(|(a, b)| json!([num(*a), num(*b)])).collect::<Vec<_>>()),
        "bootstrap": bootstrap(r.bootstrap),
        "bounds_inside_data": r.bounds.iter().map(|b| *b >= r.data_min && *b <= r.data_max).collect::<Vec<_>>(),
        "notes": r.notes,
    })
}

fn slope(s: &EndSlope) -> Value {
    json!({"x": num(s.x), "slope": num(s.slope), "t": num(s.t), "std_error": num(s.std_error)})
}

fn turning(r: &TurningResult) -> Value {
    let at: Vec<Value> = r
        .at
        .iter()
        .map(|t| {
            json!({
                "label": t.label,
                "value": t.value.map_or(Value::Null, num),
                "point": num(t.point),
                "std_error": num(t.std_error),
                "ci_delta": [num(t.ci_delta.0), num(t.ci_delta.1)],
                "ci_fieller": pair(t.ci_fieller),
                "slope_low": slope(&t.slope_low),
                "slope_high": slope(&t.slope_high),
                "u_test": {
                    "t": num(t.u_test.t),
                    "p": num(t.u_test.p),
                    "df": num(t.u_test.df),
                    "shape": match t.u_test.shape { Shape::U => "u", Shape::InvertedU => "inverted_u" },
                },
                "inside_data": t.inside_data,
                "ci_inside_data": t.ci_inside_data,
                "fieller_shape": match t.fieller_shape {
                    FiellerShape::Bounded => "bounded",
                    FiellerShape::TwoRays => "two_rays",
                    FiellerShape::Unbounded => "unbounded",
                },
                "fieller_roots": t.fieller_roots.iter().map(|v| num(*v)).collect::<Vec<_>>(),
                "boot_ci": pair(t.boot_ci),
            })
        })
        .collect();
    json!({
        "model": r.model,
        "variable": r.variable,
        "moderator": r.moderator,
        "at": at,
        "data_min": num(r.data_min),
        "data_max": num(r.data_max),
        "level": num(r.level),
        "bootstrap": bootstrap(r.bootstrap),
        "notes": r.notes,
    })
}

fn effect(e: &EffectResult) -> Value {
    let x = &e.effect;
    json!({
        "model": e.model,
        "variable": e.variable,
        "estimate": num(x.estimate),
        "std_error": num(x.std_error),
        "ci_low": num(x.ci_low),
        "ci_high": num(x.ci_high),
        "df": num(x.df),
        "t": num(x.t),
        "p": num(x.p),
        "boot_ci": pair(x.boot_ci),
        "notes": e.notes,
    })
}
