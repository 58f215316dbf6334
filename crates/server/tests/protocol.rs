//! The server driven in-process through the protocol, as an editor would:
//! initialize, open, change, and every request it answers. Expected texts are
//! snapshots (`UPDATE_EXPECT=1` rewrites them; read the diff before committing).

mod common;

use common::*;
use expect_test::{expect, Expect};
use serde_json::{json, Value};
use server::Options;

/// A model on the demo team data with one misspelt column (`meetngs`).
const MODEL: &str = "source \"teams.csv\"
groups team in dept

let remote_w = within(remote_days, team)  # deviation from the team mean

model full {
  focus = remote_w + meetngs + remote_w * meetings
  vary intercept, remote_w by team
  estimate reml
}

probe full: remote_w across meetings at -1sd, mean, +1sd
";

/// A server with `text` open as `model.slope` beside a copy of the team data;
/// returns the first diagnostics too.
async fn open_model(name: &str, text: &str) -> (TestServer, String, Value) {
    let dir = workspace(name, &["teams.csv"], &[("model.slope", text)]);
    let uri = uri_of(&dir.join("model.slope"));
    let mut server = TestServer::start(fast_options()).await;
    let d = server.open(&uri, text).await;
    (server, uri, d)
}

fn check(actual: &str, expect: Expect) {
    expect.assert_eq(actual);
}

fn edit_range(edit: &Value) -> [u32; 4] {
    let r = &edit["range"];
    let n = |v: &Value| v.as_u64().unwrap() as u32;
    [
        n(&r["start"]["line"]),
        n(&r["start"]["character"]),
        n(&r["end"]["line"]),
        n(&r["end"]["character"]),
    ]
}

#[tokio::test]
async fn initialize_announces_what_the_server_does() {
    let s = TestServer::start(Options::default()).await;
    check(
        &serde_json::to_string_pretty(&s.init).unwrap(),
        expect![[r#"
            {
              "capabilities": {
                "codeActionProvider": {
                  "codeActionKinds": [
                    "quickfix"
                  ]
                },
                "completionProvider": {
                  "triggerCharacters": [
                    ":",
                    ",",
                    "\"",
                    "("
                  ]
                },
                "definitionProvider": true,
                "documentFormattingProvider": true,
                "documentSymbolProvider": true,
                "hoverProvider": true,
                "positionEncoding": "utf-16",
                "referencesProvider": true,
                "renameProvider": {
                  "prepareProvider": true
                },
                "semanticTokensProvider": {
                  "full": true,
                  "legend": {
                    "tokenModifiers": [
                      "declaration"
                    ],
                    "tokenTypes": [
                      "keyword",
                      "variable",
                      "class",
                      "property",
                      "function",
                      "enumMember",
                      "string",
                      "number",
                      "comment",
                      "operator"
                    ]
                  }
                },
                "textDocumentSync": {
                  "change": 2,
                  "openClose": true
                }
              },
              "serverInfo": {
                "name": "slopewise",
                "version": "0.1.0"
              }
            }"#]],
    );
}

#[tokio::test]
async fn a_misspelt_column_is_reported_with_a_fix_that_works() {
    let (mut s, uri, d) = open_model("misspelt", MODEL).await;
    check(
        &render_diagnostics(&d),
        expect![[r#"
        6:21-6:28 error unknown-column: no column or `let` named `meetngs` in the data; did you mean `meetings`?
    "#]],
    );

    let actions = s.code_actions(&uri, [6, 22, 6, 22]).await;
    let a = &actions[0];
    let edit = &a["edit"]["changes"][&uri][0];
    check(
        &format!("{} | {} -> {}", a["title"], edit["range"], edit["newText"]),
        expect![[
            r#""Replace with `meetings`" | {"end":{"character":28,"line":6},"start":{"character":21,"line":6}} -> "meetings""#
        ]],
    );

    // Applying the fix as the editor would leaves no unknown column.
    let d = s
        .change(&uri, 2, edit_range(edit), edit["newText"].as_str().unwrap())
        .await;
    check(&render_diagnostics(&d), expect![[r#""#]]);
    assert_eq!(
        s.backend().document_text(&uri.parse().unwrap()).unwrap(),
        MODEL.replace("meetngs", "meetings")
    );
}

#[tokio::test]
async fn quick_fixes_for_lower_order_terms_and_within_products() {
    let text = "source \"suppliers.csv\"
panel firm over year

model m {
  uptime = suppliers * digital
  fixed firm, year
}
";
    let dir = workspace("fixes", &["suppliers.csv"], &[("m.slope", text)]);
    let uri = uri_of(&dir.join("m.slope"));
    let mut s = TestServer::start(fast_options()).await;
    let d = s.open(&uri, text).await;
    check(
        &render_diagnostics(&d),
        expect![[r#"
        4:11-4:30 warning missing-lower-order: `suppliers*digital` is in the model without its lower-order terms `digital`, `suppliers`; without them its coefficient depends on where the variables' zero lies
        4:11-4:30 hint within-product: `suppliers*digital` multiplies variables that change within `firm`, so under `fixed firm` it still mixes differences between firm units with changes inside them; `within(suppliers, firm) * within(digital, firm)` is the purely within-unit interaction
    "#]],
    );
    let actions = s.code_actions(&uri, [4, 0, 4, 30]).await;
    let mut out = String::new();
    for a in actions.as_array().unwrap() {
        let e = &a["edit"]["changes"][&uri];
        out.push_str(&format!("{} | {}\n", a["title"], e));
    }
    check(
        &out,
        expect![[r#"
        "Add digital, suppliers" | [{"newText":" + digital + suppliers","range":{"end":{"character":30,"line":4},"start":{"character":30,"line":4}}}]
        "Use the within-unit product" | [{"newText":"within(suppliers, firm) * within(digital, firm)","range":{"end":{"character":30,"line":4},"start":{"character":11,"line":4}}}]
    "#]],
    );
}

#[tokio::test]
async fn utf16_positions_with_non_ascii_names_and_comments() {
    let csv = "größe,team,y\n1.5,a,2\n2.5,a,3\n3.5,b,1\n4.0,b,5\n";
    let text = "source \"d.csv\"  # Größe in Metern 😀\nlet a = `😀x` + größe\n";
    let dir = workspace("utf16", &[], &[("d.csv", csv), ("m.slope", text)]);
    let uri = uri_of(&dir.join("m.slope"));
    let mut s = TestServer::start(fast_options()).await;
    let d = s.open(&uri, text).await;
    // `😀x` (with backticks) spans UTF-16 columns 8..13 on line 1.
    check(
        &render_diagnostics(&d),
        expect![[r#"
        1:8-1:13 error unknown-column: no column or `let` named `😀x` in the data
    "#]],
    );
    // Insert after the emoji in the comment (column 33 in UTF-16), then
    // replace the emoji name by `größe`.
    s.change(&uri, 2, [0, 35, 0, 35], " ✓").await;
    let d = s.change(&uri, 3, [1, 8, 1, 13], "größe").await;
    check(&render_diagnostics(&d), expect![[r#""#]]);
    assert_eq!(
        s.backend().document_text(&uri.parse().unwrap()).unwrap(),
        "source \"d.csv\"  # Größe in Metern 😀 ✓\nlet a = größe + größe\n"
    );
}

#[tokio::test]
async fn a_missing_data_file_is_a_diagnostic_on_the_source_line() {
    let text = "source \"nowhere.csv\"\nlet a = x\n";
    let dir = workspace("missing", &[], &[("m.slope", text)]);
    let uri = uri_of(&dir.join("m.slope"));
    let mut s = TestServer::start(fast_options()).await;
    let d = s.open(&uri, text).await;
    let first = &d["diagnostics"][0];
    assert_eq!(first["code"], "data-file");
    assert_eq!(first["range"], range_json([0, 7, 0, 20]));
}

async fn complete_at(s: &mut TestServer, uri: &str, line: u32, col: u32) -> String {
    let v = s
        .request("textDocument/completion", pos(uri, line, col))
        .await;
    render_completion(&v)
}

#[tokio::test]
async fn completion_knows_where_the_cursor_is() {
    let text = "source \"teams.csv\"
groups team in dept
let remote_w = within(remote_days, team)
model full {
  focus = remote_w + meetings + remote_w * meetings
  estimate 
  errors 
  df 
}
probe full: 
probe full: remote_w across meetings at 
";
    let (mut s, uri, _) = open_model("complete", text).await;
    let mut out = String::new();
    for (what, line, col) in [
        ("statement start", 3, 0),
        ("after estimate", 5, 11),
        ("after errors", 6, 9),
        ("after df", 7, 5),
        ("focal of a probe", 9, 12),
        ("after at", 10, 40),
        ("grouping after in", 1, 15),
        ("formula term", 4, 21),
    ] {
        out.push_str(&format!(
            "== {what}\n{}",
            complete_at(&mut s, &uri, line, col).await
        ));
    }
    check(
        &out,
        expect![[r#"
        == statement start
        source [14] the data file: source "FILE.csv"
        groups [14] nesting of id columns, innermost first: groups team in dept
        panel [14] panel structure: panel UNIT over TIME
        let [14] a derived variable: let NAME = EXPR
        where [14] keep rows where a condition holds
        model [14] a model: model NAME { OUTCOME = TERMS ... }
        probe [14] effect of X at moderator values: probe M: X across W at V, ...
        regions [14] Johnson–Neyman regions: regions M: X across W
        turning [14] turning point of a curve: turning M: X
        effect [14] average marginal effect: effect M: X
        plot [14] a figure: plot M: X across W to "FILE.svg"
        compare [14] test nested models: compare M1, M2
        == after estimate
        reml [20] restricted maximum likelihood (default)
        ml [20] maximum likelihood (needed to compare fixed parts)
        == after errors
        classical [20] homoskedastic standard errors
        hc1 [20] heteroskedasticity-robust, n/(n−k) scaled
        hc3 [20] heteroskedasticity-robust, leverage adjusted
        cluster [20] clustered by one or two groupings: `cluster G` or `cluster G, H`
        == after df
        satterthwaite [20] Satterthwaite approximation (default for mixed models)
        residual [20] residual degrees of freedom
        == focal of a probe
        remote_w [6] in model full
        meetings [6] in model full
        employee [5] text column, 2490 levels
        team [5] text column, 200 levels
        dept [5] text column, 12 levels
        remote_days [5] numeric column
        tenure [5] numeric column
        focus [5] numeric column
        == after at
        mean [20] the moderator's mean
        -1sd [20] one SD below the mean
        +1sd [20] one SD above the mean
        min [20] the smallest value in the data
        max [20] the largest value in the data
        p10 [20] 10th percentile
        p50 [20] the median
        p90 [20] 90th percentile
        == grouping after in
        employee [5] text column, 2490 levels
        team [5] text column, 200 levels
        dept [5] text column, 12 levels
        remote_days [5] numeric column
        meetings [5] numeric column
        tenure [5] numeric column
        focus [5] numeric column
        == formula term
        employee [5] text column, 2490 levels
        team [5] text column, 200 levels
        dept [5] text column, 12 levels
        remote_days [5] numeric column
        meetings [5] numeric column
        tenure [5] numeric column
        focus [5] numeric column
        remote_w [6] let remote_w = within(remote_days, team)
        within [3] within(x, G)
        between [3] between(x, G)
        center [3] center(x)
        z [3] z(x)
        log [3] log(x)
        sqrt [3] sqrt(x)
        lag [3] lag(x, k = 1)
        lead [3] lead(x, k = 1)
        diff [3] diff(x, k = 1)
        ref [3] ref(x, "level")
        categorical [3] categorical(x)
    "#]],
    );
}

#[tokio::test]
async fn hover_shows_summaries_documentation_terms_and_definitions() {
    let (mut s, uri, _) = open_model("hover", MODEL).await;
    let mut out = String::new();
    for (what, line, col) in [
        ("column", 3, 25),
        ("function", 3, 17),
        ("let", 6, 11),
        ("model", 11, 7),
    ] {
        let v = s.request("textDocument/hover", pos(&uri, line, col)).await;
        out.push_str(&format!(
            "== {what} {}\n{}\n",
            v["range"],
            v["contents"]["value"].as_str().unwrap_or("(none)")
        ));
    }
    // remote_days from pandas (demo-data/teams.csv): n 2490, missing 0,
    // mean 2.4453815261044176, SD 1.3166840339043724, min 0, max 5.
    assert!(out.contains("n 2,490, missing 0"), "{out}");
    assert!(out.contains("mean 2.445, SD 1.317, range 0 to 5"), "{out}");
    check(
        &out,
        expect![[r#"
        == column {"end":{"character":33,"line":3},"start":{"character":22,"line":3}}
        **remote_days**: numeric

        n 2,490, missing 0

        mean 2.445, SD 1.317, range 0 to 5

        ICC(1) by team: 0.324

        ICC(1) by dept: 0.020

        varies within team, dept
        == function {"end":{"character":21,"line":3},"start":{"character":15,"line":3}}
        ```slope
        within(x, G)
        ```
        deviation of x from its mean in each group of G
        == let {"end":{"character":18,"line":6},"start":{"character":10,"line":6}}
        ```slope
        let remote_w = within(remote_days, team)
        ```
        numeric
        == model {"end":{"character":10,"line":11},"start":{"character":6,"line":11}}
        **model full**: mixed model, outcome `focus`

        - `remote_w`
        - `remote_w*meetings`
    "#]],
    );
}

#[tokio::test]
async fn definition_references_and_rename_of_a_let() {
    let (mut s, uri, _) = open_model("navigate", MODEL).await;
    let def = s.request("textDocument/definition", pos(&uri, 6, 11)).await;
    assert_eq!(def["range"], range_json([3, 4, 3, 12]));
    let mut p = pos(&uri, 11, 13);
    p["context"] = json!({"includeDeclaration": true});
    let refs = s.request("textDocument/references", p).await;
    let lines: Vec<String> = refs
        .as_array()
        .unwrap()
        .iter()
        .map(|l| l["range"].to_string())
        .collect();
    check(
        &lines.join("\n"),
        expect![[r#"
        {"end":{"character":12,"line":3},"start":{"character":4,"line":3}}
        {"end":{"character":18,"line":6},"start":{"character":10,"line":6}}
        {"end":{"character":39,"line":6},"start":{"character":31,"line":6}}
        {"end":{"character":26,"line":7},"start":{"character":18,"line":7}}
        {"end":{"character":20,"line":11},"start":{"character":12,"line":11}}"#]],
    );

    let model_def = s.request("textDocument/definition", pos(&uri, 11, 7)).await;
    assert_eq!(model_def["range"], range_json([5, 6, 5, 10]));

    let mut p = pos(&uri, 3, 6);
    p["newName"] = json!("remote_within");
    let edit = s.request("textDocument/rename", p).await;
    let edits = edit["changes"][&uri].as_array().unwrap();
    assert_eq!(edits.len(), 5); // the definition, two in the formula, `vary`, `probe`
    assert!(edits.iter().all(|e| e["newText"] == "remote_within"));

    // Renaming to a column name would hide the column: refused with a reason.
    let mut p = pos(&uri, 3, 6);
    p["newName"] = json!("tenure");
    let refused = s.request("textDocument/rename", p).await;
    check(
        &refused.to_string(),
        expect![[
            r#"{"error":"`tenure` is a column of the data; a `let` of that name would hide it"}"#
        ]],
    );
    let prepared = s
        .request("textDocument/prepareRename", pos(&uri, 6, 30))
        .await;
    check(
        &prepared.to_string(),
        expect![[r#"{"error":"there is no name here to rename"}"#]],
    );
}

#[tokio::test]
async fn formatting_and_document_symbols() {
    let text =
        "source   \"teams.csv\"\nlet  a=within( remote_days,team )\nmodel m {focus=a+meetings\n}\n";
    let (mut s, uri, _) = open_model("format", text).await;
    let edits = s
        .request(
            "textDocument/formatting",
            json!({"textDocument": {"uri": uri}, "options": {"tabSize": 2, "insertSpaces": true}}),
        )
        .await;
    let formatted = edits[0]["newText"].as_str().unwrap();
    assert_eq!(Some(formatted.to_string()), syntax::format(text));
    check(
        formatted,
        expect![[r#"
        source "teams.csv"
        let a = within(remote_days, team)
        model m {
          focus = a + meetings
        }
    "#]],
    );
    let syms = s
        .request(
            "textDocument/documentSymbol",
            json!({"textDocument": {"uri": uri}}),
        )
        .await;
    let names: Vec<String> = syms
        .as_array()
        .unwrap()
        .iter()
        .map(|s| format!("{} {}", s["kind"], s["name"]))
        .collect();
    check(
        &names.join("\n"),
        expect![[r#"
        1 "teams.csv"
        13 "a"
        5 "m""#]],
    );
}

#[tokio::test]
async fn semantic_tokens_colour_names_by_what_they_are() {
    let (mut s, uri, _) = open_model("tokens", MODEL).await;
    let v = s
        .request(
            "textDocument/semanticTokens/full",
            json!({"textDocument": {"uri": uri}}),
        )
        .await;
    let data: Vec<u64> = v["data"]
        .as_array()
        .unwrap()
        .iter()
        .map(|x| x.as_u64().unwrap())
        .collect();
    // Decode back to (line, column, length, type) and show the text of each.
    let types = server::tokens::TYPES;
    let lines: Vec<&str> = MODEL.lines().collect();
    let (mut line, mut col) = (0u64, 0u64);
    let mut out = String::new();
    for t in data.chunks(5) {
        if t[0] > 0 {
            line += t[0];
            col = t[1];
        } else {
            col += t[1];
        }
        let l = lines[line as usize];
        // The test text is ASCII, so UTF-16 columns are byte columns.
        let word = &l[col as usize..(col + t[2]) as usize];
        out.push_str(&format!(
            "{word} {}{}\n",
            types[t[3] as usize],
            if t[4] == 1 { " decl" } else { "" }
        ));
    }
    check(
        &out,
        expect![[r#"
        source keyword
        "teams.csv" string
        groups keyword
        team property
        in keyword
        dept property
        let keyword
        remote_w variable decl
        = operator
        within function
        remote_days property
        team property
        # deviation from the team mean comment
        model keyword
        full class decl
        focus property
        = operator
        remote_w variable
        + operator
        + operator
        remote_w variable
        * operator
        meetings property
        vary keyword
        intercept enumMember
        remote_w variable
        by keyword
        team property
        estimate keyword
        reml enumMember
        probe keyword
        full class
        remote_w variable
        across keyword
        meetings property
        at keyword
        - operator
        1sd number
        mean enumMember
        + operator
        1sd number
    "#]],
    );
}

#[tokio::test]
async fn a_large_file_gives_header_diagnostics_first_then_the_rest() {
    let csv = "g,x,s\n1,1,a\n1,2,b\n2,3,c\n2,4,d\n";
    // `s` is text: that it is used as a number is known only once values are read.
    let text = "source \"d.csv\"\nlet a = s + nope\n";
    let dir = workspace("background", &[], &[("d.csv", csv), ("m.slope", text)]);
    let uri = uri_of(&dir.join("m.slope"));
    let mut s = TestServer::start(Options {
        background_min_bytes: 0,
        ..fast_options()
    })
    .await;
    let first = s.open(&uri, text).await;
    check(
        &render_diagnostics(&first),
        expect![[r#"
        1:12-1:16 error unknown-column: no column or `let` named `nope` in the data
    "#]],
    );
    let second = s.diagnostics(&uri, 1).await;
    check(
        &render_diagnostics(&second),
        expect![[r#"
        1:8-1:9 error text-as-number: column `s` holds text (4 levels: "a", "b", "c", "d"), not numbers; use it as a term on its own for indicator coding
        1:12-1:16 error unknown-column: no column or `let` named `nope` in the data
    "#]],
    );
}

#[tokio::test]
async fn a_data_file_changed_on_disk_is_read_again() {
    let text = "source \"d.csv\"\nlet a = x + y\n";
    let dir = workspace(
        "reload",
        &[],
        &[("d.csv", "x,z\n1,2\n3,4\n"), ("m.slope", text)],
    );
    let uri = uri_of(&dir.join("m.slope"));
    let mut s = TestServer::start(fast_options()).await;
    let d = s.open(&uri, text).await;
    assert!(render_diagnostics(&d).contains("unknown-column"), "{d}");
    // Another program adds the column (a different length changes the stamp).
    std::fs::write(dir.join("d.csv"), "x,y\n1,2\n3,4\n5,6\n").unwrap();
    let d = s.diagnostics(&uri, 1).await;
    assert_eq!(render_diagnostics(&d), "", "{d}");
}
