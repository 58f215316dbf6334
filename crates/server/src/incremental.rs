//! Checking only what an edit touched.
//!
//! On a large data file the checker's cost is per model (terms evaluated over
//! every row, variation within groupings, rows lost), so re-checking every
//! model on each keystroke would take seconds. A model's diagnostics depend
//! only on the statements that describe the data (`source`, `groups`,
//! `panel`, `let`, top-level `where`), on the data and on its own text; a
//! probing statement's also on its model's text. So while those are unchanged
//! their earlier findings are reused (moved with the text), and the checker
//! runs on a copy of the file in which every other model and request is
//! blanked out (same byte offsets, so spans need no mapping). Anything unusual
//! (a changed data statement, new data, a model name defined twice) falls back
//! to checking the whole file.

use std::collections::{HashMap, HashSet};
use std::path::Path;
use std::sync::Arc;

use check::{DataProvider, Diagnostic, ResolvedModel};
use syntax::ast::StmtKind;
use syntax::{Parsed, Span};

/// Findings of one model or request, with spans relative to its start.
#[derive(Clone, Debug)]
struct Unit {
    diagnostics: Vec<Diagnostic>,
    model: Option<Arc<ResolvedModel>>,
}

/// What the last check of a document left for the next one.
#[derive(Default)]
pub struct UnitCache {
    context: Option<Vec<(usize, String)>>,
    /// The frame the findings were made against, and whether it was complete.
    data: Option<(usize, bool)>,
    units: HashMap<String, Unit>,
}

/// The merged result of a check.
pub struct Outcome {
    pub checked: check::Checked,
    pub diagnostics: Vec<Diagnostic>,
    pub models: Vec<Arc<ResolvedModel>>,
    /// False when the whole file was checked.
    pub partial: bool,
}

#[derive(Clone, Debug)]
enum Role {
    Context,
    Model(String),
    Request(Vec<String>),
    /// Text that did not parse as a statement: always checked.
    Broken,
}

fn role(kind: &StmtKind) -> Role {
    match kind {
        StmtKind::Source { .. }
        | StmtKind::Groups { .. }
        | StmtKind::Panel { .. }
        | StmtKind::Let { .. }
        | StmtKind::Where { .. } => Role::Context,
        StmtKind::Model(m) => Role::Model(m.name.name.clone()),
        StmtKind::Probe { target, .. }
        | StmtKind::Regions { target, .. }
        | StmtKind::Turning { target, .. }
        | StmtKind::Effect { target }
        | StmtKind::Plot { target, .. } => Role::Request(vec![target.model.name.clone()]),
        StmtKind::Compare { models } => {
            Role::Request(models.iter().map(|m| m.name.clone()).collect())
        }
        StmtKind::Error => Role::Broken,
    }
}

fn data_identity(checked: &check::Checked) -> Option<(usize, bool)> {
    checked
        .data
        .as_ref()
        .map(|d| (Arc::as_ptr(&d.frame) as usize, d.complete))
}

fn shift(d: &Diagnostic, by: isize) -> Diagnostic {
    let mv = |s: Span| {
        Span::new(
            (s.start as isize + by).max(0) as usize,
            (s.end as isize + by).max(0) as usize,
        )
    };
    let mut d = d.clone();
    d.span = mv(d.span);
    if let Some(f) = &mut d.fix {
        for e in &mut f.edits {
            e.span = mv(e.span);
        }
    }
    d
}

fn sort(diags: &mut Vec<Diagnostic>) {
    diags.sort_by_key(|d| (d.span.start, d.severity, d.span.end));
    diags.dedup();
}

pub fn check(
    text: &str,
    parsed: &Parsed,
    base_dir: &Path,
    data: &dyn DataProvider,
    cache: &mut UnitCache,
) -> Outcome {
    let stmts = &parsed.file.stmts;
    let roles: Vec<Role> = stmts.iter().map(|s| role(&s.kind)).collect();
    let slice = |s: Span| text.get(s.start..s.end).unwrap_or("");
    let mut context = Vec::new();
    let mut units_before = 0;
    let mut model_text: HashMap<&str, &str> = HashMap::new();
    let mut duplicate = false;
    for (s, r) in stmts.iter().zip(&roles) {
        match r {
            Role::Context => context.push((units_before, slice(s.span).to_string())),
            Role::Model(name) => {
                units_before += 1;
                duplicate |= model_text.insert(name, slice(s.span)).is_some();
            }
            _ => units_before += 1,
        }
    }
    let key = |i: usize| -> Option<String> {
        match &roles[i] {
            Role::Model(_) => Some(format!("model\0{}", slice(stmts[i].span))),
            Role::Request(models) => {
                // Messages about an unknown model name the models defined above.
                let above: Vec<&str> = roles[..i]
                    .iter()
                    .filter_map(|r| match r {
                        Role::Model(n) => Some(n.as_str()),
                        _ => None,
                    })
                    .collect();
                let mut k = format!("request\0{}\0{}", slice(stmts[i].span), above.join(","));
                for m in models {
                    k.push('\0');
                    k.push_str(model_text.get(m.as_str()).copied().unwrap_or(""));
                }
                Some(k)
            }
            Role::Context | Role::Broken => None,
        }
    };
    let keys: Vec<Option<String>> = (0..stmts.len()).map(key).collect();

    // Without a `source` the checker's finding about it sits on whichever
    // statement comes first: check the whole file.
    let has_source = stmts
        .iter()
        .any(|s| matches!(s.kind, StmtKind::Source { .. }));
    let reusable = !duplicate && has_source && cache.context.as_ref() == Some(&context);
    if reusable {
        // Which units must be checked: new or changed ones, text that did not
        // parse, and the models that a changed request refers to.
        let mut include: Vec<bool> = keys
            .iter()
            .zip(&roles)
            .map(|(k, r)| match k {
                Some(k) => !cache.units.contains_key(k),
                None => matches!(r, Role::Broken),
            })
            .collect();
        let mut wanted: HashSet<String> = HashSet::new();
        for (i, (r, inc)) in roles.iter().zip(&include).enumerate() {
            let (Role::Request(ms), true) = (r, inc) else {
                continue;
            };
            wanted.extend(ms.iter().cloned());
            // The message about an unknown model lists the models above it,
            // so they must be in the text that is checked.
            if ms.iter().any(|m| !model_text.contains_key(m.as_str())) {
                for above in &roles[..i] {
                    if let Role::Model(n) = above {
                        wanted.insert(n.clone());
                    }
                }
            }
        }
        for (i, r) in roles.iter().enumerate() {
            if let Role::Model(name) = r {
                if wanted.contains(name) {
                    include[i] = true;
                }
            }
        }
        let mut partial_text = text.as_bytes().to_vec();
        for (i, s) in stmts.iter().enumerate() {
            if keys[i].is_some() && !include[i] {
                for b in &mut partial_text[s.span.start..s.span.end] {
                    if *b != b'\n' {
                        *b = b' ';
                    }
                }
            }
        }
        // Only ASCII spaces replaced whole statements: still UTF-8.
        let partial_text = String::from_utf8(partial_text).unwrap_or_else(|_| text.to_string());
        let partial_parsed = syntax::parse(&partial_text);
        // Blanking must not change how the rest parses (a stray `,` after a
        // blanked statement would read differently): the statements kept
        // must be exactly those of the whole text.
        let kept: Vec<Span> = stmts
            .iter()
            .enumerate()
            .filter(|(i, _)| keys[*i].is_none() || include[*i])
            .map(|(_, s)| s.span)
            .collect();
        let same_shape = partial_parsed
            .file
            .stmts
            .iter()
            .map(|s| s.span)
            .eq(kept.iter().copied());
        let checked = check::check(&partial_text, &partial_parsed, base_dir, data);
        if same_shape && data_identity(&checked) == cache.data {
            // Syntax errors are those of the whole text, wherever they lie.
            // First, as the checker reports them first: ties keep that order.
            let mut diagnostics: Vec<Diagnostic> = syntax_diagnostics(parsed).collect();
            diagnostics.extend(
                checked
                    .diagnostics
                    .iter()
                    .filter(|d| d.code != check::codes::SYNTAX)
                    .cloned(),
            );
            let mut models: Vec<(usize, Arc<ResolvedModel>)> = Vec::new();
            let mut fresh: HashMap<&str, Arc<ResolvedModel>> = HashMap::new();
            for m in &checked.models {
                fresh.insert(m.name.as_str(), Arc::new(m.clone()));
            }
            let mut next_units = HashMap::new();
            for (i, s) in stmts.iter().enumerate() {
                let Some(k) = &keys[i] else { continue };
                let unit = if include[i] {
                    let model = match &roles[i] {
                        Role::Model(name) => fresh.get(name.as_str()).cloned(),
                        _ => None,
                    };
                    Unit {
                        diagnostics: within(&checked.diagnostics, s.span),
                        model,
                    }
                } else {
                    let u = cache.units[k].clone();
                    diagnostics.extend(
                        u.diagnostics
                            .iter()
                            .filter(|d| d.code != check::codes::SYNTAX)
                            .map(|d| shift(d, s.span.start as isize)),
                    );
                    u
                };
                if let Some(m) = &unit.model {
                    models.push((s.span.start, m.clone()));
                }
                next_units.insert(k.clone(), unit);
            }
            cache.units = next_units;
            sort(&mut diagnostics);
            return Outcome {
                checked,
                diagnostics,
                models: models.into_iter().map(|(_, m)| m).collect(),
                partial: true,
            };
        }
    }

    // The whole file.
    let checked = check::check(text, parsed, base_dir, data);
    let mut by_name: HashMap<&str, Arc<ResolvedModel>> = HashMap::new();
    for m in &checked.models {
        by_name
            .entry(m.name.as_str())
            .or_insert_with(|| Arc::new(m.clone()));
    }
    let mut units = HashMap::new();
    let mut models = Vec::new();
    for (i, s) in stmts.iter().enumerate() {
        let Some(k) = &keys[i] else { continue };
        let model = match &roles[i] {
            Role::Model(name) => by_name.get(name.as_str()).cloned(),
            _ => None,
        };
        if let Some(m) = &model {
            models.push(m.clone());
        }
        units.insert(
            k.clone(),
            Unit {
                diagnostics: within(&checked.diagnostics, s.span),
                model,
            },
        );
    }
    cache.context = (!duplicate).then_some(context);
    cache.data = data_identity(&checked);
    cache.units = units;
    Outcome {
        diagnostics: checked.diagnostics.clone(),
        checked,
        models,
        partial: false,
    }
}

fn syntax_diagnostics(parsed: &Parsed) -> impl Iterator<Item = Diagnostic> + '_ {
    parsed
        .errors
        .iter()
        .map(|e| Diagnostic::error(check::codes::SYNTAX, e.span, e.message.clone()))
}

/// The diagnostics inside a statement, relative to its start.
fn within(diags: &[Diagnostic], span: Span) -> Vec<Diagnostic> {
    diags
        .iter()
        .filter(|d| d.span.start >= span.start && d.span.end <= span.end)
        .map(|d| shift(d, -(span.start as isize)))
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    const BASE: &str = "source \"teams.csv\"
groups team in dept
let remote_w = within(remote_days, team)
model a {
  focus = remote_w + meetings + remote_w * meetings
  vary intercept, remote_w by team
}
model b {
  focus = tenure + meetngs
}
probe a: remote_w across meetings at -1sd, mean, +1sd
probe b: tenure across meetings at mean
";

    fn full(text: &str) -> Vec<Diagnostic> {
        let dir = Path::new(env!("CARGO_MANIFEST_DIR")).join("../../demo-data");
        let parsed = syntax::parse(text);
        check::check(text, &parsed, &dir, &check::FileLoader).diagnostics
    }

    /// A provider that hands out the same frame each time, as the server's cache does.
    struct Fixed(check::DataView);
    impl DataProvider for Fixed {
        fn load(
            &self,
            _: &Path,
            _: &frame::ReadOptions,
        ) -> Result<check::DataView, frame::ReadError> {
            Ok(self.0.clone())
        }
    }

    #[test]
    fn reused_findings_equal_a_check_of_the_whole_file() {
        let dir = Path::new(env!("CARGO_MANIFEST_DIR")).join("../../demo-data");
        let frame = frame::read_csv(&dir.join("teams.csv"), &Default::default()).unwrap();
        let data = Fixed(check::DataView::new(Arc::new(frame), true));
        let mut cache = UnitCache::default();
        let edits = [
            BASE.to_string(),
            // A probe of a model that does not exist: its message lists the
            // models above it, which are unchanged and would be left out.
            BASE.replace("probe b: tenure", "probe full: tenure"),
            // A new term in model b, then its probe changed, then a line
            // added above everything (all spans move), then model a broken.
            BASE.replace("tenure + meetngs", "tenure + meetngs + remote_w"),
            BASE.replace("tenure + meetngs", "tenure + meetngs + remote_w")
                .replace("at mean\n", "at p90\n"),
            format!(
                "# moved\n{}",
                BASE.replace("tenure + meetngs", "tenure + meetngs + remote_w")
            ),
            format!(
                "# moved\n{}",
                BASE.replace("remote_w * meetings", "remote_w * ")
            ),
            format!(
                "# moved\n{}",
                BASE.replace("remote_w * meetings", "remote_w * mee")
            ),
        ];
        let mut partial_runs = 0;
        for text in &edits {
            let parsed = syntax::parse(text);
            let out = check(text, &parsed, &dir, &data, &mut cache);
            partial_runs += usize::from(out.partial);
            assert_eq!(out.diagnostics, full(text), "after the edit to:\n{text}");
            let names: Vec<&str> = out.models.iter().map(|m| m.name.as_str()).collect();
            assert_eq!(names, ["a", "b"]);
        }
        // Every run after the first reused something.
        assert_eq!(partial_runs, edits.len() - 1);
    }
}
