//! The command line: clap structs that mirror what the user typed, their conversion into the
//! library's validated options, and the glue that runs a job, renders its outcome, writes output
//! files and picks the exit code (0 gate pass, 1 gate fail, 2 bad input or usage).

use std::io::{self, Write};
use std::path::PathBuf;
use std::process::ExitCode;

use clap::{Args, CommandFactory, Parser, Subcommand, ValueEnum};
use mountdrift::commands::audit::{self, AuditError, AuditOptions, Gate, SessionSource};
use mountdrift::report::{
    compare_files, survey_mount_yaml, write_audit_json, write_audit_summary, write_compare_json,
    write_compare_summary, write_survey_json, write_survey_summary, AuditFile, AuditReport,
    TerminalStyle,
};
use mountdrift::session::{InputError, Policy};

use mountdrift::commands::camera::{self, FromExifError, FromExifOptions};
use mountdrift::commands::compare::{self, CompareError, CompareOptions};
use mountdrift::commands::overlay::{self, OverlayError, OverlayOptions};
use mountdrift::commands::sensitivity::{
    self, Axis, IntervalMethod, SensitivityError, SensitivityOptions,
};
use mountdrift::commands::simulate::{self, ScenarioSource, SimulateOptions};
use mountdrift::commands::survey::{self, SurveyError, SurveyOptions};
use mountdrift::report::overlay::{overlay_text_lines, write_overlay_png};
use mountdrift::report::sensitivity::{
    write_sensitivity_json, write_sensitivity_summary, SensitivityFile,
};
use mountdrift::sim::SimError;

use crate::output::{self, OutputError, StagedOutputs};
use crate::progress;

/// Audits the camera-to-probe mount of a vision-based probe-and-drogue system: did the mount
/// move during a session, when, by how much, and what error would a fixed-offset pipeline have
/// made.
#[derive(Debug, Parser)]
#[command(name = "mountdrift", version)]
pub struct Cli {
    #[command(subcommand)]
    pub command: Command,
}

#[derive(Debug, Subcommand)]
pub enum Command {
    /// Audit one session (a YAML manifest naming camera, models, mount and detections).
    Audit(AuditArgs),
    /// Write a simulated session (with truth) from a scenario file or a built-in preset.
    Simulate(SimulateArgs),
    /// Estimate the as-installed mount from a session and write it as a mount file (a new
    /// nominal with its uncertainty). Exit 0 when the precision rule is met, 1 when the file is
    /// written but the session was too short for it, 2 on bad input.
    Survey(SurveyArgs),
    /// Maintenance gate: compare the mount of AFTER with BEFORE (sessions or survey files)
    /// against the policy tolerances. Exit 0 unchanged, 1 changed or inconclusive, 2 bad input.
    Compare(CompareArgs),
    /// Size the audit's change-point test on a scenario: false-alarm rate, detection probability
    /// and delay of steps along each axis, and the smallest step detected with 95% probability.
    Sensitivity(SensitivityArgs),
    /// Camera intrinsics helpers.
    #[command(subcommand)]
    Camera(CameraCommand),
    /// Draw one frame's detections, reprojected models and the fixed-offset probe on its image.
    Overlay(OverlayArgs),
    /// Print a shell completion script to standard output.
    Completions(CompletionsArgs),
}

#[derive(Debug, Args)]
pub struct OverlayArgs {
    /// The session manifest (YAML); it must name a `frames` folder.
    pub session: PathBuf,
    /// The frame number, as in the detections and the image file names.
    #[arg(long, value_name = "N")]
    pub frame: u64,
    /// The PNG image to write.
    #[arg(long, value_name = "IMAGE.png")]
    pub out: PathBuf,
    /// Print the overlay's numbers as JSON instead of a summary.
    #[arg(long)]
    pub json: bool,
}

impl From<&OverlayArgs> for OverlayOptions {
    fn from(args: &OverlayArgs) -> Self {
        OverlayOptions {
            session: args.session.clone(),
            frame: args.frame,
        }
    }
}

#[derive(Debug, Args)]
pub struct CompletionsArgs {
    /// The shell to complete for.
    #[arg(value_enum)]
    pub shell: CompletionShell,
}

/// Shells with completion scripts.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum CompletionShell {
    Bash,
    Zsh,
    Fish,
}

#[derive(Debug, Args)]
#[command(group(clap::ArgGroup::new("source").required(true).args(["scenario", "preset"])))]
pub struct SimulateArgs {
    /// The scenario (YAML; see docs/scenarios.md).
    pub scenario: Option<PathBuf>,
    /// A built-in scenario instead: demo, clean, creep, loose or wrong-nominal.
    #[arg(long, value_name = "NAME")]
    pub preset: Option<String>,
    /// The folder to write the session into (created if needed).
    #[arg(long, value_name = "DIR")]
    pub out: PathBuf,
    /// Replace the scenario's random seed.
    #[arg(long)]
    pub seed: Option<u64>,
    /// Replace the scenario's duration, seconds.
    #[arg(long, value_name = "SECONDS")]
    pub duration: Option<f64>,
    /// Also write poses.csv: the exact true poses of both objects in the camera frame.
    #[arg(long)]
    pub poses: bool,
    /// Render a synthetic image of every Nth frame into the session's frames folder.
    #[arg(long, value_name = "N", value_parser = clap::value_parser!(u64).range(1..))]
    pub render_every: Option<u64>,
    /// Print what was written as JSON.
    #[arg(long)]
    pub json: bool,
}

fn scenario_source(path: &Option<PathBuf>, preset: &Option<String>) -> ScenarioSource {
    match (path, preset) {
        (Some(path), _) => ScenarioSource::Path(path.clone()),
        (None, Some(name)) => ScenarioSource::Preset(name.clone()),
        (None, None) => unreachable!("clap requires a scenario or a preset"),
    }
}

#[derive(Debug, Args)]
#[command(group(clap::ArgGroup::new("source").required(true).args(["scenario", "preset"])))]
pub struct SensitivityArgs {
    /// The scenario (YAML; see docs/scenarios.md). Its own mount events are left out.
    pub scenario: Option<PathBuf>,
    /// A built-in scenario instead: demo, clean, creep, loose or wrong-nominal.
    #[arg(long, value_name = "NAME")]
    pub preset: Option<String>,
    /// Sessions simulated per cell (clean sessions, and each axis and step size).
    #[arg(long, value_name = "N", default_value_t = 100)]
    pub trials: u64,
    /// Replace the scenario's duration, seconds (shorter sessions size a study quickly).
    #[arg(long, value_name = "SECONDS")]
    pub duration: Option<f64>,
    /// Replace the scenario's seed as the base of every session's seed.
    #[arg(long)]
    pub seed: Option<u64>,
    /// Step sizes of one unit, increasing, e.g. `--sizes mm=0.5,1,2 --sizes deg=0.02,0.05`
    /// (default mm=0.25,0.5,1,2,4 and deg=0.01,0.02,0.05,0.1,0.2).
    #[arg(long, value_name = "UNIT=LIST", value_parser = parse_sizes)]
    pub sizes: Vec<(SizeUnit, Vec<f64>)>,
    /// Axes to step along, comma-separated (default all: x,y,z,yaw,pitch,roll).
    #[arg(long, value_name = "LIST", value_delimiter = ',', value_parser = parse_axis)]
    pub axes: Vec<Axis>,
    /// Confidence interval of the rates.
    #[arg(long, value_enum, default_value_t = IntervalArg::ClopperPearson)]
    pub interval: IntervalArg,
    /// Policy file (YAML) whose false_alarm_rate sets the audit's penalty.
    #[arg(long, value_name = "FILE")]
    pub policy: Option<PathBuf>,
    /// Write sensitivity.json, sensitivity.csv and the plots into this folder.
    #[arg(long, value_name = "DIR")]
    pub out: Option<PathBuf>,
    /// Print the outcome as JSON on standard output instead of the table.
    #[arg(long)]
    pub json: bool,
}

/// The unit of a `--sizes` list.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum SizeUnit {
    Mm,
    Deg,
}

fn parse_sizes(text: &str) -> Result<(SizeUnit, Vec<f64>), String> {
    let (unit, list) = text
        .split_once('=')
        .ok_or_else(|| format!("expected UNIT=LIST such as mm=0.5,1,2 (got '{text}')"))?;
    let unit = match unit.trim() {
        "mm" => SizeUnit::Mm,
        "deg" => SizeUnit::Deg,
        other => return Err(format!("unit '{other}' is neither mm nor deg")),
    };
    let sizes = list
        .split(',')
        .map(|v| {
            v.trim()
                .parse::<f64>()
                .map_err(|_| format!("'{}' is not a number", v.trim()))
        })
        .collect::<Result<Vec<f64>, String>>()?;
    Ok((unit, sizes))
}

fn parse_axis(text: &str) -> Result<Axis, String> {
    Axis::from_name(text)
        .ok_or_else(|| format!("'{text}' is not an axis (x, y, z, yaw, pitch or roll)"))
}

#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum IntervalArg {
    /// Exact, conservative (Clopper & Pearson 1934).
    ClopperPearson,
    /// Score interval (Wilson 1927).
    Wilson,
}

impl TryFrom<&SensitivityArgs> for SensitivityOptions {
    type Error = InputError;

    fn try_from(args: &SensitivityArgs) -> Result<Self, InputError> {
        let mut options = SensitivityOptions::new(scenario_source(&args.scenario, &args.preset));
        options.trials = args.trials;
        options.duration_s = args.duration;
        options.seed = args.seed;
        if !args.axes.is_empty() {
            options.axes = args.axes.clone();
        }
        for (unit, sizes) in &args.sizes {
            match unit {
                SizeUnit::Mm => options.translation_sizes_mm = sizes.clone(),
                SizeUnit::Deg => options.rotation_sizes_deg = sizes.clone(),
            }
        }
        options.interval = match args.interval {
            IntervalArg::ClopperPearson => IntervalMethod::ClopperPearson,
            IntervalArg::Wilson => IntervalMethod::Wilson,
        };
        if let Some(path) = &args.policy {
            options.policy = Policy::load(path)?;
        }
        Ok(options)
    }
}

impl From<&SimulateArgs> for SimulateOptions {
    fn from(args: &SimulateArgs) -> Self {
        SimulateOptions {
            scenario: scenario_source(&args.scenario, &args.preset),
            out_dir: args.out.clone(),
            seed: args.seed,
            duration_s: args.duration,
            poses: args.poses,
            render_every: args.render_every,
        }
    }
}

#[derive(Debug, Args)]
pub struct SurveyArgs {
    /// The session manifest (YAML).
    pub session: PathBuf,
    /// Where to write the surveyed mount (YAML, the session mount format).
    #[arg(long, value_name = "MOUNT.yaml")]
    pub out: PathBuf,
    /// Tolerances the precision is judged against (YAML); missing keys take their defaults.
    #[arg(long, value_name = "FILE")]
    pub policy: Option<PathBuf>,
    /// Print the survey report as JSON instead of the summary.
    #[arg(long)]
    pub json: bool,
}

impl TryFrom<&SurveyArgs> for SurveyOptions {
    type Error = InputError;

    fn try_from(args: &SurveyArgs) -> Result<Self, InputError> {
        Ok(SurveyOptions {
            session: args.session.clone(),
            policy: load_policy(args.policy.as_deref())?,
        })
    }
}

#[derive(Debug, Args)]
pub struct CompareArgs {
    /// The reference: a session manifest or a survey mount file.
    pub before: PathBuf,
    /// The session (or survey file) after the hardware change.
    pub after: PathBuf,
    /// Tolerances (YAML): max_translation_mm, max_rotation_deg; missing keys take defaults.
    #[arg(long, value_name = "FILE")]
    pub policy: Option<PathBuf>,
    /// Print the comparison as JSON instead of the summary.
    #[arg(long)]
    pub json: bool,
    /// Write report.json, report.html and plot_change.svg into this folder.
    #[arg(long, value_name = "DIR")]
    pub out: Option<PathBuf>,
}

impl TryFrom<&CompareArgs> for CompareOptions {
    type Error = InputError;

    fn try_from(args: &CompareArgs) -> Result<Self, InputError> {
        Ok(CompareOptions {
            before: args.before.clone(),
            after: args.after.clone(),
            policy: load_policy(args.policy.as_deref())?,
        })
    }
}

fn load_policy(path: Option<&std::path::Path>) -> Result<Policy, InputError> {
    match path {
        Some(path) => Policy::load(path),
        None => Ok(Policy::default()),
    }
}

#[derive(Debug, Subcommand)]
pub enum CameraCommand {
    /// Approximate pinhole intrinsics from an image's EXIF focal-length tags.
    FromExif(FromExifArgs),
}

#[derive(Debug, Args)]
pub struct FromExifArgs {
    /// A JPEG, PNG or TIFF image straight from the camera.
    pub image: PathBuf,
    /// Write the camera file (YAML) here instead of printing it.
    #[arg(long, value_name = "CAMERA.yaml")]
    pub out: Option<PathBuf>,
    /// Print how the intrinsics were derived as JSON instead.
    #[arg(long)]
    pub json: bool,
}

#[derive(Debug, Args)]
#[command(group(clap::ArgGroup::new("input").required(true).args(["session", "demo"])))]
pub struct AuditArgs {
    /// The session manifest (YAML).
    pub session: Option<PathBuf>,
    /// Audit the built-in demo session instead (simulated in memory; no files needed).
    #[arg(long)]
    pub demo: bool,
    /// Write the report files into this folder (created if needed).
    #[arg(long, value_name = "DIR")]
    pub out: Option<PathBuf>,
    /// Gate tolerances (YAML); missing keys take their defaults.
    #[arg(long, value_name = "FILE")]
    pub policy: Option<PathBuf>,
    /// Print the report as JSON on standard output instead of the summary.
    #[arg(long)]
    pub json: bool,
}

impl TryFrom<&AuditArgs> for AuditOptions {
    type Error = InputError;

    fn try_from(args: &AuditArgs) -> Result<Self, InputError> {
        let policy = match &args.policy {
            Some(path) => Policy::load(path)?,
            None => Policy::default(),
        };
        let source = match &args.session {
            Some(path) => SessionSource::Manifest(path.clone()),
            None => SessionSource::Demo,
        };
        Ok(AuditOptions { source, policy })
    }
}

/// Anything that stops a command; each is printed once and exits with code 2.
#[derive(Debug, thiserror::Error)]
pub enum CliError {
    #[error(transparent)]
    Input(#[from] InputError),
    #[error(transparent)]
    Audit(#[from] AuditError),
    #[error(transparent)]
    Output(#[from] OutputError),
    #[error(transparent)]
    FromExif(#[from] FromExifError),
    #[error(transparent)]
    Simulate(#[from] SimError),
    #[error(transparent)]
    Overlay(#[from] OverlayError),
    #[error(transparent)]
    Survey(#[from] SurveyError),
    #[error(transparent)]
    Compare(#[from] CompareError),
    #[error(transparent)]
    Sensitivity(#[from] SensitivityError),
    #[error("cannot render the output: {0}")]
    Render(String),
    #[error("cannot write to standard output: {0}")]
    Stdout(io::Error),
}

/// Runs the command the user asked for.
pub fn run(cli: Cli) -> Result<ExitCode, CliError> {
    match cli.command {
        Command::Audit(args) => run_audit(&args),
        Command::Simulate(args) => run_simulate(&args),
        Command::Survey(args) => run_survey(&args),
        Command::Compare(args) => run_compare(&args),
        Command::Sensitivity(args) => run_sensitivity(&args),
        Command::Camera(CameraCommand::FromExif(args)) => run_from_exif(&args),
        Command::Overlay(args) => run_overlay(&args),
        Command::Completions(args) => run_completions(&args),
    }
}

fn run_overlay(args: &OverlayArgs) -> Result<ExitCode, CliError> {
    let outcome = overlay::run(&OverlayOptions::from(args))?;
    output::write_file_atomically(&args.out, |w| write_overlay_png(w, &outcome))?;
    let mut stdout = io::stdout().lock();
    let printed = if args.json {
        write_pretty_json(&mut stdout, &outcome)
    } else {
        let mut text = format!("wrote {}\n", args.out.display());
        for line in overlay_text_lines(&outcome) {
            text.push_str(&format!("  {line}\n"));
        }
        stdout.write_all(text.as_bytes())
    };
    finish_stdout(printed)
}

fn run_completions(args: &CompletionsArgs) -> Result<ExitCode, CliError> {
    use clap_complete::Shell;
    let shell = match args.shell {
        CompletionShell::Bash => Shell::Bash,
        CompletionShell::Zsh => Shell::Zsh,
        CompletionShell::Fish => Shell::Fish,
    };
    // Generated into memory first: clap_complete panics on a failed write (a closed pipe).
    let mut script = Vec::new();
    clap_complete::generate(shell, &mut Cli::command(), "mountdrift", &mut script);
    finish_stdout(io::stdout().lock().write_all(&script))
}

fn run_simulate(args: &SimulateArgs) -> Result<ExitCode, CliError> {
    let outcome = simulate::run(&SimulateOptions::from(args))?;
    let mut stdout = io::stdout().lock();
    let printed = if args.json {
        write_pretty_json(&mut stdout, &outcome)
    } else {
        writeln!(
            stdout,
            "wrote {} ({} frames, {} keypoint rows, seed {}); audit it with: mountdrift audit {}",
            outcome.out_dir.display(),
            outcome.counts.frames_written,
            outcome.counts.detection_rows,
            outcome.seed,
            outcome.session.display()
        )
    };
    finish_stdout(printed)
}

fn run_sensitivity(args: &SensitivityArgs) -> Result<ExitCode, CliError> {
    let options = SensitivityOptions::try_from(args)?;
    options.validate()?;
    let bar = progress::CountProgress::new(!args.json, options.session_count(), "sessions");
    let outcome = sensitivity::run(&options, &|n| bar.update(n));
    bar.finish();
    let outcome = outcome?;
    if let Some(dir) = &args.out {
        let mut outputs = StagedOutputs::create(dir)?;
        for file in SensitivityFile::for_outcome(&outcome) {
            outputs.add(file.name(), |w| file.write(&outcome, w))?;
        }
        outputs.commit()?;
    }
    let mut stdout = io::stdout().lock();
    let printed = if args.json {
        write_sensitivity_json(&mut stdout, &outcome)
    } else {
        write_sensitivity_summary(&mut stdout, &outcome, TerminalStyle::detect())
    };
    finish_stdout(printed)
}

fn run_from_exif(args: &FromExifArgs) -> Result<ExitCode, CliError> {
    let options = FromExifOptions {
        image: args.image.clone(),
    };
    let outcome = camera::from_exif(&options)?;
    let yaml = camera::render_camera_yaml(&outcome).map_err(|e| CliError::Render(e.to_string()))?;
    if let Some(path) = &args.out {
        output::write_file_atomically(path, |w| w.write_all(yaml.as_bytes()))?;
    }
    let mut stdout = io::stdout().lock();
    let printed = if args.json {
        write_pretty_json(&mut stdout, &outcome)
    } else if args.out.is_some() {
        writeln!(
            stdout,
            "wrote {}",
            args.out
                .as_ref()
                .map(|p| p.display().to_string())
                .unwrap_or_default()
        )
    } else {
        stdout.write_all(yaml.as_bytes())
    };
    finish_stdout(printed)
}

/// `value` as indented JSON and a final newline.
fn write_pretty_json(w: &mut impl Write, value: &impl serde::Serialize) -> io::Result<()> {
    serde_json::to_writer_pretty(&mut *w, value).map_err(io::Error::from)?;
    writeln!(w)
}

/// The exit code of a gated command: 0 pass, 1 fail.
fn gate_exit_code(gate: Gate) -> ExitCode {
    match gate {
        Gate::Pass => ExitCode::SUCCESS,
        Gate::Fail => ExitCode::from(1),
    }
}

/// A closed pipe (`| head`) is the reader's choice, not a failure.
fn finish_stdout(printed: io::Result<()>) -> Result<ExitCode, CliError> {
    match printed {
        Err(e) if e.kind() != io::ErrorKind::BrokenPipe => Err(CliError::Stdout(e)),
        _ => Ok(ExitCode::SUCCESS),
    }
}

fn run_audit(args: &AuditArgs) -> Result<ExitCode, CliError> {
    let options = AuditOptions::try_from(args)?;
    let bar = progress::FrameProgress::new(!args.json);
    let outcome = audit::run(&options, &|n| bar.update(n))?;
    bar.finish();
    if let Some(dir) = &args.out {
        let report = AuditReport::new(&outcome);
        let mut outputs = StagedOutputs::create(dir)?;
        for file in AuditFile::ALL {
            outputs.add(file.name(), |w| report.write(file, w))?;
        }
        outputs.commit()?;
    }
    let mut stdout = io::stdout().lock();
    let printed = if args.json {
        write_audit_json(&mut stdout, &outcome)
    } else {
        write_audit_summary(&mut stdout, &outcome, TerminalStyle::detect())
    };
    finish_stdout(printed)?;
    Ok(gate_exit_code(outcome.gate))
}

fn run_survey(args: &SurveyArgs) -> Result<ExitCode, CliError> {
    let options = SurveyOptions::try_from(args)?;
    let bar = progress::FrameProgress::new(!args.json);
    let outcome = survey::run(&options, &|n| bar.update(n))?;
    bar.finish();
    let yaml = survey_mount_yaml(&outcome).map_err(|e| CliError::Render(e.to_string()))?;
    output::write_file_atomically(&args.out, |w| w.write_all(yaml.as_bytes()))?;
    let mut stdout = io::stdout().lock();
    let printed = if args.json {
        write_survey_json(&mut stdout, &outcome)
    } else {
        write_survey_summary(&mut stdout, &outcome, TerminalStyle::detect()).and_then(|()| {
            writeln!(
                stdout,
                "\nwrote {}; use it as the session's `mount:` or as BEFORE of mountdrift compare",
                args.out.display()
            )
        })
    };
    finish_stdout(printed)?;
    Ok(if outcome.precision.sufficient {
        ExitCode::SUCCESS
    } else {
        ExitCode::from(1)
    })
}

fn run_compare(args: &CompareArgs) -> Result<ExitCode, CliError> {
    let options = CompareOptions::try_from(args)?;
    let bar = progress::FrameProgress::new(!args.json);
    let outcome = compare::run(&options, &|n| bar.update(n))?;
    bar.finish();
    if let Some(dir) = &args.out {
        let files = compare_files(&outcome).map_err(|e| CliError::Render(e.to_string()))?;
        let mut outputs = StagedOutputs::create(dir)?;
        for (name, bytes) in files {
            outputs.add(&name, |w| w.write_all(&bytes))?;
        }
        outputs.commit()?;
    }
    let mut stdout = io::stdout().lock();
    let printed = if args.json {
        write_compare_json(&mut stdout, &outcome)
    } else {
        write_compare_summary(&mut stdout, &outcome, TerminalStyle::detect())
    };
    finish_stdout(printed)?;
    Ok(gate_exit_code(outcome.gate))
}
