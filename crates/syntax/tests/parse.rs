//! Snapshots of the tree, one line per statement with its byte span. Update
//! with `UPDATE_EXPECT=1`.

mod common;

use expect_test::{expect, Expect};

fn check(text: &str, expect: Expect) {
    expect.assert_eq(&common::dump(text));
}

#[test]
fn design_example_teams() {
    check(
        r#"# remote days and focus in project teams
source "teams.csv"
groups team in dept
let remote_w = within(remote_days, team)
let remote_b = between(remote_days, team)
model full {
  focus = remote_w + remote_b + meetings + remote_w * meetings + tenure
  vary intercept, remote_w by team
  vary intercept by dept
  estimate reml
  df satterthwaite
}
probe full: remote_w across meetings at -1sd, mean, +1sd
regions full: remote_w across meetings alpha 0.05
plot full: remote_w across meetings to "remote_by_meetings.svg"
"#,
        expect![[r#"
            41..59 source "teams.csv" missing=[]
            60..79 groups team dept
            80..120 let remote_w (call within remote_days team)
            121..162 let remote_b (call between remote_days team)
            163..344 model full
              178..247 formula focus = remote_w + remote_b + meetings + remote_w*meetings + tenure
              250..282 vary intercept remote_w by team
              285..307 vary intercept by dept
              310..323 estimate reml
              326..342 df satterthwaite
            345..401 probe full remote_w across meetings at [sd -1, named mean, sd 1]
            402..451 regions full remote_w across meetings alpha=0.05
            452..515 plot full remote_w across meetings at [] to "remote_by_meetings.svg"
        "#]],
    );
}

#[test]
fn design_example_panel() {
    check(
        r#"source "suppliers.csv" missing "", "NA", "-99"
panel firm over year
model shape {
  uptime = suppliers + suppliers^2 + digital + suppliers * digital + suppliers^2 * digital + log(staff)
  fixed firm, year
  errors cluster firm, year
}
turning shape: suppliers
turning shape: suppliers across digital at p10, p50, p90 bootstrap 2000 seed 7
effect shape: suppliers
compare base, shape
"#,
        expect![[r#"
            0..46 source "suppliers.csv" missing=["" "NA" "-99"]
            47..67 panel firm year
            68..234 model shape
              84..185 formula uptime = suppliers + suppliers^2 + digital + suppliers*digital + suppliers^2*digital + (call log staff)
              188..204 fixed firm year
              207..232 errors cluster [firm year]
            235..259 turning shape suppliers across - at []
            260..338 turning shape suppliers across digital at [named p10, named p50, named p90] bootstrap=2000 seed=7
            339..362 effect shape suppliers
            363..382 compare base shape
        "#]],
    );
}

#[test]
fn expression_precedence() {
    check(
        "let a = -x^2 * y + z / 2 - w\nwhere not a > 1 and b <= 2 or c == \"x\"\nlet b = x^y^2\nlet c = (a + b) * -lag(x, 2)\n",
        expect![[r#"
            0..28 let a (- (+ (* (Neg (^ x 2)) y) (/ z 2)) w)
            29..67 where (or (and (Not (> a 1)) (<= b 2)) (== c "x"))
            68..81 let b (^ x (^ y 2))
            82..110 let c (* [(+ a b)] (Neg (call lag x 2)))
        "#]],
    );
}

#[test]
fn keywords_are_names_inside_statements() {
    // `source`, `model` and `probe` are ordinary names where no statement begins.
    check(
        "let source = model + probe\nmodel m { y = source + df }\nlet a = b let c = d\n",
        expect![[r#"
            0..26 let source (+ model probe)
            27..54 model m
              37..52 formula y = source + df
            55..64 let a b
            65..74 let c d
        "#]],
    );
}

#[test]
fn unicode_and_backtick_names() {
    check(
        "let años = `team size` * Größe\nmodel m { `focus score` = años + x.y_1 }\n",
        expect![[r#"
            0..33 let años (* `team size` Größe)
            34..75 model m
              44..73 formula `focus score` = años + x.y_1
        "#]],
    );
}

#[test]
fn at_values_in_all_forms() {
    check(
        "probe m: x across w at -1sd, 0.5sd, +2sd, - 1 sd_unit_is_not_here, 2.5, -1, mean, min, max, p90\n",
        expect![[r#"
            0..45 probe m x across w at [sd -1, sd 0.5, sd 2, num -1]
            46..95 <error>
            error 1:47 expected `,`, `bootstrap` or a new statement, found `sd_unit_is_not_here`; each statement begins with a keyword such as `model`, `let` or `probe`
        "#]],
    );
    check(
        "probe m: x across w at -1sd, 0.5sd, +2sd, 2.5, -1, +3, 1e2, mean, min, max, p90\nplot m: x to \"a.svg\"\nplot m: x across w to \"b.svg\"\nplot m: x across w at mean to \"c.svg\"\n",
        expect![[r#"
            0..79 probe m x across w at [sd -1, sd 0.5, sd 2, num 2.5, num -1, num 3, num 100, named mean, named min, named max, named p90]
            80..100 plot m x across - at [] to "a.svg"
            101..130 plot m x across w at [] to "b.svg"
            131..168 plot m x across w at [named mean] to "c.svg"
        "#]],
    );
}

#[test]
fn errors_statement_does_not_take_the_next_outcome() {
    check(
        "model m {\n  errors hc3\n  y = x\n  errors cluster g\n  log(z) = x\n}\n",
        expect![[r#"
            0..64 model m
              12..22 errors hc3 []
              25..30 formula y = x
              33..49 errors cluster [g]
              52..62 formula (call log z) = x
        "#]],
    );
}

#[test]
fn newlines_are_not_significant() {
    check(
        "probe m:\n  x\n  across w\n  at -1sd,\n     +1sd\nmodel m {\n  y =\n    a +\n    b }\n",
        expect![[r#"
            0..44 probe m x across w at [sd -1, sd 1]
            45..76 model m
              57..74 formula y = a + b
        "#]],
    );
}
