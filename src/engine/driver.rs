//! Driver impedance models: a plain resistance; Re with a voice-coil inductance (simple Le or
//! Leach's lossy K (j w)^n) and Small's motional resonance; or a measured table. The
//! formulas are in [`Kernel::of_driver`]; this module interpolates the tables and holds the
//! models' worked-example tests.

use num_complex::Complex64;

use super::Kernel;
use crate::model::{DriverModel, ImpedanceTable};

/// Impedance of a driver model at `f_hz` (the formulas are in [`Kernel`]).
pub fn impedance(m: &DriverModel, f_hz: f64) -> Complex64 {
    Kernel::of_driver(m).at(f_hz)
}

/// Interpolates a measured table linearly in log frequency (magnitude in log too, so a
/// rising coil impedance stays smooth); clamps at the ends (validation keeps sweeps inside).
pub fn table_impedance(t: &ImpedanceTable, f_hz: f64) -> Complex64 {
    let (mag, ph) = interp_log(&t.freq_hz, &t.ohm, &t.phase_deg, f_hz, true);
    Complex64::from_polar(mag, ph.to_radians())
}

/// Interpolates two columns at `f` in log frequency; `log_mag` interpolates the first column
/// as a logarithm.
pub fn interp_log(fs: &[f64], a: &[f64], b: &[f64], f: f64, log_mag: bool) -> (f64, f64) {
    let n = fs.len();
    if f <= fs[0] {
        return (a[0], b[0]);
    }
    if f >= fs[n - 1] {
        return (a[n - 1], b[n - 1]);
    }
    let i = fs.partition_point(|x| *x <= f).max(1) - 1;
    let t = (f.ln() - fs[i].ln()) / (fs[i + 1].ln() - fs[i].ln());
    let av = if log_mag { (a[i].ln() + t * (a[i + 1].ln() - a[i].ln())).exp() } else { a[i] + t * (a[i + 1] - a[i]) };
    (av, b[i] + t * (b[i + 1] - b[i]))
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::model::{Resonance, VoiceCoilInductance};

    #[test]
    fn small_model_matches_worked_example() {
        // Small, JAES 20(5) 1972; check-values.md [derived]: Re 6.4, fs 50, Qms 4, Qes 0.5, Le 0.
        let m = DriverModel::VoiceCoil { re: 6.4, inductance: VoiceCoilInductance::None, resonance: Some(Resonance { fs: 50.0, qms: 4.0, qes: 0.5, derived: None }) };
        for (f, mag, ph) in [(20.0, 9.314, 40.19), (50.0, 57.60, 0.0), (100.0, 11.381, -46.85), (1000.0, 6.4401, -5.72)] {
            let z = impedance(&m, f);
            assert!((z.norm() - mag).abs() < 0.005 * mag.max(1.0) * 0.2, "{f} Hz: |Z| {} vs {mag}", z.norm());
            assert!((z.arg().to_degrees() - ph).abs() < 0.02, "{f} Hz: phase {} vs {ph}", z.arg().to_degrees());
        }
    }

    #[test]
    fn leach_inductance_matches_worked_example() {
        // Leach, JAES 50(6) 2002; check-values.md [derived]: K 0.05, n 0.7.
        let m = DriverModel::VoiceCoil { re: 0.0, inductance: VoiceCoilInductance::Leach { k: 0.05, n: 0.7 }, resonance: None };
        let z1 = impedance(&m, 1000.0);
        assert!((z1.re - 10.345).abs() < 0.001 && (z1.im - 20.304).abs() < 0.001, "{z1}");
        let z10 = impedance(&m, 10_000.0);
        assert!((z10.re - 51.849).abs() < 0.001 && (z10.im - 101.760).abs() < 0.001, "{z10}");
    }

    #[test]
    fn table_interpolates_in_log_frequency() {
        let t = ImpedanceTable { file: "t".into(), freq_hz: vec![100.0, 1000.0], ohm: vec![4.0, 16.0], phase_deg: vec![0.0, 40.0] };
        // Half-way in log f between 100 and 1000 Hz is sqrt(100 * 1000); log-|Z| half-way is 8.
        let z = table_impedance(&t, (1e5f64).sqrt());
        assert!((z.norm() - 8.0).abs() < 1e-9);
        assert!((z.arg().to_degrees() - 20.0).abs() < 1e-9);
    }
}
