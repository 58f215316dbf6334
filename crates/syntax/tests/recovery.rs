//! Files with several mistakes: every error is reported, each at its own line
//! and column, and the statements around the mistakes survive.

mod common;

use common::errors;
use syntax::ast::StmtKind;
use syntax::parse;

/// Asserts the errors' positions and that each message mentions `needle`.
fn check(text: &str, expected: &[(usize, usize, &str)]) {
    let got = errors(text);
    assert_eq!(got.len(), expected.len(), "errors: {got:#?}");
    for (g, (line, col, needle)) in got.iter().zip(expected) {
        let prefix = format!("{line}:{col} ");
        assert!(g.starts_with(&prefix), "expected at {prefix}: {g}");
        assert!(g.contains(needle), "expected {needle:?} in {g}");
    }
}

#[test]
fn errors_in_several_top_level_statements() {
    let text = "source \"teams.csv\"\n\
                groups team in\n\
                let x = (a +\n\
                panel firm year\n\
                probe full remote_w across meetings at -1sd\n\
                compare base, shape\n";
    check(
        text,
        &[
            (3, 1, "expected a grouping column, found `let`"),
            (4, 1, "expected an expression, found `panel`"),
            (4, 12, "expected `over` and the time column"),
            (5, 12, "expected `:` after the model name"),
        ],
    );
    let p = parse(text);
    assert!(matches!(p.file.stmts[0].kind, StmtKind::Source { .. }));
    assert!(matches!(
        p.file.stmts.last().map(|s| &s.kind),
        Some(StmtKind::Compare { .. })
    ));
}

#[test]
fn errors_inside_a_model_are_found_statement_by_statement() {
    let text = "model full {\n\
                \x20 focus + remote_w\n\
                \x20 vary intercept remote_w by team\n\
                \x20 y = a - b\n\
                \x20 estimate\n\
                }\n\
                effect full: x\n";
    check(
        text,
        &[
            (
                3,
                3,
                "expected `=` after the outcome `focus + remote_w`, found `vary`",
            ),
            (
                3,
                18,
                "expected `,` or `by` and the grouping, found `remote_w`",
            ),
            (4, 9, "expected `+` or the end of the formula, found `-`"),
            (6, 1, "expected the estimation method"),
        ],
    );
    let p = parse(text);
    assert_eq!(p.file.stmts.len(), 2);
}

#[test]
fn unclosed_model_brace_is_reported_at_the_brace() {
    let text =
        "model full {\n  y = x\n\nprobe full: x across w at 1, 2 3\nmodel other {\n  y = z\n";
    check(
        text,
        &[
            (1, 12, "unclosed `{` of model `full`"),
            (4, 32, "found the number `3`"),
            (5, 13, "unclosed `{` of model `other`"),
        ],
    );
}

#[test]
fn lexical_errors_do_not_stop_parsing() {
    let text =
        "source \"teams.csv\nlet y = a $ b\nlet s = \"x\\q\"\nlet t = `team size\nlet u = 1 ~ 2\n";
    check(
        text,
        &[
            (1, 8, "this string is not closed"),
            (2, 11, "unexpected character `$`"),
            (3, 9, "unknown escape `\\q`"),
            (4, 9, "this name is not closed"),
            (5, 11, "unexpected character `~`"),
        ],
    );
}

#[test]
fn value_errors_in_probes() {
    let text = "probe m: x across w at 2xy, mean\nregions m: x across w alpha\nturning m: x across w\nplot m: x across w \"f.svg\"\n";
    check(
        text,
        &[
            (1, 24, "`2xy` is not a value"),
            (3, 1, "expected the significance level"),
            (4, 1, "expected `at` and the moderator values, found `plot`"),
            (4, 20, "`to` and the figure's file name"),
        ],
    );
}

#[test]
fn term_powers_must_be_positive_whole_numbers() {
    let text = "model m {\n  y = x^0.5 + z^0\n  fixed g\n  w = q^y\n}\n";
    check(
        text,
        &[
            (2, 9, "the power of a term must be a whole number"),
            (2, 17, "the power of a term must be a whole number"),
            (4, 9, "whole number of at least 1, as in `x^2`; found `y`"),
        ],
    );
}

#[test]
fn stray_text_between_statements() {
    let text = "x = 3\nlet a = 1\n}\nlet b = 2 )\nwhere a > 1 ,\n";
    check(
        text,
        &[
            (1, 1, "expected a new statement, found `x`"),
            (3, 1, "found `}`"),
            (4, 11, "found `)`"),
            (5, 13, "found `,`"),
        ],
    );
    let lets = parse(text)
        .file
        .stmts
        .iter()
        .filter(|s| matches!(s.kind, StmtKind::Let { .. }))
        .count();
    assert_eq!(lets, 2);
}

#[test]
fn broken_call_arguments_are_skipped_as_a_group() {
    let text = "let a = log(x y) + z\nlet b = within(x, , g)\nlet c = (1 + ) * 2\n";
    check(
        text,
        &[
            (
                1,
                15,
                "expected `,` or `)` to close the argument list, found `y`",
            ),
            (2, 19, "expected an expression, found `,`"),
            (3, 14, "expected an expression, found `)`"),
        ],
    );
    assert_eq!(parse(text).file.stmts.len(), 3);
}
