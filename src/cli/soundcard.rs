//! `signal` and `measure`: an impedance sweep at the terminals from a stereo sound card and
//! one resistor (the method in `crate::soundcard`).

use std::path::{Path, PathBuf};

use super::{done, out, FAILURE, PROBLEMS, USAGE};
use crate::soundcard::{self, Recording, Refusal, Setup, Sweep};

/// The test signal's parameters, the same for `signal` and `measure`.
#[derive(clap::Args, Debug, Clone)]
pub struct SweepArgs {
    /// The sweep's lowest frequency, Hz
    #[arg(long, default_value_t = 10.0)]
    low_hz: f64,
    /// The sweep's highest frequency, Hz (below half the sample rate)
    #[arg(long, default_value_t = 22_000.0)]
    high_hz: f64,
    /// Sample rate, Hz: 44100, 48000 or 96000
    #[arg(long, default_value_t = 48_000)]
    rate: u32,
    /// The sweep's length, s
    #[arg(long, default_value_t = 5.0)]
    seconds: f64,
    /// The sweep's peak level, dB re full scale
    #[arg(long, default_value_t = -12.0, allow_hyphen_values = true)]
    level_dbfs: f64,
    /// Silence before the first sweep, s (the noise is measured there)
    #[arg(long, default_value_t = 0.5)]
    lead: f64,
    /// Silence after each sweep, s
    #[arg(long, default_value_t = 0.5)]
    tail: f64,
    /// Sweeps one after another, averaged by `measure`
    #[arg(long, default_value_t = 1)]
    repeats: u32,
}

impl SweepArgs {
    fn sweep(&self) -> Sweep {
        Sweep {
            rate: self.rate,
            from_hz: self.low_hz,
            to_hz: self.high_hz,
            seconds: self.seconds,
            level_dbfs: self.level_dbfs,
            lead_s: self.lead,
            tail_s: self.tail,
            repeats: self.repeats,
        }
    }
}

fn refused(what: &str, r: &Refusal) -> u8 {
    say_err!("{what}: {}", r.message);
    say_err!("  hint: {}", r.hint);
    PROBLEMS
}

/// A file's name as a comment line holds it: control characters (a line break in a name)
/// escaped, so a name cannot add a line to the table.
fn name_of(p: &Path) -> String {
    let n = p.file_name().map(|n| n.to_string_lossy().into_owned()).unwrap_or_default();
    n.chars().map(|c| if c.is_control() { c.escape_default().to_string() } else { c.to_string() }).collect()
}

fn write(file: &Path, bytes: &[u8]) -> u8 {
    match crate::report::write_atomically(file, bytes) {
        Ok(()) => done(&format!("wrote {}\n", file.display())),
        Err(e) => {
            say_err!("voicekeep: cannot write {}: {e}", file.display());
            FAILURE
        }
    }
}

/// Writes the sweep as a WAV file and prints the wiring and the cautions.
pub fn signal(c: &SignalCmd) -> u8 {
    let (sweep, output) = (c.sweep.sweep(), &c.output);
    if let Err(r) = sweep.check() {
        refused("voicekeep signal", &r);
        return USAGE;
    }
    let bytes = match soundcard::write_signal(&sweep) {
        Ok(b) => b,
        Err(e) => {
            say_err!("voicekeep: cannot make the signal: {e}");
            return FAILURE;
        }
    };
    let code = write(output, &bytes);
    if code == 0 && !super::QUIET.load(std::sync::atomic::Ordering::Relaxed) {
        let a = &c.sweep;
        say_err!("{}", soundcard::WIRING);
        say_err!(
            "\nThen: voicekeep measure RECORDING.wav --reference OHM --calibration CALIBRATION.wav --seconds {} --rate {} --low-hz {} --high-hz {} --repeats {} -o TABLE.csv",
            a.seconds,
            a.rate,
            a.low_hz,
            a.high_hz,
            a.repeats
        );
    }
    code
}

#[derive(clap::Args, Debug)]
pub struct SignalCmd {
    /// Where to write the WAV file (mono, 24-bit)
    #[arg(short, long, default_value = "sweep.wav")]
    output: PathBuf,
    #[command(flatten)]
    sweep: SweepArgs,
}

#[derive(clap::Args, Debug)]
pub struct MeasureCmd {
    /// The recording: WAV, stereo, 16-, 24- or 32-bit integer or 32-bit float
    recording: PathBuf,
    /// The reference resistor's measured value, 10 to 100 ohm (such as "22.1 ohm")
    #[arg(long)]
    reference: String,
    /// A recording with both inputs on the drive point, to divide out the channels' mismatch
    #[arg(long)]
    calibration: Option<PathBuf>,
    /// The input that read the drive (across resistor and speaker): 1 (left) or 2 (right)
    #[arg(long, default_value_t = 1, value_parser = clap::value_parser!(u8).range(1..=2))]
    drive_channel: u8,
    /// Points an octave in the table
    #[arg(long, default_value_t = 48)]
    per_octave: u32,
    /// The table's lowest frequency, Hz
    #[arg(long, default_value_t = 20.0)]
    from_hz: f64,
    /// The table's highest frequency, Hz
    #[arg(long, default_value_t = 20_000.0)]
    to_hz: f64,
    /// Leave out points whose signal-to-noise ratio is below this, dB (45 dB: noise of about 0.6 % on |Z|)
    #[arg(long, default_value_t = 45.0)]
    min_snr_db: f64,
    /// Where to write the table (default: standard output)
    #[arg(short, long)]
    output: Option<PathBuf>,
    #[command(flatten)]
    sweep: SweepArgs,
}

/// A resistance as typed: a bare number of ohms ("22"), or as a job file writes one ("22 ohm",
/// "22.1 Ω", "0.022 kohm", "22R"; "ohms" read as "ohm").
fn ohms(text: &str) -> Option<f64> {
    let t = text.trim();
    if let Ok(v) = t.parse::<f64>() {
        return Some(v).filter(|v| v.is_finite());
    }
    let t = t.strip_suffix("ohms").map(|x| format!("{x}ohm")).unwrap_or_else(|| t.to_string());
    crate::units::parse_value(&t, crate::units::Quantity::Resistance).ok()
}

fn read(path: &Path, drive_channel: u8) -> Result<(Recording, String), u8> {
    let bytes = std::fs::read(path).map_err(|e| {
        say_err!("{}: cannot read the recording: {e}", path.display());
        PROBLEMS
    })?;
    use sha2::Digest;
    let hash: String = sha2::Sha256::digest(&bytes).iter().map(|b| format!("{b:02x}")).collect();
    match soundcard::read_recording(&bytes, drive_channel) {
        Ok(r) => Ok((r, hash)),
        Err(r) => Err(refused(&path.display().to_string(), &r)),
    }
}

/// Turns a stereo recording of the sweep into the impedance table a job's `terminals` and
/// `characterise` read.
pub fn measure(a: &MeasureCmd) -> u8 {
    let sweep = a.sweep.sweep();
    if let Err(r) = sweep.check() {
        refused("voicekeep measure", &r);
        return USAGE;
    }
    if !(0.0..=100.0).contains(&a.min_snr_db) {
        say_err!("voicekeep measure: --min-snr-db {} is not a threshold of 0 to 100 dB", a.min_snr_db);
        say_err!("  hint: 45 dB (the default) keeps noise on |Z| to about 0.6 %; lower keeps more points, noisier");
        return USAGE;
    }
    let Some(reference_ohm) = ohms(&a.reference).filter(|v| (10.0..=100.0).contains(v)) else {
        say_err!("voicekeep measure: --reference \"{}\" is not a resistance of 10 to 100 ohm", a.reference);
        say_err!("  hint: give the reference resistor's measured value, such as --reference \"22.1 ohm\"; 10 to 100 ohm keeps the speaker's share of the drive readable");
        return USAGE;
    };
    if !(a.from_hz >= sweep.from_hz && a.to_hz <= sweep.to_hz && a.to_hz > a.from_hz && (1..=96).contains(&a.per_octave)) {
        say_err!(
            "voicekeep measure: a table from {} Hz to {} Hz at {} points an octave, from a sweep of {} Hz to {} Hz",
            a.from_hz,
            a.to_hz,
            a.per_octave,
            sweep.from_hz,
            sweep.to_hz
        );
        say_err!("  hint: the table lies within the sweep (--low-hz, --high-hz), with 1 to 96 points an octave");
        return USAGE;
    }
    let (rec, rec_hash) = match read(&a.recording, a.drive_channel) {
        Ok(r) => r,
        Err(c) => return c,
    };
    let cal = match &a.calibration {
        Some(p) => match read(p, a.drive_channel) {
            Ok(r) => Some(r),
            Err(c) => return c,
        },
        None => None,
    };
    let freqs = soundcard::frequencies(a.from_hz, a.to_hz, a.per_octave);
    let setup = Setup { sweep: &sweep, reference_ohm, freqs: &freqs, min_snr_db: a.min_snr_db };
    let m = match soundcard::measure(&rec, cal.as_ref().map(|c| &c.0), &setup) {
        Ok(m) => m,
        Err(r) => return refused(&a.recording.display().to_string(), &r),
    };
    let mut notes = vec![format!("recording {} ({}, drive on channel {}), SHA-256 {rec_hash}", name_of(&a.recording), rec.format, a.drive_channel)];
    if let (Some(p), Some((c, h))) = (&a.calibration, &cal) {
        notes.push(format!("calibration recording {} ({}), SHA-256 {h}", name_of(p), c.format));
    }
    let text = soundcard::table(&m, &setup, &notes);
    if a.calibration.is_none() {
        say_err!("{}: warning: no calibration recording: the inputs' own gain and phase mismatch (often tenths of a dB, a few degrees) stays in the table and can move |Z| by several per cent", a.recording.display());
        say_err!("  hint: record the signal once more with both inputs on the amplifier's output and give it with --calibration");
    }
    let dropped = m.kept.iter().filter(|k| !**k).count();
    if dropped > 0 {
        say_err!("{}: {dropped} of {} points fell below the {} dB signal-to-noise threshold and were left out of the table", a.recording.display(), m.freqs.len(), a.min_snr_db);
    }
    match &a.output {
        None => out(&text),
        Some(file) => {
            // The same file by any path: a link to a recording is the recording.
            let same =
                |p: &Path| super::where_written(p) == super::where_written(file) || std::fs::canonicalize(p).ok().is_some_and(|c| std::fs::canonicalize(file).ok() == Some(c));
            if [Some(&a.recording), a.calibration.as_ref()].into_iter().flatten().any(|p| same(p)) {
                say_err!("voicekeep measure: the table would overwrite {}, one of its own recordings", file.display());
                return PROBLEMS;
            }
            write(file, text.as_bytes())
        }
    }
}
