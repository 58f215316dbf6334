"""Reference values for the probing layer: effects at moderator values,
Johnson-Neyman bounds, turning points with delta and Fieller intervals, the
Lind-Mehlum U test and average marginal effects.

Writes, beside this file:
  probe_ols.csv    invented cross-section, 300 rows in 30 groups `g`, with a
                   group-level moderator `wb` and a positive `s` for a log term;
  probe_curve.csv  invented cross-section, 400 rows in 40 groups, curvilinear outcomes
                   (and `ylin`, exactly linear in x, for the bad-input tests);
  probe_panel.csv  invented panel of 40 units over 8 periods with unit effects;
  probe.json       the cases: the model text, the statement, and the expected values.
Run: python3 tests/reference/probe.py

Library versions used to produce the committed files:
    numpy 2.4.6, pandas 3.1.1, scipy 1.17.1, statsmodels 0.15.0

How expected values are computed:
  * Coefficients b and covariance V come from statsmodels OLS: `fit()` (classical),
    `fit(cov_type="HC1")`, and for clustered errors the uncorrected sandwich
    `get_robustcov_results(cov_type="cluster", groups=g, use_correction=False)` times
    c = G/(G-1) * (N-1)/(N-K) (K = slopes, + intercept without fixed effects; unit
    effects nested in the clusters do not count), df = G - 1. The within model is fitted
    as LSDV (indicators for every unit but the first); its slope block is used.
  * Everything after that is numpy on (b, V): the effect of x is the derivative of the
    fitted outcome, written out by hand for each model (the gradient g in b), SE
    sqrt(g'Vg), t = est/SE, two-sided p and the interval from scipy's t distribution.
  * Moderator values: mean, SD (ddof=1), and numpy.percentile (linear interpolation, the
    default) over the estimation rows, or over one value per group of `g` when the
    moderator is constant within `g` and the model clusters by `g`.
  * Johnson-Neyman: roots of (A + C w)^2 = t^2 (Vaa + 2w Vac + w^2 Vcc) by numpy.roots.
  * Figure lines: statsmodels `get_prediction(...).summary_frame()` (mean and its
    interval) at the ends of the observed range of x.
  * Turning point x* = -A/G, delta SE from the gradient -(alpha + x* gamma)/G; Fieller
    set {x : (A + G x)^2 <= t^2 Var(A + G x)} by numpy.roots; end slopes at min and max
    of x; U test t = min of the end-slope t values in the direction of the shape,
    one-sided p = t.sf(t, df) (Lind and Mehlum 2010).
"""
import json
import os

import numpy as np
import pandas as pd
import scipy
import statsmodels
import statsmodels.api as sm
from scipy import stats

HERE = os.path.dirname(os.path.abspath(__file__))
LEVEL = 0.95

# ---------------------------------------------------------------------------
# data
# ---------------------------------------------------------------------------


def data_ols():
    rng = np.random.default_rng(20261201)
    n, G = 300, 30
    g = np.repeat(np.arange(G), n // G)
    x = rng.normal(0, 1, n)
    w = rng.normal(2, 1.5, n)
    z = rng.normal(0, 1, n)
    s = np.exp(rng.normal(1, 0.4, n))
    wb = rng.normal(0, 1, G)[g]
    u = rng.normal(0, 0.5, G)[g]
    e = lambda sd: rng.normal(0, sd, n)
    df = pd.DataFrame(
        {
            "g": [f"G{k + 1:02d}" for k in g],
            "x": x.round(4),
            "w": w.round(4),
            "z": z.round(4),
            "s": s.round(4),
            "wb": wb.round(4),
        }
    )
    x, w, z, s, wb = (df[c].to_numpy() for c in ["x", "w", "z", "s", "wb"])
    df["y"] = (1 + 0.6 * x + 0.3 * w - 0.35 * x * w + 0.4 * z + e(1.0)).round(4)
    df["y_in"] = (1 + 0.5 * x + 0.3 * w + 0.03 * x * w + e(2.0)).round(4)
    df["y_out"] = (1 + 1.5 * x + 0.2 * w + 0.25 * x * w + e(1.0)).round(4)
    df["y_none"] = (1 + 0.01 * x + 0.3 * w + 0.0 * x * w + e(4.0)).round(4)
    df["y_grp"] = (1 + 0.5 * x + 0.4 * wb + 0.3 * x * wb + u + e(1.0)).round(4)
    ls = np.log(s)
    df["y_log"] = (2 + 0.8 * ls + 0.3 * w + 0.25 * ls * w + e(1.0)).round(4)
    return df


def data_curve():
    rng = np.random.default_rng(20261202)
    n, G = 400, 40
    g = np.repeat(np.arange(G), n // G)
    x = rng.uniform(0, 10, n).round(3)
    w = rng.normal(0, 1, n).round(3)
    e = lambda sd: rng.normal(0, sd, n)
    df = pd.DataFrame({"g": [f"C{k + 1:02d}" for k in g], "x": x, "w": w})
    df["yq"] = (2 + 1.2 * x - 0.1 * x**2 + e(1.5)).round(4)
    df["ym"] = (
        2 + 1.2 * x - 0.1 * x**2 + 0.5 * w + 0.1 * x * w - 0.012 * x**2 * w + e(1.0)
    ).round(4)
    df["yflat"] = (1 + 0.01 * x - 0.001 * x**2 + e(4.0)).round(4)
    # Exactly linear in x (no noise): the fitted square is rounding noise (bad-input test).
    df["ylin"] = (1 + 2 * x).round(3)
    # A weak curve in much noise: the square's t is below the critical value
    # while the slope is not, so the Fieller set is two rays (x <= r1 or x >= r2).
    df["yrays"] = (1 + 0.8 * x - 0.05 * x**2 + e(4.0)).round(4)
    return df


def data_panel():
    rng = np.random.default_rng(20261203)
    U, T = 40, 8
    u = np.repeat(np.arange(U), T)
    t = np.tile(np.arange(T), U)
    a = rng.normal(0, 2, U)[u]
    x = (rng.uniform(0, 8, U * T) + 0.1 * a).round(3)
    w = (rng.normal(1, 1, U * T) + 0.2 * a).round(3)
    y = 3 + a + 0.8 * x - 0.06 * x**2 + 0.2 * w + 0.3 * x * w + rng.normal(0, 1, U * T)
    return pd.DataFrame(
        {"unit": [f"U{k + 1:02d}" for k in u], "period": 2000 + t, "x": x, "w": w, "y": y.round(4)}
    )


# ---------------------------------------------------------------------------
# fitting: (b, V, df) for named slope columns
# ---------------------------------------------------------------------------


def fit(df, outcome, cols, errors, cluster=None, fixed=None):
    """cols: dict name -> values. Returns names, b, V, df (slopes; intercept first when no fixed)."""
    X = pd.DataFrame(cols)
    names = list(X.columns)
    if fixed is None:
        X.insert(0, "(intercept)", 1.0)
        names = ["(intercept)"] + names
    else:
        d = pd.get_dummies(df[fixed], prefix="fe", drop_first=True).astype(float)
        X = pd.concat([X, d], axis=1)
        X.insert(0, "const", 1.0)
    y = df[outcome].to_numpy(float)
    m = sm.OLS(y, X.to_numpy(float))
    n = len(y)
    k_slopes = len(names)
    if errors == "classical":
        r = m.fit()
        V, dfi = r.cov_params(), r.df_resid
    elif errors == "hc1":
        r = m.fit(cov_type="HC1")
        V, dfi = r.cov_params(), n - X.shape[1]
    elif errors == "cluster":
        r0 = m.fit()
        codes = pd.factorize(df[cluster])[0]
        r = r0.get_robustcov_results(cov_type="cluster", groups=codes, use_correction=False)
        G = codes.max() + 1
        c = G / (G - 1) * (n - 1) / (n - k_slopes)
        V, dfi = r.cov_params() * c, G - 1
    else:
        raise ValueError(errors)
    if fixed is None:
        sel = list(range(k_slopes))
    else:
        sel = list(range(1, 1 + k_slopes))
    b = r.params[sel]
    V = np.asarray(V)[np.ix_(sel, sel)]
    return names, b, V, float(dfi)


def estimate(g, b, V, df):
    g = np.asarray(g, float)
    est = float(g @ b)
    se = float(np.sqrt(g @ V @ g))
    t = est / se
    q = stats.t.ppf(0.5 + LEVEL / 2, df)
    return {
        "estimate": est,
        "std_error": se,
        "df": df,
        "t": t,
        "p": float(2 * stats.t.sf(abs(t), df)),
        "ci_low": est - q * se,
        "ci_high": est + q * se,
    }


def at_values(v, specs):
    """Moderator values for `at` labels over the values v (rows or groups)."""
    out = []
    m, sd = float(np.mean(v)), float(np.std(v, ddof=1))
    for s in specs:
        if s == "mean":
            val = m
        elif s == "min":
            val = float(np.min(v))
        elif s == "max":
            val = float(np.max(v))
        elif s.endswith("sd"):
            val = m + float(s[:-2]) * sd
        elif s.startswith("p"):
            val = float(np.percentile(v, float(s[1:])))
        else:
            val = float(s)
        out.append((s, val))
    return out


def quad_roots(q2, q1, q0):
    r = np.roots([q2, q1, q0])
    r = np.sort(r[np.isreal(r)].real)
    return [float(v) for v in r]


# ---------------------------------------------------------------------------
# cases
# ---------------------------------------------------------------------------


def model_text(data, outcome, terms, errors, cluster=None, fixed=None):
    s = f'source "{data}"\nmodel m {{\n  {outcome} = {" + ".join(terms)}\n'
    if fixed:
        s += f"  fixed {fixed}\n"
    if errors == "cluster":
        s += f"  errors cluster {cluster}\n"
    elif errors != "classical":
        s += f"  errors {errors}\n"
    return s + "}\n"


def probe_case(name, df, data, outcome, errors, specs, cluster=None, wcol="w", over_groups=False):
    x, w = df["x"].to_numpy(), df[wcol].to_numpy()
    cols = {"x": x, wcol: w, f"x*{wcol}": x * w}
    names, b, V, dfi = fit(df, outcome, cols, errors, cluster)
    if over_groups:
        v = df.groupby(cluster, sort=False)[wcol].first().to_numpy()
    else:
        v = w
    at = []
    for label, val in at_values(v, specs):
        g = [0.0, 1.0, 0.0, val]  # d/dx of b0 + b1 x + b2 w + b3 x w
        at.append({"label": label, "value": val, **estimate(g, b, V, dfi)})
    return {
        "name": name,
        "kind": "probe",
        "text": model_text(data, outcome, ["x", wcol, f"x * {wcol}"], errors, cluster)
        + f"probe m: x across {wcol} at {', '.join(specs)}\n",
        "expected": {"at": at, "stats_over": "groups" if over_groups else "rows"},
    }


def regions_case(name, df, data, outcome, errors, want):
    x, w = df["x"].to_numpy(), df["w"].to_numpy()
    names, b, V, dfi = fit(df, outcome, {"x": x, "w": w, "x*w": x * w}, errors)
    t = stats.t.ppf(1 - 0.05 / 2, dfi)
    A, C = b[1], b[3]
    vaa, vac, vcc = V[1, 1], V[1, 3], V[3, 3]
    q2, q1, q0 = C**2 - t**2 * vcc, 2 * (A * C - t**2 * vac), A**2 - t**2 * vaa
    bounds = quad_roots(q2, q1, q0)
    if len(bounds) == 2:
        sig = "outside" if q2 > 0 else "inside"
    else:
        sig = "everywhere" if q2 > 0 else "nowhere"
    lo, hi = float(w.min()), float(w.max())
    assert sig == want[0], (name, sig, bounds, lo, hi)
    if want[1] == "in_data":
        assert all(lo <= v <= hi for v in bounds), (name, bounds, lo, hi)
    elif want[1] == "out_of_data":
        assert all(v < lo or v > hi for v in bounds), (name, bounds, lo, hi)
    return {
        "name": name,
        "kind": "regions",
        "text": model_text(data, outcome, ["x", "w", "x * w"], errors) + "regions m: x across w\n",
        "expected": {
            "bounds": bounds,
            "significant": sig,
            "critical": float(t),
            "df": dfi,
            "data_min": lo,
            "data_max": hi,
        },
    }


def turning_numbers(alpha, gamma, b, V, dfi, lo, hi):
    """alpha, gamma: gradients with slope(x) = (alpha + gamma x) . b"""
    A, Gm = alpha @ b, gamma @ b
    xs = -A / Gm
    h = -(alpha + xs * gamma) / Gm
    se = float(np.sqrt(h @ V @ h))
    t = stats.t.ppf(0.5 + LEVEL / 2, dfi)
    q2 = Gm**2 - t**2 * (gamma @ V @ gamma)
    q1 = 2 * (A * Gm - t**2 * (alpha @ V @ gamma))
    q0 = A**2 - t**2 * (alpha @ V @ alpha)
    roots = quad_roots(q2, q1, q0)
    if len(roots) == 2:
        shape = "bounded" if q2 > 0 else "two_rays"
    else:
        shape = "unbounded"
    ends = []
    for xe in (lo, hi):
        ge = alpha + gamma * xe
        s = float(ge @ b)
        sse = float(np.sqrt(ge @ V @ ge))
        ends.append({"x": xe, "slope": s, "std_error": sse, "t": s / sse})
    if Gm > 0:
        u_shape, ut = "U", min(-ends[0]["t"], ends[1]["t"])
    else:
        u_shape, ut = "inverted_U", min(ends[0]["t"], -ends[1]["t"])
    return {
        "point": float(xs),
        "std_error": se,
        "ci_delta": [float(xs - t * se), float(xs + t * se)],
        "fieller_shape": shape,
        "fieller_roots": roots,
        "slope_low": ends[0],
        "slope_high": ends[1],
        "u_test": {"shape": u_shape, "t": float(ut), "p": float(stats.t.sf(ut, dfi)), "df": dfi},
    }


def turning_simple(name, df, data, outcome, errors, want_shape):
    x = df["x"].to_numpy()
    names, b, V, dfi = fit(df, outcome, {"x": x, "x^2": x**2}, errors)
    alpha = np.array([0.0, 1.0, 0.0])
    gamma = np.array([0.0, 0.0, 2.0])
    r = turning_numbers(alpha, gamma, b, V, dfi, float(x.min()), float(x.max()))
    assert r["fieller_shape"] == want_shape, (name, r)
    return {
        "name": name,
        "kind": "turning",
        "text": model_text(data, outcome, ["x", "x^2"], errors) + "turning m: x\n",
        "expected": {"at": [{"label": "", **r}], "data_min": float(x.min()), "data_max": float(x.max())},
    }


def turning_moderated(name, df, data):
    x, w = df["x"].to_numpy(), df["w"].to_numpy()
    cols = {"x": x, "x^2": x**2, "w": w, "x*w": x * w, "x^2*w": x**2 * w}
    names, b, V, dfi = fit(df, "ym", cols, "cluster", "g")
    at = []
    for label, val in at_values(w, ["p10", "p50", "p90"]):
        # slope = b1 + 2 b2 x + b4 w + 2 b5 x w
        alpha = np.array([0, 1, 0, 0, val, 0.0])
        gamma = np.array([0, 0, 2, 0, 0, 2 * val])
        r = turning_numbers(alpha, gamma, b, V, dfi, float(x.min()), float(x.max()))
        # Haans et al. (2016): -(b1 + b4 w) / (2 (b2 + b5 w))
        assert abs(r["point"] + (b[1] + b[4] * val) / (2 * (b[2] + b[5] * val))) < 1e-9
        at.append({"label": label, "value": val, **r})
    return {
        "name": name,
        "kind": "turning",
        "text": model_text(data, "ym", ["x", "x^2", "w", "x * w", "x^2 * w"], "cluster", "g")
        + "turning m: x across w at p10, p50, p90\n",
        "expected": {"at": at, "data_min": float(x.min()), "data_max": float(x.max())},
    }


def effect_log(df, data):
    s, w = df["s"].to_numpy(), df["w"].to_numpy()
    ls = np.log(s)
    names, b, V, dfi = fit(df, "y_log", {"log(s)": ls, "w": w, "log(s)*w": ls * w}, "hc1")
    # d/ds of b1 log s + b3 log(s) w = (b1 + b3 w) / s; averaged over rows
    g = np.array([0.0, np.mean(1 / s), 0.0, np.mean(w / s)])
    ame = estimate(g, b, V, dfi)
    sm_ = float(np.mean(s))
    at = []
    for label, val in at_values(w, ["-1sd", "mean", "+1sd"]):
        gp = np.array([0.0, 1 / sm_, 0.0, val / sm_])
        at.append({"label": label, "value": val, **estimate(gp, b, V, dfi)})
    text = model_text(data, "y_log", ["log(s)", "w", "log(s) * w"], "hc1")
    return [
        {"name": "effect_log_product", "kind": "effect", "text": text + "effect m: s\n", "expected": {"effect": ame}},
        {
            "name": "probe_log_product",
            "kind": "probe",
            "text": text + "probe m: s across w at -1sd, mean, +1sd\n",
            "expected": {"at": at, "stats_over": "rows", "held_at": [["s", sm_]]},
        },
    ]


def panel_cases(df, data):
    x, w = df["x"].to_numpy(), df["w"].to_numpy()
    cols = {"x": x, "x^2": x**2, "w": w, "x*w": x * w}
    names, b, V, dfi = fit(df, "y", cols, "cluster", "unit", fixed="unit")
    xm, wm = float(np.mean(x)), float(np.mean(w))
    text = model_text(data, "y", ["x", "x^2", "w", "x * w"], "cluster", "unit", fixed="unit")
    at = []
    for label, val in at_values(w, ["-1sd", "mean", "+1sd", "p90"]):
        g = np.array([1.0, 2 * xm, 0.0, val])  # d/dx at x = mean(x)
        at.append({"label": label, "value": val, **estimate(g, b, V, dfi)})
    # turning without `across`: w held at its mean; slope = b1 + 2 b2 x + b4 mean(w)
    alpha = np.array([1.0, 0.0, 0.0, wm])
    gamma = np.array([0.0, 2.0, 0.0, 0.0])
    r = turning_numbers(alpha, gamma, b, V, dfi, float(x.min()), float(x.max()))
    # AME: mean over rows of b1 + 2 b2 x + b4 w
    ame = estimate(np.array([1.0, 2 * xm, 0.0, wm]), b, V, dfi)
    return [
        {
            "name": "within_probe_curved",
            "kind": "probe",
            "text": text + "probe m: x across w at -1sd, mean, +1sd, p90\n",
            "expected": {"at": at, "stats_over": "rows", "held_at": [["x", xm]]},
        },
        {
            "name": "within_turning_held",
            "kind": "turning",
            "text": text + "turning m: x\n",
            "expected": {"at": [{"label": "", **r}], "data_min": float(x.min()), "data_max": float(x.max())},
        },
        {"name": "within_effect", "kind": "effect", "text": text + "effect m: x\n", "expected": {"effect": ame}},
    ]


def plot_lines(df, data):
    """Fitted outcome with its band of the mean from statsmodels `get_prediction`, at the
    ends of the observed range of x, w at -1sd and +1sd, z at its mean."""
    x, w, z = (df[c].to_numpy() for c in ["x", "w", "z"])
    X = sm.add_constant(np.column_stack([x, w, x * w, z]))
    r = sm.OLS(df["y"].to_numpy(float), X).fit()
    series = []
    for label, val in at_values(w, ["-1sd", "+1sd"]):
        pts = []
        for xv in (float(x.min()), float(x.max())):
            ex = np.array([[1.0, xv, val, xv * val, float(np.mean(z))]])
            fr = r.get_prediction(ex).summary_frame(alpha=1 - LEVEL)
            pts.append(
                {
                    "x": xv,
                    "y": float(fr["mean"].iloc[0]),
                    "low": float(fr["mean_ci_lower"].iloc[0]),
                    "high": float(fr["mean_ci_upper"].iloc[0]),
                }
            )
        series.append({"label": label, "value": val, "ends": pts})
    return {
        "name": "plot_lines_prediction_band",
        "kind": "plot",
        "text": model_text(data, "y", ["x", "w", "x * w", "z"], "classical")
        + 'plot m: x across w at -1sd, +1sd to "probe_lines.svg"\n',
        "expected": {"series": series, "held_at": [["z", float(np.mean(z))]]},
    }


def main():
    a, c, p = data_ols(), data_curve(), data_panel()
    a.to_csv(os.path.join(HERE, "probe_ols.csv"), index=False)
    c.to_csv(os.path.join(HERE, "probe_curve.csv"), index=False)
    p.to_csv(os.path.join(HERE, "probe_panel.csv"), index=False)
    # Read back what was written, so the expected values are those of the CSV text.
    a = pd.read_csv(os.path.join(HERE, "probe_ols.csv"))
    c = pd.read_csv(os.path.join(HERE, "probe_curve.csv"))
    p = pd.read_csv(os.path.join(HERE, "probe_panel.csv"))
    specs = ["-1sd", "mean", "+1sd", "p10", "p90", "2.5"]
    cases = [
        probe_case("probe_classical", a, "probe_ols.csv", "y", "classical", specs),
        probe_case("probe_hc1", a, "probe_ols.csv", "y", "hc1", specs),
        probe_case(
            "probe_between_groups", a, "probe_ols.csv", "y_grp", "cluster",
            ["-1sd", "mean", "+1sd", "p10", "p90"], cluster="g", wcol="wb", over_groups=True,
        ),
        regions_case("regions_outside_bounds_in_data", a, "probe_ols.csv", "y", "classical", ("outside", "in_data")),
        regions_case("regions_bounds_beyond_data", a, "probe_ols.csv", "y_out", "classical", ("outside", "out_of_data")),
        regions_case("regions_inside", a, "probe_ols.csv", "y_in", "classical", ("inside", "any")),
        regions_case("regions_nowhere", a, "probe_ols.csv", "y_none", "classical", ("nowhere", "any")),
        turning_simple("turning_inverted_u", c, "probe_curve.csv", "yq", "classical", "bounded"),
        turning_simple("turning_fieller_unbounded", c, "probe_curve.csv", "yflat", "hc1", "unbounded"),
        turning_simple("turning_fieller_two_rays", c, "probe_curve.csv", "yrays", "classical", "two_rays"),
        turning_moderated("turning_across_w", c, "probe_curve.csv"),
        *effect_log(a, "probe_ols.csv"),
        *panel_cases(p, "probe_panel.csv"),
        plot_lines(a, "probe_ols.csv"),
    ]
    doc = {
        "generator": "tests/reference/probe.py",
        "versions": {
            "numpy": np.__version__,
            "pandas": pd.__version__,
            "scipy": scipy.__version__,
            "statsmodels": statsmodels.__version__,
        },
        "level": LEVEL,
        "cases": cases,
    }
    with open(os.path.join(HERE, "probe.json"), "w") as f:
        json.dump(doc, f, indent=1)
        f.write("\n")


if __name__ == "__main__":
    main()
