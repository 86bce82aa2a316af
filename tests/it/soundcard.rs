//! Impedance sweeps from a sound card: `signal` and `measure` against recordings made outside
//! the code under test. tests/soundcard/make.py (numpy, committed with its outputs) passes the
//! sweep through the exact divider of a known network, a sound card response common to both
//! channels, a 0.5 dB and 2 degree mismatch on channel 2, 1 ms of latency, noise at -80 dBFS
//! and 1 % third-harmonic distortion on the drive; each network's impedance is ngspice's AC
//! analysis (NAME.truth.csv, NAME.cir). tests/soundcard/README.md states it all.

use crate::util::{root, Cli};
use serde_json::Value;

fn wav(name: &str) -> Vec<u8> {
    std::fs::read(root().join("tests/soundcard").join(name)).unwrap()
}

/// frequency Hz, |Z| ohm, phase deg from a table (comment lines skipped).
fn rows(text: &str) -> Vec<[f64; 3]> {
    text.lines()
        .filter(|l| !l.starts_with('#') && !l.trim().is_empty())
        .map(|l| {
            let v: Vec<f64> = l.split(',').map(|x| x.trim().parse().unwrap()).collect();
            [v[0], v[1], v[2]]
        })
        .collect()
}

/// `measure` of a committed recording (with the calibration recording when `cal`), its table.
fn measure(name: &str, extra: &[&str]) -> (String, String) {
    let here = format!("{{dir}}/{name}");
    let mut cli = Cli::new().file(name, &wav(name)).args(["measure", here.as_str(), "-o", "{dir}/z.csv"]);
    if extra.contains(&"--calibration") {
        cli = cli.file("calibration.wav", &wav("calibration.wav"));
    }
    let mut args: Vec<String> = Vec::new();
    args.extend(extra.iter().map(|s| if *s == "calibration.wav" { "{dir}/calibration.wav".to_string() } else { s.to_string() }));
    let o = args.iter().fold(cli, |c, a| c.args([a.as_str()])).run();
    o.code(0);
    (std::fs::read_to_string(o.dir.join("z.csv")).unwrap(), o.stderr.clone())
}

/// The worst |Z| error (%) and phase error (degrees) against ngspice's impedance, at every
/// frequency both tables hold (the table's points are ngspice's `ac oct 48 20 20k` points).
fn against_truth(table: &str, truth: &str) -> (f64, f64, usize) {
    let t = rows(&std::fs::read_to_string(root().join("tests/soundcard").join(truth)).unwrap());
    let m = rows(table);
    let (mut mag, mut ph, mut n) = (0.0f64, 0.0f64, 0);
    for r in &t {
        if let Some(x) = m.iter().find(|x| (x[0] / r[0] - 1.0).abs() < 1e-5) {
            mag = mag.max((x[1] / r[1] - 1.0).abs() * 100.0);
            ph = ph.max((x[2] - r[2]).abs());
            n += 1;
        }
    }
    (mag, ph, n)
}

#[test]
fn the_signal_is_the_sweep_its_definition_gives() {
    // make.py writes the same definition (README: s[n], fades, lead-in, tail) in numpy, as
    // 32-bit float; `signal` writes 24-bit integers: the two agree within 24-bit rounding.
    let o = Cli::new().args(["signal", "--seconds", "2", "-o", "{dir}/s.wav"]).run();
    o.code(0);
    assert!(o.stderr.contains("bridged amplifiers") && o.stderr.contains("protect your hearing"), "{}", o.stderr);
    let ours: Vec<f64> = hound::WavReader::open(o.dir.join("s.wav")).unwrap().into_samples::<i32>().map(|s| s.unwrap() as f64 / 8_388_608.0).collect();
    let theirs: Vec<f64> = hound::WavReader::new(std::io::Cursor::new(wav("sweep-48k.f32.wav"))).unwrap().into_samples::<f32>().map(|s| s.unwrap() as f64).collect();
    assert_eq!(ours.len(), theirs.len());
    let worst = ours.iter().zip(&theirs).map(|(a, b)| (a - b).abs()).fold(0.0, f64::max);
    assert!(worst < 1.2e-7, "{worst}");
    // Out of range: refused with a hint.
    let o = Cli::new().args(["signal", "--high-hz", "30000", "--rate", "44100", "-o", "{dir}/s.wav"]).run();
    o.code(2).stderr_has("below half the sample rate");
    assert!(!o.dir.join("s.wav").exists());
}

#[test]
fn a_speaker_measured_with_calibration_is_within_one_per_cent_and_one_degree() {
    let (table, _) = measure("speaker.wav", &["--reference", "22 ohm", "--seconds", "2", "--calibration", "calibration.wav"]);
    let (mag, ph, n) = against_truth(&table, "speaker.truth.csv");
    assert!(n >= 470, "{n} points compared");
    assert!(mag < 1.0 && ph < 1.0, "|Z| {mag:.3} %, phase {ph:.3} deg");
    for want in [
        "reference resistor 22 ohm",
        "sample rate 48000 Hz",
        "divided out",
        "SHA-256 ",
        "kept 480 of 480 points, 20 Hz to 20000 Hz; the worst signal-to-noise ratio kept is ",
        "# frequency Hz, |Z| ohm, phase deg",
    ] {
        assert!(table.contains(want), "{want}:\n{table}");
    }
    // Never the clock: the table is the same every time.
    let (again, _) = measure("speaker.wav", &["--reference", "22 ohm", "--seconds", "2", "--calibration", "calibration.wav"]);
    assert_eq!(table, again);
    // Without the calibration the channels' 0.5 dB mismatch shows, and the table says so.
    let (raw, _) = measure("speaker.wav", &["--reference", "22", "--seconds", "2"]);
    let (mag, _, _) = against_truth(&raw, "speaker.truth.csv");
    assert!(mag > 3.0, "{mag}");
    assert!(raw.contains("calibration: none used"), "{raw}");
    // Two sweeps, averaged.
    let (two, _) = measure("speaker-r2.wav", &["--reference", "22", "--seconds", "2", "--repeats", "2", "--calibration", "calibration.wav"]);
    let (mag, ph, _) = against_truth(&two, "speaker.truth.csv");
    assert!(mag < 1.0 && ph < 1.0, "two sweeps: |Z| {mag:.3} %, phase {ph:.3} deg");
}

#[test]
fn a_ten_ohm_resistor_reads_ten_ohm_in_every_format() {
    let (table, _) = measure("resistor10.wav", &["--reference", "10", "--seconds", "2", "--calibration", "calibration.wav"]);
    for r in rows(&table) {
        assert!((r[1] / 10.0 - 1.0).abs() < 0.01 && r[2].abs() < 1.0, "{r:?}");
    }
    // One recording written as 16-bit, 32-bit integer and 32-bit float (1 s sweeps, no
    // calibration): the same table within the 16-bit file's rounding.
    let tables: Vec<Vec<[f64; 3]>> =
        ["resistor10-s16.wav", "resistor10-s32.wav", "resistor10-f32.wav"].iter().map(|f| rows(&measure(f, &["--reference", "10", "--seconds", "1"]).0)).collect();
    for t in &tables[1..] {
        assert_eq!(t.len(), tables[0].len());
        for (a, b) in t.iter().zip(&tables[0]) {
            assert!((a[1] / b[1] - 1.0).abs() < 0.002 && (a[2] - b[2]).abs() < 0.2, "{a:?} {b:?}");
        }
    }
}

#[test]
fn the_measured_table_feeds_characterise_and_diagnose() {
    // The driver: Re, fs, Qms and Qes within 2 % of the values the recording was made with.
    let (table, _) = measure("driver.wav", &["--reference", "22", "--seconds", "2", "--calibration", "calibration.wav"]);
    let o = Cli::new().file("d.csv", table.as_bytes()).args(["characterise", "{dir}/d.csv", "--format", "json"]).run();
    o.code(0);
    let v: Value = serde_json::from_str(&o.stdout).unwrap();
    let truth: Value = serde_json::from_slice(&wav("driver.params.json")).unwrap();
    for (field, key) in [("re", "re_ohm"), ("fs", "fs_hz"), ("qms", "qms"), ("qes", "qes")] {
        let e = v["driver_fit"]["estimates"].as_array().unwrap().iter().find(|e| e["field"] == field).unwrap();
        let (got, want) = (e["value"].as_f64().unwrap(), truth[key].as_f64().unwrap());
        assert!((got / want - 1.0).abs() < 0.02, "{field}: {got} against {want}");
    }
    // The drifted network (C1 3.9 uF for 4.69, ESR 2.4 ohm for 0.9): the diagnosis names C1
    // and recovers it within 2 %, as from ngspice's own table (diagnose.rs).
    let (table, _) = measure("drifted.wav", &["--reference", "22", "--seconds", "2", "--calibration", "calibration.wav"]);
    let job = std::fs::read_to_string(root().join("tests/reference/butterworth-esr-dcr.yaml")).unwrap() + "terminals: { as_found: s.csv, diagnose: [C1] }\n";
    let o = Cli::new().job(&job).file("s.csv", table.as_bytes()).args(["diagnose", "{job}", "--format", "json"]).run();
    o.code(0);
    let d: Value = serde_json::from_str(&o.stdout).unwrap();
    let est = |field: &str| d["diagnosis"]["estimates"].as_array().unwrap().iter().find(|e| e["part"] == "C1" && e["field"] == field).unwrap()["value"].as_f64().unwrap();
    assert!((est("value") / 3.9e-6 - 1.0).abs() < 0.02, "{d}");
    assert!((est("esr") / 2.4 - 1.0).abs() < 0.02, "{d}");
    assert!(d["diagnosis"]["sentence"].as_str().unwrap().starts_with("Most likely drifted: C1"), "{d}");
}

#[test]
fn each_bad_recording_is_refused_with_a_hint() {
    let short = ["--reference", "22", "--seconds", "1"];
    let cases: [(&str, &[&str], &str); 7] = [
        ("clipped.wav", &short, "the recording clips: channel 1 reaches full scale at 0.548 s"),
        ("mono.wav", &short, "the recording has 1 channel, not two"),
        ("swapped.wav", &short, "the channels are the other way round"),
        ("nosweep.wav", &short, "no sweep found in the recording"),
        ("rate441.wav", &short, "the recording is at 44100 Hz, the signal at 48000 Hz"),
        ("quiet.wav", &short, "no sweep found in the recording"),
        ("speaker.wav", &["--reference", "470", "--seconds", "2"], "is not a resistance of 10 to 100 ohm"),
    ];
    for (file, args, want) in cases {
        let here = format!("{{dir}}/{file}");
        let o = args.iter().fold(Cli::new().file(file, &wav(file)).args(["measure", here.as_str(), "-o", "{dir}/z.csv"]), |c, a| c.args([*a])).run();
        assert!(o.code != 0, "{file}: accepted");
        o.stderr_has(want).stderr_has("hint:");
        assert!(!o.dir.join("z.csv").exists(), "{file}: a table was written");
    }
    // The swapped recording read the right way round, and the 44.1 kHz one at its own rate.
    let (t, _) = measure("swapped.wav", &["--reference", "22", "--seconds", "1", "--drive-channel", "2"]);
    assert!(rows(&t).len() > 400);
    let (t, _) = measure("rate441.wav", &["--reference", "22", "--seconds", "1", "--rate", "44100"]);
    assert!(rows(&t).len() > 400);
}

/// speaker.wav turned down by `db` with fresh noise at -80 dBFS (seeded), as a stereo 24-bit WAV.
fn turned_down(db: f64) -> Vec<u8> {
    use rand::SeedableRng;
    use rand_distr::{Distribution, Normal};
    let mut rng = rand_pcg::Pcg64::seed_from_u64(5);
    let noise = Normal::new(0.0, 7.071e-5).unwrap();
    let gain = 10f64.powf(-db / 20.0);
    transform("speaker.wav", 0, |_, a, b| {
        let a = a * gain + noise.sample(&mut rng);
        (a, b * gain + noise.sample(&mut rng))
    })
}

#[test]
fn points_below_the_noise_threshold_are_left_out_and_a_buried_sweep_refused() {
    // 30 dB down: the top octaves fall below the threshold and are left out, the table says
    // which range it kept, and what it kept is still close (RMS error under 1 %).
    let o = Cli::new()
        .file("q.wav", &turned_down(30.0))
        .file("calibration.wav", &wav("calibration.wav"))
        .args(["measure", "{dir}/q.wav", "--reference", "22", "--seconds", "2", "--calibration", "{dir}/calibration.wav", "-o", "{dir}/z.csv"])
        .run();
    o.code(0).stderr_has("fell below the 45 dB signal-to-noise threshold");
    let table = std::fs::read_to_string(o.dir.join("z.csv")).unwrap();
    let kept = rows(&table);
    assert!(kept.len() < 400 && kept.len() > 100, "{}", kept.len());
    assert!(table.contains(&format!("kept {} of 480 points, 20 Hz to", kept.len())), "{table}");
    let truth = rows(&std::fs::read_to_string(root().join("tests/soundcard/speaker.truth.csv")).unwrap());
    let errs: Vec<f64> = kept.iter().filter_map(|k| truth.iter().find(|t| (t[0] / k[0] - 1.0).abs() < 1e-5).map(|t| k[1] / t[1] - 1.0)).collect();
    let rms = (errs.iter().map(|e| e * e).sum::<f64>() / errs.len() as f64).sqrt();
    assert!(rms < 0.01, "{rms}");
    // 50 dB down: the sweep is found, but no point reaches the threshold.
    let o = Cli::new().file("q.wav", &turned_down(50.0)).args(["measure", "{dir}/q.wav", "--reference", "22", "--seconds", "2", "-o", "{dir}/z.csv"]).run();
    o.code(1).stderr_has("the recording is too quiet").stderr_has("hint:");
    assert!(!o.dir.join("z.csv").exists());
}

/// The README's walk from a WAV to a diagnosis: the sample recording of the sweep-diagnosis
/// speaker (samples/kittering-before.wav, tests/soundcard/drifted.wav's bytes) measured into a
/// copy of the sample job, which then names the drifted part.
#[test]
fn the_readmes_walk_from_a_recording_to_a_diagnosis() {
    assert_eq!(std::fs::read(root().join("samples/kittering-before.wav")).unwrap(), wav("drifted.wav"));
    assert_eq!(std::fs::read(root().join("samples/kittering-calibration.wav")).unwrap(), wav("calibration.wav"));
    let o = Cli::new().args(["new", "--example", "sweep-diagnosis", "--into", "{dir}/bench"]).run();
    o.code(0);
    let dir = o.dir.to_string_lossy().to_string();
    let measured = format!("{dir}/bench/kittering-before.csv");
    let m = Cli::new()
        .args(["measure", "samples/kittering-before.wav", "--seconds", "2", "--reference", "22", "--calibration", "samples/kittering-calibration.wav", "-o", measured.as_str()])
        .run();
    m.code(0);
    let job = format!("{dir}/bench/sweep-diagnosis.yaml");
    let d = Cli::new().args(["diagnose", job.as_str()]).run();
    d.code(0);
    assert!(d.stdout.contains("Most likely drifted: C1") && d.stdout.contains("3.9 uF"), "{}", d.stdout);
}

/// With repeats, the spread between them is a second measure of the noise: a disturbance in
/// the second sweep only (noise at -40 dBFS on the speaker's input, which the lead-in never
/// saw) leaves points out, while the first sweep alone keeps them all.
#[test]
fn the_spread_between_repeats_leaves_out_what_the_lead_in_did_not_see() {
    use rand::SeedableRng;
    use rand_distr::{Distribution, Normal};
    let mut rng = rand_pcg::Pcg64::seed_from_u64(9);
    let burst = Normal::new(0.0, 0.01).unwrap();
    let r = hound::WavReader::new(std::io::Cursor::new(wav("speaker-r2.wav"))).unwrap();
    let spec = r.spec();
    let mut buf = std::io::Cursor::new(Vec::new());
    let mut w = hound::WavWriter::new(&mut buf, spec).unwrap();
    // The second sweep starts after the 0.5 s lead-in and one 2.5 s period.
    let second = (3.0 * 48_000.0) as usize..(5.0 * 48_000.0) as usize;
    for (i, s) in r.into_samples::<i32>().enumerate() {
        let mut x = s.unwrap() as f64 / 8_388_608.0;
        if i % 2 == 1 && second.contains(&(i / 2)) {
            x += burst.sample(&mut rng);
        }
        w.write_sample((x * 8_388_608.0).round().clamp(-8_388_608.0, 8_388_607.0) as i32).unwrap();
    }
    w.finalize().unwrap();
    let run = |repeats: &str| {
        Cli::new().file("r.wav", buf.get_ref()).args(["measure", "{dir}/r.wav", "--reference", "22", "--seconds", "2", "--repeats", repeats, "-o", "{dir}/z.csv"]).run()
    };
    let o = run("2");
    o.code(0).stderr_has("fell below the 45 dB signal-to-noise threshold");
    let table = std::fs::read_to_string(o.dir.join("z.csv")).unwrap();
    assert!(table.contains("2 sweeps read and averaged") && table.contains("and the spread between the sweeps"), "{table}");
    assert!(rows(&table).len() < 400, "{}", rows(&table).len());
    let o = run("1");
    o.code(0);
    assert_eq!(rows(&std::fs::read_to_string(o.dir.join("z.csv")).unwrap()).len(), 480);
}

/// A committed 24-bit stereo recording changed frame by frame (`f` gets the frame's number and
/// its two channels in full-scale units), after `lead` frames of fresh noise at -80 dBFS.
fn transform(name: &str, lead: usize, mut f: impl FnMut(usize, f64, f64) -> (f64, f64)) -> Vec<u8> {
    use rand::SeedableRng;
    use rand_distr::{Distribution, Normal};
    let mut rng = rand_pcg::Pcg64::seed_from_u64(11);
    let noise = Normal::new(0.0, 7.071e-5).unwrap();
    let r = hound::WavReader::new(std::io::Cursor::new(wav(name))).unwrap();
    let spec = r.spec();
    let x: Vec<f64> = r.into_samples::<i32>().map(|s| s.unwrap() as f64 / 8_388_608.0).collect();
    let mut buf = std::io::Cursor::new(Vec::new());
    let mut w = hound::WavWriter::new(&mut buf, spec).unwrap();
    let code = |v: f64| (v * 8_388_608.0).round().clamp(-8_388_608.0, 8_388_607.0) as i32;
    for _ in 0..2 * lead {
        w.write_sample(code(noise.sample(&mut rng))).unwrap();
    }
    for (i, c) in x.chunks_exact(2).enumerate() {
        let (a, b) = f(i, c[0], c[1]);
        w.write_sample(code(a)).unwrap();
        w.write_sample(code(b)).unwrap();
    }
    w.finalize().unwrap();
    buf.into_inner()
}

fn measure_bytes(bytes: &[u8], cal: Option<&[u8]>, extra: &[&str]) -> crate::util::Output {
    let mut c = Cli::new().file("r.wav", bytes).args(["measure", "{dir}/r.wav", "-o", "{dir}/z.csv"]);
    if !extra.contains(&"--seconds") {
        c = c.args(["--seconds", "2"]);
    }
    if !extra.contains(&"--reference") {
        c = c.args(["--reference", "22"]);
    }
    if let Some(cal) = cal {
        c = c.file("c.wav", cal).args(["--calibration", "{dir}/c.wav"]);
    }
    extra.iter().fold(c, |c, a| c.args([*a])).run()
}

/// What a bench gets wrong, found by a reader trying the commands: each is read right or
/// refused in words, never passed off as a speaker's impedance.
#[test]
fn bench_slips_are_read_right_or_refused() {
    let cal = wav("calibration.wav");
    // A recording started 3 s early reads as one started on time.
    let early = measure_bytes(&transform("speaker.wav", 144_000, |_, a, b| (a, b)), Some(&cal), &[]);
    early.code(0);
    let (mag, ph, n) = against_truth(&std::fs::read_to_string(early.dir.join("z.csv")).unwrap(), "speaker.truth.csv");
    assert!(n >= 470 && mag < 1.0 && ph < 1.0, "{n} points, {mag} %, {ph} deg");
    // A DC offset of 1 % of full scale on both inputs is taken off.
    let dc = measure_bytes(&transform("speaker.wav", 0, |_, a, b| (a + 0.01, b - 0.01)), Some(&cal), &[]);
    dc.code(0);
    let (mag, ph, _) = against_truth(&std::fs::read_to_string(dc.dir.join("z.csv")).unwrap(), "speaker.truth.csv");
    assert!(mag < 1.0 && ph < 1.0, "{mag} %, {ph} deg");
    // A calibration whose inputs match closely is a good one, not a noisy one (the inputs'
    // difference is nothing by design there).
    let matched = measure_bytes(&wav("speaker.wav"), Some(&transform("calibration.wav", 0, |_, a, _| (a, a))), &[]);
    matched.code(0);
    assert_eq!(rows(&std::fs::read_to_string(matched.dir.join("z.csv")).unwrap()).len(), 480, "{}", matched.stderr);
    // One input inverted: refused, never a negative resistance.
    measure_bytes(&transform("speaker.wav", 0, |_, a, b| (a, -b)), None, &[]).code(1).stderr_has("one input is inverted").stderr_has("hint:");
    // Input 2 not connected.
    measure_bytes(&transform("speaker.wav", 0, |_, a, _| (a, 0.0)), None, &[]).code(1).stderr_has("input 2 reads almost nothing");
    // A wrong --seconds is said as such.
    measure_bytes(&wav("speaker.wav"), None, &["--seconds", "3"]).code(1).stderr_has("the sweep in the recording lasts about 2.0").stderr_has("not the 3 s given");
    // Without calibration, a warning on standard error as well as the table's comment.
    measure_bytes(&wav("speaker.wav"), None, &[]).code(0).stderr_has("warning: no calibration recording");
    // A calibration that is wrong is named as the calibration.
    measure_bytes(&wav("speaker.wav"), Some(&wav("mono.wav")), &[]).code(1).stderr_has("c.wav: the recording has 1 channel");
    // The reference resistor as the trade writes it.
    for r in ["22 ohms", "0.022 kohm", "22R", "22 Ω"] {
        measure_bytes(&wav("speaker.wav"), Some(&cal), &["--reference", r]).code(0);
    }
    measure_bytes(&wav("speaker.wav"), Some(&cal), &["--min-snr-db", "nan"]).code(2).stderr_has("--min-snr-db");
    // A link to the recording is the recording: never written over.
    let o = measure_bytes(&wav("speaker.wav"), Some(&cal), &[]);
    #[cfg(unix)]
    {
        std::os::unix::fs::symlink(o.dir.join("r.wav"), o.dir.join("link.wav")).unwrap();
        let dir = o.dir.to_string_lossy().to_string();
        let (link, target) = (format!("{dir}/link.wav"), format!("{dir}/r.wav"));
        let again = Cli::new().args(["measure", link.as_str(), "--reference", "22", "--seconds", "2", "-o", target.as_str()]).run();
        again.code(1).stderr_has("one of its own recordings");
        assert_eq!(std::fs::read(o.dir.join("r.wav")).unwrap(), wav("speaker.wav"));
    }
}
