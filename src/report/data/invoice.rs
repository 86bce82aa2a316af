//! The invoice after the work: the parts the work fitted (the parts to buy, priced from the
//! shop's list), the labour at the hourly rate, the tax the shop's settings give, and the
//! totals, every figure an exact count of hundredths. A pair's or set's invoice is for every
//! cabinet. An invoice is refused, with a hint, for a job with no work done or with anything
//! to bill that has no price.

use serde::Serialize;

use super::{Ctx, Row, Table};
use crate::analysis::bom::PartsList;
use crate::analysis::Outcome;
use crate::model::Job;
use crate::money::Money;

#[derive(Debug, Serialize, Default)]
pub struct InvoiceData {
    pub number: String,
    pub currency: String,
    /// The parts fitted: quantity, item, the parts it is, unit price and amount.
    pub lines: Table,
    /// Parts, labour, subtotal, tax and total, each with its amount.
    pub totals: Table,
    /// What the invoice covers, in a sentence.
    pub covers: String,
}

/// The parts list a job's invoice bills: the whole job's (every cabinet's).
pub fn parts_of(outcome: &Outcome) -> &PartsList {
    match outcome {
        Outcome::One(f) => &f.parts,
        Outcome::Set(s) => &s.parts,
    }
}

/// Why this job cannot be invoiced, with a hint; None when it can.
pub fn refusal(job: &Job, parts: &PartsList) -> Option<(String, String)> {
    if !job.work_done() {
        // The hint names only a template that applies: a quotation needs something proposed.
        let proposes = !job.options.is_empty() || !job.changes.is_empty() || job.cabinets.iter().any(|c| !c.changes.is_empty());
        let hint = if proposes {
            "for work not done yet, write a quotation (--template quote)"
        } else {
            "list the work done under `changes`; for a speaker inspected but not worked on, the customer's report or the archive records it (--template customer or archive)"
        };
        return Some(("an invoice bills the work done, and this job lists no work done (`changes`)".into(), hint.into()));
    }
    let hours = job.service.labour_hours.filter(|h| *h > 0.0);
    if hours.is_some() && job.quote.labour_rate.is_none() {
        return Some((
            format!("the job records {} h of labour but no hourly rate to price it", crate::units::trim_number(hours.unwrap_or(0.0), 3)),
            "give `labour_rate` in the shop's settings file, or under `quote` in the job".into(),
        ));
    }
    if !parts.lines.is_empty() && parts.total.is_none() {
        return Some(("the parts fitted are not priced: the job names no price list".into(), "name the shop's price list under `prices.list`".into()));
    }
    let unpriced: Vec<String> = parts.lines.iter().filter(|l| l.price.is_none()).map(|l| format!("{} ({} {})", l.parts.join(", "), l.value, l.kind)).collect();
    if !unpriced.is_empty() {
        return Some((
            format!("{} of the parts fitted {} not in the price list: {}", unpriced.len(), if unpriced.len() == 1 { "is" } else { "are" }, unpriced.join("; ")),
            "add them to the shop's price list, so every line of the invoice has its price".into(),
        ));
    }
    if parts.lines.is_empty() && hours.is_none() {
        return Some(("there is nothing to bill: no part was bought for the work and no labour is recorded".into(), "record the labour under `service.labour_hours`".into()));
    }
    None
}

/// The invoice of a job that can be invoiced (see [`refusal`]); an empty one otherwise, which
/// no built-in template shows.
pub(crate) fn invoice(c: &Ctx, parts: &PartsList, cabinets: usize) -> InvoiceData {
    let job = c.job;
    if refusal(job, parts).is_some() {
        return InvoiceData::default();
    }
    let currency = parts.currency.clone().or_else(|| job.quote.currency.clone()).unwrap_or_default();
    let lines = parts
        .lines
        .iter()
        .map(|l| {
            let what = [Some(format!("{} {}", l.value, l.kind)), l.type_text.clone(), l.rating.clone()].into_iter().flatten().collect::<Vec<_>>().join(", ");
            let money = |m: Option<Money>| m.map(|m| m.to_string()).unwrap_or_default();
            Row(vec![l.quantity.to_string(), crate::units::trade(&what), l.parts.join(", "), money(l.unit_price), money(l.price)])
        })
        .collect();
    let parts_total = parts.total.unwrap_or_default();
    let labour = match (job.service.labour_hours.filter(|h| *h > 0.0), job.quote.labour_rate) {
        (Some(h), Some(rate)) => Some((h, rate, rate.for_hours(h).unwrap_or_default())),
        _ => None,
    };
    let mut totals = Vec::new();
    if !parts.lines.is_empty() {
        totals.push(Row(vec!["Parts".into(), parts_total.to_string()]));
    }
    let mut subtotal = parts_total;
    if let Some((h, rate, amount)) = labour {
        totals.push(Row(vec![format!("Labour, {} h at {rate} {currency} an hour", crate::units::trim_number(h, 3)), amount.to_string()]));
        subtotal = subtotal.plus(amount).unwrap_or(subtotal);
    }
    let total = match &job.quote.tax {
        Some(t) => {
            let tax = subtotal.share(t.hundredths_of_percent).unwrap_or_default();
            totals.push(Row(vec!["Subtotal".into(), subtotal.to_string()]));
            totals.push(Row(vec![format!("{} at {} %", t.name, crate::units::trim_number(t.hundredths_of_percent as f64 / 100.0, 6)), tax.to_string()]));
            subtotal.plus(tax).unwrap_or(subtotal)
        }
        None => subtotal,
    };
    totals.push(Row(vec![format!("Total ({currency})"), total.to_string()]));
    let covers = match cabinets {
        1 if job.info.serials.len() > 1 => format!("The parts are counted for one cabinet: the job describes one network for serials {}.", job.info.serials.join(", ")),
        1 => "The work on the speaker.".to_string(),
        2 => "The work on the pair: both cabinets.".to_string(),
        n => format!("The work on the set: all {} cabinets.", super::words::count_words(n)),
    };
    let covers = if job.quote.tax.is_none() { format!("{covers} No tax is charged on this invoice.") } else { covers };
    InvoiceData {
        number: job.info.number.clone(),
        lines: Table::new(&["Qty", "Item", "For", &format!("Unit ({currency})"), &format!("Amount ({currency})")], lines),
        totals: Table::new(&["", &format!("Amount ({currency})")], totals),
        currency,
        covers,
    }
}
