//! Probing in nested data: a moderator measured at a higher level is
//! summarised over that level's groups, and a bootstrap of a model without a
//! cluster or fixed grouping resamples the outermost declared level.
//!
//! Data: an invented table of employees in 24 teams of unequal size in 6
//! departments (written by the test), with a department-level moderator `dm`,
//! a team-level moderator `tm` and an employee-level `x`. The expected
//! statistics are the plain mean and SD (n − 1) of one value per group, worked
//! out in the test from the same table (common practice for group-level
//! moderators: each group counts once).

mod written;

use check::Checked;
use engine::probe::{run, Output, ProbeOptions, ProbeResult};
use engine::ModelFit;
use written::fit_written;

struct Table {
    csv: String,
    /// One value per department and per team, in order.
    dept_values: Vec<f64>,
    team_values: Vec<f64>,
}

fn table() -> Table {
    let mut csv = String::from("employee,team,dept,x,dm,tm,y\n");
    let (mut dept_values, mut team_values) = (Vec::new(), Vec::new());
    let mut i = 0;
    for d in 0..6 {
        let dm = [1.0, 2.5, 1.5, 4.0, 3.0, 0.5][d];
        dept_values.push(dm);
        for t in 0..4 {
            let team = d * 4 + t;
            let tm = ((team * 7) % 10) as f64 / 2.0;
            team_values.push(tm);
            // Unequal sizes (2 to 9), so row and group statistics differ.
            for _ in 0..(2 + (team * 5) % 8) {
                let x = ((i * 37) % 11) as f64 / 2.0;
                let noise = ((i * 17) % 7) as f64 / 10.0 - 0.3;
                let y = 1.0 + 0.5 * x + 0.3 * dm + 0.2 * x * dm - 0.1 * tm + noise;
                csv.push_str(&format!("E{i},T{team},D{d},{x},{dm},{tm},{y:.4}\n"));
                i += 1;
            }
        }
    }
    Table {
        csv,
        dept_values,
        team_values,
    }
}

fn mean_sd(v: &[f64]) -> (f64, f64) {
    let n = v.len() as f64;
    let mean = v.iter().sum::<f64>() / n;
    let ss: f64 = v.iter().map(|x| (x - mean).powi(2)).sum();
    (mean, (ss / (n - 1.0)).sqrt())
}

fn setup(structure: &str, model_lines: &str, statement: &str) -> (Checked, ModelFit) {
    let text = format!(
        "source \"levels.csv\"\n{structure}\nmodel m {{\n  y = x + dm + tm + x * dm + x * tm\n  {model_lines}\n}}\n{statement}\n"
    );
    fit_written("levels.csv", &table().csv, &text)
}

fn probe(c: &Checked, f: &ModelFit) -> Result<ProbeResult, String> {
    let frame = &c.data.as_ref().unwrap().frame;
    let options = ProbeOptions {
        groups: &c.groups,
        ..ProbeOptions::default()
    };
    match run(&c.requests[0], &c.models[0], f, frame, None, &options) {
        Ok(Output::Probe(p)) => Ok(p),
        Ok(other) => panic!("{other:?}"),
        Err(e) => Err(e.message),
    }
}

fn close(a: f64, b: f64) -> bool {
    (a - b).abs() < 1e-12 * b.abs().max(1.0)
}

#[test]
fn a_department_level_moderator_is_summarised_over_departments() {
    let t = table();
    let (mean, sd) = mean_sd(&t.dept_values);
    // Clustered by team, but `dm` is constant within the coarser `dept`.
    let (c, f) = setup(
        "groups team in dept",
        "errors cluster team",
        "probe m: x across dm at mean, +1sd, max",
    );
    let p = probe(&c, &f).unwrap();
    let at: Vec<f64> = p.at.iter().map(|a| a.value).collect();
    assert!(
        close(at[0], mean) && close(at[1], mean + sd) && close(at[2], 4.0),
        "{at:?}"
    );
    assert!(
        p.notes
            .iter()
            .any(|n| n == "`dm` is constant within `dept`, so its mean, SD and percentiles are over the 6 groups"),
        "{:?}",
        p.notes
    );
    // Without `groups`, the model's own grouping is the only level known.
    let (c, f) = setup("", "errors cluster team", "probe m: x across dm at mean");
    let p = probe(&c, &f).unwrap();
    let per_team: Vec<f64> = t
        .team_values
        .iter()
        .enumerate()
        .map(|(k, _)| t.dept_values[k / 4])
        .collect();
    assert!(close(p.at[0].value, mean_sd(&per_team).0));
    assert!(
        p.notes.iter().any(|n| n.contains("over the 24 groups")),
        "{:?}",
        p.notes
    );
}

#[test]
fn a_team_level_moderator_is_summarised_over_teams() {
    let t = table();
    let (mean, sd) = mean_sd(&t.team_values);
    let (c, f) = setup(
        "groups team in dept",
        "",
        "probe m: x across tm at -1sd, mean",
    );
    let p = probe(&c, &f).unwrap();
    assert!(close(p.at[0].value, mean - sd) && close(p.at[1].value, mean));
    assert!(
        p.notes
            .iter()
            .any(|n| n.starts_with("`tm` is constant within `team`")),
        "{:?}",
        p.notes
    );
}

#[test]
fn a_bootstrap_without_a_model_grouping_resamples_the_outermost_level() {
    let (c, f) = setup(
        "groups team in dept",
        "",
        "probe m: x across dm at mean bootstrap 100 seed 5",
    );
    let p = probe(&c, &f).unwrap();
    assert!(p.at[0].effect.boot_ci.is_some());
    assert!(
        p.notes.iter().any(|n| n.starts_with(
            "cluster bootstrap: 100 draws of the 6 groups of `dept` (the outermost level of `groups`) (seed 5)"
        )),
        "{:?}",
        p.notes
    );
    // With nothing declared there is nothing to resample.
    let (c, f) = setup("", "", "probe m: x across dm at mean bootstrap 100 seed 5");
    let e = probe(&c, &f).unwrap_err();
    assert!(e.contains("has none: add `errors cluster G`"), "{e}");
}
