//! `slopewise bench lsp`: keystroke-to-diagnostics latency of the language
//! server on a 300-line model file against a large generated CSV (already
//! loaded): keystrokes in formulas, terms typed a character at a time, new
//! terms, changed `let` definitions; then hover and completion replies, and
//! the server's resident memory beside the size of the numeric data. The
//! server runs as a child process over stdio, as an editor runs it.

use std::fmt::Write as _;
use std::io::{BufRead, BufReader, Read, Write};
use std::path::Path;
use std::process::{Child, ChildStdin, Command, Stdio};
use std::sync::mpsc::{channel, Receiver};
use std::time::{Duration, Instant};

use serde_json::{json, Value};

/// Numeric columns of the generated file: two ids and six measures.
const COLUMNS: &[&str] = &["team", "dept", "x1", "x2", "x3", "x4", "x5", "y"];

pub fn run_lsp(rows: usize, edits: usize, keep: bool) -> Result<String, String> {
    let dir = std::env::temp_dir().join(format!("slopewise-bench-lsp-{}", std::process::id()));
    std::fs::create_dir_all(&dir).map_err(|e| format!("{}: {e}", dir.display()))?;
    let result = measure(&dir, rows, edits);
    if !keep {
        let _ = std::fs::remove_dir_all(&dir);
    }
    result
}

fn measure(dir: &Path, rows: usize, edits: usize) -> Result<String, String> {
    let csv = dir.join("data.csv");
    write_csv(&csv, rows).map_err(|e| format!("{}: {e}", csv.display()))?;
    let model = model_text();
    let file = dir.join("model.slope");
    std::fs::write(&file, &model).map_err(|e| format!("{}: {e}", file.display()))?;
    let uri = format!("file://{}", file.display());

    let exe = std::env::current_exe().map_err(|e| format!("cannot find slopewise: {e}"))?;
    let mut child = Command::new(exe)
        .arg("lsp")
        .stdin(Stdio::piped())
        .stdout(Stdio::piped())
        .stderr(Stdio::inherit())
        .spawn()
        .map_err(|e| format!("cannot start slopewise lsp: {e}"))?;
    let mut stdin = child.stdin.take().ok_or("no stdin")?;
    let messages = reader(child.stdout.take().ok_or("no stdout")?);
    let result = session(&mut stdin, &messages, &uri, &model, &child, edits);
    let _ = send(
        &mut stdin,
        &json!({"jsonrpc": "2.0", "id": 99, "method": "shutdown"}),
    );
    let _ = send(&mut stdin, &json!({"jsonrpc": "2.0", "method": "exit"}));
    drop(stdin);
    let _ = wait_or_kill(&mut child);
    let Measured {
        model: latencies,
        new_terms,
        typing,
        lets: let_latencies,
        hovers,
        completions,
        load,
        rss,
        rss_idle,
        hwm,
    } = result?;

    let numeric_bytes = rows * COLUMNS.len() * 8;
    let pct = |p: f64| percentile(&latencies, p);
    let mb = |b: usize| b as f64 / 1e6;
    let mean = |v: &[f64]| v.iter().sum::<f64>() / v.len().max(1) as f64;
    let max = |v: &[f64]| v.iter().copied().fold(0.0, f64::max);
    let mut out = String::new();
    let _ = writeln!(
        out,
        "language server: {rows} rows x {} numeric columns ({:.0} MB of numbers), model of {} lines",
        COLUMNS.len(),
        mb(numeric_bytes),
        model.lines().count()
    );
    let _ = writeln!(out, "data loaded and checked after open: {load:.2} s");
    let _ = writeln!(
        out,
        "keystroke in a model -> diagnostics over {} edits: p50 {:.1} ms, p95 {:.1} ms, max {:.1} ms (target p95 <= 30 ms)",
        latencies.len(),
        pct(0.5),
        pct(0.95),
        max(&latencies)
    );
    let typed_pct = |p: f64| percentile(&typing, p);
    let _ = writeln!(
        out,
        "typing terms character by character and erasing them: p50 {:.1} ms, p95 {:.1} ms, max {:.1} ms over {} keystrokes",
        typed_pct(0.5),
        typed_pct(0.95),
        max(&typing),
        typing.len()
    );
    let _ = writeln!(
        out,
        "edit adding a term never seen before (evaluated over every row): mean {:.1} ms, max {:.1} ms over {} edits",
        mean(&new_terms),
        max(&new_terms),
        new_terms.len()
    );
    let _ = writeln!(
        out,
        "edit changing a `let` definition (every model using it checked again): mean {:.1} ms, max {:.1} ms over {} edits",
        mean(&let_latencies),
        max(&let_latencies),
        let_latencies.len()
    );
    let _ = writeln!(
        out,
        "hover over a column (summary with ICC(1) by team and dept): mean {:.1} ms, max {:.1} ms over {} requests",
        mean(&hovers),
        max(&hovers),
        hovers.len()
    );
    let _ = writeln!(
        out,
        "completion in a formula (columns, `let` names, functions): mean {:.1} ms, max {:.1} ms over {} requests",
        mean(&completions),
        max(&completions),
        completions.len()
    );
    let _ = writeln!(
        out,
        "server memory: resident {:.0} MB ({:.2}x the numbers) after the last edit, {:.0} MB ({:.2}x) once idle; peak {:.0} MB ({:.2}x) (target <= 2x)",
        mb(rss),
        rss as f64 / numeric_bytes as f64,
        mb(rss_idle),
        rss_idle as f64 / numeric_bytes as f64,
        mb(hwm),
        hwm as f64 / numeric_bytes as f64
    );
    Ok(out)
}

/// What one session measured: latencies in milliseconds, the time to the
/// first full diagnostics in seconds, and the server's memory in bytes.
struct Measured {
    /// Keystrokes in model formulas.
    model: Vec<f64>,
    /// Edits that add a product of columns no model had, so its facts are
    /// computed over every row (the cost the cache cannot save).
    new_terms: Vec<f64>,
    /// Keystrokes typing whole terms and erasing them.
    typing: Vec<f64>,
    /// Edits that change a `let` definition to a new value and back.
    lets: Vec<f64>,
    /// Hover requests over a column name, to the reply.
    hovers: Vec<f64>,
    /// Completion requests in a formula, to the reply.
    completions: Vec<f64>,
    load: f64,
    /// Resident right after the last edit, and after three idle seconds.
    rss: usize,
    rss_idle: usize,
    hwm: usize,
}

/// Edits timed in `let` lines, and edits adding a new term.
const LET_EDITS: usize = 6;
const NEW_TERM_EDITS: usize = 8;
const HOVERS: usize = 10;

/// Terms typed character by character (ASCII, so bytes are UTF-16 units).
const TYPED: [&str; 3] = [" + x3_c * x1_b", " + x5_w * x2", " + x4^2 + x4_b"];

fn session(
    stdin: &mut ChildStdin,
    messages: &Receiver<Value>,
    uri: &str,
    model: &str,
    child: &Child,
    edits: usize,
) -> Result<Measured, String> {
    send(
        stdin,
        &json!({"jsonrpc": "2.0", "id": 1, "method": "initialize", "params": {"capabilities": {}}}),
    )?;
    wait_for(messages, |m| m["id"] == 1, Duration::from_secs(30))?;
    send(
        stdin,
        &json!({"jsonrpc": "2.0", "method": "initialized", "params": {}}),
    )?;
    let t0 = Instant::now();
    send(
        stdin,
        &json!({"jsonrpc": "2.0", "method": "textDocument/didOpen", "params": {
            "textDocument": {"uri": uri, "languageId": "slope", "version": 1, "text": model}}}),
    )?;
    // A large file: the first diagnostics come from the header, the second
    // once the values are in.
    let big =
        std::fs::metadata(Path::new(uri.trim_start_matches("file://")).with_file_name("data.csv"))
            .is_ok_and(|m| m.len() >= server::data::BACKGROUND_MIN_BYTES);
    for _ in 0..(1 + usize::from(big)) {
        wait_for(
            messages,
            |m| is_diagnostics(m, uri, 1),
            Duration::from_secs(120),
        )?;
    }
    let load = t0.elapsed().as_secs_f64();

    // Keystrokes: type a character into a term and take it out again, in turn,
    // on lines spread over the file, each waiting for its diagnostics.
    let lines: Vec<&str> = model.lines().collect();
    let targets = |prefix: &str| -> Vec<(usize, usize)> {
        lines
            .iter()
            .enumerate()
            .filter(|(_, l)| l.starts_with(prefix))
            .filter_map(|(i, l)| l.find(" = ").map(|c| (i, c + 3)))
            .collect()
    };
    let formulas = targets("  y = ");
    let lets = targets("let ");
    let mut latencies = Vec::with_capacity(edits);
    let mut new_terms = Vec::new();
    let mut typing = Vec::new();
    let mut let_latencies = Vec::new();
    let mut version = 1;
    let mut timed = |change: Value| -> Result<f64, String> {
        version += 1;
        let start = Instant::now();
        send(
            stdin,
            &json!({"jsonrpc": "2.0", "method": "textDocument/didChange", "params": {
                "textDocument": {"uri": uri, "version": version}, "contentChanges": [change]}}),
        )?;
        wait_for(
            messages,
            |m| is_diagnostics(m, uri, version),
            Duration::from_secs(60),
        )?;
        Ok(start.elapsed().as_secs_f64() * 1e3)
    };
    // Keystrokes: type a character into a term and take it out again, in
    // turn, on lines spread over the file, each waiting for its diagnostics.
    for k in 0..edits {
        let (line, col) = formulas[(k / 2 * 7) % formulas.len()];
        latencies.push(timed(type_or_erase(k, line, col, "q"))?);
    }
    // A new product term at the end of a formula, then taken out again; only
    // the first is timed (taking it out returns to what was checked before).
    for k in 0..NEW_TERM_EDITS {
        let (line, _) = formulas[(k * 11) % formulas.len()];
        let end = lines[line].len();
        let (a, b) = (k % 5 + 1, (k + 1 + k / 5) % 5 + 1);
        let term = format!(" + x{a}*x{b}^2");
        new_terms.push(timed(type_or_erase(0, line, end, &term))?);
        timed(type_or_erase(1, line, end, &term))?;
    }
    // Terms typed one character at a time at the end of a formula, then
    // erased the same way: names pass through unknown and other valid
    // columns (`x3`, then `x3_c`), so some keystrokes meet new values.
    for (k, term) in TYPED.iter().enumerate() {
        let (line, _) = formulas[(k * 13 + 5) % formulas.len()];
        let end = lines[line].len();
        for i in 0..term.len() {
            typing.push(timed(type_or_erase(0, line, end + i, &term[i..i + 1]))?);
        }
        for i in (0..term.len()).rev() {
            typing.push(timed(type_or_erase(1, line, end + i, &term[i..i + 1]))?);
        }
    }
    // A `let` changed to a new value and back: every model using the name is
    // checked again, its other terms from the cache.
    for k in 0..LET_EDITS {
        let (line, col) = lets[(k / 2 * 4) % lets.len()];
        let_latencies.push(timed(type_or_erase(k, line, col, "0.5*"))?);
    }
    // A request at a position, timed to its reply; `want` must be in the reply.
    let mut ask = |id: i64, method: &str, (line, col): (usize, usize), want: &str| {
        let start = Instant::now();
        send(
            stdin,
            &json!({"jsonrpc": "2.0", "id": id, "method": method, "params": {
                "textDocument": {"uri": uri}, "position": {"line": line, "character": col}}}),
        )?;
        let reply = wait_for(messages, |m| m["id"] == id, Duration::from_secs(60))?;
        if !reply["result"].to_string().contains(want) {
            return Err(format!(
                "{method} at {line}:{col} gave no `{want}`: {reply}"
            ));
        }
        Ok::<f64, String>(start.elapsed().as_secs_f64() * 1e3)
    };
    // Hover over a column in a `let` line: its summary with ICC(1) by team
    // and by department, computed over every row on each request.
    let mut hovers = Vec::new();
    for k in 0..HOVERS {
        let (line, _) = lets[(k * 3) % lets.len()];
        let col = lines[line]
            .find("within(")
            .map_or(4, |c| c + "within(".len() + 1);
        hovers.push(ask(
            1000 + k as i64,
            "textDocument/hover",
            (line, col),
            "ICC",
        )?);
    }
    // Completion at the start of a formula's terms: columns, `let` names and
    // functions, with details from the last check.
    let mut completions = Vec::new();
    for k in 0..HOVERS {
        let at = formulas[(k * 5) % formulas.len()];
        completions.push(ask(2000 + k as i64, "textDocument/completion", at, "x1_w")?);
    }
    let (rss, hwm) = memory(child.id())?;
    // An editor's server is idle most of the time: measure again once it
    // has had the chance to return freed memory.
    std::thread::sleep(server::memory::IDLE_AFTER * 3);
    let (rss_idle, _) = memory(child.id())?;
    Ok(Measured {
        hovers,
        completions,
        rss_idle,
        model: latencies,
        new_terms,
        typing,
        lets: let_latencies,
        load,
        rss,
        hwm,
    })
}

/// The value at fraction `p` of the sorted values (nearest rank); 0 for none.
fn percentile(values: &[f64], p: f64) -> f64 {
    let mut sorted = values.to_vec();
    sorted.sort_by(f64::total_cmp);
    match sorted.len() {
        0 => 0.0,
        n => sorted[((p * (n - 1) as f64).round() as usize).min(n - 1)],
    }
}

/// The `k`-th edit of a pair: even inserts `text` at the position, odd takes it out.
fn type_or_erase(k: usize, line: usize, col: usize, text: &str) -> Value {
    if k.is_multiple_of(2) {
        json!({"range": range(line, col, line, col), "text": text})
    } else {
        json!({"range": range(line, col, line, col + text.len()), "text": ""})
    }
}

fn range(l0: usize, c0: usize, l1: usize, c1: usize) -> Value {
    json!({"start": {"line": l0, "character": c0}, "end": {"line": l1, "character": c1}})
}

fn is_diagnostics(m: &Value, uri: &str, version: i64) -> bool {
    m["method"] == "textDocument/publishDiagnostics"
        && m["params"]["uri"] == uri
        && m["params"]["version"] == version
}

fn send(stdin: &mut ChildStdin, msg: &Value) -> Result<(), String> {
    let body = msg.to_string();
    write!(stdin, "Content-Length: {}\r\n\r\n{body}", body.len())
        .and_then(|()| stdin.flush())
        .map_err(|e| format!("the server stopped reading: {e}"))
}

/// Messages from the server, parsed on a thread of their own.
fn reader(stdout: std::process::ChildStdout) -> Receiver<Value> {
    let (tx, rx) = channel();
    std::thread::spawn(move || {
        let mut r = BufReader::new(stdout);
        loop {
            let mut len = 0usize;
            loop {
                let mut line = String::new();
                if r.read_line(&mut line).unwrap_or(0) == 0 {
                    return;
                }
                let line = line.trim_end();
                if line.is_empty() {
                    break;
                }
                if let Some(v) = line.strip_prefix("Content-Length:") {
                    len = v.trim().parse().unwrap_or(0);
                }
            }
            let mut body = vec![0; len];
            if r.read_exact(&mut body).is_err() {
                return;
            }
            if let Ok(v) = serde_json::from_slice(&body) {
                if tx.send(v).is_err() {
                    return;
                }
            }
        }
    });
    rx
}

fn wait_for(
    rx: &Receiver<Value>,
    want: impl Fn(&Value) -> bool,
    within: Duration,
) -> Result<Value, String> {
    let deadline = Instant::now() + within;
    loop {
        let left = deadline.saturating_duration_since(Instant::now());
        let m = rx
            .recv_timeout(left)
            .map_err(|_| format!("no answer from the server within {} s", within.as_secs()))?;
        if want(&m) {
            return Ok(m);
        }
    }
}

/// Resident and peak resident memory of a process, in bytes (Linux only).
fn memory(pid: u32) -> Result<(usize, usize), String> {
    let status = std::fs::read_to_string(format!("/proc/{pid}/status"))
        .map_err(|e| format!("cannot read the server's memory figures: {e}"))?;
    let field = |name: &str| {
        status
            .lines()
            .find_map(|l| l.strip_prefix(name))
            .and_then(|v| v.split_whitespace().next())
            .and_then(|kb| kb.parse::<usize>().ok())
            .map(|kb| kb * 1024)
            .ok_or_else(|| format!("no {name} in /proc/{pid}/status"))
    };
    Ok((field("VmRSS:")?, field("VmHWM:")?))
}

fn wait_or_kill(child: &mut Child) -> std::io::Result<()> {
    let deadline = Instant::now() + Duration::from_secs(5);
    while Instant::now() < deadline {
        if child.try_wait()?.is_some() {
            return Ok(());
        }
        std::thread::sleep(Duration::from_millis(20));
    }
    child.kill()
}

/// Employees in 2,000 teams in 50 departments; six measures with a team effect.
fn write_csv(path: &Path, rows: usize) -> std::io::Result<()> {
    let mut w = std::io::BufWriter::new(std::fs::File::create(path)?);
    writeln!(w, "{}", COLUMNS.join(","))?;
    // A small linear congruential generator: the data need only look varied.
    let mut state: u64 = 0x2545_F491_4F6C_DD1D;
    let mut next = || {
        state = state
            .wrapping_mul(6_364_136_223_846_793_005)
            .wrapping_add(1_442_695_040_888_963_407);
        (state >> 11) as f64 / (1u64 << 53) as f64
    };
    for i in 0..rows {
        let team = i % 2000;
        let dept = team % 50;
        let te = (team as f64 * 0.37).sin();
        let x: Vec<f64> = (0..5).map(|k| next() * 4.0 + te * k as f64).collect();
        let y = 1.0 + x[0] * 0.5 - x[1] * 0.2 + x[0] * x[2] * 0.1 + next();
        writeln!(
            w,
            "{team},{dept},{:.3},{:.3},{:.3},{:.3},{:.3},{:.3}",
            x[0], x[1], x[2], x[3], x[4], y
        )?;
    }
    w.flush()
}

/// A 300-line model file: derived variables, many models, probes.
fn model_text() -> String {
    let mut s = String::from(
        "# benchmark model on generated data\nsource \"data.csv\"\ngroups team in dept\n\n",
    );
    for k in 1..=5 {
        s.push_str(&format!(
            "let x{k}_w = within(x{k}, team)  # within-team part\n"
        ));
        s.push_str(&format!("let x{k}_b = between(x{k}, team)\n"));
        s.push_str(&format!("let x{k}_c = center(x{k})\n"));
    }
    s.push('\n');
    let mut m = 0;
    while s.lines().count() < 292 {
        m += 1;
        let a = m % 5 + 1;
        let b = (m + 2) % 5 + 1;
        s.push_str(&format!("model m{m} {{\n"));
        s.push_str(&format!(
            "  y = x{a}_w + x{b}_c + x{a}_w * x{b}_c + x{a}_b\n"
        ));
        if m % 2 == 0 {
            s.push_str("  vary intercept by team\n");
        } else {
            s.push_str("  errors cluster team\n");
        }
        s.push_str("}\n");
        s.push_str(&format!(
            "probe m{m}: x{a}_w across x{b}_c at -1sd, mean, +1sd\n\n"
        ));
    }
    while s.lines().count() < 300 {
        s.push_str("# end\n");
    }
    s
}
