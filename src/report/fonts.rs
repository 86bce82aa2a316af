//! The fonts a report is set in: the Typst engine's own (Libertinus Serif, New Computer
//! Modern, DejaVu Sans Mono) and the ones shipped in `fonts/` for other scripts and emoji
//! (fonts/README.md lists them with their licences). The system's fonts are never read, so a
//! job renders to the same bytes on every machine. [`legible`] is what keeps a character no
//! font has from reaching the typesetter (a PDF/A archive refuses a missing glyph).

use std::sync::OnceLock;

use typst::text::{Coverage, FontInfo};

/// The fonts shipped beside the engine's, for scripts Libertinus Serif does not cover.
pub static EXTRA: &[&[u8]] = &[
    include_bytes!("../../fonts/wqy-microhei.ttc"),
    include_bytes!("../../fonts/NotoSansArabic-Regular.ttf"),
    include_bytes!("../../fonts/NotoSansHebrew-Regular.ttf"),
    include_bytes!("../../fonts/NotoSansArmenian-Regular.ttf"),
    include_bytes!("../../fonts/NotoSansGeorgian-Regular.ttf"),
    include_bytes!("../../fonts/NotoSansEthiopic-Regular.ttf"),
    include_bytes!("../../fonts/NotoSansThai-Regular.ttf"),
    include_bytes!("../../fonts/NotoSansLao-Regular.ttf"),
    include_bytes!("../../fonts/NotoSansKhmer-Regular.ttf"),
    include_bytes!("../../fonts/NotoSansMyanmar-Regular.ttf"),
    include_bytes!("../../fonts/NotoSansSinhala-Regular.ttf"),
    include_bytes!("../../fonts/NotoSansDevanagari-Regular.ttf"),
    include_bytes!("../../fonts/NotoSansBengali-Regular.ttf"),
    include_bytes!("../../fonts/NotoSansGujarati-Regular.ttf"),
    include_bytes!("../../fonts/NotoSansGurmukhi-Regular.ttf"),
    include_bytes!("../../fonts/NotoSansKannada-Regular.ttf"),
    include_bytes!("../../fonts/NotoSansMalayalam-Regular.ttf"),
    include_bytes!("../../fonts/NotoSansTamil-Regular.ttf"),
    include_bytes!("../../fonts/NotoSansTelugu-Regular.ttf"),
    include_bytes!("../../fonts/Symbola.ttf"),
];

/// What each font a report can use covers.
fn coverages() -> &'static [Coverage] {
    static ALL: OnceLock<Vec<Coverage>> = OnceLock::new();
    ALL.get_or_init(|| typst_assets::fonts().chain(EXTRA.iter().copied()).flat_map(FontInfo::iter).map(|i| i.coverage).collect())
}

/// Whether some font of the report has a glyph for `c`. Whitespace and the marks that only
/// steer layout (joiners, direction marks, variation selectors) need none.
pub fn covered(c: char) -> bool {
    let u = c as u32;
    c.is_whitespace()
        || matches!(u, 0x200b..=0x200f | 0x202a..=0x202e | 0x2060..=0x2069 | 0xfe00..=0xfe0f | 0xe0100..=0xe01ef | 0xfeff)
        || coverages().iter().any(|cov| cov.contains(u))
}

/// The first character of `s` no font of the report has.
pub fn first_uncovered(s: &str) -> Option<char> {
    s.chars().find(|c| !covered(*c))
}

/// The character printed in the place of one no font has: the replacement character.
pub const STAND_IN: char = '\u{fffd}';

/// `s` with every character no font has replaced by [`STAND_IN`] (`check` warns of each,
/// naming the field).
pub fn legible(s: &str) -> std::borrow::Cow<'_, str> {
    if s.chars().all(covered) {
        std::borrow::Cow::Borrowed(s)
    } else {
        std::borrow::Cow::Owned(s.chars().map(|c| if covered(c) { c } else { STAND_IN }).collect())
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_shipped_fonts_cover_the_scripts_the_readme_names() {
        // One everyday word or name in each script (typed here, not taken from the fonts).
        for s in
            ["Müller", "Παπαδόπουλος", "Иванов", "王小明", "山田太郎", "やまだ", "김민준", "محمد", "שלום", "Երևան", "თბილისი", "สมชาย", "नमस्ते", "বাংলা", "தமிழ்", "🔊🎵", "\u{fffd}"]
        {
            assert_eq!(first_uncovered(s), None, "{s}");
        }
        // An unassigned code point is in no font.
        assert_eq!(first_uncovered("a\u{378}b"), Some('\u{378}'));
        assert_eq!(legible("a\u{378}b"), "a\u{fffd}b");
    }
}
