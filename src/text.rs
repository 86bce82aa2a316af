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
