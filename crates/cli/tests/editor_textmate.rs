//! The VS Code extension's TextMate grammar tokenizes the demo files as
//! expected, checked with the same tokenizer VS Code uses (the npm packages
//! `vscode-textmate` and `vscode-oniguruma`, installed into a temporary
//! folder). Where node, npm or the packages are unavailable the test says why
//! and passes.

use std::path::{Path, PathBuf};
use std::process::Command;

fn root() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("../..")
}

fn on_path(name: &str) -> bool {
    std::env::var_os("PATH")
        .is_some_and(|paths| std::env::split_paths(&paths).any(|p| p.join(name).is_file()))
}

/// A folder with the two packages, installed once per machine.
fn modules() -> Result<PathBuf, String> {
    let prefix = std::env::temp_dir().join("slopewise-textmate-npm");
    let modules = prefix.join("node_modules");
    let ready = |m: &Path| {
        m.join("vscode-textmate/package.json").is_file()
            && m.join("vscode-oniguruma/release/onig.wasm").is_file()
    };
    if ready(&modules) {
        return Ok(modules);
    }
    std::fs::create_dir_all(&prefix).map_err(|e| e.to_string())?;
    let out = Command::new("npm")
        .args([
            "install",
            "--no-save",
            "--no-audit",
            "--no-fund",
            "--prefix",
        ])
        .arg(&prefix)
        .args(["vscode-textmate@9", "vscode-oniguruma@2"])
        .output()
        .map_err(|e| format!("cannot run npm: {e}"))?;
    if !out.status.success() || !ready(&modules) {
        return Err(format!(
            "npm could not install vscode-textmate and vscode-oniguruma: {}",
            String::from_utf8_lossy(&out.stderr).trim()
        ));
    }
    Ok(modules)
}

#[test]
fn the_grammar_tokenizes_the_demo_files() {
    if !on_path("node") || !on_path("npm") {
        eprintln!("skipped: node and npm are needed for the TextMate grammar test");
        return;
    }
    let modules = match modules() {
        Ok(m) => m,
        Err(why) => {
            eprintln!("skipped: {why}");
            return;
        }
    };
    let out = Command::new("node")
        .arg(root().join("tests/editor/textmate_test.js"))
        .arg(&modules)
        .output()
        .expect("run node");
    let stdout = String::from_utf8_lossy(&out.stdout);
    assert!(
        out.status.success(),
        "{stdout}{}",
        String::from_utf8_lossy(&out.stderr)
    );
    assert!(stdout.contains("29 passed, 0 failed"), "{stdout}");
}
