//! IEC 60063 preferred-number series and rounding to them.
//!
//! E6 to E24 are hard-coded from the standard (E24 differs from round(10^(k/24)) at eight
//! places); E48 is hard-coded too, and E96 equals round(100 * 10^(k/96)).

use crate::model::ESeries;

/// IEC 60063, E6.
pub const E6: [f64; 6] = [1.0, 1.5, 2.2, 3.3, 4.7, 6.8];
/// IEC 60063, E12.
pub const E12: [f64; 12] = [1.0, 1.2, 1.5, 1.8, 2.2, 2.7, 3.3, 3.9, 4.7, 5.6, 6.8, 8.2];
/// IEC 60063, E24.
pub const E24: [f64; 24] = [1.0, 1.1, 1.2, 1.3, 1.5, 1.6, 1.8, 2.0, 2.2, 2.4, 2.7, 3.0, 3.3, 3.6, 3.9, 4.3, 4.7, 5.1, 5.6, 6.2, 6.8, 7.5, 8.2, 9.1];
/// IEC 60063, E48 (x100).
pub const E48: [f64; 48] = [
    100.0, 105.0, 110.0, 115.0, 121.0, 127.0, 133.0, 140.0, 147.0, 154.0, 162.0, 169.0, 178.0, 187.0, 196.0, 205.0, 215.0, 226.0, 237.0, 249.0, 261.0, 274.0, 287.0, 301.0, 316.0,
    332.0, 348.0, 365.0, 383.0, 402.0, 422.0, 442.0, 464.0, 487.0, 511.0, 536.0, 562.0, 590.0, 619.0, 649.0, 681.0, 715.0, 750.0, 787.0, 825.0, 866.0, 909.0, 953.0,
];

impl ESeries {
    pub fn name(self) -> &'static str {
        match self {
            ESeries::E6 => "E6",
            ESeries::E12 => "E12",
            ESeries::E24 => "E24",
            ESeries::E48 => "E48",
            ESeries::E96 => "E96",
        }
    }

    /// The series' members in the decade [1, 10).
    pub fn decade(self) -> Vec<f64> {
        match self {
            ESeries::E6 => E6.to_vec(),
            ESeries::E12 => E12.to_vec(),
            ESeries::E24 => E24.to_vec(),
            ESeries::E48 => E48.iter().map(|v| v / 100.0).collect(),
            ESeries::E96 => (0..96).map(|k| (100.0 * 10f64.powf(k as f64 / 96.0)).round() / 100.0).collect(),
        }
    }
}

/// The member of `series` nearest to `x` in the geometric sense (the split between two
/// neighbours a and b is at sqrt(a b)). IEC 60063 gives no rounding rule; this is ours.
pub fn round_to(series: ESeries, x: f64) -> f64 {
    assert!(x > 0.0 && x.is_finite(), "round_to needs a positive value");
    let decade = series.decade();
    let exp = x.log10().floor() as i32;
    let mut best = f64::NAN;
    let mut best_err = f64::INFINITY;
    for e in [exp - 1, exp, exp + 1] {
        let scale = 10f64.powi(e);
        for v in &decade {
            // Round to kill the binary noise of v * 10^e (0.1 * 2.2 = 0.22000000000000003).
            let m = tidy(v * scale);
            let err = (x.ln() - m.ln()).abs();
            if err < best_err {
                best_err = err;
                best = m;
            }
        }
    }
    best
}

/// Rounds to four significant figures, dividing by a power of ten rather than multiplying by
/// its inverse so that 5.6 comes out as the double nearest 5.6 (5600 * 0.001 does not).
fn tidy(v: f64) -> f64 {
    let p = v.log10().floor() as i32 - 3;
    let digits = (v / 10f64.powi(p)).round();
    if p < 0 {
        digits / 10f64.powi(-p)
    } else {
        digits * 10f64.powi(p)
    }
}

/// The best pair of E12 values, in series or in parallel, for `x` ohm (common practice:
/// shops make odd values from the stock they hold). Returns (a, b, parallel, value).
pub fn best_e12_pair(x: f64) -> (f64, f64, bool, f64) {
    let stock: Vec<f64> = (-1..=2).flat_map(|e| E12.iter().map(move |v| tidy(v * 10f64.powi(e)))).collect();
    let mut best = (0.0, 0.0, false, 0.0);
    let mut best_err = f64::INFINITY;
    for (i, &a) in stock.iter().enumerate() {
        for &b in &stock[i..] {
            for (parallel, v) in [(false, a + b), (true, a * b / (a + b))] {
                let err = (x.ln() - v.ln()).abs();
                if err < best_err - 1e-12 {
                    best_err = err;
                    best = (a, b, parallel, v);
                }
            }
        }
    }
    best
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn e96_formula_and_e48_table_agree_with_the_standard_construction() {
        // check-values.md [published: IEC 60063]: E48 and E96 equal round(100 * 10^(k/n)).
        for (k, v) in E48.iter().enumerate() {
            assert_eq!((100.0 * 10f64.powf(k as f64 / 48.0)).round(), *v, "E48 member {k}");
        }
        let e96 = ESeries::E96.decade();
        assert_eq!(e96.len(), 96);
        assert_eq!(e96[0], 1.0);
        assert_eq!(e96[1], 1.02);
        assert_eq!(e96[95], 9.76);
    }

    #[test]
    fn e24_is_not_the_plain_formula() {
        // IEC 60063: E24 differs from round(10^(k/24), 1) at 2.7 3.0 3.3 3.6 3.9 4.3 4.7 8.2.
        let differ: Vec<f64> = E24.iter().enumerate().filter(|(k, v)| ((10f64.powf(*k as f64 / 24.0) * 10.0).round() / 10.0 - **v).abs() > 1e-9).map(|(_, v)| *v).collect();
        assert_eq!(differ, vec![2.7, 3.0, 3.3, 3.6, 3.9, 4.3, 4.7, 8.2]);
    }

    #[test]
    fn rounds_geometrically() {
        // check-values.md [derived]: cases that tell the geometric rule from the arithmetic one.
        assert_eq!(round_to(ESeries::E6, 5.7), 6.8);
        assert_eq!(round_to(ESeries::E12, 1.098), 1.2);
        assert_eq!(round_to(ESeries::E6, 18.0), 15.0);
        assert_eq!(round_to(ESeries::E24, 0.71), 0.68);
        assert_eq!(round_to(ESeries::E24, 0.95), 0.91);
        assert_eq!(round_to(ESeries::E24, 9.7), 10.0);
        assert_eq!(round_to(ESeries::E48, 1.2), 1.21);
    }

    #[test]
    fn rounded_values_are_the_doubles_a_person_would_write() {
        // Every IEC 60063 E24 value in every decade from 0.1 ohm to 1 Mohm prints as written.
        for e in -1..6 {
            for v in E24 {
                let x = round_to(ESeries::E24, v * 10f64.powi(e));
                assert_eq!(x.to_string().parse::<f64>().unwrap(), x);
                assert!(x.to_string().len() <= 8, "{x}");
            }
        }
        assert_eq!(round_to(ESeries::E24, 5.81), 5.6);
    }

    #[test]
    fn e12_pair_beats_a_single_e12_value() {
        // 0.75 ohm: the nearest single E12 value (IEC 60063, typed here again) misses by
        // about 9 %; the best pair, found by brute force over the same typed list in series and
        // in parallel, is what best_e12_pair returns, and it is far closer.
        let e12 = [1.0, 1.2, 1.5, 1.8, 2.2, 2.7, 3.3, 3.9, 4.7, 5.6, 6.8, 8.2];
        let stock: Vec<f64> = [0.1, 1.0, 10.0, 100.0].iter().flat_map(|d| e12.iter().map(move |v| v * d)).collect();
        let err = |v: f64| (0.75f64.ln() - v.ln()).abs();
        let single = stock.iter().cloned().fold(f64::INFINITY, |b, v| b.min(err(v)));
        let mut brute = f64::INFINITY;
        for &a in &stock {
            for &b in &stock {
                brute = brute.min(err(a + b)).min(err(a * b / (a + b)));
            }
        }
        let (a, b, _par, v) = best_e12_pair(0.75);
        assert!(single > 0.08, "single {single}");
        assert!((err(v) - brute).abs() < 1e-9 && err(v) < single / 5.0, "{a} {b} {v}");
    }
}
