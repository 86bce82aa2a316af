//! Options: each one's figures are those of a job whose `changes` are its steps, solved as any
//! job is (the text of the option's steps moved into a job of its own, here); the
//! recommendation follows its rule; prices and labour add up in exact hundredths.

use serde_json::Value;

use crate::util::{root, Cli};

const SAMPLE: &str = "samples/quote-three-options.yaml";

fn solve_text(text: &str, files: &[&str]) -> Value {
    let mut cli = Cli::new().job(text);
    for f in files {
        cli = cli.file(f, &std::fs::read(root().join("samples").join(f)).unwrap());
    }
    let o = cli.args(["solve", "{job}", "--format", "json"]).run();
    o.code(0);
    serde_json::from_str(&o.stdout).unwrap()
}

/// The sample without its options, quote and prices, and each option's `changes` and
/// `compensate` blocks moved to the top level (indent 4 -> 0), as a job of its own.
fn as_jobs(text: &str) -> (String, Vec<(String, String)>) {
    let lines: Vec<&str> = text.lines().collect();
    let start = lines.iter().position(|l| l.starts_with("options:")).unwrap();
    let end = start + 1 + lines[start + 1..].iter().position(|l| !l.is_empty() && !l.starts_with(' ') && !l.starts_with('#')).unwrap();
    let mut options: Vec<(String, String)> = Vec::new();
    let mut section = false;
    for l in &lines[start + 1..end] {
        if l.len() > 2 && l.starts_with("  ") && !l.starts_with("   ") {
            options.push((l.trim().trim_end_matches(':').to_string(), String::new()));
            continue;
        }
        if l.starts_with("    ") && !l.starts_with("     ") {
            section = l.trim_start().starts_with("changes:") || l.trim_start().starts_with("compensate:");
        }
        if section {
            let o = options.last_mut().unwrap();
            o.1.push_str(l.get(4..).unwrap_or(""));
            o.1.push('\n');
        }
    }
    let mut base: Vec<&str> = lines[..start].to_vec();
    let rest: Vec<&str> = lines[end..].to_vec();
    // Drop the prices and quote sections: the job of an option is solved bare.
    let mut skip = false;
    for l in rest {
        if !l.starts_with(' ') && !l.is_empty() {
            skip = l.starts_with("prices:") || l.starts_with("quote:");
        }
        if !skip {
            base.push(l);
        }
    }
    (base.join("\n").replace("template: quote", "template: customer"), options)
}

#[test]
fn each_option_is_the_job_whose_changes_are_its_steps() {
    let text = std::fs::read_to_string(root().join(SAMPLE)).unwrap();
    let all = solve_text(&text, &["northwater-prices.csv"]);
    let (base, options) = as_jobs(&text);
    assert_eq!(options.len(), 3);
    let order: Vec<String> = all["option_order"].as_array().unwrap().iter().map(|v| v.as_str().unwrap().to_string()).collect();
    assert_eq!(order, options.iter().map(|o| o.0.clone()).collect::<Vec<_>>(), "the job's order");
    for (name, steps) in &options {
        let alone = solve_text(&format!("{base}\n{steps}"), &[]);
        let o = &all["options"][name];
        assert_eq!(o["levels"], alone["levels"], "{name}: levels");
        assert_eq!(o["load"], alone["load"]["as_left"], "{name}: load");
        let stress: Vec<&Value> = alone["stress"].as_array().unwrap().iter().filter(|r| r["scenario"] == "as_left").collect();
        assert_eq!(o["stress"].as_array().unwrap().iter().collect::<Vec<_>>(), stress, "{name}: stress");
        assert_eq!(o["crossovers"], alone["crossovers"], "{name}: crossovers");
    }
}

#[test]
fn option_totals_are_the_list_prices_and_labour_in_hundredths() {
    let text = std::fs::read_to_string(root().join(SAMPLE)).unwrap();
    let j = solve_text(&text, &["northwater-prices.csv"]);
    // northwater-prices.csv: 3.3 uF 100 V electrolytic 0.60, 10 uF 100 V electrolytic 0.75,
    // 3.3 uF 250 V film 2.40, 10 uF 250 V film 4.85, 0.91 ohm 5 W 0.45; labour 48.00 an hour.
    let want = [("like-for-like", 60 + 75 + 4800), ("film-matched", 240 + 485 + 45 + 7200), ("film-only", 240 + 485 + 4800)];
    for (name, cents) in want {
        assert_eq!(j["options"][name]["total"], format!("{}.{:02}", cents / 100, cents % 100), "{name}");
    }
    assert_eq!(j["options"]["film-matched"]["labour"], "72.00");
}

#[test]
fn the_recommendation_is_the_closest_option_not_the_cheapest() {
    let text = std::fs::read_to_string(root().join(SAMPLE)).unwrap();
    // Make film-only the cheapest by far (no labour at all) and drop like-for-like: the rule
    // must still choose film-matched, which keeps the tweeter closest to its design.
    let a = text.find("  like-for-like:").unwrap();
    let b = text.find("  film-matched:").unwrap();
    let text = format!("{}{}", &text[..a], &text[b..])
        .replace("Film capacitors alone. Longer life, but the tweeter plays a little louder than designed.\n    labour_hours: 1.0", "Film capacitors alone.\n    labour_hours: 0");
    let j = solve_text(&text, &["northwater-prices.csv"]);
    let total = |n: &str| j["options"][n]["total"].as_str().unwrap().parse::<f64>().unwrap();
    assert!(total("film-only") < total("film-matched"), "the constructed case: film-only is the cheaper");
    let score = |n: &str| j["options"][n]["score_db"].as_f64().unwrap();
    assert!(score("film-matched") < score("film-only"));
    assert_eq!(j["recommended"]["option"], "film-matched");
    assert_eq!(j["recommended"]["named"], false);
    // A job that names its choice gets it.
    let named = text.replace("  labour_rate: 48.00", "  labour_rate: 48.00\n  recommend: film-only");
    let j = solve_text(&named, &["northwater-prices.csv"]);
    assert_eq!(j["recommended"]["option"], "film-only");
    assert_eq!(j["recommended"]["named"], true);
    // A name that is no option is a located error with its suggestion.
    let bad = text.replace("  labour_rate: 48.00", "  labour_rate: 48.00\n  recommend: film-matchd");
    let o = Cli::new().job(&bad).file("northwater-prices.csv", &std::fs::read(root().join("samples/northwater-prices.csv")).unwrap()).args(["check", "{job}"]).run();
    o.code(1).stderr_has("quote.recommend: there is no option \"film-matchd\"").stderr_has("did you mean `film-matched`?");
}

#[test]
fn the_quote_renders_the_options_side_by_side_with_a_line_to_sign() {
    let o = Cli::new().args(["report", SAMPLE, "--template", "quote", "-o", "{dir}/q.pdf"]).run();
    o.code(0);
    let text = crate::pdf::Pdf::open(&o.dir.join("q.pdf")).words();
    for want in ["Quotation", "like-for-like (recommended)", "film-matched", "film-only", "Recommended: like-for-like", "signature", "49.35 EUR", "No work has been done yet"] {
        assert!(text.contains(want), "{want}: {text}");
    }
    for jargon in ["|Z|", "EPDR", "ESR"] {
        assert!(!text.contains(jargon), "{jargon} in the quote");
    }
}

#[test]
fn a_job_block_shows_one_option_with_what_it_was_computed_from() {
    let text = std::fs::read_to_string(root().join(SAMPLE)).unwrap().replace("  template: quote", "  template: archive\n  blocks: [{ option: film-matched }]");
    let prices = std::fs::read(root().join("samples/northwater-prices.csv")).unwrap();
    let o = Cli::new().job(&text).file("northwater-prices.csv", &prices).args(["report", "{job}", "-o", "{dir}/o.pdf"]).run();
    o.code(0);
    let pdf = crate::pdf::Pdf::open(&o.dir.join("o.pdf")).words();
    for want in [
        "Option: film-matched",
        "Computed from the speaker as found (three bench readings) with this option's three steps: replace C1, replace C2, and insert R9; R9 solved for HF.",
        "Total with parts 79.70 EUR",
    ] {
        assert!(pdf.to_lowercase().contains(&want.to_lowercase()), "{want}: {pdf}");
    }
    assert!(!pdf.contains("Option: film-only"), "only the named option");
    let bad = text.replace("{ option: film-matched }", "{ option: film-mached }");
    let o = Cli::new().job(&bad).file("northwater-prices.csv", &prices).args(["check", "{job}"]).run();
    o.code(1).stderr_has("report.blocks.option: there is no option \"film-mached\"").stderr_has("did you mean `film-matched`?");
}

#[test]
fn after_the_work_the_report_says_which_option_was_done_and_that_it_did_what_was_quoted() {
    let text = std::fs::read_to_string(root().join(SAMPLE)).unwrap();
    let (_, options) = as_jobs(&text);
    let (_, steps) = options.iter().find(|o| o.0 == "film-matched").unwrap();
    // The work done: film-matched's steps (and its compensate entry) at the top level.
    let done = text.replace("options:                            # offered before the work, in this order", &format!("{steps}\noptions:"));
    let j = solve_text(&done, &["northwater-prices.csv"]);
    assert_eq!(j["chosen"]["option"], "film-matched");
    assert!(j["chosen"]["largest_difference_db"].as_f64().unwrap() < 1e-9, "the same steps on the same speaker");
    assert!(j["chosen"]["sentence"].as_str().unwrap().contains("does what the quotation said"));
    // Work that is none of the options is said to be none of them.
    let other = done.replacen("with: { value: 3.3 uF, esr: 0.012 ohm", "with: { value: 3.9 uF, esr: 0.012 ohm", 1);
    let j = solve_text(&other, &["northwater-prices.csv"]);
    assert!(j["chosen"]["option"].is_null());
}

const PAIR: &str = "samples/pair-quote.yaml";

/// A price string ("12.40") as whole hundredths, read without floating point.
fn cents(s: &Value) -> i64 {
    let s = s.as_str().unwrap_or_else(|| panic!("not a price: {s}"));
    let (units, hundredths) = s.split_once('.').unwrap();
    units.parse::<i64>().unwrap() * 100 + hundredths.parse::<i64>().unwrap()
}

#[test]
fn a_pair_option_is_the_pair_job_whose_common_changes_are_its_steps() {
    let text = std::fs::read_to_string(root().join(PAIR)).unwrap();
    let all = solve_text(&text, &["kestrel-prices.csv"]);
    let (base, options) = as_jobs(&text);
    assert_eq!(options.len(), 2);
    for (name, steps) in &options {
        // The option's steps as the pair's common changes; the second cabinet's own R1
        // replacement still follows them.
        let alone = solve_text(&format!("{base}\n{steps}"), &[]);
        let o = &all["options"][name];
        for cab in ["KB-5204", "KB-5205"] {
            let (q, a) = (&o["cabinets"][cab], &alone["cabinets"][cab]);
            assert_eq!(q["levels"], a["levels"], "{name} {cab}: levels");
            assert_eq!(q["load"], a["load"]["as_left"], "{name} {cab}: load");
            let stress: Vec<&Value> = a["stress"].as_array().unwrap().iter().filter(|r| r["scenario"] == "as_left").collect();
            assert_eq!(q["stress"].as_array().unwrap().iter().collect::<Vec<_>>(), stress, "{name} {cab}: stress");
        }
        assert_eq!(o["pair_match"], alone["pair_match"], "{name}: pair match");
        assert_eq!(o["levels"], alone["cabinets"]["KB-5204"]["levels"], "{name}: the top is the first cabinet");
    }
}

#[test]
fn a_pair_option_buys_parts_for_both_cabinets_and_labour_for_the_job() {
    let text = std::fs::read_to_string(root().join(PAIR)).unwrap();
    let j = solve_text(&text, &["kestrel-prices.csv"]);
    let o = &j["options"]["like-for-like"];
    let line = |o: &Value, value: &str| o["parts"].as_array().unwrap().iter().find(|l| l["value"] == value).cloned().unwrap_or_else(|| panic!("{value}: {}", o["parts"]));
    // Two capacitors of each value (one per cabinet) and the one cabinet's pad resistor.
    assert_eq!(line(o, "3.3 uF")["quantity"], 2);
    assert_eq!(line(o, "10 uF")["quantity"], 2);
    assert_eq!(line(o, "2.2 ohm")["quantity"], 1);
    // kestrel-prices.csv: 3.3 uF 100 V electrolytic 0.85, 10 uF 100 V electrolytic 1.10,
    // 2.2 ohm 10 W cement 0.90; labour 2.0 h at 52.00 for the whole job.
    assert_eq!(cents(&o["total"]), 2 * 85 + 2 * 110 + 90 + 10400);
    // film-matched: whatever R9 was fitted, the total is its lines' prices and 2.5 h.
    let f = &j["options"]["film-matched"];
    let lines: i64 = f["parts"].as_array().unwrap().iter().map(|l| cents(&l["price"])).sum();
    assert_eq!(cents(&f["total"]), lines + 13000);
    assert_eq!(line(f, "3.3 uF")["quantity"], 2);
    assert!(j["recommended"]["reason"].as_str().unwrap().starts_with("Recommended: "), "{}", j["recommended"]);
}

#[test]
fn a_pair_quote_renders_both_cabinets_options_with_a_line_to_sign() {
    let o = Cli::new().args(["report", PAIR, "-o", "{dir}/q.pdf"]).run();
    o.code(0);
    let text = crate::pdf::Pdf::open(&o.dir.join("q.pdf")).words();
    for want in ["Quotation", "like-for-like", "film-matched", "signature", "Parts are counted and prices given for both cabinets"] {
        assert!(text.contains(want), "{want}: {text}");
    }
    for jargon in ["|Z|", "EPDR", "ESR"] {
        assert!(!text.contains(jargon), "{jargon} in the quote");
    }
}

#[test]
fn an_option_with_a_new_caution_yields_to_one_whose_every_verdict_is_ok() {
    let text = std::fs::read_to_string(root().join(SAMPLE)).unwrap();
    // like-for-like's C1 peaks near 38.3 V (the stress table): a 45 V part is above 80 % of
    // its rating (a "check", common practice) though not over it; the original's is 100 V.
    let ll = "with: { value: 3.3 uF, esr: 0.9 ohm, rating: 100 V, type: bipolar electrolytic }";
    assert!(text.contains(ll));
    let checked = text.replacen(ll, &ll.replace("100 V", "45 V"), 1);
    let j = solve_text(&checked, &["northwater-prices.csv"]);
    assert_eq!(j["options"]["like-for-like"]["verdicts_ok"], false);
    assert!(j["options"]["like-for-like"]["to_check"][0].as_str().unwrap().starts_with("C1: peaks at"), "{}", j["options"]["like-for-like"]["to_check"]);
    assert_eq!(j["recommended"]["option"], "film-matched", "the closest with every verdict ok");
    // Every option with that caution: the closest of those with none over, and it says what
    // is left to check.
    let film = "with: { value: 3.3 uF, esr: 0.012 ohm, rating: 250 V, type: polypropylene film }";
    let all = checked.replace(film, &film.replace("250 V", "45 V"));
    let j = solve_text(&all, &["northwater-prices.csv"]);
    assert_eq!(j["recommended"]["option"], "like-for-like");
    assert!(j["recommended"]["reason"].as_str().unwrap().contains("leaves C1 to check"), "{}", j["recommended"]["reason"]);
    // One over its rating is passed over for the others.
    let over = text.replacen(ll, &ll.replace("100 V", "30 V"), 1);
    let j = solve_text(&over, &["northwater-prices.csv"]);
    assert!(!j["options"]["like-for-like"]["over"].as_array().unwrap().is_empty());
    assert_eq!(j["recommended"]["option"], "film-matched");
}

fn quote_text(sample: &str) -> String {
    let o = Cli::new().args(["report", sample, "--template", "quote", "-o", "{dir}/q.pdf"]).run();
    o.code(0);
    crate::pdf::Pdf::open(&o.dir.join("q.pdf")).words()
}

#[test]
fn a_quote_of_one_proposal_offers_the_work_in_the_future_and_asks_for_acceptance() {
    // The two-way sample has `changes` and no options: the quotation offers those changes.
    let text = quote_text("samples/two-way-recap.yaml");
    // It names no price list: nothing is priced, and the customer agrees to the work, not to
    // a price.
    for want in [
        "Work proposed",
        "Replace C1, a capacitor in the tweeter's filter",
        "Fit R9",
        "After the proposed work",
        "Parts to buy",
        // A sentence with a verb (it read "The work proposed above agreed, to be priced ...").
        "I agree to the work proposed above; the shop prices what is not yet priced before the work starts.",
        "Nothing in this quotation is priced yet",
    ] {
        assert!(text.contains(want), "{want}: {text}");
    }
    // Nothing is said to have been done, no option is asked for, no price is claimed.
    for wrong in ["Work done", "Replaced C1", "Fitted R9", "Option chosen", "Prices are for", "accepted as quoted", "at the prices quoted"] {
        assert!(!text.contains(wrong), "{wrong}: {text}");
    }
    // With options, the customer writes the one chosen and prices are stated for what they
    // cover: one cabinet's network, of a job that lists two serials.
    let text = quote_text(SAMPLE);
    assert!(
        text.contains("Option chosen") && text.contains("Prices are for the parts and labour listed, for one cabinet (the job lists two serials, each priced alike);"),
        "{text}"
    );
    // A pair's proposal is priced for both cabinets, labour and all.
    let text = quote_text("samples/pair-recap.yaml");
    for want in [
        "Prices are for the parts listed, for the whole job, both cabinets; labour is not included",
        "I accept the work proposed above at the prices quoted.",
        "After the proposed work, the two cabinets would match",
    ] {
        assert!(text.contains(want), "{want}: {text}");
    }
    assert!(!text.contains("now match") && !text.contains("was left in place"), "{text}");
}

#[test]
fn a_quote_of_a_job_that_proposes_nothing_is_refused_with_a_hint_and_writes_no_file() {
    let text = std::fs::read_to_string(root().join("samples/two-way-recap.yaml")).unwrap();
    // Its changes and the compensation they ask for, cut out.
    let (start, end) = (text.find("\nchanges:").unwrap(), text.find("\nanalysis:").unwrap());
    let bare = format!("{}{}", &text[..start], &text[end..]);
    assert!(!bare.contains("\nchanges:") && !bare.contains("\noptions:"));
    let o = Cli::new().job(&bare).args(["report", "{job}", "--template", "quote", "-o", "{dir}/q.pdf"]).run();
    o.code(1).stderr_has("a quotation offers work, and this job lists neither `options` nor `changes`").stderr_has("hint: list the customer's choices under `options`");
    assert!(!o.dir.join("q.pdf").exists(), "no file is written");
    // The same job still makes its customer report.
    Cli::new().job(&bare).args(["report", "{job}", "-o", "{dir}/r.pdf"]).run().code(0);
}
