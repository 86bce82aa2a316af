//! Confirmation at the terminals: the predicted input impedance of a scenario against the
//! impedance sweep measured at the speaker's terminals, over the sweep's points inside the
//! analysis sweep: RMS and worst |Z| error in per cent (of the measured |Z|) with the worst
//! frequency, RMS and worst phase error in degrees, and a verdict against the job's limits.

use num_complex::Complex64;

use crate::analysis::{input_impedances, Verdict};
use crate::model::terminals::TerminalLimits;
use crate::model::{Amplifier, ImpedanceTable, Network, Scenario};
use crate::units::{hz, trim_number};

#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct Confirmation {
    pub scenario: Scenario,
    pub file: String,
    pub points: usize,
    pub from_hz: f64,
    pub to_hz: f64,
    pub z_rms_pct: f64,
    pub z_worst_pct: f64,
    pub worst_hz: f64,
    pub phase_rms_deg: f64,
    pub phase_worst_deg: f64,
    pub phase_worst_hz: f64,
    pub limits: TerminalLimits,
    pub verdict: Verdict,
    pub reason: String,
    /// Per point compared: frequency, measured |Z| and phase, predicted |Z| and phase.
    #[serde(skip)]
    pub curves: Vec<[f64; 5]>,
}

/// `network` (a scenario as solved) against `sweep`, at the sweep's points from `lo` to `hi`
/// (the analysis sweep's range, over which every model and table holds). None when fewer than
/// three points fall there, or the network cannot be solved at them.
pub fn confirm(scenario: Scenario, network: &Network, amp: &Amplifier, sweep: &ImpedanceTable, (lo, hi): (f64, f64), limits: TerminalLimits) -> Option<Confirmation> {
    let idx: Vec<usize> = (0..sweep.freq_hz.len()).filter(|&i| sweep.freq_hz[i] >= lo * (1.0 - 1e-9) && sweep.freq_hz[i] <= hi * (1.0 + 1e-9)).collect();
    if idx.len() < 3 {
        return None;
    }
    let freqs: Vec<f64> = idx.iter().map(|&i| sweep.freq_hz[i]).collect();
    let z: Vec<Complex64> = input_impedances(network, amp, &freqs).ok()?;
    let mut curves = Vec::with_capacity(idx.len());
    let (mut z2, mut p2) = (0.0, 0.0);
    let (mut z_worst, mut worst_hz, mut p_worst, mut p_worst_hz) = (0.0f64, freqs[0], 0.0f64, freqs[0]);
    for (k, &i) in idx.iter().enumerate() {
        let (m, mp) = (sweep.ohm[i], sweep.phase_deg[i]);
        let (p, pp) = (z[k].norm(), z[k].arg().to_degrees());
        let ez = 100.0 * (p - m) / m;
        let ep = crate::engine::wrap_deg(pp - mp);
        z2 += ez * ez;
        p2 += ep * ep;
        if ez.abs() > z_worst.abs() {
            z_worst = ez;
            worst_hz = freqs[k];
        }
        if ep.abs() > p_worst.abs() {
            p_worst = ep;
            p_worst_hz = freqs[k];
        }
        curves.push([freqs[k], m, mp, p, pp]);
    }
    let n = idx.len() as f64;
    let (z_rms, p_rms) = ((z2 / n).sqrt(), (p2 / n).sqrt());
    let t = |v: f64| trim_number(v, 3);
    let mut beyond = Vec::new();
    if z_rms > limits.z_rms_pct {
        beyond.push(format!("|Z| RMS error {z_rms:.1} % (limit {} %)", t(limits.z_rms_pct)));
    }
    if z_worst.abs() > limits.z_worst_pct {
        beyond.push(format!("|Z| worst error {z_worst:+.1} % at {} (limit {} %)", hz(Some(worst_hz)), t(limits.z_worst_pct)));
    }
    if p_rms > limits.phase_rms_deg {
        beyond.push(format!("phase RMS error {p_rms:.1} degrees (limit {})", t(limits.phase_rms_deg)));
    }
    let (verdict, reason) = if beyond.is_empty() {
        (
            Verdict::Ok,
            format!(
                "the measured sweep confirms the prediction: |Z| within {z_rms:.1} % RMS ({z_worst:+.1} % at worst, at {}), phase within {p_rms:.1} degrees RMS",
                hz(Some(worst_hz))
            ),
        )
    } else {
        (Verdict::Over, format!("the measured sweep departs from the prediction: {}; the largest |Z| difference is at {}", beyond.join(", "), hz(Some(worst_hz))))
    };
    Some(Confirmation {
        scenario,
        file: sweep.file.clone(),
        points: idx.len(),
        from_hz: freqs[0],
        to_hz: freqs[freqs.len() - 1],
        z_rms_pct: z_rms,
        z_worst_pct: z_worst,
        worst_hz,
        phase_rms_deg: p_rms,
        phase_worst_deg: p_worst,
        phase_worst_hz: p_worst_hz,
        limits,
        verdict,
        reason,
        curves,
    })
}
