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

/// The band the programme's power lies in: pink noise 20 Hz to 20 kHz; the IEC signal from
/// the lower edge of its 20 Hz third-octave band to the upper edge of its 20 kHz band.
pub fn span(p: Programme) -> (f64, f64) {
    match p {
        Programme::Pink => (20.0, 20_000.0),
        Programme::IecProgramme => {
            let third = 2f64.powf(1.0 / 6.0);
            (iec_centre(0) / third, iec_centre(IEC_BANDS.len() - 1) * third)
        }
    }
}

/// Points per octave of the stress grid: fine enough that a resonance peak of Q 20 is
/// found within 0.3 dB, and cheap (about a thousand points).
pub const GRID_PER_OCTAVE: f64 = 96.0;

/// The stress figures' own grid: log-spaced over the programme's band and at least 20 Hz to
/// 20 kHz, widened to the display sweep where that reaches further (the sine search covers
/// every frequency a bench tone may be played at).
pub fn stress_grid(p: Programme, sweep: &[f64]) -> Vec<f64> {
    let (plo, phi) = span(p);
    let lo = sweep.iter().cloned().fold(plo.min(20.0), f64::min);
    let hi = sweep.iter().cloned().fold(phi.max(20_000.0), f64::max);
    let n = ((hi / lo).log2() * GRID_PER_OCTAVE).ceil() as usize;
    (0..=n).map(|k| lo * (hi / lo).powf(k as f64 / n as f64)).collect()
}

/// The fraction of the programme's whole power each point of `freqs` (rising) stands for:
/// the slice between the geometric midpoints to its neighbours, the end slices reaching half
/// a step beyond the end points (a lone point stands for the whole spectrum). The fractions
/// are of the programme's total power, so they sum to one only when `freqs` spans the
/// programme's band (as [`stress_grid`] does); a narrower set carries only its share.
pub fn weights(p: Programme, freqs: &[f64]) -> Vec<f64> {
    let n = freqs.len();
    let total = band_power(p, 1e-3, 1e9);
    (0..n)
        .map(|i| {
            let lo = match i {
                0 if n > 1 => freqs[0] / (freqs[1] / freqs[0]).sqrt(),
                0 => 0.0,
                _ => (freqs[i - 1] * freqs[i]).sqrt(),
            };
            let hi = match i {
                _ if i + 1 < n => (freqs[i] * freqs[i + 1]).sqrt(),
                _ if n > 1 => freqs[n - 1] * (freqs[n - 1] / freqs[n - 2]).sqrt(),
                _ => f64::INFINITY,
            };
            band_power(p, lo.max(1e-3), hi.min(1e9)) / total
        })
        .collect()
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
    fn the_stress_grid_carries_all_of_the_programme_and_no_more() {
        // Pink noise between 20 Hz and 20 kHz: a grid over the whole band carries all of its
        // power; one over 1.6-8 kHz carries log(8000/1600)/log(1000) of it (the definition of
        // pink noise: equal power per octave), not all of it as the end slices once claimed.
        let grid = stress_grid(Programme::Pink, &[1600.0, 8000.0]);
        assert!(grid[0] <= 20.0 && *grid.last().unwrap() >= 20_000.0);
        let all: f64 = weights(Programme::Pink, &grid).iter().sum();
        assert!((all - 1.0).abs() < 1e-9, "{all}");
        let narrow: Vec<f64> = (0..=64).map(|k| 1600.0 * 5f64.powf(k as f64 / 64.0)).collect();
        let part: f64 = weights(Programme::Pink, &narrow).iter().sum();
        let inside = (8000f64 / 1600.0).ln() / 1000f64.ln();
        // The end slices reach half a step beyond the points: 1/64 of the span's log width.
        let slack = (5f64.ln() / 64.0) / 1000f64.ln();
        assert!(part >= inside && part <= inside + slack + 1e-12, "{part} vs {inside}");
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
        // IEC 60268-1:1985, clause 7, table II, typed here again from the standard's table
        // (check-values.md) rather than read from IEC_BANDS: band levels (dB) and tolerances,
        // 20 Hz to 20 kHz, each band measured on the weights within its tolerance.
        let table: [(f64, f64); 31] = [
            (-13.5, 3.0),
            (-10.2, 2.0),
            (-7.4, 1.0),
            (-5.2, 1.0),
            (-3.5, 1.0),
            (-2.3, 1.0),
            (-1.4, 1.0),
            (-0.9, 0.8),
            (-0.5, 0.6),
            (-0.2, 0.5),
            (-0.1, 0.5),
            (0.0, 0.5),
            (0.0, 0.5),
            (0.0, 0.5),
            (0.0, 0.5),
            (0.0, 0.5),
            (0.0, 0.5),
            (-0.1, 0.6),
            (-0.3, 0.7),
            (-0.6, 0.8),
            (-1.0, 1.0),
            (-1.6, 1.0),
            (-2.5, 1.0),
            (-3.7, 1.0),
            (-5.1, 1.0),
            (-7.0, 1.0),
            (-9.4, 1.0),
            (-11.9, 1.0),
            (-14.8, 1.5),
            (-18.2, 2.0),
            (-21.6, 3.0),
        ];
        let f = log_sweep(10.0, 40e3, 96.0);
        let w = weights(Programme::IecProgramme, &f);
        let third = 2f64.powf(1.0 / 6.0);
        let band = |i: usize| {
            let c = 1000.0 * 2f64.powf((i as f64 - 17.0) / 3.0);
            f.iter().zip(&w).filter(|(f, _)| **f >= c / third && **f < c * third).map(|(_, w)| w).sum::<f64>()
        };
        let zero = band(14);
        for (i, (db, tol)) in table.iter().enumerate() {
            let got = 10.0 * (band(i) / zero).log10();
            assert!((got - db).abs() <= *tol, "band {i}: {got:.2} dB vs {db} +- {tol}");
        }
        // Full-band power about 12.5 dB above the 0 dB band (check-values.md: power sum
        // 12.56 dB of the table).
        let total = 10.0 * (w.iter().sum::<f64>() / zero).log10();
        assert!((total - 12.56).abs() < 0.15, "total {total}");
    }
}
