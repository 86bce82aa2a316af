//! Stress figures at the customer's amplifier: for every part, the dissipation in its own
//! resistance, a capacitor's peak voltage and an inductor's current, with a full-level sine at
//! the worst frequency of the sweep and with the programme spectrum; power into each driver;
//! ratings chosen for `rating: auto` resistors; a verdict with its reason.

use crate::analysis::programme;
use crate::analysis::Scene;
use crate::engine::ElementModel;
use crate::model::{Job, PartKind, Programme, Rating, Scenario};
use crate::units::{a_or_an, hz, trim_number};

/// Stock resistor wattages a rating is chosen from (common practice for crossover resistors).
pub const STOCK_WATTS: [f64; 9] = [3.0, 5.0, 10.0, 15.0, 20.0, 25.0, 50.0, 75.0, 100.0];
/// A resistor's rating should be at least this many times its programme dissipation (common practice).
pub const RESISTOR_MARGIN: f64 = 2.0;
/// A capacitor's peak voltage above this fraction of its rating is flagged (common practice).
pub const CAPACITOR_MARGIN: f64 = 0.8;
/// Programme dissipation in a capacitor's ESR above which it is flagged (common practice).
pub const CAPACITOR_WATTS: f64 = 1.0;

#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct StressRow {
    pub scenario: Scenario,
    pub part: String,
    pub kind: &'static str,
    pub sine_w: f64,
    pub sine_at_hz: f64,
    pub programme_w: f64,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub peak_v: Option<f64>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub peak_at_hz: Option<f64>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub rms_a: Option<f64>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub rms_at_hz: Option<f64>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub rating_w: Option<f64>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub rating_v: Option<f64>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub rating_a: Option<f64>,
    /// True when voicekeep chose the rating (`rating: auto`).
    pub rating_chosen: bool,
    pub verdict: &'static str,
    pub reason: String,
}

#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct DriverPower {
    pub scenario: Scenario,
    pub driver: String,
    pub sine_w: f64,
    pub sine_at_hz: f64,
    pub programme_w: f64,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub rated_w: Option<f64>,
    pub verdict: &'static str,
    pub reason: String,
}

#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct Stress {
    /// The sine drive: the amplifier's full rated power.
    pub e_rms: f64,
    /// The programme drive: its long-term power, by default one eighth of rated.
    pub programme_e_rms: f64,
    pub programme_w: f64,
    pub amplifier: String,
    pub programme: Programme,
    pub programme_text: &'static str,
    /// How the two drive levels were chosen, in a sentence.
    pub basis: String,
    pub rows: Vec<StressRow>,
    pub drivers: Vec<DriverPower>,
}

/// The smallest stock wattage at least twice the programme dissipation.
pub fn choose_rating(programme_w: f64) -> f64 {
    let need = RESISTOR_MARGIN * programme_w;
    STOCK_WATTS.iter().cloned().find(|w| *w >= need).unwrap_or(STOCK_WATTS[STOCK_WATTS.len() - 1])
}

pub fn stress(job: &Job, freqs: &[f64], scenes: &[Scene; 3]) -> Stress {
    let e = job.amplifier.e_rms();
    let e2 = e * e;
    let ep = job.amplifier.programme_e_rms();
    let ep2 = ep * ep;
    let mut rows = Vec::new();
    let mut drivers = Vec::new();
    for s in scenes {
        for (k, el) in s.circuit.elements.iter().enumerate() {
            // The scene's peaks are per volt of EMF, with the programme weights of the job.
            let pk = &s.peaks[k];
            let sine = (e2 * pk.power.0, freqs[pk.power.1]);
            let prog = ep2 * pk.programme;
            let (v2max, i2max) = ((pk.v2.0, freqs[pk.v2.1]), (pk.i2.0, freqs[pk.i2.1]));
            let peak = (std::f64::consts::SQRT_2 * e * v2max.0.sqrt(), v2max.1);
            let irms = (e * i2max.0.sqrt(), i2max.1);
            if el.is_driver {
                let d = s.network.driver(&el.name).expect("driver");
                let (verdict, reason) = match d.rated_power {
                    Some(r) if prog > r => {
                        ("over", format!("takes {} W of programme, above its {} W rating: limit the amplifier's level", trim_number(prog, 3), trim_number(r, 3)))
                    }
                    Some(r) if sine.0 > r => (
                        "check",
                        format!(
                            "a full-level sine near {} puts {} W into it, above its {} W rating: keep test tones low",
                            hz(Some(sine.1)),
                            trim_number(sine.0, 3),
                            trim_number(r, 3)
                        ),
                    ),
                    Some(r) => ("ok", format!("{} W of programme against {} {} W rating", trim_number(prog, 3), a_or_an(r), trim_number(r, 3))),
                    None => ("ok", "no power rating on record for this driver".to_string()),
                };
                drivers.push(DriverPower {
                    scenario: s.scenario,
                    driver: el.name.clone(),
                    sine_w: sine.0,
                    sine_at_hz: sine.1,
                    programme_w: prog,
                    rated_w: d.rated_power,
                    verdict,
                    reason,
                });
                continue;
            }
            let part = s.network.part(&el.name).expect("part");
            let mut row = StressRow {
                scenario: s.scenario,
                part: el.name.clone(),
                kind: part.kind.name(),
                sine_w: sine.0,
                sine_at_hz: sine.1,
                programme_w: prog,
                peak_v: None,
                peak_at_hz: None,
                rms_a: None,
                rms_at_hz: None,
                rating_w: None,
                rating_v: None,
                rating_a: None,
                rating_chosen: false,
                verdict: "ok",
                reason: String::new(),
            };
            match part.kind {
                PartKind::Resistor => {
                    let rating = match part.rating {
                        Rating::Given(w) => Some(w),
                        Rating::Auto => {
                            row.rating_chosen = true;
                            Some(choose_rating(prog))
                        }
                        Rating::None => None,
                    };
                    row.rating_w = rating;
                    let r_ohm = match el.model {
                        ElementModel::Resistor { r } => r,
                        _ => f64::NAN,
                    };
                    (row.verdict, row.reason) = if r_ohm == 0.0 {
                        ("ok", "not fitted: a wire link (0 ohm) in its place".to_string())
                    } else if r_ohm.is_infinite() {
                        ("ok", "not fitted: left open".to_string())
                    } else {
                        match rating {
                            None => (
                                "check",
                                format!("no power rating on record: fit at least {} W (twice the programme figure, common practice)", trim_number(choose_rating(prog), 3)),
                            ),
                            Some(r) if prog > r => (
                                "over",
                                format!(
                                    "dissipates {} W on programme, above its {} W rating: fit {} {} W part",
                                    trim_number(prog, 3),
                                    trim_number(r, 3),
                                    a_or_an(choose_rating(prog)),
                                    trim_number(choose_rating(prog), 3)
                                ),
                            ),
                            Some(r) if RESISTOR_MARGIN * prog > r => (
                                "check",
                                format!("{} W on programme leaves less than the 2x margin under its {} W rating (common practice)", trim_number(prog, 3), trim_number(r, 3)),
                            ),
                            Some(r) if sine.0 > r => (
                                "check",
                                format!(
                                    "a full-level test tone near {} overheats {} ({} W in {} {} W part): keep bench test levels low",
                                    hz(Some(sine.1)),
                                    el.name,
                                    trim_number(sine.0, 3),
                                    a_or_an(r),
                                    trim_number(r, 3)
                                ),
                            ),
                            Some(r) => (
                                "ok",
                                format!(
                                    "{} W on programme, {} W with a full-level sine, in {} {} W part",
                                    trim_number(prog, 2),
                                    trim_number(sine.0, 2),
                                    a_or_an(r),
                                    trim_number(r, 3)
                                ),
                            ),
                        }
                    };
                }
                PartKind::Capacitor => {
                    row.peak_v = Some(peak.0);
                    row.peak_at_hz = Some(peak.1);
                    let rating = match part.rating {
                        Rating::Given(v) => Some(v),
                        _ => None,
                    };
                    row.rating_v = rating;
                    (row.verdict, row.reason) = match rating {
                        None => ("check", format!("peaks at {} V near {}; no voltage rating on record", trim_number(peak.0, 3), hz(Some(peak.1)))),
                        Some(r) if peak.0 > r => ("over", format!("peaks at {} V near {}, above its {} V rating", trim_number(peak.0, 3), hz(Some(peak.1)), trim_number(r, 3))),
                        Some(r) if peak.0 > CAPACITOR_MARGIN * r => {
                            ("check", format!("peaks at {} V, above 80 % of its {} V rating (common practice)", trim_number(peak.0, 3), trim_number(r, 3)))
                        }
                        Some(r) => ("ok", format!("peaks at {} V near {} against {} {} V rating", trim_number(peak.0, 3), hz(Some(peak.1)), a_or_an(r), trim_number(r, 3))),
                    };
                    // A crossover capacitor should run near cool: watts in its ESR age it fast
                    // (common practice: under 1 W on programme).
                    if row.verdict == "ok" && prog > CAPACITOR_WATTS {
                        row.verdict = "check";
                        row.reason = format!("its ESR dissipates {} W on programme, enough to heat it; {}", trim_number(prog, 3), row.reason);
                    }
                }
                PartKind::Inductor => {
                    row.rms_a = Some(irms.0);
                    row.rms_at_hz = Some(irms.1);
                    let rating = match part.rating {
                        Rating::Given(a) => Some(a),
                        _ => None,
                    };
                    row.rating_a = rating;
                    (row.verdict, row.reason) = match rating {
                        Some(r) if irms.0 > r => ("over", format!("carries {} A near {}, above its {} A rating", trim_number(irms.0, 3), hz(Some(irms.1)), trim_number(r, 3))),
                        Some(r) if irms.0 > CAPACITOR_MARGIN * r => ("check", format!("carries {} A, above 80 % of its {} A rating", trim_number(irms.0, 3), trim_number(r, 3))),
                        _ => ("ok", format!("carries up to {} A near {}; {} W in its DCR on programme", trim_number(irms.0, 3), hz(Some(irms.1)), trim_number(prog, 2))),
                    };
                }
            }
            rows.push(row);
        }
    }
    let amp = &job.amplifier;
    let pw = amp.programme_power_w();
    let share = match amp.programme_w {
        Some(_) => "as the job gives it".to_string(),
        None => {
            "one eighth of the rated power, the level IEC 62368-1 uses for an audio amplifier's normal operation (recalled from memory, not checked against the standard's text)"
                .to_string()
        }
    };
    let basis = format!(
        "Sine figures: a full-level sine of {} V RMS ({} W into {} ohm) at the worst frequency from {} to {}, the bench-tone worst case. Programme figures: {} at {} W into {} ohm ({} V RMS), {share}; noise peaks 1.8 to 4 times its RMS, so an amplifier cannot deliver noise at its full sine power unclipped.",
        trim_number(e, 3),
        trim_number(amp.power_w, 3),
        trim_number(amp.into_ohm, 3),
        hz(freqs.first().copied()),
        hz(freqs.last().copied()),
        programme::describe(job.analysis.programme),
        trim_number(pw, 3),
        trim_number(amp.into_ohm, 3),
        trim_number(ep, 3),
    );
    Stress {
        e_rms: e,
        programme_e_rms: ep,
        programme_w: pw,
        amplifier: format!("{} W into {} ohm ({} V RMS)", trim_number(amp.power_w, 3), trim_number(amp.into_ohm, 3), trim_number(e, 3)),
        programme: job.analysis.programme,
        programme_text: programme::describe(job.analysis.programme),
        basis,
        rows,
        drivers,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn rating_is_at_least_twice_the_programme_figure() {
        assert_eq!(choose_rating(0.4), 3.0);
        assert_eq!(choose_rating(1.6), 5.0);
        assert_eq!(choose_rating(2.6), 10.0);
        assert_eq!(choose_rating(5.0), 10.0);
        assert_eq!(choose_rating(5.01), 15.0);
    }
}
