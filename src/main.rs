//! The `rotorsift` command line: argument parsing and glue only; the work is in the library.

use std::io::Write;
use std::path::PathBuf;
use std::process::ExitCode;

use anyhow::{Context, Result};
use clap::{Parser, Subcommand};

use rotorsift::recording::{resolve_inputs, RecordingMeta};
use rotorsift::report::{self, Format};

/// Tells small rotorcraft from birds and clutter by their micro-Doppler in radar IQ
/// recordings (SigMF). Decision support only.
#[derive(Parser)]
#[command(name = "rotorsift", version, about, long_about = None)]
struct Cli {
    #[command(subcommand)]
    command: Command,
}

#[derive(Subcommand)]
enum Command {
    /// Show what each recording holds: radar settings, derived figures, duration, labels.
    Info {
        /// Recordings: NAME.sigmf-meta, NAME.sigmf-data, NAME, or directories.
        #[arg(required = true)]
        inputs: Vec<PathBuf>,
        /// Output format.
        #[arg(long, value_enum, default_value_t = Format::Table)]
        format: Format,
    },
}

fn main() -> ExitCode {
    let cli = Cli::parse();
    match run(cli) {
        Ok(code) => code,
        Err(e) => {
            if is_broken_pipe(&e) {
                return ExitCode::SUCCESS;
            }
            eprintln!("rotorsift: error: {e:#}");
            ExitCode::from(1)
        }
    }
}

fn is_broken_pipe(e: &anyhow::Error) -> bool {
    e.chain().any(|c| {
        c.downcast_ref::<std::io::Error>()
            .is_some_and(|io| io.kind() == std::io::ErrorKind::BrokenPipe)
    })
}

/// Writes `text` to stdout.
fn emit(text: &str) -> Result<()> {
    let mut out = std::io::stdout().lock();
    out.write_all(text.as_bytes())?;
    out.flush()?;
    Ok(())
}

/// Reports one bad file of a batch on stderr; the batch goes on.
fn report_bad(e: &dyn std::fmt::Display) {
    eprintln!("rotorsift: error: {e}");
}

fn run(cli: Cli) -> Result<ExitCode> {
    match cli.command {
        Command::Info { inputs, format } => {
            let paths = resolve_inputs(&inputs)?;
            let mut records = Vec::new();
            let mut failed = false;
            for p in &paths {
                match RecordingMeta::open(p) {
                    Ok(m) => records.push(report::info::InfoRecord::of(&m)),
                    Err(e) => {
                        report_bad(&e);
                        failed = true;
                    }
                }
            }
            let text = match format {
                Format::Json => {
                    serde_json::to_string_pretty(&report::info::to_json(&records))
                        .context("encoding JSON")?
                        + "\n"
                }
                Format::Table => report::info::to_table(&records).render(),
            };
            emit(&text)?;
            Ok(if failed {
                ExitCode::from(1)
            } else {
                ExitCode::SUCCESS
            })
        }
    }
}
