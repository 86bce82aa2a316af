//! Money as an exact count of hundredths (cents, pence), never binary floating point: a
//! price list's "12.30" stays 1230 hundredths, sums and products are exact, and a printed total
//! is the sum of the printed lines.

use std::fmt;

#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Default)]
pub struct Money(pub i64);

impl Money {
    /// The largest price or rate a job may give: a thousand million (in hundredths), so that no sum of a
    /// job's lines can come near the count's limit.
    pub const MAX: Money = Money(100_000_000_000);

    /// "12", "12.3" or "12.30" (a point, at most two decimals, not negative, at most
    /// [`Money::MAX`]); None otherwise.
    pub fn parse(text: &str) -> Option<Money> {
        let t = text.trim();
        let (whole, frac) = t.split_once('.').unwrap_or((t, ""));
        if whole.is_empty() || !whole.bytes().all(|b| b.is_ascii_digit()) || frac.len() > 2 || !frac.bytes().all(|b| b.is_ascii_digit()) || (t.contains('.') && frac.is_empty()) {
            return None;
        }
        let w: i64 = whole.parse().ok()?;
        let f: i64 = if frac.is_empty() { 0 } else { format!("{frac:0<2}").parse().ok()? };
        w.checked_mul(100)?.checked_add(f).map(Money).filter(|m| *m <= Money::MAX)
    }

    pub fn times(self, n: u32) -> Option<Money> {
        self.0.checked_mul(n as i64).map(Money)
    }

    /// The labour at this hourly rate for `hours`, exact, rounded half up to the hundredth;
    /// None if it overflows. The hours are taken as the decimal the job wrote (Rust prints
    /// a float as the shortest decimal that reads back to it: 0.333333 stays 0.333333).
    pub fn for_hours(self, hours: f64) -> Option<Money> {
        if !(hours.is_finite() && hours >= 0.0) {
            return None;
        }
        let text = hours.to_string();
        let (whole, frac) = text.split_once('.').unwrap_or((&text, ""));
        let scale = 10i128.checked_pow(frac.len() as u32)?;
        let digits: i128 = format!("{whole}{frac}").parse().ok()?;
        let hundredths = (self.0 as i128).checked_mul(digits)?;
        i64::try_from((2 * hundredths + scale) / (2 * scale)).ok().map(Money)
    }

    /// This amount's share at a rate in hundredths of a percent (2000 for 20 %), exact,
    /// rounded half up to the hundredth; None if it overflows.
    pub fn share(self, hundredths_of_percent: i64) -> Option<Money> {
        let n = (self.0 as i128).checked_mul(hundredths_of_percent as i128)?;
        i64::try_from((2 * n + 10_000) / 20_000).ok().map(Money)
    }

    pub fn plus(self, other: Money) -> Option<Money> {
        self.0.checked_add(other.0).map(Money)
    }
}

impl fmt::Display for Money {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "{}.{:02}", self.0 / 100, self.0 % 100)
    }
}

impl serde::Serialize for Money {
    /// As a decimal string ("12.30"), so no reader turns it into a binary fraction.
    fn serialize<S: serde::Serializer>(&self, s: S) -> Result<S::Ok, S::Error> {
        s.serialize_str(&self.to_string())
    }
}

#[cfg(test)]
mod tests {

    #[test]
    fn a_share_rounds_half_up_to_the_hundredth() {
        // 7.5 % of 12.35 is 0.92625: 0.93. 20 % of 136.70 is 27.34 exactly. 5 % of 0.10 is
        // 0.005: half, up to 0.01.
        assert_eq!(Money(1235).share(750), Some(Money(93)));
        assert_eq!(Money(13670).share(2000), Some(Money(2734)));
        assert_eq!(Money(10).share(500), Some(Money(1)));
        assert_eq!(Money(10).share(0), Some(Money(0)));
    }
    use super::*;

    #[test]
    fn parses_exactly_and_refuses_what_is_not_a_price() {
        assert_eq!(Money::parse("12.3"), Some(Money(1230)));
        assert_eq!(Money::parse("0.10"), Some(Money(10)));
        assert_eq!(Money::parse("7"), Some(Money(700)));
        for bad in ["", "1.234", "-2", "1,50", "1.", ".5", "abc", "99999999999999999999"] {
            assert_eq!(Money::parse(bad), None, "{bad}");
        }
    }

    #[test]
    fn ten_lines_of_ten_cents_make_one_unit_exactly() {
        // In binary floating point 0.1 summed ten times is 0.9999999999999999.
        let mut total = Money(0);
        for _ in 0..10 {
            total = total.plus(Money::parse("0.10").unwrap()).unwrap();
        }
        assert_eq!(total.to_string(), "1.00");
        assert_eq!(Money::parse("2.35").unwrap().times(3).unwrap().to_string(), "7.05");
    }

    #[test]
    fn labour_is_rate_times_hours_to_the_cent_rounded_half_up() {
        // By hand: 44.00 x 1.5 h = 66.00; 42.50 x 1.25 h = 53.125 -> 53.13 (half up);
        // 33.33 x 0.1 h = 3.333 -> 3.33.
        let rate = |t| Money::parse(t).unwrap();
        assert_eq!(rate("44.00").for_hours(1.5).unwrap().to_string(), "66.00");
        assert_eq!(rate("42.50").for_hours(1.25).unwrap().to_string(), "53.13");
        assert_eq!(rate("33.33").for_hours(0.1).unwrap().to_string(), "3.33");
        // 48.00 x 0.333333 h = 15.999984 -> 16.00 (not 0.33 h's 15.84); 48.00 x 1.999 h =
        // 95.952 -> 95.95; 48.00 x 0.004 h = 0.192 -> 0.19; 42.50 x 0.15 h = 6.375 -> 6.38.
        assert_eq!(rate("48.00").for_hours(0.333333).unwrap().to_string(), "16.00");
        assert_eq!(rate("48.00").for_hours(1.999).unwrap().to_string(), "95.95");
        assert_eq!(rate("48.00").for_hours(0.004).unwrap().to_string(), "0.19");
        assert_eq!(rate("42.50").for_hours(0.15).unwrap().to_string(), "6.38");
        assert_eq!(Money::parse("1000000000.00"), Some(Money::MAX));
        assert_eq!(Money::parse("1000000000.01"), None, "above the largest price");
        assert_eq!(Money::parse("92233720368547758.07"), None);
        assert_eq!(Money(i64::MAX / 10).for_hours(200.0), None, "overflow is refused, not wrapped");
    }
}
