//! Bad jobs through the command line: the binary's wiring and exit codes, and the cases that
//! need files on disk (tables) or several steps. The plain bad jobs are fixtures in
//! tests/bad/, run in memory by fixtures.rs.

use crate::util::Cli;

const BASE: &str = "voicekeep: 1
job:
  number: T-1
  date: 2026-11-28
  speaker: { rated_impedance: 8 ohm }
amplifier: { power: 60 W, into: 8 ohm }
network:
  input: [IN, COM]
  parts:
    C1: { kind: capacitor, between: [IN, H1], value: 3.3 uF, esr: 0.9 ohm }
    L1: { kind: inductor, between: [H1, COM], value: 0.27 mH, dcr: 0.35 ohm }
    L2: { kind: inductor, between: [IN, W1], value: 1.2 mH, dcr: 0.4 ohm }
  drivers:
    HF: { role: tweeter, between: [H1, COM], model: { re: 4.6 ohm, le: 0.04 mH } }
    LF: { role: woofer, between: [W1, COM], model: { resistance: 6 ohm } }
measured:
  C1: { value: 2.9 uF, esr: 1.6 ohm }
changes:
  - replace: C1
    with: { value: 3.3 uF, esr: 0.01 ohm }
  - insert:
      R9: { kind: resistor, between: [IN, C1], value: auto }
compensate:
  R9: { driver: HF, band: [3 kHz, 15 kHz] }
analysis:
  sweep: { from: 20 Hz, to: 20 kHz, per_octave: 6 }
";

/// Line and column (1-based) of the `nth` occurrence of `needle` in `text`.
fn pos_of(text: &str, needle: &str, nth: usize) -> String {
    let at = text.match_indices(needle).nth(nth).unwrap_or_else(|| panic!("{needle:?} not in job")).0;
    let line = text[..at].matches('\n').count() + 1;
    let col = text[..at].rsplit('\n').next().unwrap().chars().count() + 1;
    format!("job.yaml:{line}:{col}:")
}

/// Replace `from` with `to` in BASE, run `check`, and expect exit 1 with the message at the
/// place where `spot` (the nth occurrence) sits in the new text.
fn bad(from: &str, to: &str, spot: &str, nth: usize, words: &[&str]) {
    assert!(BASE.contains(from), "case does not apply: {from:?}");
    let text = BASE.replacen(from, to, 1);
    let o = Cli::new().job(&text).args(["check", "{job}"]).run();
    o.code(1);
    let place = pos_of(&text, spot, nth);
    o.stderr_has(&place);
    for w in words {
        o.stderr_has(w);
    }
}

#[test]
fn base_job_is_good() {
    Cli::new().job(BASE).args(["check", "{job}"]).run().code(0).stdout_has("ok");
}

fn table_case(table: &str, words: &[&str]) {
    table_case_at(table, "lf.csv", words)
}

fn table_case_at(table: &str, spot: &str, words: &[&str]) {
    let text = BASE.replacen("model: { resistance: 6 ohm }", "model: { table: lf.csv }", 1);
    let o = Cli::new().job(&text).file("lf.csv", table.as_bytes()).args(["check", "{job}"]).run();
    o.code(1).stderr_has(&pos_of(&text, spot, 0));
    for w in words {
        o.stderr_has(w);
    }
}

#[test]
fn table_with_text_in_a_row() {
    table_case("10, 6.1, 0\n1000, six, 3\n30000, 9, 40\n", &["lf.csv:2: \"six\" is not a number"]);
}

#[test]
fn table_out_of_order() {
    table_case("10, 6.1, 0\n1000, 6.5, 3\n500, 6.4, 2\n30000, 9, 40\n", &["lf.csv:3: frequency 500 Hz does not rise"]);
}

#[test]
fn table_too_short() {
    table_case("# one row only\n1000, 6.5, 3\n", &["1 rows of numbers; at least 2 are needed"]);
}

#[test]
fn table_not_covering_the_sweep() {
    table_case_at("100, 6.1, 0\n10000, 6.5, 3\n", "LF:", &["covers 100 Hz to 10 kHz but the sweep runs from 20 Hz"]);
}

#[test]
fn every_problem_is_listed_not_only_the_first() {
    let text = BASE.replacen("value: 0.27 mH", "valeu: 0.27 mH", 1).replacen("role: tweeter", "role: tweter", 1).replacen("to: 20 kHz", "to: 10 Hz", 1);
    let o = Cli::new().job(&text).args(["check", "{job}"]).run();
    o.code(1).stderr_has("unknown field `valeu`").stderr_has("unknown choice \"tweter\"").stderr_has("must end above where it starts");
}

#[test]
fn missing_job_file_is_an_io_failure() {
    Cli::new().args(["check", "no/such/job.yaml"]).run().code(3).stderr_has("cannot read the job file");
}

#[test]
fn usage_errors_exit_2() {
    Cli::new().args(["solve"]).run().code(2);
    Cli::new().args(["frobnicate"]).run().code(2);
    Cli::new().args(["solve", "{job}", "--format", "xml"]).job(BASE).run().code(2);
    Cli::new().args(["new", "--example", "nine-way"]).run().code(2).stderr_has("two-way");
}

#[test]
fn one_mistake_gives_one_message() {
    // C1 cannot be read, so its reading, its replacement, the insert beside it and R9's entry
    // are not reported again as unknown references.
    let text = BASE.replacen("value: 3.3 uF, esr: 0.9", "value: 3.3 mH, esr: 0.9", 1);
    let o = Cli::new().job(&text).args(["check", "{job}"]).run();
    o.code(1).stderr_has("1 problem found");
}

#[test]
fn a_wrong_compensate_entry_is_not_also_called_missing() {
    // The entry for R9 names no real driver: that is the one message, with the drivers listed.
    let text = BASE.replacen("  R9: { driver: HF", "  R9: { driver: TW", 1);
    let o = Cli::new().job(&text).args(["check", "{job}"]).run();
    o.code(1).stderr_has(&pos_of(&text, "TW", 0)).stderr_has("there is no driver TW").stderr_has("the network's drivers are: HF, LF").stderr_has("1 problem found");
    assert!(!o.stderr.contains("no `compensate` entry"), "{}", o.stderr);
}

#[test]
fn an_insert_between_two_nodes_is_one_message_pointing_to_add() {
    // `between: [IN, H1]` names two nodes; the entry for R9 is not then called unknown.
    let text = BASE.replacen("between: [IN, C1], value: auto", "between: [IN, H1], value: auto", 1);
    let o = Cli::new().job(&text).args(["check", "{job}"]).run();
    o.code(1).stderr_has(&pos_of(&text, "R9", 0)).stderr_has("insert takes `between: [NODE, PART]`").stderr_has("use `add`").stderr_has("1 problem found");
}

#[test]
fn a_reading_of_re_on_a_table_driver_is_refused() {
    let text = BASE.replacen("model: { resistance: 6 ohm }", "model: { table: lf.csv }", 1).replacen(
        "  C1: { value: 2.9 uF, esr: 1.6 ohm }\n",
        "  C1: { value: 2.9 uF, esr: 1.6 ohm }\n  LF: { re: 5.9 ohm }\n",
        1,
    );
    let o = Cli::new().job(&text).file("lf.csv", b"10, 6.1, 0\n30000, 9, 40\n").args(["check", "{job}"]).run();
    o.code(1).stderr_has(&pos_of(&text, "5.9 ohm", 0)).stderr_has("a measured impedance table").stderr_has("replace");
}

#[test]
fn a_replacement_drivers_table_must_cover_the_sweep() {
    let text = BASE.replacen("changes:\n", "changes:\n  - replace: LF\n    with: { model: { table: new.csv } }\n", 1);
    let o = Cli::new().job(&text).file("new.csv", b"100, 6.1, 0\n10000, 6.5, 3\n").args(["check", "{job}"]).run();
    o.code(1).stderr_has(&pos_of(&text, "replace: LF", 0)).stderr_has("changes[1].with.model.table").stderr_has("covers 100 Hz to 10 kHz but the sweep runs from 20 Hz");
}

#[test]
fn a_driver_whose_table_fails_is_not_also_unknown_to_its_compensate_entry() {
    let text = BASE.replacen("model: { re: 4.6 ohm, le: 0.04 mH }", "model: { table: hf.csv }", 1);
    let o = Cli::new().job(&text).file("hf.csv", b"10, six, 0\n30000, 9, 40\n").args(["check", "{job}"]).run();
    o.code(1).stderr_has("\"six\" is not a number").stderr_has("1 problem found");
    assert!(!o.stderr.contains("there is no driver HF"), "{}", o.stderr);
}

#[test]
fn a_decimal_comma_is_one_message_with_the_fix() {
    // In braces YAML splits `4,7 uF` into `4` and a field `7 uF`: one mistake, one message.
    let text = BASE.replacen("value: 3.3 uF, esr: 0.9", "value: 4,7 uF, esr: 0.9", 1);
    let o = Cli::new().job(&text).args(["check", "{job}"]).run();
    o.code(1).stderr_has(&pos_of(&text, "4,7", 0)).stderr_has("decimal comma").stderr_has("write a decimal point: \"4.7 uF\"").stderr_has("1 problem found");
    // Outside braces the value is one string, and says the same.
    let text = BASE.replacen("  C1: { value: 2.9 uF, esr: 1.6 ohm }\n", "  C1:\n    value: 2,9 uF\n", 1);
    let o = Cli::new().job(&text).args(["check", "{job}"]).run();
    o.code(1).stderr_has(&pos_of(&text, "2,9", 0)).stderr_has("write a decimal point: \"2.9 uF\"");
}

#[test]
fn a_missing_compensate_entry_names_the_driver_it_serves() {
    // R9 sits beside C1, in HF's section: the hint names HF, not a demo's guess.
    bad("compensate:\n  R9: { driver: HF, band: [3 kHz, 15 kHz] }\n", "", "R9: { kind", 0, &["no `compensate` entry", "add `R9: { driver: HF }` under `compensate:`"]);
    let text = BASE.replacen("between: [IN, C1], value: auto", "between: [IN, L2], value: auto", 1).replacen("compensate:\n  R9: { driver: HF, band: [3 kHz, 15 kHz] }\n", "", 1);
    let o = Cli::new().job(&text).args(["check", "{job}"]).run();
    o.code(1).stderr_has("add `R9: { driver: LF }`");
}

#[test]
fn problems_in_different_sections_are_listed_together() {
    // A misspelt amplifier field and a dangling node: both in one pass, and the misspelt key
    // is not also reported as a missing one.
    let text = BASE.replacen("into: 8 ohm", "intoo: 8 ohm", 1).replacen("between: [H1, COM], value: 0.27", "between: [H1, CMO], value: 0.27", 1);
    let o = Cli::new().job(&text).args(["check", "{job}"]).run();
    o.code(1).stderr_has("unknown field `intoo`").stderr_has("did you mean `into`?").stderr_has("node CMO is touched by L1 alone").stderr_has("2 problems found");
}
