//! The `service` section: intake and closing, the customer's complaint and the finding,
//! labour, warranty, a condition grade, and the inspection checklist; and the shop settings
//! file a job may name in `job.shop.settings`.

use crate::diag::suggest;
use crate::job::raw::TableRef;
use crate::job::reader::{map_entries, Ctx};
use crate::job::yaml::Node;
use crate::model::service::{InspectionItem, InspectionResult, Photo, Service, ShopSettings, Taken, DEFAULT_INSPECTION, MAX_PHOTO_BYTES};
use crate::model::Date;

const SERVICE_KEYS: &[&str] = &["received", "returned", "complaint", "finding", "labour_hours", "warranty", "condition", "inspection", "photos"];

/// An ISO date at `key`, or None with a located error.
fn date(ctx: &mut Ctx, node: &Node, path: &str) -> Option<Date> {
    let t = ctx.text(node, path)?;
    let d = Date::parse_iso(&t);
    if d.is_none() {
        ctx.error(node.pos(), path, format!("expected an ISO date such as 2026-11-28, found \"{t}\""), None);
    }
    d
}

/// The service section; `report_date` is the job's `date`, which a record cannot precede.
pub(crate) fn service(node: &Node, report_date: Option<Date>, ctx: &mut Ctx) -> Service {
    let Some(f) = ctx.fields(node, "service", SERVICE_KEYS) else { return Service::default() };
    let mut s = Service {
        given: true,
        received: f.get("received").and_then(|n| date(ctx, n, &f.at("received"))),
        returned: f.get("returned").and_then(|n| date(ctx, n, &f.at("returned"))),
        complaint: ctx.opt_text(&f, "complaint"),
        finding: ctx.opt_text(&f, "finding"),
        warranty: ctx.opt_text(&f, "warranty"),
        condition: ctx.opt_text(&f, "condition"),
        ..Default::default()
    };
    if let (Some(a), Some(b), Some(n)) = (s.received, s.returned, f.get("returned")) {
        if (b.year, b.month, b.day) < (a.year, a.month, a.day) {
            ctx.error(
                n.pos(),
                &f.at("returned"),
                format!("the speaker went back ({b}) before it came in ({a})"),
                Some("`received` is the day it came in, `returned` the day it left".into()),
            );
        }
    }
    // A signed record cannot speak of a day after its own date.
    let day = |d: Date| (d.year, d.month, d.day);
    for (key, d) in [("received", s.received), ("returned", s.returned)] {
        if let (Some(d), Some(r), Some(n)) = (d, report_date, f.get(key)) {
            if day(d) > day(r) && r != Date::default() {
                let when = if key == "received" { "came in" } else { "went back" };
                ctx.error(
                    n.pos(),
                    &f.at(key),
                    format!("the report is dated {r}, before the speaker {when} ({d})"),
                    Some(format!("date the report (`job.date`) on or after the day the speaker {when}, or leave `{key}` out until then")),
                );
            }
        }
    }
    if let Some(n) = f.get("labour_hours") {
        match ctx.bare_number(n, &f.at("labour_hours")) {
            Some(h) if (0.0..=200.0).contains(&h) => s.labour_hours = Some(h),
            Some(_) => ctx.error(n.pos(), &f.at("labour_hours"), "labour hours must be from 0 to 200", Some("hours at the bench, such as 1.5".into())),
            None => {}
        }
    }
    if let Some(n) = f.get("inspection") {
        s.inspection = inspection(n, &f.at("inspection"), ctx);
    }
    if let Some(n) = f.get("photos") {
        s.photos = photos(n, &f.at("photos"), ctx);
    }
    s
}

/// The photographs: each `{ file, caption, taken: before | after, customer: true | false }`,
/// read whole and checked to be a JPEG or PNG image.
fn photos(node: &Node, path: &str, ctx: &mut Ctx) -> Vec<Photo> {
    let Node::Seq { items, .. } = node else {
        ctx.error(
            node.pos(),
            path,
            format!("expected a list of photographs, found {}", node.kind_name()),
            Some("write `- { file: before.jpg, caption: ..., taken: before }` for each".into()),
        );
        return Vec::new();
    };
    let mut out = Vec::new();
    for (i, item) in items.iter().enumerate() {
        let field = format!("{path}[{}]", i + 1);
        let Some(g) = ctx.fields(item, &field, &["file", "caption", "taken", "customer"]) else { continue };
        let file = ctx.req(&g, "file", "the image file, JPEG or PNG, beside the job").and_then(|n| crate::job::fields::table_ref(n, &g.at("file"), ctx));
        let caption = ctx.req(&g, "caption", "what the photograph shows").and_then(|n| ctx.text(n, &g.at("caption")));
        let taken = ctx.req(&g, "taken", "before or after the work").and_then(|n| ctx.choice(n, &g.at("taken"), &[("before", Taken::Before), ("after", Taken::After)]));
        let customer = match g.get("customer") {
            Some(n) => ctx.choice(n, &g.at("customer"), &[("true", true), ("false", false)]),
            None => Some(false),
        };
        let (Some(file), Some(caption), Some(taken), Some(customer)) = (file, caption, taken, customer) else { continue };
        let Some(file) = image_file(&file, "photograph", ctx) else { continue };
        out.push(Photo { file, caption, taken, customer });
    }
    out
}

/// Reads an image the job names (a photograph, the shop's logo) and checks it is a JPEG or
/// PNG of a size a report can carry; its name, or None with a located error.
pub(crate) fn image_file(file: &TableRef, what: &str, ctx: &mut Ctx) -> Option<String> {
    let bytes = ctx.read_bytes(file, what)?;
    let image = bytes.starts_with(&[0xFF, 0xD8, 0xFF]) || bytes.starts_with(&[0x89, b'P', b'N', b'G', 0x0D, 0x0A, 0x1A, 0x0A]);
    if !image {
        ctx.error(file.pos, &file.field, format!("\"{}\" is not a JPEG or PNG image", file.name), Some(format!("save the {what} as JPEG (.jpg) or PNG (.png)")));
        return None;
    }
    if bytes.len() > MAX_PHOTO_BYTES {
        ctx.error(
            file.pos,
            &file.field,
            format!("\"{}\" is {} MB, above the {} MB an image may be", file.name, bytes.len() / (1024 * 1024), MAX_PHOTO_BYTES / (1024 * 1024)),
            Some("save a smaller copy for the record".into()),
        );
        return None;
    }
    // Typst decodes it when the report is drawn; a damaged file would fail there, in the
    // template, far from the job's line.
    if let Err(e) = image::load_from_memory(&bytes) {
        ctx.error(
            file.pos,
            &file.field,
            format!("\"{}\" cannot be decoded as an image: {}", file.name, e.to_string().replace("\\n", " ").replace('\n', " ").trim()),
            Some(format!("the file is damaged or cut short; save the {what} again")),
        );
        return None;
    }
    Some(file.name.clone())
}

/// The checklist: every default item, in its order, with what the job says of it ("not
/// checked" when it says nothing), then the shop's own items in the job's order.
fn inspection(node: &Node, path: &str, ctx: &mut Ctx) -> Vec<InspectionItem> {
    let results: Vec<(&str, InspectionResult)> = InspectionResult::ALL.to_vec();
    let mut given: Vec<InspectionItem> = Vec::new();
    for (k, v) in map_entries(node, path, ctx) {
        let field = format!("{path}.{}", k.name);
        let default = DEFAULT_INSPECTION.iter().find(|(key, _)| *key == k.name);
        // A near miss of a default item is a slip, not the shop's own item.
        if default.is_none() {
            if let Some(s) = suggest(&k.name, DEFAULT_INSPECTION.iter().map(|(key, _)| *key)) {
                ctx.error(k.pos, &field, format!("\"{}\" is not an inspection item", k.name), Some(format!("did you mean `{s}`? a shop's own item may have any other name")));
                continue;
            }
        }
        let (result, note) = match v {
            Node::Scalar { .. } => (ctx.choice(v, &field, &results), None),
            _ => {
                let Some(g) = ctx.fields(v, &field, &["result", "note"]) else { continue };
                let result = ctx.req(&g, "result", "pass, fail, fixed, not checked or none fitted").and_then(|n| ctx.choice(n, &g.at("result"), &results));
                (result, ctx.opt_text(&g, "note"))
            }
        };
        let Some(result) = result else { continue };
        // The shop's own item is printed as the default items are, with a capital.
        let item = default.map(|(_, words)| words.to_string()).unwrap_or_else(|| {
            let mut c = k.name.chars();
            c.next().map(|f| f.to_uppercase().chain(c).collect()).unwrap_or_default()
        });
        given.push(InspectionItem { key: k.name.clone(), item, result, note });
    }
    let mut out: Vec<InspectionItem> = DEFAULT_INSPECTION
        .iter()
        .map(|(key, words)| {
            given.iter().find(|g| g.key == *key).cloned().unwrap_or(InspectionItem {
                key: key.to_string(),
                item: words.to_string(),
                result: InspectionResult::NotChecked,
                note: None,
            })
        })
        .collect();
    out.extend(given.into_iter().filter(|g| !DEFAULT_INSPECTION.iter().any(|(key, _)| *key == g.key)));
    out
}

/// A shop settings file as read: its fields, each checked like the job's, with problems
/// reported at the job's `settings` line naming the file's own line and column.
pub(crate) fn settings(text: &str, file: &str, at: crate::diag::Pos, field: &str, ctx: &mut Ctx) -> Option<ShopSettings> {
    let root = match crate::job::yaml::parse(text) {
        Ok(r) => r,
        Err(e) => {
            ctx.error(
                at,
                field,
                format!("{file} line {}, column {}: YAML syntax: {}", e.pos.line, e.pos.col, e.message),
                Some("check indentation (spaces, not tabs), colons and brackets".into()),
            );
            return None;
        }
    };
    // The file's problems are gathered apart, then reported at the job's line with the file's
    // own place in the message.
    let mut inner = Ctx::new(ctx.files);
    let s = (|| {
        let f = inner.fields(&root, "", &["name", "address", "contact", "warranty", "labour_rate", "currency", "logo", "tax_rate", "tax_name", "designs"])?;
        // "20 %", at most two decimals, 0 to 100 %: kept exact in hundredths of a percent.
        let tax = f.get("tax_rate").and_then(|n| {
            let t = inner.text(n, "tax_rate")?;
            let rate = t.trim().strip_suffix('%').and_then(|x| crate::money::Money::parse(x.trim())).filter(|m| m.0 <= 10_000);
            if rate.is_none() {
                inner.error(n.pos(), "tax_rate", format!("\"{t}\" is not a tax rate"), Some("a percentage from 0 to 100 with at most two decimals, such as 20 % or 7.5 %".into()));
            }
            rate.map(|r| crate::model::service::Tax { name: String::new(), hundredths_of_percent: r.0 })
        });
        let tax = tax.map(|mut t| {
            t.name = inner.opt_text(&f, "tax_name").unwrap_or_else(|| "Tax".into());
            t
        });
        let labour_rate = f.get("labour_rate").and_then(|n| {
            let t = inner.text(n, "labour_rate")?;
            let m = crate::money::Money::parse(&t);
            if m.is_none() {
                inner.error(
                    n.pos(),
                    "labour_rate",
                    format!("\"{t}\" is not a price"),
                    Some("a number up to 1000000000 with a point and at most two decimals, such as 42.50".into()),
                );
            }
            m
        });
        Some(ShopSettings {
            name: inner.opt_text(&f, "name"),
            address: inner.opt_text(&f, "address"),
            contact: inner.opt_text(&f, "contact"),
            warranty: inner.opt_text(&f, "warranty"),
            labour_rate,
            currency: inner.opt_text(&f, "currency"),
            logo: inner.opt_text(&f, "logo"),
            tax,
        })
    })();
    let ok = inner.diags.is_empty();
    for d in inner.diags {
        let place = format!("{file} line {}, column {}", d.pos.line, d.pos.col);
        let what = if d.field.is_empty() { String::new() } else { format!(" ({})", d.field) };
        ctx.error(at, field, format!("{place}{what}: {}", d.message), d.hint);
    }
    s.filter(|_| ok)
}
