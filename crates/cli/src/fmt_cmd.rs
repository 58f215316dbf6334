//! `slopewise fmt FILE [--check]`.

use std::path::Path;

use crate::check_cmd::read_model_file;
use crate::render::{diagnostic_text, use_colour};

pub fn run(file: &Path, check_only: bool) -> Result<bool, String> {
    let text = read_model_file(file)?;
    let name = file.display().to_string();
    let Some(formatted) = syntax::format(&text) else {
        // A file with syntax errors is left alone: formatting it could lose text.
        let parsed = syntax::parse(&text);
        let colour = use_colour();
        for e in &parsed.errors {
            let d = check::Diagnostic::error(check::codes::SYNTAX, e.span, e.message.clone());
            eprint!("{}", diagnostic_text(&name, &text, &d, colour));
        }
        eprintln!(
            "{name}: not formatted because of {} syntax error(s)",
            parsed.errors.len()
        );
        return Ok(false);
    };
    if formatted == text {
        if check_only {
            println!("{name} is formatted");
        }
        return Ok(true);
    }
    if check_only {
        println!("{name} would be reformatted");
        return Ok(false);
    }
    std::fs::write(file, formatted).map_err(|e| format!("cannot write {name}: {e}"))?;
    println!("{name} reformatted");
    Ok(true)
}
