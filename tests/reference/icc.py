"""Reference values for frame's ICC(1), means and SDs.

Writes icc.csv (the data) and icc.json (the expected values) beside this file.
Run: python3 tests/reference/icc.py

Library versions used to produce the committed files (pin these to reproduce):
    numpy 2.4.6, pandas 3.1.1, statsmodels 0.15.0

Expected values come from
  - ICC(1): statsmodels `ols("y ~ C(g)")` + `anova_lm` (type 1) give the
    between-group and residual mean squares MSB and MSW; then
    ICC(1) = (MSB - MSW) / (MSB + (k - 1) * MSW) with k = N / G
    (Bliese 2000, k the mean group size), N and G after dropping rows with a
    missing value or group id;
  - mean and SD: pandas Series.mean() and Series.std(ddof=1), NaN skipped.
The data are invented for this test: unequal group sizes, missing values, a
column that is constant within teams, a text team id and a numeric dept id.
"""
import json
import os

import numpy as np
import pandas as pd
import statsmodels.formula.api as smf
from statsmodels.stats.anova import anova_lm

HERE = os.path.dirname(os.path.abspath(__file__))
rng = np.random.default_rng(20240611)

# 37 teams of 2 to 14 members, nested in 9 departments.
sizes = rng.integers(2, 15, size=37)
rows = []
for t, n in enumerate(sizes):
    dept = 100 + t % 9
    team_effect = rng.normal(0, 0.8)
    climate = round(rng.normal(3.5, 0.6), 3)  # constant within the team
    for _ in range(n):
        rows.append(
            {
                "team": f"t{t:02d}",
                "dept": dept,
                "focus": round(50 + 4 * team_effect + rng.normal(0, 3), 4),
                "tenure": round(rng.gamma(2.0, 2.5), 2),
                "climate": climate,
                "remote_days": int(rng.integers(0, 6)),
            }
        )
df = pd.DataFrame(rows)
# Missing values: some measures, one team id, one dept id.
df.loc[rng.choice(len(df), 12, replace=False), "focus"] = np.nan
df.loc[rng.choice(len(df), 7, replace=False), "tenure"] = np.nan
df["team"] = df["team"].astype(object)
df.loc[5, "team"] = None
df["dept"] = df["dept"].astype(float)
df.loc[17, "dept"] = np.nan
df = df.sample(frac=1.0, random_state=7).reset_index(drop=True)

csv_path = os.path.join(HERE, "icc.csv")
df.to_csv(csv_path, index=False, na_rep="NA", float_format="%.10g")
# Read back what was written, so that the expected values describe the file.
df = pd.read_csv(csv_path, keep_default_na=True)


def icc1(frame, y, g):
    d = frame[[y, g]].dropna().copy()
    d["grp"] = d[g].astype(str)
    fit = smf.ols(f"{y} ~ C(grp)", data=d).fit()
    table = anova_lm(fit)
    msb = float(table.loc["C(grp)", "mean_sq"])
    msw = float(table.loc["Residual", "mean_sq"])
    n = len(d)
    groups = d["grp"].nunique()
    k = n / groups
    return (msb - msw) / (msb + (k - 1) * msw)


expected = {"source": "statsmodels 0.15 ols + anova_lm (MSB, MSW), k = N/G; pandas 3.1 mean, std ddof=1", "columns": {}}
for col in ["focus", "tenure", "climate", "remote_days"]:
    s = df[col]
    expected["columns"][col] = {
        "n": int(s.notna().sum()),
        "missing": int(s.isna().sum()),
        "mean": float(s.mean()),
        "sd": float(s.std(ddof=1)),
        "min": float(s.min()),
        "max": float(s.max()),
        "icc1": {g: icc1(df, col, g) for g in ["team", "dept"]},
    }
with open(os.path.join(HERE, "icc.json"), "w") as f:
    json.dump(expected, f, indent=2)
    f.write("\n")
print(f"wrote {len(df)} rows")
