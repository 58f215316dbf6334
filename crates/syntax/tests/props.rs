//! Properties over generated input: parsing and formatting never panic, and a
//! file without errors formats to a stable text with the same tree.

mod common;

use proptest::prelude::*;
use syntax::{format, parse};

const VALID: &str = r#"# remote days and focus
source "teams.csv" missing "NA"
groups team in dept
let remote_w = within(remote_days, team)   # deviation
where year >= 2015 and not (x == 1)
model full {
  focus = remote_w + meetings + remote_w * meetings + x^2 + log(staff)
  vary intercept, remote_w by team
  errors cluster team, dept
  estimate reml
  df satterthwaite
}
probe full: remote_w across meetings at -1sd, mean, +1sd bootstrap 100 seed 1
regions full: remote_w across meetings alpha 0.05
turning full: x across w at p10, p90
effect full: x
plot full: remote_w across meetings to "a.svg"
compare full, other
"#;

const WORDS: &[&str] = &[
    "source",
    "groups",
    "panel",
    "let",
    "where",
    "model",
    "probe",
    "regions",
    "turning",
    "effect",
    "plot",
    "compare",
    "fixed",
    "vary",
    "errors",
    "estimate",
    "df",
    "intercept",
    "by",
    "in",
    "over",
    "across",
    "at",
    "to",
    "alpha",
    "bootstrap",
    "seed",
    "missing",
    "and",
    "or",
    "not",
    "x",
    "y",
    "`a b`",
    "años",
    "mean",
    "p90",
    "-1sd",
    "+1sd",
    "0.5sd",
    "2",
    "1.5e3",
    "\"f\"",
    "=",
    "+",
    "-",
    "*",
    "/",
    "^",
    "(",
    ")",
    "{",
    "}",
    ",",
    ":",
    "<",
    ">=",
    "==",
    "!=",
    "#c\n",
    "\n",
    "$",
    "log(x)",
    "within(x, g)",
];

/// Checks the invariants every input must satisfy.
fn check_any(text: &str) {
    let p = parse(text);
    for e in &p.errors {
        assert!(
            e.span.start <= e.span.end && e.span.end <= text.len(),
            "{e:?}"
        );
        assert!(!e.message.is_empty());
    }
    for s in &p.file.stmts {
        assert!(s.span.start <= s.span.end && s.span.end <= text.len());
    }
    let formatted = format(text);
    assert_eq!(formatted.is_some(), p.errors.is_empty());
    if let Some(out) = formatted {
        assert_eq!(
            format(&out).as_deref(),
            Some(out.as_str()),
            "not idempotent:\n{text}"
        );
        assert_eq!(
            common::strip_spans(&parse(&out)),
            common::strip_spans(&p),
            "tree changed:\n{text}\n---\n{out}"
        );
    }
}

fn token_soup() -> impl Strategy<Value = String> {
    prop::collection::vec((prop::sample::select(WORDS), prop::bool::ANY), 0..80).prop_map(|v| {
        let mut s = String::new();
        for (w, newline) in v {
            s.push_str(w);
            s.push(if newline { '\n' } else { ' ' });
        }
        s
    })
}

/// A valid file with random cuts, insertions and duplications.
fn mutated() -> impl Strategy<Value = String> {
    let edits = prop::collection::vec(
        (
            0..VALID.len(),
            0..VALID.len(),
            0usize..30,
            prop::sample::select(WORDS),
        ),
        1..6,
    );
    edits.prop_map(|edits| {
        let mut s = VALID.to_string();
        for (i, (a, b, len, w)) in edits.into_iter().enumerate() {
            let a = floor(&s, a % (s.len() + 1));
            match i % 3 {
                0 => {
                    let end = floor(&s, (a + len).min(s.len()));
                    s.replace_range(a..end, "");
                }
                1 => s.insert_str(a, w),
                _ => {
                    let b = floor(&s, b % (s.len() + 1));
                    let end = floor(&s, (b + len).min(s.len()));
                    let piece = s[b..end].to_string();
                    s.insert_str(a, &piece);
                }
            }
        }
        s
    })
}

fn floor(s: &str, mut i: usize) -> usize {
    while !s.is_char_boundary(i) {
        i -= 1;
    }
    i
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 200, ..ProptestConfig::default() })]

    #[test]
    fn arbitrary_strings(text in any::<String>()) {
        check_any(&text);
    }

    #[test]
    fn arbitrary_bytes(bytes in prop::collection::vec(any::<u8>(), 0..400)) {
        check_any(&String::from_utf8_lossy(&bytes));
    }

    #[test]
    fn token_soups(text in token_soup()) {
        check_any(&text);
    }

    #[test]
    fn mutations_of_a_valid_file(text in mutated()) {
        check_any(&text);
    }
}

#[test]
fn the_unmutated_file_is_valid() {
    let p = parse(VALID);
    assert!(p.errors.is_empty(), "{:?}", p.errors);
    check_any(VALID);
}
