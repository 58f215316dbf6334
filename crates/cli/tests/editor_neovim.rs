//! End to end with a real editor: headless Neovim attaches `slopewise lsp`
//! through its built-in client to a copy of the team demo model with a
//! misspelt column, and we check the diagnostics and completion items that
//! Neovim received. Where `nvim` is not installed the test says so and passes
//! (CI installs it, see `.ci/run`).

use std::path::{Path, PathBuf};
use std::process::{Command, Stdio};
use std::time::{Duration, Instant};

fn root() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("../..")
}

fn find_on_path(name: &str) -> Option<PathBuf> {
    std::env::var_os("PATH").and_then(|paths| {
        std::env::split_paths(&paths)
            .map(|p| p.join(name))
            .find(|p| p.is_file())
    })
}

#[test]
fn neovim_receives_diagnostics_and_completion() {
    let Some(nvim) = find_on_path("nvim") else {
        eprintln!("skipped: `nvim` is not on PATH (install Debian's `neovim` to run this test)");
        return;
    };
    let dir = std::env::temp_dir().join(format!("slopewise-nvim-{}", std::process::id()));
    let _ = std::fs::remove_dir_all(&dir);
    std::fs::create_dir_all(&dir).unwrap();
    let demo = root().join("demo-data");
    std::fs::copy(demo.join("teams.csv"), dir.join("teams.csv")).unwrap();
    let model = std::fs::read_to_string(demo.join("teams.slope")).unwrap();
    let formula = "  focus = remote_w + remote_b + meetings + remote_w * meetings + tenure";
    assert!(
        model.contains(formula),
        "the demo model changed; update this test"
    );
    let broken = model.replace(
        formula,
        "  focus = remote_w + remote_b + meetngs + remote_w * meetings + tenure",
    );
    let file = dir.join("teams.slope");
    std::fs::write(&file, &broken).unwrap();
    let line = broken.lines().position(|l| l.contains("meetngs")).unwrap();
    // Completion just after `focus = ` on that line: columns, lets, functions.
    let col = broken.lines().nth(line).unwrap().find("remote_w").unwrap();
    let out = dir.join("nvim-result.json");

    let mut child = Command::new(nvim)
        .args(["--headless", "-u", "NONE", "-i", "NONE", "-n", "-c"])
        .arg(format!(
            "luafile {}",
            root().join("tests/editor/neovim_lsp.lua").display()
        ))
        .env("SLOPEWISE_BIN", env!("CARGO_BIN_EXE_slopewise"))
        .env("SLOPE_FILE", &file)
        .env("OUT_FILE", &out)
        .env("COMPLETE_LINE", line.to_string())
        .env("COMPLETE_COL", col.to_string())
        .stdin(Stdio::null())
        .stdout(Stdio::null())
        .stderr(Stdio::piped())
        .spawn()
        .expect("start nvim");
    let deadline = Instant::now() + Duration::from_secs(90);
    loop {
        if child.try_wait().unwrap().is_some() {
            break;
        }
        if Instant::now() > deadline {
            let _ = child.kill();
            panic!("nvim did not finish within 90 s");
        }
        std::thread::sleep(Duration::from_millis(100));
    }
    let json = std::fs::read_to_string(&out).unwrap_or_else(|e| {
        let mut err = String::new();
        std::io::Read::read_to_string(child.stderr.as_mut().unwrap(), &mut err).ok();
        panic!("nvim wrote no result ({e}); stderr: {err}")
    });
    let v: serde_json::Value = serde_json::from_str(&json).unwrap();
    assert_eq!(v["errors"].as_array().map_or(0, Vec::len), 0, "{v}");

    let diags = v["diagnostics"].as_array().unwrap();
    let unknown: Vec<&serde_json::Value> = diags
        .iter()
        .filter(|d| d["code"] == "unknown-column")
        .collect();
    assert_eq!(unknown.len(), 1, "{v}");
    let d = unknown[0];
    assert_eq!(d["lnum"], line as u64);
    let start = broken.lines().nth(line).unwrap().find("meetngs").unwrap();
    assert_eq!(d["col"], start as u64);
    assert_eq!(d["end_col"], (start + "meetngs".len()) as u64);
    assert_eq!(d["source"], "slopewise");
    assert!(
        d["message"]
            .as_str()
            .unwrap()
            .contains("did you mean `meetings`?"),
        "{d}"
    );

    let labels: Vec<&str> = v["completion"]
        .as_array()
        .unwrap()
        .iter()
        .filter_map(|i| i["label"].as_str())
        .collect();
    for want in ["meetings", "tenure", "remote_w", "within"] {
        assert!(labels.contains(&want), "{want} not in {labels:?}");
    }
    let meetings = v["completion"]
        .as_array()
        .unwrap()
        .iter()
        .find(|i| i["label"] == "meetings")
        .unwrap();
    assert_eq!(meetings["detail"], "numeric column");
    let _ = std::fs::remove_dir_all(&dir);
}
