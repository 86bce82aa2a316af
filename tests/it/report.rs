//! The PDF report: every sample under every template, its text against `solve`, byte-identical
//! renders, literal notes, attachments, and shop templates. Reads the PDFs with
//! tests/it/pdf.rs.

use std::path::Path;

use crate::commands::SAMPLES;
use crate::util::{root, Cli};

/// The report's words, joined by single spaces so phrases can be found whole.
fn report_words(pdf: &Path) -> String {
    crate::pdf::Pdf::open(pdf).words()
}

fn render(sample: &str, template: &str) -> (std::path::PathBuf, String) {
    let o = Cli::new().args(["report", sample, "--template", template, "-o", "{dir}/out.pdf"]).run();
    o.code(0);
    let pdf = o.dir.join("out.pdf");
    let text = report_words(&pdf);
    (pdf, text)
}

#[test]
fn every_sample_renders_under_every_template_and_matches_solve() {
    for sample in SAMPLES {
        let o = Cli::new().args(["solve", sample, "--format", "json"]).run();
        let json: serde_json::Value = serde_json::from_str(&o.stdout).unwrap();
        // The quotation samples have no work done yet.
        let worked = !sample.contains("quote");
        for template in ["customer", "archive", "sale"] {
            // A quotation's job has no work done yet, and no sale sheet.
            if template == "sale" && !worked {
                continue;
            }
            let (pdf, text) = render(sample, template);
            assert!(std::fs::read(&pdf).unwrap().starts_with(b"%PDF-"));
            assert!(text.contains(json["job"]["number"].as_str().unwrap()));
            assert!(text.contains("page 1 of"), "{sample} {template}: page numbers in the footer");
            // A pair's figures are each cabinet's, under `cabinets`; a single job's at the top.
            let cabinets: Vec<&serde_json::Value> = match json.get("cabinets").and_then(|c| c.as_object()) {
                Some(c) => c.values().collect(),
                None => vec![&json],
            };
            let flat = text.replace(" Ω", "Ω");
            let ohm = |v: &serde_json::Value| voicekeep::units::trade(&voicekeep::results::ohm(v.as_f64().unwrap())).replace(" Ω", "Ω");
            for cab in &cabinets {
                for l in cab["levels"].as_array().unwrap() {
                    // A level that rounds to zero prints as +0.00 dB, never as -0.00.
                    let left = format!("{:+.2} dB", l["as_left_db"].as_f64().unwrap()).replace("-0.00 dB", "+0.00 dB");
                    assert!(text.contains(&left), "{sample} {template}: level {left} missing");
                }
            }
            if template == "archive" {
                for cab in &cabinets {
                    // The load change is read against what the original design presents.
                    assert!(text.contains(cab["load"]["as_left"]["verdict"].as_str().unwrap()));
                    let designed = &cab["load"]["as_designed"];
                    let clause = format!("the original design presents {} and {}.", ohm(&designed["min_ohm"]), ohm(&designed["epdr_min_ohm"]));
                    assert!(flat.contains(&clause), "{sample}: {clause} missing");
                    for c in cab["compensation"].as_array().unwrap() {
                        assert!(text.contains(&format!("{} {}", c["part"].as_str().unwrap(), c["driver"].as_str().unwrap())), "{sample} {template}");
                        assert!(flat.contains(&ohm(&c["fitted_ohm"])), "{sample} {template}: fitted value missing");
                    }
                }
            } else {
                // Plain reports state the lowest impedance once, in words, without |Z| or
                // EPDR: of a set, the cabinet's that asks most of the amplifier, the others'
                // figures beside it (an owner buys one amplifier for the set).
                let lowest = cabinets.iter().map(|c| c["load"]["as_left"]["min_ohm"].as_f64().unwrap()).fold(f64::INFINITY, f64::min);
                let low = format!("The lowest impedance the speaker presents to the amplifier is {}", ohm(&serde_json::json!(lowest)));
                assert!(flat.contains(&low), "{sample} {template}: {low}");
                for cab in &cabinets {
                    assert!(flat.contains(&ohm(&cab["load"]["as_left"]["min_ohm"])), "{sample} {template}: a cabinet's lowest impedance missing");
                }
                assert_eq!(flat.matches("The lowest impedance the speaker presents").count(), 1, "{sample} {template}: the load is said once");
                for jargon in ["EPDR", "|Z|", "ESR", "tan d", "Residual RMS", "HF's filter", "MF's filter", "LF's filter"] {
                    assert!(!flat.contains(jargon), "{sample} {template}: \"{jargon}\" in a plain report");
                }
                for c in cabinets.iter().flat_map(|cab| cab["compensation"].as_array().unwrap()) {
                    let part = c["part"].as_str().unwrap();
                    if c["fitted_ohm"].as_f64().unwrap() > 0.0 {
                        let (a, an) = (format!("{part}, a {} resistor", ohm(&c["fitted_ohm"])), format!("{part}, an {} resistor", ohm(&c["fitted_ohm"])));
                        assert!(flat.contains(&a) || flat.contains(&an), "{sample} {template}: {part} fitted");
                    }
                }
            }
            assert!(text.contains("local electrical codes"), "{sample} {template}: safety notes");
        }
    }
}

#[test]
fn renders_are_byte_identical_and_a_changed_note_changes_the_pdf() {
    let job = std::fs::read_to_string(root().join("samples/two-way-recap.yaml")).unwrap();
    let a = Cli::new().job(&job).args(["report", "{job}", "-o", "{dir}/a.pdf"]).run();
    let b = Cli::new().job(&job).args(["report", "{job}", "-o", "{dir}/b.pdf"]).run();
    let (pa, pb) = (std::fs::read(a.dir.join("a.pdf")).unwrap(), std::fs::read(b.dir.join("b.pdf")).unwrap());
    assert!(pa == pb, "two renders of the same job differ");
    // The bench notes are the shop's own: the archive changes with them, the customer's
    // report not at all (it carried the job file, notes and all, before).
    let changed = job.replace("dull and veiled", "dull and distant");
    assert!(changed != job);
    let c = Cli::new().job(&changed).args(["report", "{job}", "-o", "{dir}/c.pdf"]).run();
    assert!(std::fs::read(c.dir.join("c.pdf")).unwrap() == pa, "the customer's report changed with the shop's bench notes");
    let archive = |text: &str| {
        let o = Cli::new().job(text).args(["report", "{job}", "--template", "archive", "-o", "{dir}/x.pdf"]).run();
        std::fs::read(o.dir.join("x.pdf")).unwrap()
    };
    assert!(archive(&job) != archive(&changed));
}

#[test]
fn notes_with_markup_print_literally() {
    let job = std::fs::read_to_string(root().join("samples/two-way-recap.yaml")).unwrap();
    // In the bench notes (the archive's) and in the notes for the customer (their report's).
    let note = "    Tried #read(\"/etc/passwd\") and ] and $x$ and *bold* and <tag> and #panic()\n";
    let job = job
        .replace("    Original electrolytics measured out of circuit; readings below.\n", note)
        .replace("    filter capacitors are now film types, which keep their value far longer.\n", note);
    for template in ["customer", "archive"] {
        let o = Cli::new().job(&job).args(["report", "{job}", "--template", template, "-o", "{dir}/n.pdf"]).run();
        o.code(0);
        let text = report_words(&o.dir.join("n.pdf"));
        assert!(text.contains("Tried #read(\"/etc/passwd\") and ] and $x$ and *bold* and <tag> and #panic()"), "{template}: {text}");
        assert!(!text.contains("root:x:0"));
    }
}

#[test]
fn job_file_tables_and_results_are_attached() {
    let o = Cli::new().args(["report", "samples/three-way-mid-table.yaml", "--template", "archive", "-o", "{dir}/a.pdf"]).run();
    o.code(0);
    let pdf = o.dir.join("a.pdf");
    let files = crate::pdf::Pdf::open(&pdf).attachments();
    let names: Vec<&str> = files.iter().map(|f| f.0.as_str()).collect();
    for name in ["three-way-mid-table.yaml", "mid-impedance.csv", "lf-spl.csv", "results.json"] {
        assert!(names.contains(&name), "{name} not attached: {names:?}");
    }
    let job = &files.iter().find(|f| f.0 == "three-way-mid-table.yaml").unwrap().1;
    assert_eq!(job, &std::fs::read(root().join("samples/three-way-mid-table.yaml")).unwrap());
    // The archive is PDF/A-3b: its metadata says so.
    let bytes = std::fs::read(&pdf).unwrap();
    let hay = String::from_utf8_lossy(&bytes);
    assert!(hay.contains("pdfaid:part") && hay.contains("pdfaid:conformance"), "no PDF/A identification");
}

#[test]
fn a_shop_template_works_and_a_broken_one_names_its_line() {
    let job = std::fs::read_to_string(root().join("samples/two-way-recap.yaml")).unwrap();
    let shop = "#import \"lib.typ\": *\n#show: setup.with(title: \"Harbour Hi-Fi service note\")\n= Harbour Hi-Fi service note\n#levels-block()\n#load-block()\n";
    let o = Cli::new().job(&job).file("shop.typ", shop.as_bytes()).args(["report", "{job}", "--template", "{dir}/shop.typ", "-o", "{dir}/s.pdf"]).run();
    o.code(0);
    assert!(report_words(&o.dir.join("s.pdf")).contains("Harbour Hi-Fi service note"));
    let broken = "#import \"lib.typ\": *\n#show: setup\n= Title\n#levels-block(\n";
    let o = Cli::new().job(&job).file("broken.typ", broken.as_bytes()).args(["report", "{job}", "--template", "{dir}/broken.typ", "-o", "{dir}/b.pdf"]).run();
    o.code(1).stderr_has("broken.typ:4:");
    assert!(!o.dir.join("b.pdf").exists(), "no partly written report");
}

#[test]
fn plot_writes_svg_and_png() {
    let o = Cli::new().args(["plot", "samples/three-way-mid-table.yaml", "--out", "{dir}/plots"]).run();
    o.code(0);
    for n in ["response", "change", "impedance", "phase", "tolerance", "acoustic"] {
        // Named after the job, so the plots of two jobs can share a folder.
        let svg = std::fs::read_to_string(o.dir.join(format!("plots/three-way-mid-table-{n}.svg"))).unwrap();
        assert!(svg.starts_with("<svg") && svg.contains("frequency (Hz)"), "{n}");
    }
    let o = Cli::new().args(["plot", "samples/two-way-recap.yaml", "--out", "{dir}/p", "--format", "png"]).run();
    o.code(0);
    assert!(std::fs::read(o.dir.join("p/two-way-recap-response.png")).unwrap().starts_with(b"\x89PNG"));
}

#[test]
fn batch_reports_good_jobs_and_names_bad_ones() {
    let good = std::fs::read_to_string(root().join("samples/two-way-recap.yaml")).unwrap();
    let o = Cli::new().file("a.yaml", good.as_bytes()).file("b.yaml", b"voicekeep: 1\nnetwork: [\n").args(["batch", "{dir}", "--out", "{dir}/out"]).run();
    o.code(1).stdout_has("1 of 2 jobs reported").stderr_has("b.yaml");
    assert!(o.dir.join("out/a.pdf").exists());
}

#[test]
fn job_blocks_set_the_report_order() {
    let job = std::fs::read_to_string(root().join("samples/two-way-recap.yaml")).unwrap();
    let job =
        job.replace("  template: customer\n", "  template: customer\n  blocks:\n    - text: Opening words from the bench, in the job's own order.\n    - load\n    - levels\n");
    let o = Cli::new().job(&job).args(["report", "{job}", "-o", "{dir}/b.pdf"]).run();
    o.code(0);
    let text = report_words(&o.dir.join("b.pdf"));
    let (intro, load, levels) =
        (text.find("Opening words from the bench").unwrap(), text.find("The load on the amplifier").unwrap(), text.find("How each driver plays against its design").unwrap());
    assert!(intro < load && load < levels, "blocks out of order");
    assert!(!text.contains("Keeping the original voicing"), "a block the job left out was printed");
}

#[test]
fn basis_lines_keep_their_punctuation_and_say_where_the_rated_impedance_comes_from() {
    // Typst ends an embedded expression at a `;`, which once swallowed the separators here.
    let (_, text) = render("samples/two-way-recap.yaml", "archive");
    // 10 Hz to 40 kHz at 24 points an octave: 288 steps, then 40 kHz itself.
    assert!(text.contains("289 points. Levels are the mean"), "{text}");
    assert!(text.contains("289 points; EPDR after Howard"), "{text}");
    assert!(text.contains("of rated); rated impedance 8Ω, from the job") || text.contains("of rated); rated impedance 8 Ω, from the job"), "{text}");
    assert!(text.contains("Sine figures: a full-level sine of 21.9 V RMS"), "{text}");
    assert!(text.contains("one eighth of the rated power"), "{text}");
}

#[test]
fn the_sale_sheet_never_shows_the_previous_owner() {
    for sample in SAMPLES {
        let job = voicekeep::job::load(&root().join(sample)).unwrap();
        // A quotation's job has no work done, so no sale sheet: refused with a hint.
        // (In a quotation a cabinet's own steps count only within its options.)
        if job.changes.is_empty() && (!job.options.is_empty() || job.cabinets.iter().all(|c| c.changes.is_empty())) {
            Cli::new().args(["report", sample, "--template", "sale", "-o", "{dir}/s.pdf"]).run().code(1).stderr_has("a sale sheet records the work done").stderr_has("hint:");
            continue;
        }
        let (pdf, text) = render(sample, "sale");
        for field in [&job.info.customer_name, &job.info.customer_reference] {
            assert!(!field.is_empty() && !text.contains(field.as_str()), "{sample}: \"{field}\" on the sale sheet");
        }
        // The customer's complaint and the shop's finding are theirs, not a buyer's.
        for field in [&job.service.complaint, &job.service.finding].into_iter().flatten() {
            let words: String = field.split_whitespace().take(6).collect::<Vec<_>>().join(" ");
            assert!(!text.contains(&words), "{sample}: \"{words}\" on the sale sheet");
        }
        assert!(!text.contains("Customer") && !text.contains("Bench notes"), "{sample}");
        // Nothing is attached to the sale sheet: not the job file, which names the owner, nor
        // the shop's results.
        let files: Vec<String> = crate::pdf::Pdf::open(&pdf).attachments().into_iter().map(|f| f.0).collect();
        assert!(files.is_empty(), "{sample}: {files:?}");
        // The amplifier line is the shop's assumption, not a rating of the speaker.
        assert!(text.contains("the shop's figures assume an amplifier of"), "{sample}");
    }
}

#[test]
fn the_customer_report_says_what_was_fitted_in_plain_words() {
    let (_, text) = render("samples/two-way-recap.yaml", "customer");
    assert!(text.contains("with a 3.3 µF polypropylene film capacitor rated 250 V (was a bipolar electrolytic capacitor)"), "{text}");
    assert!(text.contains("Fitted R9, a 0.91 Ω resistor rated 3 W"), "{text}");
    for archive_only in ["Soldering", "Computed from", "as designed", "Exact"] {
        assert!(!text.contains(archive_only), "{archive_only} in the customer report");
    }
    assert!(text.contains("Listening levels"), "the customer's cautions");
    let (_, text) = render("samples/two-way-recap.yaml", "archive");
    for caution in ["Soldering", "Bench tests", "non-polarised capacitors", "Crossover resistors get hot"] {
        assert!(text.contains(caution), "{caution} missing from the archive");
    }
}

#[test]
fn an_over_rating_note_is_about_the_speaker_as_left_and_names_the_part() {
    // R1 (1 W) is overloaded as designed and as found, then replaced by a 50 W part: no
    // "over its rating" note. A 3 W part instead: the note names R1.
    let job = |rating: &str| {
        voicekeep::job::load_bytes(
            format!("voicekeep: 1\njob: {{ number: A, date: 2026-01-01 }}\namplifier: {{ power: 100 W, into: 8 ohm }}\nnetwork:\n  input: [IN, COM]\n  parts:\n    R1: {{ kind: resistor, between: [IN, H1], value: 2 ohm, rating: 1 W }}\n  drivers:\n    HF: {{ role: tweeter, between: [H1, COM], model: {{ resistance: 6 ohm }} }}\nchanges:\n  - replace: R1\n    with: {{ rating: {rating} }}\nanalysis: {{ sweep: {{ from: 20 Hz, to: 20 kHz, per_octave: 3 }} }}\n").as_bytes(),
            "t.yaml",
            "t.yaml",
            std::path::Path::new("."),
        )
        .unwrap()
    };
    for (rating, over) in [("50 W", false), ("3 W", true)] {
        let j = job(rating);
        let f = voicekeep::analysis::analyse(&j).unwrap();
        for t in [voicekeep::model::Template::Archive, voicekeep::model::Template::Customer] {
            let d = voicekeep::report::data::build(&j, &f, &t, &[]);
            let all = d.safety.join(" ");
            assert_eq!(all.contains("R1 is over its rating") || all.contains("R1 would run above its rating"), over, "{rating}: {all}");
        }
    }
}

#[test]
fn a_pair_report_names_the_cabinet_and_part_at_fault_and_says_whether_the_pair_matches() {
    let o = Cli::new().args(["solve", "samples/pair-recap.yaml", "--format", "json"]).run();
    let json: serde_json::Value = serde_json::from_str(&o.stdout).unwrap();
    let hf = &json["pair_match"][0];
    assert_eq!(hf["driver"], "HF");
    let top = &hf["responsible"][0];
    assert_eq!((top["cabinet"].as_str(), top["part"].as_str()), (Some("KB-5121"), Some("C1")));

    let (_, customer) = render("samples/pair-recap.yaml", "customer");
    let said = format!("the tweeter (HF) differed by {:.2} dB between cabinets, cabinet KB-5121 the odd one out, mostly from C1", hf["as_found_db"].as_f64().unwrap());
    assert!(customer.contains(&said), "{said}\n{customer}");
    assert!(customer.contains("The two cabinets now match: every driver within 0.5 dB of its partner in the other cabinet."), "{customer}");
    // Work done to one cabinet only is said of that cabinet.
    assert!(customer.contains("Cabinet KB-5121: Replaced R1"), "{customer}");
    assert!(customer.contains("in every cabinet"), "one R9 value for both: {customer}");

    let (_, archive) = render("samples/pair-recap.yaml", "archive");
    assert!(archive.contains("How the two cabinets match"));
    let share = format!("C1 in cabinet KB-5121 (+{:.2} dB)", top["share_db"].as_f64().unwrap());
    assert!(archive.contains(&share), "{share}");
    for caption in ["Each driver's level in each cabinet as found", "Each driver's level in each cabinet as left, after the work"] {
        assert!(archive.contains(caption), "{caption}");
    }

    let (_, sale) = render("samples/pair-recap.yaml", "sale");
    assert!(sale.contains("The two cabinets now match"));
    assert!(!sale.contains("Vantongeren"));
}

#[test]
fn a_part_whose_node_an_inserted_part_took_is_kept_not_changed() {
    // The two-way demo without C1's replacement: R9 is still inserted where C1 meets IN, so
    // C1's end moves to the new junction, and C1 itself is the part it was.
    let text = std::fs::read_to_string(root().join("samples/two-way-recap.yaml")).unwrap();
    let text = text.replace("  - replace: C1\n    with: { value: 3.3 uF, esr: 0.012 ohm, rating: 250 V, type: polypropylene film }\n", "");
    let job = crate::util::job_from(&text);
    let f = voicekeep::analysis::analyse(&job).unwrap();
    let d = voicekeep::report::data::build(&job, &f, &voicekeep::model::Template::Archive, &[]);
    let c1 = d.parts.rows.iter().find(|r| r.0[0] == "C1").unwrap();
    assert_eq!(c1.0.last().unwrap(), "measured, kept; an inserted part now meets it", "{:?}", c1.0);
}
