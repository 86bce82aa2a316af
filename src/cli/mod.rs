//! The command line: clap definitions and one function per command. `main` only calls
//! [`run`]; every command returns its exit code (0 ok, 1 the job has problems, 2 usage,
//! 3 internal or I/O failure).

use std::ffi::OsString;
use std::io::Write;
use std::path::{Path, PathBuf};
use std::process::ExitCode;

use clap::{Parser, Subcommand, ValueEnum};

use crate::analysis;
use crate::job::{self, LoadError};
use crate::model::{Job, Template};
use crate::report;
use crate::results;

/// `eprintln!` with every control character escaped: a file name, key or node name holding
/// ESC or BEL never acts on the terminal.
macro_rules! say_err {
    ($($t:tt)*) => { eprintln!("{}", crate::cli::for_stderr(&format!($($t)*))) };
}

macro_rules! say_err_raw {
    ($($t:tt)*) => { eprint!("{}", crate::cli::for_stderr(&format!($($t)*))) };
}

/// A message as standard error shows it: control characters escaped, and coloured on a
/// terminal unless NO_COLOR is set.
pub(crate) fn for_stderr(message: &str) -> String {
    static COLOUR: std::sync::OnceLock<bool> = std::sync::OnceLock::new();
    let safe = crate::text::printable(message);
    if *COLOUR.get_or_init(|| crate::text::colour_wanted(std::env::var_os("NO_COLOR").as_deref(), std::io::IsTerminal::is_terminal(&std::io::stderr()))) {
        crate::text::paint(&safe)
    } else {
        safe
    }
}

pub const OK: u8 = 0;
pub const PROBLEMS: u8 = 1;
pub const USAGE: u8 = 2;
pub const FAILURE: u8 = 3;

#[derive(Parser, Debug)]
#[command(
    name = "voicekeep",
    version,
    about = "Predict and correct the level shifts of a re-capped passive crossover, and write the service report",
    long_about = "voicekeep reads one job file (the crossover as designed, the parts as measured on the bench, and the \
changes you made), solves the network at every frequency, fits the compensating resistors, checks power, voltage \
and amplifier load, and writes a dated service report.\n\nStart with `voicekeep new > job.yaml`, then `voicekeep check job.yaml`.",
    after_help = "Exit codes: 0 success, 1 the job has problems, 2 usage error, 3 internal or I/O failure."
)]
pub struct Cli {
    #[command(subcommand)]
    command: Command,
    /// Let a job read tables, photographs and templates outside its own folder (absolute
    /// paths, `..`, links that lead out); by default they are refused
    #[arg(long, global = true)]
    allow_outside: bool,
    /// Print only problems: no "wrote ..." lines, no progress bar, no line per job that went well
    #[arg(long, short, global = true)]
    quiet: bool,
}

#[derive(Subcommand, Debug)]
enum Command {
    /// Check a job file and list every problem with its line and column
    Check {
        /// The job file (YAML), or - to read it from standard input
        job: PathBuf,
        /// Also draw the network as typed (JOB-schematic.svg beside the job), to compare with the board before going on
        #[arg(long, conflicts_with = "format")]
        draw: bool,
        /// text for people, json for other programs (every problem with its file, line, column, field and hint)
        #[arg(long, value_enum, default_value_t = Format::Text)]
        format: Format,
    },
    /// Solve the job and print the compensation plan, levels, load and stress
    Solve {
        /// The job file (YAML), or - to read it from standard input
        job: PathBuf,
        /// text for people, json for other programs
        #[arg(long, value_enum, default_value_t = Format::Text)]
        format: Format,
    },
    /// Write the PDF service report
    Report {
        /// The job file (YAML), or - to read it from standard input
        job: PathBuf,
        /// Where to write the PDF (default: beside the job, same name)
        #[arg(short, long)]
        output: Option<PathBuf>,
        /// customer, archive, sale, quote, invoice, or the path of your own .typ template (overrides the job's choice)
        #[arg(long)]
        template: Option<String>,
    },
    /// Write the plots alone, named after the job (JOB-response.svg, ...)
    Plot {
        /// The job file (YAML), or - to read it from standard input
        job: PathBuf,
        /// Folder for the plot files
        #[arg(long)]
        out: PathBuf,
        /// svg for documents, png for viewing
        #[arg(long, value_enum, default_value_t = PlotFormat::Svg)]
        format: PlotFormat,
    },
    /// Estimate drifted parts from the sweep at the terminals as found (terminals.as_found)
    Diagnose {
        /// The job file (YAML), or - to read it from standard input
        job: PathBuf,
        /// text for people, json for other programs
        #[arg(long, value_enum, default_value_t = Format::Text)]
        format: Format,
    },
    /// Fit Small's model to a driver's own impedance sweep and print the job's `model` block
    Characterise {
        /// The driver's sweep: frequency Hz, |Z| ohm, phase deg (free air, out of the box)
        sweep: PathBuf,
        /// Fit Leach's lossy coil (K and n) in place of a simple Le
        #[arg(long)]
        leach: bool,
        /// text for people, json for other programs
        #[arg(long, value_enum, default_value_t = Format::Text)]
        format: Format,
    },
    /// Print a commented starter job that passes `check`, or write a shipped example whole into a folder
    New {
        /// The example to start from: a shipped sample's name (`--list` names them all)
        #[arg(long, default_value = "two-way-recap")]
        example: String,
        /// List the examples, each with what it shows and the files it reads
        #[arg(long)]
        list: bool,
        /// Write the example as shipped, with every file it reads, into this folder
        #[arg(long)]
        into: Option<PathBuf>,
        /// Start a job that uses this design from the shop's library (a name in designs/, or a design file)
        #[arg(long, conflicts_with_all = ["example", "list", "into"])]
        design: Option<String>,
    },
    /// Report a job, then again each time it or a file it reads is saved, printing a summary (stop with Ctrl-C)
    Watch {
        /// The job file (YAML)
        job: PathBuf,
        /// Where to write the PDF (default: beside the job, same name)
        #[arg(short, long)]
        output: Option<PathBuf>,
        /// customer, archive, sale, quote, invoice, or the path of your own .typ template (overrides the job's choice)
        #[arg(long)]
        template: Option<String>,
    },
    /// Print shell completions (bash, zsh, fish, elvish, powershell) to standard output
    Completions { shell: clap_complete::Shell },
    /// Write the manual pages (voicekeep.1 and one per command) into a folder, or print voicekeep.1
    Manual {
        /// Folder for the pages (default: print voicekeep.1 to standard output)
        #[arg(long)]
        out: Option<PathBuf>,
    },
    /// Report every job under a folder and write the archive index; a job unchanged since its report is skipped, a bad job is named and the rest go on
    Batch {
        /// Folder of job files (*.yaml, *.yml), searched with its sub-folders
        dir: PathBuf,
        /// Folder for the reports (laid out in the jobs' own sub-folders) and the index (index.csv, index.json)
        #[arg(long)]
        out: PathBuf,
        /// customer, archive, sale, quote, invoice, or the path of your own .typ template, for every job (overrides each job's choice)
        #[arg(long)]
        template: Option<String>,
        /// Report every job again, even one whose inputs have not changed since its report
        #[arg(long)]
        force: bool,
        /// text for people, json for other programs (each job's result, the files that are not jobs, the index)
        #[arg(long, value_enum, default_value_t = Format::Text)]
        format: Format,
    },
    /// Write a scenario's network (with the fitted values) as a SPICE netlist with an AC analysis, to check any figure in ngspice
    Netlist {
        /// The job file (YAML), or - to read it from standard input
        job: PathBuf,
        /// as-designed, as-found or as-left
        #[arg(long, default_value = "as-left")]
        scenario: String,
        /// The cabinet of a pair or set
        #[arg(long)]
        cabinet: Option<String>,
        /// Where to write the netlist (default: standard output)
        #[arg(short, long)]
        output: Option<PathBuf>,
    },
    /// Write the test signal for an impedance sweep with a sound card (a WAV file), and print the wiring and cautions
    Signal(soundcard::SignalCmd),
    /// Turn a stereo recording of the signal (drive and speaker) into the impedance table `terminals` and `characterise` read
    Measure(soundcard::MeasureCmd),
    /// Find past jobs in the archive index `batch` writes, by number, customer, serial, design, part fitted or date
    Find {
        /// The reports folder `batch --out` wrote (or its index.json)
        index: PathBuf,
        /// The job number, exactly (any case)
        #[arg(long)]
        number: Option<String>,
        /// Part of the customer's name or reference, any case
        #[arg(long)]
        customer: Option<String>,
        /// Part of a speaker's serial number
        #[arg(long)]
        serial: Option<String>,
        /// Part of the name of the design the job used
        #[arg(long)]
        design: Option<String>,
        /// The value of a part the work fitted, within 1 %: 3.3 uF, 0.27 mH, 2.2 ohm
        #[arg(long)]
        part: Option<String>,
        /// Jobs dated on or after this day (2026-01-31)
        #[arg(long)]
        from: Option<String>,
        /// Jobs dated on or before this day
        #[arg(long)]
        to: Option<String>,
        /// text for people, json for other programs
        #[arg(long, value_enum, default_value_t = Format::Text)]
        format: Format,
    },
}

#[derive(Clone, Copy, Debug, ValueEnum, PartialEq, Eq)]
enum Format {
    Text,
    Json,
}

#[derive(Clone, Copy, Debug, ValueEnum, PartialEq, Eq)]
pub enum PlotFormat {
    Svg,
    Png,
}

pub fn run<I, T>(args: I) -> ExitCode
where
    I: IntoIterator<Item = T>,
    T: Into<OsString> + Clone,
{
    let cli = match Cli::try_parse_from(args) {
        Ok(c) => c,
        Err(e) => {
            let code = if e.use_stderr() { USAGE } else { OK };
            let _ = e.print();
            return ExitCode::from(code);
        }
    };
    OUTSIDE.store(cli.allow_outside, std::sync::atomic::Ordering::Relaxed);
    QUIET.store(cli.quiet, std::sync::atomic::Ordering::Relaxed);
    ExitCode::from(match cli.command {
        Command::Check { job, format: Format::Json, .. } => check_json::run(&job),
        Command::Check { job, draw, .. } => check(&job, draw),
        Command::Solve { job, format } => solve(&job, format),
        Command::Report { job, output, template } => report_cmd(&job, output, template),
        Command::Plot { job, out, format } => plot::plot(&job, &out, format),
        Command::New { design: Some(d), .. } => examples::from_design(&d),
        Command::New { example, list, into, .. } => examples::new(&example, list, into.as_deref()),
        Command::Watch { job, output, template } => watch::run(&job, output, template),
        Command::Completions { shell } => docs::completions(shell),
        Command::Manual { out: dir } => docs::manual(dir.as_deref()),
        Command::Diagnose { job, format } => diagnose(&job, format),
        Command::Characterise { sweep, leach, format } => characterise(&sweep, leach, format),
        Command::Netlist { job, scenario, cabinet, output } => netlist::run(&job, &scenario, cabinet, output),
        Command::Signal(c) => soundcard::signal(&c),
        Command::Measure(c) => soundcard::measure(&c),
        Command::Find { index, number, customer, serial, design, part, from, to, format } => {
            find::run(find::Args { index, number, customer, serial, design, part, from, to, format })
        }
        Command::Batch { dir, out, template, force, format } => {
            batch::run(batch::Options { dir: &dir, out_dir: &out, template, force, quiet: cli.quiet, json: format == Format::Json })
        }
    })
}

/// Writes to stdout; a closed pipe (`voicekeep solve job | head`) is not an error.
fn out(text: &str) -> u8 {
    let mut o = std::io::stdout().lock();
    let text = crate::text::printable(text);
    match o.write_all(text.as_bytes()).and_then(|_| o.flush()) {
        Ok(()) => OK,
        Err(e) if e.kind() == std::io::ErrorKind::BrokenPipe => OK,
        Err(e) => {
            say_err!("voicekeep: cannot write to standard output: {e}");
            FAILURE
        }
    }
}

/// Prints several lines to standard error, escaped as `say_err!` does.
fn say_err_lines(lines: &[String]) {
    for l in lines {
        say_err!("{l}");
    }
}

/// What a command says when it went well ("wrote ..."): nothing under `--quiet`.
fn done(text: &str) -> u8 {
    if QUIET.load(std::sync::atomic::Ordering::Relaxed) {
        OK
    } else {
        out(text)
    }
}

/// `--quiet`, set once at the start of a run.
static QUIET: std::sync::atomic::AtomicBool = std::sync::atomic::AtomicBool::new(false);

/// `--allow-outside`, set once at the start of a run.
static OUTSIDE: std::sync::atomic::AtomicBool = std::sync::atomic::AtomicBool::new(false);

fn load(path: &Path) -> Result<Job, u8> {
    let loaded = job::load_allowing(path, OUTSIDE.load(std::sync::atomic::Ordering::Relaxed));
    if let Ok(job) = &loaded {
        if !job.warnings.is_empty() {
            let source = job.inputs.first().map(|i| String::from_utf8_lossy(&i.bytes).into_owned()).unwrap_or_default();
            say_err_raw!("{}", crate::diag::warnings(&path.display().to_string(), &source, &job.warnings));
        }
    }
    loaded.map_err(|e| {
        say_err!("{e}");
        match e {
            LoadError::Io { .. } => FAILURE,
            LoadError::Problems(_) | LoadError::Several(_) => PROBLEMS,
        }
    })
}

/// A progress bar on the terminal for long runs (the Monte Carlo), drawn at the edge: the
/// library only reports progress.
struct Bar(std::sync::Mutex<Option<indicatif::ProgressBar>>);

impl analysis::Progress for Bar {
    fn start(&self, what: &str, total: u64) {
        use std::io::IsTerminal;
        if !std::io::stderr().is_terminal() || total < 3000 {
            return;
        }
        let p = indicatif::ProgressBar::new(total);
        p.set_style(indicatif::ProgressStyle::with_template(&format!("{what} {{bar:40}} {{pos}}/{{len}} {{eta}}")).unwrap_or_else(|_| indicatif::ProgressStyle::default_bar()));
        if let Ok(mut slot) = self.0.lock() {
            *slot = Some(p);
        }
    }

    fn advance(&self, steps: u64) {
        if let Ok(slot) = self.0.lock() {
            if let Some(p) = slot.as_ref() {
                p.inc(steps);
            }
        }
    }

    fn finish(&self) {
        if let Ok(mut slot) = self.0.lock() {
            if let Some(p) = slot.take() {
                p.finish_and_clear();
            }
        }
    }
}

fn analyse(path: &Path, job: &Job) -> Result<analysis::Outcome, u8> {
    analysis::analyse_job(job, &Bar(std::sync::Mutex::new(None))).map_err(|e| {
        // Reported like every other problem in the job: file, line, column, snippet, hint.
        let source = job.inputs.first().map(|i| String::from_utf8_lossy(&i.bytes).into_owned()).unwrap_or_default();
        say_err!("{}", crate::diag::Problems { file: path.display().to_string(), source, list: vec![e.diagnostic(job)] });
        PROBLEMS
    })
}

/// "1 driver", "2 drivers".
fn count(n: usize, noun: &str) -> String {
    format!("{n} {noun}{}", if n == 1 { "" } else { "s" })
}

fn check(path: &Path, draw: bool) -> u8 {
    match load(path) {
        Ok(job) => {
            // Drawn before solving: a network typed wrong may not solve, and the drawing is
            // how the technician sees where.
            if draw {
                if let Err(code) = plot::draw_typed(path, &job) {
                    return code;
                }
            }
            // Solving is part of checking: a network that cannot be solved is a problem in the job.
            match analyse(path, &job) {
                Ok(_) => {
                    let cabinets = if job.cabinets.is_empty() { String::new() } else { format!(", {} cabinets", job.cabinets.len()) };
                    done(&format!(
                        "{}: ok ({}, {}, {}{cabinets})\n",
                        path.display(),
                        count(job.network.parts.len(), "part"),
                        count(job.network.drivers.len(), "driver"),
                        count(job.changes.len(), "change step")
                    ))
                }
                Err(code) => code,
            }
        }
        Err(code) => code,
    }
}

fn solve(path: &Path, format: Format) -> u8 {
    let (job, f) = match load(path).and_then(|job| analyse(path, &job).map(|f| (job, f))) {
        Ok(both) => both,
        Err(c) => return c,
    };
    match format {
        Format::Text => out(&results::wrap(&results::text_outcome(&job, &f), text_width())),
        Format::Json => match serde_json::to_string_pretty(&results::json_outcome(&job, &f)) {
            Ok(s) => out(&(s + "\n")),
            Err(e) => {
                say_err!("voicekeep: internal error writing JSON: {e}; please report this");
                FAILURE
            }
        },
    }
}

fn print_json(v: &serde_json::Value) -> u8 {
    match serde_json::to_string_pretty(v) {
        Ok(s) => out(&(s + "\n")),
        Err(e) => {
            say_err!("voicekeep: internal error writing JSON: {e}; please report this");
            FAILURE
        }
    }
}

/// The diagnosis alone: what the job's `terminals.diagnose` names, or every parameter.
fn diagnose(path: &Path, format: Format) -> u8 {
    let mut job = match load(path) {
        Ok(j) => j,
        Err(c) => return c,
    };
    let sweeps = std::iter::once(&mut job.terminals).chain(job.cabinets.iter_mut().map(|c| &mut c.terminals));
    let mut any = false;
    for t in sweeps {
        any |= t.as_found.is_some();
        if t.diagnose.is_empty() {
            t.diagnose_all = true;
        }
    }
    if !any {
        say_err!("{}: there is no sweep as found to diagnose from", path.display());
        say_err!("  hint: sweep the speaker at its terminals before opening it and name the file in `terminals.as_found` (a pair's under `cabinets.NAME.terminals`)");
        return PROBLEMS;
    }
    let o = match analyse(path, &job) {
        Ok(o) => o,
        Err(c) => return c,
    };
    let each: Vec<(Option<&str>, &analysis::Findings)> = match &o {
        analysis::Outcome::One(f) => vec![(None, f.as_ref())],
        analysis::Outcome::Set(s) => s.cabinets.iter().map(|c| (Some(c.name.as_str()), &c.findings)).collect(),
    };
    match format {
        Format::Json => {
            let mut m = serde_json::Map::new();
            for (name, f) in &each {
                let v = match &f.diagnosis {
                    Some(Ok(d)) => serde_json::to_value(d).unwrap_or_default(),
                    Some(Err(e)) => serde_json::json!({ "error": e }),
                    None => continue,
                };
                m.insert(name.unwrap_or("diagnosis").to_string(), v);
            }
            let v = if job.cabinets.is_empty() { serde_json::json!({ "diagnosis": m.remove("diagnosis") }) } else { serde_json::json!({ "cabinets": m }) };
            print_json(&v)
        }
        Format::Text => {
            let mut s = String::new();
            for (name, f) in &each {
                let Some(d) = &f.diagnosis else { continue };
                if let Some(n) = name {
                    let _ = std::fmt::Write::write_fmt(&mut s, format_args!("Cabinet {n}\n"));
                }
                results::diagnosis_text(&mut s, &f.scenes.as_found.network, d);
            }
            out(&results::wrap(&s, text_width()))
        }
    }
}

/// Small's model from a driver's own sweep, with the three-point figures beside it.
fn characterise(path: &Path, leach: bool, format: Format) -> u8 {
    let sweep = match job::read_impedance_table(path) {
        Ok(t) => t,
        Err(e) => {
            say_err!("{e}");
            return PROBLEMS;
        }
    };
    let fit = match analysis::diagnose::characterise(&sweep, leach) {
        Ok(f) => f,
        Err(e) => {
            say_err!("{}: {e}", path.display());
            return PROBLEMS;
        }
    };
    match format {
        Format::Json => print_json(&serde_json::json!({ "driver_fit": fit })),
        Format::Text => out(&results::driver_fit_text(&fit)),
    }
}

/// The template the command line asks for (over the job's choice): a built-in, or a shop's
/// file read here, at the edge, so rendering reads nothing from disk.
fn template_choice(arg: Option<String>, job: &Job) -> Result<Template, u8> {
    let Some(arg) = arg else { return Ok(job.template.clone()) };
    if let Some(t) = Template::built_in(&arg) {
        return Ok(t);
    }
    match crate::files::read_limited(Path::new(&arg), report::MAX_TEMPLATE_BYTES).and_then(|b| report::template_text(&arg, b)) {
        Ok(bytes) => Ok(Template::File { name: arg, text: String::from_utf8_lossy(&bytes).into_owned() }),
        Err(e) => {
            say_err!("voicekeep: cannot read the template {}: {}", crate::text::printable(&arg), e.reason);
            Err(PROBLEMS)
        }
    }
}

fn report_cmd(path: &Path, output: Option<PathBuf>, template: Option<String>) -> u8 {
    match report_job(path, output, template) {
        Ok((_, _, target)) => done(&format!("wrote {}\n", target.display())),
        Err(c) => c,
    }
}

/// Reads, solves and reports one job: the job, its results (when solved here) and where the
/// report went, or the exit code of a refusal (already said).
fn report_job(path: &Path, output: Option<PathBuf>, template: Option<String>) -> Result<(Job, Option<analysis::Outcome>, PathBuf), u8> {
    let cli_template = template.is_some();
    if let Some(t) = &template {
        if Template::built_in(t).is_none() && !t.ends_with(".typ") {
            say_err!("voicekeep: --template takes customer, archive, sale, quote, invoice or the path of a .typ file, not \"{t}\"");
            return Err(USAGE);
        }
    }
    if path.as_os_str() == "-" && output.is_none() {
        say_err!("voicekeep: a job read from standard input (-) has no folder to write its report beside");
        say_err!("  hint: name the report with -o, such as -o report.pdf");
        return Err(USAGE);
    }
    let job = load(path)?;
    let target = output.unwrap_or_else(|| path.with_extension("pdf"));
    let template = template_choice(template, &job)?;
    // A template named on the command line is read too: the report never takes its place.
    if let Template::File { name, .. } = &template {
        if std::fs::canonicalize(name).ok().as_ref() == Some(&where_written(&target)) {
            say_err!("{}: the report would overwrite {}, the template it is drawn with", path.display(), target.display());
            say_err!("  hint: write the report elsewhere with -o, such as -o {}", elsewhere(path, "report.pdf").display());
            return Err(PROBLEMS);
        }
    }
    let template_arg = match &template {
        Template::File { name, .. } if cli_template => Some(name.clone()),
        _ => None,
    };
    let outcome = render_to(path, &job, &template, &target, template_arg.as_deref())?;
    Ok((job, outcome, target))
}

/// The files a job read, and the job file itself, as their real paths.
fn read_by(path: &Path, job: &Job) -> Vec<PathBuf> {
    let folder = path.parent().filter(|p| !p.as_os_str().is_empty()).unwrap_or(Path::new("."));
    std::iter::once(path.to_path_buf()).chain(job.inputs.iter().map(|i| folder.join(&i.name))).filter_map(|p| std::fs::canonicalize(p).ok()).collect()
}

/// Where a file written to `target` lands: its folder's real path and its name.
fn where_written(target: &Path) -> PathBuf {
    let dir = target.parent().filter(|p| !p.as_os_str().is_empty()).unwrap_or(Path::new("."));
    let dir = std::fs::canonicalize(dir).unwrap_or_else(|_| dir.to_path_buf());
    dir.join(target.file_name().unwrap_or_default())
}

/// A name beside the job for what it writes, `JOB-report.pdf`, that no input can have
/// unless the shop named one so.
fn elsewhere(path: &Path, suffix: &str) -> PathBuf {
    let stem = path.file_stem().map(|s| s.to_string_lossy().into_owned()).unwrap_or_else(|| "job".into());
    path.with_file_name(format!("{stem}-{suffix}"))
}

/// Set in the child process that draws a report with a shop's own template.
const CONFINED: &str = "VOICEKEEP_CONFINED_RENDER";

/// `template_arg` is the `--template` the command line gave, if any (the child is given it
/// again); without it the template is the job's own.
/// Returns the job's results when it solved them here (a shop's template renders in a child).
fn render_to(path: &Path, job: &Job, template: &Template, target: &Path, template_arg: Option<&str>) -> Result<Option<analysis::Outcome>, u8> {
    // A quotation offers work: choices (`options`) or one proposal (`changes`).
    let proposes = !job.options.is_empty() || !job.changes.is_empty() || job.cabinets.iter().any(|c| !c.changes.is_empty());
    let worked = job.work_done();
    let others = |but: &str| {
        let list: Vec<&str> = ["customer", "archive"]
            .into_iter()
            .chain(worked.then_some("sale"))
            .chain(proposes.then_some("quote"))
            .chain(worked.then_some("invoice"))
            .filter(|t| *t != but)
            .collect();
        list.join(", ")
    };
    if *template == Template::Quote && !proposes {
        say_err!("{}: a quotation offers work, and this job lists neither `options` nor `changes`", path.display());
        say_err!("  hint: list the customer's choices under `options`, or the work you propose under `changes`; or choose another template ({})", others("quote"));
        return Err(PROBLEMS);
    }
    // A sale sheet records a refurbishment: a job with no work done has none to record.
    if *template == Template::Sale && !worked {
        say_err!("{}: a sale sheet records the work done on the speaker, and this job lists no work done (`changes`)", path.display());
        say_err!("  hint: list the work done under `changes`; for a speaker inspected or quoted but not worked on, choose another template ({})", others("sale"));
        return Err(PROBLEMS);
    }
    // The report never takes the place of the job or of anything it read.
    if read_by(path, job).contains(&where_written(target)) {
        say_err!("{}: the report would overwrite {}, one of the job's own inputs", path.display(), target.display());
        say_err!("  hint: write the report elsewhere with -o, such as -o {}", elsewhere(path, "report.pdf").display());
        return Err(PROBLEMS);
    }
    // A shop's own template is code: it runs in a child process of its own, stopped when it
    // runs too long or too large, so a loop in it cannot hang the run or take the machine.
    if let Template::File { name, .. } = template {
        if std::env::var_os(CONFINED).is_none() {
            return confined::render(path, name, template_arg, target).map(|()| None);
        }
        confined::limit_memory();
    }
    let f = analyse(path, job)?;
    // An invoice bills work done with every line priced.
    if *template == Template::Invoice {
        if let Some((message, hint)) = report::data::invoice::refusal(job, report::data::invoice::parts_of(&f)) {
            say_err!("{}: {message}", path.display());
            say_err!("  hint: {hint}");
            return Err(PROBLEMS);
        }
    }
    let pdf = report::render_outcome(job, &f, template).map_err(|e| {
        say_err!("{}: {e}", path.display());
        if matches!(e, report::ReportError::Template { .. }) {
            PROBLEMS
        } else {
            FAILURE
        }
    })?;
    report::write_atomically(target, &pdf).map_err(|e| {
        say_err!("voicekeep: cannot write {}: {e}", target.display());
        FAILURE
    })?;
    Ok(Some(f))
}

/// The width `solve` wraps its text to: the terminal's, or 100 columns when the output is
/// not a terminal.
fn text_width() -> usize {
    match terminal_size::terminal_size() {
        Some((terminal_size::Width(w), _)) if w >= 40 => w as usize,
        _ => 100,
    }
}

mod batch;
mod check_json;
mod confined;
mod docs;
mod examples;
mod find;
mod netlist;
mod plot;
mod soundcard;
mod starter;
mod watch;
use starter::starter;
