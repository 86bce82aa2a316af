//! Programme spectra for the long-term power figures: pink noise (equal power per octave,
//! 20 Hz to 20 kHz) and the IEC 60268-1 simulated programme signal.
//!
//! Each sweep point stands for the slice of spectrum between the geometric midpoints to its
//! neighbours (the end slices reach the spectrum's ends), so the weights sum to one and a
//! sparse sweep still carries all of the programme's power.

use crate::model::Programme;

/// IEC 60268-1:1985, clause 7, table II: 1/3-octave band levels (dB) of the simulated
/// programme signal, nominal centres 20 Hz to 20 kHz.
pub const IEC_BANDS: [(f64, f64); 31] = [
    (20.0, -13.5),
    (25.0, -10.2),
    (31.5, -7.4),
    (40.0, -5.2),
    (50.0, -3.5),
    (63.0, -2.3),
    (80.0, -1.4),
    (100.0, -0.9),
    (125.0, -0.5),
    (160.0, -0.2),
    (200.0, -0.1),
    (250.0, 0.0),
    (315.0, 0.0),
    (400.0, 0.0),
    (500.0, 0.0),
    (630.0, 0.0),
    (800.0, 0.0),
    (1000.0, -0.1),
    (1250.0, -0.3),
    (1600.0, -0.6),
    (2000.0, -1.0),
    (2500.0, -1.6),
    (3150.0, -2.5),
    (4000.0, -3.7),
    (5000.0, -5.1),
    (6300.0, -7.0),
    (8000.0, -9.4),
    (10000.0, -11.9),
    (12500.0, -14.8),
    (16000.0, -18.2),
    (20000.0, -21.6),
];

/// Exact 1/3-octave centre for band index i of [`IEC_BANDS`] (base-2 centres, 1 kHz at i = 17).
pub fn iec_centre(i: usize) -> f64 {
    1000.0 * 2f64.powf((i as f64 - 17.0) / 3.0)
}

/// Power of the (unnormalised) spectrum between `lo` and `hi` Hz.
pub fn band_power(p: Programme, lo: f64, hi: f64) -> f64 {
    if hi <= lo {
        return 0.0;
    }
    let overlap = |a: f64, b: f64| {
        let (l, h) = (lo.max(a), hi.min(b));
        if h > l {
            (h / l).ln()
        } else {
            0.0
        }
    };
    match p {
        // Pink: density 1/f, so power per slice is ln(hi/lo); limited to 20 Hz - 20 kHz.
        Programme::Pink => overlap(20.0, 20_000.0),
        Programme::IecProgramme => {
            let third = 2f64.powf(1.0 / 6.0);
            IEC_BANDS
                .iter()
                .enumerate()
                .map(|(i, (_, db))| {
                    let c = iec_centre(i);
                    10f64.powf(db / 10.0) * overlap(c / third, c * third) / (third * third).ln()
                })
                .sum()
        }
    }
}

/// The fraction of the programme's power each sweep point stands for (sums to 1).
pub fn weights(p: Programme, freqs: &[f64]) -> Vec<f64> {
    let n = freqs.len();
    let mut w: Vec<f64> = (0..n)
        .map(|i| {
            let lo = if i == 0 { 0.0 } else { (freqs[i - 1] * freqs[i]).sqrt() };
            let hi = if i + 1 == n { f64::INFINITY } else { (freqs[i] * freqs[i + 1]).sqrt() };
            band_power(p, lo.max(1e-3), hi.min(1e9))
        })
        .collect();
    let total: f64 = w.iter().sum();
    if total > 0.0 {
        w.iter_mut().for_each(|x| *x /= total);
    } else if n > 0 {
        w.iter_mut().for_each(|x| *x = 1.0 / n as f64);
    }
    w
}

pub fn describe(p: Programme) -> &'static str {
    match p {
        Programme::Pink => "pink noise (equal power per octave, 20 Hz to 20 kHz)",
        Programme::IecProgramme => "the IEC 60268-1 simulated programme signal",
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn log_sweep(from: f64, to: f64, per_octave: f64) -> Vec<f64> {
        let n = ((to / from).log2() * per_octave).round() as usize;
        (0..=n).map(|k| from * 2f64.powf(k as f64 / per_octave)).collect()
    }

    #[test]
    fn weights_sum_to_one() {
        for p in [Programme::Pink, Programme::IecProgramme] {
            for sweep in [log_sweep(10.0, 40e3, 24.0), vec![100.0, 1000.0, 3150.0]] {
                let s: f64 = weights(p, &sweep).iter().sum();
                assert!((s - 1.0).abs() < 1e-12);
            }
        }
    }

    #[test]
    fn pink_carries_equal_power_per_octave() {
        let f = log_sweep(10.0, 40e3, 48.0);
        let w = weights(Programme::Pink, &f);
        let octave = |lo: f64| f.iter().zip(&w).filter(|(f, _)| **f >= lo * 0.9999 && **f < 2.0 * lo * 0.9999).map(|(_, w)| w).sum::<f64>();
        let a = octave(40.0);
        for lo in [80.0, 160.0, 640.0, 2560.0, 5120.0] {
            assert!((octave(lo) / a - 1.0).abs() < 0.02, "octave from {lo} Hz");
        }
        // A tenth of the decades' power per octave: 20 Hz-20 kHz is log2(1000) = 9.97 octaves.
        assert!((a - 1.0 / 1000f64.log2()).abs() < 0.005);
    }

    #[test]
    fn iec_spectrum_reproduces_its_band_levels() {
        // IEC 60268-1:1985 table II, each band within its tolerance; bands relative to 500 Hz (0 dB).
        let tol = [3.0, 2.0, 1.0, 1.0, 1.0, 1.0, 1.0, 0.8, 0.6, 0.5, 0.5, 0.5, 0.5, 0.5, 0.5, 0.5, 0.5, 0.6, 0.7, 0.8, 1.0, 1.0, 1.0, 1.0, 1.0, 1.0, 1.0, 1.0, 1.5, 2.0, 3.0];
        let f = log_sweep(10.0, 40e3, 96.0);
        let w = weights(Programme::IecProgramme, &f);
        let third = 2f64.powf(1.0 / 6.0);
        let band = |i: usize| {
            let c = iec_centre(i);
            f.iter().zip(&w).filter(|(f, _)| **f >= c / third && **f < c * third).map(|(_, w)| w).sum::<f64>()
        };
        let zero = band(14);
        for (i, (nominal, db)) in IEC_BANDS.iter().enumerate() {
            let got = 10.0 * (band(i) / zero).log10();
            assert!((got - db).abs() <= tol[i], "{nominal} Hz: {got:.2} dB vs {db} +- {}", tol[i]);
        }
        // Full-band power about 12.5 dB above the 0 dB band (power sum 12.56 dB).
        let total = 10.0 * (1.0 / zero).log10();
        assert!((total - 12.56).abs() < 0.15, "total {total}");
    }
}
