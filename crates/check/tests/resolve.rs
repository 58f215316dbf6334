//! The checker's resolved output and its diagnostics on small inline cases.
//! Data are tiny invented tables written to a temporary folder.

use std::path::{Path, PathBuf};
use std::sync::atomic::{AtomicUsize, Ordering};

use check::{check, Checked, FileLoader, Kind, Severity};
use syntax::LineIndex;

static COUNTER: AtomicUsize = AtomicUsize::new(0);

/// Write `csv` as data.csv beside a model file holding `model`, and check it.
fn run(csv: &str, model: &str) -> (Checked, String) {
    let dir = std::env::temp_dir().join(format!(
        "slopewise-check-{}-{}",
        std::process::id(),
        COUNTER.fetch_add(1, Ordering::SeqCst)
    ));
    std::fs::create_dir_all(&dir).unwrap();
    std::fs::write(dir.join("data.csv"), csv).unwrap();
    let text = format!("source \"data.csv\"\n{model}");
    let parsed = syntax::parse(&text);
    let checked = check(&text, &parsed, &dir, &FileLoader);
    let _ = std::fs::remove_dir_all(&dir);
    (checked, text)
}

/// `severity code line:col message` for every diagnostic.
fn lines(c: &Checked, text: &str) -> Vec<String> {
    let idx = LineIndex::new(text);
    c.diagnostics
        .iter()
        .map(|d| {
            let p = idx.char_pos(text, d.span.start);
            format!(
                "{} {} {}:{} {}",
                d.severity.as_str(),
                d.code,
                p.line + 1,
                p.col + 1,
                d.message
            )
        })
        .collect()
}

fn has(c: &Checked, text: &str, prefix: &str) -> bool {
    let all = lines(c, text);
    let found = all.iter().any(|l| l.starts_with(prefix));
    if !found {
        eprintln!(
            "no diagnostic starting with {prefix:?} in:\n{}",
            all.join("\n")
        );
    }
    found
}

fn demo(name: &str) -> (Checked, String) {
    let path: PathBuf = Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("../../demo-data")
        .join(name);
    let text = std::fs::read_to_string(&path).unwrap();
    let parsed = syntax::parse(&text);
    (
        check(&text, &parsed, path.parent().unwrap(), &FileLoader),
        text,
    )
}

/// A small firm-year panel: region is constant within firm, x and z vary.
const PANEL: &str = "firm,year,region,x,z,y\n\
F1,1,north,1.0,2.0,3.1\nF1,2,north,2.0,1.0,4.2\nF1,3,north,3.5,2.5,5.0\n\
F2,1,south,0.5,1.5,2.2\nF2,2,south,1.5,3.0,2.9\nF2,3,south,2.5,0.5,4.4\n\
F3,1,north,4.0,1.0,6.1\nF3,2,north,3.0,2.0,5.3\nF3,3,north,1.0,4.0,3.9\n";

#[test]
fn teams_demo_resolves_as_a_mixed_model_with_cross_level_interaction() {
    let (c, text) = demo("teams.slope");
    assert!(!c.has_errors(), "{:?}", lines(&c, &text));
    let m = &c.models[0];
    assert_eq!(m.kind, Kind::Mixed);
    let labels: Vec<&str> = m.terms.iter().map(|t| t.label.as_str()).collect();
    assert_eq!(
        labels,
        [
            "remote_w",
            "remote_b",
            "meetings",
            "remote_w*meetings",
            "tenure"
        ]
    );
    let meetings = &m.terms[2];
    assert_eq!(
        meetings.varies_within,
        ["dept"],
        "meetings is a team-level moderator"
    );
    assert_eq!(m.terms[0].varies_within, ["team", "dept"]);
    // demo-data/README.md: 9 missing tenure values, so 2,481 of 2,490 rows are used.
    let rows = m.rows.as_ref().unwrap();
    assert_eq!(
        (rows.total, rows.used, rows.dropped_missing),
        (2490, 2481, 9)
    );
    assert_eq!(rows.missing_by, [("tenure".to_string(), 9)]);
    assert_eq!(m.random.len(), 2);
    assert!(m.random[0].intercept && m.random[0].slopes[0].label == "remote_w");
    // Three statements on the mixed model, four on the within-team model.
    assert_eq!(c.requests.len(), 7);
    let within = &c.models[1];
    assert_eq!(within.kind, Kind::Within);
    assert_eq!(within.terms[1].absorbed_by, Vec::<String>::new());
}

#[test]
fn suppliers_demo_gets_the_within_product_hint_with_its_fix() {
    let (c, text) = demo("suppliers.slope");
    assert!(!c.has_errors(), "{:?}", lines(&c, &text));
    assert_eq!(c.models.len(), 2);
    assert!(c.models.iter().all(|m| m.kind == Kind::Within));
    let hint = c
        .diagnostics
        .iter()
        .find(|d| d.code == "within-product")
        .expect("hint");
    assert_eq!(hint.severity, Severity::Hint);
    let fix = hint.fix.as_ref().unwrap();
    assert_eq!(
        fix.edits[0].text,
        "within(suppliers, firm) * within(digital, firm)"
    );
    assert_eq!(
        &text[fix.edits[0].span.start..fix.edits[0].span.end],
        "suppliers * digital"
    );
    assert_eq!(c.comparisons.len(), 1);
}

#[test]
fn a_term_constant_within_a_fixed_grouping_is_absorbed_with_a_removal_fix() {
    let (c, text) = run(
        PANEL,
        "panel firm over year\nmodel m {\n  y = x + region\n  fixed firm\n}\n",
    );
    assert!(has(&c, &text, "warning absorbed-term 4:11 `region` does not vary within `firm`, so `fixed firm` absorbs it"));
    let d = c
        .diagnostics
        .iter()
        .find(|d| d.code == "absorbed-term")
        .unwrap();
    let e = &d.fix.as_ref().unwrap().edits[0];
    let mut fixed = text.clone();
    fixed.replace_range(e.span.start..e.span.end, &e.text);
    assert!(fixed.contains("  y = x\n"), "{fixed}");
    assert_eq!(c.models[0].terms[1].absorbed_by, ["firm"]);
}

#[test]
fn lower_order_terms_absorbed_by_fixed_effects_are_not_demanded() {
    // region is constant within firm, so `x * region` needs no `region` term under `fixed firm`.
    let (c, text) = run(PANEL, "model m {\n  y = x + x * region\n  fixed firm\n}\n");
    assert!(
        !lines(&c, &text)
            .iter()
            .any(|l| l.contains("missing-lower-order")),
        "{:?}",
        lines(&c, &text)
    );
    // Without fixed effects the same model lacks `region`.
    let (c, text) = run(PANEL, "model m {\n  y = x + x * region\n}\n");
    assert!(has(&c, &text, "warning missing-lower-order 3:11 `x*region` is in the model without its lower-order term `region`"));
}

#[test]
fn within_products_count_plain_terms_as_their_lower_order_under_fixed() {
    let (c, text) = run(
        PANEL,
        "model m {\n  y = x + z + within(x, firm) * within(z, firm)\n  fixed firm\n}\n",
    );
    let all = lines(&c, &text);
    assert!(
        !all.iter()
            .any(|l| l.contains("missing-lower-order") || l.contains("within-product")),
        "{all:?}"
    );
}

#[test]
fn a_square_with_a_moderator_needs_every_sub_product() {
    let (c, text) = run(PANEL, "model m { y = x + x^2 * z }\n");
    assert!(has(&c, &text, "warning missing-lower-order 2:19 `x^2*z` is in the model without its lower-order terms `z`, `x^2`, `x*z`"));
    let fix = c
        .diagnostics
        .iter()
        .find(|d| d.code == "missing-lower-order")
        .unwrap()
        .fix
        .clone()
        .unwrap();
    assert_eq!(fix.edits[0].text, " + z + x^2 + x*z");
}

#[test]
fn a_probe_names_the_expression_that_hides_its_variable() {
    let model = "model m { y = x + log(z + 1) + x * log(z + 1) }\n\
                 probe m: x across z at mean\n\
                 probe m: z across x at mean\n";
    let (c, text) = run(PANEL, model);
    assert!(has(
        &c,
        &text,
        "error no-interaction 3:19 `z` enters model `m` only inside `log(z+1)`, and probing follows a variable only where it is a term itself"
    ));
    assert!(has(
        &c,
        &text,
        "error not-in-model 4:10 `z` enters model `m` only inside `log(z+1)`"
    ));
    assert!(lines(&c, &text)
        .iter()
        .any(|l| l.ends_with("(for example `let z_t = log(z+1)`) and probe that name")));
    // Named with `let`, the same model can be probed across the name.
    let named =
        "let lz = log(z + 1)\nmodel m { y = x + lz + x * lz }\nprobe m: x across lz at mean\n";
    let (c, text) = run(PANEL, named);
    assert!(!c.has_errors(), "{:?}", lines(&c, &text));
}

#[test]
fn lets_are_used_after_their_definition_only() {
    let (c, text) = run(PANEL, "model m { y = xc }\nlet xc = center(x)\n");
    assert!(has(
        &c,
        &text,
        "error used-before-definition 2:15 `xc` is used before its `let` definition"
    ));
    let (c, text) = run(PANEL, "let x = x * 2\nlet x = z\nmodel m { y = x }\n");
    assert!(has(
        &c,
        &text,
        "warning shadows-column 2:5 `let x` hides the data column"
    ));
    assert!(has(
        &c,
        &text,
        "error duplicate-name 3:5 `x` is already defined"
    ));
}

#[test]
fn options_are_checked_with_suggestions() {
    let (c, text) = run(
        PANEL,
        "model m {\n  y = x\n  errors hc4\n  estimate reml\n}\n",
    );
    assert!(has(
        &c,
        &text,
        "error unknown-option 4:10 unknown standard errors `hc4`; did you mean `hc1`?"
    ));
    assert!(has(
        &c,
        &text,
        "warning option-not-applicable 5:3 `estimate` chooses between REML and ML"
    ));
    let (c, text) = run(
        PANEL,
        "model m {\n  y = x\n  fixed firm\n  vary intercept by firm\n}\n",
    );
    assert!(has(&c, &text, "error fixed-and-vary 4:3"));
}

#[test]
fn clustering_needs_clusters() {
    let (c, text) = run(PANEL, "model m {\n  y = x\n  errors cluster firm\n}\n");
    assert!(has(&c, &text, "warning few-groups 4:18 only 3 `firm` clusters: cluster-robust standard errors are unreliable"));
    let (c, text) = run(
        PANEL,
        "where firm == \"F1\"\nmodel m {\n  y = x\n  errors cluster firm\n}\n",
    );
    assert!(has(&c, &text, "error few-groups 5:18 clustering by `firm` needs at least two clusters, but the sample has 1"));
    assert!(has(
        &c,
        &text,
        "hint rows-dropped 3:7 model `m` uses 3 of 9 rows: 6 excluded by `where`"
    ));
}

#[test]
fn probing_statements_are_checked_against_the_model() {
    let model = "model m { y = x + z + x * z + x^2 }\n";
    let (c, text) = run(PANEL, &format!("{model}probe n: x across z at mean\n"));
    assert!(has(
        &c,
        &text,
        "error unknown-model 3:7 no model named `n` above this line; did you mean `m`?"
    ));
    let (c, text) = run(
        PANEL,
        &format!("{model}probe m: x across z at meen, p101, +1sd\n"),
    );
    assert!(has(
        &c,
        &text,
        "error bad-value 3:24 `meen` is not a moderator value"
    ));
    assert!(has(
        &c,
        &text,
        "error bad-value 3:30 `p101` is not a percentile: they run from `p0` to `p100`"
    ));
    let (c, text) = run(PANEL, &format!("{model}regions m: x across z alpha 2\n"));
    assert!(has(
        &c,
        &text,
        "error bad-value 3:29 alpha 2 is not a significance level"
    ));
    let (c, text) = run(
        PANEL,
        &format!("{model}probe m: x across z at mean bootstrap 0\n"),
    );
    assert!(has(
        &c,
        &text,
        "error bad-value 3:39 `bootstrap 0` needs a whole number of draws of at least 1"
    ));
    let (c, text) = run(PANEL, &format!("{model}turning m: z\n"));
    assert!(has(
        &c,
        &text,
        "error no-square 3:12 `turning` needs a squared term of `z`"
    ));
    let (c, text) = run(
        PANEL,
        &format!("{model}turning m: x\neffect m: x\nprobe m: x across z at -1sd, mean, +1sd\n"),
    );
    assert!(!c.has_errors(), "{:?}", lines(&c, &text));
    assert_eq!(c.requests.len(), 3);
    assert_eq!(
        c.requests[2]
            .at
            .iter()
            .map(|a| a.label.as_str())
            .collect::<Vec<_>>(),
        ["-1sd", "mean", "+1sd"]
    );
}

#[test]
fn a_categorical_moderator_is_refused() {
    let (c, text) = run(
        PANEL,
        "model m { y = x + region + x * region }\nprobe m: x across region at mean\n",
    );
    assert!(has(
        &c,
        &text,
        "error categorical-moderator 3:19 `region` is categorical"
    ));
}

#[test]
fn levels_are_checked_in_comparisons_and_ref() {
    let (c, text) = run(
        PANEL,
        "where region == \"nort\"\nmodel m { y = x + ref(region, \"sout\") }\n",
    );
    assert!(has(
        &c,
        &text,
        "warning unknown-level 2:7 column `region` has no level \"nort\""
    ));
    assert!(has(
        &c,
        &text,
        "error unknown-level 3:31 \"sout\" is not a level of `region`"
    ));
}

#[test]
fn compare_needs_the_same_outcome() {
    let (c, text) = run(
        PANEL,
        "model a { y = x }\nmodel b { x = z }\ncompare a, b\n",
    );
    assert!(has(
        &c,
        &text,
        "error compare 4:12 models `a` and `b` explain different outcomes"
    ));
}

#[test]
fn a_constant_outcome_is_an_error() {
    let csv = "g,x,y\na,1,5\na,2,5\nb,3,5\n";
    let (c, text) = run(csv, "model m { y = x }\n");
    assert!(has(
        &c,
        &text,
        "error constant 2:11 the outcome `y` has the same value in every row the model uses"
    ));
}

#[test]
fn log_of_non_positive_values_is_reported_with_its_first_line() {
    let csv = "x,y\n1,2\n0,3\n-1,4\n2,5\n";
    let (c, text) = run(csv, "model m { y = log(x) }\n");
    assert!(has(
        &c,
        &text,
        "warning domain 2:15 `log(x)` is undefined in 2 rows where `x` ≤ 0 (first at line 3)"
    ));
    assert_eq!(c.models[0].rows.as_ref().unwrap().used, 2);
}

#[test]
fn checking_without_data_still_reports_what_needs_no_data() {
    let text = "source \"nowhere.csv\"\nmodel m { y = lag(x) + frob(z) }\n";
    let parsed = syntax::parse(text);
    let c = check(text, &parsed, Path::new("/nonexistent-dir"), &FileLoader);
    let all = lines(&c, text);
    assert!(
        all.iter().any(|l| l.starts_with("error data-file 1:8")),
        "{all:?}"
    );
    assert!(
        all.iter().any(|l| l.starts_with("error needs-panel 2:15")),
        "{all:?}"
    );
    assert!(
        all.iter()
            .any(|l| l.starts_with("error unknown-function 2:24")),
        "{all:?}"
    );
    assert!(!all.iter().any(|l| l.contains("unknown-column")), "{all:?}");
}

/// Counts loads, to show the checker reads the data file once per check.
struct Counting(std::cell::Cell<usize>);

impl check::DataProvider for Counting {
    fn load(
        &self,
        path: &Path,
        options: &frame::ReadOptions,
    ) -> Result<check::DataView, frame::ReadError> {
        self.0.set(self.0.get() + 1);
        FileLoader.load(path, options)
    }
}

#[test]
fn the_data_file_is_loaded_once_per_check() {
    let path = Path::new(env!("CARGO_MANIFEST_DIR")).join("../../demo-data/suppliers.slope");
    let text = std::fs::read_to_string(&path).unwrap();
    let parsed = syntax::parse(&text);
    let loads = Counting(std::cell::Cell::new(0));
    let c = check(&text, &parsed, path.parent().unwrap(), &loads);
    assert_eq!(c.models.len(), 2);
    assert_eq!(loads.0.get(), 1);
}
