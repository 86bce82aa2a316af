//! Physical values as technicians write them: a number, an SI prefix and a unit (`3.3 uF`),
//! or the IEC 60062 RKM marking code printed on parts (`2R2`, `4k7`, `4u7`, `270n`).
//!
//! A value is always checked against the quantity its field expects, so `3.3 mH` in a
//! capacitor's `value` is refused with the unit that was expected.

use std::fmt;

/// The quantity a field holds; decides which units and RKM letters are accepted.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Quantity {
    Capacitance,
    Inductance,
    Resistance,
    Power,
    Voltage,
    Current,
    Frequency,
    Percent,
    Decibel,
}

impl Quantity {
    /// Every quantity a job's values take.
    pub const ALL: [Quantity; 9] = [
        Quantity::Capacitance,
        Quantity::Inductance,
        Quantity::Resistance,
        Quantity::Power,
        Quantity::Voltage,
        Quantity::Current,
        Quantity::Frequency,
        Quantity::Percent,
        Quantity::Decibel,
    ];

    /// The unit symbol used when printing values of this quantity.
    pub fn symbol(self) -> &'static str {
        match self {
            Quantity::Capacitance => "F",
            Quantity::Inductance => "H",
            Quantity::Resistance => "ohm",
            Quantity::Power => "W",
            Quantity::Voltage => "V",
            Quantity::Current => "A",
            Quantity::Frequency => "Hz",
            Quantity::Percent => "%",
            Quantity::Decibel => "dB",
        }
    }

    /// The noun used in messages ("expected a capacitance such as ...").
    pub fn noun(self) -> &'static str {
        match self {
            Quantity::Capacitance => "a capacitance",
            Quantity::Inductance => "an inductance",
            Quantity::Resistance => "a resistance",
            Quantity::Power => "a power",
            Quantity::Voltage => "a voltage",
            Quantity::Current => "a current",
            Quantity::Frequency => "a frequency",
            Quantity::Percent => "a percentage",
            Quantity::Decibel => "a level in dB",
        }
    }

    /// The range a value of this quantity can have in a passive loudspeaker job (its size
    /// above zero; zero and the sign are judged where the field is read). Wide on purpose:
    /// it refuses what cannot be physical (a 1e30 F capacitor, a 1e-15 ohm voice coil, a
    /// 10 MHz sweep), not what is merely unusual.
    pub fn plausible(self) -> (f64, f64, &'static str) {
        match self {
            Quantity::Capacitance => (1e-12, 1.0, "from 1 pF to 1 F"),
            Quantity::Inductance => (1e-9, 10.0, "from 1 nH to 10 H"),
            Quantity::Resistance => (1e-6, 1e7, "from 1 micro-ohm to 10 Mohm (0 ohm for a wire link)"),
            Quantity::Power => (1e-3, 1e5, "from 1 mW to 100 kW"),
            Quantity::Voltage => (1e-3, 1e5, "from 1 mV to 100 kV"),
            Quantity::Current => (1e-3, 1e4, "from 1 mA to 10 kA"),
            Quantity::Frequency => (0.1, 1e6, "from 0.1 Hz to 1 MHz"),
            Quantity::Percent => (0.0, 1.0, "from 0 % to 100 %"),
            Quantity::Decibel => (-300.0, 300.0, "from -300 dB to +300 dB"),
        }
    }

    /// A typical value, shown in messages.
    pub fn example(self) -> &'static str {
        match self {
            Quantity::Capacitance => "4.7 uF",
            Quantity::Inductance => "0.27 mH",
            Quantity::Resistance => "2.2 ohm",
            Quantity::Power => "10 W",
            Quantity::Voltage => "100 V",
            Quantity::Current => "2 A",
            Quantity::Frequency => "3 kHz",
            Quantity::Percent => "5 %",
            Quantity::Decibel => "89 dB",
        }
    }

    fn from_unit(unit: &str) -> Option<Quantity> {
        Some(match unit {
            "F" => Quantity::Capacitance,
            "H" => Quantity::Inductance,
            "ohm" | "ohms" | "Ohm" | "Ohms" | "\u{3a9}" | "\u{2126}" => Quantity::Resistance,
            "W" => Quantity::Power,
            "V" => Quantity::Voltage,
            "A" => Quantity::Current,
            "Hz" | "hz" => Quantity::Frequency,
            "%" => Quantity::Percent,
            "dB" | "db" => Quantity::Decibel,
            _ => return None,
        })
    }

    /// RKM letters IEC 60062 allows for this quantity, with their multipliers.
    fn rkm_letters(self) -> &'static [(char, f64)] {
        match self {
            Quantity::Resistance => &[('R', 1.0), ('r', 1.0), ('k', 1e3), ('K', 1e3), ('M', 1e6)],
            Quantity::Capacitance => &[('p', 1e-12), ('n', 1e-9), ('u', 1e-6), ('µ', 1e-6), ('μ', 1e-6), ('m', 1e-3)],
            Quantity::Inductance => &[('n', 1e-9), ('u', 1e-6), ('µ', 1e-6), ('μ', 1e-6), ('m', 1e-3)],
            _ => &[],
        }
    }
}

/// Why a value could not be read; the wording goes straight into a diagnostic.
#[derive(Debug, Clone, PartialEq)]
pub struct ValueError {
    pub message: String,
    pub hint: Option<String>,
}

impl fmt::Display for ValueError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(&self.message)
    }
}

fn prefix_factor(c: char) -> Option<f64> {
    Some(match c {
        'p' => 1e-12,
        'n' => 1e-9,
        'u' | 'µ' | 'μ' => 1e-6,
        'm' => 1e-3,
        'k' => 1e3,
        'M' => 1e6,
        _ => return None,
    })
}

/// Splits `text` into its leading number and the rest.
fn split_number(text: &str) -> Option<(f64, &str)> {
    let bytes = text.as_bytes();
    let mut end = 0;
    if end < bytes.len() && (bytes[end] == b'+' || bytes[end] == b'-') {
        end += 1;
    }
    let digits_start = end;
    while end < bytes.len() && (bytes[end].is_ascii_digit() || bytes[end] == b'.') {
        end += 1;
    }
    if end == digits_start {
        return None;
    }
    // An exponent only counts when digits follow it ("1e-3"), so "3 e" stays a unit error.
    if end < bytes.len() && (bytes[end] == b'e' || bytes[end] == b'E') {
        let mut k = end + 1;
        if k < bytes.len() && (bytes[k] == b'+' || bytes[k] == b'-') {
            k += 1;
        }
        let exp_digits = k;
        while k < bytes.len() && bytes[k].is_ascii_digit() {
            k += 1;
        }
        if k > exp_digits {
            end = k;
        }
    }
    let number: f64 = text[..end].parse().ok()?;
    Some((number, &text[end..]))
}

/// The IEC 60062 RKM code: digits, one letter in the decimal point's place, digits
/// (`2R2`, `R47`, `4k7`, `4u7`, `270n`).
fn parse_rkm(text: &str, quantity: Quantity) -> Option<f64> {
    let letters = quantity.rkm_letters();
    let mut found = None;
    for (i, c) in text.char_indices() {
        if c.is_ascii_digit() {
            continue;
        }
        if found.is_some() {
            return None;
        }
        let factor = letters.iter().find(|(l, _)| *l == c)?.1;
        found = Some((i, c, factor));
    }
    let (i, c, factor) = found?;
    let (whole, frac) = (&text[..i], &text[i + c.len_utf8()..]);
    if whole.is_empty() && frac.is_empty() {
        return None;
    }
    let number: f64 = format!("{}.{}", if whole.is_empty() { "0" } else { whole }, if frac.is_empty() { "0" } else { frac }).parse().ok()?;
    // Hundreds of digits are no code a part is marked with.
    Some(number * factor).filter(|v| v.is_finite())
}

/// The unit a slip of case most likely meant for this field (`uf` for `uF`, `khz` for
/// `kHz`). The old markings `mfd` and `MF` mean a microfarad on a crossover capacitor (a
/// millifarad would be a thousand times larger than any there).
fn unit_slip(unit: &str, q: Quantity) -> Option<String> {
    let lower = unit.to_lowercase();
    if q == Quantity::Capacitance && (lower == "mfd" || lower == "mf") {
        return Some("uF".into());
    }
    let sym = if q == Quantity::Resistance { "ohm" } else { q.symbol() };
    ["p", "n", "u", "m", "k", "M", ""].iter().map(|p| format!("{p}{sym}")).find(|c| c.to_lowercase() == lower)
}

/// A unit of another quantity that a slip of case spells (`uf` in an inductor's field).
fn other_quantity(unit: &str) -> Option<(String, Quantity)> {
    let lower = unit.to_lowercase();
    let all = [Quantity::Capacitance, Quantity::Inductance, Quantity::Resistance, Quantity::Power, Quantity::Voltage, Quantity::Current, Quantity::Frequency];
    all.iter().find_map(|q| unit_slip(&lower, *q).map(|u| (u, *q)))
}

/// Reads a physical value of the given quantity, in SI base units (farad, henry, ohm, watt,
/// volt, ampere, hertz; a percentage as a fraction, 10 % -> 0.10; a level in dB as dB).
pub fn parse_value(text: &str, quantity: Quantity) -> Result<f64, ValueError> {
    let t = text.trim();
    let expected = || format!("expected {} such as \"{}\", found \"{}\"", quantity.noun(), quantity.example(), t);
    if t.is_empty() {
        return Err(ValueError { message: format!("expected {} such as \"{}\", found nothing", quantity.noun(), quantity.example()), hint: None });
    }
    if let Some(v) = parse_rkm(t, quantity) {
        return Ok(v);
    }
    // A decimal comma, as much of Europe writes it: "4,7 uF".
    if let Some((whole, rest)) = t.split_once(',') {
        if !whole.is_empty() && whole.chars().all(|c| c.is_ascii_digit()) && rest.starts_with(|c: char| c.is_ascii_digit()) {
            let fixed = t.replacen(',', ".", 1);
            return Err(ValueError { message: format!("\"{t}\" has a decimal comma"), hint: Some(format!("write a decimal point: \"{fixed}\"")) });
        }
    }
    let Some((number, rest)) = split_number(t) else {
        return Err(ValueError { message: expected(), hint: Some(format!("write a number and a unit, e.g. \"{}\"", quantity.example())) });
    };
    let rest = rest.trim();
    if rest.is_empty() {
        return Err(ValueError {
            message: format!("{} needs a unit: expected {} such as \"{}\", found the bare number \"{}\"", t, quantity.noun(), quantity.example(), t),
            hint: Some(format!("add the unit, e.g. \"{} {}\"", t, quantity.symbol())),
        });
    }
    // Exact unit first (so "m" in "mH" and the lone "m" of metres are told apart), then prefix + unit.
    let (factor, unit) = if let Some(q) = Quantity::from_unit(rest) {
        (1.0, (q, rest))
    } else {
        let mut chars = rest.chars();
        let first = chars.next().unwrap_or(' ');
        let tail = chars.as_str();
        match (prefix_factor(first), Quantity::from_unit(tail)) {
            (Some(f), Some(q)) => (f, (q, tail)),
            _ => {
                return Err(ValueError {
                    message: format!("{}: unknown unit \"{}\"", expected(), rest),
                    hint: Some(match (unit_slip(rest, quantity), other_quantity(rest)) {
                        (Some(fix), _) => format!("did you mean \"{}{fix}\"?", &t[..t.len() - rest.len()]),
                        (None, Some((u, q))) => format!("\"{u}\" would be {}; this field takes {} in {}", q.noun(), quantity.noun(), quantity.symbol()),
                        (None, None) => format!("units are F, H, ohm (or Ω), W, V, A, Hz, %, dB with prefixes p n u µ m k M; this field takes {}", quantity.symbol()),
                    }),
                })
            }
        }
    };
    if unit.0 != quantity {
        return Err(ValueError { message: expected(), hint: Some(format!("\"{}\" is {}; this field takes {} in {}", unit.1, unit.0.noun(), quantity.noun(), quantity.symbol())) });
    }
    if quantity == Quantity::Percent || quantity == Quantity::Decibel {
        if factor != 1.0 {
            return Err(ValueError { message: expected(), hint: Some(format!("{} takes no SI prefix", quantity.symbol())) });
        }
        if !number.is_finite() {
            return Err(ValueError { message: format!("{} is not a finite number", t), hint: None });
        }
        return Ok(if quantity == Quantity::Percent { number / 100.0 } else { number });
    }
    let value = number * factor;
    if !value.is_finite() {
        return Err(ValueError { message: format!("{} is not a finite number", t), hint: None });
    }
    Ok(value)
}

/// Formats a value with an SI prefix and about `digits` significant digits: `3.3 uF`, `680 mohm`.
/// A resistance as every output prints it: three significant figures with its prefix.
pub fn ohm(v: f64) -> String {
    format_si(v, Quantity::Resistance, 3)
}

/// A frequency as every output prints it, or "-" where there is none.
pub fn hz(v: Option<f64>) -> String {
    match v {
        Some(f) => format_si(f, Quantity::Frequency, 3),
        None => "-".into(),
    }
}

pub fn format_si(value: f64, quantity: Quantity, digits: usize) -> String {
    let unit = quantity.symbol();
    if quantity == Quantity::Percent {
        return format!("{} %", trim_number(value * 100.0, digits));
    }
    if quantity == Quantity::Decibel {
        return format!("{:.1} dB", value);
    }
    if value == 0.0 || !value.is_finite() {
        return format!("{} {}", value, unit);
    }
    const PREFIXES: [(f64, &str); 7] = [(1e6, "M"), (1e3, "k"), (1.0, ""), (1e-3, "m"), (1e-6, "u"), (1e-9, "n"), (1e-12, "p")];
    let a = value.abs();
    // Ohms under 1 and watts under 1 read better as decimals in the trade (0.68 ohm, 0.4 W).
    let plain_small = matches!(quantity, Quantity::Resistance | Quantity::Power | Quantity::Voltage | Quantity::Current) && a >= 0.01;
    let (scale, prefix) = if plain_small && a < 1000.0 { (1.0, "") } else { *PREFIXES.iter().find(|(s, _)| a >= *s * 0.9995).unwrap_or(&PREFIXES[6]) };
    format!("{} {}{}", trim_number(value / scale, digits), prefix, unit)
}

/// Rewrites the ASCII units of voicekeep's own output as the trade prints them: `2.2 ohm`
/// as `2.2 Ω`, `680 mohm` as `680 mΩ`, `3.3 uF` as `3.3 µF`. Only a unit that follows a
/// number is touched, so words that merely contain "ohm" are left alone.
pub fn trade(text: &str) -> String {
    let mut out = String::with_capacity(text.len());
    let mut prev_numeric = false;
    for (i, token) in text.split(' ').enumerate() {
        if i > 0 {
            out.push(' ');
        }
        let core_end = token.find(|c: char| !(c.is_alphanumeric())).unwrap_or(token.len());
        let (core, rest) = token.split_at(core_end);
        let unit = match core {
            "ohm" | "ohms" => Some("Ω"),
            "mohm" => Some("mΩ"),
            "kohm" => Some("kΩ"),
            "Mohm" => Some("MΩ"),
            "uF" => Some("µF"),
            "uH" => Some("µH"),
            "us" => Some("µs"),
            _ => None,
        };
        match unit {
            Some(u) if prev_numeric => {
                out.push_str(u);
                out.push_str(rest);
            }
            _ => out.push_str(token),
        }
        prev_numeric = token.chars().last().is_some_and(|c| c.is_ascii_digit()) && token.chars().any(|c| c.is_ascii_digit());
    }
    out
}

/// The indefinite article for a number as it is read aloud: "an 80 W part", "an 11 W
/// part", "a 10 W part".
pub fn a_or_an(v: f64) -> &'static str {
    let whole = v.abs().trunc() as u64;
    let lead = format!("{whole}");
    // Spoken with a vowel first: eight, eighty, eight hundred ...; eleven and eighteen (and
    // their thousands, and millions).
    let group = |n: u64| {
        let mut n = n;
        while n >= 1000 {
            n /= 1000;
        }
        n
    };
    if lead.starts_with('8') || matches!(group(whole), 11 | 18) && whole >= 11 {
        "an"
    } else {
        "a"
    }
}

/// A number as a message shows it: as Rust writes it when that is short, else in scientific
/// notation (1e308 is "1e308", not 309 digits).
pub fn shown(v: f64) -> String {
    let plain = format!("{v}");
    if plain.len() <= 16 {
        plain
    } else {
        format!("{v:e}")
    }
}

/// Watts as a report prints them: three significant figures, and a figure too small to
/// matter (a part left open, a driver cut off) as "under 1 mW", never a row of zeros.
pub fn watts(v: f64) -> String {
    if v > 0.0 && v < 0.001 {
        "under 1 mW".into()
    } else {
        format!("{} W", trim_number(v, 3))
    }
}

/// A number with `digits` significant digits and no trailing zeros.
pub fn trim_number(v: f64, digits: usize) -> String {
    if v == 0.0 {
        return "0".into();
    }
    let mag = v.abs().log10().floor() as i32;
    let decimals = (digits as i32 - 1 - mag).max(0) as usize;
    let s = format!("{:.*}", decimals, v);
    if s.contains('.') {
        s.trim_end_matches('0').trim_end_matches('.').to_string()
    } else {
        s
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use Quantity::*;

    fn close(a: f64, b: f64) -> bool {
        (a - b).abs() <= 1e-12 * b.abs().max(1e-30)
    }

    #[test]
    fn parses_values_with_units_and_prefixes() {
        let cases: &[(&str, Quantity, f64)] = &[
            ("3.3 uF", Capacitance, 3.3e-6),
            ("3.3uF", Capacitance, 3.3e-6),
            ("3.3 µF", Capacitance, 3.3e-6),
            ("0.27 mH", Inductance, 0.27e-3),
            ("270 uH", Inductance, 270e-6),
            ("2.2 ohm", Resistance, 2.2),
            ("2.2 Ω", Resistance, 2.2),
            ("60 W", Power, 60.0),
            ("250 V", Voltage, 250.0),
            ("1.2 kHz", Frequency, 1200.0),
            ("10 %", Percent, 0.10),
            ("89 dB", Decibel, 89.0),
            ("-3 dB", Decibel, -3.0),
            ("12 mohm", Resistance, 0.012),
            ("1e-3 F", Capacitance, 1e-3),
            ("4.7 kohm", Resistance, 4700.0),
        ];
        for (text, q, want) in cases {
            let got = parse_value(text, *q).unwrap_or_else(|e| panic!("{text}: {e}"));
            assert!(close(got, *want), "{text}: got {got}, want {want}");
        }
    }

    #[test]
    fn parses_iec_60062_rkm_codes() {
        // IEC 60062: the letter stands in the decimal point's place and gives the multiplier.
        let cases: &[(&str, Quantity, f64)] = &[
            ("2R2", Resistance, 2.2),
            ("0R68", Resistance, 0.68),
            ("R47", Resistance, 0.47),
            ("4k7", Resistance, 4700.0),
            ("1M0", Resistance, 1e6),
            ("4u7", Capacitance, 4.7e-6),
            ("470n", Capacitance, 470e-9),
            ("270n", Capacitance, 270e-9),
            ("2p2", Capacitance, 2.2e-12),
            ("330u", Inductance, 330e-6),
        ];
        for (text, q, want) in cases {
            let got = parse_value(text, *q).unwrap_or_else(|e| panic!("{text}: {e}"));
            assert!(close(got, *want), "{text}: got {got}, want {want}");
        }
    }

    #[test]
    fn refuses_wrong_or_missing_units() {
        let cases: &[(&str, Quantity, &str)] = &[
            ("3.3 mH", Capacitance, "expected a capacitance such as \"4.7 uF\", found \"3.3 mH\""),
            ("3.3", Capacitance, "needs a unit"),
            ("2.2", Resistance, "bare number"),
            ("4u7", Resistance, "expected a resistance"),
            ("2R2", Capacitance, "expected a capacitance"),
            ("ten ohm", Resistance, "expected a resistance"),
            ("3 furlongs", Frequency, "unknown unit \"furlongs\""),
            ("10 k%", Percent, "expected a percentage"),
            ("", Power, "found nothing"),
            ("60 V", Power, "expected a power"),
        ];
        for (text, q, want) in cases {
            let err = parse_value(text, *q).expect_err(text);
            assert!(err.message.contains(want), "{text}: message {:?} lacks {want:?}", err.message);
        }
    }

    #[test]
    fn slips_get_the_fix_as_a_hint() {
        let hint = |t: &str, q| parse_value(t, q).unwrap_err().hint.unwrap_or_default();
        assert_eq!(hint("33 uf", Capacitance), "did you mean \"33 uF\"?");
        assert_eq!(hint("1.2 KHZ", Frequency), "did you mean \"1.2 kHz\"?");
        assert_eq!(hint("4.7 mfd", Capacitance), "did you mean \"4.7 uF\"?");
        assert_eq!(hint("2.2 OHM", Resistance), "did you mean \"2.2 ohm\"?");
        assert_eq!(hint("33 uf", Inductance), "\"uF\" would be a capacitance; this field takes an inductance in H");
        let e = parse_value("4,7 uF", Capacitance).unwrap_err();
        assert!(e.message.contains("decimal comma") && e.hint.as_deref() == Some("write a decimal point: \"4.7 uF\""), "{e:?}");
    }

    #[test]
    fn trade_units_follow_numbers_only() {
        assert_eq!(trade("2.2 ohm in series, 680 mohm, 3.3 uF and 270 uH."), "2.2 Ω in series, 680 mΩ, 3.3 µF and 270 µH.");
        assert_eq!(trade("the ohm is a unit; (4 ohm)"), "the ohm is a unit; (4 Ω)");
        assert_eq!(trade("rated 8 ohm, from the job"), "rated 8 Ω, from the job");
    }

    #[test]
    fn articles_follow_the_spoken_number() {
        assert_eq!(a_or_an(80.0), "an");
        assert_eq!(a_or_an(8.0), "an");
        assert_eq!(a_or_an(11.0), "an");
        assert_eq!(a_or_an(18.0), "an");
        assert_eq!(a_or_an(10.0), "a");
        assert_eq!(a_or_an(110.0), "a");
        assert_eq!(a_or_an(3.0), "a");
        assert_eq!(a_or_an(11_000.0), "an");
    }

    #[test]
    fn formats_with_si_prefixes() {
        assert_eq!(format_si(3.3e-6, Capacitance, 3), "3.3 uF");
        assert_eq!(format_si(0.27e-3, Inductance, 3), "270 uH");
        assert_eq!(format_si(0.68, Resistance, 3), "0.68 ohm");
        assert_eq!(format_si(4700.0, Resistance, 3), "4.7 kohm");
        assert_eq!(format_si(0.012, Resistance, 2), "0.012 ohm");
        assert_eq!(format_si(0.004, Resistance, 2), "4 mohm");
        assert_eq!(format_si(2150.0, Frequency, 3), "2.15 kHz");
        assert_eq!(format_si(0.1, Percent, 3), "10 %");
    }
}
