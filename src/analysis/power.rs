//! The largest amplifier power the speaker as left suits: the power (into the amplifier's
//! rated load, with the job's programme at the same share of it) at which the first part or
//! driver reaches the limit the stress verdicts hold it to. Every stress figure scales with
//! the square of the drive, so each limit gives its power directly:
//! - a resistor's programme dissipation against its rating (the one fitted, or chosen);
//! - a driver's programme power against its rated power;
//! - a capacitor's peak voltage at the amplifier's full sine against its voltage rating (an
//!   amplifier's peaks reach its full sine's on programme too);
//! - an inductor's RMS current at full sine against its current rating.
//!
//! A part or driver with no rating on record bounds nothing, and is named as such.

use crate::analysis::{Findings, Verdict};
use crate::model::{Amplifier, PartKind, Scenario};
use crate::units::trim_number;

#[derive(Debug, Clone, PartialEq, Default, serde::Serialize)]
pub struct PowerRange {
    /// The largest amplifier power (W into `into_ohm`) with nothing over its limit; None
    /// when no part or driver has a rating on record.
    pub max_w: Option<f64>,
    pub into_ohm: f64,
    /// The part or driver that reaches its limit first, and which limit, in words.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub limited_by: Option<String>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub limit: Option<String>,
    /// The largest amplifier power at which even a full-level sine (a steady tone at the
    /// worst frequency) keeps every part and driver within its rating: the cautious end of
    /// the range.
    pub sine_max_w: Option<f64>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub sine_limited_by: Option<String>,
    /// Parts and drivers with no rating on record, which bound nothing.
    pub unrated: Vec<String>,
    /// The load the amplifier sees as left, and its verdict.
    pub min_ohm: f64,
    pub load_verdict: Verdict,
    /// The assumptions, in a sentence.
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

pub fn power_range(amp: &Amplifier, f: &Findings) -> PowerRange {
    let p = amp.power_w;
    let mut limits: Vec<(f64, String, String)> = Vec::new();
    // With a full-level sine: a resistor's and a driver's sine power against their ratings;
    // a capacitor's and an inductor's limits are already at full sine.
    let mut sine: Vec<(f64, String)> = Vec::new();
    let t = |v: f64| trim_number(v, 3);
    let mut unrated = Vec::new();
    for r in f.stress.rows.iter().filter(|r| r.scenario == Scenario::AsLeft) {
        let limit = match r.kind {
            // A resistor not fitted (0 ohm link or open) dissipates nothing.
            PartKind::Resistor if r.programme_w <= 0.0 => continue,
            PartKind::Resistor => r.rating_w.map(|w| power_at(p, r.programme_w, w, false).map(|x| (x, format!("its programme dissipation reaches its {} W rating", t(w))))),
            PartKind::Capacitor => r.rating_v.map(|v| r.peak_v.and_then(|pk| power_at(p, pk, v, true)).map(|x| (x, format!("its peak voltage reaches its {} V rating", t(v))))),
            PartKind::Inductor => r.rating_a.map(|a| r.rms_a.and_then(|i| power_at(p, i, a, true)).map(|x| (x, format!("its current reaches its {} A rating", t(a))))),
        };
        let at_sine = match r.kind {
            PartKind::Resistor => r.rating_w.and_then(|w| power_at(p, r.sine_w, w, false)),
            _ => limit.clone().flatten().map(|x| x.0),
        };
        sine.extend(at_sine.map(|w| (w, r.part.clone())));
        match limit {
            Some(Some((w, why))) => limits.push((w, r.part.clone(), why)),
            Some(None) => {}
            // An inductor's current rating is rarely on record; it is named with the others.
            None => unrated.push(r.part.clone()),
        }
    }
    for d in f.stress.drivers.iter().filter(|d| d.scenario == Scenario::AsLeft) {
        match d.rated_w {
            Some(w) => {
                limits.extend(power_at(p, d.programme_w, w, false).map(|x| (x, d.driver.clone(), format!("its programme power reaches its {} W rating", t(w)))));
                sine.extend(power_at(p, d.sine_w, w, false).map(|x| (x, d.driver.clone())));
            }
            None => unrated.push(d.driver.clone()),
        }
    }
    let first = limits.iter().min_by(|a, b| a.0.total_cmp(&b.0)).cloned();
    let sine_first = sine.iter().min_by(|a, b| a.0.total_cmp(&b.0)).cloned();
    let load = &f.loads.as_left;
    let share = trim_number(100.0 * amp.programme_power_w() / amp.power_w, 3);
    let unrated_text = match unrated.as_slice() {
        [] => String::new(),
        [one] => format!("; {one} has no rating on record and bounds nothing"),
        [rest @ .., last] => format!("; {} and {last} have no rating on record and bound nothing", rest.join(", ")),
    };
    PowerRange {
        max_w: first.as_ref().map(|x| x.0),
        into_ohm: amp.into_ohm,
        limit: first.as_ref().map(|x| x.2.clone()),
        limited_by: first.map(|x| x.1),
        sine_max_w: sine_first.as_ref().map(|x| x.0),
        sine_limited_by: sine_first.map(|x| x.1),
        unrated,
        min_ohm: load.min_ohm,
        load_verdict: load.verdict,
        basis: format!(
            "the amplifier's power into {} ohm with programme at {share} % of it (the job's share), found where the first part or driver reaches its limit: a resistor's or driver's programme power against its rating, a capacitor's peak voltage and an inductor's current at full sine against theirs{unrated_text}",
            trim_number(amp.into_ohm, 3)
        ),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn power_scales_with_watts_and_with_the_square_of_volts() {
        // 2 W in a 10 W resistor at 50 W: 250 W reaches the rating; 40 V peak on a 100 V
        // capacitor at 50 W: (100/40)^2 x 50 = 312.5 W.
        assert_eq!(power_at(50.0, 2.0, 10.0, false), Some(250.0));
        assert_eq!(power_at(50.0, 40.0, 100.0, true), Some(312.5));
        assert_eq!(power_at(50.0, 0.0, 10.0, false), None);
    }
}
