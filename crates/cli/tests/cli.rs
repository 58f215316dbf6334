//! The binary end to end: exit codes, text and JSON output, on the demo data and
//! the bad-input corpus.

mod common;

use common::{slopewise, text};

#[test]
fn demo_files_check_clean_and_show_how_they_were_understood() {
    let out = slopewise(&[
        "check",
        "demo-data/teams.slope",
        "demo-data/suppliers.slope",
    ]);
    let (stdout, stderr) = (text(&out.stdout), text(&out.stderr));
    assert_eq!(out.status.code(), Some(0), "{stdout}\n{stderr}");
    assert!(
        stdout.contains("model full: mixed model, outcome focus, 2,481 of 2,490 rows"),
        "{stdout}"
    );
    assert!(
        stdout.contains("model shape: fixed effects (within), outcome uptime"),
        "{stdout}"
    );
    assert!(
        stderr.contains("demo-data/teams.slope: 0 errors"),
        "{stderr}"
    );
}

#[test]
fn an_error_exits_1_with_file_line_column_and_excerpt() {
    let out = slopewise(&["check", "tests/bad-input/unknown_column.slope"]);
    let stderr = text(&out.stderr);
    assert_eq!(out.status.code(), Some(1), "{stderr}");
    assert!(
        stderr.contains("tests/bad-input/unknown_column.slope:3:20"),
        "{stderr}"
    );
    assert!(
        stderr.contains("no column or `let` named `meeet` in the data; did you mean `meet`?"),
        "{stderr}"
    );
    assert!(
        stderr.contains("focus = remote + meeet"),
        "the excerpt: {stderr}"
    );
    assert!(
        stderr.contains("quick fix: Replace with `meet`"),
        "{stderr}"
    );
}

#[test]
fn json_diagnostics_follow_the_documented_shape() {
    let out = slopewise(&[
        "check",
        "tests/bad-input/unknown_column.slope",
        "--format",
        "json",
    ]);
    assert_eq!(out.status.code(), Some(1));
    let doc: serde_json::Value = serde_json::from_slice(&out.stdout).expect("one JSON document");
    let d = &doc["diagnostics"][0];
    assert_eq!(d["severity"], "error");
    assert_eq!(d["code"], "unknown-column");
    assert_eq!(
        (d["line"].as_u64(), d["column"].as_u64()),
        (Some(3), Some(20))
    );
    assert_eq!(
        (d["end_line"].as_u64(), d["end_column"].as_u64()),
        (Some(3), Some(25))
    );
    assert_eq!(d["fix"]["edits"][0]["text"], "meet");
}

#[test]
fn every_bad_input_file_runs_through_the_binary_without_a_crash() {
    common::each_bad_input_exits_cleanly("check", &["text", "json"]);
}

#[test]
fn usage_mistakes_exit_2_and_missing_model_files_exit_1() {
    assert_eq!(slopewise(&["check"]).status.code(), Some(2));
    assert_eq!(slopewise(&["frobnicate"]).status.code(), Some(2));
    let out = slopewise(&["check", "no/such/model.slope"]);
    assert_eq!(out.status.code(), Some(1));
    assert!(text(&out.stderr).contains("cannot read model file no/such/model.slope"));
}

#[test]
fn describe_reports_icc_and_within_variation_per_grouping() {
    let out = slopewise(&[
        "describe",
        "demo-data/teams.csv",
        "--groups",
        "team,dept",
        "--format",
        "json",
    ]);
    assert_eq!(out.status.code(), Some(0), "{}", text(&out.stderr));
    let doc: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    assert_eq!(doc["rows"], 2490);
    let col = |name: &str| {
        doc["columns"]
            .as_array()
            .unwrap()
            .iter()
            .find(|c| c["name"] == name)
            .unwrap()
            .clone()
    };
    // demo-data/README.md: meetings is set per team, tenure has 9 missing values.
    let meetings = col("meetings");
    assert_eq!(meetings["groupings"][0]["grouping"], "team");
    assert_eq!(meetings["groupings"][0]["varies_within"], false);
    assert_eq!(
        meetings["groupings"][0]["icc1"]
            .as_f64()
            .map(|v| (v - 1.0).abs() < 1e-12),
        Some(true)
    );
    assert_eq!(col("tenure")["missing"], 9);
    assert_eq!(col("dept")["type"], "categorical");

    let out = slopewise(&["describe", "demo-data/teams.csv", "--groups", "team"]);
    let stdout = text(&out.stdout);
    assert!(stdout.contains("ICC(1) team"), "{stdout}");
    assert!(stdout.contains("2,490 rows"), "{stdout}");

    let out = slopewise(&["describe", "demo-data/teams.csv", "--groups", "teem"]);
    assert_eq!(out.status.code(), Some(1));
    assert!(text(&out.stderr).contains("no column named `teem` to group by; did you mean `team`?"));
}

#[test]
fn fmt_rewrites_idempotently_and_check_mode_reports() {
    let dir = std::env::temp_dir().join(format!("slopewise-fmt-{}", std::process::id()));
    std::fs::create_dir_all(&dir).unwrap();
    let file = dir.join("m.slope");
    std::fs::write(
        &file,
        "source \"d.csv\"   # data\nmodel m{y=x+z*x # terms\n errors   hc3}\n",
    )
    .unwrap();
    let f = file.to_str().unwrap();
    assert_eq!(slopewise(&["fmt", f, "--check"]).status.code(), Some(1));
    assert_eq!(slopewise(&["fmt", f]).status.code(), Some(0));
    let once = std::fs::read_to_string(&file).unwrap();
    assert!(
        once.contains("# data") && once.contains("# terms"),
        "comments kept: {once}"
    );
    assert_eq!(
        slopewise(&["fmt", f, "--check"]).status.code(),
        Some(0),
        "{once}"
    );
    assert_eq!(slopewise(&["fmt", f]).status.code(), Some(0));
    assert_eq!(std::fs::read_to_string(&file).unwrap(), once);

    std::fs::write(&file, "model m { y = }\n").unwrap();
    let out = slopewise(&["fmt", f]);
    assert_eq!(out.status.code(), Some(1));
    assert_eq!(
        std::fs::read_to_string(&file).unwrap(),
        "model m { y = }\n",
        "a broken file is left alone"
    );
    let _ = std::fs::remove_dir_all(&dir);
}

#[test]
fn demo_files_are_in_canonical_form() {
    for f in ["demo-data/teams.slope", "demo-data/suppliers.slope"] {
        let out = slopewise(&["fmt", f, "--check"]);
        assert_eq!(out.status.code(), Some(0), "{f}: {}", text(&out.stdout));
    }
}

#[test]
fn every_command_has_help() {
    for cmd in ["check", "describe", "fmt", "bench"] {
        let out = slopewise(&[cmd, "--help"]);
        assert_eq!(out.status.code(), Some(0), "{cmd}");
        assert!(
            text(&out.stdout).len() > 100,
            "{cmd}: {}",
            text(&out.stdout)
        );
    }
}
