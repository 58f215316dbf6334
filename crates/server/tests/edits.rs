//! Robustness: random edit sequences (inserts, deletes, non-ASCII text) sent
//! through `didChange` never make the server panic, and its copy of the text
//! is always the editor's.

mod common;

use common::*;
use proptest::prelude::*;
use serde_json::json;

const START: &str = "source \"teams.csv\"  # Größe 😀
groups team in dept
let remote_w = within(remote_days, team)
model full {
  focus = remote_w + meetings + remote_w * meetings
  vary intercept, remote_w by team
}
probe full: remote_w across meetings at -1sd, mean, +1sd
";

const PIECES: &[&str] = &[
    "x",
    "😀",
    "ö",
    "\n",
    "`",
    "\"",
    "model m {",
    "}",
    "+ ",
    "*",
    "(",
    "within(",
    "#",
    " ",
    "ß\n",
    "let a = ",
    "at ",
    ",",
];

/// A position as an editor computes it: line, and UTF-16 units into the line.
fn editor_position(text: &str, line_pick: usize, char_pick: usize) -> (u32, u32, usize) {
    let lines: Vec<&str> = text.split('\n').collect();
    let line = line_pick % lines.len();
    let chars: Vec<char> = lines[line].chars().collect();
    let ch = char_pick % (chars.len() + 1);
    let col: usize = chars[..ch].iter().map(|c| c.len_utf16()).sum();
    let offset: usize = lines[..line].iter().map(|l| l.len() + 1).sum::<usize>()
        + chars[..ch].iter().map(|c| c.len_utf8()).sum::<usize>();
    (line as u32, col as u32, offset)
}

#[derive(Clone, Debug)]
struct Edit {
    line: usize,
    ch: usize,
    /// Characters to delete after the position.
    delete: usize,
    insert: String,
}

fn edit() -> impl Strategy<Value = Edit> {
    (
        0usize..30,
        0usize..60,
        prop_oneof![Just(0usize), 0usize..12],
        prop::collection::vec(prop::sample::select(PIECES), 0..3),
    )
        .prop_map(|(line, ch, delete, ins)| Edit {
            line,
            ch,
            delete,
            insert: ins.concat(),
        })
}

proptest! {
    // 24 cases by default; `PROPTEST_CASES=1000` for a longer search.
    #![proptest_config(ProptestConfig {
        cases: std::env::var("PROPTEST_CASES").ok().and_then(|v| v.parse().ok()).unwrap_or(24),
        ..ProptestConfig::default()
    })]
    #[test]
    fn random_edits_keep_the_text_in_step(edits in prop::collection::vec(edit(), 1..25)) {
        let rt = tokio::runtime::Builder::new_multi_thread()
            .worker_threads(2)
            .enable_all()
            .build()
            .unwrap();
        rt.block_on(async move {
            let dir = workspace("edits", &["teams.csv"], &[("m.slope", START)]);
            let uri = uri_of(&dir.join("m.slope"));
            let mut s = TestServer::start(fast_options()).await;
            s.open(&uri, START).await;
            let mut text = START.to_string();
            let mut version = 1;
            for e in &edits {
                let (l0, c0, start) = editor_position(&text, e.line, e.ch);
                let end_char = text[start..]
                    .char_indices()
                    .nth(e.delete)
                    .map_or(text.len(), |(i, _)| start + i);
                // The end position, as the editor computes it from the text.
                let before = &text[..end_char];
                let l1 = before.matches('\n').count() as u32;
                let line_start = before.rfind('\n').map_or(0, |i| i + 1);
                let c1: usize = text[line_start..end_char].chars().map(char::len_utf16).sum();
                text.replace_range(start..end_char, &e.insert);
                version += 1;
                s.notify(
                    "textDocument/didChange",
                    json!({
                        "textDocument": {"uri": uri, "version": version},
                        "contentChanges": [{"range": range_json([l0, c0, l1, c1 as u32]), "text": e.insert}]
                    }),
                )
                .await;
                // Requests in between, at the edit, must not fail either.
                s.request("textDocument/completion", pos(&uri, l0, c0)).await;
                s.request("textDocument/hover", pos(&uri, l0, c0)).await;
            }
            let d = s.diagnostics(&uri, version).await;
            let last_line = text.split('\n').count() as u64;
            for diag in d["diagnostics"].as_array().unwrap() {
                assert!(diag["range"]["end"]["line"].as_u64().unwrap() < last_line, "{diag}");
            }
            // The server re-checks only what changed: the result must be that of
            // checking the whole final text.
            let parsed = syntax::parse(&text);
            let whole = check::check(&text, &parsed, &dir, &check::FileLoader);
            let got: Vec<(String, String)> = d["diagnostics"]
                .as_array()
                .unwrap()
                .iter()
                .map(|d| (d["code"].as_str().unwrap().to_string(), d["message"].as_str().unwrap().to_string()))
                .collect();
            let want: Vec<(String, String)> = whole
                .diagnostics
                .iter()
                .map(|d| (d.code.to_string(), d.message.clone()))
                .collect();
            assert_eq!(got, want, "final text:\n{text}");
            s.request("textDocument/semanticTokens/full", json!({"textDocument": {"uri": uri}})).await;
            s.request("textDocument/formatting", json!({"textDocument": {"uri": uri}, "options": {"tabSize": 2, "insertSpaces": true}})).await;
            assert_eq!(s.backend().document_text(&uri.parse().unwrap()).unwrap(), text);
        });
    }
}
