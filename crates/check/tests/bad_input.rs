//! The bad-input corpus: every file under `tests/bad-input/` is checked, and its
//! diagnostics must equal the golden `NAME.expected` file beside it (severity,
//! code, line:column, exact message). `UPDATE_EXPECT=1 cargo test -p check`
//! rewrites the golden files; read the diff before committing.
//!
//! A second table pins the one diagnostic each file exists for, so an update of
//! the golden files cannot silently lose it.

use std::path::{Path, PathBuf};

use check::{check, FileLoader, Severity};
use syntax::LineIndex;

fn corpus() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("../../tests/bad-input")
}

/// The diagnostics of one file as lines: `severity code line:col message`.
fn render(path: &Path) -> String {
    let text = std::fs::read_to_string(path).unwrap();
    let parsed = syntax::parse(&text);
    let dir = path.parent().unwrap();
    let checked = check(&text, &parsed, dir, &FileLoader);
    let index = LineIndex::new(&text);
    let dir_text = dir.display().to_string();
    let mut out = String::new();
    for d in &checked.diagnostics {
        let p = index.char_pos(&text, d.span.start);
        let msg = d.message.replace(&dir_text, "<dir>");
        out.push_str(&format!(
            "{} {} {}:{} {}\n",
            d.severity.as_str(),
            d.code,
            p.line + 1,
            p.col + 1,
            msg
        ));
    }
    out
}

fn slope_files() -> Vec<PathBuf> {
    let mut files: Vec<PathBuf> = std::fs::read_dir(corpus())
        .unwrap()
        .map(|e| e.unwrap().path())
        .filter(|p| p.extension().is_some_and(|e| e == "slope"))
        .collect();
    files.sort();
    files
}

#[test]
fn every_file_matches_its_golden_diagnostics() {
    let update = std::env::var_os("UPDATE_EXPECT").is_some();
    let mut failures = Vec::new();
    for f in slope_files() {
        let got = render(&f);
        let golden = f.with_extension("expected");
        if update {
            std::fs::write(&golden, &got).unwrap();
            continue;
        }
        let want = std::fs::read_to_string(&golden).unwrap_or_default();
        if got != want {
            failures.push(format!("{}:\n--- want\n{want}--- got\n{got}", f.display()));
        }
    }
    assert!(failures.is_empty(), "{}", failures.join("\n"));
}

/// (file, severity, code, line, column, start of the message): the reason each file exists.
const KEY: &[(&str, Severity, &str, usize, usize, &str)] = &[
    ("missing_data_file", Severity::Error, "data-file", 2, 8, "cannot read data file `data/no_such_file.csv` (looked for <dir>/data/no_such_file.csv): "),
    ("unreadable_data_file", Severity::Error, "data-file", 2, 8, "cannot read data file `data/a_folder` (looked for <dir>/data/a_folder): "),
    ("empty_data_file", Severity::Error, "data-file", 1, 8, "data file `data/empty.csv` is empty"),
    ("header_only", Severity::Error, "no-rows", 1, 8, "data file `data/header_only.csv` has a header but no rows of data"),
    ("ragged_row", Severity::Error, "data-file", 1, 8, "data file `data/ragged.csv`, line 3: 2 fields where the header has 3"),
    ("all_missing_column", Severity::Error, "all-missing", 2, 28, "`empty_col` is missing in every row of the data, so model `m` cannot use it"),
    ("duplicate_column", Severity::Error, "data-file", 1, 8, "data file `data/duplicate_column.csv`, header: columns 1 and 2 are both named `x`"),
    ("unknown_column", Severity::Error, "unknown-column", 3, 20, "no column or `let` named `meeet` in the data; did you mean `meet`?"),
    ("unknown_function", Severity::Error, "unknown-function", 2, 9, "unknown function `centre`; did you mean `center`?"),
    ("argument_count", Severity::Error, "argument-count", 2, 9, "`within` takes 2 arguments (within(x, G)), but 1 was given"),
    ("slope_not_varying", Severity::Error, "slope-not-varying", 5, 19, "`meet` does not vary within `team`"),
    ("not_nested", Severity::Error, "not-nested", 2, 8, "`team` is not nested in `dept`: team `T03` appears in dept `D1` (line 12) and `D2` (line 42)"),
    ("panel_duplicate", Severity::Error, "panel-duplicate", 2, 7, "firm `F4` has more than one row for year 2018 (lines 22 and 37)"),
    ("lag_without_panel", Severity::Error, "needs-panel", 2, 19, "`lag` needs a panel"),
    ("probe_not_in_model", Severity::Error, "not-in-model", 3, 10, "`tenure` is not a term of model `m`"),
    ("two_outcomes", Severity::Error, "second-outcome", 4, 3, "model `m` already has an outcome"),
    ("text_in_numbers", Severity::Error, "text-as-number", 2, 23, "column `score_txt` is used as a number but holds text at line 24: \"n/a\""),
    ("missing_lower_order", Severity::Warning, "missing-lower-order", 2, 28, "`remote*meet` is in the model without its lower-order term `meet`"),
    ("no_interaction", Severity::Error, "no-interaction", 3, 26, "`meet` does not moderate `remote` in model `m`"),
    ("no_interaction", Severity::Error, "no-square", 4, 12, "`turning` needs a squared term of `remote`"),
    ("buried_moderator", Severity::Error, "no-interaction", 3, 24, "`meet` enters model `m` only inside `log(meet+1)`"),
];

#[test]
fn each_file_reports_the_problem_it_exists_for() {
    for &(name, severity, code, line, col, start) in KEY {
        let got = render(&corpus().join(format!("{name}.slope")));
        let prefix = format!("{} {code} {line}:{col} {start}", severity.as_str());
        assert!(
            got.lines().any(|l| l.starts_with(&prefix)),
            "{name}: no line starting with\n  {prefix}\nin\n{got}"
        );
    }
}

#[test]
fn clean_files_have_no_errors() {
    for name in ["bom_crlf", "custom_missing"] {
        let got = render(&corpus().join(format!("{name}.slope")));
        assert!(!got.contains("error "), "{name}:\n{got}");
    }
}

#[test]
fn syntax_errors_are_all_reported_at_their_place() {
    let got = render(&corpus().join("syntax_errors.slope"));
    let syntax: Vec<&str> = got
        .lines()
        .filter(|l| l.starts_with("error syntax "))
        .collect();
    assert!(syntax.len() >= 3, "want 3+ syntax errors:\n{got}");
}
