//! A driver's impedance or response table beside a job: any bytes are read as numbers the
//! job can solve with, or refused at the job's line, never half read.
#![no_main]

use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| {
    let Some((&which, body)) = data.split_first() else { return };
    let kind = if which % 2 == 0 { "impedance" } else { "response" };
    if let Some(job) = voicekeep_fuzz::load_beside(kind, body) {
        // A table read is one the solve can use: every row finite.
        let _ = voicekeep::analysis::analyse_job(&job, &voicekeep::analysis::Quiet);
    }
});
