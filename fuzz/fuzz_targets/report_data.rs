//! The report's data and plots: what every template is handed holds only finite numbers and
//! no non-finite number in its words (its numbers are formatted text), and each plot's SVG
//! draws no NaN.
#![no_main]

use libfuzzer_sys::fuzz_target;
use voicekeep::analysis::{analyse_job, Outcome, Quiet};
use voicekeep::model::Template;
use voicekeep::report::{data, plots};

fuzz_target!(|data: &[u8]| {
    let Some(job) = voicekeep_fuzz::load(data) else { return };
    let Ok(outcome) = analyse_job(&job, &Quiet) else { return };
    let words = !voicekeep_fuzz::writes_non_finite_words(data);
    let drawn = plots::all_outcome(&job, &outcome);
    for (kind, svg) in &drawn {
        if words {
            voicekeep_fuzz::assert_finite_text(svg, &format!("the {} plot", kind.name()));
        }
    }
    let kinds: Vec<_> = drawn.iter().map(|(k, _)| *k).collect();
    for template in [Template::Customer, Template::Archive, Template::Sale, Template::Quote, job.template.clone()] {
        let d = match &outcome {
            Outcome::One(f) => data::build(&job, f, &template, &kinds),
            Outcome::Set(set) => data::build_set(&job, set, &template, &kinds),
        };
        // The report's data is text, formatted here; its nulls are "none", never a number.
        if words {
            voicekeep_fuzz::assert_finite_strings(&serde_json::to_value(&d).expect("the report's data as JSON"), "data");
        }
    }
});
