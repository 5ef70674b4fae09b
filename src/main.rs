//! The `rotorsift` command line: argument parsing and glue only; the work is in the library.

use std::io::Write;
use std::path::PathBuf;
use std::process::ExitCode;

use anyhow::{Context, Result};
use clap::{Parser, Subcommand};

use rotorsift::detect::CfarKind;
use rotorsift::frontend::Canceller;
use rotorsift::pipeline::{self, PipelineSettings};
use rotorsift::recording::{resolve_inputs, RecordingMeta};
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

/// `--jobs`, set once by `run` (read by the batch loops).
static JOBS: std::sync::atomic::AtomicUsize = std::sync::atomic::AtomicUsize::new(0);

/// `--quiet`, set once by `run`.
static QUIET: std::sync::atomic::AtomicBool = std::sync::atomic::AtomicBool::new(false);

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
        process: ProcessArgs,
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
        process: ProcessArgs,
    },
    /// Train the tree ensemble on labelled tracks; holds out whole recordings, prints the
    /// held-out confusion matrix, writes the model.
    Train {
        /// Labelled recordings: NAME.sigmf-meta, NAME.sigmf-data, NAME, or directories.
        #[arg(required = true)]
        inputs: Vec<PathBuf>,
        /// The model file to write (JSON).
        #[arg(long)]
        model: PathBuf,
        /// Share of the tracks (by whole recordings) held out for scoring.
        #[arg(long, default_value_t = 0.3, value_parser = parse_fraction)]
        holdout_fraction: f64,
        /// Seed of the split and of the ensemble.
        #[arg(long, default_value_t = 7)]
        seed: u64,
        /// Trees in the ensemble.
        #[arg(long, default_value_t = 200)]
        trees: usize,
        /// Train on unmatched tracks too, with this label.
        #[arg(long)]
        unlabelled_as: Option<String>,
        /// Also score a grouped k-fold cross-validation by recording (0 = off).
        #[arg(long, default_value_t = 5)]
        folds: usize,
        /// Step towards uniform probabilities per feature outside the training domain
        /// (0 = no domain check)
        #[arg(long, default_value_t = rotorsift::model::domain::DEFAULT_STEP, value_parser = parse_probability)]
        domain_step: f64,
        #[command(flatten)]
        process: ProcessArgs,
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
        model: ModelArgs,
        /// Output format.
        #[arg(long, value_enum, default_value_t = Format::Table)]
        format: Format,
    },
    /// Classify labelled recordings and score them against their annotations.
    Evaluate {
        /// Labelled recordings: NAME.sigmf-meta, NAME.sigmf-data, NAME, or directories.
        #[arg(required = true)]
        inputs: Vec<PathBuf>,
        #[command(flatten)]
        model: ModelArgs,
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
        model: ModelArgs,
        /// Directory for index.html and img/ (created if missing).
        #[arg(long)]
        out: PathBuf,
        /// Tracks under this confidence are listed.
        #[arg(long, default_value_t = 0.6, value_parser = parse_probability)]
        low_confidence: f64,
        /// Tracks whose bird and rotorcraft probabilities both reach this are listed.
        #[arg(long, default_value_t = 0.2, value_parser = parse_probability)]
        doubt: f64,
        /// At most this many tracks get pictures (most doubtful first).
        #[arg(long, default_value_t = 150)]
        max_pictures: usize,
        /// List every track predicted this class (e.g. rotorcraft: every drone alarm)
        /// instead of the doubtful ones.
        #[arg(long)]
        predicted: Option<String>,
        /// List this one track only: RECORDING:ID (the recording's name without
        /// extension, the track id as `detect` prints it).
        #[arg(long)]
        track: Option<String>,
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
        /// What to draw.
        #[arg(long, value_enum)]
        kind: pipeline::pictures::PictureKind,
        /// Track id (as `detect` prints); default: the strongest track. For range-doppler,
        /// the CPI at the track's middle (default: the recording's middle).
        #[arg(long)]
        track: Option<usize>,
        /// PNG file to write (must end in .png).
        #[arg(long, value_parser = parse_png_path)]
        out: PathBuf,
        /// Velocity axis of the spectrogram and cadence diagram: the track's body velocity
        /// plus and minus this, m/s (default: fitted to the track's micro-Doppler spread).
        #[arg(long, value_name = "M/S", value_parser = parse_velocity_span)]
        velocity_span: Option<f64>,
        /// Top of the cadence diagram's cadence axis, Hz (default: fitted to the
        /// track's strongest cadence lines).
        #[arg(long, value_name = "HZ", value_parser = parse_cadence_max)]
        cadence_max: Option<f64>,
        #[command(flatten)]
        process: ProcessArgs,
    },
}

/// Which model, and how to use it.
#[derive(clap::Args, Clone)]
struct ModelArgs {
    /// Model file (JSON) from `rotorsift train`; the built-in model when absent.
    #[arg(long)]
    model: Option<PathBuf>,
    /// Tracks whose confidence is below this are labelled `unknown`.
    #[arg(long, default_value_t = 0.0, value_parser = parse_probability)]
    min_confidence: f64,
    /// Channel to read.
    #[arg(long, default_value_t = 0)]
    channel: usize,
}

impl ModelArgs {
    fn load(&self) -> Result<pipeline::classify::Classifier> {
        if !(0.0..=1.0).contains(&self.min_confidence) {
            anyhow::bail!(
                "--min-confidence {}: expected a probability in 0..1",
                self.min_confidence
            );
        }
        Ok(pipeline::classify::Classifier::load(self.model.as_deref())?)
    }
}

/// Options of the detection path (defaults work on both waveforms without tuning).
#[derive(clap::Args, Clone)]
struct ProcessArgs {
    /// Channel to read (core:num_channels interleaves channels).
    #[arg(long, default_value_t = 0)]
    channel: usize,
    /// Chirps per coherent processing interval (Doppler FFT length); 0 = automatic
    /// (about 25.6 ms, a power of two, at least 256).
    #[arg(long, default_value_t = 0, value_parser = parse_cpi)]
    cpi: usize,
    /// Chirps from one CPI to the next (0: half the CPI).
    #[arg(long, default_value_t = 0)]
    hop: usize,
    /// Clutter canceller: none, two-pulse, three-pulse.
    #[arg(long, default_value = "three-pulse", value_parser = parse_canceller)]
    canceller: Canceller,
    /// Phase-align each chirp to its predecessor before cancelling: on or off.
    #[arg(long, default_value = "on", value_parser = parse_on_off, action = clap::ArgAction::Set)]
    phase_align: bool,
    /// CFAR kind: ca (cell averaging) or os (ordered statistic).
    #[arg(long, default_value = "ca", value_parser = parse_cfar)]
    cfar: CfarKind,
    /// CFAR false-alarm probability per cell.
    #[arg(long, default_value_t = 1e-6, value_parser = parse_pfa)]
    pfa: f64,
}

/// A probability from 0 to 1 (a usage error otherwise: exit status 2).
fn parse_probability(s: &str) -> std::result::Result<f64, String> {
    match s.parse::<f64>() {
        Ok(v) if (0.0..=1.0).contains(&v) => Ok(v),
        _ => Err(format!("{s}: expected a probability from 0 to 1")),
    }
}

/// A share strictly between 0 and 1.
fn parse_fraction(s: &str) -> std::result::Result<f64, String> {
    match s.parse::<f64>() {
        Ok(v) if v > 0.0 && v < 1.0 => Ok(v),
        _ => Err(format!(
            "{s}: expected a share between 0 and 1 (both excluded)"
        )),
    }
}

/// A false-alarm probability strictly between 0 and 0.5.
fn parse_pfa(s: &str) -> std::result::Result<f64, String> {
    match s.parse::<f64>() {
        Ok(v) if v > 0.0 && v < 0.5 => Ok(v),
        _ => Err(format!(
            "{s}: expected a false-alarm probability between 0 and 0.5 (both excluded)"
        )),
    }
}

/// A picture path: only .png is written (a usage error otherwise, before any work).
fn parse_png_path(s: &str) -> std::result::Result<PathBuf, String> {
    let p = PathBuf::from(s);
    report::plot::check_picture_path(&p)?;
    Ok(p)
}

/// A velocity half-span, m/s: above 0, at most 10 000 (well past any radar's
/// unambiguous speed; wider than the axis shows the whole axis).
fn parse_velocity_span(s: &str) -> std::result::Result<f64, String> {
    match s.parse::<f64>() {
        Ok(v) if v > 0.0 && v <= 1e4 => Ok(v),
        _ => Err(format!(
            "{s}: expected a speed in m/s above 0 and at most 10000"
        )),
    }
}

/// A cadence axis top, Hz: above 0, at most 1 MHz (past any chirp rate's frame rate;
/// above the axis' end shows the whole axis).
fn parse_cadence_max(s: &str) -> std::result::Result<f64, String> {
    match s.parse::<f64>() {
        Ok(v) if v > 0.0 && v <= 1e6 => Ok(v),
        _ => Err(format!(
            "{s}: expected a cadence in Hz above 0 and at most 1000000"
        )),
    }
}

/// A CPI length: 0 (automatic) or a length the CFAR window fits in.
fn parse_cpi(s: &str) -> std::result::Result<usize, String> {
    let min = rotorsift::pipeline::DetectSettings::default().min_cpi_chirps();
    let max = rotorsift::pipeline::settings::MAX_CPI_CHIRPS;
    match s.parse::<usize>() {
        Ok(v) if v == 0 || (min..=max).contains(&v) => Ok(v),
        _ => Err(format!(
            "{s}: expected 0 (automatic) or {min} to {max} chirps (the CFAR window spans {min} Doppler bins)"
        )),
    }
}

fn parse_canceller(s: &str) -> std::result::Result<Canceller, String> {
    s.parse::<Canceller>().map_err(|e| e.to_string())
}

fn parse_on_off(s: &str) -> std::result::Result<bool, String> {
    match s {
        "on" => Ok(true),
        "off" => Ok(false),
        _ => Err(format!("{s:?}: expected on or off")),
    }
}

fn parse_cfar(s: &str) -> std::result::Result<CfarKind, String> {
    s.parse::<CfarKind>().map_err(|e| e.to_string())
}

impl ProcessArgs {
    /// Checked settings, and every input analysed with them (bad inputs reported).
    fn analyse(
        &self,
        inputs: &[PathBuf],
    ) -> Result<(PipelineSettings, Vec<pipeline::RecordingAnalysis>, bool)> {
        let settings = self.settings();
        settings.detect.check()?;
        let (analyses, failed) = analyse_all(inputs, self.channel, &settings, true)?;
        Ok((settings, analyses, failed))
    }

    fn settings(&self) -> PipelineSettings {
        let mut s = PipelineSettings::default();
        let d = &mut s.detect;
        d.cpi_chirps = self.cpi;
        d.cpi_hop = self.hop;
        d.canceller = self.canceller;
        d.phase_align = self.phase_align;
        d.cfar.kind = self.cfar;
        d.cfar.pfa = self.pfa;
        s
    }
}

/// The printed form of one analysed track (model fields left empty).
fn track_out(
    t: &pipeline::AnalysedTrack,
    params: &rotorsift::recording::RadarParams,
) -> report::tracks::TrackOut {
    report::tracks::TrackOut {
        id: t.track.id,
        start_s: t.start_s,
        end_s: t.end_s,
        range_m: t.track.median_range_m(),
        range_min_m: t.track.range_min_m(),
        range_max_m: t.track.range_max_m(),
        radial_velocity_mps: t.kinematics.body_velocity_mps,
        snr_db: t.track.mean_snr_db(),
        label: None,
        confidence: None,
        probabilities: None,
        off_domain_features: None,
        hovering: t.hovering(),
        blade_flash_hz: t.rotor.blade_flash_hz,
        tip_speed_mps: t.rotor.tip_speed_mps,
        tip_speed_is_bound: t
            .rotor
            .tip_speed_mps
            .is_some_and(|v| pipeline::tip_speed_is_bound(v, params)),
        blade_length_m: t.rotor.blade_length_m,
        notch_share: t.kinematics.notch_share,
        matched_label: None,
    }
}

/// Analyses every input; bad files are reported and skipped. Returns the analyses and
/// whether any input failed.
fn analyse_all(
    inputs: &[PathBuf],
    channel: usize,
    settings: &PipelineSettings,
    with_features: bool,
) -> Result<(Vec<pipeline::RecordingAnalysis>, bool)> {
    let paths = resolve_inputs(inputs)?;
    let progress = rotorsift::progress::Progress::start(
        &paths,
        rotorsift::progress::wanted(QUIET.load(std::sync::atomic::Ordering::Relaxed)),
    );
    let (out, outcome) = pipeline::run_batch_parallel(
        &paths,
        JOBS.load(std::sync::atomic::Ordering::Relaxed),
        |p| {
            let r = RecordingMeta::open(p)
                .and_then(|m| pipeline::analyse(&m, channel, settings, with_features));
            progress.recording_done();
            r
        },
        &mut |e| report_bad(e),
    );
    drop(progress);
    report_summary(&outcome);
    Ok((out, outcome.any_failed()))
}

/// Feature rows of every track, with the label of the annotation it matches.
fn labelled_rows(
    analyses: &[pipeline::RecordingAnalysis],
) -> Vec<report::features_csv::FeatureRow> {
    let mut rows = Vec::new();
    for a in analyses {
        let spans: Vec<_> = a.tracks.iter().map(|t| t.span()).collect();
        let m = pipeline::match_tracks(&spans, &a.meta.annotations, &a.meta.params);
        for (t, mi) in a.tracks.iter().zip(m) {
            let ann = mi.map(|i| &a.meta.annotations[i]);
            rows.push(report::features_csv::FeatureRow {
                recording: a.meta.meta_path.display().to_string(),
                track: t.track.id,
                start_s: t.start_s,
                end_s: t.end_s,
                range_m: t.track.median_range_m(),
                target_id: ann.and_then(|x| x.target_id.clone()),
                label: ann.map(|x| x.label.clone()),
                features: t.features.clone(),
            });
        }
    }
    rows
}

fn exit_code(failed: bool) -> ExitCode {
    if failed {
        ExitCode::from(1)
    } else {
        ExitCode::SUCCESS
    }
}

fn print_tracks(report: &report::tracks::TrackReport, format: Format) -> Result<()> {
    let text = match format {
        Format::Json => serde_json::to_string_pretty(report).context("encoding JSON")? + "\n",
        Format::Table => report::tracks::render_table(report),
    };
    emit(&text)
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
        Err(e) => {
            if is_broken_pipe(&e) {
                return ExitCode::SUCCESS;
            }
            eprintln!("rotorsift: error: {e:#}");
            ExitCode::from(1)
        }
    }
}

/// A usage error of the argument parser as one line: its message with the usage and the
/// "try --help" lines left out and the rest joined.
fn one_line_usage_error(text: &str) -> String {
    let parts: Vec<&str> = text
        .lines()
        .map(str::trim)
        .take_while(|l| !l.starts_with("Usage:"))
        .filter(|l| !l.is_empty() && !l.starts_with("For more information"))
        .collect();
    let joined = parts.join(" ");
    let msg = joined.strip_prefix("error: ").unwrap_or(&joined);
    format!("{msg} (see --help)")
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

fn run(cli: Cli) -> Result<ExitCode> {
    JOBS.store(cli.jobs, std::sync::atomic::Ordering::Relaxed);
    QUIET.store(cli.quiet, std::sync::atomic::Ordering::Relaxed);
    match cli.command {
        Command::Info { inputs, format } => {
            let paths = resolve_inputs(&inputs)?;
            let (records, outcome) =
                pipeline::run_batch(&paths, report::info::InfoRecord::read, &mut |e| {
                    report_bad(e)
                });
            report_summary(&outcome);
            let failed = outcome.any_failed();
            let text = match format {
                Format::Json => {
                    serde_json::to_string_pretty(&report::info::to_json(&records))
                        .context("encoding JSON")?
                        + "\n"
                }
                // no empty header when no recording could be read
                Format::Table if records.is_empty() => String::new(),
                Format::Table => report::info::to_table(&records).render(),
            };
            emit(&text)?;
            Ok(exit_code(failed))
        }
        Command::Adopt {
            input,
            radar,
            out,
            name,
        } => {
            let a = rotorsift::recording::adopt::adopt(&input, &radar, &out, name.as_deref())?;
            eprintln!(
                "rotorsift: {} chirps {} {}",
                a.meta.chirps,
                if a.linked { "linked as" } else { "copied to" },
                a.data_path.display()
            );
            emit(&format!("{}\n", a.meta_path.display()))?;
            Ok(ExitCode::SUCCESS)
        }
        Command::Simulate { scene, out, seed } => {
            std::fs::create_dir_all(&out).with_context(|| format!("creating {}", out.display()))?;
            let metas = rotorsift::simulate::simulate_scene_file(&scene, &out, seed)?;
            let mut text = String::new();
            for m in metas {
                text.push_str(&format!("{}\n", m.display()));
            }
            emit(&text)?;
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
            let (_, analyses, failed) = process.analyse(&inputs)?;
            if analyses.is_empty() {
                anyhow::bail!(
                    "no input recording could be read; {} left as it was",
                    out.display()
                );
            }
            let rows = labelled_rows(&analyses);
            let text = report::features_csv::to_csv(&rows);
            rotorsift::recording::write_atomic(&out, text.as_bytes())?;
            eprintln!(
                "rotorsift: {} track{} from {} recording{} written to {}",
                rows.len(),
                if rows.len() == 1 { "" } else { "s" },
                analyses.len(),
                if analyses.len() == 1 { "" } else { "s" },
                out.display()
            );
            Ok(exit_code(failed))
        }
        Command::Train {
            inputs,
            model,
            holdout_fraction,
            seed,
            trees,
            unlabelled_as,
            folds,
            domain_step,
            process,
            format,
        } => {
            let (settings, analyses, failed) = process.analyse(&inputs)?;
            let opts = pipeline::classify::TrainOptions {
                holdout_fraction,
                seed,
                trees,
                unlabelled_as,
                folds,
                domain_step,
            };
            let (file, rep) = pipeline::classify::train(&analyses, &settings, &opts)?;
            for note in &rep.notes {
                eprintln!("rotorsift: note: {note}");
            }
            file.save(&model)?;
            let text = match format {
                Format::Json => serde_json::to_string_pretty(&rep)? + "\n",
                Format::Table => report::scores::render_train(&rep, rep.folds, &model),
            };
            emit(&text)?;
            Ok(exit_code(failed))
        }
        Command::Classify {
            inputs,
            model,
            format,
        } => {
            let clf = model.load()?;
            let (analyses, failed) = analyse_all(&inputs, model.channel, &clf.settings, true)?;
            let mut recordings = Vec::new();
            for a in &analyses {
                let mut tracks = Vec::new();
                for t in &a.tracks {
                    let p = clf.predict(&t.features, model.min_confidence)?;
                    let mut out = track_out(t, &a.meta.params);
                    if !p.shows_rotor() {
                        out.blade_flash_hz = None;
                        out.tip_speed_mps = None;
                        out.tip_speed_is_bound = false;
                        out.blade_length_m = None;
                    }
                    out.label = Some(p.label);
                    out.confidence = Some(p.confidence);
                    out.probabilities = Some(p.probabilities);
                    out.off_domain_features = Some(p.off_domain);
                    tracks.push(out);
                }
                recordings.push(report::tracks::RecordingOut {
                    path: a.meta.meta_path.display().to_string(),
                    duration_s: a.meta.duration_s(),
                    tracks,
                });
            }
            let report = report::tracks::TrackReport {
                tool_version: rotorsift::VERSION,
                model: Some(clf.name.clone()),
                recordings,
            };
            print_tracks(&report, format)?;
            Ok(exit_code(failed))
        }
        Command::Evaluate {
            inputs,
            model,
            unlabelled_as,
            format,
        } => {
            let clf = model.load()?;
            let (analyses, failed) = analyse_all(&inputs, model.channel, &clf.settings, true)?;
            if unlabelled_as.is_none()
                && !analyses
                    .iter()
                    .any(|a| !a.meta.annotations.is_empty() || a.meta.labels_complete)
            {
                anyhow::bail!("no labelled targets to score: the recordings carry no annotations (and none says rotorsift:labels_complete)");
            }
            let ev = pipeline::classify::evaluate(
                &analyses,
                &clf,
                model.min_confidence,
                unlabelled_as.as_deref(),
            )?;
            let text = match format {
                Format::Json => serde_json::to_string_pretty(&ev)? + "\n",
                Format::Table => report::scores::render_evaluation(&ev, &clf.name),
            };
            emit(&text)?;
            Ok(exit_code(failed))
        }
        Command::Audit {
            inputs,
            model,
            out,
            low_confidence,
            doubt,
            max_pictures,
            predicted,
            track,
        } => {
            let track = match track {
                None => None,
                Some(t) => {
                    let (rec, id) = t.rsplit_once(':').unwrap_or((&t, ""));
                    let id: usize = id.parse().map_err(|_| {
                        anyhow::anyhow!("--track {t}: expected RECORDING:ID, e.g. run-k24-00-uav:0")
                    })?;
                    Some((rec.to_string(), id))
                }
            };
            let params = pipeline::audit::AuditParams {
                low_confidence,
                bird_rotor_doubt: doubt,
                max_pictures,
                min_confidence: model.min_confidence,
                predicted,
                track,
            };
            params.check()?;
            let clf = model.load()?;
            let (analyses, failed) = analyse_all(&inputs, model.channel, &clf.settings, true)?;
            std::fs::create_dir_all(&out).with_context(|| format!("creating {}", out.display()))?;
            let a = pipeline::audit::audit(&analyses, &clf, &params, model.channel, &out)?;
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
            kind,
            track,
            out,
            velocity_span,
            cadence_max,
            process,
        } => {
            use pipeline::pictures::{self as pic, Caption, PictureKind, Zoom};
            let paths = resolve_inputs(std::slice::from_ref(&input))?;
            if paths.len() != 1 {
                anyhow::bail!(
                    "{}: plot takes one recording, found {}",
                    input.display(),
                    paths.len()
                );
            }
            let meta = RecordingMeta::open(&paths[0])?;
            let settings = process.settings();
            settings.detect.check()?;
            // The built-in model labels the track when its settings are the plot's.
            let clf = pipeline::classify::Classifier::load(None)?;
            let labelled = clf.settings == settings;
            let a = pipeline::analyse(&meta, process.channel, &settings, labelled)?;
            let chosen = match track {
                Some(id) => Some(a.tracks.iter().find(|t| t.track.id == id).ok_or_else(|| {
                    anyhow::anyhow!(
                        "{}: no track {id} (the recording has {} tracks; `rotorsift detect` lists them)",
                        paths[0].display(),
                        a.tracks.len()
                    )
                })?),
                None => a
                    .tracks
                    .iter()
                    .max_by(|x, y| x.track.mean_snr_db().total_cmp(&y.track.mean_snr_db())),
            };
            let caption = chosen.map(|t| {
                let p = labelled
                    .then(|| clf.predict(&t.features, 0.0).ok())
                    .flatten();
                Caption::of_track(t, p.as_ref().map(|p| (p.label.as_str(), p.confidence)))
            });
            let h = if kind == PictureKind::RangeDoppler {
                let centre = chosen
                    .map(|t| 0.5 * (t.start_s + t.end_s))
                    .unwrap_or(0.5 * meta.duration_s());
                let tracks: Vec<_> = a.tracks.iter().map(|t| t.track.clone()).collect();
                let focus = chosen.zip(caption.as_ref()).map(|(t, c)| pic::Focus {
                    track: &t.track,
                    caption: c,
                });
                pic::range_doppler(&meta, process.channel, &settings, centre, &tracks, focus)?
            } else {
                let t = chosen.ok_or_else(|| {
                    anyhow::anyhow!(
                        "{}: no tracks to draw a {} of",
                        paths[0].display(),
                        kind.name()
                    )
                })?;
                let sigs = pic::signals_of(
                    &meta,
                    process.channel,
                    &settings,
                    std::slice::from_ref(&t.track),
                )?;
                pic::track_picture(
                    &meta,
                    &pic::extractor_for(&meta, &settings)?,
                    &sigs[0],
                    kind,
                    caption.as_ref().unwrap_or(&Caption::default()),
                    Zoom {
                        velocity_span_mps: velocity_span,
                        cadence_max_hz: cadence_max,
                    },
                )?
            };
            report::plot::write_png(&h, &out)?;
            let note = if chosen.is_some() && !labelled {
                " (track unlabelled: the detection options differ from the built-in model's)"
            } else {
                ""
            };
            eprintln!(
                "rotorsift: {} written to {}{note}",
                kind.name(),
                out.display()
            );
            Ok(ExitCode::SUCCESS)
        }
        Command::Detect {
            inputs,
            process,
            format,
        } => {
            let (_, analyses, failed) = process.analyse(&inputs)?;
            let report = report::tracks::TrackReport {
                tool_version: rotorsift::VERSION,
                model: None,
                recordings: analyses
                    .iter()
                    .map(|a| report::tracks::RecordingOut {
                        path: a.meta.meta_path.display().to_string(),
                        duration_s: a.meta.duration_s(),
                        tracks: a
                            .tracks
                            .iter()
                            .map(|t| track_out(t, &a.meta.params))
                            .collect(),
                    })
                    .collect(),
            };
            print_tracks(&report, format)?;
            Ok(exit_code(failed))
        }
    }
}
