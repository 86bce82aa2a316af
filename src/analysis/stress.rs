//! Stress figures at the customer's amplifier: for every part, the dissipation in its own
//! resistance, a capacitor's peak voltage and an inductor's current, with a full-level sine at
//! the worst frequency of the stress grid and with the programme spectrum; power into each
//! driver; ratings chosen for `rating: auto` resistors; a verdict with its reason.

use crate::analysis::{programme, Peaks, Scene, StressGrid, Verdict};
use crate::engine::ElementModel;
use crate::model::{Amplifier, Driver, Part, PartKind, Programme, Rating, Scenario};
use crate::units::{a_or_an, hz, trim_number, watts};

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
    pub kind: PartKind,
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
    pub verdict: Verdict,
    pub reason: String,
    /// The verdict is "check" only for a full-level sine on the bench (a test-tone caution),
    /// not for programme.
    #[serde(skip)]
    pub bench_only: bool,
}

impl StressRow {
    /// The verdict as a table prints it: "not rated" for an inductor with no current rating on
    /// record (nothing to judge it against), whatever its current.
    pub fn shown_verdict(&self) -> &'static str {
        if self.kind == PartKind::Inductor && self.rating_a.is_none() {
            "not rated"
        } else {
            self.verdict.name()
        }
    }
}

impl DriverPower {
    /// The verdict as a table prints it: "not rated" without a power rating on record.
    pub fn shown_verdict(&self) -> &'static str {
        if self.rated_w.is_none() {
            "not rated"
        } else {
            self.verdict.name()
        }
    }
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
    pub verdict: Verdict,
    pub reason: String,
    /// As [`StressRow::bench_only`].
    #[serde(skip)]
    pub bench_only: bool,
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

/// One element's figures at the amplifier: its peaks (per volt of EMF) scaled by the sine
/// and programme drives, each with the frequency where it occurs.
struct Figures {
    sine: (f64, f64),
    programme: f64,
    peak_v: (f64, f64),
    rms_a: (f64, f64),
}

impl Figures {
    fn of(pk: &Peaks, freqs: &[f64], e: f64, ep: f64) -> Figures {
        let at = |i: usize| freqs.get(i).copied().unwrap_or(f64::NAN);
        Figures {
            sine: (e * e * pk.power.0, at(pk.power.1)),
            programme: ep * ep * pk.programme,
            peak_v: (std::f64::consts::SQRT_2 * e * pk.v2.0.sqrt(), at(pk.v2.1)),
            rms_a: (e * pk.i2.0.sqrt(), at(pk.i2.1)),
        }
    }
}

/// Watts as a sentence prints them; a figure too small to matter (a part left open, a
/// driver cut off) is "under 0.001", never a row of zeros.
fn w(v: f64) -> String {
    if v > 0.0 && v < 0.001 {
        "under 0.001".into()
    } else {
        trim_number(v, 3)
    }
}

fn driver_power(s: &Scene, d: &Driver, x: &Figures) -> DriverPower {
    let (prog, sine) = (x.programme, x.sine);
    let (verdict, reason) = match d.rated_power {
        Some(r) if prog > r => (Verdict::Over, format!("takes {} of programme, above its {} rating: limit the amplifier's level", watts(prog), watts(r))),
        Some(r) if sine.0 > r => {
            (Verdict::Check, format!("a full-level sine near {} puts {} into it, above its {} rating: keep test tones low", hz(Some(sine.1)), watts(sine.0), watts(r)))
        }
        Some(r) => (Verdict::Ok, format!("{} of programme against {} {} rating", watts(prog), a_or_an(r), watts(r))),
        None => (Verdict::Ok, format!("no power rating on record for this driver, so not judged: takes {} of programme", watts(prog))),
    };
    let bench_only = verdict == Verdict::Check;
    DriverPower { scenario: s.scenario, driver: d.name.clone(), sine_w: sine.0, sine_at_hz: sine.1, programme_w: prog, rated_w: d.rated_power, verdict, reason, bench_only }
}

/// A resistor's rating (the job's, or one chosen from its programme dissipation, at least
/// `floor`: the rating the worse cabinet of a pair needs) and verdict.
fn resistor(row: &mut StressRow, part: &Part, r_ohm: f64, x: &Figures, floor: Option<f64>) {
    let (prog, sine) = (x.programme, x.sine);
    let rating = match part.rating {
        Rating::Given(v) => Some(v),
        Rating::Auto => {
            row.rating_chosen = true;
            Some(choose_rating(prog).max(floor.unwrap_or(0.0)))
        }
        Rating::None => None,
    };
    row.rating_w = rating;
    (row.verdict, row.reason) = if r_ohm == 0.0 {
        (Verdict::Ok, "not fitted: a wire link (0 ohm) in its place".to_string())
    } else if r_ohm.is_infinite() {
        (Verdict::Ok, "not fitted: left open".to_string())
    } else {
        let need = choose_rating(prog);
        match rating {
            None => (Verdict::Check, format!("no power rating on record: fit at least {} (twice the programme figure, common practice)", watts(need))),
            Some(r) if prog > r => (Verdict::Over, format!("dissipates {} on programme, above its {} rating: fit {} {} part", watts(prog), watts(r), a_or_an(need), watts(need))),
            Some(r) if RESISTOR_MARGIN * prog > r => {
                (Verdict::Check, format!("{} on programme leaves less than the 2x margin under its {} rating (common practice)", watts(prog), watts(r)))
            }
            Some(r) if sine.0 > r => {
                row.bench_only = true;
                (
                    Verdict::Check,
                    format!(
                        "a full-level test tone near {} overheats {} ({} W in {} {} W part): keep bench test levels low",
                        hz(Some(sine.1)),
                        part.name,
                        w(sine.0),
                        a_or_an(r),
                        w(r)
                    ),
                )
            }
            Some(r) => (Verdict::Ok, format!("{} on programme, {} with a full-level sine, in {} {} part", watts(prog), watts(sine.0), a_or_an(r), watts(r))),
        }
    };
}

/// A capacitor's peak voltage against its rating, and the heat in its ESR.
fn capacitor(row: &mut StressRow, part: &Part, x: &Figures) {
    let peak = x.peak_v;
    row.peak_v = Some(peak.0);
    row.peak_at_hz = Some(peak.1);
    let rating = if let Rating::Given(v) = part.rating { Some(v) } else { None };
    row.rating_v = rating;
    (row.verdict, row.reason) = match rating {
        None => (Verdict::Check, format!("peaks at {} V near {}; no voltage rating on record", w(peak.0), hz(Some(peak.1)))),
        Some(r) if peak.0 > r => (Verdict::Over, format!("peaks at {} V near {}, above its {} V rating", w(peak.0), hz(Some(peak.1)), w(r))),
        Some(r) if peak.0 > CAPACITOR_MARGIN * r => (Verdict::Check, format!("peaks at {} V, above 80 % of its {} V rating (common practice)", w(peak.0), w(r))),
        Some(r) => (Verdict::Ok, format!("peaks at {} V near {} against {} {} V rating", w(peak.0), hz(Some(peak.1)), a_or_an(r), w(r))),
    };
    // A crossover capacitor should run near cool: watts in its ESR age it fast (common
    // practice: under 1 W on programme).
    if row.verdict == Verdict::Ok && x.programme > CAPACITOR_WATTS {
        row.verdict = Verdict::Check;
        row.reason = format!("its ESR dissipates {} on programme, enough to heat it; {}", watts(x.programme), row.reason);
    }
}

/// An inductor's current against its rating.
fn inductor(row: &mut StressRow, part: &Part, x: &Figures) {
    let irms = x.rms_a;
    row.rms_a = Some(irms.0);
    row.rms_at_hz = Some(irms.1);
    let rating = if let Rating::Given(a) = part.rating { Some(a) } else { None };
    row.rating_a = rating;
    (row.verdict, row.reason) = match rating {
        Some(r) if irms.0 > r => (Verdict::Over, format!("carries {} A near {}, above its {} A rating", w(irms.0), hz(Some(irms.1)), w(r))),
        Some(r) if irms.0 > CAPACITOR_MARGIN * r => (Verdict::Check, format!("carries {} A, above 80 % of its {} A rating", w(irms.0), w(r))),
        Some(_) => (
            Verdict::Ok,
            format!(
                "carries up to {} A near {} against its {} A rating; {} W in its DCR on programme",
                w(irms.0),
                hz(Some(irms.1)),
                w(rating.unwrap_or(0.0)),
                trim_number(x.programme, 2)
            ),
        ),
        // Nothing to judge the current against: said so, never passed as "ok".
        None => (
            Verdict::Ok,
            format!(
                "no current rating on record, so not judged: carries up to {} A near {}; {} W in its DCR on programme",
                w(irms.0),
                hz(Some(irms.1)),
                trim_number(x.programme, 2)
            ),
        ),
    };
}

/// Every part's and driver's figures in every scene, at the sine and programme drives of
/// `amp`, on the stress grid.
/// `floors` raises the rating chosen for a `rating: auto` resistor to that of the worse
/// cabinet of a pair (empty for one cabinet).
pub fn stress(amp: &Amplifier, programme_kind: Programme, grid: &StressGrid, scenes: &[&Scene], floors: &std::collections::BTreeMap<String, f64>) -> Stress {
    let freqs = &grid.freqs;
    let (e, ep) = (amp.e_rms(), amp.programme_e_rms());
    let mut rows = Vec::new();
    let mut drivers = Vec::new();
    for s in scenes {
        for (k, el) in s.circuit.elements.iter().enumerate() {
            let Some(pk) = s.peaks.get(k) else { continue };
            let x = Figures::of(pk, freqs, e, ep);
            if el.is_driver {
                if let Some(d) = s.network.driver(&el.name) {
                    drivers.push(driver_power(s, d, &x));
                }
                continue;
            }
            let Some(part) = s.network.part(&el.name) else { continue };
            let mut row = StressRow {
                scenario: s.scenario,
                part: el.name.clone(),
                kind: part.kind,
                sine_w: x.sine.0,
                sine_at_hz: x.sine.1,
                programme_w: x.programme,
                peak_v: None,
                peak_at_hz: None,
                rms_a: None,
                rms_at_hz: None,
                rating_w: None,
                rating_v: None,
                rating_a: None,
                rating_chosen: false,
                verdict: Verdict::Ok,
                reason: String::new(),
                bench_only: false,
            };
            match (part.kind, &el.model) {
                (PartKind::Resistor, ElementModel::Resistor { r }) => resistor(&mut row, part, *r, &x, floors.get(&part.name).copied()),
                (PartKind::Resistor, _) => resistor(&mut row, part, part.value, &x, floors.get(&part.name).copied()),
                (PartKind::Capacitor, _) => capacitor(&mut row, part, &x),
                (PartKind::Inductor, _) => inductor(&mut row, part, &x),
            }
            rows.push(row);
        }
    }
    let pw = amp.programme_power_w();
    let share = match amp.programme_w {
        Some(_) => "as the job gives it".to_string(),
        None => "one eighth of the rated power, the level IEC 60065 4.2.6 sets for an audio amplifier's heating tests".to_string(),
    };
    let basis = format!(
        "Sine figures: a full-level sine of {} V RMS ({} W into {} ohm) at the worst frequency from {} to {}, the bench-tone worst case. Programme figures: {} at {} W into {} ohm ({} V RMS), {share}; noise peaks 1.8 to 4 times its RMS, so an amplifier cannot deliver noise at its full sine power unclipped.",
        w(e),
        w(amp.power_w),
        w(amp.into_ohm),
        hz(freqs.first().copied()),
        hz(freqs.last().copied()),
        programme::describe(programme_kind),
        w(pw),
        w(amp.into_ohm),
        w(ep),
    );
    Stress {
        e_rms: e,
        programme_e_rms: ep,
        programme_w: pw,
        amplifier: format!("{} W into {} ohm ({} V RMS)", w(amp.power_w), w(amp.into_ohm), w(e)),
        programme: programme_kind,
        programme_text: programme::describe(programme_kind),
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
        // Stock wattages (common practice) with a 2x margin: 0.4 W needs 0.8 W -> 3 W; 5 W
        // needs exactly 10 W -> 10 W; 5.01 W needs 10.02 W -> 15 W.
        assert_eq!(choose_rating(0.4), 3.0);
        assert_eq!(choose_rating(1.6), 5.0);
        assert_eq!(choose_rating(2.6), 10.0);
        assert_eq!(choose_rating(5.0), 10.0);
        assert_eq!(choose_rating(5.01), 15.0);
    }

    #[test]
    fn a_vanishing_figure_reads_as_under_a_milliwatt() {
        assert_eq!(w(7.2e-22), "under 0.001");
        assert_eq!(w(0.0), "0");
        assert_eq!(w(0.00276), "0.00276");
    }
}
