//! The reader's harness: every sample and every job under tests/ rendered with every template
//! that applies, its text read back page by page (tests/it/pdf.rs), and
//! invariants that hold for every report checked on all of them, so a new capability cannot
//! add a false or unreadable sentence unseen.
//!
//! Each invariant names, in its comment, the case it failed on before the fix that made it
//! hold. The invariants read the PDF as a reader would and the JSON of `solve` as an outside
//! check would; none reads the report's data or calls the code that wrote a sentence.

use std::path::{Path, PathBuf};
use std::process::Command;

use crate::pdf;
use crate::util::{bin, root};

const TEMPLATES: [&str; 5] = ["customer", "archive", "sale", "quote", "invoice"];

/// Every job the harness reads: the samples, the reference networks, the sweep networks and
/// the harness's own jobs (tests/reader/, each made for a sentence that once read false).
pub fn jobs() -> Vec<PathBuf> {
    let mut out = Vec::new();
    for dir in ["samples", "tests/reference", "tests/reader"] {
        let Ok(entries) = std::fs::read_dir(root().join(dir)) else { continue };
        let mut list: Vec<PathBuf> = entries.flatten().map(|e| e.path()).filter(|p| p.extension().is_some_and(|x| x == "yaml")).collect();
        list.sort();
        for p in list {
            // A shop's settings file is not a job.
            if std::fs::read_to_string(&p).unwrap().lines().any(|l| l.starts_with("voicekeep:")) {
                out.push(p);
            }
        }
    }
    out
}

/// One report as its reader sees it.
pub(crate) struct Report {
    pub(crate) job: String,
    pub(crate) template: &'static str,
    /// The text of each page in lines from its top, words joined by single spaces.
    pub(crate) pages: Vec<String>,
    /// Every line of every page, in order, words joined by single spaces.
    pub(crate) lines: Vec<String>,
    /// Per page: how far down the body the last text reaches (0 top, 1 the foot of the body),
    /// and the last line of the body.
    pub(crate) ends: Vec<(f64, String)>,
    /// Whether the PDF carries embedded files.
    pub(crate) attached: bool,
}

impl Report {
    pub(crate) fn text(&self) -> String {
        self.pages.join(" ")
    }
    pub(crate) fn plain(&self) -> bool {
        self.template != "archive"
    }
    /// A report of the speaker's figures: not a quotation (before the work) nor an invoice
    /// (a bill, which states no figure but money).
    fn states_figures(&self) -> bool {
        self.template != "quote" && self.template != "invoice"
    }
    pub(crate) fn name(&self) -> String {
        format!("{} ({})", self.job, self.template)
    }
}

pub(crate) struct Job {
    pub(crate) name: String,
    /// The job file's text, for what the tests read from it directly, not through the program.
    pub(crate) yaml: String,
    /// The speaker's rated impedance as the job file types it (`rated_impedance: 4 ohm`).
    pub(crate) rated_ohm: Option<f64>,
    pub(crate) json: serde_json::Value,
    pub(crate) reports: Vec<Report>,
}

fn squash(s: &str) -> String {
    s.split_whitespace().collect::<Vec<_>>().join(" ")
}

/// The body's extent on each page from its words' boxes (tests/it/pdf.rs): the page less its
/// 20 mm margins (the templates' page set-up), where the header and footer sit.
fn page_ends(doc: &pdf::Pdf) -> Vec<(f64, String)> {
    let margin = 20.0 / 25.4 * 72.0;
    doc.pages
        .iter()
        .map(|page| {
            let (top, foot) = (margin, page.height - margin);
            let body: Vec<&Vec<pdf::Word>> = page.lines.iter().filter(|l| l.iter().all(|w| w.top >= top && w.bottom <= foot)).collect();
            let lowest = body.iter().flat_map(|l| l.iter().map(|w| w.bottom)).fold(top, f64::max);
            let last = body.last().map(|l| l.iter().map(|w| w.text.as_str()).collect::<Vec<_>>().join(" ")).unwrap_or_default();
            ((lowest - top) / (foot - top), last)
        })
        .collect()
}

fn read(job: &Path, template: &'static str, dir: &Path) -> Option<Report> {
    let stem = job.file_stem().unwrap().to_string_lossy().to_string();
    let pdf = dir.join(format!("{stem}-{template}.pdf"));
    let o = Command::new(bin()).current_dir(root()).arg("report").arg(job).args(["--template", template, "-o"]).arg(&pdf).output().unwrap();
    match o.status.code() {
        Some(0) => {}
        // A template that does not apply to this job is refused in words, with a hint.
        Some(1) => {
            let err = String::from_utf8_lossy(&o.stderr);
            assert!(err.contains("hint:"), "{stem} ({template}) refused without a hint:\n{err}");
            // A hint names only templates that apply (failed before on inspection-only's
            // invoice, whose hint named the quotation that job refuses).
            for t in TEMPLATES.iter().filter(|t| err.contains(&format!("--template {t}")) || err.contains(&format!(" or {t})"))) {
                let again =
                    Command::new(bin()).current_dir(root()).arg("report").arg(job).args(["--template", t, "-o"]).arg(dir.join(format!("{stem}-hint-{t}.pdf"))).output().unwrap();
                assert!(again.status.success(), "{stem} ({template}): the hint names {t}, which this job refuses:\n{err}");
            }
            return None;
        }
        c => panic!("{stem} ({template}): exit {c:?}\n{}", String::from_utf8_lossy(&o.stderr)),
    }
    let doc = pdf::Pdf::open(&pdf);
    let pages: Vec<String> = doc.pages.iter().map(|p| squash(&p.plain().join(" "))).collect();
    let lines = doc.pages.iter().flat_map(|p| p.plain()).collect();
    let attached = !doc.attachments().is_empty();
    Some(Report { job: stem, template, pages, lines, ends: page_ends(&doc), attached })
}

/// Every job under every template, rendered two at a time (the machine's two cores).
pub(crate) fn all() -> &'static Vec<Job> {
    static ALL: std::sync::OnceLock<Vec<Job>> = std::sync::OnceLock::new();
    ALL.get_or_init(|| {
        let dir = tempdir();
        let list = jobs();
        let halves: Vec<Vec<PathBuf>> = vec![list.iter().step_by(2).cloned().collect(), list.iter().skip(1).step_by(2).cloned().collect()];
        let mut out: Vec<Job> = std::thread::scope(|s| {
            let handles: Vec<_> = halves
                .iter()
                .map(|half| {
                    let dir = dir.clone();
                    s.spawn(move || {
                        half.iter()
                            .map(|job| {
                                let o = Command::new(bin()).current_dir(root()).arg("solve").arg(job).args(["--format", "json"]).output().unwrap();
                                let json: serde_json::Value = serde_json::from_slice(&o.stdout).unwrap_or_else(|e| panic!("{}: {e}", job.display()));
                                let reports = TEMPLATES.iter().filter_map(|t| read(job, t, &dir)).collect();
                                let yaml = std::fs::read_to_string(root().join(job)).unwrap_or_default();
                                let rated_ohm = figures(&yaml, "rated_impedance: ", " ohm").first().copied();
                                Job { name: job.file_stem().unwrap().to_string_lossy().to_string(), yaml, rated_ohm, json, reports }
                            })
                            .collect::<Vec<_>>()
                    })
                })
                .collect();
            handles.into_iter().flat_map(|h| h.join().unwrap()).collect()
        });
        out.sort_by(|a, b| a.name.cmp(&b.name));
        let _ = std::fs::remove_dir_all(&dir);
        out
    })
}

fn tempdir() -> PathBuf {
    let d = std::env::temp_dir().join(format!("voicekeep-reader-{}", std::process::id()));
    std::fs::create_dir_all(&d).unwrap();
    d
}

/// Fails with every violation found, one per line.
fn verdict(name: &str, problems: Vec<String>) {
    assert!(problems.is_empty(), "{name}: {} violation(s):\n{}", problems.len(), problems.join("\n"));
}

/// Each cabinet's results: a pair's under `cabinets`, a single job's at the top.
fn cabinets(json: &serde_json::Value) -> Vec<&serde_json::Value> {
    match json.get("cabinets").and_then(|c| c.as_object()) {
        Some(c) => c.values().collect(),
        None => vec![json],
    }
}

/// Numbers that follow `before` and precede `after` in `text` ("up to 60 W" -> 60).
fn figures(text: &str, before: &str, after: &str) -> Vec<f64> {
    let mut out = Vec::new();
    for (i, _) in text.match_indices(before) {
        let rest = &text[i + before.len()..];
        let num: String = rest.chars().take_while(|c| c.is_ascii_digit() || *c == '.' || *c == ',').collect();
        if rest[num.len()..].starts_with(after) {
            if let Ok(v) = num.replace(',', "").parse() {
                out.push(v);
            }
        }
    }
    out
}

/// Every level difference in dB a text prints ("+0.62 dB", "223.53 dB below"); an absolute
/// sound pressure level ("90 dB SPL") is not a difference.
fn decibels(text: &str) -> Vec<f64> {
    let mut out = Vec::new();
    for (i, _) in text.match_indices(" dB").filter(|(i, _)| !text[i + 3..].starts_with(" SPL")) {
        let head = &text[..i];
        let num: String = head.chars().rev().take_while(|c| c.is_ascii_digit() || *c == '.' || *c == '+' || *c == '-' || *c == '−').collect::<Vec<_>>().into_iter().rev().collect();
        if let Ok(v) = num.replace('−', "-").trim_start_matches('+').parse::<f64>() {
            out.push(v);
        }
    }
    out
}

/// The power this speaker suits is one figure, the same in every report of a job and the same
/// as the JSON's `power_range.suits_w` (a set's: the least of its cabinets'). Failed before on
/// two-way-recap: the customer read "up to 60 W into 8 Ω", the buyer "up to 14 W", the archive
/// 529 W.
#[test]
fn the_power_a_speaker_suits_is_one_figure_in_every_report() {
    let mut bad = Vec::new();
    for job in all() {
        let suits: Vec<f64> = cabinets(&job.json).iter().filter_map(|c| c["power_range"]["suits_w"].as_f64()).collect();
        let least = suits.iter().cloned().fold(f64::INFINITY, f64::min);
        for r in &job.reports {
            let text = r.text();
            let stated = figures(&text, "suits an amplifier of up to ", " W");
            if r.states_figures() && stated.is_empty() && least.is_finite() {
                bad.push(format!("{}: no \"suits an amplifier of up to N W\"", r.name()));
            }
            for v in &stated {
                if (v - least).abs() > 1e-9 {
                    bad.push(format!("{}: says {v} W, the JSON {least} W", r.name()));
                }
            }
            // "Up to 100 W into 8 ohm" read on a 4 ohm speaker takes the amplifier's rated
            // load for the speaker's: a plain report names a load beside the power only when
            // it is the speaker's. Failed before on three-way-mid-table (4 ohm speaker, an
            // amplifier rated into 8 ohm).
            if let (true, Some(rated)) = (r.plain(), job.rated_ohm) {
                // pdftotext gives the unit as "8Ω" (its narrow space dropped) or "8 Ω".
                let units = text.replace(" Ω", "Ω");
                for v in figures(&units, "W per channel into ", "Ω") {
                    if (v - rated).abs() > 1e-9 {
                        bad.push(format!("{}: \"W per channel into {v} ohm\" on a {rated} ohm speaker", r.name()));
                    }
                }
            }
            // No other amplifier power in a plain report.
            if r.plain() {
                for v in figures(&text, "up to ", " W") {
                    if (v - least).abs() > 1e-9 {
                        bad.push(format!("{}: \"up to {v} W\" beside the {least} W the speaker suits", r.name()));
                    }
                }
            }
        }
    }
    verdict("power", bad);
}

/// A plain report (customer, sale, quote) prints no level beyond 40 dB either way (a silenced
/// driver is a fault, in words), none of the trade's jargon, no standard's number, no hash and
/// no "from memory". Failed before on repair-like-for-like's archive ("-223.53 dB") and the
/// quotes' cautions.
#[test]
fn plain_reports_print_no_fault_as_a_figure_and_no_jargon() {
    let mut bad = Vec::new();
    for job in all() {
        for r in &job.reports {
            let text = r.text();
            for v in decibels(&text) {
                if v.abs() > 40.0 {
                    bad.push(format!("{}: {v} dB printed as a level", r.name()));
                }
            }
            if !r.plain() {
                continue;
            }
            // "E24", " RMS" and "loss resistance" failed before on quote-three-options' quote
            // and sweep-diagnosis' customer report; "PTC" on repair-like-for-like's inspection.
            for word in [
                "ESR",
                "EPDR",
                "|Z|",
                "DCR",
                "IEC ",
                "60268",
                "60065",
                "62368",
                "60063",
                "from memory",
                "SHA-256",
                "tan δ",
                "E24",
                "E12",
                " RMS",
                "loss resistance",
                "Impedance magnitude",
                "PTC",
            ] {
                if text.contains(word) {
                    bad.push(format!("{}: \"{word}\"", r.name()));
                }
            }
            let hex_run = text.split(|c: char| !c.is_ascii_hexdigit()).any(|w| w.len() >= 32);
            if hex_run {
                bad.push(format!("{}: a hash", r.name()));
            }
        }
    }
    verdict("plain", bad);
}

/// A quotation speaks of what is proposed, never of work done. Failed before on pair-recap's
/// quote ("The two cabinets now match", "L2 was left in place") and repair-like-for-like's (a
/// finished inspection and a warranty from the return date), and on two-way-recap's, which
/// priced nothing and ended "accepted as quoted"; and on every quote's work proposed ("Replace
/// C1 ... (was a bipolar electrolytic capacitor)", of a part still fitted).
#[test]
fn a_quote_speaks_of_work_proposed_not_done() {
    let mut bad = Vec::new();
    for job in all() {
        for r in job.reports.iter().filter(|r| r.template == "quote") {
            let text = r.text();
            for done in [
                "now match",
                "was replaced",
                "were replaced",
                "was left in place",
                "Work done",
                "were fitted",
                "was fitted",
                "Returned",
                "Work done and checked by",
                "accepted as quoted",
                "(was a",
            ] {
                if text.contains(done) {
                    bad.push(format!("{}: \"{done}\"", r.name()));
                }
            }
        }
    }
    verdict("quote", bad);
}

/// Every driver's level as left, as the JSON has it, is in every report but the quote (which
/// shows its options): a figure, or the fault in words.
#[test]
fn every_report_states_each_drivers_level_as_the_json_has_it() {
    let mut bad = Vec::new();
    for job in all() {
        for r in job.reports.iter().filter(|r| r.states_figures()) {
            let text = r.text();
            for cab in cabinets(&job.json) {
                for l in cab["levels"].as_array().unwrap() {
                    let v = l["as_left_db"].as_f64().unwrap();
                    let want = if v < -40.0 { "silent".to_string() } else { format!("{v:+.2} dB").replace("-0.00 dB", "+0.00 dB") };
                    if !text.contains(&want) {
                        bad.push(format!("{}: {} as left {want} missing", r.name(), l["driver"]));
                    }
                }
            }
        }
    }
    verdict("levels", bad);
}

/// `v` to three significant figures, trailing zeros dropped (5.80 -> "5.8"), written here
/// rather than taken from the code's own formatter.
fn sig3(v: f64) -> String {
    let decimals = (2 - v.abs().log10().floor() as i32).max(0) as usize;
    let t = format!("{v:.decimals$}");
    if t.contains('.') {
        t.trim_end_matches('0').trim_end_matches('.').to_string()
    } else {
        t
    }
}

/// The lowest impedance the JSON has as left is the one every report but the quote prints
/// (plain reports in their load sentence, the archive in its load table), and the archive
/// prints each fitted value the JSON has.
#[test]
fn every_report_states_the_load_and_the_fitted_values_the_json_has() {
    let mut bad = Vec::new();
    for job in all() {
        for r in job.reports.iter().filter(|r| r.states_figures()) {
            let text = r.text().replace(" Ω", "Ω");
            for cab in cabinets(&job.json) {
                let low = format!("{}Ω", sig3(cab["load"]["as_left"]["min_ohm"].as_f64().unwrap()));
                if !text.contains(&low) {
                    bad.push(format!("{}: the lowest impedance {low} missing", r.name()));
                }
                if r.template == "archive" {
                    for c in cab["compensation"].as_array().unwrap() {
                        let v = c["fitted_ohm"].as_f64().unwrap();
                        if v > 0.0 && !text.contains(&format!("{}Ω", sig3(v))) {
                            bad.push(format!("{}: {} fitted {v} ohm missing", r.name(), c["part"]));
                        }
                    }
                }
            }
        }
    }
    verdict("figures", bad);
}

/// The headings the templates print (templates/lib.typ), for the page-foot check.
fn headings() -> Vec<String> {
    let lib = std::fs::read_to_string(root().join("templates/lib.typ")).unwrap();
    let mut out = Vec::new();
    for line in lib.lines().filter(|l| l.contains("heading(") || l.contains("heading[")) {
        for part in line.split('[').skip(1) {
            let h = part.split(']').next().unwrap_or("");
            if !h.is_empty() && !h.contains('#') {
                out.push(h.to_string());
            }
        }
    }
    out
}

/// What is wrong with a document's pages: a page but the last filled less than a fifth, or
/// ending on a heading (`ends` as [`page_ends`] reads them).
fn page_problems(name: &str, ends: &[(f64, String)], heads: &[String]) -> Vec<String> {
    let mut bad = Vec::new();
    let n = ends.len();
    for (i, (fill, last)) in ends.iter().enumerate().filter(|(i, _)| i + 1 < n) {
        if *fill < 0.2 {
            bad.push(format!("{name} page {}: {:.0} % of the page", i + 1, 100.0 * fill));
        }
        if heads.iter().any(|h| last == h) {
            bad.push(format!("{name} page {}: ends on the heading \"{last}\"", i + 1));
        }
    }
    bad
}

/// No page but the last holds less than a fifth of a page, and no page ends on a heading.
/// It held on every job when it was written (the templates keep a heading with what follows
/// it); it is here for the next block, and the checker itself is tested below on pages made
/// to break it.
#[test]
fn pages_are_filled_and_no_heading_is_left_at_a_foot() {
    let heads = headings();
    assert!(heads.len() > 20, "headings read from lib.typ: {heads:?}");
    let mut bad = Vec::new();
    for job in all() {
        for r in &job.reports {
            bad.extend(page_problems(&r.name(), &r.ends, &heads));
        }
    }
    verdict("pages", bad);
}

#[test]
fn the_page_checker_finds_a_thin_page_and_a_heading_at_a_foot() {
    let heads = vec!["Parts to buy".to_string()];
    let ends = vec![(0.9, "a line".to_string()), (0.1, "a line".to_string()), (0.95, "Parts to buy".to_string()), (0.05, "the last".to_string())];
    let found = page_problems("t", &ends, &heads);
    assert_eq!(found, vec!["t page 2: 10 % of the page".to_string(), "t page 3: ends on the heading \"Parts to buy\"".to_string()]);
}

/// The harness reads what it claims to: every job, every template that applies.
#[test]
fn the_harness_reads_every_job_under_every_template() {
    let all = all();
    assert!(all.len() >= 14, "{} jobs", all.len());
    for job in all {
        let names: Vec<&str> = job.reports.iter().map(|r| r.template).collect();
        assert!(names.contains(&"customer") && names.contains(&"archive"), "{}: {names:?}", job.name);
        for r in &job.reports {
            assert!(!r.pages.is_empty() && r.pages.len() == r.ends.len(), "{}", r.name());
            assert!(r.text().contains(job.json["job"]["number"].as_str().unwrap()), "{}", r.name());
        }
    }
}

#[test]
fn the_readers_tools_find_what_they_look_for() {
    assert_eq!(figures("suits an amplifier of up to 1,200 W into", "up to ", " W"), vec![1200.0]);
    assert_eq!(figures("up to 60 Hz", "up to ", " W"), Vec::<f64>::new());
    assert_eq!(decibels("level -223.53 dB and +0.62 dB, 3 dB, 90 dB SPL"), vec![-223.53, 0.62, 3.0]);
    assert_eq!((sig3(5.8), sig3(5.7749), sig3(12.2), sig3(0.91), sig3(1500.0)), ("5.8".into(), "5.77".into(), "12.2".into(), "0.91".into(), "1500".into()));
}

/// A job with no work done (an inspection, or a quotation whose cabinet steps count only
/// within its options) shows no plot or sentence of the speaker "after the work". Failed
/// before on pair-quote's customer report: "The same as left, after the work: traces that lie
/// together show a matched pair" under the as-found traces.
#[test]
fn a_job_with_no_work_done_shows_nothing_after_the_work() {
    let mut bad = Vec::new();
    for job in all().iter().filter(|j| ["pair-quote", "quote-three-options", "inspection-only"].contains(&j.name.as_str())) {
        // Failed before on pair-quote's quote: its impedance plot said "each cabinet as left";
        // and on every plot of quote-three-options and inspection-only, whose legends named
        // "HF as left" and "|Z| as left" beside the very same curve as found.
        for r in &job.reports {
            let text = r.text();
            for wrong in ["each cabinet as left", "HF as left", "LF as left", "MF as left", "|Z| as left", "phase as left", "sum as left", "and as left (solid)"] {
                if text.contains(wrong) {
                    bad.push(format!("{}: \"{wrong}\"", r.name()));
                }
            }
        }
        for r in job.reports.iter().filter(|r| r.states_figures()) {
            let text = r.text();
            for wrong in ["The same as left, after the work", "in each cabinet as left, after the work", "After the work,", "Work done"] {
                if text.contains(wrong) {
                    bad.push(format!("{}: \"{wrong}\"", r.name()));
                }
            }
        }
    }
    verdict("no work", bad);
}

/// A plain report says what its figures are and warns the owner who plays test tones.
/// Failed before on every customer report ("the shop confirms them by measurement" with no
/// measurement in the job) and on two-way-recap, whose R9 passes its rating on a steady
/// full-level tone from about 14 W while the report said only "up to 60 W".
#[test]
fn plain_reports_say_the_figures_are_a_prediction_and_warn_of_steady_tones() {
    let mut bad = Vec::new();
    for job in all() {
        // The quote's terms promised "confirmed by measurement after the work" (every quote).
        for r in job.reports.iter().filter(|r| r.template == "quote") {
            if r.text().contains("confirmed by measurement") {
                bad.push(format!("{}: promises a measurement", r.name()));
            }
        }
        for r in job.reports.iter().filter(|r| r.plain() && r.states_figures()) {
            let text = r.text();
            if text.contains("confirms them by measurement") {
                bad.push(format!("{}: promises a measurement", r.name()));
            }
            // Of a set, the owner is told the lowest cabinet's figure, once.
            let lowest = cabinets(&job.json)
                .iter()
                .filter_map(|c| {
                    let p = &c["power_range"];
                    let (sine, suits) = (p["sine_max_w"].as_f64()?, p["suits_w"].as_f64().or(p["job_w"].as_f64())?);
                    (sine < suits).then_some(sine)
                })
                .reduce(f64::min);
            if let Some(sine) = lowest {
                // Two significant figures, rounded down, worked here from the JSON.
                let step = 10f64.powf(sine.log10().floor() - 1.0);
                let w = (sine / step + 1e-9).floor() * step;
                let want = format!("from about {} W of amplifier power", if w >= 10.0 { format!("{w:.0}") } else { format!("{w:.1}").trim_end_matches(".0").to_string() });
                if !text.contains("Test tones:") || !text.contains(&want) {
                    bad.push(format!("{}: no steady-tone caution \"{want}\"", r.name()));
                }
            }
        }
    }
    verdict("what the figures are", bad);
}

/// A set with nothing read on the bench says nothing of how its cabinets stood before the
/// work. Failed before on set-of-three-alike: "Difference as found 0.00 dB (alike)" and "The
/// three cabinets now match" with no reading behind either.
#[test]
fn a_set_read_nowhere_claims_no_difference_before_the_work() {
    let mut bad = Vec::new();
    for job in all().iter().filter(|j| j.json.get("cabinets").is_some()) {
        if read_on_bench(&job.yaml) {
            continue;
        }
        for r in job.reports.iter().filter(|r| r.states_figures()) {
            let t = r.text();
            if t.contains("now match") || t.contains("as they did before it") {
                bad.push(format!("{}: speaks of the cabinets before the work", r.name()));
            }
            if t.contains("How the cabinets") && !t.contains("not read on the bench") {
                bad.push(format!("{}: a difference as found with nothing read", r.name()));
            }
        }
    }
    verdict("set read nowhere", bad);
}

/// With nothing read on the bench before the work, no plot draws a curve "as found": it would
/// be the design's curve again under a name that says the speaker was measured. Failed before
/// on sweep-diagnosis (its "HF as found" line lay on 0 dB under a caption of the speaker as it
/// came in).
#[test]
fn a_job_read_nowhere_draws_no_curve_as_found() {
    let mut bad = Vec::new();
    for job in all() {
        // Work done: the job's own steps, or a cabinet's where no options are offered (an
        // option's steps are proposed, not done).
        let options = job.yaml.lines().any(|l| l.starts_with("options:"));
        let worked = job.yaml.lines().any(|l| l.starts_with("changes:") || (!options && l.trim_start().starts_with("changes:")));
        if read_on_bench(&job.yaml) || !worked {
            continue;
        }
        for r in &job.reports {
            let t = r.text();
            // "Each cabinet as found" failed before on set-of-three-alike's plot of the set.
            for wrong in ["HF as found", "LF as found", "MF as found", "|Z| as found", "as found (short dashes)", "Each cabinet as found against"] {
                if t.contains(wrong) {
                    bad.push(format!("{}: \"{wrong}\"", r.name()));
                }
            }
        }
    }
    verdict("nothing read", bad);
}

/// With nothing read on the bench, the archive's levels table prints no as-found figure (the
/// design's +0.00 dB under "As found" read as a finding beside a diagnosis of C1 16 % low) and
/// says why. Failed before on sweep-diagnosis's archive.
#[test]
fn an_archive_read_nowhere_prints_no_level_as_found() {
    let mut bad = Vec::new();
    let mut seen = 0;
    for job in all() {
        if read_on_bench(&job.yaml) || job.json.get("cabinets").is_some() {
            continue;
        }
        for r in job.reports.iter().filter(|r| r.template == "archive") {
            seen += 1;
            let t = r.text();
            if !t.contains("the as-found columns give no figure") {
                bad.push(format!("{}: the levels table does not say why as found has no figure", r.name()));
            }
            let Some(at) = t.find("Driver Role Band As designed As found") else { continue };
            let table: String = t[at..].chars().take(400).collect();
            if table.matches("not read").count() < job.json["levels"].as_array().map_or(1, |l| l.len()) {
                bad.push(format!("{}: an as-found level printed with nothing read: {table}", r.name()));
            }
        }
    }
    assert!(seen > 0, "no archive of a job read nowhere");
    verdict("nothing read", bad);
}

/// Whether a job file's text records anything read on the bench before the work: readings
/// (top level or a cabinet's) or a failed driver.
fn read_on_bench(yaml: &str) -> bool {
    yaml.lines().any(|l| l.trim_start().starts_with("measured:")) || yaml.contains("open: true") || yaml.contains("shorted: true") || yaml.contains("fault:")
}

/// A worn part the work left in place is given a reason a signer can stand behind: how far its
/// reading alone moves a driver. Failed before on pair-recap ("L2 was left in place: its effect
/// is part of the figures after the work", with no word of why that was acceptable).
#[test]
fn a_worn_part_left_in_place_says_how_little_it_moves() {
    let mut bad = Vec::new();
    let mut seen = 0;
    for job in all() {
        for r in &job.reports {
            let t = r.text();
            for (at, _) in t.match_indices(" left in place") {
                seen += 1;
                let rest: String = t[at..].chars().take(160).collect();
                if !rest.contains("its reading moves") && !rest.contains("on their own") {
                    bad.push(format!("{}: \"...{}\"", r.name(), rest.chars().take(90).collect::<String>()));
                }
            }
        }
    }
    assert!(seen > 0, "no report leaves a worn part in place: the check reads nothing");
    verdict("kept part without a reason", bad);
}

/// Only the shop's record carries the job's files inside the PDF: the job file holds the bench
/// notes that are the shop's own, its settings and stock prices, and photographs not marked
/// for the customer. Failed before on every customer report and quotation (each carried the
/// job file; repair-like-for-like's also the photograph not marked for the customer).
#[test]
fn only_the_archive_carries_the_jobs_files() {
    let mut bad = Vec::new();
    for job in all() {
        for r in &job.reports {
            if r.attached != (r.template == "archive") {
                bad.push(format!("{}: {}", r.name(), if r.attached { "files attached" } else { "nothing attached" }));
            }
        }
    }
    verdict("attachments", bad);
}

/// A report states no rating the job does not give: no "its rated 8 Ω" for a speaker whose
/// rated impedance the job leaves out (the header says "not given"), and no "the amplifier
/// power given above" where no power figure was given. Failed before on the reference jobs'
/// customer reports (butterworth-esr-dcr, lpad-tweeter, small-zobel, three-way).
#[test]
fn a_report_claims_no_rating_the_job_does_not_give() {
    let mut bad = Vec::new();
    for job in all() {
        let no_power = job.json.pointer("/power_range/suits_w").is_none_or(|v| v.is_null());
        for r in job.reports.iter().filter(|r| r.plain()) {
            let t = r.text();
            if job.rated_ohm.is_none() && t.contains("its rated") {
                bad.push(format!("{}: \"its rated\" with no rated impedance in the job", r.name()));
            }
            if no_power && t.contains("power given above") {
                bad.push(format!("{}: refers to a power figure it does not give", r.name()));
            }
        }
    }
    verdict("claimed rating", bad);
}

/// An invoice bills the work: it prints money, never a level, an impedance or an amplifier
/// power, and it is refused (with a hint) rather than printed with a line unpriced.
#[test]
fn an_invoice_prints_money_not_figures() {
    let mut bad = Vec::new();
    let mut seen = 0;
    for job in all() {
        for r in job.reports.iter().filter(|r| r.template == "invoice") {
            seen += 1;
            let t = r.text();
            for word in [" dB", "suits an amplifier", "not priced", "Figures worked out"] {
                if t.contains(word) {
                    bad.push(format!("{}: \"{word}\"", r.name()));
                }
            }
            if !t.contains("Total (") {
                bad.push(format!("{}: no total", r.name()));
            }
        }
    }
    assert!(seen > 0, "no job was invoiced: the check reads nothing");
    verdict("invoice", bad);
}
