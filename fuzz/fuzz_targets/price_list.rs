//! A shop's price list beside a job: any bytes are a list of finite prices or a located
//! refusal.
#![no_main]

use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| {
    if let Some(job) = voicekeep_fuzz::load_beside("prices", data) {
        let list = job.prices.as_ref().expect("a job naming a list that loads has it");
        assert!(list.items.iter().all(|i| i.value.is_finite() && i.rating.is_none_or(f64::is_finite)));
    }
});
