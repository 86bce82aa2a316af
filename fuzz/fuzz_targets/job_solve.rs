//! Job to solution: a job that loads is solved or refused with words; what it gives holds
//! only finite numbers, in the JSON and in the text.
#![no_main]

use libfuzzer_sys::fuzz_target;
use voicekeep::analysis::{analyse_job, Quiet};
use voicekeep::results::{json_outcome, text_outcome};

fuzz_target!(|data: &[u8]| {
    let Some(job) = voicekeep_fuzz::load(data) else { return };
    match analyse_job(&job, &Quiet) {
        Ok(outcome) => {
            let words = !voicekeep_fuzz::writes_non_finite_words(data);
            voicekeep_fuzz::assert_finite_json(&json_outcome(&job, &outcome), "results", words);
            if words {
                voicekeep_fuzz::assert_finite_text(&text_outcome(&job, &outcome), "the text summary");
            }
        }
        Err(e) => assert!(!e.to_string().trim().is_empty(), "an analysis refused without words"),
    }
});
