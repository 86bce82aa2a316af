//! The invoice: totals against sums of integer hundredths typed by hand from the price list
//! (samples/kestrel-prices.csv) and the tax rate; refusals with their hints.

use crate::util::{root, Cli};

/// The pair sample, billed: the shop's settings give the hourly rate and a 20 % tax, and the
/// job records 2.5 h of labour.
fn billed_pair(tax: &str) -> Cli {
    let job = std::fs::read_to_string(root().join("samples/pair-recap.yaml")).unwrap();
    let job = job.replace("contact: bench@kestrelrow.example }", "contact: bench@kestrelrow.example, settings: shop.yaml }") + "\nservice:\n  labour_hours: 2.5\n";
    let settings = format!("labour_rate: 48.00\ncurrency: EUR\n{tax}");
    Cli::new().job(&job).file("shop.yaml", settings.as_bytes()).file("kestrel-prices.csv", &std::fs::read(root().join("samples/kestrel-prices.csv")).unwrap())
}

/// The text as laid out (a table's row on one line), words joined by single spaces.
fn words(pdf: &std::path::Path) -> String {
    crate::pdf::Pdf::open(pdf).words()
}

#[test]
fn a_pairs_invoice_totals_to_the_hundredth() {
    let o = billed_pair("tax_rate: 20 %\ntax_name: VAT\n").args(["report", "{job}", "--template", "invoice", "-o", "{dir}/i.pdf"]).run();
    o.code(0);
    let t = words(&o.dir.join("i.pdf"));
    // From kestrel-prices.csv, in hundredths: C1 3.3 uF 250 V film 240, C2 10 uF 250 V film
    // 485, R9 (0.82 ohm, 3 W: the 5 W stock item) 65, each twice (both cabinets); R1 2.2 ohm
    // 10 W cement 90, once (KB-5121 only).
    let parts: i64 = 2 * 240 + 2 * 485 + 2 * 65 + 90;
    let labour: i64 = 4800 * 25 / 10; // 2.5 h at 48.00
    let subtotal = parts + labour;
    // 20 % of 136.70 is 27.34 exactly; rounding half up would apply to a fraction.
    let tax = (subtotal * 2000 + 5000) / 10_000;
    let total = subtotal + tax;
    let money = |h: i64| format!("{}.{:02}", h / 100, h % 100);
    for want in [
        "Invoice KR-2026-0311".to_string(),
        "The work on the pair: both cabinets.".to_string(),
        "2 3.3 µF capacitor, polypropylene film, 250 V C1 2.40 4.80".to_string(),
        "1 2.2 Ω resistor, cement, 10 W R1 0.90 0.90".to_string(),
        format!("Parts {}", money(parts)),
        format!("Labour, 2.5 h at 48.00 EUR an hour {}", money(labour)),
        format!("Subtotal {}", money(subtotal)),
        format!("VAT at 20 % {}", money(tax)),
        format!("Total (EUR) {}", money(total)),
    ] {
        assert!(t.contains(&want), "{want}\n{t}");
    }
    assert_eq!(money(total), "164.04");
    // An invoice is not a report of figures: no amplifier, no levels, nothing attached.
    assert!(!t.contains("Figures worked out") && !t.contains("dB"), "{t}");
}

#[test]
fn a_fractional_tax_rounds_half_up_and_no_tax_is_said() {
    // 7.5 % of 136.70 is 10.2525: 10.25.
    let o = billed_pair("tax_rate: 7.5 %\n").args(["report", "{job}", "--template", "invoice", "-o", "{dir}/i.pdf"]).run();
    o.code(0);
    let t = words(&o.dir.join("i.pdf"));
    assert!(t.contains("Tax at 7.5 % 10.25") && t.contains("Total (EUR) 146.95"), "{t}");
    let o = billed_pair("").args(["report", "{job}", "--template", "invoice", "-o", "{dir}/i.pdf"]).run();
    o.code(0);
    let t = words(&o.dir.join("i.pdf"));
    assert!(t.contains("No tax is charged on this invoice.") && t.contains("Total (EUR) 136.70") && !t.contains("Subtotal"), "{t}");
}

#[test]
fn an_invoice_is_refused_with_a_hint_when_it_cannot_be_priced() {
    // No work done.
    Cli::new()
        .args(["report", "tests/reader/inspection-only.yaml", "--template", "invoice", "-o", "{dir}/i.pdf"])
        .run()
        .code(1)
        .stderr_has("an invoice bills the work done")
        .stderr_has("(--template customer or archive)");
    // A quotation's job, with options proposed: the hint names the quotation.
    Cli::new()
        .args(["report", "samples/quote-three-options.yaml", "--template", "invoice", "-o", "{dir}/i.pdf"])
        .run()
        .code(1)
        .stderr_has("hint: for work not done yet, write a quotation");
    // No price list.
    Cli::new()
        .args(["report", "samples/two-way-recap.yaml", "--template", "invoice", "-o", "{dir}/i.pdf"])
        .run()
        .code(1)
        .stderr_has("the parts fitted are not priced")
        .stderr_has("hint: name the shop's price list under `prices.list`");
    // A part the list does not hold: the 2.2 ohm cement resistor gone from the list.
    let list = std::fs::read_to_string(root().join("samples/kestrel-prices.csv")).unwrap().replace("resistor,2.2 ohm,10 W,cement,0.90\n", "");
    let o = billed_pair("").file("kestrel-prices.csv", list.as_bytes()).args(["report", "{job}", "--template", "invoice", "-o", "{dir}/i.pdf"]).run();
    o.code(1).stderr_has("1 of the parts fitted is not in the price list: R1 (2.2 ohm resistor)").stderr_has("hint: add them");
    assert!(!o.dir.join("i.pdf").exists(), "no partly written invoice");
    // Labour with no rate.
    let job = std::fs::read_to_string(root().join("samples/pair-recap.yaml")).unwrap() + "\nservice:\n  labour_hours: 1\n";
    Cli::new()
        .job(&job)
        .file("kestrel-prices.csv", &std::fs::read(root().join("samples/kestrel-prices.csv")).unwrap())
        .args(["report", "{job}", "--template", "invoice", "-o", "{dir}/i.pdf"])
        .run()
        .code(1)
        .stderr_has("1 h of labour but no hourly rate");
    // A tax rate that is not one, located in the settings file.
    billed_pair("tax_rate: 20\n").args(["check", "{job}"]).run().code(1).stderr_has("\"20\" is not a tax rate");
}
