//! Levels and where they are judged: a driver's band (its compensate entry's, or its
//! passband), band means, the corners and crossings of its response, the level table and the
//! crossovers.

use num_complex::Complex64;

use crate::analysis::{Scene, Scenes};
use crate::engine;
use crate::model::{Driver, Role, Scenario};

/// Where a driver's band comes from.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "lowercase")]
pub enum BandSource {
    /// The `band` of a compensate entry that names the driver.
    Compensate,
    /// Where the original design plays within 6 dB of its maximum.
    Passband,
}

/// The sweep indices a driver's level is judged over.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct Band {
    pub lo_hz: f64,
    pub hi_hz: f64,
    #[serde(skip)]
    pub idx: Vec<usize>,
    pub source: BandSource,
}

pub use crate::model::HEARING_HZ;

/// Levels more than this far below their reference are a fault (a driver shorted or
/// disconnected), not a level difference.
pub const FAULT_DB: f64 = 40.0;

/// The sweep points inside [`HEARING_HZ`] (all of them if the sweep lies wholly outside).
fn audible(freqs: &[f64]) -> Vec<usize> {
    let idx: Vec<usize> = (0..freqs.len()).filter(|&i| freqs[i] >= HEARING_HZ[0] * (1.0 - 1e-9) && freqs[i] <= HEARING_HZ[1] * (1.0 + 1e-9)).collect();
    if idx.is_empty() {
        (0..freqs.len()).collect()
    } else {
        idx
    }
}

/// Passband: the audible sweep points where the as-designed level is within 6 dB of its
/// reference. For most drivers the reference is the maximum. A woofer's filter is a low-pass
/// whose output can peak near its corner (its load's impedance rises there), so a woofer's
/// reference is its level over the lowest two octaves of the sweep, where a low-pass is flat,
/// and its passband runs up from the bottom of the sweep until the level first falls 6 dB
/// below that.
pub fn passband(freqs: &[f64], db: &[f64], role: Role) -> Band {
    let pool = audible(freqs);
    let idx: Vec<usize> = if role == Role::Woofer {
        let f0 = freqs[pool[0]];
        let mut low: Vec<f64> = pool.iter().filter(|&&i| freqs[i] <= 4.0 * f0 * (1.0 + 1e-9)).map(|&i| db[i]).collect();
        low.sort_by(|a, b| a.total_cmp(b));
        let reference = low[low.len() / 2];
        pool.iter().cloned().take_while(|&i| db[i] >= reference - 6.0).collect()
    } else {
        let max = pool.iter().map(|&i| db[i]).fold(f64::NEG_INFINITY, f64::max);
        pool.iter().cloned().filter(|&i| db[i] >= max - 6.0).collect()
    };
    // A woofer that falls 6 dB at once has the bottom point; otherwise the maximum is in it.
    let idx = if idx.is_empty() { vec![pool[0]] } else { idx };
    let (lo, hi) = (freqs[idx[0]], freqs[idx[idx.len() - 1]]);
    Band { lo_hz: lo, hi_hz: hi, idx, source: BandSource::Passband }
}

/// A compensate entry's band, bounded to [`HEARING_HZ`].
pub fn band_of(freqs: &[f64], lo: f64, hi: f64) -> Band {
    let (lo, hi) = (lo.max(HEARING_HZ[0]), hi.min(HEARING_HZ[1]));
    let idx: Vec<usize> = (0..freqs.len()).filter(|i| freqs[*i] >= lo * (1.0 - 1e-9) && freqs[*i] <= hi * (1.0 + 1e-9)).collect();
    let (a, b) = (idx.first().map(|i| freqs[*i]).unwrap_or(lo), idx.last().map(|i| freqs[*i]).unwrap_or(hi));
    Band { lo_hz: a, hi_hz: b, idx, source: BandSource::Compensate }
}

pub fn mean_over(db: &[f64], idx: &[usize]) -> f64 {
    idx.iter().map(|i| db[*i]).sum::<f64>() / idx.len().max(1) as f64
}

/// Where the level falls `drop_db` below its maximum, below and above the maximum
/// (None when the sweep ends first). Interpolated in log frequency.
pub fn corners(freqs: &[f64], db: &[f64], drop_db: f64) -> (Option<f64>, Option<f64>) {
    let (imax, max) = db.iter().cloned().enumerate().fold((0, f64::NEG_INFINITY), |b, (i, v)| if v > b.1 { (i, v) } else { b });
    let target = max - drop_db;
    let cross = |i: usize, j: usize| {
        let t = (target - db[i]) / (db[j] - db[i]);
        (freqs[i].ln() + t * (freqs[j].ln() - freqs[i].ln())).exp()
    };
    let lo = (1..=imax).rev().find(|&i| db[i - 1] < target).map(|i| cross(i - 1, i));
    let hi = (imax..freqs.len().saturating_sub(1)).find(|&i| db[i + 1] < target).map(|i| cross(i, i + 1));
    (lo, hi)
}

/// Where two drivers' levels cross between the frequencies `from` and `to`, interpolated in
/// log frequency (the first crossing going up).
pub fn crossing(freqs: &[f64], lower: &[f64], upper: &[f64], from: f64, to: f64) -> Option<f64> {
    let d = |i: usize| lower[i] - upper[i];
    (0..freqs.len().saturating_sub(1)).filter(|&i| freqs[i] >= from && freqs[i + 1] <= to).find(|&i| d(i) >= 0.0 && d(i + 1) < 0.0).map(|i| {
        let t = d(i) / (d(i) - d(i + 1));
        (freqs[i].ln() + t * (freqs[i + 1].ln() - freqs[i].ln())).exp()
    })
}

#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct LevelRow {
    pub driver: String,
    pub role: String,
    pub band_hz: [f64; 2],
    pub band_source: BandSource,
    pub as_designed_db: f64,
    pub as_found_db: f64,
    pub as_left_db: f64,
    /// The change as found -> as left, and a plain-language flag for it.
    pub found_to_left_db: f64,
    /// As left, the largest difference from the original design at any point of the band,
    /// and of the whole passband (which the band may not span).
    pub as_left_worst_db: f64,
    pub passband_hz: [f64; 2],
    pub passband_worst_db: f64,
    /// As left, in words: a fault, or the worst point over the working range judged as every
    /// report's sentence judges it (within 0.5 dB, measurable, likely audible).
    pub left_flag: String,
    /// More than [`FAULT_DB`] below the original design: not a level difference
    /// but a fault (a driver shorted or disconnected).
    pub as_found_fault: bool,
    pub as_left_fault: bool,
    /// The comparison is of acoustic output (both scenarios know the driver's sensitivity or
    /// response) rather than of the voltage across the driver.
    pub as_found_acoustic: bool,
    pub as_left_acoustic: bool,
}

/// Where a driver's acoustic output comes from: its measured response table, or its
/// sensitivity (flat).
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "lowercase")]
pub enum AcousticSource {
    Response,
    Sensitivity,
}

impl AcousticSource {
    pub fn words(self) -> &'static str {
        match self {
            AcousticSource::Response => "its measured response",
            AcousticSource::Sensitivity => "its sensitivity",
        }
    }
}

/// A driver's SPL at 1 m for 2.83 V across its terminals at each of `freqs`: its response
/// table (interpolated in log frequency) where the job gives one, which wins, else its
/// sensitivity, flat; None when the job gives neither. Its output in a scene is this plus the
/// level across it in dB re 2.83 V: SPL = sensitivity + 20 log10(|V| / 2.83 V).
pub fn acoustic_offset(d: &crate::model::Driver, freqs: &[f64]) -> Option<(Vec<f64>, AcousticSource)> {
    match (&d.response, d.sensitivity) {
        (Some(t), _) => Some((freqs.iter().map(|f| crate::engine::driver::interp_log(&t.freq_hz, &t.spl_db, &t.phase_deg, *f, false).0).collect(), AcousticSource::Response)),
        (None, Some(s)) => Some((vec![s; freqs.len()], AcousticSource::Sensitivity)),
        (None, None) => None,
    }
}

/// The flag for a level more than [`FAULT_DB`] below its reference.
pub const FAULT_FLAG: &str = "fault: driver shorted or disconnected";

/// A flag for a level difference from the as-designed voicing. Just-noticeable broadband
/// level change is about 0.4 dB (Ballou, Handbook for Sound Engineers, 3.8.6); the 0.5 dB
/// "measurable" and 1 dB "likely audible" steps are common practice.
/// The just-noticeable broadband level change (Ballou, as above): the plain reports call a
/// difference below it too small to hear, and one from it to 0.5 dB at the edge of hearing.
pub const NOTICEABLE_DB: f64 = 0.4;

/// What a level difference means to a listener, in the plain reports' words.
pub fn plain_meaning(db: f64) -> &'static str {
    match level_flag(db) {
        "within 0.5 dB" if db.abs() < NOTICEABLE_DB => "too small to hear",
        "within 0.5 dB" => "at the edge of hearing",
        "measurable" => "measurable, hard to hear",
        _ => "likely to be heard",
    }
}

pub fn level_flag(db: f64) -> &'static str {
    let a = db.abs();
    if a >= 1.0 {
        "likely audible"
    } else if a >= 0.5 {
        "measurable"
    } else {
        "within 0.5 dB"
    }
}

#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct CrossoverRow {
    pub lower: String,
    pub upper: String,
    pub as_designed_hz: Option<f64>,
    pub as_found_hz: Option<f64>,
    pub as_left_hz: Option<f64>,
}

#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct CornerRow {
    pub driver: String,
    pub scenario: Scenario,
    pub minus3_hz: [Option<f64>; 2],
    pub minus6_hz: [Option<f64>; 2],
}

/// Drivers in order of rising passband centre, as indices into the network's drivers.
pub fn frequency_order(bands: &[Band]) -> Vec<usize> {
    let mut order: Vec<usize> = (0..bands.len()).collect();
    order.sort_by(|a, b| (bands[*a].lo_hz * bands[*a].hi_hz).partial_cmp(&(bands[*b].lo_hz * bands[*b].hi_hz)).unwrap_or(std::cmp::Ordering::Equal));
    order
}

/// The levels table: each driver's band mean as found and as left against the original
/// design, and its worst point over the band and over its passband.
pub fn level_rows(drivers: &[Driver], freqs: &[f64], bands: &[Band], scenes: &Scenes<Scene>) -> Vec<LevelRow> {
    let designed = &scenes.as_designed;
    drivers
        .iter()
        .enumerate()
        .map(|(i, d)| {
            let band = &bands[i];
            // Acoustic output where the design and the scenario both know it, else voltage.
            let curves = |s: &Scene| -> Option<(bool, Vec<f64>, Vec<f64>)> {
                let k = s.driver_index(&d.name)?;
                Some(match (&designed.spl[i], &s.spl[k]) {
                    (Some(a), Some(b)) => (true, a.clone(), b.clone()),
                    _ => (false, designed.db[i].clone(), s.db[k].clone()),
                })
            };
            let rel = |s: &Scene| curves(s).map(|(acoustic, a, b)| (mean_over(&b, &band.idx) - mean_over(&a, &band.idx), acoustic)).unwrap_or((0.0, false));
            let ((found_db, found_acoustic), (left_db, left_acoustic)) = (rel(&scenes.as_found), rel(&scenes.as_left));
            // The largest difference at any one point, over the band and over the whole
            // passband (where the original plays within 6 dB of its peak): a band mean can hide
            // a peak at the band's edge.
            let left_curves = curves(&scenes.as_left);
            let worst_over = |idx: &[usize]| match &left_curves {
                Some((_, a, b)) => idx.iter().map(|&j| b[j] - a[j]).fold(0.0, |acc: f64, v| if v.abs() > acc.abs() { v } else { acc }),
                None => 0.0,
            };
            let pass = passband(freqs, &designed.db[i], d.role);
            let (worst_db, passband_worst_db) = (worst_over(&band.idx), worst_over(&pass.idx));
            let b = band;
            LevelRow {
                driver: d.name.clone(),
                role: d.role.name().into(),
                band_hz: [b.lo_hz, b.hi_hz],
                band_source: b.source,
                as_designed_db: 0.0,
                as_found_db: found_db,
                as_left_db: left_db,
                found_to_left_db: left_db - found_db,
                as_left_worst_db: worst_db,
                passband_hz: [pass.lo_hz, pass.hi_hz],
                passband_worst_db,
                left_flag: if left_db < -FAULT_DB { FAULT_FLAG.into() } else { level_flag(passband_worst_db).into() },
                as_found_fault: found_db < -FAULT_DB,
                as_left_fault: left_db < -FAULT_DB,
                as_found_acoustic: found_acoustic,
                as_left_acoustic: left_acoustic,
            }
        })
        .collect()
}

/// Where neighbouring drivers' levels cross, in each scenario (in rising frequency).
pub fn crossover_rows(drivers: &[Driver], freqs: &[f64], bands: &[Band], scenes: &Scenes<Scene>) -> Vec<CrossoverRow> {
    frequency_order(bands)
        .windows(2)
        .map(|w| {
            let (lo, hi) = (w[0], w[1]);
            let from = (bands[lo].lo_hz * bands[lo].hi_hz).sqrt();
            let to = (bands[hi].lo_hz * bands[hi].hi_hz).sqrt();
            let at = |s: &Scene| crossing(freqs, &s.db[lo], &s.db[hi], from, to);
            CrossoverRow {
                lower: drivers[lo].name.clone(),
                upper: drivers[hi].name.clone(),
                as_designed_hz: at(&scenes.as_designed),
                as_found_hz: at(&scenes.as_found),
                as_left_hz: at(&scenes.as_left),
            }
        })
        .collect()
}

/// Each driver's -3 dB and -6 dB points in each scenario.
pub fn corner_rows(freqs: &[f64], scenes: &Scenes<Scene>) -> Vec<CornerRow> {
    scenes
        .iter()
        .flat_map(|s| {
            s.network.drivers.iter().enumerate().map(move |(i, d)| {
                let (a, b) = corners(freqs, &s.db[i], 3.0);
                let (c, e) = corners(freqs, &s.db[i], 6.0);
                CornerRow { driver: d.name.clone(), scenario: s.scenario, minus3_hz: [a, b], minus6_hz: [c, e] }
            })
        })
        .collect()
}

/// The complex sum of every driver's measured response (at 2.83 V) scaled by the voltage the
/// network puts across it, with polarity; None unless every driver has a response table.
pub fn acoustic_sum(scenes: &Scenes<Scene>, freqs: &[f64]) -> Option<Scenes<Vec<f64>>> {
    let one = |s: &Scene| -> Option<Vec<f64>> {
        let tables: Vec<_> = s.network.drivers.iter().map(|d| d.response.as_ref()).collect::<Option<Vec<_>>>()?;
        let h = s.voltages(freqs);
        Some(
            freqs
                .iter()
                .enumerate()
                .map(|(fi, f)| {
                    let mut sum = Complex64::new(0.0, 0.0);
                    for (k, (d, t)) in s.network.drivers.iter().zip(&tables).enumerate() {
                        let (spl, ph) = engine::driver::interp_log(&t.freq_hz, &t.spl_db, &t.phase_deg, *f, false);
                        let sign = if d.inverted { -1.0 } else { 1.0 };
                        sum += Complex64::from_polar(10f64.powf(spl / 20.0), ph.to_radians()) * h.get(k).and_then(|v| v.get(fi)).copied().unwrap_or_default() * sign;
                    }
                    20.0 * sum.norm().max(1e-12).log10()
                })
                .collect(),
        )
    };
    Some(Scenes { as_designed: one(&scenes.as_designed)?, as_found: one(&scenes.as_found)?, as_left: one(&scenes.as_left)? })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_plain_words_agree_with_the_noticeable_level_they_quote() {
        // About 0.4 dB is the just-noticeable broadband level change (Ballou, Handbook for
        // Sound Engineers, 3.8.6): a difference at or above it is never "too small to hear".
        assert_eq!(plain_meaning(0.39), "too small to hear");
        assert_eq!(plain_meaning(-0.39), "too small to hear");
        assert_eq!(plain_meaning(0.43), "at the edge of hearing");
        assert_eq!(plain_meaning(0.4), "at the edge of hearing");
        assert_eq!(plain_meaning(0.7), "measurable, hard to hear");
        assert_eq!(plain_meaning(-1.2), "likely to be heard");
    }
}
