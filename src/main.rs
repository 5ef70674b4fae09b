//! The `rotorsift` command line: argument parsing and glue only; the work is in the library.

use std::io::Write;
use std::path::PathBuf;
use std::process::ExitCode;

use anyhow::{Context, Result};
use clap::{Parser, Subcommand};

use rotorsift::cli_values::*;
use rotorsift::pipeline::options::*;
use rotorsift::pipeline::{self, BatchOptions, PipelineSettings};
use rotorsift::recording::resolve_inputs;
use rotorsift::report::{self, Format};

/// Tells small rotorcraft from birds and clutter by their micro-Doppler in radar IQ
/// recordings (SigMF). Decision support only.
#[derive(Parser)]
#[command(name = "rotorsift", version, about, long_about = None)]
struct Cli {
    /// Recordings processed at once (0 = one per core); results are the same for any
    /// number, byte for byte.
    #[arg(long, global = true, default_value_t = 0)]
    jobs: usize,
    /// No progress bars (they are drawn on stderr only when it is a terminal).
    #[arg(long, global = true)]
    quiet: bool,
    #[command(subcommand)]
    command: Command,
}

#[derive(Subcommand)]
enum Command {
    /// Show what each recording holds: radar settings, derived figures, duration, labels.
    Info {
        #[command(flatten)]
        inputs: Inputs,
        #[command(flatten)]
        format: FormatOption,
    },
    /// Write labelled recordings from a scene description (TOML).
    Simulate(SimulateOptions),
    /// Range processing, clutter cancelling, CFAR and tracking; prints the tracks.
    Detect {
        #[command(flatten)]
        inputs: Inputs,
        #[command(flatten)]
        process: DetectOptions,
        #[command(flatten)]
        format: FormatOption,
    },
    /// One row per track: identifiers, matched label (empty if none), every feature.
    Features {
        /// Recordings: NAME.sigmf-meta, NAME.sigmf-data, NAME, or directories.
        #[arg(required_unless_present = "list")]
        inputs: Vec<PathBuf>,
        /// The CSV file to write.
        #[arg(long, required_unless_present = "list")]
        out: Option<PathBuf>,
        /// Print the feature table (name, unit, meaning) as Markdown instead.
        #[arg(long)]
        list: bool,
        #[command(flatten)]
        process: DetectOptions,
    },
    /// Train the tree ensemble on labelled tracks; holds out whole recordings, prints the
    /// held-out confusion matrix, writes the model.
    Train {
        #[command(flatten)]
        inputs: LabelledInputs,
        /// The model file to write (JSON).
        #[arg(long)]
        model: PathBuf,
        #[command(flatten)]
        opts: pipeline::classify::TrainOptions,
        #[command(flatten)]
        process: DetectOptions,
        /// Output format of the report.
        #[arg(long, value_enum, default_value_t = Format::Table)]
        format: Format,
    },
    /// Label every track, with a confidence (built-in model unless --model).
    Classify {
        #[command(flatten)]
        inputs: Inputs,
        #[command(flatten)]
        model: ModelOptions,
        #[command(flatten)]
        recording: RecordingOptions,
        #[command(flatten)]
        format: FormatOption,
    },
    /// Classify labelled recordings and score them against their annotations.
    Evaluate {
        #[command(flatten)]
        inputs: LabelledInputs,
        #[command(flatten)]
        model: ModelOptions,
        #[command(flatten)]
        recording: RecordingOptions,
        /// Count tracks matching no annotation in every recording as false tracks of this
        /// class (by default only in recordings with rotorsift:labels_complete, as clutter).
        #[arg(long)]
        unlabelled_as: Option<String>,
        #[command(flatten)]
        format: FormatOption,
    },
    /// Write DIR/index.html: every misclassified, low-confidence or bird-vs-rotorcraft
    /// doubtful track, with its spectrogram, cadence diagram and range-Doppler map.
    Audit {
        #[command(flatten)]
        inputs: Inputs,
        #[command(flatten)]
        model: ModelOptions,
        #[command(flatten)]
        recording: RecordingOptions,
        /// Directory for index.html and img/ (created if missing).
        #[arg(long)]
        out: PathBuf,
        #[command(flatten)]
        select: pipeline::audit::AuditOptions,
    },
    /// Make a rotorsift recording from a plain SigMF recording or a raw IQ file, with the
    /// radar's settings from a TOML file (labelled-demo/radars/ has one per demo radar).
    Adopt(AdoptOptions),
    /// Draw one picture as PNG: a CPI's range-Doppler map, or a track's spectrogram,
    /// cepstrogram or cadence-velocity diagram.
    Plot {
        /// One recording: NAME.sigmf-meta, NAME.sigmf-data or NAME.
        input: PathBuf,
        #[command(flatten)]
        picture: pipeline::pictures::PlotOptions,
        #[command(flatten)]
        process: DetectOptions,
    },
}

/// Writes `text` to stdout.
fn emit(text: &str) -> Result<()> {
    let mut out = std::io::stdout().lock();
    out.write_all(text.as_bytes())?;
    out.flush()?;
    Ok(())
}

/// Reports one bad file of a batch on stderr; the batch goes on.
fn report_bad(e: &rotorsift::Error) {
    eprintln!("rotorsift: error: {e}");
}

/// Prints the batch's summary line on stderr (when some of several recordings failed);
/// returns the results and whether any input failed.
fn summed<T>((out, outcome): (T, pipeline::BatchOutcome)) -> (T, bool) {
    if let Some(line) = outcome.summary() {
        eprintln!("{line}");
    }
    (out, outcome.any_failed())
}

fn exit_code(failed: bool) -> ExitCode {
    ExitCode::from(u8::from(failed))
}

fn run(cli: Cli) -> Result<ExitCode> {
    let batch = BatchOptions {
        jobs: cli.jobs,
        quiet: cli.quiet,
    };
    let analyse = |inputs: &[PathBuf], channel, settings: &PipelineSettings| {
        let r = pipeline::analyse_inputs(inputs, channel, settings, true, batch, &mut report_bad);
        r.map(summed)
    };
    let gather = |inputs: &[PathBuf], channel, settings: &PipelineSettings| {
        pipeline::tables::gather(inputs, channel, settings, batch, &mut report_bad).map(summed)
    };
    match cli.command {
        Command::Info { inputs, format } => {
            let paths = resolve_inputs(&inputs.inputs)?;
            let read = report::info::InfoRecord::read;
            let (records, failed) = summed(pipeline::run_batch(&paths, read, &mut report_bad));
            emit(&report::info::render(&records, format.format)?)?;
            Ok(exit_code(failed))
        }
        Command::Adopt(o) => {
            let name = o.name.as_deref();
            let a = rotorsift::recording::adopt::adopt(&o.input, &o.radar, &o.out, name)?;
            let how = if a.linked { "linked as" } else { "copied to" };
            eprintln!(
                "rotorsift: {} chirps {how} {}",
                a.meta.chirps,
                a.data_path.display()
            );
            emit(&format!("{}\n", a.meta_path.display()))?;
            Ok(ExitCode::SUCCESS)
        }
        Command::Simulate(o) => {
            let out = &o.out;
            std::fs::create_dir_all(out).with_context(|| format!("creating {}", out.display()))?;
            let metas = rotorsift::simulate::simulate_scene_file(&o.scene, out, o.seed)?;
            emit(
                &metas
                    .iter()
                    .map(|m| format!("{}\n", m.display()))
                    .collect::<String>(),
            )?;
            Ok(ExitCode::SUCCESS)
        }
        Command::Features {
            inputs,
            out,
            list,
            process,
        } => {
            if list {
                emit(&rotorsift::features::names::markdown_table())?;
                return Ok(ExitCode::SUCCESS);
            }
            let out = out.context("--out FILE.csv is required")?;
            let (settings, channel) = (process.settings()?, process.recording.channel);
            let (analyses, failed) = analyse(&inputs, channel, &settings)?;
            let line = pipeline::tables::write_features(&analyses, &settings, channel, &out)?;
            eprintln!("{line}");
            Ok(exit_code(failed))
        }
        Command::Train {
            inputs,
            model,
            opts,
            process,
            format,
        } => {
            let settings = process.settings()?;
            let (tables, failed) = gather(&inputs.inputs, process.recording.channel, &settings)?;
            let (file, rep) = pipeline::classify::train(&tables, &settings, &opts)?;
            for note in &rep.notes {
                eprintln!("rotorsift: note: {note}");
            }
            file.save(&model)?;
            emit(&report::train::to_text(&rep, format, &model)?)?;
            Ok(exit_code(failed))
        }
        Command::Classify {
            inputs,
            model,
            recording,
            format,
        } => {
            let clf = model.load()?;
            let (analyses, failed) = analyse(&inputs.inputs, recording.channel, &clf.settings)?;
            let report = pipeline::output::classify_report(&analyses, &clf, model.min_confidence)?;
            emit(&report::tracks::render(&report, format.format)?)?;
            Ok(exit_code(failed))
        }
        Command::Evaluate {
            inputs,
            model,
            recording,
            unlabelled_as,
            format,
        } => {
            let clf = model.load()?;
            let (tables, failed) = gather(&inputs.inputs, recording.channel, &clf.settings)?;
            let (min, unlabelled) = (model.min_confidence, unlabelled_as.as_deref());
            let ev = pipeline::classify::evaluate(&tables, &clf, min, unlabelled)?;
            emit(&report::evaluate::to_text(&ev, format.format, &clf.name)?)?;
            Ok(exit_code(failed))
        }
        Command::Audit {
            inputs,
            model,
            recording,
            out,
            select,
        } => {
            let params = select.params(model.min_confidence)?;
            let clf = model.load()?;
            let (analyses, failed) = analyse(&inputs.inputs, recording.channel, &clf.settings)?;
            let ch = recording.channel;
            eprintln!(
                "{}",
                pipeline::audit::write_page(&analyses, &clf, &params, ch, &out)?
            );
            Ok(exit_code(failed))
        }
        Command::Plot {
            input,
            picture,
            process,
        } => {
            let (settings, channel) = (process.settings()?, process.recording.channel);
            let p = pipeline::pictures::plot_file(&input, channel, &settings, &picture)?;
            let note = if p.unlabelled {
                " (track unlabelled: the detection options differ from the built-in model's)"
            } else {
                ""
            };
            let (kind, out) = (picture.kind.name(), picture.out.display());
            eprintln!("rotorsift: {kind} written to {out}{note}");
            Ok(ExitCode::SUCCESS)
        }
        Command::Detect {
            inputs,
            process,
            format,
        } => {
            let settings = process.settings()?;
            let channel = process.recording.channel;
            let (analyses, failed) = analyse(&inputs.inputs, channel, &settings)?;
            let report = pipeline::output::detect_report(&analyses);
            emit(&report::tracks::render(&report, format.format)?)?;
            Ok(exit_code(failed))
        }
    }
}

fn main() -> ExitCode {
    let cli = match Cli::try_parse() {
        Ok(c) => c,
        Err(e) if !e.use_stderr() => {
            // --help and --version: the text on stdout, success
            let _ = e.print();
            return ExitCode::SUCCESS;
        }
        Err(e) if e.kind() == clap::error::ErrorKind::DisplayHelpOnMissingArgumentOrSubcommand => {
            // no subcommand: the help, as a usage error
            let _ = e.print();
            return ExitCode::from(2);
        }
        Err(e) => {
            eprintln!("rotorsift: error: {}", one_line_usage_error(&e.to_string()));
            return ExitCode::from(2);
        }
    };
    match run(cli) {
        Ok(code) => code,
        Err(e) if e.chain().any(rotorsift::error::is_broken_pipe) => ExitCode::SUCCESS,
        Err(e) => {
            eprintln!("rotorsift: error: {e:#}");
            ExitCode::from(1)
        }
    }
}
