//! Value parsing: any text, read as each quantity, is a finite value or a refusal with words.
#![no_main]

use libfuzzer_sys::fuzz_target;
use voicekeep::units::{parse_value, Quantity};

fuzz_target!(|data: &[u8]| {
    let Ok(text) = std::str::from_utf8(data) else { return };
    for q in Quantity::ALL {
        match parse_value(text, q) {
            Ok(v) => assert!(v.is_finite(), "{text:?} read as {v} ({q:?})"),
            // The message quotes what was written, so a written "NaN" may appear in it.
            Err(e) => assert!(!e.message.trim().is_empty(), "{text:?}: a refusal without words"),
        }
    }
});
