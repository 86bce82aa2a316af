//! The shop's settings file beside a job: any bytes are settings or a located refusal.
#![no_main]

use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| {
    let _ = voicekeep_fuzz::load_beside("settings", data);
});
