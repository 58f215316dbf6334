//! The `slopewise` command line. A thin layer: parse arguments, read files,
//! call the library crates, print. Exit codes: 0 success, 1 a problem in the
//! model or the data, 2 a usage error.

mod bench;
mod check_cmd;
mod describe_cmd;
mod fmt_cmd;
mod render;

use std::path::PathBuf;
use std::process::ExitCode;

use clap::{Parser, Subcommand, ValueEnum};

#[derive(Parser)]
#[command(
    name = "slopewise",
    version,
    about = "Test when an effect holds: interactions and curves in nested and panel data",
    long_about = "slopewise reads a small model file (*.slope) that names a CSV data file, its \
nesting or panel structure, and one or more models; it checks the file against the data, \
estimates the models and probes their interactions and turning points.\n\n\
Start with `slopewise check FILE.slope` to see every mistake in a model file, and \
`slopewise describe DATA.csv --groups team,dept` to look at the data first."
)]
struct Cli {
    #[command(subcommand)]
    command: Command,
}

#[derive(Subcommand)]
enum Command {
    /// Check a model file against its data and list every problem found
    #[command(
        long_about = "Check a model file against its data and list every problem found.\n\n\
Reads the file, parses it, loads the data file named by its `source` line once, and \
reports syntax errors, unknown columns (with the nearest name), unknown functions, \
text used as numbers, random slopes of variables that do not vary within their groups, \
groupings that are not nested as declared, duplicate rows in a panel, terms absorbed by \
fixed effects, missing lower-order terms, probes of variables not in the model, and the \
rows each model loses to missing values.\n\n\
Exit status: 0 when there are no errors (warnings and hints allowed), 1 when there is at \
least one error, 2 for a usage mistake."
    )]
    Check {
        /// One or more model files, e.g. demo-data/teams.slope
        #[arg(required = true)]
        files: Vec<PathBuf>,
        /// `text` for people, `json` for scripts and editors
        #[arg(long, value_enum, default_value_t = Format::Text)]
        format: Format,
    },
    /// Summarize each column of a CSV file, overall and by grouping
    #[command(
        long_about = "Summarize each column of a CSV file: type, non-missing count, \
missing count, mean, SD, minimum and maximum; and for each grouping column given with \
--groups, the share of variance that lies between groups (ICC(1), one-way ANOVA \
estimator) and whether the column varies within groups."
    )]
    Describe {
        /// The CSV data file
        data: PathBuf,
        /// Grouping (id) columns, comma-separated, e.g. team,dept
        #[arg(long, value_delimiter = ',')]
        groups: Vec<String>,
        /// Extra texts that mean "missing" besides the empty field, NA and NaN, comma-separated
        #[arg(long, value_delimiter = ',')]
        missing: Vec<String>,
        /// `text` for people, `json` for scripts
        #[arg(long, value_enum, default_value_t = Format::Text)]
        format: Format,
    },
    /// Rewrite a model file in the canonical layout, keeping comments
    #[command(
        long_about = "Rewrite a model file in the canonical layout: one statement per \
line, model bodies indented, single spaces around operators, comments kept where they \
were. With --check nothing is written: the exit status is 1 if the file would change."
    )]
    Fmt {
        /// The model file
        file: PathBuf,
        /// Only report whether the file is already formatted
        #[arg(long)]
        check: bool,
    },
    /// Measure the speed of slopewise on generated data
    Bench {
        #[command(subcommand)]
        what: BenchCommand,
    },
}

#[derive(Subcommand)]
enum BenchCommand {
    /// Time loading a generated CSV (5 million rows, 8 columns) into a frame,
    /// and the same file with pandas when python3 has it
    Load {
        /// Number of rows to generate
        #[arg(long, default_value_t = 5_000_000)]
        rows: usize,
        /// Keep the generated file instead of deleting it
        #[arg(long)]
        keep: bool,
    },
}

#[derive(Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum Format {
    Text,
    Json,
}

fn main() -> ExitCode {
    let cli = Cli::parse();
    let result = match cli.command {
        Command::Check { files, format } => check_cmd::run_all(&files, format),
        Command::Describe {
            data,
            groups,
            missing,
            format,
        } => describe_cmd::run(&data, &groups, &missing, format),
        Command::Fmt { file, check } => fmt_cmd::run(&file, check),
        Command::Bench {
            what: BenchCommand::Load { rows, keep },
        } => bench::run_load(rows, keep).map(|report| {
            println!("{report}");
            true
        }),
    };
    match result {
        Ok(true) => ExitCode::SUCCESS,
        Ok(false) => ExitCode::from(1),
        Err(message) => {
            eprintln!("slopewise: {message}");
            ExitCode::from(1)
        }
    }
}
