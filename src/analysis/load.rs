//! The load the amplifier sees: minimum |Z|, the equivalent peak dissipation resistance
//! (EPDR) and the IEC 60268-5 rated-impedance rule.

use num_complex::Complex64;

use crate::analysis::Verdict;
use crate::units::{hz, ohm};

/// EPDR for a class-B output stage driven to full swing into |Z| at phase phi:
/// |Z| / (8 sin^3(30 deg + |phi|/3)), |phi| clamped to 90 deg.
/// Concept: K. Howard, Stereophile 2007; closed form derived in check-values.md by maximising
/// p = (V - v) i over the cycle.
pub fn epdr(z: Complex64) -> f64 {
    let phi = z.arg().abs().min(std::f64::consts::FRAC_PI_2);
    let s = (std::f64::consts::PI / 6.0 + phi / 3.0).sin();
    z.norm_sqr().sqrt() / (8.0 * s * s * s)
}

/// A lower bound of [`epdr`] without trigonometry: sin(30 deg + |phi|/3) is at most
/// 1/2 + (sqrt 3 / 2) |phi| / 3 (sine is concave there, so its tangent at 30 deg lies above it),
/// and |phi| is at most tan |phi| = |X| / R; the bound is lowered by 1e-9 of itself for rounding.
fn epdr_lower_bound(z: Complex64) -> f64 {
    let phi_max = if z.re > 0.0 { (z.im.abs() / z.re).min(std::f64::consts::FRAC_PI_2) } else { std::f64::consts::FRAC_PI_2 };
    let s = (0.5 + phi_max / (2.0 * 3f64.sqrt())).min(0.75f64.sqrt());
    z.norm_sqr().sqrt() / (8.0 * s * s * s) * (1.0 - 1e-9)
}

/// IEC 60268-5:2003+A1:2007, 16.1: the lowest |Z| in the rated frequency range shall not be
/// less than 80 % of the rated impedance.
pub fn rated_floor(rated_ohm: f64) -> f64 {
    0.8 * rated_ohm
}

#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct Load {
    /// The lowest |Z| and EPDR inside the rated frequency range, where they are judged.
    pub min_ohm: f64,
    pub min_at_hz: f64,
    pub epdr_min_ohm: f64,
    pub epdr_at_hz: f64,
    pub rated_impedance_holds: bool,
    /// The lowest |Z| inside the rated frequency range, which the 80 % rule judges.
    pub rated_range_min_ohm: f64,
    pub rated_floor_ohm: f64,
    /// The rated impedance the 80 % rule judges against (where it comes from:
    /// `Job::rated_impedance_basis`).
    pub rated_ohm: f64,
    /// The load dips below what many amplifiers take at high level (common practice: |Z|
    /// under 3 ohm or EPDR under 2 ohm).
    pub demanding: bool,
    pub verdict: Verdict,
    pub reason: String,
}

pub fn load(freqs: &[f64], z: &[Complex64], rated_ohm: f64, range: (f64, f64)) -> Load {
    let mut min = (f64::INFINITY, 0.0);
    let mut emin = (f64::INFINITY, 0.0);
    let mut rmin = f64::INFINITY;
    // The load is judged where the amplifier delivers its power: inside the rated frequency
    // range (20 Hz to 20 kHz unless the job says otherwise), or over the whole sweep when no
    // point of the sweep falls inside it.
    let inside = |f: f64| f >= range.0 * (1.0 - 1e-9) && f <= range.1 * (1.0 + 1e-9);
    let any_inside = freqs.iter().any(|f| inside(*f));
    for (f, z) in freqs.iter().zip(z) {
        if any_inside && !inside(*f) {
            continue;
        }
        let m = z.norm_sqr().sqrt();
        if m < min.0 {
            min = (m, *f);
        }
        // A point whose EPDR cannot beat the lowest so far is not worked out exactly (no
        // trigonometry); the result is the same.
        if epdr_lower_bound(*z) < emin.0 {
            let e = epdr(*z);
            if e < emin.0 {
                emin = (e, *f);
            }
        }
        if m < rmin {
            rmin = m;
        }
    }
    if !rmin.is_finite() {
        rmin = min.0;
    }
    let floor = rated_floor(rated_ohm);
    let holds = rmin >= floor;
    // Common practice: below about 3 ohm |Z| or 2 ohm EPDR many amplifiers run hot or current-limit.
    let (verdict, reason) = if min.0 < 2.0 || emin.0 < 1.5 {
        (Verdict::Over, format!("the load falls to {} (EPDR {}): too low for most amplifiers; check the amplifier maker's minimum load", ohm(min.0), ohm(emin.0)))
    } else if min.0 < 3.0 || emin.0 < 2.0 || !holds {
        let why = if holds { String::new() } else { format!("|Z| falls to {}, below 80 % of the rated {} (IEC 60268-5); ", ohm(rmin), ohm(rated_ohm)) };
        (Verdict::Check, format!("{why}minimum {} at {}, EPDR {}: hard on many amplifiers at high level", ohm(min.0), hz(Some(min.1)), ohm(emin.0)))
    } else {
        (Verdict::Ok, format!("minimum {} at {}, EPDR {} at {}: a normal load", ohm(min.0), hz(Some(min.1)), ohm(emin.0), hz(Some(emin.1))))
    };
    Load {
        min_ohm: min.0,
        min_at_hz: min.1,
        epdr_min_ohm: emin.0,
        epdr_at_hz: emin.1,
        rated_impedance_holds: holds,
        rated_range_min_ohm: rmin,
        rated_floor_ohm: floor,
        rated_ohm,
        demanding: min.0 < 3.0 || emin.0 < 2.0,
        verdict,
        reason,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn epdr_closed_form_matches_published_ratios() {
        // check-values.md [derived from Howard, Stereophile 2007]: EPDR/|Z| by phase angle.
        for (deg, ratio) in [(0.0, 1.0), (15.0, 0.6624), (30.0, 0.4707), (45.0, 0.35355), (60.0, 0.2781), (75.0, 0.2274), (90.0, 0.19245)] {
            let z = Complex64::from_polar(1.0, f64::to_radians(deg));
            assert!((epdr(z) - ratio).abs() < 1e-4, "{deg} deg: {} vs {ratio}", epdr(z));
        }
        let z = Complex64::from_polar(4.0, f64::to_radians(45.0));
        // 4 ohm at 45 degrees: exact 1.4142 ohm (check-values.md).
        assert!((epdr(z) - 4.0 * 0.35355).abs() < 1e-4);
    }

    #[test]
    fn epdr_agrees_with_brute_force_cycle() {
        // Maximise the output device's instantaneous dissipation (V - v) i over one cycle,
        // rail V = full swing, v = V sin x, i = (V/|Z|) sin(x - phi); EPDR = V^2 / (4 p_max).
        for deg in [0.0f64, 10.0, 33.0, 45.0, 70.0, 89.0] {
            let (vr, zm, phi) = (1.0f64, 6.0, deg.to_radians());
            let mut pmax: f64 = 0.0;
            for k in 0..200_000 {
                let x = k as f64 / 200_000.0 * std::f64::consts::TAU;
                let v = vr * x.sin();
                let i = vr / zm * (x - phi).sin();
                if i > 0.0 {
                    pmax = pmax.max((vr - v) * i);
                }
            }
            let brute = vr * vr / (4.0 * pmax);
            let closed = epdr(Complex64::from_polar(zm, phi));
            assert!((brute / closed - 1.0).abs() < 1e-6, "{deg} deg: brute {brute} closed {closed}");
        }
    }

    #[test]
    fn epdr_lower_bound_holds_and_load_finds_the_same_minimum() {
        for k in 0..=18_000 {
            let deg = -90.0 + k as f64 / 100.0;
            let z = Complex64::from_polar(4.7, f64::to_radians(deg));
            assert!(epdr_lower_bound(z) <= epdr(z), "{deg} deg: {} > {}", epdr_lower_bound(z), epdr(z));
        }
        // Tight where the phase is small, where the minimum usually is.
        let z = Complex64::from_polar(4.0, f64::to_radians(5.0));
        assert!(epdr_lower_bound(z) > 0.995 * epdr(z));
        // The shortcut in `load` gives the same minimum as working out every point.
        let f: Vec<f64> = (0..500).map(|k| 20.0 * 1000f64.powf(k as f64 / 499.0)).collect();
        let z: Vec<Complex64> = f.iter().map(|f| Complex64::new(3.0 + (f / 300.0).ln().abs(), 8.0 * (f / 1000.0).ln().sin())).collect();
        let brute = f.iter().zip(&z).map(|(f, z)| (epdr(*z), *f)).fold((f64::INFINITY, 0.0), |b, e| if e.0 < b.0 { e } else { b });
        let l = load(&f, &z, 8.0, (20.0, 20e3));
        assert_eq!((l.epdr_min_ohm, l.epdr_at_hz), brute);
    }

    #[test]
    fn rated_impedance_rule() {
        // IEC 60268-5 16.1 (check-values.md): 8 ohm rated holds down to 6.4 ohm, 4 ohm down to
        // 3.2 ohm, judged only inside the rated frequency range.
        let f = [100.0, 1000.0];
        let holds = |z: f64, rated: f64| load(&f, &[Complex64::new(z, 0.0), Complex64::new(9.0, 0.0)], rated, (20.0, 20e3)).rated_impedance_holds;
        assert!(holds(6.4, 8.0) && !holds(6.39, 8.0));
        assert!(holds(3.2, 4.0) && !holds(3.19, 4.0));
        // Outside the rated range (here 200 Hz to 20 kHz) a dip does not count.
        assert!(load(&f, &[Complex64::new(5.0, 0.0), Complex64::new(9.0, 0.0)], 8.0, (200.0, 20e3)).rated_impedance_holds);
    }
}
