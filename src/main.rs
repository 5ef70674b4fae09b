//! The `rotorsift` command line: argument parsing and glue only; the work is in the library.

use std::io::Write;
use std::path::PathBuf;
use std::process::ExitCode;

use anyhow::{Context, Result};
use clap::{Parser, Subcommand};

use rotorsift::cli_values::*;
use rotorsift::pipeline::options::{DetectOptions, ModelOptions, RecordingOptions};
use rotorsift::pipeline::{self, BatchOptions, PipelineSettings, RecordingAnalysis};
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
        /// Recordings: NAME.sigmf-meta, NAME.sigmf-data, NAME, or directories.
        #[arg(required = true)]
        inputs: Vec<PathBuf>,
        /// Output format.
        #[arg(long, value_enum, default_value_t = Format::Table)]
        format: Format,
    },
    /// Write labelled recordings from a scene description (TOML).
    Simulate {
        /// The scene file (format: labelled-demo/scenes/EXAMPLE.toml).
        #[arg(long)]
        scene: PathBuf,
        /// Directory for the recordings (created if missing).
        #[arg(long)]
        out: PathBuf,
        /// Random seed (overrides the scene's seeds).
        #[arg(long)]
        seed: Option<u64>,
    },
    /// Range processing, clutter cancelling, CFAR and tracking; prints the tracks.
    Detect {
        /// Recordings: NAME.sigmf-meta, NAME.sigmf-data, NAME, or directories.
        #[arg(required = true)]
        inputs: Vec<PathBuf>,
        #[command(flatten)]
        process: DetectOptions,
        /// Output format.
        #[arg(long, value_enum, default_value_t = Format::Table)]
        format: Format,
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
        /// Labelled recordings: NAME.sigmf-meta, NAME.sigmf-data, NAME, or directories;
        /// or feature tables (FILE.csv written by `rotorsift features`).
        #[arg(required = true)]
        inputs: Vec<PathBuf>,
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
        /// Recordings: NAME.sigmf-meta, NAME.sigmf-data, NAME, or directories.
        #[arg(required = true)]
        inputs: Vec<PathBuf>,
        #[command(flatten)]
        model: ModelOptions,
        #[command(flatten)]
        recording: RecordingOptions,
        /// Output format.
        #[arg(long, value_enum, default_value_t = Format::Table)]
        format: Format,
    },
    /// Classify labelled recordings and score them against their annotations.
    Evaluate {
        /// Labelled recordings: NAME.sigmf-meta, NAME.sigmf-data, NAME, or directories;
        /// or feature tables (FILE.csv written by `rotorsift features`).
        #[arg(required = true)]
        inputs: Vec<PathBuf>,
        #[command(flatten)]
        model: ModelOptions,
        #[command(flatten)]
        recording: RecordingOptions,
        /// Count tracks matching no annotation in every recording as false tracks of this
        /// class (by default only in recordings with rotorsift:labels_complete, as clutter).
        #[arg(long)]
        unlabelled_as: Option<String>,
        /// Output format.
        #[arg(long, value_enum, default_value_t = Format::Table)]
        format: Format,
    },
    /// Write DIR/index.html: every misclassified, low-confidence or bird-vs-rotorcraft
    /// doubtful track, with its spectrogram, cadence diagram and range-Doppler map.
    Audit {
        /// Recordings: NAME.sigmf-meta, NAME.sigmf-data, NAME, or directories.
        #[arg(required = true)]
        inputs: Vec<PathBuf>,
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
    Adopt {
        /// A SigMF recording (NAME.sigmf-meta, NAME.sigmf-data or NAME) or a raw IQ file.
        input: PathBuf,
        /// The radar file: the rotorsift keys without their prefix (and, for a raw IQ
        /// file, datatype, sample_rate_hz, carrier_hz, num_channels).
        #[arg(long)]
        radar: PathBuf,
        /// Directory for NAME.sigmf-meta and NAME.sigmf-data (created if missing).
        #[arg(long)]
        out: PathBuf,
        /// Base name of the new recording (default: the input's).
        #[arg(long)]
        name: Option<String>,
    },
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

/// The batch loop's manners and its reporting of bad files.
struct Ctx {
    batch: BatchOptions,
}

impl Ctx {
    /// Every input analysed (bad inputs reported on stderr and skipped), and whether any
    /// failed.
    fn analyse(
        &self,
        inputs: &[PathBuf],
        channel: usize,
        settings: &PipelineSettings,
    ) -> Result<(Vec<RecordingAnalysis>, bool)> {
        let (out, outcome) =
            pipeline::analyse_inputs(inputs, channel, settings, true, self.batch, &mut |e| {
                report_bad(e)
            })?;
        report_summary(&outcome);
        Ok((out, outcome.any_failed()))
    }

    /// Every input as feature tables: recordings analysed, `.csv` tables read.
    fn gather(
        &self,
        inputs: &[PathBuf],
        channel: usize,
        settings: &PipelineSettings,
    ) -> Result<(Vec<pipeline::tables::RecordingTable>, bool)> {
        let (out, outcome) =
            pipeline::tables::gather(inputs, channel, settings, self.batch, &mut |e| {
                report_bad(e)
            })?;
        report_summary(&outcome);
        Ok((out, outcome.any_failed()))
    }
}

fn is_broken_pipe(e: &anyhow::Error) -> bool {
    e.chain().any(|c| {
        c.downcast_ref::<std::io::Error>()
            .is_some_and(|io| io.kind() == std::io::ErrorKind::BrokenPipe)
            || matches!(c.downcast_ref::<rotorsift::Error>(),
                Some(rotorsift::Error::Io { err, .. }) if err.kind() == std::io::ErrorKind::BrokenPipe)
    })
}

/// Writes `text` to stdout.
fn emit(text: &str) -> Result<()> {
    let mut out = std::io::stdout().lock();
    out.write_all(text.as_bytes())?;
    out.flush()?;
    Ok(())
}

/// The batch's summary line on stderr, when some of several recordings failed.
fn report_summary(outcome: &pipeline::BatchOutcome) {
    if let Some(line) = outcome.summary() {
        eprintln!("{line}");
    }
}

/// Reports one bad file of a batch on stderr; the batch goes on.
fn report_bad(e: &dyn std::fmt::Display) {
    eprintln!("rotorsift: error: {e}");
}

fn exit_code(failed: bool) -> ExitCode {
    ExitCode::from(u8::from(failed))
}

fn print_tracks(report: &report::tracks::TrackReport, format: Format) -> Result<()> {
    let text = match format {
        Format::Json => serde_json::to_string_pretty(report).context("encoding JSON")? + "\n",
        Format::Table => report::tracks::render_table(report),
    };
    emit(&text)
}

fn run(cli: Cli) -> Result<ExitCode> {
    let ctx = Ctx {
        batch: BatchOptions {
            jobs: cli.jobs,
            quiet: cli.quiet,
        },
    };
    match cli.command {
        Command::Info { inputs, format } => {
            let paths = resolve_inputs(&inputs)?;
            let (records, outcome) =
                pipeline::run_batch(&paths, report::info::InfoRecord::read, &mut |e| {
                    report_bad(e)
                });
            report_summary(&outcome);
            emit(&report::info::render(&records, format)?)?;
            Ok(exit_code(outcome.any_failed()))
        }
        Command::Adopt {
            input,
            radar,
            out,
            name,
        } => {
            let a = rotorsift::recording::adopt::adopt(&input, &radar, &out, name.as_deref())?;
            let how = if a.linked { "linked as" } else { "copied to" };
            eprintln!(
                "rotorsift: {} chirps {how} {}",
                a.meta.chirps,
                a.data_path.display()
            );
            emit(&format!("{}\n", a.meta_path.display()))?;
            Ok(ExitCode::SUCCESS)
        }
        Command::Simulate { scene, out, seed } => {
            std::fs::create_dir_all(&out).with_context(|| format!("creating {}", out.display()))?;
            let metas = rotorsift::simulate::simulate_scene_file(&scene, &out, seed)?;
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
            let settings = process.settings()?;
            let (analyses, failed) = ctx.analyse(&inputs, process.recording.channel, &settings)?;
            if analyses.is_empty() {
                anyhow::bail!(
                    "no input recording could be read; {} left as it was",
                    out.display()
                );
            }
            let fp = pipeline::tables::fingerprint(&settings, process.recording.channel);
            let tables: Vec<_> = analyses
                .iter()
                .map(|a| pipeline::tables::of_analysis(a, &fp))
                .collect();
            let text = report::features_csv::to_csv(&tables);
            rotorsift::recording::write_atomic(&out, text.as_bytes())?;
            let tracks = tables.iter().map(|t| t.tracks.len()).sum();
            eprintln!(
                "{}",
                report::features_csv::summary(tracks, tables.len(), &out)
            );
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
            let (tables, failed) = ctx.gather(&inputs, process.recording.channel, &settings)?;
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
            let (analyses, failed) = ctx.analyse(&inputs, recording.channel, &clf.settings)?;
            let report = pipeline::output::classify_report(&analyses, &clf, model.min_confidence)?;
            print_tracks(&report, format)?;
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
            let (tables, failed) = ctx.gather(&inputs, recording.channel, &clf.settings)?;
            let ev = pipeline::classify::evaluate(
                &tables,
                &clf,
                model.min_confidence,
                unlabelled_as.as_deref(),
            )?;
            emit(&report::evaluate::to_text(&ev, format, &clf.name)?)?;
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
            let (analyses, failed) = ctx.analyse(&inputs, recording.channel, &clf.settings)?;
            std::fs::create_dir_all(&out).with_context(|| format!("creating {}", out.display()))?;
            let a = pipeline::audit::audit(&analyses, &clf, &params, recording.channel, &out)?;
            let page = report::audit::to_html(&a, rotorsift::VERSION);
            let index = out.join("index.html");
            rotorsift::recording::write_atomic(&index, page.as_bytes())?;
            eprintln!(
                "rotorsift: {} of {} tracks listed in {}",
                a.entries.len(),
                a.tracks,
                index.display()
            );
            Ok(exit_code(failed))
        }
        Command::Plot {
            input,
            picture,
            process,
        } => {
            let settings = process.settings()?;
            let channel = process.recording.channel;
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
            let (analyses, failed) = ctx.analyse(&inputs, process.recording.channel, &settings)?;
            print_tracks(&pipeline::output::detect_report(&analyses), format)?;
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
        Err(e) if is_broken_pipe(&e) => ExitCode::SUCCESS,
        Err(e) => {
            eprintln!("rotorsift: error: {e:#}");
            ExitCode::from(1)
        }
    }
}
