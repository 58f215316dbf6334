//! Inputs meant to break the parser: it must return, report errors where they
//! belong and never exhaust the stack.

use syntax::{format, parse};

fn nested(open: &str, close: &str, n: usize) -> String {
    format!("let x = {}a{}\n", open.repeat(n), close.repeat(n))
}

#[test]
fn nesting_up_to_the_limit_parses() {
    let p = parse(&nested("(", ")", 128));
    assert!(p.errors.is_empty(), "{:?}", p.errors);
    assert!(format(&nested("(", ")", 128)).is_some());
}

#[test]
fn nesting_beyond_the_limit_is_one_error() {
    let p = parse(&nested("(", ")", 129));
    assert_eq!(p.errors.len(), 1, "{:?}", p.errors);
    assert!(p.errors[0].message.contains("nested more than 128 levels"));
    // The error points at the first parenthesis past the limit.
    assert_eq!(p.errors[0].span.start, "let x = ".len() + 128);
}

#[test]
fn very_deep_nesting_does_not_overflow() {
    // Debug builds are slow; one input at full size, the others smaller.
    for (open, close, n) in [
        ("(", ")", 100_000),
        ("{", "}", 5_000),
        ("f(", ")", 5_000),
        ("(", "", 5_000),
    ] {
        let p = parse(&nested(open, close, n));
        assert!(!p.errors.is_empty());
    }
    let p = parse(&"{".repeat(10_000));
    assert!(!p.errors.is_empty());
}

#[test]
fn long_operator_chains_are_cut_with_one_error() {
    for (op, n) in [
        ("+", 50_000),
        ("^", 2_000),
        ("*", 2_000),
        (" and ", 2_000),
        (" < ", 2_000),
    ] {
        let text = format!("let x = a{}\n", format!("{op}a").repeat(n));
        let p = parse(&text);
        assert_eq!(p.errors.len(), 1, "{op}: {:?}", p.errors);
        assert!(p.errors[0].message.contains("nested more than 1000 levels"));
    }
    let text = format!("let x = {}a\n", "-".repeat(20_000));
    assert_eq!(parse(&text).errors.len(), 1);
    let text = format!("let x = {}a\n", "not ".repeat(5_000));
    assert_eq!(parse(&text).errors.len(), 1);
}

#[test]
fn long_valid_lines_parse() {
    let terms: Vec<String> = (0..20_000).map(|i| format!("x{i}")).collect();
    let text = format!("model m {{ y = {} }}\n", terms.join(" + "));
    assert!(text.len() > 100_000);
    let p = parse(&text);
    assert!(p.errors.is_empty());
    assert!(format(&text).is_some());
    let text = format!("source \"{}\"\n", "a".repeat(200_000));
    assert!(parse(&text).errors.is_empty());
}

#[test]
fn long_garbage_lines_return() {
    for (unit, len) in [
        ("x ", 100_000),
        ("a+", 100_000),
        ("$", 10_000),
        ("1 ", 10_000),
        ("( ", 10_000),
        (") ", 10_000),
        (", ", 10_000),
        ("\"", 10_000),
        ("`", 10_000),
        ("model ", 10_000),
        ("{ ", 10_000),
        ("} ", 10_000),
    ] {
        let text = unit.repeat(len / unit.len());
        let _ = parse(&text);
        let _ = format(&text);
    }
}
