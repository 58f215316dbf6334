//! Helpers shared by the binary's end-to-end tests.

use std::path::{Path, PathBuf};
use std::process::{Command, Output};

pub fn root() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("../..")
}

/// Run the binary from the repository root, without colour.
pub fn slopewise(args: &[&str]) -> Output {
    Command::new(env!("CARGO_BIN_EXE_slopewise"))
        .args(args)
        .current_dir(root())
        .env("NO_COLOR", "1")
        .output()
        .expect("run slopewise")
}

pub fn text(b: &[u8]) -> String {
    String::from_utf8_lossy(b).into_owned()
}

/// The head of a model file with the panel demo's curve model `shape` (a
/// square in suppliers, both terms times digital); probing statements follow.
#[allow(dead_code)] // not every test file probes
pub fn curve_model() -> String {
    format!(
        r#"source "{}"
panel firm over year
model shape {{
  uptime = suppliers + suppliers^2 + digital + suppliers * digital + suppliers^2 * digital + log(staff)
  fixed firm, year
  errors cluster firm
}}
"#,
        root().join("demo-data/suppliers.csv").display()
    )
}

/// Run `slopewise COMMAND FILE --format F` on every file of `tests/bad-input`
/// in each format: the exit status is 0 or 1 (never a crash or a usage
/// error) and nothing panics.
#[allow(dead_code)] // not every test file runs the bad inputs
pub fn each_bad_input_exits_cleanly(command: &str, formats: &[&str]) {
    for entry in std::fs::read_dir(root().join("tests/bad-input")).unwrap() {
        let p = entry.unwrap().path();
        if p.extension().is_none_or(|e| e != "slope") {
            continue;
        }
        let rel = p
            .strip_prefix(root())
            .unwrap()
            .to_str()
            .unwrap()
            .to_string();
        for format in formats {
            let out = slopewise(&[command, &rel, "--format", format]);
            let code = out.status.code();
            assert!(
                matches!(code, Some(0) | Some(1)),
                "{rel} {format}: exit {code:?}\n{}",
                text(&out.stderr)
            );
            assert!(
                !text(&out.stderr).contains("panicked"),
                "{rel}: {}",
                text(&out.stderr)
            );
        }
    }
}
