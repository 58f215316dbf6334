//! The canonical layout: snapshots, comments kept, idempotence and round trip.

mod common;

use expect_test::{expect, Expect};
use syntax::{format, parse};

/// Formats, checks the output is stable and parses to the same tree.
fn check(text: &str, expect: Expect) {
    let out = format(text).expect("input has no syntax errors");
    expect.assert_eq(&out);
    assert_eq!(
        format(&out).as_deref(),
        Some(out.as_str()),
        "not idempotent"
    );
    assert_eq!(
        common::strip_spans(&parse(&out)),
        common::strip_spans(&parse(text)),
        "tree changed"
    );
}

#[test]
fn spacing_is_canonical() {
    check(
        "source   \"a.csv\"   missing \"NA\",\"\"\nlet   x=a+b*c^2-(d/e)\nwhere year>=2015 and not(x==1)\nmodel m{y=a*b+x^2+log( z ) fixed g,h\nvary intercept,a by g errors cluster g,h estimate reml df residual where x!=2}\nprobe m:a across b at - 1sd,mean,+1sd bootstrap 500 seed 3\nregions m:a across b alpha .05\nturning m:x across w at p10,p90\nplot m:x across w at mean to \"f.svg\"\ncompare m,n\n",
        expect![[r#"
            source "a.csv" missing "NA", ""
            let x = a + b * c^2 - (d / e)
            where year >= 2015 and not (x == 1)
            model m {
              y = a * b + x^2 + log(z)
              fixed g, h
              vary intercept, a by g
              errors cluster g, h
              estimate reml
              df residual
              where x != 2
            }
            probe m: a across b at -1sd, mean, +1sd bootstrap 500 seed 3
            regions m: a across b alpha .05
            turning m: x across w at p10, p90
            plot m: x across w at mean to "f.svg"
            compare m, n
        "#]],
    );
}

#[test]
fn comments_are_kept_in_place() {
    check(
        "# header\n\n\n# second\nsource \"a.csv\"   # trailing\nmodel m { # on the brace\n  # before formula\n  y = x   # after formula\n\n  # alone at the end\n} # after brace\nlet q = a +   # inside\n  b\n# last\n",
        expect![[r##"
            # header

            # second
            source "a.csv"  # trailing
            model m {       # on the brace
              # before formula
              y = x  # after formula

              # alone at the end
            }  # after brace
            # inside
            let q = a + b
            # last
        "##]],
    );
}

#[test]
fn blank_lines_are_kept_but_collapsed() {
    check(
        "\n\nsource \"a.csv\"\n\n\n\npanel u over t\nlet a = 1\n\nmodel m {\n\n\n  y = x\n  fixed u\n}\n\n\n",
        expect![[r#"
            source "a.csv"

            panel u over t
            let a = 1

            model m {
              y = x
              fixed u
            }
        "#]],
    );
}

#[test]
fn numbers_names_and_strings_keep_their_spelling() {
    check(
        "let `team size` = 1.50e+3 * Größe\nsource \"a\\\"b\\\\c\\td\"\nprobe m: x across w at +0.50sd, -2.0\nmodel m { `focus score` = `x` + años }\n",
        expect![[r#"
            let `team size` = 1.50e+3 * Größe
            source "a\"b\\c\td"
            probe m: x across w at +0.50sd, -2.0
            model m {
              `focus score` = `x` + años
            }
        "#]],
    );
}

#[test]
fn empty_and_comment_only_files() {
    assert_eq!(format("").as_deref(), Some(""));
    assert_eq!(format("\n\n  \n").as_deref(), Some(""));
    assert_eq!(format("#a\n\n\n#b").as_deref(), Some("#a\n\n#b\n"));
    assert_eq!(format("model m {}").as_deref(), Some("model m {\n}\n"));
}

#[test]
fn files_with_errors_are_not_formatted() {
    assert_eq!(format("let x = "), None);
    assert_eq!(format("model m { y = x"), None);
    assert_eq!(format("let x = 1 $"), None);
}

#[test]
fn crlf_line_endings() {
    check(
        "source \"a.csv\"\r\n# note\r\nlet x = 1 # two\r\n",
        expect![[r#"
            source "a.csv"
            # note
            let x = 1  # two
        "#]],
    );
}
