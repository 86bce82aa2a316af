//! The build stage: the raw job's names are resolved into the validated model. Tables and a
//! shop's template are read (through the job's [`Files`](crate::files::Files)), readings and
//! replacements are read against the kind of part or driver they name, inserts are placed,
//! compensate entries are matched with their parts and drivers, and the scenarios are
//! checked ([`checks`](crate::job::checks)). Every problem is collected with its place.

use crate::diag::{suggest, Pos};
use crate::job::checks;
use crate::job::fields::{self, part_fields};
use crate::job::raw::*;
use crate::job::reader::Ctx;
use crate::job::readings::{self, find_target, Target};
use crate::job::yaml::Node;
use crate::model::*;
use crate::units::Quantity;

const REPLACE_PART_KEYS: &[&str] = &["value", "esr", "tan_delta", "dcr", "tolerance", "rating", "type", "core", "section", "maker", "part_number", "supplier", "lot"];
const REPLACE_DRIVER_KEYS: &[&str] = &["model", "sensitivity", "response", "rated_power", "note"];

pub fn build(raw: RawJob, ctx: &mut Ctx) -> Option<Job> {
    // Every cabinet fits the job's parts and each option's: the work is their product.
    let fitted = raw.compensate.len() + raw.options.iter().map(|o| o.compensate.len()).sum::<usize>();
    let fits = fitted * raw.cabinets.len().max(1);
    if fits > crate::job::parse::MAX_FITS_IN_ALL {
        ctx.error(
            Pos::START,
            "compensate",
            format!(
                "the job fits {fitted} parts in each of {} cabinets, {fits} fits in all, above the {} a job may ask for",
                raw.cabinets.len().max(1),
                crate::job::parse::MAX_FITS_IN_ALL
            ),
            Some("fit fewer parts (a resistor or an L-pad per driver), or split the set or the options into several jobs".into()),
        );
        return None;
    }
    if let Some(t) = raw.analysis.as_ref().and_then(|a| a.tolerance.as_ref()) {
        let cabinets = raw.cabinets.len().max(1);
        if t.runs * cabinets > crate::job::parse::MAX_RUNS {
            ctx.error(
                Pos::START,
                "analysis.tolerance.runs",
                format!("{} Monte Carlo runs in each of {cabinets} cabinets, {} in all, above the {} a job may ask for", t.runs, t.runs * cabinets, crate::job::parse::MAX_RUNS),
                Some(format!("ask for at most {} runs", crate::job::parse::MAX_RUNS / cabinets)),
            );
            return None;
        }
    }
    let before = ctx.diags.len();
    let network = raw.network.map(|n| network(n, ctx));
    let network_whole = raw.network_whole && ctx.diags.len() == before;
    let network = network?;
    let before = ctx.diags.len();
    let measured = readings::measured(&raw.measured, &network, "measured", ctx);
    let changes = changes(&raw.changes, &network, &[], "changes", ctx);
    let cabinets: Vec<Cabinet> = raw
        .cabinets
        .iter()
        .map(|c| {
            let field = format!("cabinets.{}", c.name);
            Cabinet {
                name: c.name.clone(),
                pos: c.pos,
                measured: readings::measured(&c.measured, &network, &format!("{field}.measured"), ctx),
                changes: self::changes(&c.changes, &network, &changes, &format!("{field}.changes"), ctx),
                terminals: c.terminals.clone(),
            }
        })
        .collect();
    let steps_whole = ctx.diags.len() == before;
    // A cabinet is named by its serial: one the job's speaker does not list is a slip.
    if let Some(info) = raw.info.as_ref().filter(|i| !i.serials.is_empty()) {
        for c in raw.cabinets.iter().filter(|c| !info.serials.contains(&c.name)) {
            ctx.error(
                c.pos,
                &format!("cabinets.{}", c.name),
                format!("\"{}\" is not one of the serials in job.speaker.serials ({})", c.name, info.serials.join(", ")),
                Some(match suggest(&c.name, info.serials.iter().map(String::as_str)) {
                    Some(s) => format!("did you mean `{s}`? name each cabinet by its serial, or add the serial to job.speaker.serials"),
                    None => "name each cabinet by its serial, or add the serial to job.speaker.serials".into(),
                }),
            );
        }
    }
    let all_changes: Vec<Change> = changes.iter().chain(cabinets.iter().flat_map(|c| &c.changes)).cloned().collect();
    let compensate = compensate(raw.compensate, &network, &all_changes, ctx);
    // Each option: its own steps from the speaker as found, and its own compensate entries.
    let before_options = ctx.diags.len();
    let options: Vec<JobOption> = raw
        .options
        .into_iter()
        .map(|o| {
            let field = format!("options.{}", o.name);
            let ch = self::changes(&o.changes, &network, &[], &format!("{field}.changes"), ctx);
            let comp = compensate_under(o.compensate, &network, &ch, &format!("{field}.compensate"), ctx);
            JobOption { name: o.name, say: o.say, labour_hours: o.labour_hours, changes: ch, compensate: comp, pos: o.pos }
        })
        .collect();
    let options_whole = ctx.diags.len() == before_options;
    if let (Some(name), Some(pos)) = (&raw.quote.recommend, raw.quote_recommend_pos) {
        if !options.iter().any(|o| &o.name == name) {
            let hint = match suggest(name, options.iter().map(|o| o.name.as_str())) {
                Some(s) => format!("did you mean `{s}`?"),
                None => "name one of the job's `options`".into(),
            };
            ctx.error(pos, "quote.recommend", format!("there is no option \"{name}\""), Some(hint));
        }
    }
    let all_changes: Vec<Change> = all_changes.into_iter().chain(options.iter().flat_map(|o| o.changes.iter().cloned())).collect();
    let template = template(raw.template, ctx);
    // Every check runs on what could be read, so one pass lists every problem: connections
    // once every part and driver was read, the steps once every step was, the tables and
    // bands once the sweep was.
    if network_whole {
        checks::connections(&network, if steps_whole { Some((&measured, &changes)) } else { None }, ctx);
        if steps_whole && options_whole {
            for o in options.iter().filter(|o| !o.changes.is_empty()) {
                let before = ctx.diags.len();
                checks::cabinet_steps(&network, &measured, &o.changes, 0, &format!("options.{}.changes", o.name), ctx);
                // In a pair or set, each cabinet's own steps follow the option's in its place.
                if ctx.diags.len() == before {
                    for c in cabinets.iter().filter(|c| !c.changes.is_empty()) {
                        let m: Vec<Reading> = measured.iter().chain(&c.measured).cloned().collect();
                        let ch: Vec<Change> = o.changes.iter().chain(&c.changes).cloned().collect();
                        checks::cabinet_steps(&network, &m, &ch, o.changes.len(), &format!("cabinets.{}.changes (after options.{}.changes)", c.name, o.name), ctx);
                    }
                }
            }
        }
        if steps_whole {
            // Each cabinet's own steps must apply after the common ones, and leave it whole.
            for c in &cabinets {
                let m: Vec<Reading> = measured.iter().chain(&c.measured).cloned().collect();
                let ch: Vec<Change> = changes.iter().chain(&c.changes).cloned().collect();
                if !c.changes.is_empty() {
                    checks::cabinet_steps(&network, &m, &ch, changes.len(), &format!("cabinets.{}.changes", c.name), ctx);
                }
            }
        }
    }
    if let Some(a) = &raw.analysis {
        checks::coverage(&network, &all_changes, &compensate, &a.sweep, ctx);
        // A terminal sweep is compared where the models hold: inside the analysis sweep.
        let fr = a.sweep.frequencies();
        let (lo, hi) = (fr.first().copied().unwrap_or(0.0), fr.last().copied().unwrap_or(0.0));
        for t in std::iter::once(&raw.terminals).chain(cabinets.iter().map(|c| &c.terminals)) {
            for (s, (pos, field)) in [&t.as_found, &t.as_left].into_iter().flatten().zip(&t.places) {
                let n = s.freq_hz.iter().filter(|f| **f >= lo * (1.0 - 1e-9) && **f <= hi * (1.0 + 1e-9)).count();
                if n < 3 {
                    ctx.error(
                        *pos,
                        field,
                        format!("only {n} of {}'s points fall inside the analysis sweep ({} to {})", s.file, crate::units::hz(Some(lo)), crate::units::hz(Some(hi))),
                        Some("sweep the speaker over the analysis range, or widen `analysis.sweep` to the sweep's".into()),
                    );
                }
            }
            // What a diagnosis estimates must be in the network, with a value to estimate.
            for (name, pos, field) in &t.diagnose {
                if let Err((message, hint)) = crate::model::terminals::params_named(&network, name) {
                    ctx.error(*pos, field, message, Some(hint));
                }
            }
        }
    }
    // The shop's settings file fills what the job leaves out: its name, address and contact,
    // its warranty terms and its hourly rate.
    let mut info = raw.info.unwrap_or_default();
    let mut quote = raw.quote;
    let mut service = raw.service;
    let mut logo = raw.shop_logo;
    if let Some(r) = &raw.shop_settings {
        if let Some((file, text)) = ctx.read_file(r) {
            if let Some(s) = super::service::settings(&text, &file, r.pos, &r.field, ctx) {
                let fill = |mine: &mut String, theirs: Option<String>| {
                    if mine.is_empty() {
                        *mine = theirs.unwrap_or_default();
                    }
                };
                fill(&mut info.shop_name, s.name);
                fill(&mut info.shop_address, s.address);
                fill(&mut info.shop_contact, s.contact);
                if service.warranty.is_none() {
                    service.warranty = s.warranty;
                }
                if quote.labour_rate.is_none() {
                    quote.labour_rate = s.labour_rate;
                }
                quote.currency = s.currency;
                quote.tax = s.tax;
                if logo.is_none() {
                    logo = s.logo.map(|name| TableRef { name, pos: r.pos, field: format!("{} (logo)", r.field) });
                }
            }
        }
    }
    info.shop_logo = logo.and_then(|r| super::service::image_file(&r, "logo", ctx));
    Some(Job {
        info,
        amplifier: raw.amplifier?,
        network,
        measured,
        changes,
        cabinets,
        compensate,
        prices: raw.prices.as_ref().and_then(|(r, currency)| ctx.price_list(r, currency)),
        options,
        quote,
        analysis: raw.analysis?,
        template,
        blocks: raw.blocks,
        service,
        terminals: raw.terminals,
        design: None,
        inputs: Vec::new(),
        warnings: Vec::new(),
    })
}

/// A driver model with its table read.
fn model(m: RawModel, ctx: &mut Ctx) -> Option<DriverModel> {
    Some(match m {
        RawModel::Resistance(r) => DriverModel::Resistance(r),
        RawModel::VoiceCoil { re, inductance, resonance } => DriverModel::VoiceCoil { re, inductance, resonance },
        RawModel::Table(t) => DriverModel::Table(ctx.impedance_table(&t)?),
    })
}

fn network(raw: RawNetwork, ctx: &mut Ctx) -> Network {
    let mut drivers = Vec::new();
    for d in raw.drivers {
        let response = d.response.as_ref().and_then(|r| ctx.response_table(r));
        let failed_response = d.response.is_some() && response.is_none();
        match model(d.model, ctx) {
            Some(m) if !failed_response => drivers.push(Driver {
                name: d.name,
                role: d.role,
                between: d.between,
                model: m,
                rated_power: d.rated_power,
                sensitivity: d.sensitivity,
                response,
                inverted: d.inverted,
                note: d.note,
                fault: None,
                fault_note: None,
                pos: d.pos,
            }),
            // Its table's own message says what is wrong; later mentions stay quiet.
            _ => ctx.failed.push(d.name),
        }
    }
    wire_links(&raw.parts, &drivers, &raw.input, ctx);
    Network { input: raw.input, input_pos: raw.input_pos, labels: Default::default(), parts: raw.parts, drivers }
}

/// Wire links (0 ohm resistors) join their two nodes into one. In the design a set of them
/// that closes a loop, joins the amplifier's terminals, or joins a driver's two terminals is
/// refused at the link's line, naming the links: the engine would solve a network no one
/// built (a shorted driver sits at -3000 dB, and reports would call it "within 0.00 dB").
/// A driver found shorted on the bench is a reading, not the design.
fn wire_links(parts: &[Part], drivers: &[Driver], input: &[String; 2], ctx: &mut Ctx) {
    let links: Vec<&Part> = parts.iter().filter(|p| p.kind == PartKind::Resistor && p.value == 0.0 && !p.auto_value && p.fault.is_none()).collect();
    if links.is_empty() {
        return;
    }
    // Union-find over the nodes the links touch; each class remembers the links inside it.
    let mut nodes: Vec<&str> = Vec::new();
    fn index<'a>(n: &'a str, nodes: &mut Vec<&'a str>) -> usize {
        match nodes.iter().position(|m| *m == n) {
            Some(i) => i,
            None => {
                nodes.push(n);
                nodes.len() - 1
            }
        }
    }
    let mut parent: Vec<usize> = Vec::new();
    fn root(parent: &mut [usize], mut i: usize) -> usize {
        while parent[i] != i {
            parent[i] = parent[parent[i]];
            i = parent[i];
        }
        i
    }
    let mut edges = Vec::new();
    for l in &links {
        let (a, b) = (index(&l.between[0], &mut nodes), index(&l.between[1], &mut nodes));
        while parent.len() < nodes.len() {
            parent.push(parent.len());
        }
        edges.push((a, b, l));
    }
    // The links of the class that `i` belongs to, once the classes are complete.
    let mut looped = Vec::new();
    for &(a, b, l) in &edges {
        let (ra, rb) = (root(&mut parent, a), root(&mut parent, b));
        if ra == rb {
            looped.push(*l);
        } else {
            parent[ra] = rb;
        }
    }
    let class_links = |parent: &mut Vec<usize>, node: usize| -> Vec<String> {
        let r = root(parent, node);
        edges.iter().filter(|(a, _, _)| root(parent, *a) == r).map(|(_, _, l)| l.name.clone()).collect()
    };
    let verb = |list: &[String]| if list.len() == 1 { "joins" } else { "join" };
    let names = |list: &[String]| match list {
        [one] => one.clone(),
        [rest @ .., last] => format!("{} and {last}", rest.join(", ")),
        [] => String::new(),
    };
    for l in looped {
        let i = nodes.iter().position(|m| *m == l.between[0]).unwrap_or(0);
        let in_loop = class_links(&mut parent, i);
        ctx.error(
            l.pos,
            &format!("network.parts.{}", l.name),
            format!("{} closes a loop of wire links (0 ohm) among {}: a loop of wires carries no signal and cannot be solved", l.name, names(&in_loop)),
            Some(format!("remove {} (its two nodes are already joined), or give it its real resistance", l.name)),
        );
    }
    let class_of = |n: &str, parent: &mut Vec<usize>| nodes.iter().position(|m| *m == n).map(|i| root(parent, i));
    if let (Some(a), Some(b)) = (class_of(&input[0], &mut parent), class_of(&input[1], &mut parent)) {
        if a == b {
            let i = nodes.iter().position(|m| *m == input[0]).unwrap_or(0);
            let via = class_links(&mut parent, i);
            let first = links.iter().find(|l| via.contains(&l.name)).copied().unwrap_or(links[0]);
            ctx.error(
                first.pos,
                &format!("network.parts.{}", first.name),
                format!("{} {} the amplifier's terminals {} and {} with wire links (0 ohm): it would short the amplifier", names(&via), verb(&via), input[0], input[1]),
                Some("check the `between` nodes or the value of each".into()),
            );
        }
    }
    for d in drivers {
        if let (Some(a), Some(b)) = (class_of(&d.between[0], &mut parent), class_of(&d.between[1], &mut parent)) {
            if a == b {
                let i = nodes.iter().position(|m| *m == d.between[0]).unwrap_or(0);
                let via = class_links(&mut parent, i);
                ctx.error(
                    d.pos,
                    &format!("network.drivers.{}", d.name),
                    format!("driver {} is shorted in the design: {} {} its terminals {} and {} with wire links (0 ohm), so it would be silent", d.name, names(&via), verb(&via), d.between[0], d.between[1]),
                    Some("check the `between` nodes of the driver and of each link; a driver found shorted on the bench is a reading under `measured` (`shorted: true`), not the design".into()),
                );
            }
        }
    }
}

/// A replacement's fields, read against what it replaces.
fn replacement(target: Target, with: &Node, path: &str, ctx: &mut Ctx) -> Option<Patch> {
    match target {
        Target::Part(p) => {
            let wf = ctx.fields(with, path, REPLACE_PART_KEYS)?;
            let patch = part_fields(&wf, p.kind, ctx, true)?;
            readings::far_from_design(p, &patch, &wf, ctx);
            Some(Patch::Part(patch))
        }
        Target::Driver(_) => {
            let wf = ctx.fields(with, path, REPLACE_DRIVER_KEYS)?;
            let model = wf.get("model").and_then(|n| fields::model(n, &wf.at("model"), ctx)).and_then(|m| model(m, ctx));
            let response = wf.get("response").and_then(|n| fields::table_ref(n, &wf.at("response"), ctx)).and_then(|r| ctx.response_table(&r));
            Some(Patch::Driver(DriverPatch {
                model,
                sensitivity: wf.get("sensitivity").and_then(|n| ctx.value(n, &wf.at("sensitivity"), Quantity::Decibel)),
                response,
                rated_power: ctx.opt_positive(&wf, "rated_power", Quantity::Power, false),
                note: ctx.opt_text(&wf, "note"),
                ..Default::default()
            }))
        }
    }
}

/// The change steps of `raw` (written under `field`), after the steps `prior` (a cabinet's own
/// steps come after the job's common ones).
fn changes(raw: &[RawChange], net: &Network, prior: &[Change], field: &str, ctx: &mut Ctx) -> Vec<Change> {
    let mut out = Vec::new();
    // Parts added by earlier steps, so later steps may name them.
    let mut added: Vec<Part> = prior
        .iter()
        .flat_map(|c| match &c.step {
            ChangeStep::Add { parts } => parts.clone(),
            ChangeStep::Insert { part, .. } => vec![part.clone()],
            _ => Vec::new(),
        })
        .collect();
    let is_new = |name: &str, added: &[Part]| net.part(name).is_none() && net.driver(name).is_none() && !added.iter().any(|p| p.name == name);
    for c in raw {
        let path = format!("{field}[{}]", c.number);
        let step = match &c.step {
            RawStep::Replace { target, target_pos, with, with_path } => {
                let Some(t) = find_target(net, &added, target, *target_pos, &format!("{path}.replace"), ctx) else { continue };
                let Some(with) = replacement(t, with, with_path, ctx) else { continue };
                ChangeStep::Replace { target: target.clone(), with }
            }
            RawStep::Remove { target, target_pos } => match find_target(net, &added, target, *target_pos, &format!("{path}.remove"), ctx) {
                Some(Target::Driver(_)) => {
                    ctx.error(
                        *target_pos,
                        &format!("{path}.remove"),
                        format!("{target} is a driver; `remove` takes parts"),
                        Some("to fit a different driver, use `replace` with a new model".into()),
                    );
                    continue;
                }
                Some(Target::Part(_)) => ChangeStep::Remove { target: target.clone() },
                None => continue,
            },
            RawStep::Add { parts } => {
                let mut fresh = Vec::new();
                for p in parts {
                    if is_new(&p.name, &added) {
                        fresh.push(p.clone());
                        added.push(p.clone());
                    } else {
                        ctx.error(
                            p.pos,
                            &format!("{path}.add.{}", p.name),
                            format!("{} is already in the network", p.name),
                            Some("new parts need new references (R9, C7, ...)".into()),
                        );
                    }
                }
                ChangeStep::Add { parts: fresh }
            }
            RawStep::Insert { part } => {
                let ppath = format!("{path}.insert.{}", part.name);
                if !is_new(&part.name, &added) {
                    ctx.error(part.pos, &ppath, format!("{} is already in the network", part.name), Some("new parts need new references (R9, C7, ...)".into()));
                    continue;
                }
                // between: [node, part]: the new part goes in series where that part meets the node.
                let [a, b] = part.between.clone();
                if ctx.failed.contains(&a) || ctx.failed.contains(&b) {
                    ctx.failed.push(part.name.clone());
                    continue;
                }
                let is_ref = |s: &str| !is_new(s, &added);
                let (node, next_to) = match (is_ref(&a), is_ref(&b)) {
                    (false, true) => (a, b),
                    (true, false) => (b, a),
                    _ => {
                        ctx.error(
                            part.pos,
                            &format!("{ppath}.between"),
                            "insert takes `between: [NODE, PART]`: the node and the part it goes in series with",
                            Some("e.g. between: [IN, C1] puts the new part between node IN and C1; to connect a part between two nodes, use `add`".into()),
                        );
                        // Its later mentions (a compensate entry) would only repeat this.
                        ctx.failed.push(part.name.clone());
                        continue;
                    }
                };
                let mut part = part.clone();
                part.between = [node.clone(), next_to.clone()];
                added.push((*part).clone());
                ChangeStep::Insert { part: *part, node, next_to }
            }
        };
        out.push(Change { number: c.number, step, pos: c.pos });
    }
    out
}

fn compensate(raw: Vec<RawCompensate>, net: &Network, changes: &[Change], ctx: &mut Ctx) -> Vec<CompensateEntry> {
    compensate_under(raw, net, changes, "compensate", ctx)
}

/// The compensate entries written under `field` for the steps `changes`.
fn compensate_under(raw: Vec<RawCompensate>, net: &Network, changes: &[Change], field: &str, ctx: &mut Ctx) -> Vec<CompensateEntry> {
    let mut out = Vec::new();
    let auto_parts: Vec<&Part> = net
        .parts
        .iter()
        .chain(changes.iter().flat_map(|c| match &c.step {
            ChangeStep::Insert { part, .. } => std::slice::from_ref(part).iter().collect::<Vec<_>>(),
            ChangeStep::Add { parts } => parts.iter().collect(),
            _ => Vec::new(),
        }))
        .collect();
    for RawCompensate { entry, driver_pos } in raw {
        let path = format!("{field}.{}", entry.part);
        let replaced_auto = changes.iter().any(|c| matches!(&c.step, ChangeStep::Replace { target, with: Patch::Part(p) } if *target == entry.part && p.auto_value));
        match auto_parts.iter().find(|p| p.name == entry.part) {
            Some(p) if p.auto_value || replaced_auto => {}
            Some(_) => {
                ctx.error(
                    entry.pos,
                    &path,
                    format!("{} has a fixed value; only `value: auto` parts are solved", entry.part),
                    Some(format!("write `value: auto` for {} to have voicekeep solve it", entry.part)),
                );
                continue;
            }
            None if ctx.failed.contains(&entry.part) => continue,
            None => {
                let names: Vec<&str> = auto_parts.iter().map(|p| p.name.as_str()).collect();
                let hint = suggest(&entry.part, names.iter().copied()).map(|s| format!("did you mean `{s}`?"));
                ctx.error(entry.pos, &path, format!("there is no part {} in the network or the changes", entry.part), hint);
                continue;
            }
        }
        if net.driver(&entry.driver).is_none() {
            // A driver that could not be read has its own message already.
            if !ctx.failed.contains(&entry.driver) {
                let hint = match suggest(&entry.driver, net.drivers.iter().map(|d| d.name.as_str())) {
                    Some(s) => format!("did you mean `{s}`?"),
                    None => format!("the network's drivers are: {}", net.drivers.iter().map(|d| d.name.as_str()).collect::<Vec<_>>().join(", ")),
                };
                ctx.error(driver_pos, &format!("{path}.driver"), format!("there is no driver {}", entry.driver), Some(hint));
            }
            ctx.failed.push(entry.part.clone());
            continue;
        }
        out.push(entry);
    }
    // Every auto value needs its entry.
    for p in &auto_parts {
        if p.auto_value && !out.iter().any(|c| c.part == p.name) && !ctx.failed.contains(&p.name) {
            ctx.error(
                p.pos,
                &p.name,
                format!("{} has `value: auto` but no `compensate` entry says what to solve it for", p.name),
                Some(match likely_driver(net, p) {
                    Some(d) => format!("add `{}: {{ driver: {d} }}` under `compensate:` (and `band: [low, high]` to fit over a band of your choosing)", p.name),
                    None => format!("add `{}: {{ driver: NAME }}` under `compensate:`, naming the driver whose level it sets", p.name),
                }),
            );
        }
    }
    for c in changes {
        if let ChangeStep::Replace { target, with: Patch::Part(p) } = &c.step {
            if p.auto_value && !out.iter().any(|e| &e.part == target) && !ctx.failed.contains(target) {
                ctx.error(c.pos, &format!("changes[{}]", c.number), format!("{target} is replaced with `value: auto` but has no `compensate` entry"), None);
            }
        }
    }
    out
}

/// The driver an auto part most likely serves: the one whose section (the parts joined to it
/// without passing the amplifier's terminals) holds the part it is inserted beside, or a
/// node it is added at.
fn likely_driver<'n>(net: &'n Network, p: &Part) -> Option<&'n str> {
    let inputs = [net.input[0].as_str(), net.input[1].as_str()];
    net.drivers.iter().map(|d| d.name.as_str()).find(|d| {
        let section = net.section(d);
        let drv = net.driver(d).map(|x| x.between.clone()).unwrap_or_default();
        p.between.iter().any(|n| {
            n == d
                || section.contains(&n.as_str())
                || (!inputs.contains(&n.as_str()) && (drv.contains(n) || section.iter().any(|s| net.part(s).is_some_and(|q| q.between.contains(n)))))
        })
    })
}

/// The report's template: a built-in, or a shop's file read now (and recorded as an input),
/// so rendering reads nothing from disk.
fn template(raw: RawTemplate, ctx: &mut Ctx) -> Template {
    match raw {
        RawTemplate::Customer => Template::Customer,
        RawTemplate::Archive => Template::Archive,
        RawTemplate::Sale => Template::Sale,
        RawTemplate::Quote => Template::Quote,
        RawTemplate::Invoice => Template::Invoice,
        RawTemplate::File { name, pos } => match ctx.files.read(&name, crate::report::MAX_TEMPLATE_BYTES).and_then(|b| crate::report::template_text(&name, b)) {
            Ok(bytes) => {
                let text = String::from_utf8_lossy(&bytes).into_owned();
                ctx.inputs.push(InputFile { name: name.clone(), bytes });
                Template::File { name, text }
            }
            Err(e) => {
                ctx.error(
                    pos,
                    "report.template",
                    format!("cannot read the template \"{}\": {}", e.file, e.reason),
                    Some("a template path is relative to the job file's folder".into()),
                );
                Template::Customer
            }
        },
    }
}
