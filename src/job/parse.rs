//! The parse stage: the positioned YAML tree becomes the raw job ([`RawJob`]), typed where a
//! value's meaning is its own, with every problem of shape collected: unknown or missing
//! fields, wrong types, values without units or with the wrong unit, unknown choices.
//! Nothing here looks up a name elsewhere in the file or reads a file; that is
//! [`build`](crate::job::build).

use crate::diag::{suggest, Pos};
use crate::job::fields;
use crate::job::raw::*;
use crate::job::reader::{check_reference, map_entries, Ctx};
use crate::job::yaml::Node;
use crate::model::*;
use crate::units::Quantity;

/// The most parts a network may have.
pub const MAX_PARTS: usize = 500;
/// The most drivers a network may have.
pub const MAX_DRIVERS: usize = 32;
/// The most nodes a network may join (the input's two among them).
pub const MAX_NODES: usize = 500;
/// The most steps one list of changes (the job's, a cabinet's, an option's) may hold.
pub const MAX_STEPS: usize = 200;
/// The most `compensate` entries (parts fitted together) one list may hold.
pub const MAX_FITTED: usize = 12;
/// The most parts a whole job may fit, counting each cabinet and each option: a joint fit of
/// twelve parts takes about a second, so a job stays within ten.
pub const MAX_FITS_IN_ALL: usize = 64;
/// The most Monte Carlo runs a job may ask for, every cabinet's together (100,000 runs of
/// a three-way network take about 4 s on two cores).
pub const MAX_RUNS: usize = 100_000;
/// The most cabinets one job may hold (a pair, or a small set).
pub const MAX_CABINETS: usize = 16;
/// The most options one quotation may offer.
pub const MAX_OPTIONS: usize = 12;

const JOB_KEYS: &[&str] =
    &["voicekeep", "job", "amplifier", "network", "measured", "changes", "cabinets", "compensate", "prices", "options", "quote", "analysis", "report", "service", "terminals"];

pub fn parse<'n>(root: &'n Node, ctx: &mut Ctx) -> Option<RawJob<'n>> {
    let mut top = ctx.fields(root, "", JOB_KEYS)?;
    // A missing section is reported at the top of the file.
    top.pos = Pos::START;
    match top.get("voicekeep") {
        None => ctx.error(Pos::START, "voicekeep", "missing `voicekeep: 1` (the job format version)", Some("add `voicekeep: 1` as the first line".into())),
        Some(n) if n.as_scalar() != Some("1") => ctx.error(
            n.pos(),
            "voicekeep",
            format!("this is job format version \"{}\"; this voicekeep reads version 1", n.as_scalar().unwrap_or("?")),
            Some("write `voicekeep: 1`, or use the voicekeep release that wrote this file".into()),
        ),
        Some(_) => {}
    }
    let mut shop_settings = None;
    let mut shop_logo = None;
    let info = top.get("job").and_then(|n| info(n, &mut shop_settings, &mut shop_logo, ctx));
    if top.get("job").is_none() {
        ctx.error(top.pos, "job", "missing `job` (number, date, technician, shop, customer, speaker)", Some("`voicekeep new` prints a starter job".into()));
    }
    let amplifier = ctx.req(&top, "amplifier", "the amplifier the stress figures assume").and_then(|n| amplifier(n, ctx));
    let before = ctx.diags.len();
    let network = ctx.req(&top, "network", "the crossover as designed").and_then(|n| network(n, ctx));
    let network_whole = ctx.diags.len() == before;
    let analysis = ctx.req(&top, "analysis", "the sweep").and_then(|n| analysis(n, ctx));
    let measured = top.get("measured").map(|n| map_entries(n, "measured", ctx).iter().map(|(key, node)| Entry { key, node }).collect()).unwrap_or_default();
    let changes = top.get("changes").map(|n| changes(n, "changes", ctx)).unwrap_or_default();
    let cabinets = top.get("cabinets").map(|n| cabinets(n, ctx)).unwrap_or_default();
    let compensate = top.get("compensate").map(|n| compensate(n, "compensate", ctx)).unwrap_or_default();
    let options = top.get("options").map(|n| options(n, ctx)).unwrap_or_default();
    let (quote, quote_recommend_pos) = top.get("quote").map(|n| quote(n, ctx)).unwrap_or_default();
    let prices = top.get("prices").and_then(|n| prices(n, ctx));
    let option_names: Vec<String> = options.iter().map(|o| o.name.clone()).collect();
    let (template, blocks) = top.get("report").map(|n| report(n, &option_names, ctx)).unwrap_or((RawTemplate::Customer, None));
    let service = top.get("service").map(|n| super::service::service(n, info.as_ref().map(|i| i.date), ctx)).unwrap_or_default();
    let terminals = top.get("terminals").map(|n| super::terminals::terminals(n, "terminals", ctx)).unwrap_or_default();
    if let (Some(n), true) = (top.get("terminals"), top.get("cabinets").is_some()) {
        if !terminals.is_empty() {
            ctx.error(
                n.pos(),
                "terminals",
                "a pair's or set's sweeps belong to each cabinet",
                Some("write them under cabinets.NAME.terminals; `terminals.limits` here applies to every cabinet".into()),
            );
        }
    }
    Some(RawJob {
        info,
        amplifier,
        network,
        network_whole,
        measured,
        changes,
        cabinets,
        compensate,
        prices,
        options,
        quote,
        quote_recommend_pos,
        analysis,
        template,
        blocks,
        service,
        terminals,
        shop_settings,
        shop_logo,
    })
}

/// True, with the error said, when the list or mapping `node` holds more than `max` entries:
/// `what` names them in the message ("{n} {what}, above the {max} {room}").
fn too_many(node: &Node, field: &str, max: usize, what: &str, room: &str, hint: &str, ctx: &mut Ctx) -> bool {
    let n = match node {
        Node::Map { entries, .. } => entries.len(),
        Node::Seq { items, .. } => items.len(),
        _ => 0,
    };
    if n > max {
        ctx.error(node.pos(), field, format!("{n} {what}, above the {max} {room}"), Some(hint.into()));
    }
    n > max
}

/// The change steps as written: each one action, its parts read; what they name is found
/// in the build stage.
fn changes<'n>(node: &'n Node, field: &str, ctx: &mut Ctx) -> Vec<RawChange<'n>> {
    let Node::Seq { items, .. } = node else {
        ctx.error(node.pos(), field, format!("expected a list of steps (- replace: C1 ...), found {}", node.kind_name()), None);
        return Vec::new();
    };
    if too_many(node, field, MAX_STEPS, "steps", "one list of changes may hold", "a re-cap replaces each part once; check that this is one speaker's work", ctx) {
        return Vec::new();
    }
    let mut out = Vec::new();
    for (i, item) in items.iter().enumerate() {
        let number = i + 1;
        let path = format!("{field}[{number}]");
        let Some(f) = ctx.fields(item, &path, &["replace", "with", "insert", "remove", "add"]) else { continue };
        let verbs: Vec<&str> = ["replace", "insert", "remove", "add"].into_iter().filter(|k| f.get(k).is_some()).collect();
        let [verb] = verbs.as_slice() else {
            ctx.error(
                item.pos(),
                &path,
                if verbs.is_empty() { "a step needs one of replace, insert, remove or add".to_string() } else { format!("one step, one action: found {}", verbs.join(" and ")) },
                Some("write each action as its own `- ` item".into()),
            );
            continue;
        };
        let pos = f.key_pos(verb).unwrap_or(item.pos());
        let n = f.get(verb).unwrap_or(item);
        let step = match *verb {
            "replace" => {
                let Some(target) = ctx.text(n, &f.at("replace")) else { continue };
                let Some(with) = ctx.req(&f, "with", "the new part's fields") else { continue };
                RawStep::Replace { target, target_pos: n.pos(), with, with_path: f.at("with") }
            }
            "remove" => {
                let Some(target) = ctx.text(n, &f.at("remove")) else { continue };
                RawStep::Remove { target, target_pos: n.pos() }
            }
            _ => {
                let entries = map_entries(n, &f.at(verb), ctx);
                let mut parts = Vec::new();
                for (k, v) in entries {
                    let ppath = format!("{}.{}", f.at(verb), k.name);
                    if check_reference(ctx, k, &ppath) {
                        match fields::part(k, v, &ppath, ctx) {
                            Some(p) => parts.push(p),
                            None => ctx.failed.push(k.name.clone()),
                        }
                    }
                }
                if *verb == "add" {
                    RawStep::Add { parts }
                } else if parts.len() > 1 {
                    ctx.error(n.pos(), &f.at(verb), "insert one part per step", None);
                    continue;
                } else if let Some(part) = parts.pop() {
                    RawStep::Insert { part: Box::new(part) }
                } else {
                    continue;
                }
            }
        };
        out.push(RawChange { number, pos, step });
    }
    out
}

/// The cabinets of a pair or set, keyed by name (a serial), each with its own `measured`
/// readings and `changes` steps.
fn cabinets<'n>(node: &'n Node, ctx: &mut Ctx) -> Vec<RawCabinet<'n>> {
    let mut out = Vec::new();
    if too_many(node, "cabinets", MAX_CABINETS, "cabinets", "a job may hold", "a job is one speaker, a pair or a small set; report larger batches as several jobs", ctx) {
        return out;
    }
    for (k, v) in map_entries(node, "cabinets", ctx) {
        let path = format!("cabinets.{}", k.name);
        if k.name.trim().is_empty() {
            ctx.error(k.pos, &path, "a cabinet needs a name, such as its serial", None);
            continue;
        }
        // A cabinet with nothing of its own is written `NAME: {}` or with no value at all.
        if v.is_null() {
            out.push(RawCabinet { name: k.name.clone(), pos: k.pos, measured: Vec::new(), changes: Vec::new(), terminals: Default::default() });
            continue;
        }
        let Some(f) = ctx.fields(v, &path, &["measured", "changes", "terminals"]) else { continue };
        let measured = f.get("measured").map(|n| map_entries(n, &f.at("measured"), ctx).iter().map(|(key, node)| Entry { key, node }).collect()).unwrap_or_default();
        let changes = f.get("changes").map(|n| changes(n, &f.at("changes"), ctx)).unwrap_or_default();
        let terminals = f.get("terminals").map(|n| super::terminals::terminals(n, &f.at("terminals"), ctx)).unwrap_or_default();
        out.push(RawCabinet { name: k.name.clone(), pos: k.pos, measured, changes, terminals });
    }
    if let [one] = out.as_slice() {
        ctx.error(one.pos, "cabinets", "one cabinet is not a pair: give two or more, or write its readings and steps at the top of the job", None);
    }
    out
}

/// The options offered before the work, each with its words, labour and own steps.
fn options<'n>(node: &'n Node, ctx: &mut Ctx) -> Vec<RawOption<'n>> {
    let mut out = Vec::new();
    if too_many(node, "options", MAX_OPTIONS, "options", "a job may hold", "a quotation offers a few choices; each is solved in full", ctx) {
        return out;
    }
    for (k, v) in map_entries(node, "options", ctx) {
        let path = format!("options.{}", k.name);
        let Some(f) = ctx.fields(v, &path, &["say", "labour_hours", "changes", "compensate"]) else { continue };
        let say = ctx.opt_text(&f, "say");
        let labour_hours = match f.get("labour_hours") {
            Some(n) => match ctx.bare_number(n, &f.at("labour_hours")) {
                Some(h) if (0.0..=200.0).contains(&h) => Some(h),
                Some(_) => {
                    ctx.error(n.pos(), &f.at("labour_hours"), "labour hours must be from 0 to 200", Some("hours at the bench, such as 1.5".into()));
                    None
                }
                None => None,
            },
            None => None,
        };
        let changes = f.get("changes").map(|n| changes(n, &f.at("changes"), ctx)).unwrap_or_default();
        let compensate = f.get("compensate").map(|n| compensate(n, &f.at("compensate"), ctx)).unwrap_or_default();
        out.push(RawOption { name: k.name.clone(), pos: k.pos, say, labour_hours, changes, compensate });
    }
    out
}

/// The quotation's settings: the hourly rate (in the price list's currency) and the shop's
/// recommended option.
fn quote(node: &Node, ctx: &mut Ctx) -> (Quote, Option<crate::diag::Pos>) {
    let Some(f) = ctx.fields(node, "quote", &["labour_rate", "recommend"]) else { return Default::default() };
    let labour_rate = f.get("labour_rate").and_then(|n| {
        let t = ctx.text(n, &f.at("labour_rate"))?;
        let m = crate::money::Money::parse(&t);
        if m.is_none() {
            ctx.error(
                n.pos(),
                &f.at("labour_rate"),
                format!("\"{t}\" is not a price"),
                Some("a number up to 1000000000 with a point and at most two decimals, such as 42.50, in the price list's currency".into()),
            );
        }
        m
    });
    let recommend = ctx.opt_text(&f, "recommend");
    (Quote { labour_rate, recommend, currency: None, tax: None }, f.get("recommend").map(|n| n.pos()))
}

/// The price list section: the file and its currency.
fn prices(node: &Node, ctx: &mut Ctx) -> Option<(TableRef, String)> {
    let f = ctx.fields(node, "prices", &["list", "currency"])?;
    let list = ctx.req(&f, "list", "the shop's price list, a CSV file").and_then(|n| fields::table_ref(n, &f.at("list"), ctx));
    let currency = ctx.req(&f, "currency", "the list's currency, such as EUR or GBP").and_then(|n| ctx.text(n, &f.at("currency")));
    Some((list?, currency?))
}

/// The compensate entries as written; the parts and drivers they name are found later.
fn compensate(node: &Node, field: &str, ctx: &mut Ctx) -> Vec<RawCompensate> {
    let mut out = Vec::new();
    if too_many(
        node,
        field,
        MAX_FITTED,
        "parts to fit",
        "one fit may solve together",
        "a speaker's level needs a resistor or an L-pad per driver; the joint fit's time grows steeply with every part",
        ctx,
    ) {
        return out;
    }
    for (k, v) in map_entries(node, field, ctx) {
        let path = format!("{field}.{}", k.name);
        let Some(f) = ctx.fields(v, &path, &["driver", "match", "band", "series", "keep_impedance"]) else {
            ctx.failed.push(k.name.clone());
            continue;
        };
        let driver = ctx.req(&f, "driver", "the driver whose level it restores").and_then(|n| ctx.text(n, &f.at("driver")).map(|t| (t, n.pos())));
        let reference = match f.get("match") {
            Some(n) => ctx.choice(n, &f.at("match"), &[("as_designed", Scenario::AsDesigned), ("as_found", Scenario::AsFound)]),
            None => Some(Scenario::AsDesigned),
        };
        let band = f.get("band").and_then(|n| ctx.band(n, &f.at("band")));
        let band_pos = f.get("band").map(|n| n.pos()).unwrap_or(k.pos);
        let series = match f.get("series") {
            Some(n) => ctx.choice(n, &f.at("series"), &ESeries::ALL.map(|s| (s.name(), s))),
            None => Some(ESeries::E24),
        };
        let keep_impedance = match f.get("keep_impedance") {
            Some(n) => ctx.choice(n, &f.at("keep_impedance"), &[("true", true), ("false", false)]),
            None => Some(false),
        };
        let bad_band = f.get("band").is_some() && band.is_none();
        match (driver, reference, series, keep_impedance) {
            (Some((driver, driver_pos)), Some(reference), Some(series), Some(keep_impedance)) if !bad_band => out.push(RawCompensate {
                entry: CompensateEntry { part: k.name.clone(), driver, reference, band, band_pos, series, keep_impedance, common_ohm: None, pos: k.pos },
                driver_pos,
            }),
            // The entry is there but wrong: its own messages say so, not "no entry" again.
            _ => ctx.failed.push(k.name.clone()),
        }
    }
    out
}

fn info(node: &Node, settings: &mut Option<TableRef>, logo: &mut Option<TableRef>, ctx: &mut Ctx) -> Option<JobInfo> {
    let f = ctx.fields(node, "job", &["number", "date", "work", "technician", "shop", "customer", "speaker", "notes", "customer_notes"])?;
    let mut info = JobInfo { rated_range: (20.0, 20_000.0), ..Default::default() };
    if let Some(n) = ctx.req(&f, "number", "the shop's job number") {
        info.number = ctx.text(n, &f.at("number")).unwrap_or_default();
    }
    if let Some(n) = ctx.req(&f, "date", "the report's date, as 2026-11-28") {
        if let Some(t) = ctx.text(n, &f.at("date")) {
            if let Some(d) = Date::parse_iso(&t) {
                info.date = d;
            } else {
                ctx.error(
                    n.pos(),
                    &f.at("date"),
                    format!("expected an ISO date such as 2026-11-28, found \"{t}\""),
                    Some("the report's date comes from here, never from the clock, so reports can be reproduced".into()),
                );
            }
        }
    }
    info.work = ctx.opt_text(&f, "work").unwrap_or_default();
    info.technician = ctx.opt_text(&f, "technician").unwrap_or_default();
    info.notes = ctx.opt_text(&f, "notes").unwrap_or_default();
    info.customer_notes = ctx.opt_text(&f, "customer_notes").unwrap_or_default();
    if let Some(n) = f.get("shop") {
        if let Some(s) = ctx.fields(n, "job.shop", &["name", "address", "contact", "settings", "logo"]) {
            *settings = s.get("settings").and_then(|n| fields::table_ref(n, "job.shop.settings", ctx));
            info.shop_name = ctx.opt_text(&s, "name").unwrap_or_default();
            info.shop_address = ctx.opt_text(&s, "address").unwrap_or_default();
            info.shop_contact = ctx.opt_text(&s, "contact").unwrap_or_default();
            *logo = s.get("logo").and_then(|n| fields::table_ref(n, "job.shop.logo", ctx));
        }
    }
    if let Some(n) = f.get("customer") {
        if let Some(s) = ctx.fields(n, "job.customer", &["name", "reference"]) {
            info.customer_name = ctx.opt_text(&s, "name").unwrap_or_default();
            info.customer_reference = ctx.opt_text(&s, "reference").unwrap_or_default();
        }
    }
    if let Some(n) = f.get("speaker") {
        if let Some(s) = ctx.fields(n, "job.speaker", &["description", "serials", "rated_impedance", "rated_range"]) {
            info.speaker_description = ctx.opt_text(&s, "description").unwrap_or_default();
            if let Some(n) = s.get("serials") {
                match n {
                    Node::Seq { items, .. } => info.serials = items.iter().filter_map(|i| ctx.text(i, &s.at("serials"))).collect(),
                    _ => info.serials = ctx.text(n, &s.at("serials")).into_iter().collect(),
                }
            }
            info.rated_impedance = ctx.opt_positive(&s, "rated_impedance", Quantity::Resistance, false);
            if let Some(n) = s.get("rated_range") {
                if let Some(r) = ctx.band(n, &s.at("rated_range")) {
                    info.rated_range = r;
                }
            }
        }
    }
    Some(info)
}

fn amplifier(node: &Node, ctx: &mut Ctx) -> Option<Amplifier> {
    let f = ctx.fields(node, "amplifier", &["power", "into", "output_impedance", "programme_power"])?;
    let power = ctx.req(&f, "power", "continuous power rating, e.g. 60 W").and_then(|n| ctx.positive(n, &f.at("power"), Quantity::Power, false));
    let into = ctx.req(&f, "into", "the load the power is rated into, e.g. 8 ohm").and_then(|n| ctx.positive(n, &f.at("into"), Quantity::Resistance, false));
    let out = match f.get("output_impedance") {
        Some(n) => ctx.positive(n, &f.at("output_impedance"), Quantity::Resistance, true),
        None => Some(0.0),
    };
    let programme = match f.get("programme_power") {
        Some(n) => match (ctx.positive(n, &f.at("programme_power"), Quantity::Power, false), power) {
            (Some(p), Some(rated)) if p > rated => {
                ctx.error(
                    n.pos(),
                    &f.at("programme_power"),
                    format!(
                        "a programme power of {} is above the amplifier's rated {}",
                        crate::units::format_si(p, Quantity::Power, 3),
                        crate::units::format_si(rated, Quantity::Power, 3)
                    ),
                    Some("the programme's long-term power is a fraction of the rated sine power (one eighth when not given)".into()),
                );
                None
            }
            (p, _) => p.map(Some),
        },
        None => Some(None),
    };
    Some(Amplifier { power_w: power?, into_ohm: into?, output_ohm: out?, programme_w: programme? })
}

fn network(node: &Node, ctx: &mut Ctx) -> Option<RawNetwork> {
    let f = ctx.fields(node, "network", &["input", "parts", "drivers"])?;
    let input = match ctx.req(&f, "input", "the amplifier's + and - nodes, e.g. [IN, COM]") {
        Some(n) => ctx.pair_of_nodes(n, &f.at("input")),
        None => None,
    };
    let mut parts = Vec::new();
    if let Some(n) = f.get("parts") {
        for (k, v) in map_entries(n, &f.at("parts"), ctx) {
            let path = format!("network.parts.{}", k.name);
            if check_reference(ctx, k, &path) {
                match fields::part(k, v, &path, ctx) {
                    Some(p) => parts.push(p),
                    None => ctx.failed.push(k.name.clone()),
                }
            }
        }
    }
    if parts.len() > MAX_PARTS {
        ctx.error(
            f.pos,
            &f.at("parts"),
            format!("{} parts, above the {MAX_PARTS} a network may have", parts.len()),
            Some("a passive crossover has tens of parts; check that this is one speaker's network".into()),
        );
    }
    let mut drivers = Vec::new();
    if let Some(n) = ctx.req(&f, "drivers", "at least one driver") {
        for (k, v) in map_entries(n, &f.at("drivers"), ctx) {
            let path = format!("network.drivers.{}", k.name);
            if !check_reference(ctx, k, &path) {
                continue;
            }
            if parts.iter().any(|p: &Part| p.name == k.name) {
                ctx.error(k.pos, &path, format!("{} is both a part and a driver", k.name), Some("give every part and driver its own reference".into()));
                continue;
            }
            match fields::driver(k, v, &path, ctx) {
                Some(d) => drivers.push(d),
                None => ctx.failed.push(k.name.clone()),
            }
        }
        if drivers.is_empty() && matches!(n, Node::Map { entries, .. } if entries.is_empty()) {
            ctx.error(n.pos(), &f.at("drivers"), "no drivers: the network must drive at least one", None);
        }
        if drivers.len() > MAX_DRIVERS {
            ctx.error(
                n.pos(),
                &f.at("drivers"),
                format!("{} drivers, above the {MAX_DRIVERS} a network may have", drivers.len()),
                Some("a passive speaker has a handful of drivers; check that this is one speaker's network".into()),
            );
        }
    }
    let mut nodes: std::collections::BTreeSet<&str> = input.iter().flatten().map(String::as_str).collect();
    nodes.extend(parts.iter().flat_map(|p| p.between.iter().map(String::as_str)));
    nodes.extend(drivers.iter().flat_map(|d| d.between.iter().map(String::as_str)));
    if nodes.len() > MAX_NODES {
        ctx.error(
            f.pos,
            "network",
            format!("{} nodes, above the {MAX_NODES} a network may join", nodes.len()),
            Some("a passive crossover joins tens of nodes; check that this is one speaker's network".into()),
        );
    }
    Some(RawNetwork { input: input?, input_pos: f.key_pos("input").unwrap_or(f.pos), parts, drivers })
}

fn analysis(node: &Node, ctx: &mut Ctx) -> Option<Analysis> {
    let f = ctx.fields(node, "analysis", &["sweep", "programme", "tolerance", "pair_tolerance"])?;
    let pair_tolerance = match f.get("pair_tolerance") {
        Some(n) => match ctx.value(n, &f.at("pair_tolerance"), Quantity::Decibel) {
            Some(v) if v > 0.0 && v <= 6.0 => Some(v),
            Some(_) => {
                ctx.error(n.pos(), &f.at("pair_tolerance"), "the pair tolerance must be above 0 dB and at most 6 dB", Some("0.5 dB is usual (common practice)".into()));
                None
            }
            None => None,
        },
        None => Some(0.5),
    };
    let sweep = match ctx.req(&f, "sweep", "{ from: 10 Hz, to: 40 kHz, per_octave: 24 } or { at: [...] }") {
        Some(n) => sweep(n, ctx),
        None => None,
    };
    let programme = match f.get("programme") {
        Some(n) => ctx.choice(n, &f.at("programme"), &[("pink", Programme::Pink), ("iec-programme", Programme::IecProgramme)]),
        None => Some(Programme::Pink),
    };
    let tolerance = match f.get("tolerance") {
        Some(n) => {
            let tf = ctx.fields(n, &f.at("tolerance"), &["runs", "seed", "distribution"])?;
            let runs = match tf.get("runs") {
                Some(n) => match ctx.bare_number(n, &tf.at("runs")) {
                    Some(r) if (10.0..=MAX_RUNS as f64).contains(&r) && r.fract() == 0.0 => Some(r as usize),
                    Some(_) => {
                        ctx.error(
                            n.pos(),
                            &tf.at("runs"),
                            format!("runs must be a whole number from 10 to {MAX_RUNS}"),
                            Some("the 5-95 % spread of a few thousand runs is within a few hundredths of a dB of a million's".into()),
                        );
                        None
                    }
                    None => None,
                },
                None => Some(2000),
            };
            let seed = match tf.get("seed") {
                // Beyond 2^53 a number is no longer read exactly, so the seed written would
                // not be the seed used: the digits are read as written.
                Some(big @ Node::Scalar { text, .. }) if text.trim().parse::<u64>().is_ok_and(|v| v > 1 << 53) => {
                    ctx.error(big.pos(), &tf.at("seed"), "the seed must be a whole number from 0 to 9007199254740992 (2^53)", None);
                    None
                }
                Some(n) => match ctx.bare_number(n, &tf.at("seed")) {
                    Some(s) if (0.0..=9_007_199_254_740_992.0).contains(&s) && s.fract() == 0.0 => Some(s as u64),
                    Some(_) => {
                        ctx.error(n.pos(), &tf.at("seed"), "the seed must be a whole number from 0 to 9007199254740992 (2^53)", None);
                        None
                    }
                    None => None,
                },
                None => Some(1),
            };
            let distribution = match tf.get("distribution") {
                Some(n) => ctx.choice(n, &tf.at("distribution"), &[("uniform", Distribution::Uniform), ("normal", Distribution::Normal)]),
                None => Some(Distribution::Uniform),
            };
            match (runs, seed, distribution) {
                (Some(runs), Some(seed), Some(distribution)) => Some(Some(ToleranceRuns { runs, seed, distribution })),
                _ => None,
            }
        }
        None => Some(None),
    };
    Some(Analysis { sweep: sweep?, programme: programme?, tolerance: tolerance?, pair_tolerance_db: pair_tolerance? })
}

fn sweep(node: &Node, ctx: &mut Ctx) -> Option<Sweep> {
    let f = ctx.fields(node, "analysis.sweep", &["from", "to", "per_octave", "at"])?;
    if let Some(n) = f.get("at") {
        if let Some(other) = ["from", "to", "per_octave"].into_iter().find(|k| f.get(k).is_some()) {
            ctx.error(
                n.pos(),
                &f.at("at"),
                format!("`at` lists the sweep's points itself, so `{other}` would be ignored"),
                Some("give either `at: [...]` or `from`, `to` and `per_octave`".into()),
            );
            return None;
        }
        let Node::Seq { items, .. } = n else {
            ctx.error(n.pos(), &f.at("at"), "expected a list of frequencies, such as [100 Hz, 1 kHz]", None);
            return None;
        };
        let pts: Vec<Option<f64>> = items.iter().map(|i| ctx.positive(i, &f.at("at"), Quantity::Frequency, false)).collect();
        if items.is_empty() {
            ctx.error(n.pos(), &f.at("at"), "the list of frequencies is empty", None);
            return None;
        }
        // Bands, programme slices and crossings all assume rising frequencies: an unsorted
        // or repeated point is refused where it stands rather than quietly reordered.
        let mut ok = true;
        for k in 1..items.len() {
            if let (Some(prev), Some(here)) = (pts[k - 1], pts[k]) {
                if here <= prev {
                    let what = if here == prev { "repeats" } else { "is below" };
                    ctx.error(
                        items[k].pos(),
                        &f.at("at"),
                        format!("{} {what} the point before it ({}): the points must rise", crate::units::hz(Some(here)), crate::units::hz(Some(prev))),
                        Some("list the frequencies lowest first, each once".into()),
                    );
                    ok = false;
                }
            }
        }
        if !ok {
            return None;
        }
        return pts.into_iter().collect::<Option<Vec<f64>>>().map(Sweep::Points);
    }
    let from = ctx.req(&f, "from", "the lowest frequency").and_then(|n| ctx.positive(n, &f.at("from"), Quantity::Frequency, false));
    let to = ctx.req(&f, "to", "the highest frequency").and_then(|n| ctx.positive(n, &f.at("to"), Quantity::Frequency, false));
    let per_octave = match f.get("per_octave") {
        Some(n) => match ctx.bare_number(n, &f.at("per_octave")) {
            Some(v) if (1.0..=10_000.0).contains(&v) => Some(v),
            Some(_) => {
                ctx.error(n.pos(), &f.at("per_octave"), "points per octave must be from 1 to 10000", None);
                None
            }
            None => None,
        },
        None => Some(24.0),
    };
    let (from, to, per_octave) = (from?, to?, per_octave?);
    if to <= from {
        ctx.error(f.pos, &f.at("to"), "the sweep must end above where it starts", None);
        return None;
    }
    let points = (to / from).log2() * per_octave;
    if points > 2e6 {
        ctx.error(f.pos, &f.at("per_octave"), format!("this sweep has {points:.0} points; 2000000 is the most"), None);
        return None;
    }
    Some(Sweep::Log { from, to, per_octave })
}

fn report(node: &Node, options: &[String], ctx: &mut Ctx) -> (RawTemplate, Option<Vec<Block>>) {
    let Some(f) = ctx.fields(node, "report", &["template", "blocks"]) else { return (RawTemplate::Customer, None) };
    let template = match f.get("template") {
        None => RawTemplate::Customer,
        Some(n) => match ctx.text(n, &f.at("template")) {
            None => RawTemplate::Customer,
            Some(t) => match Template::built_in(&t) {
                Some(Template::Archive) => RawTemplate::Archive,
                Some(Template::Sale) => RawTemplate::Sale,
                Some(Template::Quote) => RawTemplate::Quote,
                Some(Template::Invoice) => RawTemplate::Invoice,
                Some(_) => RawTemplate::Customer,
                None if t.ends_with(".typ") => RawTemplate::File { name: t, pos: n.pos() },
                None => {
                    let hint = suggest(&t, Template::NAMES.iter().copied())
                        .map(|s| format!("did you mean `{s}`?"))
                        .unwrap_or_else(|| format!("choose {}, or the path of a .typ file", Template::NAMES.join(", ")));
                    ctx.error(n.pos(), &f.at("template"), format!("unknown template \"{t}\""), Some(hint));
                    RawTemplate::Customer
                }
            },
        },
    };
    let blocks = f.get("blocks").map(|n| {
        let Node::Seq { items, .. } = n else {
            ctx.error(n.pos(), &f.at("blocks"), "expected a list of blocks", None);
            return Vec::new();
        };
        let names = Block::NAMES;
        let mut out = Vec::new();
        for item in items {
            let path = f.at("blocks");
            match item {
                Node::Scalar { text, pos, .. } => {
                    let Some(b) = Block::named(text) else {
                        let hint = suggest(text, names.iter().copied())
                            .map(|s| format!("did you mean `{s}`?"))
                            .unwrap_or_else(|| format!("blocks are: {}, `text: ...` and `plot: ...`", names.join(", ")));
                        ctx.error(*pos, &path, format!("unknown block \"{text}\""), Some(hint));
                        continue;
                    };
                    out.push(b);
                }
                _ => {
                    let Some(bf) = ctx.fields(item, &path, &["text", "plot", "option"]) else { continue };
                    if let Some(t) = bf.get("text") {
                        if let Some(t) = ctx.text(t, &bf.at("text")) {
                            out.push(Block::Text(t));
                        }
                    } else if let Some(o) = bf.get("option") {
                        // One option's results, by its name in `options`.
                        if let Some(name) = ctx.text(o, &bf.at("option")) {
                            if options.contains(&name) {
                                out.push(Block::Option(name));
                            } else {
                                let hint = suggest(&name, options.iter().map(String::as_str))
                                    .map(|s| format!("did you mean `{s}`?"))
                                    .unwrap_or_else(|| "name one of the job's `options`".into());
                                ctx.error(o.pos(), &bf.at("option"), format!("there is no option \"{name}\""), Some(hint));
                            }
                        }
                    } else if let Some(p) = bf.get("plot") {
                        let opts: Vec<(&str, PlotKind)> = PlotKind::ALL.iter().map(|k| (k.name(), *k)).collect();
                        if let Some(k) = ctx.choice(p, &bf.at("plot"), &opts) {
                            out.push(Block::Plot(k));
                        }
                    }
                }
            }
        }
        out
    });
    (template, blocks)
}
