//! The service record: the largest amplifier power against a bisection over amplifier power
//! on the stress verdicts themselves (an independent loop through `solve`, not the scaling
//! the code uses), and the record's fields in the reports.

use serde_json::Value;

use crate::util::{root, Cli};

fn solve(text: &str) -> Value {
    let o = Cli::new().job(text).args(["solve", "{job}", "--format", "json"]).run();
    o.code(0);
    serde_json::from_str(&o.stdout).unwrap()
}

/// Whether any as-left part or driver verdict is over its limit.
fn any_over(j: &Value) -> bool {
    let over = |k: &str| j[k].as_array().unwrap().iter().any(|r| r["scenario"] == "as_left" && r["verdict"] == "over");
    over("stress") || over("driver_power")
}

/// The two-way demo with R9's rating fixed at the one chosen for it (so the part fitted does
/// not change with the amplifier) and the amplifier's power set to `w`.
fn at_power(text: &str, w: f64) -> String {
    text.replace("power: 60 W", &format!("power: {w} W"))
}

/// Whether a full-level sine puts any as-left part or driver past its rating, read from the
/// figures solve prints at that power.
fn sine_past(j: &Value) -> bool {
    let num = |v: &Value, k: &str| v[k].as_f64();
    let parts = j["stress"].as_array().unwrap().iter().filter(|r| r["scenario"] == "as_left").any(|r| {
        let past = |fig: &str, rating: &str| matches!((num(r, fig), num(r, rating)), (Some(a), Some(b)) if a > b);
        past("sine_w", "rating_w") || past("peak_v", "rating_v") || past("rms_a", "rating_a")
    });
    let drivers =
        j["driver_power"].as_array().unwrap().iter().filter(|r| r["scenario"] == "as_left").any(|r| matches!((num(r, "sine_w"), num(r, "rated_w")), (Some(a), Some(b)) if a > b));
    parts || drivers
}

/// Whether any as-left rated part or driver has lost the margin its verdict holds it to, read
/// from the figures solve prints at that power: a resistor's programme dissipation above half
/// its rating (the 2x of `rating: auto`, common practice), a driver's programme power above
/// its rating, a capacitor's peak or an inductor's current above 80 % of its rating.
fn margin_past(j: &Value) -> bool {
    let num = |v: &Value, k: &str| v[k].as_f64();
    let parts = j["stress"].as_array().unwrap().iter().filter(|r| r["scenario"] == "as_left").any(|r| {
        let past = |fig: &str, rating: &str, share: f64| matches!((num(r, fig), num(r, rating)), (Some(a), Some(b)) if a > share * b);
        (num(r, "programme_w").is_some_and(|w| w > 0.0) && past("programme_w", "rating_w", 0.5)) || past("peak_v", "rating_v", 0.8) || past("rms_a", "rating_a", 0.8)
    });
    let drivers = j["driver_power"]
        .as_array()
        .unwrap()
        .iter()
        .filter(|r| r["scenario"] == "as_left")
        .any(|r| matches!((num(r, "programme_w"), num(r, "rated_w")), (Some(a), Some(b)) if a > b));
    parts || drivers
}

/// The largest power with every rated part and driver within its margin, by bisection over
/// solves at each power.
fn bisect(text: &str) -> f64 {
    bisect_on(text, margin_past)
}

fn bisect_on(text: &str, past: fn(&Value) -> bool) -> f64 {
    let (mut lo, mut hi) = (0.01, 20_000.0);
    assert!(!past(&solve(&at_power(text, lo))) && past(&solve(&at_power(text, hi))), "the bracket holds the limit");
    while hi / lo > 1.002 {
        let mid = (lo * hi).sqrt();
        if past(&solve(&at_power(text, mid))) {
            hi = mid;
        } else {
            lo = mid;
        }
    }
    (lo * hi).sqrt()
}

#[test]
fn the_largest_amplifier_power_is_where_a_bisection_on_the_verdicts_finds_the_first_over() {
    let text = std::fs::read_to_string(root().join("samples/two-way-recap.yaml")).unwrap();
    let j = solve(&text);
    let r9 = j["stress"].as_array().unwrap().iter().find(|r| r["scenario"] == "as_left" && r["part"] == "R9").unwrap()["rating_w"].as_f64().unwrap();
    let fixed = text.replace("value: auto, rating: auto", &format!("value: auto, rating: {r9} W"));
    let want = solve(&fixed)["power_range"].clone();
    assert_eq!(want["max_w"], j["power_range"]["max_w"], "the chosen rating is the one fitted");
    let found = bisect(&fixed);
    let max = want["max_w"].as_f64().unwrap();
    assert!((found / max - 1.0).abs() < 0.003, "bisection {found} W against {max} W");
    // At that power nothing is over its rating yet: the margin comes first.
    assert!(!any_over(&solve(&at_power(&fixed, max * 0.99))));
    // The inductors carry no current rating: the figure stated is no more than the job's
    // 60 W, rounded down to two figures.
    assert_eq!(want["unrated"], serde_json::json!(["L2", "L1"]));
    assert_eq!(want["suits_w"].as_f64(), Some(60.0), "{want}");
    // The cautious end: a full-level sine within every rating.
    let sine = bisect_on(&fixed, sine_past);
    let want_sine = want["sine_max_w"].as_f64().unwrap();
    assert!(sine < max && (sine / want_sine - 1.0).abs() < 0.003, "sine bisection {sine} W against {want_sine} W");
    // A lower rating on the part that limits it lowers the power; on a part far from its
    // limit it changes nothing.
    let limited = want["limited_by"].as_str().unwrap().to_string();
    assert_eq!(limited, "R9");
    let lower = solve(&fixed.replace(&format!("rating: {r9} W"), &format!("rating: {} W", r9 / 2.0)));
    assert!((lower["power_range"]["max_w"].as_f64().unwrap() / (max / 2.0) - 1.0).abs() < 1e-9, "half the rating, half the power: dissipation scales with power");
    // C1's 250 V rating: at 63 V its peak limits first, at the square of the voltage ratio.
    let c1 = solve(&fixed.replacen("rating: 250 V", "rating: 63 V", 1));
    // Current ratings on both inductors: nothing is unrated, and the figure is the first
    // limit's, rounded down to two significant figures (here above the job's 60 W).
    let rated = fixed.replace("core: air }", "core: air, rating: 10 A }");
    let all = solve(&rated)["power_range"].clone();
    assert_eq!(all["unrated"], serde_json::json!([]), "{all}");
    let m = all["max_w"].as_f64().unwrap();
    let step = 10f64.powf(m.log10().floor() - 1.0);
    assert_eq!(all["suits_w"].as_f64(), Some((m / step).floor() * step), "{all}");
    assert!(all["suits_w"].as_f64().unwrap() > 60.0, "{all}");
    let p = &c1["power_range"];
    assert_eq!(p["limited_by"], "C1", "{p}");
    assert!(p["max_w"].as_f64().unwrap() < max);
    let found = bisect(&fixed.replacen("rating: 250 V", "rating: 63 V", 1));
    assert!((found / p["max_w"].as_f64().unwrap() - 1.0).abs() < 0.003, "bisection {found} W against {p}");
}

/// A report's text as tests/it/pdf.rs reads it: laid out in lines, or (`layout` false) every
/// word joined by single spaces.
fn pdf_text(pdf: &std::path::Path, layout: bool) -> String {
    let doc = crate::pdf::Pdf::open(pdf);
    if layout {
        doc.text()
    } else {
        doc.words()
    }
}

#[test]
fn regression_golden_a_job_without_the_new_fields_renders_its_customer_report_as_before() {
    // tests/golden/text/*.customer.txt: the text of the customer report (made first with
    // poppler's `pdftotext -layout`, since the tenth blessing with tests/it/pdf.rs) made by
    // voicekeep at commit 5be4e4a, before the service record existed. (The sale sheet and the
    // archive gained the largest amplifier power for every job, as the service record asks.)
    // Re-blessed once on purpose: the two-way woofer's 0.43 dB was called "too small to hear"
    // beside a 0.4 dB threshold; it now reads "at the edge of hearing" (its two lines only).
    // Re-blessed a second time on purpose, when the reports were made to state one set of
    // facts: the amplifier power the speaker suits (one figure, as the sale sheet's), bands
    // within 20 Hz to 20 kHz and a sweep ending on its end point, the bench notes the shop's
    // own (the customer's notes in their place), no standard's number, the load said once.
    // A third time on purpose: the levels table names the range each average is taken over,
    // and a speaker rated at another impedance than the amplifier's load reads the power as
    // the amplifier's rating ("This 4 ohm speaker ... by the amplifier's 8 ohm rating").
    // A fourth time on purpose: the customer's report shows the crossover drawn as left (its
    // labels are text in the PDF, so they join the golden). And a fifth: the cautions say the
    // figures are a prediction, warn of steady test tones, and are kept whole on one page.
    // A sixth: the pair's as-left plot caption says what it shows in a sentence of its own.
    // A seventh: the drawing's labels (kept parts by their marked value, the new part's type,
    // a cabinet's own replacement) and "changes of up to about 0.4 dB". An eighth: a worn part
    // left in place says how far its reading alone moves a driver, and a silent driver's
    // legend says "silent" (it said "off scale"). A ninth: the level plot's caption says a
    // word of sound output only where the job gives some. A tenth: the same reports read by
    // tests/it/pdf.rs in place of poppler's pdftotext, so `cargo test` needs nothing outside
    // cargo (the words the same, their lines and columns as that reader sets them). An eleventh:
    // unrated parts of one kind named together ("Inductors L1 and L2 have no rating"). A
    // twelfth: the levels table says why a compensated driver's two ranges differ. A
    // thirteenth: the pair plot's caption points to its legend, not to "as above". A
    // fourteenth: a figure is never parted from its unit at a line's end, and a pair's load
    // is said once, from the cabinet that asks most of the amplifier. A fifteenth: an
    // amplifier rating above the lowest impedance says why it suits (the 80 % allowance). A
    // sixteenth: a pair's steady-tone caution said once, and its drawing's caption no longer
    // points a customer to tables of readings the customer's report does not hold.
    for s in ["two-way-recap", "three-way-mid-table", "pair-recap", "substitute-tweeter"] {
        let o = Cli::new().args(["report", &format!("samples/{s}.yaml"), "--template", "customer", "-o", "{dir}/r.pdf"]).run();
        o.code(0);
        let want = std::fs::read_to_string(root().join(format!("tests/golden/text/{s}.customer.txt"))).unwrap();
        let got = pdf_text(&o.dir.join("r.pdf"), true);
        if std::env::var_os("VOICEKEEP_BLESS").is_some() {
            std::fs::write(root().join(format!("tests/golden/text/{s}.customer.txt")), &got).unwrap();
            continue;
        }
        assert_eq!(got, want, "{s}: the customer report changed");
    }
}

const REPAIR: &str = "samples/repair-like-for-like.yaml";

/// The files beside the repair sample, for a copy of it in a test's own folder; `settings`
/// in place of the shop's settings file.
fn beside_repair(cli: Cli, settings: Option<&[u8]>) -> Cli {
    let mut cli = cli;
    for f in ["photo-before-board.jpg", "photo-after-board.png", "harrowby-logo.png"] {
        cli = cli.file(f, &std::fs::read(root().join("samples").join(f)).unwrap());
    }
    match settings {
        Some(s) => cli.file("harrowby-shop.yaml", s),
        None => cli,
    }
}

fn render(sample: &str, template: &str) -> (std::path::PathBuf, String) {
    let o = Cli::new().args(["report", sample, "--template", template, "-o", "{dir}/out.pdf"]).run();
    o.code(0);
    let pdf = o.dir.join("out.pdf");
    let text = pdf_text(&pdf, false).split_whitespace().collect::<Vec<_>>().join(" ");
    (pdf, text)
}

#[test]
fn every_service_field_reaches_the_templates_that_show_it() {
    // The values as written in samples/repair-like-for-like.yaml and harrowby-shop.yaml.
    let everywhere = [
        "2026-10-06 to 2026-10-14",
        "Very good: the veneer has two light marks on the top; grille as new",
        "one crimp on the tweeter lead re-made",
        // The shop's own item, capitalised as the default items are.
        "Crossover board mounting",
        // The protection item is `none fitted`: this model has none, so nothing was left
        // unchecked (it read "not checked" beside "no protection device fitted" before).
        "12 items: 8 pass, 3 fixed, 1 none fitted.",
    ];
    let owner = [
        "No treble from the left speaker since a party",
        "The tweeter's padding resistor had burnt open",
        "Twelve months on the parts fitted and the work done",
        // 1.5 h at the settings file's 44.00 an hour: 66.00, in its currency.
        "1.5 h at 44.00 EUR an hour: 66.00 EUR",
        "Work done and checked by M. Okafor.",
    ];
    let archive_only = [
        "none fitted",
        "this model has no protection device",
        "maker Corran Resistors, part no. CW10-1R5J, from Easterfold Components, lot 2634",
        "removed: marked \"1R5 J 5W\"",
        "removed: marked \"0.82",
    ];
    let (_, customer) = render(REPAIR, "customer");
    let (_, archive) = render(REPAIR, "archive");
    let (_, sale) = render(REPAIR, "sale");
    for want in everywhere {
        for (name, text) in [("customer", &customer), ("archive", &archive), ("sale", &sale)] {
            assert!(text.contains(want), "{name}: {want}");
        }
    }
    for want in owner {
        assert!(customer.contains(want) && archive.contains(want), "{want}");
        assert!(!sale.contains(want), "sale: {want}");
    }
    for want in archive_only {
        assert!(archive.contains(want), "archive: {want}");
    }
    // The shop's settings file fills the shop's name and address, and is kept with the record.
    assert!(customer.contains("Harrowby Speaker Clinic") && customer.contains("22 Mill Row, Easterfold"));
    assert!(archive.contains("harrowby-shop.yaml"), "the settings file is listed with its SHA-256");
    // The section label stands where the topology's words would.
    assert!(customer.contains("R1, a resistor in the tweeter's padding"), "{customer}");
    // A part read open is said so in words, not as a drift in per cent.
    assert!(archive.contains("It reads open (no continuity across it) and must be replaced."), "{archive}");
    assert!(!archive.contains("99900"));
}

#[test]
fn the_inspection_lists_every_default_item_and_refuses_a_slip() {
    let text = std::fs::read_to_string(root().join("samples/two-way-recap.yaml")).unwrap();
    let with = format!("{text}\nservice:\n  inspection:\n    surrounds: pass\n    \"tweeter lens\": {{ result: fail, note: cracked }}\n");
    let j = Cli::new().job(&with).args(["report", "{job}", "--template", "archive", "-o", "{dir}/a.pdf"]).run();
    j.code(0);
    let t = pdf_text(&j.dir.join("a.pdf"), true).split_whitespace().collect::<Vec<_>>().join(" ");
    // Eleven default items (surrounds to grille), then the shop's own.
    for item in [
        "Driver surrounds pass",
        "Driver spiders not checked",
        "Voice-coil rub not checked",
        "Grille not checked",
        "Tweeter lens fail cracked",
        "12 items: 1 pass, 1 fail, 10 not checked.",
    ] {
        assert!(t.contains(item), "{item}: {t}");
    }
    let slip = format!("{text}\nservice:\n  inspection:\n    surounds: pass\n");
    Cli::new()
        .job(&slip)
        .args(["check", "{job}"])
        .run()
        .code(1)
        .stderr_has("service.inspection.surounds: \"surounds\" is not an inspection item")
        .stderr_has("did you mean `surrounds`?");
    let bad = format!("{text}\nservice:\n  inspection:\n    surrounds: passed\n");
    Cli::new().job(&bad).args(["check", "{job}"]).run().code(1).stderr_has("service.inspection.surrounds: unknown choice \"passed\"").stderr_has("did you mean `pass`?");
    let dates = format!("{text}\nservice:\n  received: 2026-11-20\n  returned: 2026-11-02\n");
    Cli::new().job(&dates).args(["check", "{job}"]).run().code(1).stderr_has("service.returned: the speaker went back (2026-11-02) before it came in (2026-11-20)");
    // A signed record cannot speak of a later day than its own date (the sample is dated
    // 2026-11-28).
    assert!(text.contains("date: 2026-11-28"));
    let late = format!("{text}\nservice:\n  received: 2026-11-20\n  returned: 2026-12-01\n");
    Cli::new()
        .job(&late)
        .args(["check", "{job}"])
        .run()
        .code(1)
        .stderr_has("service.returned: the report is dated 2026-11-28, before the speaker went back (2026-12-01)")
        .stderr_has("date the report (`job.date`) on or after");
    let early = format!("{text}\nservice:\n  received: 2026-11-29\n");
    Cli::new().job(&early).args(["check", "{job}"]).run().code(1).stderr_has("service.received: the report is dated 2026-11-28, before the speaker came in (2026-11-29)");
    let same_day = format!("{text}\nservice:\n  received: 2026-11-20\n  returned: 2026-11-28\n");
    Cli::new().job(&same_day).args(["check", "{job}"]).run().code(0);
}

#[test]
fn the_shop_logo_heads_every_report_and_is_hashed_in_the_record() {
    // The logo the settings file names: 360 x 120 pixels (samples/harrowby-logo.png).
    let logo = std::fs::read(root().join("samples/harrowby-logo.png")).unwrap();
    assert_eq!(&logo[16..24], &[0, 0, 1, 104, 0, 0, 0, 120], "the PNG header's width and height");
    for template in ["customer", "archive", "sale", "quote"] {
        let (pdf, text) = render(REPAIR, template);
        let images = crate::pdf::Pdf::open(&pdf).images;
        assert!(images.contains(&(360, 120)), "{template}: the logo is on the first page: {images:?}");
        if template == "archive" {
            use sha2::Digest;
            let hash: String = sha2::Sha256::digest(&logo).iter().map(|b| format!("{b:02x}")).collect();
            assert!(text.contains(&hash) && text.contains("harrowby-logo.png"), "the logo is listed with its SHA-256");
        }
    }
    // A report without a logo has no such image (the two-way sample names none).
    let (pdf, _) = render("samples/two-way-recap.yaml", "customer");
    assert!(!crate::pdf::Pdf::open(&pdf).images.iter().any(|i| i.0 == 360));
    // A logo that is not an image, or is missing, is refused at the job's line.
    let text = std::fs::read_to_string(root().join(REPAIR)).unwrap();
    let settings = std::fs::read(root().join("samples/harrowby-shop.yaml")).unwrap();
    let o = beside_repair(Cli::new().job(&text), Some(&settings)).file("harrowby-logo.png", b"not a picture").args(["check", "{job}"]).run();
    o.code(1).stderr_has("job.shop.settings (logo): \"harrowby-logo.png\" is not a JPEG or PNG image");
    let own = text.replace("shop: { settings: harrowby-shop.yaml }", "shop: { settings: harrowby-shop.yaml, logo: mine.png }");
    let o = beside_repair(Cli::new().job(&own), Some(&settings)).args(["check", "{job}"]).run();
    o.code(1).stderr_has("job.shop.logo: cannot read logo").stderr_has("mine.png");
}

#[test]
fn a_shop_settings_file_fills_what_the_job_leaves_and_its_mistakes_are_located() {
    let text = std::fs::read_to_string(root().join(REPAIR)).unwrap();
    let settings = std::fs::read(root().join("samples/harrowby-shop.yaml")).unwrap();
    // The job's own name wins over the file's.
    let own = text.replace("shop: { settings: harrowby-shop.yaml }", "shop: { name: Harrowby Annexe, settings: harrowby-shop.yaml }");
    let o = beside_repair(Cli::new().job(&own), Some(&settings)).args(["report", "{job}", "-o", "{dir}/r.pdf"]).run();
    o.code(0);
    let t = pdf_text(&o.dir.join("r.pdf"), false);
    assert!(t.contains("Harrowby Annexe") && t.contains("22 Mill Row, Easterfold"));
    // A mistake inside the settings file names the file, its line and column, and the field.
    let broken = String::from_utf8(settings).unwrap().replace("labour_rate: 44.00", "labour_rate: 44,5");
    let o = beside_repair(Cli::new().job(&text), Some(broken.as_bytes())).args(["check", "{job}"]).run();
    o.code(1).stderr_has("job.shop.settings: harrowby-shop.yaml line 7, column 14 (labour_rate): \"44,5\" is not a price");
    let o = beside_repair(Cli::new().job(&text), Some(b"name: X\nwaranty: none\n")).args(["check", "{job}"]).run();
    o.code(1).stderr_has("harrowby-shop.yaml line 2, column 1").stderr_has("did you mean `warranty`?");
    beside_repair(Cli::new().job(&text), None).args(["check", "{job}"]).run().code(1).stderr_has("job.shop.settings: cannot read settings file").stderr_has("harrowby-shop.yaml");
}

#[test]
fn open_and_shorted_readings_are_words_and_refuse_a_value_beside_them() {
    let text = std::fs::read_to_string(root().join(REPAIR)).unwrap();
    let settings = std::fs::read(root().join("samples/harrowby-shop.yaml")).unwrap();
    let solve = |t: &str| {
        let o = beside_repair(Cli::new().job(t), Some(&settings)).args(["solve", "{job}", "--format", "json"]).run();
        o.code(0);
        serde_json::from_str::<Value>(&o.stdout).unwrap()
    };
    let j = solve(&text);
    let r1 = j["health"].as_array().unwrap().iter().find(|h| h["part"] == "R1").unwrap();
    assert_eq!(r1["message"], "It reads open (no continuity across it) and must be replaced.");
    // Open: the tweeter gets nothing through it (more than 40 dB down: a fault).
    assert!(j["levels"][0]["as_found_db"].as_f64().unwrap() < -40.0, "{}", j["levels"][0]);
    let shorted = text.replace("R1: { open: true }", "R1: { shorted: true }");
    let j = solve(&shorted);
    let r1 = j["health"].as_array().unwrap().iter().find(|h| h["part"] == "R1").unwrap();
    assert_eq!(r1["message"], "It reads shorted (no resistance across it) and must be replaced.");
    // A shorted 1.5 ohm pad: the tweeter plays louder as found than designed.
    assert!(j["levels"][0]["as_found_db"].as_f64().unwrap() > 0.5, "{}", j["levels"][0]);
    let both = text.replace("R1: { open: true }", "R1: { open: true, value: 1.5 kohm }");
    Cli::new()
        .job(&both)
        .file("harrowby-shop.yaml", &settings)
        .args(["check", "{job}"])
        .run()
        .code(1)
        .stderr_has("measured.R1.value: a part that reads open has no `value` reading");
}

#[test]
fn photographs_are_shown_hashed_and_attached_byte_for_byte() {
    let (pdf, archive) = render(REPAIR, "archive");
    let (cpdf, customer) = render(REPAIR, "customer");
    let (_, sale) = render(REPAIR, "sale");
    for (name, caption) in
        [("photo-before-board.jpg", "Before the work: the crossover board as it came in; R1 burnt open"), ("photo-after-board.png", "After the work: the board after the repair")]
    {
        let bytes = std::fs::read(root().join("samples").join(name)).unwrap();
        // SHA-256 of the file as it is on disk, by the sha2 crate's reference implementation.
        use sha2::Digest;
        let hash: String = sha2::Sha256::digest(&bytes).iter().map(|b| format!("{b:02x}")).collect();
        assert!(archive.contains(caption), "{caption}");
        assert!(archive.contains(&hash), "{name}: its SHA-256 in the appendix");
        assert!(archive.contains(&hash[..16]), "{name}: beside the photograph");
        // Attached as it came, however large: the page shows it scaled.
        let files = crate::pdf::Pdf::open(&pdf).attachments();
        let file = files.iter().find(|f| f.0 == name).unwrap_or_else(|| panic!("{name} not attached"));
        assert_eq!(file.1, bytes, "{name}: the attachment is the original");
    }
    // The customer's report shows the photograph marked for the customer only; the sale
    // sheet none.
    assert!(customer.contains("After the work: the board after the repair") && !customer.contains("R1 burnt open (photo"));
    assert!(!sale.contains("Photographs"));
    // The large photograph is embedded at its own size (2400 x 1600), not resampled.
    let images = crate::pdf::Pdf::open(&pdf).images;
    assert!(images.contains(&(2400, 1600)), "{images:?}");
    let _ = cpdf;
}

#[test]
fn a_photograph_that_is_not_an_image_is_refused_with_its_place() {
    let text = std::fs::read_to_string(root().join("samples/two-way-recap.yaml")).unwrap();
    let job = format!("{text}\nservice:\n  photos:\n    - {{ file: board.jpg, caption: the board, taken: before }}\n");
    let o = Cli::new().job(&job).file("board.jpg", b"this is text, not a picture").args(["check", "{job}"]).run();
    o.code(1).stderr_has("service.photos[1].file: \"board.jpg\" is not a JPEG or PNG image");
    let o = Cli::new().job(&job).args(["check", "{job}"]).run();
    o.code(1).stderr_has("cannot read photograph").stderr_has("board.jpg");
    let late = job.replace("taken: before", "taken: later");
    Cli::new().job(&late).file("board.jpg", b"\xff\xd8\xff").args(["check", "{job}"]).run().code(1).stderr_has("service.photos[1].taken: unknown choice \"later\"");
    // A PNG cut short, or a JPEG whose header is right and the rest junk, is refused when
    // the job is read, not later in the template; the whole file passes. (A JPEG merely cut
    // short decodes, its missing rows grey, in the check and in the report alike.)
    let png = std::fs::read(root().join("samples/photo-after-board.png")).unwrap();
    let junk = [b"\xff\xd8\xff\xe0".as_slice(), &(0u8..=255).cycle().take(512).collect::<Vec<u8>>()].concat();
    for (name, bytes) in [("board.png", &png[..png.len() / 3]), ("board.jpg", junk.as_slice())] {
        let job = job.replace("board.jpg", name);
        let o = Cli::new().job(&job).file(name, bytes).args(["check", "{job}"]).run();
        o.code(1).stderr_has(&format!("service.photos[1].file: \"{name}\" cannot be decoded as an image")).stderr_has("damaged or cut short");
    }
    Cli::new().job(&job.replace("board.jpg", "board.png")).file("board.png", &png).args(["check", "{job}"]).run().code(0);
}

#[test]
fn an_inductor_without_a_current_rating_is_not_judged_and_one_with_a_rating_is() {
    // The two-way sample's L2 has no current rating: the tables say "not rated", never "ok".
    let text = std::fs::read_to_string(root().join("samples/two-way-recap.yaml")).unwrap();
    let o = Cli::new().args(["solve", "samples/two-way-recap.yaml"]).run();
    o.code(0);
    let line = o.stdout.lines().find(|l| l.trim_start().starts_with("L2 ")).unwrap().to_string();
    assert!(line.contains("not rated") && line.contains("no current rating on record, so not judged"), "{line}");
    // Given a rating, the verdict follows the figure against it: over above the rating, check
    // above 80 % of it (common practice, as for capacitors), ok below.
    let j = solve(&text);
    let l2 = j["stress"].as_array().unwrap().iter().find(|r| r["part"] == "L2" && r["scenario"] == "as_left").unwrap().clone();
    let amps = l2["rms_a"].as_f64().unwrap();
    for (rating, want) in [(amps * 0.9, "over"), (amps * 1.1, "check"), (amps * 1.5, "ok")] {
        let rated = text.replace(
            "L2: { kind: inductor, between: [H1, COM], value: 0.27 mH, dcr: 0.35 ohm,",
            &format!("L2: {{ kind: inductor, between: [H1, COM], value: 0.27 mH, dcr: 0.35 ohm, rating: {rating:.4} A,"),
        );
        assert_ne!(rated, text);
        let j = solve(&rated);
        let r = j["stress"].as_array().unwrap().iter().find(|r| r["part"] == "L2" && r["scenario"] == "as_left").unwrap().clone();
        assert_eq!(r["verdict"], want, "{rating} A against {amps} A: {r}");
    }
}
