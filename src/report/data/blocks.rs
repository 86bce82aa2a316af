//! One builder per block of the report's data: the title block's header and drive line, the
//! levels, compensation, parts and drivers, stress, load, health and tolerance tables, and the
//! record of inputs and attachments.

use super::words::*;
use super::*;
use crate::analysis::stress::StressRow;
use crate::model::{ChangeStep, Scenario};
use crate::results::{db, hz, level};

pub(super) fn header(c: &Ctx) -> JobHeader {
    let info = &c.job.info;
    let sale = c.audience == Audience::Sale;
    JobHeader {
        number: info.number.clone(),
        // The job's one-line title is the shop's (it may tell the owner's complaint or how the
        // speaker was damaged): a buyer reads the speaker's description instead.
        work: if sale { info.speaker_description.clone() } else { info.work.clone() },
        technician: info.technician.clone(),
        shop: Shop {
            name: info.shop_name.clone(),
            address: info.shop_address.clone(),
            contact: info.shop_contact.clone(),
            logo: info.shop_logo.as_ref().and_then(|l| c.job.inputs.iter().position(|f| &f.name == l)).map(|i| format!("/inputs/{i}")),
        },
        customer: if sale || (info.customer_name.is_empty() && info.customer_reference.is_empty()) {
            None
        } else {
            Some(Customer { name: info.customer_name.clone(), reference: info.customer_reference.clone() })
        },
        speaker: Speaker {
            description: info.speaker_description.clone(),
            serials: info.serials.clone(),
            rated_impedance: info.rated_impedance.map(ohm).unwrap_or_else(|| "not given".into()),
        },
        // The bench notes are the shop's own: the archive's only. The customer's notes go to
        // their report and the archive; the sale sheet has neither (either may speak of the
        // owner).
        notes: if c.audience == Audience::Archive && !info.notes.is_empty() { Some(info.notes.clone()) } else { None },
        customer_notes: if sale || info.customer_notes.is_empty() { None } else { Some(info.customer_notes.clone()) },
    }
}

/// The amplifier the figures assume: never worded as a specification of the speaker.
pub(super) fn drive(c: &Ctx) -> String {
    let a = &c.job.amplifier;
    let (p, r) = (trim_number(a.power_w, 3), trim_number(a.into_ohm, 3));
    match c.audience {
        Audience::Archive => format!("sine {}; programme {} W", c.f.stress.amplifier, trim_number(c.f.stress.programme_w, 3)),
        Audience::Customer => format!("worked out for an amplifier of {p} W into {r} ohm"),
        Audience::Sale => format!("the shop's figures assume an amplifier of {p} W into {r} ohm"),
    }
}

/// Which drivers the levels compare as acoustic output, and from what, as a sentence (empty
/// when every comparison is of voltage).
pub(super) fn acoustic_basis(c: &Ctx) -> String {
    let f = c.f;
    let acoustic: Vec<String> = f
        .levels
        .iter()
        .filter(|l| l.as_left_acoustic || l.as_found_acoustic)
        .map(|l| {
            let source = |s: &crate::analysis::Scene| s.network.driver(&l.driver).and_then(|d| crate::analysis::levels::acoustic_offset(d, &[])).map(|(_, src)| src.words());
            match (source(&f.scenes.as_designed), source(&f.scenes.as_left)) {
                (Some(a), Some(b)) if a == b => format!("{} (from {a})", l.driver),
                (Some(a), Some(b)) => format!("{} (the original from {a}, as left from {b})", l.driver),
                _ => l.driver.clone(),
            }
        })
        .collect();
    if acoustic.is_empty() {
        return String::new();
    }
    let rest = if acoustic.len() < f.levels.len() { "; the other drivers as the voltage across them" } else { "" };
    format!(" Compared as acoustic output, SPL at 1 m for 2.83 V, because the design and the speaker as left both know it: {}{rest}.", acoustic.join(", "))
}

pub(super) fn levels(c: &Ctx) -> LevelsData {
    let f = c.f;
    let net = &c.job.network;
    let mut basis = format!(
        "the network solved as designed, as found and as left over {}. Levels are the mean over each driver's band, in dB relative to the original design; the band is the fitting band where a compensating resistor names the driver, otherwise its passband: where the original design plays within 6 dB of its maximum (a woofer's, of its level over the sweep's lowest two octaves), within 20 Hz to 20 kHz.",
        sweep_text(f)
    );
    basis.push_str(&acoustic_basis(c));
    let table = if c.audience.plain() {
        let rows = f
            .levels
            .iter()
            .map(|l| {
                let meaning =
                    if l.as_left_fault { "a fault: driver shorted or disconnected".to_string() } else { crate::analysis::levels::plain_meaning(l.passband_worst_db).to_string() };
                // With nothing read on the bench, "before the work" is the design's own figure:
                // said so, not printed as a finding of +0.00 dB.
                let before = if l.as_found_fault {
                    "silent: a fault".to_string()
                } else if !c.job.read_on_bench() {
                    "not read on the bench".to_string()
                } else {
                    db(l.as_found_db)
                };
                // Each measure beside the range it is taken over: the average over the band,
                // the largest difference over the working range (which the band may not span).
                Row(vec![
                    driver_words(net, &l.driver),
                    format!("{} to {}", hz(Some(l.band_hz[0])), hz(Some(l.band_hz[1]))),
                    before,
                    level(l.as_left_db),
                    format!("{} ({} to {})", level(l.passband_worst_db), hz(Some(l.passband_hz[0])), hz(Some(l.passband_hz[1]))),
                    meaning,
                ])
            })
            .collect();
        Table::new(&["Driver", "Averaged over", "Before the work (average)", "After the work (average)", "After the work, largest difference (range)", "What that means"], rows)
    } else {
        // Nothing read on the bench: "as found" is the design itself, not a finding, and an
        // estimate from a sweep (the diagnosis) is never taken for a reading.
        let unread = !c.job.read_on_bench();
        if unread {
            basis.push_str(
                " Nothing was read on the bench before the work, so the as-found columns give no figure; estimates from a sweep at the terminals are not used as readings.",
            );
        }
        let rows = f
            .levels
            .iter()
            .map(|l| {
                Row(vec![
                    l.driver.clone(),
                    l.role.clone(),
                    format!("{} - {}", hz(Some(l.band_hz[0])), hz(Some(l.band_hz[1]))),
                    level(l.as_designed_db),
                    if unread && !l.as_found_fault { "not read".into() } else { level(l.as_found_db) },
                    level(l.as_left_db),
                    if l.as_found_fault || l.as_left_fault || unread { "-".into() } else { db(l.found_to_left_db) },
                    format!("{} ({} - {})", level(l.passband_worst_db), hz(Some(l.passband_hz[0])), hz(Some(l.passband_hz[1]))),
                    // Judged, as every sentence is, on the worst point over the working range.
                    l.left_flag.clone(),
                ])
            })
            .collect();
        Table::new(&["Driver", "Role", "Band", "As designed", "As found", "As left", "Found → left", "As left, worst in passband", "Worst vs design"], rows)
    };
    let crossovers = if c.audience.plain() {
        Table::default()
    } else {
        Table::new(
            &["Electrical crossover (driver voltages cross)", "As designed", "As found", "As left"],
            f.crossovers.iter().map(|x| Row(vec![format!("{} / {}", x.lower, x.upper), hz(x.as_designed_hz), hz(x.as_found_hz), hz(x.as_left_hz)])).collect(),
        )
    };
    let differ = f.levels.iter().any(|l| (l.band_hz[0] / l.passband_hz[0] - 1.0).abs() > 0.01 || (l.band_hz[1] / l.passband_hz[1] - 1.0).abs() > 0.01);
    let ranges = (c.audience.plain() && differ).then(|| {
        "Where a resistor was fitted to set a driver's level, that driver's average is taken over the range the resistor was fitted over; the largest difference is looked for over every frequency the driver plays within 6 dB of its loudest, so for that driver the two ranges differ.".to_string()
    });
    LevelsData { basis, table, crossovers, ranges }
}

pub(super) fn sweep_text(f: &Findings) -> String {
    format!("{} to {}, {} points", hz(f.freqs.first().copied()), hz(f.freqs.last().copied()), f.freqs.len())
}

pub(super) fn compensation(c: &Ctx) -> CompensationData {
    let f = c.f;
    let net = &f.scenes.as_left.network;
    let rating_of = |part: &str| f.stress.rows.iter().find(|r| r.scenario == Scenario::AsLeft && r.part == part).and_then(|r| r.rating_w.map(|w| (w, r.rating_chosen)));
    let mut acoustic: Vec<&str> = f.compensation.fits.iter().filter(|x| x.acoustic).map(|x| x.driver.as_str()).collect();
    // Two parts fitted for one driver name it once ("for HF, HF" before).
    acoustic.dedup();
    let held = if acoustic.is_empty() {
        String::new()
    } else {
        format!(" (for {}, the level held is acoustic output, SPL at 2.83 V and 1 m from sensitivity or response, since the reference and the driver fitted now both have it; otherwise the voltage across the driver)", acoustic.join(", "))
    };
    // A pair's common value is not each cabinet's own nearest: the rule says which it is.
    let common = if c.job.compensate.iter().any(|e| e.common_ohm.is_some()) {
        "; where one value serves every cabinet of the pair or set, that value instead: the member of the series that keeps the worst cabinet's band average closest to its reference, within half the pair tolerance"
    } else {
        ""
    };
    let basis = format!(
        "least-squares level match in dB over each band against the reference scenario{held}, rounded to the named IEC 60063 series (nearest in the geometric sense){common}; ratings at least twice the programme dissipation at {} W (common practice)",
        trim_number(f.stress.programme_w, 3)
    );
    let mut notes = Vec::new();
    if c.audience.plain() {
        let mut explained = false;
        for fit in &f.compensation.fits {
            let who = driver_words(net, &fit.driver);
            if fit.fault {
                notes.push(format!("{} could not be fitted: {who} plays far below its design whatever its value, which is a fault in the wiring or the driver.", fit.part));
            } else if fit.cannot_raise {
                notes.push(format!("{} was not fitted: {who} already plays {:.2} dB below its original level, and a resistor can only make it quieter.", fit.part, -fit.excess_db));
            } else if fit.is_none() {
                notes.push(format!("{} was not needed: {who} matches its original level without it.", fit.part));
            } else {
                let substituted = f.substitutes.iter().any(|x| x.driver == fit.driver);
                let why = if explained {
                    ""
                } else if substituted && fit.acoustic {
                    ": the driver fitted in its place is more sensitive than the original"
                } else {
                    ": the new parts lose less energy than the old ones did"
                };
                explained = true;
                // Parts fitted jointly for one driver (an L-pad) share one correction, said once
                // with all of them.
                let joint: Vec<&crate::analysis::compensate::Fit> = f.compensation.fits.iter().filter(|x| x.driver == fit.driver && !x.is_none() && !x.fault).collect();
                if joint.first().is_some_and(|x| x.part != fit.part) {
                    continue;
                }
                let describe = |x: &crate::analysis::compensate::Fit| {
                    let rating = rating_of(&x.part).map(|(w, _)| format!(", rated {} W,", trim_number(w, 3))).unwrap_or_default();
                    let how = if x.shunt { format!("across {who}") } else { format!("in {}", part_place(net, &x.part)) };
                    format!("{}, {} {} resistor{rating} {how}", x.part, crate::units::a_or_an(x.fitted_ohm), ohm(x.fitted_ohm))
                };
                let names: Vec<String> = joint.iter().map(|x| x.part.clone()).collect();
                let (verb, parts) =
                    if joint.len() > 1 { ("bring", format!("Together, {}", join_and(&joint.iter().map(|x| describe(x)).collect::<Vec<_>>()))) } else { ("brings", describe(fit)) };
                // The same measure as the levels table and the summary: the largest difference
                // at any frequency of the driver's working range.
                let back = match f.levels.iter().find(|l| l.driver == fit.driver) {
                    Some(l) => format!(
                        "no frequency of its working range ({} to {}) is now more than {:.2} dB from the original",
                        hz(Some(l.passband_hz[0])),
                        hz(Some(l.passband_hz[1])),
                        l.passband_worst_db.abs()
                    ),
                    None => format!("no frequency of its band is now more than {:.2} dB from the original", fit.worst_db.abs()),
                };
                notes.push(format!(
                    "Without {}, {who} would have played {:.2} dB louder than designed, on average over its band{why}. {parts}, {verb} it back: {back}.",
                    join_and(&names),
                    fit.excess_db.max(0.0),
                ));
            }
        }
        return CompensationData { basis, table: Table::default(), notes, alternatives: Table::default(), warnings: Vec::new() };
    }
    let rows = f
        .compensation
        .fits
        .iter()
        .map(|fit| {
            let rating = rating_of(&fit.part)
                .filter(|_| !fit.is_none())
                .map(|(w, chosen)| format!("{} W{}", trim_number(w, 3), if chosen { " (chosen)" } else { "" }))
                .unwrap_or_else(|| "-".into());
            let fitted = if fit.fault {
                "fault".to_string()
            } else if fit.fitted_ohm.is_infinite() {
                "none (open)".to_string()
            } else if fit.is_none() {
                "none".to_string()
            } else {
                ohm(fit.fitted_ohm)
            };
            Row(vec![
                fit.part.clone(),
                fit.driver.clone(),
                if fit.cannot_raise {
                    "none".into()
                } else if fit.exact_ohm.is_finite() {
                    ohm(fit.exact_ohm)
                } else {
                    "open".into()
                },
                fitted,
                fit.series.name().to_string(),
                format!("{:.3} dB", fit.residual_db),
                crate::results::signed_db3(fit.worst_db),
                rating,
            ])
        })
        .collect();
    for fit in &f.compensation.fits {
        if fit.is_none() && !fit.fault {
            let left = if fit.fitted_ohm.is_infinite() { "left out (nothing across it)" } else { "left out (a wire link in its place)" };
            notes.push(if fit.cannot_raise {
                format!(
                    "{} is {left}: {} already plays {:.2} dB below its {} level, and no resistor can raise it.",
                    fit.part,
                    fit.driver,
                    -fit.excess_db,
                    fit.reference.adjective()
                )
            } else {
                format!("{} is {left}: {} plays at its {} level without it.", fit.part, fit.driver, fit.reference.adjective())
            });
            continue;
        }
        notes.push(format!(
            "{} goes {}. It is fitted so {} plays at its {} level over {} - {}{}.",
            fit.part,
            fit.placement,
            fit.driver,
            fit.reference.adjective(),
            hz(Some(fit.band_hz[0])),
            hz(Some(fit.band_hz[1])),
            if fit.keeps_impedance { ", holding the impedance its filter sees to the reference's" } else { "" }
        ));
        if let Some(p) = &fit.pair {
            notes.push(format!(
                "Closer with stock E12 parts: {} {} {} = {} ({:.3} dB RMS).",
                ohm(p.a_ohm),
                if p.parallel { "in parallel with" } else { "in series with" },
                ohm(p.b_ohm),
                ohm(p.value_ohm),
                p.residual_db
            ));
        }
    }
    let alternatives = Table::new(
        &["Driver", "Alternative", "Residual RMS", "Crossover", "Against the plan"],
        f.compensation
            .alternatives
            .iter()
            .map(|a| Row(vec![a.driver.clone(), a.description.clone(), format!("{:.3} dB", a.residual_db), hz(a.crossover_hz), format!("{} {}", a.verdict, a.why_plan)]))
            .collect(),
    );
    let warnings = f.compensation.warnings.iter().map(|w| w.message.clone()).collect();
    CompensationData { basis, table: Table::new(&["Part", "Driver", "Exact", "Fitted", "Series", "Residual RMS", "Worst", "Rating"], rows), notes, alternatives, warnings }
}

pub(super) fn parts(c: &Ctx) -> Table {
    let f = c.f;
    let (designed, found, left) = (&f.scenes.as_designed, &f.scenes.as_found, &f.scenes.as_left);
    // Every part in any scenario, in the order first seen.
    let mut names: Vec<&str> = Vec::new();
    for s in &f.scenes {
        for p in &s.network.parts {
            if !names.contains(&p.name.as_str()) {
                names.push(&p.name);
            }
        }
    }
    let rows = names
        .iter()
        .filter_map(|n| {
            let (d, fo, l) = (designed.network.part(n), found.network.part(n), left.network.part(n));
            let any = d.or(fo).or(l)?;
            // Nodes voicekeep made up exist only as left, where their labels are.
            // The shop's label for where it sits, when it gives one, in place of the nodes.
            let where_ = match &any.section {
                Some(s) => format!("{}, {s}", any.kind.name()),
                None => format!("{}, {} - {}", any.kind.name(), left.network.node_label(&any.between[0]), left.network.node_label(&any.between[1])),
            };
            let t = |p: Option<&Part>| p.map(part_text).unwrap_or_else(|| "-".into());
            // Only its nodes moved: a part inserted beside it took one of its ends.
            let moved = |a: &Part, b: &Part| a.between != b.between && Part { between: b.between.clone(), ..a.clone() } == *b;
            let measured_kept = c.job.measured.iter().any(|m| m.target == *n);
            let change = match (fo, l) {
                (None, Some(_)) => "added".to_string(),
                (Some(_), None) => "removed".to_string(),
                (Some(a), Some(b)) if moved(a, b) => format!("{}kept; an inserted part now meets it", if measured_kept { "measured, " } else { "" }),
                (Some(a), Some(b)) if a != b => {
                    if c.job.changes.iter().any(|ch| matches!(&ch.step, ChangeStep::Replace { target, .. } if target == n)) {
                        format!("replaced{}", b.type_text.as_ref().map(|t| format!(" ({t})")).unwrap_or_default())
                    } else {
                        "changed".into()
                    }
                }
                _ if c.job.measured.iter().any(|m| m.target == *n) => "measured, kept".into(),
                _ => "kept".into(),
            };
            // A part the bench did not read is nominal as found: said so, not shown as a reading.
            let measured = c.job.measured.iter().any(|m| m.target == *n);
            let found_text = match (d, fo) {
                (Some(a), Some(b)) if a == b && !measured => "not measured (nominal)".to_string(),
                _ => t(fo),
            };
            let spec = l
                .or(fo)
                .map(|p| {
                    [p.type_text.clone(), rating_text(c, p), p.tolerance.map(|t| format!("{} %", trim_number(t * 100.0, 3)))].into_iter().flatten().collect::<Vec<_>>().join(", ")
                })
                .unwrap_or_default();
            Some(Row(vec![n.to_string(), where_, t(d), found_text, t(l), if spec.is_empty() { "-".into() } else { spec }, change]))
        })
        .collect();
    Table::new(&["Ref", "Kind and place", "As designed", "As found", "As left", "As left: type, rating, tolerance", "Change"], rows)
}

pub(super) fn drivers(c: &Ctx) -> Table {
    use crate::model::{DriverModel, VoiceCoilInductance};
    let rows =
        c.f.scenes
            .as_left
            .network
            .drivers
            .iter()
            .map(|d| {
                let model = match &d.model {
                    DriverModel::Resistance(r) => format!("resistance {}", ohm(*r)),
                    DriverModel::VoiceCoil { re, inductance, resonance } => {
                        let mut s = format!("Re {}", ohm(*re));
                        match inductance {
                            VoiceCoilInductance::Simple(le) => s.push_str(&format!(", Le {}", format_si(*le, Quantity::Inductance, 3))),
                            VoiceCoilInductance::Leach { k, n } => s.push_str(&format!(", Leach K {} n {}", trim_number(*k, 3), trim_number(*n, 3))),
                            VoiceCoilInductance::None => {}
                        }
                        if let Some(r) = resonance {
                            s.push_str(&format!(", fs {}, Qms {}, Qes {}", format_si(r.fs, Quantity::Frequency, 3), trim_number(r.qms, 3), trim_number(r.qes, 3)));
                        }
                        s
                    }
                    DriverModel::Table(t) => format!("measured table {}", t.file),
                };
                Row(vec![
                    d.name.clone(),
                    d.role.name().into(),
                    model,
                    d.rated_power.map(|w| format!("{} W", trim_number(w, 3))).unwrap_or_else(|| "-".into()),
                    if d.inverted { "inverted".into() } else { "normal".into() },
                ])
            })
            .collect();
    Table::new(&["Driver", "Role", "Model as left", "Rated power", "Polarity"], rows)
}

pub(super) fn stress_row(r: &StressRow) -> Row {
    let figure = match (r.peak_v, r.rms_a) {
        (Some(v), _) => format!("{} V peak", trim_number(v, 3)),
        (_, Some(a)) => format!("{} A RMS", trim_number(a, 3)),
        _ => "-".into(),
    };
    let rating = r
        .rating_w
        .map(|w| format!("{} W", trim_number(w, 3)))
        .or(r.rating_v.map(|v| format!("{} V", trim_number(v, 3))))
        .or(r.rating_a.map(|a| format!("{} A", trim_number(a, 3))))
        .unwrap_or_else(|| "-".into());
    Row(vec![
        r.scenario.label().into(),
        r.part.clone(),
        crate::units::watts(r.sine_w),
        crate::units::watts(r.programme_w),
        figure,
        rating,
        r.shown_verdict().into(),
        r.reason.clone(),
    ])
}

pub(super) fn stress(c: &Ctx) -> StressData {
    let f = c.f;
    let header = ["Scenario", "Part", "Sine", "Programme", "Peak V / RMS A", "Rating", "Verdict", "Reason"];
    let drivers = f
        .stress
        .drivers
        .iter()
        .filter(|d| d.scenario == Scenario::AsLeft)
        .map(|d| {
            Row(vec![
                d.driver.clone(),
                crate::units::watts(d.programme_w),
                format!("{} near {}", crate::units::watts(d.sine_w), hz(Some(d.sine_at_hz))),
                d.rated_w.map(|w| format!("{} W", trim_number(w, 3))).unwrap_or_else(|| "-".into()),
                d.shown_verdict().into(),
                d.reason.clone(),
            ])
        })
        .collect();
    StressData {
        basis: format!("{} Dissipation is in each part's own resistance (resistor value, capacitor ESR, inductor DCR).", f.stress.basis),
        table: Table::new(&header, f.stress.rows.iter().filter(|r| r.scenario == Scenario::AsLeft).map(stress_row).collect()),
        all: Table::new(&header, f.stress.rows.iter().map(stress_row).collect()),
        drivers: Table::new(&["Driver", "Programme", "Sine (worst)", "Rated", "Verdict", "Reason"], drivers),
        found_note: {
            let (d, x) = (&f.loads.as_designed, &f.loads.as_found);
            (x.min_ohm < 0.5 * d.min_ohm).then(|| {
                format!(
                    "As found, the speaker's lowest impedance is {} near {} (the design's {}). The as-found figures assume an amplifier that holds its full voltage into that load, which a real one does not do for long: it limits, shuts down or fails first. They show why the speaker should not be played as found, not what its parts would meet on a real amplifier.",
                    ohm(x.min_ohm),
                    hz(Some(x.min_at_hz)),
                    ohm(d.min_ohm)
                )
            })
        },
    }
}

pub(super) fn load(c: &Ctx) -> LoadData {
    let (job, f) = (c.job, c.f);
    let basis = format!(
        "input impedance at the amplifier terminals over {}; EPDR after Howard (Stereophile, 2007), closed form for a class-B stage; the rated-impedance rule of IEC 60268-5 (lowest |Z| at least 80 % of rated); {}",
        sweep_text(f),
        job.rated_impedance_basis()
    );
    let (ld, lf, ll) = (&f.loads.as_designed, &f.loads.as_found, &f.loads.as_left);
    if c.audience.plain() {
        let r = job.rated_impedance_ohm();
        let same = (ll.min_ohm - ld.min_ohm).abs() < 0.05 * ld.min_ohm;
        let compare = if same { "about the same as in the original design".to_string() } else { format!("against {} in the original design", ohm(ld.min_ohm)) };
        let advice = amplifier_advice(ll.min_ohm).unwrap_or_else(|| "very few amplifiers".to_string());
        let verdict = if ll.verdict == crate::analysis::Verdict::Over {
            "too low for most amplifiers: check the amplifier maker's minimum load before use.".to_string()
        } else if !ll.rated_impedance_holds {
            // With no rating given, the shop judged against the amplifier's load: said so,
            // never as the speaker's own rating (the header says "not given").
            match job.info.rated_impedance {
                Some(_) => format!("below the 80 % of its rated {} that the loudspeaker standard allows, so use {advice}, or keep the volume moderate.", ohm(r)),
                None => {
                    format!("below 80 % of {}, the load the shop's figures assume (the speaker's own rating is not given), so use {advice}, or keep the volume moderate.", ohm(r))
                }
            }
        } else if ll.demanding {
            format!("a demanding load at high volume; use {advice}.")
        } else {
            format!("a normal load for {advice}.")
        };
        let sentence = format!("The lowest impedance the speaker presents to the amplifier is {} (at {}), {compare}: {verdict}", ohm(ll.min_ohm), hz(Some(ll.min_at_hz)));
        return LoadData { basis, table: Table::default(), sentences: vec![sentence] };
    }
    let rows = Scenario::ALL
        .iter()
        .zip(&f.loads)
        .map(|(s, l)| {
            Row(vec![
                s.label().into(),
                format!("{} at {}", ohm(l.min_ohm), hz(Some(l.min_at_hz))),
                format!("{} at {}", ohm(l.epdr_min_ohm), hz(Some(l.epdr_at_hz))),
                if l.rated_impedance_holds { "holds".into() } else { "fails".into() },
                l.verdict.name().into(),
            ])
        })
        .collect();
    let change = format!(
        "From as found to as left the lowest impedance moves from {} to {} and the EPDR from {} to {}; the original design presents {} and {}.",
        ohm(lf.min_ohm),
        ohm(ll.min_ohm),
        ohm(lf.epdr_min_ohm),
        ohm(ll.epdr_min_ohm),
        ohm(ld.min_ohm),
        ohm(ld.epdr_min_ohm)
    );
    let mut verdict = ll.reason.clone();
    if let Some(first) = verdict.get(..1) {
        verdict = first.to_uppercase() + &verdict[1..];
    }
    LoadData { basis, table: Table::new(&["Scenario", "Lowest |Z|", "Lowest EPDR", "80 % rule", "Verdict"], rows), sentences: vec![format!("As left: {verdict}."), change] }
}

pub(super) fn health(c: &Ctx) -> Table {
    Table::new(
        &["Part", "What the reading shows", "Effect of the whole reading"],
        c.f.health
            .iter()
            .map(|h| {
                Row(vec![
                    h.part.clone(),
                    h.message.clone(),
                    if h.effect_driver.is_empty() {
                        "-".into()
                    } else {
                        if h.effect_db < -crate::analysis::compensate::FAULT_DB {
                            format!("silences {}", h.effect_driver)
                        } else {
                            format!("{} on {}", level(h.effect_db), h.effect_driver)
                        }
                    },
                ])
            })
            .collect(),
    )
}

pub(super) fn tolerance(c: &Ctx) -> Option<ToleranceData> {
    let t = c.f.tolerance.as_ref()?;
    let dist = match t.distribution {
        crate::model::Distribution::Uniform => "a uniform distribution over each part's marked tolerance",
        crate::model::Distribution::Normal => "a normal distribution with the marked tolerance as two standard deviations",
    };
    Some(ToleranceData {
        basis: format!("{} Monte Carlo runs, seed {}, {dist}; levels relative to the original design's nominal", t.runs, t.seed),
        levels: Table::new(
            &["Scenario", "Driver", "5 %", "median", "95 %"],
            t.levels.iter().map(|l| Row(vec![l.scenario.label().to_string(), l.driver.clone(), level(l.p5_db), level(l.p50_db), level(l.p95_db)])).collect(),
        ),
        ranking: Table::new(
            &["Driver", "Part", "Level change per 1 % of value"],
            t.ranking
                .iter()
                .filter(|r| r.db_per_percent.abs() >= 0.001)
                .take(12)
                .map(|r| Row(vec![r.driver.clone(), r.part.clone(), format!("{:+.3} dB/%", r.db_per_percent)]))
                .collect(),
        ),
    })
}

pub(super) fn inputs(c: &Ctx) -> Table {
    Table::new(&["File", "Size", "SHA-256"], c.job.inputs.iter().map(|i| Row(vec![i.name.clone(), format!("{} bytes", i.bytes.len()), sha256(&i.bytes)])).collect())
}

/// The files attached inside the PDF: the archive's only. The job file holds the shop's own
/// bench notes, its settings and stock prices, and photographs not marked for the customer;
/// the customer's report, the quotation and the sale sheet carry none of them (they failed
/// before: every customer report carried the job file with its private notes).
pub(super) fn attachments(c: &Ctx) -> Vec<Attachment> {
    if c.audience != Audience::Archive || c.quote {
        return Vec::new();
    }
    c.job.inputs.iter().enumerate().map(|(i, inp)| Attachment { name: inp.name.clone(), file: format!("/inputs/{i}"), mime: mime(&inp.name).into() }).collect()
}

/// Each substitute driver against the original: the data sheets side by side, the checks with
/// their reasons, and the customer's sentence.
pub(super) fn substitutes(c: &Ctx) -> Vec<SubstituteData> {
    let net = &c.job.network;
    c.f.substitutes
        .iter()
        .map(|x| {
            let rows = crate::results::substitute_rows(x).into_iter().map(|r| Row(r.to_vec())).collect();
            let checks =
                x.checks.iter().filter(|k| !(c.audience.plain() && k.check == "load")).map(|k| Row(vec![k.check.to_string(), k.verdict.to_string(), k.reason.clone()])).collect();
            let notes = [&x.original.derived, &x.substitute.derived].into_iter().flatten().map(|n| format!("From the data sheet: {n}.")).collect();
            let words = super::words::driver_words(net, &x.driver);
            SubstituteData {
                driver: x.driver.clone(),
                heading: format!("Substitute for {}", if c.audience.plain() { words.clone() } else { x.driver.clone() }),
                table: Table::new(&["", "Original", "Substitute"], rows),
                checks: Table::new(&["Check", "Verdict", "Reason"], checks),
                notes,
                sentence: x.customer_sentence(words.trim_start_matches("the ")),
            }
        })
        .collect()
}

/// The parts to buy, a line each: quantity, what, for which parts, and the price where the
/// shop's list gave one (or why it did not).
pub(super) fn parts_to_buy(p: &crate::analysis::bom::PartsList, plain: bool) -> Table {
    let priced = p.total.is_some();
    let rows = p
        .lines
        .iter()
        .map(|l| {
            // The series named as what it is: a plain reader reads "standard value", the
            // shop its series ("E24").
            let series = l.series.as_ref().filter(|_| !plain).map(|s| format!("standard value ({s})"));
            let what = [Some(l.value.clone()), l.type_text.clone(), l.rating.clone(), l.tolerance.clone(), series].into_iter().flatten().collect::<Vec<_>>().join(", ");
            let mut r = vec![l.quantity.to_string(), l.kind.clone(), what, l.parts.join(", ")];
            if priced {
                match (l.unit_price, l.price) {
                    (Some(u), Some(t)) => r.extend([u.to_string(), t.to_string()]),
                    _ => r.extend(["not priced".to_string(), l.stock.clone().unwrap_or_default()]),
                }
            }
            Row(r)
        })
        .collect();
    if priced {
        let currency = p.currency.clone().unwrap_or_default();
        let (u, t) = (format!("Unit ({currency})"), format!("Price ({currency})"));
        Table::new(&["Qty", "Kind", "Part", "For", &u, &t], rows)
    } else {
        Table::new(&["Qty", "Kind", "Part", "For"], rows)
    }
}

/// "Total 16.70 EUR", with the lines the list could not price said.
pub(super) fn parts_total(p: &crate::analysis::bom::PartsList) -> Option<String> {
    let (t, c) = (p.total?, p.currency.clone().unwrap_or_default());
    Some(match p.unpriced {
        0 => format!("Total {t} {c}."),
        n => format!("Total {t} {c} for the priced lines; {n} line{} not in the price list, to be priced by the shop.", if n == 1 { " is" } else { "s are" }),
    })
}
