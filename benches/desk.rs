//! The shop's desk, timed as whole processes side by side in one run (`cargo bench --bench
//! desk`; `DESK_JOBS=100` for a quick run): a batch of 1,000 copies of the two-way demo job in
//! ten sub-folders, reported in full (target: under 60 s on 2 cores), then run again with
//! nothing changed, hashing only (target: under 2 s); and `find` over an index of 10,000 jobs
//! (target: under 0.2 s). The figures measured are in DEVELOPERS.md.

use std::path::Path;
use std::process::Command;
use std::time::Instant;

fn timed(what: &str, target_s: f64, cmd: &mut Command) -> f64 {
    let t = Instant::now();
    let o = cmd.output().expect("voicekeep runs");
    let s = t.elapsed().as_secs_f64();
    assert!(o.status.success(), "{what}: {}", String::from_utf8_lossy(&o.stderr));
    println!("{what:<48} {s:>8.3} s   (target under {target_s} s){}", if s < target_s { "" } else { "  OVER" });
    s
}

fn main() {
    let bin = env!("CARGO_BIN_EXE_voicekeep");
    let root = Path::new(env!("CARGO_MANIFEST_DIR"));
    let n: usize = std::env::var("DESK_JOBS").ok().and_then(|v| v.parse().ok()).unwrap_or(1000);
    let dir = tempfile::tempdir().unwrap();
    let demo = std::fs::read_to_string(root.join("samples/two-way-recap.yaml")).unwrap();
    for i in 0..n {
        let sub = dir.path().join(format!("jobs/month-{:02}", i % 10));
        std::fs::create_dir_all(&sub).unwrap();
        std::fs::write(sub.join(format!("job-{i:04}.yaml")), demo.replace("number: NW-2026-0142", &format!("number: NW-2026-{i:04}"))).unwrap();
    }
    println!("{n} jobs, {} cores", std::thread::available_parallelism().map(|c| c.get()).unwrap_or(1));
    let batch = |force: bool| {
        let mut c = Command::new(bin);
        c.current_dir(dir.path()).args(["batch", "jobs", "--out", "reports", "--quiet"]);
        if force {
            c.arg("--force");
        }
        c
    };
    timed(&format!("batch, every report drawn ({n} jobs)"), 60.0 * n as f64 / 1000.0, &mut batch(true));
    timed(&format!("batch again, nothing changed ({n} jobs)"), 2.0 * n as f64 / 1000.0, &mut batch(false));

    // An index of 10,000 jobs: the batch's rows, repeated under new numbers and customers.
    let index: serde_json::Value = serde_json::from_slice(&std::fs::read(dir.path().join("reports/index.json")).unwrap()).unwrap();
    let rows = index["jobs"].as_array().unwrap();
    let mut big = Vec::with_capacity(10_000);
    for i in 0..10_000 {
        let mut r = rows[i % rows.len()].clone();
        r["number"] = format!("AR-{i:05}").into();
        r["customer"] = format!("Customer {}", i % 997).into();
        r["date"] = format!("2026-{:02}-{:02}", 1 + i % 12, 1 + i % 28).into();
        big.push(r);
    }
    std::fs::create_dir_all(dir.path().join("archive")).unwrap();
    std::fs::write(dir.path().join("archive/index.json"), serde_json::to_vec(&serde_json::json!({ "voicekeep": index["voicekeep"], "jobs": big })).unwrap()).unwrap();
    let find = |args: &[&str]| {
        let mut c = Command::new(bin);
        c.current_dir(dir.path()).args(["find", "archive"]).args(args);
        c
    };
    timed("find by customer over 10,000 jobs", 0.2, &mut find(&["--customer", "customer 42"]));
    timed("find by part value over 10,000 jobs", 0.2, &mut find(&["--part", "0.91 ohm"]));
    timed("find by customer over 10,000 jobs, JSON", 0.2, &mut find(&["--customer", "customer 42", "--format", "json"]));
    timed("find by date range over 10,000 jobs", 0.2, &mut find(&["--from", "2026-03-01", "--to", "2026-03-31"]));
}
