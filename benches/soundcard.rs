//! A sound-card recording to an impedance table, timed as the whole command a technician runs
//! (`cargo bench --bench soundcard`): a 10 s stereo 48 kHz recording (a 9 s sweep with the
//! default lead-in and tail) and its calibration recording, to a table of 48 points an octave
//! from 20 Hz to 20 kHz. Target: under 0.3 s (twice that with a calibration recording, which is
//! measured the same way). The figure measured is in DEVELOPERS.md.

use std::process::Command;
use std::time::Instant;

/// A recording made here for timing only: the drive is the played signal, the speaker a
/// resistive divider of it with a little noise (what it reads is not the point).
fn recording(path: &std::path::Path, share: f64) {
    let sweep = voicekeep::soundcard::Sweep { rate: 48_000, from_hz: 10.0, to_hz: 22_000.0, seconds: 9.0, level_dbfs: -12.0, lead_s: 0.5, tail_s: 0.5, repeats: 1 };
    let spec = hound::WavSpec { channels: 2, sample_rate: 48_000, bits_per_sample: 24, sample_format: hound::SampleFormat::Int };
    let mut w = hound::WavWriter::create(path, spec).unwrap();
    let mut seed = 1u64;
    for x in sweep.played() {
        seed = seed.wrapping_mul(6364136223846793005).wrapping_add(1442695040888963407);
        let noise = ((seed >> 40) as f64 / (1u64 << 24) as f64 - 0.5) * 1e-4;
        for v in [x, share * x + noise] {
            w.write_sample((v * 8_388_607.0).round() as i32).unwrap();
        }
    }
    w.finalize().unwrap();
}

fn main() {
    let dir = tempfile::tempdir().unwrap();
    let (rec, cal) = (dir.path().join("rec.wav"), dir.path().join("cal.wav"));
    recording(&rec, 0.25);
    recording(&cal, 1.0);
    let bin = env!("CARGO_BIN_EXE_voicekeep");
    for (what, calibrated) in [("a 10 s stereo 48 kHz recording", false), ("the same with its calibration recording", true)] {
        let mut best = f64::INFINITY;
        for _ in 0..5 {
            let t = Instant::now();
            let mut c = Command::new(bin);
            c.args(["measure", "--seconds", "9", "--reference", "22", "--min-snr-db", "0", "-o"]).arg(dir.path().join("z.csv")).arg(&rec);
            if calibrated {
                c.arg("--calibration").arg(&cal);
            }
            let o = c.output().unwrap();
            assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
            best = best.min(t.elapsed().as_secs_f64());
        }
        let target = if calibrated { 0.6 } else { 0.3 };
        println!("{what:<44} to a 48-points-an-octave table: {best:.3} s (best of 5; target under {target} s){}", if best < target { "" } else { "  OVER" });
    }
}
