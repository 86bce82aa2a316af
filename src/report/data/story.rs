//! The report's prose: what was found and what was done (in plain words for the customer and
//! the buyer, with the figures for the archive), the work done step by step, and the cautions
//! each reader needs.

use super::words::*;
use super::{part_text, Audience, Ctx};
use crate::analysis::stress::StressRow;
use crate::analysis::Findings;
use crate::model::{ChangeStep, Part, PartKind, Patch, Scenario};
use crate::results::{hz, ohm};
use crate::units::trim_number;

/// A job of options with no work done yet: a quotation before the work.
fn quoting(job: &crate::model::Job) -> bool {
    job.changes.is_empty() && !job.options.is_empty()
}

/// When the readings were taken, as a sentence opens: "Before the work" only where there is
/// work, done or offered; an inspection's speaker is as it came in.
fn when_found(job: &crate::model::Job) -> &'static str {
    if no_work(job) {
        "As it came in"
    } else {
        "Before the work"
    }
}

/// A job with no work done and none offered: readings only, an inspection.
fn no_work(job: &crate::model::Job) -> bool {
    !job.work_done() && job.options.is_empty()
}

pub(super) fn summary(c: &Ctx) -> Vec<String> {
    let (job, f) = (c.job, c.f);
    let net = &job.network;
    let plain = c.audience.plain();
    let mut out = Vec::new();
    let off: Vec<&crate::analysis::LevelRow> = f.levels.iter().filter(|l| l.as_found_db.abs() >= 0.5).collect();
    if !job.read_on_bench() {
        // What the job records instead of bench readings: the diagnosis from the sweep at the
        // terminals, estimated (it does not enter the figures before the work).
        let estimated: Vec<String> = match &f.diagnosis {
            Some(Ok(d)) => d
                .estimates
                .iter()
                .filter(|e| e.identifiable && e.start > 0.0 && ((e.value / e.start) - 1.0).abs() >= 0.05)
                .map(|e| {
                    let ratio = e.value / e.start;
                    let what = if e.field == "value" { format!("{}'s value", e.part) } else { format!("{}'s {}", e.part, if plain { "internal loss" } else { e.field.as_str() }) };
                    // Twice or more is said as a multiple ("about 2.6 times"), not as "162 % above".
                    if ratio >= 2.0 {
                        format!("{what} about {} times its design value", crate::units::trim_number(ratio, 2))
                    } else {
                        format!("{what} about {:.0}\u{a0}% {} its design value", (100.0 * (ratio - 1.0)).abs(), if ratio < 1.0 { "below" } else { "above" })
                    }
                })
                .collect(),
            _ => Vec::new(),
        };
        if estimated.is_empty() {
            out.push("No part or driver readings were recorded before the work, so the figures before the work are those of the original design.".into());
        } else {
            out.push(format!(
                "No part was read on the bench before the work; the impedance sweep at the terminals pointed to {} (an estimate from the sweep, not a reading). The figures before the work are those of the original design.",
                join_and(&estimated)
            ));
        }
    } else if off.is_empty() {
        out.push(format!("{}, as worked out from the parts' readings, every driver was within 0.5 dB of the original design.", when_found(job)));
    } else {
        let each: Vec<String> = off
            .iter()
            .map(|l| {
                if l.as_found_fault {
                    format!("{} was silent, a fault", driver_words(net, &l.driver))
                } else {
                    format!("{} was {}", driver_words(net, &l.driver), level_words(l.as_found_db))
                }
            })
            .collect();
        out.push(format!("{}, as worked out from the parts' readings, {}.", when_found(job), join_and(&each)));
    }
    // The drivers' own faults, as the bench found them.
    for d in f.scenes.as_found.network.drivers.iter().filter(|d| d.fault.is_some() || d.fault_note.is_some()) {
        let read = match d.fault {
            Some(crate::model::Fault::Open) => Some("read open on the bench (no continuity across its voice coil)"),
            Some(crate::model::Fault::Shorted) => Some("read shorted on the bench (its voice coil shorted)"),
            None => None,
        };
        let who = capitalise(&driver_words(net, &d.name));
        out.push(match (read, &d.fault_note) {
            (Some(r), Some(n)) => format!("{who} {r}; the bench found: {}.", n.trim_end_matches('.')),
            (Some(r), None) => format!("{who} {r}."),
            (None, Some(n)) => format!("{who}: the bench found a fault: {}.", n.trim_end_matches('.')),
            (None, None) => continue,
        });
    }
    let (ld, lf, ll) = (&f.loads.as_designed, &f.loads.as_found, &f.loads.as_left);
    if lf.verdict == crate::analysis::Verdict::Over && ll.verdict != crate::analysis::Verdict::Over {
        out.push(format!(
            "As it came in, the speaker presented only {} to the amplifier at {} (the original design never falls below {}), close to a short circuit{}",
            ohm(lf.min_ohm),
            hz(Some(lf.min_at_hz)),
            ohm(ld.min_ohm),
            // The previous owner's amplifier is not the buyer's to check.
            if c.audience == super::Audience::Sale { ".".to_string() } else { ": the amplifier that drove it should be checked.".to_string() }
        ));
    }
    let flagged: Vec<&str> = f.health.iter().filter(|h| !h.ok).map(|h| h.part.as_str()).collect();
    if !flagged.is_empty() {
        let words: Vec<String> = flagged
            .iter()
            .map(|p| match net.part(p) {
                Some(part) if plain => format!("{p}, {} in {}", with_article(kind_noun(part.kind)), part_place(net, p)),
                _ => p.to_string(),
            })
            .collect();
        let n = flagged.len();
        out.push(format!("The bench readings found {} worn or faulty part{}: {}.", count_words(n), if n == 1 { "" } else { "s" }, join_and(&words)));
        // A flagged part no step replaces or removes is still in the speaker: say so.
        let touched = |p: &str| {
            job.changes.iter().any(|ch| match &ch.step {
                ChangeStep::Replace { target, .. } | ChangeStep::Remove { target } => target == p,
                _ => false,
            })
        };
        let kept: Vec<&crate::analysis::health::Flag> = f.health.iter().filter(|h| !h.ok && !touched(&h.part)).collect();
        if !kept.is_empty() && !quoting(job) && !no_work(job) {
            let names: Vec<String> = kept.iter().map(|h| h.part.clone()).collect();
            // The reason a signer gives for leaving a worn part: how little it moves the sound,
            // the analysis' own figure for that part's reading alone on the original design.
            // A part read open or shorted, or one whose effect is no figure, gets no reason.
            let sized = kept.iter().all(|h| !h.effect_driver.is_empty() && h.effect_db.abs() < 40.0);
            let why = kept
                .iter()
                .map(|h| {
                    let by = if h.effect_db.abs() < 0.005 { "by less than 0.01 dB".to_string() } else { format!("by {:.2} dB", h.effect_db.abs()) };
                    if kept.len() == 1 {
                        format!(": on its own, its reading moves {} {by}, and", driver_words(net, &h.effect_driver))
                    } else {
                        format!("{} moves {} {by}", h.part, driver_words(net, &h.effect_driver))
                    }
                })
                .collect::<Vec<_>>();
            let why = match (sized, kept.len()) {
                (false, _) => String::new(),
                (true, 1) => why[0].clone(),
                _ => format!(": on their own, {}, and", join_and(&why)),
            };
            let them = if kept.len() == 1 { "it" } else { "them" };
            let sep = if why.is_empty() { ";" } else { "" };
            if c.quote {
                let verb = if kept.len() == 1 { "stays" } else { "stay" };
                out.push(format!("{} {verb} in place in the work proposed{why}{sep} the figures after that work include {them}.", join_and(&names)));
            } else {
                let verb = if kept.len() == 1 { "was" } else { "were" };
                out.push(format!("{} {verb} left in place{why}{sep} the figures after the work include {them}.", join_and(&names)));
            }
        }
    }
    if c.audience == Audience::Archive {
        let n = job.changes.len();
        if n == 0 {
            out.push("No change steps were recorded.".into());
        } else {
            out.push(capitalise(&format!("{} change step{} {} recorded (listed below).", count_words(n), if n == 1 { "" } else { "s" }, if n == 1 { "was" } else { "were" })));
        }
    }
    let faults: Vec<String> = f.levels.iter().filter(|l| l.as_left_fault).map(|l| driver_words(net, &l.driver)).collect();
    let fine: Vec<&crate::analysis::LevelRow> = f.levels.iter().filter(|l| !l.as_left_fault).collect();
    // The worst point over each driver's whole passband, not a band mean, which can hide a
    // peak at the band's edge.
    let worst = fine.iter().map(|l| l.passband_worst_db.abs()).fold(0.0, f64::max);
    if quoting(job) {
        // Options and no work yet: nothing has been done, and there is no "after" to tell.
        out.push("No work has been done yet: the options below are what the shop offers, each with what it would do and what it costs.".into());
        return out;
    }
    if no_work(job) && !c.quote {
        // An inspection: the speaker as it is, against its design.
        let every = if faults.is_empty() { "every driver" } else { "every other driver" };
        if !fine.is_empty() {
            out.push(format!("No work has been done: as it is now, {every} plays within {worst:.2} dB of the original design at every frequency of its working range."));
        }
        return out;
    }
    if !fine.is_empty() {
        let every = if faults.is_empty() { "every driver" } else { "every other driver" };
        let what = match (crate::analysis::level_flag(worst), plain) {
            ("within 0.5 dB", true) if worst < crate::analysis::levels::NOTICEABLE_DB => {
                // "Up to": a figure under the threshold can print as 0.40 at two decimals.
                "a difference too small to hear (level changes of up to about 0.4 dB generally go unnoticed)".to_string()
            }
            ("within 0.5 dB", true) => "at the edge of what a listener can hear (level changes below about 0.4 dB generally go unnoticed)".to_string(),
            ("within 0.5 dB", false) => "within 0.5 dB; level changes below about 0.4 dB generally go unnoticed (Ballou, Handbook for Sound Engineers, 3.8.6)".to_string(),
            ("measurable", _) => "a measurable difference, though hard to hear".to_string(),
            (_, true) => "a difference likely to be heard".to_string(),
            // Said where a difference reaches 3 dB, which a reader might take for twice as loud.
            (other, false) if worst >= 3.0 => format!("{other}; 3 dB is double the power, not double the loudness (about 10 dB is heard as twice as loud)"),
            (other, false) => other.to_string(),
        };
        let after = if c.quote { "After the proposed work" } else { "After the work" };
        if worst < 0.005 {
            out.push(format!("{after}, {every} is calculated to play as the original design did, to within 0.01 dB at every frequency of its working range."));
        } else {
            out.push(format!("{after}, {every} is calculated to play within {worst:.2} dB of the original design at every frequency of its working range: {what}."));
        }
    }
    if !faults.is_empty() {
        out.push(format!(
            "{}, {} plays more than {} dB below the original design: that is a fault (a driver shorted or disconnected), not a level difference. Do not use the speaker until it is found.",
            if c.quote { "After the proposed work" } else { "After the work" },
            join_and(&faults),
            crate::analysis::compensate::FAULT_DB
        ));
    }
    out
}

/// The work done, one line per change step: for the customer what was fitted, its type and
/// rating; for the archive the values before and after.
pub(super) fn work(c: &Ctx) -> Vec<String> {
    let (found, left) = (&c.f.scenes.as_found, &c.f.scenes.as_left);
    let (net_found, net_left) = (&found.network, &left.network);
    c.job
        .changes
        .iter()
        .map(|ch| match (&ch.step, c.audience.plain()) {
            (ChangeStep::Replace { target, with: Patch::Part(_) }, true) => {
                let (Some(old), Some(new)) = (net_found.part(target), net_left.part(target)) else { return format!("Replaced {target}.") };
                // "(was a bipolar electrolytic capacitor)": the old part's type, with its noun.
                // Like for like says why it was replaced instead: the part read open, shorted
                // or out of its tolerance on the bench.
                let like = old.type_text.is_some() && old.type_text == new.type_text;
                let flagged = c.f.health.iter().find(|h| h.part == *target && !h.ok);
                let was = if like {
                    match (old.fault, flagged) {
                        (Some(f), _) => format!(", like for like: the old one read {} on the bench", f.name()),
                        (None, Some(_)) => ", like for like: the bench readings showed the old one worn".to_string(),
                        (None, None) => ", like for like".to_string(),
                    }
                } else {
                    old.type_text
                        .as_ref()
                        .map(|t| if t.to_lowercase().contains(kind_noun(old.kind)) { t.clone() } else { format!("{t} {}", kind_noun(old.kind)) })
                        // Before the work the old part is still there: "in place of", not "was".
                        .map(|t| if c.quote { format!(" (in place of the present {t})") } else { format!(" (was {})", with_article(&t)) })
                        .unwrap_or_default()
                };
                format!("Replaced {target}, {} in {}, with {}{was}.", with_article(kind_noun(old.kind)), part_place(net_left, target), fitted_words(c, new))
            }
            (ChangeStep::Replace { target, with: Patch::Part(_) }, false) => {
                let (a, b) = (net_found.part(target), net_left.part(target));
                let extra = b.map(|p| [p.type_text.clone(), rating_text(c, p)].into_iter().flatten().collect::<Vec<_>>().join(", ")).filter(|s| !s.is_empty());
                // A part without a bench reading was found as designed only by assumption.
                let read = c.job.measured.iter().any(|r| r.target == *target);
                format!(
                    "{}. Replaced {}: {} ({}) -> {}{}",
                    ch.number,
                    target,
                    a.map(part_text).unwrap_or_default(),
                    if read { "as found" } else { "not measured: nominal" },
                    b.map(part_text).unwrap_or_default(),
                    extra.map(|e| format!("; {e}")).unwrap_or_default()
                )
            }
            (ChangeStep::Replace { target, with: Patch::Driver(p) }, plain) => {
                let note = p.note.as_ref().map(|n| format!(": {n}")).unwrap_or_default();
                if plain {
                    format!("Replaced {}{note}.", driver_words(net_left, target))
                } else {
                    format!("{}. Replaced driver {target}{note}", ch.number)
                }
            }
            (ChangeStep::Insert { part, node, next_to }, plain) => added_line(c, ch.number, part, plain, Some((node, next_to))),
            (ChangeStep::Add { parts }, plain) => parts.iter().map(|p| added_line(c, ch.number, p, plain, None)).collect::<Vec<_>>().join(" "),
            (ChangeStep::Remove { target }, true) => match net_found.part(target) {
                Some(p) => format!("Removed {target}, {} in {}.", with_article(kind_noun(p.kind)), part_place(net_found, target)),
                None => format!("Removed {target}."),
            },
            (ChangeStep::Remove { target }, false) => format!("{}. Removed {}", ch.number, target),
        })
        .collect()
}

pub(super) fn with_article(t: &str) -> String {
    if t.starts_with(['a', 'e', 'i', 'o', 'u', 'A', 'E', 'I', 'O', 'U']) {
        format!("an {t}")
    } else {
        format!("a {t}")
    }
}

pub(super) fn added_line(c: &Ctx, number: usize, part: &Part, plain: bool, insert: Option<(&String, &String)>) -> String {
    let net_left = &c.f.scenes.as_left.network;
    let fitted = net_left.part(&part.name).unwrap_or(part);
    let fit = c.f.compensation.fits.iter().find(|f| f.part == part.name);
    if plain {
        if let Some(f) = fit.filter(|f| f.is_none()) {
            let why = if f.cannot_raise { "no resistor could bring the level back up" } else { "the level matched without it" };
            return format!("{} was planned in {} but not fitted: {why}.", part.name, part_place(net_left, &part.name));
        }
        let why = fit.map(|f| format!(" to bring {} back to its original level", driver_words(net_left, &f.driver))).unwrap_or_default();
        // A shunt is fitted across its driver, as the compensation's sentence says.
        let (place, why) = match fit.filter(|f| f.shunt) {
            Some(f) => (format!("across {}", driver_words(net_left, &f.driver)), " to bring it back to its original level".to_string()),
            None => (format!("in {}", part_place(net_left, &part.name)), why),
        };
        return format!("Fitted {}, {}, {place}{why}.", part.name, fitted_words(c, fitted));
    }
    // The shop's label for where it sits, when it gives one, in place of the nodes.
    if let Some(section) = &fitted.section {
        let verb = if insert.is_some() { "Inserted" } else { "Added" };
        return format!("{number}. {verb} {} ({}{}) in {section}", part.name, part_text(fitted), rating_text(c, fitted).map(|r| format!(", {r}")).unwrap_or_default());
    }
    match insert {
        Some((node, next_to)) => format!(
            "{number}. Inserted {} ({}{}) in series between node {node} and {next_to}",
            part.name,
            part_text(fitted),
            rating_text(c, fitted).map(|r| format!(", {r}")).unwrap_or_default()
        ),
        None => format!("{number}. Added {} ({}, {} - {})", part.name, part_text(fitted), net_left.node_label(&part.between[0]), net_left.node_label(&part.between[1])),
    }
}

/// The parts and drivers over their rating as left, by name.
pub(super) fn over_as_left(f: &Findings) -> Vec<String> {
    let parts = f.stress.rows.iter().filter(|r| r.scenario == Scenario::AsLeft && r.verdict == crate::analysis::Verdict::Over).map(|r| r.part.clone());
    let drivers = f.stress.drivers.iter().filter(|d| d.scenario == Scenario::AsLeft && d.verdict == crate::analysis::Verdict::Over).map(|d| d.driver.clone());
    parts.chain(drivers).collect()
}

/// The nominal load an amplifier should be rated for to drive a speaker whose impedance
/// falls to `min_ohm`: the highest of 8, 6, 4 and 2 ohm whose 80 % floor (IEC 60268-5) the
/// dip stays above; None when it falls below even 2 ohm's.
pub(super) fn amplifier_rating(min_ohm: f64) -> Option<f64> {
    [8.0, 6.0, 4.0, 2.0].into_iter().find(|r| min_ohm >= crate::analysis::load::rated_floor(*r))
}

/// The amplifier to use with a speaker whose lowest impedance is `min_ohm`, in words: "an
/// amplifier its maker rates for 6 Ω speakers or lower", with why a rating above the lowest
/// impedance suits it (IEC 60268-5 lets a speaker dip to 80 % of its rated impedance, so a
/// reader does not take 6 Ω beside 4.96 Ω for a slip). None below every common rating.
pub(super) fn amplifier_advice(min_ohm: f64) -> Option<String> {
    let r = amplifier_rating(min_ohm)?;
    let why = if r > min_ohm {
        format!(" (the standard lets a {} speaker dip to {}, and this one stays above that)", ohm(r), ohm(crate::analysis::load::rated_floor(r)))
    } else {
        String::new()
    };
    Some(format!("an amplifier its maker rates for {} speakers or lower{why}", ohm(r)))
}

/// Cautions for this report's reader: the customer and the buyer need the amplifier, the
/// load and listening levels; the archive keeps every caution of the bench as well.
pub(super) fn safety(c: &Ctx) -> Vec<String> {
    let f = c.f;
    let mut s = Vec::new();
    let over = over_as_left(f);
    if c.audience.plain() {
        // Said as what they are: a prediction, unless a sweep at the terminals after the work
        // was measured (its result is in the terminals block).
        s.push(if c.job.terminals.as_left.is_some() && !c.quote {
            "These figures are calculated from the parts' values and readings; the sweep measured at the speaker's terminals after the work is set against them above.".to_string()
        } else {
            "These figures are calculated from the parts' values and readings: a prediction, not a measurement of the speaker.".to_string()
        });
        // The power the speaker suits is said once, in the power block above; a quotation
        // (before the work) gives none.
        s.push(if c.quote {
            "Amplifier: a more powerful amplifier than the speaker's makers rate it for, or one driven into clipping, can damage the drivers and the crossover; turn the volume down if the sound hardens or distorts.".to_string()
        } else if f.power.suits_w.is_none() {
            // No figure was given above (nothing has a rating on record): none is referred to.
            format!("Amplifier: with no power rating on record for any part or driver, ask the shop before using an amplifier of more than the {} W per channel these figures were worked out for. One driven into clipping can damage the drivers and the crossover at any power; turn the volume down if the sound hardens or distorts.", trim_number(f.power.job_w, 3))
        } else {
            "Amplifier: keep within the amplifier power given above. A more powerful amplifier, or one driven into clipping, can damage the drivers and the crossover; turn the volume down if the sound hardens or distorts.".to_string()
        });
        // The load is said in its own block; a quotation, which has none, says it here.
        if c.quote && !c.job.options.is_empty() {
            s.push("Load: each option's lowest impedance is in the options table; use an amplifier its maker rates for that load or lower.".to_string());
        } else if c.quote {
            s.push(match amplifier_advice(f.loads.as_left.min_ohm) {
                Some(a) => format!("Load: use {a}."),
                None => "Load: the speaker's impedance falls too low for most amplifiers; ask the shop before use.".to_string(),
            });
        }
        if !over.is_empty() {
            s.push(format!(
                "{} would run above {} rating at that amplifier's full power: keep the volume moderate until the shop fits a higher-rated part.",
                join_and(&over),
                if over.len() == 1 { "its" } else { "their" }
            ));
        }
        // A steady full-level tone heats a resistor far more than music does: the owner who
        // plays test tones is told from what power (the bench caution, in plain words).
        if let (Some(w), Some(who)) = (f.power.sine_max_w, &f.power.sine_limited_by) {
            if w < f.power.suits_w.unwrap_or(f.power.job_w) && !c.quote {
                let what = if c.job.network.driver(who).is_some() { "a driver" } else { "a part" };
                s.push(format!(
                    "Test tones: a steady tone at full level, unlike music, can overheat {what} inside this speaker from about {} W of amplifier power; keep test tones quiet and short.",
                    // Rounded down: a caution errs on the safe side.
                    crate::units::trim_number(round_down_2(w), 2)
                ));
            }
        }
        s.push("Listening levels: long sessions at high volume damage hearing for good; keep levels moderate and take breaks.".into());
        s.push("Follow local electrical codes, the amplifier's and the speaker's makers' ratings, and qualified service practice.".into());
        return s;
    }
    s.push("All figures here are computed from the job's values and models; confirm them by measurement before relying on them.".to_string());
    let as_left = |r: &&StressRow| r.scenario == Scenario::AsLeft && r.kind == PartKind::Resistor && r.programme_w > 0.0;
    let resistors: Vec<&StressRow> = f.stress.rows.iter().filter(as_left).collect();
    if !resistors.is_empty() {
        s.push("Crossover resistors get hot. Mount them clear of capacitors, wiring and wadding, with space for air; rate them at least twice their programme dissipation (common practice).".into());
        let tone: Vec<String> = resistors
            .iter()
            .filter(|r| r.rating_w.is_some_and(|w| r.sine_w > w))
            .map(|r| {
                format!(
                    "{} ({} W near {} in {} {} W part)",
                    r.part,
                    trim_number(r.sine_w, 3),
                    hz(Some(r.sine_at_hz)),
                    crate::units::a_or_an(r.rating_w.unwrap_or(0.0)),
                    trim_number(r.rating_w.unwrap_or(0.0), 3)
                )
            })
            .collect();
        if !tone.is_empty() {
            s.push(format!(
                "A full-level test tone would overheat {}: ratings chosen here cover programme, not a sustained sine, so keep bench tones low and short.",
                join_and(&tone)
            ));
        }
    }
    if !over.is_empty() {
        s.push(format!(
            "As left, {} {} over {} rating at the stated amplifier power: keep the level down until {} replaced with a suitably rated part.",
            join_and(&over),
            if over.len() == 1 { "is" } else { "are" },
            if over.len() == 1 { "its" } else { "their" },
            if over.len() == 1 { "it is" } else { "they are" }
        ));
    }
    if f.scenes.as_left.network.parts.iter().any(|p| p.kind == PartKind::Capacitor) {
        s.push("Use only non-polarised capacitors in a crossover (film, or bipolar electrolytic): a polarised electrolytic fitted there can fail, overheat or vent.".into());
    }
    s.push("The amplifier's load is given in the load section above; follow the amplifier maker's minimum load rating.".into());
    s.push("Disconnect the amplifier before working on the crossover, and let large capacitors in the amplifier discharge as its maker describes.".into());
    s.push(
        "Bench tests: start at a low level, keep test tones short, and wear hearing protection near the drivers; a tweeter driven with a full-level sine can fail in seconds."
            .into(),
    );
    s.push("Soldering: work in a ventilated place, extract the fumes, and wash your hands after handling old parts and solder.".into());
    s.push("These notes defer to local electrical codes, to the amplifier's and drivers' makers' ratings, and to qualified service practice.".into());
    s
}

/// `w` rounded down to two significant figures (31.6 to 31, 1480 to 1400).
fn round_down_2(w: f64) -> f64 {
    if w <= 0.0 || !w.is_finite() {
        return w;
    }
    let step = 10f64.powf(w.log10().floor() - 1.0);
    (w / step + 1e-9).floor() * step
}
