//! Every example in the grammar reference and every `.slope` file of the
//! repository must parse without errors, so documentation and fixtures cannot
//! drift from the parser. Folders named `bad-input` or `invalid` hold files
//! with deliberate mistakes and are skipped.

use std::fs;
use std::path::{Path, PathBuf};

mod common;

fn repo_root() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("../..")
}

/// The bodies of the fenced blocks tagged `slope`, with their line numbers.
fn slope_blocks(markdown: &str) -> Vec<(usize, String)> {
    let mut blocks = Vec::new();
    let mut current: Option<(usize, String)> = None;
    for (i, line) in markdown.lines().enumerate() {
        let fence = line.trim_start();
        match &mut current {
            None if fence.starts_with("```") && fence[3..].trim() == "slope" => {
                current = Some((i + 2, String::new()));
            }
            Some(_) if fence.starts_with("```") => blocks.extend(current.take()),
            Some((_, body)) => {
                body.push_str(line);
                body.push('\n');
            }
            None => {}
        }
    }
    assert!(current.is_none(), "unclosed ```slope block");
    blocks
}

fn assert_parses(what: &str, text: &str) {
    let errs = common::errors(text);
    assert!(errs.is_empty(), "{what}:\n{}", errs.join("\n"));
}

#[test]
fn grammar_examples_parse() {
    let dir = repo_root().join("grammar");
    let mut count = 0;
    for entry in fs::read_dir(&dir).expect("grammar/ exists") {
        let path = entry.expect("readable entry").path();
        if path.extension().is_some_and(|e| e == "md") {
            let text = fs::read_to_string(&path).expect("readable markdown");
            assert!(
                text.contains("```ebnf"),
                "{} has no ebnf block",
                path.display()
            );
            for (line, block) in slope_blocks(&text) {
                assert_parses(&format!("{}:{line}", path.display()), &block);
                count += 1;
            }
        }
    }
    // The reference shows every statement; far fewer blocks means the
    // extraction broke, not that the examples are fine.
    assert!(count >= 15, "only {count} slope blocks found");
}

fn walk(dir: &Path, out: &mut Vec<PathBuf>) {
    let Ok(entries) = fs::read_dir(dir) else {
        return;
    };
    for entry in entries.flatten() {
        let path = entry.path();
        let name = entry.file_name();
        let name = name.to_string_lossy();
        if path.is_dir() {
            if !matches!(name.as_ref(), "target" | ".git" | "bad-input" | "invalid") {
                walk(&path, out);
            }
        } else if path.extension().is_some_and(|e| e == "slope") {
            out.push(path);
        }
    }
}

#[test]
fn repository_slope_files_parse() {
    let mut files = Vec::new();
    walk(&repo_root(), &mut files);
    assert!(!files.is_empty(), "no .slope files found");
    for path in files {
        let text = fs::read_to_string(&path).expect("readable .slope file");
        assert_parses(&path.display().to_string(), &text);
        let out = syntax::format(&text).expect("formats");
        assert_eq!(syntax::format(&out).as_deref(), Some(out.as_str()));
    }
}

#[test]
fn fenced_blocks_are_extracted() {
    let md = "text\n```slope\nlet a = 1\n```\n```ebnf\nx = y ;\n```\n  ```slope\nlet b = 2\nlet c = 3\n  ```\n";
    assert_eq!(
        slope_blocks(md),
        vec![
            (3, "let a = 1\n".to_string()),
            (9, "let b = 2\nlet c = 3\n".to_string())
        ]
    );
}
