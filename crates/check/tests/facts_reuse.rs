//! The checker keeps facts about values per frame (missing rows, variation
//! within groupings, levels) and reuses them in later checks of the same data.
//! Reused facts must never change a finding: every file below is checked once
//! with a view whose cache earlier files filled, and once with a fresh view,
//! and the two results must be equal. The files differ in exactly the ways a
//! cached fact could go stale: the same value under another `where` (another
//! estimation sample), `lag` under another panel, a `let` name given another
//! definition.

use std::path::{Path, PathBuf};
use std::sync::Arc;

use check::{check, Checked, DataProvider, DataView};
use frame::{ReadError, ReadOptions};

/// Hands out clones of one view, as the language server does for a file that
/// has not changed on disk: the clones share one cache of facts.
struct Shared(DataView);

impl DataProvider for Shared {
    fn load(&self, _: &Path, _: &ReadOptions) -> Result<DataView, ReadError> {
        Ok(self.0.clone())
    }
}

/// A new view, and so an empty cache, for every check.
struct Fresh(Arc<frame::Frame>);

impl DataProvider for Fresh {
    fn load(&self, _: &Path, _: &ReadOptions) -> Result<DataView, ReadError> {
        Ok(DataView::new(self.0.clone(), true))
    }
}

fn demo() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("../../demo-data")
}

fn findings(c: &Checked) -> String {
    format!("{:#?}\n{:#?}", c.diagnostics, c.models)
}

/// Check every file with the shared view in turn and compare each with a
/// check on a fresh view.
fn same_with_and_without_reuse(csv: &str, files: &[String]) {
    let dir = demo();
    let frame = Arc::new(frame::read_csv(&dir.join(csv), &ReadOptions::default()).unwrap());
    let shared = Shared(DataView::new(frame.clone(), true));
    let fresh = Fresh(frame);
    // Twice over: the second round meets every value already cached.
    for round in 0..2 {
        for (i, text) in files.iter().enumerate() {
            let parsed = syntax::parse(text);
            let reused = check(text, &parsed, &dir, &shared);
            let alone = check(text, &parsed, &dir, &fresh);
            assert!(
                reused.models.iter().all(|m| m.rows.is_some()),
                "file {i}: the data's values were not used"
            );
            assert_eq!(
                findings(&reused),
                findings(&alone),
                "file {i} (round {round}) differs when facts are reused:\n{text}"
            );
        }
    }
}

#[test]
fn facts_reused_across_samples_panels_and_definitions_change_nothing() {
    let head = "source \"suppliers.csv\"\n";
    let body = |panel: &str, filter: &str, lag: &str| {
        format!(
            "{head}{panel}\nlet s = {lag}\nmodel m {{\n  uptime = s + digital + s * digital + log(staff)\n  fixed firm\n  errors cluster firm\n  {filter}\n}}\nprobe m: s across digital at mean\n"
        )
    };
    let files = vec![
        body("panel firm over year", "", "suppliers"),
        // The same terms on fewer rows: another sample, so other facts.
        body("panel firm over year", "where year >= 2016", "suppliers"),
        body("panel firm over year", "where digital > 0.5", "suppliers"),
        // One year: one row per firm, so `fixed firm` absorbs every term.
        body("panel firm over year", "where year == 2016", "suppliers"),
        // `lag` follows the panel: under `firm` it is missing in each firm's
        // first year; under `region` it reads another row entirely.
        body("panel firm over year", "", "lag(suppliers)"),
        body("panel region over year", "", "lag(suppliers)"),
        body(
            "panel firm over year",
            "where year >= 2016",
            "lag(suppliers, 2)",
        ),
        // The same name for another value.
        body("panel firm over year", "", "suppliers^2"),
        body("panel firm over year", "", "within(suppliers, firm)"),
        body("", "", "suppliers"),
    ];
    same_with_and_without_reuse("suppliers.csv", &files);
}

#[test]
fn facts_reused_with_missing_values_and_nested_groups_change_nothing() {
    // teams.csv has missing values, so samples differ with the variables used.
    let model = |terms: &str, extra: &str| {
        format!(
            "source \"teams.csv\"\ngroups team in dept\nmodel m {{\n  focus = {terms}\n  {extra}\n}}\n"
        )
    };
    let files = vec![
        model(
            "remote_days + meetings + remote_days * meetings",
            "vary intercept by team",
        ),
        model(
            "remote_days + tenure",
            "vary intercept, remote_days by team",
        ),
        model(
            "remote_days + meetings",
            "fixed team\n  errors cluster team",
        ),
        model("remote_days * meetings", "fixed team"),
        model(
            "remote_days + meetings",
            "where tenure > 2\n  errors cluster dept",
        ),
        model("tenure + between(remote_days, team)", "fixed dept"),
    ];
    same_with_and_without_reuse("teams.csv", &files);
}
