//! Job loading and validation: any bytes are a job or located problems, never a panic.
#![no_main]

use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| {
    let _ = voicekeep_fuzz::load(data);
});
