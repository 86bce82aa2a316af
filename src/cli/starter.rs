//! The starter job `voicekeep new` prints: a sample with its `job:` block replaced by
//! placeholders a shop fills in (the job reader warns of any left in).

/// The `job:` block a starter prints: placeholders a shop fills in, never a sample's
/// invented shop and customer.
pub const STARTER_JOB: &str = "job:
  number: JOB-0001                  # your job number
  date: 2026-10-14                  # the report's date (never the clock): today's, as YYYY-MM-DD
  work: what was done, in a line
  technician: your name
  shop: { name: your shop's name, address: \"street, town\", contact: phone or e-mail }
  customer: { name: the customer's name, reference: their reference for the speaker }
  speaker:
    description: the speaker, in a line
    serials: [serial of each cabinet]
    rated_impedance: 8 ohm          # from the speaker's plate
  notes: |
    Bench notes, the shop's own: printed in the archive only.
  customer_notes: |
    Notes for the customer: printed in their report and the archive, never on the sale sheet.
";

/// A sample job with its opening comment and its `job:` block replaced by placeholders
/// ([`STARTER_JOB`]).
pub fn starter(name: &str, sample: &str) -> String {
    let mut out = format!(
        "# voicekeep starter job, from the {name} example. Fill in the job block, then replace the\n# network, readings and changes with your speaker's; `voicekeep check` lists every problem.\n# Values are \"number unit\" (3.3 uF, 0.27 mH, 2.2 ohm) or the RKM code printed on parts (2R2, 4u7).\n"
    );
    let mut skipping = false;
    let mut in_photos = false;
    for line in sample.lines().skip_while(|l| l.starts_with('#') || l.trim().is_empty()) {
        // A sample's photographs are files beside it: a starter shows the form instead.
        if line.starts_with("  photos:") {
            out.push_str("  # photos:                        # JPEG or PNG files beside the job\n  #   - { file: before.jpg, caption: the board as it came in, taken: before }\n");
            in_photos = true;
            continue;
        }
        if in_photos && line.starts_with("    ") {
            continue;
        }
        in_photos = false;
        if line.starts_with("job:") {
            out.push_str(STARTER_JOB);
            skipping = true;
            continue;
        }
        if skipping && !line.is_empty() && !line.starts_with(' ') && !line.starts_with('#') {
            skipping = false;
            out.push('\n');
        }
        if !skipping {
            out.push_str(line);
            out.push('\n');
        }
    }
    out
}

#[cfg(test)]
mod tests {
    #[test]
    fn every_placeholder_the_reader_warns_of_is_one_the_starter_prints() {
        for p in crate::job::reader::PLACEHOLDERS {
            assert!(super::STARTER_JOB.contains(p), "{p}");
        }
    }
}
