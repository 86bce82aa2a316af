//! Substitute drivers: a change step that replaces a driver with a different model. For each,
//! the original and the substitute side by side (Re, fs, Qts, sensitivity, rated power, |Z|
//! at the crossover), and checks with reasons: its fs against its crossover, its impedance
//! against the original's over its band and what that does to the crossover frequency and to
//! the filter's shape there (from the solved responses), its rated power against the
//! programme power, the load the amplifier now sees, and its acoustic level against the
//! original's (with what a passive part can and cannot do about it).

use crate::analysis::levels::{acoustic_offset, mean_over, CrossoverRow, LevelRow};
use crate::analysis::{Band, Findings, Verdict};
use crate::model::{ChangeStep, Driver, DriverModel, Job, Patch};
use crate::units::{hz, ohm, trim_number};

/// A driver's figures as a data sheet gives them.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct Figures {
    pub model: String,
    pub re_ohm: f64,
    pub fs_hz: Option<f64>,
    pub qts: Option<f64>,
    pub sensitivity_db: Option<f64>,
    pub rated_w: Option<f64>,
    /// |Z| at the design's crossover frequency, from its model.
    pub z_at_crossover_ohm: Option<f64>,
    /// How a Q was derived from the data sheet's figures, when one was.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub derived: Option<String>,
}

/// One check of a substitute, with its reason.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct Check {
    /// fs, impedance, power, load or level.
    pub check: &'static str,
    pub verdict: Verdict,
    pub reason: String,
}

#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct Substitute {
    pub driver: String,
    pub original: Figures,
    pub substitute: Figures,
    /// Where this driver crosses to its neighbour, as designed and as left.
    pub crossover_hz: [Option<f64>; 2],
    /// The driver's level at the design's crossover frequency against its band mean (dB), as
    /// designed and as left: the shape of its filter there (for a second-order section at its
    /// corner, 20 log10 Q).
    pub at_crossover_db: [Option<f64>; 2],
    /// The substitute's |Z| against the original's over the driver's band: mean and largest
    /// ratio, in per cent difference.
    pub impedance_mean_pct: f64,
    pub impedance_worst_pct: f64,
    /// As left against the original design over the band (dB), and whether that compares
    /// acoustic output.
    pub level_db: f64,
    pub acoustic: bool,
    /// How far below the original it plays with nothing in series (dB), when a passive part
    /// cannot raise it.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub shortfall_db: Option<f64>,
    pub checks: Vec<Check>,
}

/// A tweeter's fs should sit an octave or more below its crossover (common practice).
pub const FS_OCTAVES: f64 = 1.0;

fn model_words(m: &DriverModel) -> String {
    match m {
        DriverModel::Resistance(r) => format!("a resistance of {}", ohm(*r)),
        DriverModel::VoiceCoil { re, resonance: Some(r), .. } => format!("Re {}, fs {}, Qts {}", ohm(*re), hz(Some(r.fs)), trim_number(r.qts(), 3)),
        DriverModel::VoiceCoil { re, .. } => format!("Re {}", ohm(*re)),
        DriverModel::Table(t) => format!("impedance table {}", t.file),
    }
}

fn figures(d: &Driver, xover: Option<f64>) -> Figures {
    let res = match &d.model {
        DriverModel::VoiceCoil { resonance: Some(r), .. } => Some(r),
        _ => None,
    };
    Figures {
        model: model_words(&d.model),
        re_ohm: d.model.nominal_ohm(),
        fs_hz: res.map(|r| r.fs),
        qts: res.map(|r| r.qts()),
        sensitivity_db: d
            .sensitivity
            .or_else(|| d.response.as_ref().and_then(|_| acoustic_offset(d, &xover.into_iter().collect::<Vec<_>>()).and_then(|(v, _)| v.first().copied()))),
        rated_w: d.rated_power,
        z_at_crossover_ohm: xover.map(|f| crate::engine::driver::impedance(&d.model, f).norm()),
        derived: res.and_then(|r| r.derived.clone()),
    }
}

/// The drivers the job's steps replace with a new model.
pub fn substituted(job: &Job) -> Vec<String> {
    let mut out: Vec<String> = Vec::new();
    for c in &job.changes {
        if let ChangeStep::Replace { target, with: Patch::Driver(p) } = &c.step {
            // A new driver of the design's own model (a failed one replaced like for like) is
            // no substitute.
            let original = job.network.driver(target);
            let same = original.is_some_and(|d| {
                p.model.as_ref() == Some(&d.model) && p.sensitivity.is_none_or(|s| Some(s) == d.sensitivity) && p.response.as_ref().is_none_or(|r| Some(r) == d.response.as_ref())
            });
            if p.model.is_some() && !same && !out.contains(target) {
                out.push(target.clone());
            }
        }
    }
    out
}

/// The crossover this driver takes part in: where it is the upper driver (its high-pass)
/// first, else where it is the lower.
fn crossover_of<'a>(rows: &'a [CrossoverRow], driver: &str) -> Option<(&'a CrossoverRow, bool)> {
    rows.iter().find(|r| r.upper == driver).map(|r| (r, true)).or_else(|| rows.iter().find(|r| r.lower == driver).map(|r| (r, false)))
}

/// The level at frequency `f` (interpolated in log frequency between sweep points) against
/// the band mean.
fn at_frequency(freqs: &[f64], db: &[f64], band: &Band, f: f64) -> Option<f64> {
    let i = freqs.iter().position(|x| *x >= f)?;
    let level = if i == 0 {
        db[0]
    } else {
        let t = (f / freqs[i - 1]).ln() / (freqs[i] / freqs[i - 1]).ln();
        db[i - 1] + t * (db[i] - db[i - 1])
    };
    Some(level - mean_over(db, &band.idx))
}

pub fn check(job: &Job, f: &Findings) -> Vec<Substitute> {
    substituted(job).iter().filter_map(|name| one(job, f, name)).collect()
}

fn one(job: &Job, f: &Findings, name: &str) -> Option<Substitute> {
    let di = job.network.drivers.iter().position(|d| d.name == name)?;
    let original = &job.network.drivers[di];
    let k = f.scenes.as_left.driver_index(name)?;
    let sub = &f.scenes.as_left.network.drivers[k];
    let band = &f.bands[di];
    let xover = crossover_of(&f.crossovers, name);
    let xo_design = xover.and_then(|(r, _)| r.as_designed_hz);
    let xo_left = xover.and_then(|(r, _)| r.as_left_hz);
    let high_pass = xover.map(|(_, upper)| upper).unwrap_or(false);
    let mut checks = Vec::new();

    // fs against the high-pass crossover: an octave or more below it (common practice).
    if let (Some(fs), Some(fc), true) = (figures(sub, None).fs_hz, xo_left.or(xo_design), high_pass) {
        let octaves = (fc / fs).log2();
        let ok = octaves >= FS_OCTAVES;
        checks.push(Check {
            check: "fs",
            verdict: if ok { Verdict::Ok } else { Verdict::Check },
            reason: if ok {
                format!("fs {} sits {:.1} octaves below the {} crossover (an octave or more is common practice)", hz(Some(fs)), octaves, hz(Some(fc)))
            } else {
                format!(
                    "fs {} sits only {:.1} octaves below the {} crossover: the filter leaves the resonance little attenuation, so the driver may be stressed and colour the crossover; an octave or more is common practice (a steeper high-pass or a higher crossover helps)",
                    hz(Some(fs)),
                    octaves.max(0.0),
                    hz(Some(fc))
                )
            },
        });
    }

    // Impedance over the band, and what it does to the crossover and the filter's shape.
    let ratios: Vec<f64> = band
        .idx
        .iter()
        .map(|&i| crate::engine::driver::impedance(&sub.model, f.freqs[i]).norm() / crate::engine::driver::impedance(&original.model, f.freqs[i]).norm() - 1.0)
        .collect();
    let mean_pct = 100.0 * ratios.iter().sum::<f64>() / ratios.len().max(1) as f64;
    let worst_pct = 100.0 * ratios.iter().cloned().fold(0.0, |a: f64, v| if v.abs() > a.abs() { v } else { a });
    let at_xo = |db: &[f64]| xo_design.and_then(|fc| at_frequency(&f.freqs, db, band, fc));
    let at_crossover_db = [at_xo(&f.scenes.as_designed.db[di]), at_xo(&f.scenes.as_left.db[k])];
    let shift = match (xo_design, xo_left) {
        (Some(a), Some(b)) => format!("; the crossover moves from {} to {} ({:+.0} %)", hz(Some(a)), hz(Some(b)), 100.0 * (b / a - 1.0)),
        _ => String::new(),
    };
    let shape = match at_crossover_db {
        [Some(a), Some(b)] => format!(", and at the original crossover frequency it plays {:+.1} dB against its band where the original played {:+.1} dB", b, a),
        _ => String::new(),
    };
    checks.push(Check {
        check: "impedance",
        verdict: if worst_pct.abs() <= 20.0 { Verdict::Ok } else { Verdict::Check },
        reason: format!(
            "its impedance differs from the original's by {:+.0} % on average over {}-{} (at most {:+.0} %){shift}{shape}; within 20 % the filter keeps its shape (common practice)",
            mean_pct,
            hz(Some(band.lo_hz)),
            hz(Some(band.hi_hz)),
            worst_pct
        ),
    });

    // Rated power against the programme power it now takes.
    // Its rated power against the programme power it takes (the full-level sine, a bench
    // test, is in the stress table).
    if let Some(p) = f.stress.drivers.iter().find(|p| p.driver == name && p.scenario == crate::model::Scenario::AsLeft) {
        let (verdict, reason) = match sub.rated_power {
            Some(r) if p.programme_w <= r => (Verdict::Ok, format!("it takes {} W of programme against its {} W rating", trim_number(p.programme_w, 3), trim_number(r, 3))),
            Some(r) => (
                Verdict::Over,
                format!("it takes {} W of programme, more than its {} W rating: a lower-powered amplifier or lower levels", trim_number(p.programme_w, 3), trim_number(r, 3)),
            ),
            None => {
                (Verdict::Check, format!("it takes {} W of programme; its rated power is not in the job: give `rated_power` from its data sheet", trim_number(p.programme_w, 3)))
            }
        };
        checks.push(Check { check: "power", verdict, reason });
    }
    let load = &f.loads.as_left;
    checks.push(Check { check: "load", verdict: load.verdict, reason: load.reason.clone() });

    // The level against the original, acoustic where both are known.
    let row: Option<&LevelRow> = f.levels.iter().find(|l| l.driver == name);
    let level_db = row.map(|l| l.as_left_db).unwrap_or(0.0);
    let acoustic = row.is_some_and(|l| l.as_left_acoustic);
    let fit = f.compensation.fits.iter().find(|x| x.driver == name);
    let shortfall_db = fit.filter(|x| x.cannot_raise).map(|x| -x.excess_db);
    let (verdict, reason) = match (acoustic, shortfall_db, fit) {
        (false, _, _) => (
            Verdict::Check,
            "the original's or the substitute's sensitivity is not in the job, so only the voltage across the driver is compared: give both `sensitivity` figures (dB at 2.83 V, 1 m) to compare what is heard".to_string(),
        ),
        (true, Some(short), _) => (
            Verdict::Over,
            format!("this substitute cannot be matched passively: it is {short:.1} dB short of the original even with nothing in series, and a passive part can only take level away; choose a more sensitive driver or attenuate the other drivers by as much"),
        ),
        (true, None, Some(_)) => {
            // Every part fitted for the driver counts: both arms of an L-pad.
            let parts: Vec<String> = f.compensation.fits.iter().filter(|x| x.driver == name && !x.is_none() && !x.fault).map(|x| format!("{} ({})", x.part, ohm(x.fitted_ohm))).collect();
            let (who, verb) = match parts.as_slice() {
                [] => ("no compensating part".to_string(), "leaves"),
                [one] => (one.clone(), "brings"),
                [rest @ .., last] => (format!("{} and {last}", rest.join(", ")), "bring"),
            };
            (Verdict::Ok, format!("{who} {verb} it to {level_db:+.2} dB of the original's acoustic output over its band"))
        }
        (true, None, None) => {
            let v = if level_db.abs() <= 0.5 { Verdict::Ok } else { Verdict::Check };
            let advice = if level_db > 0.5 { ": a series resistor or an L-pad (`value: auto` with a compensate entry) would take the excess away" } else if level_db < -0.5 { ": a passive part cannot raise it" } else { "" };
            (v, format!("it plays {level_db:+.2} dB against the original's acoustic output over its band{advice}"))
        }
    };
    checks.push(Check { check: "level", verdict, reason });

    Some(Substitute {
        driver: name.to_string(),
        original: figures(original, xo_design),
        substitute: figures(sub, xo_design),
        crossover_hz: [xo_design, xo_left],
        at_crossover_db,
        impedance_mean_pct: mean_pct,
        impedance_worst_pct: worst_pct,
        level_db,
        acoustic,
        shortfall_db,
        checks,
    })
}

impl Substitute {
    /// One sentence for the customer: what was substituted and whether it matches.
    pub fn customer_sentence(&self, driver_words: &str) -> String {
        let bad: Vec<&Check> = self.checks.iter().filter(|c| c.verdict != Verdict::Ok && c.check != "load").collect();
        let what = format!("The original {driver_words} is no longer fitted: a different model took its place");
        if let Some(short) = self.shortfall_db {
            return format!("{what}, and it plays {short:.1} dB quieter than the original, which no passive part can make up: it is not a good match.");
        }
        if bad.is_empty() {
            format!("{what}, matched in to play as loud as the original over its range, with its resonance safely below the crossover: a good match.")
        } else {
            let why: Vec<&str> = bad
                .iter()
                .map(|c| match c.check {
                    "fs" => "its resonance sits close to the crossover",
                    "impedance" => "its impedance differs enough to change the crossover",
                    "power" => "its power rating is low for this amplifier",
                    _ => "its level could not be compared with the original's",
                })
                .collect();
            format!("{what}; it is a usable but not an exact match: {}.", why.join(", and "))
        }
    }
}
