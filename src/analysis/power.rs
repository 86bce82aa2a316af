//! The amplifier power this speaker suits: one figure, defined once here, which every
//! report, `solve` and the JSON state the same way.
//!
//! It is the largest amplifier power (into the amplifier's rated load, its programme at the
//! job's share of it: one eighth by default, the level IEC 60065 4.2.6 sets for heating
//! tests) at which every rated part and driver keeps the margin its stress verdict holds it
//! to, so the figure and the verdicts never disagree:
//! - a resistor's programme dissipation at most half its rating (the 2x margin `rating: auto`
//!   chooses with, common practice), so a resistor the tool rated never limits the speaker
//!   below the job's amplifier;
//! - a driver's programme power at most its rated power;
//! - a capacitor's peak voltage at the amplifier's full sine at most 80 % of its voltage
//!   rating (an amplifier's peaks reach its full sine's on programme too);
//! - an inductor's RMS current at full sine at most 80 % of its current rating.
//!
//! Every stress figure scales with the square of the drive, so each limit gives its power
//! directly. A part or driver with no rating on record bounds nothing: it is named, and the
//! stated figure is then never above the job's own amplifier, whose power the figures were
//! worked at. The figure is rounded down to two significant figures, so it never promises
//! more than the calculation.
//!
//! The steady-tone figure (a full-level sine at the worst frequency) is kept apart as a bench
//! caution: it is not the power the speaker suits on music.

use crate::analysis::stress::{CAPACITOR_MARGIN, RESISTOR_MARGIN};
use crate::analysis::{Findings, Verdict};
use crate::model::{Amplifier, PartKind, Scenario};
use crate::units::trim_number;

#[derive(Debug, Clone, PartialEq, Default, serde::Serialize)]
pub struct PowerRange {
    /// The largest amplifier power (W into `into_ohm`) at which every rated part and driver
    /// keeps its margin; None when no part or driver has a rating on record.
    pub max_w: Option<f64>,
    /// The figure every report states: `max_w` rounded down to two significant figures, and
    /// no more than the job's amplifier when any part or driver is unrated. None when
    /// nothing is rated.
    pub suits_w: Option<f64>,
    pub into_ohm: f64,
    /// The job's amplifier power, at which the figures were worked.
    pub job_w: f64,
    /// The part or driver that reaches its limit first, and which limit, in words.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub limited_by: Option<String>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub limit: Option<String>,
    /// The largest amplifier power at which even a full-level sine (a steady tone at the
    /// worst frequency) keeps every rated part and driver within its rating (no margin): a
    /// bench caution, not the power the speaker suits.
    pub sine_max_w: Option<f64>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub sine_limited_by: Option<String>,
    /// The frequency of that steady tone.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub sine_at_hz: Option<f64>,
    /// Parts and drivers with no rating on record, which bound nothing.
    pub unrated: Vec<String>,
    /// The load the amplifier sees as left, and its verdict.
    pub min_ohm: f64,
    pub load_verdict: Verdict,
    /// The definition, in a sentence.
    pub basis: String,
}

/// The power at which a figure that is `at_job` at the job's amplifier power reaches `limit`,
/// a figure in watts scaling with power (`square` false) or in volts or amperes scaling with
/// its square root (`square` true).
fn power_at(job_w: f64, at_job: f64, limit: f64, square: bool) -> Option<f64> {
    if at_job <= 0.0 || !at_job.is_finite() || !limit.is_finite() {
        return None;
    }
    let ratio = if square { (limit / at_job).powi(2) } else { limit / at_job };
    Some(job_w * ratio)
}

/// `v` rounded down to two significant figures (437.9 -> 430, 95.4 -> 95).
pub fn round_down_2(v: f64) -> f64 {
    if v <= 0.0 || !v.is_finite() {
        return 0.0;
    }
    let step = 10f64.powf(v.log10().floor() - 1.0);
    (v / step + 1e-9).floor() * step
}

pub fn power_range(amp: &Amplifier, f: &Findings) -> PowerRange {
    let p = amp.power_w;
    let mut limits: Vec<(f64, String, String)> = Vec::new();
    // With a full-level sine, against the rating itself: a resistor's and a driver's sine
    // power; a capacitor's peak voltage and an inductor's current are already at full sine.
    let mut sine: Vec<(f64, String, f64)> = Vec::new();
    let t = |v: f64| trim_number(v, 3);
    let mut unrated = Vec::new();
    for r in f.stress.rows.iter().filter(|r| r.scenario == Scenario::AsLeft) {
        match r.kind {
            // A resistor not fitted (0 ohm link or open) dissipates nothing.
            PartKind::Resistor if r.programme_w <= 0.0 => continue,
            PartKind::Resistor => match r.rating_w {
                Some(w) => {
                    limits.extend(
                        power_at(p, RESISTOR_MARGIN * r.programme_w, w, false)
                            .map(|x| (x, r.part.clone(), format!("its programme dissipation reaches half its {} W rating", t(w)))),
                    );
                    sine.extend(power_at(p, r.sine_w, w, false).map(|x| (x, r.part.clone(), r.sine_at_hz)));
                }
                None => unrated.push(r.part.clone()),
            },
            PartKind::Capacitor => match (r.rating_v, r.peak_v) {
                (Some(v), Some(pk)) => {
                    limits.extend(power_at(p, pk, CAPACITOR_MARGIN * v, true).map(|x| (x, r.part.clone(), format!("its peak voltage reaches 80 % of its {} V rating", t(v)))));
                    sine.extend(power_at(p, pk, v, true).map(|x| (x, r.part.clone(), r.peak_at_hz.unwrap_or(r.sine_at_hz))));
                }
                (Some(_), None) => {}
                (None, _) => unrated.push(r.part.clone()),
            },
            PartKind::Inductor => match (r.rating_a, r.rms_a) {
                (Some(a), Some(i)) => {
                    limits.extend(power_at(p, i, CAPACITOR_MARGIN * a, true).map(|x| (x, r.part.clone(), format!("its current reaches 80 % of its {} A rating", t(a)))));
                    sine.extend(power_at(p, i, a, true).map(|x| (x, r.part.clone(), r.rms_at_hz.unwrap_or(r.sine_at_hz))));
                }
                (Some(_), None) => {}
                (None, _) => unrated.push(r.part.clone()),
            },
        }
    }
    for d in f.stress.drivers.iter().filter(|d| d.scenario == Scenario::AsLeft) {
        match d.rated_w {
            Some(w) => {
                limits.extend(power_at(p, d.programme_w, w, false).map(|x| (x, d.driver.clone(), format!("its programme power reaches its {} W rating", t(w)))));
                sine.extend(power_at(p, d.sine_w, w, false).map(|x| (x, d.driver.clone(), d.sine_at_hz)));
            }
            None => unrated.push(d.driver.clone()),
        }
    }
    let first = limits.iter().min_by(|a, b| a.0.total_cmp(&b.0)).cloned();
    let sine_first = sine.iter().min_by(|a, b| a.0.total_cmp(&b.0)).cloned();
    let load = &f.loads.as_left;
    let share = trim_number(100.0 * amp.programme_power_w() / amp.power_w, 3);
    let max_w = first.as_ref().map(|x| x.0);
    let suits_w = max_w.map(|m| round_down_2(if unrated.is_empty() { m } else { m.min(p) }));
    let unrated_text = match unrated.as_slice() {
        [] => String::new(),
        [one] => format!("; {one} has no rating on record, bounds nothing, and keeps the figure at or below the job's amplifier"),
        [rest @ .., last] => format!("; {} and {last} have no rating on record, bound nothing, and keep the figure at or below the job's amplifier", rest.join(", ")),
    };
    PowerRange {
        max_w,
        suits_w,
        into_ohm: amp.into_ohm,
        job_w: p,
        limit: first.as_ref().map(|x| x.2.clone()),
        limited_by: first.map(|x| x.1),
        sine_max_w: sine_first.as_ref().map(|x| x.0),
        sine_at_hz: sine_first.as_ref().map(|x| x.2),
        sine_limited_by: sine_first.map(|x| x.1),
        unrated,
        min_ohm: load.min_ohm,
        load_verdict: load.verdict,
        basis: format!(
            "the largest amplifier power into {} ohm, with programme at {share} % of it (the job's share; one eighth is the level IEC 60065 4.2.6 uses for heating), at which every rated part and driver keeps the margin of its stress verdict: a resistor's programme dissipation at most half its rating, a driver's programme power at most its rating, a capacitor's peak voltage and an inductor's current at full sine at most 80 % of theirs; rounded down to two significant figures{unrated_text}",
            trim_number(amp.into_ohm, 3)
        ),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn rounds_down_to_two_figures() {
        assert_eq!(round_down_2(437.86), 430.0);
        assert_eq!(round_down_2(95.4), 95.0);
        assert_eq!(round_down_2(1200.0), 1200.0);
        assert_eq!(round_down_2(0.0), 0.0);
    }

    #[test]
    fn power_scales_with_watts_and_with_the_square_of_volts() {
        // 2 W in a 10 W resistor at 50 W: 250 W reaches the rating; 40 V peak on a 100 V
        // capacitor at 50 W: (100/40)^2 x 50 = 312.5 W.
        assert_eq!(power_at(50.0, 2.0, 10.0, false), Some(250.0));
        assert_eq!(power_at(50.0, 40.0, 100.0, true), Some(312.5));
        assert_eq!(power_at(50.0, 0.0, 10.0, false), None);
    }
}
