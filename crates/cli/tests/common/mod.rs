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
