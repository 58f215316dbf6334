"""Baseline for the fixed-effects benchmark: a plain numpy/pandas within estimator.

Usage:
  python3 tests/bench/fe_numpy.py CSV --outcome y --x x1,x2,x3 --fixed unit,period[,region]
      [--cluster unit[,period]] [--tol 1e-8] [--max-iter 100000]

What it does (what a careful analyst would write by hand, no acceleration):
  1. read the CSV with pandas (timed as load_seconds), drop rows missing a used column;
  2. factorize the fixed-effect columns; drop rows alone in a level of any fixed grouping,
     repeatedly until none is left;
  3. demean y and every x by alternating projections: one sweep subtracts the group means
     of each fixed grouping in turn (numpy bincount); stop when the largest change of
     any value in a sweep is below --tol;
  4. least squares on the demeaned data (numpy.linalg.lstsq);
  5. standard errors: with --cluster, the cluster-robust sandwich with the project's
     small-sample factor c = G/(G-1) * (N-1)/(N-K); two groupings give
     c_A V_A + c_B V_B - c_AB V_AB (Cameron, Gelbach & Miller 2011), AB the nonempty
     intersections. K = slopes + absorbed levels not nested in a cluster grouping,
     minus redundant levels (see k_for_cluster). Without --cluster: classical
     s^2 (X'X)^-1 with df = N - slopes - estimated absorbed levels.
Prints one JSON line: load_seconds, fit_seconds (everything after reading the CSV),
iterations (sweeps), coef, se, plus n_obs and singletons_dropped.
Tested with numpy 2.4.6, pandas 3.1.1, scipy 1.17.1.
"""
import argparse
import json
import sys
import time

import numpy as np
import pandas as pd
from scipy.sparse import coo_matrix
from scipy.sparse.csgraph import connected_components


def factorize(col):
    codes, uniques = pd.factorize(col, sort=False)
    return codes.astype(np.int64), len(uniques)


def refactor(codes):
    """Dense codes 0..G-1 for the codes still present."""
    uniq, inv = np.unique(codes, return_inverse=True)
    return inv.astype(np.int64), len(uniq)


def drop_singletons(fe_codes):
    """Boolean mask of rows kept after iterative singleton removal."""
    n = len(fe_codes[0])
    keep = np.ones(n, dtype=bool)
    while True:
        alone = np.zeros(n, dtype=bool)
        for codes in fe_codes:
            counts = np.bincount(codes[keep], minlength=codes.max() + 1)
            alone |= keep & (counts[codes] == 1)
        if not alone.any():
            return keep
        keep &= ~alone


def demean(M, fe, tol, max_iter):
    """Alternating projections on the columns of M; returns (M, sweeps)."""
    M = M.copy()
    for it in range(1, max_iter + 1):
        change = 0.0
        for codes, g, counts in fe:
            for j in range(M.shape[1]):
                means = np.bincount(codes, weights=M[:, j], minlength=g) / counts
                step = means[codes]
                M[:, j] -= step
                change = max(change, float(np.max(np.abs(step))))
        if change < tol:
            return M, it
    raise RuntimeError(f"no convergence in {max_iter} sweeps (last change {change:.3g})")


def nested(inner, outer, g_inner):
    """Every level of `inner` lies in one level of `outer`."""
    pairs = np.unique(inner * (outer.max() + 1) + outer)
    return len(pairs) == g_inner


def components(a, ga, b, gb):
    m = coo_matrix((np.ones(len(a)), (a, ga + b)), shape=(ga + gb, ga + gb))
    return connected_components(m, directed=False)[0]


def absorbed_levels(fe):
    """Levels actually estimated: first grouping all levels, second minus the connected
    components of the two, every further grouping minus one (a lower bound on the
    redundancy, common practice)."""
    total = fe[0][1]
    if len(fe) > 1:
        total += fe[1][1] - components(fe[0][0], fe[0][1], fe[1][0], fe[1][1])
    for codes, g, _ in fe[2:]:
        total += g - 1
    return total


def k_for_cluster(n_slopes, fe, clusters):
    free = [f for f in fe if not any(nested(f[0], c, f[1]) for c in clusters)]
    if not free:
        return n_slopes
    if len(free) == len(fe):
        return n_slopes + absorbed_levels(fe)
    # a nested grouping carries the common level; every other one loses a level
    return n_slopes + sum(g - 1 for _, g, _ in free)


def sandwich(Xd, e, codes, g, bread):
    scores = np.column_stack([np.bincount(codes, weights=Xd[:, j] * e, minlength=g)
                              for j in range(Xd.shape[1])])
    return bread @ (scores.T @ scores) @ bread


def main(argv):
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("csv")
    ap.add_argument("--outcome", required=True)
    ap.add_argument("--x", required=True)
    ap.add_argument("--fixed", required=True)
    ap.add_argument("--cluster", default="")
    ap.add_argument("--tol", type=float, default=1e-8)
    ap.add_argument("--max-iter", type=int, default=100000)
    a = ap.parse_args(argv)
    xs = [s for s in a.x.split(",") if s]
    fixed = [s for s in a.fixed.split(",") if s]
    cluster = [s for s in a.cluster.split(",") if s]
    if len(cluster) > 2:
        ap.error("at most two cluster groupings")

    t0 = time.perf_counter()
    df = pd.read_csv(a.csv)
    t1 = time.perf_counter()

    used = list(dict.fromkeys([a.outcome] + xs + fixed + cluster))
    df = df[used].dropna()
    M = df[[a.outcome] + xs].to_numpy(dtype=np.float64)
    fe_raw = [factorize(df[f].to_numpy())[0] for f in fixed]
    cl_raw = [factorize(df[c].to_numpy())[0] for c in cluster]

    keep = drop_singletons(fe_raw)
    n_single = int((~keep).sum())
    M = M[keep]
    fe = []
    for codes in fe_raw:
        c, g = refactor(codes[keep])
        fe.append((c, g, np.bincount(c, minlength=g).astype(np.float64)))
    cl = [refactor(codes[keep]) for codes in cl_raw]
    n = M.shape[0]

    Md, sweeps = demean(M, fe, a.tol, a.max_iter)
    yd, Xd = Md[:, 0], Md[:, 1:]
    beta = np.linalg.lstsq(Xd, yd, rcond=None)[0]
    e = yd - Xd @ beta
    bread = np.linalg.inv(Xd.T @ Xd)
    p = len(xs)

    if not cl:
        dof = n - p - absorbed_levels(fe)
        V = (e @ e / dof) * bread
    else:
        K = k_for_cluster(p, fe, [c for c, _ in cl])

        def factor(g):
            return g / (g - 1.0) * (n - 1.0) / (n - K)

        (ca, ga) = cl[0]
        V = factor(ga) * sandwich(Xd, e, ca, ga, bread)
        if len(cl) == 2:
            (cb, gb) = cl[1]
            cab, gab = refactor(ca * gb + cb)
            V += factor(gb) * sandwich(Xd, e, cb, gb, bread)
            V -= factor(gab) * sandwich(Xd, e, cab, gab, bread)
    d = np.diag(V)
    se = np.where(d >= 0, np.sqrt(np.abs(d)), np.nan)  # NaN if two-way V has a negative diagonal
    t2 = time.perf_counter()

    print(json.dumps({
        "load_seconds": t1 - t0,
        "fit_seconds": t2 - t1,
        "iterations": sweeps,
        "coef": [float(b) for b in beta],
        "se": [None if np.isnan(s) else float(s) for s in se],
        "n_obs": int(n),
        "singletons_dropped": n_single,
    }))
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
