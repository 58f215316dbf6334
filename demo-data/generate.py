#!/usr/bin/env python3
"""Generate the invented demo data sets of slopewise.

Writes, next to this file:
  teams.csv      remote work and focus: employees in project teams in departments
  suppliers.csv  supplier count and plant uptime: an unbalanced firm-year panel

Only the Python standard library is used, with fixed seeds, so every run on any
machine with python3 gives the same bytes. Both scenarios are invented; the true
parameters are the constants below and are listed in README.md.

Run:  python3 demo-data/generate.py
"""

import csv
import math
import os
import random
from collections import defaultdict

HERE = os.path.dirname(os.path.abspath(__file__))

SEED_TEAMS = 20240601
SEED_SUPPLIERS = 20240602

# --------------------------------------------------------------------------
# Scenario 1: remote work and focus (teams nested in departments)
# --------------------------------------------------------------------------
N_TEAMS = 200
N_DEPTS = 12
TEAM_SIZE_MIN, TEAM_SIZE_MODE, TEAM_SIZE_MAX = 4, 10, 22  # triangular draw, rounded
N_TENURE_MISSING = 9

# fixed part of focus
T_INTERCEPT = 60.0
T_B_REMOTE_W = 4.0        # within-team remote effect when meetings = 0
T_B_REMOTE_B = 1.0        # between effect of the team mean of remote days
T_B_MEETINGS = -0.8       # per weekly meeting hour
T_B_REMOTE_W_MEETINGS = -0.4  # cross-level interaction remote_w x meetings
T_B_TENURE = 0.3          # per year of tenure
# random part
T_SD_TEAM_INTERCEPT = 4.0
T_SD_TEAM_SLOPE = 0.6     # SD of the remote_w slope across teams
T_COR_TEAM = -0.3         # correlation of team intercept and team slope
T_SD_DEPT_INTERCEPT = 2.5
T_SD_RESIDUAL = 6.0


def generate_teams():
    rng = random.Random(SEED_TEAMS)

    # departments: random intercepts
    depts = ["D%02d" % (d + 1) for d in range(N_DEPTS)]
    dept_effect = {d: rng.gauss(0.0, T_SD_DEPT_INTERCEPT) for d in depts}

    # teams: department (every department gets at least 10 teams, the rest drawn),
    # size, meeting hours, remote propensity, random intercept and slope
    team_dept = [depts[i % N_DEPTS] for i in range(N_DEPTS * 10)]
    team_dept += [rng.choice(depts) for _ in range(N_TEAMS - len(team_dept))]
    rng.shuffle(team_dept)

    teams = []
    for t in range(N_TEAMS):
        tid = "T%03d" % (t + 1)
        size = int(round(rng.triangular(TEAM_SIZE_MIN, TEAM_SIZE_MAX, TEAM_SIZE_MODE)))
        meetings = rng.gauss(6.0, 2.2)
        meetings = min(14.0, max(0.5, round(meetings * 2.0) / 2.0))  # half hours
        remote_pref = min(4.8, max(0.2, rng.gauss(2.5, 0.9)))
        z0 = rng.gauss(0.0, 1.0)
        z1 = rng.gauss(0.0, 1.0)
        u0 = T_SD_TEAM_INTERCEPT * z0
        u1 = T_SD_TEAM_SLOPE * (T_COR_TEAM * z0 + math.sqrt(1.0 - T_COR_TEAM ** 2) * z1)
        teams.append(dict(id=tid, dept=team_dept[t], size=size, meetings=meetings,
                          remote_pref=remote_pref, u0=u0, u1=u1))

    # employees
    rows = []
    emp = 0
    for tm in teams:
        members = []
        for _ in range(tm["size"]):
            emp += 1
            remote = int(round(tm["remote_pref"] + rng.gauss(0.0, 1.1)))
            remote = min(5, max(0, remote))
            tenure = round(min(35.0, rng.lognormvariate(1.5, 0.8)), 1)
            members.append(dict(employee="E%04d" % emp, team=tm["id"], dept=tm["dept"],
                                remote_days=remote, meetings=tm["meetings"], tenure=tenure))
        # the within / between split uses the team's observed remote days
        mean_remote = sum(m["remote_days"] for m in members) / len(members)
        for m in members:
            remote_w = m["remote_days"] - mean_remote
            focus = (T_INTERCEPT
                     + (T_B_REMOTE_W + tm["u1"]) * remote_w
                     + T_B_REMOTE_B * mean_remote
                     + T_B_MEETINGS * tm["meetings"]
                     + T_B_REMOTE_W_MEETINGS * remote_w * tm["meetings"]
                     + T_B_TENURE * m["tenure"]
                     + tm["u0"] + dept_effect[tm["dept"]]
                     + rng.gauss(0.0, T_SD_RESIDUAL))
            m["focus"] = round(focus, 2)
            rows.append(m)

    # missing tenure, completely at random; the outcome was drawn with the true value
    missing_idx = sorted(rng.sample(range(len(rows)), N_TENURE_MISSING))
    for i in missing_idx:
        rows[i]["tenure"] = None

    path = os.path.join(HERE, "teams.csv")
    with open(path, "w", newline="", encoding="utf-8") as f:
        w = csv.writer(f, lineterminator="\n")
        w.writerow(["employee", "team", "dept", "remote_days", "meetings", "tenure", "focus"])
        for r in rows:
            w.writerow([r["employee"], r["team"], r["dept"], r["remote_days"],
                        "%.1f" % r["meetings"],
                        "" if r["tenure"] is None else "%.1f" % r["tenure"],
                        "%.2f" % r["focus"]])
    return path, [rows[i]["employee"] for i in missing_idx]


# --------------------------------------------------------------------------
# Scenario 2: supplier count and plant uptime (firm-year panel)
# --------------------------------------------------------------------------
N_FIRMS = 400
YEAR_FIRST, YEAR_LAST = 2008, 2024
LEN_MIN, LEN_MAX = 10, 15
REGIONS = ["east", "north", "south", "west"]

S_INTERCEPT = 68.0
S_B1 = 0.5        # suppliers
S_B2 = -0.02      # suppliers^2
S_B3 = 2.0        # digital
S_B4 = 0.1        # suppliers * digital
S_B5 = 0.005      # suppliers^2 * digital
S_B6 = 1.5        # log(staff)
S_SD_FIRM = 3.0   # SD of the firm effect
S_SD_RESIDUAL = 1.5
REGION_SHIFT = {"east": -0.5, "north": 0.5, "south": 0.0, "west": 1.0}  # part of the firm effect
# year effects: a slow drift, a dip in 2020 and 2021, small idiosyncratic shocks
S_YEAR_TREND = 0.08   # per year since 2008
S_YEAR_DIP = {2020: -1.5, 2021: -0.7}
S_SD_YEAR_SHOCK = 0.3


def turning_point(d):
    return -(S_B1 + S_B4 * d) / (2.0 * (S_B2 + S_B5 * d))


def generate_suppliers():
    rng = random.Random(SEED_SUPPLIERS)

    year_effect = {}
    for y in range(YEAR_FIRST, YEAR_LAST + 1):
        year_effect[y] = (S_YEAR_TREND * (y - YEAR_FIRST) + S_YEAR_DIP.get(y, 0.0)
                          + rng.gauss(0.0, S_SD_YEAR_SHOCK))

    rows = []
    firm_effects = {}
    for i in range(N_FIRMS):
        fid = "F%03d" % (i + 1)
        region = rng.choice(REGIONS)
        length = rng.randint(LEN_MIN, LEN_MAX)
        first = rng.randint(YEAR_FIRST, YEAR_LAST - length + 1)
        # a latent firm quality drives the firm effect AND the regressors,
        # so pooled estimates are biased and the fixed effects matter
        q = rng.gauss(0.0, 1.0)
        alpha = S_SD_FIRM * q + REGION_SHIFT[region]
        firm_effects[fid] = alpha
        sup_level = 15.0 + 3.0 * q + rng.gauss(0.0, 4.0)
        sup_trend = rng.gauss(0.3, 0.3)
        dig_level = 0.25 + 0.06 * q + rng.gauss(0.0, 0.12)
        dig_trend = rng.uniform(0.01, 0.05)
        staff_level = 5.3 + 0.3 * q + rng.gauss(0.0, 0.7)
        staff_growth = rng.gauss(0.02, 0.03)
        for k in range(length):
            year = first + k
            suppliers = int(round(sup_level + sup_trend * (k - length / 2.0) + rng.gauss(0.0, 4.0)))
            suppliers = max(1, suppliers)
            digital = dig_level + dig_trend * (year - YEAR_FIRST) + rng.gauss(0.0, 0.06)
            digital = round(min(1.0, max(0.0, digital)), 3)
            staff = max(5, int(round(math.exp(staff_level + staff_growth * k + rng.gauss(0.0, 0.05)))))
            s, d = suppliers, digital
            uptime = (S_INTERCEPT + S_B1 * s + S_B2 * s * s + S_B3 * d + S_B4 * s * d
                      + S_B5 * s * s * d + S_B6 * math.log(staff)
                      + alpha + year_effect[year] + rng.gauss(0.0, S_SD_RESIDUAL))
            rows.append(dict(firm=fid, year=year, region=region, suppliers=suppliers,
                             digital=digital, staff=staff, uptime=round(uptime, 3)))

    path = os.path.join(HERE, "suppliers.csv")
    with open(path, "w", newline="", encoding="utf-8") as f:
        w = csv.writer(f, lineterminator="\n")
        w.writerow(["firm", "year", "region", "suppliers", "digital", "staff", "uptime"])
        for r in rows:
            w.writerow([r["firm"], r["year"], r["region"], r["suppliers"],
                        "%.3f" % r["digital"], r["staff"], "%.3f" % r["uptime"]])
    return path, year_effect


# --------------------------------------------------------------------------
# Checks: read the written files back and raise if a property fails
# --------------------------------------------------------------------------
def read_csv(path):
    with open(path, newline="", encoding="utf-8") as f:
        return list(csv.DictReader(f))


def percentile(values, p):
    v = sorted(values)
    pos = (len(v) - 1) * p / 100.0
    lo = int(math.floor(pos))
    hi = min(lo + 1, len(v) - 1)
    return v[lo] + (v[hi] - v[lo]) * (pos - lo)


def check(cond, message):
    if not cond:
        raise AssertionError("demo-data check failed: " + message)


def check_teams(path, missing_ids):
    rows = read_csv(path)
    check(2000 <= len(rows) <= 2800, "teams.csv has %d rows" % len(rows))
    check(len({r["employee"] for r in rows}) == len(rows), "employee ids are not unique")
    team_dept = {}
    team_meet = {}
    team_size = defaultdict(int)
    team_remote = defaultdict(set)
    for r in rows:
        t = r["team"]
        team_size[t] += 1
        team_remote[t].add(r["remote_days"])
        check(team_dept.setdefault(t, r["dept"]) == r["dept"],
              "team %s lies in more than one dept" % t)
        check(team_meet.setdefault(t, r["meetings"]) == r["meetings"],
              "meetings not constant within team %s" % t)
        check(0 <= int(r["remote_days"]) <= 5, "remote_days outside 0..5")
        check(0.0 < float(r["focus"]) < 100.0, "focus outside 0..100")
    check(len(team_dept) == N_TEAMS, "%d teams" % len(team_dept))
    check(len(set(team_dept.values())) == N_DEPTS, "not every dept has a team")
    check(min(team_size.values()) >= TEAM_SIZE_MIN and max(team_size.values()) <= TEAM_SIZE_MAX,
          "team sizes outside %d..%d" % (TEAM_SIZE_MIN, TEAM_SIZE_MAX))
    check(sum(len(s) > 1 for s in team_remote.values()) >= 0.9 * N_TEAMS,
          "remote_days hardly varies within teams")
    missing = [r["employee"] for r in rows if r["tenure"] == ""]
    check(missing == missing_ids and len(missing) == N_TENURE_MISSING,
          "tenure missing in %d rows, expected %d" % (len(missing), N_TENURE_MISSING))
    for col in ("employee", "team", "dept", "remote_days", "meetings", "focus"):
        check(all(r[col] != "" for r in rows), "missing value in %s" % col)
    return rows, team_size


def check_suppliers(path):
    rows = read_csv(path)
    check(4000 <= len(rows) <= 6000, "suppliers.csv has %d rows" % len(rows))
    keys = [(r["firm"], r["year"]) for r in rows]
    check(len(set(keys)) == len(keys), "duplicate firm-year rows")
    firm_years = defaultdict(list)
    firm_region = {}
    for r in rows:
        firm_years[r["firm"]].append(int(r["year"]))
        check(firm_region.setdefault(r["firm"], r["region"]) == r["region"],
              "region not constant within firm %s" % r["firm"])
        check(int(r["staff"]) > 0, "staff not positive")
        check(0.0 <= float(r["digital"]) <= 1.0, "digital outside 0..1")
        check(int(r["suppliers"]) >= 1, "suppliers below 1")
        check(0.0 < float(r["uptime"]) < 100.0, "uptime outside 0..100")
    check(len(firm_years) == N_FIRMS, "%d firms" % len(firm_years))
    for f, ys in firm_years.items():
        check(LEN_MIN <= len(ys) <= LEN_MAX, "firm %s has %d years" % (f, len(ys)))
        check(min(ys) >= YEAR_FIRST and max(ys) <= YEAR_LAST, "firm %s outside the years" % f)
        check(ys == list(range(ys[0], ys[0] + len(ys))), "firm %s has a gap" % f)
    check(len({min(ys) for ys in firm_years.values()}) > 3, "firms share one first year")
    sup = [int(r["suppliers"]) for r in rows]
    dig = [float(r["digital"]) for r in rows]
    lo, hi = percentile(sup, 10), percentile(sup, 90)
    tps = {}
    for p in (10, 50, 90):
        dp = percentile(dig, p)
        tp = turning_point(dp)
        tps[p] = (dp, tp)
        check(lo < tp < hi, "turning point %.2f at digital p%d not inside the suppliers p10..p90"
              % (tp, p))
    check(S_B2 < 0 and S_B2 + S_B5 * max(dig) < 0, "the curve is not an inverted U everywhere")
    return rows, sup, dig, tps


def main():
    tpath, missing_ids = generate_teams()
    spath, year_effect = generate_suppliers()
    trows, team_size = check_teams(tpath, missing_ids)
    srows, sup, dig, tps = check_suppliers(spath)

    sizes = sorted(team_size.values())
    print("teams.csv: %d rows, %d teams (sizes %d..%d), %d depts"
          % (len(trows), len(team_size), sizes[0], sizes[-1], N_DEPTS))
    print("  tenure missing for: %s" % ", ".join(missing_ids))
    meet = [float(r["meetings"]) for r in trows]
    print("  meetings range %.1f..%.1f" % (min(meet), max(meet)))
    mm = sum(meet) / len(meet)
    msd = math.sqrt(sum((m - mm) ** 2 for m in meet) / (len(meet) - 1))
    for label, m in (("-1sd", mm - msd), ("mean", mm), ("+1sd", mm + msd)):
        print("  meetings %s = %.2f (over rows) -> true remote_w effect %.3f"
              % (label, m, T_B_REMOTE_W + T_B_REMOTE_W_MEETINGS * m))
    print("  true remote_w effect is zero at meetings = %.2f"
          % (-T_B_REMOTE_W / T_B_REMOTE_W_MEETINGS))
    print("suppliers.csv: %d rows, %d firms" % (len(srows), N_FIRMS))
    print("  suppliers range %d..%d, p10 %.0f, p50 %.0f, p90 %.0f"
          % (min(sup), max(sup), percentile(sup, 10), percentile(sup, 50), percentile(sup, 90)))
    print("  digital range %.3f..%.3f" % (min(dig), max(dig)))
    for p, (dp, tp) in sorted(tps.items()):
        print("  digital p%d = %.3f -> true turning point %.2f suppliers" % (p, dp, tp))
    dmean = sum(dig) / len(dig)
    print("  digital mean = %.3f -> true turning point %.2f suppliers" % (dmean, turning_point(dmean)))
    ame = sum(S_B1 + 2 * S_B2 * s + S_B4 * d + 2 * S_B5 * s * d for s, d in zip(sup, dig)) / len(sup)
    print("  true average marginal effect of suppliers over the rows: %.4f" % ame)
    for d in (0.0, 0.25, 0.5, 0.75, 1.0):
        print("  digital %.2f -> true turning point %.2f suppliers" % (d, turning_point(d)))
    print("  year effects: " + ", ".join("%d %.3f" % (y, e) for y, e in sorted(year_effect.items())))
    print("all checks passed")


if __name__ == "__main__":
    main()
