//! Text as voicekeep takes it in and prints it out: characters no input may hold (control
//! characters, Unicode noncharacters), and any text made safe and short enough to print to a
//! terminal.

/// Whether `c` may stand in a job, a table, a settings file or a price list. Tabs, line feeds
/// and carriage returns may; the other C0 and C1 control characters (NUL, BEL, ESC, DEL ...)
/// and Unicode's noncharacters (U+FFFE, U+FFFF, U+FDD0 to U+FDEF, and the last two of every
/// plane) may not: they print as nothing or act on the terminal, and a YAML reader stops at NUL.
pub fn allowed(c: char) -> bool {
    let u = c as u32;
    if matches!(c, '\t' | '\n' | '\r') {
        return true;
    }
    !(u < 0x20 || (0x7f..=0x9f).contains(&u) || (0xfdd0..=0xfdef).contains(&u) || (u & 0xfffe) == 0xfffe)
}

/// The first character of `text` that no input may hold ([`allowed`]), with its line and
/// column (counted in characters from 1).
pub fn first_forbidden(text: &str) -> Option<((usize, usize), char)> {
    let (mut line, mut col) = (1, 1);
    for c in text.chars() {
        if !allowed(c) {
            return Some(((line, col), c));
        }
        if c == '\n' {
            line += 1;
            col = 1;
        } else {
            col += 1;
        }
    }
    None
}

/// How a character is named in a message: `U+001B (ESC)`.
pub fn name_of(c: char) -> String {
    let short = match c {
        '\0' => " (NUL)",
        '\u{7}' => " (BEL)",
        '\u{8}' => " (backspace)",
        '\u{1b}' => " (ESC)",
        '\u{7f}' => " (DEL)",
        '\u{c}' => " (form feed)",
        '\u{b}' => " (vertical tab)",
        _ if (c as u32 & 0xfffe) == 0xfffe || (0xfdd0..=0xfdef).contains(&(c as u32)) => " (a Unicode noncharacter)",
        _ if !allowed(c) => " (a control character)",
        _ => return format!("\"{c}\" (U+{:04X})", c as u32),
    };
    format!("U+{:04X}{short}", c as u32)
}

/// `s` safe to print on a terminal: every character a terminal would act on (control
/// characters but the line feed, noncharacters) written as `\u{1b}`, so a job's keys, node
/// names and file names can neither clear the screen nor set the window's title.
pub fn printable(s: &str) -> String {
    let mut out = String::with_capacity(s.len());
    for c in s.chars() {
        if c == '\n' || (allowed(c) && c != '\t' && c != '\r') {
            out.push(c);
        } else if c == '\t' {
            out.push(' ');
        } else {
            out.push_str(&format!("\\u{{{:x}}}", c as u32));
        }
    }
    out
}

/// `s` cut to at most `max` characters, keeping its start and end, with the number of
/// characters left out said in the middle.
pub fn shorten(s: &str, max: usize) -> String {
    let n = s.chars().count();
    if n <= max {
        return s.to_string();
    }
    let keep = max.saturating_sub(40) / 2;
    let head: String = s.chars().take(keep).collect();
    let tail: String = s.chars().skip(n - keep).collect();
    format!("{head} ... ({} characters left out) ... {tail}", n - 2 * keep)
}

/// Wraps every line longer than `width` at spaces, continuing with the line's own indent
/// and four spaces more.
pub fn wrap(text: &str, width: usize) -> String {
    let mut out = String::with_capacity(text.len() + text.len() / 16);
    for line in text.lines() {
        if line.chars().count() <= width {
            out.push_str(line);
            out.push('\n');
            continue;
        }
        let indent = line.len() - line.trim_start().len();
        let cont = " ".repeat((indent + 4).min(width / 2));
        // Words of the line being built; a unit stays with its number ("0.018 dB" is never
        // split), so a unit that would overflow takes its number to the next line.
        let is_unit = |w: &str| matches!(w.trim_end_matches([',', ';', ')', '.', ':']), "dB" | "ohm" | "Hz" | "kHz" | "W" | "V" | "A" | "%" | "uF" | "mH" | "mohm" | "kohm");
        let mut words: Vec<&str> = Vec::new();
        let mut first = true;
        let flush = |words: &mut Vec<&str>, first: &mut bool, out: &mut String| {
            out.push_str(if *first { &line[..indent] } else { &cont });
            out.push_str(words.join(" ").trim_end());
            out.push('\n');
            words.clear();
            *first = false;
        };
        for word in line[indent..].split(' ') {
            let lead = if first { indent } else { cont.len() };
            let len = |ws: &[&str]| lead + ws.iter().map(|w| w.chars().count()).sum::<usize>() + ws.len().saturating_sub(1);
            let mut trial = words.clone();
            trial.push(word);
            if !words.is_empty() && len(&trial) > width {
                let carried = if is_unit(word) && words.len() > 1 { words.pop() } else { None };
                flush(&mut words, &mut first, &mut out);
                words.extend(carried);
            }
            words.push(word);
        }
        let current = format!("{}{}", if first { &line[..indent] } else { cont.as_str() }, words.join(" "));
        out.push_str(current.trim_end());
        out.push('\n');
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn control_characters_and_noncharacters_are_refused_tab_and_newlines_kept() {
        for c in ['\0', '\u{7}', '\u{1b}', '\u{7f}', '\u{85}', '\u{fffe}', '\u{ffff}', '\u{fdd0}', '\u{1fffe}', '\u{10ffff}'] {
            assert!(!allowed(c), "{:?}", c);
        }
        for c in ['\t', '\n', '\r', 'a', 'µ', 'Ω', '中', '\u{fffd}', '\u{1f50a}', '\u{200f}'] {
            assert!(allowed(c), "{:?}", c);
        }
        assert_eq!(first_forbidden("a: 1\n# x\0y\n"), Some(((2, 4), '\0')));
        assert_eq!(first_forbidden("a: 1\n"), None);
    }

    #[test]
    fn printable_escapes_what_a_terminal_would_act_on() {
        assert_eq!(printable("C\u{1b}]0;x\u{7}1"), "C\\u{1b}]0;x\\u{7}1");
        assert_eq!(printable("a\nb"), "a\nb");
        let long = "x".repeat(19_000);
        let s = shorten(&long, 300);
        assert!(s.chars().count() <= 300, "{}", s.len());
        assert!(s.contains("characters left out"));
        assert_eq!(shorten("short", 300), "short");
    }
}

/// Whether messages on standard error are coloured: only on a terminal, and never when the
/// NO_COLOR variable is set to anything but the empty string (no-color.org).
pub fn colour_wanted(no_color: Option<&std::ffi::OsStr>, terminal: bool) -> bool {
    terminal && no_color.is_none_or(|v| v.is_empty())
}

/// A message for the terminal, coloured: a problem's place (`file:line:column:`) in bold, the
/// word "hint:" in cyan, a leading "voicekeep:" in bold red. The text itself is unchanged.
pub fn paint(message: &str) -> String {
    const BOLD: &str = "\u{1b}[1m";
    const RED: &str = "\u{1b}[1;31m";
    const CYAN: &str = "\u{1b}[36m";
    const OFF: &str = "\u{1b}[0m";
    message
        .split('\n')
        .map(|line| {
            if let Some(rest) = line.strip_prefix("  hint:") {
                return format!("  {CYAN}hint:{OFF}{rest}");
            }
            if let Some(rest) = line.strip_prefix("voicekeep:") {
                return format!("{RED}voicekeep:{OFF}{rest}");
            }
            // "file:12:5: field: message": the place up to its third colon, where the
            // second and third fields are numbers.
            let parts: Vec<&str> = line.splitn(4, ':').collect();
            if !line.starts_with(' ') && parts.len() == 4 && [parts[1], parts[2]].iter().all(|p| !p.is_empty() && p.bytes().all(|b| b.is_ascii_digit())) {
                let place = parts[..3].join(":");
                return format!("{BOLD}{place}:{OFF}{}", parts[3]);
            }
            line.to_string()
        })
        .collect::<Vec<_>>()
        .join("\n")
}

#[cfg(test)]
mod colour_tests {
    use super::*;

    #[test]
    fn colour_only_on_a_terminal_without_no_color() {
        use std::ffi::OsStr;
        assert!(colour_wanted(None, true));
        assert!(!colour_wanted(None, false));
        assert!(!colour_wanted(Some(OsStr::new("1")), true));
        // An empty NO_COLOR is as if unset (no-color.org).
        assert!(colour_wanted(Some(OsStr::new("")), true));
    }

    #[test]
    fn painting_keeps_the_text() {
        let m = "job.yaml:12:5: network.parts.C1.value: expected a capacitance\n   12 |     C1: ...\n  hint: did you mean \"3.3 uF\"?\nvoicekeep: 1 problem";
        let p = paint(m);
        assert!(p.contains("\u{1b}[1mjob.yaml:12:5:\u{1b}[0m network.parts") && p.contains("\u{1b}[36mhint:\u{1b}[0m did you mean"));
        let plain: String = p.split('\u{1b}').enumerate().map(|(i, s)| if i == 0 { s.to_string() } else { s.split_once('m').map(|x| x.1).unwrap_or("").to_string() }).collect();
        assert_eq!(plain, m);
    }
}
