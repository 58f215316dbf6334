"""Reference values for the engine's OLS and multi-way fixed-effects (within) models.

Writes, beside this file:
  grunfeld.csv        the Grunfeld investment data (Grunfeld 1958) as shipped by
                      statsmodels.datasets.grunfeld, firm names replaced by F01..F11
                      (numbered in order of first appearance in the shipped data);
  ols_fe_product.csv  invented cross-section with a product term, heteroskedastic errors;
  ols_fe_panel.csv    invented unbalanced two-way panel with singletons (including a
                      chain that needs several rounds of iterative singleton removal);
  ols_fe.json         the cases and their expected values.
Run: python3 tests/reference/ols_fe.py

Library versions used to produce the committed files (pin these to reproduce):
    numpy 2.4.6, pandas 3.1.1, scipy 1.17.1, statsmodels 0.15.0

How expected values are computed (the project's conventions; the "method" line of
every case repeats the ones it uses):
  * Fixed effects are fitted as LSDV: statsmodels `OLS(y, X).fit()` with X = slope
    columns, an intercept and indicator columns for every level but the first of each
    fixed grouping. The design is checked to have full column rank, so
    df_resid = N - rank = N - (slopes + absorbed levels - redundant levels).
  * classical: statsmodels `OLS.fit()` (cov_type nonrobust), s^2 (X'X)^-1 with that df.
  * hc1 / hc3 (OLS without fixed effects): statsmodels `OLS.fit(cov_type="HC1"/"HC3")`.
  * cluster, one-way (CR1): the uncorrected sandwich from statsmodels
    `results.get_robustcov_results(cov_type="cluster", groups=g, use_correction=False)`
    on the LSDV fit, slope block, times c = G/(G-1) * (N-1)/(N-K), where K = slopes
    (+ intercept when there are no fixed effects) + absorbed levels NOT nested in the
    cluster grouping, minus the redundant levels (the levels actually estimated).
    The sandwich is cross-checked with a numpy within-regression sandwich (1e-10).
    df_inference = G - 1.
  * cluster, two-way (Cameron, Gelbach & Miller 2011): V = c_A V_A + c_B V_B - c_AB V_AB,
    each V uncorrected from statsmodels `sandwich_covariance.cov_cluster(...,
    use_correction=False)` (groups A, B and their nonempty intersections AB), each c with
    its own G and the same N and K (K: absorbed levels nested in neither grouping count).
    df_inference = min(G_A, G_B) - 1; n_clusters = [G_A, G_B, G_AB].
  * r2: R-squared of the LSDV fit (1 - RSS/TSS, TSS around the mean);
    r2_within: 1 - RSS / TSS of the outcome residualized on all fixed-effect indicators
    (the exact within transform); null for OLS without fixed effects.
  * singletons: before fitting, rows alone in a level of any fixed grouping are dropped,
    repeatedly until none is left (Correia 2015); the count is "singletons_dropped".
"""
import json
import os

import numpy as np
import pandas as pd
import scipy
import statsmodels
import statsmodels.api as sm
from statsmodels.datasets import grunfeld
from statsmodels.stats.sandwich_covariance import cov_cluster

HERE = os.path.dirname(os.path.abspath(__file__))

# ---------------------------------------------------------------------------
# data
# ---------------------------------------------------------------------------


def grunfeld_data():
    raw = grunfeld.load_pandas().data
    names = list(dict.fromkeys(raw["firm"]))  # order of first appearance
    ids = {name: f"F{i + 1:02d}" for i, name in enumerate(names)}
    df = pd.DataFrame(
        {
            "firm": raw["firm"].map(ids).astype(str),
            "year": raw["year"].astype(int),
            "invest": raw["invest"].astype(float),
            "value": raw["value"].astype(float),
            "capital": raw["capital"].astype(float),
        }
    )
    assert len(df) == 220 and df["firm"].nunique() == 11
    return df


def product_data():
    rng = np.random.default_rng(20240701)
    n = 400
    x = rng.normal(0.0, 1.0, n)
    z = rng.normal(0.5, 1.0, n)
    e = rng.normal(0.0, 1.0, n) * (0.5 + np.abs(x))
    y = 1.0 + 0.5 * x - 0.3 * z + 0.4 * x * z + e
    return pd.DataFrame({"x": x, "z": z, "y": y})


def panel_data():
    """Unbalanced unit x period panel, 120 regular units, periods 1..12.

    Singletons, by construction:
      * U121..U124 are observed in one period only (dropped in round 1);
      * chain: period 14 holds only U126; U126 is also seen in period 13; period 13
        holds only U125 and U126; U125 is also seen in period 12.  Round 1 drops
        U126@14 (period 14 alone), round 2 drops U126@13 (U126 now alone), round 3
        drops U125@13 (period 13 now alone), round 4 drops U125@12.
    """
    rng = np.random.default_rng(20240702)
    n_units, n_periods = 120, 12
    alpha = rng.normal(0.0, 1.0, n_units)  # unit effects
    gamma = rng.normal(0.0, 0.5, n_periods + 2)  # period effects (13, 14 used by the chain)
    rows = []
    for i in range(n_units):
        for t in range(1, n_periods + 1):
            if rng.random() < 0.2:  # missing unit-period
                continue
            rows.append((i, t))
    keep = []
    for i, t in rows:
        keep.append((f"U{i + 1:03d}", t, alpha[i]))
    # one-period units
    for k, t in zip(range(121, 125), (3, 7, 7, 11)):
        keep.append((f"U{k:03d}", t, rng.normal()))
    # the chain
    a125, a126 = rng.normal(), rng.normal()
    keep += [("U125", 12, a125), ("U125", 13, a125), ("U126", 13, a126), ("U126", 14, a126)]
    unit = np.array([k[0] for k in keep])
    period = np.array([k[1] for k in keep], dtype=int)
    a = np.array([k[2] for k in keep])
    n = len(keep)
    u = rng.normal(0.0, 1.0, n)
    v = rng.normal(0.0, 1.0, n)
    x = 0.7 * a + 0.1 * period + u  # correlated with the unit effect
    z = -0.4 * a + 0.5 * rng.normal(0.0, 1.0, n) + v
    e = rng.normal(0.0, 1.0, n)
    y = 2.0 + a + gamma[period - 1] + 0.8 * x - 0.5 * z + 0.3 * u * v + e
    df = pd.DataFrame({"unit": unit, "period": period, "x": x, "z": z, "y": y})
    order = rng.permutation(n)  # rows not sorted, as real files often are
    return df.iloc[order].reset_index(drop=True)


# ---------------------------------------------------------------------------
# estimation helpers
# ---------------------------------------------------------------------------


def drop_singletons(df, fixed):
    """Iteratively drop rows alone in a level of any fixed grouping.

    Returns the kept frame, the number dropped and the number of rounds with drops."""
    df = df.copy()
    dropped, rounds = 0, 0
    while fixed:
        alone = np.zeros(len(df), dtype=bool)
        for f in fixed:
            alone |= df.groupby(f)[f].transform("size").to_numpy() == 1
        if not alone.any():
            break
        dropped += int(alone.sum())
        rounds += 1
        df = df.loc[~alone]
    return df.reset_index(drop=True), dropped, rounds


def dummies(df, fixed):
    cols = []
    for f in fixed:
        d = pd.get_dummies(df[f].astype(str), drop_first=True, dtype=float)
        cols.append(d.to_numpy())
    return np.column_stack(cols) if cols else np.empty((len(df), 0))


def n_components(df, a, b):
    """Connected components of the bipartite graph of levels of a and b."""
    from scipy.sparse import coo_matrix
    from scipy.sparse.csgraph import connected_components

    ca, _ = pd.factorize(df[a])
    cb, _ = pd.factorize(df[b])
    na, nb = ca.max() + 1, cb.max() + 1
    m = coo_matrix((np.ones(len(df)), (ca, na + cb)), shape=(na + nb, na + nb))
    return connected_components(m, directed=False)[0]


def nested(df, inner, outer):
    """True when every level of `inner` lies in a single level of `outer`."""
    return bool((df.groupby(inner)[outer].nunique() == 1).all())


def term_column(df, term):
    if term.startswith("within(") and "*" in term:
        parts = term.split("*")
        out = np.ones(len(df))
        for p in parts:
            var, grp = p[len("within("):-1].split(",")
            col = df[var] - df.groupby(grp)[var].transform("mean")
            out = out * col.to_numpy()
        return out
    if "*" in term:
        a, b = term.split("*")
        return df[a].to_numpy() * df[b].to_numpy()
    return df[term].to_numpy(dtype=float)


def cluster_codes(df, cluster):
    return pd.factorize(df[cluster].astype(str))[0]


def fit_case(df_full, outcome, terms, fixed, errors, cluster=None):
    df, n_single, rounds = drop_singletons(df_full, fixed)
    n = len(df)
    y = df[outcome].to_numpy(dtype=float)
    Xs = np.column_stack([term_column(df, t) for t in terms])
    D = dummies(df, fixed)
    X = np.column_stack([Xs, np.ones(n), D])
    labels = list(terms) + ["(intercept)"]
    rank = np.linalg.matrix_rank(X)
    if rank != X.shape[1]:
        raise RuntimeError(f"LSDV design not of full rank ({rank} < {X.shape[1]})")
    k_slope = len(terms) + (0 if fixed else 1)  # the intercept is a slope coefficient in OLS
    keep = slice(0, k_slope) if not fixed else slice(0, len(terms))
    out_labels = labels[:k_slope]

    # absorbed levels and redundancy (two-way: connected components)
    levels = {f: df[f].nunique() for f in fixed}
    if len(fixed) == 2:
        comps = n_components(df, fixed[0], fixed[1])
    elif len(fixed) > 2:
        raise NotImplementedError
    else:
        comps = 0
    df_resid_expected = n - (len(terms) + sum(levels.values()) - comps) - (0 if fixed else 1)
    res = sm.OLS(y, X).fit()
    assert int(round(res.df_resid)) == df_resid_expected, (res.df_resid, df_resid_expected)

    # within transform of y (exact: residual on all fixed-effect indicators + intercept)
    if fixed:
        Z = np.column_stack([np.ones(n), D])
        y_w = y - Z @ np.linalg.lstsq(Z, y, rcond=None)[0]
        Xw = Xs - Z @ np.linalg.lstsq(Z, Xs, rcond=None)[0]
        r2_within = 1.0 - res.ssr / float(y_w @ y_w)
    else:
        Xw = np.column_stack([Xs, np.ones(n)])
        r2_within = None

    n_clusters = None
    factor = None
    df_inference = float(res.df_resid)
    if errors == "classical":
        cov = res.cov_params()
    elif errors in ("hc1", "hc3"):
        assert not fixed
        cov = sm.OLS(y, X).fit(cov_type=errors.upper()).cov_params()
    elif errors == "cluster":
        def k_for(groupings):
            # absorbed levels not nested in any of the cluster groupings, minus redundancy
            free = [f for f in fixed if not any(nested(df, f, c) for c in groupings)]
            if not free:
                return len(terms) + (0 if fixed else 1)
            if len(free) == len(fixed):
                return len(terms) + sum(levels[f] for f in free) - comps
            # some grouping nested in a cluster: it carries the intercept, the others
            # lose one level each
            return len(terms) + sum(levels[f] - 1 for f in free)

        def cfac(g, k):
            return g / (g - 1.0) * (n - 1.0) / (n - k)

        K = k_for(cluster)
        if len(cluster) == 1:
            g = cluster_codes(df, cluster[0])
            G = int(g.max() + 1)
            rob = res.get_robustcov_results(cov_type="cluster", groups=g, use_correction=False)
            raw = rob.cov_params()
            # numpy check on the within regression
            e = res.resid
            meat = np.zeros((Xw.shape[1], Xw.shape[1]))
            s = np.zeros((G, Xw.shape[1]))
            np.add.at(s, g, Xw * e[:, None])
            meat = s.T @ s
            bread = np.linalg.inv(Xw.T @ Xw)
            raw_np = bread @ meat @ bread
            kk = len(terms) if fixed else k_slope
            blk_sm = raw[:k_slope, :k_slope] if not fixed else raw[:kk, :kk]
            blk_np = raw_np[:kk, :kk] if fixed else raw_np
            # order: OLS rows are [terms..., intercept] in both
            rel = np.max(np.abs(blk_sm - blk_np)) / np.max(np.abs(blk_sm))
            assert rel < 1e-10, rel
            c = cfac(G, K)
            cov = raw * c
            n_clusters = [G]
            factor = c
            df_inference = float(G - 1)
        else:
            ga = cluster_codes(df, cluster[0])
            gb = cluster_codes(df, cluster[1])
            gab = pd.factorize(pd.Series(ga).astype(str) + "|" + pd.Series(gb).astype(str))[0]
            Ga, Gb, Gab = int(ga.max() + 1), int(gb.max() + 1), int(gab.max() + 1)
            Va = cov_cluster(res, ga, use_correction=False)
            Vb = cov_cluster(res, gb, use_correction=False)
            Vab = cov_cluster(res, gab, use_correction=False)
            ca, cb, cab = cfac(Ga, K), cfac(Gb, K), cfac(Gab, K)
            cov = ca * Va + cb * Vb - cab * Vab
            # numpy check of the three sandwiches on the within regression
            bread = np.linalg.inv(Xw.T @ Xw)
            kk = len(terms) if fixed else k_slope
            for codes, V in ((ga, Va), (gb, Vb), (gab, Vab)):
                s = np.zeros((codes.max() + 1, Xw.shape[1]))
                np.add.at(s, codes, Xw * res.resid[:, None])
                V_np = (bread @ s.T @ s @ bread)[:kk, :kk]
                rel = np.max(np.abs(V[:kk, :kk] - V_np)) / np.max(np.abs(V_np))
                assert rel < 1e-10, rel
            blk = cov[: len(terms), : len(terms)] if fixed else cov[:k_slope, :k_slope]
            eig = np.linalg.eigvalsh(blk)
            if eig.min() < 0:
                print(f"  note: two-way cluster V not PSD (min eigenvalue {eig.min():.3g})")
            n_clusters = [Ga, Gb, Gab]
            factor = [ca, cb, cab]
            df_inference = float(min(Ga, Gb) - 1)
    else:
        raise ValueError(errors)

    se = np.sqrt(np.diag(cov)[:k_slope])  # slope block only
    coef = {lab: float(res.params[i]) for i, lab in enumerate(out_labels)}
    ses = {lab: float(se[i]) for i, lab in enumerate(out_labels)}
    expected = {
        "coef": coef,
        "se": ses,
        "df_resid": float(res.df_resid),
        "df_inference": df_inference,
        "n_obs": int(n),
        "singletons_dropped": int(n_single),
        "r2": float(res.rsquared),
        "r2_within": None if r2_within is None else float(r2_within),
        "n_clusters": n_clusters,
        "cluster_factor": factor,
    }
    if errors == "cluster":
        expected["cluster_k"] = int(K)
    info = {"singleton_rounds": rounds, "absorbed_levels": levels, "components": int(comps)}
    return expected, info


def method_line(fixed, errors, cluster, extra=""):
    if fixed:
        base = ("statsmodels OLS(y, X).fit() on LSDV (intercept + indicator columns for all "
                f"but the first level of {', '.join(fixed)})")
    else:
        base = "statsmodels OLS(y, X).fit() with an intercept column"
    if errors == "classical":
        se = "cov_type nonrobust: s^2 (X'X)^-1 with df_resid = N - rank(X)"
    elif errors in ("hc1", "hc3"):
        se = f'OLS(y, X).fit(cov_type="{errors.upper()}")'
    elif len(cluster) == 1:
        se = (f"slope block of get_robustcov_results(cov_type='cluster', groups={cluster[0]}, "
              "use_correction=False) times c = G/(G-1)*(N-1)/(N-K), K = cluster_k "
              "(slopes + estimated absorbed levels not nested in the cluster); "
              "df_inference = G-1")
    else:
        se = (f"two-way cluster {cluster[0]}, {cluster[1]}: c_A V_A + c_B V_B - c_AB V_AB with "
              "each V from statsmodels.stats.sandwich_covariance.cov_cluster(res, g, "
              "use_correction=False) (AB = nonempty intersections), c = G/(G-1)*(N-1)/(N-K) "
              "with each grouping's own G and K = cluster_k; df_inference = min(G_A, G_B)-1")
    fit = "r2 = results.rsquared" + (" of the LSDV fit" if fixed else "")
    if fixed:
        fit += "; r2_within = 1 - RSS/TSS of y residualized on all fixed-effect indicators"
    s = f"{base}; {se}; {fit}"
    if fixed:
        s += "; singletons dropped iteratively before fitting"
    if extra:
        s += "; " + extra
    return s + "."


# ---------------------------------------------------------------------------
# cases
# ---------------------------------------------------------------------------


def main():
    cases = []
    summary = []

    def add(name, data_file, df, outcome, terms, fixed, errors, cluster=None, rows=None,
            extra="", handbook=None):
        exp, info = fit_case(df, outcome, terms, fixed, errors, cluster)
        case = {"name": name, "data": data_file}
        if rows is not None:
            case["rows"] = rows
        case.update({
            "outcome": outcome,
            "terms": list(terms),
            "fixed": list(fixed),
            "errors": errors,
            "cluster": list(cluster) if cluster else None,
            "expected": exp,
            "method": method_line(fixed, errors, cluster, extra),
        })
        if handbook:
            case["handbook"] = handbook
        cases.append(case)
        c = ", ".join(f"{k}={v:.6g} ({exp['se'][k]:.4g})" for k, v in exp["coef"].items())
        summary.append(f"{name}: N={exp['n_obs']} drop={exp['singletons_dropped']} "
                       f"(rounds {info['singleton_rounds']}) df={exp['df_resid']:g} "
                       f"dfi={exp['df_inference']:g}  {c}")
        return exp, info

    # --- Grunfeld -----------------------------------------------------------
    g = grunfeld_data()
    g.to_csv(os.path.join(HERE, "grunfeld.csv"), index=False)

    # which single firm leaves the classic 10-firm sample?
    target = (0.1101, 0.3101)
    hits = []
    for f in sorted(g["firm"].unique()):
        sub = g[g["firm"] != f]
        X = np.column_stack([sub[["value", "capital"]].to_numpy(), np.ones(len(sub)),
                             dummies(sub, ["firm"])])
        b = sm.OLS(sub["invest"].to_numpy(), X).fit().params
        if round(b[0], 4) == target[0] and round(b[1], 4) == target[1]:
            hits.append(f)
    if len(hits) != 1:
        raise RuntimeError(f"10-firm sample not identified uniquely: {hits}")
    excl = hits[0]
    g10 = g[g["firm"] != excl].reset_index(drop=True)

    gt = ["value", "capital"]
    add("grunfeld_fe_firm_classical", "grunfeld.csv", g, "invest", gt, ["firm"], "classical")
    exp10, _ = add(
        "grunfeld10_fe_firm_classical", "grunfeld.csv", g10, "invest", gt, ["firm"], "classical",
        rows={"exclude": {"firm": [excl]}},
        extra=f"sample: the 10-firm sample, rows with firm == {excl} removed",
        handbook={"value": 0.1101, "capital": 0.3101,
                  "source": "from memory: Baltagi, Econometric Analysis of Panel Data, "
                            "Grunfeld within estimates"},
    )
    for k, v in zip(gt, target):
        if round(exp10["coef"][k], 4) != v:
            raise RuntimeError(f"10-firm within estimate of {k} = {exp10['coef'][k]} != {v}")
    add("grunfeld_fe_firm_cluster_firm", "grunfeld.csv", g, "invest", gt, ["firm"], "cluster",
        ["firm"])
    add("grunfeld_fe_firm_year_classical", "grunfeld.csv", g, "invest", gt, ["firm", "year"],
        "classical")
    add("grunfeld_fe_firm_year_cluster_firm", "grunfeld.csv", g, "invest", gt,
        ["firm", "year"], "cluster", ["firm"])
    add("grunfeld_fe_firm_year_cluster_firm_year", "grunfeld.csv", g, "invest", gt,
        ["firm", "year"], "cluster", ["firm", "year"])

    # --- product OLS --------------------------------------------------------
    p = product_data()
    p.to_csv(os.path.join(HERE, "ols_fe_product.csv"), index=False, float_format="%.17g")
    pt = ["x", "z", "x*z"]
    for err in ("classical", "hc1", "hc3"):
        add(f"product_ols_{err}", "ols_fe_product.csv", p, "y", pt, [], err)

    # --- panel --------------------------------------------------------------
    panel = panel_data()
    panel.to_csv(os.path.join(HERE, "ols_fe_panel.csv"), index=False, float_format="%.17g")

    wt = ["x", "z", "within(x,unit)*within(z,unit)"]
    dd = ("within(x,unit)*within(z,unit) built in numpy/pandas as (x - unit mean of x) * "
          "(z - unit mean of z), means over the estimation sample (after singleton removal; "
          "singleton units have a zero product, so the means are the same either way)")
    add("panel_fe_unit_double_demeaned_classical", "ols_fe_panel.csv", panel, "y", wt, ["unit"],
        "classical", extra=dd)
    add("panel_fe_unit_double_demeaned_cluster_unit", "ols_fe_panel.csv", panel, "y", wt,
        ["unit"], "cluster", ["unit"], extra=dd)

    pt2 = ["x", "z"]
    _, info = add("panel_fe_unit_period_classical", "ols_fe_panel.csv", panel, "y", pt2,
                  ["unit", "period"], "classical")
    if info["singleton_rounds"] < 2:
        raise RuntimeError("singleton removal should need at least two rounds")
    add("panel_fe_unit_period_cluster_unit", "ols_fe_panel.csv", panel, "y", pt2,
        ["unit", "period"], "cluster", ["unit"])

    out = {
        "generator": "tests/reference/ols_fe.py",
        "versions": {"numpy": np.__version__, "pandas": pd.__version__,
                     "scipy": scipy.__version__, "statsmodels": statsmodels.__version__},
        "ten_firm_exclude": excl,
        "notes": [
            "Term labels: source text without whitespace; '(intercept)' for the OLS intercept.",
            "rows.exclude {column: [values]} removes those rows before anything else.",
            "Fixed-effect cases: rows alone in a level of any fixed grouping are removed "
            "iteratively before fitting; n_obs is the estimation sample.",
            "cluster_factor: one-way c = G/(G-1)*(N-1)/(N-K) (a number); two-way [c_A, c_B, c_AB], "
            "parallel to n_clusters; cluster_k is the K used.",
            "df_resid is the LSDV residual df in every case; df_inference is the df for "
            "t, p and intervals (df_resid, or G-1 / min(G_A,G_B)-1 when clustered).",
            "ols_fe_panel.csv singleton chain: U126@14 -> U126@13 -> U125@13 -> U125@12 "
            "(four rounds); U121..U124 are one-period units.",
        ],
        "cases": cases,
    }
    with open(os.path.join(HERE, "ols_fe.json"), "w") as fh:
        json.dump(out, fh, indent=1)
        fh.write("\n")
    print(f"10-firm sample excludes {excl}")
    for s in summary:
        print(s)


if __name__ == "__main__":
    main()
