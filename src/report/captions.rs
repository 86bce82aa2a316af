//! What each plot shows, in the words of its legend: one place for every caption, read by
//! the report data (one cabinet's and a set's).

use crate::model::PlotKind;

/// The clause of a level plot's caption about sound output: left out of a job that gives no
/// driver's sensitivity or response (there it would describe nothing drawn).
pub const ACOUSTIC_CLAUSE: &str = "; a driver whose sound output the job gives (its sensitivity or measured response) is compared by that output";

/// The caption of a pair's or set's plot; with no work done the cabinets are drawn as found.
pub fn set_caption(kind: PlotKind, worked: bool) -> &'static str {
    match kind {
        PlotKind::Impedance if !worked => "The impedance the amplifier sees (in ohms), on a logarithmic scale: each cabinet as found, before any work (first solid, then short dashes, dots, sparse dashes) and the original design (thin long dashes); the thin grey dotted line is 80 % of the rated impedance, the lowest the loudspeaker standard allows.",
        PlotKind::Impedance => "The impedance the amplifier sees (in ohms), on a logarithmic scale: each cabinet as left (first solid, then short dashes, dots, sparse dashes) and the original design (thin long dashes); the thin grey dotted line is 80 % of the rated impedance, the lowest the loudspeaker standard allows.",
        k => caption(k, worked, true),
    }
}

/// What each plot shows, for its caption: the same words as its legend. With no work done
/// (`worked` false) no plot draws the speaker as left, and with nothing read on the bench
/// (`read` false) none draws it as found; no caption names what is not drawn.
pub fn caption(kind: PlotKind, worked: bool, read: bool) -> &'static str {
    match kind {
        PlotKind::Response if worked && !read => "Each driver's level as designed (thin long dashes in a darker shade, drawn on top) and as left (solid); nothing was read on the bench before the work, so no curve is drawn as found; darker colours for lower-frequency drivers.",
        PlotKind::Change if worked && !read => "Each driver's level as left (solid) against the original design over its band; nothing was read on the bench before the work, so no curve is drawn as found; a driver whose sound output the job gives (its sensitivity or measured response) is compared by that output. 0 dB is the original design.",
        PlotKind::Impedance if worked && !read => "The impedance the amplifier sees (in ohms), on a logarithmic scale, as designed (thin long dashes) and as left (solid); nothing was read on the bench before the work, so no curve is drawn as found; the thin grey dotted line is 80 % of the rated impedance, the lowest the loudspeaker standard allows.",
        PlotKind::Acoustic if worked && !read => "Acoustic sum of the drivers' measured responses through the network: as designed (thin long dashes) and as left (solid).",
        PlotKind::Response if !worked => "Each driver's level as designed (thin long dashes in a darker shade, drawn on top) and as found, before any work (short dashes); darker colours for lower-frequency drivers.",
        PlotKind::Change if !worked => "Each driver's level as found, before any work (short dashes), against the original design over its band; a driver whose sound output the job gives (its sensitivity or measured response) is compared by that output. 0 dB is the original design.",
        PlotKind::Impedance if !worked => "The impedance the amplifier sees (in ohms), on a logarithmic scale, as designed (thin long dashes) and as found, before any work (short dashes); the thin grey dotted line is 80 % of the rated impedance, the lowest the loudspeaker standard allows.",
        PlotKind::Acoustic if !worked => "Acoustic sum of the drivers' measured responses through the network: as designed (thin long dashes) and as found, before any work (short dashes).",
        PlotKind::Response => "Each driver's level as designed (thin long dashes in a darker shade, drawn on top), as found (short dashes) and as left (solid); darker colours for lower-frequency drivers.",
        PlotKind::Change => "Each driver's level against the original design over its band: as found (short dashes) and as left (solid); a driver whose sound output the job gives (its sensitivity or measured response) is compared by that output. 0 dB is the original design.",
        PlotKind::Impedance => "The impedance the amplifier sees (in ohms), on a logarithmic scale, as designed (thin long dashes), as found (short dashes) and as left (solid); the thin grey dotted line is 80 % of the rated impedance, the lowest the loudspeaker standard allows.",
        PlotKind::Phase => "Impedance phase the amplifier sees, same line patterns as the magnitude.",
        PlotKind::Tolerance => "The spread of each driver's as-left level from part tolerances, against its level with nominal parts (0 dB): the shaded band holds 90 % of the runs (5 % to 95 %).",
        PlotKind::PairFound => "Each driver's level in each cabinet as found, against the original design over the driver's band; cabinets told apart by line pattern (first solid, then short dashes, dots, sparse dashes). Where the cabinets' traces part, they did not match.",
        PlotKind::PairLeft => "Each driver's level in each cabinet as left, after the work, against the original design over the driver's band; cabinets told apart by line pattern, as the legend shows. Traces that lie together show cabinets that match.",
        PlotKind::Acoustic => "Acoustic sum of the drivers' measured responses through the network: as designed (thin long dashes), as found (short dashes), as left (solid).",
        PlotKind::Terminals => "Impedance (in ohms) measured at the speaker's terminals (as found dots, as left sparse dashes) against the impedance calculated from the parts' values and readings (as found short dashes, as left solid); the thin grey dotted line is 80 % of the rated impedance, the lowest the loudspeaker standard allows.",
    }
}

#[cfg(test)]
mod tests {
    #[test]
    fn every_level_caption_holds_the_clause_it_may_lose() {
        use crate::model::PlotKind;
        for (w, r) in [(true, true), (true, false), (false, true)] {
            assert!(super::caption(PlotKind::Change, w, r).contains(super::ACOUSTIC_CLAUSE), "{w} {r}");
        }
    }
}
