//! The `slopewise` command line. A thin layer: parse arguments, read files,
//! call the library crates, print. Exit codes: 0 success, 1 a problem in the
//! model or the data, 2 a usage error.

mod bench;
mod check_cmd;
mod describe_cmd;
mod fit_cmd;
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
    /// Estimate every model of a model file and print the results
    #[command(
        long_about = "Estimate every model of a model file and print the results.\n\n\
The file is checked first (as by `slopewise check`); a file with errors is not estimated. \
Each model is fitted by least squares, or by the within transform when it has `fixed` \
groupings, with the standard errors its `errors` line asks for. Tables show each term's \
estimate, standard error, df, t, p and 95% confidence interval, with notes naming the \
standard errors, the df and every row not used. `compare` lines are tested with a Wald F \
test on the larger model's covariance.\n\n\
Then every probing statement is computed: `probe` (effects at moderator values), `regions` \
(Johnson–Neyman bounds), `turning` (turning point, delta and Fieller intervals, U test), \
`effect` (average marginal effect), with a cluster bootstrap where a statement asks for one, \
and each `plot` is written as an SVG figure. With `--out DIR`, the report goes to \
DIR/report.md and DIR/report.json and figures with relative paths go into DIR.\n\n\
Exit status: 0 when every model and statement was computed, 1 otherwise."
    )]
    Fit {
        /// The model file, e.g. demo-data/suppliers.slope
        file: PathBuf,
        /// `text` for the terminal, `json` for scripts, `markdown` for a manuscript
        #[arg(long, value_enum, default_value_t = ReportFormat::Text)]
        format: ReportFormat,
        /// Also write report.md and report.json into this folder (created if needed)
        #[arg(long)]
        out: Option<PathBuf>,
    },
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
    /// Run the language server on standard input and output (for editors)
    #[command(
        long_about = "Run the language server on standard input and output. Editors start \
this themselves (see editor-support/README.md); it shows the checker's diagnostics as you \
type, completes statements, columns and options, and shows column summaries on hover."
    )]
    Lsp,
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
    /// Time fitting a large unbalanced panel with two and three fixed groupings
    /// and clustered errors, beside a numpy/pandas pipeline when python3 has them
    Fe {
        /// Number of units
        #[arg(long, default_value_t = 200_000)]
        units: usize,
        /// Periods per unit (about 4% of unit-periods are left out)
        #[arg(long, default_value_t = 25)]
        periods: usize,
        /// Keep the generated file instead of deleting it
        #[arg(long)]
        keep: bool,
        /// Skip the numpy/pandas baseline (it takes minutes with three groupings)
        #[arg(long)]
        no_baseline: bool,
    },
    /// Time the language server from keystroke to diagnostics on a 300-line
    /// model against a large generated CSV, and report its memory
    Lsp {
        /// Number of rows to generate
        #[arg(long, default_value_t = 1_000_000)]
        rows: usize,
        /// Number of edits to time
        #[arg(long, default_value_t = 200)]
        edits: usize,
        /// Keep the generated files instead of deleting them
        #[arg(long)]
        keep: bool,
    },
}

#[derive(Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum ReportFormat {
    Text,
    Json,
    Markdown,
}

#[derive(Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum Format {
    Text,
    Json,
}

fn main() -> ExitCode {
    let cli = Cli::parse();
    let result = match cli.command {
        Command::Fit { file, format, out } => fit_cmd::run(&file, format, out.as_deref()),
        Command::Check { files, format } => check_cmd::run_all(&files, format),
        Command::Describe {
            data,
            groups,
            missing,
            format,
        } => describe_cmd::run(&data, &groups, &missing, format),
        Command::Fmt { file, check } => fmt_cmd::run(&file, check),
        Command::Lsp => server::run_stdio().map(|()| true),
        Command::Bench {
            what: BenchCommand::Load { rows, keep },
        } => bench::run_load(rows, keep).map(|report| {
            println!("{report}");
            true
        }),
        Command::Bench {
            what:
                BenchCommand::Fe {
                    units,
                    periods,
                    keep,
                    no_baseline,
                },
        } => bench::run_fe(units, periods, keep, !no_baseline).map(|_| true),
        Command::Bench {
            what: BenchCommand::Lsp { rows, edits, keep },
        } => bench::run_lsp(rows, edits, keep).map(|report| {
            print!("{report}");
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
