//! Impedance at the terminals from a stereo sound card and one resistor.
//!
//! The amplifier drives a reference resistor R in series with the speaker; one input reads the
//! drive across both (Vd), the other the speaker's terminals (Vs), and
//! Z = R Vs / (Vd - Vs). The test signal is an exponential sine sweep (A. Farina,
//! "Simultaneous measurement of impulse response and distortion with a swept-sine technique",
//! AES 108th Convention, 2000, preprint 5093): each channel of the recording is deconvolved by
//! the sweep, which puts the harmonic distortion ahead of the linear response, where a window
//! leaves it out. Both channels pass through the same sound card, so its response cancels in
//! Vs / Vd; a calibration recording with both inputs on one point measures what is left (the
//! channels' own gain and phase mismatch) and is divided out.

use num_complex::Complex64;
use realfft::RealFftPlanner;
use std::f64::consts::{LN_2, PI};

/// The test signal's parameters. The played file is `lead_s` of silence, then `repeats` times
/// the sweep followed by `tail_s` of silence.
#[derive(Debug, Clone, PartialEq)]
pub struct Sweep {
    pub rate: u32,
    pub from_hz: f64,
    pub to_hz: f64,
    pub seconds: f64,
    /// The sweep's peak, dB re full scale.
    pub level_dbfs: f64,
    pub lead_s: f64,
    pub tail_s: f64,
    pub repeats: u32,
}

/// A refusal, said with what to do about it.
#[derive(Debug, Clone, PartialEq)]
pub struct Refusal {
    pub message: String,
    pub hint: String,
}

fn refuse<T>(message: impl Into<String>, hint: impl Into<String>) -> Result<T, Refusal> {
    Err(Refusal { message: message.into(), hint: hint.into() })
}

/// round(x) as the signal's definition takes it: halves away from zero.
fn round(x: f64) -> usize {
    (x + 0.5).floor().max(0.0) as usize
}

/// The half-Hann fade: 0.5 (1 - cos(pi k / m)) for k < m, else 1.
fn fade(k: usize, m: usize) -> f64 {
    if k < m {
        0.5 * (1.0 - (PI * k as f64 / m as f64).cos())
    } else {
        1.0
    }
}

impl Sweep {
    /// The ranges a bench uses; each mistake said with its limit.
    pub fn check(&self) -> Result<(), Refusal> {
        if ![44_100, 48_000, 96_000].contains(&self.rate) {
            return refuse(format!("a sample rate of {} Hz", self.rate), "use 44100, 48000 or 96000 Hz, a rate every sound card offers");
        }
        let nyquist = self.rate as f64 / 2.0;
        if !(self.from_hz >= 1.0 && self.to_hz > 2.0 * self.from_hz && self.to_hz < nyquist) {
            return refuse(
                format!("a sweep from {} Hz to {} Hz at {} Hz", self.from_hz, self.to_hz, self.rate),
                format!("the sweep must start at 1 Hz or above, cover more than an octave and end below half the sample rate ({nyquist} Hz)"),
            );
        }
        if !(0.5..=60.0).contains(&self.seconds) {
            return refuse(format!("a sweep of {} s", self.seconds), "give 0.5 to 60 s (5 s is a good start; longer sweeps beat more noise)");
        }
        if !(-60.0..=-1.0).contains(&self.level_dbfs) {
            return refuse(format!("a level of {} dBFS", self.level_dbfs), "give -60 to -1 dBFS (the default -12 leaves room for the amplifier's and the card's gain)");
        }
        if !(0.1..=10.0).contains(&self.lead_s) || !(0.1..=10.0).contains(&self.tail_s) {
            return refuse("a lead-in or tail outside 0.1 to 10 s", "the lead-in measures the noise and the tail holds the response's decay: give each 0.1 to 10 s");
        }
        if !(1..=16).contains(&self.repeats) {
            return refuse(format!("{} repeats", self.repeats), "give 1 to 16 repeats");
        }
        let played = self.lead() + self.repeats as usize * self.period();
        if played + round(self.seconds * self.fs()) > MAX_FFT {
            return refuse(
                format!("a signal of {:.1} s at {} Hz", played as f64 / self.fs(), self.rate),
                format!(
                    "keep the lead-in, sweeps and tails together under about {:.0} s at this rate (fewer or shorter sweeps), so `measure` can read the recording whole",
                    (MAX_FFT as f64 / self.fs()) * 0.9 - self.seconds
                ),
            );
        }
        Ok(())
    }

    /// L = T / ln(f2 / f1): the time the sweep takes to rise by a factor of e.
    pub fn l(&self) -> f64 {
        self.seconds / (self.to_hz / self.from_hz).ln()
    }

    fn fs(&self) -> f64 {
        self.rate as f64
    }

    /// One sweep: N = round(T fs) samples, A sin(2 pi f1 L (exp(t / L) - 1)), faded in over
    /// its first half octave and out over its last sixth of an octave.
    pub fn one(&self) -> Vec<f64> {
        let (fs, l) = (self.fs(), self.l());
        let n = round(self.seconds * fs);
        let (n_in, n_out) = (round(fs * l * LN_2 / 2.0), round(fs * l * LN_2 / 6.0));
        let a = 10f64.powf(self.level_dbfs / 20.0);
        (0..n)
            .map(|i| {
                let t = i as f64 / fs;
                a * (2.0 * PI * self.from_hz * l * ((t / l).exp() - 1.0)).sin() * fade(i, n_in) * fade(n - 1 - i, n_out)
            })
            .collect()
    }

    pub fn lead(&self) -> usize {
        round(self.lead_s * self.fs())
    }

    /// Samples from one sweep's start to the next's.
    pub fn period(&self) -> usize {
        round(self.seconds * self.fs()) + round(self.tail_s * self.fs())
    }

    /// The whole played file.
    pub fn played(&self) -> Vec<f64> {
        let one = self.one();
        let mut out = vec![0.0; self.lead()];
        for _ in 0..self.repeats {
            out.extend_from_slice(&one);
            out.extend(std::iter::repeat_n(0.0, self.period() - one.len()));
        }
        out
    }
}

/// Writes the played file as a mono 24-bit WAV.
pub fn write_signal(sweep: &Sweep) -> Result<Vec<u8>, String> {
    let spec = hound::WavSpec { channels: 1, sample_rate: sweep.rate, bits_per_sample: 24, sample_format: hound::SampleFormat::Int };
    let mut buf = std::io::Cursor::new(Vec::new());
    let mut w = hound::WavWriter::new(&mut buf, spec).map_err(|e| e.to_string())?;
    let full = (1i32 << 23) - 1;
    for x in sweep.played() {
        w.write_sample((x * full as f64).round() as i32).map_err(|e| e.to_string())?;
    }
    w.finalize().map_err(|e| e.to_string())?;
    Ok(buf.into_inner())
}

/// A stereo recording, drive and speaker channels in full-scale units.
#[derive(Debug, Clone)]
pub struct Recording {
    pub rate: u32,
    pub drive: Vec<f64>,
    pub speaker: Vec<f64>,
    pub format: String,
}

/// Reads a WAV recording (16-, 24- or 32-bit integer or 32-bit float, two channels);
/// `drive_channel` 1 or 2 says which input read the drive. A clipped sample is refused with
/// its time.
pub fn read_recording(bytes: &[u8], drive_channel: u8) -> Result<Recording, Refusal> {
    let reader = match hound::WavReader::new(std::io::Cursor::new(bytes)) {
        Ok(r) => r,
        Err(e) => return refuse(format!("not a WAV file this reads ({e})"), "save the recording as WAV: 16-, 24- or 32-bit integer, or 32-bit float"),
    };
    let spec = reader.spec();
    if spec.channels != 2 {
        return refuse(
            format!("the recording has {} channel{}, not two", spec.channels, if spec.channels == 1 { "" } else { "s" }),
            "record in stereo: one input across the reference resistor and the speaker together (the drive), the other across the speaker alone",
        );
    }
    let (samples, full, format): (Vec<f64>, f64, String) = match (spec.sample_format, spec.bits_per_sample) {
        (hound::SampleFormat::Float, 32) => {
            let s: Result<Vec<f32>, _> = reader.into_samples::<f32>().collect();
            (s.map_err(|e| Refusal { message: format!("a damaged WAV file ({e})"), hint: "record again".into() })?.into_iter().map(f64::from).collect(), 1.0, "32-bit float".into())
        }
        (hound::SampleFormat::Int, b @ (16 | 24 | 32)) => {
            let s: Result<Vec<i32>, _> = reader.into_samples::<i32>().collect();
            let full = (1i64 << (b - 1)) as f64;
            (
                s.map_err(|e| Refusal { message: format!("a damaged WAV file ({e})"), hint: "record again".into() })?.into_iter().map(|x| x as f64 / full).collect(),
                1.0,
                format!("{b}-bit integer"),
            )
        }
        (f, b) => {
            return refuse(
                format!("a {b}-bit {} WAV file", if f == hound::SampleFormat::Float { "float" } else { "integer" }),
                "save the recording as 16-, 24- or 32-bit integer, or 32-bit float",
            )
        }
    };
    // Full scale: an integer's highest code is 1 - 2^-(b-1), a float's 1.0.
    let top = match spec.sample_format {
        hound::SampleFormat::Float => 1.0,
        hound::SampleFormat::Int => 1.0 - 1.5 / (1i64 << (spec.bits_per_sample - 1)) as f64,
    } * full;
    if let Some(i) = samples.iter().position(|x| x.abs() >= top) {
        let frame = i / 2;
        return refuse(
            format!("the recording clips: channel {} reaches full scale at {:.3} s", i % 2 + 1, frame as f64 / spec.sample_rate as f64),
            "lower the amplifier's gain or the signal's level (--level-dbfs) and record again; a clipped sweep gives a false impedance",
        );
    }
    let (a, b): (Vec<f64>, Vec<f64>) = samples.chunks_exact(2).map(|c| (c[0], c[1])).unzip();
    let (drive, speaker) = if drive_channel == 2 { (b, a) } else { (a, b) };
    Ok(Recording { rate: spec.sample_rate, drive, speaker, format })
}

/// The windows that cut each response out of the deconvolved recording, by band: long below
/// 1 kHz (the resonances ring), short above (less noise); each with 10 ms half-Hann ends.
/// (lowest Hz, seconds before the response's peak, seconds after it.)
const WINDOWS: [(f64, f64, f64); 2] = [(0.0, 0.100, 0.400), (1000.0, 0.020, 0.050)];
const WINDOW_FADE_S: f64 = 0.010;

/// Each channel's windowed response at the table's frequencies.
struct Responses {
    drive: Vec<Complex64>,
    speaker: Vec<Complex64>,
    /// Each frequency's signal-to-noise ratio (power): the worst of drive, speaker and their
    /// difference against the lead-in's noise, and with repeats, of their mean against the
    /// spread between them.
    snr: Vec<f64>,
    /// The repeats read (those the recording holds whole).
    repeats: usize,
}

/// Each channel deconvolved by the sweep: X S* / (|S|² + e), e a millionth of |S|²'s peak,
/// so that frequencies the sweep does not reach come out as nothing rather than noise.
fn deconvolve(channels: [&[f64]; 2], sweep: &[f64], nfft: usize, planner: &mut RealFftPlanner<f64>) -> [Vec<f64>; 2] {
    let fwd = planner.plan_fft_forward(nfft);
    let inv = planner.plan_fft_inverse(nfft);
    let spectrum = |v: &[f64]| {
        let mut buf = vec![0.0; nfft];
        buf[..v.len().min(nfft)].copy_from_slice(&v[..v.len().min(nfft)]);
        let mut out = fwd.make_output_vec();
        fwd.process(&mut buf, &mut out).expect("lengths set above");
        out
    };
    let s = spectrum(sweep);
    let peak = s.iter().map(|c| c.norm_sqr()).fold(0.0, f64::max);
    let g: Vec<Complex64> = s.iter().map(|sk| sk.conj() / (sk.norm_sqr() + 1e-6 * peak) / nfft as f64).collect();
    channels.map(|x| {
        let mut xs = spectrum(x);
        for (xk, gk) in xs.iter_mut().zip(&g) {
            *xk *= gk;
        }
        xs[0].im = 0.0;
        let last = xs.len() - 1;
        xs[last].im = 0.0;
        let mut out = inv.make_output_vec();
        inv.process(&mut xs, &mut out).expect("lengths set above");
        out
    })
}

/// Σ w[k] h[k] e^(-j 2 pi f k / fs) for every f, k counted from the window's start (the same
/// start for both channels, so the time origin cancels in their ratio).
fn spectrum_at(h: &[f64], freqs: &[f64], fs: f64) -> Vec<Complex64> {
    freqs
        .iter()
        .map(|&f| {
            let step = Complex64::from_polar(1.0, -2.0 * PI * f / fs);
            let mut rot = Complex64::new(1.0, 0.0);
            let mut sum = Complex64::new(0.0, 0.0);
            for (k, &v) in h.iter().enumerate() {
                sum += rot * v;
                rot *= step;
                if k % 1024 == 1023 {
                    rot = Complex64::from_polar(1.0, -2.0 * PI * f * (k + 1) as f64 / fs);
                }
            }
            sum
        })
        .collect()
}

/// The noise's one-sided power density (full scale² per Hz) around each frequency, from the
/// silence before the sweep (Welch's method: Hann segments of 2048 samples, half overlapped),
/// averaged over a third of an octave.
fn noise_density(x: &[f64], freqs: &[f64], fs: f64, planner: &mut RealFftPlanner<f64>) -> Vec<f64> {
    const SEG: usize = 2048;
    let fwd = planner.plan_fft_forward(SEG);
    let w: Vec<f64> = (0..SEG).map(|k| 0.5 * (1.0 - (2.0 * PI * k as f64 / SEG as f64).cos())).collect();
    let wsum: f64 = w.iter().map(|v| v * v).sum();
    let mut psd = vec![0.0; SEG / 2 + 1];
    let mut count = 0;
    let mut start = 0;
    while start + SEG <= x.len() {
        let mut buf: Vec<f64> = x[start..start + SEG].iter().zip(&w).map(|(a, b)| a * b).collect();
        let mut out = fwd.make_output_vec();
        fwd.process(&mut buf, &mut out).expect("lengths set above");
        for (p, c) in psd.iter_mut().zip(&out) {
            *p += 2.0 * c.norm_sqr() / (fs * wsum);
        }
        count += 1;
        start += SEG / 2;
    }
    let bin = fs / SEG as f64;
    freqs
        .iter()
        .map(|&f| {
            let lo = ((f * 2f64.powf(-1.0 / 6.0)) / bin).floor().max(1.0) as usize;
            let hi = ((f * 2f64.powf(1.0 / 6.0)) / bin).ceil().max(lo as f64) as usize;
            let hi = hi.min(psd.len() - 1);
            let band = &psd[lo.min(hi)..=hi];
            band.iter().sum::<f64>() / band.len() as f64 / count.max(1) as f64
        })
        .collect()
}

/// The largest FFT the measurement takes: 2^22 points, about 87 s of recording at 48 kHz with
/// its sweep (under a gigabyte of memory with the calibration).
pub const MAX_FFT: usize = 1 << 22;

/// How long the first burst of signal on a channel lasts, from 10 ms blocks above a tenth of
/// the loudest block's level; None when nothing stands clear of the noise.
fn burst_seconds(x: &[f64], fs: f64) -> Option<f64> {
    let n = round(0.010 * fs).max(1);
    let rms: Vec<f64> = x.chunks(n).map(|c| (c.iter().map(|v| v * v).sum::<f64>() / c.len() as f64).sqrt()).collect();
    let top = rms.iter().copied().fold(0.0, f64::max);
    let mut sorted = rms.clone();
    sorted.sort_by(f64::total_cmp);
    let floor = sorted[sorted.len() / 10];
    if top < 30.0 * floor.max(1e-12) {
        return None;
    }
    let start = rms.iter().position(|&r| r > 0.1 * top)?;
    // The burst ends where the level stays below the mark for 50 ms.
    let mut end = start;
    let mut quiet = 0;
    for (k, &r) in rms.iter().enumerate().skip(start) {
        if r > 0.1 * top {
            end = k;
            quiet = 0;
        } else {
            quiet += 1;
            if quiet >= 5 {
                break;
            }
        }
    }
    Some((end + 1 - start) as f64 * n as f64 / fs)
}

fn responses(rec: &Recording, sweep: &Sweep, freqs: &[f64], calibration: bool) -> Result<Responses, Refusal> {
    let fs = sweep.fs();
    let one = sweep.one();
    let len = rec.drive.len();
    if len + one.len() > MAX_FFT {
        return refuse(
            format!(
                "the recording lasts {:.1} s: with a {} s sweep, at most {:.1} s is read at {} Hz",
                len as f64 / fs,
                sweep.seconds,
                (MAX_FFT - one.len()) as f64 / fs,
                sweep.rate
            ),
            "record just the signal, from a moment before it starts to a moment after it ends (or use fewer or shorter sweeps)",
        );
    }
    // A DC offset on an input is no part of the speaker's response.
    let mean = |x: &[f64]| x.iter().sum::<f64>() / x.len() as f64;
    let (md, ms) = (mean(&rec.drive), mean(&rec.speaker));
    let vd: Vec<f64> = rec.drive.iter().map(|v| v - md).collect();
    let vs: Vec<f64> = rec.speaker.iter().map(|v| v - ms).collect();
    // The sweep the recording holds against the one the options describe: a wrong --seconds
    // smears the deconvolution, so it is said rather than blamed on noise.
    if let Some(heard) = burst_seconds(&vd, fs) {
        if (heard - sweep.seconds).abs() > 0.03 * sweep.seconds + 0.05 {
            return refuse(
                format!("the sweep in the recording lasts about {heard:.1} s, not the {} s given", sweep.seconds),
                format!("give the signal's own settings: --seconds {:.1} if that is the sweep `signal` wrote (and its --rate, --low-hz, --high-hz and --repeats)", heard),
            );
        }
    }
    if len < one.len() + 4096 {
        return refuse(
            format!("the recording lasts {:.2} s, shorter than the sweep ({:.2} s) with a lead-in", len as f64 / fs, one.len() as f64 / fs),
            "record from before the signal starts to after it ends, and give the signal's own --seconds",
        );
    }
    let nfft = (len + one.len()).next_power_of_two();
    let mut planner = RealFftPlanner::<f64>::new();
    let [hd, hs] = deconvolve([&vd, &vs], &one, nfft, &mut planner);
    // The response: the largest value, then back a sweep's period at a time while an earlier
    // repeat's response stands as high (the first sweep's, wherever the recording started).
    let (mut peak, top) = hd.iter().enumerate().map(|(i, v)| (i, v.abs())).fold((0, 0.0), |m, x| if x.1 > m.1 { x } else { m });
    while peak >= sweep.period() && hd[peak - sweep.period()].abs() >= 0.5 * top {
        peak -= sweep.period();
    }
    let rms = (hd.iter().map(|v| v * v).sum::<f64>() / nfft as f64).sqrt();
    if top < 30.0 * rms {
        return refuse(
            "no sweep found in the recording (its deconvolution shows no response above the noise)",
            "check that the recording holds the signal `voicekeep signal` wrote, played through the amplifier loud enough to hear, and that --seconds, --low-hz and --high-hz are the signal's",
        );
    }
    // Input 2 reading nothing while the drive is loud is a loose lead, not a quiet signal.
    let sweep_part = peak..(peak + one.len()).min(len);
    let power = |x: &[f64]| x[sweep_part.clone()].iter().map(|v| v * v).sum::<f64>();
    if power(&vs) < 1e-6 * power(&vd) {
        return refuse(
            "input 2 reads almost nothing while the drive is loud",
            if calibration {
                "for the calibration, connect both inputs to the amplifier's output"
            } else {
                "connect input 2 across the speaker's terminals (and input 1 across the amplifier's output)"
            },
        );
    }
    // Harmonics lie ahead of the response, the second at L ln 2: the window starts short of it.
    let l = sweep.l();
    let mut drive = vec![Complex64::new(0.0, 0.0); freqs.len()];
    let mut speaker = drive.clone();
    let mut width = vec![0.0; freqs.len()];
    // With repeats, each sweep's own Vs / Vd: their spread is a second measure of the noise.
    // The repeats the recording holds whole (a calibration may have been recorded with one).
    let repeats = (sweep.repeats as usize).min(len.saturating_sub(peak + one.len()) / sweep.period() + 1).max(1);
    let mut spread = vec![0.0; freqs.len()];
    for (wi, &(lowest, pre, post)) in WINDOWS.iter().enumerate() {
        let highest = WINDOWS.get(wi + 1).map(|w| w.0).unwrap_or(f64::INFINITY);
        let idx: Vec<usize> = (0..freqs.len()).filter(|&i| freqs[i] >= lowest && freqs[i] < highest).collect();
        if idx.is_empty() {
            continue;
        }
        let pre = round(pre.min(0.8 * l * LN_2) * fs);
        let post = round(post.min(sweep.tail_s * 0.9) * fs);
        let n_fade = round(WINDOW_FADE_S * fs).min(pre).max(1);
        let n = pre + post;
        let w: Vec<f64> = (0..n).map(|k| fade(k, n_fade) * fade(n - 1 - k, n_fade)).collect();
        // One repeat's windowed response, or (None) the mean of every repeat's.
        let cut = |h: &[f64], only: Option<usize>| -> Vec<f64> {
            let which: Vec<usize> = only.map(|r| vec![r]).unwrap_or_else(|| (0..repeats).collect());
            (0..n)
                .map(|k| {
                    let sum: f64 = which.iter().map(|r| h[(peak + r * sweep.period() + nfft + k - pre) % nfft]).sum();
                    w[k] * sum / which.len() as f64
                })
                .collect()
        };
        let f: Vec<f64> = idx.iter().map(|&i| freqs[i]).collect();
        let (d, s) = (spectrum_at(&cut(&hd, None), &f, fs), spectrum_at(&cut(&hs, None), &f, fs));
        if repeats > 1 {
            let each: Vec<Vec<Complex64>> = (0..repeats)
                .map(|r| {
                    let (dr, sr) = (spectrum_at(&cut(&hd, Some(r)), &f, fs), spectrum_at(&cut(&hs, Some(r)), &f, fs));
                    sr.iter().zip(&dr).map(|(a, b)| a / b).collect()
                })
                .collect();
            for (j, &i) in idx.iter().enumerate() {
                let mean = s[j] / d[j];
                // The variance of the mean of the repeats, relative to the mean's power.
                let var: f64 = each.iter().map(|e| (e[j] - mean).norm_sqr()).sum::<f64>() / (repeats * (repeats - 1)) as f64;
                spread[i] = var / mean.norm_sqr().max(1e-30);
            }
        }
        let effective = w.iter().map(|v| v * v).sum::<f64>() / fs;
        for (j, &i) in idx.iter().enumerate() {
            drive[i] = d[j];
            speaker[i] = s[j];
            width[i] = effective;
        }
    }
    // Signal-to-noise: a channel's energy per hertz as the sweep passes f (its power then,
    // times L / f, the time the sweep spends per hertz), against the noise's density over the
    // window's length; repeats average the noise down.
    // The noise: everything recorded before the sweep starts (10 ms kept clear of it).
    let quiet_end = peak.saturating_sub(round(0.010 * fs));
    if quiet_end < 4096 {
        return refuse(
            "the recording holds too little silence before the sweep to measure the noise",
            "start recording a moment before the signal plays (the signal's lead-in of 0.1 s or more, --lead)",
        );
    }
    let diff: Vec<f64> = vd.iter().zip(&vs).map(|(a, b)| a - b).collect();
    let mut snr = vec![f64::INFINITY; freqs.len()];
    let block = round(l * LN_2 / 12.0 * fs).max(64);
    // The difference between the inputs counts where the speaker is measured; in a calibration
    // both inputs read one point, so it is nothing by design.
    let channels: Vec<&Vec<f64>> = if calibration { vec![&vd, &vs] } else { vec![&vd, &vs, &diff] };
    for x in channels {
        let density = noise_density(&x[..quiet_end], freqs, fs, &mut planner);
        for (i, &f) in freqs.iter().enumerate() {
            let at = peak + round(l * (f / sweep.from_hz).ln() * fs);
            let (a, b) = (at.saturating_sub(block / 2), (at + block / 2).min(len));
            let power = if b > a { x[a..b].iter().map(|v| v * v).sum::<f64>() / (b - a) as f64 } else { 0.0 };
            let s = power * l / f * repeats as f64 / (width[i] * density[i].max(1e-30));
            snr[i] = snr[i].min(s);
        }
    }
    if repeats > 1 {
        // Averaged over a third of an octave around each point (a few repeats give a
        // scattered estimate point by point).
        for i in 0..freqs.len() {
            let near: Vec<f64> = (0..freqs.len()).filter(|&k| (freqs[k] / freqs[i]).log2().abs() <= 1.0 / 6.0).map(|k| spread[k]).collect();
            let var = near.iter().sum::<f64>() / near.len() as f64;
            snr[i] = snr[i].min(1.0 / var.max(1e-30));
        }
    }
    Ok(Responses { drive, speaker, snr, repeats })
}

/// The table's frequencies: `per_octave` points an octave from `from`, landing on `to`.
pub fn frequencies(from: f64, to: f64, per_octave: u32) -> Vec<f64> {
    let n = ((to / from).log2() * per_octave as f64 + 1e-9).floor() as usize;
    let mut out: Vec<f64> = (0..=n).map(|i| from * 2f64.powf(i as f64 / per_octave as f64)).collect();
    if out.last().is_some_and(|&l| to / l > 1.0 + 1e-9) {
        out.push(to);
    }
    out
}

/// What a measurement gives: the impedance at each frequency, each point's signal-to-noise
/// ratio (dB) and whether it passed the threshold.
#[derive(Debug, Clone)]
pub struct Measured {
    pub freqs: Vec<f64>,
    pub z: Vec<Complex64>,
    pub snr_db: Vec<f64>,
    pub kept: Vec<bool>,
    pub calibrated: bool,
    /// The sweeps read from the recording and averaged.
    pub repeats: usize,
}

pub struct Setup<'a> {
    pub sweep: &'a Sweep,
    pub reference_ohm: f64,
    pub freqs: &'a [f64],
    pub min_snr_db: f64,
}

/// Z = R H / (1 - H), H = Vs / Vd, divided by the calibration's Vs / Vd when given.
pub fn measure(rec: &Recording, cal: Option<&Recording>, s: &Setup) -> Result<Measured, Refusal> {
    for (r, what) in std::iter::once((rec, "the recording")).chain(cal.map(|c| (c, "the calibration recording"))) {
        if r.rate != s.sweep.rate {
            return refuse(
                format!("{what} is at {} Hz, the signal at {} Hz", r.rate, s.sweep.rate),
                format!("record at the signal's sample rate, or give --rate {} if the signal was written at that rate", r.rate),
            );
        }
    }
    let m = responses(rec, s.sweep, s.freqs, false)?;
    let mut h: Vec<Complex64> = m.speaker.iter().zip(&m.drive).map(|(a, b)| a / b).collect();
    let mut snr = m.snr.clone();
    if let Some(c) = cal {
        let cm = responses(c, s.sweep, s.freqs, true).map_err(|r| Refusal { message: format!("the calibration recording: {}", r.message), hint: r.hint })?;
        let ratio: Vec<Complex64> = cm.speaker.iter().zip(&cm.drive).map(|(a, b)| a / b).collect();
        let mut sorted: Vec<f64> = ratio.iter().map(|r| r.norm()).collect();
        sorted.sort_by(f64::total_cmp);
        let median = sorted[sorted.len() / 2];
        if !(0.7..=1.4).contains(&median) {
            return refuse(
                format!("the calibration recording's two channels differ by {:.1} dB: it was not made with both inputs on one point", 20.0 * median.log10()),
                "record the calibration with both inputs on the amplifier's output (the drive point), the speaker and resistor as for the measurement",
            );
        }
        for (i, r) in ratio.iter().enumerate() {
            h[i] /= r;
            snr[i] = snr[i].min(cm.snr[i]);
        }
    }
    // A passive speaker behind a series resistor never reads above the drive: a speaker channel
    // above the drive over most of the band is the inputs the other way round.
    let above = h.iter().filter(|x| x.norm() > 1.02).count();
    if above * 2 > h.len() {
        return refuse(
            "the speaker's channel reads above the drive's over most of the sweep: the channels are the other way round",
            "give --drive-channel 2 (the drive on the right input), or swap the inputs and record again",
        );
    }
    let z: Vec<Complex64> = h.iter().map(|&x| s.reference_ohm * x / (Complex64::new(1.0, 0.0) - x)).collect();
    // A passive speaker's phase lies within +-90 degrees: near 180 is one input inverted.
    let mut phases: Vec<f64> = z.iter().map(|z| z.arg().to_degrees().abs()).collect();
    phases.sort_by(f64::total_cmp);
    if phases[phases.len() / 2] > 100.0 {
        return refuse(
            "the impedance reads near 180 degrees, which no passive speaker does: one input is inverted",
            "check both inputs' leads: a lead with its two signal wires the other way round inverts its input; put it right and record again",
        );
    }
    let snr_db: Vec<f64> = snr.iter().map(|v| 10.0 * v.max(1e-30).log10()).collect();
    let kept: Vec<bool> = snr_db.iter().zip(&z).map(|(&d, z)| d >= s.min_snr_db && z.re.is_finite() && z.norm() > 0.0).collect();
    if !kept.iter().any(|&k| k) {
        let best = snr_db.iter().copied().fold(f64::NEG_INFINITY, f64::max);
        return refuse(
            format!("the recording is too quiet: no frequency reaches the {} dB signal-to-noise threshold (the best reaches {best:.0} dB)", s.min_snr_db),
            "raise the signal's level or the amplifier's gain (a few volts at the speaker suffice), or use a longer sweep (--seconds) or repeats",
        );
    }
    Ok(Measured { freqs: s.freqs.to_vec(), z, snr_db, kept, calibrated: cal.is_some(), repeats: m.repeats })
}

/// The table `terminals` and `characterise` read: comment lines saying how it was measured,
/// then frequency Hz, |Z| ohm, phase deg for the points kept.
pub fn table(m: &Measured, s: &Setup, notes: &[String]) -> String {
    let mut out = String::new();
    out.push_str(&format!("# impedance at the terminals, measured with a sound card by voicekeep {} (`voicekeep measure`)\n", env!("CARGO_PKG_VERSION")));
    for n in notes {
        out.push_str(&format!("# {n}\n"));
    }
    let sw = s.sweep;
    out.push_str(&format!(
        "# reference resistor {} ohm; sample rate {} Hz; the signal as given: sweep {} Hz to {} Hz over {} s, {} dBFS; {} sweep{} read and averaged; signal-to-noise from the noise before the sweep{}\n",
        s.reference_ohm,
        sw.rate,
        sw.from_hz,
        sw.to_hz,
        sw.seconds,
        sw.level_dbfs,
        m.repeats,
        if m.repeats == 1 { "" } else { "s" },
        if m.repeats > 1 { " and the spread between the sweeps" } else { "" }
    ));
    if m.calibrated {
        out.push_str("# calibration: the channels' own gain and phase mismatch, from the calibration recording, divided out\n");
    } else {
        out.push_str("# calibration: none used; the channels' own gain and phase mismatch remain in these figures\n");
    }
    let kept: Vec<usize> = (0..m.freqs.len()).filter(|&i| m.kept[i]).collect();
    let worst = kept.iter().copied().min_by(|&a, &b| m.snr_db[a].total_cmp(&m.snr_db[b]));
    if let (Some(&a), Some(&b), Some(w)) = (kept.first(), kept.last(), worst) {
        out.push_str(&format!(
            "# kept {} of {} points, {} Hz to {} Hz; the worst signal-to-noise ratio kept is {:.0} dB at {} Hz (threshold {} dB)\n",
            kept.len(),
            m.freqs.len(),
            sig(m.freqs[a]),
            sig(m.freqs[b]),
            m.snr_db[w],
            sig(m.freqs[w]),
            s.min_snr_db
        ));
    }
    out.push_str("# frequency Hz, |Z| ohm, phase deg\n");
    for i in kept {
        out.push_str(&format!("{},{},{:.4}\n", sig(m.freqs[i]), sig(m.z[i].norm()), m.z[i].arg().to_degrees()));
    }
    out
}

/// Seven significant figures, without trailing zeros.
fn sig(v: f64) -> String {
    crate::units::trim_number(v, 7)
}

/// The wiring and the cautions, printed with the signal and in the README.
pub const WIRING: &str = "\
Wiring: amplifier output + -> reference resistor (10 to 100 ohm, its value measured, rated 2 W or
more) -> speaker + ; speaker - -> amplifier output - (ground). Sound card input 1 (left) across
the amplifier's output (the drive, over resistor and speaker together); input 2 (right) across the
speaker's terminals. Both inputs' grounds on the amplifier's output minus. Use line inputs at their
lowest gain, phantom power (48 V) off, and the computer's sound effects and resampling off. Record
in stereo at the signal's sample rate, from a moment before the signal starts until after it ends.
Calibration: record once more with both inputs on the amplifier's output, the resistor and speaker
still connected, without touching any gain between the two recordings; without it the inputs' own
mismatch (often tenths of a dB) stays in the table.

Cautions:
- Drive a few volts only, within the sound card input's rating: keep the amplifier's gain low.
- Never tie the sound card's ground to an amplifier output whose minus terminal is not ground
  (bridged amplifiers and many class-D amplifiers): it shorts the amplifier. Use an amplifier
  with a ground-referenced output, through the reference resistor.
- The speaker plays the sweep aloud: keep the level low and protect your hearing.
- Follow the makers' ratings and qualified service practice.";
