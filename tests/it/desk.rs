//! The shop's desk: the evening batch over a folder of jobs in sub-folders, the archive index
//! it writes (CSV and JSON), and `find` over that index.

use std::path::Path;
use std::process::Command;

use crate::util::{bin, root};

/// Runs voicekeep in `dir`: (exit code, stdout, stderr).
fn run(dir: &Path, args: &[&str]) -> (i32, String, String) {
    let o = Command::new(bin()).current_dir(dir).args(args).output().unwrap();
    (o.status.code().unwrap_or(-1), String::from_utf8_lossy(&o.stdout).into_owned(), String::from_utf8_lossy(&o.stderr).into_owned())
}

fn copy(from: &str, to: &Path) {
    std::fs::create_dir_all(to.parent().unwrap()).unwrap();
    std::fs::copy(root().join(from), to).unwrap();
}

/// A shop's folder: jobs at the top and in sub-folders, with the tables each reads beside
/// it, the shop's settings file (not a job), and one broken job.
fn shop() -> tempfile::TempDir {
    let d = tempfile::tempdir().unwrap();
    let jobs = d.path().join("jobs");
    copy("samples/two-way-recap.yaml", &jobs.join("two-way-recap.yaml"));
    copy("samples/pair-recap.yaml", &jobs.join("2026/nov/pair-recap.yaml"));
    copy("samples/kestrel-prices.csv", &jobs.join("2026/nov/kestrel-prices.csv"));
    for f in ["repair-like-for-like.yaml", "harrowby-shop.yaml", "harrowby-logo.png", "photo-after-board.png", "photo-before-board.jpg", "northwater-prices.csv"] {
        copy(&format!("samples/{f}"), &jobs.join("2026/oct").join(f));
    }
    std::fs::write(jobs.join("2026/broken.yaml"), "voicekeep: 1\nnetwork: [\n").unwrap();
    d
}

fn index(dir: &Path) -> serde_json::Value {
    serde_json::from_slice(&std::fs::read(dir.join("index.json")).unwrap()).unwrap()
}

fn modified(p: &Path) -> std::time::SystemTime {
    std::fs::metadata(p).unwrap().modified().unwrap()
}

#[test]
fn the_evening_run_reports_changed_jobs_skips_the_rest_and_names_the_broken() {
    let d = shop();
    let (code, out, err) = run(d.path(), &["batch", "jobs", "--out", "reports"]);
    assert_eq!(code, 1, "a broken job makes the run's exit 1\n{out}{err}");
    // The broken job is named with its error at its line; the settings file is named once as
    // not a job, never as a failed job.
    assert!(err.contains("jobs/2026/broken.yaml:3:1"), "{err}");
    assert!(out.contains("failed    jobs/2026/broken.yaml"), "{out}");
    assert_eq!(err.matches("harrowby-shop.yaml").count(), 1, "{err}");
    assert!(err.contains("skipped 1 YAML file that is not a job") && !out.contains("harrowby-shop"), "{out}{err}");
    assert!(out.contains("3 of 4 jobs reported"), "{out}");
    // The reports lie in the jobs' own sub-folders.
    for r in ["two-way-recap.pdf", "2026/nov/pair-recap.pdf", "2026/oct/repair-like-for-like.pdf"] {
        assert!(std::fs::read(d.path().join("reports").join(r)).unwrap().starts_with(b"%PDF"), "{r}");
    }
    let pair = d.path().join("reports/2026/nov/pair-recap.pdf");
    let first = modified(&pair);

    // Nothing changed: nothing is drawn again, and the index is the same.
    let before = index(&d.path().join("reports"));
    std::thread::sleep(std::time::Duration::from_millis(20));
    let (_, out, _) = run(d.path(), &["batch", "jobs", "--out", "reports"]);
    assert!(out.contains("unchanged jobs/2026/nov/pair-recap.yaml") && out.contains("(3 unchanged since their reports, not redrawn)"), "{out}");
    assert_eq!(modified(&pair), first);
    assert_eq!(index(&d.path().join("reports")), before);

    // A table the pair reads changes: that job alone is drawn again.
    let prices = d.path().join("jobs/2026/nov/kestrel-prices.csv");
    let text = std::fs::read_to_string(&prices).unwrap();
    std::fs::write(&prices, format!("{text}\n")).unwrap();
    let (_, out, _) = run(d.path(), &["batch", "jobs", "--out", "reports"]);
    assert!(out.contains("ok        jobs/2026/nov/pair-recap.yaml") && out.contains("unchanged jobs/two-way-recap.yaml"), "{out}");
    assert_ne!(modified(&pair), first);

    // --force draws every job again; a deleted report is drawn again without it.
    let (_, out, _) = run(d.path(), &["batch", "jobs", "--out", "reports", "--force"]);
    assert!(!out.contains("unchanged") && out.contains("3 of 4 jobs reported;"), "{out}");
    std::fs::remove_file(d.path().join("reports/two-way-recap.pdf")).unwrap();
    let (_, out, _) = run(d.path(), &["batch", "jobs", "--out", "reports"]);
    assert!(out.contains("ok        jobs/two-way-recap.yaml") && out.contains("(2 unchanged"), "{out}");

    // --quiet names only what failed.
    let (_, out, _) = run(d.path(), &["batch", "jobs", "--out", "reports", "--quiet"]);
    assert!(!out.contains("unchanged jobs") && out.contains("failed    jobs/2026/broken.yaml"), "{out}");
}

#[test]
fn each_index_row_says_what_the_jobs_own_results_say() {
    let d = shop();
    run(d.path(), &["batch", "jobs", "--out", "reports"]);
    let idx = index(&d.path().join("reports"));
    let rows = idx["jobs"].as_array().unwrap();
    assert_eq!(rows.len(), 3, "the broken job has no row");
    for row in rows {
        let file = row["job_file"].as_str().unwrap();
        let o = Command::new(bin()).current_dir(d.path().join("jobs")).args(["solve", file, "--format", "json"]).output().unwrap();
        let json: serde_json::Value = serde_json::from_slice(&o.stdout).unwrap();
        assert_eq!(row["number"], json["job"]["number"], "{file}");
        assert_eq!(row["date"], json["job"]["date"], "{file}");
        assert_eq!(row["power_suits_w"], json["power_range"]["suits_w"], "{file}");
        assert_eq!(row["load_as_left"], json["load"]["as_left"]["verdict"], "{file}");
        assert_eq!(row["warnings"].as_u64().unwrap() as usize, json["warnings"].as_array().unwrap().len(), "{file}");
        assert_eq!(row["report"].as_str().unwrap(), file.replace(".yaml", ".pdf"));
        // Every driver of every cabinet, as found and as left, to the bit.
        let cabinets: Vec<(Option<String>, &serde_json::Value)> = match json["cabinets"].as_object() {
            Some(m) => m.iter().map(|(k, v)| (Some(k.clone()), v)).collect(),
            None => vec![(None, &json)],
        };
        let want: Vec<(Option<String>, String, f64, f64)> = cabinets
            .iter()
            .flat_map(|(c, v)| {
                v["levels"]
                    .as_array()
                    .unwrap()
                    .iter()
                    .map(move |l| (c.clone(), l["driver"].as_str().unwrap().to_string(), l["as_found_db"].as_f64().unwrap(), l["as_left_db"].as_f64().unwrap()))
            })
            .collect();
        let got: Vec<(Option<String>, String, f64, f64)> = row["levels"]
            .as_array()
            .unwrap()
            .iter()
            .map(|l| (l["cabinet"].as_str().map(str::to_string), l["driver"].as_str().unwrap().to_string(), l["as_found_db"].as_f64().unwrap(), l["as_left_db"].as_f64().unwrap()))
            .collect();
        assert_eq!(got, want, "{file}");
        // Every part the parts list names is in the row, at the list's value.
        let listed: usize = cabinets.iter().flat_map(|(_, v)| v["parts"].as_array().unwrap().iter()).map(|p| p["parts"].as_array().unwrap().len()).sum();
        assert_eq!(row["fitted"].as_array().unwrap().len(), listed, "{file}");
    }
    // The repair's C1 and the two-way's R9, by hand from the job files: 10 uF and the fitted
    // 0.91 ohm the parts list prints.
    let two = rows.iter().find(|r| r["job_file"] == "two-way-recap.yaml").unwrap();
    let r9 = two["fitted"].as_array().unwrap().iter().find(|f| f["part"] == "R9").unwrap();
    assert_eq!((r9["kind"].as_str(), r9["text"].as_str()), (Some("resistor"), Some("0.91 ohm")));
    assert!((r9["value"].as_f64().unwrap() - 0.91).abs() < 1e-12);
}

#[test]
fn the_csv_index_parses_back_to_the_rows_and_runs_no_formula() {
    let d = shop();
    let job = d.path().join("jobs/two-way-recap.yaml");
    let text = std::fs::read_to_string(&job).unwrap();
    let name = text.lines().find(|l| l.contains("customer:")).unwrap().to_string();
    assert!(name.contains("name:"), "{name}");
    let evil = "  customer: { name: \"=SUM(A1)\", reference: \"@cmd, \\\"quoted\\\"\\nnext line\" }";
    std::fs::write(&job, text.replace(&name, evil)).unwrap();
    let (_, out, err) = run(d.path(), &["batch", "jobs", "--out", "reports"]);
    assert!(out.contains("ok        jobs/two-way-recap.yaml"), "{out}{err}");
    let csv = std::fs::read(d.path().join("reports/index.csv")).unwrap();
    let idx = index(&d.path().join("reports"));
    // RFC 4180: CRLF line ends, one header row; read back with the csv crate.
    assert!(String::from_utf8(csv.clone()).unwrap().starts_with("number,date,customer,customer_reference,"));
    let mut r = csv::ReaderBuilder::new().has_headers(true).from_reader(csv.as_slice());
    let header: Vec<String> = r.headers().unwrap().iter().map(str::to_string).collect();
    let records: Vec<csv::StringRecord> = r.records().map(Result::unwrap).collect();
    assert_eq!(records.len(), idx["jobs"].as_array().unwrap().len());
    let col = |n: &str| header.iter().position(|h| h == n).unwrap();
    for (rec, row) in records.iter().zip(idx["jobs"].as_array().unwrap()) {
        for key in ["number", "date", "customer", "customer_reference", "speaker", "work", "report", "job_file", "input_sha256"] {
            let cell = &rec[col(key)];
            let want = row[key].as_str().unwrap();
            // A text cell that would start a formula carries one leading apostrophe; the
            // JSON keeps the text exactly.
            let formula = want.starts_with(['=', '+', '-', '@', '\t', '\r']);
            assert_eq!(cell, if formula { format!("'{want}") } else { want.to_string() }, "{key}");
            assert!(!cell.starts_with(['=', '+', '-', '@']), "{key}: {cell}");
        }
    }
    let evil_row = records.iter().find(|r| r[col("job_file")] == *"two-way-recap.yaml").unwrap();
    assert_eq!(&evil_row[col("customer")], "'=SUM(A1)");
    assert_eq!(&evil_row[col("customer_reference")], "'@cmd, \"quoted\"\nnext line");
    // The outside check reads it with Python's csv module, where python3 is on PATH.
    if std::process::Command::new("python3").arg("--version").output().is_ok_and(|o| o.status.success()) {
        let o = std::process::Command::new("python3").arg(crate::util::root().join("tests/contract/index-csv.py")).arg(d.path().join("reports")).output().unwrap();
        assert!(o.status.success(), "{}{}", String::from_utf8_lossy(&o.stdout), String::from_utf8_lossy(&o.stderr));
    }
}

#[test]
fn a_job_number_used_twice_is_reported() {
    let d = shop();
    let two = std::fs::read_to_string(d.path().join("jobs/two-way-recap.yaml")).unwrap();
    std::fs::write(d.path().join("jobs/2026/again.yaml"), &two).unwrap();
    std::fs::remove_file(d.path().join("jobs/2026/broken.yaml")).unwrap();
    let (code, _, err) = run(d.path(), &["batch", "jobs", "--out", "reports"]);
    assert_eq!(code, 1, "{err}");
    assert!(err.contains("job number NW-2026-0142 is used by 2 jobs: 2026/again.yaml, two-way-recap.yaml"), "{err}");
}

#[test]
fn batch_takes_one_template_for_every_job() {
    let d = shop();
    std::fs::remove_file(d.path().join("jobs/2026/broken.yaml")).unwrap();
    let (code, out, err) = run(d.path(), &["batch", "jobs", "--out", "reports", "--template", "archive"]);
    assert_eq!(code, 0, "{out}{err}");
    let idx = index(&d.path().join("reports"));
    assert!(idx["jobs"].as_array().unwrap().iter().all(|r| r["template"] == "archive"));
    // The archive's appendix lists every input with its hash; the customer's report never.
    assert!(crate::util::pdf_words(&d.path().join("reports/two-way-recap.pdf")).contains("SHA-256"));
    // Another template is another report: drawn again, not skipped.
    let (_, out, _) = run(d.path(), &["batch", "jobs", "--out", "reports"]);
    assert!(!out.contains("unchanged"), "{out}");
    let (code, _, err) = run(d.path(), &["batch", "jobs", "--out", "reports", "--template", "invoicee"]);
    assert_eq!(code, 2, "{err}");
}

#[test]
fn find_searches_the_index_by_each_field() {
    let d = shop();
    run(d.path(), &["batch", "jobs", "--out", "reports"]);
    let found = |args: &[&str]| -> Vec<String> {
        let mut a = vec!["find", "reports", "--format", "json"];
        a.extend_from_slice(args);
        let (code, out, err) = run(d.path(), &a);
        assert_eq!(code, 0, "{err}");
        let v: serde_json::Value = serde_json::from_str(&out).unwrap();
        assert_eq!(v["of"], 3);
        v["jobs"].as_array().unwrap().iter().map(|r| r["job_file"].as_str().unwrap().to_string()).collect()
    };
    // Each expected job read from the sample files by hand.
    assert_eq!(found(&["--number", "nw-2026-0142"]), ["two-way-recap.yaml"]);
    assert_eq!(found(&["--customer", "vantonGEREN"]), ["2026/nov/pair-recap.yaml"]);
    assert_eq!(found(&["--customer", "oak bookshelf"]), ["2026/nov/pair-recap.yaml"]);
    assert_eq!(found(&["--serial", "KB-5121"]), ["2026/nov/pair-recap.yaml"]);
    assert_eq!(found(&["--part", "0.82 ohm"]), ["2026/nov/pair-recap.yaml"]);
    assert_eq!(found(&["--part", "910 mohm"]), ["two-way-recap.yaml"]);
    assert!(found(&["--part", "0.5 ohm"]).is_empty());
    assert_eq!(found(&["--from", "2026-12-01", "--to", "2026-12-31"]), ["2026/nov/pair-recap.yaml"]);
    assert_eq!(found(&["--to", "2026-10-31"]), ["2026/oct/repair-like-for-like.yaml"]);
    assert!(found(&["--design", "anything"]).is_empty());
    // Text for people: the number, date, customer and where the report is.
    let (_, out, _) = run(d.path(), &["find", "reports/index.json", "--serial", "kb-5120"]);
    assert!(out.contains("KR-2026-0311  2026-12-01  P. Vantongeren (oak bookshelf pair)") && out.contains("reports/2026/nov/pair-recap.pdf"), "{out}");
    assert!(out.ends_with("1 of 3 jobs in reports/index.json\n"), "{out}");
    // Mistakes: a date, a value without its unit, no index.
    let (code, _, err) = run(d.path(), &["find", "reports", "--from", "2026-02-30"]);
    assert_eq!(code, 2, "{err}");
    assert!(err.contains("--from takes a date written 2026-11-28"), "{err}");
    let (code, _, err) = run(d.path(), &["find", "reports", "--part", "3.3"]);
    assert_eq!(code, 2, "{err}");
    let (code, _, err) = run(d.path(), &["find", "jobs"]);
    assert_eq!(code, 1, "{err}");
    assert!(err.contains("hint: name the folder `batch --out` wrote"), "{err}");
}

#[test]
fn batch_and_check_say_their_results_in_json() {
    let d = shop();
    let (_, out, _) = run(d.path(), &["batch", "jobs", "--out", "reports", "--format", "json"]);
    let v: serde_json::Value = serde_json::from_str(&out).unwrap();
    assert_eq!((v["reported"].as_u64(), v["unchanged"].as_u64(), v["failed"].as_u64()), (Some(3), Some(0), Some(1)), "{v}");
    assert_eq!(v["not_jobs"], serde_json::json!(["2026/oct/harrowby-shop.yaml"]));
    let pair = v["jobs"].as_array().unwrap().iter().find(|j| j["job"] == "jobs/2026/nov/pair-recap.yaml").unwrap();
    assert_eq!((pair["result"].as_str(), pair["report"].as_str()), (Some("reported"), Some("2026/nov/pair-recap.pdf")));
    let (_, out, _) = run(d.path(), &["batch", "jobs", "--out", "reports", "--format", "json"]);
    let v: serde_json::Value = serde_json::from_str(&out).unwrap();
    assert_eq!(v["unchanged"].as_u64(), Some(3), "{v}");
    // check: the verdict, and each problem at its place.
    let (code, out, _) = run(d.path(), &["check", "jobs/2026/broken.yaml", "--format", "json"]);
    assert_eq!(code, 1);
    let v: serde_json::Value = serde_json::from_str(&out).unwrap();
    assert_eq!((v["ok"].as_bool(), v["problems"][0]["line"].as_u64(), v["problems"][0]["column"].as_u64()), (Some(false), Some(3), Some(1)), "{v}");
    let (code, out, _) = run(d.path(), &["check", "jobs/2026/nov/pair-recap.yaml", "--format", "json"]);
    assert_eq!(code, 0);
    let v: serde_json::Value = serde_json::from_str(&out).unwrap();
    assert_eq!((v["ok"].as_bool(), v["parts"].as_u64(), v["cabinets"].as_u64()), (Some(true), Some(5), Some(2)), "{v}");
}
